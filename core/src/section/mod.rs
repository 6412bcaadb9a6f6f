//! From a stackup and a rule to the cross-section a model needs: which planes the trace references, the dielectric
//! heights (pressed) and Dk between them, and what lies over the trace (air, solder mask, more dielectric).
//!
//! A trace with planes on both sides is stripline; with a plane on one side only it is microstrip, and the side
//! away from the plane decides the variant (surface, coated by solder mask, or embedded under dielectric).

use crate::base::error::{Error, Result};
use crate::base::validity::Warning;
use crate::design::project::{ImpedanceRule, Structure};
use crate::design::roughness::Roughness;
use crate::design::stackup::{CopperRole, Layer, Stackup};
use serde::{Deserialize, Serialize};

pub mod lines;

pub use lines::{Analysis, CoupledPair, SingleLine};

/// The free dimensions of a rule's traces, m.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Dims {
    pub w: f64,
    pub s: Option<f64>,
    pub gap: Option<f64>,
}

/// What covers a microstrip trace on the side away from its plane.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Cover {
    Air,
    /// Solder mask of the given thickness over the trace and the substrate.
    Mask {
        thickness_m: f64,
        er: f64,
    },
    /// Further dielectric (prepreg/core) of the given height above the trace, then air.
    Dielectric {
        thickness_m: f64,
        er: f64,
    },
}

/// The dielectric surroundings of the trace(s).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Medium {
    /// One plane: `h` is the dielectric height from the plane to the trace, `er` its Dk.
    Microstrip { h: f64, er: f64, cover: Cover },
    /// No plane at all: the trace sits on a dielectric sheet of height `h` (coplanar structures only).
    NoPlane { h: f64, er: f64 },
    /// Two planes, one on each side of the trace.
    Stripline {
        /// Dielectric height from the trace's lower face to the plane below, m.
        h_below: f64,
        /// Dielectric height from the trace's upper face to the plane above, m.
        h_above: f64,
        er: f64,
        /// Another signal layer lies between the same planes (dual stripline).
        dual: bool,
    },
    /// Two traces on adjacent layers between the same two planes (broadside pair).
    Broadside {
        /// Plane above to the upper trace, m.
        h_above: f64,
        /// Dielectric between the two traces, m.
        separation: f64,
        /// Lower trace to the plane below, m.
        h_below: f64,
        er: f64,
    },
}

/// A resolved cross-section for one rule.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CrossSection {
    pub medium: Medium,
    /// Trace copper thickness, m.
    pub t: f64,
    /// Names of the reference plane layers.
    pub references: Vec<String>,
    /// Notes from resolving (mixed dielectrics, unusual references).
    pub warnings: Vec<Warning>,
    /// What the loss models need of the stack (not part of the geometry; lossless and smooth when a section is
    /// built by hand rather than resolved).
    #[serde(skip)]
    pub loss: SectionLoss,
    /// The dielectric layers as they are in the stack, for the field engines (the closed forms take the merged Dk
    /// of `medium`). `None` for a section built by hand or with one dielectric per side.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub layering: Option<Layering>,
}

/// The dielectric layers on each side of a trace, each `(pressed height m, Dk)`, listed from the trace outward.
/// For a microstrip `below` is the side of its plane (whichever way up) and `above` is unused (the cover is in
/// [`Medium`]); for a stripline `below` leads to the plane later in the stack, `above` to the earlier one. For a
/// broadside pair `below` runs from the lower trace (later in the stack) to its plane, `above` from the upper trace
/// to its plane, and `between` from the lower trace up to the upper one. Their heights add up to the heights in
/// [`Medium`]. A copper layer in between counts as the dielectric next to it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Layering {
    pub below: Vec<(f64, f64)>,
    pub above: Vec<(f64, f64)>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub between: Vec<(f64, f64)>,
}

#[cfg(test)]
impl CrossSection {
    /// A trace centred between two planes `b` apart (copper `t` thick, one Dk), for the engines' tests.
    pub(crate) fn centred_stripline(b: f64, t: f64, er: f64) -> CrossSection {
        CrossSection {
            loss: Default::default(),
            layering: None,
            medium: Medium::Stripline {
                h_below: 0.5 * (b - t),
                h_above: 0.5 * (b - t),
                er,
                dual: false,
            },
            t,
            references: vec![],
            warnings: vec![],
        }
    }
}

