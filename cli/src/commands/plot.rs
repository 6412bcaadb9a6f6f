//! `ohmstack plot FILE --rule NAME`: an SVG plot of a rule's impedance against trace width, ±30 % around its
//! solution (or the points as JSON).

use ohmstack_core::output::plot::{line_plot, z_vs_width, LinePlot, Series};
use ohmstack_core::Project;

use crate::files::{read_input, write_svg};
use anyhow::Result;

/// Points of the curve: a whole number from 2 to 1000.
fn points(text: &str) -> Result<usize, String> {
    text.parse::<usize>()
        .ok()
        .filter(|n| (2..=1000).contains(n))
        .ok_or_else(|| format!("{text:?} is not a whole number from 2 to 1000"))
}

#[derive(clap::Args)]
pub struct Args {
    /// Project file (- reads stdin)
    #[arg(value_name = "FILE")]
    pub file: String,
    /// The rule to plot
    #[arg(long, value_name = "NAME", allow_hyphen_values = true)]
    pub rule: String,
    /// Write the SVG here instead of stdout
    #[arg(short = 'o', long, value_name = "OUT.svg", allow_hyphen_values = true)]
    pub output: Option<String>,
    /// Points on the curve
    #[arg(long, value_name = "N", value_parser = points, allow_hyphen_values = true, default_value_t = 41)]
    pub points: usize,
    /// Print the (width m, Z Ω) points as JSON instead of a picture
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub engine: crate::args::EngineArgs,
}

pub fn run(args: Args) -> Result<()> {
    let name = args.rule;
    let mut project = Project::from_json(&read_input(&args.file)?)?;
    args.engine.apply(&mut project);
    let idx = crate::args::rule_index(&project, &name)?;
    let pts = z_vs_width(&project, idx, args.points)?;
    if args.json {
        println!("{}", serde_json::to_string(&pts)?);
        return Ok(());
    }
    let unit = project.units;
    let svg = line_plot(&LinePlot {
        title: format!("{}: impedance against trace width", name),
        x_label: format!("trace width ({})", unit.symbol()),
        y_label: "Z (Ω)".into(),
        series: vec![Series {
            label: name.clone(),
            points: pts.iter().map(|&(w, z)| (unit.from_m(w), z)).collect(),
        }],
        log_x: false,
    });
    write_svg(args.output, &svg)
}
