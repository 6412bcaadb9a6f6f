//! Loss and frequency behaviour of any structure the models know: R, L, G, C per length, complex Z0, γ = α + jβ,
//! conductor and dielectric loss, phase and group delay, at one frequency or over a log-spaced sweep.
//!
//! The module is structure- and engine-independent: it asks the rule's [`Engine`] for impedances of modified
//! cross-sections (walls receded, every Dk scaled), so every structure an engine answers gets loss for free. On a
//! field engine the slopes are central differences of its air solves on one mesh layout (the step shrinks until
//! both sides share it), and each mode's share of electric energy in the dielectrics comes from the field
//! ([`Engine::mode_fills`]); on the closed forms both come from the formulas.
//!
//! **Conductor loss** — H. A. Wheeler, "Formulas for the skin effect", Proc. IRE 30(9), 1942, pp. 412–424,
//! the incremental-inductance rule: the skin-effect resistance per length equals the increase of the external
//! inductance when every conductor wall recedes into the metal, times Rs/µ0:
//!
//! R_ac = (Rs/µ0)·∂L/∂n = (Rs/η0)·∂Z0_air/∂n,   Rs = √(π f µ0/σ) = 1/(σδ),   δ = 1/√(π f µ0 σ),
//!
//! with L = Z0_air/c the inductance of the same structure in air (εr = 1 everywhere) and n the recession depth of
//! all walls (trace narrower and thinner by 2n, dielectric heights to the planes larger by n on each facing side,
//! gaps and spacings wider by 2n). The low-loss attenuation is then α_c = R/(2Z0) = Rs/(2 Z0 η0)·∂Z0_air/∂n — the
//! form printed in D. M. Pozar, "Microwave Engineering" (4th ed., §2.7 "The Wheeler incremental inductance rule",
//! from memory: α_c = Rs/(2Z0η)·dZ0/dl). We take ∂/∂n by a forward difference with a step of 10⁻⁵ of the
//! smallest dimension; the derivative is split into the trace's own walls and each plane's walls, so that every
//! copper layer's roughness factor multiplies its own share. The rule assumes δ small against the conductor
//! thickness and radius of curvature (we warn for 0.5δ < t < 3δ, where the slab transition below carries it); a zero-thickness strip has unbounded loss under it,
//! which we report as an error naming `thickness`.
//!
//! **DC to skin effect** — R_dc = 1/(σ·w·t) per length for the trace. The trace's internal impedance follows
//! the exact result for a conductor slab of thickness t' carrying current on its faces (1-D diffusion, any
//! EM text; e.g. Ramo, Whinnery & Van Duzer, from memory): Z_int = R_dc·x·coth x with x = (1 + j)·t'/δ, which is
//! R_dc at DC and R_dc·(1 + j)·t'/δ at high frequency. We choose t' = (slope_trace/η0)·w·t so that the high-
//! frequency limit is exactly Wheeler's trace share; t' = t for a wide microstrip (current on one face: the exact
//! one-sided slab) and t' = t/2 for a centred stripline (both faces: the exact symmetric slab). Elsewhere it is an
//! approximation (our construction). The planes' DC share is taken as zero (their return current spreads across
//! the whole plane), so their part is pure skin effect, Rs(1 + j)·slope_plane/η0. The imaginary part is the
//! internal reactance ωL_int. Against the exact symmetric slab, the common √(R_dc² + R_ac²) blend is up to 31 %
//! high near t ≈ 2–3δ, which is why we do not use it.
//!
//! **Dielectric loss** — G = ωC·tanδ_eff with tanδ_eff = p·tanδ, p the share of the mode's electric energy stored
//! in the dielectric. On the closed forms p comes from the filling factor q = (εeff − 1)/(εr − 1) as p = q·εr/εeff,
//! giving α_d = (π f/c)·εr·(εeff − 1)/(√εeff·(εr − 1))·tanδ; homogeneous lines (q = 1) reduce to
//! α_d = π f √εr tanδ/c. (Pozar, "Microwave Engineering", 4th ed., §3.8, microstrip attenuation, from memory; the
//! same expression as scikit-rf's `MLine`.) On a field engine p = d ln C/d ln λ with every Dk scaled by λ (two
//! solves on one mesh), which needs no assumption that εeff is linear in εr and sees each layer and the mask as they
//! are; Z and εeff at Dk(f) = λ·Dk then follow C ∝ λ^p (exact for a line wholly in dielectric or in air).
//! Dk(f) and Df(f) come from [`crate::design::dielectric`] (Djordjevic–Sarkar, or constant); the structure is re-evaluated
//! at each frequency with εr = Dk(f), so εeff and Z0 follow the material.
//!
//! **Dispersion** — surface microstrip only: Kirschning–Jansen 1982 εeff(f) and Jansen–Kirschning 1983 Z0(f)
//! ([`crate::line::dispersion`]). Homogeneous structures (stripline) have no quasi-TEM dispersion beyond the material's.
//!
//! **Per-length model** — L = Z0·√εeff/c + X_int/ω, C = √εeff/(Z0·c), Z = R + jωL, Y = G + jωC,
//! Zc = √(Z/Y), γ = √(ZY). Conductor and dielectric attenuation are reported by the low-loss forms R/(2Z0) and
//! G·Z0/2 (Z0 the external, lossless impedance of the model); the total is Re γ, exact for the RLGC line.
//! Group delay is dβ/dω by a central difference.
//!
//! Pairs give two modes, odd and even, each as one line (per-line R, L, G, C of that mode); the differential
//! signal travels in the odd mode.
//!
//! Claimed accuracy: Wheeler's rule is exact as δ → 0; its error here is that of the Z0_air derivative: ≈1 % for
//! Hammerstad–Jensen microstrip (measured against a field solve), and on the field engine within 0.2 % of the
//! exact derivative of Cohn's 1954 stripline (planes receding) and of scikit-fem's (`tests/python/test_loss.py`).
//!
//! Checked against: skin depth of copper (2.09 µm at 1 GHz); R_dc = ρ·len/area exactly; the parallel-plate limit
//! R → 2Rs/w of a very wide microstrip and the exact one-sided slab from DC to skin effect (unit tests);
//! Wheeler's rule on a scikit-fem Laplace solve of Z0_air (≤ 1.2 %) and on Wheeler's 1977 closed form (≤ 1.4 %);
//! scikit-rf `MLine` dielectric loss (≤ 4e-6), roughness factor and dispersion (round-off)
//! (`tests/python/test_loss.py`). scikit-rf's own conductor loss is Hammerstad–Jensen's current-distribution
//! factor, not Wheeler's rule; it is 7–60 % above ours (most for thick, narrow strips, where it ignores thickness).

use crate::base::error::{self, Error, Result};
use crate::base::units::{C0, ETA0, INCH, MU0};
use crate::base::validity::Warning;
use crate::closed_form;
use crate::closed_form::microstrip;
use crate::design::dielectric::Dispersive;
pub use crate::design::loss_options::{LossOptions, COPPER_CONDUCTIVITY};
use crate::design::project::{ImpedanceRule, Project, Structure};
use crate::engine::{Engine, ModeFill};
pub use crate::section::Surfaces;

use crate::line::dispersion;
use crate::section::{Analysis, Dims};
use crate::section::{Cover, CrossSection, Medium};
use num_complex::Complex64;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// Nepers to decibels: 20·log10(e).
pub const DB_PER_NEPER: f64 = 8.685_889_638_065_035;
/// Highest frequency the loss model accepts, Hz.
pub const MAX_FREQ_HZ: f64 = 1e12;
/// Most points a sweep may have.
pub const MAX_POINTS: usize = 2001;

