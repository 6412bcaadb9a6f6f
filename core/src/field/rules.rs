//! Closed form against field solve for the rules of a project: each rule's solved dimensions are re-analysed by the
//! field solver (with the project's etch factor) and the two controlled impedances compared.

use super::{build, Comparison, FieldOptions, FieldResult, FieldSolve, Progress};
use crate::cross_section;
use crate::error::Result;
use crate::models::Dims;
use crate::plan::analyze_rule;
use crate::project::{ImpedanceRule, Project};
use crate::validity::Warning;
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
    /// The closed form's measured band for this cross-section (`super::bands`).
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
        let cs = cross_section::resolve(&project.stackup, rule)?;
        let (dims, closed, note) = starting_dims(project, rule);
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
            band: super::bands::measured_for(&cs, rule.structure, &dims),
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
    pub fn potential_map(&self) -> Option<super::PotentialMap> {
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
        let mut comparison = super::extract::compare_in_band(
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

/// Where a field solve of `rule` starts: the closed form's dimensions and its (method, impedance), or, when the
/// closed form fails, the rule's own dimensions and a note saying so.
pub(crate) fn starting_dims(
    project: &Project,
    rule: &ImpedanceRule,
) -> (Dims, Option<(&'static str, f64)>, Option<Warning>) {
    match analyze_rule(project, rule) {
        Ok(r) => (
            Dims {
                w: r.width_m,
                s: r.spacing_m,
                gap: r.gap_m,
            },
            Some((r.method, r.impedance_ohm)),
            None,
        ),
        Err(e) => (
            Dims {
                w: rule.width_m,
                s: rule.spacing_m,
                gap: rule.gap_m,
            },
            None,
            Some(Warning::new(format!(
                "no closed-form result ({e}); the field solve starts from the rule's dimensions as given"
            ))),
        ),
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
        Err(crate::error::Error::NotConverged {
            what: "field solve".into(),
            iterations: 0,
            residual: f64::NAN,
        })
    })
}

/// The field solver as the impedance model of a tolerance spread, for `ohmstack spread --model field`: every call
/// is a whole field solve, so use it with the quadratic response surface (about 1 + 2n + 2n(n−1) solves per rule for
/// n varied parameters), which the spread then samples.
#[derive(Debug, Clone, Copy)]
pub struct FieldModel {
    /// The project's etch factor (trapezoidal traces), if any.
    pub etch_factor: Option<f64>,
    pub options: FieldOptions,
}

impl crate::spread::ImpedanceModel for FieldModel {
    fn impedance(
        &self,
        cs: &crate::cross_section::CrossSection,
        structure: crate::project::Structure,
        dims: &Dims,
    ) -> Result<f64> {
        super::solve_cross_section(cs, structure, dims, self.etch_factor, self.options)
            .map(|r| r.controlled_ohm)
    }
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
        let p = crate::demo::project();
        let checks = check_project(&p, FieldOptions::default());
        assert_eq!(checks.len(), p.rules.len());
        let first = checks[0].1.as_ref().expect("the first demo rule solves");
        assert!(first.comparison.closed_form_ohm.is_some());
        assert!(first.field.controlled_ohm > 20.0 && first.field.controlled_ohm < 120.0);
    }
}
