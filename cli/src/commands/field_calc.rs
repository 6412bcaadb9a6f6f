//! `ohmstack field-calc KIND`: a 2D field solve of one structure given by its dimensions, next to the closed form.

use ohmstack_core::base::units::{parse_length, parse_number};
use ohmstack_core::closed_form::bands;
use ohmstack_core::field::boundary::{self, BemOptions};
use ohmstack_core::field::extract::compare_in_band;
use ohmstack_core::field::{build, FieldSolve};
use ohmstack_core::plan::case;
use ohmstack_core::Structure;

use crate::args::CaseArgs;
use crate::commands::field::{
    comparison_line, field_json, print_field, write_map, FieldEngine, SolverArgs,
};
use anyhow::{anyhow, Result};
use serde_json::json;
use std::time::Instant;

#[derive(clap::Args)]
#[command(
    after_help = "KIND and its fields as for calc. For the plain single-line kinds, --spacing makes an \
edge-coupled pair, --gap a coplanar line, both a coplanar pair.\n\
Example: ohmstack field-calc microstrip --width 0.2mm --height 0.1mm --thickness 35um --dk 4 --spacing 0.15mm"
)]
pub struct Args {
    /// Print the result as JSON
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub case: CaseArgs,
    /// Which field engine solves: the fast boundary-element engine, or the finite-volume reference (default)
    #[arg(long, value_enum, default_value_t = FieldEngine::Reference, help_heading = "Field solver")]
    pub engine: FieldEngine,
    #[command(flatten)]
    pub solver: SolverArgs,
}

pub fn run(args: Args) -> Result<()> {
    let kind = args.case.kind.as_str();
    let mut map = args.case.fields();
    let options = args.solver.options()?;
    let etch = map
        .get("etch-factor")
        .map(|text| parse_number("etch-factor", text, &[]))
        .transpose()?;
    let map_path = args.solver.map;
    let json = args.json;
    // Kinds that name their own pattern (pairs, coplanar) take --spacing/--gap as `calc` does; for the plain
    // single-line kinds, --spacing and --gap turn the line into a pair or a coplanar line.
    let own_pattern = case::parse(kind, &map)
        .ok()
        .filter(|c| c.structure != Structure::Single);
    let case = match own_pattern {
        Some(case) => case,
        None => {
            let spacing = map
                .remove("spacing")
                .map(|t| parse_length("spacing", &t))
                .transpose()?;
            let gap = map
                .remove("gap")
                .map(|t| parse_length("gap", &t))
                .transpose()?;
            let mut case = case::parse(kind, &map)?;
            case.structure = match (spacing, gap) {
                (None, None) => Structure::Single,
                (Some(_), None) => Structure::EdgePair,
                (None, Some(_)) => Structure::Coplanar,
                (Some(_), Some(_)) => Structure::CoplanarPair,
            };
            case.dims.s = spacing;
            case.dims.gap = gap;
            case
        }
    };
    let closed = case.analyze().ok();
    let started = Instant::now();
    let geometry = build(&case.cross_section, case.structure, &case.dims, etch)?;
    let (r, method) = if args.engine == FieldEngine::Field {
        if map_path.is_some() {
            anyhow::bail!(
                "--map: the potential map comes from the reference engine; drop --engine field"
            );
        }
        let mut bem = BemOptions::default();
        if args.solver.tolerance.is_some() {
            bem.tolerance = options.tolerance;
        }
        (boundary::solve(&geometry, &bem)?, "boundary elements")
    } else {
        let mut solve = FieldSolve::new(geometry, options)?;
        solve.run();
        let r = solve
            .result()
            .ok_or_else(|| anyhow!("the field solve did not finish"))??;
        if let Some(target) = &map_path {
            let title = format!("{} {}", case.cross_section.family(), case.structure.label());
            write_map(target, solve.potential_map(), &title)?;
        }
        (r, "finite volumes")
    };
    let elapsed_ms = started.elapsed().as_secs_f64() * 1e3;
    let cmp = compare_in_band(
        closed.as_ref().map(|e| (e.method, e.analysis.controlled())),
        r.controlled_ohm,
        r.error_estimate_pct,
        bands::measured_for(&case.cross_section, case.structure, &case.dims),
    );
    if json {
        let mut v = field_json(&r);
        v["structure"] = json!(case.kind);
        v["pattern"] = json!(case.structure.label());
        v["family"] = json!(case.cross_section.family());
        v["comparison"] = serde_json::to_value(&cmp)?;
        v["time_ms"] = json!(elapsed_ms);
        v["engine"] = json!(method);
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    println!(
        "{} {} (2D field solve by {method}, {:.0} ms)",
        case.cross_section.family(),
        case.structure.label(),
        elapsed_ms
    );
    print_field(&r);
    println!("  {}", comparison_line(&cmp));
    for w in r.warnings.iter().chain(cmp.warnings.iter()) {
        println!("  note: {}", w.message);
    }
    Ok(())
}
