//! The one engine boundary: every engine answers the same question — this resolved cross-section, this structure,
//! these dimensions → the line's modes (Z, εeff, L, C per mode), the method that made them, and an error estimate
//! where the engine has one. Planning, synthesis, loss and the tolerance spread are written once against
//! [`Engine`]; they never ask which formula or solver made a figure.
//!
//! Engines today: the closed forms ([`crate::closed_form`], instant, with validity notes and a measured band), the
//! fast 2D field engine ([`crate::field::boundary`], boundary elements, milliseconds, within 0.1 % of the exact
//! results and of the reference) and the 2D finite-volume field solver ([`crate::field`], the independent
//! reference, up to seconds, with a Richardson error estimate). A new engine is one more variant here and one more
//! arm in [`Engine::analyze`].

use crate::base::error::Result;
use crate::closed_form;
use crate::design::project::{ImpedanceRule, Project, RuleModel, Structure};
use crate::field::boundary::{self, BemOptions};
use crate::field::{self, FieldOptions, FieldResult};
use crate::section::{Analysis, CrossSection, Dims};
use serde::{Deserialize, Serialize};

/// Method name of the reference field solver's figures (shown in the results and fab notes).
pub const FIELD_METHOD: &str = "2D field solver (finite volumes, extrapolated)";
/// Method name of the fast field engine's figures.
pub const BOUNDARY_METHOD: &str = "2D field solver (boundary elements)";

/// Whether `method` names one of the field engines (its figures need no field check and carry no closed-form band).
pub fn is_field_method(method: &str) -> bool {
    method == FIELD_METHOD || method == BOUNDARY_METHOD
}

/// Which engine answers, with what it needs beyond the cross-section.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Engine {
    /// The published closed-form models (one family per structure).
    ClosedForm,
    /// The fast 2D field engine (boundary elements): the field figure of a rule. `etch_factor` makes the traces
    /// trapezoids (the closed forms ignore it).
    Field {
        options: BemOptions,
        etch_factor: Option<f64>,
    },
    /// The 2D finite-volume field solver: the independent reference the fast engine is checked against.
    Reference {
        options: FieldOptions,
        etch_factor: Option<f64>,
    },
}

/// One engine's answer for one cross-section.
#[derive(Debug, Clone, PartialEq)]
pub struct Answer {
    /// The modes: one for a single line, odd and even for a pair (with the model's validity notes).
    pub analysis: Analysis,
    /// The published method or solver that made the figures.
    pub method: &'static str,
    /// Estimated relative error of the controlled impedance, %, when the engine estimates one (the closed forms
    /// state their band in docs/accuracy.md instead).
    pub error_estimate_pct: Option<f64>,
    /// The whole field solution (C, C0 and L matrices, levels), when a field solver answered.
    pub field: Option<Box<FieldResult>>,
}

impl Answer {
    /// The controlled impedance: Z0 for a single line, Zdiff for a pair.
    pub fn controlled(&self) -> f64 {
        self.analysis.controlled()
    }
}

impl Engine {
    /// The engine a rule asked for (its `model`), with the project's etch factor for the field solver.
    pub fn for_rule(project: &Project, rule: &ImpedanceRule) -> Engine {
        match rule.model {
            RuleModel::ClosedForm => Engine::ClosedForm,
            RuleModel::FieldSolver => Engine::field(project),
        }
    }

    /// The fast field engine with the project's etch factor.
    pub fn field(project: &Project) -> Engine {
        Engine::Field {
            options: BemOptions::default(),
            etch_factor: project.fab.etch_factor,
        }
    }

    /// The reference field solver with the project's etch factor.
    pub fn reference(project: &Project) -> Engine {
        Engine::Reference {
            options: FieldOptions::default(),
            etch_factor: project.fab.etch_factor,
        }
    }

    /// Reads an engine name as the CLI takes it: `closed-form`, `field` or `reference`.
    pub fn named(name: &str, project: &Project) -> Option<Engine> {
        match name {
            "closed-form" | "closed_form" => Some(Engine::ClosedForm),
            "field" => Some(Engine::field(project)),
            "reference" => Some(Engine::reference(project)),
            _ => None,
        }
    }

