//! Copper surface roughness: the factor K ≥ 1 by which a rough foil raises the skin-effect resistance of a smooth
//! one, with two published models and three invented, generic foil presets whose parameters stay editable.
//!
//! - Hammerstad–Groiss (from RMS roughness Δ): K = 1 + (2/π)·atan(1.4·(Δ/δ)²). E. O. Hammerstad and F. Bekkadal,
//!   "Microstrip Handbook", ELAB report STF44 A74169, Univ. Trondheim, 1975, and S. Groiss et al., "Parameters
//!   of lossy cavity resonators calculated by the finite element method", IEEE Trans. Magnetics 32(3), 1996
//!   (both from memory); the same form is in scikit-rf's `MLine` (`Kr`). It saturates at K = 2, so it underestimates loss for very
//!   rough foil at high frequency; fitted to 2-D periodic grooves, good for Δ/δ up to about 1–2 (from memory).
//! - Huray "snowball" (from sphere radius a and sphere count per flat area N/A):
//!   K = 1 + (N/A)·4πa² / (1 + δ/a + δ²/(2a²)). P. G. Huray et al., "Impact of copper surface texture on loss:
//!   a model that works", DesignCon 2010; P. G. Huray, "The Foundations of Signal Integrity", Wiley 2009, ch. 6
//!   (from memory). This is the single-sphere-size form with the flat-area ratio of the base taken as 1
//!   (common simplification, no source), so K → 1 at low frequency and K → 1 + (N/A)·4πa² at high frequency.
//!
//! Checked against: the two limits above (exact from the formulas), and the skin depth of copper (unit tests).

use crate::base::error::{self, Result};
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// A copper surface.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
#[serde(tag = "model", rename_all = "snake_case", deny_unknown_fields)]
pub enum Roughness {
    /// An ideally smooth surface, K = 1.
    #[default]
    Smooth,
    /// Hammerstad–Groiss from the RMS height of the surface profile, m.
    HammerstadGroiss { rms_m: f64 },
    /// Huray snowball model from the sphere radius, m, and the number of spheres per square metre of flat area.
    Huray { radius_m: f64, spheres_per_m2: f64 },
}

/// Generic foil classes with invented, plausible parameters (common practice, no source; not any maker's data).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Foil {
    Standard,
    LowProfile,
    VeryLowProfile,
}

impl Foil {
    pub const ALL: [Foil; 3] = [Foil::Standard, Foil::LowProfile, Foil::VeryLowProfile];

    pub fn label(self) -> &'static str {
        match self {
            Foil::Standard => "standard",
            Foil::LowProfile => "low profile",
            Foil::VeryLowProfile => "very low profile",
        }
    }

    /// Reads a label such as `standard`, `low-profile`, `very_low_profile`.
    pub fn from_label(text: &str) -> Option<Foil> {
        let t = text.trim().to_ascii_lowercase().replace(['-', '_'], " ");
        Foil::ALL.into_iter().find(|f| f.label() == t)
    }

    /// RMS roughness of the preset, m (invented: 1.2, 0.6 and 0.3 µm).
    pub fn rms_m(self) -> f64 {
        match self {
            Foil::Standard => 1.2e-6,
            Foil::LowProfile => 0.6e-6,
            Foil::VeryLowProfile => 0.3e-6,
        }
    }

    /// The preset as a Hammerstad–Groiss surface.
    pub fn hammerstad_groiss(self) -> Roughness {
        Roughness::HammerstadGroiss {
            rms_m: self.rms_m(),
        }
    }

    /// The preset as a Huray surface: sphere radius and a high-frequency area ratio (N/A)·4πa² of 2.0, 1.2 and
    /// 0.6 (invented).
    pub fn huray(self) -> Roughness {
        let (radius_m, area_ratio): (f64, f64) = match self {
            Foil::Standard => (0.5e-6, 2.0),
            Foil::LowProfile => (0.4e-6, 1.2),
            Foil::VeryLowProfile => (0.3e-6, 0.6),
        };
        Roughness::Huray {
            radius_m,
            spheres_per_m2: area_ratio / (4.0 * PI * radius_m * radius_m),
        }
    }
}

