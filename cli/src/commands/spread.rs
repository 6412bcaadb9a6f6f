//! `ohmstack spread FILE`: the tolerance spread of every rule (or one) of a project — corners, Monte Carlo,
//! sensitivities, yield and the tolerance-centred width.

use ohmstack_core::base::units::{format_length, format_sig, LengthUnit};
use ohmstack_core::engine::Engine;
use ohmstack_core::plan::evaluate_rule;
use ohmstack_core::plan::spread::{self, SampleModel, SpreadOptions, SpreadSummary};
use ohmstack_core::{Project, RuleResult};

use crate::args::whole;
use crate::files::read_input;
use anyhow::{bail, Result};
use serde_json::{json, Value};

/// The impedance model the samples go through.
#[derive(Clone, Copy, PartialEq, clap::ValueEnum)]
pub enum Model {
    /// The closed-form models, sample by sample
    Direct,
    /// The fast quadratic response surface the app uses
    Quadratic,
    /// The 2D field solver through that surface (no tolerance centring)
    Field,
}

#[derive(clap::Args)]
pub struct Args {
    /// Project file (- reads stdin)
    #[arg(value_name = "FILE")]
    pub file: String,
    /// Only the rule of this name
    #[arg(long, value_name = "NAME", allow_hyphen_values = true)]
    pub rule: Option<String>,
    /// Monte Carlo samples
    #[arg(long, value_name = "N", value_parser = whole::<usize>, allow_hyphen_values = true,
          default_value_t = spread::DEFAULT_SAMPLES)]
    pub samples: usize,
    /// Seed of the random stream
    #[arg(long, value_name = "S", value_parser = whole::<u64>, allow_hyphen_values = true,
          default_value_t = spread::DEFAULT_SEED)]
    pub seed: u64,
    /// Impedance model of the samples
    #[arg(long, value_name = "MODEL", value_enum, default_value_t = Model::Direct)]
    pub model: Model,
    /// Print the spread as JSON
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub engine: crate::args::EngineArgs,
}

pub fn run(args: Args) -> Result<()> {
    // Read the input before the remaining checks, so a pipe feeding us is drained.
    let text = read_input(&args.file)?;
    let (samples, seed, only, json) = (args.samples, args.seed, args.rule, args.json);
    // `field`: the 2D field solver is the impedance model, through the quadratic response surface (each call is a
    // whole field solve), without tolerance centring (which would re-solve the width many times).
    let (model, use_field) = match args.model {
        Model::Direct => (SampleModel::Direct, false),
        Model::Quadratic => (SampleModel::Quadratic, false),
        Model::Field => (SampleModel::Quadratic, true),
    };
    if !(spread::MIN_SAMPLES..=spread::MAX_SAMPLES).contains(&samples) {
        bail!(
            "--samples: {samples} is outside {} to {}",
            spread::MIN_SAMPLES,
            spread::MAX_SAMPLES
        );
    }
    let mut project = Project::from_json(&text)?;
    args.engine.apply(&mut project);
    let rules = crate::args::chosen_rules(&project, only.as_deref())?;
    let opts = SpreadOptions {
        samples,
        seed,
        centre: !use_field,
        model,
    };
    // The spread's field model is the fast field engine (the quadratic surface needs tens of solves per rule).
    let field_model = Engine::field(&project);
    let mut out = Vec::new();
    for rule in rules {
        let result = evaluate_rule(&project, rule).and_then(|r| {
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

fn print_spread(project: &Project, name: &str, r: &RuleResult, s: &SpreadSummary) {
    let u = project.units;
    let mc = &s.monte_carlo;
    println!("{name} — {}", r.description);
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
            per_unit(&x.unit, x.dz_dp, u),
            x.impact_ohm
        );
    }
    if let Some(c) = s.centred.as_ref().filter(|c| c.centred_m == c.nominal_m) {
        println!(
            "  centred {:<7}keep {} (centring gains less yield than the sampling resolves)",
            c.dimension,
            format_length(c.nominal_m, u)
        );
    } else if let Some(c) = &s.centred {
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
