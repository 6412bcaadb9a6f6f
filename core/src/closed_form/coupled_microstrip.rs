//! Edge-coupled microstrip pair: two equal strips of width `w`, edge-to-edge spacing `s` and thickness `t` on a
//! dielectric of height `h` and permittivity `er` over one plane; air above, or a solder mask / further dielectric.
//!
//! Method: M. Kirschning and R. H. Jansen, "Accurate wide-range design equations for the frequency-dependent
//! characteristic of parallel coupled microstrip lines", IEEE Trans. MTT-32(1), Jan. 1984, pp. 83–90, with the
//! corrections published in MTT-33(3), 1985, p. 288. We use the quasi-static part: even/odd εeff (their eqs. 3–4)
//! and even/odd impedance (eqs. 8–9 with the auxiliary Q1…Q10), built on the Hammerstad–Jensen 1980 single line
//! (see [`crate::closed_form::microstrip`]); symbols u = w/h, g = s/h as in the paper. Equation numbers are from memory.
//! Validity (KJ 1984): 0.1 ≤ u ≤ 10, 0.1 ≤ g ≤ 10, 1 ≤ εr ≤ 18; claimed accuracy about 1 % for Z and εeff of both
//! modes against the authors' spectral-domain results (from memory). Outside it the fit degrades: for u ≳ 15 and
//! g ≳ 5 Zodd falls slightly with spacing (found by our property test), so spacing synthesis there is unreliable.
//!
//! Thickness: KJ 1984 is for t = 0. We use mode-dependent width increments of the form given by R. H. Jansen,
//! "High-speed computation of single and coupled microstrip parameters including dispersion, high-order modes,
//! loss and finite strip thickness", IEEE Trans. MTT-26(2), 1978, pp. 75–82 (from memory):
//! Δt = 2·t·h/(s·εr) (the side walls across the half-gap to the odd mode's symmetry plane, as a parallel-plate
//! capacitance in the air of the gap, turned into a width), Δu_e = Δu·(1 − ½·exp(−0.69·Δu/Δt)), Δu_o = Δu_e + Δt,
//! with Δu the Hammerstad–Jensen dielectric-side increment. HJ's εeff thickness factor (Z_air(u+Δu1)/Z_air(u+Δur))²
//! is carried into both modes, so that for s → ∞ both modes become the HJ single line exactly, thickness included.
//! Measured against an independent field solve (scikit-fem, `tests/python/test_coupled_microstrip.py`) for board
//! geometries with 0.17 ≤ t/h ≤ 0.35 and t/s ≤ 0.35: Zodd 1–3.3 % high and Zeven 1–2 % low (zero-thickness KJ:
//! within 0.6 %), so the thickness correction dominates the error of thick-copper pairs; we warn for t/s > 0.3.
//!
//! Second opinion: R. Garg and I. J. Bahl, "Characteristics of coupled microstriplines", IEEE Trans. MTT-27(7),
//! July 1979, pp. 700–705: even/odd capacitances from parallel-plate, fringe and gap parts (C_p, C_f, C_f′, C_ga,
//! C_gd), with the Hilberg approximation of K(k′)/K(k) they used; validity 0.2 ≤ u ≤ 2, 0.05 ≤ g ≤ 2, εr ≥ 1;
//! claimed accuracy about 3 %. Zero thickness only.
//!
//! Covered pairs: the cover correction of [`crate::closed_form::coated_microstrip`] is applied to each mode with that mode's own
//! substrate filling factor. This is a rough extension (the odd mode's field crowds into the gap, where a thin mask
//! matters more than the c/h decay suggests), so covered pairs always carry a warning.
//!
//! Checked against: exact limits (s → ∞ gives the single line for both modes, Zodd < Z0 < Zeven, air gives
//! εeff = 1), Garg–Bahl 1979 (Rust here and an independent Python implementation in
//! `tests/python/test_coupled_microstrip.py`), and handbook examples there.

use crate::base::error::{self, Error, Result};
use crate::base::units::{C0, EPS0, ETA0};
use crate::base::validity::{Bound, Warning};
use crate::closed_form::microstrip::{
    eps_eff_zero_thickness, thickness_increments, z0_homogeneous,
};
use crate::section::lines::{CoupledPair, SingleLine};
use crate::section::Cover;
use std::f64::consts::PI;

