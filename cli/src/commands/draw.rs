//! `ohmstack draw FILE`: an SVG cross-section of the stack, and of one rule's traces with `--rule`.

use ohmstack_core::output::draw::cross_section_svg;
use ohmstack_core::Project;

use crate::files::{read_input, write_svg};
use anyhow::Result;

#[derive(clap::Args)]
pub struct Args {
    /// Project file (- reads stdin)
    #[arg(value_name = "FILE")]
    pub file: String,
    /// Draw this rule's traces on their layer
    #[arg(long, value_name = "NAME", allow_hyphen_values = true)]
    pub rule: Option<String>,
    /// Write the SVG here instead of stdout
    #[arg(short = 'o', long, value_name = "OUT.svg", allow_hyphen_values = true)]
    pub output: Option<String>,
    #[command(flatten)]
    pub engine: crate::args::EngineArgs,
}

pub fn run(args: Args) -> Result<()> {
    let mut project = Project::from_json(&read_input(&args.file)?)?;
    args.engine.apply(&mut project);
    let rule_idx = match &args.rule {
        Some(name) => Some(crate::args::rule_index(&project, name)?),
        None => None,
    };
    let svg = cross_section_svg(&project, rule_idx)?;
    write_svg(args.output, &svg)
}
