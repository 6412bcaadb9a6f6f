//! `ohmstack calc KIND` and `ohmstack solve KIND --target OHMS`: one line given by its own dimensions, analysed
//! as given or with its width solved for a target impedance, on the field engine unless `--engine` says otherwise.
//! The case becomes a one-rule project (`plan::case::project`) and is solved and analysed as a project's rule is
//! (`plan::solve_line`: `section::resolve` → synthesis → engine; `analyze` adds loss and the rule's verdict on
//! top); on a field engine the closed form is shown beside it with its difference.
//! `batch` runs the same computation per JSON line.

use ohmstack_core::base::units::{format_length, format_sig, LengthUnit};
use ohmstack_core::closed_form::bands;
use ohmstack_core::engine::{is_field_method, Engine};
use ohmstack_core::plan::{case, solve_line, synthesis, SolvedLine};
use ohmstack_core::section::Analysis;
use ohmstack_core::Project;

use crate::args::{CaseArgs, CaseEngine, CaseEngineArgs, Ohms};
use anyhow::{anyhow, Result};
use serde_json::{json, Value};
use std::collections::BTreeMap;

const CALC_EXAMPLE: &str =
    "Example: ohmstack calc microstrip --width 0.3mm --height 0.17mm --thickness 35um --dk 4.2\n\
     Each structure's fields are listed by `ohmstack kinds`. Figures come from the 2D field engine unless \
     --engine says otherwise; the closed form is shown beside them with its difference.";

const SOLVE_EXAMPLE: &str =
    "Example: ohmstack solve microstrip --target 50 --height 5mil --thickness 1oz --dk 4.0\n\
     --width, if given, is only where the search starts. The width is solved on the field engine unless \
     --engine says otherwise.";

#[derive(clap::Args)]
#[command(after_help = CALC_EXAMPLE)]
pub struct CalcArgs {
    /// Print the result as JSON
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub case: CaseArgs,
    #[command(flatten)]
    pub engine: CaseEngineArgs,
}

#[derive(clap::Args)]
#[command(after_help = SOLVE_EXAMPLE)]
pub struct SolveArgs {
    /// Print the result as JSON
    #[arg(long)]
    pub json: bool,
    /// The impedance to solve for, in Ω (differential for a pair)
    #[arg(long, value_name = "OHMS", value_parser = Ohms, allow_hyphen_values = true)]
    pub target: f64,
    #[command(flatten)]
    pub case: CaseArgs,
    #[command(flatten)]
    pub engine: CaseEngineArgs,
}

pub fn run_calc(args: CalcArgs) -> Result<()> {
    let r = compute(
        &args.case.kind,
        args.case.fields(),
        None,
        args.engine.engine,
    )?;
    print(&r, args.json)
}

pub fn run_solve(args: SolveArgs) -> Result<()> {
    let r = compute(
        &args.case.kind,
        args.case.fields(),
        Some(args.target),
        args.engine.engine,
    )?;
    print(&r, args.json)
}

/// One case computed on one engine, with the closed form beside it when another engine made the figures.
pub struct CaseResult {
    pub kind: String,
    pub engine: CaseEngine,
    pub project: Project,
    /// The line as the engine answered it.
    pub line: SolvedLine,
    /// The closed form's measured band against the field solver, ± %, where it is wide (closed-form figures only).
    pub model_band_pct: Option<f64>,
    /// Whether the width was solved (for the rule's target).
    pub solved: bool,
    /// The closed form at the same dimensions (and, when solving, its own width), or why it has none.
    pub closed_form: Option<Result<ClosedFormCheck, String>>,
    /// Notes about the inputs the chosen engine does not model.
    pub notes: Vec<String>,
}

/// The closed form beside a field figure.
pub struct ClosedFormCheck {
    pub method: &'static str,
    /// The closed form's controlled impedance at the field result's dimensions, Ω.
    pub impedance_ohm: f64,
    /// (closed − field) / field, %.
    pub difference_pct: f64,
    /// When solving: the width the closed form gives for the target, and its difference from the field width, %.
    pub width: Option<(f64, f64)>,
}