/// The published validity of Kirschning–Jansen 1984, plus our thickness flag.
pub const VALIDITY: [Bound; 4] = [
    Bound::new("w/h", 0.1, 10.0),
    Bound::new("s/h", 0.1, 10.0),
    Bound::new("εr", 1.0, 18.0),
    Bound::new("t/h", 0.0, 0.2),
];

/// The published validity of Garg–Bahl 1979.
pub const VALIDITY_GARG_BAHL: [Bound; 2] =
    [Bound::new("w/h", 0.2, 2.0), Bound::new("s/h", 0.05, 2.0)];

/// An edge-coupled microstrip pair (SI units).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EdgeCoupledMicrostrip {
    /// Width of each strip, m.
    pub w: f64,
    /// Edge-to-edge spacing, m.
    pub s: f64,
    /// Dielectric height from the plane to the strips' underside, m.
    pub h: f64,
    /// Strip thickness, m (0 allowed).
    pub t: f64,
    /// Substrate relative permittivity.
    pub er: f64,
}

/// Quasi-static mode values of a zero-thickness pair: (Z_even, Z_odd, εeff_even, εeff_odd).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Modes {
    pub z_even: f64,
    pub z_odd: f64,
    pub eps_even: f64,
    pub eps_odd: f64,
}

/// ln(1 + x^n) without overflow for large x.
fn ln1p_pow(x: f64, n: f64) -> f64 {
    if x > 1.0 {
        n * x.ln() + x.powf(-n).ln_1p()
    } else {
        x.powf(n).ln_1p()
    }
}

/// Kirschning–Jansen 1984 even-mode εeff of zero-thickness strips (u = w/h, g = s/h).
pub fn kj_eps_even(u: f64, g: f64, er: f64) -> f64 {
    // The even mode sees a wider equivalent strip v; the single-line HJ form is then evaluated at v.
    let v = u * (20.0 + g * g) / (10.0 + g * g) + g * (-g).exp();
    eps_eff_zero_thickness(v, er)
}

/// Kirschning–Jansen 1984 odd-mode εeff of zero-thickness strips.
pub fn kj_eps_odd(u: f64, g: f64, er: f64) -> f64 {
    let e0 = eps_eff_zero_thickness(u, er);
    let a0 = 0.7287 * (e0 - (er + 1.0) / 2.0) * (1.0 - (-0.179 * u).exp());
    let b0 = 0.747 * er / (0.15 + er);
    let c0 = b0 - (b0 - 0.207) * (-0.414 * u).exp();
    let d0 = 0.593 + 0.694 * (-0.562 * u).exp();
    ((er + 1.0) / 2.0 + a0 - e0) * (-c0 * g.powf(d0)).exp() + e0
}

/// Kirschning–Jansen 1984 quasi-static even and odd impedances and εeff of zero-thickness strips.
pub fn kirschning_jansen(u: f64, g: f64, er: f64) -> Modes {
    let e0 = eps_eff_zero_thickness(u, er);
    let z_air = z0_homogeneous(u);
    let zl = z_air / e0.sqrt();
    let eps_even = kj_eps_even(u, g, er);
    let eps_odd = kj_eps_odd(u, g, er);
    let q1 = 0.8695 * u.powf(0.194);
    let q2 = 1.0 + 0.7519 * g + 0.189 * g.powf(2.31);
    let q3 = 0.1975
        + (16.6 + (8.4 / g).powi(6)).powf(-0.387)
        + (10.0 * g.ln() - ln1p_pow(g / 3.4, 10.0)) / 241.0;
    let q4 = 2.0 * q1 / q2 / ((-g).exp() * u.powf(q3) + (2.0 - (-g).exp()) * u.powf(-q3));
    let q5 = 1.794 + 1.14 * (0.638 / (g + 0.517 * g.powf(2.43))).ln_1p();
    let q6 = 0.2305
        + (10.0 * g.ln() - ln1p_pow(g / 5.8, 10.0)) / 281.3
        + (0.598 * g.powf(1.154)).ln_1p() / 5.1;
    let q7 = (10.0 + 190.0 * g * g) / (1.0 + 82.3 * g.powi(3));
    let q8 = (-6.5 - 0.95 * g.ln() - (g / 0.15).powi(5)).exp();
    let q9 = q7.ln() * (q8 + 1.0 / 16.5);
    let q10 = (q2 * q4 - q5 * (u.ln() * q6 * u.powf(-q9)).exp()) / q2;
    // Z_air/η0 = Zl·√εeff/η0 is the factor that multiplies Q4 and Q10 in KJ's eqs.
    let z_even = zl * (e0 / eps_even).sqrt() / (1.0 - z_air / ETA0 * q4);
    let z_odd = zl * (e0 / eps_odd).sqrt() / (1.0 - z_air / ETA0 * q10);
    Modes {
        z_even,
        z_odd,
        eps_even,
        eps_odd,
    }
}

