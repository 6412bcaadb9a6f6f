//! Complete elliptic integral of the first kind K(k) and the modulus ratio K(k)/K(k′) that every conformal-map
//! line model (Cohn's striplines, coplanar lines) needs, accurate over the whole range 0 < k < 1.
//!
//! Method: the arithmetic–geometric mean, K(k) = π / (2·AGM(1, k′)) with k′ = √(1 − k²) (Gauss; see e.g.
//! Abramowitz & Stegun 1964, §17.6, from memory). The AGM converges quadratically, so a handful of steps reach
//! round-off; the loop is capped at [`MAX_ITER`] anyway. The ratio is K(k)/K(k′) = AGM(1, k)/AGM(1, k′), which keeps
//! full relative accuracy at both ends provided the caller passes k and k′ each computed accurately (for example
//! k = sech x and k′ = tanh x, never k′ = √(1 − k²) from a k that has already rounded to 1).
//!
//! For extreme moduli (k or k′ below 1e-20) the AGM would need k itself, which may underflow; there the exact
//! asymptote K(k′) = ln(4/k) + O(k²·ln k) (A&S 17.3.26, from memory) is used, which is exact to double precision.
//!
//! Checked against: K(1/√2) = Γ(1/4)²/(4√π) (exact), the singular values k₂, k₃, k₄ with K(k′)/K(k) = √r
//! (exact), Landen's transformation, and the nome/theta-function relation k = θ₂²/θ₃², K(k′)/K(k) = −ln q / π
//! (exact, all ranges); through the stripline models also against mpmath's `ellipk` in `tests/python`.

use std::f64::consts::{FRAC_PI_2, LN_2};

/// Iteration cap of the arithmetic–geometric mean (it needs about six steps for double precision even for
/// k = 1e-300; the cap is only a guard).
pub const MAX_ITER: usize = 64;

/// Below this logarithm of a modulus (k < 1e-20), K(k) = π/2 and K(k′) = ln(4/k) to double precision.
const LN_SMALL: f64 = -46.0;

/// Arithmetic–geometric mean of `a` and `b` (both ≥ 0). Returns NaN for negative or NaN input.
pub fn agm(a: f64, b: f64) -> f64 {
    if !(a >= 0.0 && b >= 0.0) {
        return f64::NAN;
    }
    if a == 0.0 || b == 0.0 {
        return 0.0;
    }
    let (mut a, mut b) = (a, b);
    for _ in 0..MAX_ITER {
        if (a - b).abs() <= 4.0 * f64::EPSILON * a.max(b) {
            break;
        }
        let next = 0.5 * (a + b);
        b = (a * b).sqrt();
        a = next;
    }
    0.5 * (a + b)
}

/// Complete elliptic integral of the first kind K(k) of modulus `k` (not the parameter m = k²), 0 ≤ k < 1.
/// Returns +∞ at k = 1 and NaN outside [0, 1].
pub fn ellipk(k: f64) -> f64 {
    if !(0.0..=1.0).contains(&k) {
        return f64::NAN;
    }
    // (1 − k)(1 + k) rather than 1 − k² keeps k′ accurate as k → 1.
    ellipk_from_complement(((1.0 - k) * (1.0 + k)).sqrt())
}

/// K(k) given the complementary modulus k′ = √(1 − k²) directly (accurate as k → 1 when k′ is known).
pub fn ellipk_from_complement(kp: f64) -> f64 {
    if !(0.0..=1.0).contains(&kp) {
        return f64::NAN;
    }
    if kp == 0.0 {
        return f64::INFINITY;
    }
    if kp.ln() < LN_SMALL {
        return 4f64.ln() - kp.ln();
    }
    FRAC_PI_2 / agm(1.0, kp)
}

/// K(k)/K(k′) from a modulus and its complement, both given by the caller (k² + k′² = 1 is assumed, not checked).
/// 0 at k = 0, +∞ at k′ = 0.
pub fn ratio(k: f64, kp: f64) -> f64 {
    if !(0.0..=1.0).contains(&k) || !(0.0..=1.0).contains(&kp) {
        return f64::NAN;
    }
    if k == 0.0 {
        return 0.0;
    }
    if kp == 0.0 {
        return f64::INFINITY;
    }
    ratio_ln(k.ln(), kp.ln())
}