/// Reads the case and computes it on `engine`; with a target, the width is solved first.
pub fn compute(
    kind: &str,
    fields: BTreeMap<String, String>,
    target: Option<f64>,
    engine: CaseEngine,
) -> Result<CaseResult> {
    let project = case::project(kind, &fields, target)?;
    let rule = &project.rules[0];
    let core_engine = Engine::named(engine.name(), &project)
        .ok_or_else(|| anyhow!("engine: unknown engine {:?}", engine.name()))?;
    let line = solve_line(&project, rule, &core_engine).map_err(user_words)?;
    let mut notes = Vec::new();
    let model_band_pct = if is_field_method(line.answer.method) {
        None
    } else {
        bands::wide_for(&line.cross_section, rule.structure, &line.dims)
    };
    if let Some(band) = model_band_pct {
        notes.push(format!(
            "this closed form differs from the 2D field solver by up to ±{} % on this structure (measured, \
             docs/accuracy.md); the field engine (the default) gives the field figure",
            format_sig(band, 3)
        ));
    }
    let closed_form = if engine == CaseEngine::ClosedForm {
        if project.fab.etch_factor.is_some() {
            notes.push(
                "the closed forms take the trace as a rectangle: --etch-factor is left out (the field \
                 engines model it)"
                    .to_string(),
            );
        }
        None
    } else {
        Some(closed_form_beside(&project, &line))
    };
    Ok(CaseResult {
        kind: kind.to_string(),
        engine,
        solved: target.is_some(),
        project,
        line,
        model_band_pct,
        closed_form,
        notes,
    })
}

/// The closed form at the field result's dimensions, and its own solved width when the width was solved.
fn closed_form_beside(project: &Project, line: &SolvedLine) -> Result<ClosedFormCheck, String> {
    let rule = &project.rules[0];
    let answer = Engine::ClosedForm
        .analyze(&line.cross_section, rule.structure, &line.dims)
        .map_err(|e| e.to_string())?;
    let (z, z_field) = (answer.controlled(), line.answer.controlled());
    let w = line.dims.w;
    let width = match synthesis::closed_form_start(project, rule) {
        (dims, Some(_), _) if line.solved.is_some() => Some((dims.w, (dims.w - w) / w * 100.0)),
        _ => None,
    };
    Ok(ClosedFormCheck {
        method: answer.method,
        impedance_ohm: z,
        difference_pct: (z - z_field) / z_field * 100.0,
        width,
    })
}

/// Core messages name the etch factor as the project file does; a case gave it as `etch-factor`.
fn user_words(e: ohmstack_core::Error) -> anyhow::Error {
    anyhow!("{}", e.to_string().replace("etch_factor", "etch-factor"))
}

/// The notes to show: the section's, the model's, the synthesis's, and this command's own.
fn shown_notes(c: &CaseResult) -> Vec<String> {
    let line = &c.line;
    let mut notes: Vec<String> = Vec::new();
    let found = line
        .cross_section
        .warnings
        .iter()
        .chain(line.answer.analysis.warnings())
        .chain(&line.notes)
        .map(|w| w.message.clone());
    for note in found.chain(c.notes.iter().cloned()) {
        if !notes.contains(&note) {
            notes.push(note);
        }
    }
    notes
}

