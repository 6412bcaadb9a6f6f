//! `cargo xtask bench`: the benchmarks of BENCHMARKS.md in one run. Criterion benches of the core, then the peer
//! comparison (the same microstrip geometries through scikit-rf's per-line and vectorised paths and through ours,
//! native single-threaded, and through `ohmstack batch`), then WASM against native (the whole-project recompute
//! timed inside headless Chromium) and the bundle figures (size of dist/ohmstack.html, time to first results).
//! Ratios are taken within this one run, so a loaded machine skews them less than absolute figures.
//!
//! Options: `--quick` (criterion `--quick`, fewer repeats), `--no-criterion`, `--no-browser` (skips the WASM and
//! bundle parts, which need the wasm32 target, Chromium and a dist build). Writes target/bench/summary.md.
//!
//! The field solve is compared with scikit-fem by bench/field_peer.py (both against Cohn's exact stripline).

use crate::util::{self, cargo, root};
use anyhow::{bail, Context, Result};
use serde_json::Value;
use std::fmt::Write as _;
use std::io::Write as _;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::Instant;

/// Peer comparison size (the figure).
const GEOMETRIES: usize = 100_000;

struct Options {
    quick: bool,
    criterion: bool,
    browser: bool,
}

fn parse(args: &[String]) -> Result<Options> {
    let mut o = Options {
        quick: false,
        criterion: true,
        browser: true,
    };
    for a in args {
        match a.as_str() {
            "--quick" => o.quick = true,
            "--no-criterion" => o.criterion = false,
            "--no-browser" => o.browser = false,
            other => bail!("bench: unknown option {other}"),
        }
    }
    Ok(o)
}

/// Runs `cmd` (echoed) and returns its stdout parsed as the JSON object on its last line.
fn json_of(cmd: &mut Command) -> Result<Value> {
    eprintln!("$ {}", util::describe(cmd));
    let out = cmd
        .stderr(Stdio::inherit())
        .output()
        .with_context(|| format!("starting {}", util::describe(cmd)))?;
    if !out.status.success() {
        bail!("{} failed ({})", util::describe(cmd), out.status);
    }
    let text = String::from_utf8_lossy(&out.stdout);
    let last = text.lines().rev().find(|l| l.trim_start().starts_with('{'));
    serde_json::from_str(last.context("no JSON line in the output")?)
        .with_context(|| format!("reading the output of {}", util::describe(cmd)))
}

fn num(v: &Value, key: &str) -> Result<f64> {
    v.get(key)
        .and_then(Value::as_f64)
        .with_context(|| format!("missing {key} in {v}"))
}

/// nproc, the CPU model and the load average, for the record.
fn machine() -> String {
    let cpu = std::fs::read_to_string("/proc/cpuinfo")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("model name"))
                .and_then(|l| l.split_once(':'))
                .map(|(_, v)| v.trim().to_string())
        })
        .unwrap_or_else(|| "unknown".into());
    let nproc = std::thread::available_parallelism().map_or(0, |n| n.get());
    let load = std::fs::read_to_string("/proc/loadavg").unwrap_or_default();
    format!(
        "nproc {nproc}, CPU {cpu}, load average (1/5/15 min) {}",
        load.split_whitespace()
            .take(3)
            .collect::<Vec<_>>()
            .join(" ")
    )
}

/// The bench page: the bindgen'ed recompute module inline, exposed as `window.ohmBench`.
fn wasm_page(out: &Path) -> Result<PathBuf> {
    use base64::Engine;
    let wasm_path = crate::dist::build_wasm("ohmstack-bench-wasm")?;
    let (js, wasm) = crate::dist::bindgen_inline(&wasm_path)?;
    let b64 = base64::engine::general_purpose::STANDARD.encode(&wasm);
    let html = format!(
        "<!doctype html><html><head><meta charset=\"utf-8\"><title>ohmstack wasm bench</title></head><body>\n\
         <script type=\"module\">{js}\nconst bytes = Uint8Array.from(atob(\"{b64}\"), (c) => c.charCodeAt(0));\n\
         __wbg_init({{ module_or_path: bytes }}).then(() => {{ window.ohmBench = {{ recompute, checksum, ready: true }}; }});\n\
         </script></body></html>\n"
    );
    let page = out.join("wasm_bench.html");
    std::fs::write(&page, html)?;
    Ok(page)
}

