//! The `share`, `notes` and `draw` commands end to end: link round trips through the binary, the golden links,
//! hostile links giving one-line errors (never a panic), fab notes in both formats and SVG drawings.

mod common;
use common::ohmstack;

const FIXTURE: &str = concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/../tests/fixtures/eight_layer_ten_rules.json"
);

#[test]
fn share_encode_decode_round_trips() {
    let (_, demo, _) = ohmstack(&["demo"], "");
    let (code, link, err) = ohmstack(&["share", "encode", "-"], &demo);
    assert_eq!(code, 0, "{err}");
    assert!(link.starts_with("v1."), "{link}");
    let (code, back, err) = ohmstack(&["share", "decode", link.trim()], "");
    assert_eq!(code, 0, "{err}");
    assert_eq!(back, demo);
    let (code, back, _) = ohmstack(&["share", "decode", "-"], format!("https://x.test/#{link}"));
    assert_eq!(code, 0);
    assert_eq!(back, demo);
}

#[test]
fn golden_fixture_link_decodes_to_the_fixture() {
    let link = include_str!("../../tests/fixtures/eight_layer_ten_rules.link");
    let (code, json, err) = ohmstack(&["share", "decode", link.trim()], "");
    assert_eq!(code, 0, "{err}");
    let got: serde_json::Value = serde_json::from_str(&json).unwrap();
    // The fixture is a schema-1 file: the link and the file go through the same migration on read.
    let fixture =
        ohmstack_core::Project::from_json(&std::fs::read_to_string(FIXTURE).unwrap()).unwrap();
    let want: serde_json::Value = serde_json::from_str(&fixture.to_json()).unwrap();
    assert_eq!(got, want);
}

#[test]
fn hostile_links_are_one_line_errors() {
    let (_, demo, _) = ohmstack(&["demo"], "");
    let (_, link, _) = ohmstack(&["share", "encode", "-"], &demo);
    let link = link.trim();
    let long = format!("v1.{}", "A".repeat(40_000));
    let cases: Vec<(String, &str)> = vec![
        (link[..link.len() - 9].to_string(), "truncated"),
        (link.replacen("v1.", "v7.", 1), "version 7"),
        ("v1.abc$def".to_string(), "not base64"),
        ("hello".to_string(), "not an ohmstack link"),
        (long, "too long"),
        (format!("{}A{}", &link[..40], &link[41..]), "share link"),
    ];
    for (bad, expect) in cases {
        let (code, out, err) = ohmstack(&["share", "decode", &bad], "");
        assert_ne!(code, 0, "{bad}: {out}");
        assert!(!err.contains("panicked"), "{err}");
        assert_eq!(err.lines().count(), 1, "{err}");
        assert!(err.contains(expect), "{expect}: {err}");
    }
}

#[test]
fn notes_in_both_formats() {
    let (code, md, err) = ohmstack(&["notes", FIXTURE], "");
    assert_eq!(code, 0, "{err}");
    assert!(md.starts_with("# Fab notes: "), "{md}");
    assert!(md.contains("| SE 50 top |"), "{md}");
    let (code, csv, err) = ohmstack(&["notes", FIXTURE, "--format", "csv"], "");
    assert_eq!(code, 0, "{err}");
    assert!(csv.starts_with("layer,type,material,"), "{csv}");
    assert!(csv.contains("\r\n"));
    let (code, _, err) = ohmstack(&["notes", FIXTURE, "--format", "pdf"], "");
    assert_ne!(code, 0);
    assert!(err.contains("--format"), "{err}");
}

#[test]
fn draw_writes_svg() {
    let (code, svg, err) = ohmstack(&["draw", FIXTURE, "--rule", "SE 50 top"], "");
    assert_eq!(code, 0, "{err}");
    assert!(svg.starts_with("<svg ") && svg.trim_end().ends_with("</svg>"));
    assert!(svg.contains("class=\"copper trace\""));
    let out = std::env::temp_dir().join(format!("ohmstack-draw-{}.svg", std::process::id()));
    let out_s = out.to_str().unwrap();
    let (code, _, err) = ohmstack(
        &["draw", "-", "-o", out_s],
        std::fs::read_to_string(FIXTURE).unwrap(),
    );
    assert_eq!(code, 0, "{err}");
    let written = std::fs::read_to_string(&out).unwrap();
    let _ = std::fs::remove_file(&out);
    assert!(written.contains("L5 GND"));
    let (code, _, err) = ohmstack(&["draw", FIXTURE, "--rule", "nope"], "");
    assert_ne!(code, 0);
    assert!(err.contains("--rule"), "{err}");
}
