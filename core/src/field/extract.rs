//! From capacitance matrices to line parameters, Richardson extrapolation over refinement levels, and the
//! comparison of a closed form against the field solve.
//!
//! Quasi-TEM relations (e.g. Paul, "Analysis of Multiconductor Transmission Lines", 2nd ed., 2008, ch. 3 and 5, from
//! memory): L = µ0ε0·C0⁻¹ with C0 the vacuum capacitance matrix; for one line Z0 = 1/(c·√(C·C0)) and εeff = C/C0.
//! For a pair the odd mode is driven (+V, −V) and the even mode (+V, +V); for a symmetric pair
//! C_odd = C11 − C12 and L_odd = L11 − L12 (Maxwell C12 < 0), C_even = C11 + C12, L_even = L11 + L12, and
//! Z = √(L/C), εeff = c²·L·C per mode.

use crate::base::units::{C0, EPS0, MU0};
use crate::base::validity::Warning;
use crate::section::lines::{CoupledPair, SingleLine};
use crate::section::Analysis;
use serde::Serialize;

/// Inverse of a square matrix: closed forms for 1×1 and 2×2, Gauss–Jordan beyond; `None` when singular.
pub fn inverse(m: &[Vec<f64>]) -> Option<Vec<Vec<f64>>> {
    match m.len() {
        1 if m[0][0] != 0.0 => Some(vec![vec![1.0 / m[0][0]]]),
        2 => {
            let det = m[0][0] * m[1][1] - m[0][1] * m[1][0];
            if det == 0.0 || !det.is_finite() {
                return None;
            }
            Some(vec![
                vec![m[1][1] / det, -m[0][1] / det],
                vec![-m[1][0] / det, m[0][0] / det],
            ])
        }
        n => gauss_jordan(m, n),
    }
}

/// Inverse of a small square matrix by Gauss–Jordan elimination with partial pivoting (the four conductors of two
/// neighbouring pairs); `None` when singular or not square.
fn gauss_jordan(m: &[Vec<f64>], n: usize) -> Option<Vec<Vec<f64>>> {
    if n == 0 || m.iter().any(|r| r.len() != n) {
        return None;
    }
    let mut a: Vec<Vec<f64>> = m.to_vec();
    let mut inv: Vec<Vec<f64>> = (0..n)
        .map(|i| (0..n).map(|j| f64::from(u8::from(i == j))).collect())
        .collect();
    for k in 0..n {
        let p = (k..n).max_by(|&i, &j| a[i][k].abs().total_cmp(&a[j][k].abs()))?;
        if a[p][k] == 0.0 || !a[p][k].is_finite() {
            return None;
        }
        a.swap(k, p);
        inv.swap(k, p);
        let d = a[k][k];
        for j in 0..n {
            a[k][j] /= d;
            inv[k][j] /= d;
        }
        for i in (0..n).filter(|&i| i != k) {
            let f = a[i][k];
            if f != 0.0 {
                for j in 0..n {
                    a[i][j] -= f * a[k][j];
                    inv[i][j] -= f * inv[k][j];
                }
            }
        }
    }
    Some(inv)
}

/// Inductance matrix per metre, L = µ0ε0·C0⁻¹, H/m.
pub fn inductance(c0: &[Vec<f64>]) -> Option<Vec<Vec<f64>>> {
    inverse(c0).map(|inv| {
        inv.iter()
            .map(|row| row.iter().map(|v| v * MU0 * EPS0).collect())
            .collect()
    })
}

/// Line parameters from the Maxwell capacitance matrices with (`c`) and without (`c0`) dielectrics, F/m.
/// A 2×2 pair that is not symmetric (a broadside pair with unequal heights) uses the mean self terms, which is
/// exact for a symmetric pair and an approximation otherwise.
pub fn analysis(c: &[Vec<f64>], c0: &[Vec<f64>]) -> Option<Analysis> {
    let l = inductance(c0)?;
    match c.len() {
        1 => {
            let (cc, cv) = (c[0][0], c0[0][0]);
            if cc <= 0.0 || cv <= 0.0 {
                return None;
            }
            Some(Analysis::Single(SingleLine {
                z0: 1.0 / (C0 * (cc * cv).sqrt()),
                eps_eff: cc / cv,
                warnings: Vec::new(),
            }))
        }
        2 => {
            let cs = 0.5 * (c[0][0] + c[1][1]);
            let ls = 0.5 * (l[0][0] + l[1][1]);
            let (co, ce) = (cs - c[0][1], cs + c[0][1]);
            let (lo, le) = (ls - l[0][1], ls + l[0][1]);
            if co <= 0.0 || ce <= 0.0 || lo <= 0.0 || le <= 0.0 {
                return None;
            }
            Some(Analysis::Pair(CoupledPair {
                z_odd: (lo / co).sqrt(),
                z_even: (le / ce).sqrt(),
                eps_eff_odd: C0 * C0 * lo * co,
                eps_eff_even: C0 * C0 * le * ce,
                warnings: Vec::new(),
            }))
        }
        _ => None,
    }
}

