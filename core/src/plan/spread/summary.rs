//! What a tolerance spread reports (its parameters, sensitivities, corners, Monte Carlo figures and the
//! tolerance-centred dimension) and the options that shape a run. Plain data, so a rule's result can carry it.

use crate::base::validity::Warning;
use crate::design::process::Distribution;
use serde::{Deserialize, Serialize};
use std::borrow::Cow;

/// Monte Carlo samples when none are asked for.
pub const DEFAULT_SAMPLES: usize = 10_000;
/// The most samples one run may take (a cap for untrusted input).
pub const MAX_SAMPLES: usize = 200_000;
/// The fewest samples that give meaningful percentiles.
pub const MIN_SAMPLES: usize = 100;
/// The seed used when none is given.
pub const DEFAULT_SEED: u64 = 1;
/// Histogram bins over the sampled range.
pub const HISTOGRAM_BINS: usize = 32;
/// Up to this many varied parameters every corner (2^n) is evaluated.
pub const MAX_FULL_CORNERS: usize = 8;
/// Up to this many varied parameters the second-order cross terms (Dk series combination, response surface) are
/// fitted; beyond it only the diagonal terms, so that an absurd stack cannot make setup quadratic in cost.
pub const MAX_CROSS_PARAMS: usize = 24;

/// What a parameter varies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(tag = "kind", content = "layer_index", rename_all = "snake_case")]
pub enum Varied {
    /// The etched trace width (both edges); pair spacing and coplanar gap shrink by the same amount.
    EtchWidth,
    /// The etch factor, acting on the equivalent rectangular width w − t/EF (mean of the trapezoid's faces).
    EtchFactor,
    /// Thickness of the layer with this index.
    Thickness(usize),
    /// Dk of the layer with this index.
    Dk(usize),
}

/// One varied process parameter of a rule.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Parameter {
    /// Plain name, e.g. "thickness of PP1 (prepreg)".
    pub name: String,
    pub varies: Varied,
    /// "m" for lengths, "" for Dk and etch factor.
    pub unit: Cow<'static, str>,
    pub nominal: f64,
    /// The ± limit, in `unit`.
    pub limit: f64,
    pub distribution: Distribution,
}

impl Parameter {
    /// Standard deviation: limit/3 for normal (limits at ±3σ), limit/√3 for uniform.
    pub fn sigma(&self) -> f64 {
        match self.distribution {
            Distribution::Normal => self.limit / 3.0,
            Distribution::Uniform => self.limit / 3f64.sqrt(),
        }
    }
}

/// ∂Z/∂p of one parameter at the nominal design.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Sensitivity {
    pub parameter: String,
    pub unit: Cow<'static, str>,
    /// ∂Z/∂p, Ω per `unit` (Ω/m for lengths).
    pub dz_dp: f64,
    /// ∂²Z/∂p², Ω per `unit`².
    pub d2z_dp2: f64,
    /// ∂Z/∂p × limit: how far this parameter alone moves Z at its limit, Ω (signed).
    pub impact_ohm: f64,
}

/// The extremes over the corners of the tolerance box.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Corners {
    /// Which corners: "all 2^n combinations" or "two corners from the sensitivity signs".
    pub method: Cow<'static, str>,
    pub evaluated: usize,
    pub failed: usize,
    pub min_ohm: f64,
    pub max_ohm: f64,
    /// Both extremes inside the rule's window (and no corner failed).
    pub all_inside: bool,
}

/// Percentiles of the sampled impedance, Ω.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Percentiles {
    pub p1: f64,
    pub p5: f64,
    pub p50: f64,
    pub p95: f64,
    pub p99: f64,
}

/// Equal-width bins from `lo_ohm` to `hi_ohm`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Histogram {
    pub lo_ohm: f64,
    pub hi_ohm: f64,
    pub counts: Vec<u32>,
}

/// Monte Carlo statistics of the controlled impedance.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MonteCarlo {
    pub samples: usize,
    /// Samples the model refused (e.g. a dimension driven below zero); counted as outside the window.
    pub failed: usize,
    pub mean_ohm: f64,
    pub sigma_ohm: f64,
    pub min_ohm: f64,
    pub max_ohm: f64,
    pub percentiles: Percentiles,
    pub histogram: Histogram,
    /// Share of all samples inside the window, %.
    pub yield_pct: f64,
    /// Process capability index; `None` when σ = 0.
    pub cpk: Option<f64>,
}

/// The tolerance-centred free dimension and what it gains.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Centred {
    /// "width" or "spacing".
    pub dimension: Cow<'static, str>,
    pub nominal_m: f64,
    pub centred_m: f64,
    pub nominal_yield_pct: f64,
    pub centred_yield_pct: f64,
    /// The nominal (unperturbed) impedance at the centred dimension, Ω.
    pub centred_nominal_ohm: f64,
    pub centred_mean_ohm: f64,
}

/// Everything the spread computes for one rule.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SpreadSummary {
    pub seed: u64,
    /// What the corners and samples called.
    pub model: SampleModel,
    /// The engine whose response was sampled, in words (see [`super::FieldCorrection`]).
    pub response: String,
    pub target_ohm: f64,
    pub lower_ohm: f64,
    pub upper_ohm: f64,
    pub nominal_ohm: f64,
    pub parameters: Vec<Parameter>,
    /// Largest |impact| first.
    pub sensitivities: Vec<Sensitivity>,
    /// First-order propagated σ, Ω (GUM §5.1.2).
    pub linear_sigma_ohm: f64,
    /// Z0 + ½Σ ∂²Z/∂p²·σ², Ω.
    pub second_order_mean_ohm: f64,
    pub corners: Corners,
    pub monte_carlo: MonteCarlo,
    pub centred: Option<Centred>,
    pub warnings: Vec<Warning>,
}

/// What the corners and the Monte Carlo samples call.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum SampleModel {
    /// The impedance model itself on every sample (the reference; about 1.5 µs per closed-form call natively).
    #[default]
    Direct,
    /// A quadratic response surface of the impedance model, fitted once per rule from 1 + 2n + 2n(n−1) model
    /// calls at the ± limits (exact on the axes and at the pairwise corners); then tens of nanoseconds a sample.
    /// This is the mode for recomputing on every keystroke.
    Quadratic,
}

/// Options of one spread run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpreadOptions {
    pub samples: usize,
    pub seed: u64,
    /// Also find the tolerance-centred dimension (one more Monte Carlo run).
    pub centre: bool,
    pub model: SampleModel,
}

impl Default for SpreadOptions {
    fn default() -> Self {
        SpreadOptions {
            samples: DEFAULT_SAMPLES,
            seed: DEFAULT_SEED,
            centre: true,
            model: SampleModel::Direct,
        }
    }
}
