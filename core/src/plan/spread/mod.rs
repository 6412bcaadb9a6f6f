//! Tolerance spread and yield of one impedance rule: corner analysis, seeded Monte Carlo, sensitivities and the
//! tolerance-centred width (or spacing).
//!
//! How it stays fast and structure-independent: the rule's stackup is resolved once by
//! [`section::resolve`]; each process parameter (a layer's thickness or Dk, the etched width, the etch factor)
//! is then pushed to ± its limit and resolved again, which gives how every number of the resolved
//! [`CrossSection`] (heights, Dk, cover, copper thickness) and of the trace [`Dims`] moves with it. Heights and
//! thicknesses are sums of layer thicknesses, so that map is exact for them; a mixed-dielectric Dk is a series
//! combination, kept to second order (curvature and height × Dk cross terms from mixed differences of the
//! resolve; within 1e-4 relative of a full re-resolve at the limits). Each sample then costs a few multiply-adds
//! plus one call of the impedance model on a perturbed copy of the cross-section ([`SampleModel::Direct`]), or,
//! for interactive use, one evaluation of a quadratic response surface of that model fitted once per rule
//! ([`SampleModel::Quadratic`], [`Quadratic`]). Synthesis stays out of the sample loop: the solved width is fixed
//! and the etch moves it.
//!
//! Methods:
//! - Corners: when a rule has at most [`MAX_FULL_CORNERS`] varied parameters, all 2^n combinations of the limits
//!   are evaluated and the extremes kept; with more, only the two corners picked by the signs of the sensitivities
//!   (exact for a model monotone in each parameter). Corners use the same sample model as the Monte Carlo.
//! - Monte Carlo: N seeded samples (xoshiro256** from rand_xoshiro, normals from rand_distr; see [`rng`]); mean, σ, percentiles by linear
//!   interpolation between order statistics, a histogram, yield = share of all samples inside the rule's
//!   tolerance window (failed samples count as outside), and the process capability
//!   Cpk = min(USL − µ, µ − LSL)/(3σ). Every rule draws the same stream (see below).
//! - Sensitivities: central differences of the model itself with a step of a tenth of each limit, listed by
//!   |∂Z/∂p × limit|; first-order propagation σ_Z = √Σ(∂Z/∂p·σ_p)² (JCGM 100:2008 "GUM" §5.1.2) and the
//!   second-order mean Z0 + ½Σ ∂²Z/∂p²·σ_p² are reported beside the Monte Carlo figures.
//! - Tolerance centring of the free dimension (the width, or the spacing when the rule solves spacing): on the
//!   sorted Monte Carlo values, slide a window as wide as the rule's tolerance window to where it holds the most
//!   samples (midpoint of that position; the smallest shift on ties); shifting the nominal impedance by the same
//!   amount is, to first order, the shift that maximises yield (when every sample fits, it centres the sampled
//!   range in the window). The free dimension is solved for that nominal impedance and the same deviates
//!   (common random numbers) are run again for the centred yield; unless it gains more than three standard errors
//!   of the estimated yield (at least 0.1 percentage point), the nominal is kept.
//! - Every rule draws the same standard deviates ([`rule_seed`]), so identical rules give identical figures; the
//!   quadratic surface is sampled inside the limits it was fitted over, with an axis table of the model out to 1.5 ×
//!   each limit in the tails and the true model beyond ([`Quadratic::sample`]).
//!
//! The impedance model is a hook ([`ImpedanceModel`]): [`Engine::ClosedForm`] calls the closed forms, so every
//! structure the models know is covered; a field solver can implement the same trait and be fitted by
//! [`Quadratic::fit`] into a response surface, or replace the whole per-sample evaluator, since [`monte_carlo`],
//! [`corners`], [`sensitivities`] and [`Quadratic::fit`] take any `FnMut(&[f64]) -> Result<f64>` of the parameter
//! deviations. The layering of a section (each layer as the field engines see it) follows the medium's slots.
//! A new [`Medium`] variant needs one line in each of `medium_slots`, `set_medium_slots` and
//! `dk_slots` (the compiler points there).

pub mod rng;
pub mod summary;

pub use summary::*;

pub use crate::design::process::{Distribution, LayerProcess, Process, Tolerance};

use crate::base::error::{Error, Result};
use crate::base::roots::{self, Bracket};
use crate::base::units::{format_sig, MAX_LENGTH_M};
use crate::base::validity::Warning;
use crate::design::project::{ImpedanceRule, Project, Solve, Structure};
use crate::design::stackup::{Layer, Stackup};
use crate::engine::Engine;
use crate::plan::rule::RuleResult;
use crate::section::Dims;
use crate::section::{self, Cover, CrossSection, Medium};
use rng::Rng;

/// The impedance model the spread calls per sample: the controlled impedance (Z0, or Zdiff for pairs), Ω.
pub trait ImpedanceModel {
    fn impedance(&self, cs: &CrossSection, structure: Structure, dims: &Dims) -> Result<f64>;
    /// What it is, in words, for the summary.
    fn name(&self) -> &'static str {
        "custom model"
    }
}

/// Every engine is a spread model: the closed form per sample, or a field solver behind the response surface.
impl ImpedanceModel for Engine {
    fn impedance(&self, cs: &CrossSection, structure: Structure, dims: &Dims) -> Result<f64> {
        Engine::impedance(self, cs, structure, dims)
    }
    fn name(&self) -> &'static str {
        self.method_name()
    }
}

/// A quadratic response surface Z(δ) = z0 + Σ aₖδₖ + Σ bₖδₖ² + Σ_{j<k} c_jk δⱼδₖ of the parameter deviations.
///
/// Fitted by central differences at ± each limit (aₖ, bₖ), and each cross term from the two diagonal corners
/// (+, +) and (−, −) of its pair with the axis points, c_jk = (z₊₊ + z₋₋ − z₊₀ − z₋₀ − z₀₊ − z₀₋ + 2z₀)/(2lⱼlₖ):
/// the model is reproduced exactly on every axis point and on those corners, and the fit is exact for any cubic
/// (the odd terms cancel on the diagonal, as they do in the four-corner difference, at half its cost). Cross
/// terms only up to [`MAX_CROSS_PARAMS`] parameters. Any model can be fitted the same way.
///
/// Tails: a normal parameter is drawn beyond its ± limit (3σ) in about 0.3 % of draws, up to about 1.5 × the
/// limit in 10⁴ draws. Rather than calling the model there (a moment-method closed form costs 0.1–0.3 ms, and a
/// rule with many parameters has a coordinate in its tails in several per cent of its samples), the model is
/// also evaluated along each normal parameter's axis at 1.25 and 1.5 × its limit; in a tail sample, the axis part
/// of the surface beyond the limit is replaced by the change of the model along that axis from the limit
/// (quadratic interpolation through the limit and the two tail points), the cross terms kept. It is exact on the
/// axes out to 1.5 × the limit. Beyond 1.5 × a limit, or where that gives a non-physical value, the model itself
/// answers.
#[derive(Debug, Clone, PartialEq)]
pub struct Quadratic {
    /// The ± limits the surface was fitted over.
    limits: Vec<f64>,
    z0: f64,
    lin: Vec<f64>,
    sq: Vec<f64>,
    /// Upper triangle, row by row: (0,1), (0,2), …, (1,2), …
    cross: Vec<f64>,
    /// Per parameter, the model on its axis at −1.5 and −1.25 × its limit less its value at −1, then at +1.25 and
    /// +1.5 less its value at +1 (normal parameters only: a uniform one never leaves its limits).
    tails: Vec<Option<[f64; 4]>>,
}

/// How far out (in limits) the tail table of [`Quadratic`] reaches.
pub const TAIL_REACH: f64 = 1.5;

