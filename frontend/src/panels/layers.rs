//! The layer stack as an editable table, top to bottom, with live totals and the symmetry check.

use crate::bridge;
use crate::state::{Action, Draft, Field, LayerField, LayerKind};
use crate::widgets::{Select, TextField};
use ohmstack_core::base::units::{format_sig, LengthUnit, OZ_COPPER};
use ohmstack_core::design::material::{PresetUse, PRESETS, PRESET_CAVEAT};
use ohmstack_core::design::stackup::CopperRole;
use ohmstack_core::{Layer, Plan, Project};
use std::collections::BTreeMap;
use std::rc::Rc;
use wasm_bindgen::JsCast;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct LayersProps {
    pub project: Rc<Project>,
    pub drafts: Rc<BTreeMap<Field, Draft>>,
    /// The plan to show totals from (the last good one while an entry is invalid).
    pub plan: Option<Rc<Plan>>,
    pub dispatch: Callback<Action>,
}

const WEIGHTS_OZ: [f64; 3] = [0.5, 1.0, 2.0];

fn role_key(role: CopperRole) -> &'static str {
    match role {
        CopperRole::Signal => "signal",
        CopperRole::Plane => "plane",
        CopperRole::Mixed => "mixed",
    }
}

/// Moves focus to the control with the same job in row `to` once the moved rows have rendered.
fn refocus(from: usize, to: usize) {
    let Some(document) = web_sys::window().and_then(|w| w.document()) else {
        return;
    };
    let Some(active) = document.active_element() else {
        return;
    };
    let id = active.id();
    let prefix = format!("layer-{from}-");
    let Some(rest) = id.strip_prefix(&prefix) else {
        return;
    };
    let target = format!("layer-{to}-{rest}");
    gloo::timers::callback::Timeout::new(0, move || {
        if let Some(el) = web_sys::window()
            .and_then(|w| w.document())
            .and_then(|d| d.get_element_by_id(&target))
            .and_then(|e| e.dyn_into::<web_sys::HtmlElement>().ok())
        {
            let _ = el.focus();
        }
    })
    .forget();
}

