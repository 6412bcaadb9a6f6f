//! `ohmstack`: the native command line over ohmstack-core — analyse projects, compute and solve single lines,
//! and run batches of cases as JSON lines. The only crate besides xtask that reads files or arguments.
//!
//! This file is the table of contents: one line per command, each command's options and work in its own module
//! under `commands/`. Arguments are read by clap; `errors` renders its messages as the house's one-line errors.

mod args;
mod commands;
mod errors;
mod files;

use clap::{Parser, Subcommand};
use commands::*;

/// PCB controlled-impedance stackup planner (design estimates; confirm with the fabricator's test coupons).
#[derive(Parser)]
#[command(name = "ohmstack", version, after_help = args::UNITS_NOTE)]
pub struct Cli {
    #[command(subcommand)]
    command: Option<Command>,
}

#[derive(Subcommand)]
enum Command {
    /// Print the embedded demo project as JSON
    Demo(demo::Args),
    /// Impedance table for a project file
    #[command(visible_alias = "analyse")]
    Analyze(analyze::Args),
    /// Analyse one line given by its dimensions
    Calc(calc::CalcArgs),
    /// Find the width that gives a target impedance
    Solve(calc::SolveArgs),
    /// Tolerance spread and yield per rule: corners, Monte Carlo, sensitivities, centred width
    Spread(spread::Args),
    /// The spread's seeded random stream, one number a line (for checks)
    Random(random::Args),
    /// JSON lines of cases on stdin, JSON lines of results on stdout
    Batch(batch::Args),
    /// List the structures calc, solve and batch know
    Kinds(kinds::Args),
    /// Generic dielectric classes with typical Dk/Df (the app's presets)
    Materials(materials::Args),
    /// Closed form against a 2D field solve for each rule of a project
    Field(field::Args),
    /// 2D field solve of one structure given by its dimensions
    FieldCalc(field_calc::Args),
    /// Solve each rule's width (or spacing) with the 2D field solver
    FieldSolve(field_solve::Args),
    /// Share links: encode a project, decode a link
    Share(share::Args),
    /// Fab notes: stack table, impedance table, general notes
    Notes(notes::Args),
    /// SVG cross-section of the stack (and of one rule's traces)
    Draw(draw::Args),
    /// SVG plot of impedance against width (±30 % around the solution)
    Plot(plot::Args),
    /// Loss, complex Z0 and delay of one rule's line at one frequency or over a sweep
    Loss(loss::Args),
    /// Crosstalk to a neighbour against spacing, and the least spacing inside a budget, per rule
    Crosstalk(crosstalk::Args),
    /// Loss per length at a link's Nyquist frequency and the longest run inside a loss budget, per rule
    Reach(reach::Args),
    /// The thickness of one core or prepreg that puts a rule on target at its width
    Thickness(thickness::Args),
    /// A core or prepreg from its glass style, plies and resin: thickness, Dk, Df and weave skew
    Laminate(laminate::Args),
    /// Glass constructions for every core and prepreg that put the rules on target and the board on thickness
    Propose(propose::Args),
    /// Touchstone 1.1 S-parameters of a line segment (2-port, or 4-port for a pair)
    Touchstone(touchstone::Args),
    /// Shell completion script for bash, zsh, fish, elvish or PowerShell
    Completions(completions::Args),
}

fn main() {
    errors::quiet_output_errors();
    let cli = Cli::try_parse().unwrap_or_else(|e| errors::exit_for_clap(e));
    if let Err(e) = run(cli) {
        eprintln!("error: {e:#}");
        std::process::exit(2);
    }
}

fn run(cli: Cli) -> anyhow::Result<()> {
    let Some(command) = cli.command else {
        // A bare `ohmstack` is a request for the overview, not a mistake.
        return errors::print_overview();
    };
    match command {
        Command::Demo(a) => demo::run(a),
        Command::Analyze(a) => analyze::run(a),
        Command::Calc(a) => calc::run_calc(a),
        Command::Solve(a) => calc::run_solve(a),
        Command::Spread(a) => spread::run(a),
        Command::Random(a) => random::run(a),
        Command::Batch(a) => batch::run(a),
        Command::Kinds(a) => kinds::run(a),
        Command::Materials(a) => materials::run(a),
        Command::Field(a) => field::run(a),
        Command::FieldCalc(a) => field_calc::run(a),
        Command::FieldSolve(a) => field_solve::run(a),
        Command::Share(a) => share::run(a),
        Command::Notes(a) => notes::run(a),
        Command::Draw(a) => draw::run(a),
        Command::Plot(a) => plot::run(a),
        Command::Loss(a) => loss::run(a),
        Command::Crosstalk(a) => crosstalk::run(a),
        Command::Reach(a) => reach::run(a),
        Command::Thickness(a) => thickness::run(a),
        Command::Propose(a) => propose::run(a),
        Command::Laminate(a) => laminate::run(a),
        Command::Touchstone(a) => touchstone::run(a),
        Command::Completions(a) => completions::run(a),
    }
}
