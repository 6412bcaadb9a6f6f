//! The `ohmstack` binary end to end: demo → analyze, calc with units, batch, and bad input giving one-line
//! errors that name the field (never a panic).

use std::io::Write;
use std::process::{Command, Stdio};

fn ohmstack(args: &[&str], stdin: &str) -> (i32, String, String) {
    let mut child = Command::new(env!("CARGO_BIN_EXE_ohmstack"))
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("spawn ohmstack");
    child
        .stdin
        .take()
        .unwrap()
        .write_all(stdin.as_bytes())
        .unwrap();
    let out = child.wait_with_output().unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into(),
        String::from_utf8_lossy(&out.stderr).into(),
    )
}

#[test]
fn demo_feeds_analyze() {
    let (code, demo, _) = ohmstack(&["demo"], "");
    assert_eq!(code, 0);
    let (code, table, err) = ohmstack(&["analyze", "-"], &demo);
    assert_eq!(code, 0, "{err}");
    assert!(table.contains("Single-ended 50 Ω top"), "{table}");
    let (code, json, err) = ohmstack(&["analyze", "-", "--json"], &demo);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let z = v["rules"][0]["impedance_ohm"].as_f64().unwrap();
    assert!((z - 50.0).abs() < 1e-6, "{z}");
}

#[test]
fn calc_microstrip_matches_the_core() {
    let (code, out, err) = ohmstack(
        &[
            "calc",
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
    let core = ohmstack_core::microstrip::Microstrip {
        w: 0.3e-3,
        h: 0.17e-3,
        t: 35e-6,
        er: 4.2,
    }
    .analyze()
    .unwrap();
    assert_eq!(v["z0_ohm"].as_f64().unwrap(), core.z0);
}

#[test]
fn solve_then_calc_round_trips() {
    let (code, out, err) = ohmstack(
        &[
            "solve",
            "microstrip",
            "--target",
            "50",
            "--height",
            "5mil",
            "--thickness",
            "1oz",
            "--dk",
            "4.0",
            "--json",
        ],
        "",
    );
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert!((v["z0_ohm"].as_f64().unwrap() - 50.0).abs() < 1e-6);
}

#[test]
fn bad_input_names_the_field_and_exits_nonzero() {
    let cases: &[(&[&str], &str)] = &[
        (
            &[
                "calc",
                "microstrip",
                "--width",
                "-1mm",
                "--height",
                "0.1mm",
                "--dk",
                "4",
            ],
            "width",
        ),
        (
            &[
                "calc",
                "microstrip",
                "--width",
                "0mm",
                "--height",
                "0.1mm",
                "--dk",
                "4",
            ],
            "width",
        ),
        (
            &[
                "calc",
                "microstrip",
                "--width",
                "NaN",
                "--height",
                "0.1mm",
                "--dk",
                "4",
            ],
            "width",
        ),
        (
            &[
                "calc",
                "microstrip",
                "--width",
                "1e9mm",
                "--height",
                "0.1mm",
                "--dk",
                "4",
            ],
            "width",
        ),
        (
            &[
                "calc",
                "microstrip",
                "--width",
                "abc",
                "--height",
                "0.1mm",
                "--dk",
                "4",
            ],
            "width",
        ),
        (
            &[
                "calc",
                "microstrip",
                "--width",
                "1mm",
                "--height",
                "0.1mm",
                "--dk",
                "inf",
            ],
            "dk",
        ),
        (
            &[
                "calc",
                "microstrip",
                "--width",
                "1mm",
                "--height",
                "0.1mm",
                "--dk",
                "0.2",
            ],
            "dk",
        ),
        (
            &["calc", "microstrip", "--width", "1mm", "--dk", "4"],
            "height",
        ),
        (
            &[
                "calc",
                "microstrip",
                "--width",
                "1mm",
                "--height",
                "1mm",
                "--dk",
                "4",
                "--colour",
                "red",
            ],
            "colour",
        ),
        (
            &[
                "solve",
                "microstrip",
                "--target",
                "-50",
                "--height",
                "1mm",
                "--dk",
                "4",
            ],
            "target",
        ),
        (
            &[
                "solve",
                "microstrip",
                "--target",
                "5000",
                "--height",
                "1mm",
                "--dk",
                "4",
            ],
            "target",
        ),
        (&["calc", "waveguide", "--width", "1mm"], "structure"),
    ];
    for (args, field) in cases {
        let (code, out, err) = ohmstack(args, "");
        assert_ne!(code, 0, "{args:?} should fail: {out}");
        assert!(!err.contains("panicked"), "{args:?} panicked: {err}");
        assert_eq!(
            err.lines().count(),
            1,
            "{args:?}: one-line error expected: {err}"
        );
        assert!(
            err.contains(field),
            "{args:?}: error should name {field}: {err}"
        );
    }
}

#[test]
fn batch_reports_bad_lines_and_keeps_going() {
    let input = "{\"structure\":\"microstrip\",\"width\":\"0.3mm\",\"height\":1.7e-4,\"dk\":4.2}\n\
                 {\"structure\":\"microstrip\",\"width\":\"-3mm\",\"height\":1.7e-4,\"dk\":4.2}\n\
                 not json\n\
                 {\"structure\":\"microstrip\",\"target\":50,\"height\":\"0.17mm\",\"dk\":4.2}\n";
    let (code, out, err) = ohmstack(&["batch"], input);
    assert_eq!(code, 0, "{err}");
    let lines: Vec<serde_json::Value> = out
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(lines.len(), 4);
    assert!(lines[0]["z0_ohm"].as_f64().unwrap() > 0.0);
    assert!(lines[1]["error"].as_str().unwrap().contains("width"));
    assert!(lines[2]["error"].is_string());
    assert!((lines[3]["z0_ohm"].as_f64().unwrap() - 50.0).abs() < 1e-6);
}

#[test]
fn broken_project_file_is_a_clear_error() {
    let (code, _, err) = ohmstack(&["analyze", "-"], "{\"schema\": 1, \"title\": 3}");
    assert_ne!(code, 0);
    assert!(err.contains("title"), "{err}");
    let (code, _, err) = ohmstack(&["analyze", "/nonexistent/file.json"], "");
    assert_ne!(code, 0);
    assert!(err.contains("/nonexistent/file.json"), "{err}");
}

const TOP: &str = "Single-ended 50 Ω top";

#[test]
fn spread_reports_every_figure_and_is_reproducible() {
    let (_, demo, _) = ohmstack(&["demo"], "");
    let args = [
        "spread",
        "-",
        "--rule",
        TOP,
        "--samples",
        "2000",
        "--seed",
        "7",
    ];
    let (code, text, err) = ohmstack(&args, &demo);
    assert_eq!(code, 0, "{err}");
    for needle in [
        "nominal",
        "corners",
        "Monte Carlo",
        "yield",
        "Cpk",
        "sensitivity",
        "centred width",
    ] {
        assert!(text.contains(needle), "{needle} missing in\n{text}");
    }
    let (_, again, _) = ohmstack(&args, &demo);
    assert_eq!(text, again, "same seed must print the same");
    let mut json_args = args.to_vec();
    json_args.push("--json");
    let (code, json, err) = ohmstack(&json_args, &demo);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let s = &v["rules"][0]["spread"];
    let y = s["monte_carlo"]["yield_pct"].as_f64().unwrap();
    assert!((0.0..=100.0).contains(&y));
    assert_eq!(s["monte_carlo"]["samples"].as_u64(), Some(2000));
    // The spread's nominal is the plan's impedance (the same closed-form model at the solved width).
    let (_, plan, _) = ohmstack(&["analyze", "-", "--json"], &demo);
    let plan: serde_json::Value = serde_json::from_str(&plan).unwrap();
    let z = plan["rules"][0]["impedance_ohm"].as_f64().unwrap();
    assert!((s["nominal_ohm"].as_f64().unwrap() - z).abs() < 1e-9);
    json_args[7] = "8";
    let (_, other, _) = ohmstack(&json_args, &demo);
    assert_ne!(json, other, "another seed must give other samples");
    // The fast response surface the app uses lands close to the direct model (same seed, same deviates).
    json_args[7] = "7";
    json_args.extend(["--model", "quadratic"]);
    let (code, fast, err) = ohmstack(&json_args, &demo);
    assert_eq!(code, 0, "{err}");
    let fast: serde_json::Value = serde_json::from_str(&fast).unwrap();
    let mean = |v: &serde_json::Value| v["monte_carlo"]["mean_ohm"].as_f64().unwrap();
    assert!((mean(&fast["rules"][0]["spread"]) - mean(s)).abs() < 0.05);
}

#[test]
fn spread_bad_arguments_name_the_option() {
    let (_, demo, _) = ohmstack(&["demo"], "");
    for (args, needle) in [
        (vec!["spread", "-", "--samples", "5"], "--samples"),
        (vec!["spread", "-", "--samples", "many"], "--samples"),
        (vec!["spread", "-", "--seed", "-1"], "--seed"),
        (vec!["spread", "-", "--rule", "nope"], "--rule"),
        (vec!["spread", "-", "--colour", "red"], "--colour"),
        (vec!["spread", "-", "--model", "cubic"], "--model"),
    ] {
        let (code, _, err) = ohmstack(&args, &demo);
        assert_eq!(code, 2, "{args:?}");
        assert!(err.contains(needle), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{err}");
    }
    let bad = demo.replacen(
        "\"rules\"",
        "\"process\": {\"dk\": {\"pct\": 90}},\n  \"rules\"",
        1,
    );
    let (code, _, err) = ohmstack(&["spread", "-"], &bad);
    assert_eq!(code, 2);
    assert!(err.contains("process.dk.pct"), "{err}");
}

#[test]
fn random_prints_the_seeded_stream() {
    let (code, a, err) = ohmstack(&["random", "normal", "--count", "100", "--seed", "3"], "");
    assert_eq!(code, 0, "{err}");
    let (_, b, _) = ohmstack(&["random", "normal", "--count", "100", "--seed", "3"], "");
    assert_eq!(a, b);
    let xs: Vec<f64> = a.lines().map(|l| l.parse().unwrap()).collect();
    assert_eq!(xs.len(), 100);
    let (code, _, err) = ohmstack(&["random", "cauchy"], "");
    assert_eq!(code, 2);
    assert!(err.contains("normal or uniform"), "{err}");
}