/// Skin depth δ = 1/√(π f µ0 σ), m.
pub fn skin_depth(f_hz: f64, conductivity: f64) -> f64 {
    1.0 / (PI * f_hz * MU0 * conductivity).sqrt()
}

/// Surface resistance Rs = 1/(σδ) = √(π f µ0/σ), Ω per square.
pub fn surface_resistance(f_hz: f64, conductivity: f64) -> f64 {
    (PI * f_hz * MU0 / conductivity).sqrt()
}

/// Everything beyond geometry that loss needs.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LossInputs {
    pub conductivity_s_per_m: f64,
    pub surfaces: Surfaces,
    /// The dielectric as the line sees it (combined Dk of the cross-section, energy-weighted Df).
    pub dielectric: Dispersive,
    pub dispersion: bool,
}

/// A loss figure in the three usual units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Db {
    pub db_per_m: f64,
    pub db_per_cm: f64,
    pub db_per_in: f64,
}

impl Db {
    pub fn from_np_per_m(np: f64) -> Db {
        let db_per_m = np * DB_PER_NEPER;
        Db {
            db_per_m,
            db_per_cm: db_per_m / 100.0,
            db_per_in: db_per_m * INCH,
        }
    }
}

/// One mode (a single line, or the odd or even mode of a pair, per line) at one frequency.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ModeLoss {
    pub r_ohm_per_m: f64,
    pub l_h_per_m: f64,
    pub g_s_per_m: f64,
    pub c_f_per_m: f64,
    /// DC resistance ρ/(w·t) per length.
    pub r_dc_ohm_per_m: f64,
    /// Skin-effect resistance of smooth copper (Wheeler), before roughness.
    pub r_skin_ohm_per_m: f64,
    /// Effective roughness factor of the skin-effect resistance (share-weighted over trace and planes).
    pub roughness_factor: f64,
    /// Effective permittivity at this frequency (dispersed where modelled).
    pub eps_eff: f64,
    /// Complex characteristic impedance √((R + jωL)/(G + jωC)), Ω.
    pub z0_re_ohm: f64,
    pub z0_im_ohm: f64,
    pub alpha_np_per_m: f64,
    pub beta_rad_per_m: f64,
    pub conductor: Db,
    pub dielectric: Db,
    pub total: Db,
    pub phase_delay_s_per_m: f64,
    pub group_delay_s_per_m: f64,
}

impl ModeLoss {
    pub fn z0(&self) -> Complex64 {
        Complex64::new(self.z0_re_ohm, self.z0_im_ohm)
    }
    pub fn gamma(&self) -> Complex64 {
        Complex64::new(self.alpha_np_per_m, self.beta_rad_per_m)
    }
}

/// Loss of a line at one frequency: one mode for a single line, odd and even for a pair.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LossAt {
    pub freq_hz: f64,
    pub skin_depth_m: f64,
    /// Dk and Df of the (combined) dielectric at this frequency.
    pub dk: f64,
    pub df: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub line: Option<ModeLoss>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub odd: Option<ModeLoss>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub even: Option<ModeLoss>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub warnings: Vec<Warning>,
}

impl LossAt {
    /// The mode that carries the signal: the line, or the odd mode of a pair.
    pub fn signal(&self) -> Option<&ModeLoss> {
        self.line.as_ref().or(self.odd.as_ref())
    }
    /// The modes in order: [line] or [odd, even].
    pub fn modes(&self) -> Vec<&ModeLoss> {
        [&self.line, &self.odd, &self.even]
            .into_iter()
            .flatten()
            .collect()
    }
}

/// A log-spaced frequency sweep.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Sweep {
    pub from_hz: f64,
    pub to_hz: f64,
    pub points: usize,
}

impl Default for Sweep {
    /// 10 MHz to 40 GHz, 50 points.
    fn default() -> Self {
        Sweep {
            from_hz: 10e6,
            to_hz: 40e9,
            points: 50,
        }
    }
}

impl Sweep {
    /// The frequencies, log-spaced from `from_hz` to `to_hz` inclusive.
    pub fn frequencies(&self) -> Result<Vec<f64>> {
        error::in_range("from", self.from_hz, 1.0, MAX_FREQ_HZ, "Hz")?;
        error::in_range("to", self.to_hz, 1.0, MAX_FREQ_HZ, "Hz")?;
        if !(1..=MAX_POINTS).contains(&self.points) {
            return Err(Error::OutOfRange {
                field: "points".into(),
                value: self.points as f64,
                min: 1.0,
                max: MAX_POINTS as f64,
                unit: "",
            });
        }
        if self.to_hz < self.from_hz {
            return Err(Error::Invalid {
                field: "to".into(),
                reason: format!(
                    "the sweep must end ({} Hz) at or above its start ({} Hz)",
                    self.to_hz, self.from_hz
                ),
            });
        }
        if self.points == 1 {
            return Ok(vec![self.from_hz]);
        }
        let (a, b) = (self.from_hz.ln(), self.to_hz.ln());
        let n = (self.points - 1) as f64;
        Ok((0..self.points)
            .map(|i| match i {
                0 => self.from_hz,
                i if i + 1 == self.points => self.to_hz,
                i => (a + (b - a) * i as f64 / n).exp(),
            })
            .collect())
    }
}

/// What a loss model took from its engine (the frequency-independent part): each mode's Wheeler slopes and, on a
/// field engine, its Z, εeff and dielectric share. A result carries it so the loss can be swept again (plots,
/// Touchstone) without solving again; with the section, dimensions and loss inputs it rebuilds the model.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LossProbe {
    /// Per mode: ∂Z0_air/∂n of the trace's walls, the upper plane's and the lower plane's, Ω/m.
    pub slopes: Vec<[f64; 3]>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fills: Option<Vec<ModeFill>>,
    /// The engine that made it ([`Engine::name`]).
    pub engine: std::borrow::Cow<'static, str>,
}

/// ∂Z0_air/∂n of one mode, split by which walls recede, Ω/m.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Slopes {
    trace: f64,
    above: f64,
    below: f64,
}

/// Per-mode [R, L, G, C, R_skin, K, εeff, external Z0] at one frequency, with the dielectric's Dk and Df.
struct Rlgc {
    modes: Vec<[f64; 8]>,
    dk: f64,
    df: f64,
    warnings: Vec<Warning>,
}

/// A line prepared for loss: geometry, materials and the Wheeler slopes (which do not depend on frequency).
#[derive(Debug, Clone, PartialEq)]
pub struct LineModel {
    pub cross_section: CrossSection,
    pub structure: Structure,
    pub dims: Dims,
    pub inputs: LossInputs,
    slopes: Vec<Slopes>,
    r_dc: f64,
    /// Field engines: each mode's Z, εeff and dielectric share at the stack's Dk (the sweep carries them to Dk(f)).
    field: Option<Vec<ModeFill>>,
    /// The engine that made the wall slopes and the modes ([`Engine::name`]).
    pub engine: &'static str,
}

fn medium_er(m: &Medium) -> f64 {
    match *m {
        Medium::Microstrip { er, .. }
        | Medium::NoPlane { er, .. }
        | Medium::Stripline { er, .. }
        | Medium::Broadside { er, .. } => er,
    }
}

