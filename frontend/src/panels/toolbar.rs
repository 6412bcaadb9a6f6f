//! The header: project title and revision, file commands (new, open, save), undo/redo, display unit, analysis frequency and
//! fabrication limits, the recent-projects menu, the status line and the notice that another tab changed this
//! project.

use crate::bridge;
use crate::state::{Action, Draft, Field, Notice};
use crate::widgets::{Select, TextField};
use ohmstack_core::base::units::LengthUnit;
use ohmstack_core::Project;
use std::collections::BTreeMap;
use std::rc::Rc;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct ToolbarProps {
    pub project: Rc<Project>,
    pub drafts: Rc<BTreeMap<Field, Draft>>,
    pub can_undo: bool,
    pub can_redo: bool,
    pub notice: Option<Notice>,
    /// Autosave problem, if any.
    pub storage: Option<AttrValue>,
    pub dispatch: Callback<Action>,
    pub on_demo: Callback<()>,
    pub on_blank: Callback<()>,
    pub on_save: Callback<()>,
    pub on_open: Callback<web_sys::File>,
    /// Other projects kept in this browser, most recent first: (id, "title — date time").
    #[prop_or_default]
    pub recent: Rc<Vec<(AttrValue, AttrValue)>>,
    pub on_reopen: Callback<String>,
    /// The title another tab saved this project under, while this tab has not yet chosen what to do.
    #[prop_or_default]
    pub conflict: Option<AttrValue>,
    pub on_take_theirs: Callback<()>,
    pub on_keep_copy: Callback<()>,
}

fn unit_key(u: LengthUnit) -> &'static str {
    match u {
        LengthUnit::Um => "um",
        LengthUnit::Mm => "mm",
        LengthUnit::Mil => "mil",
        LengthUnit::In => "in",
    }
}

#[component]
pub fn Toolbar(props: &ToolbarProps) -> Html {
    let p = &props.project;
    let d = &props.dispatch;
    let draft = |f: Field| props.drafts.get(&f).cloned();
    let unit = p.units;
    let on_unit = {
        let d = d.clone();
        Callback::from(move |v: String| {
            if let Some(u) = LengthUnit::ALL.into_iter().find(|u| unit_key(*u) == v) {
                d.emit(Action::SetUnit(u))
            }
        })
    };
    let on_file = {
        let on_open = props.on_open.clone();
        Callback::from(move |e: Event| {
            let input: web_sys::HtmlInputElement = e.target_unchecked_into();
            if let Some(file) = input.files().and_then(|files| files.get(0)) {
                on_open.emit(file);
            }
            // Clear so that choosing the same file again still fires a change.
            input.set_value("");
        })
    };
    let click = |cb: &Callback<()>| {
        let cb = cb.clone();
        Callback::from(move |_: MouseEvent| cb.emit(()))
    };
    let undo = {
        let d = d.clone();
        Callback::from(move |_: MouseEvent| d.emit(Action::Undo))
    };
    let redo = {
        let d = d.clone();
        Callback::from(move |_: MouseEvent| d.emit(Action::Redo))
    };
    let dismiss = {
        let d = d.clone();
        Callback::from(move |_: MouseEvent| d.emit(Action::Notify(None)))
    };
    let on_recent = {
        let cb = props.on_reopen.clone();
        Callback::from(move |v: String| {
            if !v.is_empty() {
                cb.emit(v)
            }
        })
    };
    let mut recent_options = vec![(
        AttrValue::from(""),
        AttrValue::from("Reopen a recent project…"),
    )];
    recent_options.extend(props.recent.iter().cloned());
    html! {
        <header class="top">
            <div class="brand-row">
                <h1>{ "Ohmstack" }</h1>
                <TextField field={Field::Title} label="Project title" hidden_label=true size="title" value={p.title.clone()}
                    draft={draft(Field::Title)} dispatch={d.clone()} />
                <TextField field={Field::Revision} label="Revision" hidden_label=true size="narrow" value={p.revision.clone()}
                    placeholder={AttrValue::from("Revision")} draft={draft(Field::Revision)} dispatch={d.clone()} />
                <nav class="commands no-print" aria-label="Project commands">
                    <button type="button" id="new-demo" onclick={click(&props.on_demo)}>{ "New from demo" }</button>
                    <button type="button" id="new-blank" onclick={click(&props.on_blank)}>{ "New blank" }</button>
                    <label class="button file" for="open-file">{ "Open…" }</label>
                    <input type="file" id="open-file" class="file-input" accept=".json,application/json" onchange={on_file} />
                    <button type="button" id="save-file" onclick={click(&props.on_save)}>{ "Save…" }</button>
                    if !props.recent.is_empty() {
                        <Select id="recent-projects" label="Recent projects" hidden_label=true options={recent_options}
                            selected="" onchange={on_recent} />
                    }
                    <span class="sep" aria-hidden="true"></span>
                    <button type="button" id="undo" onclick={undo} disabled={!props.can_undo} title="Undo (Ctrl+Z)">{ "Undo" }</button>
                    <button type="button" id="redo" onclick={redo} disabled={!props.can_redo} title="Redo (Ctrl+Shift+Z or Ctrl+Y)">{ "Redo" }</button>
                </nav>
            </div>
            if let Some(theirs) = &props.conflict {
                <div class="conflict no-print" role="alert" data-testid="conflict">
                    <span>{ format!("This board was changed in another tab (saved there as “{theirs}”). Nothing was overwritten: \
                        open that version here, or keep yours as a separate copy. Editing on keeps yours as a copy too.") }</span>
                    <button type="button" id="conflict-theirs" onclick={click(&props.on_take_theirs)}>{ "Open the other tab's version" }</button>
                    <button type="button" id="conflict-copy" onclick={click(&props.on_keep_copy)}>{ "Keep mine as a copy" }</button>
                </div>
            }
            <div class="settings-row">
                <Select id="units" label="Length unit"
                    options={LengthUnit::ALL.iter().map(|u| (AttrValue::from(unit_key(*u)), AttrValue::from(u.symbol()))).collect::<Vec<_>>()}
                    selected={unit_key(unit)} onchange={on_unit} />
                <TextField field={Field::AnalysisFreq} label="Loss frequency (GHz)" size="narrow" value={bridge::ghz_text(p.analysis_freq_hz)}
                    draft={draft(Field::AnalysisFreq)} dispatch={d.clone()} />
                <TextField field={Field::MinTrace} label={format!("Min trace ({})", unit.symbol())} size="narrow"
                    value={bridge::length_text(p.fab.min_trace_m, unit)} draft={draft(Field::MinTrace)} dispatch={d.clone()} />
                <TextField field={Field::MinSpace} label={format!("Min space ({})", unit.symbol())} size="narrow"
                    value={bridge::length_text(p.fab.min_space_m, unit)} draft={draft(Field::MinSpace)} dispatch={d.clone()} />
                <div class="status" role="status" aria-live="polite" data-testid="status">
                    if let Some(n) = &props.notice {
                        <span class={classes!(if n.error { "error" } else { "info" })} data-testid="notice">{ n.text.clone() }</span>
                        <button type="button" class="icon no-print" aria-label="Dismiss message" onclick={dismiss}>{ "×" }</button>
                    }
                    if let Some(s) = &props.storage {
                        <span class="error" data-testid="storage-error">{ s.clone() }</span>
                    } else if props.conflict.is_some() {
                        <span class="muted no-print" data-testid="autosave">{ "autosave waits for your choice above" }</span>
                    } else {
                        <span class="muted no-print" data-testid="autosave">{ "autosaved in this browser" }</span>
                    }
                </div>
            </div>
        </header>
    }
}