impl Quadratic {
    /// Fits the surface to `z` over the parameters' ± limits (and the tail table of the normal parameters).
    pub fn fit(
        params: &[Parameter],
        z: &mut dyn FnMut(&[f64]) -> Result<f64>,
    ) -> Result<Quadratic> {
        let n = params.len();
        let mut dev = vec![0.0; n];
        let z0 = z(&dev)?;
        let mut lin = Vec::with_capacity(n);
        let mut sq = Vec::with_capacity(n);
        let mut tails = Vec::with_capacity(n);
        let mut at_axis = |k: usize, x: f64, dev: &mut [f64]| {
            dev[k] = x;
            let v = z(dev);
            dev[k] = 0.0;
            v
        };
        let mid = 0.5 * (1.0 + TAIL_REACH);
        let mut axis = Vec::with_capacity(n);
        for (k, p) in params.iter().enumerate() {
            let l = p.limit;
            let zp = at_axis(k, l, &mut dev)?;
            let zm = at_axis(k, -l, &mut dev)?;
            axis.push((zp, zm));
            lin.push((zp - zm) / (2.0 * l));
            sq.push((zp - 2.0 * z0 + zm) / (2.0 * l * l));
            let tail = match p.distribution {
                Distribution::Uniform => None,
                // A tail point the model refuses leaves that parameter's tails to the model itself.
                Distribution::Normal => {
                    let mut t = [0.0; 4];
                    let mut ok = true;
                    for (slot, x, from) in [
                        (0, -TAIL_REACH, zm),
                        (1, -mid, zm),
                        (2, mid, zp),
                        (3, TAIL_REACH, zp),
                    ] {
                        match at_axis(k, x * l, &mut dev) {
                            Ok(v) if v.is_finite() => t[slot] = v - from,
                            _ => ok = false,
                        }
                    }
                    ok.then_some(t)
                }
            };
            tails.push(tail);
        }
        let mut cross = Vec::with_capacity(n * n.saturating_sub(1) / 2);
        for a in 0..n {
            for b in a + 1..n {
                if n > MAX_CROSS_PARAMS {
                    cross.push(0.0);
                    continue;
                }
                let (la, lb) = (params[a].limit, params[b].limit);
                let mut at = |sa: f64, sb: f64| {
                    dev[a] = sa * la;
                    dev[b] = sb * lb;
                    let v = z(&dev);
                    dev[a] = 0.0;
                    dev[b] = 0.0;
                    v
                };
                let (pp, mm) = (at(1.0, 1.0)?, at(-1.0, -1.0)?);
                let ((pa, ma), (pb, mb)) = (axis[a], axis[b]);
                cross.push((pp + mm - pa - ma - pb - mb + 2.0 * z0) / (2.0 * la * lb));
            }
        }
        let limits = params.iter().map(|p| p.limit).collect();
        Ok(Quadratic {
            limits,
            z0,
            lin,
            sq,
            cross,
            tails,
        })
    }

    /// The same surface moved to a nearby nominal (the tolerance-centred dimension): z0 and the axis terms
    /// refitted to `z` over `params` (2n + 1 evaluations); the cross terms and the tails' increments beyond the
    /// limits kept, since they change with so small a move of the nominal only to the next order.
    pub fn refit_axes(
        &self,
        params: &[Parameter],
        z: &mut dyn FnMut(&[f64]) -> Result<f64>,
    ) -> Result<Quadratic> {
        let n = params.len();
        if n != self.lin.len() {
            return Quadratic::fit(params, z);
        }
        let mut dev = vec![0.0; n];
        let z0 = z(&dev)?;
        let (mut lin, mut sq) = (Vec::with_capacity(n), Vec::with_capacity(n));
        for (k, p) in params.iter().enumerate() {
            let l = p.limit;
            dev[k] = l;
            let zp = z(&dev)?;
            dev[k] = -l;
            let zm = z(&dev)?;
            dev[k] = 0.0;
            lin.push((zp - zm) / (2.0 * l));
            sq.push((zp - 2.0 * z0 + zm) / (2.0 * l * l));
        }
        Ok(Quadratic {
            limits: params.iter().map(|p| p.limit).collect(),
            z0,
            lin,
            sq,
            cross: self.cross.clone(),
            tails: self.tails.clone(),
        })
    }

    /// A Monte Carlo sample at deviations `d`: the surface inside the limits it was fitted over, the surface with
    /// the axis tails beyond them (out to [`TAIL_REACH`] × a limit), and the true `model` further out and
    /// wherever the surface would give a non-physical impedance, so the spread never extrapolates a quadratic
    /// to Z ≤ 0.
    pub fn sample(&self, d: &[f64], model: &mut dyn FnMut(&[f64]) -> Result<f64>) -> Result<f64> {
        let inside = d
            .iter()
            .zip(&self.limits)
            .all(|(x, l)| x.abs() <= *l * (1.0 + 1e-12));
        let z = if inside {
            self.z(d)
        } else {
            self.z_tail(d).unwrap_or(f64::NAN)
        };
        if z.is_finite() && z > 0.0 {
            Ok(z)
        } else {
            model(d)
        }
    }

    /// The surface at `d` with, for each coordinate beyond its limit, its axis part (aₖδₖ + bₖδₖ²) beyond the
    /// limit replaced by the model's own change along that axis (the tail table); the cross terms stay (bilinear,
    /// they extend linearly). `None` when a coordinate is beyond [`TAIL_REACH`] × its limit or has no table.
    fn z_tail(&self, d: &[f64]) -> Option<f64> {
        let mut extra = 0.0;
        for (k, (&x, &l)) in d.iter().zip(&self.limits).enumerate() {
            if x.abs() <= l {
                continue;
            }
            let s = x.abs() / l;
            if s > TAIL_REACH * (1.0 + 1e-12) {
                return None;
            }
            let t = self.tails.get(k).copied().flatten()?;
            // Increments at (1 + reach)/2 and reach limits on this side (0 at the limit): quadratic (Newton form)
            // in u ∈ [0, 2].
            let (f1, f2) = if x > 0.0 { (t[2], t[3]) } else { (t[1], t[0]) };
            let u = 2.0 * (s - 1.0) / (TAIL_REACH - 1.0);
            let model_step = u * f1 + 0.5 * u * (u - 1.0) * (f2 - 2.0 * f1);
            let e = x.signum() * l;
            let surface_step = self.lin[k] * (x - e) + self.sq[k] * (x * x - e * e);
            extra += model_step - surface_step;
        }
        Some(self.z(d) + extra)
    }

    /// The surface at deviations `d`.
    pub fn z(&self, d: &[f64]) -> f64 {
        let n = self.lin.len().min(d.len());
        let mut z = self.z0;
        let mut c = 0;
        for a in 0..n {
            let da = d[a];
            let mut row = self.lin[a] + self.sq[a] * da;
            for &db in &d[a + 1..n] {
                row += self.cross[c] * db;
                c += 1;
            }
            z += row * da;
        }
        z
    }
}

/// Which dimension tolerance centring moves.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Free {
    Width,
    Spacing,
}

impl Free {
    fn name(self) -> &'static str {
        match self {
            Free::Width => "width",
            Free::Spacing => "spacing",
        }
    }
}

/// A rule's cross-section resolved once, with the linear map from parameter deviations to every number the
/// impedance model reads.
#[derive(Debug, Clone)]
pub struct Setup {
    pub structure: Structure,
    pub params: Vec<Parameter>,
    pub target_ohm: f64,
    pub lower_ohm: f64,
    pub upper_ohm: f64,
    pub free: Free,
    base: CrossSection,
    base_dims: Dims,
    /// Numbers of the medium, then t, w, s, gap.
    slot0: Vec<f64>,
    /// `params.len()` rows of `slot0.len()` entries: ∂slot/∂parameter.
    jac: Vec<f64>,
    /// Second-order terms of the Dk slots: (slot, parameter a, parameter b, coefficient of δa·δb).
    quad: Vec<(usize, usize, usize, f64)>,
    etch_tolerance: Tolerance,
}

fn medium_slots(m: &Medium, out: &mut Vec<f64>) {
    match *m {
        Medium::Microstrip { h, er, cover } => {
            out.extend([h, er]);
            match cover {
                Cover::Air => {}
                Cover::Mask { thickness_m, er } | Cover::Dielectric { thickness_m, er } => {
                    out.extend([thickness_m, er])
                }
            }
        }
        Medium::NoPlane { h, er } => out.extend([h, er]),
        Medium::Stripline {
            h_below,
            h_above,
            er,
            ..
        } => out.extend([h_below, h_above, er]),
        Medium::Broadside {
            h_above,
            separation,
            h_below,
            er,
        } => out.extend([h_above, separation, h_below, er]),
    }
}

