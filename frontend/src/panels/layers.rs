//! The layer stack as an editable table, top to bottom, with the stack picture beside it, live totals against the
//! target board thickness, the symmetry check, and the quick builders: a generic starter stack, insert above and
//! below, renumbering.

use crate::bridge;
use crate::panels::stack_picture::StackPicture;
use crate::state::{Action, Draft, Field, LayerField, LayerKind, ProcessField};
use crate::widgets::{Select, TextField};
use ohmstack_core::base::units::{format_sig, LengthUnit, OZ_COPPER};
use ohmstack_core::design::material::{PresetUse, PRESETS, PRESET_CAVEAT};
use ohmstack_core::design::stackup::CopperRole;
use ohmstack_core::design::starter;
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

/// Focuses the element `id` (scrolling it into view) once the page has rendered.
fn focus_later(id: String) {
    gloo::timers::callback::Timeout::new(0, move || {
        if let Some(el) = web_sys::window()
            .and_then(|w| w.document())
            .and_then(|d| d.get_element_by_id(&id))
            .and_then(|e| e.dyn_into::<web_sys::HtmlElement>().ok())
        {
            let _ = el.focus();
        }
    })
    .forget();
}

/// A signed length and percentage: "−13 µm (−0.8 %)".
fn signed(metres: f64, pct: f64, unit: LengthUnit) -> String {
    let sign = if metres < 0.0 { "−" } else { "+" };
    format!(
        "{sign}{} ({sign}{} %)",
        bridge::length_label(metres.abs(), unit),
        format_sig(pct.abs(), 2)
    )
}

#[component]
pub fn Layers(props: &LayersProps) -> Html {
    let selected = use_state(|| None::<usize>);
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
            <tr class={classes!("layer", kind.key(), (*selected == Some(i)).then_some("picked"))} onkeydown={on_key} data-testid={format!("layer-row-{i}")}>
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
                    { button("insert-above", "+↑", format!("Insert a layer above {name}"), Action::InsertAbove(i), false) }
                    { button("insert", "+↓", format!("Insert a layer below {name}"), Action::InsertLayer(i), false) }
                    { button("dup", "❐", format!("Duplicate {name}"), Action::DuplicateLayer(i), false) }
                    { button("remove", "×", format!("Remove {name}"), Action::RemoveLayer(i), n <= 1) }
                </td>
            </tr>
        }
    });
    let target_field = Field::Process(ProcessField::TargetThickness);
    let target_input = html! {
        <TextField field={target_field} label={format!("Target board thickness ({})", unit.symbol())} hidden_label=true size="narrow"
            value={project.fab.target_thickness_m.map(|t| bridge::length_text(t, unit)).unwrap_or_default()}
            placeholder={AttrValue::from("none")} draft={draft(target_field)} dispatch={d.clone()} />
    };
    let against_target = props
        .plan
        .as_ref()
        .and_then(|plan| project.fab.thickness_check(plan.total_thickness_m))
        .map(|c| {
            let diff = signed(c.difference_m, c.difference_pct, unit);
            let tol = format_sig(c.tolerance_pct, 3);
            if c.within {
                html! { <span class="ok" data-testid="target-difference" data-within="true" data-value={c.difference_m.to_string()}>
                    { format!("{diff} from the target {}, within the ±{tol} % board thickness tolerance", bridge::length_label(c.target_m, unit)) }</span> }
            } else {
                html! { <span class="error" data-testid="target-difference" data-within="false" data-value={c.difference_m.to_string()} role="status">
                    { format!("{diff} from the target {}: outside the ±{tol} % board thickness tolerance", bridge::length_label(c.target_m, unit)) }</span> }
            }
        });
    let totals = match &props.plan {
        Some(plan) => html! {
            <div class="totals" data-testid="stack-totals">
                <span>{ "Board thickness " }<strong data-testid="board-thickness" data-value={plan.total_thickness_m.to_string()}>{ bridge::length_label(plan.total_thickness_m, unit) }</strong>
                    { " (finished, prepreg pressed)" }</span>
                <span>{ " · " }<strong data-testid="copper-count">{ plan.copper_count }</strong>{ " copper layers" }</span>
                if plan.symmetric {
                    <span class="ok" data-testid="symmetry">{ " · mirror-symmetric" }</span>
                } else {
                    <span class="warn" data-testid="symmetry" role="status">{ " · not mirror-symmetric about the centre: an unbalanced stack tends to bow and twist in lamination and reflow (common practice)" }</span>
                }
                // Inline with the totals (the label is for screen readers; the words before the box say it), so the
                // rules stay as high on the page as before.
                { " · " }
                <span class="target-row">
                    <span aria-hidden="true">{ format!("target ({})", unit.symbol()) }</span>{ target_input }{ against_target }
                </span>
            </div>
        },
        None => html! {},
    };
    let add = {
        let d = d.clone();
        Callback::from(move |_: MouseEvent| d.emit(Action::AddLayer))
    };
    let renumber = {
        let d = d.clone();
        Callback::from(move |_: MouseEvent| d.emit(Action::RenumberLayers))
    };
    let on_starter = {
        let d = d.clone();
        Callback::from(move |e: Event| {
            let select: web_sys::HtmlSelectElement = e.target_unchecked_into();
            let value = select.value();
            // The menu is a command, not a setting: it goes back to its prompt once used.
            select.set_value("");
            if let Ok(n) = value.parse::<usize>() {
                d.emit(Action::Starter(n));
            }
        })
    };
    let starter_menu = html! {
        <div class="field no-print">
            <label for="starter-stack">{ "Start from" }</label>
            <select id="starter-stack" data-testid="starter-stack" onchange={on_starter}>
                <option value="" selected=true>{ "a generic stack…" }</option>
                { for starter::STARTER_COPPER_COUNTS.iter().filter_map(|&n| starter::describe(n).map(|text| html! {
                    <option value={n.to_string()}>{ format!("{text}, 1.6 mm") }</option>
                })) }
            </select>
        </div>
    };
    let on_pick = {
        let selected = selected.clone();
        Callback::from(move |i: usize| {
            selected.set(Some(i));
            focus_later(Field::Layer(i, LayerField::Name).id());
        })
    };
    html! {
        <section class="panel" aria-labelledby="stack-title">
            <div class="stack-head">
                <h2 id="stack-title">{ "Layer stack" }<span class="sub">{ " top to bottom" }</span></h2>
                { starter_menu }
            </div>
            { totals }
            <div class="stack-layout">
            <StackPicture project={project.clone()} selected={*selected} {on_pick} />
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
            </div>
            <p class="hint">
                <button type="button" class="no-print" id="add-layer" onclick={add}>{ "Add layer at bottom" }</button>
                { " " }
                <button type="button" class="no-print" id="renumber-layers" onclick={renumber}
                    title="Copper L1, L2, … from the top; cores and prepregs by the copper around them; rules follow">{ "Renumber layers" }</button>
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
