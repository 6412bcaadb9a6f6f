//! `ohmstack field` and `ohmstack field-calc` end to end: the field solve of a standalone structure against Cohn's
//! exact stripline, a project's rules compared with their closed forms, and bad input named in one-line errors.

mod common;
use common::ohmstack;

use std::f64::consts::PI;

/// K(k) from the complementary modulus by the arithmetic–geometric mean: K = π / (2·AGM(1, k′)).
fn ellip_k(kp: f64) -> f64 {
    let (mut a, mut b) = (1.0f64, kp);
    for _ in 0..60 {
        let (an, bn) = (0.5 * (a + b), (a * b).sqrt());
        a = an;
        b = bn;
    }
    PI / (2.0 * a)
}

#[test]
fn field_calc_stripline_matches_cohn() {
    // Cohn 1954, exact for t = 0: Z0 = η0/(4√εr)·K(k)/K(k′), k = sech(πW/2b), η0 = µ0·c.
    let (code, out, err) = ohmstack(
        &[
            "field-calc",
            "stripline",
            "--width",
            "0.2mm",
            "--height",
            "0.1mm",
            "--thickness",
            "0",
            "--dk",
            "3.5",
            "--json",
        ],
        "",
    );
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let z = v["z0_ohm"].as_f64().unwrap();
    let x = PI * 0.2 / (2.0 * 0.2);
    let eta0 = 1.256_637_062_12e-6 * 299_792_458.0;
    let exact = eta0 / (4.0 * 3.5f64.sqrt()) * ellip_k(x.tanh()) / ellip_k(1.0 / x.cosh());
    assert!((z - exact).abs() / exact < 0.003, "{z} vs {exact}");
    assert!(v["error_estimate_pct"].as_f64().unwrap() < 0.3);
    assert!(v["levels"].as_array().unwrap().len() >= 3);
}

#[test]
fn field_calc_pair_reports_modes_and_closed_form() {
    let (code, out, err) = ohmstack(
        &[
            "field-calc",
            "microstrip",
            "--width",
            "0.2mm",
            "--height",
            "0.1mm",
            "--thickness",
            "35um",
            "--dk",
            "4",
            "--spacing",
            "0.15mm",
        ],
        "",
    );
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("Zdiff") && out.contains("error est."), "{out}");
    let (code, out, err) = ohmstack(
        &[
            "field-calc",
            "microstrip",
            "--width",
            "0.3mm",
            "--height",
            "0.17mm",
            "--thickness",
            "35um",
            "--dk",
            "4.2",
            "--json",
        ],
        "",
    );
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let c = &v["comparison"];
    // Hammerstad–Jensen 1980 against the field solve: inside its 1.5 % band for this ordinary geometry.
    assert!(c["difference_pct"].as_f64().unwrap().abs() < 1.5, "{c}");
    assert_eq!(c["band_pct"].as_f64(), Some(1.5));
}

#[test]
fn field_on_the_demo_project() {
    let (_, demo, _) = ohmstack(&["demo"], "");
    let (code, out, err) = ohmstack(&["field", "-", "--json"], &demo);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let rules = v.as_array().unwrap();
    assert!(rules.len() >= 2);
    let first = &rules[0];
    assert!(
        first["field"]["controlled_ohm"].as_f64().unwrap() > 0.0,
        "{first}"
    );
    assert!(first["comparison"]["closed_form_ohm"].as_f64().is_some());
    let name = first["name"].as_str().unwrap().to_string();
    let (code, out, err) = ohmstack(&["field", "-", "--rule", &name], &demo);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains(&name) && out.contains("difference"), "{out}");
    let (code, _, err) = ohmstack(&["field", "-", "--rule", "no such rule"], &demo);
    assert_eq!(code, 2);
    assert!(err.contains("--rule"), "{err}");
}

