//! Field-solver checks against exact results (Cohn 1954/1955 conformal maps), parallel-plate limits, box-size
//! independence, convergence order, resumable stepping and bad input.

use super::*;
use crate::base::units::ETA0;
use crate::closed_form::microstrip::hammerstad_jensen;
use crate::section::{Cover, Medium};
use std::f64::consts::PI;

/// Complete elliptic integral of the first kind K(k) by the arithmetic–geometric mean, taking the modulus `k` and
/// its complement `kp` = √(1−k²) separately so both stay accurate near 1: K(k) = π / (2·AGM(1, k′))
/// (Abramowitz & Stegun 17.6, from memory).
fn ellip_k(kp: f64) -> f64 {
    let (mut a, mut b) = (1.0f64, kp);
    for _ in 0..60 {
        let (an, bn) = (0.5 * (a + b), (a * b).sqrt());
        a = an;
        b = bn;
        if (a - b).abs() < 1e-16 * a {
            break;
        }
    }
    PI / (2.0 * a)
}

/// Cohn 1954, exact for a zero-thickness strip centred between planes b apart: Z0 = η0/(4√εr)·K(k)/K(k′),
/// k = sech(πW/2b), k′ = tanh(πW/2b). η0 = µ0·c (not 120π).
fn cohn_stripline(w: f64, b: f64, er: f64) -> f64 {
    let x = PI * w / (2.0 * b);
    let (k, kp) = (1.0 / x.cosh(), x.tanh());
    ETA0 / (4.0 * er.sqrt()) * ellip_k(kp) / ellip_k(k)
}

/// Cohn 1955, exact for zero-thickness edge-coupled strips centred between planes: (Z_even, Z_odd) with
/// ke = tanh(πW/2b)·tanh(π(W+S)/2b), ko = tanh(πW/2b)·coth(π(W+S)/2b), Z = η0/(4√εr)·K(k′)/K(k).
fn cohn_coupled(w: f64, s: f64, b: f64, er: f64) -> (f64, f64) {
    let a = (PI * w / (2.0 * b)).tanh();
    let c = (PI * (w + s) / (2.0 * b)).tanh();
    let z = |k: f64| ETA0 / (4.0 * er.sqrt()) * ellip_k(k) / ellip_k((1.0 - k * k).sqrt());
    (z(a * c), z(a / c))
}

fn stripline(h: f64, er: f64, t: f64) -> CrossSection {
    CrossSection {
        loss: Default::default(),
        layering: None,
        medium: Medium::Stripline {
            h_below: h,
            h_above: h,
            er,
            dual: false,
        },
        t,
        references: vec![],
        warnings: vec![],
    }
}

fn single(w: f64) -> Dims {
    Dims {
        w,
        s: None,
        gap: None,
    }
}

fn z0(r: &FieldResult) -> f64 {
    match &r.analysis {
        Analysis::Single(s) => s.z0,
        Analysis::Pair(_) => f64::NAN,
    }
}

#[test]
fn elliptic_k_matches_known_values() {
    // K(0) = π/2 exactly; K(1/√2) = Γ(1/4)²/(4√π) = 1.854 074 677 301 372 (A&S table 17.1, from memory).
    assert!((ellip_k(1.0) - PI / 2.0).abs() < 1e-15);
    let r = 0.5f64.sqrt();
    assert!((ellip_k(r) - 1.854_074_677_301_372).abs() < 1e-13);
}

#[test]
fn symmetric_stripline_matches_cohn_within_0_3_pct() {
    for &(w_over_b, er) in &[(0.3, 1.0), (1.0, 4.0), (2.5, 3.5)] {
        let b = 200e-6;
        let cs = stripline(b / 2.0, er, 0.0);
        let r = solve_cross_section(
            &cs,
            Structure::Single,
            &single(w_over_b * b),
            None,
            FieldOptions::default(),
        )
        .unwrap();
        let exact = cohn_stripline(w_over_b * b, b, er);
        let dev = (z0(&r) - exact) / exact * 100.0;
        eprintln!("W/b {w_over_b} er {er}: field {} exact {exact} dev {dev:.4} % est {:.4} % p {:?} levels {:?}", z0(&r), r.error_estimate_pct, r.observed_order, r.levels.iter().map(|l| (l.nx, l.ny, l.iterations, l.controlled_ohm)).collect::<Vec<_>>());
        assert!(dev.abs() < 0.3, "W/b {w_over_b}: {dev} %");
        assert!(r.converged);
    }
}

