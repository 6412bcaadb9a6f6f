//! Physical bounds on the project path (stack → cross-section → model), over random valid stacks of every
//! structure a stack can give a rule: surface, coated and embedded microstrip; symmetric, offset and dual
//! stripline; coplanar over a plane (bare, under mask, under dielectric) and without one (bare, under mask);
//! every pair kind. Each check is a law of electrostatics, not a number from our own output:
//! - 1 ≤ εeff ≤ the largest Dk in the cross-section, per mode (the capacitance ratio of a mixed dielectric lies
//!   between its extremes: Thomson's theorem on the energy of the field, any electrostatics text);
//! - a mask thinning to nothing gives the bare line (a dielectric cover too, over copper of zero thickness), and a thick cover of the substrate's Dk gives the
//!   homogeneous line, εeff = Dk (exact: a TEM line in one dielectric);
//! - Z falls as the width grows and rises as the plane moves away (more capacitance / less; Maxwell's
//!   monotonicity of capacitance in the conductor shape, e.g. Pólya & Szegő 1951);
//! - Zodd ≤ Zeven for every pair (the odd mode's mutual capacitance adds, the even mode's subtracts);
//! - a pair spaced far apart tends to its single line (common practice, no source).
//!
//! The coplanar pair under a 1 µm mask once gave εeff,odd 80 with Dk ≤ 3.8 and Zodd six times too low: the first
//! and second checks fail on that code.

use ohmstack_core::plan::analyze_rule;
use ohmstack_core::section::Analysis;
use ohmstack_core::Structure;
use ohmstack_tests::stacks::{project, Geo, Over, Place};
use proptest::prelude::*;

/// A random structure: where it sits, what it is, and its dimensions (w, s, gap) relative to h.
#[derive(Debug, Clone, Copy)]
struct Case {
    place: Place,
    structure: Structure,
    g: Geo,
    w: f64,
    s: f64,
    gap: f64,
}

impl Case {
    fn dims(&self) -> (f64, Option<f64>, Option<f64>) {
        let s = matches!(
            self.structure,
            Structure::EdgePair | Structure::CoplanarPair
        )
        .then_some(self.s);
        let gap = matches!(
            self.structure,
            Structure::Coplanar | Structure::CoplanarPair
        )
        .then_some(self.gap);
        (self.w, s, gap)
    }

    fn analyze(&self) -> Analysis {
        let (w, s, gap) = self.dims();
        let p = project(self.place, self.g, self.structure, w, s, gap);
        analyze_rule(&p, &p.rules[0])
            .unwrap_or_else(|e| panic!("{self:?}: {e}"))
            .analysis
    }

    /// The largest Dk anywhere in the cross-section (substrate, mask, cover).
    fn max_dk(&self) -> f64 {
        let over = match self.place {
            Place::Microstrip(o) | Place::NoPlane(o) => o,
            _ => Over::Air,
        };
        match over {
            Over::Mask(_, dk) | Over::Dielectric(_, dk) => self.g.er.max(dk),
            Over::Air => self.g.er,
        }
    }

    fn with_place(mut self, place: Place) -> Case {
        self.place = place;
        self
    }
}

fn over() -> impl Strategy<Value = Over> {
    prop_oneof![
        Just(Over::Air),
        (5e-6..40e-6f64, 3.0..4.5f64).prop_map(|(c, dk)| Over::Mask(c, dk)),
        (50e-6..300e-6f64, 2.5..5.0f64).prop_map(|(c, dk)| Over::Dielectric(c, dk)),
    ]
}

fn case() -> impl Strategy<Value = Case> {
    use Structure::*;
    let place_and_structure = prop_oneof![
        (
            over(),
            prop::sample::select(vec![Single, EdgePair, Coplanar, CoplanarPair])
        )
            .prop_map(|(o, st)| (Place::Microstrip(o), st)),
        (prop::sample::select(vec![Single, EdgePair])).prop_map(|st| (Place::Stripline, st)),
        (prop::sample::select(vec![Single, EdgePair, BroadsidePair]))
            .prop_map(|st| (Place::Dual, st)),
        (
            prop_oneof![
                Just(Over::Air),
                (5e-6..40e-6f64, 3.0..4.5f64).prop_map(|(c, dk)| Over::Mask(c, dk))
            ],
            prop::sample::select(vec![Coplanar, CoplanarPair])
        )
            .prop_map(|(o, st)| (Place::NoPlane(o), st)),
    ];
    (
        place_and_structure,
        60e-6..400e-6f64,
        prop_oneof![Just(None), (60e-6..400e-6f64).prop_map(Some)],
        2.5..6.0f64,
        prop_oneof![Just(0.0), 5e-6..35e-6f64],
        0.3..3.0f64,
        0.5..3.0f64,
        0.3..1.5f64,
    )
        .prop_map(|((place, structure), h, h2, er, t, w, s, gap)| Case {
            place,
            structure,
            // A symmetric stripline when no second height is drawn.
            g: Geo {
                h,
                h2: h2.unwrap_or(h),
                er,
                t,
            },
            w: w * h,
            s: s * h,
            gap: gap * h,
        })
}

