//! Solving a dielectric layer's thickness for a rule (`plan::height`) on the project path:
//! - a zero-thickness line in one dielectric whose target is Cohn 1954's exact centred-stripline impedance must come
//!   back centred: the solved lower core equals the upper one;
//! - the solved thickness put into the stack gives the target on the rule's engine, and the width search there
//!   gives back the rule's width (a round trip through both free dimensions).

use ohmstack_core::closed_form::stripline::z0_zero_thickness;
use ohmstack_core::design::stackup::Layer;
use ohmstack_core::plan::evaluate_rule;
use ohmstack_core::plan::height::solve_layer_thickness;
use ohmstack_core::{Project, Structure};
use ohmstack_tests::stacks::{masked_pair, project, Geo, Place};

fn set_thickness(p: &mut Project, layer: &str, t: f64) {
    let idx = p.stackup.find(layer).unwrap();
    if let Layer::Core(d) | Layer::Prepreg(d) = &mut p.stackup.layers[idx] {
        d.thickness_m = t;
    }
}

#[test]
fn a_cohn_target_centres_the_stripline() {
    // Cohn 1954, exact for t = 0 in one dielectric: Z0 of w in a channel b = 2h.
    let (h, er, w) = (180e-6, 3.8, 140e-6);
    for model in [false, true] {
        // The lower core starts off-centre; the target is the centred line's exact impedance.
        let mut p = project(
            Place::Stripline,
            Geo {
                h: 1.4 * h,
                h2: h,
                er,
                t: 0.0,
            },
            Structure::Single,
            w,
            None,
            None,
        );
        p.rules[0].target_ohm = z0_zero_thickness(w, 2.0 * h, er);
        if model {
            p.rules[0].model = ohmstack_core::design::project::RuleModel::ClosedForm;
        }
        let r = solve_layer_thickness(&p, &p.rules[0], "below").unwrap();
        // Closed form: Cohn's own map, so to the root finder's 1e-10; field engine: measured −0.07 % (its error in Z,
        // about doubled in the height).
        let allowed = if model { 1e-8 } else { 2e-3 };
        assert!(
            (r.thickness_m / h - 1.0).abs() < allowed,
            "{}: {} m vs {h} m",
            r.method,
            r.thickness_m
        );
    }
}

#[test]
fn the_solved_thickness_gives_the_target_and_the_width_back() {
    let mut p = masked_pair();
    p.rules[0].target_ohm = 95.0;
    let layer = p.stackup.layers.iter().find_map(|l| match l {
        Layer::Core(d) | Layer::Prepreg(d) => Some(d.name.clone()),
        _ => None,
    });
    let layer = layer.unwrap();
    let r = solve_layer_thickness(&p, &p.rules[0], &layer).unwrap();
    assert!((r.impedance_ohm / 95.0 - 1.0).abs() < 1e-4, "{r:?}");
    set_thickness(&mut p, &layer, r.thickness_m);
    // The width search on the solved stack lands on the rule's width.
    let solved = evaluate_rule(&p, &p.rules[0]).unwrap();
    assert!(
        (solved.width_m / 130e-6 - 1.0).abs() < 2e-3,
        "{} m",
        solved.width_m
    );
}

#[test]
fn a_copper_layer_or_an_unknown_name_is_refused_by_name() {
    let p = project(
        Place::Dual,
        Geo {
            h: 150e-6,
            h2: 150e-6,
            er: 4.0,
            t: 17e-6,
        },
        Structure::Single,
        120e-6,
        None,
        None,
    );
    let copper = p
        .stackup
        .layers
        .iter()
        .find(|l| matches!(l, Layer::Copper(_)))
        .unwrap()
        .name()
        .to_string();
    let e = solve_layer_thickness(&p, &p.rules[0], &copper)
        .unwrap_err()
        .to_string();
    assert!(e.contains("layer") && e.contains(&copper), "{e}");
    let e = solve_layer_thickness(&p, &p.rules[0], "nowhere")
        .unwrap_err()
        .to_string();
    assert!(e.contains("nowhere"), "{e}");
}
