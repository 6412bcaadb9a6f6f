//! The glass behind each core and prepreg: a style chosen from the trade's numbers (its plies and resin content
//! start where they keep the layer's thickness), then plies and resin edited; the layer's thickness, Dk and Df follow
//! from the construction (Lichtenecker's rule calibrated to the Dk and Df the layer had, as its datasheet point),
//! with the weave's worst-case skew beside it. "Entered directly" keeps thickness and Dk as typed.

use crate::bridge;
use crate::state::{Action, Draft, Field, LayerField};
use crate::widgets::{Select, TextField};
use ohmstack_core::base::units::format_sig;
use ohmstack_core::design::construction::GLASS_STYLES;
use ohmstack_core::design::stackup::Layer;
use ohmstack_core::Project;
use std::collections::BTreeMap;
use std::rc::Rc;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct GlassProps {
    pub project: Rc<Project>,
    pub drafts: Rc<BTreeMap<Field, Draft>>,
    pub dispatch: Callback<Action>,
}

#[component]
pub fn GlassPanel(props: &GlassProps) -> Html {
    let p = &props.project;
    let unit = p.units;
    let d = &props.dispatch;
    let draft = |f: Field| props.drafts.get(&f).cloned();
    // The last proposal's outcome: running, or what it could not meet (empty: everything met), or why it failed.
    let outcome = use_state(|| None::<Result<Vec<String>, String>>);
    let busy = use_state(|| false);
    let propose = {
        let (project, dispatch, outcome, busy) =
            (p.clone(), d.clone(), outcome.clone(), busy.clone());
        Callback::from(move |_: MouseEvent| {
            busy.set(true);
            let (dispatch, outcome, busy) = (dispatch.clone(), outcome.clone(), busy.clone());
            crate::proposer::propose(
                &project,
                Callback::from(move |result: crate::proposer::Proposed| {
                    busy.set(false);
                    match result {
                        Ok((proposed, unmet)) => {
                            let message = if unmet.is_empty() {
                                "stack proposed from glass constructions: every rule on target at its width".to_string()
                            } else {
                                format!(
                                    "stack proposed from glass constructions; not met: {}",
                                    unmet.join("; ")
                                )
                            };
                            dispatch.emit(Action::Load(Box::new(proposed), message));
                            outcome.set(Some(Ok(unmet)));
                        }
                        Err(e) => outcome.set(Some(Err(e))),
                    }
                }),
            );
        })
    };
    let target = p.fab.target_thickness_m;
    let outcome_view = match (&*outcome, *busy) {
        (_, true) => {
            html! { <p class="muted" role="status" data-testid="proposal-status">{ "Proposing…" }</p> }
        }
        (Some(Ok(unmet)), _) if unmet.is_empty() => html! {
            <p class="ok" role="status" data-testid="proposal-status">{ "Proposed: every rule on target at its width, mirrored layers alike. Undo brings the previous stack back." }</p>
        },
        (Some(Ok(unmet)), _) => html! {
            <div role="status" data-testid="proposal-status">
                <p class="error">{ "Proposed, but not everything could be met (Undo brings the previous stack back):" }</p>
                <ul>{ for unmet.iter().map(|u| html! { <li>{ u.clone() }</li> }) }</ul>
            </div>
        },
        (Some(Err(e)), _) => {
            html! { <p class="error" role="alert" data-testid="proposal-status">{ format!("No proposal: {e}") }</p> }
        }
        (None, _) => html! {},
    };
    let rows = p.stackup.layers.iter().enumerate().filter_map(|(i, layer)| {
        let (Layer::Core(m) | Layer::Prepreg(m)) = layer else {
            return None;
        };
        let name = m.name.clone();
        let mut options: Vec<(AttrValue, AttrValue)> = vec![("".into(), "entered directly".into())];
        options.extend(GLASS_STYLES.iter().map(|g| (AttrValue::from(g.style), AttrValue::from(format!("{} glass", g.style)))));
        let selected: AttrValue = m.construction.as_ref().map(|c| c.glass.clone()).unwrap_or_default().into();
        let style = {
            let d = d.clone();
            html! { <Select id={format!("layer-{i}-glass")} label={format!("{name} glass style")} hidden_label=true {options} {selected}
                onchange={Callback::from(move |v: String| d.emit(Action::SetGlass(i, v)))} /> }
        };
        let built = m.construction.as_ref().and_then(|c| c.construction().ok()).and_then(|c| c.laminate().ok());
        let (plies, resin, skew) = match (&m.construction, built) {
            (Some(c), Some(l)) => (
                html! { <TextField field={Field::Layer(i, LayerField::Plies)} label={format!("{name} plies")} hidden_label=true size="narrow"
                    value={c.plies.to_string()} draft={draft(Field::Layer(i, LayerField::Plies))} dispatch={d.clone()} /> },
                html! { <TextField field={Field::Layer(i, LayerField::Resin)} label={format!("{name} resin content (%)")} hidden_label=true size="narrow"
                    value={format_sig(c.resin_pct, 4)} draft={draft(Field::Layer(i, LayerField::Resin))} dispatch={d.clone()} /> },
                html! { <span data-testid={format!("layer-{i}-weave-skew")} data-value={l.weave_skew_s_per_m.to_string()}>
                    { format!("≤ {} ps/in", format_sig(l.weave_skew_s_per_m * 1e12 * 0.0254, 3)) }</span> },
            ),
            _ => (html! {}, html! {}, html! {}),
        };
        Some(html! {
            <tr data-testid={format!("glass-row-{i}")}>
                <th scope="row">{ name.clone() }</th>
                <td>{ layer.kind_name() }</td>
                <td>{ style }</td>
                <td>{ plies }</td>
                <td>{ resin }</td>
                <td class="num" data-testid={format!("layer-{i}-built-thickness")} data-value={m.thickness_m.to_string()}>{ bridge::length_label(m.thickness_m, unit) }</td>
                <td class="num">{ format_sig(m.dk, 4) }</td>
                <td class="num">{ skew }</td>
            </tr>
        })
    });
    html! {
        <section class="panel glass" data-testid="glass-panel" aria-labelledby="glass-title">
            <h2 id="glass-title">{ "Glass constructions" }<span class="sub">{ " what each core and prepreg is built from" }</span></h2>
            <table class="glass-table">
                <thead><tr>
                    <th scope="col">{ "Layer" }</th><th scope="col">{ "Type" }</th><th scope="col">{ "Glass style" }</th>
                    <th scope="col">{ "Plies" }</th><th scope="col">{ "Resin (%)" }</th>
                    <th scope="col">{ format!("Thickness as built ({})", unit.symbol()) }</th><th scope="col">{ "Dk" }</th>
                    <th scope="col">{ "Weave skew, worst case" }</th>
                </tr></thead>
                <tbody>{ for rows }</tbody>
            </table>
            <div class="settings-row">
                <button type="button" data-testid="propose-stack" onclick={propose} disabled={*busy}>{ "Propose constructions" }</button>
                <span class="muted">{ match target {
                    Some(t) => format!("every core and prepreg from glass: rules on target at their present widths, the board at {}, mirrored layers alike", bridge::length_label(t, unit)),
                    None => "every core and prepreg from glass: rules on target at their present widths, mirrored layers alike (set a target board thickness above to aim at one)".to_string(),
                } }</span>
            </div>
            { outcome_view }
            <p class="muted">{ "A style's thickness, Dk and Df follow from its plies and resin content, calibrated to the Dk and Df the layer had (its datasheet point). Style figures are typical values of the trade (common practice): check them against your fabricator's construction table. Typing a thickness or Dk in the stack enters the layer directly again." }</p>
        </section>
    }
}
