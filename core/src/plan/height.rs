//! Solving the stack instead of the trace: the thickness of one dielectric layer (a core, or a prepreg as bought,
//! before pressing) that puts a rule on target at the width (and spacing) it gives.
//!
//! The impedance rises as a plane moves away, so Z is monotonic in the thickness of any layer between the trace
//! and a reference plane, and a bracketed root finder on ln(thickness) finds it (the same finder as the width).
//! A layer outside that span does not move Z at all, which is reported rather than searched.

use crate::base::error::{Error, Result};
use crate::base::roots::{self, Bracket};
use crate::design::project::{ImpedanceRule, Project, Solve};
use crate::design::stackup::Layer;
use crate::engine::Engine;
use crate::section::{self, Dims};
use serde::Serialize;

/// Relative impedance distance the search stops at on a field engine (a small fraction of its 0.1 % accuracy).
const FIELD_TOL: f64 = 1e-5;
/// How far the search may move the layer from its present thickness, each way (×).
const RANGE: f64 = 6.0;

/// The thickness that puts a rule on target.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LayerThickness {
    pub rule: String,
    pub layer: String,
    /// "core" or "prepreg".
    pub kind: &'static str,
    /// Thickness as the stack enters it (a prepreg's as bought), m.
    pub thickness_m: f64,
    /// The same layer in the finished board (a prepreg pressed into the neighbouring copper), m.
    pub pressed_thickness_m: f64,
    /// The layer's thickness before the search, m.
    pub was_m: f64,
    /// The rule's impedance at that thickness (Z0, or Zdiff for a pair), Ω.
    pub impedance_ohm: f64,
    pub target_ohm: f64,
    pub method: &'static str,
}

/// The thickness of `layer` that puts `rule` on its target at the rule's own width and spacing, on the rule's
/// engine. The rule's solve setting is set aside: its width (and spacing) are taken as given.
pub fn solve_layer_thickness(
    project: &Project,
    rule: &ImpedanceRule,
    layer: &str,
) -> Result<LayerThickness> {
    solve_layers_thickness(project, rule, &[layer])
}

/// [`solve_layer_thickness`] for layers that keep one thickness between them (a layer and its mirror in a
/// symmetric stack): all of `layers` move together; the answer names the first.
pub fn solve_layers_thickness(
    project: &Project,
    rule: &ImpedanceRule,
    layers: &[&str],
) -> Result<LayerThickness> {
    let bad = |reason: String| Error::Invalid {
        field: "layer".into(),
        reason,
    };
    let mut indices = Vec::new();
    for layer in layers {
        let idx = project
            .stackup
            .find(layer)
            .ok_or_else(|| bad(format!("no layer named {layer:?} in the stack")))?;
        if let other @ (Layer::Copper(_) | Layer::SolderMask(_)) = &project.stackup.layers[idx] {
            return Err(bad(format!(
                "{layer:?} is a {}: only a core's or a prepreg's thickness is solved for",
                other.kind_name()
            )));
        }
        indices.push(idx);
    }
    let (Some(&idx), Some(layer)) = (indices.first(), layers.first()) else {
        return Err(bad("no layer given".into()));
    };
    let (kind, was) = match &project.stackup.layers[idx] {
        Layer::Core(d) => ("core", d.thickness_m),
        Layer::Prepreg(d) => ("prepreg", d.thickness_m),
        _ => return Err(bad(format!("{layer:?} is not a core or a prepreg"))),
    };
    let fixed = ImpedanceRule {
        solve: Solve::Nothing,
        ..rule.clone()
    };
    fixed.validate(&project.stackup)?;
    let engine = Engine::for_rule(project, rule);
    let dims = Dims {
        w: rule.width_m,
        s: rule.spacing_m,
        gap: rule.gap_m,
    };
    let with = |t: f64| -> Project {
        let mut p = project.clone();
        for &i in &indices {
            if let Layer::Core(d) | Layer::Prepreg(d) = &mut p.stackup.layers[i] {
                d.thickness_m = t;
            }
        }
        p
    };
    let z = |t: f64| -> Result<f64> {
        let p = with(t);
        let cs = section::resolve(&p.stackup, &fixed)?;
        engine.impedance(&cs, rule.structure, &dims)
    };
    let (lo, hi) = (was / RANGE, was * RANGE);
    let (z_lo, z_hi) = (z(lo)?, z(hi)?);
    if (z_hi - z_lo).abs() < 1e-6 * z_lo {
        return Err(bad(format!(
            "{layer:?} does not lie between the trace of {:?} and its reference planes: its thickness does not \
             move the impedance",
            rule.name
        )));
    }
    let target = rule.target_ohm;
    let (z_min, z_max) = (z_lo.min(z_hi), z_lo.max(z_hi));
    if !(z_min..=z_max).contains(&target) {
        return Err(Error::Invalid {
            field: "target".into(),
            reason: format!(
                "{target} Ω is out of reach by {layer:?} alone: from {} to {} µm it gives {:.2} to {:.2} Ω at the \
                 rule's width",
                crate::base::units::format_sig(lo * 1e6, 3),
                crate::base::units::format_sig(hi * 1e6, 3),
                z_lo,
                z_hi
            ),
        });
    }
    let tol = if engine.is_closed_form() {
        roots::REL_TOL
    } else {
        FIELD_TOL
    };
    let bracket = Bracket {
        lo,
        hi,
        lo_reason: "the thinnest searched",
        hi_reason: "the thickest searched",
    };
    let thickness_m = roots::solve_to("thickness", target, &bracket, tol, z)?;
    let p = with(thickness_m);
    let answer = engine.analyze(
        &section::resolve(&p.stackup, &fixed)?,
        rule.structure,
        &dims,
    )?;
    Ok(LayerThickness {
        rule: rule.name.clone(),
        layer: layer.to_string(),
        kind,
        thickness_m,
        pressed_thickness_m: p.stackup.pressed_thickness_m(idx),
        was_m: was,
        impedance_ohm: answer.controlled(),
        target_ohm: target,
        method: answer.method,
    })
}
