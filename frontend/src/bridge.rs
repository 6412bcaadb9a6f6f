//! The only file that calls the core's physics: turns the edited project into the plan the panels render, and
//! wraps the core's unit parsers and cross-section resolution for the editors. Plain Rust, testable natively.

use ohmstack_core::base::units::{self, format_sig, LengthUnit};
use ohmstack_core::design::project::{ImpedanceRule, Solve, Structure};
use ohmstack_core::section;
use ohmstack_core::{plan_with, Plan, PlanOptions, Project, RuleOutcome, RuleResult, Stackup};

/// What the plan worker computes for every rule: loss, the field engine's check and a 10 000-sample tolerance
/// spread, i.e. `plan_with(.., &PlanOptions::with_spread())`, one rule at a time (`plan_jobs.rs`).
pub fn field_options() -> PlanOptions {
    PlanOptions::with_spread()
}

/// One rule's row of the plan with `options` (a rule that cannot be computed becomes its row's message; a target
/// out of reach gives the nearest reachable design, marked as such). The stack must already be valid.
pub fn plan_one_rule(
    project: &Project,
    rule: &ImpedanceRule,
    options: &PlanOptions,
) -> RuleOutcome {
    ohmstack_core::plan::plan_rule_or_nearest(project, rule, options)
}

/// The plan's stack rows, thickness and symmetry without any rule (the rules' rows are added by the caller); a
/// stack that cannot be planned is its error message.
pub fn plan_without_rules(project: &Project) -> Result<Plan, String> {
    let bare = Project {
        rules: Vec::new(),
        ..project.clone()
    };
    plan_with(&bare, &PlanOptions::preview()).map_err(|e| e.to_string())
}

/// True when `text` ends in a digit or a decimal point, i.e. carries no unit word.
fn is_bare(text: &str) -> bool {
    text.trim_end()
        .chars()
        .last()
        .is_some_and(|c| c.is_ascii_digit() || c == '.')
}

/// ASCII spelling of a length unit that the core's parser reads.
fn ascii_symbol(unit: LengthUnit) -> &'static str {
    match unit {
        LengthUnit::Um => "um",
        LengthUnit::Mm => "mm",
        LengthUnit::Mil => "mil",
        LengthUnit::In => "in",
    }
}

/// Parses a length typed in the app: a bare number is in the display unit `unit`; `0.1mm`, `4mil`, `1oz` also work.
/// The error is the core's, naming `field`.
pub fn parse_length(field: &str, text: &str, unit: LengthUnit) -> Result<f64, String> {
    let with_unit = if is_bare(text) {
        format!("{}{}", text.trim(), ascii_symbol(unit))
    } else {
        text.to_string()
    };
    units::parse_length(field, &with_unit).map_err(|e| match e {
        // Report what the user typed, not the text with the unit we appended.
        ohmstack_core::Error::BadQuantity {
            field, expected, ..
        } => ohmstack_core::Error::BadQuantity {
            field,
            text: text.to_string(),
            expected,
        }
        .to_string(),
        other => other.to_string(),
    })
}

/// Parses a frequency; a bare number is in GHz.
pub fn parse_frequency_ghz(field: &str, text: &str) -> Result<f64, String> {
    let with_unit = if is_bare(text) {
        format!("{}GHz", text.trim())
    } else {
        text.to_string()
    };
    units::parse_frequency(field, &with_unit).map_err(|e| match e {
        ohmstack_core::Error::BadQuantity {
            field, expected, ..
        } => ohmstack_core::Error::BadQuantity {
            field,
            text: text.to_string(),
            expected,
        }
        .to_string(),
        other => other.to_string(),
    })
}

/// Parses a plain number with optional allowed unit words.
pub fn parse_number(field: &str, text: &str, suffixes: &[&str]) -> Result<f64, String> {
    units::parse_number(field, text, suffixes).map_err(|e| e.to_string())
}

/// A stored length as editable text in `unit` (no unit word: the column header says it), rounded as the trade
/// writes it (`units::length_number`); the stored metres keep full precision until the field is edited.
pub fn length_text(metres: f64, unit: LengthUnit) -> String {
    units::length_number(metres, unit)
}

