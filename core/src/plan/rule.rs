//! One rule from its stack to its figures: resolve the cross-section, solve the free dimension on the rule's
//! engine, analyse, and collect what the results table and fab notes show (deviation, reflection, the signal
//! mode's per-length figures, loss at the analysis frequency). Written once for every engine.

use crate::base::error::{Error, Result};
use crate::base::units::format_sig;
use crate::base::validity::Warning;
use crate::design::project::{ImpedanceRule, Project, Solve};
use crate::engine::{Answer, Engine};
use crate::plan::field_synth::FieldSynthesis;
use crate::plan::spread::summary::SpreadSummary;
use crate::plan::synthesis;
use crate::section::lines::{reflection, return_loss_db, SingleLine};
use crate::section::{self, Analysis, CrossSection, Dims};
use serde::{Deserialize, Serialize};
use std::borrow::Cow;

/// The computed figures of one rule.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RuleResult {
    pub name: String,
    pub layer: String,
    /// Plain family name, e.g. "coated microstrip".
    pub family: Cow<'static, str>,
    /// The structure as chosen in the rule, e.g. "pair side by side".
    pub structure: Cow<'static, str>,
    /// The line in plain words, where it sits and its trade name, e.g. "trace on an outer layer under solder mask
    /// (microstrip)" ([`crate::section::CrossSection::describe`]).
    pub description: String,
    pub method: Cow<'static, str>,
    /// The engine's estimated relative error of the impedance, %, when it states one (the field engines; the closed
    /// forms give their measured band in `model_band_pct` instead).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub error_estimate_pct: Option<f64>,
    pub references: Vec<String>,
    pub width_m: f64,
    pub spacing_m: Option<f64>,
    pub gap_m: Option<f64>,
    /// Which dimension synthesis solved, if any.
    pub solved: Option<Cow<'static, str>>,
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
    pub loss: Option<crate::line::loss::LossAt>,
    pub cross_section: CrossSection,
    pub warnings: Vec<Warning>,
    /// The closed form's measured band against the field solver, ± % (docs/accuracy.md), when it is wider than
    /// [`crate::closed_form::bands::WIDE_BAND_PCT`]: shown next to the number. `None` for field-solver figures.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub model_band_pct: Option<f64>,
    /// The fast field engine's figure at the same dimensions, when the headline figure comes from the closed form
    /// and [`crate::PlanOptions::field_check`] asked for it: the honest check of the closed form's number.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub field_check: Option<FieldCheck>,
    /// The closed form's figure at the same dimensions, when the headline comes from a field engine: the instant
    /// cross-check shown beside the field figure, with its difference.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub closed_form_check: Option<ClosedFormCheck>,
    /// What the loss model took from the engine, so plots and Touchstone files sweep it without solving again
    /// ([`loss_model`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub loss_probe: Option<crate::line::loss::LossProbe>,
    /// Tolerance spread and yield, when asked for with [`PlanOptions::spread_samples`].
    #[serde(skip_serializing_if = "Option::is_none")]
    pub spread: Option<SpreadSummary>,
    /// The spacing to a neighbour for the crosstalk budget and the reach for the link's loss budget, when asked
    /// for with [`crate::PlanOptions::routing`].
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub routing: Option<crate::plan::routing::RuleRouting>,
    /// Set when the target could not be reached: these figures are the nearest reachable design, at the bound
    /// that stopped the solve ([`crate::plan::plan_rule_or_nearest`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub unreached: Option<Unreached>,
}

/// Why a rule's figures are the nearest reachable design rather than its target's.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Unreached {
    /// The dimension that was being solved: "width" or "spacing".
    pub dimension: String,
    /// What stopped the solve, in words (the fabricator's minimum, the widest searched).
    pub bound: String,
}

/// One rule's outcome: figures, or the reason it could not be computed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "status", rename_all = "snake_case")]
pub enum RuleOutcome {
    Ok(Box<RuleResult>),
    Error { name: String, message: String },
}

/// The fast field engine's answer for a rule's closed-form dimensions.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FieldCheck {
    /// The controlled impedance by the field engine, Ω.
    pub impedance_ohm: f64,
    /// Its deviation from the rule's target, %.
    pub deviation_pct: f64,
    /// Whether the field figure lies inside the rule's tolerance: the verdict a board built to these dimensions
    /// would get.
    pub within_tolerance: bool,
    /// The closed form's figure against the field figure, (closed − field)/field, %.
    pub closed_form_difference_pct: f64,
    /// The field engine's estimated error, %.
    pub error_estimate_pct: f64,
}

