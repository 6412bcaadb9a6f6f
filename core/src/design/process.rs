//! Process variation inputs: how far the fabricator's etch, laminate thickness, Dk, copper and solder mask may stray
//! from nominal, each as symmetric ± limits with a distribution. Project-wide defaults plus per-layer overrides.
//!
//! The defaults are what fabricators commonly quote for a standard-class multilayer (common practice, no source);
//! every project may replace them.

use crate::base::error::{self, Error, Result};
use crate::design::stackup::{Layer, Stackup};
use serde::{Deserialize, Serialize};

/// How a varied quantity is spread between its limits.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum Distribution {
    /// Gaussian with the ± limits at ±3σ (the usual reading of a fabricator's limits: common practice, no source).
    /// About 0.27 % of samples fall outside the limits.
    #[default]
    Normal,
    /// Every value between the limits equally likely; nothing outside (σ = limit/√3).
    Uniform,
}

/// A symmetric ± limit on one quantity: either absolute (SI units: metres for lengths, plain numbers for Dk and
/// etch factor) or a percentage of the nominal value, never both.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Tolerance {
    /// ± limit in SI units.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub abs: Option<f64>,
    /// ± limit in % of nominal.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pct: Option<f64>,
    #[serde(default)]
    pub distribution: Distribution,
}

impl Tolerance {
    /// An absolute ± limit, normally distributed (limit = 3σ).
    pub const fn abs(limit: f64) -> Self {
        Tolerance {
            abs: Some(limit),
            pct: None,
            distribution: Distribution::Normal,
        }
    }
    /// A ± limit in % of nominal, normally distributed (limit = 3σ).
    pub const fn pct(limit_pct: f64) -> Self {
        Tolerance {
            abs: None,
            pct: Some(limit_pct),
            distribution: Distribution::Normal,
        }
    }
    /// The same limit with another distribution.
    pub const fn with(self, distribution: Distribution) -> Self {
        Tolerance {
            distribution,
            ..self
        }
    }
    /// The ± limit for a quantity whose nominal value is `nominal`, in its SI unit.
    pub fn limit(&self, nominal: f64) -> f64 {
        match (self.abs, self.pct) {
            (Some(a), _) => a,
            (None, Some(p)) => p / 100.0 * nominal.abs(),
            (None, None) => 0.0,
        }
    }

    /// Checks the limit: finite, not negative, exactly one of `abs`/`pct`, `pct` at most 50 %, `abs` at most
    /// `max_abs` (in `unit`).
    pub fn validate(&self, field: &str, max_abs: f64, unit: &'static str) -> Result<()> {
        match (self.abs, self.pct) {
            (Some(_), Some(_)) => Err(Error::Invalid {
                field: field.to_string(),
                reason: "give either abs or pct, not both".into(),
            }),
            (None, None) => Err(Error::Invalid {
                field: field.to_string(),
                reason: "give a limit as abs (SI units) or pct (% of nominal)".into(),
            }),
            (Some(a), None) => {
                error::in_range(&format!("{field}.abs"), a, 0.0, max_abs, unit).map(|_| ())
            }
            (None, Some(p)) => {
                error::in_range(&format!("{field}.pct"), p, 0.0, 50.0, "%").map(|_| ())
            }
        }
    }
}

/// Overrides for one named layer (thickness for any layer; Dk for dielectrics and solder mask).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LayerProcess {
    /// The layer's name in the stack.
    pub layer: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub thickness: Option<Tolerance>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dk: Option<Tolerance>,
}

/// Process variation of the whole board.
///
/// `etch_width` is the whole trace width's ± (both edges together). `etch_factor` varies the trapezoid of the
/// trace and is used only when the project's `fab.etch_factor` is set. `dk` applies to cores and prepregs; solder
/// mask Dk is held at nominal unless a layer override gives one.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Process {
    #[serde(default = "d_etch")]
    pub etch_width: Tolerance,
    #[serde(default = "d_etch_factor")]
    pub etch_factor: Tolerance,
    #[serde(default = "d_dielectric")]
    pub core_thickness: Tolerance,
    #[serde(default = "d_dielectric")]
    pub prepreg_thickness: Tolerance,
    #[serde(default = "d_dk")]
    pub dk: Tolerance,
    #[serde(default = "d_copper")]
    pub copper_thickness: Tolerance,
    #[serde(default = "d_mask")]
    pub mask_thickness: Tolerance,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub layers: Vec<LayerProcess>,
}

/// ±12.5 µm (±0.5 mil) on the etched width (common practice, no source).
pub const DEFAULT_ETCH_WIDTH: Tolerance = Tolerance::abs(12.5e-6);
/// ±0.5 on the etch factor (common practice, no source; typical factors are 2–4).
pub const DEFAULT_ETCH_FACTOR: Tolerance = Tolerance::abs(0.5);
/// ±10 % on core and pressed prepreg thickness (common practice, no source).
pub const DEFAULT_DIELECTRIC: Tolerance = Tolerance::pct(10.0);
/// ±0.2 on Dk of FR-4-class laminates (common practice, no source).
pub const DEFAULT_DK: Tolerance = Tolerance::abs(0.2);
/// ±10 % on finished copper thickness (common practice, no source; plated outer layers vary more).
pub const DEFAULT_COPPER: Tolerance = Tolerance::pct(10.0);
/// ±10 µm on liquid photo-imageable mask thickness over a trace (common practice, no source).
pub const DEFAULT_MASK: Tolerance = Tolerance::abs(10e-6);

