//! Crosstalk between a line (or pair) and an identical neighbour, from the multiconductor C and L matrices.
//!
//! Weak-coupling coefficients of the usual SI texts, for a victim mode u_v and an aggressor mode u_a (conductor
//! voltage patterns: one line, or a pair's +1/−1; C. R. Paul, "Analysis of Multiconductor Transmission Lines",
//! 2nd ed., 2008, ch. 7 and 10, from memory):
//! - near-end (backward) coefficient, saturated: Kb = ¼(Lm/L + Cm/C);
//! - far-end (forward) coefficient: Kf = ½(Cm/C − Lm/L), the far-end noise being Kf·(length/v)/t_rise.
//!
//! Lm/L and Cm/C are the normalised mutual terms of L and of the Maxwell C (sign-flipped: its off-diagonal terms
//! are negative for a positive coupling) between the two patterns. For a pair these are the
//! differential-to-differential terms of the mixed-mode matrices with the common modes held at zero potential; the
//! conversion to and from the common mode is left out. In a homogeneous dielectric C = εr·C0 = µε·L⁻¹ makes
//! Lm/L = Cm/C, so Kf = 0 and, for two lines, Kb = (Z0e − Z0o)/(2(Z0e + Z0o)).

use crate::base::units::C0;

/// Coupling coefficients of a victim and an aggressor mode.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Coupling {
    /// Saturated near-end coefficient Kb (fraction of the aggressor's step; positive: same polarity).
    pub backward: f64,
    /// Far-end coefficient Kf = ½(Cm/C − Lm/L): times (length/v)/t_rise gives the far-end noise.
    pub forward: f64,
    /// Velocity of the victim mode, m/s.
    pub velocity: f64,
}

impl Coupling {
    /// Near-end noise of a run of `length` m with an aggressor edge of `rise` s: Kb once the round trip 2·length/v
    /// reaches the rise time, proportionally less on a shorter run.
    pub fn near_end(&self, length: f64, rise: f64) -> f64 {
        self.backward * (2.0 * length / (self.velocity * rise)).min(1.0)
    }

    /// Far-end noise of a run of `length` m with an aggressor edge of `rise` s (the linear weak-coupling form).
    pub fn far_end(&self, length: f64, rise: f64) -> f64 {
        self.forward * length / (self.velocity * rise)
    }
}

fn form(m: &[Vec<f64>], a: &[f64], b: &[f64]) -> f64 {
    a.iter()
        .enumerate()
        .map(|(i, ai)| {
            ai * b
                .iter()
                .enumerate()
                .map(|(j, bj)| m[i][j] * bj)
                .sum::<f64>()
        })
        .sum()
}

/// The 2×2 matrix of `m` between the patterns `a` and `b`.
fn reduced(m: &[Vec<f64>], a: &[f64], b: &[f64]) -> [[f64; 2]; 2] {
    [
        [form(m, a, a), form(m, a, b)],
        [form(m, b, a), form(m, b, b)],
    ]
}