#[test]
fn edge_coupled_stripline_matches_cohn_within_0_3_pct() {
    let b = 300e-6;
    let (w, s, er) = (0.5 * b, 0.4 * b, 3.0);
    let cs = stripline(b / 2.0, er, 0.0);
    let dims = Dims {
        w,
        s: Some(s),
        gap: None,
    };
    let r = solve_cross_section(
        &cs,
        Structure::EdgePair,
        &dims,
        None,
        FieldOptions::default(),
    )
    .unwrap();
    let (ze, zo) = cohn_coupled(w, s, b, er);
    let Analysis::Pair(p) = &r.analysis else {
        unreachable!("a pair gives a pair")
    };
    let (de, dd) = ((p.z_even - ze) / ze * 100.0, (p.z_odd - zo) / zo * 100.0);
    eprintln!(
        "even {} vs {ze} ({de:.4} %), odd {} vs {zo} ({dd:.4} %) est {:.4} p {:?}",
        p.z_even, p.z_odd, r.error_estimate_pct, r.observed_order
    );
    assert!(de.abs() < 0.3 && dd.abs() < 0.3, "{de} {dd}");
    assert!((p.eps_eff_odd - er).abs() < 1e-6 && (p.eps_eff_even - er).abs() < 1e-6);
}

fn microstrip(h: f64, er: f64, t: f64, cover: Cover) -> CrossSection {
    CrossSection {
        loss: Default::default(),
        layering: None,
        medium: Medium::Microstrip { h, er, cover },
        t,
        references: vec![],
        warnings: vec![],
    }
}

fn fixed_levels(n: usize) -> FieldOptions {
    FieldOptions {
        tolerance: 1e-7,
        min_levels: n,
        max_levels: n,
        ..FieldOptions::default()
    }
}

#[test]
fn stripline_converges_to_cohn_at_second_order() {
    // Cohn 1954, exact for t = 0. Five levels refined by √2: the error against the exact value must fall by about
    // ratio^p each level with an observed order p near 2, and the extrapolated value must beat the finest grid.
    let b = 200e-6;
    let w = 0.8 * b;
    let exact = cohn_stripline(w, b, 2.2);
    let r = solve_cross_section(
        &stripline(b / 2.0, 2.2, 0.0),
        Structure::Single,
        &single(w),
        None,
        fixed_levels(5),
    )
    .unwrap();
    let errors: Vec<f64> = r
        .levels
        .iter()
        .map(|l| (l.controlled_ohm - exact).abs() / exact)
        .collect();
    for pair in errors.windows(2) {
        assert!(pair[1] < 0.75 * pair[0], "errors {errors:?}");
    }
    let p = r.observed_order.expect("asymptotic");
    eprintln!("errors vs Cohn per level {errors:?}, observed order {p}");
    assert!((1.6..=2.6).contains(&p), "order {p}");
    let observed_from_exact = (errors[3] / errors[4]).ln() / std::f64::consts::SQRT_2.ln();
    assert!(
        (1.6..=2.6).contains(&observed_from_exact),
        "{observed_from_exact}"
    );
    let final_err = (z0(&r) - exact).abs() / exact;
    assert!(final_err < 0.2 * errors[4], "{final_err} vs {}", errors[4]);
    // The error estimate bounds the true error of the reported value.
    assert!(
        final_err * 100.0 <= r.error_estimate_pct,
        "{final_err} {}",
        r.error_estimate_pct
    );
}

#[test]
fn coplanar_in_air_matches_the_exact_conformal_map() {
    // Coplanar strip of width w between semi-infinite grounds at gap g, zero thickness, all in vacuum: exact
    // Z0 = η0/4 · K(k′)/K(k), k = w/(w + 2g) (Wen 1969 conformal map with εr = 1, from memory).
    let (w, g) = (100e-6, 50e-6);
    let cs = CrossSection {
        loss: Default::default(),
        layering: None,
        medium: Medium::NoPlane { h: 100e-6, er: 1.0 },
        t: 0.0,
        references: vec![],
        warnings: vec![],
    };
    let dims = Dims {
        w,
        s: None,
        gap: Some(g),
    };
    let r = solve_cross_section(
        &cs,
        Structure::Coplanar,
        &dims,
        None,
        FieldOptions::default(),
    )
    .unwrap();
    let k = w / (w + 2.0 * g);
    let exact = ETA0 / 4.0 * ellip_k(k) / ellip_k((1.0 - k * k).sqrt());
    let dev = (z0(&r) - exact) / exact * 100.0;
    assert!(dev.abs() < 0.3, "{} vs {exact}: {dev} %", z0(&r));
}