/// Every mode's (Z, εeff).
fn modes(a: &Analysis) -> Vec<(f64, f64)> {
    match a {
        Analysis::Single(l) => vec![(l.z0, l.eps_eff)],
        Analysis::Pair(p) => vec![(p.z_odd, p.eps_eff_odd), (p.z_even, p.eps_eff_even)],
    }
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

/// Builds a placement from what covers it.
type Placer = fn(Over) -> Place;

/// The cover of a one-plane or plane-less case, if any, and how to place another one.
fn cover(c: &Case) -> Option<(Over, Placer)> {
    match c.place {
        Place::Microstrip(o) => Some((o, Place::Microstrip as Placer)),
        Place::NoPlane(o) => Some((o, Place::NoPlane as Placer)),
        _ => None,
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 160, ..ProptestConfig::default() })]

    #[test]
    fn effective_dk_lies_between_one_and_the_largest_dk(c in case()) {
        let a = c.analyze();
        for (z, e) in modes(&a) {
            prop_assert!(z.is_finite() && z > 0.0, "{c:?}: Z {z}");
            prop_assert!(e >= 1.0 - 1e-9 && e <= c.max_dk() * (1.0 + 1e-9), "{c:?}: εeff {e} > Dk {}", c.max_dk());
        }
        if let Analysis::Pair(p) = &a {
            prop_assert!(p.z_odd <= p.z_even * (1.0 + 1e-9), "{c:?}: Zodd {} > Zeven {}", p.z_odd, p.z_even);
        }
    }

    #[test]
    fn a_vanishing_cover_gives_the_bare_line(c in case(), thin in prop::sample::select(vec![1e-9, 1e-8, 1e-7])) {
        let Some((o, at)) = cover(&c) else { return Ok(()); };
        let thin_over = match o {
            Over::Air => return Ok(()),
            Over::Mask(_, dk) => Over::Mask(thin, dk),
            // Pressed prepreg fills the slots between the copper whatever is left above it (the field solver
            // builds it so too), so only over zero-thickness copper does a vanishing dielectric leave bare copper.
            Over::Dielectric(_, _) if c.g.t > 0.0 => return Ok(()),
            Over::Dielectric(_, dk) => Over::Dielectric(thin, dk),
        };
        let bare = c.with_place(at(Over::Air)).analyze();
        let coated = c.with_place(at(thin_over)).analyze();
        for ((zb, eb), (zc, ec)) in modes(&bare).into_iter().zip(modes(&coated)) {
            // A cover of thickness c changes the capacitance by O(c/gap): 1e-7 m against gaps ≥ 18 µm.
            prop_assert!(rel(zc, zb) < 2e-3 && rel(ec, eb) < 4e-3, "{c:?} {thin_over:?}: Z {zc} vs bare {zb}, εeff {ec} vs {eb}");
        }
    }

    #[test]
    fn a_thick_cover_of_the_substrate_dk_gives_the_homogeneous_line(c in case()) {
        // Over a plane only: without one, the field leaves through the open substrate's far face.
        let Place::Microstrip(_) = c.place else { return Ok(()); };
        let thick = c.with_place(Place::Microstrip(Over::Dielectric(40.0 * c.g.h, c.g.er))).analyze();
        for (_, e) in modes(&thick) {
            prop_assert!(rel(e, c.g.er) < 0.03, "{c:?}: εeff {e} vs Dk {}", c.g.er);
        }
    }

    #[test]
    fn impedance_falls_with_width_and_rises_with_height(c in case()) {
        // Where copper closes most of a coplanar slot the thickness correction is capped and the result says it
        // is rough (a warning on the rule); the capped correction no longer follows the width, so this law is
        // checked only where the model does not disown its number.
        let capped = |c: &Case| c.analyze().warnings().iter().any(|w| w.message.contains("capped"));
        if capped(&c) || capped(&Case { w: c.w * 1.1, ..c }) {
            return Ok(());
        }
        let z = |c: &Case| -> Vec<f64> { modes(&c.analyze()).into_iter().map(|m| m.0).collect() };
        let base = z(&c);
        let wider = z(&Case { w: c.w * 1.1, ..c });
        for (b, w) in base.iter().zip(&wider) {
            prop_assert!(w < b, "{c:?}: wider gives {w} ≥ {b}");
        }
        // The plane moving away; a plane-less line has none (its substrate only adds dielectric).
        if !matches!(c.place, Place::NoPlane(_)) {
            let higher = z(&Case { g: Geo { h: c.g.h * 1.1, ..c.g }, ..c });
            for (b, hh) in base.iter().zip(&higher) {
                prop_assert!(hh > b, "{c:?}: higher gives {hh} ≤ {b}");
            }
        }
    }

    #[test]
    fn far_spaced_pairs_decouple(c in case()) {
        let single = match c.structure {
            Structure::EdgePair => Structure::Single,
            Structure::CoplanarPair => Structure::Coplanar,
            _ => return Ok(()),
        };
        // A coplanar pair has no ground copper between its lines, and each line with its grounds carries net
        // charge, so the coupling falls only slowly with spacing (log-like in 2D): it gets much more room.
        let room = if single == Structure::Single { 40.0 } else { 1000.0 };
        // (Held below the 0.5 m the rule accepts.)
        let far = Case { s: (room * c.g.h.max(c.w).max(c.gap)).min(0.4), ..c }.analyze();
        let Analysis::Pair(p) = far else { unreachable!() };
        // The odd/even split vanishes.
        prop_assert!(rel(p.z_odd, p.z_even) < 0.01, "{c:?}: Zodd {} Zeven {}", p.z_odd, p.z_even);
        // An edge pair's lines become the single line; a coplanar pair's do not quite (each line then has
        // ground copper on one side only), so only the split is checked there.
        if single == Structure::Single {
            let Analysis::Single(l) = Case { structure: single, ..c }.analyze() else { unreachable!() };
            prop_assert!(rel(p.z_odd, l.z0) < 0.02 && rel(p.z_even, l.z0) < 0.02, "{c:?}: {} / {} vs {}", p.z_odd, p.z_even, l.z0);
        }
    }
}
