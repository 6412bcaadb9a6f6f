//! Synthesis of a rule's free dimension (trace width or pair spacing) on an engine, and the closed form's
//! solution that every slower engine starts from.

use crate::base::error::Result;
use crate::base::roots::{self, Bracket};
use crate::base::units::{format_length, MAX_LENGTH_M};
use crate::base::validity::Warning;
use crate::design::project::{ImpedanceRule, Project, Solve};
use crate::engine::Engine;
use crate::section::{self, CrossSection, Dims};

/// Relative distance from the target at which a field engine's synthesis stops. Far below the engine's 0.1 %, so
/// that the app (WASM) and the CLI (native), whose libm differ in the last bits, give the same widths to ~1e-6.
pub const FIELD_TOLERANCE: f64 = 1e-6;
/// Most field solves of the secant start of [`solve_near`] before it falls back to the bracket.
const SECANT_STEPS: usize = 8;
/// Half-width (a factor) of the first bracket a field engine searches around the closed form's answer.
const NEAR_FACTOR: f64 = 1.25;
/// Largest change of the free dimension in one secant step.
const MAX_SECANT_RATIO: f64 = 2.0;

/// `engine` for solves whose error estimate nobody reads (a synthesis's iterates, the spread's fit): the fast
/// field engine on its fine mesh alone, which gives the same impedance as the full solve. Other engines unchanged.
pub fn without_estimate(engine: &Engine) -> Engine {
    match *engine {
        Engine::Field {
            options,
            etch_factor,
        } => Engine::Field {
            options: crate::field::boundary::BemOptions {
                estimate: false,
                ..options
            },
            etch_factor,
        },
        other => other,
    }
}

/// Solves the rule's free dimension on `engine` by bracketed root finding between the fabricator's minimum and
/// a hundred dielectric heights, writing the solution into `dims`; `None` when the rule solves nothing.
pub fn solve_bracketed(
    project: &Project,
    rule: &ImpedanceRule,
    cs: &CrossSection,
    engine: &Engine,
    dims: &mut Dims,
) -> Result<Option<&'static str>> {
    solve_in(project, rule, cs, engine, dims, None, roots::REL_TOL)
}

/// Solves the free dimension on a field engine, starting from the closed form's answer in `dims`: secant steps in
/// log–log from there, the first along the closed form's own slope (Z is close to a power of the dimension, so
/// three or four solves reach [`FIELD_TOLERANCE`]), anywhere within the fabricator's limits and the search range;
/// if they leave those or do not converge, bracketed root finding in the bracket a factor [`NEAR_FACTOR`] either
/// side of the start, then over the whole search range when the target lies outside it.
pub fn solve_near(
    project: &Project,
    rule: &ImpedanceRule,
    cs: &CrossSection,
    engine: &Engine,
    dims: &mut Dims,
) -> Result<Option<&'static str>> {
    let start = match rule.solve {
        Solve::Nothing => return Ok(None),
        Solve::Width => dims.w,
        Solve::Spacing => dims.s.unwrap_or(dims.w),
    };
    let lower = match rule.solve {
        Solve::Spacing => project.fab.min_space_m,
        _ => project.fab.min_trace_m,
    };
    let upper = (100.0 * cs.scale_height()).min(MAX_LENGTH_M);
    if let Some(x) = secant_near(rule, cs, engine, dims, start, (lower, upper)) {
        match rule.solve {
            Solve::Spacing => dims.s = Some(x),
            _ => dims.w = x,
        }
        return Ok(Some(match rule.solve {
            Solve::Spacing => "spacing",
            _ => "width",
        }));
    }
    let mut near = *dims;
    match solve_in(
        project,
        rule,
        cs,
        engine,
        &mut near,
        Some(start),
        FIELD_TOLERANCE,
    ) {
        Ok(solved) => {
            *dims = near;
            Ok(solved)
        }
        Err(_) => solve_in(project, rule, cs, engine, dims, None, FIELD_TOLERANCE),
    }
}