/// K(k′)/K(k) by Hilberg's approximation (as used by Garg–Bahl 1979), accurate to about 8 ppm.
pub fn ellip_ratio_kp_over_k(k: f64) -> f64 {
    let kp = (1.0 - k * k).max(0.0).sqrt();
    if k * k <= 0.5 {
        (2.0 * (1.0 + kp.sqrt()) / (1.0 - kp.sqrt())).ln() / PI
    } else {
        PI / (2.0 * (1.0 + k.sqrt()) / (1.0 - k.sqrt())).ln()
    }
}

/// Garg–Bahl 1979 even/odd capacitances per metre of zero-thickness strips on substrate `er`, (C_even, C_odd).
fn garg_bahl_capacitances(u: f64, g: f64, er: f64) -> (f64, f64) {
    // Single-line Z0 and εeff for the fringe capacitance (HJ 1980, as GB used Hammerstad's forms).
    let ee = eps_eff_zero_thickness(u, er);
    let z0 = z0_homogeneous(u) / ee.sqrt();
    let cp = EPS0 * er * u;
    let cf = ee.sqrt() / (2.0 * C0 * z0) - cp / 2.0;
    let a = (-0.1 * (2.33 - 2.53 * u).exp()).exp();
    let cf_prime = cf / (1.0 + a / g * (8.0 * g).tanh()) * (er / ee).sqrt();
    let k = g / (g + 2.0 * u);
    let cga = EPS0 * ellip_ratio_kp_over_k(k);
    let coth = 1.0 / (PI * g / 4.0).tanh();
    let cgd =
        EPS0 * er / PI * coth.ln() + 0.65 * cf * (0.02 * er.sqrt() / g + 1.0 - 1.0 / (er * er));
    (cp + cf + cf_prime, cp + cf + cga + cgd)
}

impl EdgeCoupledMicrostrip {
    /// Checks the inputs for physical sense; names the field on failure.
    pub fn validate(&self) -> Result<()> {
        error::length("width", self.w)?;
        error::length("spacing", self.s)?;
        error::length("height", self.h)?;
        error::length_or_zero("thickness", self.t)?;
        error::permittivity("dk", self.er)?;
        Ok(())
    }

    fn check(&self, model: &str, bounds: &[Bound], warnings: &mut Vec<Warning>) {
        let values = [self.w / self.h, self.s / self.h, self.er, self.t / self.h];
        for (b, v) in bounds.iter().zip(values) {
            b.check(model, v, warnings);
        }
    }

    /// Kirschning–Jansen 1984 with the mode-dependent thickness correction described in the module doc.
    pub fn analyze(&self) -> Result<CoupledPair> {
        self.validate()?;
        let mut warnings = Vec::new();
        self.check("Kirschning–Jansen", &VALIDITY, &mut warnings);
        if self.t > self.w / 2.0 {
            warnings.push(Warning::new(
                "trace thicker than half its width: thickness correction is rough",
            ));
        }
        if self.t > 0.3 * self.s {
            // Measured against a field solve: Zodd comes out ≈10 % × t/s too high (3 % at t/s = 0.35).
            warnings.push(Warning::new(
                "trace thickness above 0.3 × spacing: the odd-mode thickness correction underestimates the \
                 side-wall coupling, so Zodd (and Zdiff) may be several per cent high",
            ));
        }
        let (u, g, er) = (self.w / self.h, self.s / self.h, self.er);
        let tn = self.t / self.h;
        let (u_even, u_odd, eps_factor) = if tn > 0.0 {
            let (du1, dur) = thickness_increments(u, tn, er);
            let dt = 2.0 * tn / (g * er);
            let du_even = dur * (1.0 - 0.5 * (-0.69 * dur / dt).exp());
            let factor = (z0_homogeneous(u + du1) / z0_homogeneous(u + dur)).powi(2);
            (u + du_even, u + du_even + dt, factor)
        } else {
            (u, u, 1.0)
        };
        let even = kirschning_jansen(u_even, g, er);
        let odd = kirschning_jansen(u_odd, g, er);
        let pair = CoupledPair {
            z_odd: odd.z_odd,
            z_even: even.z_even,
            eps_eff_odd: odd.eps_odd * eps_factor,
            eps_eff_even: even.eps_even * eps_factor,
            warnings,
        };
        finite_pair(pair)
    }

