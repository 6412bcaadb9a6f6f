//! `ohmstack reach FILE --budget DB`: each rule's insertion loss per length at a link's Nyquist frequency (the
//! differential mode for pairs) and the longest run that fits the loss budget after the fixed losses; optionally
//! the insertion loss against frequency of one run as an SVG plot with the budget marked.

use ohmstack_core::base::units::{format_sig, parse_number};
use ohmstack_core::line::loss::Sweep;
use ohmstack_core::line::reach::{self, ReachOptions, Signalling, LINK_PRESETS};
use ohmstack_core::output::plot::insertion_loss_plot;

use crate::args::{Decibels, FoilArgs, Frequency, Length};
use crate::commands::loss::model_of;
use crate::files::read_input;
use anyhow::{bail, Context, Result};
use serde_json::json;

#[derive(clap::Args)]
#[command(
    after_help = "The frequency is the link's Nyquist frequency, half its symbol rate (common practice): give \
--nyquist, or --rate in Gb/s (with --pam4 for four-level signalling), or --link with one of the presets listed by \
--link help. The budget and the fixed losses are yours to set: they depend on the link's standard and the parts at \
each end. The run is taken as matched at both ends."
)]
pub struct Args {
    /// Project file (- reads stdin)
    #[arg(value_name = "FILE")]
    pub file: String,
    /// Only the rule of this name
    #[arg(long, value_name = "NAME", allow_hyphen_values = true)]
    pub rule: Option<String>,
    /// Frequency the budget is set at
    #[arg(long, value_name = "FREQ", value_parser = Frequency, allow_hyphen_values = true,
          conflicts_with_all = ["rate", "link"])]
    pub nyquist: Option<f64>,
    /// Line rate in Gb/s (the Nyquist frequency is half the symbol rate)
    #[arg(
        long,
        value_name = "GBPS",
        allow_hyphen_values = true,
        conflicts_with = "link"
    )]
    pub rate: Option<String>,
    /// Four-level signalling (two bits a symbol) for --rate
    #[arg(long, requires = "rate")]
    pub pam4: bool,
    /// A common link by name (`--link help` lists them)
    #[arg(long, value_name = "NAME", allow_hyphen_values = true)]
    pub link: Option<String>,
    /// Insertion-loss budget of the channel at that frequency, dB
    #[arg(long, value_name = "DB", value_parser = Decibels, allow_hyphen_values = true)]
    pub budget: Option<f64>,
    /// Losses outside the traces (connectors, vias, packages), dB
    #[arg(long, value_name = "DB", value_parser = Decibels, allow_hyphen_values = true, default_value = "0")]
    pub fixed: f64,
    /// Write the insertion loss against frequency of a run of --length as SVG here (one rule)
    #[arg(long, value_name = "FILE", requires_all = ["length", "rule"], allow_hyphen_values = true)]
    pub svg: Option<String>,
    /// Run length of the plot
    #[arg(long, value_name = "LENGTH", value_parser = Length, allow_hyphen_values = true)]
    pub length: Option<f64>,
    /// Print the results as JSON
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub foil: FoilArgs,
    #[command(flatten)]
    pub engine: crate::args::EngineArgs,
}