fn set_medium_slots(m: &mut Medium, v: &[f64]) {
    match m {
        Medium::Microstrip { h, er, cover } => {
            *h = v[0];
            *er = v[1];
            match cover {
                Cover::Air => {}
                Cover::Mask { thickness_m, er } | Cover::Dielectric { thickness_m, er } => {
                    *thickness_m = v[2];
                    *er = v[3];
                }
            }
        }
        Medium::NoPlane { h, er } => {
            *h = v[0];
            *er = v[1];
        }
        Medium::Stripline {
            h_below,
            h_above,
            er,
            ..
        } => {
            *h_below = v[0];
            *h_above = v[1];
            *er = v[2];
        }
        Medium::Broadside {
            h_above,
            separation,
            h_below,
            er,
        } => {
            *h_above = v[0];
            *separation = v[1];
            *h_below = v[2];
            *er = v[3];
        }
    }
}

/// Indices of the Dk numbers among the medium's slots (the only ones not linear in the layer values).
fn dk_slots(m: &Medium) -> &'static [usize] {
    match m {
        Medium::Microstrip {
            cover: Cover::Air, ..
        }
        | Medium::NoPlane { .. } => &[1],
        Medium::Microstrip { .. } => &[1, 3],
        Medium::Stripline { .. } => &[2],
        Medium::Broadside { .. } => &[3],
    }
}

fn slots_of(cs: &CrossSection, dims: &Dims) -> Vec<f64> {
    let mut v = Vec::with_capacity(8);
    medium_slots(&cs.medium, &mut v);
    // The layers as the field engines see them: heights and Dk, linear in each layer's own values.
    if let Some(l) = &cs.layering {
        for &(h, er) in l.layers() {
            v.extend([h, er]);
        }
    }
    v.extend([cs.t, dims.w, dims.s.unwrap_or(0.0), dims.gap.unwrap_or(0.0)]);
    v
}

/// Writes the medium and layering slots (everything before `t`) back into `cs`.
fn set_section_slots(cs: &mut CrossSection, v: &[f64]) {
    set_medium_slots(&mut cs.medium, v);
    if let Some(l) = &mut cs.layering {
        let n = l.layers().count();
        let start = v.len() - 4 - 2 * n;
        for (k, layer) in l.layers_mut().enumerate() {
            *layer = (v[start + 2 * k], v[start + 2 * k + 1]);
        }
    }
}

/// A normal sample reaches about 4σ in 10⁴ draws; require the quantity to stay above `floor` at 1.5 × its limit.
fn check_limit(field: &str, what: &str, nominal: f64, limit: f64, floor: f64) -> Result<()> {
    if nominal - 1.5 * limit <= floor {
        return Err(Error::Invalid {
            field: field.to_string(),
            reason: format!(
                "±{} on the {what} (nominal {}) is too wide: 1.5 × the limit would take it to {floor} or below",
                format_sig(limit, 3),
                format_sig(nominal, 4)
            ),
        });
    }
    Ok(())
}

fn knob(layer: &mut Layer, dk: bool) -> Option<&mut f64> {
    match (layer, dk) {
        (Layer::Copper(c), false) => Some(&mut c.thickness_m),
        (Layer::Core(d) | Layer::Prepreg(d) | Layer::SolderMask(d), false) => {
            Some(&mut d.thickness_m)
        }
        (Layer::Core(d) | Layer::Prepreg(d) | Layer::SolderMask(d), true) => Some(&mut d.dk),
        (Layer::Copper(_), true) => None,
    }
}

/// The slots resolved with the given layer values changed (then restored).
fn resolve_with(
    scratch: &mut Stackup,
    rule: &ImpedanceRule,
    changes: &[(usize, bool, f64)],
    family: &str,
) -> Result<Vec<f64>> {
    let mut saved = Vec::with_capacity(changes.len());
    for &(idx, dk, delta) in changes {
        if let Some(v) = knob(&mut scratch.layers[idx], dk) {
            saved.push(*v);
            *v += delta;
        }
    }
    let out = section::resolve(scratch, rule).and_then(|cs| {
        if !same_structure(cs.family(), family) {
            return Err(Error::Invalid {
                field: "process".into(),
                reason: format!(
                    "varying the layers changes the structure from {family} to {}",
                    cs.family()
                ),
            });
        }
        let dims = Dims {
            w: 0.0,
            s: None,
            gap: None,
        };
        Ok(slots_of(&cs, &dims))
    });
    for (&(idx, dk, _), v0) in changes.iter().zip(saved) {
        if let Some(v) = knob(&mut scratch.layers[idx], dk) {
            *v = v0;
        }
    }
    out
}

/// ∂(medium numbers, t)/∂(layer value) by resolving at ± `limit`; `None` when the layer does not touch the rule.
fn layer_row(
    scratch: &mut Stackup,
    rule: &ImpedanceRule,
    idx: usize,
    dk: bool,
    limit: f64,
    family: &str,
    n_slots: usize,
) -> Result<Option<Vec<f64>>> {
    let Some(nominal) = knob(&mut scratch.layers[idx], dk).map(|v| *v) else {
        return Ok(None);
    };
    let mut at = |value: f64| -> Result<Vec<f64>> {
        if let Some(v) = knob(&mut scratch.layers[idx], dk) {
            *v = value;
        }
        let cs = section::resolve(scratch, rule)?;
        if !same_structure(cs.family(), family) {
            return Err(Error::Invalid {
                field: "process".into(),
                reason: format!(
                    "varying {} changes the structure from {family} to {}",
                    scratch.layers[idx].name(),
                    cs.family()
                ),
            });
        }
        let dims = Dims {
            w: 0.0,
            s: None,
            gap: None,
        };
        Ok(slots_of(&cs, &dims))
    };
    let plus = at(nominal + limit);
    let minus = at(nominal - limit);
    if let Some(v) = knob(&mut scratch.layers[idx], dk) {
        *v = nominal;
    }
    let (plus, minus) = (plus?, minus?);
    if plus == minus {
        return Ok(None);
    }
    let mut row: Vec<f64> = plus
        .iter()
        .zip(&minus)
        .map(|(p, m)| (p - m) / (2.0 * limit))
        .collect();
    row.resize(n_slots, 0.0);
    // The dims slots (w, s, gap) do not depend on the stack.
    let n = row.len();
    for r in &mut row[n - 3..] {
        *r = 0.0;
    }
    Ok(Some(row))
}