impl CrossSection {
    /// The closed form's note when the layers around the trace differ in Dk: it merges them into one Dk (the
    /// field engines model each layer, so their figures carry no such note).
    pub fn merged_dielectric_note(&self) -> Option<Warning> {
        if !self.layering.as_ref().is_some_and(Layering::is_mixed) {
            return None;
        }
        let (side, er) = match self.medium {
            Medium::Microstrip { er, .. } => ("under", er),
            Medium::Stripline { er, .. } | Medium::Broadside { er, .. } => ("around", er),
            _ => return None,
        };
        Some(Warning::new(format!(
            "dielectrics of different Dk {side} the trace: the closed form combines them into Dk {er:.3} (the \
             field engine models each layer)"
        )))
    }
}

impl Layering {
    /// Every layer, `below` then `above` then `between` (a fixed order, for code that treats them alike).
    pub fn layers(&self) -> impl Iterator<Item = &(f64, f64)> {
        self.below.iter().chain(&self.above).chain(&self.between)
    }

    /// [`Layering::layers`], mutably.
    pub fn layers_mut(&mut self) -> impl Iterator<Item = &mut (f64, f64)> {
        self.below
            .iter_mut()
            .chain(self.above.iter_mut())
            .chain(self.between.iter_mut())
    }

    /// Whether the layers differ in Dk (otherwise the merged medium is already exact).
    pub fn is_mixed(&self) -> bool {
        let mut dks = self.layers().map(|&(_, dk)| dk);
        let Some(first) = dks.next() else {
            return false;
        };
        dks.any(|dk| (dk - first).abs() > 1e-9 * first)
    }
}

/// The layers strictly between `from` (the trace) and `to` (a plane or one past the edge), from the trace outward.
fn layers_between(stackup: &Stackup, from: usize, to: usize) -> Vec<(f64, f64)> {
    let idx: Vec<usize> = if from < to {
        (from + 1..to).collect()
    } else {
        (to + 1..from).rev().collect()
    };
    let dk_of = |j: usize| stackup.layers[j].dielectric().map(|d| d.dk);
    idx.iter()
        .enumerate()
        .map(|(k, &j)| {
            let dk = dk_of(j)
                .or_else(|| idx[..k].iter().rev().find_map(|&i| dk_of(i)))
                .or_else(|| idx[k + 1..].iter().find_map(|&i| dk_of(i)))
                .unwrap_or(1.0);
            (stackup.pressed_thickness_m(j), dk)
        })
        .collect()
}

/// The copper surfaces of a line: the trace layer (also its coplanar grounds) and the planes on each side.
/// For a microstrip the one plane is `plane_below` (whatever side it is on); `plane_above` is then unused.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct Surfaces {
    pub trace: Roughness,
    pub plane_above: Roughness,
    pub plane_below: Roughness,
}

/// The loss side of a resolved section: the loss tangent and its spec frequency of the dielectric the line sees,
/// and its copper surfaces.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SectionLoss {
    pub df: f64,
    pub spec_freq_hz: f64,
    pub surfaces: Surfaces,
}

impl Default for SectionLoss {
    fn default() -> Self {
        SectionLoss {
            df: 0.0,
            spec_freq_hz: 1e9,
            surfaces: Surfaces::default(),
        }
    }
}