/// Secant iteration in (ln x, ln Z) from `start` on `engine`, the first slope the closed form's; `None` when a
/// solve fails, a step leaves `(lo, hi)` (the fabricator's limits and the search range), or it has not converged
/// after [`SECANT_STEPS`] solves (the caller then brackets).
fn secant_near(
    rule: &ImpedanceRule,
    cs: &CrossSection,
    engine: &Engine,
    dims: &Dims,
    start: f64,
    (lo, hi): (f64, f64),
) -> Option<f64> {
    let engine = without_estimate(engine);
    let at = |engine: &Engine, x: f64| -> Option<f64> {
        let d = match rule.solve {
            Solve::Spacing => Dims {
                s: Some(x),
                ..*dims
            },
            _ => Dims { w: x, ..*dims },
        };
        engine
            .impedance(cs, rule.structure, &d)
            .ok()
            .filter(|z| z.is_finite() && *z > 0.0)
    };
    let target = rule.target_ohm;
    // d ln Z / d ln x of the closed form at the start (a central difference of ±1 %).
    let step = 1.01f64;
    let mut slope = (at(&Engine::ClosedForm, start * step)?.ln()
        - at(&Engine::ClosedForm, start / step)?.ln())
        / (2.0 * step.ln());
    let (mut x, mut z) = (start, at(&engine, start)?);
    for _ in 0..SECANT_STEPS {
        if (z - target).abs() <= FIELD_TOLERANCE * target {
            return Some(x);
        }
        if !(slope.is_finite() && slope.abs() > 1e-6) {
            return None;
        }
        // At most a factor MAX_SECANT_RATIO a step: the closed form's slope can be far from the field's where its
        // start is far off (a plane-less coplanar pair: 14 % high at the closed form's width).
        let next = x
            * ((target.ln() - z.ln()) / slope)
                .exp()
                .clamp(1.0 / MAX_SECANT_RATIO, MAX_SECANT_RATIO);
        if !(next >= lo && next <= hi) {
            return None;
        }
        let zn = at(&engine, next)?;
        slope = (zn.ln() - z.ln()) / (next.ln() - x.ln());
        (x, z) = (next, zn);
    }
    ((z - target).abs() <= FIELD_TOLERANCE * target).then_some(x)
}

/// Bracketed root finding of the free dimension; `near` narrows the bracket to [`NEAR_FACTOR`] around a start.
fn solve_in(
    project: &Project,
    rule: &ImpedanceRule,
    cs: &CrossSection,
    engine: &Engine,
    dims: &mut Dims,
    near: Option<f64>,
    rel_tol: f64,
) -> Result<Option<&'static str>> {
    let scale = cs.scale_height();
    let upper = (100.0 * scale).min(MAX_LENGTH_M);
    let unit = project.units;
    let (name, lower, lo_reason) = match rule.solve {
        Solve::Nothing => return Ok(None),
        Solve::Width => (
            "width",
            project.fab.min_trace_m,
            format!(
                "the fabricator's minimum trace width ({})",
                format_length(project.fab.min_trace_m, unit)
            ),
        ),
        Solve::Spacing => (
            "spacing",
            project.fab.min_space_m,
            format!(
                "the fabricator's minimum space ({})",
                format_length(project.fab.min_space_m, unit)
            ),
        ),
    };
    let hi_reason = format!(
        "the widest {name} searched ({})",
        format_length(upper, unit)
    );
    let (lo, hi) = match near {
        Some(x) => ((x / NEAR_FACTOR).max(lower), (x * NEAR_FACTOR).min(upper)),
        None => (lower, upper),
    };
    let bracket = Bracket {
        lo,
        hi,
        lo_reason: &lo_reason,
        hi_reason: &hi_reason,
    };
    let base = *dims;
    // The iterates need the impedance only; the rule's analysis at the answer carries the error estimate.
    let engine = &without_estimate(engine);
    let x = roots::solve_to(name, rule.target_ohm, &bracket, rel_tol, |x| {
        let d = match rule.solve {
            Solve::Spacing => Dims { s: Some(x), ..base },
            _ => Dims { w: x, ..base },
        };
        engine.impedance(cs, rule.structure, &d)
    })?;
    match rule.solve {
        Solve::Spacing => dims.s = Some(x),
        _ => dims.w = x,
    }
    Ok(Some(name))
}

/// Where a slower engine's solve of `rule` starts: the closed form's solved dimensions and its (method, impedance),
/// or, when the closed form fails, the rule's own dimensions and a note saying so.
pub fn closed_form_start(
    project: &Project,
    rule: &ImpedanceRule,
) -> (Dims, Option<(&'static str, f64)>, Option<Warning>) {
    let given = Dims {
        w: rule.width_m,
        s: rule.spacing_m,
        gap: rule.gap_m,
    };
    let closed = (|| {
        rule.validate(&project.stackup)?;
        let cs = section::resolve(&project.stackup, rule)?;
        let mut dims = given;
        solve_bracketed(project, rule, &cs, &Engine::ClosedForm, &mut dims)?;
        let answer = Engine::ClosedForm.analyze(&cs, rule.structure, &dims)?;
        Ok::<_, crate::base::error::Error>((dims, answer.method, answer.controlled()))
    })();
    match closed {
        Ok((dims, method, z)) => (dims, Some((method, z)), None),
        Err(e) => (
            given,
            None,
            Some(Warning::new(format!(
                "no closed-form result ({e}); the field solve starts from the rule's dimensions as given"
            ))),
        ),
    }
}
