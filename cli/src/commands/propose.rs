//! `ohmstack propose FILE [--thickness T]`: glass constructions for every core and prepreg that put the project's
//! rules on target at the widths they have and the board on thickness, mirrored layers alike; what cannot be met is
//! said with why. `--write OUT` saves the proposed project.

use ohmstack_core::base::units::{format_length, format_sig};
use ohmstack_core::design::construction::glass_style;
use ohmstack_core::plan::proposal::{propose_stack, ProposalOptions};
use ohmstack_core::Project;

use crate::files::read_input;
use anyhow::{Context, Result};

#[derive(clap::Args)]
#[command(
    after_help = "The rules keep the widths they have: a rule that solves its width keeps the one it solves to on \
the present stack, a fixed rule its own. The glass styles' figures are typical \
values of the trade (common practice): check the proposal against your fabricator's construction table. Layers \
in no rule's field make up the board thickness; without --thickness they keep theirs. Each layer's Dk and Df as \
entered are taken as its laminate's datasheet point at the style's usual resin content."
)]
pub struct Args {
    /// Project file (- reads stdin)
    #[arg(value_name = "FILE")]
    pub file: String,
    /// Finished board thickness to aim at, e.g. 1.6mm or 62mil (default: the project's target, if any)
    #[arg(long, value_name = "LENGTH")]
    pub thickness: Option<String>,
    /// Glass styles allowed, comma separated (default: every known style)
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    pub styles: Vec<String>,
    /// Most plies in one prepreg (a core may have twice as many)
    #[arg(long, value_name = "N", default_value_t = 3, value_parser = crate::args::whole::<u32>)]
    pub max_plies: u32,
    /// How far the resin content may move from a style's usual one, ± percentage points
    #[arg(long, value_name = "POINTS", default_value = "6")]
    pub resin_band: String,
    /// Save the proposed project (constructions on its layers) to this file
    #[arg(long, value_name = "OUT")]
    pub write: Option<String>,
    /// Print the result as JSON
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub engine: crate::args::EngineArgs,
}

pub fn run(args: Args) -> Result<()> {
    let mut project = Project::from_json(&read_input(&args.file)?)?;
    args.engine.apply(&mut project);
    let target = match &args.thickness {
        Some(text) => Some(ohmstack_core::base::units::parse_length(
            "--thickness",
            text,
        )?),
        None => project.fab.target_thickness_m,
    };
    let styles = args
        .styles
        .iter()
        .map(|s| glass_style(s).map_err(|e| anyhow::anyhow!("--styles: {e}")))
        .collect::<Result<Vec<_>>>()?;
    let options = ProposalOptions {
        target_thickness_m: target,
        styles,
        max_plies: args.max_plies,
        resin_band_pct: ohmstack_core::base::units::parse_number(
            "--resin-band",
            &args.resin_band,
            &["%"],
        )?,
    };
    let proposal = propose_stack(&project, &options)?;
    if let Some(out) = &args.write {
        std::fs::write(out, proposal.project.to_json())
            .with_context(|| format!("--write: could not write {out:?}"))?;
    }
    if args.json {
        println!("{}", serde_json::to_string_pretty(&proposal)?);
        return Ok(());
    }
    let unit = project.units;
    println!(
        "Proposed stack for {:?}: {}{}",
        project.title,
        format_length(proposal.total_thickness_m, unit),
        proposal
            .target_thickness_m
            .map(|t| format!(" finished (target {})", format_length(t, unit)))
            .unwrap_or_else(|| " finished".to_string())
    );
    for l in &proposal.layers {
        println!(
            "  {:<22} {:<8} {:<26} {} (pressed {})  Dk {}  Df {}  set by: {}",
            l.layer,
            l.kind,
            l.construction.label(),
            format_length(l.thickness_m, unit),
            format_length(l.pressed_thickness_m, unit),
            format_sig(l.dk, 4),
            format_sig(l.df, 3),
            l.set_by
        );
    }
    println!("Rules at their widths:");
    for r in &proposal.rules {
        println!(
            "  {:<32} {:<14} {}  {}",
            r.rule,
            r.layer,
            format_length(r.width_m, unit),
            match (r.impedance_ohm, r.deviation_pct) {
                (Some(z), Some(d)) => format!(
                    "{z:.2} Ω against {} Ω ({d:+.2} %){}",
                    format_sig(r.target_ohm, 4),
                    if r.within_tolerance {
                        ""
                    } else {
                        "  OFF TARGET"
                    }
                ),
                _ => "not computed".to_string(),
            }
        );
    }
    if proposal.unmet.is_empty() {
        println!("Every rule is within its tolerance and the board on thickness.");
    } else {
        println!("Not met:");
        for u in &proposal.unmet {
            println!("  - {u}");
        }
    }
    println!(
        "Design estimate: the fabricator confirms the stack and the impedance on test coupons."
    );
    Ok(())
}
