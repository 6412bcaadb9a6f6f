//! Stripline: a strip of width `w` and thickness `t` between two ground planes in one homogeneous dielectric of
//! permittivity `er`; centred (symmetric), off-centre (offset), or with another signal layer between the same
//! planes (dual stripline, computed as offset with the other layer ignored). The line is TEM, so εeff = εr.
//!
//! Zero thickness, centred: S. B. Cohn, "Characteristic impedance of the shielded-strip transmission line",
//! IRE Trans. MTT-2, July 1954, pp. 52–57 — the exact conformal map Z0 = η0/(4√εr) · K(k)/K(k′) with
//! k = sech(πW/2b), k′ = tanh(πW/2b), b the plane-to-plane spacing. Exact for every W/b. We use η0 = µ0·c
//! (Cohn prints 30π, i.e. η0 = 120π, 0.069 % higher).
//!
//! Finite thickness: H. A. Wheeler, "Transmission-line properties of a strip line between parallel planes",
//! IEEE Trans. MTT-26(11), Nov. 1978, pp. 866–876 — the thick strip is replaced by a zero-thickness strip of
//! normalised width W′/(b − t) = W/(b − t) + ΔW/(b − t) with
//! ΔW/(b − t) = x/(π(1 − x)) · {1 − ½·ln[(x/(2 − x))² + (0.0796·x/(W/b + 1.1·x))^m]}, m = 2/(1 + ⅔·x/(1 − x)),
//! x = t/b (formulas from memory). Wheeler feeds W′ into his own closed form, which he states is within 0.5 % for
//! W′/(b − t) < 10; we feed it into Cohn's exact map instead, so t = 0 stays exact and Wheeler's closed-form error
//! (measured up to 0.5 %, see the tests) drops out. We flag t/b > 0.25 (our flag, no source).
//!
//! Offset (and dual) stripline: capacitance superposition — each half of the cross-section carries half the
//! capacitance of a centred stripline whose planes are twice that half's height apart, so
//! Z0 = 2·Z(b₁)·Z(b₂)/(Z(b₁) + Z(b₂)) with bᵢ = 2hᵢ + t (as given in handbooks, e.g. Wadell, "Transmission
//! Line Design Handbook", 1991, §3.6; from memory). Exact for equal heights and in the wide-strip limit, but we
//! measured it up to 5.6 % high against the exact solution for heights up to 4:1 (10–14 % at 7–13:1). So the
//! model multiplies it by the ratio exact/superposition of the zero-thickness line, the exact value coming from
//! the moment solution of [`crate::closed_form::strip_moments`] (checked against Cohn 1954/1955 to 1e-9): t = 0 is then exact
//! at any offset, and the superposition only carries the thickness change.
//!
//! Strips more than 100× wider than their nearer height skip the correction (the moment solution would not be
//! resolved; the superposition error there falls like 1/W and is a few tenths of a percent) and say so.
//!
//! Checked against: the parallel-plate limit (exact), Cohn's exact fringing capacitance of a thick semi-infinite
//! plate (wide-strip limit with t > 0), the thin-wire image result for narrow offset strips, and in
//! `tests/python/test_stripline.py` mpmath's elliptic integrals over ≥ 100 geometries, Wheeler's and Cohn's thick
//! closed forms (within 0.5 % and 1.5 %) and a handbook example; in `test_stripline_fem.py` an independent
//! finite-element solve (thick centred strip +0.06 %, thick offset strip −0.36 %).

use crate::base::elliptic::{self, ln_cosh, ln_tanh};
use crate::base::error::{self, Result};
use crate::base::units::ETA0;
use crate::base::validity::{Bound, Warning};
use crate::closed_form::strip_moments::{self, Strip};
use crate::section::lines::SingleLine;
use std::f64::consts::PI;

/// Our flag on the thickness correction (no published bound; Wheeler's fit was made for moderate t/b).
pub const VALIDITY: [Bound; 1] = [Bound::new("t/b", 0.0, 0.25)];

/// A stripline cross-section (SI units).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stripline {
    /// Trace width, m.
    pub w: f64,
    /// Dielectric from the trace's lower face to the plane below, m.
    pub h_below: f64,
    /// Dielectric from the trace's upper face to the plane above, m.
    pub h_above: f64,
    /// Trace thickness, m (0 allowed).
    pub t: f64,
    /// Relative permittivity of the (homogeneous) dielectric.
    pub er: f64,
}

