//! Build tasks for the workspace, run as `cargo xtask <task>`: `dist` (one-file web app), `serve`, `test`,
//! `fuzz`, `bench`.
//! Hand-written argument parsing keeps this crate to a few dependencies.

mod bench;
mod dist;
mod fuzz;
mod serve;
mod test;
mod util;

use anyhow::{bail, Result};

const HELP: &str = "cargo xtask <task>

tasks:
  dist                 build the web app into one self-contained file, dist/ohmstack.html
  serve [--port N]     build, then serve dist/ohmstack.html on http://127.0.0.1:N/ (default 8080)
  test                 install what the tests need, then fmt check, clippy, all tests, reference and browser tests
  fuzz [--seconds N]   run every libFuzzer target in fuzz/ for N s each (default 60); installs cargo-fuzz
  bench [--quick] [--no-criterion] [--no-browser]
                       criterion benches, peer comparison with scikit-rf, WASM vs native, bundle figures
                       (see BENCHMARKS.md; writes target/bench/summary.md)";

fn main() {
    if let Err(e) = run() {
        eprintln!("xtask: {e:#}");
        std::process::exit(1);
    }
}

fn run() -> Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match args.first().map(String::as_str) {
        Some("dist") => dist::run().map(|_| ()),
        Some("serve") => {
            let port = match args.get(1).map(String::as_str) {
                None => 8080,
                Some("--port") => args
                    .get(2)
                    .and_then(|p| p.parse().ok())
                    .ok_or_else(|| anyhow::anyhow!("--port takes a number"))?,
                Some(other) => bail!("serve: unknown option {other}"),
            };
            let file = dist::run()?;
            serve::run(&file, port)
        }
        Some("test") => test::run(),
        Some("fuzz") => fuzz::run(fuzz::parse_seconds(&args[1..])?),
        Some("bench") => bench::run(&args[1..]),
        Some("-h" | "--help") | None => {
            println!("{HELP}");
            Ok(())
        }
        Some(other) => bail!("unknown task {other:?}\n\n{HELP}"),
    }
}