/// The cross-section with every Dk scaled so the main dielectric has `er` (covers follow in proportion).
fn with_er(cs: &CrossSection, er: f64) -> CrossSection {
    let scale = er / medium_er(&cs.medium);
    let mut out = cs.clone();
    let scale_cover = |c: Cover| match c {
        Cover::Air => Cover::Air,
        Cover::Mask { thickness_m, er } => Cover::Mask {
            thickness_m,
            er: (er * scale).max(1.0),
        },
        Cover::Dielectric { thickness_m, er } => Cover::Dielectric {
            thickness_m,
            er: (er * scale).max(1.0),
        },
    };
    out.medium = match cs.medium {
        Medium::Microstrip { h, cover, .. } => Medium::Microstrip {
            h,
            er,
            cover: scale_cover(cover),
        },
        Medium::NoPlane { h, .. } => Medium::NoPlane { h, er },
        Medium::Stripline {
            h_below,
            h_above,
            dual,
            ..
        } => Medium::Stripline {
            h_below,
            h_above,
            er,
            dual,
        },
        Medium::Broadside {
            h_above,
            separation,
            h_below,
            ..
        } => Medium::Broadside {
            h_above,
            separation,
            h_below,
            er,
        },
    };
    out
}

/// The air-filled cross-section (εr = 1 everywhere) with the trace walls receded by `rt`, the upper plane by `ra`
/// and the lower plane (the one plane of a microstrip) by `rb`. Negative values advance the walls.
fn receded(cs: &CrossSection, dims: &Dims, rt: f64, ra: f64, rb: f64) -> (CrossSection, Dims) {
    let mut out = with_er(cs, 1.0);
    // In air the layers' heights and Dk no longer matter; the field engines would otherwise read them.
    out.layering = None;
    let air = |c: Cover| match c {
        Cover::Air => Cover::Air,
        Cover::Mask { thickness_m, .. } => Cover::Mask {
            thickness_m,
            er: 1.0,
        },
        Cover::Dielectric { thickness_m, .. } => Cover::Dielectric {
            thickness_m,
            er: 1.0,
        },
    };
    out.medium = match out.medium {
        Medium::Microstrip { h, cover, .. } => Medium::Microstrip {
            h: h + rt + rb,
            er: 1.0,
            cover: air(cover),
        },
        // No plane: the sheet's height does not matter in air; only the trace and coplanar grounds recede.
        Medium::NoPlane { h, .. } => Medium::NoPlane { h, er: 1.0 },
        Medium::Stripline {
            h_below,
            h_above,
            dual,
            ..
        } => Medium::Stripline {
            h_below: h_below + rt + rb,
            h_above: h_above + rt + ra,
            er: 1.0,
            dual,
        },
        Medium::Broadside {
            h_above,
            separation,
            h_below,
            ..
        } => Medium::Broadside {
            h_above: h_above + rt + ra,
            separation: separation + 2.0 * rt,
            h_below: h_below + rt + rb,
            er: 1.0,
        },
    };
    out.t = cs.t - 2.0 * rt;
    let d = Dims {
        w: dims.w - 2.0 * rt,
        s: dims.s.map(|s| s + 2.0 * rt),
        gap: dims.gap.map(|g| g + 2.0 * rt),
    };
    (out, d)
}

fn mode_impedances(a: &Analysis) -> Vec<f64> {
    match a {
        Analysis::Single(s) => vec![s.z0],
        Analysis::Pair(p) => vec![p.z_odd, p.z_even],
    }
}

/// Which sides of the structure have planes: (above, below) in the sense of [`receded`].
fn plane_sides(m: &Medium) -> (bool, bool) {
    match m {
        Medium::Microstrip { .. } => (false, true),
        Medium::NoPlane { .. } => (false, false),
        Medium::Stripline { .. } | Medium::Broadside { .. } => (true, true),
    }
}

fn no_loss_model(reason: String) -> Error {
    Error::Invalid {
        field: "structure".into(),
        reason: format!("conductor loss not available: {reason}"),
    }
}

/// Tries of the wall step on a field engine: a step whose two sides fall on different mesh layouts is shrunk.
const STEP_TRIES: usize = 4;
/// The walls' recession for Wheeler's derivative, relative to the smallest dimension.
const WALL_STEP: f64 = 1e-5;

impl LineModel {
    /// Prepares the loss model of `structure` on `cs` with `dims` on the closed forms.
    pub fn new(
        cs: &CrossSection,
        structure: Structure,
        dims: &Dims,
        inputs: LossInputs,
    ) -> Result<LineModel> {
        LineModel::on(&Engine::ClosedForm, cs, structure, dims, inputs)
    }

    /// Prepares the loss model on `engine`: Wheeler's rule on its air impedances, and on a field engine each
    /// mode's dielectric share from the field. Fails with an error (never a panic) when the structure cannot be
    /// evaluated with receded walls.
    pub fn on(
        engine: &Engine,
        cs: &CrossSection,
        structure: Structure,
        dims: &Dims,
        inputs: LossInputs,
    ) -> Result<LineModel> {
        LineModel::on_with(engine, cs, structure, dims, inputs, None)
    }

    /// [`LineModel::on`] with the engine's own answer at these dimensions, when the caller has it (saves a solve).
    pub fn on_with(
        engine: &Engine,
        cs: &CrossSection,
        structure: Structure,
        dims: &Dims,
        inputs: LossInputs,
        nominal: Option<&Analysis>,
    ) -> Result<LineModel> {
        error::in_range(
            "conductivity",
            inputs.conductivity_s_per_m,
            1e5,
            1e10,
            "S/m",
        )?;
        error::length("width", dims.w)?;
        error::length_or_zero("thickness", cs.t)?;
        if cs.t <= 0.0 {
            return Err(Error::Invalid {
                field: "thickness".into(),
                reason: "conductor loss needs a trace of finite thickness (Wheeler's rule gives unbounded loss \
                         for a zero-thickness strip)"
                    .into(),
            });
        }
        let s = &inputs.surfaces;
        s.trace.validate("roughness")?;
        s.plane_above.validate("roughness")?;
        s.plane_below.validate("roughness")?;
        // Check the structure evaluates as given (also validates the geometry); a field engine's modes and
        // dielectric shares come from the same check.
        let field = engine.mode_fills(cs, structure, dims, nominal)?;
        let n_modes = match &field {
            Some(f) => f.len(),
            None => mode_impedances(&closed_form::evaluate(cs, structure, dims)?.analysis).len(),
        };
        let mut smallest = dims.w.min(cs.t).min(cs.scale_height());
        for v in [dims.s, dims.gap].into_iter().flatten() {
            smallest = smallest.min(v);
        }
        let z_air = |rt: f64, ra: f64, rb: f64| -> Result<(Vec<f64>, Option<usize>)> {
            let (c, d) = receded(cs, dims, rt, ra, rb);
            let (z, mesh) = engine.air_impedances(&c, structure, &d).map_err(|e| {
                no_loss_model(format!(
                    "the air-filled structure with receded walls cannot be evaluated ({e})"
                ))
            })?;
            if z.len() != n_modes || z.iter().any(|v| !v.is_finite()) {
                return Err(no_loss_model(
                    "the air-filled structure gave no finite impedance".into(),
                ));
            }
            Ok((z, mesh))
        };
        // Forward difference of Z0_air as the walls `(trace, above, below)` recede, from the air line as it is: one
        // solve per wall group. The step is small enough that the difference's truncation (step × Z''/Z', ~1e-5
        // relative) is far below the engines' accuracy and large against rounding. On a field engine both solves
        // must share one mesh layout (a panel count that jumps between them would swamp the derivative), so the
        // step shrinks until they do.
        let (z_nominal, mesh_nominal) = z_air(0.0, 0.0, 0.0)?;
        let slope = |walls: (f64, f64, f64)| -> Result<Vec<f64>> {
            let mut step = WALL_STEP * smallest;
            for _ in 0..STEP_TRIES {
                let (moved, mesh) = z_air(walls.0 * step, walls.1 * step, walls.2 * step)?;
                if mesh == mesh_nominal {
                    return Ok(moved
                        .iter()
                        .zip(&z_nominal)
                        .map(|(p, m)| (p - m) / step)
                        .collect());
                }
                step *= 0.37;
            }
            Err(no_loss_model(
                "the field mesh changed with every step of the receding walls".into(),
            ))
        };
        let trace = slope((1.0, 0.0, 0.0))?;
        let (has_above, has_below) = plane_sides(&cs.medium);
        let zeros = vec![0.0; n_modes];
        let above = if has_above {
            slope((0.0, 1.0, 0.0))?
        } else {
            zeros.clone()
        };
        let below = if has_below {
            slope((0.0, 0.0, 1.0))?
        } else {
            zeros
        };
        let mut slopes = Vec::with_capacity(n_modes);
        for i in 0..n_modes {
            let sl = Slopes {
                trace: trace[i],
                above: above[i],
                below: below[i],
            };
            let total = sl.trace + sl.above + sl.below;
            if !(total.is_finite() && total > 0.0) {
                return Err(no_loss_model(format!(
                    "receding the walls did not raise the air impedance (slope {total:.3e} Ω/m)"
                )));
            }
            slopes.push(sl);
        }
        let r_dc = 1.0 / (inputs.conductivity_s_per_m * dims.w * cs.t);
        Ok(LineModel {
            cross_section: cs.clone(),
            structure,
            dims: *dims,
            inputs,
            slopes,
            r_dc,
            field,
            engine: engine.name(),
        })
    }

