//! `ohmstack field FILE`: the closed form against a 2D field solve for each rule of a project. Also home of what
//! `field-calc` and `field-solve` share with it: the solver options, the `--map` output and the result printing.

use ohmstack_core::base::error::in_range;
use ohmstack_core::base::units::{format_length, format_sig};
use ohmstack_core::design::project::Solve;
use ohmstack_core::field::boundary::BemOptions;
use ohmstack_core::field::{Comparison, FieldOptions, FieldResult, PotentialMap};
use ohmstack_core::output::plot::potential_map;
use ohmstack_core::plan::field_check::{check_rule_fast, RuleFieldJob};
use ohmstack_core::section::Analysis;
use ohmstack_core::{Error as CoreError, Project};

use crate::args::Percent;
use crate::files::read_input;
use anyhow::{anyhow, bail, Context, Result};
use serde_json::{json, Value};
use std::time::Instant;

/// The options `field` and `field-solve` share.
#[derive(clap::Args)]
pub struct ProjectFieldArgs {
    /// Project file (- reads stdin)
    #[arg(value_name = "FILE")]
    pub file: String,
    /// Only the rule of this name
    #[arg(long, value_name = "NAME", allow_hyphen_values = true)]
    pub rule: Option<String>,
    /// Print the results as JSON
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub solver: SolverArgs,
}

/// Field-solver options and the potential map output.
#[derive(clap::Args)]
#[command(next_help_heading = "Field solver")]
pub struct SolverArgs {
    /// Error tolerance of the solve, percent
    #[arg(long, value_name = "PCT", value_parser = Percent, allow_hyphen_values = true)]
    pub tolerance: Option<f64>,
    /// Write the solution's potential: an SVG picture (.svg) or the sampled values (.json); needs one rule
    #[arg(long, value_name = "OUT.svg|OUT.json", value_parser = map_target, allow_hyphen_values = true)]
    pub map: Option<MapTarget>,
}

impl SolverArgs {
    /// Field-solver options from `--tolerance PCT`.
    pub fn options(&self) -> Result<FieldOptions> {
        let mut options = FieldOptions::default();
        if let Some(pct) = self.tolerance {
            options.tolerance = in_range("tolerance", pct, 0.001, 10.0, "%")? / 100.0;
        }
        Ok(options)
    }
}

#[derive(clap::Args)]
#[command(
    after_help = "--map writes the solution's potential; name one rule for it with --rule NAME."
)]
pub struct Args {
    #[command(flatten)]
    pub project: ProjectFieldArgs,
    /// Which field engine checks the closed form: the fast boundary-element engine, or the finite-volume
    /// reference (default)
    #[arg(long, value_enum, default_value_t = FieldEngine::Reference, help_heading = "Field solver")]
    pub engine: FieldEngine,
}

/// The two field engines `field` and `field-calc` can run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum FieldEngine {
    /// Boundary elements: milliseconds, within 0.1 % of the reference
    Field,
    /// Finite volumes with Richardson extrapolation: the independent reference
    Reference,
}

/// Where `--map` writes, and as what.
#[derive(Clone)]
pub enum MapTarget {
    Svg(String),
    Json(String),
}

fn map_target(path: &str) -> Result<MapTarget, String> {
    let lower = path.to_ascii_lowercase();
    if lower.ends_with(".svg") {
        Ok(MapTarget::Svg(path.to_string()))
    } else if lower.ends_with(".json") {
        Ok(MapTarget::Json(path.to_string()))
    } else {
        Err(format!(
            "{path:?} must end in .svg (a picture) or .json (the sampled potential)"
        ))
    }
}

/// Writes the potential map of a finished solve.
pub fn write_map(target: &MapTarget, map: Option<PotentialMap>, title: &str) -> Result<()> {
    let map = map.ok_or_else(|| anyhow!("--map: the field solve gave no potential to draw"))?;
    let (path, text) = match target {
        MapTarget::Svg(p) => {
            let title = format!("Potential of {title} ({})", map.drive_label());
            (p, potential_map(&map, &title)?)
        }
        MapTarget::Json(p) => (p, serde_json::to_string(&map)?),
    };
    std::fs::write(path, text).with_context(|| format!("--map: writing {path}"))
}

