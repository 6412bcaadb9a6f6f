//! `ohmstack notes FILE`: fab notes of a project — stack table, impedance table, general notes — as Markdown or
//! CSV, dated today (UTC) unless `--date` says otherwise.

use ohmstack_core::output::report::{fab_notes, IssueDate};
use ohmstack_core::{plan_with, PlanOptions, Project};

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
    /// Issue date printed on the notes, YYYY-MM-DD [default: today, UTC]
    #[arg(long, value_name = "DATE", value_parser = crate::args::Date)]
    pub date: Option<IssueDate>,
    #[command(flatten)]
    pub engine: crate::args::EngineArgs,
}

/// Today's date in UTC (the notes need only the day).
fn today() -> Result<IssueDate> {
    let now = time::OffsetDateTime::now_utc();
    Ok(IssueDate::new(
        now.year(),
        u8::from(now.month()),
        now.day(),
    )?)
}

pub fn run(args: Args) -> Result<()> {
    let mut project = Project::from_json(&read_input(&args.file)?)?;
    args.engine.apply(&mut project);
    // The field engine checks every closed-form rule, as in the app: its verdict is the notes' status. The
    // routing figures make the notes' routing table.
    let options = PlanOptions {
        field_check: true,
        routing: true,
        ..PlanOptions::default()
    };
    let plan = plan_with(&project, &options)?;
    let date = match args.date {
        Some(d) => d,
        None => today()?,
    };
    let notes = fab_notes(&project, &plan, Some(date));
    match args.format {
        Format::Md => print!("{}", notes.to_markdown()),
        Format::Csv => print!("{}", notes.to_csv()),
    }
    Ok(())
}
