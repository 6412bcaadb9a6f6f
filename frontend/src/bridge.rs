//! The only file that calls the core's physics: turns the edited project into the plan the panels render, and
//! wraps the core's unit parsers and cross-section resolution for the editors. Plain Rust, testable natively.

use ohmstack_core::cross_section;
use ohmstack_core::project::{ImpedanceRule, Solve, Structure};
use ohmstack_core::units::{self, format_sig, LengthUnit};
use ohmstack_core::{plan_with, Plan, PlanOptions, Project, RuleResult, Stackup};

/// Plans the project with loss and a 10 000-sample tolerance spread per rule (the quadratic response surface keeps
/// it fast enough for every keystroke); a bad stack becomes its error message, a bad rule its row's message.
pub fn analyse(project: &Project) -> Result<Plan, String> {
    plan_with(project, &PlanOptions::with_spread()).map_err(|e| e.to_string())
}

/// True when `text` ends in a digit or a decimal point, i.e. carries no unit word.
fn is_bare(text: &str) -> bool {
    text.trim_end()
        .chars()
        .last()
        .is_some_and(|c| c.is_ascii_digit() || c == '.')
}

/// ASCII spelling of a length unit that the core's parser reads.
fn ascii_symbol(unit: LengthUnit) -> &'static str {
    match unit {
        LengthUnit::Um => "um",
        LengthUnit::Mm => "mm",
        LengthUnit::Mil => "mil",
        LengthUnit::In => "in",
    }
}

/// Parses a length typed in the app: a bare number is in the display unit `unit`; `0.1mm`, `4mil`, `1oz` also work.
/// The error is the core's, naming `field`.
pub fn parse_length(field: &str, text: &str, unit: LengthUnit) -> Result<f64, String> {
    let with_unit = if is_bare(text) {
        format!("{}{}", text.trim(), ascii_symbol(unit))
    } else {
        text.to_string()
    };
    units::parse_length(field, &with_unit).map_err(|e| match e {
        // Report what the user typed, not the text with the unit we appended.
        ohmstack_core::Error::BadQuantity {
            field, expected, ..
        } => ohmstack_core::Error::BadQuantity {
            field,
            text: text.to_string(),
            expected,
        }
        .to_string(),
        other => other.to_string(),
    })
}

/// Parses a frequency; a bare number is in GHz.
pub fn parse_frequency_ghz(field: &str, text: &str) -> Result<f64, String> {
    let with_unit = if is_bare(text) {
        format!("{}GHz", text.trim())
    } else {
        text.to_string()
    };
    units::parse_frequency(field, &with_unit).map_err(|e| match e {
        ohmstack_core::Error::BadQuantity {
            field, expected, ..
        } => ohmstack_core::Error::BadQuantity {
            field,
            text: text.to_string(),
            expected,
        }
        .to_string(),
        other => other.to_string(),
    })
}

/// Parses a plain number with optional allowed unit words.
pub fn parse_number(field: &str, text: &str, suffixes: &[&str]) -> Result<f64, String> {
    units::parse_number(field, text, suffixes).map_err(|e| e.to_string())
}

/// A stored length as editable text in `unit` (no unit word: the column header says it).
pub fn length_text(metres: f64, unit: LengthUnit) -> String {
    format_sig(unit.from_m(metres), 6)
}

/// A length with its unit, for read-only cells.
pub fn length_label(metres: f64, unit: LengthUnit) -> String {
    units::format_length(metres, unit)
}

/// A frequency in GHz as editable text.
pub fn ghz_text(hz: f64) -> String {
    format_sig(hz / 1e9, 6)
}

