//! The process assumptions behind every spread, yield and Cpk: the ± limits the tolerance spread varies, the etch
//! factor, outer plating, copper fill and foil, each editable per project (and per layer where the core has it),
//! with the values still at their defaults marked as common practice.

use crate::bridge;
use crate::state::{Action, Draft, Field, LayerField, ProcessField, TolKind};
use crate::widgets::{Select, TextField};
use ohmstack_core::base::units::format_sig;
use ohmstack_core::design::process::{Distribution, Process};
use ohmstack_core::design::roughness::{Foil, Roughness};
use ohmstack_core::{Layer, Project};
use std::collections::BTreeMap;
use std::rc::Rc;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct ProcessProps {
    pub project: Rc<Project>,
    pub drafts: Rc<BTreeMap<Field, Draft>>,
    pub dispatch: Callback<Action>,
}

/// The tag beside a value still at its default.
fn common_practice(default: bool, id: String) -> Html {
    if default {
        html! { <span class="badge info" data-testid={id} title="the default: what fabricators commonly quote (common practice, no source); replace it with your fabricator's figure">{ "common practice" }</span> }
    } else {
        html! { <span class="badge ok" data-testid={id}>{ "set for this project" }</span> }
    }
}

fn distribution_key(d: Distribution) -> &'static str {
    match d {
        Distribution::Normal => "normal",
        Distribution::Uniform => "uniform",
    }
}

/// The foil preset a copper surface matches, if any (`Some(None)` for smooth copper).
fn foil_of(r: Option<Roughness>) -> Option<Option<Foil>> {
    match r {
        None | Some(Roughness::Smooth) => Some(None),
        Some(r) => Foil::ALL
            .into_iter()
            .find(|f| f.hammerstad_groiss() == r)
            .map(Some),
    }
}