pub fn field_json(r: &FieldResult) -> Value {
    let mut v = json!({
        "controlled_ohm": r.controlled_ohm,
        "finest_ohm": r.finest_ohm,
        "error_estimate_pct": r.error_estimate_pct,
        "observed_order": r.observed_order,
        "converged": r.converged,
        "c_matrix": r.c_matrix,
        "c0_matrix": r.c0_matrix,
        "l_matrix": r.l_matrix,
        "levels": r.levels.iter().map(|l| json!({
            "eta": l.eta, "nx": l.nx, "ny": l.ny, "iterations": l.iterations, "controlled_ohm": l.controlled_ohm,
        })).collect::<Vec<_>>(),
        "warnings": r.warnings.iter().map(|w| w.message.clone()).collect::<Vec<_>>(),
    });
    match &r.analysis {
        Analysis::Single(s) => {
            v["z0_ohm"] = json!(s.z0);
            v["eps_eff"] = json!(s.eps_eff);
        }
        Analysis::Pair(p) => {
            v["z_odd_ohm"] = json!(p.z_odd);
            v["z_even_ohm"] = json!(p.z_even);
            v["z_diff_ohm"] = json!(p.z_diff());
            v["z_common_ohm"] = json!(p.z_common());
            v["eps_eff_odd"] = json!(p.eps_eff_odd);
            v["eps_eff_even"] = json!(p.eps_eff_even);
        }
    }
    v
}

pub fn comparison_line(c: &Comparison) -> String {
    match (c.method, c.closed_form_ohm, c.difference_pct) {
        (Some(m), Some(z), Some(d)) => format!(
            "closed form {} Ω ({m}), difference {d:+.2} % (band ±{} %)",
            format_sig(z, 5),
            c.band_pct.unwrap_or(0.0)
        ),
        _ => "no closed form for this structure".into(),
    }
}

pub fn print_field(r: &FieldResult) {
    match &r.analysis {
        Analysis::Single(s) => {
            println!("  Z0          {} Ω", format_sig(s.z0, 5));
            println!("  Dk eff      {}", format_sig(s.eps_eff, 5));
        }
        Analysis::Pair(p) => {
            println!("  Zdiff       {} Ω", format_sig(p.z_diff(), 5));
            println!("  Zcommon     {} Ω", format_sig(p.z_common(), 5));
            println!(
                "  Zodd/Zeven  {} / {} Ω",
                format_sig(p.z_odd, 5),
                format_sig(p.z_even, 5)
            );
            println!(
                "  Dk eff o/e  {} / {}",
                format_sig(p.eps_eff_odd, 5),
                format_sig(p.eps_eff_even, 5)
            );
        }
    }
    let last = r.levels.last();
    println!(
        "  error est.  {:.3} % ({} levels, finest grid {}×{}, order {})",
        r.error_estimate_pct,
        r.levels.len(),
        last.map(|l| l.nx).unwrap_or(0),
        last.map(|l| l.ny).unwrap_or(0),
        r.observed_order
            .map(|p| format!("{p:.2}"))
            .unwrap_or_else(|| "n/a".into())
    );
}

/// The inputs of `field` and `field-solve`: the project, the rules chosen by `--rule` (for a synthesis, without
/// `--rule`, only those that solve a dimension), the `--map` target (one rule only) and the solver options.
pub struct FieldInputs {
    pub project: Project,
    pub rules: Vec<usize>,
    pub map: Option<MapTarget>,
    pub options: FieldOptions,
    pub json: bool,
}