impl CrossSection {
    /// A plain name for the family this cross-section belongs to.
    pub fn family(&self) -> &'static str {
        match self.medium {
            Medium::Microstrip {
                cover: Cover::Air, ..
            } => "surface microstrip",
            Medium::Microstrip {
                cover: Cover::Mask { .. },
                ..
            } => "coated microstrip",
            Medium::Microstrip {
                cover: Cover::Dielectric { .. },
                ..
            } => "embedded microstrip",
            Medium::Stripline { dual: true, .. } => "dual stripline",
            Medium::Stripline {
                h_below, h_above, ..
            } if (h_below - h_above).abs() <= 1e-3 * h_below.max(h_above) => "symmetric stripline",
            Medium::Stripline { .. } => "offset stripline",
            Medium::Broadside { .. } => "broadside-coupled stripline",
            Medium::NoPlane { .. } => "coplanar without plane",
        }
    }

    /// Plain geometric words for the line and where it sits, with the trade name in brackets: "trace on an outer
    /// layer under solder mask (microstrip)", "pair side by side between two planes, off-centre (stripline)".
    /// What the app and the CLI show; [`CrossSection::family`] stays the stable name in JSON and the accuracy bands.
    pub fn describe(&self, structure: Structure) -> String {
        let coplanar = matches!(structure, Structure::Coplanar | Structure::CoplanarPair);
        let (place, trade) = match self.medium {
            Medium::Microstrip {
                cover: Cover::Air, ..
            } => ("on an outer layer, bare", "microstrip"),
            Medium::Microstrip {
                cover: Cover::Mask { .. },
                ..
            } => ("on an outer layer under solder mask", "microstrip"),
            Medium::Microstrip {
                cover: Cover::Dielectric { .. },
                ..
            } => ("over one plane, under more dielectric", "microstrip"),
            Medium::Stripline { dual: true, .. } => (
                "between two planes, beside another signal layer",
                "stripline",
            ),
            Medium::Stripline {
                h_below, h_above, ..
            } if (h_below - h_above).abs() <= 1e-3 * h_below.max(h_above) => {
                ("between two planes, centred", "stripline")
            }
            Medium::Stripline { .. } => ("between two planes, off-centre", "stripline"),
            Medium::Broadside { .. } => ("between two planes", "stripline"),
            Medium::NoPlane { .. } => ("with no plane", "coplanar"),
        };
        let trade = match (coplanar, self.medium) {
            (true, Medium::Microstrip { .. }) => "grounded coplanar",
            (true, _) => "coplanar",
            (false, _) => trade,
        };
        let what = match structure {
            Structure::Single => "trace",
            other => other.label(),
        };
        if what.starts_with(trade) {
            format!("{what} {place}")
        } else {
            format!("{what} {place} ({trade})")
        }
    }

    /// The family name as the rule's structure sees it: coplanar rules over a plane are grounded coplanar, not
    /// microstrip; everything else is [`CrossSection::family`].
    pub fn family_for(&self, structure: Structure) -> &'static str {
        let coplanar = matches!(structure, Structure::Coplanar | Structure::CoplanarPair);
        match (coplanar, self.medium) {
            (
                true,
                Medium::Microstrip {
                    cover: Cover::Air, ..
                },
            ) => "grounded coplanar",
            (
                true,
                Medium::Microstrip {
                    cover: Cover::Mask { .. },
                    ..
                },
            ) => "grounded coplanar under solder mask",
            (
                true,
                Medium::Microstrip {
                    cover: Cover::Dielectric { .. },
                    ..
                },
            ) => "embedded grounded coplanar",
            (true, Medium::Stripline { .. }) => "coplanar between planes",
            _ => self.family(),
        }
    }

    /// The height that sets the scale of the structure (for search bounds and validity): the plane distance for
    /// microstrip, the plane-to-plane spacing for stripline.
    pub fn scale_height(&self) -> f64 {
        match self.medium {
            Medium::Microstrip { h, .. } | Medium::NoPlane { h, .. } => h,
            Medium::Stripline {
                h_below, h_above, ..
            } => h_below + h_above + self.t,
            Medium::Broadside {
                h_above,
                separation,
                h_below,
                ..
            } => h_above + separation + h_below + 2.0 * self.t,
        }
    }
}

fn is_reference(layer: &Layer, named: &[String]) -> bool {
    match layer {
        Layer::Copper(c) if named.is_empty() => c.role == CopperRole::Plane,
        Layer::Copper(c) => named.iter().any(|n| n == &c.name),
        _ => false,
    }
}