    /// Short name for results and notes.
    pub fn name(&self) -> &'static str {
        match self {
            Engine::ClosedForm => "closed form",
            Engine::Field { .. } => "field engine",
            Engine::Reference { .. } => "reference field solver",
        }
    }

    /// The method name its figures carry (the closed form's varies by family; this names the engine).
    pub fn method_name(&self) -> &'static str {
        match self {
            Engine::ClosedForm => "closed-form model",
            Engine::Field { .. } => BOUNDARY_METHOD,
            Engine::Reference { .. } => FIELD_METHOD,
        }
    }

    /// The field engine whose figures carry `method` (`None` for a closed form's).
    pub fn that_made(method: &str, project: &Project) -> Option<Engine> {
        match method {
            BOUNDARY_METHOD => Some(Engine::field(project)),
            FIELD_METHOD => Some(Engine::reference(project)),
            _ => None,
        }
    }

    /// Whether this is the instant closed form (synthesis then needs no refinement beyond it).
    pub fn is_closed_form(&self) -> bool {
        matches!(self, Engine::ClosedForm)
    }

    /// Analyses `structure` with dimensions `dims` on the cross-section `cs`.
    pub fn analyze(&self, cs: &CrossSection, structure: Structure, dims: &Dims) -> Result<Answer> {
        match *self {
            Engine::ClosedForm => {
                let e = closed_form::evaluate(cs, structure, dims)?;
                Ok(Answer {
                    analysis: e.analysis,
                    method: e.method,
                    error_estimate_pct: None,
                    field: None,
                })
            }
            Engine::Field {
                options,
                etch_factor,
            } => {
                let g = field::build(cs, structure, dims, etch_factor)?;
                let r = boundary::solve(&g, &options)?;
                Ok(Answer::from_field_with(r, BOUNDARY_METHOD))
            }
            Engine::Reference {
                options,
                etch_factor,
            } => {
                let r = field::solve_cross_section(cs, structure, dims, etch_factor, options)?;
                Ok(Answer::from_field(r))
            }
        }
    }

    /// The controlled impedance alone (Z0, or Zdiff for a pair).
    pub fn impedance(&self, cs: &CrossSection, structure: Structure, dims: &Dims) -> Result<f64> {
        match *self {
            // Skips building the answer: the spread calls this thousands of times.
            Engine::ClosedForm => {
                closed_form::evaluate(cs, structure, dims).map(|e| e.analysis.controlled())
            }
            Engine::Field { .. } | Engine::Reference { .. } => {
                self.analyze(cs, structure, dims).map(|a| a.controlled())
            }
        }
    }
}

/// One mode of a field solve with what the loss model needs beyond Z and εeff.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ModeFill {
    pub z0: f64,
    pub eps_eff: f64,
    /// Share of the mode's electric energy stored in the dielectrics (the rest is in air): d ln C / d ln λ with
    /// every Dk scaled by λ. 1 for a line wholly in dielectric; it weights the loss tangent (dielectric loss) and
    /// carries Z and εeff to another Dk (C ∝ λ^share for small changes).
    pub dielectric_share: f64,
}

/// Step along the exact dC/dλ (every Dk scaled by λ) that reads each mode's dielectric share off the mode
/// formulas by a central difference of C ± step·dC/dλ: truncation ~step²/3 (3e-7), and the last-bit differences of
/// two platforms' solves grow only 1/(2·step) = 500-fold (a browser's Touchstone equals the CLI's to 1e-9).
const SHARE_STEP: f64 = 1e-3;

fn mode_list(a: &Analysis) -> Vec<(f64, f64)> {
    match a {
        Analysis::Single(s) => vec![(s.z0, s.eps_eff)],
        Analysis::Pair(p) => vec![(p.z_odd, p.eps_eff_odd), (p.z_even, p.eps_eff_even)],
    }
}

impl Engine {
    /// The boundary-element solve behind the loss probes of a field engine. The reference uses the fast engine's
    /// default mesh here too: its grid follows the geometry in steps, so derivatives along receding walls would be
    /// noise, while a boundary mesh moves smoothly with the walls.
    fn probe(&self) -> Option<(BemOptions, Option<f64>)> {
        match *self {
            Engine::ClosedForm => None,
            Engine::Field {
                options,
                etch_factor,
            } => Some((options, etch_factor)),
            Engine::Reference { etch_factor, .. } => Some((BemOptions::default(), etch_factor)),
        }
    }

