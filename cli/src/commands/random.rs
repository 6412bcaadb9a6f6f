//! `ohmstack random normal|uniform`: the core's seeded random stream, so outside tools can test its statistics.

use ohmstack_core::plan::spread;

use crate::args::whole;
use anyhow::{bail, Result};
use std::io::Write;

#[derive(Clone, Copy, PartialEq, clap::ValueEnum)]
pub enum Distribution {
    /// Standard normal deviates
    Normal,
    /// Uniform on [0, 1)
    Uniform,
}

#[derive(clap::Args)]
pub struct Args {
    /// Which distribution to draw from
    #[arg(value_name = "DISTRIBUTION", value_enum)]
    pub distribution: Distribution,
    /// How many numbers (at most 1000000)
    #[arg(long, value_name = "N", value_parser = whole::<usize>, allow_hyphen_values = true, default_value_t = 10_000)]
    pub count: usize,
    /// Seed of the stream
    #[arg(long, value_name = "S", value_parser = whole::<u64>, allow_hyphen_values = true,
          default_value_t = spread::DEFAULT_SEED)]
    pub seed: u64,
}

pub fn run(args: Args) -> Result<()> {
    if args.count > 1_000_000 {
        bail!("--count: at most 1000000");
    }
    let normal = args.distribution == Distribution::Normal;
    let mut rng = spread::rng::Rng::new(args.seed);
    let mut out = std::io::BufWriter::new(std::io::stdout().lock());
    for _ in 0..args.count {
        let x = if normal { rng.normal() } else { rng.uniform() };
        writeln!(out, "{x:e}")?;
    }
    Ok(())
}