    /// Garg–Bahl 1979 (second opinion), zero thickness: a thickness given is ignored with a warning.
    pub fn analyze_garg_bahl(&self) -> Result<CoupledPair> {
        self.validate()?;
        let mut warnings = Vec::new();
        self.check("Garg–Bahl", &VALIDITY_GARG_BAHL, &mut warnings);
        if self.t > 0.0 {
            warnings.push(Warning::new(
                "Garg–Bahl is for zero thickness: the thickness is ignored",
            ));
        }
        let (u, g) = (self.w / self.h, self.s / self.h);
        let (ce, co) = garg_bahl_capacitances(u, g, self.er);
        let (ce_air, co_air) = garg_bahl_capacitances(u, g, 1.0);
        let pair = CoupledPair {
            z_odd: 1.0 / (C0 * (co * co_air).sqrt()),
            z_even: 1.0 / (C0 * (ce * ce_air).sqrt()),
            eps_eff_odd: co / co_air,
            eps_eff_even: ce / ce_air,
            warnings,
        };
        finite_pair(pair)
    }
}

/// Rejects a non-finite result (only possible far outside any board geometry) with an error naming the spacing.
fn finite_pair(pair: CoupledPair) -> Result<CoupledPair> {
    let values = [pair.z_odd, pair.z_even, pair.eps_eff_odd, pair.eps_eff_even];
    if values.iter().all(|v| v.is_finite() && *v > 0.0) {
        Ok(pair)
    } else {
        Err(Error::Invalid {
            field: "spacing".into(),
            reason: "the geometry is outside what the coupled-line formulas can evaluate".into(),
        })
    }
}

/// An edge-coupled microstrip pair under a solder mask or further dielectric.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CoveredEdgeCoupledMicrostrip {
    pub pair: EdgeCoupledMicrostrip,
    pub cover: Cover,
}

