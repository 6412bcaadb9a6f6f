//! The whole-project computation: for each rule resolve its cross-section, solve the free dimension, analyse, and
//! collect the figures the results table and fab notes show. Pure and deterministic.

use crate::cross_section::{self, CrossSection};
use crate::error::Result;
use crate::lines::{reflection, return_loss_db, SingleLine};
use crate::models::{self, Analysis, Dims};
use crate::project::{ImpedanceRule, Project, RuleModel, Solve};
use crate::spread::{self, SampleModel, SpreadOptions, SpreadSummary};
use crate::stackup::Layer;
use crate::synth::{self, Bracket};
use crate::units::{format_length, MAX_LENGTH_M};
use crate::validity::Warning;
use serde::Serialize;

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

/// The computed figures of one rule.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RuleResult {
    pub name: String,
    pub layer: String,
    /// Plain family name, e.g. "coated microstrip".
    pub family: &'static str,
    /// The structure as chosen in the rule, e.g. "edge-coupled pair".
    pub structure: &'static str,
    pub method: &'static str,
    pub references: Vec<String>,
    pub width_m: f64,
    pub spacing_m: Option<f64>,
    pub gap_m: Option<f64>,
    /// Which dimension synthesis solved, if any.
    pub solved: Option<&'static str>,
    pub target_ohm: f64,
    pub tolerance_pct: f64,
    /// The controlled impedance (Z0, or Zdiff for pairs), Ω.
    pub impedance_ohm: f64,
    pub deviation_pct: f64,
    pub within_tolerance: bool,
    /// Reflection coefficient of the line against the target impedance, and its return loss.
    pub gamma: f64,
    pub return_loss_db: f64,
    /// Effective Dk of the mode that carries the signal (odd mode for pairs).
    pub eps_eff: f64,
    pub velocity_m_per_s: f64,
    pub delay_s_per_m: f64,
    /// Per-length L and C of the signal mode (per line for pairs).
    pub inductance_per_m: f64,
    pub capacitance_per_m: f64,
    pub analysis: Analysis,
    /// Loss, complex Z0 and delay at the project's analysis frequency (`None` when the loss model does not apply;
    /// the reason is then among the warnings).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub loss: Option<crate::loss::LossAt>,
    pub cross_section: CrossSection,
    pub warnings: Vec<Warning>,
    /// The closed form's measured band against the field solver, ± % (docs/accuracy.md), when it is wider than
    /// [`crate::field::bands::WIDE_BAND_PCT`]: shown next to the number. `None` for field-solver rules.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub model_band_pct: Option<f64>,
    /// Tolerance spread and yield, when asked for with [`PlanOptions::spread_samples`].
    #[serde(skip_serializing_if = "Option::is_none")]
    pub spread: Option<SpreadSummary>,
}

/// One rule's outcome: figures, or the reason it could not be computed.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "status", rename_all = "snake_case")]
pub enum RuleOutcome {
    Ok(Box<RuleResult>),
    Error { name: String, message: String },
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
}

impl Default for PlanOptions {
    /// Nominal figures only (what [`plan`] computes).
    fn default() -> Self {
        PlanOptions {
            spread_samples: 0,
            seed: spread::DEFAULT_SEED,
            spread_model: SampleModel::Quadratic,
        }
    }
}

