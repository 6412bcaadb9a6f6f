//! `ohmstack loss FILE --rule NAME`: loss, complex Z0 and delay of one rule's line at one frequency or over a
//! log-spaced sweep. Also home of what `touchstone` shares with it: the rule's line model.

use ohmstack_core::base::error::in_range;
use ohmstack_core::base::units::{format_sig, INCH};
use ohmstack_core::design::roughness::Roughness;
use ohmstack_core::line::loss::{self, LineModel, ModeLoss};
use ohmstack_core::plan::evaluate_rule;
use ohmstack_core::{Layer, Project};

use crate::args::{FoilArgs, FoilModel, Frequency, Surface, SweepArgs};
use crate::files::read_input;
use anyhow::{bail, Result};
use serde_json::json;

#[derive(clap::Args)]
#[command(
    after_help = "Without --freq, the sweep runs from 10 MHz to 40 GHz in 50 log-spaced points."
)]
pub struct Args {
    /// Project file (- reads stdin)
    #[arg(value_name = "FILE")]
    pub file: String,
    /// The rule whose line to compute
    #[arg(long, value_name = "NAME", allow_hyphen_values = true)]
    pub rule: String,
    /// One frequency instead of a sweep
    #[arg(long, value_name = "FREQ", value_parser = Frequency, allow_hyphen_values = true,
          conflicts_with_all = ["from", "to", "points"])]
    pub freq: Option<f64>,
    /// Print the points as JSON
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub sweep: SweepArgs,
    #[command(flatten)]
    pub foil: FoilArgs,
    #[command(flatten)]
    pub engine: crate::args::EngineArgs,
}

pub fn run(args: Args) -> Result<()> {
    let freqs = match args.freq {
        Some(f) => vec![in_range("freq", f, 1.0, loss::MAX_FREQ_HZ, "Hz")?],
        None => args.sweep.sweep()?.frequencies()?,
    };
    let (_, name, model) = rule_model(&args.file, &args.rule, &args.foil, &args.engine)?;
    let points = freqs
        .iter()
        .map(|&f| model.at(f))
        .collect::<std::result::Result<Vec<_>, _>>()?;
    if args.json {
        let v = json!({
            "rule": name,
            "structure": model.structure.label(),
            "family": model.cross_section.family_for(model.structure),
            "width_m": model.dims.w,
            "spacing_m": model.dims.s,
            "gap_m": model.dims.gap,
            "r_dc_ohm_per_m": model.r_dc_per_m(),
            "inputs": model.inputs,
            "points": points,
        });
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    println!(
        "{name}: {} (loss in dB per inch; delay in ps per inch)",
        model.cross_section.describe(model.structure)
    );
    println!(
        "{:>12} {:>5} {:>7} {:>7} {:>8} {:>9} {:>7} {:>9} {:>9} {:>9} {:>9} {:>8}",
        "freq",
        "mode",
        "Dk",
        "Df",
        "Re Z0",
        "Im Z0",
        "Dk eff",
        "cond",
        "diel",
        "total",
        "dB/m",
        "delay"
    );
    let mut notes: Vec<String> = Vec::new();
    for p in &points {
        let modes: Vec<(&str, &ModeLoss)> = match (&p.line, &p.odd, &p.even) {
            (Some(l), _, _) => vec![("line", l)],
            (None, Some(o), Some(e)) => vec![("odd", o), ("even", e)],
            _ => vec![],
        };
        for (label, m) in modes {
            println!(
                "{:>12} {:>5} {:>7.4} {:>7.5} {:>8.3} {:>9.4} {:>7.4} {:>9.5} {:>9.5} {:>9.5} {:>9.4} {:>8.3}",
                format_freq(p.freq_hz),
                label,
                p.dk,
                p.df,
                m.z0_re_ohm,
                m.z0_im_ohm,
                m.eps_eff,
                m.conductor.db_per_in,
                m.dielectric.db_per_in,
                m.total.db_per_in,
                m.total.db_per_m,
                m.group_delay_s_per_m * INCH * 1e12
            );
        }
        for w in &p.warnings {
            if !notes.contains(&w.message) {
                notes.push(w.message.clone());
            }
        }
    }
    for n in notes {
        println!("  note: {n}");
    }
    Ok(())
}

/// The project (with the `--foil` what-if applied), the rule's name and its loss model (after synthesis of its
/// free dimension).
pub fn rule_model(
    path: &str,
    name: &str,
    foil: &FoilArgs,
    engine: &crate::args::EngineArgs,
) -> Result<(Project, String, LineModel)> {
    model_of(Project::from_json(&read_input(path)?)?, name, foil, engine)
}

/// [`rule_model`] of a project already read.
pub fn model_of(
    mut project: Project,
    name: &str,
    foil: &FoilArgs,
    engine: &crate::args::EngineArgs,
) -> Result<(Project, String, LineModel)> {
    engine.apply(&mut project);
    apply_foil(&mut project, foil)?;
    let rule = &project.rules[crate::args::rule_index(&project, name)?];
    let result = evaluate_rule(&project, rule)?;
    // The model the plan made for this result (the app's plots and downloads rebuild the same one).
    let model = ohmstack_core::plan::rule::loss_model(&project, rule, &result)?;
    Ok((project, name.to_string(), model))
}

/// A frequency in the largest unit that keeps it at or above 1 (`2.4 GHz`, `10 MHz`).
fn format_freq(hz: f64) -> String {
    let (scale, unit) = match hz {
        f if f >= 1e9 => (1e9, "GHz"),
        f if f >= 1e6 => (1e6, "MHz"),
        f if f >= 1e3 => (1e3, "kHz"),
        _ => (1.0, "Hz"),
    };
    format!("{} {unit}", format_sig(hz / scale, 4))
}

/// Sets the roughness of every copper layer from `--foil` and `--foil-model`.
fn apply_foil(project: &mut Project, foil: &FoilArgs) -> Result<()> {
    let Some(surface) = foil.foil else {
        if foil.foil_model.is_some() {
            bail!("--foil-model: only with --foil");
        }
        return Ok(());
    };
    let roughness = match (surface, foil.foil_model) {
        (Surface::Smooth, _) => Roughness::Smooth,
        (Surface::Foil(f), None | Some(FoilModel::HammerstadGroiss)) => f.hammerstad_groiss(),
        (Surface::Foil(f), Some(FoilModel::Huray)) => f.huray(),
    };
    for layer in &mut project.stackup.layers {
        if let Layer::Copper(c) = layer {
            c.roughness = Some(roughness);
        }
    }
    Ok(())
}