pub fn field_inputs(args: ProjectFieldArgs, solving: bool) -> Result<FieldInputs> {
    let options = args.solver.options()?;
    let only = args.rule;
    let project = Project::from_json(&read_input(&args.file)?)?;
    let rules: Vec<usize> = (0..project.rules.len())
        .filter(|&i| {
            let r = &project.rules[i];
            match only.as_deref() {
                Some(n) => r.name == n,
                None => !solving || r.solve != Solve::Nothing,
            }
        })
        .collect();
    if rules.is_empty() {
        bail!(
            "--rule: no rule named {:?}{}",
            only.as_deref().unwrap_or_default(),
            if solving {
                " that solves a dimension"
            } else {
                ""
            }
        );
    }
    if args.solver.map.is_some() && rules.len() > 1 {
        bail!("--map: pictures one rule; name it with --rule NAME");
    }
    Ok(FieldInputs {
        project,
        rules,
        map: args.solver.map,
        options,
        json: args.json,
    })
}

pub fn run(args: Args) -> Result<()> {
    let engine = args.engine;
    let FieldInputs {
        project,
        rules,
        map: map_path,
        options,
        json,
    } = field_inputs(args.project, false)?;
    if engine == FieldEngine::Field && map_path.is_some() {
        bail!("--map: the potential map comes from the reference engine; drop --engine field");
    }
    let mut out = Vec::new();
    for &i in &rules {
        let rule = &project.rules[i];
        let started = Instant::now();
        if engine == FieldEngine::Field {
            let bem = BemOptions {
                tolerance: options.tolerance,
                ..BemOptions::default()
            };
            let check = check_rule_fast(&project, rule, &bem);
            out.push((
                rule.name.clone(),
                check,
                started.elapsed().as_secs_f64() * 1e3,
            ));
            continue;
        }
        let mut job = None;
        let check = RuleFieldJob::start(&project, rule, options).and_then(|mut j| {
            j.run();
            let check = j.finish().unwrap_or_else(|| {
                Err(CoreError::Invalid {
                    field: "field".into(),
                    reason: "the field solve did not finish".into(),
                })
            });
            job = Some(j);
            check
        });
        if let Some(target) = &map_path {
            match (&check, &job) {
                (Ok(_), Some(j)) => write_map(target, j.potential_map(), &rule.name)?,
                (Err(e), _) => bail!("--map: the field solve of {:?} failed: {e}", rule.name),
                (Ok(_), None) => bail!(
                    "--map: the field solve of {:?} gave no potential",
                    rule.name
                ),
            }
        }
        let ms = started.elapsed().as_secs_f64() * 1e3;
        out.push((rule.name.clone(), check, ms));
    }
    if json {
        let v: Vec<Value> = out
            .iter()
            .map(|(name, check, ms)| match check {
                Ok(c) => json!({
                    "name": name,
                    "layer": c.layer,
                    "family": c.family,
                    "structure": c.structure,
                    "width_m": c.width_m,
                    "spacing_m": c.spacing_m,
                    "gap_m": c.gap_m,
                    "etch_factor": c.etch_factor,
                    "comparison": c.comparison,
                    "field": field_json(&c.field),
                    "time_ms": ms,
                }),
                Err(e) => json!({ "name": name, "error": e.to_string() }),
            })
            .collect();
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    let unit = project.units;
    for (name, check, ms) in &out {
        match check {
            Ok(c) => {
                println!(
                    "{name} — {} on {}, width {}{} ({ms:.0} ms)",
                    c.description,
                    c.layer,
                    format_length(c.width_m, unit),
                    c.spacing_m
                        .map(|s| format!(", spacing {}", format_length(s, unit)))
                        .unwrap_or_default()
                );
                print_field(&c.field);
                println!("  {}", comparison_line(&c.comparison));
                for w in c.field.warnings.iter().chain(c.comparison.warnings.iter()) {
                    println!("  note: {}", w.message);
                }
            }
            Err(e) => println!("{name} — error: {e}"),
        }
    }
    Ok(())
}
