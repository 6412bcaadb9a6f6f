//! Synthesis of a rule's free dimension (trace width or pair spacing) on an engine, and the closed form's
//! solution that every slower engine starts from.

use crate::base::error::Result;
use crate::base::roots::{self, Bracket};
use crate::base::units::{format_length, MAX_LENGTH_M};
use crate::base::validity::Warning;
use crate::design::project::{ImpedanceRule, Project, Solve};
use crate::engine::Engine;
use crate::section::{self, CrossSection, Dims};

/// Solves the rule's free dimension on `engine` by bracketed root finding between the fabricator's minimum and
/// a hundred dielectric heights, writing the solution into `dims`; `None` when the rule solves nothing.
pub fn solve_bracketed(
    project: &Project,
    rule: &ImpedanceRule,
    cs: &CrossSection,
    engine: &Engine,
    dims: &mut Dims,
) -> Result<Option<&'static str>> {
    let scale = cs.scale_height();
    let upper = (100.0 * scale).min(MAX_LENGTH_M);
    let unit = project.units;
    match rule.solve {
        Solve::Nothing => Ok(None),
        Solve::Width => {
            let lo_reason = format!(
                "the fabricator's minimum trace width ({})",
                format_length(project.fab.min_trace_m, unit)
            );
            let hi_reason = format!("the widest trace searched ({})", format_length(upper, unit));
            let bracket = Bracket {
                lo: project.fab.min_trace_m,
                hi: upper,
                lo_reason: &lo_reason,
                hi_reason: &hi_reason,
            };
            let base = *dims;
            let w = roots::solve("width", rule.target_ohm, &bracket, |w| {
                engine.impedance(cs, rule.structure, &Dims { w, ..base })
            })?;
            dims.w = w;
            Ok(Some("width"))
        }
        Solve::Spacing => {
            let lo_reason = format!(
                "the fabricator's minimum space ({})",
                format_length(project.fab.min_space_m, unit)
            );
            let hi_reason = format!(
                "the widest spacing searched ({})",
                format_length(upper, unit)
            );
            let bracket = Bracket {
                lo: project.fab.min_space_m,
                hi: upper,
                lo_reason: &lo_reason,
                hi_reason: &hi_reason,
            };
            let base = *dims;
            let s = roots::solve("spacing", rule.target_ohm, &bracket, |s| {
                engine.impedance(cs, rule.structure, &Dims { s: Some(s), ..base })
            })?;
            dims.s = Some(s);
            Ok(Some("spacing"))
        }
    }
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
