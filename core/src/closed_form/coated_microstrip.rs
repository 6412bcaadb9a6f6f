//! Covered microstrip: a surface microstrip with a dielectric cover on the side away from the plane — either a
//! conformal solder mask (coated microstrip) or a further dielectric layer with a flat top (embedded microstrip).
//!
//! Method: a filling-factor correction of the quasi-static effective permittivity, laid on top of the surface
//! microstrip of Hammerstad–Jensen 1980 (see [`crate::closed_form::microstrip`]).
//!
//! * Filling factors: in the partial-capacitance picture (H. A. Wheeler, "Transmission-line properties of parallel
//!   strips separated by a dielectric sheet", IEEE Trans. MTT-13(2), 1965, pp. 172–185; generalised to layered
//!   covers by J. Svačina, "Analysis of multilayer microstrip lines by a conformal mapping method", IEEE Trans.
//!   MTT-40(4), 1992, pp. 769–772) the line's capacitance splits into a part whose field lies in the substrate
//!   (filling factor q_s) and a part in the upper half-space (1 − q_s). For the surface line
//!   εeff0 = 1 + q_s·(εr − 1), so q_s = (εeff0 − 1)/(εr − 1) follows from Hammerstad–Jensen.
//! * Cover: the cover of thickness c takes the share q_c = (1 − q_s)·(1 − exp(−k·c/h)) of the upper field, and
//!   εeff = 1 + q_s·(εr − 1) + q_c·(εm − 1). For εm = εr this is exactly the exponential form
//!   εeff = εeff0·exp(−k·c/h) + εr·(1 − exp(−k·c/h)) given for embedded microstrip in B. C. Wadell,
//!   "Transmission Line Design Handbook", Artech House, 1991, §3.5 (from memory; we recall k = 2 with c the
//!   dielectric height above the strip). We use k = [`COVER_DECAY`] = 2 for both covers and measure c above the
//!   strip's upper face (for a mask: the mask thickness over the substrate, laid conformally over the trace).
//! * Impedance: a non-magnetic cover does not change the inductance, so the air-filled impedance is unchanged and
//!   Z0 = Z0_air/√εeff with Z0_air = Z0_surface·√εeff0.
//!
//! Exact limits (tested below): c → 0 gives the surface line; εm = 1 gives the surface line exactly; a thick cover
//! of the substrate's Dk gives the fully embedded line εeff → εr; a thick cover of any Dk gives the half-space
//! filling-factor result εm + q_s·(εr − εm).
//!
//! Validity: that of Hammerstad–Jensen (0.01 ≤ w/h ≤ 100, 1 ≤ εr ≤ 128) for the base line; the cover correction is
//! an interpolation between exact limits and we flag c/h > 2 (the cover is then effectively infinite) and
//! εm > 2·εr. A conformal mask is taken to have the same thickness over the strip and over the substrate. Claimed
//! accuracy: none published for this combination. Checked against: the exact limits above, and an independent
//! scikit-fem field solve of zero-thickness strips under a planar cover (`tests/python/test_coupled_microstrip.py`):
//! within 2.5 % in Z0 for 0.5 ≤ u ≤ 5, 0.05 ≤ c/h ≤ 2 (thin covers within 0.5 % for u = 2; narrow strips under thin
//! covers ≈1.7 % high; thick covers ≈2 % low, as the true cover share grows more slowly than exp(−2c/h)).

use crate::base::error::{self, Result};
use crate::base::validity::Bound;
use crate::closed_form::microstrip::Microstrip;
use crate::section::lines::SingleLine;
use crate::section::Cover;

/// The exponential decay constant k of the cover share, per unit c/h (Wadell 1991 form, from memory).
pub const COVER_DECAY: f64 = 2.0;

/// Where the cover correction is an interpolation between well-defined limits; beyond c/h = 2 the cover share is
/// already 98 % of its limit.
pub const VALIDITY: [Bound; 2] = [
    Bound::new("cover c/h", 0.0, 2.0),
    Bound::new("cover εm/εr", 0.0, 2.0),
];

/// Substrate filling factor q_s = (εeff0 − 1)/(εr − 1) of the surface line (Wheeler's partial-capacitance
/// picture). For an air substrate (εr = 1) the split cannot be read off εeff; we take 1/2, the narrow-strip limit.
pub fn substrate_filling(eps_eff_surface: f64, er: f64) -> f64 {
    if er - 1.0 <= 1e-12 {
        return 0.5;
    }
    ((eps_eff_surface - 1.0) / (er - 1.0)).clamp(0.0, 1.0)
}