#[component]
pub fn Layers(props: &LayersProps) -> Html {
    let project = &props.project;
    let unit = project.units;
    let n = project.stackup.layers.len();
    let d = &props.dispatch;
    let draft = |f: Field| props.drafts.get(&f).cloned();
    let rows = project.stackup.layers.iter().enumerate().map(|(i, layer)| {
        let kind = LayerKind::of(layer);
        let name = layer.name().to_string();
        let on_key = {
            let d = d.clone();
            Callback::from(move |e: KeyboardEvent| {
                if !e.alt_key() {
                    return;
                }
                let up = match e.key().as_str() {
                    "ArrowUp" => true,
                    "ArrowDown" => false,
                    _ => return,
                };
                let to = if up { i.checked_sub(1) } else { Some(i + 1).filter(|&j| j < n) };
                if let Some(to) = to {
                    e.prevent_default();
                    refocus(i, to);
                    d.emit(Action::MoveLayer(i, up));
                }
            })
        };
        let kind_select = {
            let d = d.clone();
            html! { <Select id={format!("layer-{i}-type")} label={format!("{name} type")} hidden_label=true
                options={LayerKind::ALL.iter().map(|k| (AttrValue::from(k.key()), AttrValue::from(k.label()))).collect::<Vec<_>>()}
                selected={kind.key()}
                onchange={Callback::from(move |v: String| if let Some(k) = LayerKind::from_key(&v) { d.emit(Action::SetLayerKind(i, k)) })} /> }
        };
        let thickness = html! {
            <TextField field={Field::Layer(i, LayerField::Thickness)} label={format!("{name} thickness ({})", unit.symbol())}
                hidden_label=true size="narrow" value={bridge::length_text(layer.thickness_m(), unit)}
                draft={draft(Field::Layer(i, LayerField::Thickness))} dispatch={d.clone()} />
        };
        let (middle, right, dk, df, freq) = match layer {
            Layer::Copper(c) => {
                let oz = c.weight_oz();
                let matched = WEIGHTS_OZ.iter().find(|&&w| (c.thickness_m - w * OZ_COPPER).abs() <= 1e-9 * OZ_COPPER);
                let mut options: Vec<(AttrValue, AttrValue)> = WEIGHTS_OZ
                    .iter()
                    .map(|w| (AttrValue::from(w.to_string()), AttrValue::from(format!("{w} oz"))))
                    .collect();
                options.push(("custom".into(), format!("≈ {} oz", format_sig(oz, 2)).into()));
                let selected: AttrValue = matched.map(|w| w.to_string()).unwrap_or_else(|| "custom".into()).into();
                let weight = {
                    let d = d.clone();
                    html! { <Select id={format!("layer-{i}-weight")} label={format!("{name} copper weight")} hidden_label=true
                        {options} {selected}
                        onchange={Callback::from(move |v: String| if let Ok(oz) = v.parse::<f64>() { d.emit(Action::SetCopperWeight(i, oz)) })} /> }
                };
                let role = {
                    let d = d.clone();
                    html! { <Select id={format!("layer-{i}-role")} label={format!("{name} role")} hidden_label=true
                        options={["signal", "plane", "mixed"].iter().map(|r| (AttrValue::from(*r), AttrValue::from(*r))).collect::<Vec<_>>()}
                        selected={role_key(c.role)}
                        onchange={Callback::from(move |v: String| {
                            let role = match v.as_str() { "plane" => CopperRole::Plane, "mixed" => CopperRole::Mixed, _ => CopperRole::Signal };
                            d.emit(Action::SetCopperRole(i, role))
                        })} /> }
                };
                (weight, role, html! {}, html! {}, html! {})
            }
            Layer::Core(m) | Layer::Prepreg(m) | Layer::SolderMask(m) => {
                let want = if kind == LayerKind::SolderMask { PresetUse::Mask } else { PresetUse::Laminate };
                let mut options: Vec<(AttrValue, AttrValue)> = vec![("".into(), "preset…".into())];
                options.extend(PRESETS.iter().filter(|p| p.used_for == want).map(|p| {
                    (AttrValue::from(p.id), AttrValue::from(format!("{} (Dk {}, Df {})", p.name, p.dk, p.df)))
                }));
                let selected: AttrValue = PRESETS
                    .iter()
                    .find(|p| p.name == m.material && p.dk == m.dk && p.df == m.df && p.spec_freq_hz == m.spec_freq_hz)
                    .map(|p| p.id)
                    .unwrap_or("")
                    .into();
                let unset = selected.is_empty().then_some("unset");
                let preset = {
                    let d = d.clone();
                    html! { <Select id={format!("layer-{i}-preset")} label={format!("{name} material preset")} hidden_label=true
                        class={classes!(unset)} {options} {selected}
                        onchange={Callback::from(move |v: String| if let Some(p) = PRESETS.iter().find(|p| p.id == v) { d.emit(Action::ApplyPreset(i, p.id)) })} /> }
                };
                let material = html! {
                    <TextField field={Field::Layer(i, LayerField::Material)} label={format!("{name} material name")} hidden_label=true
                        size="wide" value={m.material.clone()} draft={draft(Field::Layer(i, LayerField::Material))} dispatch={d.clone()} />
                };
                let dk = html! { <TextField field={Field::Layer(i, LayerField::Dk)} label={format!("{name} Dk")} hidden_label=true size="narrow"
                    value={format_sig(m.dk, 6)} draft={draft(Field::Layer(i, LayerField::Dk))} dispatch={d.clone()} /> };
                let df = html! { <TextField field={Field::Layer(i, LayerField::Df)} label={format!("{name} Df")} hidden_label=true size="narrow"
                    value={format_sig(m.df, 6)} draft={draft(Field::Layer(i, LayerField::Df))} dispatch={d.clone()} /> };
                let freq = html! { <TextField field={Field::Layer(i, LayerField::SpecFreq)} label={format!("{name} Dk/Df frequency (GHz)")} hidden_label=true size="narrow"
                    value={bridge::ghz_text(m.spec_freq_hz)} draft={draft(Field::Layer(i, LayerField::SpecFreq))} dispatch={d.clone()} /> };
                (preset, material, dk, df, freq)
            }
        };
        let pressed = props
            .plan
            .as_ref()
            .and_then(|p| p.layers.get(i))
            .filter(|row| row.name == name)
            .map(|row| row.pressed_thickness_m);
        let pressed_cell = match (kind, pressed) {
            (LayerKind::Prepreg, Some(t)) => html! { <span data-testid={format!("layer-{i}-pressed")} data-value={t.to_string()}>{ bridge::length_label(t, unit) }</span> },
            _ => html! {},
        };
        let button = |key: &str, glyph: &str, label: String, action: Action, disabled: bool| {
            let d = d.clone();
            html! {
                <button type="button" id={format!("layer-{i}-{key}")} class="icon" aria-label={label.clone()} title={label}
                    {disabled} onclick={Callback::from(move |_| d.emit(action.clone()))}>{ glyph.to_string() }</button>
            }
        };
        html! {
            <tr class={classes!("layer", kind.key())} onkeydown={on_key} data-testid={format!("layer-row-{i}")}>
                <td class="idx">{ i + 1 }</td>
                <td><TextField field={Field::Layer(i, LayerField::Name)} label={format!("Layer {} name", i + 1)} hidden_label=true
                    size="medium" value={name.clone()} draft={draft(Field::Layer(i, LayerField::Name))} dispatch={d.clone()} /></td>
                <td>{ kind_select }</td>
                <td>{ thickness }</td>
                <td>{ middle }</td>
                <td>{ right }</td>
                <td>{ dk }</td>
                <td>{ df }</td>
                <td>{ freq }</td>
                <td class="num">{ pressed_cell }</td>
                <td class="actions no-print">
                    { button("up", "↑", format!("Move {name} up (Alt+↑)"), Action::MoveLayer(i, true), i == 0) }
                    { button("down", "↓", format!("Move {name} down (Alt+↓)"), Action::MoveLayer(i, false), i + 1 >= n) }
                    { button("insert", "+", format!("Insert a layer below {name}"), Action::InsertLayer(i), false) }
                    { button("dup", "❐", format!("Duplicate {name}"), Action::DuplicateLayer(i), false) }
                    { button("remove", "×", format!("Remove {name}"), Action::RemoveLayer(i), n <= 1) }
                </td>
            </tr>
        }
    });
    let totals = match &props.plan {
        Some(plan) => html! {
            <p class="totals" data-testid="stack-totals">
                <span>{ "Board thickness " }<strong data-testid="board-thickness" data-value={plan.total_thickness_m.to_string()}>{ bridge::length_label(plan.total_thickness_m, unit) }</strong>
                    { " (finished, prepreg pressed)" }</span>
                <span>{ " · " }<strong data-testid="copper-count">{ plan.copper_count }</strong>{ " copper layers" }</span>
                if plan.symmetric {
                    <span class="ok" data-testid="symmetry">{ " · mirror-symmetric" }</span>
                } else {
                    <span class="warn" data-testid="symmetry" role="status">{ " · not mirror-symmetric about the centre: an unbalanced stack tends to bow and twist in lamination and reflow (common practice)" }</span>
                }
            </p>
        },
        None => html! {},
    };
    let add = {
        let d = d.clone();
        Callback::from(move |_: MouseEvent| d.emit(Action::AddLayer))
    };
    html! {
        <section class="panel" aria-labelledby="stack-title">
            <h2 id="stack-title">{ "Layer stack" }<span class="sub">{ " top to bottom" }</span></h2>
            { totals }
            <div class="scroll">
            <table class="stack">
                <thead><tr>
                    <th scope="col">{"#"}</th><th scope="col">{"Name"}</th><th scope="col">{"Type"}</th>
                    <th scope="col">{ format!("Thickness ({})", unit.symbol()) }</th>
                    <th scope="col">{"Weight / preset"}</th><th scope="col">{"Role / material"}</th>
                    <th scope="col">{"Dk"}</th><th scope="col">{"Df"}</th><th scope="col">{"at (GHz)"}</th>
                    <th scope="col">{"Pressed"}</th><th scope="col" class="no-print">{"Actions"}</th>
                </tr></thead>
                <tbody>{ for rows }</tbody>
            </table>
            </div>
            <p class="hint">
                <button type="button" class="no-print" id="add-layer" onclick={add}>{ "Add layer at bottom" }</button>
                { " Presets: " }{ PRESET_CAVEAT }{ ". Thickness accepts a number in " }{ unit_words(unit) }{ ", or 0.1mm, 4mil, 1oz. Alt+↑/↓ moves the focused row." }
            </p>
        </section>
    }
}

fn unit_words(unit: LengthUnit) -> &'static str {
    match unit {
        LengthUnit::Um => "µm",
        LengthUnit::Mm => "mm",
        LengthUnit::Mil => "mil",
        LengthUnit::In => "inches",
    }
}
