//! Help, version and completions of the `ohmstack` binary, and clap's argument errors in the house style: every
//! command answers `--help` (exit 0, on stdout), the version is the crate's, completion scripts name every
//! command, and a malformed command line is one `error: ` line naming the option, with exit status 2.

mod common;
use common::ohmstack;

/// Every command, as typed. A new command belongs here (and in the README's list).
const COMMANDS: &[&[&str]] = &[
    &["demo"],
    &["analyze"],
    &["analyse"],
    &["calc"],
    &["solve"],
    &["spread"],
    &["random"],
    &["batch"],
    &["kinds"],
    &["materials"],
    &["field"],
    &["field-calc"],
    &["field-solve"],
    &["share"],
    &["share", "encode"],
    &["share", "decode"],
    &["notes"],
    &["draw"],
    &["plot"],
    &["loss"],
    &["touchstone"],
    &["crosstalk"],
    &["reach"],
    &["thickness"],
    &["laminate"],
    &["propose"],
    &["completions"],
];

#[test]
fn every_command_answers_help() {
    for cmd in COMMANDS {
        for flag in ["--help", "-h"] {
            let mut args = cmd.to_vec();
            args.push(flag);
            let (code, out, err) = ohmstack(&args, "");
            assert_eq!(code, 0, "{args:?}: {err}");
            assert!(err.is_empty(), "{args:?}: {err}");
            // The alias answers with the command's own name.
            let name = cmd.join(" ").replace("analyse", "analyze");
            assert!(
                out.contains(&format!("Usage: ohmstack {name}")),
                "{args:?}: {out}"
            );
        }
    }
    // Options come before or after the positional arguments alike; `--help` wins over a missing FILE.
    let (code, out, _) = ohmstack(&["loss", "-", "--rule", "x", "--help"], "");
    assert_eq!(code, 0);
    assert!(
        out.contains("--freq") && out.contains("--foil-model"),
        "{out}"
    );
    let (code, out, _) = ohmstack(&["help", "touchstone"], "");
    assert_eq!(code, 0);
    assert!(out.contains("--z-ref"), "{out}");
}

#[test]
fn the_overview_lists_every_command() {
    for args in [&[][..], &["--help"], &["help"]] {
        let (code, out, err) = ohmstack(args, "");
        assert_eq!(code, 0, "{args:?}: {err}");
        assert!(out.contains("Usage: ohmstack"), "{out}");
        for cmd in COMMANDS
            .iter()
            .filter(|c| c.len() == 1 && c[0] != "analyse")
        {
            assert!(
                out.lines()
                    .any(|l| l.trim_start().starts_with(&format!("{} ", cmd[0]))),
                "{} missing in\n{out}",
                cmd[0]
            );
        }
    }
}

#[test]
fn version_is_the_crates() {
    for flag in ["--version", "-V"] {
        let (code, out, err) = ohmstack(&[flag], "");
        assert_eq!(code, 0, "{err}");
        assert_eq!(
            out.trim_end(),
            format!("ohmstack {}", env!("CARGO_PKG_VERSION"))
        );
    }
}

#[test]
fn completions_name_every_command_and_kind() {
    for shell in ["bash", "zsh", "fish", "elvish", "powershell"] {
        let (code, out, err) = ohmstack(&["completions", shell], "");
        assert_eq!(code, 0, "{shell}: {err}");
        for cmd in COMMANDS.iter().map(|c| c[c.len() - 1]) {
            assert!(out.contains(cmd), "{shell}: {cmd} missing");
        }
        // Options come from the same definitions that parse the arguments.
        for word in ["foil-model", "z-ref"] {
            assert!(out.contains(word), "{shell}: {word} missing");
        }
        // So do an option's choices, and for bash and zsh the structure KINDs (the other generators of
        // clap_complete leave values, or positional ones, to the shell).
        if matches!(shell, "bash" | "zsh" | "fish") {
            assert!(out.contains("very-low-profile"), "{shell}: foils missing");
        }
        if matches!(shell, "bash" | "zsh") {
            assert!(
                out.contains("grounded-coplanar-pair"),
                "{shell}: kinds missing"
            );
        }
    }
    let (code, _, err) = ohmstack(&["completions", "tcsh"], "");
    assert_eq!(code, 2);
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(
        err.starts_with("error: SHELL: \"tcsh\" is not bash"),
        "{err}"
    );
}

#[test]
fn argument_errors_are_one_line_naming_the_option() {
    let cases: &[(&[&str], &str)] = &[
        (
            &["calc", "microstrip", "--colour", "red"],
            "error: --colour: not an option of calc",
        ),
        (
            &["calc", "microstrip", "--width"],
            "error: --width: missing value",
        ),
        (
            &["calc", "microstrip", "--width", "1mm", "--width", "2mm"],
            "error: --width: given twice",
        ),
        (
            &["calc", "microstrip", "--width", "abc"],
            "error: --width: cannot read \"abc\"",
        ),
        (
            &["solve", "microstrip", "--height", "1mm", "--dk", "4"],
            "error: --target: missing",
        ),
        (&["analyze"], "error: FILE: missing"),
        (
            &["analyze", "a.json", "b.json"],
            "error: \"b.json\": unexpected argument to analyze",
        ),
        (
            &["loss", "-", "--rule", "r", "--freq", "1GHz", "--to", "2GHz"],
            "error: --freq: cannot be used with --to",
        ),
        (
            &["notes", "-", "--format", "pdf"],
            "error: --format: \"pdf\" is not md or csv",
        ),
        (
            &["share"],
            "error: share: missing command (encode or decode)",
        ),
        (
            &["share", "frobnicate"],
            "error: unknown command \"frobnicate\" for share",
        ),
        (
            &["frobnicate"],
            "error: unknown command \"frobnicate\"; run `ohmstack --help`",
        ),
        (&["demo", "extra"], "error: \"extra\": unexpected argument"),
        (
            &["kinds", "--json"],
            "error: --json: not an option of kinds",
        ),
        (
            &["calc", "microstrip", "--target", "50"],
            "error: --target: only `solve` takes a target",
        ),
        (
            &["field-calc", "microstrip", "--target=50"],
            "error: --target: field-calc analyses the given width",
        ),
    ];
    for (args, start) in cases {
        let (code, out, err) = ohmstack(args, "");
        assert_eq!(code, 2, "{args:?}: {out}{err}");
        assert_eq!(err.lines().count(), 1, "{args:?}: {err}");
        assert!(err.starts_with(start), "{args:?}: {err}");
        assert!(out.is_empty(), "{args:?}: {out}");
    }
}

#[test]
fn values_that_start_with_a_dash_reach_the_core() {
    // A negative value is a value, not an option; the core's range check answers for it.
    let (code, _, err) = ohmstack(
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
        "",
    );
    assert_eq!(code, 2);
    assert!(
        err.starts_with("error: width: must be greater than zero"),
        "{err}"
    );
    // The `--key=value` form reads the same as `--key value`.
    let (code, out, err) = ohmstack(
        &[
            "calc",
            "microstrip",
            "--width=0.3mm",
            "--height=0.17mm",
            "--thickness=35um",
            "--dk=4.2",
            "--json",
        ],
        "",
    );
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("z0_ohm"), "{out}");
}