/// A length with its unit, for read-only cells.
pub fn length_label(metres: f64, unit: LengthUnit) -> String {
    units::format_length(metres, unit)
}

/// The plot of a rule's insertion loss against frequency over its reach, with the link budget, once its routing
/// figures are in and the board has a link budget.
pub fn insertion_loss_plot_svg(result: &RuleResult, unit: LengthUnit) -> Option<String> {
    let reach = result.routing.as_ref()?.reach.as_ref()?;
    let run = reach.reach_m?;
    (!reach.curve.is_empty()).then(|| {
        ohmstack_core::output::plot::insertion_loss_plot(
            format!(
                "{}: insertion loss of {} ({}) with {} dB fixed",
                result.name,
                units::format_length(run, unit),
                reach.signal,
                ohmstack_core::base::units::format_sig(reach.fixed_db, 4)
            ),
            &reach.curve,
            reach.budget_db,
        )
    })
}

/// The plot of a rule's crosstalk against the spacing to its neighbour, once its routing figures are in.
pub fn crosstalk_plot_svg(result: &RuleResult, unit: LengthUnit) -> Option<String> {
    let sp = result.routing.as_ref()?.spacing.as_ref()?;
    (!sp.curve.is_empty()).then(|| {
        ohmstack_core::output::plot::crosstalk_curve_plot(
            format!(
                "{}: crosstalk to a neighbour ({})",
                result.name, sp.arrangement
            ),
            &sp.curve,
            sp.budget,
            sp.parallel_m,
            unit,
        )
    })
}

/// A frequency in GHz as editable text.
pub fn ghz_text(hz: f64) -> String {
    format_sig(hz / 1e9, 6)
}

/// A probe rule on `layer` with `structure`, carrying every optional dimension so only the geometry decides.
fn probe(layer: &str, structure: Structure, partner: Option<&str>) -> ImpedanceRule {
    ImpedanceRule {
        name: String::new(),
        layer: layer.to_string(),
        structure,
        target_ohm: 50.0,
        tolerance_pct: 10.0,
        solve: Solve::Nothing,
        model: Default::default(),
        width_m: 100e-6,
        spacing_m: Some(100e-6),
        gap_m: Some(100e-6),
        partner_layer: partner.map(str::to_string),
        references: Vec::new(),
        link: None,
    }
}

/// Copper layers that can carry the second trace of a broadside pair routed on `layer`.
pub fn broadside_partners(stackup: &Stackup, layer: &str) -> Vec<String> {
    stackup
        .layers
        .iter()
        .filter_map(|l| l.copper())
        .filter(|c| c.name != layer)
        .filter(|c| {
            section::resolve(
                stackup,
                &probe(layer, Structure::BroadsidePair, Some(&c.name)),
            )
            .is_ok()
        })
        .map(|c| c.name.clone())
        .collect()
}

/// The structures the position of `layer` in the stack allows (which planes it sees decide it).
pub fn structures_for(stackup: &Stackup, layer: &str) -> Vec<Structure> {
    Structure::ALL
        .into_iter()
        .filter(|&s| match s {
            Structure::BroadsidePair => !broadside_partners(stackup, layer).is_empty(),
            _ => section::resolve(stackup, &probe(layer, s, None)).is_ok(),
        })
        .collect()
}

/// Loss at the analysis frequency, when the core provides it: (frequency Hz, dB/in, dB/cm) of the signal mode.
pub fn loss_at(result: &RuleResult) -> Option<(f64, f64, f64)> {
    let loss = result.loss.as_ref()?;
    let mode = loss.line.as_ref().or(loss.odd.as_ref())?;
    Some((loss.freq_hz, mode.total.db_per_in, mode.total.db_per_cm))
}