/// A probe rule on `layer` with `structure`, carrying every optional dimension so only the geometry decides.
fn probe(layer: &str, structure: Structure, partner: Option<&str>) -> ImpedanceRule {
    ImpedanceRule {
        name: String::new(),
        layer: layer.to_string(),
        structure,
        target_ohm: 50.0,
        tolerance_pct: 10.0,
        solve: Solve::Nothing,
        width_m: 100e-6,
        spacing_m: Some(100e-6),
        gap_m: Some(100e-6),
        partner_layer: partner.map(str::to_string),
        references: Vec::new(),
    }
}

/// Copper layers that can carry the second trace of a broadside pair routed on `layer`.
pub fn broadside_partners(stackup: &Stackup, layer: &str) -> Vec<String> {
    stackup
        .layers
        .iter()
        .filter_map(|l| l.copper())
        .filter(|c| c.name != layer)
        .filter(|c| {
            cross_section::resolve(
                stackup,
                &probe(layer, Structure::BroadsidePair, Some(&c.name)),
            )
            .is_ok()
        })
        .map(|c| c.name.clone())
        .collect()
}

/// The structures the position of `layer` in the stack allows (which planes it sees decide it).
pub fn structures_for(stackup: &Stackup, layer: &str) -> Vec<Structure> {
    Structure::ALL
        .into_iter()
        .filter(|&s| match s {
            Structure::BroadsidePair => !broadside_partners(stackup, layer).is_empty(),
            _ => cross_section::resolve(stackup, &probe(layer, s, None)).is_ok(),
        })
        .collect()
}

/// Loss at the analysis frequency, when the core provides it: (frequency Hz, dB/in, dB/cm) of the signal mode.
pub fn loss_at(result: &RuleResult) -> Option<(f64, f64, f64)> {
    loss_in(&serde_json::to_value(result).ok()?)
}

/// [`loss_at`] on the serialised result (read by field name so the app builds with or without the loss module).
fn loss_in(v: &serde_json::Value) -> Option<(f64, f64, f64)> {
    let loss = v.get("loss")?;
    let mode = loss.get("line").or_else(|| loss.get("odd"))?;
    let total = mode.get("total")?;
    Some((
        loss.get("freq_hz")?.as_f64()?,
        total.get("db_per_in")?.as_f64()?,
        total.get("db_per_cm")?.as_f64()?,
    ))
}

/// The tolerance spread, when the core provides it: (min Ω, max Ω, yield % if sampled).
pub fn spread_of(result: &RuleResult) -> Option<(f64, f64, Option<f64>)> {
    spread_in(&serde_json::to_value(result).ok()?)
}

/// [`spread_of`] on the serialised result.
fn spread_in(v: &serde_json::Value) -> Option<(f64, f64, Option<f64>)> {
    let spread = v.get("spread")?;
    if let Some(mc) = spread.get("monte_carlo") {
        if let (Some(lo), Some(hi)) = (
            mc.get("min_ohm").and_then(|x| x.as_f64()),
            mc.get("max_ohm").and_then(|x| x.as_f64()),
        ) {
            return Some((lo, hi, mc.get("yield_pct").and_then(|x| x.as_f64())));
        }
    }
    let corners = spread.get("corners")?;
    Some((
        corners.get("min_ohm")?.as_f64()?,
        corners.get("max_ohm")?.as_f64()?,
        None,
    ))
}