/// The closed form's answer at a field result's dimensions.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ClosedFormCheck {
    /// The published model that made it.
    pub method: String,
    /// The controlled impedance by the closed form, Ω.
    pub impedance_ohm: f64,
    /// (closed − field)/field, %.
    pub difference_pct: f64,
}

/// The field engine's check of a closed-form result (`None` when the result already comes from a field engine).
pub fn field_check(
    project: &Project,
    rule: &ImpedanceRule,
    result: &RuleResult,
) -> Result<Option<FieldCheck>> {
    if crate::engine::is_field_method(&result.method) {
        return Ok(None);
    }
    let dims = Dims {
        w: result.width_m,
        s: result.spacing_m,
        gap: result.gap_m,
    };
    let answer = Engine::field(project).analyze(&result.cross_section, rule.structure, &dims)?;
    let z = answer.controlled();
    let deviation_pct = (z - rule.target_ohm) / rule.target_ohm * 100.0;
    Ok(Some(FieldCheck {
        impedance_ohm: z,
        deviation_pct,
        within_tolerance: deviation_pct.abs() <= rule.tolerance_pct,
        closed_form_difference_pct: (result.impedance_ohm - z) / z * 100.0,
        error_estimate_pct: answer.error_estimate_pct.unwrap_or(0.0),
    }))
}

/// Solves and analyses one rule on its own engine (see [`crate::design::project::RuleModel`]).
pub fn evaluate_rule(project: &Project, rule: &ImpedanceRule) -> Result<RuleResult> {
    evaluate_rule_with(project, rule, &Engine::for_rule(project, rule))
}

/// Solves and analyses one rule by the closed form, whatever the rule's model (the field solver starts from this).
pub fn analyze_rule(project: &Project, rule: &ImpedanceRule) -> Result<RuleResult> {
    evaluate_rule_with(project, rule, &Engine::ClosedForm)
}

/// Solves and analyses one rule on `engine`. Field-solver results are cached per (stack, fabrication limits,
/// frequency, rule), so the plan, drawings, plots and fab notes share one synthesis.
pub fn evaluate_rule_with(
    project: &Project,
    rule: &ImpedanceRule,
    engine: &Engine,
) -> Result<RuleResult> {
    rule.validate(&project.stackup)?;
    if engine.is_closed_form() {
        return compute(project, rule, engine);
    }
    // Everything the result depends on: the stack, the fabrication limits and etch, the frequency, the loss
    // settings, the rule.
    let key = serde_json::to_string(&(
        &project.stackup,
        &project.fab,
        project.analysis_freq_hz,
        &project.loss,
        project.units,
        rule,
        engine.name(),
    ))
    .map_err(|e| Error::Invalid {
        field: "project".into(),
        reason: e.to_string(),
    })?;
    if let Some(hit) = CACHE.with(|c| {
        c.borrow()
            .iter()
            .find(|(k, _)| *k == key)
            .map(|(_, r)| r.clone())
    }) {
        return Ok(hit);
    }
    let result = compute(project, rule, engine)?;
    CACHE.with(|c| {
        let mut c = c.borrow_mut();
        if c.len() >= CACHE_SIZE {
            c.remove(0);
        }
        c.push((key, result.clone()));
    });
    Ok(result)
}

/// Field results kept per rule and stack: a project has a few field-solver rules, each planned, drawn, plotted
/// and put in the fab notes from one synthesis.
const CACHE_SIZE: usize = 16;

thread_local! {
    static CACHE: std::cell::RefCell<Vec<(String, RuleResult)>> =
        const { std::cell::RefCell::new(Vec::new()) };
}

/// Forgets every kept field result and mesh, so that a benchmark times cold work (a repeated plan otherwise answers
/// each rule's nominal figures from [`CACHE`]).
pub fn forget_kept() {
    CACHE.with(|c| c.borrow_mut().clear());
    crate::field::boundary::forget_kept();
}

/// A rule's dimensions after synthesis on an engine, with that engine's answer when the synthesis already has it.
struct Solved {
    dims: Dims,
    dimension: Option<&'static str>,
    answer: Option<Answer>,
    notes: Vec<Warning>,
}