/// K(k)/K(k′) from the natural logarithms of k and k′ (both ≤ 0). Callers with very wide or very narrow
/// geometries pass logarithms so that a modulus like sech(800) need not be represented.
pub fn ratio_ln(ln_k: f64, ln_kp: f64) -> f64 {
    if !(ln_k <= 0.0 && ln_kp <= 0.0) {
        return f64::NAN;
    }
    if ln_k < LN_SMALL {
        // K(k) = π/2, K(k′) = ln 4 − ln k.
        return FRAC_PI_2 / (2.0 * LN_2 - ln_k);
    }
    if ln_kp < LN_SMALL {
        return (2.0 * LN_2 - ln_kp) / FRAC_PI_2;
    }
    agm(1.0, ln_k.exp()) / agm(1.0, ln_kp.exp())
}

/// ln cosh x without overflow, accurate for every finite x.
pub fn ln_cosh(x: f64) -> f64 {
    let x = x.abs();
    if x < 1.0 {
        // cosh x − 1 = 2 sinh²(x/2) keeps full relative accuracy for small x.
        (2.0 * (0.5 * x).sinh().powi(2)).ln_1p()
    } else {
        x + (-2.0 * x).exp().ln_1p() - LN_2
    }
}

/// ln sinh x for x > 0 without overflow, accurate also for small x.
pub fn ln_sinh(x: f64) -> f64 {
    if x < 1.0 {
        x.sinh().ln()
    } else {
        x + (-(-2.0 * x).exp_m1()).ln() - LN_2
    }
}

