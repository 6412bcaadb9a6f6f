//! Microstrip dispersion: how εeff and Z0 of a surface microstrip change with frequency as the field draws into
//! the substrate.
//!
//! - εeff(f): M. Kirschning and R. H. Jansen, "Accurate model for effective dielectric constant of microstrip with
//!   validity up to millimetre-wave frequencies", Electronics Letters 18(6), 1982, pp. 272–273 (eqs. 1–2, with
//!   the normalised frequency fn = f·h in GHz·mm). Validity: 0.1 ≤ w/h ≤ 100, 1 ≤ εr ≤ 20, h/λ0 ≤ 0.13;
//!   claimed accuracy 0.6 %.
//! - Z0(f): R. H. Jansen and M. Kirschning, "Arguments and an accurate model for the power-current formulation of
//!   microstrip characteristic impedance", Archiv für Elektronik und Übertragungstechnik (AEÜ) 37, 1983,
//!   pp. 108–112 (the R1…R17 expressions). Validity: 0.1 ≤ w/h ≤ 10, 1 ≤ εr ≤ 18, fn ≤ 15.6 GHz·mm (from memory);
//!   claimed accuracy better than 1 % (from memory).
//!
//! Both are fed, like scikit-rf does by default, the width corrected for the strip thickness (Hammerstad–Jensen
//! dielectric-side Δu) and the quasi-static Z0 and εeff of the thick strip.
//!
//! Checked against: scikit-rf `MLine(disp='kirschningjansen')` `ep_reff_f` and `z0` (`tests/python/test_loss.py`),
//! and the exact limits εeff(0) = εeff0, εeff(∞) → εr (unit tests).

use crate::base::validity::{Bound, Warning};

/// Published validity of Kirschning–Jansen 1982 (εeff) and Jansen–Kirschning 1983 (Z0).
pub const VALIDITY: [Bound; 4] = [
    Bound::new("w/h", 0.1, 100.0),
    Bound::new("εr", 1.0, 20.0),
    Bound::new("f·h (GHz·mm)", 0.0, 15.6),
    Bound::new("w/h for Z0(f)", 0.1, 10.0),
];

/// εeff(f) of Kirschning–Jansen 1982: `u = w/h`, `er` the substrate Dk, `ee0` the quasi-static εeff,
/// `fn_ghz_mm = f·h` in GHz·mm.
pub fn eps_eff(u: f64, er: f64, ee0: f64, fn_ghz_mm: f64) -> f64 {
    let fnn = fn_ghz_mm;
    let p1 = 0.27488 + (0.6315 + 0.525 / (1.0 + 0.0157 * fnn).powi(20)) * u
        - 0.065683 * (-8.7513 * u).exp();
    let p2 = 0.33622 * (1.0 - (-0.03442 * er).exp());
    let p3 = 0.0363 * (-4.6 * u).exp() * (1.0 - (-(fnn / 38.7).powf(4.97)).exp());
    let p4 = 1.0 + 2.751 * (1.0 - (-(er / 15.916).powi(8)).exp());
    let p = p1 * p2 * ((0.1844 + p3 * p4) * fnn).powf(1.5763);
    er - (er - ee0) / (1.0 + p)
}

/// Z0(f) of Jansen–Kirschning 1983: `z0` the quasi-static impedance, `ee0` and `ee_f` the quasi-static and
/// dispersed εeff.
pub fn impedance(u: f64, er: f64, ee0: f64, ee_f: f64, z0: f64, fn_ghz_mm: f64) -> f64 {
    let fnn = fn_ghz_mm;
    let r1 = (0.03891 * er.powf(1.4)).min(20.0);
    let r2 = (0.2671 * u.powi(7)).min(20.0);
    let r3 = 4.766 * (-3.228 * u.powf(0.641)).exp();
    let r4 = 0.016 + (0.0514 * er).powf(4.524);
    let r5 = (fnn / 28.843).powi(12);
    let r6 = (22.20 * u.powf(1.92)).min(20.0);
    let r7 = 1.206 - 0.3144 * (-r1).exp() * (1.0 - (-r2).exp());
    let r8 =
        1.0 + 1.275 * (1.0 - (-0.004625 * r3 * er.powf(1.674) * (fnn / 18.365).powf(2.745)).exp());
    let em1_6 = (er - 1.0).powi(6);
    let r9 = 5.086 * r4 * r5 / (0.3838 + 0.386 * r4) * (-r6).exp() / (1.0 + 1.2992 * r5) * em1_6
        / (1.0 + 10.0 * em1_6);
    let r10 = 0.00044 * er.powf(2.136) + 0.0184;
    let x11 = (fnn / 19.47).powi(6);
    let r11 = x11 / (1.0 + 0.0962 * x11);
    let r12 = 1.0 / (1.0 + 0.00245 * u * u);
    let r13 = 0.9408 * ee_f.powf(r8) - 0.9603;
    let r14 = (0.9408 - r9) * ee0.powf(r8) - 0.9603;
    let r15 = 0.707 * r10 * (fnn / 12.3).powf(1.097);
    let r16 = 1.0 + 0.0503 * er * er * r11 * (1.0 - (-(u / 15.0).powi(6)).exp());
    let r17 = r7 * (1.0 - 1.1241 * r12 / r16 * (-0.026 * fnn.powf(1.15656) - r15).exp());
    z0 * (r13 / r14).powf(r17)
}

/// Dispersed (Z0, εeff) of a surface microstrip at `f_hz`, with validity warnings.
pub fn microstrip(
    u: f64,
    h_m: f64,
    er: f64,
    z0: f64,
    ee0: f64,
    f_hz: f64,
    warnings: &mut Vec<Warning>,
) -> (f64, f64) {
    let fnn = f_hz * 1e-9 * h_m * 1e3;
    VALIDITY[0].check("Kirschning–Jansen dispersion", u, warnings);
    VALIDITY[1].check("Kirschning–Jansen dispersion", er, warnings);
    VALIDITY[2].check("Kirschning–Jansen dispersion", fnn, warnings);
    VALIDITY[3].check("Jansen–Kirschning dispersion", u, warnings);
    let ee_f = eps_eff(u, er, ee0, fnn);
    let z_f = impedance(u, er, ee0, ee_f, z0, fnn);
    (z_f, ee_f)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn static_limit_and_high_frequency_limit() {
        // fn = 0 gives the quasi-static values exactly (P = 0; R13 = R14 at R9 = 0).
        let ee = eps_eff(1.9, 4.3, 3.3, 0.0);
        assert!((ee - 3.3).abs() < 1e-12);
        let z = impedance(1.9, 4.3, 3.3, 3.3, 50.0, 0.0);
        assert!((z - 50.0).abs() < 1e-9, "{z}");
        // Very high frequency: the field sits in the substrate, εeff → εr.
        let ee = eps_eff(1.9, 4.3, 3.3, 1e4);
        assert!((ee - 4.3).abs() < 1e-3, "{ee}");
    }

    #[test]
    fn eps_eff_rises_monotonically() {
        let mut last = 0.0;
        for i in 0..100 {
            let e = eps_eff(1.0, 9.8, 6.6, i as f64 * 0.3);
            assert!(e >= last);
            last = e;
        }
    }
}
