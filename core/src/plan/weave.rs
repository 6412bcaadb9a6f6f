//! A pair rule's glass-weave skew on the stack as built: the constructions of the cores and prepregs between the
//! pair and its reference planes ([`crate::design::construction`]), each averaged over the pair's field width, and
//! the straight run along the weave that spends the skew budget.
//!
//! Each side of the trace (towards each reference plane) contributes the thickness-weighted skew of its constructed
//! layers, averaged over the trace width plus twice that side's height; the sides are weighted by 1/height, about
//! their share of the line's capacitance. An estimate of the worst case along the weave (common practice, no
//! source for the weighting); a layer without a construction is taken to skew like the constructed ones beside it.

use crate::base::error::{Error, Result};
use crate::design::project::{ImpedanceRule, Project, Structure};
use crate::design::stackup::Layer;
use crate::plan::RuleResult;
use serde::{Deserialize, Serialize};

/// A pair's weave skew and what it spends of the budget.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WeaveSkew {
    /// Worst-case intra-pair skew per length routed straight along the weave, s/m.
    pub skew_s_per_m: f64,
    /// The constructed layers it comes from, "PP2: 2 × 1080, 64 % resin".
    pub layers: Vec<String>,
    /// The skew budget, s, when the board has a link (a share of its unit interval).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub budget_s: Option<f64>,
    /// The straight run along the weave that spends the budget, m.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub run_at_budget_m: Option<f64>,
}

/// The weave skew of a pair rule as planned; an error says why there is none (not a pair, no construction).
pub fn weave_skew(
    project: &Project,
    rule: &ImpedanceRule,
    result: &RuleResult,
) -> Result<WeaveSkew> {
    let none = |reason: &str| Error::Invalid {
        field: "weave skew".into(),
        reason: reason.into(),
    };
    if !rule.structure.is_pair() {
        return Err(none("a single line has no intra-pair skew"));
    }
    if rule.structure == Structure::BroadsidePair {
        return Err(none(
            "the two lines of a broadside pair lie over the same glass: no weave skew",
        ));
    }
    let stack = &project.stackup;
    let trace = stack
        .find(&rule.layer)
        .ok_or_else(|| none("the rule's layer is not in the stack"))?;
    let mut sides = Vec::new();
    let mut layers = Vec::new();
    for plane in result.references.iter().filter_map(|r| stack.find(r)) {
        let between = if plane < trace {
            plane + 1..trace
        } else {
            trace + 1..plane
        };
        let height: f64 = between.clone().map(|i| stack.pressed_thickness_m(i)).sum();
        let (mut weighted, mut built) = (0.0, 0.0);
        for i in between {
            let (Layer::Core(d) | Layer::Prepreg(d)) = &stack.layers[i] else {
                continue;
            };
            let Some(c) = &d.construction else { continue };
            let t = stack.pressed_thickness_m(i);
            weighted += t * c.construction()?.skew_over(result.width_m + 2.0 * height)?;
            built += t;
            layers.push(format!("{}: {}", d.name, c.label()));
        }
        if built > 0.0 {
            sides.push((weighted / built, 1.0 / height));
        }
    }
    if sides.is_empty() {
        return Err(none(
            "no layer between the pair and its planes has a glass construction: give one to estimate the weave skew",
        ));
    }
    let weight: f64 = sides.iter().map(|s| s.1).sum();
    let skew_s_per_m = sides.iter().map(|(skew, w)| skew * w).sum::<f64>() / weight;
    let budget_s = rule
        .link
        .or(project.routing.link)
        .map(|l| project.routing.skew_budget_ui / (2.0 * l.nyquist_hz));
    Ok(WeaveSkew {
        skew_s_per_m,
        layers,
        budget_s,
        run_at_budget_m: budget_s
            .filter(|_| skew_s_per_m > 0.0)
            .map(|b| b / skew_s_per_m),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::construction::{glass_style, LayerConstruction};
    use crate::design::project::LinkBudget;

    fn planned(p: &Project, name: &str) -> RuleResult {
        let plan = crate::plan(p).unwrap();
        plan.rule(name).unwrap().ok().unwrap().clone()
    }

    /// The demo with every core and prepreg given `plies` of `style`, keeping each layer's Dk at the style's usual
    /// resin content.
    fn built(style: &str, plies: u32) -> Project {
        let mut p = crate::design::demo::project();
        for layer in &mut p.stackup.layers {
            if let Layer::Core(d) | Layer::Prepreg(d) = layer {
                d.construction = Some(LayerConstruction::typical(
                    glass_style(style).unwrap(),
                    plies,
                    d.dk,
                    d.df,
                ));
            }
        }
        p.stackup.apply_constructions().unwrap();
        p
    }

    fn first_pair(p: &Project) -> &ImpedanceRule {
        p.rules
            .iter()
            .find(|r| r.structure.is_pair() && r.structure != Structure::BroadsidePair)
            .unwrap()
    }

    #[test]
    fn a_pair_over_one_construction_skews_as_that_construction_over_its_field() {
        let p = built("1080", 2);
        let rule = first_pair(&p).clone();
        let r = planned(&p, &rule.name);
        let skew = weave_skew(&p, &rule, &r).unwrap();
        // Every layer has the same construction, so each side gives that construction's skew over the side's
        // field width; the result lies between the two sides' figures (a weighted mean).
        let c = p.stackup.layers.iter().find_map(|l| match l {
            Layer::Core(d) | Layer::Prepreg(d) => d.construction.clone(),
            _ => None,
        });
        let c = c.unwrap().construction().unwrap();
        let narrowest = c.skew_over(r.width_m).unwrap();
        assert!(skew.skew_s_per_m > 0.0 && skew.skew_s_per_m <= narrowest * (1.0 + 1e-12));
        assert!(!skew.layers.is_empty() && skew.budget_s.is_none());
        // A spread style skews less than an open one at the same plies.
        let spread = built("1086", 2);
        let rs = planned(&spread, &rule.name);
        let s = weave_skew(&spread, first_pair(&spread), &rs).unwrap();
        assert!(s.skew_s_per_m < skew.skew_s_per_m, "{s:?} {skew:?}");
    }

    #[test]
    fn the_budget_is_a_share_of_the_unit_interval_and_sets_the_run() {
        let mut p = built("2116", 1);
        p.routing.link = Some(LinkBudget {
            nyquist_hz: 8e9,
            budget_db: 10.0,
            fixed_db: 0.0,
        });
        let rule = first_pair(&p).clone();
        let skew = weave_skew(&p, &rule, &planned(&p, &rule.name)).unwrap();
        let ui = 1.0 / 16e9;
        assert!((skew.budget_s.unwrap() - 0.1 * ui).abs() < 1e-24);
        let run = skew.run_at_budget_m.unwrap();
        assert!((run * skew.skew_s_per_m - 0.1 * ui).abs() < 1e-24);
    }

    #[test]
    fn lines_and_unbuilt_stacks_say_why_there_is_no_skew() {
        let p = crate::design::demo::project();
        let single = p.rules.iter().find(|r| !r.structure.is_pair()).unwrap();
        let e = weave_skew(&p, single, &planned(&p, &single.name)).unwrap_err();
        assert!(e.to_string().contains("single line"), "{e}");
        let pair = first_pair(&p);
        let e = weave_skew(&p, pair, &planned(&p, &pair.name)).unwrap_err();
        assert!(e.to_string().contains("construction"), "{e}");
    }
}
