//! Regression tests for inputs found by fuzzing (fuzz/, `cargo xtask fuzz`) and by the hostile-input suites.
//! Each test holds the minimised input verbatim and names the target it came from: `fuzz_<target>_<what>`.

use ohmstack_core::design::share;
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

/// Found by the CLI hostile-input suite (cli/tests/hostile.rs): a subnormal width (1e-320 m) passed the
/// "positive" check and every model returned `Ok` with a NaN impedance. Lengths now have a 1e-15 m floor.
#[test]
fn hostile_cli_subnormal_width_is_an_error_not_nan() {
    use ohmstack_core::plan::case;
    use std::collections::BTreeMap;
    for (field, value) in [
        ("width", "1e-320"),
        ("height", "1e-320"),
        ("thickness", "1e-320"),
        ("width", "1e-16"),
    ] {
        let mut fields: BTreeMap<String, String> = [
            ("width", "0.3mm"),
            ("height", "0.17mm"),
            ("thickness", "35um"),
            ("dk", "4.2"),
        ]
        .into_iter()
        .map(|(k, v)| (k.to_string(), v.to_string()))
        .collect();
        fields.insert(field.into(), value.into());
        let result = case::parse("microstrip", &fields).and_then(|c| c.analyze());
        assert!(result.is_err(), "{field} = {value} accepted: {result:?}");
    }
}

/// The extremes that remain legal (1e-15 m to 0.5 m in any combination) give finite figures or a typed error.
#[test]
fn legal_extreme_lengths_give_finite_results_or_errors() {
    use ohmstack_core::plan::case;
    use std::collections::BTreeMap;
    let kinds = [
        "microstrip",
        "coated-microstrip",
        "embedded-microstrip",
        "stripline",
        "edge-coupled-microstrip",
        "edge-coupled-stripline",
        "broadside-stripline",
        "coplanar",
        "grounded-coplanar",
        "coplanar-pair",
        "grounded-coplanar-pair",
    ];
    for kind in kinds {
        for w in ["1e-15", "0.5"] {
            for h in ["1e-15", "0.5"] {
                let fields: BTreeMap<String, String> = [
                    ("width", w),
                    ("height", h),
                    ("height2", h),
                    ("thickness", "0"),
                    ("dk", "4"),
                    ("spacing", w),
                    ("separation", h),
                ]
                .into_iter()
                .chain(match kind {
                    "coated-microstrip" => vec![("mask-thickness", h), ("mask-dk", "3.5")],
                    "embedded-microstrip" => vec![("cover", h), ("cover-dk", "4")],
                    // A gap makes a stripline coplanar (field engines only); only the coplanar kinds get one.
                    k if k.contains("coplanar") => vec![("gap", w)],
                    _ => vec![],
                })
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect();
                // Keep only the fields the kind knows (parse rejects the others by name).
                let mut own = fields.clone();
                loop {
                    match case::parse(kind, &own) {
                        Err(ohmstack_core::Error::Invalid { field, reason })
                            if reason.starts_with("not a field") =>
                        {
                            own.remove(&field);
                        }
                        _ => break,
                    }
                }
                if let Ok(e) = case::parse(kind, &own).and_then(|c| c.analyze()) {
                    let z = e.analysis.controlled();
                    assert!(z.is_finite() && z > 0.0, "{kind} w={w} h={h}: Z = {z}");
                }
            }
        }
    }
}

/// Found by the `models` fuzz target (crash-74d94ef2…): a coplanar strip far thicker than wide (t/w ≈ 1240)
/// made the Gupta thickness widening negative, the effective modulus negative, and Z0 NaN inside an `Ok`.
#[test]
fn fuzz_models_coplanar_thick_narrow_strip() {
    use ohmstack_core::closed_form;
    use ohmstack_core::section::Dims;
    use ohmstack_core::section::{CrossSection, Medium};
    use ohmstack_core::Structure;
    let cs = CrossSection {
        loss: Default::default(),
        layering: None,
        medium: Medium::NoPlane {
            h: 0.04725843667006398,
            er: 1.0054834447335024,
        },
        t: 0.0033080905669044783,
        references: Vec::new(),
        warnings: Vec::new(),
    };
    let dims = Dims {
        w: 2.6690358627109957e-06,
        s: None,
        gap: Some(5.859375e-07),
    };
    for structure in [Structure::Coplanar, Structure::CoplanarPair] {
        let dims = Dims {
            s: Some(dims.w),
            ..dims
        };
        if let Ok(e) = closed_form::evaluate(&cs, structure, &dims) {
            let z = e.analysis.controlled();
            assert!(z.is_finite() && z > 0.0, "{structure:?}: Z = {z}");
        }
    }
}

/// Found by `plan_results_that_come_back_ok_are_finite` (tests/properties.rs): synthesis hit the target to the
/// last bit, Γ = 0, and the return loss was +∞ (written as `null` in the plan's JSON).
#[test]
fn proptest_plan_exact_match_return_loss_is_finite() {
    use ohmstack_core::section::lines::{return_loss_db, MAX_RETURN_LOSS_DB};
    assert_eq!(return_loss_db(0.0), MAX_RETURN_LOSS_DB);
    assert_eq!(return_loss_db(-0.0), MAX_RETURN_LOSS_DB);
    // Ordinary values are unchanged: |Γ| = 0.1 is 20 dB (definition).
    assert!((return_loss_db(0.1) - 20.0).abs() < 1e-12);
    assert!((return_loss_db(-0.01) - 40.0).abs() < 1e-12);
}
