//! `ohmstack`: the native command line over ohmstack-core — analyse projects, compute and solve single lines,
//! and run batches of cases as JSON lines. The only crate besides xtask that reads files or arguments.

use anyhow::{anyhow, bail, Context, Result};
use ohmstack_core::case::{self, LineCase};
use ohmstack_core::models::{Analysis, Evaluated};
use ohmstack_core::units::{format_length, format_sig, LengthUnit};
use ohmstack_core::{Project, RuleOutcome};
use serde_json::{json, Value};
use std::collections::BTreeMap;
use std::io::{BufRead, Read, Write};

const HELP: &str = "ohmstack — PCB controlled-impedance stackup planner (design estimates; confirm with the fabricator's test coupons)

usage:
  ohmstack demo                         print the embedded demo project as JSON
  ohmstack analyze FILE|- [--json]      impedance table for a project file (- reads stdin)
  ohmstack calc KIND --field value ... [--json]
                                        analyse one line, e.g.
                                        ohmstack calc microstrip --width 0.3mm --height 0.17mm --thickness 35um --dk 4.2
  ohmstack solve KIND --target OHMS --field value ... [--json]
                                        find the width that gives the target impedance
  ohmstack batch                        JSON lines of cases on stdin, JSON lines of results on stdout
  ohmstack kinds                        list the structures calc/solve/batch know
  ohmstack materials [--json]           generic dielectric classes with typical Dk/Df (the app's presets)

lengths take units: um, mm, mil, in (and oz for copper thickness); plain numbers are metres.";

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match run(&args) {
        Ok(()) => {}
        Err(e) => {
            eprintln!("error: {e:#}");
            std::process::exit(2);
        }
    }
}

fn run(args: &[String]) -> Result<()> {
    let Some(cmd) = args.first() else {
        println!("{HELP}");
        return Ok(());
    };
    let rest = &args[1..];
    match cmd.as_str() {
        "demo" => {
            println!("{}", ohmstack_core::demo::project().to_json());
            Ok(())
        }
        "analyze" | "analyse" => analyze(rest),
        "calc" => calc(rest, false),
        "solve" => calc(rest, true),
        "batch" => batch(),
        "kinds" => {
            for (name, what) in case::KINDS {
                println!("{name:<24} {what}");
            }
            Ok(())
        }
        "materials" => {
            materials(rest);
            Ok(())
        }
        "-h" | "--help" | "help" => {
            println!("{HELP}");
            Ok(())
        }
        other => bail!("unknown command {other:?}; run `ohmstack --help`"),
    }
}

/// Splits `--key value` pairs and bare `--json`; anything else is an error naming the argument.
fn flags(args: &[String]) -> Result<(BTreeMap<String, String>, bool, Vec<String>)> {
    let mut map = BTreeMap::new();
    let mut json = false;
    let mut positional = Vec::new();
    let mut i = 0;
    while i < args.len() {
        let a = &args[i];
        if a == "--json" {
            json = true;
        } else if let Some(key) = a.strip_prefix("--") {
            let (key, value) = match key.split_once('=') {
                Some((k, v)) => (k.to_string(), v.to_string()),
                None => {
                    i += 1;
                    let v = args
                        .get(i)
                        .ok_or_else(|| anyhow!("--{key}: missing value"))?;
                    (key.to_string(), v.clone())
                }
            };
            if map.insert(key.clone(), value).is_some() {
                bail!("--{key}: given twice");
            }
        } else {
            positional.push(a.clone());
        }
        i += 1;
    }
    Ok((map, json, positional))
}

fn read_input(path: &str) -> Result<String> {
    let mut text = String::new();
    if path == "-" {
        std::io::stdin()
            .take(8 << 20)
            .read_to_string(&mut text)
            .context("reading stdin")?;
    } else {
        text = std::fs::read_to_string(path).with_context(|| format!("reading {path}"))?;
    }
    Ok(text)
}

