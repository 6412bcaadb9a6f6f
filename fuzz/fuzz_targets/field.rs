//! Fuzz the field solver's geometry builder and solver with hostile f64s: fuzz bytes → a cross-section of each
//! medium (and cover), a structure, dimensions and an etch factor → `field::build` → a small, capped `FieldSolve`
//! stepped in slices. Property: no panic, no hang (node, level and iteration caps), and every `Ok` is finite.
#![no_main]

use libfuzzer_sys::fuzz_target;
use ohmstack_core::field::{self, FieldOptions, FieldSolve};
use ohmstack_core::section::Dims;
use ohmstack_core::section::{Cover, CrossSection, Medium};
use ohmstack_core::Structure;
use ohmstack_fuzz::Numbers;

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
    let etch = if n.bool() {
        Some(n.f64_near(3.0))
    } else {
        None
    };
    let Ok(geometry) = field::build(&cs, structure, &dims, etch) else {
        return;
    };
    // Small caps keep each input to milliseconds; the caps themselves are what is under test.
    let options = FieldOptions {
        max_nodes: 6_000,
        min_levels: 2,
        max_levels: 3,
        ..FieldOptions::default()
    };
    let Ok(mut solve) = FieldSolve::new(geometry, options) else {
        return;
    };
    let mut slices = 0;
    while !solve.step(50_000).done {
        slices += 1;
        assert!(
            slices < 10_000,
            "field solve did not finish within its caps"
        );
    }
    if let Some(Ok(r)) = solve.result() {
        assert!(
            r.controlled_ohm.is_finite(),
            "non-finite field result: {r:?}"
        );
        // The potential map of any finished solve draws: finite values within the drive, ascending axes.
        let map = solve.potential_map().expect("a finished solve has a map");
        assert!(map
            .values
            .iter()
            .all(|v| v.is_finite() && v.abs() <= 1.0 + 1e-3));
        assert!(map.xs.windows(2).all(|w| w[1] > w[0]) && map.ys.windows(2).all(|w| w[1] > w[0]));
        ohmstack_core::output::plot::potential_map(&map, "fuzz").expect("the map draws");
    }
});