#[test]
fn field_calc_bad_input_names_the_field() {
    for (args, field) in [
        (vec!["--width", "-1mm"], "width"),
        (
            vec!["--width", "0.1mm", "--etch-factor", "0.1"],
            "etch-factor",
        ),
        (vec!["--width", "0.1mm", "--tolerance", "nan"], "tolerance"),
        (vec!["--width", "0.1mm", "--spacing", "abc"], "spacing"),
        (vec!["--width", "1nm"], "width"),
    ] {
        let mut all = vec![
            "field-calc",
            "stripline",
            "--height",
            "0.1mm",
            "--thickness",
            "17um",
            "--dk",
            "4",
        ];
        all.extend(args.iter());
        let (code, out, err) = ohmstack(&all, "");
        assert_eq!(code, 2, "{args:?}: {out}");
        assert!(err.contains(field), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{err}");
    }
}

#[test]
fn spread_on_the_field_solver_agrees_with_the_closed_form_spread() {
    // Two impedance models of the same coated microstrip (closed form within ~1 % of the field solve): their
    // tolerance spreads, from the same seeded draws, must agree closely in σ — a check that the field model is
    // wired into the spread, not a reference value.
    let (_, demo, _) = ohmstack(&["demo"], "");
    let rule = "Single-ended 50 Ω top";
    let sigma = |model: &str| -> f64 {
        let (code, out, err) = ohmstack(
            &[
                "spread",
                "-",
                "--rule",
                rule,
                "--model",
                model,
                "--samples",
                "2000",
                "--json",
            ],
            &demo,
        );
        assert_eq!(code, 0, "{err}");
        let v: serde_json::Value = serde_json::from_str(&out).unwrap();
        v["rules"][0]["spread"]["monte_carlo"]["sigma_ohm"]
            .as_f64()
            .unwrap()
    };
    let (closed, field) = (sigma("quadratic"), sigma("field"));
    assert!(
        (closed - field).abs() / closed < 0.15,
        "closed-form σ {closed} vs field σ {field}"
    );
}

#[test]
fn field_solve_puts_the_field_impedance_on_target() {
    let (_, demo, _) = ohmstack(&["demo"], "");
    let (code, out, err) = ohmstack(&["field-solve", "-", "--json"], &demo);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let rules = v.as_array().unwrap();
    assert!(!rules.is_empty());
    for r in rules {
        let target = r["target_ohm"].as_f64().unwrap();
        let z = r["field_ohm"].as_f64().unwrap();
        assert!(r["converged"].as_bool().unwrap(), "{r}");
        assert!((z / target - 1.0).abs() < 1e-3, "{r}");
        assert_eq!(r["field"]["controlled_ohm"].as_f64().unwrap(), z);
    }
    // One rule, with its potential map written as data.
    let dir = std::env::temp_dir().join(format!("ohmstack-field-solve-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("radio.json");
    let (code, out, err) = ohmstack(
        &[
            "field-solve",
            "-",
            "--rule",
            "Radio feed 50 Ω",
            "--map",
            path.to_str().unwrap(),
        ],
        &demo,
    );
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("field-solved width"), "{out}");
    let map: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    assert_eq!(map["drive"], "single");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn a_field_solver_rule_flows_into_analyze_and_notes() {
    let (_, demo, _) = ohmstack(&["demo"], "");
    let mut project: serde_json::Value = serde_json::from_str(&demo).unwrap();
    let rule = "Radio feed 50 Ω";
    for r in project["rules"].as_array_mut().unwrap() {
        if r["name"] == rule {
            r["model"] = "field_solver".into();
        }
    }
    let text = project.to_string();
    let (code, out, err) = ohmstack(&["field-solve", "-", "--rule", rule, "--json"], &text);
    assert_eq!(code, 0, "{err}");
    let solved: serde_json::Value = serde_json::from_str(&out).unwrap();
    let width = solved[0]["value_m"].as_f64().unwrap();
    let (code, out, err) = ohmstack(&["analyze", "-", "--json"], &text);
    assert_eq!(code, 0, "{err}");
    let plan: serde_json::Value = serde_json::from_str(&out).unwrap();
    let row = plan["rules"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["name"] == rule)
        .unwrap();
    // `analyze` solves the rule on the fast field engine, `field-solve` on the reference solver: the widths agree
    // within the two engines' errors (0.1 % each in Z, about 0.6 % of Z per 1 % of width here).
    let planned = row["width_m"].as_f64().unwrap();
    assert!((planned / width - 1.0).abs() < 5e-3, "{planned} vs {width}");
    assert!(row["method"]
        .as_str()
        .unwrap()
        .starts_with("2D field solver"));
    assert!((row["impedance_ohm"].as_f64().unwrap() / 50.0 - 1.0).abs() < 1e-3);
    // The CSV fab notes list the field-solved width (in the project's µm).
    let (code, csv, err) = ohmstack(&["notes", "-", "--format", "csv"], &text);
    assert_eq!(code, 0, "{err}");
    let line = csv.lines().find(|l| l.contains(rule)).unwrap();
    assert!(
        line.contains(&format!("{:.1}", planned * 1e6)),
        "{line} vs {planned}"
    );
}

#[test]
fn analyze_on_the_field_engine_puts_every_solved_rule_on_target() {
    // Every rule of the demo planned on the fast field engine: each solved rule lands within 0.01 % of its target
    // (the synthesis' stopping tolerance), names the engine, and its estimate is reported; an unknown engine is a
    // one-line error naming the option.
    let (_, demo, _) = ohmstack(&["demo"], "");
    let (code, out, err) = ohmstack(&["analyze", "-", "--engine", "field", "--json"], &demo);
    assert_eq!(code, 0, "{err}");
    let plan: serde_json::Value = serde_json::from_str(&out).unwrap();
    let rules = plan["rules"].as_array().unwrap();
    assert!(!rules.is_empty());
    for r in rules {
        assert_eq!(r["method"], "2D field solver (boundary elements)", "{r}");
        let dev = r["deviation_pct"].as_f64().unwrap();
        assert!(dev.abs() < 0.011, "{}: {dev} %", r["name"]);
        assert!(r["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .any(|w| w["message"].as_str().unwrap().contains("estimated error")));
    }
    let (code, _, err) = ohmstack(&["analyze", "-", "--engine", "magic"], &demo);
    assert_eq!(code, 2);
    assert!(err.starts_with("error: --engine"), "{err}");
    assert_eq!(err.trim_end().lines().count(), 1, "{err}");
}

#[test]
fn field_check_on_the_fast_engine_agrees_with_the_reference() {
    // `ohmstack field --engine field` against the default finite-volume check, rule by rule on the demo: the same
    // dimensions, closed form and band, and field figures within the two error estimates (independent methods).
    let (_, demo, _) = ohmstack(&["demo"], "");
    let run = |engine: &str| -> Vec<serde_json::Value> {
        let (code, out, err) = ohmstack(&["field", "-", "--engine", engine, "--json"], &demo);
        assert_eq!(code, 0, "{err}");
        serde_json::from_str(&out).unwrap()
    };
    let (fast, reference) = (run("field"), run("reference"));
    assert_eq!(fast.len(), reference.len());
    for (f, r) in fast.iter().zip(&reference) {
        assert_eq!(f["width_m"], r["width_m"], "{}", f["name"]);
        assert_eq!(
            f["comparison"]["closed_form_ohm"],
            r["comparison"]["closed_form_ohm"]
        );
        let (zf, zr) = (
            f["field"]["controlled_ohm"].as_f64().unwrap(),
            r["field"]["controlled_ohm"].as_f64().unwrap(),
        );
        let bound = f["field"]["error_estimate_pct"].as_f64().unwrap()
            + r["field"]["error_estimate_pct"].as_f64().unwrap();
        let diff = (zf / zr - 1.0).abs() * 100.0;
        assert!(diff <= bound, "{}: {diff} % > {bound} %", f["name"]);
    }
    let (code, _, err) = ohmstack(
        &[
            "field",
            "-",
            "--engine",
            "field",
            "--rule",
            "Ethernet 100 Ω",
            "--map",
            "x.svg",
        ],
        &demo,
    );
    assert_eq!(code, 2);
    assert!(err.starts_with("error: --map"), "{err}");
}