impl Stripline {
    /// Checks the inputs for physical sense; names the field on failure.
    pub fn validate(&self) -> Result<()> {
        error::length("width", self.w)?;
        error::length("height", self.h_below)?;
        error::length("height2", self.h_above)?;
        error::length_or_zero("thickness", self.t)?;
        error::permittivity("dk", self.er)?;
        Ok(())
    }

    /// Plane-to-plane spacing b, m.
    pub fn spacing(&self) -> f64 {
        self.h_below + self.h_above + self.t
    }

    /// Whether the strip is centred (heights equal to 1e-3 relative, as in [`crate::section`]).
    pub fn is_symmetric(&self) -> bool {
        (self.h_below - self.h_above).abs() <= 1e-3 * self.h_below.max(self.h_above)
    }

    /// Z0 and εeff = εr, with validity notes.
    pub fn analyze(&self) -> Result<SingleLine> {
        self.validate()?;
        let mut warnings = Vec::new();
        check_thickness(self.t, self.w, self.spacing(), &mut warnings);
        let z0 = if self.is_symmetric() {
            // Centred: evaluate the symmetric formula at the mean height so tiny differences do not matter.
            let h = 0.5 * (self.h_below + self.h_above);
            z0_symmetric(self.w, 2.0 * h + self.t, self.t, self.er)
        } else {
            let (z, corrected) =
                z0_offset_corrected(self.w, self.h_below, self.h_above, self.t, self.er)?;
            if !corrected {
                warnings.push(Warning::new(WIDE_OFFSET_NOTE));
            }
            z
        };
        Ok(SingleLine {
            z0,
            eps_eff: self.er,
            warnings,
        })
    }
}

/// The note for offset strips too wide (relative to the nearer plane) for the exact correction.
pub(crate) const WIDE_OFFSET_NOTE: &str =
    "offset strip more than 100× wider than its nearer height: handbook superposition without the exact correction (error below about 0.5 % there)";

/// Pushes the thickness notes shared by the stripline family.
pub(crate) fn check_thickness(t: f64, w: f64, b: f64, warnings: &mut Vec<Warning>) {
    VALIDITY[0].check("Wheeler 1978 thickness correction", t / b, warnings);
    if t > w {
        warnings.push(Warning::new(
            "trace thicker than it is wide: the thickness correction is rough",
        ));
    }
}

/// Cohn 1954, exact for t = 0: Z0·√εr / η0 · 4 = K(k)/K(k′), k = sech(πu/2), k′ = tanh(πu/2), `u = W/b`.
/// Returns K(k)/K(k′); the logarithmic forms keep it accurate for any u > 0.
pub fn cohn_ratio(u: f64) -> f64 {
    let a = 0.5 * PI * u;
    elliptic::ratio_ln(-ln_cosh(a), ln_tanh(a))
}

/// Zero-thickness centred stripline of width `w` between planes `b` apart, Cohn 1954 (exact), Ω.
pub fn z0_zero_thickness(w: f64, b: f64, er: f64) -> f64 {
    ETA0 / (4.0 * er.sqrt()) * cohn_ratio(w / b)
}

/// Wheeler 1978 width increment ΔW/(b − t) of a strip of width `w`, thickness `t`, planes `b` apart.
pub fn wheeler_increment(w: f64, b: f64, t: f64) -> f64 {
    if t <= 0.0 {
        return 0.0;
    }
    let x = t / b;
    let m = 2.0 / (1.0 + 2.0 / 3.0 * x / (1.0 - x));
    let arg = (x / (2.0 - x)).powi(2) + (0.0796 * x / (w / b + 1.1 * x)).powf(m);
    x / (PI * (1.0 - x)) * (1.0 - 0.5 * arg.ln())
}

/// Normalised equivalent zero-thickness width W′/(b − t) (equal to W/b when t = 0).
pub fn equivalent_width(w: f64, b: f64, t: f64) -> f64 {
    w / (b - t) + wheeler_increment(w, b, t)
}