/// Richardson analysis of three values on grids refined by `ratio` each time (coarse first): the observed order
/// p = ln(|d1|/|d2|)/ln(ratio) and the extrapolated limit f2 + d2/(ratio^p − 1). `None` when the sequence is not
/// in its asymptotic range (the differences change sign, grow, or give an order outside 0.5..5).
pub fn richardson(f: [f64; 3], ratio: f64) -> Option<(f64, f64)> {
    let d1 = f[1] - f[0];
    let d2 = f[2] - f[1];
    if d2 == 0.0 && d1 == 0.0 {
        // Already exact on every grid (a field the discretisation represents exactly).
        return Some((f64::INFINITY, f[2]));
    }
    if d1 * d2 <= 0.0 || d2.abs() >= d1.abs() {
        return None;
    }
    let p = (d1.abs() / d2.abs()).ln() / ratio.ln();
    if !(0.5..=5.0).contains(&p) {
        return None;
    }
    Some((p, f[2] + d2 / (ratio.powf(p) - 1.0)))
}

/// The stated accuracy band of each closed-form family, ± % on the controlled impedance, keyed by a word of the
/// method's name. Sources: Hammerstad–Jensen 1980 claim 0.2 % for t = 0; their thickness correction is looser, so
/// we use 1.5 % with copper (common practice, no source). Cohn 1954/1955 are exact for t = 0 (we allow 0.1 % for
/// round-off and the t > 0 corrections). Wheeler 1977 states about 1 %; Kirschning–Jansen 1984 state about 1 %.
pub const CLOSED_FORM_BANDS: &[(&str, f64)] = &[
    ("Hammerstad", 1.5),
    ("Cohn", 0.1),
    ("Wheeler", 2.0),
    ("Kirschning", 1.0),
];
/// Band used for a method that is not in [`CLOSED_FORM_BANDS`] (common practice, no source).
pub const DEFAULT_BAND_PCT: f64 = 3.0;

/// The band of `method` (see [`CLOSED_FORM_BANDS`]).
pub fn band_pct(method: &str) -> f64 {
    CLOSED_FORM_BANDS
        .iter()
        .find(|(word, _)| method.contains(word))
        .map(|b| b.1)
        .unwrap_or(DEFAULT_BAND_PCT)
}

/// Closed form against field solve for one structure.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Comparison {
    /// The closed-form method, when the project has one for this structure.
    pub method: Option<&'static str>,
    /// Its controlled impedance (Z0, or Zdiff for pairs), Ω.
    pub closed_form_ohm: Option<f64>,
    /// The field solver's controlled impedance, Ω.
    pub field_ohm: f64,
    /// (closed − field)/field, %.
    pub difference_pct: Option<f64>,
    /// The closed form's stated band, %.
    pub band_pct: Option<f64>,
    /// The field solve's own error estimate, %.
    pub field_error_pct: f64,
    pub warnings: Vec<Warning>,
}