/// Pressed height and series-capacitance Dk of the layers strictly between `from` and `to` (either order).
/// Copper layers in between count as height (their Dk is that of the surrounding dielectric).
fn region(stackup: &Stackup, from: usize, to: usize) -> (f64, f64, bool) {
    let (lo, hi) = if from < to {
        (from + 1, to)
    } else {
        (to + 1, from)
    };
    let mut h_total = 0.0;
    let mut h_dielectric = 0.0;
    let mut h_over_er = 0.0;
    let mut dks: Vec<f64> = Vec::new();
    for idx in lo..hi {
        let h = stackup.pressed_thickness_m(idx);
        h_total += h;
        if let Some(d) = stackup.layers[idx].dielectric() {
            h_dielectric += h;
            h_over_er += h / d.dk;
            dks.push(d.dk);
        }
    }
    let er = if h_over_er > 0.0 {
        h_dielectric / h_over_er
    } else {
        1.0
    };
    let mixed = dks.iter().any(|&dk| (dk - dks[0]).abs() > 0.01 * dks[0]);
    (h_total, er, mixed)
}

/// Pressed height and series Dk of the dielectric from layer `idx` to the board's outer face (downward when `down`).
fn region_to_edge(stackup: &Stackup, idx: usize, down: bool) -> (f64, f64, bool) {
    if down {
        region(stackup, idx, stackup.layers.len())
    } else {
        // `region` excludes both ends; pretend there is a layer just above the top.
        let (mut h, mut h_over_er) = (0.0, 0.0);
        for j in 0..idx {
            let hj = stackup.pressed_thickness_m(j);
            h += hj;
            h_over_er += hj / stackup.layers[j].dielectric().map(|d| d.dk).unwrap_or(1.0);
        }
        (h, if h_over_er > 0.0 { h / h_over_er } else { 1.0 }, false)
    }
}