    /// Each mode's (Z0, εeff, share of the energy in the dielectrics) at the dielectric's Dk `dk`.
    fn static_modes(&self, dk: f64) -> Result<Vec<(f64, f64, f64)>> {
        if let Some(fills) = &self.field {
            // The field solved the stack at its own Dk; C ∝ λ^share carries it to Dk(f) = λ·Dk (exact for a line
            // wholly in dielectric or wholly in air, first order between).
            let ratio = dk / medium_er(&self.cross_section.medium);
            return Ok(fills
                .iter()
                .map(|m| {
                    let p = m.dielectric_share;
                    (m.z0 * ratio.powf(-0.5 * p), m.eps_eff * ratio.powf(p), p)
                })
                .collect());
        }
        let cs_f = with_er(&self.cross_section, dk.max(1.0));
        let evaluated = closed_form::evaluate(&cs_f, self.structure, &self.dims)?;
        let modes: Vec<(f64, f64)> = match &evaluated.analysis {
            Analysis::Single(s) => vec![(s.z0, s.eps_eff)],
            Analysis::Pair(p) => vec![(p.z_odd, p.eps_eff_odd), (p.z_even, p.eps_eff_even)],
        };
        // The filling factor of a closed form's εeff: q = (εeff − 1)/(εr − 1), energy share q·εr/εeff.
        Ok(modes
            .into_iter()
            .map(|(z, ee)| {
                let q = if dk > 1.0 + 1e-9 {
                    ((ee - 1.0) / (dk - 1.0)).clamp(0.0, 1.0)
                } else {
                    0.0
                };
                (z, ee, q * dk / ee)
            })
            .collect())
    }

    /// What this model took from its engine, to rebuild it later with [`LineModel::from_probe`].
    pub fn probe(&self) -> LossProbe {
        LossProbe {
            slopes: self
                .slopes
                .iter()
                .map(|s| [s.trace, s.above, s.below])
                .collect(),
            fills: self.field.clone(),
            engine: self.engine.into(),
        }
    }

    /// The model [`LineModel::on`] made, from its [`LossProbe`]: no engine call. Errors (never a panic) when the
    /// probe does not fit the structure.
    pub fn from_probe(
        cs: &CrossSection,
        structure: Structure,
        dims: &Dims,
        inputs: LossInputs,
        probe: &LossProbe,
    ) -> Result<LineModel> {
        let modes = if structure.is_pair() { 2 } else { 1 };
        let fills_fit = probe.fills.as_ref().is_none_or(|f| f.len() == modes);
        if probe.slopes.len() != modes || !fills_fit {
            return Err(no_loss_model(
                "the saved loss figures do not fit the structure".into(),
            ));
        }
        error::length("width", dims.w)?;
        error::length("thickness", cs.t)?;
        let engine = match probe.engine.as_ref() {
            "field engine" => "field engine",
            "reference field solver" => "reference field solver",
            _ => "closed form",
        };
        Ok(LineModel {
            cross_section: cs.clone(),
            structure,
            dims: *dims,
            inputs,
            slopes: probe
                .slopes
                .iter()
                .map(|&[trace, above, below]| Slopes {
                    trace,
                    above,
                    below,
                })
                .collect(),
            r_dc: 1.0 / (inputs.conductivity_s_per_m * dims.w * cs.t),
            field: probe.fills.clone(),
            engine,
        })
    }

    /// DC resistance per length of one trace, Ω/m: ρ/(w·t).
    pub fn r_dc_per_m(&self) -> f64 {
        self.r_dc
    }

    /// Per-mode values at `f_hz`, plus Dk, Df and warnings.
    fn rlgc(&self, f_hz: f64) -> Result<Rlgc> {
        let mut warnings = Vec::new();
        let sigma = self.inputs.conductivity_s_per_m;
        let (dk, df) = self.inputs.dielectric.dk_df(f_hz);
        let dk = dk.max(1.0);
        let mut modes = self.static_modes(dk)?;
        if self.inputs.dispersion && self.structure == Structure::Single {
            if let Medium::Microstrip {
                h,
                cover: Cover::Air,
                ..
            } = self.cross_section.medium
            {
                // Kirschning–Jansen takes the static εeff and Z0 as inputs, so it applies to a field's too.
                let u = self.dims.w / h;
                let (_, dur) = microstrip::thickness_increments(u, self.cross_section.t / h, dk);
                let (z, ee, share) = modes[0];
                let (zf, eef) = dispersion::microstrip(u + dur, h, dk, z, ee, f_hz, &mut warnings);
                modes[0] = (zf, eef, share);
            }
        }
        let delta = skin_depth(f_hz, sigma);
        let t = self.cross_section.t;
        if t < 3.0 * delta && t > 0.5 * delta {
            warnings.push(Warning::new(
                "trace thickness comparable to the skin depth: conductor loss follows the 1-D slab transition \
                 (approximate)",
            ));
        }
        let rs = surface_resistance(f_hz, sigma);
        let s = &self.inputs.surfaces;
        let (kt, ka, kb) = (
            s.trace.factor(delta),
            s.plane_above.factor(delta),
            s.plane_below.factor(delta),
        );
        let omega = 2.0 * PI * f_hz;
        let mut out = Vec::with_capacity(modes.len());
        for (i, &(z0, ee, share)) in modes.iter().enumerate() {
            let sl = self.slopes[i];
            let smooth = sl.trace + sl.above + sl.below;
            let rough = kt * sl.trace + ka * sl.above + kb * sl.below;
            let r_skin = rs / ETA0 * smooth;
            // Trace: DC resistance times the slab function x·coth x, x = (1 + j)·t_eff/δ, with t_eff chosen so
            // the high-frequency limit is Wheeler's Rs·slope/η0 (see the module doc).
            let t_eff = (sl.trace / ETA0 * self.dims.w * t).max(1e-3 * t);
            let x = Complex64::new(1.0, 1.0) * (t_eff / delta);
            let z_trace = self.r_dc * kt * slab(x);
            // Planes: pure skin effect (their DC share is negligible, see the module doc).
            let z_planes = Complex64::new(rs, rs) / ETA0 * (ka * sl.above + kb * sl.below);
            let z_int = z_trace + z_planes;
            let (r, x_int) = (z_int.re, z_int.im.max(0.0));
            let l = z0 * ee.sqrt() / C0 + x_int / omega;
            let c = ee.sqrt() / (z0 * C0);
            // G = ωC·tanδ_eff, tanδ_eff = (energy share in the dielectric)·tanδ.
            let g = omega * c * share * df;
            out.push([r, l, g, c, r_skin, rough / smooth, ee, z0]);
        }
        Ok(Rlgc {
            modes: out,
            dk,
            df,
            warnings,
        })
    }

