//! The budgets behind every rule's routing figures: the crosstalk budget per neighbour with the edge and run it
//! is judged on, the link's loss budget for the reach (blank Nyquist frequency: no reach) and the share of its
//! unit interval a pair's weave skew may take. Values still at their
//! defaults are marked as common practice.

use crate::bridge;
use crate::state::{Action, Draft, Field, RoutingField};
use crate::widgets::TextField;
use ohmstack_core::base::units::format_sig;
use ohmstack_core::design::project::Routing;
use ohmstack_core::Project;
use std::collections::BTreeMap;
use std::rc::Rc;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct RoutingProps {
    pub project: Rc<Project>,
    pub drafts: Rc<BTreeMap<Field, Draft>>,
    pub dispatch: Callback<Action>,
}

#[component]
pub fn RoutingPanel(props: &RoutingProps) -> Html {
    let p = &props.project;
    let r = &p.routing;
    let unit = p.units;
    let d = &props.dispatch;
    let field = |f: RoutingField, label: String, value: String| {
        let key = Field::Routing(f);
        html! {
            <TextField field={key} label={label} size="narrow" value={value}
                draft={props.drafts.get(&key).cloned()} dispatch={d.clone()} />
        }
    };
    let defaults = Routing::default();
    let crosstalk_default = r.crosstalk_budget_pct == defaults.crosstalk_budget_pct
        && r.rise_s == defaults.rise_s
        && r.parallel_m == defaults.parallel_m;
    html! {
        <section class="panel routing-budgets" data-testid="routing-budgets" aria-labelledby="routing-title">
            <h2 id="routing-title">{ "Routing budgets" }<span class="sub">{ " spacing for crosstalk, reach and weave skew on every rule" }</span></h2>
            <div class="settings-row">
                { field(RoutingField::CrosstalkBudget, "Crosstalk per neighbour (%)".into(), format_sig(r.crosstalk_budget_pct, 4)) }
                { field(RoutingField::Rise, "Edge rise time (ps)".into(), format_sig(r.rise_s * 1e12, 4)) }
                { field(RoutingField::Parallel, format!("Side by side ({})", unit.symbol()), bridge::length_text(r.parallel_m, unit)) }
                if crosstalk_default {
                    <span class="badge info" data-testid="routing-default" title="common practice, no source: set your own">{ "common practice" }</span>
                }
                { field(RoutingField::LinkNyquist, "Link Nyquist (GHz)".into(), r.link.map(|l| bridge::ghz_text(l.nyquist_hz)).unwrap_or_default()) }
                if r.link.is_some() {
                    { field(RoutingField::LinkBudget, "Loss budget (dB)".into(), r.link.map(|l| format_sig(l.budget_db, 4)).unwrap_or_default()) }
                    { field(RoutingField::LinkFixed, "Fixed losses (dB)".into(), r.link.map(|l| format_sig(l.fixed_db, 4)).unwrap_or_default()) }
                    { field(RoutingField::SkewBudget, "Pair skew budget (UI)".into(), format_sig(r.skew_budget_ui, 3)) }
                } else {
                    <span class="muted">{ "no reach without a link: half the symbol rate, e.g. 8 for 16 Gb/s NRZ" }</span>
                }
            </div>
        </section>
    }
}