impl PlanOptions {
    /// Nominal figures plus the tolerance spread with the default sample count and seed.
    pub fn with_spread() -> Self {
        PlanOptions {
            spread_samples: spread::DEFAULT_SAMPLES,
            seed: spread::DEFAULT_SEED,
            spread_model: SampleModel::Quadratic,
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
                    crate::stackup::CopperRole::Signal => "signal",
                    crate::stackup::CopperRole::Plane => "plane",
                    crate::stackup::CopperRole::Mixed => "mixed",
                }),
                _ => None,
            },
        })
        .collect();
    let rules = project
        .rules
        .iter()
        .enumerate()
        .map(|(i, rule)| match evaluate_rule(project, rule) {
            Ok(mut r) => {
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
            Err(e) => RuleOutcome::Error {
                name: rule.name.clone(),
                message: crate::project::prefix(e, &format!("rules[{i}]")).to_string(),
            },
        })
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

/// Solves and analyses one rule with its own model (see [`RuleModel`]): the closed form, or the 2D field solver.
pub fn evaluate_rule(project: &Project, rule: &ImpedanceRule) -> Result<RuleResult> {
    match rule.model {
        RuleModel::ClosedForm => analyze_rule(project, rule),
        RuleModel::FieldSolver => crate::field::synth::rule_result(project, rule),
    }
}

/// Solves and analyses one rule by the closed form (whatever the rule's model; the field solver starts from this).
pub fn analyze_rule(project: &Project, rule: &ImpedanceRule) -> Result<RuleResult> {
    rule.validate(&project.stackup)?;
    let cs = cross_section::resolve(&project.stackup, rule)?;
    let mut dims = Dims {
        w: rule.width_m,
        s: rule.spacing_m,
        gap: rule.gap_m,
    };
    let solved = solve_dims(project, rule, &cs, &mut dims)?;
    let evaluated = models::evaluate(&cs, rule.structure, &dims)?;
    Ok(rule_figures(
        project,
        rule,
        cs,
        dims,
        solved,
        evaluated.method,
        evaluated.analysis,
    ))
}

/// The figures of a rule's line from its analysis (closed form or field solver): deviation, reflection, the signal
/// mode's per-length figures, loss at the analysis frequency, and the warnings of all of them.
pub(crate) fn rule_figures(
    project: &Project,
    rule: &ImpedanceRule,
    cs: CrossSection,
    dims: Dims,
    solved: Option<&'static str>,
    method: &'static str,
    analysis: Analysis,
) -> RuleResult {
    let signal: SingleLine = match &analysis {
        Analysis::Single(line) => line.clone(),
        Analysis::Pair(pair) => pair.odd(),
    };
    let z = analysis.controlled();
    let gamma = reflection(z, rule.target_ohm);
    let deviation_pct = (z - rule.target_ohm) / rule.target_ohm * 100.0;
    let mut warnings = cs.warnings.clone();
    warnings.extend(analysis.warnings().iter().cloned());
    let loss = match crate::loss::for_rule(project, rule, &cs, &dims)
        .and_then(|m| m.at(project.analysis_freq_hz))
    {
        Ok(at) => {
            warnings.extend(at.warnings.iter().cloned());
            Some(at)
        }
        Err(e) => {
            warnings.push(Warning::new(format!("loss not computed: {e}")));
            None
        }
    };
    let model_band_pct = match rule.model {
        crate::project::RuleModel::ClosedForm => {
            crate::field::bands::wide_for(&cs, rule.structure, &dims)
        }
        crate::project::RuleModel::FieldSolver => None,
    };
    if let Some(band) = model_band_pct {
        warnings.push(Warning::new(format!(
            "this closed form differs from the 2D field solver by up to ±{band} % on this structure (measured, \
             docs/accuracy.md), and a solved width can be off by far more where Z changes slowly with width: \
             solve the rule with the field solver before building to it"
        )));
    }
    RuleResult {
        model_band_pct,
        name: rule.name.clone(),
        layer: rule.layer.clone(),
        family: cs.family_for(rule.structure),
        structure: rule.structure.label(),
        method,
        references: cs.references.clone(),
        width_m: dims.w,
        spacing_m: dims.s,
        gap_m: dims.gap,
        solved,
        target_ohm: rule.target_ohm,
        tolerance_pct: rule.tolerance_pct,
        impedance_ohm: z,
        deviation_pct,
        within_tolerance: deviation_pct.abs() <= rule.tolerance_pct,
        gamma,
        return_loss_db: return_loss_db(gamma),
        eps_eff: signal.eps_eff,
        velocity_m_per_s: signal.velocity(),
        delay_s_per_m: signal.delay_per_m(),
        inductance_per_m: signal.inductance_per_m(),
        capacitance_per_m: signal.capacitance_per_m(),
        analysis,
        loss,
        cross_section: cs,
        warnings,
        spread: None,
    }
}

/// Runs synthesis for the rule's free dimension, writing the solution into `dims`.
fn solve_dims(
    project: &Project,
    rule: &ImpedanceRule,
    cs: &CrossSection,
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
            let w = synth::solve("width", rule.target_ohm, &bracket, |w| {
                models::evaluate(cs, rule.structure, &Dims { w, ..base })
                    .map(|e| e.analysis.controlled())
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
            let s = synth::solve("spacing", rule.target_ohm, &bracket, |s| {
                models::evaluate(cs, rule.structure, &Dims { s: Some(s), ..base })
                    .map(|e| e.analysis.controlled())
            })?;
            dims.s = Some(s);
            Ok(Some("spacing"))
        }
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

impl RuleOutcome {
    pub fn ok(&self) -> Option<&RuleResult> {
        match self {
            RuleOutcome::Ok(r) => Some(r),
            RuleOutcome::Error { .. } => None,
        }
    }
}