/// Centred stripline with thickness: Cohn's exact map at Wheeler's equivalent width, Ω.
pub fn z0_symmetric(w: f64, b: f64, t: f64, er: f64) -> f64 {
    ETA0 / (4.0 * er.sqrt()) * cohn_ratio(equivalent_width(w, b, t))
}

/// Offset stripline by capacitance superposition of two centred lines with spacings 2h₁ + t and 2h₂ + t, Ω.
pub fn z0_offset(w: f64, h1: f64, h2: f64, t: f64, er: f64) -> f64 {
    let z1 = z0_symmetric(w, 2.0 * h1 + t, t, er);
    let z2 = z0_symmetric(w, 2.0 * h2 + t, t, er);
    2.0 * z1 * z2 / (z1 + z2)
}

/// Offset stripline with the superposition error removed at t = 0: `z0_offset(t)` × exact(0)/`z0_offset(0)`,
/// with exact(0) the moment solution of the zero-thickness strip with its faces' distances to the planes, Ω.
/// Returns the plain superposition when the strip is more than [`strip_moments::MAX_WIDTH_OVER_GAP`] times
/// wider than its nearer height: there the superposition error (∝ 1/W, measured 0.13 % at W = 20·b) is small
/// and the moment solution is not resolved. The flag says whether the correction was applied.
pub fn z0_offset_corrected(w: f64, h1: f64, h2: f64, t: f64, er: f64) -> Result<(f64, bool)> {
    let strips = [Strip { x: 0.0, w, y: h1 }];
    if !strip_moments::resolvable(h1 + h2, &strips) {
        return Ok((z0_offset(w, h1, h2, t, er), false));
    }
    let c = strip_moments::capacitance(h1 + h2, &strips)?;
    let exact0 = ETA0 / (c[0][0] * er.sqrt());
    Ok((
        z0_offset(w, h1, h2, t, er) * exact0 / z0_offset(w, h1, h2, 0.0, er),
        true,
    ))
}