    fn betas(&self, f_hz: f64) -> Result<Vec<f64>> {
        let modes = self.rlgc(f_hz)?.modes;
        let w = 2.0 * PI * f_hz;
        Ok(modes
            .iter()
            .map(|m| propagation(m[0], m[1], m[2], m[3], w).1.im)
            .collect())
    }

    /// Loss and delay at `f_hz`.
    pub fn at(&self, f_hz: f64) -> Result<LossAt> {
        error::in_range("frequency", f_hz, 1.0, MAX_FREQ_HZ, "Hz")?;
        let Rlgc {
            modes,
            dk,
            df,
            warnings,
        } = self.rlgc(f_hz)?;
        let omega = 2.0 * PI * f_hz;
        let h = 1e-4 * f_hz;
        let (bp, bm) = (self.betas(f_hz + h)?, self.betas(f_hz - h)?);
        let mut out: Vec<ModeLoss> = Vec::with_capacity(modes.len());
        for (i, m) in modes.iter().enumerate() {
            let [r, l, g, c, r_skin, k, ee, z_ext] = *m;
            let (zc, gamma) = propagation(r, l, g, c, omega);
            out.push(ModeLoss {
                r_ohm_per_m: r,
                l_h_per_m: l,
                g_s_per_m: g,
                c_f_per_m: c,
                r_dc_ohm_per_m: self.r_dc,
                r_skin_ohm_per_m: r_skin,
                roughness_factor: k,
                eps_eff: ee,
                z0_re_ohm: zc.re,
                z0_im_ohm: zc.im,
                alpha_np_per_m: gamma.re,
                beta_rad_per_m: gamma.im,
                conductor: Db::from_np_per_m(r / (2.0 * z_ext)),
                dielectric: Db::from_np_per_m(g * z_ext / 2.0),
                total: Db::from_np_per_m(gamma.re),
                phase_delay_s_per_m: gamma.im / omega,
                group_delay_s_per_m: (bp[i] - bm[i]) / (2.0 * PI * 2.0 * h),
            });
        }
        let mut it = out.into_iter();
        let first = it.next();
        let second = it.next();
        let (line, odd, even) = match second {
            None => (first, None, None),
            Some(e) => (None, first, Some(e)),
        };
        Ok(LossAt {
            freq_hz: f_hz,
            skin_depth_m: skin_depth(f_hz, self.inputs.conductivity_s_per_m),
            dk,
            df,
            line,
            odd,
            even,
            warnings,
        })
    }

    /// Loss over a sweep, one [`LossAt`] per frequency.
    pub fn sweep(&self, sweep: &Sweep) -> Result<Vec<LossAt>> {
        sweep
            .frequencies()?
            .into_iter()
            .map(|f| self.at(f))
            .collect()
    }
}

/// x·coth x for the slab transition: 1 at x = 0 (DC), x for |x| → ∞ (skin effect); safe for every x.
fn slab(x: Complex64) -> Complex64 {
    if x.norm() < 1e-4 {
        1.0 + x * x / 3.0
    } else if x.re > 20.0 {
        // coth x = 1 to 1e-17 here, and tanh of a large argument would overflow inside num-complex.
        x
    } else {
        x / x.tanh()
    }
}

/// The signal mode of a sweep as columns, ready for a plot or a table.
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct LossSeries {
    pub freq_hz: Vec<f64>,
    pub conductor_db_per_m: Vec<f64>,
    pub dielectric_db_per_m: Vec<f64>,
    pub total_db_per_m: Vec<f64>,
    pub z0_re_ohm: Vec<f64>,
    pub z0_im_ohm: Vec<f64>,
    pub eps_eff: Vec<f64>,
    pub group_delay_s_per_m: Vec<f64>,
}

/// Columns of the signal mode (the line, or the odd mode of a pair) over `points`.
pub fn series(points: &[LossAt]) -> LossSeries {
    let mut s = LossSeries::default();
    for p in points {
        if let Some(m) = p.signal() {
            s.freq_hz.push(p.freq_hz);
            s.conductor_db_per_m.push(m.conductor.db_per_m);
            s.dielectric_db_per_m.push(m.dielectric.db_per_m);
            s.total_db_per_m.push(m.total.db_per_m);
            s.z0_re_ohm.push(m.z0_re_ohm);
            s.z0_im_ohm.push(m.z0_im_ohm);
            s.eps_eff.push(m.eps_eff);
            s.group_delay_s_per_m.push(m.group_delay_s_per_m);
        }
    }
    s
}

/// (Zc, γ) of an RLGC line at angular frequency `omega`, with Re γ ≥ 0 and Re Zc ≥ 0.
pub fn propagation(r: f64, l: f64, g: f64, c: f64, omega: f64) -> (Complex64, Complex64) {
    let z = Complex64::new(r, omega * l);
    let y = Complex64::new(g, omega * c);
    let mut zc = (z / y).sqrt();
    if zc.re < 0.0 {
        zc = -zc;
    }
    let mut gamma = (z * y).sqrt();
    if gamma.re < 0.0 || (gamma.re == 0.0 && gamma.im < 0.0) {
        gamma = -gamma;
    }
    (zc, gamma)
}

/// The loss inputs of a resolved cross-section under the project's loss options: the section carries the loss
/// tangent, its spec frequency and the copper surfaces the stack gives the line ([`crate::section::SectionLoss`]).
pub fn inputs_for_section(options: &LossOptions, cs: &CrossSection) -> Result<LossInputs> {
    options.validate()?;
    let dielectric = Dispersive::fit(
        options.dielectric,
        medium_er(&cs.medium),
        cs.loss.df.clamp(0.0, 1.0),
        cs.loss.spec_freq_hz.clamp(1.0, 1e12),
    )?;
    Ok(LossInputs {
        conductivity_s_per_m: options.conductivity_s_per_m,
        surfaces: cs.loss.surfaces,
        dielectric,
        dispersion: options.dispersion,
    })
}

/// The loss model of a rule whose dimensions are known (after synthesis), on the rule's engine.
pub fn for_rule(
    project: &Project,
    rule: &ImpedanceRule,
    cs: &CrossSection,
    dims: &Dims,
) -> Result<LineModel> {
    on_engine(
        project,
        &Engine::for_rule(project, rule),
        rule,
        cs,
        dims,
        None,
    )
}

/// The loss model on the engine that made figures named `method` (the closed form for a closed-form method: the
/// app's instant preview must not start field solves), with that engine's `nominal` answer.
pub fn for_method(
    project: &Project,
    method: &str,
    rule: &ImpedanceRule,
    cs: &CrossSection,
    dims: &Dims,
    nominal: Option<&Analysis>,
) -> Result<LineModel> {
    let engine = Engine::that_made(method, project).unwrap_or(Engine::ClosedForm);
    on_engine(project, &engine, rule, cs, dims, nominal)
}