#[component]
pub fn ProcessPanel(props: &ProcessProps) -> Html {
    let project = &props.project;
    let unit = project.units;
    let d = &props.dispatch;
    let draft = |f: Field| props.drafts.get(&f).cloned();
    let process = project.process.clone().unwrap_or_default();
    let defaults = Process::default();
    let tol_rows = TolKind::ALL.iter().map(|&k| {
        let f = Field::Process(ProcessField::Tol(k));
        let tol = k.get(&process);
        let on_dist = {
            let d = d.clone();
            Callback::from(move |v: String| {
                let dist = if v == "uniform" { Distribution::Uniform } else { Distribution::Normal };
                d.emit(Action::SetDistribution(k, dist))
            })
        };
        html! {
            <tr data-testid={format!("tol-row-{}", k.key())}>
                <th scope="row">{ k.label() }<span class="muted">{ format!(" — {}", k.what()) }</span></th>
                <td><TextField field={f} label={format!("{} ± limit", k.label())} hidden_label=true size="narrow"
                    value={k.text(&tol, unit)} draft={draft(f)} dispatch={d.clone()} /></td>
                <td><Select id={format!("tol-{}-distribution", k.key())} label={format!("{} distribution", k.label())} hidden_label=true
                    options={vec![("normal".into(), "normal (limit = 3σ)".into()), ("uniform".into(), "uniform".into())]}
                    selected={distribution_key(tol.distribution)} onchange={on_dist} /></td>
                <td>{ common_practice(tol == k.get(&defaults), format!("tol-{}-default", k.key())) }</td>
            </tr>
        }
    });
    let fab = &project.fab;
    let fab_field = |pf: ProcessField,
                     label: &str,
                     value: String,
                     placeholder: &str,
                     default: bool,
                     hint: &str| {
        let f = Field::Process(pf);
        html! {
            <tr data-testid={format!("fab-row-{}", pf.key())}>
                <th scope="row">{ label.to_string() }<span class="muted">{ format!(" — {hint}") }</span></th>
                <td><TextField field={f} label={label.to_string()} hidden_label=true size="narrow" {value}
                    placeholder={AttrValue::from(placeholder.to_string())} draft={draft(f)} dispatch={d.clone()} /></td>
                <td>{ common_practice(default, format!("fab-{}-default", pf.key())) }</td>
            </tr>
        }
    };
    let etch = fab_field(
        ProcessField::EtchFactor,
        "Etch factor",
        fab.etch_factor
            .map(|e| format_sig(e, 4))
            .unwrap_or_default(),
        "none",
        fab.etch_factor.is_none(),
        "copper thickness over one side's undercut; blank draws traces as rectangles",
    );
    let plating = fab_field(
        ProcessField::OuterPlating,
        &format!("Outer plating ({})", unit.symbol()),
        fab.outer_plating_m.map(|m| bridge::length_text(m, unit)).unwrap_or_default(),
        "not given",
        fab.outer_plating_m.is_none(),
        "copper plated onto the outer layers' base foil; their finished thickness is foil plus plating",
    );
    let board = fab_field(
        ProcessField::BoardThicknessTol,
        "Board thickness ± (%)",
        fab.thickness_tolerance_pct
            .map(|t| format_sig(t, 4))
            .unwrap_or_default(),
        "10",
        fab.thickness_tolerance_pct.is_none(),
        "finished board thickness limit for the fab notes",
    );
    let outer: Vec<String> = project
        .stackup
        .outer_coppers()
        .iter()
        .map(|c| c.name.clone())
        .collect();
    let layer_rows = project.stackup.layers.iter().enumerate().map(|(i, layer)| {
        let name = layer.name().to_string();
        match layer {
            Layer::Copper(c) => {
                let fill = Field::Layer(i, LayerField::Fill);
                let foil = foil_of(c.roughness);
                let mut options: Vec<(AttrValue, AttrValue)> = vec![("smooth".into(), "smooth".into())];
                options.extend(Foil::ALL.iter().map(|f| {
                    (AttrValue::from(f.label()), AttrValue::from(format!("{} foil ({} µm RMS)", f.label(), format_sig(f.rms_m() * 1e6, 2))))
                }));
                let selected: AttrValue = match foil {
                    Some(None) => "smooth".into(),
                    Some(Some(f)) => f.label().into(),
                    None => {
                        options.push(("custom".into(), "as saved in the file".into()));
                        "custom".into()
                    }
                };
                let on_foil = {
                    let d = d.clone();
                    Callback::from(move |v: String| {
                        if v == "smooth" {
                            d.emit(Action::SetFoil(i, None))
                        } else if let Some(f) = Foil::from_label(&v) {
                            d.emit(Action::SetFoil(i, Some(f)))
                        }
                    })
                };
                let base = if outer.contains(&name) {
                    let f = Field::Layer(i, LayerField::BaseFoil);
                    html! { <TextField field={f} label={format!("{name} base foil ({})", unit.symbol())} hidden_label=true size="narrow"
                        value={bridge::length_text(fab.base_foil_m(c.thickness_m), unit)} draft={draft(f)} dispatch={d.clone()} /> }
                } else {
                    html! { <span class="muted">{ "inner: no plating" }</span> }
                };
                html! {
                    <tr data-testid={format!("process-layer-{i}")}>
                        <th scope="row">{ name.clone() }<span class="muted">{ " copper" }</span></th>
                        <td><TextField field={fill} label={format!("{name} copper fill (%)")} hidden_label=true size="narrow"
                            value={c.fill_pct.map(|f| format_sig(f, 4)).unwrap_or_default()}
                            placeholder={AttrValue::from(format_sig(c.role.default_fill_pct(), 3))} draft={draft(fill)} dispatch={d.clone()} /></td>
                        <td><Select id={format!("layer-{i}-foil")} label={format!("{name} copper surface")} hidden_label=true {options} {selected} onchange={on_foil} /></td>
                        <td>{ base }</td>
                        <td>{ common_practice(c.fill_pct.is_none() && c.roughness.is_none(), format!("process-layer-{i}-default")) }</td>
                    </tr>
                }
            }
            Layer::Core(_) | Layer::Prepreg(_) | Layer::SolderMask(_) => {
                let over = process.layers.iter().find(|o| o.layer == name);
                let thickness = Field::Layer(i, LayerField::TolThickness);
                let dk = Field::Layer(i, LayerField::TolDk);
                let t_kind = match layer {
                    Layer::Core(_) => TolKind::CoreThickness,
                    Layer::Prepreg(_) => TolKind::PrepregThickness,
                    _ => TolKind::MaskThickness,
                };
                let dk_default = if matches!(layer, Layer::SolderMask(_)) { "held".to_string() } else { TolKind::Dk.text(&process.dk, unit) };
                html! {
                    <tr data-testid={format!("process-layer-{i}")}>
                        <th scope="row">{ name.clone() }<span class="muted">{ format!(" {}", layer.kind_name()) }</span></th>
                        <td><TextField field={thickness} label={format!("{name} thickness ± limit")} hidden_label=true size="narrow"
                            value={over.and_then(|o| o.thickness).map(|t| t_kind.text(&t, unit)).unwrap_or_default()}
                            placeholder={AttrValue::from(t_kind.text(&t_kind.get(&process), unit))} draft={draft(thickness)} dispatch={d.clone()} /></td>
                        <td><TextField field={dk} label={format!("{name} Dk ± limit")} hidden_label=true size="narrow"
                            value={over.and_then(|o| o.dk).map(|t| TolKind::Dk.text(&t, unit)).unwrap_or_default()}
                            placeholder={AttrValue::from(dk_default)} draft={draft(dk)} dispatch={d.clone()} /></td>
                        <td></td>
                        <td>{ common_practice(over.is_none(), format!("process-layer-{i}-default")) }</td>
                    </tr>
                }
            }
        }
    });
    let samples = bridge::field_options().spread_samples;
    html! {
        <section class="panel" aria-labelledby="process-title" data-testid="process-panel">
            <h2 id="process-title">{ "Process assumptions" }<span class="sub">{ " behind every spread, yield and Cpk" }</span></h2>
            <p class="hint">{ format!(
                "The tolerance spread varies each quantity below between its ± limits ({samples} samples; a normal limit is read as 3σ) and counts the share inside each rule's tolerance. \
                 Values marked common practice are typical quotes for a standard multilayer, not any fabricator's figures: replace them with yours. \
                 A limit is a length in {} (or with its unit), or a percentage such as 10 %.", unit.symbol()) }</p>
            <div class="scroll">
            <table class="process" data-testid="process-tolerances">
                <caption>{ "Limits the spread varies" }</caption>
                <thead><tr><th scope="col">{"Quantity"}</th><th scope="col">{"± limit"}</th><th scope="col">{"Distribution"}</th><th scope="col">{"Source"}</th></tr></thead>
                <tbody>{ for tol_rows }</tbody>
            </table>
            <table class="process" data-testid="process-fab">
                <caption>{ "Fabrication" }</caption>
                <thead><tr><th scope="col">{"Assumption"}</th><th scope="col">{"Value"}</th><th scope="col">{"Source"}</th></tr></thead>
                <tbody>{ etch }{ plating }{ board }</tbody>
            </table>
            <table class="process" data-testid="process-layers">
                <caption>{ "Per layer (blank: the project's value above, or the role's fill)" }</caption>
                <thead><tr><th scope="col">{"Layer"}</th><th scope="col">{"Thickness ± / copper fill (%)"}</th><th scope="col">{"Dk ± / copper surface"}</th>
                    <th scope="col">{ format!("Base foil ({})", unit.symbol()) }</th><th scope="col">{"Source"}</th></tr></thead>
                <tbody>{ for layer_rows }</tbody>
            </table>
            </div>
        </section>
    }
}