pub fn run(args: &[String]) -> Result<()> {
    let o = parse(args)?;
    let out = crate::dist::target_dir().join("bench");
    std::fs::create_dir_all(&out)?;
    let started = machine();
    eprintln!("xtask: bench on {started}");
    let mut rows: Vec<(String, String, String)> = Vec::new();

    if o.criterion {
        let mut c = cargo();
        c.args([
            "bench",
            "-p",
            "ohmstack-core",
            "--bench",
            "analysis",
            "--bench",
            "project",
        ]);
        if o.quick {
            c.args(["--", "--quick"]);
        }
        util::run(&mut c)?;
        rows.push((
            "criterion benches (per-structure analysis, synthesis, spread, recompute)".into(),
            "see the criterion output above (target/criterion/)".into(),
            "cargo bench -p ohmstack-core --bench analysis --bench project".into(),
        ));
    }

    // Peer comparison: scikit-rf writes the geometries, our loop reads the same file.
    let python = crate::test::ensure_venv()?;
    let geometries = out.join("microstrip_geometries.csv");
    let subsample = if o.quick { "500" } else { "2000" };
    let skrf = json_of(
        Command::new(&python)
            .arg(root().join("bench").join("peer_skrf.py"))
            .arg(&geometries)
            .args(["--count", &GEOMETRIES.to_string(), "--subsample", subsample])
            .current_dir(root()),
    )?;
    let ours = json_of(
        cargo()
            .args(["bench", "-p", "ohmstack-core", "--bench", "peer_microstrip"])
            .env("OHMSTACK_PEER_GEOMETRIES", &geometries),
    )?;
    let per_line = num(&skrf, "per_line_per_s")?;
    let vector = num(&skrf, "vectorised_zero_t_per_s")?;
    let ours_t = num(&ours, "per_s_finite_t")?;
    let ours_0 = num(&ours, "per_s_zero_t")?;
    let dev = ours
        .get("max_rel_dev_vs_reference")
        .cloned()
        .unwrap_or(Value::Null);

    // The same geometries through the CLI: JSON parsing and printing included (a release build).
    util::run(cargo().args(["build", "--release", "-p", "ohmstack"]))?;
    let text = std::fs::read_to_string(&geometries)?;
    let mut lines = String::new();
    for l in text.lines().filter(|l| !l.starts_with('#')) {
        let v: Vec<&str> = l.split(',').collect();
        writeln!(
            lines,
            "{{\"structure\":\"microstrip\",\"width\":{},\"height\":{},\"thickness\":{},\"dk\":{}}}",
            v[0], v[1], v[2], v[3]
        )?;
    }
    let bin = crate::dist::target_dir().join("release").join("ohmstack");
    let start = Instant::now();
    // The closed form is what the peer computes; batch's default engine is the field engine.
    let mut child = Command::new(&bin)
        .args(["batch", "--engine", "closed-form"])
        .stdin(Stdio::piped())
        .stdout(Stdio::null())
        .spawn()
        .with_context(|| format!("starting {}", bin.display()))?;
    child
        .stdin
        .take()
        .context("batch stdin")?
        .write_all(lines.as_bytes())?;
    let status = child.wait()?;
    let batch = GEOMETRIES as f64 / start.elapsed().as_secs_f64();
    if !status.success() {
        bail!("ohmstack batch failed ({status})");
    }

    // Field solve against scikit-fem at matched accuracy, both measured against Cohn's exact stripline.
    util::run(cargo().args(["build", "--release", "-q", "-p", "ohmstack"]))?;
    let exe = crate::dist::target_dir().join("release").join("ohmstack");
    let field = Command::new(&python)
        .arg(root().join("bench").join("field_peer.py"))
        .arg(&exe)
        .current_dir(root())
        .output()
        .context("running bench/field_peer.py")?;
    if !field.status.success() {
        bail!(
            "bench/field_peer.py failed: {}",
            String::from_utf8_lossy(&field.stderr)
        );
    }
    for line in String::from_utf8_lossy(&field.stdout).lines() {
        eprintln!("{line}");
        if let Some(rest) = line.strip_prefix("at ") {
            rows.push((
                format!(
                    "field solve vs scikit-fem P2 (stripline, Cohn exact), at {}",
                    rest.split(':').next().unwrap_or("")
                ),
                rest.split_once(": ")
                    .map(|(_, r)| r.to_string())
                    .unwrap_or_default(),
                "cargo xtask bench (bench/field_peer.py)".into(),
            ));
        }
    }

    let ratio = |a: f64, b: f64| format!("{:.0}×", a / b);
    let peer_cmd = "cargo xtask bench (bench/peer_skrf.py + core/benches/peer_microstrip.rs)";
    rows.push((
        format!("microstrip HJ, t = 35 µm: scikit-rf MLine per-line objects ({subsample}-geometry subsample, scaled)"),
        format!("{per_line:.0} geometries/s"),
        peer_cmd.into(),
    ));
    rows.push((
        "microstrip HJ, t = 35 µm: ours, core loop (Microstrip::analyze, validated, with warnings)"
            .into(),
        format!(
            "{ours_t:.0} geometries/s = {} scikit-rf per-line (max rel. deviation {dev})",
            ratio(ours_t, per_line)
        ),
        peer_cmd.into(),
    ));
    rows.push((
        "microstrip HJ, t = 35 µm: ours, `ohmstack batch` (JSON in and out, one process)".into(),
        format!(
            "{batch:.0} geometries/s = {} scikit-rf per-line",
            ratio(batch, per_line)
        ),
        peer_cmd.into(),
    ));
    rows.push((
        "microstrip HJ, t = 0: scikit-rf analyse_quasi_static on whole numpy arrays".into(),
        format!("{vector:.0} geometries/s"),
        peer_cmd.into(),
    ));
    rows.push((
        "microstrip HJ, t = 0: ours, core loop".into(),
        format!(
            "{ours_0:.0} geometries/s = {:.2}× scikit-rf vectorised",
            ours_0 / vector
        ),
        peer_cmd.into(),
    ));

    if o.browser {
        let repeats = if o.quick { "3" } else { "10" };
        let native = json_of(cargo().args([
            "run",
            "--release",
            "-q",
            "-p",
            "ohmstack-bench-wasm",
            "--bin",
            "ohmstack-bench-wasm",
            "--",
            repeats,
        ]))?;
        let page = wasm_page(&out)?;
        let browser = |args: &[&str]| -> Result<Value> {
            json_of(
                Command::new(&python)
                    .arg(root().join("bench").join("browser_bench.py"))
                    .args(args)
                    .current_dir(root())
                    .env("CHROMIUM", crate::test::CHROMIUM)
                    .env("CHROMEDRIVER", crate::test::CHROMEDRIVER),
            )
        };
        let page_str = page.to_string_lossy().to_string();
        let wasm = browser(&["wasm", &page_str, repeats, "3"])?;
        let (n_ms, w_ms) = (num(&native, "native_best_ms")?, num(&wasm, "wasm_best_ms")?);
        let (n_sum, w_sum) = (num(&native, "checksum")?, num(&wasm, "checksum")?);
        if (n_sum - w_sum).abs() > 1e-6 * n_sum.abs() {
            eprintln!("xtask: warning: WASM checksum {w_sum} differs from native {n_sum}");
        }
        rows.push((
            "whole-project recompute + 10 000-sample spread per rule (12 layers, 16 rules): native"
                .into(),
            format!("{n_ms:.2} ms (best of {repeats})"),
            "cargo run --release -p ohmstack-bench-wasm -- N".into(),
        ));
        rows.push((
            "same, WASM (wasm-release profile) in headless Chromium, performance.now".into(),
            format!(
                "{w_ms:.2} ms (best of {repeats} × 3) = {:.2}× native",
                w_ms / n_ms
            ),
            "cargo xtask bench (bench/browser_bench.py wasm)".into(),
        ));
        let dist = crate::dist::run()?;
        let loads = if o.quick { "3" } else { "7" };
        let b = browser(&["bundle", &dist.to_string_lossy(), loads])?;
        rows.push((
            "dist/ohmstack.html size raw / gzip -9".into(),
            format!(
                "{:.0} KiB / {:.0} KiB",
                num(&b, "dist_bytes")? / 1024.0,
                num(&b, "dist_gzip_bytes")? / 1024.0
            ),
            "cargo xtask dist; bench/browser_bench.py bundle".into(),
        ));
        rows.push((
            "time to first results (navigation start → main#app[data-ready='true'])".into(),
            format!(
                "best {:.0} ms, median {:.0} ms of {loads} fresh loads",
                num(&b, "first_results_best_ms")?,
                num(&b, "first_results_median_ms")?
            ),
            "cargo xtask bench (bench/browser_bench.py bundle)".into(),
        ));
        // The plan worker on the 12-layer, 16-rule fixture, as it is and with every rule on the field solver.
        let fixture = root()
            .join("tests")
            .join("fixtures")
            .join("twelve_layer_sixteen_rules.json");
        let edits = if o.quick { "4" } else { "8" };
        for (variant, extra) in [
            ("as saved", None),
            ("every rule on the field solver", Some("field")),
        ] {
            let dist_str = dist.to_string_lossy().to_string();
            let fixture_str = fixture.to_string_lossy().to_string();
            let mut args = vec!["worker", &dist_str, &fixture_str, edits];
            args.extend(extra);
            let wk = browser(&args)?;
            let cmd = format!(
                "cargo xtask bench (bench/browser_bench.py worker dist/ohmstack.html tests/fixtures/twelve_layer_sixteen_rules.json {edits}{})",
                extra.map(|e| format!(" {e}")).unwrap_or_default()
            );
            rows.push((
                format!("plan worker, 12 layers / 16 rules ({variant}): whole plan with spread, cold cache"),
                format!("{:.0} ms", num(&wk, "whole_plan_ms")?),
                cmd.clone(),
            ));
            rows.push((
                format!("plan worker ({variant}): one-rule edit → that rule's field figures / its spread"),
                format!(
                    "median {:.0} ms (max {:.0}) / median {:.0} ms (max {:.0}) over {edits} edits",
                    num(&wk, "edit_median_ms")?,
                    num(&wk, "edit_max_ms")?,
                    num(&wk, "spread_median_ms")?,
                    num(&wk, "spread_max_ms")?
                ),
                cmd.clone(),
            ));
            rows.push((
                format!("plan worker ({variant}): main-thread long tasks (> 50 ms) while typing key by key"),
                format!(
                    "{:.0} tasks, longest {:.0} ms ({:.0} keys in {:.1} s)",
                    num(&wk, "long_tasks_while_typing")?,
                    num(&wk, "longest_task_while_typing_ms")?,
                    num(&wk, "typing_keys")?,
                    num(&wk, "typing_ms")? / 1000.0
                ),
                cmd,
            ));
        }
    }
    let mut md = format!(
        "# cargo xtask bench{}\n\nmachine at start: {started}\nmachine at end: {}\n\n| figure | value | command |\n|---|---|---|\n",
        if o.quick { " --quick" } else { "" },
        machine()
    );
    for (what, value, cmd) in &rows {
        writeln!(md, "| {what} | {value} | `{cmd}` |")?;
    }
    let summary = out.join("summary.md");
    std::fs::write(&summary, &md)?;
    println!("{md}");
    eprintln!("xtask: wrote {}", summary.display());
    Ok(())
}
