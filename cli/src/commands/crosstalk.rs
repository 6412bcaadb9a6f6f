//! `ohmstack crosstalk FILE`: each rule's crosstalk to an identical neighbour on its layer (a line beside a line,
//! a pair beside a pair) against the edge-to-edge spacing, and the least spacing that keeps the near- and far-end
//! noise within a budget: the routing rule beside the width.

use ohmstack_core::base::units::{format_length, format_sig, LengthUnit};
use ohmstack_core::plan::crosstalk::{self, CrosstalkOptions, CrosstalkPoint, Neighbour};
use ohmstack_core::plan::evaluate_rule;
use ohmstack_core::Project;

use crate::args::{Length, Percent, Time};
use crate::files::read_input;
use anyhow::{Context, Result};
use ohmstack_core::output::plot::crosstalk_plot;
use serde_json::json;

#[derive(clap::Args)]
#[command(
    after_help = "Near end: the saturated backward coefficient Kb = ¼(Lm/L + Cm/C), reduced on runs shorter \
than half the rise time's travel. Far end: Kf·(length/v)/rise with Kf = ½(Cm/C − Lm/L). Both are fractions of the \
aggressor's swing, from the field engine's L and C of the line and its neighbour. The defaults (2 %, 50 ps, 25 mm) \
are common practice, not a standard: set your own."
)]
pub struct Args {
    /// Project file (- reads stdin)
    #[arg(value_name = "FILE")]
    pub file: String,
    /// Only the rule of this name
    #[arg(long, value_name = "NAME", allow_hyphen_values = true)]
    pub rule: Option<String>,
    /// Largest near- or far-end noise per neighbour, % of the aggressor's swing
    #[arg(long, value_name = "PCT", value_parser = Percent, allow_hyphen_values = true,
          default_value = "2")]
    pub budget: f64,
    /// Aggressor rise time (10–90 %)
    #[arg(long, value_name = "TIME", value_parser = Time, allow_hyphen_values = true, default_value = "50ps")]
    pub rise: f64,
    /// Length the neighbours run side by side
    #[arg(long, value_name = "LENGTH", value_parser = Length, allow_hyphen_values = true,
          default_value = "25mm")]
    pub length: f64,
    /// The coupling at this one spacing instead of the search
    #[arg(long, value_name = "LENGTH", value_parser = Length, allow_hyphen_values = true)]
    pub spacing: Option<f64>,
    /// Write the noise against spacing, with the budget line, as SVG here (one rule)
    #[arg(
        long,
        value_name = "FILE",
        requires = "rule",
        conflicts_with = "spacing",
        allow_hyphen_values = true
    )]
    pub svg: Option<String>,
    /// Print the results as JSON
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub engine: crate::args::EngineArgs,
}

/// A fraction as a percentage; noise below 1e-4 % (a homogeneous stripline's far end, rounding) reads 0.
fn pct(v: f64) -> String {
    let v = if v.abs() < 1e-6 { 0.0 } else { v };
    format!("{} %", format_sig(v * 100.0, 3))
}

fn row(p: &CrosstalkPoint, unit: LengthUnit) -> String {
    format!(
        "{:>12} {:>10} {:>10}",
        format_length(p.spacing_m, unit),
        pct(p.near_end),
        pct(p.far_end)
    )
}

pub fn run(args: Args) -> Result<()> {
    let text = read_input(&args.file)?;
    let mut project = Project::from_json(&text)?;
    args.engine.apply(&mut project);
    let options = CrosstalkOptions {
        budget: args.budget / 100.0,
        rise_s: args.rise,
        length_m: args.length,
    };
    // A bad option is the command's error, not one per rule.
    options.validate()?;
    let rules = crate::args::chosen_rules(&project, args.rule.as_deref())?;
    let unit = project.units;
    let mut out = Vec::new();
    let mut svg_out = None;
    for rule in rules {
        let result = evaluate_rule(&project, rule)?;
        let one = match args.spacing {
            Some(s) => Neighbour::new(&project, rule, &result, &options).and_then(|n| {
                let (p, method) = n.at(s)?;
                if !args.json {
                    heading(&rule.name, n.arrangement, method, &result, &options, unit);
                    println!(
                        "  at {}: Kb {}, Kf {}; near end {}, far end {}",
                        format_length(p.spacing_m, unit),
                        format_sig(p.backward, 4),
                        format_sig(p.forward, 4),
                        pct(p.near_end),
                        pct(p.far_end)
                    );
                    notes(&n.notes);
                }
                Ok(json!({
                    "rule": rule.name,
                    "arrangement": n.arrangement,
                    "method": method,
                    "width_m": result.width_m,
                    "options": options,
                    "point": p,
                    "notes": n.notes,
                }))
            }),
            None => crosstalk::rule_crosstalk(&project, rule, &result, &options).map(|r| {
                if !args.json {
                    print_search(&r, &result, unit);
                }
                if let Some(svg) = &args.svg {
                    svg_out = Some((svg.clone(), crosstalk_plot(&r, unit)));
                }
                serde_json::to_value(r).unwrap_or_default()
            }),
        };
        match one {
            Ok(v) => out.push(v),
            // A rule the search does not cover (coplanar, broadside) says why and the others go on; asked by
            // name, the reason is the error.
            Err(e) if args.rule.is_none() => {
                if !args.json {
                    println!("{}: not computed: {e}", rule.name);
                }
                out.push(json!({"rule": rule.name, "error": e.to_string()}));
            }
            Err(e) => return Err(e.into()),
        }
    }
    if args.json {
        println!("{}", serde_json::to_string_pretty(&out)?);
    }
    if let Some((file, text)) = svg_out {
        std::fs::write(&file, text).with_context(|| format!("--svg: writing {file}"))?;
    }
    Ok(())
}

fn heading(
    name: &str,
    arrangement: &str,
    method: &str,
    result: &ohmstack_core::RuleResult,
    o: &CrosstalkOptions,
    unit: LengthUnit,
) {
    println!(
        "{name}: {arrangement} on {}, width {} ({method})",
        result.layer,
        format_length(result.width_m, unit),
    );
    println!(
        "  budget {} per neighbour, rise {} ps, parallel run {} mm",
        pct(o.budget),
        format_sig(o.rise_s * 1e12, 3),
        format_sig(o.length_m * 1e3, 4)
    );
}

fn notes(notes: &[String]) {
    for n in notes {
        println!("  note: {n}");
    }
}

fn print_search(
    r: &crosstalk::RuleCrosstalk,
    result: &ohmstack_core::RuleResult,
    unit: LengthUnit,
) {
    heading(&r.rule, r.arrangement, r.method, result, &r.options, unit);
    match r.min_spacing_m {
        Some(s) => println!(
            "  least spacing to the neighbour {} ({} sets it): near end {}, far end {}",
            format_length(s, unit),
            r.limited_by,
            pct(r.at_min.near_end),
            pct(r.at_min.far_end)
        ),
        None => println!("  no spacing searched meets the budget"),
    }
    println!("  {:>12} {:>10} {:>10}", "spacing", "near end", "far end");
    for p in &r.curve {
        println!("  {}", row(p, unit));
    }
    notes(&r.notes);
}
