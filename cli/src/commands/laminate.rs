//! `ohmstack laminate --style 2116 --datasheet-dk 3.9`: a core or prepreg from its construction — glass style,
//! plies, resin content — to its thickness, Dk and Df (Lichtenecker's rule calibrated to the datasheet point) and the
//! intra-pair skew its weave can cause; `--list` shows the glass styles known.

use ohmstack_core::base::units::format_sig;
use ohmstack_core::design::construction::{
    glass_style, Construction, DatasheetPoint, GLASS_STYLES, WEAVE_MITIGATIONS,
};

use crate::args::{whole, Length, Percent};
use anyhow::{bail, Result};
use serde_json::json;

#[derive(clap::Args)]
#[command(
    after_help = "Glass-style figures (fabric weight, usual resin content, coverage) are typical values of \
the trade, common practice: use the laminate maker's construction table where it differs. The skew is the worst case \
for a pair routed along the weave, one line over a glass bundle and one over a resin window."
)]
pub struct Args {
    /// List the glass styles known
    #[arg(long, conflicts_with = "style")]
    pub list: bool,
    /// Glass style (trade number, e.g. 1080, 2116)
    #[arg(long, value_name = "STYLE", required_unless_present = "list")]
    pub style: Option<String>,
    /// Number of plies
    #[arg(long, value_name = "N", value_parser = whole::<u32>, default_value_t = 1)]
    pub plies: u32,
    /// Resin content by weight, % (default: the style's usual)
    #[arg(long, value_name = "PCT", value_parser = Percent, allow_hyphen_values = true)]
    pub resin: Option<f64>,
    /// The laminate's datasheet Dk at --datasheet-resin
    #[arg(
        long,
        value_name = "DK",
        required_unless_present = "list",
        allow_hyphen_values = true
    )]
    pub datasheet_dk: Option<f64>,
    /// The laminate's datasheet Df at --datasheet-resin
    #[arg(
        long,
        value_name = "DF",
        default_value_t = 0.012,
        allow_hyphen_values = true
    )]
    pub datasheet_df: f64,
    /// Resin content of the datasheet point, % (default: the style's usual)
    #[arg(long, value_name = "PCT", value_parser = Percent, allow_hyphen_values = true)]
    pub datasheet_resin: Option<f64>,
    /// Trace width, for the skew of a line whose field spans the weave (with --height)
    #[arg(long, value_name = "LENGTH", value_parser = Length, requires = "height", allow_hyphen_values = true)]
    pub trace_width: Option<f64>,
    /// Height of the trace over its plane, for the skew (with --trace-width)
    #[arg(long, value_name = "LENGTH", value_parser = Length, requires = "trace_width", allow_hyphen_values = true)]
    pub height: Option<f64>,
    /// A pair's run length, for its skew
    #[arg(long, value_name = "LENGTH", value_parser = Length, allow_hyphen_values = true)]
    pub length: Option<f64>,
    /// Line rate in Gb/s, for the skew as a share of the unit interval
    #[arg(
        long,
        value_name = "GBPS",
        requires = "length",
        allow_hyphen_values = true
    )]
    pub rate: Option<f64>,
    /// Print the result as JSON
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: Args) -> Result<()> {
    if args.list {
        if args.json {
            println!("{}", serde_json::to_string_pretty(&GLASS_STYLES)?);
            return Ok(());
        }
        println!(
            "{:>6} {:>12} {:>14} {:>9}",
            "style", "weight g/m²", "usual resin %", "coverage"
        );
        for g in &GLASS_STYLES {
            println!(
                "{:>6} {:>12} {:>14} {:>9}",
                g.style,
                format_sig(g.weight_g_m2, 4),
                format_sig(g.typical_resin * 100.0, 3),
                format_sig(g.coverage, 2)
            );
        }
        println!("typical values, common practice: use the laminate maker's construction table");
        return Ok(());
    }
    let (Some(style), Some(dk)) = (&args.style, args.datasheet_dk) else {
        bail!("--style and --datasheet-dk: give both (or --list)");
    };
    let style = glass_style(style)?;
    let c = Construction {
        style,
        plies: args.plies,
        resin: args.resin.map_or(style.typical_resin, |p| p / 100.0),
        datasheet: DatasheetPoint {
            resin: args
                .datasheet_resin
                .map_or(style.typical_resin, |p| p / 100.0),
            dk,
            df: args.datasheet_df,
        },
    };
    let l = c.laminate()?;
    // The line's field averages the weave over about its width plus twice its height.
    let averaged = match (args.trace_width, args.height) {
        (Some(w), Some(h)) => Some((w + 2.0 * h, c.skew_over(w + 2.0 * h)?)),
        _ => None,
    };
    let per_m = averaged.map_or(l.weave_skew_s_per_m, |a| a.1);
    let ps_per_in = |s_per_m: f64| format_sig(s_per_m * 0.0254 * 1e12, 3);
    let run = args.length.map(|len| {
        let skew = per_m * len;
        let ui = args.rate.map(|gbps| skew / (1e-9 / gbps));
        (len, skew, ui)
    });
    if let Some(gbps) = args.rate {
        if !(0.001..=1000.0).contains(&gbps) {
            bail!("--rate: {gbps} Gb/s is outside 0.001 to 1000 Gb/s");
        }
    }
    if args.json {
        let v = json!({
            "construction": c,
            "laminate": l,
            "averaged": averaged.map(|(width, skew)| json!({"width_m": width, "skew_s_per_m": skew})),
            "run": run.map(|(len, skew, ui)| json!({"length_m": len, "skew_s": skew, "unit_intervals": ui})),
            "mitigations": WEAVE_MITIGATIONS,
        });
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    println!(
        "{} × {} at {} % resin: {} µm ({} mil) as a solid, glass {} % by volume",
        c.plies,
        style.style,
        format_sig(c.resin * 100.0, 3),
        format_sig(l.thickness_m * 1e6, 4),
        format_sig(l.thickness_m / 25.4e-6, 3),
        format_sig(l.glass_fraction * 100.0, 3)
    );
    println!(
        "  Dk {} and Df {} (datasheet {} / {} at {} % resin; resin alone {} / {})",
        format_sig(l.dk, 4),
        format_sig(l.df, 3),
        format_sig(dk, 4),
        format_sig(args.datasheet_df, 3),
        format_sig(c.datasheet.resin * 100.0, 3),
        format_sig(l.resin_dk, 4),
        format_sig(l.resin_df, 3)
    );
    println!(
        "  weave skew along the weave, a line much narrower than the weave: {} ps/in (Dk {} over a bundle, {} over \
         a window)",
        ps_per_in(l.weave_skew_s_per_m),
        format_sig(l.dk_bundle, 4),
        format_sig(l.dk_window, 4)
    );
    if let Some((width, skew)) = averaged {
        println!(
            "  for a line whose field spans {} µm of the weave (pitch {} µm): {} ps/in",
            format_sig(width * 1e6, 3),
            format_sig(style.pitch_m * 1e6, 3),
            ps_per_in(skew)
        );
    }
    if let Some((len, skew, ui)) = run {
        let share = ui.map_or(String::new(), |u| {
            format!(", {} % of the unit interval", format_sig(u * 100.0, 3))
        });
        println!(
            "  over {} mm: {} ps{share}",
            format_sig(len * 1e3, 4),
            format_sig(skew * 1e12, 3)
        );
    }
    println!("  to reduce it:");
    for m in WEAVE_MITIGATIONS {
        println!("    - {m}");
    }
    Ok(())
}