/// Solves the rule's free dimension on `engine`: bracketed root finding on the closed form (exact for it); on the
/// fast field engine the same root finding in a narrow bracket around the closed form's answer; on the reference
/// solver its secant refinement from that answer ([`FieldSynthesis`]).
fn solve_free_dimension(
    project: &Project,
    rule: &ImpedanceRule,
    cs: &CrossSection,
    engine: &Engine,
) -> Result<Solved> {
    let mut dims = Dims {
        w: rule.width_m,
        s: rule.spacing_m,
        gap: rule.gap_m,
    };
    match *engine {
        Engine::Reference { options, .. } if rule.solve != Solve::Nothing => {
            let mut job = FieldSynthesis::start(project, rule, options)?;
            job.run();
            let r = job.result().ok_or_else(|| Error::Invalid {
                field: "field".into(),
                reason: "the field synthesis did not finish".into(),
            })??;
            Ok(Solved {
                dims: Dims {
                    w: r.width_m,
                    s: r.spacing_m,
                    gap: r.gap_m,
                },
                dimension: Some(r.dimension),
                answer: Some(Answer::from_field(r.field)),
                notes: r.warnings,
            })
        }
        Engine::Field { .. } if rule.solve != Solve::Nothing => {
            let (start, _, note) = synthesis::closed_form_start(project, rule);
            dims = start;
            let dimension = synthesis::solve_near(project, rule, cs, engine, &mut dims)?;
            Ok(Solved {
                dims,
                dimension,
                answer: None,
                notes: note.into_iter().collect(),
            })
        }
        _ => {
            let dimension = synthesis::solve_bracketed(project, rule, cs, engine, &mut dims)?;
            Ok(Solved {
                dims,
                dimension,
                answer: None,
                notes: Vec::new(),
            })
        }
    }
}

/// One rule's line on an engine before its figures: the resolved cross-section, the dimensions after synthesis
/// (and which one was solved), the engine's answer at them and the synthesis's notes. [`evaluate_rule_with`] builds
/// a rule's figures from it; `calc`, `solve` and `batch` show it as it is (a line case has no loss inputs).
#[derive(Debug, Clone, PartialEq)]
pub struct SolvedLine {
    pub cross_section: CrossSection,
    pub dims: Dims,
    pub solved: Option<&'static str>,
    pub answer: Answer,
    pub notes: Vec<Warning>,
}

/// Resolves the rule's cross-section, solves its free dimension on `engine` and analyses it there.
pub fn solve_line(project: &Project, rule: &ImpedanceRule, engine: &Engine) -> Result<SolvedLine> {
    rule.validate(&project.stackup)?;
    solve_validated(project, rule, engine)
}

fn solve_validated(project: &Project, rule: &ImpedanceRule, engine: &Engine) -> Result<SolvedLine> {
    let cs = section::resolve(&project.stackup, rule)?;
    let solved = solve_free_dimension(project, rule, &cs, engine)?;
    let answer = match solved.answer {
        Some(a) => a,
        None => engine.analyze(&cs, rule.structure, &solved.dims)?,
    };
    Ok(SolvedLine {
        cross_section: cs,
        dims: solved.dims,
        solved: solved.dimension,
        answer,
        notes: solved.notes,
    })
}

fn compute(project: &Project, rule: &ImpedanceRule, engine: &Engine) -> Result<RuleResult> {
    let line = solve_validated(project, rule, engine)?;
    let (cs, answer) = (line.cross_section, line.answer);
    let mut notes = line.notes;
    let error_estimate_pct = answer.error_estimate_pct;
    if let Some(err) = error_estimate_pct {
        notes.push(Warning::info(format!(
            "figures from the {} (estimated error {} %), loss too (Wheeler's rule on its air solves)",
            answer.method,
            format_sig(err, 2)
        )));
    }
    let mut result = rule_figures(
        project,
        rule,
        cs,
        line.dims,
        line.solved,
        answer.method,
        answer.analysis,
    );
    result.error_estimate_pct = error_estimate_pct;
    for n in notes {
        if !result.warnings.contains(&n) {
            result.warnings.push(n);
        }
    }
    if !engine.is_closed_form() {
        // Microseconds beside a field solve; a structure the closed forms refuse simply has no cross-check.
        if let Ok(closed) =
            Engine::ClosedForm.analyze(&result.cross_section, rule.structure, &line.dims)
        {
            let z = closed.controlled();
            result.closed_form_check = Some(ClosedFormCheck {
                method: closed.method.to_string(),
                impedance_ohm: z,
                difference_pct: (z - result.impedance_ohm) / result.impedance_ohm * 100.0,
            });
        }
    }
    Ok(result)
}

