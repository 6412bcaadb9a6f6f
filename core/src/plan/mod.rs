//! The whole-project computation: for each rule resolve its cross-section, solve the free dimension, analyse, and
//! collect the figures the results table and fab notes show. Pure and deterministic.

use self::spread::{SampleModel, SpreadOptions};
use crate::base::error::Result;
use crate::base::validity::Warning;
use crate::design::project::Project;
use crate::design::stackup::Layer;
use serde::Serialize;

pub mod case;
pub mod crosstalk;
pub mod field_check;
pub mod field_synth;
pub mod height;
pub mod proposal;
pub mod routing;
pub mod rule;
pub mod spread;
pub mod synthesis;
pub mod weave;

pub use rule::{
    analyze_rule, evaluate_rule, evaluate_rule_with, rule_figures, solve_line, RuleOutcome,
    RuleResult, SolvedLine,
};

/// One row of the stack table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LayerRow {
    pub name: String,
    pub kind: &'static str,
    pub material: String,
    pub thickness_m: f64,
    /// Thickness in the finished board (differs from `thickness_m` for prepreg).
    pub pressed_thickness_m: f64,
    pub dk: Option<f64>,
    pub df: Option<f64>,
    pub copper_oz: Option<f64>,
    pub role: Option<&'static str>,
}

/// Everything computed for a project.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Plan {
    pub title: String,
    pub total_thickness_m: f64,
    pub copper_count: usize,
    pub symmetric: bool,
    pub layers: Vec<LayerRow>,
    pub rules: Vec<RuleOutcome>,
}

/// What [`plan_with`] computes beyond the nominal figures.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PlanOptions {
    /// Monte Carlo samples per rule for the tolerance spread; 0 skips the spread.
    pub spread_samples: usize,
    /// Seed of the spread's random stream (each rule mixes in its name).
    pub seed: u64,
    /// What the spread's samples call: the model itself, or its quadratic response surface (fast enough to
    /// recompute on every edit).
    pub spread_model: SampleModel,
    /// Also solve every closed-form rule on the fast field engine at its dimensions ([`RuleResult::field_check`]).
    pub field_check: bool,
    /// Every rule on the closed form whatever its model: the instant first figures shown while the field engine
    /// works (see [`PlanOptions::preview`]).
    pub closed_form_only: bool,
    /// Also each rule's routing figures: the spacing to a neighbour for the crosstalk budget and the reach for the
    /// link's loss budget ([`RuleResult::routing`], judged against [`crate::design::project::Routing`]).
    pub routing: bool,
}

impl Default for PlanOptions {
    /// Nominal figures only (what [`plan`] computes).
    fn default() -> Self {
        PlanOptions {
            spread_samples: 0,
            seed: spread::DEFAULT_SEED,
            spread_model: SampleModel::Quadratic,
            field_check: false,
            closed_form_only: false,
            routing: false,
        }
    }
}

impl PlanOptions {
    /// Nominal figures plus the tolerance spread with the default sample count and seed, the field engine's
    /// check of every closed-form rule, and the routing figures.
    pub fn with_spread() -> Self {
        PlanOptions {
            spread_samples: spread::DEFAULT_SAMPLES,
            seed: spread::DEFAULT_SEED,
            spread_model: SampleModel::Quadratic,
            field_check: true,
            closed_form_only: false,
            routing: true,
        }
    }

    /// The closed form for every rule, nominal figures only: microseconds a rule, so the app can show it on every
    /// keystroke before the field engine's figures land.
    pub fn preview() -> Self {
        PlanOptions {
            closed_form_only: true,
            ..PlanOptions::default()
        }
    }
}

/// Computes the whole project. A bad stack is an error; a bad rule is reported in its own row.
pub fn plan(project: &Project) -> Result<Plan> {
    plan_with(project, &PlanOptions::default())
}

