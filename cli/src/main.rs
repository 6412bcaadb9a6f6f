//! `ohmstack`: the native command line over ohmstack-core — analyse projects, compute and solve single lines,
//! and run batches of cases as JSON lines. The only crate besides xtask that reads files or arguments.

use anyhow::{anyhow, bail, Context, Result};
use ohmstack_core::case::{self, LineCase};
use ohmstack_core::field::rules::RuleFieldJob;
use ohmstack_core::field::synth::FieldSynthesis;
use ohmstack_core::field::{Comparison, FieldOptions, FieldResult};
use ohmstack_core::loss;
use ohmstack_core::models::Dims;
use ohmstack_core::models::{Analysis, Evaluated};
use ohmstack_core::roughness::{Foil, Roughness};
use ohmstack_core::spread::{self, SampleModel, SpreadOptions, SpreadSummary};
use ohmstack_core::touchstone;
use ohmstack_core::units::{
    format_length, format_sig, parse_frequency, parse_length, parse_number, LengthUnit,
};
use ohmstack_core::{Project, RuleOutcome, Structure};
use serde_json::{json, Value};
use std::collections::BTreeMap;
use std::io::{BufRead, Read, Write};
use std::time::Instant;

const HELP: &str = "ohmstack — PCB controlled-impedance stackup planner (design estimates; confirm with the fabricator's test coupons)