impl Setup {
    /// Resolves the parameters of `rule` (already analysed into `cs` and `dims`) under the project's process.
    pub fn new(
        project: &Project,
        rule: &ImpedanceRule,
        cs: &CrossSection,
        dims: &Dims,
    ) -> Result<Setup> {
        let process = project.process.clone().unwrap_or_default();
        process.validate(&project.stackup)?;
        let slot0 = slots_of(cs, dims);
        let ns = slot0.len();
        let nm = ns - 4;
        let mut params = Vec::new();
        let mut jac = Vec::new();
        let dims_row = |dw: f64| {
            let mut row = vec![0.0; ns];
            row[nm + 1] = dw;
            if dims.s.is_some() {
                row[nm + 2] = -dw;
            }
            if dims.gap.is_some() {
                row[nm + 3] = -dw;
            }
            row
        };
        let etch = process.etch_width.limit(dims.w);
        check_limit(
            "process.etch_width",
            "etched trace width",
            dims.w,
            etch,
            0.0,
        )?;
        if let Some(s) = dims.s {
            check_limit("process.etch_width", "pair spacing", s, etch, 0.0)?;
        }
        if let Some(g) = dims.gap {
            check_limit("process.etch_width", "gap to ground", g, etch, 0.0)?;
        }
        if etch > 0.0 {
            params.push(Parameter {
                name: "etched trace width".into(),
                varies: Varied::EtchWidth,
                unit: "m".into(),
                nominal: dims.w,
                limit: etch,
                distribution: process.etch_width.distribution,
            });
            jac.extend(dims_row(1.0));
        }
        if let Some(ef) = project.fab.etch_factor {
            let limit = process.etch_factor.limit(ef);
            check_limit("process.etch_factor", "etch factor", ef, limit, 0.0)?;
            if limit > 0.0 && cs.t > 0.0 {
                params.push(Parameter {
                    name: "etch factor".into(),
                    varies: Varied::EtchFactor,
                    unit: "".into(),
                    nominal: ef,
                    limit,
                    distribution: process.etch_factor.distribution,
                });
                // d(w − t/EF)/dEF = t/EF².
                jac.extend(dims_row(cs.t / (ef * ef)));
            }
        }
        let family = cs.family();
        let stackup = &project.stackup;
        let mut scratch = stackup.clone();
        for idx in 0..stackup.layers.len() {
            let layer = &stackup.layers[idx];
            let (tol, field) = process.thickness_of(stackup, idx);
            let nominal = layer.thickness_m();
            let limit = tol.limit(nominal);
            if limit > 0.0 && nominal > 0.0 {
                if let Some(row) = layer_row(&mut scratch, rule, idx, false, limit, family, ns)? {
                    let what = format!("thickness of {} ({})", layer.name(), layer.kind_name());
                    check_limit(&field, &what, nominal, limit, 0.0)?;
                    params.push(Parameter {
                        name: what,
                        varies: Varied::Thickness(idx),
                        unit: "m".into(),
                        nominal,
                        limit,
                        distribution: tol.distribution,
                    });
                    jac.extend(row);
                }
            }
            if let (Some((tol, field)), Some(d)) = (process.dk_of(stackup, idx), layer.dielectric())
            {
                let limit = tol.limit(d.dk);
                if limit > 0.0 {
                    if let Some(row) = layer_row(&mut scratch, rule, idx, true, limit, family, ns)?
                    {
                        let what = format!("Dk of {} ({})", layer.name(), layer.kind_name());
                        check_limit(&field, &what, d.dk, limit, 1.0)?;
                        params.push(Parameter {
                            name: what,
                            varies: Varied::Dk(idx),
                            unit: "".into(),
                            nominal: d.dk,
                            limit,
                            distribution: tol.distribution,
                        });
                        jac.extend(row);
                    }
                }
            }
        }
        // A mixed-dielectric Dk is a series combination of layer heights and Dk: keep its second-order terms
        // (curvature and height × Dk cross terms) from mixed differences of the resolve, so samples far out in
        // the tails still see the Dk a full re-resolve would give.
        let mut quad = Vec::new();
        let knobs: Vec<Option<(usize, bool)>> = params
            .iter()
            .map(|p| match p.varies {
                Varied::Thickness(i) => Some((i, false)),
                Varied::Dk(i) => Some((i, true)),
                _ => None,
            })
            .collect();
        let dks = dk_slots(&cs.medium);
        let touches = |k: usize| dks.iter().any(|&j| jac[k * ns + j] != 0.0);
        let nominal = resolve_with(&mut scratch, rule, &[], family)?;
        for a in 0..params.len() {
            let Some((ia, da)) = knobs[a] else { continue };
            if !touches(a) {
                continue;
            }
            let la = params[a].limit;
            let last = if params.len() <= MAX_CROSS_PARAMS {
                params.len()
            } else {
                a + 1
            };
            for b in a..last {
                let Some((ib, db)) = knobs[b] else { continue };
                if !touches(b) {
                    continue;
                }
                let lb = params[b].limit;
                let coef: Vec<f64> = if a == b {
                    let p = resolve_with(&mut scratch, rule, &[(ia, da, la)], family)?;
                    let m = resolve_with(&mut scratch, rule, &[(ia, da, -la)], family)?;
                    (0..p.len())
                        .map(|j| 0.5 * (p[j] - 2.0 * nominal[j] + m[j]) / (la * la))
                        .collect()
                } else {
                    let mut at = |sa: f64, sb: f64| {
                        resolve_with(
                            &mut scratch,
                            rule,
                            &[(ia, da, sa * la), (ib, db, sb * lb)],
                            family,
                        )
                    };
                    let (pp, pm, mp, mm) = (
                        at(1.0, 1.0)?,
                        at(1.0, -1.0)?,
                        at(-1.0, 1.0)?,
                        at(-1.0, -1.0)?,
                    );
                    (0..pp.len())
                        .map(|j| (pp[j] - pm[j] - mp[j] + mm[j]) / (4.0 * la * lb))
                        .collect()
                };
                for &j in dks {
                    if coef[j] != 0.0 && coef[j].is_finite() {
                        quad.push((j, a, b, coef[j]));
                    }
                }
            }
        }
        let tol = rule.tolerance_pct / 100.0 * rule.target_ohm;
        Ok(Setup {
            structure: rule.structure,
            params,
            target_ohm: rule.target_ohm,
            lower_ohm: rule.target_ohm - tol,
            upper_ohm: rule.target_ohm + tol,
            free: if rule.solve == Solve::Spacing {
                Free::Spacing
            } else {
                Free::Width
            },
            base: CrossSection {
                loss: Default::default(),
                warnings: Vec::new(),
                ..cs.clone()
            },
            base_dims: *dims,
            slot0,
            jac,
            quad,
            etch_tolerance: process.etch_width,
        })
    }

    /// The free dimension's nominal value, m.
    pub fn free_value(&self) -> f64 {
        match self.free {
            Free::Width => self.base_dims.w,
            Free::Spacing => self.base_dims.s.unwrap_or(0.0),
        }
    }

    /// The same setup with the free dimension at `x` (the etch limit follows the width when given in %).
    pub fn with_free(&self, x: f64) -> Setup {
        let mut s = self.clone();
        let nm = s.slot0.len() - 4;
        match s.free {
            Free::Width => {
                s.slot0[nm + 1] = x;
                s.base_dims.w = x;
                let limit = s.etch_tolerance.limit(x);
                for p in &mut s.params {
                    if p.varies == Varied::EtchWidth {
                        p.nominal = x;
                        p.limit = limit;
                    }
                }
            }
            Free::Spacing => {
                s.slot0[nm + 2] = x;
                s.base_dims.s = Some(x);
            }
        }
        s
    }

    /// The perturbed cross-section and dimensions for `deviations` (what the evaluator hands the model).
    pub fn cross_section_at(&self, deviations: &[f64]) -> (CrossSection, Dims) {
        let mut ev = self.evaluator(&Engine::ClosedForm);
        let dims = ev.apply(deviations);
        (ev.cs, dims)
    }

    /// A per-sample evaluator over `model`.
    pub fn evaluator<'a>(&'a self, model: &'a dyn ImpedanceModel) -> Evaluator<'a> {
        Evaluator {
            setup: self,
            model,
            cs: self.base.clone(),
            slots: self.slot0.clone(),
        }
    }
}

/// Evaluates the impedance for a vector of parameter deviations (in each parameter's unit, same order as
/// [`Setup::params`]), reusing one scratch cross-section: no allocation per sample beyond what the model does.
pub struct Evaluator<'a> {
    setup: &'a Setup,
    model: &'a dyn ImpedanceModel,
    cs: CrossSection,
    slots: Vec<f64>,
}

impl Evaluator<'_> {
    /// Z for the parameter deviations.
    pub fn z(&mut self, deviations: &[f64]) -> Result<f64> {
        let dims = self.apply(deviations);
        self.model.impedance(&self.cs, self.setup.structure, &dims)
    }

    fn apply(&mut self, deviations: &[f64]) -> Dims {
        let s = self.setup;
        let ns = s.slot0.len();
        self.slots.copy_from_slice(&s.slot0);
        for (k, &d) in deviations.iter().enumerate().take(s.params.len()) {
            if d != 0.0 {
                let row = &s.jac[k * ns..(k + 1) * ns];
                for (v, j) in self.slots.iter_mut().zip(row) {
                    *v += j * d;
                }
            }
        }
        for &(j, a, b, c) in &s.quad {
            if let (Some(da), Some(db)) = (deviations.get(a), deviations.get(b)) {
                self.slots[j] += c * da * db;
            }
        }
        let nm = ns - 4;
        set_section_slots(&mut self.cs, &self.slots);
        self.cs.t = self.slots[nm];
        Dims {
            w: self.slots[nm + 1],
            s: s.base_dims.s.map(|_| self.slots[nm + 2]),
            gap: s.base_dims.gap.map(|_| self.slots[nm + 3]),
        }
    }
}

