//! Pictures of one rule: the cross-section drawing, loss against frequency, impedance against width, the
//! Monte Carlo histogram with the tolerance window, crosstalk against the spacing to a neighbour, the insertion loss over the reach, the potential map
//! of the last field check, and a Touchstone download.
//! The SVG strings come from the core (which escapes all user text); they are the only raw HTML in the app.

use crate::bridge;
use crate::link;
use ohmstack_core::{Plan, Project, RuleOutcome, RuleResult};
use std::rc::Rc;
use web_sys::{HtmlInputElement, HtmlSelectElement};
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct PicturesProps {
    pub project: Rc<Project>,
    pub plan: Rc<Result<Plan, String>>,
    /// A rule chosen elsewhere (e.g. in the rules table); the panel's own selector can change it.
    #[prop_or_default]
    pub selected_rule: Option<usize>,
    /// The potential map of the last field check of the current project (it selects its rule when it arrives).
    #[prop_or_default]
    pub field_map: Option<Rc<bridge::FieldMapView>>,
}

/// A core SVG string, or the error that prevented it, in a labelled figure.
fn figure(testid: &'static str, caption: &str, svg: &Result<String, String>) -> Html {
    let body = match svg {
        Ok(svg) => Html::from_html_unchecked(AttrValue::from(svg.clone())),
        Err(e) => html! { <p class="error">{ e.clone() }</p> },
    };
    html! {
        <figure class="picture" data-testid={testid}>
            <div class="svg-box">{ body }</div>
            <figcaption>{ caption.to_string() }</figcaption>
        </figure>
    }
}

/// The potential map of the selected rule's field check, or how to get one.
fn field_map_figure(map: Option<&bridge::FieldMapView>, rule: Option<usize>) -> Html {
    match map {
        Some(m) if Some(m.rule) == rule => html! {
            <figure class="picture" id="field-map" data-testid="field-map" data-rule={m.name.clone()}
                data-drive={m.drive} data-solver-nodes={m.solver_nodes.to_string()}>
                <div class="svg-box">{ Html::from_html_unchecked(m.svg.clone()) }</div>
                <figcaption>{ format!(
                    "Field solution of {} ({}): colour is the potential, white lines are equipotentials every tenth of the drive, dashed lines are dielectric interfaces. Sampled from the solver's finest grid ({} nodes in the half cross-section).",
                    m.name, m.drive, m.solver_nodes) }</figcaption>
            </figure>
        },
        other => {
            let hint = match other {
                Some(m) => format!("The last field check was of {}; choose it above, or verify this rule.", m.name),
                None => "Press “Verify with field solver” on this rule's card to draw its potential map here.".to_string(),
            };
            html! {
                <figure class="picture field-slot" id="field-map" data-testid="field-map">
                    <div class="svg-box empty"><p class="muted" data-testid="field-map-hint">{ hint }</p></div>
                    <figcaption>{ "Potential map of the field solution (appears after a field check)." }</figcaption>
                </figure>
            }
        }
    }
}