#[test]
fn thin_surface_microstrip_within_hammerstad_jensen_accuracy() {
    // Hammerstad–Jensen 1980 claim ≤ 0.2 % on εeff and ≤ 0.03 % on the air-line Z0 for 0.01 ≤ u ≤ 100, t = 0,
    // so Z0 = Z_air/√εeff is within about 0.13 %; we allow 0.25 % plus the field solve's own estimate.
    for &(u, er) in &[(0.5, 4.3), (1.0, 2.2), (2.0, 4.3), (5.0, 10.0)] {
        let h = 100e-6;
        let r = solve_cross_section(
            &microstrip(h, er, 0.0, Cover::Air),
            Structure::Single,
            &single(u * h),
            None,
            FieldOptions::default(),
        )
        .unwrap();
        let (z_hj, e_hj) = hammerstad_jensen(u, 0.0, er);
        let Analysis::Single(line) = &r.analysis else {
            unreachable!("single line")
        };
        let dz = (line.z0 - z_hj) / z_hj * 100.0;
        let de = (line.eps_eff - e_hj) / e_hj * 100.0;
        eprintln!("u {u} er {er}: Z {} HJ {z_hj} ({dz:.3} %), εeff {} HJ {e_hj} ({de:.3} %), est {:.3} % levels {}", line.z0, line.eps_eff, r.error_estimate_pct, r.levels.len());
        assert!(dz.abs() < 0.25 + r.error_estimate_pct, "u {u}: {dz} %");
        assert!(de.abs() < 0.25 + r.error_estimate_pct, "u {u}: {de} %");
    }
}

#[test]
fn the_far_box_does_not_change_microstrip_impedance() {
    // Doubling the distance to the grounded box must change Z0 by far less than the solver tolerance.
    let cs = microstrip(150e-6, 4.0, 35e-6, Cover::Air);
    let g = build(&cs, Structure::Single, &single(280e-6), None).unwrap();
    let mut far = g.clone();
    far.x_max *= 2.0;
    far.y_max *= 2.0;
    let opts = FieldOptions {
        coarse_eta: 0.7,
        ..fixed_levels(3)
    };
    let a = solve(g, opts).unwrap();
    let b = solve(far, opts).unwrap();
    let (za, zb) = (a.controlled_ohm, b.controlled_ohm);
    assert!(((za - zb) / za).abs() < 2e-4, "{za} vs {zb}");
    // On the finest grid alone (same lines near the trace) the box's effect is at the 1e-6 level.
    let (fa, fb) = (a.finest_ohm, b.finest_ohm);
    assert!(((fa - fb) / fa).abs() < 2e-5, "{fa} vs {fb}");
}

#[test]
fn etched_trace_converges_and_lies_between_its_rectangles() {
    // The trapezoid's sides are staircased: check it converges under refinement, and that its Z0 lies between the
    // rectangles of its bottom and top widths (monotonicity of capacitance in the conductor, exact).
    let (h, t, w) = (100e-6, 35e-6, 150e-6);
    let cs = stripline(h, 3.8, t);
    let r = solve_cross_section(
        &cs,
        Structure::Single,
        &single(w),
        Some(1.5),
        fixed_levels(5),
    )
    .unwrap();
    let z: Vec<f64> = r.levels.iter().map(|l| l.controlled_ohm).collect();
    let d: Vec<f64> = z.windows(2).map(|p| (p[1] - p[0]).abs()).collect();
    assert!(d[3] < 0.7 * d[1], "changes {d:?}");
    let wide = solve_cross_section(
        &cs,
        Structure::Single,
        &single(w),
        None,
        FieldOptions::default(),
    )
    .unwrap();
    let narrow = solve_cross_section(
        &cs,
        Structure::Single,
        &single(w - 2.0 * t / 1.5),
        None,
        FieldOptions::default(),
    )
    .unwrap();
    assert!(wide.controlled_ohm < r.controlled_ohm && r.controlled_ohm < narrow.controlled_ohm);
}

