//! `ohmstack kinds`: the structures a line case may name, with the fields each one takes.

use ohmstack_core::plan::case;

use anyhow::Result;

#[derive(clap::Args)]
pub struct Args {}

pub fn run(_: Args) -> Result<()> {
    for (name, what) in case::KINDS {
        println!("{name:<28} {what}");
    }
    println!("\nEarlier names, still accepted:");
    for (old, new) in case::KIND_ALIASES {
        println!("{old:<28} = {new}");
    }
    Ok(())
}