/// The tolerance spread, when the core provides it: (min Ω, max Ω, yield % if sampled), from the Monte Carlo when
/// it ran, else from the corners.
pub fn spread_of(result: &RuleResult) -> Option<(f64, f64, Option<f64>)> {
    let s = result.spread.as_ref()?;
    let mc = &s.monte_carlo;
    if mc.samples > 0 && mc.min_ohm.is_finite() && mc.max_ohm.is_finite() {
        return Some((mc.min_ohm, mc.max_ohm, Some(mc.yield_pct)));
    }
    Some((s.corners.min_ohm, s.corners.max_ohm, None))
}

/// Common-mode impedance of a pair result, Ω.
pub fn z_common(result: &RuleResult) -> Option<f64> {
    match &result.analysis {
        ohmstack_core::section::Analysis::Pair(p) => Some(p.z_common()),
        ohmstack_core::section::Analysis::Single(_) => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bare_numbers_take_the_display_unit() {
        // 1 mil = 25.4 µm exactly (international inch, 1959).
        let m = parse_length("w", "5", LengthUnit::Mil).unwrap();
        assert!((m - 127e-6).abs() < 1e-15);
        let m = parse_length("w", "0.1mm", LengthUnit::Mil).unwrap();
        assert!((m - 1e-4).abs() < 1e-15);
        let m = parse_length("w", "0.", LengthUnit::Mm).unwrap();
        assert_eq!(m, 0.0);
    }

    #[test]
    fn bad_text_reports_what_was_typed() {
        let e = parse_length("width", "abc", LengthUnit::Um).unwrap_err();
        assert!(e.contains("\"abc\"") && e.starts_with("width"), "{e}");
        let e = parse_length("width", "12", LengthUnit::Um);
        assert!(e.is_ok());
    }

    #[test]
    fn loss_and_spread_are_read_when_present() {
        // The app plans with loss and spread: every demo rule carries both, and the figures are the core's.
        let p = ohmstack_core::design::demo::project();
        let plan = plan_with(&p, &field_options()).unwrap();
        for outcome in &plan.rules {
            let r = outcome.ok().unwrap();
            let (f, db_in, db_cm) = loss_at(r).unwrap();
            assert_eq!(f, p.analysis_freq_hz);
            // 1 in = 2.54 cm exactly.
            assert!((db_in / db_cm - 2.54).abs() < 1e-12);
            let (lo, hi, yield_pct) = spread_of(r).unwrap();
            let mc = &r.spread.as_ref().unwrap().monte_carlo;
            assert_eq!(
                (lo, hi, yield_pct),
                (mc.min_ohm, mc.max_ohm, Some(mc.yield_pct))
            );
            assert!(lo < r.impedance_ohm && r.impedance_ohm < hi);
        }
        // Without a spread (the preview) there is none to read.
        let quick = plan_with(&p, &PlanOptions::preview()).unwrap();
        assert!(spread_of(quick.rules[0].ok().unwrap()).is_none());
    }

    #[test]
    fn demo_top_layer_allows_microstrip_structures_not_broadside() {
        let p = ohmstack_core::design::demo::project();
        let s = structures_for(&p.stackup, "L1 Top");
        assert!(s.contains(&Structure::Single) && s.contains(&Structure::EdgePair));
        assert!(!s.contains(&Structure::BroadsidePair));
        // L3 and L4 sit between the same two planes: a broadside pair is possible.
        assert_eq!(broadside_partners(&p.stackup, "L3 Inner"), vec!["L4 Inner"]);
    }
}

/// A field check of one rule, run in slices by the rule card.
pub type FieldJob = ohmstack_core::plan::field_check::RuleFieldJob;
/// A field-solver synthesis of one rule's width or spacing, run in slices by the rule card.
pub type FieldSynthesis = ohmstack_core::plan::field_synth::FieldSynthesis;

/// Slow field work of a rule card: a check of the closed form's dimensions, or a synthesis.
pub enum FieldWork {
    Check(Box<FieldJob>),
    Synthesis(Box<FieldSynthesis>),
}

impl FieldWork {
    /// About `budget` units of work (see the core's `FieldSolve::step`).
    pub fn step(&mut self, budget: usize) -> ohmstack_core::field::Progress {
        match self {
            FieldWork::Check(j) => j.step(budget),
            FieldWork::Synthesis(j) => j.step(budget),
        }
    }

    fn name(&self) -> &str {
        match self {
            FieldWork::Check(j) => j.name(),
            FieldWork::Synthesis(j) => j.name(),
        }
    }

    fn potential_map(&self) -> Option<ohmstack_core::field::PotentialMap> {
        match self {
            FieldWork::Check(j) => j.potential_map(),
            FieldWork::Synthesis(j) => j.potential_map(),
        }
    }
}

/// What the rule card shows of a finished field check.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldSummary {
    pub field_ohm: f64,
    pub error_pct: f64,
    pub difference_pct: Option<f64>,
    pub band_pct: Option<f64>,
    pub outside_band: bool,
    pub notes: Vec<String>,
}