/// Combines two per-half impedances by the same capacitance superposition (1/Z averaged).
pub(crate) fn superpose(z1: f64, z2: f64) -> f64 {
    2.0 * z1 * z2 / (z1 + z2)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn line(w: f64, h_below: f64, h_above: f64, t: f64, er: f64) -> Stripline {
        Stripline {
            w,
            h_below,
            h_above,
            t,
            er,
        }
    }

    #[test]
    fn wide_strip_tends_to_two_parallel_plates_plus_exact_fringe() {
        // Exact asymptote of Cohn's map for W/b → ∞: Z0·√εr = (η0/4) / (W/b + 2·ln2/π) — two parallel-plate
        // guides of height b/2 plus the exact fringing capacitance 2ln2/π·ε per edge and side.
        for &u in &[8.0, 20.0, 100.0] {
            let z = z0_zero_thickness(u * 1e-4, 1e-4, 4.0);
            let asym = ETA0 / 4.0 / 2.0 / (u + 2.0 * std::f64::consts::LN_2 / PI);
            assert!((z - asym).abs() / asym < 1e-10, "u={u}: {z} vs {asym}");
        }
    }

    #[test]
    fn thick_wide_strip_matches_cohns_exact_thick_edge_fringing() {
        // Cohn 1955 (from memory): the fringing capacitance per edge corner of a thick semi-infinite plate
        // centred between planes is exact, C′f/ε = 1/π·[2/(1−x)·ln(1/(1−x) + 1) − (1/(1−x) − 1)·ln(1/(1−x)² − 1)],
        // so for wide strips Z0·√εr = (η0/4) / (W/(b − t) + C′f/ε). Wheeler's width increment is a fit to this
        // edge; it should agree to a fraction of a percent of Z0.
        for &x in &[0.02_f64, 0.05, 0.1, 0.2] {
            let (b, u) = (1e-3, 12.0);
            let t = x * b;
            let w = u * b;
            let cf = (2.0 / (1.0 - x) * (1.0 / (1.0 - x) + 1.0).ln()
                - (1.0 / (1.0 - x) - 1.0) * (1.0 / (1.0 - x).powi(2) - 1.0).ln())
                / PI;
            let exact = ETA0 / 4.0 / (w / (b - t) + cf);
            let got = z0_symmetric(w, b, t, 1.0);
            assert!(
                (got - exact).abs() / exact < 2e-3,
                "x={x}: {got} vs {exact}"
            );
        }
    }

    #[test]
    fn cohn_matches_wheeler_closed_form_within_its_claimed_accuracy() {
        // Wheeler 1978's own closed form (from memory) for t = 0:
        // Z0√εr = (η0/4π)·ln{1 + (4/π)·(b/W)·[(8/π)·(b/W) + √(((8/π)·(b/W))² + 6.27)]}; he claims 0.5 % for W/b < 10.
        for &u in &[0.05, 0.2, 0.5, 1.0, 2.0, 5.0, 9.0] {
            let r = 1.0 / u;
            let p = 8.0 / PI * r;
            let wheeler =
                ETA0 / (4.0 * PI) * (1.0 + 4.0 / PI * r * (p + (p * p + 6.27).sqrt())).ln();
            let cohn = z0_zero_thickness(u, 1.0, 1.0);
            assert!(
                (wheeler - cohn).abs() / cohn < 0.006,
                "u={u}: {wheeler} vs {cohn}"
            );
        }
    }

    #[test]
    fn narrow_offset_strip_is_near_the_thin_wire_image_result() {
        // Exact for W ≪ b, h: a flat strip of width W acts as a round wire of diameter W/2 (conformal map of a
        // flat strip, exact), and a thin wire at height y between planes b apart has, by images,
        // Z0 = η0/(2π√εr)·ln[(4b/(πd))·sin(πy/b)] (from memory). The superposition method is an approximation:
        // it must be within 4 % here, and exact at the centre; the corrected model is exact.
        let (b, w) = (1e-3, 2e-6);
        for &(y, tol) in &[
            (0.5e-3, 2e-3),
            (0.35e-3, 0.015),
            (0.25e-3, 0.04),
            (0.1e-3, 0.1),
        ] {
            let exact = ETA0 / (2.0 * PI) * (4.0 * b / (PI * w / 2.0) * (PI * y / b).sin()).ln();
            let got = z0_offset(w, y, b - y, 0.0, 1.0);
            assert!((got - exact).abs() / exact < tol, "y={y}: {got} vs {exact}");
            let corrected = line(w, y, b - y, 0.0, 1.0).analyze().unwrap().z0;
            assert!(
                (corrected - exact).abs() / exact < 1e-5,
                "y={y}: {corrected} vs {exact}"
            );
        }
    }

    #[test]
    fn offset_superposition_against_the_exact_moment_solution() {
        // Exact reference: the zero-thickness strip in its channel by the moment method (itself checked against
        // Cohn 1954/1955 to 1e-9). The handbook superposition is an approximation; we measure and bound it over
        // our flag range (longer/shorter height ≤ 4).
        let mut worst: f64 = 0.0;
        for &u in &[0.1, 0.3, 1.0, 3.0] {
            for &ratio in &[1.5, 2.0, 3.0, 4.0] {
                let h1 = 1.0;
                let h2 = ratio * h1;
                let w = u * (h1 + h2);
                let c = crate::closed_form::strip_moments::capacitance(
                    h1 + h2,
                    &[crate::closed_form::strip_moments::Strip { x: 0.0, w, y: h1 }],
                )
                .unwrap();
                let exact = ETA0 / c[0][0];
                let approx = z0_offset(w, h1, h2, 0.0, 1.0);
                worst = worst.max((approx - exact).abs() / exact);
            }
        }
        assert!(worst < 0.06, "{worst}");
        // The model itself is exact at t = 0 (the correction), whatever the offset.
        for &(w, h1, h2) in &[(1e-4, 1e-4, 6e-4), (3e-4, 5e-5, 4e-4), (1e-5, 2e-4, 3e-4)] {
            let c = crate::closed_form::strip_moments::capacitance(
                h1 + h2,
                &[crate::closed_form::strip_moments::Strip { x: 0.0, w, y: h1 }],
            )
            .unwrap();
            let exact = ETA0 / c[0][0] / 2.0;
            let got = line(w, h1, h2, 0.0, 4.0).analyze().unwrap().z0;
            assert!((got - exact).abs() / exact < 1e-12, "{got} vs {exact}");
        }
    }

    #[test]
    fn dielectric_scales_as_one_over_root_er_and_eps_eff_is_er() {
        let a = line(2e-4, 1.5e-4, 1.5e-4, 17e-6, 1.0).analyze().unwrap();
        let b = line(2e-4, 1.5e-4, 1.5e-4, 17e-6, 4.0).analyze().unwrap();
        assert!((a.z0 / b.z0 - 2.0).abs() < 1e-12);
        assert_eq!(b.eps_eff, 4.0);
    }

    #[test]
    fn thickness_lowers_impedance_and_zero_thickness_is_cohn() {
        let thin = line(2e-4, 2e-4, 2e-4, 0.0, 3.5).analyze().unwrap().z0;
        let thick = line(2e-4, 2e-4, 2e-4, 35e-6, 3.5).analyze().unwrap().z0;
        assert!(thick < thin);
        assert_eq!(thin, z0_zero_thickness(2e-4, 4e-4, 3.5));
    }

    #[test]
    fn bad_inputs_name_their_field() {
        let e = line(0.0, 1e-4, 1e-4, 0.0, 4.0).analyze().unwrap_err();
        assert!(e.to_string().starts_with("width"), "{e}");
        let e = line(1e-4, f64::INFINITY, 1e-4, 0.0, 4.0)
            .analyze()
            .unwrap_err();
        assert!(e.to_string().starts_with("height"), "{e}");
        let e = line(1e-4, 1e-4, -1e-4, 0.0, 4.0).analyze().unwrap_err();
        assert!(e.to_string().starts_with("height2"), "{e}");
        let e = line(1e-4, 1e-4, 1e-4, f64::NAN, 4.0).analyze().unwrap_err();
        assert!(e.to_string().starts_with("thickness"), "{e}");
        let e = line(1e-4, 1e-4, 1e-4, 0.0, 0.0).analyze().unwrap_err();
        assert!(e.to_string().starts_with("dk"), "{e}");
    }

    #[test]
    fn extreme_but_legal_geometries_stay_finite_and_warn() {
        for (w, h) in [(0.5, 1e-9), (1e-9, 0.2), (1e-6, 1e-6)] {
            let r = line(w, h, h, 0.0, 4.0).analyze().unwrap();
            assert!(r.z0.is_finite() && r.z0 > 0.0, "{w} {h}: {}", r.z0);
        }
        let r = line(1e-4, 1e-5, 1e-4, 5e-5, 4.0).analyze().unwrap();
        assert!(r.z0.is_finite());
        assert!(!r.warnings.is_empty(), "{:?}", r.warnings);
    }

    proptest! {
        #[test]
        fn offset_with_equal_heights_is_symmetric(w in 1e-5f64..2e-3, h in 2e-5f64..1e-3,
                                                  t in 0.0f64..5e-5, er in 1.0f64..12.0) {
            let sym = z0_symmetric(w, 2.0 * h + t, t, er);
            let off = z0_offset(w, h, h, t, er);
            prop_assert!((sym - off).abs() <= 1e-12 * sym);
        }

    }

    proptest! {
        // Offset cases run a moment solve each; 24 cases keep the debug-build suite at a few seconds.
        #![proptest_config(ProptestConfig::with_cases(24))]

        #[test]
        fn impedance_falls_with_width_and_rises_with_height(w in 1e-5f64..5e-4, h1 in 5e-5f64..5e-4,
                                                            h2 in 5e-5f64..5e-4, t in 0.0f64..3e-5) {
            let z = |w: f64, h1: f64, h2: f64| line(w, h1, h2, t, 4.0).analyze().unwrap().z0;
            let base = z(w, h1, h2);
            prop_assert!(z(w * 1.01, h1, h2) < base);
            prop_assert!(z(w, h1 * 1.01, h2) > base);
            prop_assert!(z(w, h1, h2 * 1.01) > base);
        }

        #[test]
        fn superposition_lies_between_its_two_halves(w in 1e-5f64..2e-3, h1 in 2e-5f64..1e-3,
                                                     h2 in 2e-5f64..1e-3) {
            let z1 = z0_symmetric(w, 2.0 * h1, 0.0, 1.0);
            let z2 = z0_symmetric(w, 2.0 * h2, 0.0, 1.0);
            let z = z0_offset(w, h1, h2, 0.0, 1.0);
            prop_assert!(z >= z1.min(z2) * (1.0 - 1e-12) && z <= z1.max(z2) * (1.0 + 1e-12));
        }
    }
}