/// The figures of a rule's line from its analysis (closed form or field solver): deviation, reflection, the signal
/// mode's per-length figures, loss at the analysis frequency, and the warnings of all of them.
pub fn rule_figures(
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
    if !crate::engine::is_field_method(method) {
        warnings.extend(cs.merged_dielectric_note());
    }
    warnings.extend(analysis.warnings().iter().cloned());
    // Loss on the engine that made `analysis` (the closed-form preview starts no field solve), reusing it.
    let model = crate::line::loss::for_method(project, method, rule, &cs, &dims, Some(&analysis));
    let loss_probe = model.as_ref().ok().map(|m| m.probe());
    let loss = match model.and_then(|m| m.at(project.analysis_freq_hz)) {
        Ok(at) => {
            warnings.extend(at.warnings.iter().cloned());
            Some(at)
        }
        Err(e) => {
            warnings.push(Warning::new(format!("loss not computed: {e}")));
            None
        }
    };
    let model_band_pct = if crate::engine::is_field_method(method) {
        None
    } else {
        crate::closed_form::bands::wide_for(&cs, rule.structure, &dims)
    };
    if crate::engine::is_field_method(method) {
        // The field engine made the figure: a closed form's fit range (left by the loss model or a cross-check)
        // does not bear on it.
        for w in warnings.iter_mut().filter(|w| w.is_fit_range()) {
            w.level = crate::base::validity::Level::Info;
        }
    }
    // Each note once per rule.
    let mut seen = Vec::new();
    warnings.retain(|w| {
        let fresh = !seen.contains(&w.message);
        seen.push(w.message.clone());
        fresh
    });
    if let Some(band) = model_band_pct {
        warnings.push(Warning::new(format!(
            "this closed form differs from the 2D field solver by up to ±{band} % on this structure (measured, \
             docs/accuracy.md), and a solved width can be off by far more where Z changes slowly with width: \
             solve the rule with the field solver before building to it"
        )));
    }
    RuleResult {
        model_band_pct,
        field_check: None,
        closed_form_check: None,
        loss_probe,
        name: rule.name.clone(),
        layer: rule.layer.clone(),
        family: cs.family_for(rule.structure).into(),
        structure: rule.structure.label().into(),
        description: cs.describe(rule.structure),
        method: method.into(),
        error_estimate_pct: None,
        references: cs.references.clone(),
        width_m: dims.w,
        spacing_m: dims.s,
        gap_m: dims.gap,
        solved: solved.map(Cow::Borrowed),
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
        routing: None,
        unreached: None,
    }
}