    /// Each mode's impedance with every dielectric replaced by air (odd then even for a pair), and the number of
    /// boundary panels that made it (`None` for the closed forms): a caller differentiating it along receding walls
    /// compares the counts, since a derivative across a change of mesh layout would be meaningless.
    pub fn air_impedances(
        &self,
        cs: &CrossSection,
        structure: Structure,
        dims: &Dims,
    ) -> Result<(Vec<f64>, Option<usize>)> {
        match self.probe() {
            None => {
                let e = closed_form::evaluate(cs, structure, dims)?;
                Ok((mode_list(&e.analysis).iter().map(|m| m.0).collect(), None))
            }
            Some((options, etch_factor)) => {
                let g = field::build(cs, structure, dims, etch_factor)?;
                let level = boundary::vacuum_capacitances(&g, options.fine)?;
                let a = field::extract::analysis(&level.c0, &level.c0).ok_or_else(|| {
                    crate::base::error::Error::Invalid {
                        field: "geometry".into(),
                        reason: "the air-filled line has no positive capacitance".into(),
                    }
                })?;
                let z = mode_list(&a).iter().map(|m| m.0).collect();
                Ok((z, Some(level.panels)))
            }
        }
    }

    /// Field engines: each mode's Z, εeff and the share of its energy in the dielectrics, `None` for the closed
    /// forms (whose loss uses the filling factor of their εeff). The share is d ln εeff / d ln λ with every Dk
    /// scaled by λ, from the boundary-element solve's adjoint derivative dC/dλ ([`boundary::BemLevel::dc_dscale`])
    /// on the solve the engine has just made at these dimensions and keeps: no further solve. Z and εeff are
    /// `nominal`'s, the engine's own answer at these dimensions when the caller has it, else that solve's.
    pub fn mode_fills(
        &self,
        cs: &CrossSection,
        structure: Structure,
        dims: &Dims,
        nominal: Option<&Analysis>,
    ) -> Result<Option<Vec<ModeFill>>> {
        let Some((options, etch_factor)) = self.probe() else {
            return Ok(None);
        };
        let g = field::build(cs, structure, dims, etch_factor)?;
        let bad = |reason: &str| crate::base::error::Error::Invalid {
            field: "geometry".into(),
            reason: reason.into(),
        };
        // The solve the engine has just made at these dimensions (kept), with dC/dλ from its adjoint.
        let level = boundary::capacitances(&g, options.fine)?;
        let modes = |c: &[Vec<f64>]| -> Result<Vec<(f64, f64)>> {
            let a = field::extract::analysis(c, &level.c0)
                .ok_or_else(|| bad("the field solve gave a non-positive capacitance"))?;
            Ok(mode_list(&a))
        };
        let here = modes(&level.c)?;
        // C moves along dC/dλ: each mode's ln εeff then moves by its share times the step (C0 has no Dk in it).
        let along = |step: f64| -> Result<Vec<(f64, f64)>> {
            let c: Vec<Vec<f64>> = level
                .c
                .iter()
                .zip(&level.dc_dscale)
                .map(|(row, drow)| row.iter().zip(drow).map(|(c, d)| c + step * d).collect())
                .collect();
            modes(&c)
        };
        let (up, down) = (along(SHARE_STEP)?, along(-SHARE_STEP)?);
        let given = nominal.map(mode_list);
        let fills = up
            .iter()
            .zip(&down)
            .zip(&here)
            .enumerate()
            .map(|(i, ((&(_, e_up), &(_, e_down)), &(z_here, e_here)))| {
                let (z0, eps_eff) = given
                    .as_ref()
                    .and_then(|g| g.get(i).copied())
                    .unwrap_or((z_here, e_here));
                ModeFill {
                    z0,
                    eps_eff,
                    // C0 does not depend on the Dk, so C moves as εeff does.
                    dielectric_share: ((e_up / e_down).ln() / (2.0 * SHARE_STEP)).clamp(0.0, 1.0),
                }
            })
            .collect::<Vec<_>>();
        if fills
            .iter()
            .any(|m| !(m.dielectric_share.is_finite() && m.z0 > 0.0 && m.eps_eff >= 1.0 - 1e-9))
        {
            return Err(bad("the field solve gave no finite line figures"));
        }
        Ok(Some(fills))
    }
}

/// The Maxwell capacitance matrices of a line (or pair) beside an identical neighbour: conductors ordered as the
/// line's signals, nearest the neighbour first, then the neighbour's in the same order (two for single lines, four
/// for pairs), F/m.
#[derive(Debug, Clone, PartialEq)]
pub struct NeighbourMatrices {
    pub c: Vec<Vec<f64>>,
    pub c0: Vec<Vec<f64>>,
    /// The method that made them.
    pub method: &'static str,
}