/// Sensitivities by central differences (step: a tenth of each limit), in parameter order, and Z at nominal.
pub fn sensitivities(
    params: &[Parameter],
    z: &mut dyn FnMut(&[f64]) -> Result<f64>,
) -> Result<(f64, Vec<Sensitivity>)> {
    let mut dev = vec![0.0; params.len()];
    let z0 = z(&dev)?;
    let mut out = Vec::with_capacity(params.len());
    for (k, p) in params.iter().enumerate() {
        let h = 0.1 * p.limit;
        dev[k] = h;
        let zp = z(&dev)?;
        dev[k] = -h;
        let zm = z(&dev)?;
        dev[k] = 0.0;
        let dz = (zp - zm) / (2.0 * h);
        out.push(Sensitivity {
            parameter: p.name.clone(),
            unit: p.unit.clone(),
            dz_dp: dz,
            d2z_dp2: (zp - 2.0 * z0 + zm) / (h * h),
            impact_ohm: dz * p.limit,
        });
    }
    Ok((z0, out))
}

/// The extremes over the corners of the ± limits (see the module doc for which corners).
pub fn corners(
    params: &[Parameter],
    sens: &[Sensitivity],
    lower: f64,
    upper: f64,
    z: &mut dyn FnMut(&[f64]) -> Result<f64>,
) -> Corners {
    let n = params.len();
    let mut dev = vec![0.0; n];
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    let mut failed = 0;
    let mut visit = |dev: &[f64], lo: &mut f64, hi: &mut f64| match z(dev) {
        Ok(v) if v.is_finite() => {
            *lo = lo.min(v);
            *hi = hi.max(v);
        }
        _ => failed += 1,
    };
    let (method, evaluated) = if n <= MAX_FULL_CORNERS {
        for mask in 0..(1usize << n) {
            for (k, p) in params.iter().enumerate() {
                dev[k] = if mask >> k & 1 == 1 {
                    p.limit
                } else {
                    -p.limit
                };
            }
            visit(&dev, &mut lo, &mut hi);
        }
        ("all 2^n combinations", 1usize << n)
    } else {
        for sign in [1.0, -1.0] {
            for (k, p) in params.iter().enumerate() {
                let s = if sens[k].dz_dp >= 0.0 { 1.0 } else { -1.0 };
                dev[k] = sign * s * p.limit;
            }
            visit(&dev, &mut lo, &mut hi);
        }
        ("two corners from the sensitivity signs", 2)
    };
    if lo > hi {
        (lo, hi) = (f64::NAN, f64::NAN);
    }
    Corners {
        method: method.into(),
        evaluated,
        failed,
        min_ohm: lo,
        max_ohm: hi,
        all_inside: failed == 0 && lo >= lower && hi <= upper,
    }
}

/// Percentile `q` (0–100) of sorted values by linear interpolation between order statistics.
pub fn percentile(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let pos = (q / 100.0).clamp(0.0, 1.0) * (sorted.len() - 1) as f64;
    let i = pos.floor() as usize;
    let f = pos - i as f64;
    match sorted.get(i + 1) {
        Some(next) => sorted[i] + f * (next - sorted[i]),
        None => sorted[i],
    }
}

/// The seeded standard deviates of a run: `samples` rows of one value per parameter, N(0, 1) for normal and
/// U(−1, 1) for uniform parameters (scaled by each limit when used). Drawn once so that a second run (tolerance
/// centring) reuses the very same deviates.
pub fn standard_draws(params: &[Parameter], samples: usize, seed: u64) -> Result<Vec<f64>> {
    crate::base::error::in_range(
        "samples",
        samples as f64,
        MIN_SAMPLES as f64,
        MAX_SAMPLES as f64,
        "",
    )?;
    let mut rng = Rng::new(seed);
    let mut out = Vec::with_capacity(samples * params.len());
    for _ in 0..samples {
        for p in params {
            out.push(match p.distribution {
                Distribution::Normal => rng.normal(),
                Distribution::Uniform => rng.symmetric(),
            });
        }
    }
    Ok(out)
}

/// Seeded Monte Carlo of `samples` draws. Returns the statistics and the sorted successful values.
pub fn monte_carlo(
    params: &[Parameter],
    samples: usize,
    seed: u64,
    lower: f64,
    upper: f64,
    z: &mut dyn FnMut(&[f64]) -> Result<f64>,
) -> Result<(MonteCarlo, Vec<f64>)> {
    let draws = standard_draws(params, samples, seed)?;
    monte_carlo_on(params, &draws, lower, upper, z)
}

/// Monte Carlo over deviates from [`standard_draws`].
pub fn monte_carlo_on(
    params: &[Parameter],
    draws: &[f64],
    lower: f64,
    upper: f64,
    z: &mut dyn FnMut(&[f64]) -> Result<f64>,
) -> Result<(MonteCarlo, Vec<f64>)> {
    let n = params.len().max(1);
    let samples = if params.is_empty() {
        draws.len()
    } else {
        draws.len() / n
    };
    let scale: Vec<f64> = params
        .iter()
        .map(|p| match p.distribution {
            Distribution::Normal => p.limit / 3.0,
            Distribution::Uniform => p.limit,
        })
        .collect();
    let mut dev = vec![0.0; params.len()];
    let mut values = Vec::with_capacity(samples);
    let mut first_error = None;
    for row in draws.chunks_exact(n).take(samples) {
        for ((d, s), r) in dev.iter_mut().zip(&scale).zip(row) {
            *d = s * r;
        }
        match z(&dev) {
            Ok(v) if v.is_finite() => values.push(v),
            Ok(_) => {}
            Err(e) => {
                first_error.get_or_insert(e);
            }
        }
    }
    let ok = values.len();
    if ok < 2 {
        return Err(Error::Invalid {
            field: "process".into(),
            reason: format!(
                "almost every Monte Carlo sample failed ({})",
                first_error.map(|e| e.to_string()).unwrap_or_default()
            ),
        });
    }
    let mean = values.iter().sum::<f64>() / ok as f64;
    let var = values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (ok - 1) as f64;
    let sigma = var.sqrt();
    let inside = values.iter().filter(|&&v| v >= lower && v <= upper).count();
    values.sort_unstable_by(f64::total_cmp);
    let (min, max) = (values[0], values[ok - 1]);
    let mut counts = vec![0u32; HISTOGRAM_BINS];
    let span = max - min;
    for &v in &values {
        let b = if span > 0.0 {
            (((v - min) / span) * HISTOGRAM_BINS as f64) as usize
        } else {
            0
        };
        counts[b.min(HISTOGRAM_BINS - 1)] += 1;
    }
    let cpk = (sigma > 0.0).then(|| (upper - mean).min(mean - lower) / (3.0 * sigma));
    let p = |q| percentile(&values, q);
    let mc = MonteCarlo {
        samples,
        failed: samples - ok,
        mean_ohm: mean,
        sigma_ohm: sigma,
        min_ohm: min,
        max_ohm: max,
        percentiles: Percentiles {
            p1: p(1.0),
            p5: p(5.0),
            p50: p(50.0),
            p95: p(95.0),
            p99: p(99.0),
        },
        histogram: Histogram {
            lo_ohm: min,
            hi_ohm: max,
            counts,
        },
        yield_pct: 100.0 * inside as f64 / samples as f64,
        cpk,
    };
    Ok((mc, values))
}

