//! `ohmstack batch`: JSON lines of line cases on stdin, one JSON result per line on stdout. A bad line gets an
//! error object and the batch goes on. Each line is computed as `calc` (or `solve`, with a target) computes it, on
//! the field engine unless the line's `"engine"` or `--engine` says otherwise.

use ohmstack_core::base::units::parse_number;

use crate::args::{CaseEngine, CaseEngineArgs};
use crate::commands::calc::{case_json, compute};
use anyhow::{anyhow, bail, Context, Result};
use serde_json::{json, Value};
use std::collections::BTreeMap;
use std::io::{BufRead, Write};

const FORMAT: &str = "Each input line is one object, e.g. \
{\"structure\": \"microstrip\", \"width\": \"0.3mm\", \"height\": \"0.17mm\", \"dk\": 4.2}; \
with a \"target\" (Ω) the width is solved. The keys are calc's options without the dashes in front \
(\"mask-thickness\", \"etch-factor\", \"dk2\", …); an \"engine\" key (closed-form, field, reference) overrides \
--engine for its line. Each output line is the result, or {\"line\": N, \"error\": \"…\"}.";

#[derive(clap::Args)]
#[command(after_help = FORMAT)]
pub struct Args {
    #[command(flatten)]
    pub engine: CaseEngineArgs,
}

/// One JSON object per line in: `{"structure": "microstrip", "width": "0.3mm", ..., "target": 50}` (with a target,
/// the width is solved). One JSON object per line out, `{"error": "..."}` for a bad line; the batch goes on.
pub fn run(args: Args) -> Result<()> {
    let stdin = std::io::stdin();
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    for (n, line) in stdin.lock().lines().enumerate() {
        let line = line.context("reading stdin")?;
        if line.trim().is_empty() {
            continue;
        }
        let result = batch_line(&line, args.engine.engine)
            .unwrap_or_else(|e| json!({ "line": n + 1, "error": format!("{e:#}") }));
        serde_json::to_writer(&mut out, &result)?;
        out.write_all(b"\n")?;
    }
    Ok(())
}

fn batch_line(line: &str, default_engine: CaseEngine) -> Result<Value> {
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
    let target = map
        .remove("target")
        .map(|t| parse_number("target", &t, &["ohm", "Ω"]))
        .transpose()?;
    let engine = match map.remove("engine") {
        Some(name) => CaseEngine::from_name(&name).ok_or_else(|| {
            anyhow!("engine: unknown engine {name:?}; use closed-form, field or reference")
        })?,
        None => default_engine,
    };
    Ok(case_json(&compute(&kind, map, target, engine)?))
}