/// Compares a closed-form value with the field result and warns when the difference exceeds the closed form's
/// stated band plus the field solve's error estimate.
pub fn compare(
    closed: Option<(&'static str, f64)>,
    field_ohm: f64,
    field_error_pct: f64,
) -> Comparison {
    compare_in_band(closed, field_ohm, field_error_pct, None)
}

/// [`compare`] with the band given (the measured one of the family, `super::bands`) instead of the method's.
pub fn compare_in_band(
    closed: Option<(&'static str, f64)>,
    field_ohm: f64,
    field_error_pct: f64,
    band: Option<f64>,
) -> Comparison {
    let mut warnings = Vec::new();
    let (method, closed_form_ohm, difference_pct, band) = match closed {
        Some((method, z)) => {
            let diff = (z - field_ohm) / field_ohm * 100.0;
            let kind = if band.is_some() { "measured" } else { "stated" };
            let band = band.unwrap_or_else(|| band_pct(method));
            if diff.abs() > band + field_error_pct {
                warnings.push(Warning::new(format!(
                    "{method} differs from the field solve by {diff:+.2} %, more than its {kind} ±{band} %"
                )));
            }
            (Some(method), Some(z), Some(diff), Some(band))
        }
        None => (None, None, None, None),
    };
    Comparison {
        method,
        closed_form_ohm,
        field_ohm,
        difference_pct,
        band_pct: band,
        field_error_pct,
        warnings,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn richardson_recovers_a_known_order() {
        // f(h) = 1 + 3 h² on h = 1, 1/√2, 1/2: order 2, limit 1 (exact algebra, no source needed).
        let r = 2f64.sqrt();
        let f = [1.0 + 3.0, 1.0 + 3.0 / 2.0, 1.0 + 3.0 / 4.0];
        let (p, lim) = richardson(f, r).unwrap();
        assert!((p - 2.0).abs() < 1e-12 && (lim - 1.0).abs() < 1e-12);
        assert!(richardson([1.0, 2.0, 1.5], r).is_none());
    }

    #[test]
    fn four_by_four_inverse_times_the_matrix_is_the_identity() {
        // Two pairs' Maxwell matrix shape (diagonally dominant, negative mutual terms); needs a row swap first.
        let m = vec![
            vec![0.0, 2.0, -0.3, -0.1],
            vec![5.0, -0.6, -0.2, -0.05],
            vec![-0.3, -0.2, 5.1, -0.7],
            vec![-0.1, -0.05, -0.7, 4.9],
        ];
        let inv = inverse(&m).unwrap();
        for i in 0..4 {
            for j in 0..4 {
                let v: f64 = (0..4).map(|k| m[i][k] * inv[k][j]).sum();
                assert!(
                    (v - f64::from(u8::from(i == j))).abs() < 1e-14,
                    "({i}, {j}): {v}"
                );
            }
        }
        assert!(inverse(&[
            vec![1.0, 2.0, 3.0],
            vec![2.0, 4.0, 6.0],
            vec![0.0, 1.0, 1.0]
        ])
        .is_none());
    }

    #[test]
    fn symmetric_pair_modes_from_matrices() {
        // Air-filled symmetric pair: εeff = 1 in both modes, and C_odd = C11 − C12 (exact relations).
        let c = vec![vec![100e-12, -20e-12], vec![-20e-12, 100e-12]];
        let Some(Analysis::Pair(p)) = analysis(&c, &c) else {
            panic!("pair expected")
        };
        assert!((p.eps_eff_odd - 1.0).abs() < 1e-12 && (p.eps_eff_even - 1.0).abs() < 1e-12);
        let z_odd = 1.0 / (C0 * 120e-12);
        assert!((p.z_odd - z_odd).abs() / z_odd < 1e-12);
    }

    #[test]
    fn a_given_band_replaces_the_methods_and_is_called_measured() {
        // Arithmetic: +20 % is outside ±19 % + 0.5 % and inside ±20 % + 0.5 %.
        let c = compare_in_band(Some(("Ghione–Naldi 1983", 60.0)), 50.0, 0.5, Some(19.0));
        assert_eq!(c.band_pct, Some(19.0));
        assert!(
            c.warnings[0].message.contains("measured ±19 %"),
            "{:?}",
            c.warnings
        );
        let inside = compare_in_band(Some(("Ghione–Naldi 1983", 60.0)), 50.0, 0.5, Some(20.0));
        assert!(inside.warnings.is_empty());
    }

    #[test]
    fn comparison_warns_outside_band() {
        let c = compare(Some(("Hammerstad–Jensen 1980", 52.0)), 50.0, 0.1);
        assert_eq!(c.band_pct, Some(1.5));
        assert!((c.difference_pct.unwrap() - 4.0).abs() < 1e-12);
        assert_eq!(c.warnings.len(), 1);
        assert!(compare(Some(("Cohn 1954", 50.02)), 50.0, 0.0)
            .warnings
            .is_empty());
    }
}