fn analyze(args: &[String]) -> Result<()> {
    let (map, json, positional) = flags(args)?;
    if let Some(k) = map.keys().next() {
        bail!("--{k}: not an option of analyze");
    }
    let [path] = positional.as_slice() else {
        bail!("analyze takes one FILE (or - for stdin)")
    };
    let project = Project::from_json(&read_input(path)?)?;
    let plan = ohmstack_core::plan(&project)?;
    if json {
        println!("{}", serde_json::to_string_pretty(&plan)?);
        return Ok(());
    }
    let unit = project.units;
    println!(
        "{} — board {} , {} copper layers{}",
        plan.title,
        format_length(plan.total_thickness_m, unit),
        plan.copper_count,
        if plan.symmetric {
            ""
        } else {
            ", NOT symmetric (warpage risk)"
        }
    );
    println!();
    println!(
        "{:<28} {:<10} {:<28} {:>12} {:>12} {:>9} {:>8} {:>7} {:>9}",
        "rule", "layer", "structure", "width", "spacing", "Z (Ω)", "target", "Dk eff", "ps/mm"
    );
    for outcome in &plan.rules {
        match outcome {
            RuleOutcome::Ok(r) => {
                println!(
                    "{:<28} {:<10} {:<28} {:>12} {:>12} {:>9} {:>8} {:>7} {:>9}{}",
                    r.name,
                    r.layer,
                    format!(
                        "{} {}",
                        r.family,
                        if r.structure == "single-ended" {
                            ""
                        } else {
                            r.structure
                        }
                    ),
                    format_length(r.width_m, unit),
                    r.spacing_m
                        .map(|s| format_length(s, unit))
                        .unwrap_or_else(|| "-".into()),
                    format!("{:.2}", r.impedance_ohm),
                    format!("{:.1}", r.target_ohm),
                    format!("{:.3}", r.eps_eff),
                    format!("{:.3}", r.delay_s_per_m * 1e9),
                    if r.within_tolerance {
                        ""
                    } else {
                        "  OUT OF TOLERANCE"
                    }
                );
                for w in &r.warnings {
                    println!("    note: {}", w.message);
                }
            }
            RuleOutcome::Error { name, message } => println!("{name:<28} error: {message}"),
        }
    }
    Ok(())
}

fn evaluated_json(case: &LineCase, e: &Evaluated) -> Value {
    let mut v = json!({
        "structure": case.kind,
        "family": case.cross_section.family(),
        "method": e.method,
        "width_m": case.dims.w,
        "warnings": e.analysis.warnings().iter().map(|w| w.message.clone()).collect::<Vec<_>>(),
    });
    match &e.analysis {
        Analysis::Single(s) => {
            v["z0_ohm"] = json!(s.z0);
            v["eps_eff"] = json!(s.eps_eff);
            v["delay_s_per_m"] = json!(s.delay_per_m());
            v["inductance_per_m"] = json!(s.inductance_per_m());
            v["capacitance_per_m"] = json!(s.capacitance_per_m());
        }
        Analysis::Pair(p) => {
            v["spacing_m"] = json!(case.dims.s);
            v["z_odd_ohm"] = json!(p.z_odd);
            v["z_even_ohm"] = json!(p.z_even);
            v["z_diff_ohm"] = json!(p.z_diff());
            v["z_common_ohm"] = json!(p.z_common());
            v["eps_eff_odd"] = json!(p.eps_eff_odd);
            v["eps_eff_even"] = json!(p.eps_eff_even);
        }
    }
    v
}

fn compute(
    kind: &str,
    mut map: BTreeMap<String, String>,
    solve: bool,
) -> Result<(LineCase, Evaluated)> {
    let target = map.remove("target");
    let mut case = if solve {
        // The width is what we solve for; a starting value is not needed.
        map.entry("width".into()).or_insert_with(|| "1e-4".into());
        case::parse(kind, &map)?
    } else {
        case::parse(kind, &map)?
    };
    if solve {
        let target = target
            .ok_or_else(|| anyhow!("--target: missing (the impedance to solve for, in Ω)"))?;
        let target = ohmstack_core::units::parse_number("target", &target, &["ohm", "Ω"])?;
        ohmstack_core::error::in_range("target", target, 1.0, 1000.0, "Ω")?;
        case = case.solve_width(target)?;
    } else if target.is_some() {
        bail!("--target: only `solve` takes a target");
    }
    let e = case.analyze()?;
    Ok((case, e))
}

