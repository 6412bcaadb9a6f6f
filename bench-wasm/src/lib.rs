//! The whole-project recompute of the benchmarks (12-layer, 16-rule fixture, with the 10 000-sample spread per
//! rule), exported to JavaScript so `cargo xtask bench` can time it inside headless Chromium, and callable
//! natively (src/main.rs) so the same code gives the native figure. The clock is the caller's: `performance.now`
//! in the browser, `std::time::Instant` natively.

use ohmstack_core::{plan_with, PlanOptions, Project};
use wasm_bindgen::prelude::*;

const FIXTURE: &str = include_str!("../../tests/fixtures/twelve_layer_sixteen_rules.json");

/// The fixture project, parsed once per call site (parsing is not part of what is timed).
pub fn project() -> Project {
    Project::from_json(FIXTURE).expect("the bench fixture parses")
}

/// One recompute: every rule solved and analysed, with the default tolerance spread. Returns a checksum (sum of
/// the rules' impedances and yields) so that nothing is optimised away and both sides can be compared.
pub fn recompute_once(project: &Project) -> f64 {
    // Cold: nothing kept from a previous run (the field results per rule, the meshes' matrices).
    ohmstack_core::plan::rule::forget_kept();
    let plan = plan_with(project, &PlanOptions::with_spread()).expect("the bench fixture plans");
    plan.rules
        .iter()
        .filter_map(|r| r.ok())
        .map(|r| r.impedance_ohm + r.spread.as_ref().map_or(0.0, |s| s.monte_carlo.yield_pct))
        .sum()
}

#[wasm_bindgen]
extern "C" {
    #[wasm_bindgen(js_namespace = performance)]
    fn now() -> f64;
}

/// Runs the recompute `n` times in the browser and returns the fastest, in milliseconds.
#[wasm_bindgen]
pub fn recompute(n: u32) -> f64 {
    let p = project();
    let mut best = f64::INFINITY;
    for _ in 0..n.max(1) {
        let start = now();
        std::hint::black_box(recompute_once(std::hint::black_box(&p)));
        best = best.min(now() - start);
    }
    best
}

/// The checksum of one recompute (to check the browser computed what native computes).
#[wasm_bindgen]
pub fn checksum() -> f64 {
    recompute_once(&project())
}
