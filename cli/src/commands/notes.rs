//! `ohmstack notes FILE`: fab notes of a project — stack table, impedance table, general notes — as Markdown or
//! CSV.

use ohmstack_core::output::report::fab_notes;
use ohmstack_core::{plan, Project};

use crate::files::read_input;
use anyhow::Result;

#[derive(Clone, Copy, clap::ValueEnum)]
pub enum Format {
    /// Markdown tables
    #[value(alias = "markdown")]
    Md,
    /// Comma-separated values (RFC 4180, CRLF line ends)
    Csv,
}

#[derive(clap::Args)]
pub struct Args {
    /// Project file (- reads stdin)
    #[arg(value_name = "FILE")]
    pub file: String,
    /// Output format
    #[arg(long, value_name = "FORMAT", value_enum, default_value_t = Format::Md)]
    pub format: Format,
    #[command(flatten)]
    pub engine: crate::args::EngineArgs,
}

pub fn run(args: Args) -> Result<()> {
    let mut project = Project::from_json(&read_input(&args.file)?)?;
    args.engine.apply(&mut project);
    let plan = plan(&project)?;
    let notes = fab_notes(&project, &plan);
    match args.format {
        Format::Md => print!("{}", notes.to_markdown()),
        Format::Csv => print!("{}", notes.to_csv()),
    }
    Ok(())
}