fn calc(args: &[String], solve: bool) -> Result<()> {
    let (map, json, positional) = flags(args)?;
    let [kind] = positional.as_slice() else {
        bail!("give one structure KIND (see `ohmstack kinds`)")
    };
    let (case, e) = compute(kind, map, solve)?;
    if json {
        println!(
            "{}",
            serde_json::to_string_pretty(&evaluated_json(&case, &e))?
        );
        return Ok(());
    }
    let unit = LengthUnit::Um;
    println!("{} ({})", case.cross_section.family(), e.method);
    println!("  width       {}", format_length(case.dims.w, unit));
    match &e.analysis {
        Analysis::Single(s) => {
            println!("  Z0          {} Ω", format_sig(s.z0, 5));
            println!("  Dk eff      {}", format_sig(s.eps_eff, 5));
            println!(
                "  delay       {} ps/mm",
                format_sig(s.delay_per_m() * 1e9, 4)
            );
        }
        Analysis::Pair(p) => {
            println!("  Zdiff       {} Ω", format_sig(p.z_diff(), 5));
            println!("  Zcommon     {} Ω", format_sig(p.z_common(), 5));
            println!(
                "  Zodd/Zeven  {} / {} Ω",
                format_sig(p.z_odd, 5),
                format_sig(p.z_even, 5)
            );
        }
    }
    for w in e.analysis.warnings() {
        println!("  note: {}", w.message);
    }
    Ok(())
}

/// One JSON object per line in: `{"structure": "microstrip", "width": "0.3mm", ..., "target": 50}` (with a target,
/// the width is solved). One JSON object per line out, `{"error": "..."}` for a bad line; the batch goes on.
fn batch() -> Result<()> {
    let stdin = std::io::stdin();
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    for (n, line) in stdin.lock().lines().enumerate() {
        let line = line.context("reading stdin")?;
        if line.trim().is_empty() {
            continue;
        }
        let result = batch_line(&line)
            .unwrap_or_else(|e| json!({ "line": n + 1, "error": format!("{e:#}") }));
        serde_json::to_writer(&mut out, &result)?;
        out.write_all(b"\n")?;
    }
    Ok(())
}

fn batch_line(line: &str) -> Result<Value> {
    let value: Value = serde_json::from_str(line).context("not a JSON object")?;
    let object = value
        .as_object()
        .ok_or_else(|| anyhow!("not a JSON object"))?;
    let mut map = BTreeMap::new();
    let mut kind = None;
    for (k, v) in object {
        let text = match v {
            Value::String(s) => s.clone(),
            Value::Number(n) => n.to_string(),
            _ => bail!("{k}: expected a number or a text with a unit"),
        };
        if k == "structure" {
            kind = Some(text);
        } else {
            map.insert(k.clone(), text);
        }
    }
    let kind = kind.ok_or_else(|| anyhow!("structure: missing"))?;
    let solve = map.contains_key("target");
    let (case, e) = compute(&kind, map, solve)?;
    Ok(evaluated_json(&case, &e))
}

/// Prints the generic material presets shared with the web app.
fn materials(args: &[String]) {
    use ohmstack_core::material::{PresetUse, PRESETS, PRESET_CAVEAT};
    if args.iter().any(|a| a == "--json") {
        let list: Vec<Value> = PRESETS
            .iter()
            .map(|p| {
                json!({"id": p.id, "name": p.name, "dk": p.dk, "df": p.df, "spec_freq_hz": p.spec_freq_hz,
                       "use": match p.used_for { PresetUse::Laminate => "laminate", PresetUse::Mask => "solder_mask" }})
            })
            .collect();
        println!("{}", json!({"caveat": PRESET_CAVEAT, "presets": list}));
        return;
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
}