impl Engine {
    /// The rule's line and an identical neighbour `spacing` m away (edge to edge) on the same layer, for crosstalk.
    /// The field engines solve the whole cross-section of both (four signals for two pairs); the closed forms give
    /// two single lines from their coupled-line model (its even and odd modes) and nothing for two pairs.
    pub fn neighbour_matrices(
        &self,
        cs: &CrossSection,
        structure: Structure,
        dims: &Dims,
        spacing: f64,
    ) -> Result<NeighbourMatrices> {
        match self.probe() {
            Some((options, etch_factor)) => {
                let g =
                    field::geometry::build_neighbours(cs, structure, dims, spacing, etch_factor)?;
                // The fine mesh: the fit mesh's coarse interface grading put a microstrip under a 5 µm mask at a
                // mean εeff 4.6 % above the substrate's Dk (found by the crosstalk property test); the fine mesh
                // holds it, for about 1.5 × the crosstalk time.
                let level = boundary::capacitances(&g, options.fine)?;
                Ok(NeighbourMatrices {
                    c: level.c,
                    c0: level.c0,
                    method: BOUNDARY_METHOD,
                })
            }
            None => {
                if structure != Structure::Single {
                    return Err(crate::base::error::Error::Invalid {
                        field: "model".into(),
                        reason: "crosstalk between two pairs needs the field engine (the closed forms model one pair)"
                            .into(),
                    });
                }
                let pair = Dims {
                    s: Some(spacing),
                    ..*dims
                };
                let e = closed_form::evaluate(cs, Structure::EdgePair, &pair)?;
                let Analysis::Pair(p) = e.analysis else {
                    return Err(crate::base::error::Error::Invalid {
                        field: "structure".into(),
                        reason: "the coupled-line model gave no pair".into(),
                    });
                };
                // Per-line mode capacitances C = √εeff/(c·Z) and C0 = C/εeff, then the Maxwell terms
                // C11 = (Codd + Ceven)/2, C12 = (Ceven − Codd)/2.
                let mode = |z: f64, e: f64| {
                    let c = e.sqrt() / (crate::base::units::C0 * z);
                    (c, c / e)
                };
                let (co, c0o) = mode(p.z_odd, p.eps_eff_odd);
                let (ce, c0e) = mode(p.z_even, p.eps_eff_even);
                let maxwell = |o: f64, e: f64| {
                    let (s, m) = (0.5 * (o + e), 0.5 * (e - o));
                    vec![vec![s, m], vec![m, s]]
                };
                Ok(NeighbourMatrices {
                    c: maxwell(co, ce),
                    c0: maxwell(c0o, c0e),
                    method: e.method,
                })
            }
        }
    }
}

impl Answer {
    /// The answer of a finished reference (finite-volume) field solve.
    pub fn from_field(r: FieldResult) -> Answer {
        Answer::from_field_with(r, FIELD_METHOD)
    }

