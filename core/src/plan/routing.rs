//! A planned rule's routing figures: the least spacing to an identical neighbour that keeps crosstalk inside the
//! project's budget ([`crate::plan::crosstalk`]) and, when the project names a link budget, the longest run inside
//! it ([`crate::line::reach`]), and for a pair the skew the glass weave may add ([`crate::plan::weave`]). What the rule cards and the fab notes show beside the width.

use crate::design::project::{ImpedanceRule, Project};
use crate::line::reach::{self, ReachOptions};
use crate::plan::crosstalk::{self, CrosstalkOptions};
use crate::plan::weave::{self, WeaveSkew};
use crate::plan::RuleResult;
use serde::{Deserialize, Serialize};

/// A rule's routing figures, each with the reason when it has none.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RuleRouting {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub spacing: Option<SpacingRule>,
    /// Why there is no spacing rule (a coplanar line's ground copper, a broadside pair, a failed solve).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub spacing_note: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reach: Option<ReachRule>,
    /// Why there is no reach (no link budget in the project, or no loss model for the line).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reach_note: Option<String>,
    /// A pair's glass-weave skew, when the layers around it have constructions.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub skew: Option<WeaveSkew>,
    /// Why a pair has no weave skew (no construction given); nothing for a single line.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub skew_note: Option<String>,
}

/// The least edge-to-edge spacing to an identical neighbour inside the crosstalk budget.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SpacingRule {
    /// "line beside line" or "pair beside pair".
    pub arrangement: String,
    /// `None` when even the widest spacing searched misses the budget.
    pub min_spacing_m: Option<f64>,
    /// "near end" or "far end".
    pub limited_by: String,
    pub near_end: f64,
    pub far_end: f64,
    pub budget: f64,
    pub rise_s: f64,
    pub parallel_m: f64,
    pub method: String,
    /// Noise against spacing from the fabricator's minimum space out (for the plot).
    #[serde(default)]
    pub curve: Vec<crate::plan::crosstalk::CrosstalkPoint>,
}

/// The longest matched run inside the link's loss budget.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ReachRule {
    pub nyquist_hz: f64,
    pub loss_db_per_m: f64,
    pub budget_db: f64,
    pub fixed_db: f64,
    /// `None` when the fixed losses alone spend the budget.
    pub reach_m: Option<f64>,
    /// "line" or "differential (odd mode)".
    pub signal: String,
    /// Insertion loss of a run of the reach length with the fixed losses, (Hz, dB) from a twentieth of the Nyquist
    /// frequency to twice it (for the plot; empty without a reach).
    #[serde(default)]
    pub curve: Vec<(f64, f64)>,
}

/// Points of the insertion-loss curve, log-spaced from a twentieth of the Nyquist frequency to twice it.
const CURVE_POINTS: u32 = 24;