/// [`plan`] with options; a spread that cannot be computed becomes a warning on its rule's row.
pub fn plan_with(project: &Project, options: &PlanOptions) -> Result<Plan> {
    project.stackup.validate()?;
    let s = &project.stackup;
    let layers = s
        .layers
        .iter()
        .enumerate()
        .map(|(i, l)| LayerRow {
            name: l.name().to_string(),
            kind: l.kind_name(),
            material: l
                .dielectric()
                .map(|d| d.material.clone())
                .unwrap_or_default(),
            thickness_m: l.thickness_m(),
            pressed_thickness_m: s.pressed_thickness_m(i),
            dk: l.dielectric().map(|d| d.dk),
            df: l.dielectric().map(|d| d.df),
            copper_oz: l.copper().map(|c| c.weight_oz()),
            role: match l {
                Layer::Copper(c) => Some(match c.role {
                    crate::design::stackup::CopperRole::Signal => "signal",
                    crate::design::stackup::CopperRole::Plane => "plane",
                    crate::design::stackup::CopperRole::Mixed => "mixed",
                }),
                _ => None,
            },
        })
        .collect();
    let rules = project
        .rules
        .iter()
        .map(|rule| plan_rule(project, rule, options))
        .collect();
    Ok(Plan {
        title: project.title.clone(),
        total_thickness_m: s.total_thickness_m(),
        copper_count: s.copper_count(),
        symmetric: s.is_symmetric(),
        layers,
        rules,
    })
}

/// One row of [`plan_with`]: the rule on its engine, with the field check and the spread the options ask for (a
/// check or spread that cannot be computed becomes a warning on the row). The stack must already be valid. The
/// app's plan worker calls this rule by rule so that it can post each row as it lands.
pub fn plan_rule(
    project: &Project,
    rule: &crate::design::project::ImpedanceRule,
    options: &PlanOptions,
) -> RuleOutcome {
    outcome(
        rule,
        rule_on_plan_engine(project, rule, options),
        project,
        options,
    )
}

/// [`plan_rule`], except that a target the free dimension cannot reach gives the nearest reachable design: the
/// rule analysed with that dimension at the bound that stopped the solve, with every figure (field check and
/// spread included) and [`RuleResult::unreached`] saying what stopped it. What the app shows (issue 17: a target
/// 0.2 % out of reach inside a ±10 % tolerance is a design to look at, not a blank card).
pub fn plan_rule_or_nearest(
    project: &Project,
    rule: &crate::design::project::ImpedanceRule,
    options: &PlanOptions,
) -> RuleOutcome {
    use crate::base::error::Error;
    use crate::design::project::Solve;
    let first = rule_on_plan_engine(project, rule, options);
    let Err(Error::Unreachable {
        at_m: Some(at),
        bound,
        ..
    }) = &first
    else {
        return outcome(rule, first, project, options);
    };
    let mut nearest = rule.clone();
    let dimension = match rule.solve {
        Solve::Spacing => {
            nearest.spacing_m = Some(*at);
            "spacing"
        }
        _ => {
            nearest.width_m = *at;
            "width"
        }
    };
    nearest.solve = Solve::Nothing;
    match rule_on_plan_engine(project, &nearest, options) {
        Ok(mut r) => {
            r.unreached = Some(rule::Unreached {
                dimension: dimension.into(),
                bound: bound.clone(),
            });
            outcome(&nearest, Ok(r), project, options)
        }
        // The nearest design cannot be analysed either: the original message says more.
        Err(_) => outcome(rule, first, project, options),
    }
}

/// A planned rule with the options' field check and spread, or its message.
fn outcome(
    rule: &crate::design::project::ImpedanceRule,
    planned: Result<RuleResult>,
    project: &Project,
    options: &PlanOptions,
) -> RuleOutcome {
    match planned {
        Ok(mut r) => {
            if options.field_check {
                match rule::field_check(project, rule, &r) {
                    Ok(c) => r.field_check = c,
                    Err(e) => r
                        .warnings
                        .push(Warning::new(format!("field engine check: {e}"))),
                }
            }
            if options.routing {
                r.routing = Some(routing::for_result(project, rule, &r));
            }
            if options.spread_samples > 0 {
                let opts = SpreadOptions {
                    samples: options.spread_samples,
                    seed: options.seed,
                    centre: true,
                    model: options.spread_model,
                };
                match spread::run_for_result(project, rule, &r, &opts) {
                    Ok(s) => r.spread = Some(s),
                    Err(e) => r
                        .warnings
                        .push(Warning::new(format!("tolerance spread: {e}"))),
                }
            }
            RuleOutcome::Ok(Box::new(r))
        }
        // Named by the rule's own name, never an internal path such as `rules[5]`.
        Err(e) => RuleOutcome::Error {
            name: rule.name.clone(),
            message: format!("{}: {e}", rule.name),
        },
    }
}