/// The loss model of a planned rule: rebuilt from the probe its result carries (no engine call), else made anew on
/// the rule's engine.
pub fn loss_model(
    project: &Project,
    rule: &ImpedanceRule,
    result: &RuleResult,
) -> Result<crate::line::loss::LineModel> {
    use crate::line::loss;
    let dims = Dims {
        w: result.width_m,
        s: result.spacing_m,
        gap: result.gap_m,
    };
    // The section's loss data (Df, copper surfaces) is not part of a serialised result: take it from the stack.
    let mut cs = result.cross_section.clone();
    cs.loss = section::resolve(&project.stackup, rule)?.loss;
    match &result.loss_probe {
        Some(probe) => loss::LineModel::from_probe(
            &cs,
            rule.structure,
            &dims,
            loss::inputs_for_section(&project.loss, &cs)?,
            probe,
        ),
        None => loss::for_method(
            project,
            &result.method,
            rule,
            &cs,
            &dims,
            Some(&result.analysis),
        ),
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_changed_loss_setting_is_not_answered_from_the_field_cache() {
        // The field results are kept per rule and stack; the copper's conductivity changes the loss (R ∝ 1/√σ,
        // skin effect), so it must be part of what a kept result is found by.
        let mut p = crate::design::demo::project();
        let rule = p.rules[0].clone();
        let engine = crate::engine::Engine::field(&p);
        let before = evaluate_rule_with(&p, &rule, &engine).unwrap();
        p.loss.conductivity_s_per_m *= 0.25;
        let after = evaluate_rule_with(&p, &rule, &engine).unwrap();
        let r = |x: &RuleResult| x.loss.as_ref().unwrap().signal().unwrap().r_skin_ohm_per_m;
        // σ/4 doubles the skin resistance.
        assert!(
            (r(&after) / r(&before) - 2.0).abs() < 0.05,
            "{} vs {}",
            r(&before),
            r(&after)
        );
    }

    #[test]
    fn a_result_rebuilds_its_loss_model_without_solving() {
        // Every demo rule on the field engine: the loss model rebuilt from the result's probe (what the app's plots
        // and Touchstone export use) sweeps exactly as the one the plan made, through JSON (the worker's message).
        let p = crate::design::demo::project();
        for rule in &p.rules {
            let r = evaluate_rule(&p, rule).unwrap();
            let text = serde_json::to_string(&r).unwrap();
            let back: RuleResult = serde_json::from_str(&text).unwrap();
            assert!(back.loss_probe.is_some(), "{}", rule.name);
            let rebuilt = loss_model(&p, rule, &back).unwrap();
            assert_eq!(rebuilt.engine, "field engine");
            let dims = Dims {
                w: r.width_m,
                s: r.spacing_m,
                gap: r.gap_m,
            };
            let made = crate::line::loss::for_rule(&p, rule, &r.cross_section, &dims).unwrap();
            for f in [1e8, 1e9, 2.5e10] {
                let (a, b) = (rebuilt.at(f).unwrap(), made.at(f).unwrap());
                let (a, b) = (a.signal().unwrap(), b.signal().unwrap());
                // The plan's model takes Z from the rule's answer, the standalone one the geometric mean of its two
                // share solves: they differ in the ninth digit.
                let rel = (a.total.db_per_m / b.total.db_per_m - 1.0).abs();
                assert!(rel < 1e-7, "{} at {f} Hz: {rel}", rule.name);
            }
        }
    }

    #[test]
    fn the_field_engine_checks_every_closed_form_rule_and_can_overrule_its_verdict() {
        // The demo's radio feed: the closed form puts it on target, while the field engine at the same width gives
        // about 44 Ω (thick copper in narrow coplanar gaps under mask, where the closed form is known to miss; the
        // finite-volume reference agrees with the field engine, see field::boundary tests). The check says so.
        let mut p = crate::design::demo::project();
        for r in &mut p.rules {
            r.model = crate::design::project::RuleModel::ClosedForm;
        }
        let plan = crate::plan_with(&p, &crate::PlanOptions::with_spread()).unwrap();
        for (rule, outcome) in p.rules.iter().zip(&plan.rules) {
            let r = outcome.ok().unwrap();
            let c = r
                .field_check
                .as_ref()
                .expect("every closed-form rule gets a check");
            assert!(
                (c.deviation_pct - (c.impedance_ohm / rule.target_ohm - 1.0) * 100.0).abs() < 1e-9
            );
            assert_eq!(
                c.within_tolerance,
                c.deviation_pct.abs() <= rule.tolerance_pct
            );
            assert!(
                c.error_estimate_pct > 0.0 && c.error_estimate_pct < 1.0,
                "{}",
                rule.name
            );
        }
        let feed = plan.rule("Radio feed 50 Ω").unwrap().ok().unwrap();
        let c = feed.field_check.as_ref().unwrap();
        assert!(feed.within_tolerance);
        assert!(c.impedance_ohm < 46.0 && !c.within_tolerance, "{c:?}");
        // A field-solver rule (the default) needs no check: its headline already is the field figure.
        let q = crate::design::demo::project();
        let plan = crate::plan_with(&q, &crate::PlanOptions::with_spread()).unwrap();
        assert!(plan.rules[0].ok().unwrap().field_check.is_none());
        // Without the option nothing is computed.
        assert!(crate::plan(&p).unwrap().rules[0]
            .ok()
            .unwrap()
            .field_check
            .is_none());
    }

    #[test]
    fn a_field_result_carries_the_closed_form_beside_it() {
        let p = crate::design::demo::project();
        let plan = crate::plan(&p).unwrap();
        for (rule, outcome) in p.rules.iter().zip(&plan.rules) {
            let r = outcome.ok().unwrap();
            let c = r.closed_form_check.as_ref().expect("a cross-check");
            let dims = Dims {
                w: r.width_m,
                s: r.spacing_m,
                gap: r.gap_m,
            };
            let closed = Engine::ClosedForm
                .analyze(&r.cross_section, rule.structure, &dims)
                .unwrap()
                .controlled();
            assert_eq!(c.impedance_ohm, closed);
            assert!((c.difference_pct - (closed / r.impedance_ohm - 1.0) * 100.0).abs() < 1e-9);
        }
        // The radio feed is where the closed form misses most (thick copper in narrow coplanar gaps under mask).
        let feed = plan.rule("Radio feed 50 Ω").unwrap().ok().unwrap();
        let c = feed.closed_form_check.as_ref().unwrap();
        assert!(c.difference_pct > 5.0, "{c:?}");
        // A closed-form result has none.
        let mut q = p.clone();
        q.rules[0].model = crate::design::project::RuleModel::ClosedForm;
        let r = crate::plan(&q).unwrap();
        assert!(r.rules[0].ok().unwrap().closed_form_check.is_none());
    }
}
