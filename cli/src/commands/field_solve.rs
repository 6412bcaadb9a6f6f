//! `ohmstack field-solve FILE`: each rule's width (or spacing) solved with the 2D field solver, starting from the
//! closed form's solution.

use ohmstack_core::base::units::{format_length, format_sig};
use ohmstack_core::plan::field_synth::FieldSynthesis;
use ohmstack_core::Error as CoreError;

use crate::commands::field::{field_inputs, field_json, write_map, FieldInputs, ProjectFieldArgs};
use anyhow::{bail, Result};
use serde_json::{json, Value};
use std::time::Instant;

#[derive(clap::Args)]
#[command(
    after_help = "Without --rule, every rule that solves a dimension. --map writes the solution's potential; \
name one rule for it with --rule NAME."
)]
pub struct Args {
    #[command(flatten)]
    pub project: ProjectFieldArgs,
}

pub fn run(args: Args) -> Result<()> {
    let FieldInputs {
        project,
        rules,
        map: map_path,
        options,
        json,
    } = field_inputs(args.project, true)?;
    let mut out = Vec::new();
    for &i in &rules {
        let rule = &project.rules[i];
        let started = Instant::now();
        let mut job = None;
        let result = FieldSynthesis::start(&project, rule, options).and_then(|mut j| {
            j.run();
            let r = j.result().unwrap_or_else(|| {
                Err(CoreError::Invalid {
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