/// The JSON object of a computed case (`calc --json`, `solve --json`, one `batch` line).
pub fn case_json(c: &CaseResult) -> Value {
    let (line, rule) = (&c.line, &c.project.rules[0]);
    let mut v = json!({
        "structure": c.kind,
        "family": line.cross_section.family_for(rule.structure),
        "engine": c.engine.name(),
        "method": line.answer.method,
        "error_estimate_pct": line.answer.error_estimate_pct,
        "width_m": line.dims.w,
        "cross_section": line.cross_section,
        "warnings": shown_notes(c),
    });
    if let Some(g) = line.dims.gap {
        v["gap_m"] = json!(g);
    }
    if let Some(ef) = c.project.fab.etch_factor {
        v["etch_factor"] = json!(ef);
    }
    if c.solved {
        v["target_ohm"] = json!(rule.target_ohm);
    }
    if let Some(band) = c.model_band_pct {
        v["model_band_pct"] = json!(band);
    }
    match &line.answer.analysis {
        Analysis::Single(s) => {
            v["z0_ohm"] = json!(s.z0);
            v["eps_eff"] = json!(s.eps_eff);
            v["delay_s_per_m"] = json!(s.delay_per_m());
            v["inductance_per_m"] = json!(s.inductance_per_m());
            v["capacitance_per_m"] = json!(s.capacitance_per_m());
        }
        Analysis::Pair(p) => {
            v["spacing_m"] = json!(line.dims.s);
            v["z_odd_ohm"] = json!(p.z_odd);
            v["z_even_ohm"] = json!(p.z_even);
            v["z_diff_ohm"] = json!(p.z_diff());
            v["z_common_ohm"] = json!(p.z_common());
            v["eps_eff_odd"] = json!(p.eps_eff_odd);
            v["eps_eff_even"] = json!(p.eps_eff_even);
        }
    }
    match &c.closed_form {
        Some(Ok(cf)) => {
            let mut check = json!({
                "method": cf.method,
                "impedance_ohm": cf.impedance_ohm,
                "difference_pct": cf.difference_pct,
            });
            if let Some((w, d)) = cf.width {
                check["width_m"] = json!(w);
                check["width_difference_pct"] = json!(d);
            }
            v["closed_form"] = check;
        }
        Some(Err(reason)) => v["closed_form"] = json!({ "error": reason }),
        None => {}
    }
    v
}

fn print(c: &CaseResult, json: bool) -> Result<()> {
    if json {
        println!("{}", serde_json::to_string_pretty(&case_json(c))?);
        return Ok(());
    }
    let (line, rule) = (&c.line, &c.project.rules[0]);
    let unit = LengthUnit::Um;
    let estimate = match line.answer.error_estimate_pct {
        Some(e) => format!(", estimated error {} %", format_sig(e, 2)),
        None => match c.model_band_pct {
            Some(b) => format!(", measured band ±{} %", format_sig(b, 3)),
            None => String::new(),
        },
    };
    println!(
        "{} — {}{estimate}",
        line.cross_section.family_for(rule.structure),
        line.answer.method
    );
    println!("  width       {}", format_length(line.dims.w, unit));
    if let Some(s) = line.dims.s {
        println!("  spacing     {}", format_length(s, unit));
    }
    let controlled = match &line.answer.analysis {
        Analysis::Single(s) => {
            println!("  Z0          {} Ω", format_sig(s.z0, 5));
            println!("  Dk eff      {}", format_sig(s.eps_eff, 5));
            println!(
                "  delay       {} ps/mm",
                format_sig(s.delay_per_m() * 1e9, 4)
            );
            "Z0"
        }
        Analysis::Pair(p) => {
            println!("  Zdiff       {} Ω", format_sig(p.z_diff(), 5));
            println!("  Zcommon     {} Ω", format_sig(p.z_common(), 5));
            println!(
                "  Zodd/Zeven  {} / {} Ω",
                format_sig(p.z_odd, 5),
                format_sig(p.z_even, 5)
            );
            "Zdiff"
        }
    };
    match &c.closed_form {
        Some(Ok(cf)) => {
            println!(
                "  closed form {controlled} {} Ω at these dimensions, {:+.2} % from the field figure ({})",
                format_sig(cf.impedance_ohm, 5),
                cf.difference_pct,
                cf.method
            );
            if let Some((w, d)) = cf.width {
                println!(
                    "              its width for {} Ω: {}, {d:+.2} %",
                    format_sig(rule.target_ohm, 4),
                    format_length(w, unit)
                );
            }
        }
        Some(Err(reason)) => println!("  closed form none: {reason}"),
        None => {}
    }
    for note in shown_notes(c) {
        println!("  note: {note}");
    }
    Ok(())
}