/// The routing figures of a planned rule against the project's [`crate::design::project::Routing`].
pub fn for_result(project: &Project, rule: &ImpedanceRule, result: &RuleResult) -> RuleRouting {
    let r = &project.routing;
    let options = CrosstalkOptions {
        budget: r.crosstalk_budget_pct / 100.0,
        rise_s: r.rise_s,
        length_m: r.parallel_m,
    };
    let (spacing, spacing_note) = match crosstalk::rule_crosstalk(project, rule, result, &options) {
        Ok(x) => (
            Some(SpacingRule {
                arrangement: x.arrangement.into(),
                min_spacing_m: x.min_spacing_m,
                limited_by: x.limited_by.into(),
                near_end: x.at_min.near_end,
                far_end: x.at_min.far_end,
                budget: options.budget,
                rise_s: options.rise_s,
                parallel_m: options.length_m,
                method: x.method.into(),
                curve: x.curve,
            }),
            None,
        ),
        Err(e) => (None, Some(e.to_string())),
    };
    let (reach, reach_note) = match rule.link.or(r.link) {
        None => (
            None,
            Some("no link budget set for the board or the rule".to_string()),
        ),
        Some(link) => {
            let figures = crate::plan::rule::loss_model(project, rule, result).and_then(|model| {
                reach::reach(
                    &model,
                    &ReachOptions {
                        freq_hz: link.nyquist_hz,
                        budget_db: link.budget_db,
                        fixed_db: link.fixed_db,
                    },
                )
            });
            match figures {
                Ok(x) => (
                    Some(ReachRule {
                        nyquist_hz: link.nyquist_hz,
                        loss_db_per_m: x.loss_db_per_m,
                        budget_db: link.budget_db,
                        fixed_db: link.fixed_db,
                        reach_m: x.reach_m,
                        signal: x.signal.into(),
                        curve: x
                            .reach_m
                            .and_then(|run| {
                                let model =
                                    crate::plan::rule::loss_model(project, rule, result).ok()?;
                                // The Nyquist frequency itself among them: the curve meets the budget there.
                                let mut freqs: Vec<f64> = (0..=CURVE_POINTS)
                                    .map(|i| {
                                        let k = f64::from(i) / f64::from(CURVE_POINTS);
                                        link.nyquist_hz * 0.05 * 40f64.powf(k)
                                    })
                                    .chain([link.nyquist_hz])
                                    .collect();
                                freqs.sort_by(f64::total_cmp);
                                reach::insertion_loss(&model, run, link.fixed_db, &freqs).ok()
                            })
                            .unwrap_or_default(),
                    }),
                    None,
                ),
                Err(e) => (None, Some(e.to_string())),
            }
        }
    };
    let (skew, skew_note) = match weave::weave_skew(project, rule, result) {
        Ok(x) => (Some(x), None),
        Err(_) if !rule.structure.is_pair() => (None, None),
        Err(e) => (None, Some(e.to_string())),
    };
    RuleRouting {
        spacing,
        spacing_note,
        reach,
        reach_note,
        skew,
        skew_note,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::project::LinkBudget;

    #[test]
    fn the_plan_carries_each_rules_spacing_and_reach() {
        let mut p = crate::design::demo::project();
        p.routing.link = Some(LinkBudget {
            nyquist_hz: 5e9,
            budget_db: 10.0,
            fixed_db: 2.0,
        });
        let options = crate::PlanOptions {
            routing: true,
            ..crate::PlanOptions::default()
        };
        let plan = crate::plan_with(&p, &options).unwrap();
        let mut spacings = 0;
        for (rule, outcome) in p.rules.iter().zip(&plan.rules) {
            let r = outcome.ok().unwrap();
            let rt = r.routing.as_ref().unwrap();
            // The same figures the standalone search gives (`ohmstack crosstalk`).
            match crate::plan::crosstalk::rule_crosstalk(&p, rule, r, &CrosstalkOptions::default())
            {
                Ok(x) => {
                    assert_eq!(rt.spacing.as_ref().unwrap().min_spacing_m, x.min_spacing_m);
                    spacings += 1;
                }
                Err(e) => assert_eq!(rt.spacing_note.as_deref(), Some(e.to_string().as_str())),
            }
            let reach = rt.reach.as_ref().unwrap();
            assert!((reach.reach_m.unwrap() - 8.0 / reach.loss_db_per_m).abs() < 1e-12);
            // The curve's run is the reach, so at the Nyquist frequency it spends the budget exactly.
            let at_nyquist = reach
                .curve
                .iter()
                .find(|(f, _)| (f / 5e9 - 1.0).abs() < 1e-9)
                .unwrap();
            assert!((at_nyquist.1 - 10.0).abs() < 1e-9, "{at_nyquist:?}");
        }
        assert!(spacings >= 3, "{spacings}");
        // Without a link budget the reach says why; without the option nothing is computed.
        let plain = crate::plan_with(&crate::design::demo::project(), &options).unwrap();
        let rt = plain.rules[0].ok().unwrap().routing.clone().unwrap();
        assert!(rt.reach.is_none() && rt.reach_note.unwrap().contains("link budget"));
        let nominal = crate::plan_with(&p, &crate::PlanOptions::default()).unwrap();
        assert!(nominal.rules[0].ok().unwrap().routing.is_none());
    }

    #[test]
    fn a_rule_with_its_own_link_is_judged_on_it() {
        let mut p = crate::design::demo::project();
        p.rules[0].link = Some(LinkBudget {
            nyquist_hz: 2e9,
            budget_db: 6.0,
            fixed_db: 1.0,
        });
        let options = crate::PlanOptions {
            routing: true,
            ..crate::PlanOptions::default()
        };
        let plan = crate::plan_with(&p, &options).unwrap();
        let routing = |i: usize| plan.rules[i].ok().unwrap().routing.clone().unwrap();
        let own = routing(0).reach.unwrap();
        assert_eq!(own.nyquist_hz, 2e9);
        assert!((own.reach_m.unwrap() - 5.0 / own.loss_db_per_m).abs() < 1e-12);
        // The others follow the board, which has no link here.
        let other = routing(1);
        assert!(other.reach.is_none() && other.reach_note.unwrap().contains("link budget"));
        // A bad figure in a rule's own link names the rule and the figure.
        if let Some(l) = p.rules[0].link.as_mut() {
            l.budget_db = -1.0;
        }
        let e = Project::from_json(&p.to_json()).unwrap_err().to_string();
        assert!(e.contains("rules[0]") && e.contains("link budget"), "{e}");
    }

    #[test]
    fn routing_settings_are_optional_in_files_and_checked_by_name() {
        let p = crate::design::demo::project();
        let text = serde_json::to_string(&p).unwrap();
        assert!(
            !text.contains("routing"),
            "defaults are not written: old files and links stay as they were"
        );
        let mut v: serde_json::Value = serde_json::from_str(&text).unwrap();
        v["routing"] = serde_json::json!({"crosstalk_budget_pct": 80, "link": {"nyquist_hz": 8e9, "budget_db": 12}});
        let e = Project::from_json(&v.to_string()).unwrap_err().to_string();
        assert!(e.contains("crosstalk budget"), "{e}");
        v["routing"]["crosstalk_budget_pct"] = serde_json::json!(3);
        let p = Project::from_json(&v.to_string()).unwrap();
        assert_eq!(p.routing.link.unwrap().fixed_db, 0.0);
        assert_eq!(p.routing.rise_s, 50e-12);
    }
}