fn d_etch() -> Tolerance {
    DEFAULT_ETCH_WIDTH
}
fn d_etch_factor() -> Tolerance {
    DEFAULT_ETCH_FACTOR
}
fn d_dielectric() -> Tolerance {
    DEFAULT_DIELECTRIC
}
fn d_dk() -> Tolerance {
    DEFAULT_DK
}
fn d_copper() -> Tolerance {
    DEFAULT_COPPER
}
fn d_mask() -> Tolerance {
    DEFAULT_MASK
}

impl Default for Process {
    fn default() -> Self {
        Process {
            etch_width: DEFAULT_ETCH_WIDTH,
            etch_factor: DEFAULT_ETCH_FACTOR,
            core_thickness: DEFAULT_DIELECTRIC,
            prepreg_thickness: DEFAULT_DIELECTRIC,
            dk: DEFAULT_DK,
            copper_thickness: DEFAULT_COPPER,
            mask_thickness: DEFAULT_MASK,
            layers: Vec::new(),
        }
    }
}

/// The largest absolute length limit accepted, m (1 mm: more is surely a unit slip).
const MAX_ABS_LENGTH_M: f64 = 1e-3;

impl Process {
    /// Checks every limit and that each override names a layer of `stackup`; errors name the field
    /// (`process.etch_width.abs`, `process.layers[2].dk`).
    pub fn validate(&self, stackup: &Stackup) -> Result<()> {
        let m = MAX_ABS_LENGTH_M;
        self.etch_width.validate("process.etch_width", m, "m")?;
        self.etch_factor.validate("process.etch_factor", 50.0, "")?;
        self.core_thickness
            .validate("process.core_thickness", m, "m")?;
        self.prepreg_thickness
            .validate("process.prepreg_thickness", m, "m")?;
        self.dk.validate("process.dk", 5.0, "")?;
        self.copper_thickness
            .validate("process.copper_thickness", m, "m")?;
        self.mask_thickness
            .validate("process.mask_thickness", m, "m")?;
        if self.layers.len() > crate::design::stackup::MAX_LAYERS {
            return Err(Error::Invalid {
                field: "process.layers".into(),
                reason: "more overrides than layers allowed".into(),
            });
        }
        for (i, o) in self.layers.iter().enumerate() {
            let at = format!("process.layers[{i}]");
            let Some(idx) = stackup.find(&o.layer) else {
                return Err(Error::Invalid {
                    field: format!("{at}.layer"),
                    reason: format!("no layer named {:?}", o.layer),
                });
            };
            if self.layers[..i].iter().any(|p| p.layer == o.layer) {
                return Err(Error::Invalid {
                    field: format!("{at}.layer"),
                    reason: format!("{:?} is overridden twice", o.layer),
                });
            }
            if let Some(t) = &o.thickness {
                t.validate(&format!("{at}.thickness"), m, "m")?;
            }
            if let Some(dk) = &o.dk {
                if matches!(stackup.layers[idx], Layer::Copper(_)) {
                    return Err(Error::Invalid {
                        field: format!("{at}.dk"),
                        reason: format!("{:?} is copper and has no Dk", o.layer),
                    });
                }
                dk.validate(&format!("{at}.dk"), 5.0, "")?;
            }
        }
        Ok(())
    }

    fn layer_override(&self, name: &str) -> Option<&LayerProcess> {
        self.layers.iter().find(|o| o.layer == name)
    }

    /// The thickness tolerance of layer `idx` and the field that set it.
    pub fn thickness_of(&self, stackup: &Stackup, idx: usize) -> (Tolerance, String) {
        let layer = &stackup.layers[idx];
        if let Some(pos) = self.layers.iter().position(|o| o.layer == layer.name()) {
            if let Some(t) = self.layers[pos].thickness {
                return (t, format!("process.layers[{pos}].thickness"));
            }
        }
        match layer {
            Layer::Copper(_) => (self.copper_thickness, "process.copper_thickness".into()),
            Layer::Core(_) => (self.core_thickness, "process.core_thickness".into()),
            Layer::Prepreg(_) => (self.prepreg_thickness, "process.prepreg_thickness".into()),
            Layer::SolderMask(_) => (self.mask_thickness, "process.mask_thickness".into()),
        }
    }

    /// The Dk tolerance of layer `idx` (none for copper, none for mask unless overridden) and its field.
    pub fn dk_of(&self, stackup: &Stackup, idx: usize) -> Option<(Tolerance, String)> {
        let layer = &stackup.layers[idx];
        if let Some(dk) = self.layer_override(layer.name()).and_then(|o| o.dk) {
            let pos = self
                .layers
                .iter()
                .position(|o| o.layer == layer.name())
                .unwrap_or(0);
            return Some((dk, format!("process.layers[{pos}].dk")));
        }
        match layer {
            Layer::Core(_) | Layer::Prepreg(_) => Some((self.dk, "process.dk".into())),
            Layer::Copper(_) | Layer::SolderMask(_) => None,
        }
    }
}