/// Common-mode impedance of a pair result, Ω.
pub fn z_common(result: &RuleResult) -> Option<f64> {
    match &result.analysis {
        ohmstack_core::models::Analysis::Pair(p) => Some(p.z_common()),
        ohmstack_core::models::Analysis::Single(_) => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bare_numbers_take_the_display_unit() {
        // 1 mil = 25.4 µm exactly (international inch, 1959).
        let m = parse_length("w", "5", LengthUnit::Mil).unwrap();
        assert!((m - 127e-6).abs() < 1e-15);
        let m = parse_length("w", "0.1mm", LengthUnit::Mil).unwrap();
        assert!((m - 1e-4).abs() < 1e-15);
        let m = parse_length("w", "0.", LengthUnit::Mm).unwrap();
        assert_eq!(m, 0.0);
    }

    #[test]
    fn bad_text_reports_what_was_typed() {
        let e = parse_length("width", "abc", LengthUnit::Um).unwrap_err();
        assert!(e.contains("\"abc\"") && e.starts_with("width"), "{e}");
        let e = parse_length("width", "12", LengthUnit::Um);
        assert!(e.is_ok());
    }

    #[test]
    fn loss_and_spread_are_read_when_present() {
        // The shapes the loss and spread modules serialise (LossAt.line/odd.total, SpreadSummary.monte_carlo).
        let v = serde_json::json!({
            "loss": {"freq_hz": 2e9, "odd": {"total": {"db_per_m": 10.0, "db_per_cm": 0.1, "db_per_in": 0.254}}},
            "spread": {"corners": {"min_ohm": 45.0, "max_ohm": 55.0},
                       "monte_carlo": {"min_ohm": 46.0, "max_ohm": 54.0, "yield_pct": 97.5}}
        });
        assert_eq!(loss_in(&v), Some((2e9, 0.254, 0.1)));
        assert_eq!(spread_in(&v), Some((46.0, 54.0, Some(97.5))));
        let corners_only =
            serde_json::json!({"spread": {"corners": {"min_ohm": 45.0, "max_ohm": 55.0}}});
        assert_eq!(spread_in(&corners_only), Some((45.0, 55.0, None)));
        // The app plans with loss and spread: the demo's first rule carries both.
        let p = ohmstack_core::demo::project();
        let plan = analyse(&p).unwrap();
        let r = plan.rules[0].ok().unwrap();
        assert!(loss_at(r).is_some() && spread_of(r).is_some());
    }

    #[test]
    fn demo_top_layer_allows_microstrip_structures_not_broadside() {
        let p = ohmstack_core::demo::project();
        let s = structures_for(&p.stackup, "L1 Top");
        assert!(s.contains(&Structure::Single) && s.contains(&Structure::EdgePair));
        assert!(!s.contains(&Structure::BroadsidePair));
        // L3 and L4 sit between the same two planes: a broadside pair is possible.
        assert_eq!(broadside_partners(&p.stackup, "L3 Inner"), vec!["L4 Inner"]);
    }
}

/// A field check of one rule, run in slices by the rule card.
pub type FieldJob = ohmstack_core::field::rules::RuleFieldJob;

/// What the rule card shows of a finished field check.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldSummary {
    pub field_ohm: f64,
    pub error_pct: f64,
    pub difference_pct: Option<f64>,
    pub band_pct: Option<f64>,
    pub outside_band: bool,
    pub notes: Vec<String>,
}

/// Starts the field check of rule `index` with the solver's default accuracy.
pub fn field_job(project: &Project, index: usize) -> Result<FieldJob, String> {
    let rule = project
        .rules
        .get(index)
        .ok_or_else(|| format!("no rule {index}"))?;
    FieldJob::start(project, rule, ohmstack_core::field::FieldOptions::default())
        .map_err(|e| e.to_string())
}

/// The finished check in plain figures (an unfinished job reads as an error).
pub fn field_summary(job: &FieldJob) -> Result<FieldSummary, String> {
    let check = job
        .finish()
        .ok_or("the field solve has not finished")?
        .map_err(|e| e.to_string())?;
    let c = &check.comparison;
    let outside_band = matches!((c.difference_pct, c.band_pct), (Some(d), Some(b)) if d.abs() > b + c.field_error_pct);
    let mut notes: Vec<String> = c.warnings.iter().map(|w| w.message.clone()).collect();
    notes.extend(check.field.warnings.iter().map(|w| w.message.clone()));
    Ok(FieldSummary {
        field_ohm: c.field_ohm,
        error_pct: c.field_error_pct,
        difference_pct: c.difference_pct,
        band_pct: c.band_pct,
        outside_band,
        notes,
    })
}