/// Resolves the cross-section of `rule` in `stackup`.
pub fn resolve(stackup: &Stackup, rule: &ImpedanceRule) -> Result<CrossSection> {
    let idx = stackup.find(&rule.layer).ok_or_else(|| Error::Invalid {
        field: "layer".into(),
        reason: format!("no layer named {:?}", rule.layer),
    })?;
    let Layer::Copper(trace) = &stackup.layers[idx] else {
        return Err(Error::Invalid {
            field: "layer".into(),
            reason: format!("{:?} is not copper", rule.layer),
        });
    };
    let mut warnings = Vec::new();
    if trace.role == CopperRole::Plane {
        warnings.push(Warning::new(format!(
            "{} is marked as a plane layer but routes this rule",
            trace.name
        )));
    }
    let partner = if rule.structure == Structure::BroadsidePair {
        let name = rule.partner_layer.as_deref().unwrap_or_default();
        let p = stackup
            .find(name)
            .filter(|&p| stackup.layers[p].copper().is_some())
            .ok_or_else(|| Error::Invalid {
                field: "partner_layer".into(),
                reason: format!("no copper layer named {name:?}"),
            })?;
        if p == idx {
            return Err(Error::Invalid {
                field: "partner_layer".into(),
                reason: "must differ from the rule's layer".into(),
            });
        }
        Some(p)
    } else {
        None
    };
    let (top_trace, bottom_trace) = match partner {
        Some(p) => (idx.min(p), idx.max(p)),
        None => (idx, idx),
    };
    let excluded = |j: usize| j == idx || Some(j) == partner;
    let above = (0..top_trace)
        .rev()
        .find(|&j| !excluded(j) && is_reference(&stackup.layers[j], &rule.references));
    let below = (bottom_trace + 1..stackup.layers.len())
        .find(|&j| !excluded(j) && is_reference(&stackup.layers[j], &rule.references));
    let mut references: Vec<String> = Vec::new();
    for j in [above, below].into_iter().flatten() {
        references.push(stackup.layers[j].name().to_string());
    }
    let t = trace.thickness_m;
    let mut layering = None;
    let medium = match (above, below, partner) {
        (Some(a), Some(b), Some(_)) => {
            let (h_above, er_a, _) = region(stackup, a, top_trace);
            let (separation, er_s, _) = region(stackup, top_trace, bottom_trace);
            let (h_below, er_b, _) = region(stackup, bottom_trace, b);
            let hs = [h_above, separation, h_below];
            let ers = [er_a, er_s, er_b];
            let er = hs.iter().sum::<f64>() / hs.iter().zip(ers).map(|(h, e)| h / e).sum::<f64>();
            // The closed form's note on the merged Dk comes with its results (merged_dielectric_note); the field
            // engines paint each layer.
            layering = Some(Layering {
                below: layers_between(stackup, bottom_trace, b),
                above: layers_between(stackup, top_trace, a),
                between: layers_between(stackup, bottom_trace, top_trace),
            });
            Medium::Broadside {
                h_above,
                separation,
                h_below,
                er,
            }
        }
        (_, _, Some(_)) => {
            return Err(Error::Invalid {
                field: "references".into(),
                reason: "a broadside pair needs a reference plane above and below both traces"
                    .into(),
            })
        }
        (Some(a), Some(b), None) => {
            let (h_above, er_a, _) = region(stackup, a, idx);
            let (h_below, er_b, _) = region(stackup, idx, b);
            // Each side is a parallel-plate capacitance ε/h; the line sees their sum, so weight each side's Dk by 1/h.
            let er = (er_a / h_above + er_b / h_below) / (1.0 / h_above + 1.0 / h_below);
            layering = Some(Layering {
                below: layers_between(stackup, idx, b),
                above: layers_between(stackup, idx, a),
                between: Vec::new(),
            });
            let dual = (a + 1..b).any(|j| j != idx && stackup.layers[j].copper().is_some());
            Medium::Stripline {
                h_below,
                h_above,
                er,
                dual,
            }
        }
        (Some(plane), None, None) | (None, Some(plane), None) => {
            let (h, er, _) = region(stackup, plane, idx);
            layering = Some(Layering {
                below: layers_between(stackup, idx, plane),
                above: Vec::new(),
                between: Vec::new(),
            });
            // Walk outward, away from the plane, to find what covers the trace.
            let outward: Vec<usize> = if plane > idx {
                (0..idx).rev().collect()
            } else {
                (idx + 1..stackup.layers.len()).collect()
            };
            let mut cover = Cover::Air;
            let mut h_cover = 0.0;
            let mut h_over_er = 0.0;
            let mut masked = false;
            for j in outward {
                match &stackup.layers[j] {
                    Layer::Copper(_) => break,
                    Layer::SolderMask(d) if h_cover == 0.0 || masked => {
                        masked = true;
                        h_cover += d.thickness_m;
                        h_over_er += d.thickness_m / d.dk;
                    }
                    Layer::SolderMask(_) => break,
                    Layer::Core(_) | Layer::Prepreg(_) if masked => break,
                    layer => {
                        let hj = stackup.pressed_thickness_m(j);
                        h_cover += hj;
                        h_over_er += hj / layer.dielectric().map(|d| d.dk).unwrap_or(1.0);
                    }
                }
            }
            if h_cover > 0.0 {
                let er_c = h_cover / h_over_er;
                cover = if masked {
                    Cover::Mask {
                        thickness_m: h_cover,
                        er: er_c,
                    }
                } else {
                    Cover::Dielectric {
                        thickness_m: h_cover,
                        er: er_c,
                    }
                };
            }
            Medium::Microstrip { h, er, cover }
        }
        (None, None, None)
            if matches!(
                rule.structure,
                Structure::Coplanar | Structure::CoplanarPair
            ) =>
        {
            // Coplanar grounds are the only reference: the substrate is the dielectric on the thicker side.
            let (h_a, er_a, _) = if idx > 0 {
                region_to_edge(stackup, idx, false)
            } else {
                (0.0, 1.0, false)
            };
            let (h_b, er_b, _) = region_to_edge(stackup, idx, true);
            let (h, er) = if h_b >= h_a { (h_b, er_b) } else { (h_a, er_a) };
            warnings.push(Warning::new(
                "no reference plane: coplanar grounds are the only return path",
            ));
            // The no-plane models (closed form and field solver alike) have no cover: say so rather than
            // let a mask go unnoticed (a dielectric over the slots only adds capacitance, so the bare Z reads high).
            let masked = [idx.checked_sub(1), Some(idx + 1)]
                .into_iter()
                .flatten()
                .any(|j| matches!(stackup.layers.get(j), Some(Layer::SolderMask(_))));
            if masked {
                warnings.push(Warning::new(
                    "solder mask over a coplanar line without a plane is not modelled: computed bare, so Z reads somewhat high",
                ));
            }
            Medium::NoPlane { h, er }
        }
        (None, None, None) => {
            return Err(Error::Invalid {
                field: "references".into(),
                reason: format!(
                    "no reference plane found for {}; mark a copper layer as a plane",
                    trace.name
                ),
            })
        }
    };
    let mut cs = CrossSection {
        medium,
        t,
        references,
        warnings,
        loss: SectionLoss::default(),
        layering,
    };
    let (df, spec_freq_hz) = rule_dielectric(stackup, rule, &cs);
    cs.loss = SectionLoss {
        df,
        spec_freq_hz,
        surfaces: surfaces(stackup, idx, &cs),
    };
    Ok(cs)
}