/// Mean and yield (% of all samples inside `[lower, upper]`) over deviates from [`standard_draws`]: the cheap
/// part of [`monte_carlo_on`], for the centring re-run (no sort, no histogram).
pub fn mean_and_yield_on(
    params: &[Parameter],
    draws: &[f64],
    lower: f64,
    upper: f64,
    z: &mut dyn FnMut(&[f64]) -> Result<f64>,
) -> (f64, f64) {
    let n = params.len().max(1);
    let scale: Vec<f64> = params
        .iter()
        .map(|p| match p.distribution {
            Distribution::Normal => p.limit / 3.0,
            Distribution::Uniform => p.limit,
        })
        .collect();
    let mut dev = vec![0.0; params.len()];
    let (mut sum, mut ok, mut inside, mut total) = (0.0, 0usize, 0usize, 0usize);
    for row in draws.chunks_exact(n) {
        total += 1;
        for ((d, s), r) in dev.iter_mut().zip(&scale).zip(row) {
            *d = s * r;
        }
        if let Ok(v) = z(&dev) {
            if v.is_finite() {
                sum += v;
                ok += 1;
                if v >= lower && v <= upper {
                    inside += 1;
                }
            }
        }
    }
    (
        if ok > 0 { sum / ok as f64 } else { f64::NAN },
        100.0 * inside as f64 / total.max(1) as f64,
    )
}

/// The shift of the nominal impedance that puts the most sorted samples inside `[lower, upper]` (see the module
/// doc); the midpoint of the best position, the smallest shift on ties.
pub fn best_shift(sorted: &[f64], lower: f64, upper: f64) -> f64 {
    let width = upper - lower;
    let n = sorted.len();
    let (mut best_count, mut best_abs, mut best) = (0usize, f64::INFINITY, 0.0);
    let mut j = 0;
    for i in 0..n {
        j = j.max(i);
        while j + 1 < n && sorted[j + 1] <= sorted[i] + width {
            j += 1;
        }
        let count = j - i + 1;
        let a_lo = (sorted[j] - width).max(if i > 0 { sorted[i - 1] } else { f64::MIN });
        let a_hi = sorted[i].min(if j + 1 < n {
            sorted[j + 1] - width
        } else {
            f64::MAX
        });
        if a_lo > a_hi {
            continue;
        }
        let d = lower - 0.5 * (a_lo + a_hi);
        if count > best_count || (count == best_count && d.abs() < best_abs) {
            (best_count, best_abs, best) = (count, d.abs(), d);
        }
    }
    best
}

/// The stream every rule draws from: the same standard deviates for every rule (common random numbers), so two
/// identical rules give identical spreads and two different rules differ only where their models differ, never by
/// sampling noise; reordering or renaming rules changes nothing.
pub fn rule_seed(seed: u64) -> u64 {
    rng::mix(seed)
}

/// True when two cross-section families are the same structure for the spread. Symmetric and offset stripline are
/// one model (the stripline module blends them continuously at the 1e-3 threshold), so a centred trace whose
/// heights move apart under a thickness tolerance stays the same structure.
fn same_structure(a: &str, b: &str) -> bool {
    let stripline = |f: &str| f == "symmetric stripline" || f == "offset stripline";
    a == b || (stripline(a) && stripline(b))
}

/// Runs the whole spread for an analysed rule with the closed-form models.
pub fn run(
    project: &Project,
    rule: &ImpedanceRule,
    result: &RuleResult,
    opts: &SpreadOptions,
) -> Result<SpreadSummary> {
    run_with_model(project, rule, result, opts, &Engine::ClosedForm)
}

/// The field engine's response over the tolerance box, at the cost of at most 2n field solves beside the rule's
/// own: the closed form times a correction factor r(δ) = Z_field(δ) / Z_closed(δ), fitted per parameter by a
/// quadratic through the nominal and the ± limits. It reproduces the field engine exactly at the nominal and at
/// every axis limit; the closed form carries the cross terms and the shape between (the ratio of two smooth
/// models of the same line varies slowly, so its cross terms are second order; measured against direct field
/// samples in the tests).
///
/// Beyond a parameter's limits (the Monte Carlo's tails) its term continues along its tangent at the limit, held
/// within the range of the three fitted ratios widened by that range on each side, so a strongly curved fit never
/// extrapolates the factor to absurd values; a factor that is still not positive fails the sample.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldCorrection {
    /// The engine's method name, for the summary.
    pub method: &'static str,
    ratio0: f64,
    limits: Vec<f64>,
    lin: Vec<f64>,
    sq: Vec<f64>,
    /// The field's own per-parameter quadratics (Ω), when they matched a field solve off the axes better than the
    /// corrected closed form did: the response then takes the field's shape, not the closed form's.
    field_axes: Option<FieldAxes>,
}

/// Z(δ) = z0 + Σ (aₖ + bₖδₖ)·δₖ of the field engine's own axis solves (no cross terms), bounded beyond the limits
/// like [`FieldCorrection::factor`].
#[derive(Debug, Clone, PartialEq)]
struct FieldAxes {
    z0: f64,
    lin: Vec<f64>,
    sq: Vec<f64>,
}

/// One parameter's term (a + b·x)·x of a quadratic fitted through −l, 0 and +l; beyond the limits it continues
/// along its tangent, held within the range of the three fitted values widened by that range on each side.
fn axis_term(a: f64, b: f64, l: f64, x: f64) -> f64 {
    if x.abs() <= l {
        return (a + b * x) * x;
    }
    let (tm, tp) = ((b * l - a) * l, (a + b * l) * l);
    let (lo, hi) = (tm.min(tp).min(0.0), tm.max(tp).max(0.0));
    let span = hi - lo;
    let e = x.signum() * l;
    let end = (a + b * e) * e;
    let slope = a + 2.0 * b * e;
    (end + slope * (x - e)).clamp(lo - span, hi + span)
}

impl FieldCorrection {
    /// Fits the correction of the closed form to `field` over `setup`'s parameters.
    pub fn fit(setup: &Setup, field: &Engine) -> Result<FieldCorrection> {
        Self::fit_from(setup, field, None)
    }