/// Huray parameters given as `count` spheres on a tile of `tile_area_m2` (the way they are often quoted).
pub fn huray_from_tile(radius_m: f64, count: f64, tile_area_m2: f64) -> Result<Roughness> {
    error::positive("tile_area", tile_area_m2, "m²")?;
    error::in_range("count", count, 0.0, 1e6, "")?;
    let r = Roughness::Huray {
        radius_m,
        spheres_per_m2: count / tile_area_m2,
    };
    r.validate("roughness")?;
    Ok(r)
}

impl Roughness {
    /// Checks the parameters; `field` prefixes the error (e.g. `layers[0] "L1".roughness`).
    pub fn validate(&self, field: &str) -> Result<()> {
        match *self {
            Roughness::Smooth => Ok(()),
            Roughness::HammerstadGroiss { rms_m } => {
                error::in_range(&format!("{field}.rms"), rms_m, 0.0, 50e-6, "m").map(|_| ())
            }
            Roughness::Huray {
                radius_m,
                spheres_per_m2,
            } => {
                error::positive(&format!("{field}.radius"), radius_m, "m")?;
                error::in_range(&format!("{field}.radius"), radius_m, 0.0, 50e-6, "m")?;
                error::in_range(
                    &format!("{field}.spheres_per_m2"),
                    spheres_per_m2,
                    0.0,
                    1e15,
                    "1/m²",
                )?;
                // More sphere surface than 20× the flat area is not a copper foil.
                let ratio = spheres_per_m2 * 4.0 * PI * radius_m * radius_m;
                error::in_range(&format!("{field}.sphere_area_ratio"), ratio, 0.0, 20.0, "")
                    .map(|_| ())
            }
        }
    }

    /// The loss factor K ≥ 1 at skin depth `delta_m`.
    pub fn factor(&self, delta_m: f64) -> f64 {
        match *self {
            Roughness::Smooth => 1.0,
            Roughness::HammerstadGroiss { rms_m } => {
                1.0 + 2.0 / PI * (1.4 * (rms_m / delta_m).powi(2)).atan()
            }
            Roughness::Huray {
                radius_m: a,
                spheres_per_m2,
            } => {
                let ratio = spheres_per_m2 * 4.0 * PI * a * a;
                1.0 + ratio / (1.0 + delta_m / a + delta_m * delta_m / (2.0 * a * a))
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hammerstad_groiss_limits() {
        let r = Roughness::HammerstadGroiss { rms_m: 1e-6 };
        // Δ ≪ δ: K → 1; Δ ≫ δ: K → 2 (exact limits of the formula).
        assert!((r.factor(1e-3) - 1.0).abs() < 1e-5);
        assert!((r.factor(1e-9) - 2.0).abs() < 1e-5);
        // Δ = δ: K = 1 + (2/π)·atan(1.4) ≈ 1.6051 (evaluated by hand).
        assert!(
            (r.factor(1e-6) - 1.605_08).abs() < 1e-4,
            "{}",
            r.factor(1e-6)
        );
    }

    #[test]
    fn huray_limits() {
        let r = Foil::Standard.huray();
        assert!((r.factor(1.0) - 1.0).abs() < 1e-9);
        assert!((r.factor(1e-12) - 3.0).abs() < 1e-5);
    }

    #[test]
    fn presets_are_ordered_and_valid() {
        let delta = 0.66e-6; // copper near 10 GHz
        let ks: Vec<f64> = Foil::ALL
            .iter()
            .map(|f| {
                f.huray().validate("r").unwrap();
                f.hammerstad_groiss().factor(delta)
            })
            .collect();
        assert!(ks[0] > ks[1] && ks[1] > ks[2] && ks[2] > 1.0, "{ks:?}");
        assert_eq!(
            Foil::from_label("very-low-profile"),
            Some(Foil::VeryLowProfile)
        );
    }

    #[test]
    fn tile_form_matches_density_form() {
        let r = huray_from_tile(0.5e-6, 10.0, 100e-12).unwrap();
        assert_eq!(
            r,
            Roughness::Huray {
                radius_m: 0.5e-6,
                spheres_per_m2: 1e11
            }
        );
        let e = huray_from_tile(0.5e-6, 10.0, 0.0).unwrap_err();
        assert!(e.to_string().starts_with("tile_area"), "{e}");
        let e = Roughness::HammerstadGroiss { rms_m: f64::NAN }
            .validate("roughness")
            .unwrap_err();
        assert!(e.to_string().starts_with("roughness.rms"), "{e}");
    }
}