usage:
  ohmstack demo                         print the embedded demo project as JSON
  ohmstack analyze FILE|- [--json]      impedance table for a project file (- reads stdin)
  ohmstack calc KIND --field value ... [--json]
                                        analyse one line, e.g.
                                        ohmstack calc microstrip --width 0.3mm --height 0.17mm --thickness 35um --dk 4.2
  ohmstack solve KIND --target OHMS --field value ... [--json]
                                        find the width that gives the target impedance
  ohmstack spread FILE|- [--rule NAME] [--samples N] [--seed S] [--model direct|quadratic|field] [--json]
                                        tolerance spread and yield per rule: corners, Monte Carlo,
                                        sensitivities, tolerance-centred width (default 10000 samples, seed 1;
                                        quadratic = the fast response surface the app uses; field = the 2D
                                        field solver through that surface, no centring)
  ohmstack random normal|uniform [--count N] [--seed S]
                                        the spread's seeded random stream, one number a line (for checks)
  ohmstack batch                        JSON lines of cases on stdin, JSON lines of results on stdout
  ohmstack kinds                        list the structures calc/solve/batch know
  ohmstack materials [--json]           generic dielectric classes with typical Dk/Df (the app's presets)
  ohmstack field FILE|- [--rule NAME] [--tolerance PCT] [--map out.svg|out.json] [--json]
                                        closed form vs 2D field solve for each rule of a project
  ohmstack field-calc KIND --field value ... [--spacing S] [--gap G] [--etch-factor E] [--tolerance PCT]
                  [--map out.svg|out.json] [--json]
                                        2D field solve of one structure (KIND as for calc; --spacing makes an
                                        edge-coupled pair, --gap a coplanar line, both a coplanar pair)
  ohmstack field-solve FILE|- [--rule NAME] [--tolerance PCT] [--map out.svg|out.json] [--json]
                                        solve each rule's width (or spacing) with the 2D field solver,
                                        starting from the closed form's solution
    --map writes the solution's potential: an SVG picture, or the sampled values as JSON (field and
    field-solve need one rule for it: --rule NAME)
  ohmstack share encode FILE|-          print the share link (v1.…) of a project
  ohmstack share decode LINK|-          print the project JSON a share link holds (a whole URL is fine)
  ohmstack notes FILE|- [--format md|csv]
                                        fab notes: stack table, impedance table, general notes
  ohmstack draw FILE|- [--rule NAME] [-o out.svg]
                                        SVG cross-section of the stack (and of one rule's traces)
  ohmstack plot FILE|- --rule NAME [-o out.svg] [--points N]
                                        SVG plot of impedance against width (±30 % around the solution)
  ohmstack loss FILE|- --rule NAME [--freq 5GHz | --from 10MHz --to 40GHz --points 50] [--json]
                                        loss, complex Z0 and delay of one rule's line at one frequency or
                                        over a log-spaced sweep (default 10 MHz to 40 GHz, 50 points)
  ohmstack touchstone FILE|- --rule NAME --length 100mm [--z-ref 50] [--from --to --points] [-o out.s2p]
                                        Touchstone 1.1 S-parameters of a line segment (2-port, or 4-port for
                                        a pair); stdout unless -o names a file
    loss and touchstone also take --foil standard|low-profile|very-low-profile|smooth
    [--foil-model hammerstad-groiss|huray] to set every copper layer's roughness

lengths take units: um, mm, mil, in (and oz for copper thickness); plain numbers are metres.";

fn main() {
    quiet_output_errors();
    let args: Vec<String> = std::env::args().skip(1).collect();
    match run(&args) {
        Ok(()) => {}
        Err(e) => {
            eprintln!("error: {e:#}");
            std::process::exit(2);
        }
    }
}

/// `print!` panics when stdout fails; found by the hostile-input tests with `ohmstack random normal | head`.
/// A reader that went away (broken pipe) ends the program quietly with the shell's SIGPIPE status 141; any other
/// write error becomes the usual one-line error. Everything else keeps the default panic report.
fn quiet_output_errors() {
    let default = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        let payload = info
            .payload()
            .downcast_ref::<String>()
            .map(String::as_str)
            .or_else(|| info.payload().downcast_ref::<&str>().copied())
            .unwrap_or("");
        if let Some(reason) = payload.strip_prefix("failed printing to stdout: ") {
            if reason.contains("Broken pipe") {
                std::process::exit(141);
            }
            eprintln!("error: writing output: {reason}");
            std::process::exit(2);
        }
        default(info);
    }));
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
        "field" => field_project(rest),
        "field-calc" => field_calc(rest),
        "field-solve" => field_solve(rest),
        "loss" => loss_cmd(rest),
        "touchstone" => touchstone_cmd(rest),
        "spread" => spread(rest),
        "random" => random(rest),
        "kinds" => {
            for (name, what) in case::KINDS {
                println!("{name:<24} {what}");
            }
            Ok(())
        }
        "share" => share(rest),
        "notes" => notes(rest),
        "draw" => draw(rest),
        "plot" => plot(rest),
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
        "{:<26} {:<10} {:<52} {:>10} {:>12} {:>17} {:>8} {:>7} {:>9} {:>10}",
        "rule",
        "layer",
        "structure",
        "width",
        "spacing",
        "Z (Ω)",
        "target",
        "Dk eff",
        "ps/mm",
        format!("dB/in@{}", format_frequency(project.analysis_freq_hz))
    );
    for outcome in &plan.rules {
        match outcome {
            RuleOutcome::Ok(r) => {
                println!(
                    "{:<26} {:<10} {:<52} {:>10} {:>12} {:>17} {:>8} {:>7} {:>9} {:>10}{}",
                    r.name,
                    r.layer,
                    format!(
                        "{} {}",
                        r.family,
                        match r.structure {
                            "single-ended" | "coplanar single-ended" => "",
                            "coplanar pair" => "pair",
                            other => other,
                        }
                    ),
                    format_length(r.width_m, unit),
                    r.spacing_m
                        .map(|s| format_length(s, unit))
                        .unwrap_or_else(|| "-".into()),
                    // A wide measured band goes next to the number, not only in a note below.
                    match r.model_band_pct {
                        Some(b) => format!("{:.2} (±{} %)", r.impedance_ohm, format_sig(b, 3)),
                        None => format!("{:.2}", r.impedance_ohm),
                    },
                    format!("{:.1}", r.target_ohm),
                    format!("{:.3}", r.eps_eff),
                    format!("{:.3}", r.delay_s_per_m * 1e9),
                    r.loss
                        .as_ref()
                        .and_then(|l| l.signal())
                        .map(|m| format!("{:.3}", m.total.db_per_in))
                        .unwrap_or_else(|| "-".into()),
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

/// `2.4 GHz`-style text for table headers.
fn format_frequency(hz: f64) -> String {
    let (v, unit) = if hz >= 1e9 {
        (hz / 1e9, "GHz")
    } else if hz >= 1e6 {
        (hz / 1e6, "MHz")
    } else {
        (hz / 1e3, "kHz")
    };
    format!("{}{unit}", format_sig(v, 3))
}

fn evaluated_json(case: &LineCase, e: &Evaluated) -> Value {
    let mut v = json!({
        "structure": case.kind,
        "family": case.cross_section.family_for(case.structure),
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
    println!(
        "{} ({})",
        case.cross_section.family_for(case.structure),
        e.method
    );
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

/// The project, the rule called `--rule`, and its loss model (after synthesis of its free dimension).
fn rule_model(
    path: &str,
    map: &mut BTreeMap<String, String>,
) -> Result<(Project, String, loss::LineModel)> {
    let name = map
        .remove("rule")
        .ok_or_else(|| anyhow!("--rule: missing (the name of the rule to compute)"))?;
    let mut project = Project::from_json(&read_input(path)?)?;
    apply_foil(&mut project, map)?;
    let Some(rule) = project.rules.iter().find(|r| r.name == name) else {
        let names: Vec<&str> = project.rules.iter().map(|r| r.name.as_str()).collect();
        bail!(
            "--rule: no rule named {name:?}; the project's rules are {}",
            names
                .iter()
                .map(|n| format!("{n:?}"))
                .collect::<Vec<_>>()
                .join(", ")
        );
    };
    let result = ohmstack_core::plan::evaluate_rule(&project, rule)?;
    let dims = Dims {
        w: result.width_m,
        s: result.spacing_m,
        gap: result.gap_m,
    };
    let model = loss::for_rule(&project, rule, &result.cross_section, &dims)?;
    Ok((project, name, model))
}

/// Reads `--from --to --points` (each optional, defaults 10 MHz, 40 GHz, 50).
fn sweep_flags(map: &mut BTreeMap<String, String>) -> Result<loss::Sweep> {
    let mut sweep = loss::Sweep::default();
    if let Some(t) = map.remove("from") {
        sweep.from_hz = parse_frequency("from", &t)?;
    }
    if let Some(t) = map.remove("to") {
        sweep.to_hz = parse_frequency("to", &t)?;
    }
    if let Some(t) = map.remove("points") {
        sweep.points = t
            .trim()
            .parse()
            .map_err(|_| anyhow!("points: cannot read {t:?}, expected a whole number"))?;
    }
    sweep.frequencies()?;
    Ok(sweep)
}

fn one_path(positional: &[String], cmd: &str) -> Result<String> {
    match positional {
        [path] => Ok(path.clone()),
        _ => bail!("{cmd} takes one FILE (or - for stdin)"),
    }
}

fn no_more_flags(map: &BTreeMap<String, String>, cmd: &str) -> Result<()> {
    if let Some(k) = map.keys().next() {
        bail!("--{k}: not an option of {cmd}");
    }
    Ok(())
}

fn loss_cmd(args: &[String]) -> Result<()> {
    let (mut map, json, positional) = flags(args)?;
    let path = one_path(&positional, "loss")?;
    let freq = map.remove("freq");
    let has_sweep = ["from", "to", "points"]
        .iter()
        .any(|k| map.contains_key(*k));
    let freqs = match (freq, has_sweep) {
        (Some(_), true) => {
            bail!("--freq: give either --freq or a sweep (--from/--to/--points), not both")
        }
        (Some(t), false) => {
            let f = parse_frequency("freq", &t)?;
            ohmstack_core::error::in_range("freq", f, 1.0, loss::MAX_FREQ_HZ, "Hz")?;
            vec![f]
        }
        (None, _) => sweep_flags(&mut map)?.frequencies()?,
    };
    let (_, name, model) = rule_model(&path, &mut map)?;
    no_more_flags(&map, "loss")?;
    let points = freqs
        .iter()
        .map(|&f| model.at(f))
        .collect::<std::result::Result<Vec<_>, _>>()?;
    if json {
        let v = json!({
            "rule": name,
            "structure": model.structure.label(),
            "family": model.cross_section.family_for(model.structure),
            "width_m": model.dims.w,
            "spacing_m": model.dims.s,
            "gap_m": model.dims.gap,
            "r_dc_ohm_per_m": model.r_dc_per_m(),
            "inputs": model.inputs,
            "points": points,
        });
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    println!(
        "{name}: {} {} (loss in dB per inch; delay in ps per inch)",
        model.cross_section.family_for(model.structure),
        model.structure.label()
    );
    println!(
        "{:>12} {:>5} {:>7} {:>7} {:>8} {:>9} {:>7} {:>9} {:>9} {:>9} {:>9} {:>8}",
        "freq",
        "mode",
        "Dk",
        "Df",
        "Re Z0",
        "Im Z0",
        "Dk eff",
        "cond",
        "diel",
        "total",
        "dB/m",
        "delay"
    );
    let mut notes: Vec<String> = Vec::new();
    for p in &points {
        let modes: Vec<(&str, &loss::ModeLoss)> = match (&p.line, &p.odd, &p.even) {
            (Some(l), _, _) => vec![("line", l)],
            (None, Some(o), Some(e)) => vec![("odd", o), ("even", e)],
            _ => vec![],
        };
        for (label, m) in modes {
            println!(
                "{:>12} {:>5} {:>7.4} {:>7.5} {:>8.3} {:>9.4} {:>7.4} {:>9.5} {:>9.5} {:>9.5} {:>9.4} {:>8.3}",
                format_freq(p.freq_hz),
                label,
                p.dk,
                p.df,
                m.z0_re_ohm,
                m.z0_im_ohm,
                m.eps_eff,
                m.conductor.db_per_in,
                m.dielectric.db_per_in,
                m.total.db_per_in,
                m.total.db_per_m,
                m.group_delay_s_per_m * ohmstack_core::units::INCH * 1e12
            );
        }
        for w in &p.warnings {
            if !notes.contains(&w.message) {
                notes.push(w.message.clone());
            }
        }
    }
    for n in notes {
        println!("  note: {n}");
    }
    Ok(())
}

fn touchstone_cmd(args: &[String]) -> Result<()> {
    // `-o FILE` is the one short option; the flag parser reads long options only.
    let args: Vec<String> = args
        .iter()
        .map(|a| {
            if a == "-o" {
                "--output".to_string()
            } else {
                a.clone()
            }
        })
        .collect();
    let (mut map, json, positional) = flags(&args)?;
    if json {
        bail!("--json: not an option of touchstone");
    }
    let path = one_path(&positional, "touchstone")?;
    let length = map
        .remove("length")
        .ok_or_else(|| anyhow!("--length: missing (the segment length, e.g. 100mm)"))?;
    let length = parse_length("length", &length)?;
    let z_ref = match map.remove("z-ref") {
        Some(t) => parse_number("z-ref", &t, &["ohm", "Ω"])?,
        None => 50.0,
    };
    ohmstack_core::error::in_range("z-ref", z_ref, 1.0, 1000.0, "Ω")?;
    let output = map.remove("output");
    let sweep = sweep_flags(&mut map)?;
    let (project, name, model) = rule_model(&path, &mut map)?;
    no_more_flags(&map, "touchstone")?;
    let title = format!("{} — rule {name}", project.title);
    let (text, ports) = touchstone::segment(&model, length, z_ref, &sweep.frequencies()?, &title)?;
    match output {
        None => print!("{text}"),
        Some(file) => {
            let want = format!(".s{ports}p");
            if !file.to_ascii_lowercase().ends_with(&want) {
                bail!(
                    "--output: a {ports}-port Touchstone file should end in {want} (got {file:?})"
                );
            }
            std::fs::write(&file, text).with_context(|| format!("--output: writing {file}"))?;
        }
    }
    Ok(())
}

/// A frequency in the largest unit that keeps it at or above 1 (`2.4 GHz`, `10 MHz`).
fn format_freq(hz: f64) -> String {
    let (scale, unit) = match hz {
        f if f >= 1e9 => (1e9, "GHz"),
        f if f >= 1e6 => (1e6, "MHz"),
        f if f >= 1e3 => (1e3, "kHz"),
        _ => (1.0, "Hz"),
    };
    format!("{} {unit}", format_sig(hz / scale, 4))
}

/// `--foil standard|low-profile|very-low-profile|smooth` with `--foil-model hammerstad-groiss|huray` sets the
/// roughness of every copper layer (a what-if over the project's own values).
fn apply_foil(project: &mut Project, map: &mut BTreeMap<String, String>) -> Result<()> {
    let model = map.remove("foil-model");
    let Some(name) = map.remove("foil") else {
        if model.is_some() {
            bail!("--foil-model: only with --foil");
        }
        return Ok(());
    };
    let roughness = if name.trim().eq_ignore_ascii_case("smooth") {
        Roughness::Smooth
    } else {
        let foil = Foil::from_label(&name).ok_or_else(|| {
            anyhow!("--foil: unknown foil {name:?}; use standard, low-profile, very-low-profile or smooth")
        })?;
        match model
            .as_deref()
            .map(|m| m.trim().to_ascii_lowercase().replace('_', "-"))
        {
            None => foil.hammerstad_groiss(),
            Some(m) if m == "hammerstad-groiss" => foil.hammerstad_groiss(),
            Some(m) if m == "huray" => foil.huray(),
            Some(m) => bail!("--foil-model: unknown model {m:?}; use hammerstad-groiss or huray"),
        }
    };
    for layer in &mut project.stackup.layers {
        if let ohmstack_core::Layer::Copper(c) = layer {
            c.roughness = Some(roughness);
        }
    }
    Ok(())
}

fn parse_count<T: std::str::FromStr>(
    map: &mut BTreeMap<String, String>,
    key: &str,
) -> Result<Option<T>> {
    match map.remove(key) {
        None => Ok(None),
        Some(text) => text
            .trim()
            .parse::<T>()
            .map(Some)
            .map_err(|_| anyhow!("--{key}: {text:?} is not a whole number")),
    }
}

/// `ohmstack spread`: the tolerance spread of every rule (or one) of a project.
fn spread(args: &[String]) -> Result<()> {
    let (mut map, json, positional) = flags(args)?;
    let [path] = positional.as_slice() else {
        bail!("spread takes one FILE (or - for stdin)")
    };
    // Read the input before checking options, so a pipe feeding us never sees a closed end.
    let text = read_input(path)?;
    let samples = parse_count::<usize>(&mut map, "samples")?.unwrap_or(spread::DEFAULT_SAMPLES);
    let seed = parse_count::<u64>(&mut map, "seed")?.unwrap_or(spread::DEFAULT_SEED);
    let only = map.remove("rule");
    // `field`: the 2D field solver is the impedance model, through the quadratic response surface (each call is a
    // whole field solve), without tolerance centring (which would re-solve the width many times).
    let (model, use_field) = match map.remove("model").as_deref() {
        None | Some("direct") => (SampleModel::Direct, false),
        Some("quadratic") => (SampleModel::Quadratic, false),
        Some("field") => (SampleModel::Quadratic, true),
        Some(other) => bail!("--model: {other:?} is not direct, quadratic or field"),
    };
    if let Some(k) = map.keys().next() {
        bail!("--{k}: not an option of spread");
    }
    if !(spread::MIN_SAMPLES..=spread::MAX_SAMPLES).contains(&samples) {
        bail!(
            "--samples: {samples} is outside {} to {}",
            spread::MIN_SAMPLES,
            spread::MAX_SAMPLES
        );
    }
    let project = Project::from_json(&text)?;
    let rules: Vec<_> = match &only {
        Some(name) => {
            let r: Vec<_> = project.rules.iter().filter(|r| &r.name == name).collect();
            if r.is_empty() {
                let names: Vec<&str> = project.rules.iter().map(|r| r.name.as_str()).collect();
                bail!("--rule: no rule named {name:?}; rules are {names:?}");
            }
            r
        }
        None => project.rules.iter().collect(),
    };
    let opts = SpreadOptions {
        samples,
        seed,
        centre: !use_field,
        model,
    };
    let field_model = ohmstack_core::field::rules::FieldModel {
        etch_factor: project.fab.etch_factor,
        options: FieldOptions::default(),
    };
    let mut out = Vec::new();
    for rule in rules {
        let result = ohmstack_core::plan::evaluate_rule(&project, rule).and_then(|r| {
            let s = if use_field {
                spread::run_with_model(&project, rule, &r, &opts, &field_model)?
            } else {
                spread::run_for_result(&project, rule, &r, &opts)?
            };
            Ok((r, s))
        });
        out.push((rule.name.clone(), result));
    }
    if json {
        let rows: Vec<Value> = out
            .iter()
            .map(|(name, r)| match r {
                Ok((r, s)) => json!({
                    "name": name, "status": "ok", "family": r.family, "structure": r.structure,
                    "width_m": r.width_m, "spacing_m": r.spacing_m, "spread": s,
                }),
                Err(e) => json!({ "name": name, "status": "error", "message": e.to_string() }),
            })
            .collect();
        let v = json!({ "title": project.title, "samples": samples, "seed": seed, "rules": rows });
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    println!(
        "{} — tolerance spread, {samples} samples, seed {seed} (design estimates from {})",
        project.title,
        if use_field {
            "the 2D field solver through a quadratic response surface"
        } else {
            "the closed-form models"
        }
    );
    for (name, r) in &out {
        println!();
        match r {
            Ok((r, s)) => print_spread(&project, name, r, s),
            Err(e) => println!("{name}: error: {e}"),
        }
    }
    Ok(())
}

fn per_unit(unit: &str, value: f64, project_unit: LengthUnit) -> String {
    if unit == "m" {
        format!(
            "{} Ω/{}",
            format_sig(value * project_unit.metres(), 3),
            project_unit.symbol()
        )
    } else {
        format!("{} Ω per unit", format_sig(value, 3))
    }
}

fn print_spread(project: &Project, name: &str, r: &ohmstack_core::RuleResult, s: &SpreadSummary) {
    let u = project.units;
    let mc = &s.monte_carlo;
    println!("{name} — {} {}", r.family, r.structure);
    println!(
        "  nominal        {:.2} Ω  window {:.2}–{:.2} Ω (±{} %)",
        s.nominal_ohm,
        s.lower_ohm,
        s.upper_ohm,
        format_sig(r.tolerance_pct, 3)
    );
    println!(
        "  corners        {:.2}–{:.2} Ω  ({}, {} evaluated){}",
        s.corners.min_ohm,
        s.corners.max_ohm,
        s.corners.method,
        s.corners.evaluated,
        if s.corners.all_inside {
            ", all inside"
        } else {
            ""
        }
    );
    println!(
        "  Monte Carlo    {:.2} ± {:.2} Ω (σ; first-order σ {:.2} Ω)",
        mc.mean_ohm, mc.sigma_ohm, s.linear_sigma_ohm
    );
    let p = &mc.percentiles;
    println!(
        "  percentiles    1 %: {:.2}  5 %: {:.2}  50 %: {:.2}  95 %: {:.2}  99 %: {:.2} Ω",
        p.p1, p.p5, p.p50, p.p95, p.p99
    );
    println!(
        "  yield          {:.2} %   Cpk {}",
        mc.yield_pct,
        mc.cpk
            .map(|c| format!("{c:.2}"))
            .unwrap_or_else(|| "-".into())
    );
    for (i, x) in s.sensitivities.iter().take(3).enumerate() {
        let param = &s.parameters.iter().find(|q| q.name == x.parameter);
        let limit = param
            .map(|q| {
                if q.unit == "m" {
                    format_length(q.limit, u)
                } else {
                    format_sig(q.limit, 3)
                }
            })
            .unwrap_or_default();
        println!(
            "  {} {}: {} ({:+.2} Ω at +{limit})",
            if i == 0 {
                "sensitivity   "
            } else {
                "              "
            },
            x.parameter,
            per_unit(x.unit, x.dz_dp, u),
            x.impact_ohm
        );
    }
    if let Some(c) = &s.centred {
        println!(
            "  centred {:<7}{} → {} (yield {:.2} % → {:.2} %)",
            c.dimension,
            format_length(c.nominal_m, u),
            format_length(c.centred_m, u),
            c.nominal_yield_pct,
            c.centred_yield_pct
        );
    }
    for w in &s.warnings {
        println!("    note: {}", w.message);
    }
}

/// `ohmstack random`: the core's seeded stream, so outside tools can test its statistics.
fn random(args: &[String]) -> Result<()> {
    let (mut map, _json, positional) = flags(args)?;
    let count = parse_count::<usize>(&mut map, "count")?.unwrap_or(10_000);
    let seed = parse_count::<u64>(&mut map, "seed")?.unwrap_or(spread::DEFAULT_SEED);
    if let Some(k) = map.keys().next() {
        bail!("--{k}: not an option of random");
    }
    if count > 1_000_000 {
        bail!("--count: at most 1000000");
    }
    let normal = match positional.as_slice() {
        [d] if d == "normal" => true,
        [d] if d == "uniform" => false,
        _ => bail!("random takes one distribution: normal or uniform"),
    };
    let mut rng = spread::rng::Rng::new(seed);
    let mut out = std::io::BufWriter::new(std::io::stdout().lock());
    for _ in 0..count {
        let x = if normal { rng.normal() } else { rng.uniform() };
        writeln!(out, "{x:e}")?;
    }
    Ok(())
}

fn share(args: &[String]) -> Result<()> {
    match args {
        [sub, path] if sub == "encode" => {
            let project = Project::from_json(&read_input(path)?)?;
            println!("{}", ohmstack_core::share::encode(&project));
            Ok(())
        }
        [sub, link] if sub == "decode" => {
            let link = if link == "-" {
                read_input("-")?
            } else {
                link.clone()
            };
            let project = ohmstack_core::share::decode(&link)?;
            println!("{}", project.to_json());
            Ok(())
        }
        _ => bail!("usage: ohmstack share encode FILE|- or ohmstack share decode LINK|-"),
    }
}

fn notes(args: &[String]) -> Result<()> {
    let (mut map, json, positional) = flags(args)?;
    if json {
        bail!("--json: not an option of notes (use --format md|csv)");
    }
    let format = map.remove("format").unwrap_or_else(|| "md".into());
    if let Some(k) = map.keys().next() {
        bail!("--{k}: not an option of notes");
    }
    let [path] = positional.as_slice() else {
        bail!("notes takes one FILE (or - for stdin)")
    };
    let project = Project::from_json(&read_input(path)?)?;
    let plan = ohmstack_core::plan(&project)?;
    let notes = ohmstack_core::report::fab_notes(&project, &plan);
    match format.as_str() {
        "md" | "markdown" => print!("{}", notes.to_markdown()),
        "csv" => print!("{}", notes.to_csv()),
        other => bail!("--format: {other:?} is not md or csv"),
    }
    Ok(())
}

fn draw(args: &[String]) -> Result<()> {
    // `-o` is the one short option; turn it into the long form the flag parser knows.
    let args: Vec<String> = args
        .iter()
        .map(|a| {
            if a == "-o" {
                "--output".to_string()
            } else {
                a.clone()
            }
        })
        .collect();
    let (mut map, json, positional) = flags(&args)?;
    if json {
        bail!("--json: not an option of draw");
    }
    let rule = map.remove("rule");
    let output = map.remove("output");
    if let Some(k) = map.keys().next() {
        bail!("--{k}: not an option of draw");
    }
    let [path] = positional.as_slice() else {
        bail!("draw takes one FILE (or - for stdin)")
    };
    let project = Project::from_json(&read_input(path)?)?;
    let rule_idx = match &rule {
        Some(name) => Some(
            project
                .rules
                .iter()
                .position(|r| &r.name == name)
                .ok_or_else(|| anyhow!("--rule: no rule named {name:?}"))?,
        ),
        None => None,
    };
    let svg = ohmstack_core::draw::cross_section_svg(&project, rule_idx)?;
    write_svg(output, &svg)
}

fn write_svg(output: Option<String>, svg: &str) -> Result<()> {
    match output {
        Some(out) if out != "-" => {
            std::fs::write(&out, svg).with_context(|| format!("writing {out}"))?
        }
        _ => print!("{svg}"),
    }
    Ok(())
}

fn plot(args: &[String]) -> Result<()> {
    let args: Vec<String> = args
        .iter()
        .map(|a| {
            if a == "-o" {
                "--output".to_string()
            } else {
                a.clone()
            }
        })
        .collect();
    let (mut map, json, positional) = flags(&args)?;
    let name = map
        .remove("rule")
        .ok_or_else(|| anyhow!("--rule: missing (the rule to plot)"))?;
    let output = map.remove("output");
    let points = match map.remove("points") {
        Some(p) => p
            .parse::<usize>()
            .ok()
            .filter(|n| (2..=1000).contains(n))
            .ok_or_else(|| anyhow!("--points: {p:?} is not a whole number from 2 to 1000"))?,
        None => 41,
    };
    if let Some(k) = map.keys().next() {
        bail!("--{k}: not an option of plot");
    }
    let [path] = positional.as_slice() else {
        bail!("plot takes one FILE (or - for stdin)")
    };
    let project = Project::from_json(&read_input(path)?)?;
    let idx = project
        .rules
        .iter()
        .position(|r| r.name == name)
        .ok_or_else(|| anyhow!("--rule: no rule named {name:?}"))?;
    let pts = ohmstack_core::plot::z_vs_width(&project, idx, points)?;
    if json {
        println!("{}", serde_json::to_string(&pts)?);
        return Ok(());
    }
    let unit = project.units;
    let svg = ohmstack_core::plot::line_plot(&ohmstack_core::plot::LinePlot {
        title: format!("{}: impedance against trace width", name),
        x_label: format!("trace width ({})", unit.symbol()),
        y_label: "Z (Ω)".into(),
        series: vec![ohmstack_core::plot::Series {
            label: name.clone(),
            points: pts.iter().map(|&(w, z)| (unit.from_m(w), z)).collect(),
        }],
        log_x: false,
    });
    write_svg(output, &svg)
}

/// Where `--map` writes, and as what.
enum MapTarget {
    Svg(String),
    Json(String),
}

fn map_target(path: &str) -> Result<MapTarget> {
    let lower = path.to_ascii_lowercase();
    if lower.ends_with(".svg") {
        Ok(MapTarget::Svg(path.to_string()))
    } else if lower.ends_with(".json") {
        Ok(MapTarget::Json(path.to_string()))
    } else {
        bail!("--map: {path:?} must end in .svg (a picture) or .json (the sampled potential)")
    }
}

/// Writes the potential map of a finished solve.
fn write_map(
    target: &MapTarget,
    map: Option<ohmstack_core::field::PotentialMap>,
    title: &str,
) -> Result<()> {
    let map = map.ok_or_else(|| anyhow!("--map: the field solve gave no potential to draw"))?;
    let (path, text) = match target {
        MapTarget::Svg(p) => {
            let title = format!("Potential of {title} ({})", map.drive_label());
            (p, ohmstack_core::plot::potential_map(&map, &title)?)
        }
        MapTarget::Json(p) => (p, serde_json::to_string(&map)?),
    };
    std::fs::write(path, text).with_context(|| format!("--map: writing {path}"))
}

/// Field-solver options from `--tolerance PCT` (percent).
fn field_options(map: &mut BTreeMap<String, String>) -> Result<FieldOptions> {
    let mut options = FieldOptions::default();
    if let Some(text) = map.remove("tolerance") {
        let pct = ohmstack_core::units::parse_number("tolerance", &text, &["%"])?;
        options.tolerance =
            ohmstack_core::error::in_range("tolerance", pct, 0.001, 10.0, "%")? / 100.0;
    }
    Ok(options)
}

fn field_json(r: &FieldResult) -> Value {
    let mut v = json!({
        "controlled_ohm": r.controlled_ohm,
        "finest_ohm": r.finest_ohm,
        "error_estimate_pct": r.error_estimate_pct,
        "observed_order": r.observed_order,
        "converged": r.converged,
        "c_matrix": r.c_matrix,
        "c0_matrix": r.c0_matrix,
        "l_matrix": r.l_matrix,
        "levels": r.levels.iter().map(|l| json!({
            "eta": l.eta, "nx": l.nx, "ny": l.ny, "iterations": l.iterations, "controlled_ohm": l.controlled_ohm,
        })).collect::<Vec<_>>(),
        "warnings": r.warnings.iter().map(|w| w.message.clone()).collect::<Vec<_>>(),
    });
    match &r.analysis {
        Analysis::Single(s) => {
            v["z0_ohm"] = json!(s.z0);
            v["eps_eff"] = json!(s.eps_eff);
        }
        Analysis::Pair(p) => {
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

fn comparison_line(c: &Comparison) -> String {
    match (c.method, c.closed_form_ohm, c.difference_pct) {
        (Some(m), Some(z), Some(d)) => format!(
            "closed form {} Ω ({m}), difference {d:+.2} % (band ±{} %)",
            format_sig(z, 5),
            c.band_pct.unwrap_or(0.0)
        ),
        _ => "no closed form for this structure".into(),
    }
}

fn print_field(r: &FieldResult) {
    match &r.analysis {
        Analysis::Single(s) => {
            println!("  Z0          {} Ω", format_sig(s.z0, 5));
            println!("  Dk eff      {}", format_sig(s.eps_eff, 5));
        }
        Analysis::Pair(p) => {
            println!("  Zdiff       {} Ω", format_sig(p.z_diff(), 5));
            println!("  Zcommon     {} Ω", format_sig(p.z_common(), 5));
            println!(
                "  Zodd/Zeven  {} / {} Ω",
                format_sig(p.z_odd, 5),
                format_sig(p.z_even, 5)
            );
            println!(
                "  Dk eff o/e  {} / {}",
                format_sig(p.eps_eff_odd, 5),
                format_sig(p.eps_eff_even, 5)
            );
        }
    }
    let last = r.levels.last();
    println!(
        "  error est.  {:.3} % ({} levels, finest grid {}×{}, order {})",
        r.error_estimate_pct,
        r.levels.len(),
        last.map(|l| l.nx).unwrap_or(0),
        last.map(|l| l.ny).unwrap_or(0),
        r.observed_order
            .map(|p| format!("{p:.2}"))
            .unwrap_or_else(|| "n/a".into())
    );
}

fn field_calc(args: &[String]) -> Result<()> {
    let (mut map, json, positional) = flags(args)?;
    let [kind] = positional.as_slice() else {
        bail!("give one structure KIND (see `ohmstack kinds`)")
    };
    let options = field_options(&mut map)?;
    let etch = map
        .remove("etch-factor")
        .map(|t| ohmstack_core::units::parse_number("etch-factor", &t, &[]))
        .transpose()?;
    if map.contains_key("target") {
        bail!("--target: field-calc analyses the given width; use `solve` for synthesis");
    }
    let map_path = map.remove("map").map(|p| map_target(&p)).transpose()?;
    // Kinds that name their own pattern (pairs, coplanar) take --spacing/--gap as `calc` does; for the plain
    // single-line kinds, --spacing and --gap turn the line into a pair or a coplanar line.
    let own_pattern = case::parse(kind, &map)
        .ok()
        .filter(|c| c.structure != Structure::Single);
    let case = match own_pattern {
        Some(case) => case,
        None => {
            let spacing = map
                .remove("spacing")
                .map(|t| ohmstack_core::units::parse_length("spacing", &t))
                .transpose()?;
            let gap = map
                .remove("gap")
                .map(|t| ohmstack_core::units::parse_length("gap", &t))
                .transpose()?;
            let mut case = case::parse(kind, &map)?;
            case.structure = match (spacing, gap) {
                (None, None) => Structure::Single,
                (Some(_), None) => Structure::EdgePair,
                (None, Some(_)) => Structure::Coplanar,
                (Some(_), Some(_)) => Structure::CoplanarPair,
            };
            case.dims.s = spacing;
            case.dims.gap = gap;
            case
        }
    };
    let closed = case.analyze().ok();
    let started = Instant::now();
    let geometry =
        ohmstack_core::field::build(&case.cross_section, case.structure, &case.dims, etch)?;
    let mut solve = ohmstack_core::field::FieldSolve::new(geometry, options)?;
    solve.run();
    let r = solve
        .result()
        .ok_or_else(|| anyhow!("the field solve did not finish"))??;
    let elapsed_ms = started.elapsed().as_secs_f64() * 1e3;
    if let Some(target) = &map_path {
        let title = format!("{} {}", case.cross_section.family(), case.structure.label());
        write_map(target, solve.potential_map(), &title)?;
    }
    let cmp = ohmstack_core::field::extract::compare_in_band(
        closed.as_ref().map(|e| (e.method, e.analysis.controlled())),
        r.controlled_ohm,
        r.error_estimate_pct,
        ohmstack_core::field::bands::measured_for(&case.cross_section, case.structure, &case.dims),
    );
    if json {
        let mut v = field_json(&r);
        v["structure"] = json!(case.kind);
        v["pattern"] = json!(case.structure.label());
        v["family"] = json!(case.cross_section.family());
        v["comparison"] = serde_json::to_value(&cmp)?;
        v["time_ms"] = json!(elapsed_ms);
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    println!(
        "{} {} (2D field solve, {:.0} ms)",
        case.cross_section.family(),
        case.structure.label(),
        elapsed_ms
    );
    print_field(&r);
    println!("  {}", comparison_line(&cmp));
    for w in r.warnings.iter().chain(cmp.warnings.iter()) {
        println!("  note: {}", w.message);
    }
    Ok(())
}

/// The inputs of `field` and `field-solve`: the project, the rules chosen by `--rule` (for a synthesis, without
/// `--rule`, only those that solve a dimension), the `--map` target (one rule only) and the solver options.
type FieldInputs = (Project, Vec<usize>, Option<MapTarget>, FieldOptions, bool);

fn field_inputs(cmd: &str, args: &[String], solving: bool) -> Result<FieldInputs> {
    let (mut map, json, positional) = flags(args)?;
    let options = field_options(&mut map)?;
    let only = map.remove("rule");
    let map_path = map.remove("map").map(|p| map_target(&p)).transpose()?;
    if let Some(k) = map.keys().next() {
        bail!("--{k}: not an option of {cmd}");
    }
    let [path] = positional.as_slice() else {
        bail!("{cmd} takes one FILE (or - for stdin)")
    };
    let project = Project::from_json(&read_input(path)?)?;
    let rules: Vec<usize> = (0..project.rules.len())
        .filter(|&i| {
            let r = &project.rules[i];
            match only.as_deref() {
                Some(n) => r.name == n,
                None => !solving || r.solve != ohmstack_core::project::Solve::Nothing,
            }
        })
        .collect();
    if rules.is_empty() {
        bail!(
            "--rule: no rule named {:?}{}",
            only.as_deref().unwrap_or_default(),
            if solving {
                " that solves a dimension"
            } else {
                ""
            }
        );
    }
    if map_path.is_some() && rules.len() > 1 {
        bail!("--map: pictures one rule; name it with --rule NAME");
    }
    Ok((project, rules, map_path, options, json))
}

fn field_project(args: &[String]) -> Result<()> {
    let (project, rules, map_path, options, json) = field_inputs("field", args, false)?;
    let mut out = Vec::new();
    for &i in &rules {
        let rule = &project.rules[i];
        let started = Instant::now();
        let mut job = None;
        let check = RuleFieldJob::start(&project, rule, options).and_then(|mut j| {
            j.run();
            let check = j.finish().unwrap_or_else(|| {
                Err(ohmstack_core::Error::Invalid {
                    field: "field".into(),
                    reason: "the field solve did not finish".into(),
                })
            });
            job = Some(j);
            check
        });
        if let Some(target) = &map_path {
            match (&check, &job) {
                (Ok(_), Some(j)) => write_map(target, j.potential_map(), &rule.name)?,
                (Err(e), _) => bail!("--map: the field solve of {:?} failed: {e}", rule.name),
                (Ok(_), None) => bail!(
                    "--map: the field solve of {:?} gave no potential",
                    rule.name
                ),
            }
        }
        let ms = started.elapsed().as_secs_f64() * 1e3;
        out.push((rule.name.clone(), check, ms));
    }
    if json {
        let v: Vec<Value> = out
            .iter()
            .map(|(name, check, ms)| match check {
                Ok(c) => json!({
                    "name": name,
                    "layer": c.layer,
                    "family": c.family,
                    "structure": c.structure,
                    "width_m": c.width_m,
                    "spacing_m": c.spacing_m,
                    "gap_m": c.gap_m,
                    "etch_factor": c.etch_factor,
                    "comparison": c.comparison,
                    "field": field_json(&c.field),
                    "time_ms": ms,
                }),
                Err(e) => json!({ "name": name, "error": e.to_string() }),
            })
            .collect();
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    let unit = project.units;
    for (name, check, ms) in &out {
        match check {
            Ok(c) => {
                println!(
                    "{name} — {} {} on {}, width {}{} ({ms:.0} ms)",
                    c.family,
                    c.structure,
                    c.layer,
                    format_length(c.width_m, unit),
                    c.spacing_m
                        .map(|s| format!(", spacing {}", format_length(s, unit)))
                        .unwrap_or_default()
                );
                print_field(&c.field);
                println!("  {}", comparison_line(&c.comparison));
                for w in c.field.warnings.iter().chain(c.comparison.warnings.iter()) {
                    println!("  note: {}", w.message);
                }
            }
            Err(e) => println!("{name} — error: {e}"),
        }
    }
    Ok(())
}

fn field_solve(args: &[String]) -> Result<()> {
    let (project, rules, map_path, options, json) = field_inputs("field-solve", args, true)?;
    let mut out = Vec::new();
    for &i in &rules {
        let rule = &project.rules[i];
        let started = Instant::now();
        let mut job = None;
        let result = FieldSynthesis::start(&project, rule, options).and_then(|mut j| {
            j.run();
            let r = j.result().unwrap_or_else(|| {
                Err(ohmstack_core::Error::Invalid {
                    field: "field".into(),
                    reason: "the field synthesis did not finish".into(),
                })
            });
            job = Some(j);
            r
        });
        if let Some(target) = &map_path {
            match (&result, &job) {
                (Ok(_), Some(j)) => write_map(target, j.potential_map(), &rule.name)?,
                (Err(e), _) => bail!("--map: the field synthesis of {:?} failed: {e}", rule.name),
                (Ok(_), None) => bail!("--map: no potential for {:?}", rule.name),
            }
        }
        out.push((
            rule.name.clone(),
            result,
            started.elapsed().as_secs_f64() * 1e3,
        ));
    }
    if json {
        let v: Vec<Value> = out
            .iter()
            .map(|(name, r, ms)| match r {
                Ok(r) => {
                    let mut v = json!({
                        "name": name,
                        "dimension": r.dimension,
                        "value_m": r.value_m,
                        "closed_form_m": r.closed_form_m,
                        "target_ohm": r.target_ohm,
                        "field_ohm": r.field_ohm,
                        "error_estimate_pct": r.error_estimate_pct,
                        "closed_form_ohm_at_value": r.closed_form_ohm_at_value,
                        "solves": r.solves,
                        "converged": r.converged,
                        "warnings": r.warnings.iter().map(|w| w.message.clone()).collect::<Vec<_>>(),
                        "time_ms": ms,
                    });
                    v["field"] = field_json(&r.field);
                    v
                }
                Err(e) => json!({ "name": name, "error": e.to_string() }),
            })
            .collect();
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    let unit = project.units;
    for (name, r, ms) in &out {
        match r {
            Ok(r) => {
                let closed = r
                    .closed_form_m
                    .map(|c| {
                        format!(
                            " (closed form {}, {:+.1} %)",
                            format_length(c, unit),
                            (r.value_m / c - 1.0) * 100.0
                        )
                    })
                    .unwrap_or_default();
                println!(
                    "{name} — field-solved {} {}{closed}: {:.2} Ω ± {} % (est.), {} solves, {ms:.0} ms{}",
                    r.dimension,
                    format_length(r.value_m, unit),
                    r.field_ohm,
                    format_sig(r.error_estimate_pct, 2),
                    r.solves,
                    if r.converged { "" } else { " — not converged" }
                );
                if let Some(z) = r.closed_form_ohm_at_value {
                    println!("  the closed form says {z:.2} Ω at this {}", r.dimension);
                }
                for w in &r.warnings {
                    println!("  note: {}", w.message);
                }
            }
            Err(e) => println!("{name} — error: {e}"),
        }
    }
    Ok(())
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