#[test]
fn solder_mask_and_cover_raise_eps_eff() {
    let bare = microstrip(100e-6, 4.2, 35e-6, Cover::Air);
    let masked = microstrip(
        100e-6,
        4.2,
        35e-6,
        Cover::Mask {
            thickness_m: 20e-6,
            er: 3.6,
        },
    );
    let buried = microstrip(
        100e-6,
        4.2,
        35e-6,
        Cover::Dielectric {
            thickness_m: 1e-3,
            er: 4.2,
        },
    );
    let run = |cs: &CrossSection| match solve_cross_section(
        cs,
        Structure::Single,
        &single(180e-6),
        None,
        FieldOptions::default(),
    )
    .unwrap()
    .analysis
    {
        Analysis::Single(s) => s,
        Analysis::Pair(_) => unreachable!("single line"),
    };
    let (a, m, c) = (run(&bare), run(&masked), run(&buried));
    assert!(a.eps_eff < m.eps_eff && m.eps_eff < c.eps_eff);
    assert!(a.z0 > m.z0 && m.z0 > c.z0);
    // Buried 10 h deep in the same Dk, nearly all the field is in dielectric (physical limit εeff → εr).
    assert!((c.eps_eff - 4.2).abs() / 4.2 < 0.01, "{}", c.eps_eff);
}

#[test]
fn explicit_layers_of_equal_dk_match_the_merged_slab() {
    // Splitting a dielectric into two layers of the same Dk changes nothing physically; the grids differ (one more
    // interface line), so agreement within the two error estimates is required.
    let one = LayerStack {
        below: vec![Slab { h: 100e-6, er: 3.5 }],
        above: vec![Slab { h: 120e-6, er: 3.5 }],
        bottom_plane: true,
        top_plane: true,
        mask: None,
        t: 18e-6,
    };
    let mut two = one.clone();
    two.below = vec![Slab { h: 40e-6, er: 3.5 }, Slab { h: 60e-6, er: 3.5 }];
    let a = solve(
        build_layered(&one, Structure::Single, &single(120e-6), None).unwrap(),
        FieldOptions::default(),
    )
    .unwrap();
    let b = solve(
        build_layered(&two, Structure::Single, &single(120e-6), None).unwrap(),
        FieldOptions::default(),
    )
    .unwrap();
    let diff = (a.controlled_ohm - b.controlled_ohm).abs() / a.controlled_ohm * 100.0;
    assert!(diff < a.error_estimate_pct + b.error_estimate_pct, "{diff}");
    // A mixed stack lies between the all-low and all-high Dk stacks.
    let mut mixed = one.clone();
    mixed.below = vec![Slab { h: 50e-6, er: 3.0 }, Slab { h: 50e-6, er: 4.5 }];
    let m = solve(
        build_layered(&mixed, Structure::Single, &single(120e-6), None).unwrap(),
        FieldOptions::default(),
    )
    .unwrap();
    let Analysis::Single(ms) = &m.analysis else {
        unreachable!("single line")
    };
    assert!(ms.eps_eff > 3.0 && ms.eps_eff < 4.5, "{}", ms.eps_eff);
}

#[test]
fn broadside_pair_in_one_dielectric() {
    // Homogeneous dielectric: both modes have εeff = εr exactly; the odd mode (strong coupling) is below the even.
    let cs = CrossSection {
        loss: Default::default(),
        layering: None,
        medium: Medium::Broadside {
            h_above: 150e-6,
            separation: 100e-6,
            h_below: 150e-6,
            er: 3.7,
        },
        t: 18e-6,
        references: vec![],
        warnings: vec![],
    };
    let r = solve_cross_section(
        &cs,
        Structure::BroadsidePair,
        &single(120e-6),
        None,
        FieldOptions::default(),
    )
    .unwrap();
    let Analysis::Pair(p) = &r.analysis else {
        unreachable!("pair")
    };
    assert!((p.eps_eff_odd - 3.7).abs() < 1e-6 && (p.eps_eff_even - 3.7).abs() < 1e-6);
    assert!(p.z_odd < p.z_even);
    assert!(
        r.c_matrix[0][1] < 0.0
            && (r.c_matrix[0][0] - r.c_matrix[1][1]).abs() < 1e-3 * r.c_matrix[0][0]
    );
}