fn on_engine(
    project: &Project,
    engine: &Engine,
    rule: &ImpedanceRule,
    cs: &CrossSection,
    dims: &Dims,
    nominal: Option<&Analysis>,
) -> Result<LineModel> {
    let inputs = inputs_for_section(&project.loss, cs)?;
    LineModel::on_with(engine, cs, rule.structure, dims, inputs, nominal)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::dielectric::DielectricModel;
    use crate::design::roughness::Roughness;

    fn microstrip_model(w: f64, h: f64, t: f64, er: f64, df: f64, rough: Roughness) -> LineModel {
        let cs = CrossSection {
            loss: Default::default(),
            layering: None,
            medium: Medium::Microstrip {
                h,
                er,
                cover: Cover::Air,
            },
            t,
            references: vec![],
            warnings: vec![],
        };
        let inputs = LossInputs {
            conductivity_s_per_m: COPPER_CONDUCTIVITY,
            surfaces: Surfaces {
                trace: rough,
                plane_above: rough,
                plane_below: rough,
            },
            dielectric: Dispersive::fit(DielectricModel::Constant, er, df, 1e9).unwrap(),
            dispersion: false,
        };
        let dims = Dims {
            w,
            s: None,
            gap: None,
        };
        LineModel::new(&cs, Structure::Single, &dims, inputs).unwrap()
    }

    #[test]
    fn skin_depth_of_copper_at_one_gigahertz() {
        // Common EM-handbook value (e.g. Ramo, Whinnery & Van Duzer, "Fields and Waves in Communication
        // Electronics", table of skin depths, from memory): copper at 1 GHz, δ ≈ 2.09 µm.
        let d = skin_depth(1e9, 5.8e7);
        assert!((d - 2.09e-6).abs() < 0.005e-6, "{d}");
        // Rs = 1/(σδ) identically.
        assert!((surface_resistance(1e9, 5.8e7) - 1.0 / (5.8e7 * d)).abs() < 1e-15);
    }

    #[test]
    fn dc_resistance_is_rho_over_area() {
        let m = microstrip_model(200e-6, 100e-6, 35e-6, 4.0, 0.0, Roughness::Smooth);
        // Exact: R = ρ·len/area with ρ = 1/σ, per metre.
        let exact = 1.0 / 5.8e7 / (200e-6 * 35e-6);
        assert_eq!(m.r_dc_per_m(), exact);
        // At 1 Hz the skin-effect part is negligible and R is the DC value.
        let low = m.at(1.0).unwrap();
        let r = low.line.unwrap().r_ohm_per_m;
        assert!((r - exact).abs() / exact < 1e-3, "{r} vs {exact}");
    }

    #[test]
    fn wide_microstrip_tends_to_parallel_plate_resistance() {
        // A parallel-plate line of width w has R = 2Rs/w (both plates; exact). A microstrip approaches it as
        // w/h → ∞; with Hammerstad–Jensen's Z0 the fringing makes the plane share approach from below, as 1/u.
        let f = 10e9;
        let pp = |w: f64| 2.0 * surface_resistance(f, 5.8e7) / w;
        let h = 100e-6;
        let ratio = |u: f64| {
            let m = microstrip_model(u * h, h, 35e-6, 4.0, 0.0, Roughness::Smooth);
            m.at(f).unwrap().line.unwrap().r_skin_ohm_per_m / pp(u * h)
        };
        let (r300, r1000, r3000) = (ratio(300.0), ratio(1000.0), ratio(3000.0));
        assert!((r3000 - 1.0).abs() < 0.005, "{r3000}");
        assert!(
            (1.0 - r300) > (1.0 - r1000) && (1.0 - r1000) > (1.0 - r3000),
            "{r300} {r1000} {r3000}"
        );
    }

    #[test]
    fn wide_microstrip_follows_the_exact_slab_from_dc_to_skin_effect() {
        // Exact 1-D result for a slab of thickness t carrying current on one face (the strip's underside of a
        // wide microstrip): Z = R_dc·x·coth x, x = (1 + j)·t/δ; the plane of a parallel-plate line adds Rs/w.
        // Our construction reproduces both to the fringing share (a few % at w/h = 300).
        let (w, h, t) = (30e-3, 100e-6, 35e-6);
        let m = microstrip_model(w, h, t, 4.0, 0.0, Roughness::Smooth);
        for ratio in [0.3, 1.0, 2.0, 3.0, 10.0] {
            // t/δ = ratio ⇒ f = ratio²/(π µ0 σ t²)
            let f = ratio * ratio / (PI * MU0 * 5.8e7 * t * t);
            let x = Complex64::new(1.0, 1.0) * ratio;
            let r_dc = 1.0 / (5.8e7 * w * t);
            let exact = r_dc * (x / x.tanh()).re + surface_resistance(f, 5.8e7) / w;
            let got = m.at(f).unwrap().line.unwrap().r_ohm_per_m;
            assert!(
                (got / exact - 1.0).abs() < 0.03,
                "t/δ = {ratio}: {got} vs {exact}"
            );
        }
        // The slab function itself: exact limits and no overflow.
        assert!((slab(Complex64::new(0.0, 0.0)) - 1.0).norm() < 1e-15);
        assert!(slab(Complex64::new(1e6, 1e6)).re == 1e6);
        assert!(slab(Complex64::new(19.9, 19.9)).re.is_finite());
    }

    #[test]
    fn skin_resistance_grows_as_root_f_and_roughness_adds() {
        let smooth = microstrip_model(300e-6, 170e-6, 35e-6, 4.2, 0.0, Roughness::Smooth);
        let r1 = smooth.at(1e9).unwrap().line.unwrap().r_skin_ohm_per_m;
        let r4 = smooth.at(4e9).unwrap().line.unwrap().r_skin_ohm_per_m;
        assert!((r4 / r1 - 2.0).abs() < 1e-9);
        let rough = microstrip_model(
            300e-6,
            170e-6,
            35e-6,
            4.2,
            0.0,
            Roughness::HammerstadGroiss { rms_m: 1e-6 },
        );
        let k = rough.at(10e9).unwrap().line.unwrap().roughness_factor;
        let expect = Roughness::HammerstadGroiss { rms_m: 1e-6 }.factor(skin_depth(10e9, 5.8e7));
        assert!((k - expect).abs() < 1e-12);
    }

    #[test]
    fn each_surface_carries_its_own_roughness() {
        // Rough trace on smooth planes: the effective factor lies strictly between 1 and the trace's own K, and
        // the shares add up (Wheeler's derivative is linear in the wall recessions).
        let rough = Roughness::HammerstadGroiss { rms_m: 1.5e-6 };
        let base = microstrip_model(300e-6, 170e-6, 35e-6, 4.2, 0.0, Roughness::Smooth);
        let mut inputs = base.inputs;
        inputs.surfaces.trace = rough;
        let m = LineModel::new(&base.cross_section, base.structure, &base.dims, inputs).unwrap();
        let f = 20e9;
        let k_trace = rough.factor(skin_depth(f, 5.8e7));
        let k = m.at(f).unwrap().line.unwrap().roughness_factor;
        assert!(k > 1.05 && k < k_trace - 0.05, "{k} vs {k_trace}");
        let sl = m.slopes[0];
        let expect = (k_trace * sl.trace + sl.above + sl.below) / (sl.trace + sl.above + sl.below);
        assert!((k - expect).abs() < 1e-12);
    }

    #[test]
    fn dielectric_loss_follows_the_filling_factor_formula() {
        // The filling-factor formula (Pozar, "Microwave Engineering", microstrip dielectric attenuation, from
        // memory) evaluated by hand from the line's εeff.
        let m = microstrip_model(300e-6, 170e-6, 35e-6, 4.2, 0.02, Roughness::Smooth);
        let at = m.at(5e9).unwrap();
        let line = at.line.unwrap();
        let (er, ee) = (4.2, line.eps_eff);
        let expect =
            PI * 5e9 / C0 * er * (ee - 1.0) / (ee.sqrt() * (er - 1.0)) * 0.02 * DB_PER_NEPER;
        assert!(
            (line.dielectric.db_per_m - expect).abs() / expect < 1e-9,
            "{} vs {expect}",
            line.dielectric.db_per_m
        );
    }

    #[test]
    fn loss_options_and_roughness_round_trip_through_project_json() {
        let mut p = crate::design::demo::project();
        p.loss.dielectric = DielectricModel::Constant;
        p.loss.conductivity_s_per_m = 4.1e7;
        for layer in &mut p.stackup.layers {
            if let crate::design::stackup::Layer::Copper(c) = layer {
                c.roughness = Some(crate::design::roughness::Foil::LowProfile.huray());
            }
        }
        let text = p.to_json();
        assert!(
            text.contains("\"huray\"") && text.contains("\"constant\""),
            "{text}"
        );
        assert_eq!(Project::from_json(&text).unwrap(), p);
        // The default options are not written, so files without loss settings stay as they were.
        assert!(!crate::design::demo::project()
            .to_json()
            .contains("\"loss\""));
        p.loss.conductivity_s_per_m = -1.0;
        let e = Project::from_json(&p.to_json()).unwrap_err().to_string();
        assert!(e.starts_with("loss.conductivity"), "{e}");
    }

    #[test]
    fn df_of_layers_in_series_is_energy_weighted() {
        // Two dielectrics between trace and plane: D is common, energy ∝ h/ε, so
        // tanδ = Σ(h·tanδ/ε)/Σ(h/ε) (exact for series capacitors with small loss).
        use crate::design::stackup::{Copper, CopperRole, Dielectric, Layer};
        let copper = |name: &str, role| {
            Layer::Copper(Copper {
                name: name.into(),
                thickness_m: 35e-6,
                role,
                fill_pct: Some(100.0),
                roughness: None,
            })
        };
        let diel = |name: &str, h: f64, dk: f64, df: f64| Dielectric {
            name: name.into(),
            material: String::new(),
            thickness_m: h,
            dk,
            df,
            spec_freq_hz: 1e9,
            construction: None,
        };
        let mut p = crate::design::demo::project();
        p.stackup.layers = vec![
            copper("T", CopperRole::Signal),
            Layer::Core(diel("A", 100e-6, 3.0, 0.002)),
            Layer::Core(diel("B", 200e-6, 4.0, 0.02)),
            copper("G", CopperRole::Plane),
        ];
        let mut rule = p.rules[0].clone();
        rule.layer = "T".into();
        rule.structure = Structure::Single;
        rule.solve = crate::design::project::Solve::Nothing;
        let cs = crate::section::resolve(&p.stackup, &rule).unwrap();
        let (df, spec) = crate::section::rule_dielectric(&p.stackup, &rule, &cs);
        let expect = (100e-6 / 3.0 * 0.002 + 200e-6 / 4.0 * 0.02) / (100e-6 / 3.0 + 200e-6 / 4.0);
        assert!((df - expect).abs() < 1e-15, "{df} vs {expect}");
        assert!((spec - 1e9).abs() < 1e-3);
        // With no plane the thicker side to the board edge is the substrate, including the outermost layer.
        p.stackup.layers[3] = copper("G", CopperRole::Signal);
        p.stackup
            .layers
            .insert(0, Layer::SolderMask(diel("M", 20e-6, 3.5, 0.03)));
        let expect = (20e-6 / 3.5 * 0.03 + 100e-6 / 3.0 * 0.002 + 200e-6 / 4.0 * 0.02)
            / (20e-6 / 3.5 + 100e-6 / 3.0 + 200e-6 / 4.0);
        rule.structure = Structure::Coplanar;
        let cs = CrossSection {
            loss: Default::default(),
            layering: None,
            medium: Medium::NoPlane { h: 335e-6, er: 3.6 },
            t: 35e-6,
            references: vec![],
            warnings: vec![],
        };
        rule.layer = "G".into();
        let (df_up, _) = crate::section::rule_dielectric(&p.stackup, &rule, &cs);
        assert!((df_up - expect).abs() < 1e-15, "{df_up}");
    }

    #[test]
    fn units_of_loss() {
        let d = Db::from_np_per_m(1.0);
        assert!((d.db_per_m - 8.685_889_638).abs() < 1e-8);
        assert!((d.db_per_in - d.db_per_m * 0.0254).abs() < 1e-15);
        assert!((d.db_per_cm * 100.0 - d.db_per_m).abs() < 1e-12);
    }

    #[test]
    fn lossless_limit_gives_real_z0() {
        let (zc, g) = propagation(0.0, 250e-9, 0.0, 100e-12, 2.0 * PI * 1e9);
        assert!((zc.re - 50.0).abs() < 1e-9 && zc.im.abs() < 1e-9);
        assert!(g.re.abs() < 1e-12 && g.im > 0.0);
    }

    #[test]
    fn zero_thickness_is_an_error_not_a_panic() {
        let cs = CrossSection {
            loss: Default::default(),
            layering: None,
            medium: Medium::Microstrip {
                h: 1e-4,
                er: 4.0,
                cover: Cover::Air,
            },
            t: 0.0,
            references: vec![],
            warnings: vec![],
        };
        let inputs = LossInputs {
            conductivity_s_per_m: COPPER_CONDUCTIVITY,
            surfaces: Surfaces::default(),
            dielectric: Dispersive::fit(DielectricModel::Constant, 4.0, 0.01, 1e9).unwrap(),
            dispersion: true,
        };
        let dims = Dims {
            w: 1e-4,
            s: None,
            gap: None,
        };
        let e = LineModel::new(&cs, Structure::Single, &dims, inputs).unwrap_err();
        assert!(e.to_string().starts_with("thickness"), "{e}");
        // A structure the models do not know is an error too.
        let mut cs2 = cs.clone();
        cs2.t = 35e-6;
        let e = LineModel::new(&cs2, Structure::BroadsidePair, &dims, inputs).unwrap_err();
        assert!(e.to_string().contains("structure"), "{e}");
    }

    #[test]
    fn sweep_series_rise_with_frequency() {
        let m = microstrip_model(300e-6, 170e-6, 35e-6, 4.2, 0.02, Roughness::Smooth);
        let pts = m.sweep(&Sweep::default()).unwrap();
        let s = series(&pts);
        assert_eq!(s.freq_hz.len(), 50);
        // Conductor loss grows as √f or faster, dielectric loss as f: both strictly increase.
        assert!(s.conductor_db_per_m.windows(2).all(|w| w[1] > w[0]));
        assert!(s.dielectric_db_per_m.windows(2).all(|w| w[1] > w[0]));
        let ratio = s.dielectric_db_per_m[49] / s.dielectric_db_per_m[0];
        assert!((ratio / (40e9 / 10e6) - 1.0).abs() < 0.01, "{ratio}");
    }

    #[test]
    fn sweep_is_log_spaced_and_capped() {
        let f = Sweep::default().frequencies().unwrap();
        assert_eq!(f.len(), 50);
        assert_eq!(f[0], 10e6);
        assert_eq!(*f.last().unwrap(), 40e9);
        let r = f[1] / f[0];
        assert!((f[30] / f[29] - r).abs() < 1e-9);
        let e = Sweep {
            points: 1_000_000,
            ..Sweep::default()
        }
        .frequencies()
        .unwrap_err();
        assert!(e.to_string().starts_with("points"), "{e}");
        let e = Sweep {
            from_hz: 1e9,
            to_hz: 1e6,
            points: 5,
        }
        .frequencies()
        .unwrap_err();
        assert!(e.to_string().starts_with("to"), "{e}");
    }

    #[test]
    fn delays_follow_the_per_length_model() {
        let m = microstrip_model(300e-6, 170e-6, 35e-6, 4.2, 0.0, Roughness::Smooth);
        let l = m.at(10e9).unwrap().line.unwrap();
        // Low loss: β ≈ ω√(LC) (exact to second order in R/ωL).
        let lc = (l.l_h_per_m * l.c_f_per_m).sqrt();
        assert!((l.phase_delay_s_per_m - lc).abs() / lc < 1e-5);
        // The skin-effect internal inductance falls as 1/√f, so group delay is a little below phase delay,
        // and both exceed the external-only √εeff/c by that inductance's share.
        let ext = l.eps_eff.sqrt() / C0;
        assert!(l.group_delay_s_per_m < l.phase_delay_s_per_m);
        assert!(l.group_delay_s_per_m > ext && l.phase_delay_s_per_m < 1.01 * ext);
    }

    fn field_engine() -> Engine {
        Engine::Field {
            options: crate::field::boundary::BemOptions::default(),
            etch_factor: None,
        }
    }

    fn inputs(er: f64, df: f64) -> LossInputs {
        LossInputs {
            conductivity_s_per_m: COPPER_CONDUCTIVITY,
            surfaces: Surfaces::default(),
            dielectric: Dispersive::fit(DielectricModel::Constant, er, df, 1e9).unwrap(),
            dispersion: false,
        }
    }

    /// Cohn 1954, exact for a zero-thickness strip centred between planes b apart: Z = η0/4·K(k′)/K(k),
    /// k = sech(πw/2b), in air.
    fn cohn_1954_air(w: f64, b: f64) -> f64 {
        let x = PI * w / (2.0 * b);
        ETA0 / 4.0 * crate::base::elliptic::ratio(1.0 / x.cosh(), x.tanh())
    }

    #[test]
    fn field_plane_slopes_match_the_exact_stripline_derivative() {
        // Wheeler's plane share needs ∂Z0_air/∂n as both planes recede (b → b + 2n). For a zero-thickness strip
        // Cohn's 1954 result is exact, so its derivative is too; the field engine's slope on receding planes (a
        // central difference on one mesh layout) must match it as closely as the engine matches Z itself.
        let (b, w) = (300e-6, 150e-6);
        let cs = CrossSection::centred_stripline(b, 0.0, 1.0);
        let d = Dims {
            w,
            s: None,
            gap: None,
        };
        let n = 1e-4 * w;
        let engine = field_engine();
        let z = |ra: f64, rb: f64| {
            let (c, dd) = receded(&cs, &d, 0.0, ra, rb);
            engine.air_impedances(&c, Structure::Single, &dd).unwrap()
        };
        let (plus, m_plus) = z(n, n);
        let (minus, m_minus) = z(-n, -n);
        assert_eq!(m_plus, m_minus, "both sides on one mesh layout");
        let got = (plus[0] - minus[0]) / (2.0 * n);
        let db = 1e-6 * b;
        // Each plane recedes by n, so b grows by 2n: ∂Z/∂n = 2·∂Z/∂b.
        let exact = 2.0 * (cohn_1954_air(w, b + db) - cohn_1954_air(w, b - db)) / (2.0 * db);
        let err = (got / exact - 1.0).abs();
        assert!(
            err < 2e-3,
            "slope {got} vs exact {exact}: {:.3} %",
            err * 100.0
        );
    }

    #[test]
    fn field_dielectric_loss_of_a_filled_line_is_exact() {
        // A line wholly in one dielectric stores all its electric energy there: α_d = π f √εr tanδ / c exactly,
        // whatever the geometry (any EM text; e.g. Pozar, "Microwave Engineering", 4th ed., §2.7, from memory).
        let (er, df, f) = (4.1, 0.012, 5e9);
        let cs = CrossSection::centred_stripline(400e-6, 35e-6, er);
        let d = Dims {
            w: 150e-6,
            s: None,
            gap: None,
        };
        let m = LineModel::on(&field_engine(), &cs, Structure::Single, &d, inputs(er, df)).unwrap();
        assert_eq!(m.engine, "field engine");
        let l = m.at(f).unwrap().line.unwrap();
        let exact = PI * f * er.sqrt() * df / C0 * DB_PER_NEPER;
        assert!(
            (l.dielectric.db_per_m / exact - 1.0).abs() < 1e-4,
            "{} vs {exact}",
            l.dielectric.db_per_m
        );
        assert!((l.eps_eff / er - 1.0).abs() < 1e-3, "{}", l.eps_eff);
    }

    #[test]
    fn field_loss_of_a_microstrip_follows_the_closed_form_within_its_band() {
        // Hammerstad–Jensen's Z0_air is within about 1 % of a field solve here, so Wheeler's rule on it is within a
        // few per cent of the rule on the field (the scikit-fem check in tests/python/test_loss.py holds the field
        // slope to the independent solve). The dielectric share of the field equals the closed form's filling
        // factor q·εr/εeff within a few per cent (the formula takes εeff linear in εr; the field does not).
        for w in [100e-6, 300e-6, 800e-6] {
            let closed = microstrip_model(w, 170e-6, 35e-6, 4.2, 0.02, Roughness::Smooth);
            let field = LineModel::on(
                &field_engine(),
                &closed.cross_section,
                Structure::Single,
                &closed.dims,
                closed.inputs,
            )
            .unwrap();
            let (a, b) = (
                closed.at(5e9).unwrap().line.unwrap(),
                field.at(5e9).unwrap().line.unwrap(),
            );
            let r = b.r_skin_ohm_per_m / a.r_skin_ohm_per_m - 1.0;
            let d = b.dielectric.db_per_m / a.dielectric.db_per_m - 1.0;
            assert!(
                r.abs() < 0.04,
                "w {w}: skin R differs by {:.2} %",
                r * 100.0
            );
            assert!(
                d.abs() < 0.03,
                "w {w}: dielectric loss differs by {:.2} %",
                d * 100.0
            );
            // Both models give a physical line: 1 < εeff < εr, every loss positive.
            assert!(b.eps_eff > 1.0 && b.eps_eff < 4.2);
            assert!(b.conductor.db_per_m > 0.0 && b.dielectric.db_per_m > 0.0);
        }
    }

    #[test]
    fn field_loss_of_a_pair_gives_both_modes() {
        // An edge-coupled microstrip pair under mask: the odd mode, with its lower impedance and its currents crowded
        // onto the facing edges, attenuates more; both modes lose less to the dielectric than a filled line would.
        let cs = CrossSection {
            loss: Default::default(),
            layering: None,
            medium: Medium::Microstrip {
                h: 100e-6,
                er: 4.0,
                cover: Cover::Mask {
                    thickness_m: 20e-6,
                    er: 3.5,
                },
            },
            t: 35e-6,
            references: vec![],
            warnings: vec![],
        };
        let d = Dims {
            w: 120e-6,
            s: Some(100e-6),
            gap: None,
        };
        let m = LineModel::on(
            &field_engine(),
            &cs,
            Structure::EdgePair,
            &d,
            inputs(4.0, 0.02),
        )
        .unwrap();
        let at = m.at(10e9).unwrap();
        let (odd, even) = (at.odd.unwrap(), at.even.unwrap());
        assert!(odd.conductor.db_per_m > even.conductor.db_per_m);
        // Kirschning–Jansen's pair with the mask correction is within a few per cent of the field here, so Wheeler's
        // rule on it (the closed-form loss) is close too.
        let cf = LineModel::new(&cs, Structure::EdgePair, &d, inputs(4.0, 0.02))
            .unwrap()
            .at(10e9)
            .unwrap();
        for (f, c) in [(odd, cf.odd.unwrap()), (even, cf.even.unwrap())] {
            let r = f.r_skin_ohm_per_m / c.r_skin_ohm_per_m - 1.0;
            assert!(
                r.abs() < 0.05,
                "skin R differs from the closed form by {:.2} %",
                r * 100.0
            );
        }
        let filled = PI * 10e9 * 4f64.sqrt() * 0.02 / C0 * DB_PER_NEPER;
        for mode in [odd, even] {
            assert!(mode.dielectric.db_per_m > 0.0 && mode.dielectric.db_per_m < filled);
        }
    }
}
