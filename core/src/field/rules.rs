//! Closed form against field solve for the rules of a project: each rule's solved dimensions are re-analysed by the
//! field solver (with the project's etch factor) and the two controlled impedances compared.

use super::{compare, solve_cross_section, Comparison, FieldOptions, FieldResult};
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

/// Field-checks one rule of `project`.
pub fn check_rule(
    project: &Project,
    rule: &ImpedanceRule,
    options: FieldOptions,
) -> Result<RuleCheck> {
    rule.validate(&project.stackup)?;
    let cs = cross_section::resolve(&project.stackup, rule)?;
    let mut notes = Vec::new();
    let (dims, closed) = match analyze_rule(project, rule) {
        Ok(r) => (
            Dims {
                w: r.width_m,
                s: r.spacing_m,
                gap: r.gap_m,
            },
            Some((r.method, r.impedance_ohm)),
        ),
        Err(e) => {
            notes.push(Warning::new(format!(
                "no closed-form result ({e}); the field solve uses the rule's dimensions as given"
            )));
            (
                Dims {
                    w: rule.width_m,
                    s: rule.spacing_m,
                    gap: rule.gap_m,
                },
                None,
            )
        }
    };
    let etch = project.fab.etch_factor;
    let field = solve_cross_section(&cs, rule.structure, &dims, etch, options)?;
    let mut comparison = compare(closed, field.controlled_ohm, field.error_estimate_pct);
    if etch.is_some() && closed.is_some() {
        notes.push(Warning::new(
            "the field solve models the etched (trapezoidal) trace; the closed form may not",
        ));
    }
    comparison.warnings.extend(notes);
    Ok(RuleCheck {
        name: rule.name.clone(),
        layer: rule.layer.clone(),
        family: cs.family(),
        structure: rule.structure.label(),
        width_m: dims.w,
        spacing_m: dims.s,
        gap_m: dims.gap,
        etch_factor: etch,
        comparison,
        field,
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
        let p = crate::demo::project();
        let checks = check_project(&p, FieldOptions::default());
        assert_eq!(checks.len(), p.rules.len());
        let first = checks[0].1.as_ref().expect("the first demo rule solves");
        assert!(first.comparison.closed_form_ohm.is_some());
        assert!(first.field.controlled_ohm > 20.0 && first.field.controlled_ohm < 120.0);
    }
}