#[test]
fn stepping_in_slices_gives_the_blocking_result() {
    let cs = microstrip(100e-6, 4.0, 35e-6, Cover::Air);
    let dims = Dims {
        w: 150e-6,
        s: Some(150e-6),
        gap: None,
    };
    let g = build(&cs, Structure::EdgePair, &dims, None).unwrap();
    let blocking = solve(g.clone(), FieldOptions::default()).unwrap();
    let mut s = FieldSolve::new(g, FieldOptions::default()).unwrap();
    let mut last = 0.0;
    let mut steps = 0;
    while !s.step(20_000).done {
        let f = s.progress().fraction;
        assert!(f >= last && f < 1.0);
        last = f;
        steps += 1;
        assert!(steps < 100_000);
    }
    assert!(steps > 10, "{steps}");
    assert_eq!(s.result().unwrap().unwrap(), blocking);
}

#[test]
fn bad_options_and_geometry_are_errors() {
    let cs = stripline(100e-6, 3.0, 0.0);
    let e = solve_cross_section(
        &cs,
        Structure::Single,
        &single(1e-4),
        None,
        FieldOptions {
            tolerance: f64::NAN,
            ..FieldOptions::default()
        },
    )
    .unwrap_err();
    assert!(e.to_string().starts_with("tolerance"), "{e}");
    let e = solve_cross_section(
        &cs,
        Structure::Single,
        &single(5.0),
        None,
        FieldOptions::default(),
    )
    .unwrap_err();
    assert!(e.to_string().starts_with("width"), "{e}");
    let bad = CrossSection {
        loss: Default::default(),
        medium: Medium::Stripline {
            h_below: -1.0,
            h_above: 1e-4,
            er: 3.0,
            dual: false,
        },
        ..cs.clone()
    };
    let e = solve_cross_section(
        &bad,
        Structure::Single,
        &single(1e-4),
        None,
        FieldOptions::default(),
    )
    .unwrap_err();
    assert!(e.to_string().starts_with("height"), "{e}");
    let tiny = FieldOptions {
        max_nodes: 100,
        ..FieldOptions::default()
    };
    let e = solve_cross_section(&cs, Structure::Single, &single(1e-4), None, tiny).unwrap_err();
    assert!(e.to_string().starts_with("grid"), "{e}");
    let none = CrossSection {
        loss: Default::default(),
        medium: Medium::NoPlane { h: 1e-4, er: 3.0 },
        ..cs
    };
    let e = solve_cross_section(
        &none,
        Structure::Single,
        &single(1e-4),
        None,
        FieldOptions::default(),
    )
    .unwrap_err();
    assert!(e.to_string().starts_with("references"), "{e}");
}

#[test]
fn edge_coupled_stripline_converges_toward_cohn() {
    // Cohn 1955, exact for t = 0: the odd-mode error must fall level by level, at an observed order near 2.
    let b = 300e-6;
    let (w, s, er) = (0.3 * b, 0.2 * b, 4.0);
    let dims = Dims {
        w,
        s: Some(s),
        gap: None,
    };
    let r = solve_cross_section(
        &stripline(b / 2.0, er, 0.0),
        Structure::EdgePair,
        &dims,
        None,
        fixed_levels(5),
    )
    .unwrap();
    let (_, zo) = cohn_coupled(w, s, b, er);
    // Zdiff = 2·Zodd on every level.
    let errors: Vec<f64> = r
        .levels
        .iter()
        .map(|l| (l.controlled_ohm / 2.0 - zo).abs() / zo)
        .collect();
    for pair in errors.windows(2) {
        assert!(pair[1] < 0.8 * pair[0], "errors {errors:?}");
    }
    let p = r.observed_order.expect("asymptotic");
    eprintln!("pair errors vs Cohn {errors:?}, observed order {p}");
    assert!((1.5..=2.8).contains(&p), "order {p}");
    let Analysis::Pair(pair) = &r.analysis else {
        unreachable!("pair")
    };
    assert!(
        (pair.z_odd - zo).abs() / zo < 0.001,
        "{} vs {zo}",
        pair.z_odd
    );
}

#[test]
fn iteration_cap_gives_a_warning_not_a_hang() {
    let opts = FieldOptions {
        max_cg_iterations: 2,
        ..FieldOptions::default()
    };
    let r = solve_cross_section(
        &microstrip(100e-6, 4.0, 35e-6, Cover::Air),
        Structure::Single,
        &single(200e-6),
        None,
        opts,
    )
    .unwrap();
    assert!(r
        .warnings
        .iter()
        .any(|w| w.message.contains("conjugate gradients stopped")));
}
