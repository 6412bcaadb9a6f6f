//! Regression tests for inputs found by fuzzing (fuzz/, `cargo xtask fuzz`) and by the hostile-input suites.
//! Each test holds the minimised input verbatim and names the target it came from: `fuzz_<target>_<what>`.

use ohmstack_core::share;
use ohmstack_core::Project;

/// Hostile link texts that must all come back as typed errors (hand-written seeds of the share_decode target).
#[test]
fn hostile_share_links_are_typed_errors() {
    let long = format!("v1.{}", "A".repeat(share::MAX_LINK_CHARS + 1));
    for link in [
        "",
        "#",
        "v1.",
        "v1",
        "v999999999999999999999.AAAA",
        "v1.====",
        "v1.\u{0}\u{0}",
        "v1.eJw",
        "v1.eJwDAAAAAAE",
        "https://example.invalid/#v1.%%%",
        "v1.日本語",
        long.as_str(),
    ] {
        assert!(share::decode(link).is_err(), "{link:?} decoded");
    }
}

/// Hostile project texts that must all come back as typed errors.
#[test]
fn hostile_project_json_is_a_typed_error() {
    let deep = "[".repeat(100_000);
    for text in [
        "",
        "null",
        "{}",
        "{\"schema\": 1}",
        "{\"schema\": 1e400}",
        "{\"schema\": -1}",
        "{\"schema\": 18446744073709551617}",
        "{\"schema\": 1, \"title\": \"x\", \"stackup\": [], \"rules\": []}",
        "{\"schema\": 1, \"title\": \"x\", \"analysis_freq_hz\": 1e999, \"stackup\": []}",
        deep.as_str(),
    ] {
        assert!(Project::from_json(text).is_err(), "{text:.60} parsed");
    }
}