/// What the rule card shows of a finished field synthesis (lengths already in the project's unit).
#[derive(Debug, Clone, PartialEq)]
pub struct SynthesisSummary {
    /// "width" or "spacing".
    pub dimension: &'static str,
    pub value_m: f64,
    pub value: String,
    pub closed_form: Option<String>,
    /// Field-solved against closed-form dimension, %.
    pub change_pct: Option<f64>,
    pub field_ohm: f64,
    pub error_pct: f64,
    pub closed_form_ohm_at_value: Option<f64>,
    pub solves: usize,
    pub converged: bool,
    pub notes: Vec<String>,
}

/// A finished piece of field work.
#[derive(Debug, Clone, PartialEq)]
pub enum FieldOutcome {
    Check(FieldSummary),
    Synthesis(SynthesisSummary),
}

fn rule_at(project: &Project, index: usize) -> Result<&ohmstack_core::ImpedanceRule, String> {
    project
        .rules
        .get(index)
        .ok_or_else(|| format!("no rule {index}"))
}

/// Starts the field check of rule `index` with the solver's default accuracy.
pub fn field_job(project: &Project, index: usize) -> Result<FieldWork, String> {
    FieldJob::start(
        project,
        rule_at(project, index)?,
        ohmstack_core::field::FieldOptions::default(),
    )
    .map(|j| FieldWork::Check(Box::new(j)))
    .map_err(|e| e.to_string())
}

/// Starts the field-solver synthesis of rule `index` (its width or spacing, whichever the rule solves).
pub fn field_synthesis_job(project: &Project, index: usize) -> Result<FieldWork, String> {
    FieldSynthesis::start(
        project,
        rule_at(project, index)?,
        ohmstack_core::field::FieldOptions::default(),
    )
    .map(|j| FieldWork::Synthesis(Box::new(j)))
    .map_err(|e| e.to_string())
}

/// The finished work in plain figures (unfinished work reads as an error).
pub fn field_outcome(work: &FieldWork, unit: LengthUnit) -> Result<FieldOutcome, String> {
    match work {
        FieldWork::Check(job) => field_summary(job).map(FieldOutcome::Check),
        FieldWork::Synthesis(job) => {
            let r = job
                .result()
                .ok_or("the field synthesis has not finished")?
                .map_err(|e| e.to_string())?;
            Ok(FieldOutcome::Synthesis(SynthesisSummary {
                dimension: r.dimension,
                value_m: r.value_m,
                value: units::format_length(r.value_m, unit),
                closed_form: r.closed_form_m.map(|c| units::format_length(c, unit)),
                change_pct: r.closed_form_m.map(|c| (r.value_m / c - 1.0) * 100.0),
                field_ohm: r.field_ohm,
                error_pct: r.error_estimate_pct,
                closed_form_ohm_at_value: r.closed_form_ohm_at_value,
                solves: r.solves,
                converged: r.converged,
                notes: r.warnings.iter().map(|w| w.message.clone()).collect(),
            }))
        }
    }
}

