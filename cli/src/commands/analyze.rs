//! `ohmstack analyze FILE`: the impedance table of a project (every rule, solved), or the whole plan as JSON.

use ohmstack_core::base::units::{format_length, format_sig};
use ohmstack_core::{plan, Project, RuleOutcome};

use crate::files::read_input;
use anyhow::Result;

#[derive(clap::Args)]
pub struct Args {
    /// Project file (- reads stdin)
    #[arg(value_name = "FILE")]
    pub file: String,
    /// Print the plan as JSON
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub engine: crate::args::EngineArgs,
}

pub fn run(args: Args) -> Result<()> {
    let mut project = Project::from_json(&read_input(&args.file)?)?;
    args.engine.apply(&mut project);
    let plan = plan(&project)?;
    if args.json {
        println!("{}", serde_json::to_string_pretty(&plan)?);
        return Ok(());
    }
    let unit = project.units;
    println!(
        "{} — board {} , {} copper layers{}",
        plan.title,
        format_length(plan.total_thickness_m, unit),
        plan.copper_count,
        if plan.symmetric {
            ""
        } else {
            ", NOT symmetric (warpage risk)"
        }
    );
    println!();
    println!(
        "{:<26} {:<10} {:<52} {:>10} {:>12} {:>17} {:>8} {:>7} {:>9} {:>10}",
        "rule",
        "layer",
        "structure",
        "width",
        "spacing",
        "Z (Ω)",
        "target",
        "Dk eff",
        "ps/mm",
        format!("dB/in@{}", format_frequency(project.analysis_freq_hz))
    );
    for outcome in &plan.rules {
        match outcome {
            RuleOutcome::Ok(r) => {
                println!(
                    "{:<26} {:<10} {:<52} {:>10} {:>12} {:>17} {:>8} {:>7} {:>9} {:>10}{}",
                    r.name,
                    r.layer,
                    format!(
                        "{} {}",
                        r.family,
                        match &*r.structure {
                            "single-ended" | "coplanar single-ended" => "",
                            "coplanar pair" => "pair",
                            other => other,
                        }
                    ),
                    format_length(r.width_m, unit),
                    r.spacing_m
                        .map(|s| format_length(s, unit))
                        .unwrap_or_else(|| "-".into()),
                    // A wide measured band goes next to the number, not only in a note below.
                    match r.model_band_pct {
                        Some(b) => format!("{:.2} (±{} %)", r.impedance_ohm, format_sig(b, 3)),
                        None => format!("{:.2}", r.impedance_ohm),
                    },
                    format!("{:.1}", r.target_ohm),
                    format!("{:.3}", r.eps_eff),
                    format!("{:.3}", r.delay_s_per_m * 1e9),
                    r.loss
                        .as_ref()
                        .and_then(|l| l.signal())
                        .map(|m| format!("{:.3}", m.total.db_per_in))
                        .unwrap_or_else(|| "-".into()),
                    if r.within_tolerance {
                        ""
                    } else {
                        "  OUT OF TOLERANCE"
                    }
                );
                for w in &r.warnings {
                    println!("    note: {}", w.message);
                }
                if let Some(c) = &r.closed_form_check {
                    println!(
                        "    cross-check: the closed form ({}) gives {:.2} Ω here, {:+.1} % against the field figure",
                        c.method, c.impedance_ohm, c.difference_pct
                    );
                }
            }
            RuleOutcome::Error { name, message } => println!("{name:<28} error: {message}"),
        }
    }
    Ok(())
}

/// `2.4 GHz`-style text for table headers.
fn format_frequency(hz: f64) -> String {
    let (v, unit) = if hz >= 1e9 {
        (hz / 1e9, "GHz")
    } else if hz >= 1e6 {
        (hz / 1e6, "MHz")
    } else {
        (hz / 1e3, "kHz")
    };
    format!("{}{unit}", format_sig(v, 3))
}