/// The copper surfaces a resolved line sees: its own layer's and those of its reference planes.
fn surfaces(stackup: &Stackup, idx: usize, cs: &CrossSection) -> Surfaces {
    let roughness_of = |name: &str| -> Roughness {
        stackup
            .find(name)
            .and_then(|i| stackup.layers[i].copper())
            .and_then(|c| c.roughness)
            .unwrap_or_default()
    };
    let mut surfaces = Surfaces {
        trace: stackup.layers[idx]
            .copper()
            .and_then(|c| c.roughness)
            .unwrap_or_default(),
        ..Surfaces::default()
    };
    match cs.medium {
        Medium::Microstrip { .. } => {
            if let Some(name) = cs.references.first() {
                surfaces.plane_below = roughness_of(name);
            }
        }
        _ => {
            for name in &cs.references {
                let r = roughness_of(name);
                match stackup.find(name) {
                    Some(j) if j < idx => surfaces.plane_above = r,
                    Some(_) => surfaces.plane_below = r,
                    None => {}
                }
            }
        }
    }
    surfaces
}

/// Series (energy-weighted) Dk, Df and log-mean spec frequency of the dielectric layers strictly between two
/// layer indices: in series the field D is common, so each layer's stored energy goes as h/ε.
fn series_group(stackup: &Stackup, a: usize, b: usize) -> Option<(f64, f64, f64, f64)> {
    series_range(stackup, a.min(b) + 1..a.max(b))
}

/// As [`series_group`] over the layers in `range`.
fn series_range(stackup: &Stackup, range: std::ops::Range<usize>) -> Option<(f64, f64, f64, f64)> {
    let (mut h, mut h_over_e, mut tan_w, mut logf_w) = (0.0, 0.0, 0.0, 0.0);
    for idx in range.start..range.end.min(stackup.layers.len()) {
        if let Some(d) = stackup.layers[idx].dielectric() {
            let hi_ = stackup.pressed_thickness_m(idx);
            h += hi_;
            h_over_e += hi_ / d.dk;
            tan_w += hi_ / d.dk * d.df;
            logf_w += hi_ / d.dk * d.spec_freq_hz.log10();
        }
    }
    (h > 0.0).then(|| (h, h / h_over_e, tan_w / h_over_e, logf_w / h_over_e))
}