/// Effective permittivity under a cover of thickness ratio `c_over_h` = c/h and Dk `em`, from the surface line's
/// `eps_eff_surface` on substrate `er` (filling-factor form described in the module doc).
pub fn covered_eps_eff(eps_eff_surface: f64, er: f64, c_over_h: f64, em: f64) -> f64 {
    let qs = substrate_filling(eps_eff_surface, er);
    let share = 1.0 - (-COVER_DECAY * c_over_h.max(0.0)).exp();
    // Written as the surface εeff plus the cover's contribution so that εm = 1 returns the surface value exactly.
    eps_eff_surface + (1.0 - qs) * share * (em - 1.0)
}

/// Checks the cover (naming the case field on failure) and returns its (thickness, Dk).
fn cover_parts(cover: Cover) -> Result<Option<(f64, f64)>> {
    match cover {
        Cover::Air => Ok(None),
        Cover::Mask { thickness_m, er } => {
            error::length_or_zero("mask-thickness", thickness_m)?;
            error::permittivity("mask-dk", er)?;
            Ok(Some((thickness_m, er)))
        }
        Cover::Dielectric { thickness_m, er } => {
            error::length_or_zero("cover", thickness_m)?;
            error::permittivity("cover-dk", er)?;
            Ok(Some((thickness_m, er)))
        }
    }
}

/// Applies a cover to an already computed uncovered line (single line or one mode of a pair): the air-filled
/// impedance is kept and εeff is corrected. `er` is the substrate Dk and `h` its height.
pub fn apply_cover(surface: &SingleLine, h: f64, er: f64, cover: Cover) -> Result<SingleLine> {
    let Some((c, em)) = cover_parts(cover)? else {
        return Ok(surface.clone());
    };
    let mut warnings = surface.warnings.clone();
    VALIDITY[0].check("cover correction", c / h, &mut warnings);
    VALIDITY[1].check("cover correction", em / er, &mut warnings);
    let z_air = surface.z0 * surface.eps_eff.sqrt();
    let eps_eff = covered_eps_eff(surface.eps_eff, er, c / h, em);
    Ok(SingleLine {
        z0: z_air / eps_eff.sqrt(),
        eps_eff,
        warnings,
    })
}

/// A microstrip under a solder mask or further dielectric (SI units).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CoveredMicrostrip {
    /// The line without its cover.
    pub line: Microstrip,
    /// What lies over it.
    pub cover: Cover,
}

