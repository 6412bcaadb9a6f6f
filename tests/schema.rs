//! Schema goldens: one project file per schema version ever written (tests/fixtures/schema<N>_*golden.json),
//! which must open and plan without error forever. Together they use every optional field and every structure
//! kind; see tests/fixtures/README.md for how a new schema version keeps them passing.

use ohmstack_core::{plan, plan_with, PlanOptions, Project, RuleOutcome, Structure};
use std::collections::BTreeSet;
use std::path::Path;

fn fixture(name: &str) -> String {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures")
        .join(name);
    std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// Every golden ever written. A new schema version appends its files; none is ever removed or regenerated.
const GOLDENS: &[&str] = &["schema1_golden.json", "schema1_minimal_golden.json"];

fn open(name: &str) -> Project {
    Project::from_json(&fixture(name)).unwrap_or_else(|e| panic!("{name} no longer opens: {e}"))
}

#[test]
fn every_schema_golden_opens_and_plans_without_error() {
    for name in GOLDENS {
        let project = open(name);
        let plan = plan_with(&project, &PlanOptions::default()).unwrap();
        assert_eq!(plan.rules.len(), project.rules.len(), "{name}");
        for row in &plan.rules {
            if let RuleOutcome::Error {
                name: rule,
                message,
            } = row
            {
                panic!("{name}: rule {rule:?} failed: {message}");
            }
        }
    }
}

#[test]
fn the_goldens_cover_every_structure_and_family() {
    let mut structures = BTreeSet::new();
    let mut families = BTreeSet::new();
    for name in GOLDENS {
        let project = open(name);
        for row in plan(&project).unwrap().rules {
            let r = row.ok().expect("every golden rule plans").clone();
            structures.insert(r.structure);
            families.insert(r.family);
        }
    }
    for s in Structure::ALL {
        assert!(
            structures.contains(s.label()),
            "no golden rule is a {}",
            s.label()
        );
    }
    for f in [
        "surface microstrip",
        "coated microstrip",
        "embedded microstrip",
        "dual stripline",
        "offset stripline",
        "broadside-coupled stripline",
        "coplanar without plane",
    ] {
        assert!(
            families.contains(f),
            "no golden rule is a {f}: {families:?}"
        );
    }
}

#[test]
fn the_full_golden_sets_every_optional_field() {
    // Reading the golden as plain JSON: an optional field absent from it would not be tested for migration.
    let v: serde_json::Value = serde_json::from_str(&fixture("schema1_golden.json")).unwrap();
    for key in [
        "revision",
        "units",
        "analysis_freq_hz",
        "fab",
        "loss",
        "process",
    ] {
        assert!(v.get(key).is_some(), "top-level {key} missing");
    }
    for key in ["etch_factor", "thickness_tolerance_pct"] {
        assert!(v["fab"].get(key).is_some(), "fab.{key} missing");
    }
    let layers = v["stackup"].as_array().unwrap();
    let any_layer = |key: &str| layers.iter().any(|l| l.get(key).is_some());
    for key in ["fill_pct", "roughness", "material", "spec_freq_hz"] {
        assert!(any_layer(key), "no layer sets {key}");
    }
    let rules = v["rules"].as_array().unwrap();
    let any_rule = |key: &str| rules.iter().any(|r| r.get(key).is_some());
    for key in [
        "tolerance_pct",
        "solve",
        "spacing_m",
        "gap_m",
        "partner_layer",
        "references",
    ] {
        assert!(any_rule(key), "no rule sets {key}");
    }
    let p = open("schema1_golden.json");
    let process = p.process.expect("process set");
    assert!(!process.layers.is_empty());
    assert!(process.layers.iter().any(|l| l.thickness.is_some()));
    assert!(process.layers.iter().any(|l| l.dk.is_some()));
}

#[test]
fn the_full_golden_survives_a_write_and_read() {
    let p = open("schema1_golden.json");
    assert_eq!(Project::from_json(&p.to_json()).unwrap(), p);
}
