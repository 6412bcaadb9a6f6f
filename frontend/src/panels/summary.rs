//! The board summary at the top of the page: one row per net class (rule) with its layer, width and spacing, its
//! routing rules (spacing to a neighbour, reach, a pair's weave skew, once computed), the impedance against its target, the verdict and the engine behind it, under one line that says whether the
//! board works. The verdict is the field engine's when it checked a closed-form figure (the board is built to
//! these dimensions and the field figure is what it will measure). Reads the plan only; computes no physics.

use ohmstack_core::base::error::compact;
use ohmstack_core::base::units::{format_length, format_sig, LengthUnit};
use ohmstack_core::engine::is_field_method;
use ohmstack_core::{Plan, RuleOutcome};
use std::rc::Rc;
use yew::prelude::*;

/// How a net class stands.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Verdict {
    Within,
    Outside,
    Failed,
}

/// One summary row, as text.
#[derive(Debug, Clone, PartialEq)]
pub struct SummaryRow {
    pub name: String,
    pub layer: String,
    /// "144 µm" or "139 µm / 150 µm" (width / spacing).
    pub geometry: String,
    /// The routing rule: "≥ 780 µm" to an identical neighbour for the crosstalk budget, "—" where none applies
    /// (coplanar ground copper, a broadside pair), "…" while it is being computed.
    pub neighbour: String,
    /// The longest run inside the rule's link budget, "428 mm at 4 GHz"; empty without one.
    pub reach: String,
    /// A pair's worst-case weave skew along the weave, "0.34 ps/mm"; empty without one.
    pub skew: String,
    /// "50.00 Ω (target 50 ± 10 %)".
    pub impedance: String,
    /// Signed deviation from the target, "+0.4 %".
    pub deviation: String,
    pub verdict: Verdict,
    /// Which engine made the figure: "field solver", "closed form, field-checked", "closed form".
    pub engine: &'static str,
    /// Why the rule failed, compact.
    pub error: Option<String>,
}

/// The summary of a plan: its rows and the one-line answer.
#[derive(Debug, Clone, PartialEq)]
pub struct Summary {
    pub rows: Vec<SummaryRow>,
    pub headline: String,
    pub works: bool,
}

/// Builds the summary of `plan` with lengths in `unit`.
pub fn summarize(plan: &Plan, unit: LengthUnit) -> Summary {
    let rows: Vec<SummaryRow> = plan
        .rules
        .iter()
        .map(|outcome| match outcome {
            RuleOutcome::Ok(r) => {
                let (z, deviation, within, engine) =
                    match (&r.field_check, is_field_method(&r.method)) {
                        (_, true) => (
                            r.impedance_ohm,
                            r.deviation_pct,
                            r.within_tolerance,
                            "field solver",
                        ),
                        (Some(c), false) => (
                            c.impedance_ohm,
                            c.deviation_pct,
                            c.within_tolerance,
                            "closed form, field-checked",
                        ),
                        (None, false) => (
                            r.impedance_ohm,
                            r.deviation_pct,
                            r.within_tolerance,
                            "closed form",
                        ),
                    };
                let mut geometry = format_length(r.width_m, unit);
                if let Some(s) = r.spacing_m {
                    geometry.push_str(&format!(" / {}", format_length(s, unit)));
                }
                let neighbour = match &r.routing {
                    None => "…".to_string(),
                    Some(rt) => match &rt.spacing {
                        Some(sp) => match sp.min_spacing_m {
                            Some(s) => format!(
                                "≥ {}",
                                ohmstack_core::base::units::format_length_at_least(s, unit)
                            ),
                            None => "none within budget".to_string(),
                        },
                        None => "—".to_string(),
                    },
                };
                let reach = r
                    .routing
                    .as_ref()
                    .and_then(|rt| rt.reach.as_ref())
                    .map(|x| match x.reach_m {
                        Some(m) => format!(
                            "{} mm at {} GHz",
                            format_sig(m * 1e3, 3),
                            format_sig(x.nyquist_hz / 1e9, 4)
                        ),
                        None => "fixed losses spend it".to_string(),
                    })
                    .unwrap_or_default();
                let skew = r
                    .routing
                    .as_ref()
                    .and_then(|rt| rt.skew.as_ref())
                    .map(|w| format!("≤ {} ps/mm", format_sig(w.skew_s_per_m * 1e9, 3)))
                    .unwrap_or_default();
                SummaryRow {
                    name: r.name.clone(),
                    layer: r.layer.clone(),
                    geometry,
                    neighbour,
                    reach,
                    skew,
                    impedance: format!(
                        "{z:.2} Ω (target {} ± {} %{})",
                        format_sig(r.target_ohm, 4),
                        format_sig(r.tolerance_pct, 3),
                        // A target out of reach: the row is the nearest reachable design.
                        if r.unreached.is_some() {
                            ", out of reach: nearest design"
                        } else {
                            ""
                        }
                    ),
                    deviation: format!("{deviation:+.1} %"),
                    verdict: if within {
                        Verdict::Within
                    } else {
                        Verdict::Outside
                    },
                    engine,
                    error: None,
                }
            }
            RuleOutcome::Error { name, message } => SummaryRow {
                name: name.clone(),
                layer: String::new(),
                geometry: String::new(),
                neighbour: String::new(),
                reach: String::new(),
                skew: String::new(),
                impedance: String::new(),
                deviation: String::new(),
                verdict: Verdict::Failed,
                engine: "",
                error: Some(compact_message(message)),
            },
        })
        .collect();
    let count = |v: Verdict| rows.iter().filter(|r| r.verdict == v).count();
    let (outside, failed) = (count(Verdict::Outside), count(Verdict::Failed));
    let works = outside == 0 && failed == 0 && !rows.is_empty();
    let headline = if rows.is_empty() {
        "No net classes yet: add an impedance rule to see whether the board works.".to_string()
    } else if works {
        format!(
            "The board works: all {} net classes are within tolerance.",
            rows.len()
        )
    } else {
        let mut parts = Vec::new();
        if outside > 0 {
            parts.push(format!("{outside} out of tolerance"));
        }
        if failed > 0 {
            parts.push(format!("{failed} cannot be computed"));
        }
        format!(
            "The board does not work yet: {} of {} net classes.",
            parts.join(" and "),
            rows.len()
        )
    };
    Summary {
        rows,
        headline,
        works,
    }
}