/// Df and spec frequency of the dielectric a rule's line sees: each dielectric region between the trace and a
/// plane (and between the traces of a broadside pair) is combined in series, the regions in parallel weighted
/// by their capacitance ε/h. Solder mask and cover layers are left out (their share of the field is small).
/// An approximate energy weighting (our choice, no source).
pub(crate) fn rule_dielectric(
    stackup: &Stackup,
    rule: &ImpedanceRule,
    cs: &CrossSection,
) -> (f64, f64) {
    let Some(idx) = stackup.find(&rule.layer) else {
        return (0.0, 1e9);
    };
    let partner = rule.partner_layer.as_deref().and_then(|p| stackup.find(p));
    let mut groups = Vec::new();
    for name in &cs.references {
        if let Some(j) = stackup.find(name) {
            let near = match partner {
                Some(p) if (p as i64 - j as i64).abs() < (idx as i64 - j as i64).abs() => p,
                _ => idx,
            };
            groups.extend(series_group(stackup, j, near));
        }
    }
    if let Some(p) = partner {
        groups.extend(series_group(stackup, idx, p));
    }
    if groups.is_empty() {
        // No plane: the thicker dielectric side, to the board edge.
        let up = series_range(stackup, 0..idx);
        let down = series_range(stackup, idx + 1..stackup.layers.len());
        let pick = match (up, down) {
            (Some(u), Some(d)) => Some(if u.0 > d.0 { u } else { d }),
            (u, d) => u.or(d),
        };
        groups.extend(pick);
    }
    let (mut w, mut tan, mut logf) = (0.0, 0.0, 0.0);
    for (h, er, t, lf) in groups {
        let c = er / h;
        w += c;
        tan += c * t;
        logf += c * lf;
    }
    if w > 0.0 {
        (tan / w, 10f64.powf(logf / w))
    } else {
        (0.0, 1e9)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::demo;

    #[test]
    fn demo_top_layer_is_coated_microstrip() {
        let p = demo::project();
        let cs = resolve(&p.stackup, &p.rules[0]).unwrap();
        assert_eq!(cs.family(), "coated microstrip");
        assert_eq!(cs.references.len(), 1);
    }

    #[test]
    fn inner_layer_between_planes_is_stripline() {
        let p = demo::project();
        let rule = p.rules.iter().find(|r| r.layer.starts_with("L3")).unwrap();
        let cs = resolve(&p.stackup, rule).unwrap();
        assert!(cs.family().contains("stripline"), "{}", cs.family());
        assert_eq!(cs.references.len(), 2);
    }

    fn section(medium: Medium) -> CrossSection {
        CrossSection {
            loss: Default::default(),
            layering: None,
            medium,
            t: 35e-6,
            references: Vec::new(),
            warnings: Vec::new(),
        }
    }

    #[test]
    fn lines_are_described_in_plain_geometric_words() {
        let p = demo::project();
        let top = resolve(&p.stackup, &p.rules[0]).unwrap();
        assert_eq!(
            top.describe(Structure::Single),
            "trace on an outer layer under solder mask (microstrip)"
        );
        assert_eq!(
            top.describe(Structure::EdgePair),
            "pair side by side on an outer layer under solder mask (microstrip)"
        );
        assert_eq!(
            top.describe(Structure::Coplanar),
            "coplanar trace on an outer layer under solder mask (grounded coplanar)"
        );
        let strip = |h_below: f64, h_above: f64| {
            section(Medium::Stripline {
                h_below,
                h_above,
                er: 4.0,
                dual: false,
            })
        };
        assert_eq!(
            strip(100e-6, 100e-6).describe(Structure::Single),
            "trace between two planes, centred (stripline)"
        );
        assert_eq!(
            strip(100e-6, 300e-6).describe(Structure::Single),
            "trace between two planes, off-centre (stripline)"
        );
        let broadside = section(Medium::Broadside {
            h_above: 100e-6,
            separation: 150e-6,
            h_below: 100e-6,
            er: 4.0,
        });
        assert_eq!(
            broadside.describe(Structure::BroadsidePair),
            "pair stacked between two planes (stripline)"
        );
        let bare = section(Medium::NoPlane { h: 1e-3, er: 4.0 });
        assert_eq!(
            bare.describe(Structure::CoplanarPair),
            "coplanar pair with no plane"
        );
        // The structure menu's words are plain too; the stable family names stay for JSON and the bands.
        for s in Structure::ALL {
            let label = s.label();
            for product_like in [
                "edge-coupled",
                "broadside",
                "single-ended",
                "embedded",
                "coated",
            ] {
                assert!(!label.contains(product_like), "{label}");
                assert!(
                    !top.describe(s).contains(product_like),
                    "{}",
                    top.describe(s)
                );
            }
        }
        assert_eq!(top.family(), "coated microstrip");
    }
}