    /// The answer of a finished field solve made by `method`.
    pub fn from_field_with(r: FieldResult, method: &'static str) -> Answer {
        Answer {
            analysis: r.analysis.clone(),
            method,
            error_estimate_pct: Some(r.error_estimate_pct),
            field: Some(Box::new(r)),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::section;

    /// Both engines answer the same question for the same demo rule; they agree within the closed form's band
    /// (HJ microstrip with a mask correction vs the field solver: a few per cent, measured in docs/accuracy.md).
    #[test]
    fn both_engines_answer_the_same_question() {
        let p = crate::design::demo::project();
        let rule = &p.rules[0];
        let cs = section::resolve(&p.stackup, rule).unwrap();
        let dims = Dims {
            w: rule.width_m,
            s: rule.spacing_m,
            gap: rule.gap_m,
        };
        let closed = Engine::ClosedForm
            .analyze(&cs, rule.structure, &dims)
            .unwrap();
        let field = Engine::Field {
            options: BemOptions::default(),
            etch_factor: None,
        }
        .analyze(&cs, rule.structure, &dims)
        .unwrap();
        let reference = Engine::Reference {
            options: FieldOptions::default(),
            etch_factor: None,
        }
        .analyze(&cs, rule.structure, &dims)
        .unwrap();
        assert!(closed.error_estimate_pct.is_none() && closed.field.is_none());
        assert_eq!(field.method, BOUNDARY_METHOD);
        assert_eq!(reference.method, FIELD_METHOD);
        // The two field engines agree within the sum of their error estimates (independent methods).
        let (ef, er) = (
            field.error_estimate_pct.unwrap(),
            reference.error_estimate_pct.unwrap(),
        );
        let between = (field.controlled() / reference.controlled() - 1.0).abs() * 100.0;
        assert!(between <= ef + er, "{between} % vs {ef} + {er} %");
        let diff = (field.controlled() - closed.controlled()) / closed.controlled();
        assert!(
            diff.abs() < 0.1,
            "closed {} field {}",
            closed.controlled(),
            field.controlled()
        );
    }

    /// Sets the Dk of the named dielectric layers.
    fn set_dk(p: &mut Project, dks: &[(&str, f64)]) {
        for l in &mut p.stackup.layers {
            let Some(&(_, dk)) = dks.iter().find(|(name, _)| *name == l.name()) else {
                continue;
            };
            match l {
                crate::design::stackup::Layer::Core(d)
                | crate::design::stackup::Layer::Prepreg(d) => d.dk = dk,
                _ => unreachable!("only dielectrics are named"),
            }
        }
    }

    /// Solves `rule` of `p` on its layered section with both field engines and on the merged section with the fast
    /// one: (how far merging moves Z %, fast vs reference %, the sum of their estimates %, the layered analysis).
    fn layered_against_merged(p: &Project, rule: &ImpedanceRule) -> (f64, f64, f64, Analysis) {
        let layered = section::resolve(&p.stackup, rule).unwrap();
        assert!(layered.layering.as_ref().unwrap().is_mixed());
        assert!(layered.merged_dielectric_note().is_some());
        let merged = CrossSection {
            layering: None,
            ..layered.clone()
        };
        let dims = Dims {
            w: rule.width_m,
            s: rule.spacing_m,
            gap: rule.gap_m,
        };
        let field = Engine::field(p);
        let a = field.analyze(&layered, rule.structure, &dims).unwrap();
        let b = field.analyze(&merged, rule.structure, &dims).unwrap();
        let r = Engine::reference(p)
            .analyze(&layered, rule.structure, &dims)
            .unwrap();
        let merged_error = (b.controlled() / a.controlled() - 1.0).abs() * 100.0;
        let between = (a.controlled() / r.controlled() - 1.0).abs() * 100.0;
        let allowed = a.error_estimate_pct.unwrap() + r.error_estimate_pct.unwrap();
        eprintln!(
            "{}: merged Dk moves Z by {merged_error:.2} %; field vs reference {between:.3} % (allowed {allowed:.2} %)",
            rule.name
        );
        (merged_error, between, allowed, a.analysis)
    }

    /// The field engines see each dielectric layer as it is; the closed forms a merged Dk. On an inner layer between
    /// a 4.6 core and a 3.2 prepreg the merged Dk moves Z by over a per cent, while the two independent field
    /// engines agree on the layered section within their error estimates.
    #[test]
    fn field_engines_model_each_dielectric_layer() {
        let mut p = crate::design::demo::project();
        set_dk(&mut p, &[("Core 1", 4.6), ("PP2", 3.2)]);
        let rule = p
            .rules
            .iter()
            .find(|r| r.name == "Single-ended 50 Ω inner")
            .unwrap();
        let (merged_error, between, allowed, analysis) = layered_against_merged(&p, rule);
        assert!(merged_error > 1.0, "merged Dk moves Z by {merged_error} %");
        assert!(between <= allowed, "{between} % vs {allowed} %");
        // εeff lies between the layers' Dk.
        let eps = match &analysis {
            Analysis::Single(line) => line.eps_eff,
            Analysis::Pair(pair) => pair.odd().eps_eff,
        };
        assert!((3.2..=4.6).contains(&eps), "{eps}");
    }

    /// A broadside pair sees each layer too: the dielectric between its traces and the two outside them. With a 3.0
    /// prepreg between two 4.6 cores the merged Dk moves Zdiff by over a per cent; the two independent field engines
    /// agree on the layered section within their estimates.
    #[test]
    fn field_engines_model_each_layer_of_a_broadside_pair() {
        let mut p = Project::from_json(include_str!(
            "../../tests/fixtures/twelve_layer_sixteen_rules.json"
        ))
        .unwrap();
        set_dk(
            &mut p,
            &[("Core 2-3", 4.6), ("Core 4-5", 4.6), ("PP 3-4", 3.0)],
        );
        let rule = p
            .rules
            .iter()
            .find(|r| r.structure == Structure::BroadsidePair)
            .unwrap();
        let (merged_error, between, allowed, analysis) = layered_against_merged(&p, rule);
        assert!(
            merged_error > 1.0,
            "merged Dk moves Zdiff by {merged_error} %"
        );
        assert!(between <= allowed, "{between} % vs {allowed} %");
        // Each mode's εeff lies between the layers' Dk.
        let Analysis::Pair(pair) = &analysis else {
            panic!("a broadside pair has two modes")
        };
        for e in [pair.eps_eff_odd, pair.eps_eff_even] {
            assert!((3.0..=4.6).contains(&e), "{e}");
        }
    }
}
