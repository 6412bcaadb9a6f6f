//! `ohmstack calc KIND` and `ohmstack solve KIND --target OHMS`: one line given by its own dimensions, analysed
//! as given or with its width solved for a target impedance. `batch` runs the same computation per JSON line.

use ohmstack_core::base::error::in_range;
use ohmstack_core::base::units::{format_length, format_sig, LengthUnit};
use ohmstack_core::closed_form::Evaluated;
use ohmstack_core::plan::case::{self, LineCase};
use ohmstack_core::section::Analysis;

use crate::args::{CaseArgs, Ohms};
use anyhow::Result;
use serde_json::{json, Value};
use std::collections::BTreeMap;

const CALC_EXAMPLE: &str =
    "Example: ohmstack calc microstrip --width 0.3mm --height 0.17mm --thickness 35um --dk 4.2\n\
     Each structure's fields are listed by `ohmstack kinds`.";

const SOLVE_EXAMPLE: &str =
    "Example: ohmstack solve microstrip --target 50 --height 5mil --thickness 1oz --dk 4.0\n\
     --width, if given, is only where the search starts.";

#[derive(clap::Args)]
#[command(after_help = CALC_EXAMPLE)]
pub struct CalcArgs {
    /// Print the result as JSON
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub case: CaseArgs,
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
}

pub fn run_calc(args: CalcArgs) -> Result<()> {
    let (case, e) = compute(&args.case.kind, args.case.fields(), None)?;
    print(&case, &e, args.json)
}

pub fn run_solve(args: SolveArgs) -> Result<()> {
    let (case, e) = compute(&args.case.kind, args.case.fields(), Some(args.target))?;
    print(&case, &e, args.json)
}

pub fn evaluated_json(case: &LineCase, e: &Evaluated) -> Value {
    let mut v = json!({
        "structure": case.kind,
        "family": case.cross_section.family_for(case.structure),
        "method": e.method,
        "width_m": case.dims.w,
        "warnings": e.analysis.warnings().iter().map(|w| w.message.clone()).collect::<Vec<_>>(),
    });
    match &e.analysis {
        Analysis::Single(s) => {
            v["z0_ohm"] = json!(s.z0);
            v["eps_eff"] = json!(s.eps_eff);
            v["delay_s_per_m"] = json!(s.delay_per_m());
            v["inductance_per_m"] = json!(s.inductance_per_m());
            v["capacitance_per_m"] = json!(s.capacitance_per_m());
        }
        Analysis::Pair(p) => {
            v["spacing_m"] = json!(case.dims.s);
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

/// Reads the case and analyses it; with a target, the width is solved first.
pub fn compute(
    kind: &str,
    mut fields: BTreeMap<String, String>,
    target: Option<f64>,
) -> Result<(LineCase, Evaluated)> {
    let case = match target {
        Some(target) => {
            // The width is what we solve for; a starting value is not needed.
            fields
                .entry("width".into())
                .or_insert_with(|| "1e-4".into());
            let case = case::parse(kind, &fields)?;
            let target = in_range("target", target, 1.0, 1000.0, "Ω")?;
            case.solve_width(target)?
        }
        None => case::parse(kind, &fields)?,
    };
    let e = case.analyze()?;
    Ok((case, e))
}

fn print(case: &LineCase, e: &Evaluated, json: bool) -> Result<()> {
    if json {
        println!(
            "{}",
            serde_json::to_string_pretty(&evaluated_json(case, e))?
        );
        return Ok(());
    }
    let unit = LengthUnit::Um;
    println!(
        "{} ({})",
        case.cross_section.describe(case.structure),
        e.method
    );
    println!("  width       {}", format_length(case.dims.w, unit));
    match &e.analysis {
        Analysis::Single(s) => {
            println!("  Z0          {} Ω", format_sig(s.z0, 5));
            println!("  Dk eff      {}", format_sig(s.eps_eff, 5));
            println!(
                "  delay       {} ps/mm",
                format_sig(s.delay_per_m() * 1e9, 4)
            );
        }
        Analysis::Pair(p) => {
            println!("  Zdiff       {} Ω", format_sig(p.z_diff(), 5));
            println!("  Zcommon     {} Ω", format_sig(p.z_common(), 5));
            println!(
                "  Zodd/Zeven  {} / {} Ω",
                format_sig(p.z_odd, 5),
                format_sig(p.z_even, 5)
            );
        }
    }
    for w in e.analysis.warnings() {
        println!("  note: {}", w.message);
    }
    Ok(())
}
