//! The fab-notes view: a printable document (title, revision and today's date, stack table, cross-section drawing,
//! impedance table with the engine of each row, general notes and cautions) from the core's `report::fab_notes`,
//! with CSV and Markdown downloads and a print button. Every name comes from the user and is rendered as text; the
//! drawing is the core's SVG (user text escaped there).
//!
//! Printed, the page fits A4 and US Letter: the tables have fixed layouts that wrap inside the page width
//! (index.html's print rules), checked by tests/python/test_browser_notes.py on Chromium's PDF.

use crate::bridge::{self, NotesView};
use crate::link;
use ohmstack_core::{Plan, Project};
use std::rc::Rc;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct NotesProps {
    pub project: Rc<Project>,
    pub plan: Rc<Result<Plan, String>>,
}

/// A file name from the project title: letters, digits and dashes only.
fn file_stem(title: &str) -> String {
    let stem: String = title
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect();
    let stem = stem
        .split('-')
        .filter(|s| !s.is_empty())
        .collect::<Vec<_>>()
        .join("-");
    let stem: String = stem.chars().take(60).collect();
    if stem.is_empty() {
        "ohmstack".into()
    } else {
        stem
    }
}

/// The printed width class of an impedance column (index.html gives each class its share of the page).
fn column_class(head: &str) -> &'static str {
    match head {
        "Net class" => "c-net",
        "Layer" => "c-layer",
        "Structure" => "c-structure",
        "Reference planes" => "c-refs",
        "Status" => "c-status",
        "Engine" => "c-engine",
        _ => "c-num",
    }
}

#[component]
pub fn NotesPanel(props: &NotesProps) -> Html {
    // The day the page was opened: the notes are issued today (the core reads no clock).
    let today = use_state(bridge::today);
    let view = use_memo(
        (props.project.clone(), props.plan.clone(), *today),
        |(project, plan, today)| match &**plan {
            Ok(plan) => Ok(bridge::notes_view(project, plan, *today)),
            Err(e) => Err(e.clone()),
        },
    );
    let message = use_state(|| None::<String>);
    let view: &NotesView = match &*view {
        Ok(v) => v,
        Err(e) => {
            return html! {
                <section class="panel fab-notes" aria-labelledby="notes-title">
                    <h2 id="notes-title">{ "Fab notes" }</h2>
                    <p class="error">{ format!("No fab notes: {e}") }</p>
                </section>
            }
        }
    };
    let stem = file_stem(&view.title);
    let download = |name: String, mime: &'static str, text: String| {
        let message = message.clone();
        Callback::from(move |_: MouseEvent| {
            message.set(
                link::download(&name, mime, &text)
                    .err()
                    .map(|e| format!("Download failed: {e}")),
            )
        })
    };
    let csv = download(
        format!("{stem}-fab-notes.csv"),
        "text/csv",
        view.csv.clone(),
    );
    let md = download(
        format!("{stem}-fab-notes.md"),
        "text/markdown",
        view.markdown.clone(),
    );
    let print = Callback::from(|_: MouseEvent| {
        let _ = gloo::utils::window().print();
    });
    html! {
        <section class="panel fab-notes print-area" aria-labelledby="notes-title" data-testid="fab-notes">
            <div class="notes-actions no-print">
                <h2 id="notes-title">{ "Fab notes" }</h2>
                <button data-testid="notes-csv" onclick={csv}>{ "Download CSV" }</button>
                <button data-testid="notes-md" onclick={md}>{ "Download Markdown" }</button>
                <button data-testid="notes-print" onclick={print}>{ "Print / save as PDF" }</button>
                if let Some(m) = &*message { <span class="error">{ m.clone() }</span> }
            </div>
            <h1 class="notes-title" data-testid="notes-title">{ format!("Fab notes: {}", view.title) }</h1>
            if !view.issue.is_empty() {
                <p class="notes-revision" data-testid="notes-issue">{ view.issue.clone() }</p>
            }
            <h2 class="notes-part">{ "Stack" }</h2>
            <table class="notes-stack">
                <thead><tr>{ for view.stack_head.iter().map(|h| html! { <th>{ *h }</th> }) }</tr></thead>
                <tbody>
                { for view.stack.iter().map(|row| html! {
                    <tr>{ for row.iter().map(|c| html! { <td>{ c.clone() }</td> }) }</tr>
                }) }
                </tbody>
            </table>
            <p class="notes-total">{ format!("Total thickness: {}", view.total) }</p>
            <figure class="notes-drawing" data-testid="notes-drawing">
            { match &view.drawing {
                Ok(svg) => Html::from_html_unchecked(AttrValue::from(svg.clone())),
                Err(e) => html! { <p class="error">{ format!("No drawing: {e}") }</p> },
            } }
                <figcaption>{ "Cross-section of the stack (layer heights not to scale)." }</figcaption>
            </figure>
            <h2 class="notes-part">{ "Controlled impedance" }</h2>
            <table class="notes-impedance" data-testid="notes-impedance">
                <colgroup>{ for view.impedance_head.iter().map(|h| html! { <col class={column_class(h)} /> }) }</colgroup>
                <thead><tr>{ for view.impedance_head.iter().map(|h| html! { <th>{ *h }</th> }) }</tr></thead>
                <tbody>
                { for view.impedance.iter().map(|(row, bad)| html! {
                    <tr class={classes!(bad.then_some("bad"))}>
                        { for row.iter().map(|c| html! { <td>{ c.clone() }</td> }) }
                    </tr>
                }) }
                </tbody>
            </table>
            if !view.routing.is_empty() {
                <h2 class="notes-part">{ "Routing rules" }</h2>
                <table class="notes-routing" data-testid="notes-routing">
                    <thead><tr>{ for view.routing_head.iter().map(|h| html! { <th>{ *h }</th> }) }</tr></thead>
                    <tbody>
                    { for view.routing.iter().map(|row| html! {
                        <tr>{ for row.iter().map(|c| html! { <td>{ c.clone() }</td> }) }</tr>
                    }) }
                    </tbody>
                </table>
            }
            <h2 class="notes-part">{ "Notes" }</h2>
            <ol class="notes-list">
                { for view.notes.iter().map(|n| html! { <li>{ n.clone() }</li> }) }
            </ol>
            <p class="notes-caution">
                { "Design estimates only. Final impedance is confirmed by the fabricator on test coupons. \
                   Trace spacing here is not electrical-safety clearance; follow local codes and licensed practice." }
            </p>
        </section>
    }
}

#[cfg(test)]
mod tests {
    use super::file_stem;

    #[test]
    fn file_names_keep_only_safe_characters() {
        assert_eq!(
            file_stem("Buoy sensor gateway, 6 layers"),
            "buoy-sensor-gateway-6-layers"
        );
        assert_eq!(file_stem("<script>../../x</script>"), "script-x-script");
        assert_eq!(file_stem("Ω µ"), "ohmstack");
    }
}