    /// [`FieldCorrection::fit`] with the field engine's impedance at the nominal already known (the rule's own
    /// figure: the field solve at the setup's nominal is the same solve), saving one solve.
    pub fn fit_from(
        setup: &Setup,
        field: &Engine,
        nominal_field_ohm: Option<f64>,
    ) -> Result<FieldCorrection> {
        // The fit reads impedances only: no error estimate (the fine mesh alone, the same figures).
        let quick = crate::plan::synthesis::without_estimate(field);
        let mut on_field = setup.evaluator(&quick);
        let mut on_closed = setup.evaluator(&Engine::ClosedForm);
        let n = setup.params.len();
        let mut dev = vec![0.0; n];
        let closed0 = on_closed.z(&dev)?;
        let field0 = match nominal_field_ohm {
            Some(z) => z,
            None => on_field.z(&dev)?,
        };
        let ratio0 = field0 / closed0;
        // The fast engine's changes over the tolerance box from a coarser mesh: what a mesh misses is nearly the
        // same fraction at the nominal and at a limit, so Z_fine(δ) ≈ Z_fine(0)·Z_fit(δ)/Z_fit(0) at a fraction
        // of the cost (measured against direct fine solves in the tests).
        let fit_engine = match field {
            Engine::Field {
                options,
                etch_factor,
            } => Some(Engine::Field {
                options: crate::field::boundary::BemOptions {
                    fine: options.fit_mesh(),
                    estimate: false,
                    ..*options
                },
                etch_factor: *etch_factor,
            }),
            _ => None,
        };
        let scale = match &fit_engine {
            Some(c) => field0 / setup.evaluator(c).z(&dev)?,
            None => 1.0,
        };
        let mut on_field = match &fit_engine {
            Some(c) => setup.evaluator(c),
            None => on_field,
        };
        let (mut lin, mut sq) = (Vec::with_capacity(n), Vec::with_capacity(n));
        // Parameters with field solves: (index, Z_field at +l, at −l); the closed form at ± each limit.
        let mut solved = Vec::new();
        let mut cp_cm = Vec::with_capacity(n);
        for (k, p) in setup.params.iter().enumerate() {
            let l = p.limit;
            dev[k] = l;
            let cp = on_closed.z(&dev)?;
            dev[k] = -l;
            let cm = on_closed.z(&dev)?;
            cp_cm.push((cp, cm));
            // A parameter that moves Z by under 0.05 % at its limits (a far layer of a plane-less line, say) moves
            // the ratio by far less: the closed form carries it alone, saving two field solves.
            if (cp - cm).abs() < 1e-3 * closed0 {
                dev[k] = 0.0;
                lin.push(0.0);
                sq.push(0.0);
                continue;
            }
            let rm = scale * on_field.z(&dev)? / cm;
            dev[k] = l;
            let rp = scale * on_field.z(&dev)? / cp;
            dev[k] = 0.0;
            lin.push((rp - rm) / (2.0 * l));
            sq.push((rp - 2.0 * ratio0 + rm) / (2.0 * l * l));
            solved.push((k, rp * cp, rm * cm));
        }
        let limits: Vec<f64> = setup.params.iter().map(|p| p.limit).collect();
        let mut c = FieldCorrection {
            method: field.method_name(),
            ratio0,
            limits,
            lin,
            sq,
            field_axes: None,
        };
        // Which shape between the solves: one more solve off the axes, half way to the limits of every solved
        // parameter in the direction it raises Z, judges the closed form's shape (its cross terms) against none.
        // Where the closed form is far off (a plane-less line with thick copper: 25 % low, four times the field's
        // sensitivity to the etch) the field's own axes win by two orders of magnitude; on striplines the closed
        // form's shape wins by a factor of 3–5 (measured on the 12-layer fixture).
        if solved.len() >= 2 {
            let (mut alin, mut asq) = (vec![0.0; n], vec![0.0; n]);
            for k in 0..n {
                // Unsolved parameters: the closed form's change, scaled to the field.
                alin[k] = ratio0 * (cp_cm[k].0 - cp_cm[k].1) / (2.0 * c.limits[k]);
                asq[k] = ratio0 * (cp_cm[k].0 - 2.0 * closed0 + cp_cm[k].1)
                    / (2.0 * c.limits[k] * c.limits[k]);
            }
            for &(k, fp, fm) in &solved {
                let l = c.limits[k];
                alin[k] = (fp - fm) / (2.0 * l);
                asq[k] = (fp - 2.0 * field0 + fm) / (2.0 * l * l);
            }
            let axes = FieldAxes {
                z0: field0,
                lin: alin,
                sq: asq,
            };
            for &(k, _, _) in &solved {
                dev[k] = 0.5 * c.limits[k] * axes.lin[k].signum();
            }
            let truth = scale * on_field.z(&dev)?;
            let closed_shape = on_closed.z(&dev)? * c.factor(&dev);
            let field_shape = axes.z(&c.limits, &dev);
            if (field_shape - truth).abs() < (closed_shape - truth).abs() {
                c.field_axes = Some(axes);
            }
        }
        Ok(c)
    }

    /// In words, for the summary: what carries the response between the engine's solves.
    pub fn shape(&self) -> &'static str {
        if self.field_axes.is_some() {
            "its own per-parameter quadratics between its solves"
        } else {
            "the closed form's shape between its solves"
        }
    }

    /// The factor at the deviations `d` (of the closed form's shape).
    pub fn factor(&self, d: &[f64]) -> f64 {
        let mut f = self.ratio0;
        for (k, &x) in d.iter().enumerate().take(self.lin.len()) {
            f += axis_term(self.lin[k], self.sq[k], self.limits[k], x);
        }
        f
    }

    /// Whether the response takes the field's own shape (no closed form needed on the fitted line).
    pub fn field_shape(&self) -> bool {
        self.field_axes.is_some()
    }

    /// The response at `d` on the setup it was fitted to: the closed form there (from `closed`, called only for
    /// the closed form's shape) times the factor, or the field's own axes. An error where it is not positive.
    pub fn z(&self, d: &[f64], closed: &mut dyn FnMut(&[f64]) -> Result<f64>) -> Result<f64> {
        let z = match &self.field_axes {
            Some(axes) => axes.z(&self.limits, d),
            None => {
                let f = self.factor(d);
                if !(f.is_finite() && f > 0.0) {
                    return Err(not_positive());
                }
                closed(d)? * f
            }
        };
        if z.is_finite() && z > 0.0 {
            Ok(z)
        } else {
            Err(not_positive())
        }
    }
}

impl FieldAxes {
    fn z(&self, limits: &[f64], d: &[f64]) -> f64 {
        let mut z = self.z0;
        for (k, &x) in d.iter().enumerate().take(self.lin.len()) {
            z += axis_term(self.lin[k], self.sq[k], limits[k], x);
        }
        z
    }
}

fn not_positive() -> Error {
    Error::Invalid {
        field: "process".into(),
        reason: "the field response is not positive this far from the nominal".into(),
    }
}

/// Everything a planned rule's spread needs before sampling, built once: its setup (the resolved parameters) and,
/// when its figures come from a field engine, the correction of the closed form to that engine.
#[derive(Debug, Clone)]
pub struct ResultSpread {
    pub setup: Setup,
    pub correction: Option<FieldCorrection>,
}

impl ResultSpread {
    /// Resolves the parameters of a planned rule and fits its correction ([`result_correction`]).
    pub fn new(
        project: &Project,
        rule: &ImpedanceRule,
        result: &RuleResult,
    ) -> Result<ResultSpread> {
        let dims = Dims {
            w: result.width_m,
            s: result.spacing_m,
            gap: result.gap_m,
        };
        let setup = Setup::new(project, rule, &result.cross_section, &dims)?;
        let correction = match Engine::that_made(&result.method, project) {
            None => None,
            Some(engine) => Some(FieldCorrection::fit_from(
                &setup,
                &engine,
                nominal_of(result),
            )?),
        };
        Ok(ResultSpread { setup, correction })
    }

    /// The spread, and the sorted Monte Carlo samples behind it (for a histogram).
    pub fn run(
        &self,
        project: &Project,
        opts: &SpreadOptions,
    ) -> Result<(SpreadSummary, Vec<f64>)> {
        run_corrected(
            project,
            &self.setup,
            opts,
            &Engine::ClosedForm,
            self.correction.as_ref(),
        )
    }
}

/// The rule's own field figure, when it is the controlled impedance at the setup's nominal (always, for a rule
/// planned on a field engine: the same cross-section, dimensions and engine).
fn nominal_of(result: &RuleResult) -> Option<f64> {
    (result.impedance_ohm.is_finite() && result.impedance_ohm > 0.0).then_some(result.impedance_ohm)
}

/// The correction a planned rule's spread needs: `None` when its figures come from the closed form, else the fit
/// to the engine that made them (the fast field engine, or the reference solver when the result names it).
pub fn result_correction(
    project: &Project,
    rule: &ImpedanceRule,
    result: &RuleResult,
) -> Result<Option<FieldCorrection>> {
    ResultSpread::new(project, rule, result).map(|r| r.correction)
}

/// The spread of a planned rule on the response of the engine that made its figures ([`result_correction`]).
pub fn run_for_result(
    project: &Project,
    rule: &ImpedanceRule,
    result: &RuleResult,
    opts: &SpreadOptions,
) -> Result<SpreadSummary> {
    run_for_result_with_samples(project, rule, result, opts).map(|(s, _)| s)
}

/// [`run_for_result`] and its sorted Monte Carlo samples from one fit and one run (for drawing a histogram).
pub fn run_for_result_with_samples(
    project: &Project,
    rule: &ImpedanceRule,
    result: &RuleResult,
    opts: &SpreadOptions,
) -> Result<(SpreadSummary, Vec<f64>)> {
    ResultSpread::new(project, rule, result)?.run(project, opts)
}

/// The sorted Monte Carlo samples of [`run_for_result`] (same setup, response, surface, seed and deviates), for
/// drawing a histogram. [`run_for_result_with_samples`] gives both from one run.
pub fn result_samples(
    project: &Project,
    rule: &ImpedanceRule,
    result: &RuleResult,
    opts: &SpreadOptions,
) -> Result<Vec<f64>> {
    let opts = SpreadOptions {
        centre: false,
        ..*opts
    };
    run_for_result_with_samples(project, rule, result, &opts).map(|(_, v)| v)
}