/// One rule on the engine the options ask for: its own, or the closed form for a preview.
fn rule_on_plan_engine(
    project: &Project,
    rule: &crate::design::project::ImpedanceRule,
    options: &PlanOptions,
) -> Result<rule::RuleResult> {
    if options.closed_form_only {
        analyze_rule(project, rule)
    } else {
        evaluate_rule(project, rule)
    }
}

impl Plan {
    /// The outcome of the rule called `name`.
    pub fn rule(&self, name: &str) -> Option<&RuleOutcome> {
        self.rules.iter().find(|r| match r {
            RuleOutcome::Ok(r) => r.name == name,
            RuleOutcome::Error { name: n, .. } => n == name,
        })
    }
}

#[cfg(test)]
mod tests {
    #[test]
    fn an_unreachable_target_gives_the_nearest_design_at_its_bound() {
        // The demo's 90 Ω pair on the top layer asked for 400 Ω: no width reaches it, the narrowest (the
        // fabricator's minimum trace) comes nearest. The nearest design is that rule analysed at the minimum.
        let mut p = crate::design::demo::project();
        p.rules[1].target_ohm = 400.0;
        let options = crate::PlanOptions::preview();
        let message = match super::plan_rule(&p, &p.rules[1], &options) {
            crate::RuleOutcome::Error { message, .. } => message,
            other => panic!("expected an error, got {other:?}"),
        };
        assert!(message.contains("cannot be reached"), "{message}");
        let nearest = super::plan_rule_or_nearest(&p, &p.rules[1], &options);
        let r = nearest.ok().expect("the nearest design");
        let u = r.unreached.as_ref().expect("says it is not the target");
        assert_eq!(u.dimension, "width");
        assert!(u.bound.contains("minimum"), "{}", u.bound);
        assert_eq!(r.width_m, p.fab.min_trace_m);
        assert_eq!(r.target_ohm, 400.0);
        assert!(r.impedance_ohm < 400.0 && !r.within_tolerance);
        // Its impedance is the one the message called the nearest reachable (printed to 0.01 Ω).
        let said: f64 = message
            .rsplit("nearest reachable is ")
            .next()
            .and_then(|t| t.trim_end_matches(" Ω").parse().ok())
            .unwrap();
        assert!(
            (r.impedance_ohm - said).abs() <= 0.005 + 1e-9,
            "{} vs {said}",
            r.impedance_ohm
        );
        // The same analysis as the rule drawn at that width (solved for nothing).
        let mut drawn = p.rules[1].clone();
        drawn.width_m = p.fab.min_trace_m;
        drawn.solve = crate::design::project::Solve::Nothing;
        let direct = super::plan_rule(&p, &drawn, &options);
        assert_eq!(direct.ok().unwrap().impedance_ohm, r.impedance_ohm);
        // A reachable rule is planned exactly as by plan_rule.
        assert_eq!(
            super::plan_rule_or_nearest(&p, &p.rules[0], &options),
            super::plan_rule(&p, &p.rules[0], &options)
        );
    }