#[component]
pub fn PicturesPanel(props: &PicturesProps) -> Html {
    let n_rules = props.project.rules.len();
    let selected = use_state(|| props.selected_rule.unwrap_or(0));
    {
        let selected = selected.clone();
        use_effect_with(props.selected_rule, move |chosen| {
            if let Some(i) = *chosen {
                selected.set(i);
            }
        });
    }
    {
        let selected = selected.clone();
        use_effect_with(props.field_map.clone(), move |map| {
            if let Some(m) = map {
                selected.set(m.rule);
            }
        });
    }
    let rule = (n_rules > 0).then(|| (*selected).min(n_rules - 1));
    let length = use_state(|| "100 mm".to_string());
    let message = use_state(|| None::<Result<String, String>>);

    let drawing = use_memo((props.project.clone(), rule), |(p, r)| {
        bridge::cross_section_svg(p, *r)
    });
    // The plots are computed from the project; of the plan only its error matters. Keyed on what the chosen rule
    // depends on (crate::plan_jobs::rule_key) and that error: an edit of another rule, or the field rows landing
    // from the plan worker, do not redraw them on the page's thread.
    // The plots are drawn from the chosen rule's planned result (the preview's, then the plan worker's as it
    // lands): nothing is solved on the page's thread. Keyed on that row, so other rules' rows landing or an edit of
    // another rule do not redraw them.
    let row: Option<Result<RuleResult, String>> = rule.map(|i| match props.plan.as_ref() {
        Err(e) => Err(e.clone()),
        Ok(plan) => match plan.rules.get(i) {
            Some(RuleOutcome::Ok(r)) => Ok((**r).clone()),
            Some(RuleOutcome::Error { message, .. }) => Err(message.clone()),
            None => Err("the plan has no row for this rule yet".to_string()),
        },
    });
    let project = props.project.clone();
    let plots = use_memo((row.clone(), rule), move |(row, r)| {
        let (p, i) = (&project, (*r)?);
        Some(match row.as_ref()? {
            Err(e) => (Err(e.clone()), Err(e.clone()), Err(e.clone()), None, None),
            Ok(result) => (
                bridge::loss_plot_svg(p, i, result),
                bridge::z_width_plot_svg(p, i, result),
                bridge::spread_view(result),
                bridge::crosstalk_plot_svg(result, p.units),
                bridge::insertion_loss_plot_svg(result, p.units),
            ),
        })
    });

    let on_select = {
        let selected = selected.clone();
        Callback::from(move |e: Event| {
            if let Some(el) = e.target_dyn_into::<HtmlSelectElement>() {
                if let Ok(i) = el.value().parse::<usize>() {
                    selected.set(i);
                }
            }
        })
    };
    let on_length = {
        let length = length.clone();
        Callback::from(move |e: InputEvent| {
            if let Some(el) = e.target_dyn_into::<HtmlInputElement>() {
                length.set(el.value());
            }
        })
    };
    let on_touchstone = {
        let (project, length, message) = (props.project.clone(), length.clone(), message.clone());
        let row = row.clone();
        Callback::from(move |_: MouseEvent| {
            let Some(i) = rule else { return };
            let result = row
                .clone()
                .unwrap_or_else(|| Err("no rule is chosen".to_string()))
                .and_then(|r| bridge::touchstone_file(&project, i, &r, &length))
                .and_then(|(name, text)| link::download(&name, "text/plain", &text).map(|()| name));
            message.set(Some(result.map(|name| format!("Downloaded {name}."))));
        })
    };

    let selector = html! {
        <label class="rule-select" for="picture-rule">
            { "Rule " }
            <select id="picture-rule" data-testid="picture-rule" onchange={on_select} disabled={n_rules == 0}>
                { for props.project.rules.iter().enumerate().map(|(i, r)| html! {
                    <option value={i.to_string()} selected={Some(i) == rule}>{ r.name.clone() }</option>
                }) }
            </select>
        </label>
    };
    let plots_html = match &*plots {
        None => html! { <p class="muted">{ "The project has no impedance rules to plot." }</p> },
        Some((loss, z_width, spread, crosstalk, insertion_loss)) => {
            let spread_fig = match spread {
                Ok(s) => html! {
                    <div class="spread">
                    { figure("plot-spread", "Monte Carlo spread of the impedance; the shaded band is the rule's tolerance window.", &Ok(s.svg.clone())) }
                    <p class="spread-stats" data-testid="spread-stats"
                        data-mean={s.mean_ohm.to_string()} data-sigma={s.sigma_ohm.to_string()}
                        data-yield={s.yield_pct.to_string()}>
                        { format!("mean {:.2} Ω, σ {:.3} Ω, {:.2} % of {} samples within {:.2} to {:.2} Ω",
                            s.mean_ohm, s.sigma_ohm, s.yield_pct, s.samples, s.lower_ohm, s.upper_ohm) }
                        if s.failed > 0 { { format!(" ({} samples failed)", s.failed) } }
                    </p>
                    </div>
                },
                Err(e) if row.as_ref().is_some_and(|r| r.is_ok()) => html! {
                    // The rule's figures are in; its spread is still being computed (or could not be).
                    <figure class="picture" data-testid="plot-spread">
                        <div class="svg-box empty"><p class="muted" data-testid="spread-pending">{ e.clone() }</p></div>
                        <figcaption>{ "Monte Carlo spread of the impedance." }</figcaption>
                    </figure>
                },
                Err(e) => figure("plot-spread", "Monte Carlo spread", &Err(e.clone())),
            };
            html! {
                <>
                { figure("plot-loss", "Loss of the signal mode against frequency, with its conductor and dielectric parts.", loss) }
                { figure("plot-z-width", "Impedance against trace width around the solution.", z_width) }
                { spread_fig }
                if let Some(svg) = crosstalk {
                    { figure("plot-crosstalk", "Crosstalk to an identical neighbour against the edge-to-edge spacing: near and far end, with the board's budget.", &Ok(svg.clone())) }
                }
                if let Some(svg) = insertion_loss {
                    { figure("plot-insertion-loss", "Insertion loss of a run of the rule's reach against frequency, fixed losses included: it meets the link budget at the Nyquist frequency.", &Ok(svg.clone())) }
                }
                { field_map_figure(props.field_map.as_deref(), rule) }
                </>
            }
        }
    };
    let touchstone_message = match &*message {
        None => html! {},
        Some(Ok(t)) => {
            html! { <span class="muted" data-testid="touchstone-status">{ t.clone() }</span> }
        }
        Some(Err(e)) => {
            html! { <span class="error" data-testid="touchstone-error">{ e.clone() }</span> }
        }
    };
    html! {
        <section class="panel pictures no-print" aria-labelledby="pictures-title">
            <h2 id="pictures-title">{ "Drawing and plots" }</h2>
            <div class="picture-controls">
                { selector }
                <label for="touchstone-length">
                    { "Segment length " }
                    <input id="touchstone-length" data-testid="touchstone-length" value={(*length).clone()} oninput={on_length} size="8" />
                </label>
                <button data-testid="touchstone-download" onclick={on_touchstone} disabled={rule.is_none()}>
                    { "Download Touchstone" }
                </button>
                { touchstone_message }
            </div>
            { figure("cross-section", "Cross-section of the stack (layer heights not to scale) with the selected rule's traces.", &drawing) }
            <div class="plots">{ plots_html }</div>
        </section>
    }
}
