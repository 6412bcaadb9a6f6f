//! Criterion benchmarks of the whole-project recompute and of the tolerance spread, on the 12-layer, 16-rule
//! fixture (tests/fixtures/twelve_layer_sixteen_rules.json). Run: `cargo bench -p ohmstack-core --bench project`.
//!
//! The `field_solve` group times one 2D field solve at the default accuracy for each rule of the fixture whose
//! structure the solver builds (a sample of every family); `cargo xtask bench` picks up every group of this file.

use criterion::{criterion_group, criterion_main, Criterion};
use ohmstack_core::plan::spread::{self, SampleModel, SpreadOptions};
use ohmstack_core::{plan, plan_with, PlanOptions, Project};
use std::hint::black_box;
use std::time::Duration;

const FIXTURE: &str = include_str!("../../tests/fixtures/twelve_layer_sixteen_rules.json");

fn project() -> Project {
    let p = Project::from_json(FIXTURE).unwrap();
    assert_eq!(p.rules.len(), 16);
    assert_eq!(p.stackup.copper_count(), 12);
    p
}

fn config() -> Criterion {
    Criterion::default()
        .sample_size(10)
        .warm_up_time(Duration::from_millis(300))
        .measurement_time(Duration::from_secs(2))
}

fn monte_carlo(c: &mut Criterion) {
    let p = project();
    let rule = &p.rules[0];
    let result = ohmstack_core::plan::analyze_rule(&p, rule).unwrap();
    let mut g = c.benchmark_group("spread_10000_one_rule");
    for (label, model) in [
        ("quadratic surface", SampleModel::Quadratic),
        ("direct model", SampleModel::Direct),
    ] {
        let opts = SpreadOptions {
            samples: 10_000,
            model,
            ..SpreadOptions::default()
        };
        g.bench_function(label, |b| {
            b.iter(|| spread::run(&p, rule, &result, black_box(&opts)).unwrap())
        });
    }
    g.finish();
}

fn recompute(c: &mut Criterion) {
    let p = project();
    let mut g = c.benchmark_group("recompute_12_layers_16_rules");
    // Cold plans: the field results and meshes kept from the previous iteration are forgotten.
    g.bench_function("plan", |b| {
        b.iter(|| {
            ohmstack_core::plan::rule::forget_kept();
            plan(black_box(&p)).unwrap()
        })
    });
    let with_spread = PlanOptions::with_spread();
    g.bench_function("plan_with spread", |b| {
        b.iter(|| {
            ohmstack_core::plan::rule::forget_kept();
            plan_with(black_box(&p), &with_spread).unwrap()
        })
    });
    g.finish();
}

fn field_solve(c: &mut Criterion) {
    let p = project();
    let mut g = c.benchmark_group("field_solve_default_accuracy");
    let mut seen = std::collections::BTreeSet::new();
    for rule in &p.rules {
        let Ok(r) = ohmstack_core::plan::analyze_rule(&p, rule) else {
            continue;
        };
        let label = format!("{} {}", r.family, r.structure);
        if !seen.insert(label.clone()) {
            continue;
        }
        let dims = ohmstack_core::section::Dims {
            w: r.width_m,
            s: r.spacing_m,
            gap: r.gap_m,
        };
        let solve = || {
            ohmstack_core::field::solve_cross_section(
                &r.cross_section,
                rule.structure,
                &dims,
                p.fab.etch_factor,
                ohmstack_core::field::FieldOptions::default(),
            )
        };
        if solve().is_err() {
            continue;
        }
        g.bench_function(label, |b| b.iter(|| solve().unwrap()));
    }
    g.finish();
}

/// Width synthesis on the field solver for every rule of the demo that solves a dimension.
fn field_synthesis(c: &mut Criterion) {
    let p = ohmstack_core::design::demo::project();
    let mut g = c.benchmark_group("field_synthesis_demo");
    for rule in &p.rules {
        let run = || {
            let mut s = ohmstack_core::plan::field_synth::FieldSynthesis::start(
                &p,
                rule,
                ohmstack_core::field::FieldOptions::default(),
            )?;
            s.run();
            s.result().expect("finished")
        };
        if run().is_err() {
            continue;
        }
        g.bench_function(rule.name.as_str(), |b| b.iter(|| run().unwrap()));
    }
    g.finish();
}

criterion_group! {
    name = benches;
    config = config();
    targets = monte_carlo, recompute, field_solve, field_synthesis
}
criterion_main!(benches);