/// The coupling of `victim` and `aggressor` (voltage patterns over the conductors) from the Maxwell capacitance
/// matrices with (`c`) and without (`c0`) dielectrics, F/m. `None` when the matrices are not positive.
///
/// Both matrices are reduced to the two patterns with every other combination of voltages (a pair's common mode)
/// held at zero: C by its quadratic forms, L as the inverse of the same reduction of L⁻¹ = C0/(µ0ε0). Reducing both
/// under one condition keeps a homogeneous dielectric's L·C = µε·I, so its far-end coefficient is zero for pairs
/// too (as it is exactly: every mode travels at one velocity).
pub fn coupling(
    c: &[Vec<f64>],
    c0: &[Vec<f64>],
    victim: &[f64],
    aggressor: &[f64],
) -> Option<Coupling> {
    let cr = reduced(c, victim, aggressor);
    // L⁻¹ = C0/(µ0ε0) = c²·C0: reduced, then inverted.
    let gr = reduced(c0, victim, aggressor);
    let det = gr[0][0] * gr[1][1] - gr[0][1] * gr[1][0];
    if !(det > 0.0 && cr[0][0] > 0.0 && cr[1][1] > 0.0 && gr[0][0] > 0.0) {
        return None;
    }
    let scale = 1.0 / (C0 * C0 * det);
    let l = [
        [gr[1][1] * scale, -gr[0][1] * scale],
        [-gr[1][0] * scale, gr[0][0] * scale],
    ];
    let lm_l = l[0][1] / (l[0][0] * l[1][1]).sqrt();
    let cm_c = -cr[0][1] / (cr[0][0] * cr[1][1]).sqrt();
    // The victim's velocity from the mean of the two coupled modes' L·C (half the trace of L·C): exact for a
    // homogeneous dielectric and the mean of the even and odd modes for a symmetric pair.
    let lc =
        0.5 * (l[0][0] * cr[0][0] + l[0][1] * cr[1][0] + l[1][0] * cr[0][1] + l[1][1] * cr[1][1]);
    let velocity = 1.0 / lc.sqrt();
    let k = Coupling {
        backward: 0.25 * (lm_l + cm_c),
        forward: 0.5 * (cm_c - lm_l),
        velocity,
    };
    (k.backward.is_finite()
        && k.forward.is_finite()
        && velocity > 0.0
        && velocity <= C0 * (1.0 + 1e-9))
        .then_some(k)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::field::extract;

    /// A symmetric two-line Maxwell matrix from self and mutual terms (F/m, mutual given as a positive coupling).
    fn pair(self_c: f64, mutual: f64) -> Vec<Vec<f64>> {
        vec![vec![self_c, -mutual], vec![-mutual, self_c]]
    }

    #[test]
    fn homogeneous_lines_have_no_far_end_coupling_and_the_mode_impedance_near_end() {
        // Exact for a homogeneous dielectric (C = εr·C0): Kf = 0, Kb = (Z0e − Z0o)/(2(Z0e + Z0o)) from the modes.
        let er = 4.2;
        let c0 = pair(40e-12, 6e-12);
        let c: Vec<Vec<f64>> = c0
            .iter()
            .map(|r| r.iter().map(|v| er * v).collect())
            .collect();
        let k = coupling(&c, &c0, &[1.0, 0.0], &[0.0, 1.0]).unwrap();
        assert!(k.forward.abs() < 1e-15, "{k:?}");
        let mode = |cc: f64, cv: f64| 1.0 / (C0 * (cc * cv).sqrt());
        let (ze, zo) = (
            mode(c[0][0] + c[0][1], c0[0][0] + c0[0][1]),
            mode(c[0][0] - c[0][1], c0[0][0] - c0[0][1]),
        );
        let want = (ze - zo) / (2.0 * (ze + zo));
        assert!(
            (k.backward - want).abs() < 1e-14,
            "{} vs {want}",
            k.backward
        );
        // Homogeneous: every mode at c/√εr.
        assert!(
            (k.velocity / (C0 / er.sqrt()) - 1.0).abs() < 1e-12,
            "{}",
            k.velocity
        );
    }

    #[test]
    fn inhomogeneous_lines_couple_forward_with_the_sign_of_cm_c_less_lm_l() {
        // Microstrip-like: the dielectric raises C11 more than C12 (field lines between the traces run partly in
        // air), so Cm/C < Lm/L and the far-end noise is negative (common knowledge of microstrip, no source).
        let c0 = pair(40e-12, 6e-12);
        let c = pair(40e-12 * 3.2, 6e-12 * 2.4);
        let k = coupling(&c, &c0, &[1.0, 0.0], &[0.0, 1.0]).unwrap();
        let l = extract::inductance(&c0).unwrap();
        let (lm_l, cm_c) = (l[0][1] / l[0][0], 6e-12 * 2.4 / (40e-12 * 3.2));
        assert!((k.forward - 0.5 * (cm_c - lm_l)).abs() < 1e-15);
        assert!(k.forward < 0.0 && k.backward > 0.0);
        // The near end saturates once the round trip reaches the rise time; the far end grows with length.
        let rise = 50e-12;
        let saturation = 0.5 * k.velocity * rise;
        assert_eq!(k.near_end(2.0 * saturation, rise), k.backward);
        assert!((k.near_end(0.5 * saturation, rise) - 0.5 * k.backward).abs() < 1e-15);
        assert!((k.far_end(0.1, rise) - 2.0 * k.far_end(0.05, rise)).abs() < 1e-15);
    }

    #[test]
    fn pairs_in_a_homogeneous_dielectric_have_no_far_end_coupling() {
        // Four lines in a row, each coupled to every other, in one dielectric: the differential patterns are not
        // modes of the four, yet the far end vanishes (every mode travels at c/√εr) and the near end is positive
        // for the facing lines driven alike.
        let er = 3.9;
        let c0 = vec![
            vec![42e-12, -5e-12, -0.8e-12, -0.2e-12],
            vec![-5e-12, 43e-12, -3e-12, -0.8e-12],
            vec![-0.8e-12, -3e-12, 43e-12, -5e-12],
            vec![-0.2e-12, -0.8e-12, -5e-12, 42e-12],
        ];
        let c: Vec<Vec<f64>> = c0
            .iter()
            .map(|r| r.iter().map(|v| er * v).collect())
            .collect();
        // Pair A is lines 0, 1 (1 nearest), pair B lines 2, 3 (2 nearest): +1 on the inner lines.
        let k = coupling(&c, &c0, &[-1.0, 1.0, 0.0, 0.0], &[0.0, 0.0, 1.0, -1.0]).unwrap();
        assert!(k.forward.abs() < 1e-15, "{k:?}");
        assert!(k.backward > 0.0 && k.backward < 0.25, "{k:?}");
        assert!((k.velocity / (C0 / er.sqrt()) - 1.0).abs() < 1e-12, "{k:?}");
        // A pair couples less than its inner line alone does: its outer line cancels part of the field.
        let single = coupling(&c, &c0, &[0.0, 1.0, 0.0, 0.0], &[0.0, 0.0, 1.0, 0.0]).unwrap();
        assert!(k.backward < single.backward, "{k:?} {single:?}");
    }
}
