//! Fuzz `plan_with` on projects: the demo project (plus a broadside rule) with fuzzed numbers, structures and solve
//! modes, then the tolerance spread with few samples (both sample models), fab notes and the SVG drawing.
//! Property: no panic, no hang; every failure is a typed error or an error row.
#![no_main]

use libfuzzer_sys::fuzz_target;
use ohmstack_core::design::stackup::Layer;
use ohmstack_core::output::{draw, report};
use ohmstack_core::plan::spread::SampleModel;
use ohmstack_core::{plan_with, ImpedanceRule, PlanOptions, Solve, Structure};
use ohmstack_fuzz::Numbers;

fuzz_target!(|data: &[u8]| {
    let mut n = Numbers::new(data);
    let mut project = ohmstack_core::design::demo::project();
    // The broadside pair runs the moment-method solver (most of a second per plan under the sanitizer), so only one input
    // in four carries it; the closed-form rules keep the run at hundreds of inputs a second.
    let broadside = n.byte() % 4 == 0;
    // Same for the direct spread model: every sample is a model call.
    let direct = n.byte() % 4 == 0;
    if broadside {
        project.rules.push(ImpedanceRule {
            name: "broadside".into(),
            layer: "L3 Inner".into(),
            structure: Structure::BroadsidePair,
            target_ohm: 100.0,
            tolerance_pct: 10.0,
            solve: Solve::Width,
            model: Default::default(),
            width_m: 120e-6,
            spacing_m: None,
            gap_m: None,
            partner_layer: Some("L4 Inner".into()),
            references: Vec::new(),
        });
    }
    project.analysis_freq_hz = n.f64_near(1e9);
    project.fab.min_trace_m = n.f64_near(100e-6);
    project.fab.min_space_m = n.f64_near(100e-6);
    if n.bool() {
        project.fab.etch_factor = Some(n.f64_near(3.0));
    }
    for layer in &mut project.stackup.layers {
        if !n.bool() {
            continue;
        }
        match layer {
            Layer::Copper(c) => c.thickness_m = n.f64_near(c.thickness_m),
            Layer::Core(d) | Layer::Prepreg(d) | Layer::SolderMask(d) => {
                d.thickness_m = n.f64_near(d.thickness_m);
                d.dk = n.f64_near(d.dk);
                d.df = n.f64_near(d.df);
                d.spec_freq_hz = n.f64_near(d.spec_freq_hz);
            }
        }
    }
    for rule in &mut project.rules {
        if !n.bool() {
            continue;
        }
        rule.structure = n.pick(&Structure::ALL);
        rule.solve = n.pick(&[Solve::Width, Solve::Spacing, Solve::Nothing]);
        rule.target_ohm = n.f64_near(rule.target_ohm);
        rule.tolerance_pct = n.f64_near(10.0);
        rule.width_m = n.f64_near(rule.width_m);
        rule.spacing_m = n.bool().then(|| n.f64_near(150e-6));
        rule.gap_m = n.bool().then(|| n.f64_near(150e-6));
    }
    let options = PlanOptions {
        spread_samples: usize::from(n.byte() % 48),
        seed: u64::from(n.byte()),
        spread_model: if direct {
            SampleModel::Direct
        } else {
            SampleModel::Quadratic
        },
        field_check: false,
        closed_form_only: n.bool(),
        routing: false,
    };
    if let Ok(plan) = plan_with(&project, &options) {
        let notes = report::fab_notes(&project, &plan, None);
        let _ = notes.to_markdown();
        let _ = notes.to_csv();
    }
    let _ = draw::cross_section_svg(&project, Some(usize::from(n.byte()) % 8));
});
