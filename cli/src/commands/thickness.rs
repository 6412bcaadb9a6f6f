//! `ohmstack thickness FILE --rule NAME --layer NAME`: the thickness of one core or prepreg that puts a rule on
//! target at the width (and spacing) the rule gives — solving the stack instead of the trace.

use ohmstack_core::base::units::format_length;
use ohmstack_core::plan::height::solve_layer_thickness;
use ohmstack_core::plan::proposal::{snap_layer_thickness, ProposalOptions};
use ohmstack_core::Project;

use crate::files::read_input;
use anyhow::Result;

#[derive(clap::Args)]
#[command(
    after_help = "The rule's width (and spacing) are taken as given, whatever it solves for; a prepreg's \
thickness is the as-bought one, and the pressed thickness in the finished board is shown beside it."
)]
pub struct Args {
    /// Project file (- reads stdin)
    #[arg(value_name = "FILE")]
    pub file: String,
    /// The rule to put on target
    #[arg(long, value_name = "NAME", allow_hyphen_values = true)]
    pub rule: String,
    /// The core or prepreg whose thickness to solve
    #[arg(long, value_name = "NAME", allow_hyphen_values = true)]
    pub layer: String,
    /// Also build the layer from glass: the construction (style, plies, resin content) nearest the solved
    /// thickness, the solve repeated at its Dk until it stops changing
    #[arg(long)]
    pub snap: bool,
    /// Print the result as JSON
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub engine: crate::args::EngineArgs,
}

pub fn run(args: Args) -> Result<()> {
    let mut project = Project::from_json(&read_input(&args.file)?)?;
    args.engine.apply(&mut project);
    let rule = &project.rules[crate::args::rule_index(&project, &args.rule)?];
    let r = solve_layer_thickness(&project, rule, &args.layer)?;
    let snapped = if args.snap {
        Some(snap_layer_thickness(
            &project,
            rule,
            &args.layer,
            &ProposalOptions::default(),
        )?)
    } else {
        None
    };
    if args.json {
        let mut v = serde_json::to_value(&r)?;
        if let Some(s) = &snapped {
            v["snapped"] = serde_json::to_value(s)?;
        }
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    let unit = project.units;
    println!(
        "{}: {} {:?} {} (was {}) gives {:.3} Ω against {} Ω ({})",
        r.rule,
        r.kind,
        r.layer,
        format_length(r.thickness_m, unit),
        format_length(r.was_m, unit),
        r.impedance_ohm,
        r.target_ohm,
        r.method
    );
    if r.kind == "prepreg" {
        println!(
            "  pressed in the board: {}",
            format_length(r.pressed_thickness_m, unit)
        );
    }
    if let Some(s) = snapped {
        println!(
            "  built from glass: {} → {}, Dk {}: {:.3} Ω at the rule's width",
            s.construction.label(),
            format_length(s.thickness_m, unit),
            ohmstack_core::base::units::format_sig(s.dk, 4),
            s.impedance_ohm
        );
    }
    Ok(())
}
