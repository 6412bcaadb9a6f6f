//! Hostile input at every subcommand of the `ohmstack` binary: huge numbers, NaN, infinities, empty values,
//! binary garbage and 10 MB on stdin. Every case must exit non-zero with exactly one line of error text and no
//! panic message (`batch` reports bad lines in its JSON output instead, and is checked for that).

mod common;
use common::ohmstack;
use std::io::Write;
use std::process::{Command, Stdio};

fn demo() -> Vec<u8> {
    let (code, json, _) = ohmstack(&["demo"], Vec::new());
    assert_eq!(code, 0);
    json.into_bytes()
}

/// Bytes that are not UTF-8, not JSON and not a link (a fixed pseudo-random pattern, so failures reproduce).
fn garbage(len: usize) -> Vec<u8> {
    let mut x: u32 = 0x9e37_79b9;
    (0..len)
        .map(|_| {
            x ^= x << 13;
            x ^= x >> 17;
            x ^= x << 5;
            (x >> 24) as u8
        })
        .collect()
}

fn assert_clean_failure(args: &[&str], stdin: Vec<u8>) {
    let label = format!("ohmstack {}", args.join(" "));
    let (code, _out, err) = ohmstack(args, stdin);
    assert_ne!(code, 0, "{label}: exit 0 on hostile input");
    assert_ne!(code, -1, "{label}: killed by a signal");
    assert!(!err.contains("panicked"), "{label}: {err}");
    let lines: Vec<&str> = err.trim_end().lines().collect();
    assert_eq!(lines.len(), 1, "{label}: error is not one line: {err:?}");
    assert!(lines[0].starts_with("error: "), "{label}: {err:?}");
    assert!(
        lines[0].len() < 2000,
        "{label}: error line is {} bytes",
        lines[0].len()
    );
}

const HOSTILE_NUMBERS: &[&str] = &[
    "NaN",
    "nan",
    "inf",
    "-inf",
    "1e999",
    "-1e999",
    "1e308mm",
    "99999999999999999999999999999",
    "",
    " ",
    "-0",
    "0",
    "-5mil",
    "1e-320",
    "0x10",
    "5 mm mm",
    "\u{202e}5",
];

#[test]
fn calc_and_solve_reject_hostile_numbers_in_every_field() {
    let base = [
        ("width", "0.3mm"),
        ("height", "0.17mm"),
        ("thickness", "35um"),
        ("dk", "4.2"),
    ];
    for bad in HOSTILE_NUMBERS {
        for (i, _) in base.iter().enumerate() {
            // Thickness may legally be zero.
            if i == 2 && matches!(*bad, "0" | "-0") {
                continue;
            }
            let mut args = vec!["calc".to_string(), "microstrip".to_string()];
            for (j, (k, v)) in base.iter().enumerate() {
                args.push(format!("--{k}"));
                args.push(if i == j {
                    bad.to_string()
                } else {
                    v.to_string()
                });
            }
            let refs: Vec<&str> = args.iter().map(String::as_str).collect();
            assert_clean_failure(&refs, Vec::new());
            // `solve` replaces the width by its solution (the given width is only a start), so only the other
            // fields must be rejected there.
            if i != 0 {
                let mut solve = refs.clone();
                solve[0] = "solve";
                solve.extend(["--target", "50"]);
                assert_clean_failure(&solve, Vec::new());
            }
        }
        let target = [
            "solve",
            "stripline",
            "--width",
            "0.1mm",
            "--height",
            "0.2mm",
            "--thickness",
            "17um",
            "--dk",
            "4",
            "--target",
            bad,
        ];
        assert_clean_failure(&target, Vec::new());
    }
}

/// The options a case takes beyond width, height, thickness and Dk (solder mask, cover, a second dielectric, the
/// etch factor, coplanar grounds between planes), each given every hostile number in turn, on both engines a
/// script would pick.
#[test]
fn case_options_reject_hostile_numbers() {
    let microstrip = [
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
    ];
    let stripline = [
        "calc",
        "stripline",
        "--width",
        "0.1mm",
        "--height",
        "0.15mm",
        "--thickness",
        "17um",
        "--dk",
        "4",
    ];
    let options: &[(&[&str], &[&str], &str)] = &[
        (&microstrip, &["--mask-dk", "3.5"], "--mask-thickness"),
        (&microstrip, &["--mask-thickness", "20um"], "--mask-dk"),
        (&microstrip, &["--cover-dk", "3.8"], "--cover"),
        (&microstrip, &["--cover", "0.1mm"], "--cover-dk"),
        (&microstrip, &[], "--etch-factor"),
        (&stripline, &["--height2", "0.2mm"], "--dk2"),
        (&stripline, &["--dk2", "3.6"], "--height2"),
        (&stripline, &[], "--gap"),
    ];
    for bad in HOSTILE_NUMBERS {
        for (base, with, option) in options {
            for engine in ["field", "closed-form"] {
                let mut args = base.to_vec();
                args.extend(*with);
                args.extend([*option, *bad, "--engine", engine]);
                assert_clean_failure(&args, Vec::new());
            }
        }
    }
}

