//! `ohmstack demo`: the embedded demo project, a starting point for a project file.

use ohmstack_core::design::demo;

use anyhow::Result;

#[derive(clap::Args)]
pub struct Args {}

pub fn run(_: Args) -> Result<()> {
    println!("{}", demo::project().to_json());
    Ok(())
}