/// The finished check in plain figures (an unfinished job reads as an error).
pub fn field_summary(job: &FieldJob) -> Result<FieldSummary, String> {
    let check = job
        .finish()
        .ok_or("the field solve has not finished")?
        .map_err(|e| e.to_string())?;
    let c = &check.comparison;
    let outside_band = matches!((c.difference_pct, c.band_pct), (Some(d), Some(b)) if d.abs() > b + c.field_error_pct);
    let mut notes: Vec<String> = c.warnings.iter().map(|w| w.message.clone()).collect();
    notes.extend(check.field.warnings.iter().map(|w| w.message.clone()));
    Ok(FieldSummary {
        field_ohm: c.field_ohm,
        error_pct: c.field_error_pct,
        difference_pct: c.difference_pct,
        band_pct: c.band_pct,
        outside_band,
        notes,
    })
}

/// The potential map of a rule's finished field work.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldMapView {
    /// The rule's index and name when it was solved.
    pub rule: usize,
    pub name: String,
    /// The core's SVG (user text in it is escaped there).
    pub svg: yew::AttrValue,
    /// The drive in words ("trace at 1 V, …").
    pub drive: &'static str,
    /// Nodes of the solver grid the map samples.
    pub solver_nodes: usize,
    /// Counts maps made in this page, so a repeated solve of the same rule still reads as new.
    pub serial: u32,
}

/// Draws the potential of rule `index`'s finished field work.
pub fn field_map_view(work: &FieldWork, index: usize, serial: u32) -> Result<FieldMapView, String> {
    let map = work
        .potential_map()
        .ok_or("the field solve gave no potential to draw")?;
    let title = format!("Potential of {} ({})", work.name(), map.drive_label());
    let svg = plot::potential_map(&map, &title).map_err(|e| e.to_string())?;
    Ok(FieldMapView {
        rule: index,
        name: work.name().to_string(),
        svg: yew::AttrValue::from(svg),
        drive: map.drive_label(),
        solver_nodes: map.solver_nodes,
        serial,
    })
}

// ---- Share links, fab notes, drawings and plots (panels/share.rs, notes.rs, pictures.rs) ----

use ohmstack_core::base::units::format_length;
use ohmstack_core::line::loss;
use ohmstack_core::output::plot::{self, LinePlot, Series};
use ohmstack_core::output::report::{self, FabNotes};
use ohmstack_core::output::{draw, touchstone};

/// The share-link fragment (`v1.…`, no `#`) of `project`.
pub fn encode_link(project: &Project) -> String {
    ohmstack_core::design::share::encode(project)
}

/// Reads a share link (untrusted; the error is the core's `ShareError` text), with what reading an older schema
/// changed, in the user's words (said when the link opens).
pub fn decode_link_noting(link: &str) -> Result<(Project, Vec<String>), String> {
    ohmstack_core::design::share::decode_noting(link).map_err(|e| e.to_string())
}

/// Reads a saved project (untrusted: validated like a file).
pub fn project_from_json(text: &str) -> Result<Project, String> {
    Project::from_json(text).map_err(|e| e.to_string())
}

/// The fab notes as table cells ready to show as text, plus the downloadable Markdown and CSV.
#[derive(Debug, Clone, PartialEq)]
pub struct NotesView {
    pub title: String,
    /// "Revision B · Issued 2026-03-14" (either part may be missing).
    pub issue: String,
    pub stack_head: Vec<&'static str>,
    pub stack: Vec<Vec<String>>,
    pub total: String,
    pub impedance_head: Vec<&'static str>,
    /// Cells of each impedance row, and whether the row failed or is out of tolerance.
    pub impedance: Vec<(Vec<String>, bool)>,
    pub routing_head: Vec<&'static str>,
    /// Cells of each rule's routing row (none until the plan's routing figures are in).
    pub routing: Vec<Vec<String>>,
    pub notes: Vec<String>,
    /// The stack's cross-section (core SVG, user text escaped there), or why it could not be drawn.
    pub drawing: Result<String, String>,
    pub markdown: String,
    pub csv: String,
}

/// Today's date as the core's issue date, from the browser's local calendar (`None` outside a browser).
pub fn today() -> Option<report::IssueDate> {
    #[cfg(target_arch = "wasm32")]
    {
        let now = js_sys::Date::new_0();
        report::IssueDate::new(
            now.get_full_year() as i32,
            now.get_month() as u8 + 1,
            now.get_date() as u8,
        )
        .ok()
    }
    #[cfg(not(target_arch = "wasm32"))]
    {
        None
    }
}