#[test]
fn every_project_command_rejects_hostile_stdin() {
    let big = {
        // 10 MB: a valid-looking JSON start followed by padding, so the size checks (not the parser) answer.
        let mut v = b"{\"schema\": 1, \"title\": \"".to_vec();
        v.resize(10 << 20, b'a');
        v
    };
    let nan_project = String::from_utf8(demo())
        .unwrap()
        .replacen(
            "\"analysis_freq_hz\": 1000000000.0",
            "\"analysis_freq_hz\": NaN",
            1,
        )
        .into_bytes();
    let huge_project = String::from_utf8(demo())
        .unwrap()
        .replacen(
            "\"analysis_freq_hz\": 1000000000.0",
            "\"analysis_freq_hz\": 1e999",
            1,
        )
        .into_bytes();
    let stdins: Vec<(&str, Vec<u8>)> = vec![
        ("empty", Vec::new()),
        ("garbage", garbage(4096)),
        ("10 MB", big),
        ("NaN", nan_project),
        ("1e999", huge_project),
        ("null", b"null".to_vec()),
        ("deep", "[".repeat(200_000).into_bytes()),
    ];
    let commands: &[&[&str]] = &[
        &["analyze", "-"],
        &["analyze", "-", "--json"],
        &["spread", "-", "--samples", "10"],
        &["share", "encode", "-"],
        &["share", "decode", "-"],
        &["notes", "-"],
        &["notes", "-", "--format", "csv"],
        &["draw", "-"],
        &["field", "-"],
        &["field-solve", "-"],
        &["plot", "-", "--rule", "Single-ended 50 Ω top"],
        &["loss", "-", "--rule", "Single-ended 50 Ω top"],
        &[
            "touchstone",
            "-",
            "--rule",
            "Single-ended 50 Ω top",
            "--length",
            "10mm",
        ],
        &["crosstalk", "-"],
        &["propose", "-"],
        &["reach", "-", "--nyquist", "4GHz", "--budget", "10"],
        &[
            "thickness",
            "-",
            "--rule",
            "Single-ended 50 Ω top",
            "--layer",
            "PP1",
        ],
    ];
    for cmd in commands {
        for (what, stdin) in &stdins {
            let (code, _, err) = ohmstack(cmd, stdin.clone());
            assert_ne!(code, 0, "{cmd:?} with {what} stdin: exit 0");
            assert!(!err.contains("panicked"), "{cmd:?} with {what}: {err}");
            assert_eq!(
                err.trim_end().lines().count(),
                1,
                "{cmd:?} with {what}: {err:?}"
            );
        }
    }
}

#[test]
fn options_of_project_commands_reject_hostile_values() {
    let rule = "Single-ended 50 Ω top";
    for bad in HOSTILE_NUMBERS {
        for args in [
            vec!["spread", "-", "--samples", bad],
            vec!["spread", "-", "--seed", bad],
            vec!["plot", "-", "--rule", rule, "--points", bad],
            vec!["loss", "-", "--rule", rule, "--freq", bad],
            vec!["loss", "-", "--rule", rule, "--from", bad, "--to", "1GHz"],
            vec!["loss", "-", "--rule", rule, "--points", bad],
            vec!["touchstone", "-", "--rule", rule, "--length", bad],
            vec![
                "touchstone",
                "-",
                "--rule",
                rule,
                "--length",
                "10mm",
                "--z-ref",
                bad,
            ],
            vec!["random", "normal", "--count", bad],
            vec!["crosstalk", "-", "--rule", rule, "--budget", bad],
            vec!["crosstalk", "-", "--rule", rule, "--rise", bad],
            vec!["crosstalk", "-", "--rule", rule, "--length", bad],
            vec!["crosstalk", "-", "--rule", rule, "--spacing", bad],
            vec![
                "reach",
                "-",
                "--rule",
                rule,
                "--nyquist",
                bad,
                "--budget",
                "10",
            ],
            vec![
                "reach", "-", "--rule", rule, "--rate", bad, "--budget", "10",
            ],
            vec![
                "reach",
                "-",
                "--rule",
                rule,
                "--nyquist",
                "4GHz",
                "--budget",
                bad,
            ],
            vec!["laminate", "--style", "2116", "--datasheet-dk", bad],
            vec![
                "laminate",
                "--style",
                "2116",
                "--datasheet-dk",
                "3.9",
                "--resin",
                bad,
            ],
            vec![
                "laminate",
                "--style",
                "2116",
                "--datasheet-dk",
                "3.9",
                "--plies",
                bad,
            ],
            vec!["propose", "-", "--thickness", bad],
            vec!["propose", "-", "--max-plies", bad],
            vec!["field", "-", "--rule", rule, "--tolerance", bad],
            vec!["field-solve", "-", "--rule", rule, "--tolerance", bad],
        ] {
            // `--seed 0` and `--count 0` are legal values, and so is a zero count of random numbers.
            if matches!(*bad, "0" | "-0") && (args.contains(&"--seed") || args.contains(&"--count"))
            {
                continue;
            }
            assert_clean_failure(&args, demo());
        }
    }
    for args in [
        vec!["spread", "-", "--samples", "1000000000000"],
        vec!["random", "normal", "--count", "1000000000000"],
        vec!["loss", "-", "--rule", rule, "--points", "1000000000"],
        vec!["plot", "-", "--rule", rule, "--points", "1000000000"],
        vec!["loss", "-", "--rule", "<script>|\"", "--freq", "1GHz"],
        vec!["draw", "-", "--rule", "\u{1}\u{7f}"],
        vec!["random", "gaussian"],
        vec!["share", "frobnicate", "-"],
        vec!["no-such-command"],
        vec!["calc", "no-such-kind", "--width", "1mm"],
        vec!["calc", "microstrip", "--width"],
        vec!["calc", "microstrip", "--width", "1mm", "--width", "2mm"],
        // A map needs one rule and a known picture or data extension.
        vec!["field", "-", "--map", "m.svg"],
        vec!["field", "-", "--rule", rule, "--map", "m.png"],
        vec!["field-solve", "-", "--map", "m.svg"],
        vec!["field-solve", "-", "--rule", "no such rule"],
        vec!["field-solve", "-", "--rule", rule, "--frobnicate", "1"],
        vec!["thickness", "-", "--rule", rule, "--layer", "\u{1}<b>"],
        vec!["reach", "-", "--link", "\u{1}", "--budget", "3"],
        vec!["laminate", "--style", "<script>", "--datasheet-dk", "3.9"],
    ] {
        assert_clean_failure(&args, demo());
    }
}

