//! Project-level loss settings the user saves with a design: copper conductivity, the dielectric's frequency model
//! and whether microstrip dispersion applies. The models that use them live in `line`.

use crate::base::error::{self, Result};
use crate::design::dielectric::DielectricModel;
use serde::{Deserialize, Serialize};

/// Conductivity of annealed copper, S/m (IACS 100 % ≈ 5.80e7 S/m; common practice).
pub const COPPER_CONDUCTIVITY: f64 = 5.8e7;
/// Project-level loss options (all have defaults, so older project files stay valid).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LossOptions {
    /// Conductivity of every copper layer, S/m.
    #[serde(default = "copper")]
    pub conductivity_s_per_m: f64,
    /// Frequency behaviour of Dk and Df.
    #[serde(default)]
    pub dielectric: DielectricModel,
    /// Apply microstrip dispersion (Kirschning–Jansen) where the structure has it.
    #[serde(default = "yes")]
    pub dispersion: bool,
}

fn copper() -> f64 {
    COPPER_CONDUCTIVITY
}
fn yes() -> bool {
    true
}

impl Default for LossOptions {
    fn default() -> Self {
        LossOptions {
            conductivity_s_per_m: COPPER_CONDUCTIVITY,
            dielectric: DielectricModel::Wideband,
            dispersion: true,
        }
    }
}

impl LossOptions {
    pub fn is_default(&self) -> bool {
        *self == LossOptions::default()
    }
    pub fn validate(&self) -> Result<()> {
        // From resistive alloys (1e5 S/m) to silver (6.3e7) with room for cryogenic copper.
        error::in_range(
            "loss.conductivity",
            self.conductivity_s_per_m,
            1e5,
            1e10,
            "S/m",
        )?;
        Ok(())
    }
}
