//! `cargo xtask fuzz [--seconds N]`: run every libFuzzer target of the `fuzz/` crate for N seconds (default 60)
//! and print per-target executions, corpus growth and findings, then a total. Not part of `cargo xtask test`.
//!
//! cargo-fuzz passes nightly-only compiler flags (`-Z sanitizer=address`, coverage instrumentation); this
//! project builds on stable, so the run sets `RUSTC_BOOTSTRAP=1` to let the stable compiler accept them.

use crate::util::{self, root};
use anyhow::{bail, Context, Result};
use std::path::Path;
use std::process::Command;

/// The fuzz targets, in the order they run. A new target (e.g. the field solver) is one more name here plus a
/// `[[bin]]` in fuzz/Cargo.toml.
pub const TARGETS: &[&str] = &[
    "share_decode",
    "project_json",
    "models",
    "plan_project",
    "field",
];

/// Seconds per target when `--seconds` is not given.
pub const DEFAULT_SECONDS: u64 = 60;

/// The figures of one target's run, read from libFuzzer's final statistics.
#[derive(Debug, Default)]
struct Outcome {
    executions: u64,
    new_units: u64,
    findings: Vec<String>,
}

fn cargo_fuzz() -> Command {
    let mut c = util::cargo();
    c.arg("fuzz")
        .env("RUSTC_BOOTSTRAP", "1")
        .current_dir(root().join("fuzz"));
    c
}

fn ensure_installed() -> Result<()> {
    if util::probe(cargo_fuzz().arg("--version")) {
        return Ok(());
    }
    eprintln!("cargo-fuzz is not installed; installing it (takes a few minutes)");
    util::run(util::cargo().args(["install", "cargo-fuzz", "--locked"]))
}

fn stat(log: &str, name: &str) -> u64 {
    // libFuzzer's -print_final_stats lines look like "stat::number_of_executed_units: 123456".
    log.lines()
        .filter_map(|l| l.trim().strip_prefix(name))
        .filter_map(|rest| rest.trim_start_matches(':').trim().parse::<u64>().ok())
        .sum()
}

fn artifacts(dir: &Path) -> Vec<String> {
    let mut out: Vec<String> = std::fs::read_dir(dir)
        .map(|rd| {
            rd.flatten()
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .filter(|n| {
                    ["crash-", "timeout-", "oom-", "leak-", "slow-unit-"]
                        .iter()
                        .any(|p| n.starts_with(p))
                })
                .collect()
        })
        .unwrap_or_default();
    out.sort();
    out
}

fn fuzz_one(target: &str, seconds: u64) -> Result<Outcome> {
    let fuzz_dir = root().join("fuzz");
    let corpus = fuzz_dir.join("corpus").join(target);
    std::fs::create_dir_all(&corpus).with_context(|| format!("creating {}", corpus.display()))?;
    let artifact_dir = fuzz_dir.join("artifacts").join(target);
    let before = artifacts(&artifact_dir);
    let mut cmd = cargo_fuzz();
    cmd.args(["run", target]).arg(&corpus);
    let seeds = fuzz_dir.join("seeds").join(target);
    if seeds.is_dir() {
        cmd.arg(&seeds);
    }
    cmd.args([
        "--",
        &format!("-max_total_time={seconds}"),
        // Every loop in the core is capped. The slowest legal input known (broadside-pair synthesis at the moment
        // solver's node cap, about 1 s natively) takes 10–15 s under the sanitizer, so 30 s flags a real hang.
        "-timeout=30",
        "-rss_limit_mb=2048",
        "-print_final_stats=1",
    ]);
    eprintln!("$ {}", util::describe(&cmd));
    let out = cmd
        .output()
        .with_context(|| format!("starting cargo fuzz for {target}"))?;
    let log = String::from_utf8_lossy(&out.stderr).into_owned();
    let log_file = fuzz_dir.join("artifacts").join(format!("{target}.log"));
    std::fs::create_dir_all(fuzz_dir.join("artifacts"))?;
    std::fs::write(&log_file, &log)?;
    let findings: Vec<String> = artifacts(&artifact_dir)
        .into_iter()
        .filter(|a| !before.contains(a))
        .collect();
    let executions = stat(&log, "stat::number_of_executed_units");
    if !out.status.success() && findings.is_empty() {
        // A build failure or a libFuzzer setup error, not a finding.
        let tail: Vec<&str> = log.lines().rev().take(30).collect();
        let tail: Vec<&str> = tail.into_iter().rev().collect();
        bail!(
            "cargo fuzz run {target} failed without a finding:\n{}\n(full log: {})",
            tail.join("\n"),
            log_file.display()
        );
    }
    Ok(Outcome {
        executions,
        new_units: stat(&log, "stat::new_units_added"),
        findings,
    })
}

/// Runs every target for `seconds` each. Fails (after running all of them) when any target left a finding.
pub fn run(seconds: u64) -> Result<()> {
    ensure_installed()?;
    let mut total = Outcome::default();
    let mut rows = Vec::new();
    for target in TARGETS {
        eprintln!("fuzzing {target} for {seconds} s");
        let o = fuzz_one(target, seconds)?;
        rows.push(format!(
            "{target:<14} {:>12} executions {:>6} new inputs {:>3} findings{}",
            o.executions,
            o.new_units,
            o.findings.len(),
            if o.findings.is_empty() {
                String::new()
            } else {
                format!(" ({})", o.findings.join(", "))
            }
        ));
        total.executions += o.executions;
        total.new_units += o.new_units;
        total
            .findings
            .extend(o.findings.iter().map(|f| format!("{target}/{f}")));
    }
    println!("fuzz results ({seconds} s per target):");
    for r in &rows {
        println!("  {r}");
    }
    println!(
        "  {:<14} {:>12} executions {:>6} new inputs {:>3} findings",
        "total",
        total.executions,
        total.new_units,
        total.findings.len()
    );
    if !total.findings.is_empty() {
        bail!(
            "fuzzing found {} problem input(s) under fuzz/artifacts/: {}",
            total.findings.len(),
            total.findings.join(", ")
        );
    }
    Ok(())
}

/// Parses `[--seconds N]`.
pub fn parse_seconds(args: &[String]) -> Result<u64> {
    match args {
        [] => Ok(DEFAULT_SECONDS),
        [flag, n] if flag == "--seconds" => n
            .parse()
            .ok()
            .filter(|&s| s > 0)
            .ok_or_else(|| anyhow::anyhow!("--seconds takes a positive whole number")),
        [other, ..] => bail!("fuzz: unknown option {other}"),
    }
}