#[test]
fn share_decode_rejects_hostile_links_as_arguments() {
    let long = format!("v1.{}", "A".repeat(100_000));
    for link in [
        "",
        "v1.",
        "v2.AAAA",
        "v1.!!!!",
        "v1.eJwDAAAAAAE",
        "https://x.invalid/#v1.",
        long.as_str(),
    ] {
        assert_clean_failure(&["share", "decode", link], Vec::new());
    }
    let text = String::from_utf8_lossy(&garbage(2000)).into_owned();
    assert_clean_failure(&["share", "decode", "-"], text.into_bytes());
}

#[test]
fn batch_reports_bad_lines_and_fails_on_binary_stdin() {
    // Binary garbage is not text: the whole run fails with one line.
    assert_clean_failure(&["batch"], garbage(4096));
    // Text lines that are not cases each get an error object; the run itself succeeds.
    let lines = "null\n{}\n{\"structure\":\"microstrip\",\"width\":\"NaN\",\"height\":\"1e999\",\"dk\":4}\n\
                 {\"structure\":\"microstrip\",\"width\":1e308,\"height\":1e-320,\"dk\":\"inf\"}\n[[[[\n";
    let (code, out, err) = ohmstack(&["batch"], lines.as_bytes());
    assert_eq!(code, 0, "{err}");
    assert!(!err.contains("panicked"), "{err}");
    let rows: Vec<serde_json::Value> = out
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(rows.len(), 5, "{out}");
    assert!(rows.iter().all(|r| r.get("error").is_some()), "{out}");
    // One 10 MB line: rejected as a line, no panic, bounded output.
    let mut big = b"{\"structure\":\"microstrip\",\"width\":\"".to_vec();
    big.resize(10 << 20, b'9');
    big.push(b'\n');
    let (code, out, err) = ohmstack(&["batch"], big);
    assert!(!err.contains("panicked"), "{err}");
    assert_eq!(code, 0, "{err}");
    assert_eq!(out.lines().count(), 1);
    assert!(out.len() < 10_000, "{} bytes of output", out.len());
}

#[test]
fn a_reader_that_goes_away_is_not_a_panic() {
    // Much more than a pipe buffer of output, and the reading end closed at once (`ohmstack ... | head`): once
    // through a buffered writer (`random`), once through `print!` (`touchstone`, a 4-port of 2001 points).
    let cases: [(&[&str], Vec<u8>); 2] = [
        (&["random", "normal", "--count", "1000000"], Vec::new()),
        (
            &[
                "touchstone",
                "-",
                "--rule",
                "USB data 90 Ω",
                "--length",
                "10mm",
                "--points",
                "2001",
            ],
            demo(),
        ),
    ];
    for (args, stdin) in cases {
        let mut child = Command::new(env!("CARGO_BIN_EXE_ohmstack"))
            .args(args)
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("spawn ohmstack");
        drop(child.stdout.take());
        let mut pipe = child.stdin.take().unwrap();
        let _ = pipe.write_all(&stdin);
        drop(pipe);
        let out = child.wait_with_output().unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(!err.contains("panicked"), "{args:?}: {err}");
        assert_ne!(out.status.code(), Some(0), "{args:?}");
        assert!(err.trim_end().lines().count() <= 1, "{args:?}: {err}");
    }
}
