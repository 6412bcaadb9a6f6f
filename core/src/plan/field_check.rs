//! Closed form against field solve for the rules of a project: each rule's solved dimensions are re-analysed by the
//! field solver (with the project's etch factor) and the two controlled impedances compared.

use crate::base::error::Result;
use crate::base::validity::Warning;
use crate::closed_form::bands;
use crate::design::project::{ImpedanceRule, Project};
use crate::field::{build, Comparison, FieldOptions, FieldResult, FieldSolve, Progress};
use crate::section;
use crate::section::Dims;
use serde::Serialize;

/// One rule checked by the field solver.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RuleCheck {
    pub name: String,
    pub layer: String,
    pub family: &'static str,
    pub structure: &'static str,
    /// The dimensions solved by the closed form (or as given when there is none), m.
    pub width_m: f64,
    pub spacing_m: Option<f64>,
    pub gap_m: Option<f64>,
    pub etch_factor: Option<f64>,
    pub comparison: Comparison,
    pub field: FieldResult,
}

/// A field check of one rule that runs in slices, so a browser page stays responsive: [`RuleFieldJob::start`],
/// then [`RuleFieldJob::step`] until `done`, then [`RuleFieldJob::finish`]. [`check_rule`] runs it in one go.
pub struct RuleFieldJob {
    solve: FieldSolve,
    name: String,
    layer: String,
    family: &'static str,
    structure: &'static str,
    /// The closed form's measured band for this cross-section (`closed_form::bands`).
    band: Option<f64>,
    dims: Dims,
    etch: Option<f64>,
    closed: Option<(&'static str, f64)>,
    notes: Vec<Warning>,
}

impl RuleFieldJob {
    /// Resolves the rule, takes the closed form's solved dimensions (or the rule's own when there is no closed
    /// form), and sets up the field solve.
    pub fn start(
        project: &Project,
        rule: &ImpedanceRule,
        options: FieldOptions,
    ) -> Result<RuleFieldJob> {
        rule.validate(&project.stackup)?;
        let cs = section::resolve(&project.stackup, rule)?;
        let (dims, closed, note) = crate::plan::synthesis::closed_form_start(project, rule);
        let mut notes: Vec<Warning> = note.into_iter().collect();
        let etch = project.fab.etch_factor;
        if etch.is_some() && closed.is_some() {
            notes.push(Warning::new(
                "the field solve models the etched (trapezoidal) trace; the closed form may not",
            ));
        }
        let solve = FieldSolve::new(build(&cs, rule.structure, &dims, etch)?, options)?;
        Ok(RuleFieldJob {
            solve,
            name: rule.name.clone(),
            layer: rule.layer.clone(),
            family: cs.family_for(rule.structure),
            structure: rule.structure.label(),
            band: bands::measured_for(&cs, rule.structure, &dims),
            dims,
            etch,
            closed,
            notes,
        })
    }

    /// Does about `work_budget` units of work (see [`FieldSolve::step`]).
    pub fn step(&mut self, work_budget: usize) -> Progress {
        self.solve.step(work_budget)
    }

    /// Runs the rest of the solve (blocking; bounded by the options' caps).
    pub fn run(&mut self) {
        self.solve.run();
    }

    /// The sampled potential of the finished solve, for a picture (`None` before it is done or if it failed).
    pub fn potential_map(&self) -> Option<crate::field::PotentialMap> {
        self.solve.potential_map()
    }

    /// The rule's name.
    pub fn name(&self) -> &str {
        &self.name
    }

    /// The check, once the solve is done.
    pub fn finish(&self) -> Option<Result<RuleCheck>> {
        let field = match self.solve.result()? {
            Ok(f) => f,
            Err(e) => return Some(Err(e)),
        };
        let mut comparison = crate::field::extract::compare_in_band(
            self.closed,
            field.controlled_ohm,
            field.error_estimate_pct,
            self.band,
        );
        comparison.warnings.extend(self.notes.iter().cloned());
        Some(Ok(RuleCheck {
            name: self.name.clone(),
            layer: self.layer.clone(),
            family: self.family,
            structure: self.structure,
            width_m: self.dims.w,
            spacing_m: self.dims.s,
            gap_m: self.dims.gap,
            etch_factor: self.etch,
            comparison,
            field,
        }))
    }
}

/// Field-checks one rule of `project` (blocking; bounded by the options' caps).
pub fn check_rule(
    project: &Project,
    rule: &ImpedanceRule,
    options: FieldOptions,
) -> Result<RuleCheck> {
    let mut job = RuleFieldJob::start(project, rule, options)?;
    job.run();
    job.finish().unwrap_or_else(|| {
        Err(crate::base::error::Error::NotConverged {
            what: "field solve".into(),
            iterations: 0,
            residual: f64::NAN,
        })
    })
}

/// Field-checks every rule; a rule that fails carries its error message.
pub fn check_project(
    project: &Project,
    options: FieldOptions,
) -> Vec<(String, std::result::Result<RuleCheck, String>)> {
    project
        .rules
        .iter()
        .map(|r| {
            (
                r.name.clone(),
                check_rule(project, r, options).map_err(|e| e.to_string()),
            )
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn demo_rules_get_a_field_check() {
        let p = crate::design::demo::project();
        let checks = check_project(&p, FieldOptions::default());
        assert_eq!(checks.len(), p.rules.len());
        let first = checks[0].1.as_ref().expect("the first demo rule solves");
        assert!(first.comparison.closed_form_ohm.is_some());
        assert!(first.field.controlled_ohm > 20.0 && first.field.controlled_ohm < 120.0);
    }
}