/// The budget's frequency and what it came from.
fn frequency(args: &Args) -> Result<(f64, String)> {
    if let Some(f) = args.nyquist {
        return Ok((f, format!("{} GHz", format_sig(f / 1e9, 4))));
    }
    if let Some(text) = &args.rate {
        let gbps = parse_number("rate", text, &["Gbps", "Gb/s", "GT/s"])?;
        if !(0.001..=1000.0).contains(&gbps) {
            bail!("--rate: {gbps} Gb/s is outside 0.001 to 1000 Gb/s");
        }
        let s = if args.pam4 {
            Signalling::Pam4
        } else {
            Signalling::Nrz
        };
        let f = reach::nyquist_hz(gbps * 1e9, s);
        let kind = if args.pam4 { "PAM4" } else { "NRZ" };
        return Ok((
            f,
            format!(
                "{} GHz, Nyquist of {} Gb/s {kind}",
                format_sig(f / 1e9, 4),
                format_sig(gbps, 6)
            ),
        ));
    }
    if let Some(name) = &args.link {
        let names = || {
            LINK_PRESETS
                .iter()
                .map(|p| format!("{:?}", p.name))
                .collect::<Vec<_>>()
                .join(", ")
        };
        if name.eq_ignore_ascii_case("help") {
            bail!("--link: the presets are {}", names());
        }
        let want = name.to_ascii_lowercase();
        let found: Vec<_> = LINK_PRESETS
            .iter()
            .filter(|p| p.name.to_ascii_lowercase().contains(&want))
            .collect();
        let [p] = found.as_slice() else {
            bail!(
                "--link: {name:?} names {} presets; the presets are {}",
                found.len(),
                names()
            );
        };
        let f = p.nyquist_hz();
        return Ok((
            f,
            format!("{} GHz, Nyquist of {}", format_sig(f / 1e9, 4), p.name),
        ));
    }
    bail!("give the frequency: --nyquist FREQ, --rate GBPS [--pam4] or --link NAME")
}

/// A run length in mm and inches (reach is talked of in both).
fn run_length(m: f64) -> String {
    format!(
        "{} mm ({} in)",
        format_sig(m * 1e3, 4),
        format_sig(m / 0.0254, 3)
    )
}

pub fn run(args: Args) -> Result<()> {
    let (freq_hz, from) = frequency(&args)?;
    let Some(budget) = args.budget else {
        bail!("--budget: give the channel's insertion-loss budget at that frequency, in dB");
    };
    let options = ReachOptions {
        freq_hz,
        budget_db: budget,
        fixed_db: args.fixed,
    };
    options.validate()?;
    // Read once: `-` is stdin; each rule's model is then built from the same text.
    let text = read_input(&args.file)?;
    let project = ohmstack_core::Project::from_json(&text)?;
    let names: Vec<String> = match &args.rule {
        Some(n) => vec![n.clone()],
        None => project.rules.iter().map(|r| r.name.clone()).collect(),
    };
    let mut out = Vec::new();
    for name in &names {
        let one =
            model_of(project.clone(), name, &args.foil, &args.engine).and_then(|(_, _, model)| {
                let r = reach::reach(&model, &options)?;
                if let (Some(svg), Some(length)) = (&args.svg, args.length) {
                    let sweep = Sweep {
                        from_hz: (freq_hz / 100.0).max(1e6),
                        to_hz: (freq_hz * 3.0).min(ohmstack_core::line::loss::MAX_FREQ_HZ),
                        points: 60,
                    };
                    let il =
                        reach::insertion_loss(&model, length, args.fixed, &sweep.frequencies()?)?;
                    let plot = insertion_loss_plot(
                        format!("{name}: insertion loss of a {} run", run_length(length)),
                        &il,
                        budget,
                    );
                    std::fs::write(svg, plot).with_context(|| format!("--svg: writing {svg}"))?;
                }
                Ok(r)
            });
        match one {
            Ok(r) => {
                if !args.json {
                    println!("{name}: {} at {from}", r.signal);
                    println!(
                        "  loss {} dB/m ({} dB/in: conductor {}, dielectric {} dB/m)",
                        format_sig(r.loss_db_per_m, 4),
                        format_sig(r.loss_db_per_m * 0.0254, 4),
                        format_sig(r.conductor_db_per_m, 4),
                        format_sig(r.dielectric_db_per_m, 4)
                    );
                    match r.reach_m {
                        Some(m) => println!(
                            "  longest run inside {} dB after {} dB fixed: {}",
                            format_sig(budget, 4),
                            format_sig(args.fixed, 4),
                            run_length(m)
                        ),
                        None => println!("  the fixed losses alone spend the budget"),
                    }
                }
                out.push(json!({"rule": name, "reach": r}));
            }
            Err(e) if args.rule.is_none() => {
                if !args.json {
                    println!("{name}: not computed: {e}");
                }
                out.push(json!({"rule": name, "error": e.to_string()}));
            }
            Err(e) => return Err(e),
        }
    }
    if args.json {
        println!("{}", serde_json::to_string_pretty(&out)?);
    }
    Ok(())
}
