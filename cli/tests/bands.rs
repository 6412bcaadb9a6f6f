//! `ohmstack analyze` says a wide measured closed-form band next to the number, in the table and the JSON, and
//! `ohmstack field` compares against that band: the 12-layer fixture's "Pair 90 grounded coplanar" (a coplanar
//! pair under mask, which once read 90.00 Ω "within ±10 %" while the field solver gave 128 Ω).

mod common;
use common::ohmstack;

const FIXTURE: &str = include_str!("../../tests/fixtures/twelve_layer_sixteen_rules.json");
const RULE: &str = "Pair 90 grounded coplanar";

#[test]
fn a_wide_band_sits_next_to_the_number() {
    let (code, table, err) = ohmstack(&["analyze", "-", "--engine", "closed-form"], FIXTURE);
    assert_eq!(code, 0, "{err}");
    let row = table
        .lines()
        .find(|l| l.starts_with(RULE))
        .expect("the rule's row");
    // On the row itself, right after the impedance, not only in a note below it.
    assert!(row.contains("90.00 (±"), "{row}");
    // A family whose band is narrow shows the bare number (symmetric stripline, ±3.5 %).
    let row = table
        .lines()
        .find(|l| l.starts_with("SE 50 centred stripline"))
        .unwrap();
    assert!(!row.contains("(±"), "{row}");

    let (code, json, err) = ohmstack(
        &["analyze", "-", "--json", "--engine", "closed-form"],
        FIXTURE,
    );
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let rule = v["rules"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["name"] == RULE)
        .unwrap();
    let band = rule["model_band_pct"].as_f64().expect("model_band_pct");
    assert!(band > 5.0, "{band}");
    // The odd mode's εeff stays below the largest Dk in the cross-section (mask 3.8, prepreg 3.5): it was 6.1.
    assert!(rule["analysis"]["eps_eff_odd"].as_f64().unwrap() < 3.8);
}

#[test]
fn the_field_check_uses_the_same_band_and_finds_the_rule_inside_it() {
    let (code, out, err) = ohmstack(&["field", "-", "--rule", RULE, "--json"], FIXTURE);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let check = if v.is_array() { &v[0] } else { &v };
    let c = &check["comparison"];
    let (diff, band, field_err) = (
        c["difference_pct"].as_f64().unwrap(),
        c["band_pct"].as_f64().unwrap(),
        c["field_error_pct"].as_f64().unwrap(),
    );
    assert!(diff.abs() <= band + field_err, "{c}");
    let (_, json, _) = ohmstack(
        &["analyze", "-", "--json", "--engine", "closed-form"],
        FIXTURE,
    );
    let plan: serde_json::Value = serde_json::from_str(&json).unwrap();
    let rule = plan["rules"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["name"] == RULE)
        .unwrap();
    assert_eq!(rule["model_band_pct"].as_f64(), Some(band));
}