/// A message with its long numbers written compactly (the core's `error::compact`), cut at one sentence.
fn compact_message(message: &str) -> String {
    message
        .split(' ')
        .map(|word| {
            let trimmed = word.trim_end_matches([',', ';', ')']);
            match trimmed.parse::<f64>() {
                Ok(v) if trimmed.len() > 8 => word.replacen(trimmed, &compact(v), 1),
                _ => word.to_string(),
            }
        })
        .collect::<Vec<_>>()
        .join(" ")
}

#[derive(Properties, PartialEq)]
pub struct SummaryProps {
    pub plan: Option<Rc<Plan>>,
    pub unit: LengthUnit,
    /// True when the figures are from the last good entry, not the current text.
    pub stale: bool,
}

#[component]
pub fn SummaryPanel(props: &SummaryProps) -> Html {
    let Some(plan) = &props.plan else {
        return html! {
            <section class="panel board-summary" data-testid="board-summary" aria-labelledby="summary-title">
                <h2 id="summary-title">{ "Board summary" }</h2>
                <p class="muted">{ "Nothing computed yet." }</p>
            </section>
        };
    };
    let s = summarize(plan, props.unit);
    // The reach and skew columns only when some rule has the figure (a link, a glass construction).
    let (reach, skew) = (
        s.rows.iter().any(|r| !r.reach.is_empty()),
        s.rows.iter().any(|r| !r.skew.is_empty()),
    );
    let spanned = 5 + usize::from(reach) + usize::from(skew);
    let badge = |v: Verdict| match v {
        Verdict::Within => html! { <span class="badge ok">{ "in tolerance" }</span> },
        Verdict::Outside => html! { <span class="badge bad">{ "out of tolerance" }</span> },
        Verdict::Failed => html! { <span class="badge bad">{ "cannot be computed" }</span> },
    };
    html! {
        <section class={classes!("panel", "board-summary", props.stale.then_some("stale"))} data-testid="board-summary"
            data-works={s.works.to_string()} aria-labelledby="summary-title">
            <h2 id="summary-title">{ "Board summary" }</h2>
            <p class={classes!("headline", if s.works { "ok" } else { "error" })} data-testid="summary-headline">
                { s.headline.clone() }
                if props.stale { <span class="muted">{ " (last good figures while an entry is invalid)" }</span> }
            </p>
            <table class="summary-table">
                <thead><tr>
                    <th scope="col">{ "Net class" }</th><th scope="col">{ "Layer" }</th>
                    <th scope="col">{ "Width / spacing" }</th>
                    <th scope="col" title="least edge-to-edge spacing to an identical neighbour for the board's crosstalk budget">{ "Neighbour spacing" }</th>
                    if reach { <th scope="col" title="longest run inside the rule's link loss budget at its Nyquist frequency">{ "Reach" }</th> }
                    if skew { <th scope="col" title="a pair's worst-case intra-pair skew routed straight along the glass weave">{ "Weave skew" }</th> }
                    <th scope="col">{ "Z" }</th>
                    <th scope="col">{ "Deviation" }</th><th scope="col">{ "Verdict" }</th><th scope="col">{ "Engine" }</th>
                </tr></thead>
                <tbody>
                { for s.rows.iter().enumerate().map(|(i, r)| html! {
                    <tr data-testid={format!("summary-row-{i}")} data-verdict={format!("{:?}", r.verdict).to_lowercase()}>
                        <td>{ r.name.clone() }</td>
                        if let Some(e) = &r.error {
                            <td colspan={spanned.to_string()} class="error">{ e.clone() }</td>
                        } else {
                            <td>{ r.layer.clone() }</td>
                            <td class="num">{ r.geometry.clone() }</td>
                            <td class="num" data-testid={format!("summary-neighbour-{i}")}>{ r.neighbour.clone() }</td>
                            if reach { <td class="num" data-testid={format!("summary-reach-{i}")}>{ r.reach.clone() }</td> }
                            if skew { <td class="num" data-testid={format!("summary-skew-{i}")}>{ r.skew.clone() }</td> }
                            <td class="num">{ r.impedance.clone() }</td>
                            <td class="num">{ r.deviation.clone() }</td>
                        }
                        <td>{ badge(r.verdict) }</td>
                        <td class="muted">{ r.engine }</td>
                    </tr>
                }) }
                </tbody>
            </table>
        </section>
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ohmstack_core::design::demo;
    use ohmstack_core::{plan, plan_with, PlanOptions};

    #[test]
    fn every_rule_gets_a_row_and_the_verdict_follows_the_field_check() {
        // Closed-form rules (chosen explicitly; the field engine is the default) carry the field check.
        let mut p = demo::project();
        for r in &mut p.rules {
            r.model = ohmstack_core::design::project::RuleModel::ClosedForm;
        }
        let options = PlanOptions {
            field_check: true,
            ..PlanOptions::default()
        };
        let mut checked = plan_with(&p, &options).unwrap();
        let s = summarize(&checked, p.units);
        assert_eq!(s.rows.len(), p.rules.len());
        for (row, outcome) in s.rows.iter().zip(&checked.rules) {
            let r = outcome.ok().unwrap();
            let c = r.field_check.as_ref().unwrap();
            // The field engine's figure and verdict, to the shown precision.
            assert!(
                row.impedance
                    .starts_with(&format!("{:.2} Ω", c.impedance_ohm)),
                "{row:?}"
            );
            assert_eq!(row.verdict == Verdict::Within, c.within_tolerance);
            assert_eq!(row.engine, "closed form, field-checked");
            assert_eq!(row.name, r.name);
        }
        // A field verdict of "outside" makes the board not work, whatever the closed form says.
        let outside_before = s
            .rows
            .iter()
            .filter(|r| r.verdict == Verdict::Outside)
            .count();
        let RuleOutcome::Ok(r) = &mut checked.rules[0] else {
            panic!()
        };
        assert!(r.field_check.as_ref().unwrap().within_tolerance);
        r.within_tolerance = true;
        r.field_check.as_mut().unwrap().within_tolerance = false;
        let s = summarize(&checked, p.units);
        assert_eq!(s.rows[0].verdict, Verdict::Outside);
        let expect = format!("{} out of tolerance", outside_before + 1);
        assert!(!s.works && s.headline.contains(&expect), "{}", s.headline);
    }

    #[test]
    fn routing_figures_show_in_the_summary() {
        let mut p = demo::project();
        p.routing.link = Some(ohmstack_core::design::project::LinkBudget {
            nyquist_hz: 4e9,
            budget_db: 10.0,
            fixed_db: 2.0,
        });
        let options = ohmstack_core::PlanOptions {
            routing: true,
            ..Default::default()
        };
        let plan = ohmstack_core::plan_with(&p, &options).unwrap();
        let s = summarize(&plan, p.units);
        for r in s.rows.iter().filter(|r| r.verdict != Verdict::Failed) {
            assert!(r.reach.ends_with("mm at 4 GHz"), "{r:?}");
            // No glass construction in the demo: no skew.
            assert!(r.skew.is_empty(), "{r:?}");
        }
    }

    #[test]
    fn unchecked_and_failed_rules_say_so() {
        let mut p = demo::project();
        p.rules[0].target_ohm = 400.0;
        let s = summarize(&plan(&p).unwrap(), p.units);
        assert_eq!(s.rows[0].verdict, Verdict::Failed);
        assert!(s.rows[0].error.is_some());
        assert_eq!(s.rows[1].engine, "field solver");
        assert!(
            s.headline.contains("1 cannot be computed"),
            "{}",
            s.headline
        );
        let mut q = demo::project();
        q.rules[1].model = ohmstack_core::design::project::RuleModel::ClosedForm;
        let s = summarize(&plan(&q).unwrap(), q.units);
        assert_eq!(s.rows[1].engine, "closed form");
        let mut p = demo::project();
        p.rules.clear();
        let s = summarize(&plan(&p).unwrap(), p.units);
        assert!(!s.works && s.headline.starts_with("No net classes"));
    }

    #[test]
    fn long_numbers_in_messages_are_compact() {
        assert_eq!(
            compact_message("width: 0.000000000000000000000000000001 m is too small"),
            "width: 1e-30 m is too small"
        );
        assert_eq!(compact_message("target 100.00 Ω"), "target 100.00 Ω");
    }
}
