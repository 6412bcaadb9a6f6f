//! `ohmstack materials`: the generic dielectric classes with typical Dk/Df that the web app offers as presets.

use ohmstack_core::base::units::format_sig;
use ohmstack_core::design::material::{PresetUse, PRESETS, PRESET_CAVEAT};

use anyhow::Result;
use serde_json::{json, Value};

#[derive(clap::Args)]
pub struct Args {
    /// Print the presets as JSON
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: Args) -> Result<()> {
    if args.json {
        let list: Vec<Value> = PRESETS
            .iter()
            .map(|p| {
                json!({"id": p.id, "name": p.name, "dk": p.dk, "df": p.df, "spec_freq_hz": p.spec_freq_hz,
                       "use": match p.used_for { PresetUse::Laminate => "laminate", PresetUse::Mask => "solder_mask" }})
            })
            .collect();
        println!("{}", json!({"caveat": PRESET_CAVEAT, "presets": list}));
        return Ok(());
    }
    println!("{PRESET_CAVEAT}");
    for p in PRESETS {
        println!(
            "{:<14} {:<36} Dk {:<5} Df {:<7} at {} GHz",
            p.id,
            p.name,
            p.dk,
            p.df,
            format_sig(p.spec_freq_hz / 1e9, 4)
        );
    }
    Ok(())
}
