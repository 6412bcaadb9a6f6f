//! Fuzz every model entry point with hostile f64s: fuzz bytes → a cross-section of each medium (and cover), a
//! structure and dimensions → `closed_form::evaluate`, width synthesis (`LineCase::solve_width`), the loss model at one
//! frequency and over a sweep, and Touchstone output. Property: no panic, no hang, and every `Ok` is finite.
#![no_main]

use libfuzzer_sys::fuzz_target;
use ohmstack_core::closed_form;
use ohmstack_core::design::dielectric::{DielectricModel, Dispersive};
use ohmstack_core::design::roughness::Roughness;
use ohmstack_core::line::loss::{LineModel, LossInputs, Surfaces, Sweep};
use ohmstack_core::output::touchstone;
use ohmstack_core::plan::case::LineCase;
use ohmstack_core::section::{Analysis, Dims};
use ohmstack_core::section::{Cover, CrossSection, Medium};
use ohmstack_core::Structure;
use ohmstack_fuzz::Numbers;

fn finite_analysis(a: &Analysis) -> bool {
    match a {
        Analysis::Single(s) => s.z0.is_finite() && s.eps_eff.is_finite(),
        Analysis::Pair(p) => {
            p.z_odd.is_finite()
                && p.z_even.is_finite()
                && p.eps_eff_odd.is_finite()
                && p.eps_eff_even.is_finite()
        }
    }
}

fuzz_target!(|data: &[u8]| {
    let mut n = Numbers::new(data);
    let er = n.f64_near(4.2);
    let medium = match n.byte() % 6 {
        0 => Medium::Microstrip {
            h: n.f64_near(150e-6),
            er,
            cover: Cover::Air,
        },
        1 => Medium::Microstrip {
            h: n.f64_near(150e-6),
            er,
            cover: Cover::Mask {
                thickness_m: n.f64_near(20e-6),
                er: n.f64_near(3.8),
            },
        },
        2 => Medium::Microstrip {
            h: n.f64_near(150e-6),
            er,
            cover: Cover::Dielectric {
                thickness_m: n.f64_near(100e-6),
                er: n.f64_near(4.0),
            },
        },
        3 => Medium::NoPlane {
            h: n.f64_near(500e-6),
            er,
        },
        4 => Medium::Stripline {
            h_below: n.f64_near(200e-6),
            h_above: n.f64_near(200e-6),
            er,
            dual: n.bool(),
        },
        _ => Medium::Broadside {
            h_above: n.f64_near(200e-6),
            separation: n.f64_near(150e-6),
            h_below: n.f64_near(200e-6),
            er,
        },
    };
    let cs = CrossSection {
        loss: Default::default(),
        layering: None,
        medium,
        t: n.f64_near(35e-6),
        references: Vec::new(),
        warnings: Vec::new(),
    };
    let structure = n.pick(&Structure::ALL);
    let dims = Dims {
        w: n.f64_near(150e-6),
        s: if n.bool() {
            Some(n.f64_near(150e-6))
        } else {
            None
        },
        gap: if n.bool() {
            Some(n.f64_near(150e-6))
        } else {
            None
        },
    };
    let evaluated = closed_form::evaluate(&cs, structure, &dims);
    if let Ok(e) = &evaluated {
        assert!(finite_analysis(&e.analysis), "non-finite Ok: {e:?}");
    }

    // Synthesis over the structure's search range.
    let case = LineCase {
        kind: "fuzz".into(),
        cross_section: cs.clone(),
        structure,
        dims,
    };
    let target = n.f64_near(50.0);
    if let Ok(solved) = case.solve_width(target) {
        assert!(solved.dims.w.is_finite() && solved.dims.w > 0.0);
    }

    if evaluated.is_err() {
        return;
    }
    // Loss with fuzzed material data.
    let model_kind = n.pick(&[DielectricModel::Wideband, DielectricModel::Constant]);
    let Ok(dielectric) = Dispersive::fit(model_kind, er, n.f64_near(0.02), n.f64_near(1e9)) else {
        return;
    };
    let rough = match n.byte() % 3 {
        0 => Roughness::Smooth,
        1 => Roughness::HammerstadGroiss {
            rms_m: n.f64_near(1e-6),
        },
        _ => Roughness::Huray {
            radius_m: n.f64_near(0.5e-6),
            spheres_per_m2: n.f64_near(1e12),
        },
    };
    let inputs = LossInputs {
        conductivity_s_per_m: n.f64_near(5.8e7),
        surfaces: Surfaces {
            trace: rough,
            plane_above: rough,
            plane_below: Roughness::Smooth,
        },
        dielectric,
        dispersion: n.bool(),
    };
    let Ok(line) = LineModel::new(&cs, structure, &dims, inputs) else {
        return;
    };
    let _ = line.at(n.f64_near(1e9));
    let sweep = Sweep {
        from_hz: n.f64_near(1e7),
        to_hz: n.f64_near(1e10),
        points: usize::from(n.byte()) % 40,
    };
    let _ = line.sweep(&sweep);
    if let Ok(freqs) = sweep.frequencies() {
        let _ = touchstone::segment(&line, n.f64_near(0.1), n.f64_near(50.0), &freqs, "fuzz");
    }
});