impl CoveredEdgeCoupledMicrostrip {
    /// Kirschning–Jansen 1984 for the uncovered pair, then the cover correction per mode (see the module doc).
    pub fn analyze(&self) -> Result<CoupledPair> {
        let bare = self.pair.analyze()?;
        if self.cover == Cover::Air {
            return Ok(bare);
        }
        let p = &self.pair;
        let mode = |z0: f64, eps_eff: f64| SingleLine {
            z0,
            eps_eff,
            warnings: Vec::new(),
        };
        let odd = crate::closed_form::coated_microstrip::apply_cover(
            &mode(bare.z_odd, bare.eps_eff_odd),
            p.h,
            p.er,
            self.cover,
        )?;
        let even = crate::closed_form::coated_microstrip::apply_cover(
            &mode(bare.z_even, bare.eps_eff_even),
            p.h,
            p.er,
            self.cover,
        )?;
        let mut warnings = bare.warnings;
        // The cover notes are the same for both modes; keep one copy.
        warnings.extend(odd.warnings);
        warnings.push(Warning::new(
            "cover correction applied per mode: rough for the odd mode, whose field crowds into the gap",
        ));
        Ok(CoupledPair {
            z_odd: odd.z0,
            z_even: even.z0,
            eps_eff_odd: odd.eps_eff,
            eps_eff_even: even.eps_eff,
            warnings,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::closed_form::microstrip::Microstrip;

    fn pair(u: f64, g: f64, tn: f64, er: f64) -> EdgeCoupledMicrostrip {
        let h = 1e-4;
        EdgeCoupledMicrostrip {
            w: u * h,
            s: g * h,
            h,
            t: tn * h,
            er,
        }
    }

    fn single(u: f64, tn: f64, er: f64) -> SingleLine {
        let h = 1e-4;
        Microstrip {
            w: u * h,
            h,
            t: tn * h,
            er,
        }
        .analyze()
        .unwrap()
    }

    #[test]
    fn huge_spacing_gives_the_single_line_for_both_modes() {
        // Exact limit: uncoupled strips. KJ's couplings vanish as g → ∞, the odd-mode one (Q10) only as g^−2.31
        // times a factor that grows with u (3e-5 left at u = 6, g = 3000); the odd-mode side-wall increment
        // Δt = 2t/(s·εr) falls as 1/g.
        for &(u, tn, er) in &[
            (0.3, 0.0, 2.2),
            (1.8, 0.0, 4.3),
            (1.8, 0.1, 4.3),
            (6.0, 0.05, 9.8),
        ] {
            let r = pair(u, 3e3, tn, er).analyze().unwrap();
            let s = single(u, tn, er);
            let tol = if u > 3.0 { 5e-5 } else { 2e-5 };
            for (z, e) in [(r.z_odd, r.eps_eff_odd), (r.z_even, r.eps_eff_even)] {
                assert!(
                    (z - s.z0).abs() / s.z0 < tol,
                    "u={u} t={tn}: {z} vs {}",
                    s.z0
                );
                assert!(
                    (e - s.eps_eff).abs() / s.eps_eff < 1e-6,
                    "u={u} t={tn}: {e}"
                );
            }
        }
    }

    #[test]
    fn odd_below_single_below_even() {
        for &u in &[0.1, 0.5, 1.0, 3.0, 10.0] {
            for &g in &[0.1, 0.3, 1.0, 3.0, 10.0] {
                for &er in &[1.0, 2.2, 4.3, 10.0, 18.0] {
                    for &tn in &[0.0, 0.05] {
                        let r = pair(u, g, tn, er).analyze().unwrap();
                        let z0 = single(u, tn, er).z0;
                        assert!(
                            r.z_odd < z0 && z0 < r.z_even,
                            "u={u} g={g} er={er}: {r:?} {z0}"
                        );
                        assert!(r.eps_eff_odd <= r.eps_eff_even * (1.0 + 1e-12), "{r:?}");
                        assert!(r.eps_eff_odd >= 1.0 - 1e-12 && r.eps_eff_even <= er + 1e-12);
                    }
                }
            }
        }
    }

    #[test]
    fn air_substrate_gives_unit_eps_eff() {
        // Exact: a homogeneous medium carries pure TEM modes with εeff = 1.
        let r = pair(1.0, 0.5, 0.0, 1.0).analyze().unwrap();
        assert!((r.eps_eff_odd - 1.0).abs() < 1e-12 && (r.eps_eff_even - 1.0).abs() < 1e-12);
        let r = pair(1.0, 0.5, 0.0, 1.0).analyze_garg_bahl().unwrap();
        assert!((r.eps_eff_odd - 1.0).abs() < 1e-12 && (r.eps_eff_even - 1.0).abs() < 1e-12);
    }

    #[test]
    fn coupling_falls_with_spacing() {
        let mut last = (0.0, f64::INFINITY);
        for i in 0..60 {
            let g = 0.05 * 1.15f64.powi(i);
            let r = pair(1.0, g, 0.03, 4.3).analyze().unwrap();
            assert!(r.z_odd > last.0 && r.z_even < last.1, "g={g}: {r:?}");
            last = (r.z_odd, r.z_even);
        }
    }

    #[test]
    fn impedances_fall_with_width() {
        let mut last = (f64::INFINITY, f64::INFINITY);
        for i in 0..40 {
            let u = 0.05 * 1.15f64.powi(i);
            let r = pair(u, 0.5, 0.03, 4.3).analyze().unwrap();
            assert!(r.z_odd < last.0 && r.z_even < last.1, "u={u}: {r:?}");
            last = (r.z_odd, r.z_even);
        }
    }

    #[test]
    fn hilberg_ratio_matches_exact_limits() {
        // K(k′)/K(k) = 1 at k = 1/√2 exactly (symmetric modulus).
        let r = ellip_ratio_kp_over_k(std::f64::consts::FRAC_1_SQRT_2);
        assert!((r - 1.0).abs() < 1e-4, "{r}");
    }

    #[test]
    fn garg_bahl_agrees_within_combined_accuracy() {
        // Two published models with 1 % (KJ) and 3 % (GB) claimed accuracy, compared inside both ranges. Measured:
        // most points agree within 3 %, the worst is Zodd at narrow gaps on high-Dk substrates (≈6 % at u = 0.5,
        // g = 0.1, εr = 9.8), above the combined claim; we allow 6.5 % and report the excess.
        let mut worst: f64 = 0.0;
        for &u in &[0.2, 0.5, 1.0, 2.0] {
            for &g in &[0.1, 0.3, 1.0, 2.0] {
                for &er in &[2.2, 4.3, 9.8] {
                    let kj = pair(u, g, 0.0, er).analyze().unwrap();
                    let gb = pair(u, g, 0.0, er).analyze_garg_bahl().unwrap();
                    worst = worst
                        .max((kj.z_odd - gb.z_odd).abs() / kj.z_odd)
                        .max((kj.z_even - gb.z_even).abs() / kj.z_even);
                }
            }
        }
        assert!(worst < 0.065, "worst {worst}");
    }

    #[test]
    fn covered_pair_limits() {
        let p = pair(1.0, 1.0, 0.0, 4.3);
        let bare = p.analyze().unwrap();
        let air_cover = CoveredEdgeCoupledMicrostrip {
            pair: p,
            cover: Cover::Mask {
                thickness_m: 20e-6,
                er: 1.0,
            },
        }
        .analyze()
        .unwrap();
        assert!((air_cover.z_odd - bare.z_odd).abs() < 1e-12 * bare.z_odd);
        let thick = CoveredEdgeCoupledMicrostrip {
            pair: p,
            cover: Cover::Dielectric {
                thickness_m: 5e-3,
                er: 4.3,
            },
        }
        .analyze()
        .unwrap();
        assert!((thick.eps_eff_odd - 4.3).abs() < 1e-9 && (thick.eps_eff_even - 4.3).abs() < 1e-9);
        let masked = CoveredEdgeCoupledMicrostrip {
            pair: p,
            cover: Cover::Mask {
                thickness_m: 20e-6,
                er: 3.5,
            },
        }
        .analyze()
        .unwrap();
        assert!(masked.z_diff() < bare.z_diff());
        assert!(masked
            .warnings
            .iter()
            .any(|w| w.message.contains("per mode")));
    }

    #[test]
    fn mode_matrices_are_symmetric_and_signed() {
        // Exact for a symmetric pair: L and C matrices are symmetric with L12 > 0 (mutual flux) and C12 < 0
        // (Maxwell mutual capacitance), and the odd/even impedances are recovered from them.
        let r = pair(1.2, 0.4, 0.05, 4.3).analyze().unwrap();
        let (l, c) = r.matrices();
        assert_eq!(l[0][1], l[1][0]);
        assert_eq!(c[0][1], c[1][0]);
        assert!(l[0][1] > 0.0 && c[0][1] < 0.0, "{l:?} {c:?}");
        let z_odd = ((l[0][0] - l[0][1]) / (c[0][0] - c[0][1])).sqrt();
        let z_even = ((l[0][0] + l[0][1]) / (c[0][0] + c[0][1])).sqrt();
        assert!((z_odd - r.z_odd).abs() < 1e-9 * r.z_odd);
        assert!((z_even - r.z_even).abs() < 1e-9 * r.z_even);
    }

    #[test]
    fn bad_inputs_name_their_field() {
        let mut p = pair(1.0, 1.0, 0.0, 4.3);
        p.s = 0.0;
        assert!(p.analyze().unwrap_err().to_string().starts_with("spacing"));
        p.s = f64::NAN;
        assert!(p.analyze().unwrap_err().to_string().starts_with("spacing"));
        let mut p = pair(1.0, 1.0, 0.0, 4.3);
        p.w = -1.0;
        assert!(p.analyze().unwrap_err().to_string().starts_with("width"));
        let mut p = pair(1.0, 1.0, 0.0, 4.3);
        p.t = f64::INFINITY;
        assert!(p
            .analyze()
            .unwrap_err()
            .to_string()
            .starts_with("thickness"));
        let mut p = pair(1.0, 1.0, 0.0, 4.3);
        p.er = 0.9;
        assert!(p.analyze().unwrap_err().to_string().starts_with("dk"));
        let mut p = pair(1.0, 1.0, 0.0, 4.3);
        p.h = 0.0;
        assert!(p.analyze().unwrap_err().to_string().starts_with("height"));
    }

    #[test]
    fn extreme_but_legal_geometry_does_not_panic() {
        // Every legal length combination either computes (with warnings) or returns an error.
        for &w in &[1e-9, 1e-6, 1e-3, 0.5] {
            for &s in &[1e-9, 1e-6, 1e-3, 0.5] {
                for &h in &[1e-9, 1e-6, 1e-3, 0.5] {
                    for &t in &[0.0, 1e-9, 1e-4, 0.5] {
                        let p = EdgeCoupledMicrostrip {
                            w,
                            s,
                            h,
                            t,
                            er: 4.0,
                        };
                        if let Ok(r) = p.analyze() {
                            assert!(r.z_odd.is_finite() && r.z_even.is_finite());
                        }
                    }
                }
            }
        }
    }
}

#[cfg(test)]
mod properties {
    //! Property tests: synthesis of the width for a Zdiff round-trips, and the impedances move the right way.
    use super::*;
    use crate::design::project::Structure;
    use crate::plan::case::LineCase;
    use crate::section::Dims;
    use crate::section::{CrossSection, Medium};
    use proptest::prelude::*;

    const H: f64 = 1e-4;

    fn cover_of(kind: u8, c_over_h: f64, em: f64) -> Cover {
        match kind {
            0 => Cover::Air,
            1 => Cover::Mask {
                thickness_m: c_over_h * H,
                er: em,
            },
            _ => Cover::Dielectric {
                thickness_m: c_over_h * H,
                er: em,
            },
        }
    }

    fn case(u: f64, g: f64, tn: f64, er: f64, cover: Cover) -> LineCase {
        LineCase {
            kind: "edge-coupled-microstrip".into(),
            cross_section: CrossSection {
                loss: Default::default(),
                layering: None,
                medium: Medium::Microstrip { h: H, er, cover },
                t: tn * H,
                references: Vec::new(),
                warnings: Vec::new(),
            },
            structure: Structure::EdgePair,
            dims: Dims {
                w: u * H,
                s: Some(g * H),
                gap: None,
            },
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(96))]

        #[test]
        fn width_synthesis_round_trips(
            u in 0.1f64..10.0, g in 0.1f64..10.0, tn in 0.0f64..0.2, er in 1.0f64..18.0,
            kind in 0u8..3, c in 0.0f64..1.5, em in 1.0f64..6.0,
        ) {
            let given = case(u, g, tn, er, cover_of(kind, c, em));
            let z = given.analyze().unwrap().analysis.controlled();
            let solved = given.solve_width(z).unwrap();
            let rel = (solved.dims.w - given.dims.w).abs() / given.dims.w;
            prop_assert!(rel < 1e-6, "w {} vs {} (rel {rel:e})", solved.dims.w, given.dims.w);
        }

        // Inside KJ's published range only: beyond it (u ≳ 15 with g ≳ 5) the fitted odd-mode term makes Zodd fall
        // slightly with spacing (found by this test); such inputs carry the out-of-range warning.
        #[test]
        fn zdiff_falls_with_width_and_rises_with_spacing(
            u in 0.1f64..10.0, g in 0.1f64..10.0, tn in 0.0f64..0.2, er in 1.0f64..18.0,
            kind in 0u8..3, c in 0.0f64..1.5, em in 1.0f64..6.0, step in 1.001f64..1.5,
        ) {
            let cover = cover_of(kind, c, em);
            let zd = |u: f64, g: f64| case(u, g, tn, er, cover).analyze().unwrap().analysis.controlled();
            let base = zd(u, g);
            prop_assert!(zd(u * step, g) < base);
            prop_assert!(zd(u, g * step) > base);
        }

        #[test]
        fn modes_bracket_the_single_line(
            u in 0.05f64..20.0, g in 0.05f64..20.0, tn in 0.0f64..0.2, er in 1.0f64..18.0,
        ) {
            let p = EdgeCoupledMicrostrip { w: u * H, s: g * H, h: H, t: tn * H, er };
            let r = p.analyze().unwrap();
            let z0 = crate::closed_form::microstrip::Microstrip { w: u * H, h: H, t: tn * H, er }.analyze().unwrap().z0;
            prop_assert!(r.z_odd < z0 && z0 < r.z_even, "{:?} vs {}", r, z0);
        }
    }
}