/// Builds the fab-notes view issued on `date`; the cells carry the same text as the Markdown notes (unescaped:
/// shown as text).
pub fn notes_view(project: &Project, plan: &Plan, date: Option<report::IssueDate>) -> NotesView {
    let notes: FabNotes = report::fab_notes(project, plan, date);
    let impedance = notes
        .impedance_cells()
        .into_iter()
        .zip(&notes.impedance)
        .map(|(cells, row)| (cells, row.is_bad()))
        .collect();
    NotesView {
        title: notes.title.clone(),
        issue: notes.issue_line(),
        stack_head: report::STACK_HEAD.to_vec(),
        stack: notes.stack_cells(),
        total: notes.total_text(),
        impedance_head: report::IMPEDANCE_HEAD.to_vec(),
        impedance,
        routing_head: report::ROUTING_HEAD.to_vec(),
        routing: notes.routing_cells(),
        notes: notes.notes.clone(),
        drawing: cross_section_svg(project, None),
        markdown: notes.to_markdown(),
        csv: notes.to_csv(),
    }
}

/// The SVG cross-section of the stack with the traces of rule `rule_idx` (core escapes all user text).
pub fn cross_section_svg(project: &Project, rule_idx: Option<usize>) -> Result<String, String> {
    draw::cross_section_svg(project, rule_idx).map_err(|e| e.to_string())
}

/// The loss model of rule `idx` from its planned result: rebuilt from what the plan's engine found (no solve on
/// the page's thread).
fn loss_model_of<'a>(
    project: &'a Project,
    idx: usize,
    result: &RuleResult,
) -> Result<(&'a ImpedanceRule, loss::LineModel), String> {
    let rule = rule_at(project, idx)?;
    let model =
        ohmstack_core::plan::rule::loss_model(project, rule, result).map_err(|e| e.to_string())?;
    Ok((rule, model))
}

/// Loss (dB/in) of the signal mode against frequency over the default sweep: total, conductor, dielectric.
pub fn loss_plot_svg(project: &Project, idx: usize, result: &RuleResult) -> Result<String, String> {
    let (rule, model) = loss_model_of(project, idx, result)?;
    let points = model
        .sweep(&loss::Sweep::default())
        .map_err(|e| e.to_string())?;
    let pick = |f: fn(&loss::ModeLoss) -> f64| -> Vec<(f64, f64)> {
        points
            .iter()
            .filter_map(|p| p.signal().map(|m| (p.freq_hz / 1e9, f(m))))
            .collect()
    };
    let mode = if rule.structure.is_pair() {
        "odd mode, per line"
    } else {
        "single line"
    };
    Ok(plot::line_plot(&LinePlot {
        title: format!("Loss of {} ({mode})", rule.name),
        x_label: "frequency (GHz)".into(),
        y_label: "loss (dB/in)".into(),
        series: vec![
            Series {
                label: "total".into(),
                points: pick(|m| m.total.db_per_in),
            },
            Series {
                label: "conductor".into(),
                points: pick(|m| m.conductor.db_per_in),
            },
            Series {
                label: "dielectric".into(),
                points: pick(|m| m.dielectric.db_per_in),
            },
        ],
        log_x: true,
    }))
}