/// Analyses `rule` (synthesis included) and runs its spread.
pub fn run_rule(
    project: &Project,
    rule: &ImpedanceRule,
    opts: &SpreadOptions,
) -> Result<SpreadSummary> {
    let result = crate::plan::rule::evaluate_rule(project, rule)?;
    run_for_result(project, rule, &result, opts)
}

/// Runs the whole spread with any impedance model called directly (or through its quadratic surface).
pub fn run_with_model(
    project: &Project,
    rule: &ImpedanceRule,
    result: &RuleResult,
    opts: &SpreadOptions,
    model: &dyn ImpedanceModel,
) -> Result<SpreadSummary> {
    let dims = Dims {
        w: result.width_m,
        s: result.spacing_m,
        gap: result.gap_m,
    };
    let setup = Setup::new(project, rule, &result.cross_section, &dims)?;
    run_corrected(project, &setup, opts, model, None).map(|(s, _)| s)
}

/// The spread on `model` times `correction`'s factor (when given), with the sorted Monte Carlo samples.
fn run_corrected(
    project: &Project,
    setup: &Setup,
    opts: &SpreadOptions,
    model: &dyn ImpedanceModel,
    correction: Option<&FieldCorrection>,
) -> Result<(SpreadSummary, Vec<f64>)> {
    if setup.params.is_empty() {
        return Err(Error::Invalid {
            field: "process".into(),
            reason: "no process tolerance varies this rule (every limit that touches it is zero)"
                .into(),
        });
    }
    let seed = rule_seed(opts.seed);
    let (lower, upper) = (setup.lower_ohm, setup.upper_ohm);
    let mut ev = setup.evaluator(model);
    let mut direct = |d: &[f64]| match correction {
        Some(c) => c.z(d, &mut |d| ev.z(d)),
        None => ev.z(d),
    };
    let (z0, sens) = sensitivities(&setup.params, &mut direct)?;
    let surface = match opts.model {
        SampleModel::Direct => None,
        SampleModel::Quadratic => Some(Quadratic::fit(&setup.params, &mut direct)?),
    };
    let mut f = |d: &[f64]| match &surface {
        Some(q) => q.sample(d, &mut direct),
        None => direct(d),
    };
    let corners = corners(&setup.params, &sens, lower, upper, &mut f);
    let draws = standard_draws(&setup.params, opts.samples, seed)?;
    let (mc, sorted) = monte_carlo_on(&setup.params, &draws, lower, upper, &mut f)?;
    let linear_sigma = sens
        .iter()
        .zip(&setup.params)
        .map(|(s, p)| (s.dz_dp * p.sigma()).powi(2))
        .sum::<f64>()
        .sqrt();
    let second_order_mean = z0
        + 0.5
            * sens
                .iter()
                .zip(&setup.params)
                .map(|(s, p)| s.d2z_dp2 * p.sigma().powi(2))
                .sum::<f64>();
    let mut warnings = Vec::new();
    if mc.failed > 0 {
        warnings.push(Warning::new(format!(
            "{} of {} samples could not be evaluated and count as out of tolerance",
            mc.failed, mc.samples
        )));
    }
    let centred = if opts.centre {
        match centre(
            project,
            setup,
            model,
            correction,
            surface.as_ref(),
            &sorted,
            z0,
            &mc,
            &draws,
        ) {
            Ok(c) => Some(c),
            Err(e) => {
                warnings.push(Warning::new(format!("tolerance centring: {e}")));
                None
            }
        }
    } else {
        None
    };
    let mut sorted_sens = sens;
    sorted_sens.sort_by(|a, b| b.impact_ohm.abs().total_cmp(&a.impact_ohm.abs()));
    let summary = SpreadSummary {
        seed: opts.seed,
        model: opts.model,
        response: match correction {
            Some(c) => format!("{}, with {}", c.method, c.shape()),
            None => model.name().to_string(),
        },
        target_ohm: setup.target_ohm,
        lower_ohm: lower,
        upper_ohm: upper,
        nominal_ohm: z0,
        parameters: setup.params.clone(),
        sensitivities: sorted_sens,
        linear_sigma_ohm: linear_sigma,
        second_order_mean_ohm: second_order_mean,
        corners,
        monte_carlo: mc,
        centred,
        warnings,
    };
    Ok((summary, sorted))
}

#[allow(clippy::too_many_arguments)]
fn centre(
    project: &Project,
    setup: &Setup,
    model: &dyn ImpedanceModel,
    correction: Option<&FieldCorrection>,
    surface: Option<&Quadratic>,
    sorted: &[f64],
    z0: f64,
    mc: &MonteCarlo,
    draws: &[f64],
) -> Result<Centred> {
    let x0 = setup.free_value();
    let keep = || Centred {
        dimension: setup.free.name().into(),
        nominal_m: x0,
        centred_m: x0,
        nominal_yield_pct: mc.yield_pct,
        centred_yield_pct: mc.yield_pct,
        centred_nominal_ohm: z0,
        centred_mean_ohm: mc.mean_ohm,
    };
    let shift = best_shift(sorted, setup.lower_ohm, setup.upper_ohm);
    if shift.abs() <= 1e-9 * setup.target_ohm {
        return Ok(keep());
    }
    let (lo, lo_reason) = match setup.free {
        Free::Width => (
            project.fab.min_trace_m,
            "the fabricator's minimum trace width",
        ),
        Free::Spacing => (project.fab.min_space_m, "the fabricator's minimum space"),
    };
    let hi = (100.0 * setup.base.scale_height()).min(MAX_LENGTH_M);
    let bracket = Bracket {
        lo,
        hi,
        lo_reason,
        hi_reason: "the widest dimension searched",
    };
    let zero = vec![0.0; setup.params.len()];
    // The correction was fitted at the nominal free dimension; a moved line keeps it (the closed form's shape), or
    // scales the field's own shape by the closed form's change with the free dimension.
    let fitted = std::cell::RefCell::new(setup.evaluator(model));
    let respond = |ev: &mut Evaluator, d: &[f64]| -> Result<f64> {
        match correction {
            None => ev.z(d),
            Some(c) if c.field_shape() => {
                let scale = ev.z(d)? / fitted.borrow_mut().z(d)?;
                c.z(d, &mut |_| Ok(f64::NAN)).map(|z| z * scale)
            }
            Some(c) => c.z(d, &mut |d| ev.z(d)),
        }
    };
    let x = roots::solve(setup.free.name(), z0 + shift, &bracket, |x| {
        let s = setup.with_free(x);
        let mut ev = s.evaluator(model);
        respond(&mut ev, &zero)
    })?;
    let moved = setup.with_free(x);
    let mut ev = moved.evaluator(model);
    let mut direct = |d: &[f64]| respond(&mut ev, d);
    let surface = match surface {
        None => None,
        Some(q) => Some(q.refit_axes(&moved.params, &mut direct)?),
    };
    let mut f = |d: &[f64]| match &surface {
        Some(q) => q.sample(d, &mut direct),
        None => direct(d),
    };
    let (mean_c, yield_c) = mean_and_yield_on(
        &moved.params,
        draws,
        moved.lower_ohm,
        moved.upper_ohm,
        &mut f,
    );
    // Suggest the centred dimension only when it gains more yield than the Monte Carlo can resolve: three
    // standard errors of the estimated yield (at least 0.1 percentage point). Smaller gains are sampling noise.
    let y = mc.yield_pct / 100.0;
    let resolvable = (3.0 * (y * (1.0 - y) / mc.samples.max(1) as f64).sqrt() * 100.0).max(0.1);
    if yield_c < mc.yield_pct + resolvable {
        return Ok(keep());
    }
    Ok(Centred {
        dimension: setup.free.name().into(),
        nominal_m: x0,
        centred_m: x,
        nominal_yield_pct: mc.yield_pct,
        centred_yield_pct: yield_c,
        centred_nominal_ohm: z0 + shift,
        centred_mean_ohm: mean_c,
    })
}

#[cfg(test)]
mod tests;
