//! `ohmstack touchstone FILE --rule NAME --length L`: Touchstone 1.1 S-parameters of a segment of one rule's line
//! (2-port, or 4-port for a pair), to stdout or a file.

use ohmstack_core::base::error::in_range;
use ohmstack_core::output::touchstone;

use crate::args::{FoilArgs, Length, Ohms, SweepArgs};
use crate::commands::loss::rule_model;
use anyhow::{bail, Context, Result};

#[derive(clap::Args)]
#[command(
    after_help = "The sweep runs from 10 MHz to 40 GHz in 50 log-spaced points unless --from/--to/--points say \
otherwise."
)]
pub struct Args {
    /// Project file (- reads stdin)
    #[arg(value_name = "FILE")]
    pub file: String,
    /// The rule whose line to compute
    #[arg(long, value_name = "NAME", allow_hyphen_values = true)]
    pub rule: String,
    /// Segment length, e.g. 100mm
    #[arg(long, value_name = "LENGTH", value_parser = Length, allow_hyphen_values = true)]
    pub length: f64,
    /// Reference impedance of the ports, Ω
    #[arg(long, value_name = "OHMS", value_parser = Ohms, allow_hyphen_values = true, default_value = "50")]
    pub z_ref: f64,
    /// Write the file here (ending .s2p or .s4p) instead of stdout
    #[arg(short = 'o', long, value_name = "FILE", allow_hyphen_values = true)]
    pub output: Option<String>,
    #[command(flatten)]
    pub sweep: SweepArgs,
    #[command(flatten)]
    pub foil: FoilArgs,
    #[command(flatten)]
    pub engine: crate::args::EngineArgs,
}

pub fn run(args: Args) -> Result<()> {
    let z_ref = in_range("z-ref", args.z_ref, 1.0, 1000.0, "Ω")?;
    let sweep = args.sweep.sweep()?;
    let (project, name, model) = rule_model(&args.file, &args.rule, &args.foil, &args.engine)?;
    let title = format!("{} — rule {name}", project.title);
    let (text, ports) =
        touchstone::segment(&model, args.length, z_ref, &sweep.frequencies()?, &title)?;
    match args.output {
        None => print!("{text}"),
        Some(file) => {
            let want = format!(".s{ports}p");
            if !file.to_ascii_lowercase().ends_with(&want) {
                bail!(
                    "--output: a {ports}-port Touchstone file should end in {want} (got {file:?})"
                );
            }
            std::fs::write(&file, text).with_context(|| format!("--output: writing {file}"))?;
        }
    }
    Ok(())
}