/// Impedance against trace width (±30 % around the solution) with the target, its tolerance band and the
/// solved width marked, from the rule's planned result.
pub fn z_width_plot_svg(project: &Project, idx: usize, r: &RuleResult) -> Result<String, String> {
    let rule = rule_at(project, idx)?;
    let pts = plot::z_vs_width_of(rule, r, 61);
    let unit = project.units;
    let x = |w: f64| unit.from_m(w);
    let (w0, w1) = (x(r.width_m * 0.7), x(r.width_m * 1.3));
    let (zmin, zmax) = pts
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
            (a.min(p.1), b.max(p.1))
        });
    let band = r.target_ohm * r.tolerance_pct / 100.0;
    let flat = |z: f64| vec![(w0, z), (w1, z)];
    Ok(plot::line_plot(&LinePlot {
        title: format!("Impedance against width: {}", rule.name),
        x_label: format!("trace width ({})", unit.symbol()),
        y_label: "impedance (Ω)".into(),
        series: vec![
            Series {
                label: "computed".into(),
                points: pts.iter().map(|&(w, z)| (x(w), z)).collect(),
            },
            Series {
                label: format!("target {} Ω", format_sig(r.target_ohm, 4)),
                points: flat(r.target_ohm),
            },
            Series {
                label: format!("± {} %", format_sig(r.tolerance_pct, 3)),
                // One series, two lines: a non-finite point breaks the line (plot::line_plot).
                points: [
                    flat(r.target_ohm + band),
                    vec![(f64::NAN, f64::NAN)],
                    flat(r.target_ohm - band),
                ]
                .concat(),
            },
            Series {
                label: format!("solution {}", format_length(r.width_m, unit)),
                points: vec![(x(r.width_m), zmin), (x(r.width_m), zmax)],
            },
        ],
        log_x: false,
    }))
}

/// The Monte Carlo spread of one rule: the histogram SVG with the tolerance window, and its statistics.
#[derive(Debug, Clone, PartialEq)]
pub struct SpreadView {
    pub svg: String,
    pub samples: usize,
    pub failed: usize,
    pub mean_ohm: f64,
    pub sigma_ohm: f64,
    pub yield_pct: f64,
    pub lower_ohm: f64,
    pub upper_ohm: f64,
}

/// The tolerance spread the plan computed for a rule (the plan worker's second step: the default samples and seed,
/// the same figures as `ohmstack spread`), drawn from its binned samples: nothing is sampled on the page's thread.
/// An error while the spread is still being computed, or when the plan could not compute one.
pub fn spread_view(result: &RuleResult) -> Result<SpreadView, String> {
    let summary = result
        .spread
        .as_ref()
        .ok_or_else(|| "the tolerance spread of this rule is still being computed".to_string())?;
    let mc = &summary.monte_carlo;
    let counts: Vec<usize> = mc.histogram.counts.iter().map(|&c| c as usize).collect();
    let svg = plot::histogram_of_bins(
        &format!(
            "Tolerance spread of {} ({} samples)",
            result.name, mc.samples
        ),
        "impedance (Ω)",
        mc.histogram.lo_ohm,
        mc.histogram.hi_ohm,
        &counts,
        Some((summary.lower_ohm, summary.upper_ohm)),
        Some((mc.yield_pct, mc.samples)),
    );
    Ok(SpreadView {
        svg,
        samples: mc.samples,
        failed: mc.failed,
        mean_ohm: mc.mean_ohm,
        sigma_ohm: mc.sigma_ohm,
        yield_pct: mc.yield_pct,
        lower_ohm: summary.lower_ohm,
        upper_ohm: summary.upper_ohm,
    })
}

/// Touchstone text of a `length` segment of rule `idx` (50 Ω ports, the default sweep), with a file name ending
/// in `.s2p` (single line) or `.s4p` (pair). The title line matches the CLI's.
pub fn touchstone_file(
    project: &Project,
    idx: usize,
    result: &RuleResult,
    length: &str,
) -> Result<(String, String), String> {
    let length_m = units::parse_length("length", length.trim()).map_err(|e| e.to_string())?;
    let (rule, model) = loss_model_of(project, idx, result)?;
    let freqs = loss::Sweep::default()
        .frequencies()
        .map_err(|e| e.to_string())?;
    let title = format!("{} — rule {}", project.title, rule.name);
    let (text, ports) =
        touchstone::segment(&model, length_m, 50.0, &freqs, &title).map_err(|e| e.to_string())?;
    let stem: String = rule
        .name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' {
                c
            } else {
                '_'
            }
        })
        .take(60)
        .collect();
    let stem = if stem.is_empty() { "line".into() } else { stem };
    Ok((format!("{stem}.s{ports}p"), text))
}