    #[test]
    fn a_fit_range_is_info_when_a_field_engine_made_the_figure() {
        // A thick trace over a thin prepreg leaves the closed forms' published t/h range. On the closed form that
        // is a caution (the figure is an extrapolation); on the field engine, whose figure does not rest on that
        // fit, it is information. Each note is said once.
        use crate::base::validity::Level;
        let mut p = crate::design::demo::project();
        if let crate::design::stackup::Layer::Prepreg(d) = &mut p.stackup.layers[2] {
            d.thickness_m = 40e-6;
        }
        let mut rule = p.rules[0].clone();
        rule.solve = crate::design::project::Solve::Nothing;
        let closed = super::analyze_rule(&p, &rule).unwrap();
        let fit: Vec<_> = closed
            .warnings
            .iter()
            .filter(|w| w.is_fit_range())
            .collect();
        assert!(!fit.is_empty(), "{:?}", closed.warnings);
        assert!(fit.iter().all(|w| w.level == Level::Caution));
        // The same section and notes with the figure credited to the field engine.
        let dims = crate::section::Dims {
            w: closed.width_m,
            s: closed.spacing_m,
            gap: closed.gap_m,
        };
        let credited = super::rule_figures(
            &p,
            &rule,
            closed.cross_section.clone(),
            dims,
            None,
            crate::engine::BOUNDARY_METHOD,
            closed.analysis.clone(),
        );
        let fit: Vec<_> = credited
            .warnings
            .iter()
            .filter(|w| w.is_fit_range())
            .collect();
        assert!(
            !fit.is_empty() && fit.iter().all(|w| w.level == Level::Info),
            "{fit:?}"
        );
        let field = super::evaluate_rule(&p, &rule).unwrap();
        assert!(crate::engine::is_field_method(&field.method));
        let fit: Vec<_> = field.warnings.iter().filter(|w| w.is_fit_range()).collect();
        assert!(fit.iter().all(|w| w.level == Level::Info), "{fit:?}");
        for (k, w) in field.warnings.iter().enumerate() {
            assert!(
                !field.warnings[..k].iter().any(|x| x.message == w.message),
                "{w:?} twice"
            );
        }
        // A caution is written as before (no level key); other levels say theirs.
        let json = serde_json::to_string(&crate::base::validity::Warning::new("x")).unwrap();
        assert_eq!(json, r#"{"message":"x"}"#);
        let back: crate::base::validity::Warning = serde_json::from_str(
            &serde_json::to_string(&crate::base::validity::Warning::info("y")).unwrap(),
        )
        .unwrap();
        assert_eq!(back.level, Level::Info);
    }

    #[test]
    fn preview_puts_every_rule_on_the_closed_form() {
        let mut p = crate::design::demo::project();
        for r in &mut p.rules {
            r.model = crate::design::project::RuleModel::FieldSolver;
        }
        let preview = crate::plan_with(&p, &crate::PlanOptions::preview()).unwrap();
        for r in preview.rules.iter().filter_map(|r| r.ok()) {
            assert!(!crate::engine::is_field_method(&r.method), "{}", r.method);
            // The loss too: the preview runs on the page's thread on every keystroke, where a field solve for the
            // loss probes once cost 130 ms of typing (measured in the browser's profiler).
            let probe = r.loss_probe.as_ref().expect("a loss probe");
            assert_eq!(
                probe.engine,
                crate::engine::Engine::ClosedForm.name(),
                "{}",
                r.method
            );
        }
    }

    #[test]
    fn rule_by_rule_equals_the_whole_plan_and_survives_a_json_round_trip() {
        // The app's worker plans rule by rule and sends each outcome across as data: both must give the plan's
        // rows exactly (an unreachable target makes one row an error row).
        let mut p = crate::design::demo::project();
        p.rules[1].target_ohm = 400.0;
        let options = crate::PlanOptions::with_spread();
        let plan = crate::plan_with(&p, &options).unwrap();
        for (rule, row) in p.rules.iter().zip(&plan.rules) {
            let one = super::plan_rule(&p, rule, &options);
            assert_eq!(&one, row);
            let text = serde_json::to_string(&one).unwrap();
            let mut back: crate::RuleOutcome = serde_json::from_str(&text).unwrap();
            // The section's loss inputs are not part of the JSON (the figures computed from them are).
            if let (crate::RuleOutcome::Ok(b), crate::RuleOutcome::Ok(o)) = (&mut back, &one) {
                b.cross_section.loss = o.cross_section.loss;
            }
            assert_eq!(back, one);
            assert_eq!(serde_json::to_string(&back).unwrap(), text);
        }
        assert!(matches!(plan.rules[1], crate::RuleOutcome::Error { .. }));
    }

    #[test]
    fn a_rule_that_cannot_be_computed_is_named_by_its_name() {
        // An unreachable target: the row's message names the rule as the user called it, not `rules[0]`.
        let mut p = crate::design::demo::project();
        p.rules[0].target_ohm = 200.0;
        let plan = crate::plan(&p).unwrap();
        match &plan.rules[0] {
            crate::RuleOutcome::Error { name, message } => {
                assert!(message.starts_with(&format!("{name}: ")), "{message}");
                assert!(!message.contains("rules["), "{message}");
                assert!(message.contains("cannot be reached"), "{message}");
            }
            other => panic!("expected an error row, got {other:?}"),
        }
    }
}