impl CoveredMicrostrip {
    /// Hammerstad–Jensen 1980 for the surface line, then the filling-factor cover correction.
    pub fn analyze(&self) -> Result<SingleLine> {
        cover_parts(self.cover)?;
        let surface = self.line.analyze()?;
        apply_cover(&surface, self.line.h, self.line.er, self.cover)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn covered(u: f64, er: f64, c_over_h: f64, em: f64, mask: bool) -> CoveredMicrostrip {
        let h = 1e-4;
        let cover = if mask {
            Cover::Mask {
                thickness_m: c_over_h * h,
                er: em,
            }
        } else {
            Cover::Dielectric {
                thickness_m: c_over_h * h,
                er: em,
            }
        };
        CoveredMicrostrip {
            line: Microstrip {
                w: u * h,
                h,
                t: 0.0,
                er,
            },
            cover,
        }
    }

    #[test]
    fn thin_cover_tends_to_surface_microstrip() {
        // Exact limit: no cover, no change.
        for &(u, er) in &[(0.3, 2.2), (1.9, 4.3), (8.0, 10.0)] {
            let surface = covered(u, er, 0.0, 1.0, false).line.analyze().unwrap();
            let thin = covered(u, er, 1e-9, 3.5, true).analyze().unwrap();
            assert!((thin.z0 - surface.z0).abs() / surface.z0 < 1e-7);
            let zero = covered(u, er, 0.0, 3.5, false).analyze().unwrap();
            assert_eq!(zero.z0, surface.z0);
        }
    }

    #[test]
    fn air_cover_is_surface_microstrip_exactly() {
        for &c in &[0.1, 1.0, 5.0] {
            let a = covered(1.5, 4.3, c, 1.0, false).analyze().unwrap();
            let s = covered(1.5, 4.3, 0.0, 1.0, false).line.analyze().unwrap();
            assert!((a.z0 - s.z0).abs() < 1e-12 * s.z0);
            assert!((a.eps_eff - s.eps_eff).abs() < 1e-12);
        }
    }

    #[test]
    fn thick_cover_of_substrate_dk_is_fully_embedded() {
        // Exact limit: a homogeneous dielectric everywhere gives εeff = εr and Z0 = Z0_air/√εr.
        for &(u, er) in &[(0.2, 3.0), (2.0, 4.3), (10.0, 9.8)] {
            let r = covered(u, er, 20.0, er, false).analyze().unwrap();
            assert!((r.eps_eff - er).abs() / er < 1e-9, "u={u}: {}", r.eps_eff);
            let air = covered(u, 1.0, 0.0, 1.0, false).line.analyze().unwrap();
            assert!((r.z0 - air.z0 / er.sqrt()).abs() / r.z0 < 1e-9);
            assert!(!r.warnings.is_empty(), "c/h = 20 is flagged");
        }
    }

    #[test]
    fn cover_lowers_impedance_monotonically() {
        let mut last = f64::INFINITY;
        for i in 0..30 {
            let c = i as f64 * 0.1;
            let z = covered(1.8, 4.2, c, 3.8, true).analyze().unwrap().z0;
            assert!(z <= last, "c/h={c}");
            last = z;
        }
        let mut last = f64::INFINITY;
        for i in 1..20 {
            let em = i as f64 * 0.5 + 0.5;
            let z = covered(1.8, 4.2, 0.2, em.max(1.0), true)
                .analyze()
                .unwrap()
                .z0;
            assert!(z <= last, "em={em}");
            last = z;
        }
    }

    #[test]
    fn bad_cover_names_its_field() {
        let e = covered(1.0, 4.0, -0.1, 3.5, true).analyze().unwrap_err();
        assert!(e.to_string().starts_with("mask-thickness"), "{e}");
        let e = covered(1.0, 4.0, 0.1, f64::NAN, true)
            .analyze()
            .unwrap_err();
        assert!(e.to_string().starts_with("mask-dk"), "{e}");
        let e = covered(1.0, 4.0, 0.1, 0.5, false).analyze().unwrap_err();
        assert!(e.to_string().starts_with("cover-dk"), "{e}");
        let e = covered(1.0, 4.0, f64::INFINITY, 2.0, false)
            .analyze()
            .unwrap_err();
        assert!(e.to_string().starts_with("cover"), "{e}");
    }
}

#[cfg(test)]
mod properties {
    //! Property tests: width synthesis round-trips under a cover, and Z0 falls with cover thickness and Dk.
    use super::*;
    use crate::design::project::Structure;
    use crate::plan::case::LineCase;
    use crate::section::Dims;
    use crate::section::{CrossSection, Medium};
    use proptest::prelude::*;

    const H: f64 = 1e-4;

    fn case(u: f64, tn: f64, er: f64, cover: Cover) -> LineCase {
        LineCase {
            kind: "coated-microstrip".into(),
            cross_section: CrossSection {
                loss: Default::default(),
                layering: None,
                medium: Medium::Microstrip { h: H, er, cover },
                t: tn * H,
                references: Vec::new(),
                warnings: Vec::new(),
            },
            structure: Structure::Single,
            dims: Dims {
                w: u * H,
                s: None,
                gap: None,
            },
        }
    }

    fn cover_of(mask: bool, c_over_h: f64, em: f64) -> Cover {
        let thickness_m = c_over_h * H;
        if mask {
            Cover::Mask {
                thickness_m,
                er: em,
            }
        } else {
            Cover::Dielectric {
                thickness_m,
                er: em,
            }
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(96))]

        #[test]
        fn width_synthesis_round_trips(
            u in 0.05f64..20.0, tn in 0.0f64..0.2, er in 1.0f64..18.0,
            mask in any::<bool>(), c in 0.0f64..3.0, em in 1.0f64..10.0,
        ) {
            let given = case(u, tn, er, cover_of(mask, c, em));
            let z = given.analyze().unwrap().analysis.controlled();
            let solved = given.solve_width(z).unwrap();
            let rel = (solved.dims.w - given.dims.w).abs() / given.dims.w;
            prop_assert!(rel < 1e-6, "w {} vs {} (rel {rel:e})", solved.dims.w, given.dims.w);
        }

        #[test]
        fn impedance_falls_with_cover_thickness_dk_and_width(
            u in 0.05f64..20.0, tn in 0.0f64..0.2, er in 1.0f64..18.0,
            mask in any::<bool>(), c in 0.0f64..3.0, em in 1.01f64..10.0, step in 1.001f64..1.5,
        ) {
            let z = |u: f64, c: f64, em: f64| {
                case(u, tn, er, cover_of(mask, c, em)).analyze().unwrap().analysis.controlled()
            };
            let base = z(u, c, em);
            prop_assert!(z(u, c * step + 1e-3, em) < base);
            prop_assert!(z(u, c, em * step) <= base);
            prop_assert!(z(u * step, c, em) < base);
        }
    }
}
