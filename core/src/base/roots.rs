//! Synthesis: find the one free dimension (width or spacing) that gives a target impedance. Impedance is
//! monotonic in each dimension, so a bracketed root finder on ln(dimension) is both robust and fast.

use crate::base::error::{Error, Result};

/// The interval a dimension may take and what limits each end (shown when the target is out of reach).
#[derive(Debug, Clone)]
pub struct Bracket<'a> {
    pub lo: f64,
    pub hi: f64,
    pub lo_reason: &'a str,
    pub hi_reason: &'a str,
}

/// Relative impedance tolerance the solver stops at (tighter than the 1e-6 the rules promise).
pub const REL_TOL: f64 = 1e-10;
/// Iteration cap: no input may loop forever.
pub const MAX_ITER: usize = 200;

/// Solves `z(x) = target` for `x` in the bracket. `field` names the dimension (e.g. "width").
///
/// Illinois false position on ln x with a bisection fallback: it keeps a sign-changing bracket at every step,
/// so it cannot diverge, and converges superlinearly on the smooth curves of closed-form models.
pub fn solve(
    field: &str,
    target: f64,
    bracket: &Bracket<'_>,
    z: impl Fn(f64) -> Result<f64>,
) -> Result<f64> {
    solve_to(field, target, bracket, REL_TOL, z)
}

/// [`solve`] stopping at relative impedance distance `rel_tol` from the target (a field engine stops at a
/// fraction of its own error instead of at round-off).
pub fn solve_to(
    field: &str,
    target: f64,
    bracket: &Bracket<'_>,
    rel_tol: f64,
    z: impl Fn(f64) -> Result<f64>,
) -> Result<f64> {
    crate::base::error::positive("target", target, "Ω")?;
    if !(bracket.lo > 0.0 && bracket.hi > bracket.lo && bracket.hi.is_finite()) {
        return Err(Error::Invalid {
            field: field.to_string(),
            reason: format!(
                "empty search range {:.4e} to {:.4e} m",
                bracket.lo, bracket.hi
            ),
        });
    }
    let (mut a, mut b) = (bracket.lo.ln(), bracket.hi.ln());
    let za = z(bracket.lo)?;
    let zb = z(bracket.hi)?;
    let (mut fa, mut fb) = (za - target, zb - target);
    if fa == 0.0 {
        return Ok(bracket.lo);
    }
    if fb == 0.0 {
        return Ok(bracket.hi);
    }
    if fa.signum() == fb.signum() {
        // Both ends on the same side: say which end is closest and what holds it there.
        let (nearest, reason, at) = if fa.abs() < fb.abs() {
            (za, bracket.lo_reason, bracket.lo)
        } else {
            (zb, bracket.hi_reason, bracket.hi)
        };
        return Err(Error::Unreachable {
            field: field.to_string(),
            target,
            nearest,
            bound: reason.to_string(),
            at_m: Some(at),
        });
    }
    let mut side = 0i8;
    for _ in 0..MAX_ITER {
        let mut c = (a * fb - b * fa) / (fb - fa);
        if !c.is_finite() || c <= a.min(b) || c >= a.max(b) {
            c = 0.5 * (a + b);
        }
        let x = c.exp();
        let fc = z(x)? - target;
        if fc.abs() <= rel_tol * target || (b - a).abs() < 1e-14 {
            return Ok(x);
        }
        if fc.signum() == fb.signum() {
            b = c;
            fb = fc;
            if side == -1 {
                fa /= 2.0;
            }
            side = -1;
        } else {
            a = c;
            fa = fc;
            if side == 1 {
                fb /= 2.0;
            }
            side = 1;
        }
    }
    Err(Error::NotConverged {
        what: field.to_string(),
        iterations: MAX_ITER,
        residual: fa.abs().min(fb.abs()),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn solves_a_falling_curve() {
        let br = Bracket {
            lo: 1e-6,
            hi: 1e-2,
            lo_reason: "min",
            hi_reason: "max",
        };
        let x = solve("width", 50.0, &br, |w| Ok(1e-3 / w)).unwrap();
        assert!((x - 2e-5).abs() / 2e-5 < 1e-9);
    }

    #[test]
    fn solves_a_rising_curve() {
        let br = Bracket {
            lo: 1e-6,
            hi: 1e-2,
            lo_reason: "min",
            hi_reason: "max",
        };
        let x = solve("spacing", 62.0, &br, |s| {
            Ok(60.0 + (s * 1e4).ln().max(-50.0))
        })
        .unwrap();
        assert!(((x * 1e4).ln() + 60.0 - 62.0).abs() < 1e-6);
    }

    #[test]
    fn unreachable_target_names_the_bound() {
        let br = Bracket {
            lo: 1e-4,
            hi: 1e-2,
            lo_reason: "minimum trace width",
            hi_reason: "search limit",
        };
        let e = solve("width", 500.0, &br, |w| Ok(1e-3 / w)).unwrap_err();
        match e {
            Error::Unreachable {
                nearest,
                bound,
                at_m,
                ..
            } => {
                assert!((nearest - 10.0).abs() < 1e-9);
                assert_eq!(at_m, Some(1e-4), "the nearest lies at the bound");
                assert_eq!(bound, "minimum trace width");
            }
            other => panic!("unexpected {other:?}"),
        }
    }
}