/// ln tanh x for x > 0, accurate at both ends.
pub fn ln_tanh(x: f64) -> f64 {
    ln_sinh(x) - ln_cosh(x)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    fn close(a: f64, b: f64, rel: f64) -> bool {
        (a - b).abs() <= rel * b.abs()
    }

    #[test]
    fn k_at_zero_is_half_pi() {
        // K(0) = π/2 exactly.
        assert!(close(ellipk(0.0), FRAC_PI_2, 1e-15));
    }

    #[test]
    fn k_of_one_over_root_two_is_the_lemniscate_value() {
        // Exact: K(1/√2) = Γ(1/4)²/(4√π); Γ(1/4) = 3.625609908221908311930685155867672 (known constant).
        let gamma_quarter = 3.625_609_908_221_908_f64;
        let exact = gamma_quarter * gamma_quarter / (4.0 * PI.sqrt());
        let got = ellipk(std::f64::consts::FRAC_1_SQRT_2);
        assert!(close(got, exact, 2e-15), "{got} vs {exact}");
        assert!(close(got, 1.854_074_677_301_372, 1e-15));
    }

    #[test]
    fn singular_values_give_root_r_ratios() {
        // Exact singular moduli k_r with K(k′)/K(k) = √r: k₁ = 1/√2, k₂ = √2 − 1, k₃ = (√6 − √2)/4,
        // k₄ = 3 − 2√2 (classical, from memory; each also re-derivable from the theta relation below).
        let s2 = 2f64.sqrt();
        let s6 = 6f64.sqrt();
        for (k, r) in [
            (std::f64::consts::FRAC_1_SQRT_2, 1.0),
            (s2 - 1.0, 2.0),
            ((s6 - s2) / 4.0, 3.0),
            (3.0 - 2.0 * s2, 4.0),
        ] {
            let kp = ((1.0 - k) * (1.0 + k)).sqrt();
            let got = 1.0 / ratio(k, kp);
            assert!(close(got, f64::sqrt(r), 1e-14), "r={r}: {got}");
        }
    }

    #[test]
    fn landen_transformation_holds() {
        // Exact (Landen): K((1 − k′)/(1 + k′)) = (1 + k′)/2 · K(k).
        for &k in &[0.1_f64, 0.5, 0.9, 0.999, 0.999_999] {
            let kp: f64 = ((1.0 - k) * (1.0 + k)).sqrt();
            let l = (1.0 - kp) / (1.0 + kp);
            assert!(close(ellipk(l), (1.0 + kp) / 2.0 * ellipk(k), 1e-14));
        }
    }

    /// θ₂(q), θ₃(q), θ₄(q) by Jacobi's triple products (no cancellation, unlike the alternating θ₄ series):
    /// θ₂ = 2q^¼·∏(1 − q²ⁿ)(1 + q²ⁿ)², θ₃ = ∏(1 − q²ⁿ)(1 + q²ⁿ⁻¹)², θ₄ = ∏(1 − q²ⁿ)(1 − q²ⁿ⁻¹)².
    fn thetas(q: f64) -> (f64, f64, f64) {
        let (mut t2, mut t3, mut t4) = (2.0 * q.powf(0.25), 1.0, 1.0);
        for n in 1..2000 {
            let q2n = q.powi(2 * n);
            let q2n1 = q.powi(2 * n - 1);
            t2 *= (1.0 - q2n) * (1.0 + q2n).powi(2);
            t3 *= (1.0 - q2n) * (1.0 + q2n1).powi(2);
            t4 *= (1.0 - q2n) * (1.0 - q2n1).powi(2);
            if q2n1 < 1e-18 {
                break;
            }
        }
        (t2, t3, t4)
    }

    #[test]
    fn nome_relation_holds_over_the_whole_range() {
        // Exact (Jacobi): with nome q, k = θ₂²/θ₃², k′ = θ₄²/θ₃² and K(k′)/K(k) = −ln q / π.
        for &q in &[1e-12, 1e-6, 1e-3, 0.01, 0.1, 0.3, 0.5, 0.7, 0.85] {
            let (t2, t3, t4) = thetas(q);
            let (k, kp) = ((t2 / t3).powi(2), (t4 / t3).powi(2));
            let got = 1.0 / ratio(k, kp);
            let exact = -q.ln() / PI;
            assert!(close(got, exact, 5e-14), "q={q}: {got} vs {exact}");
        }
    }

    #[test]
    fn ratio_inverts_under_swapping_and_handles_extremes() {
        for &(k, kp) in &[(0.3_f64, 0.0), (0.999, 0.0), (1e-5, 0.0)] {
            let kp = if kp == 0.0 {
                ((1.0 - k) * (1.0 + k)).sqrt()
            } else {
                kp
            };
            assert!(close(ratio(k, kp) * ratio(kp, k), 1.0, 1e-15));
        }
        // The log-form asymptote and the AGM agree where both are valid (k = 1e-19, just above the switch).
        let k = 1e-19_f64;
        let agm_form = agm(1.0, k) / agm(1.0, 1.0);
        let asym = ratio_ln(-50.0, 0.0);
        assert!(close(agm_form, FRAC_PI_2 / (4f64.ln() - k.ln()), 1e-14));
        assert!(asym.is_finite() && asym > 0.0);
        assert_eq!(ratio(0.0, 1.0), 0.0);
        assert!(ratio(1.0, 0.0).is_infinite());
        assert!(ratio(-0.1, 0.5).is_nan());
        assert!(ratio_ln(0.1, -1.0).is_nan());
        assert!(agm(f64::NAN, 1.0).is_nan());
        assert!(ellipk(1.5).is_nan());
    }

    #[test]
    fn log_helpers_are_accurate_at_both_ends() {
        for &x in &[1e-8_f64, 0.3, 0.99, 1.0, 5.0, 30.0] {
            // ln cosh x = x²/2 − x⁴/12 + … (Taylor) for small x; the direct form elsewhere.
            let reference = if x < 1e-3 {
                x * x / 2.0 - x.powi(4) / 12.0
            } else {
                x.cosh().ln()
            };
            assert!(close(ln_cosh(x), reference, 1e-14));
            assert!(close(ln_sinh(x), x.sinh().ln(), 1e-14));
            assert!(close(ln_tanh(x).exp(), x.tanh(), 1e-14));
        }
        assert!(close(ln_cosh(1000.0), 1000.0 - LN_2, 1e-15));
        assert!(close(ln_sinh(1000.0), 1000.0 - LN_2, 1e-15));
    }
}
