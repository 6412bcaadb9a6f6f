//! Criterion benchmarks of one analysis per structure kind (the standalone cases of `ohmstack calc`), width
//! synthesis, and coupled-pair spacing synthesis. Run: `cargo bench -p ohmstack-core --bench analysis`.

use criterion::{criterion_group, criterion_main, Criterion};
use ohmstack_core::base::roots::{self, Bracket};
use ohmstack_core::closed_form;
use ohmstack_core::plan::case::{self, LineCase};
use ohmstack_core::section::Dims;
use std::collections::BTreeMap;
use std::hint::black_box;
use std::time::Duration;

/// One case per structure kind, with typical dimensions (lengths as `ohmstack calc` takes them):
/// (label, `ohmstack calc` kind, fields).
type Case = (
    &'static str,
    &'static str,
    &'static [(&'static str, &'static str)],
);

const CASES: &[Case] = &[
    // t/h = 0.175, inside the Hammerstad–Jensen thickness fit (no warning text to format).
    (
        "microstrip",
        "microstrip",
        &[
            ("width", "0.35mm"),
            ("height", "0.2mm"),
            ("thickness", "35um"),
            ("dk", "4.2"),
        ],
    ),
    // t/h = 0.206, just outside the fit: every evaluation formats a validity warning.
    (
        "microstrip, out of fit",
        "microstrip",
        &[
            ("width", "0.3mm"),
            ("height", "0.17mm"),
            ("thickness", "35um"),
            ("dk", "4.2"),
        ],
    ),
    (
        "coated microstrip",
        "coated-microstrip",
        &[
            ("width", "0.3mm"),
            ("height", "0.17mm"),
            ("thickness", "35um"),
            ("dk", "4.2"),
            ("mask-thickness", "20um"),
            ("mask-dk", "3.8"),
        ],
    ),
    (
        "embedded microstrip",
        "embedded-microstrip",
        &[
            ("width", "0.2mm"),
            ("height", "0.12mm"),
            ("thickness", "18um"),
            ("dk", "3.6"),
            ("cover", "0.1mm"),
            ("cover-dk", "3.6"),
        ],
    ),
    (
        "edge-coupled microstrip",
        "edge-coupled-microstrip",
        &[
            ("width", "0.15mm"),
            ("spacing", "0.15mm"),
            ("height", "0.1mm"),
            ("thickness", "35um"),
            ("dk", "3.8"),
        ],
    ),
    (
        "symmetric stripline",
        "stripline",
        &[
            ("width", "0.12mm"),
            ("height", "0.125mm"),
            ("thickness", "18um"),
            ("dk", "3.6"),
        ],
    ),
    (
        "offset stripline",
        "stripline",
        &[
            ("width", "0.12mm"),
            ("height", "0.1mm"),
            ("height2", "0.2mm"),
            ("thickness", "18um"),
            ("dk", "3.6"),
        ],
    ),
    (
        "edge-coupled stripline",
        "edge-coupled-stripline",
        &[
            ("width", "0.1mm"),
            ("spacing", "0.12mm"),
            ("height", "0.125mm"),
            ("thickness", "18um"),
            ("dk", "3.6"),
        ],
    ),
    (
        "broadside stripline",
        "broadside-stripline",
        &[
            ("width", "0.1mm"),
            ("height", "0.1mm"),
            ("separation", "0.2mm"),
            ("thickness", "18um"),
            ("dk", "3.6"),
        ],
    ),
    (
        "coplanar",
        "coplanar",
        &[
            ("width", "0.3mm"),
            ("gap", "0.15mm"),
            ("height", "1mm"),
            ("thickness", "35um"),
            ("dk", "4.2"),
        ],
    ),
    (
        "grounded coplanar",
        "grounded-coplanar",
        &[
            ("width", "0.3mm"),
            ("gap", "0.15mm"),
            ("height", "0.2mm"),
            ("thickness", "35um"),
            ("dk", "4.2"),
        ],
    ),
    (
        "coplanar pair",
        "coplanar-pair",
        &[
            ("width", "0.2mm"),
            ("spacing", "0.15mm"),
            ("gap", "0.2mm"),
            ("height", "1mm"),
            ("thickness", "35um"),
            ("dk", "4.2"),
        ],
    ),
    (
        "grounded coplanar pair",
        "grounded-coplanar-pair",
        &[
            ("width", "0.15mm"),
            ("spacing", "0.15mm"),
            ("gap", "0.2mm"),
            ("height", "0.2mm"),
            ("thickness", "35um"),
            ("dk", "4.2"),
        ],
    ),
];

fn cases() -> Vec<(&'static str, LineCase)> {
    CASES
        .iter()
        .map(|(label, kind, fields)| {
            let map: BTreeMap<String, String> = fields
                .iter()
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect();
            (*label, case::parse(kind, &map).expect(label))
        })
        .collect()
}

/// Short runs: the machine is shared; `--quick` shortens them further.
fn config() -> Criterion {
    Criterion::default()
        .sample_size(20)
        .warm_up_time(Duration::from_millis(300))
        .measurement_time(Duration::from_secs(1))
}

fn analysis(c: &mut Criterion) {
    let mut g = c.benchmark_group("analyze");
    for (label, case) in cases() {
        g.bench_function(label, |b| b.iter(|| black_box(&case).analyze().unwrap()));
    }
    g.finish();
}

fn width_synthesis(c: &mut Criterion) {
    let mut g = c.benchmark_group("solve_width");
    for (label, case) in cases() {
        // The controlled impedance of the case as given: a reachable target by construction.
        let target = case.analyze().unwrap().analysis.controlled();
        g.bench_function(label, |b| {
            b.iter(|| black_box(&case).solve_width(black_box(target)).unwrap())
        });
    }
    g.finish();
}

fn spacing_synthesis(c: &mut Criterion) {
    let mut g = c.benchmark_group("solve_spacing");
    for (label, case) in cases() {
        let Some(s0) = case.dims.s else { continue };
        if case.structure == ohmstack_core::Structure::BroadsidePair {
            continue;
        }
        let target = case.analyze().unwrap().analysis.controlled();
        let scale = case.cross_section.scale_height();
        let bracket = Bracket {
            lo: 1e-6,
            hi: 100.0 * scale,
            lo_reason: "1 µm",
            hi_reason: "100 × height",
        };
        let spacing = |s: f64| {
            closed_form::evaluate(
                &case.cross_section,
                case.structure,
                &Dims {
                    s: Some(s),
                    ..case.dims
                },
            )
            .map(|e| e.analysis.controlled())
        };
        // Same root as the case's own spacing: the bench measures a real solve.
        let got = roots::solve("spacing", target, &bracket, spacing).unwrap();
        assert!((got / s0 - 1.0).abs() < 1e-6, "{label}: {got} vs {s0}");
        g.bench_function(label, |b| {
            b.iter(|| roots::solve("spacing", black_box(target), &bracket, spacing).unwrap())
        });
    }
    g.finish();
}

criterion_group! {
    name = benches;
    config = config();
    targets = analysis, width_synthesis, spacing_synthesis
}
criterion_main!(benches);
