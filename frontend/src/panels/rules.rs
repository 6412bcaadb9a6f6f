//! The impedance rules: one card per controlled net class, its inputs on top and its computed figures below.

use crate::bridge;
use crate::plan_jobs::RowState;
use crate::state::{Action, Draft, Field, RuleField};
use crate::widgets::{Select, TextField};
use ohmstack_core::base::units::format_sig;
use ohmstack_core::design::project::{RuleModel, Solve, Structure};
use ohmstack_core::{Plan, Project, RuleOutcome, RuleResult};
use std::collections::BTreeMap;
use std::rc::Rc;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct RulesProps {
    pub project: Rc<Project>,
    pub drafts: Rc<BTreeMap<Field, Draft>>,
    pub plan: Option<Rc<Plan>>,
    /// True when the figures are from the last good entry, not the current text.
    pub stale: bool,
    /// Per rule: where its figures stand (closed-form preview, field figures without the spread yet, or final).
    #[prop_or_default]
    pub rows: Rc<Vec<RowState>>,
    pub dispatch: Callback<Action>,
    /// Receives the potential map of each finished field check.
    #[prop_or_default]
    pub on_field_map: Callback<crate::bridge::FieldMapView>,
}

fn structure_key(s: Structure) -> &'static str {
    match s {
        Structure::Single => "single",
        Structure::EdgePair => "edge_pair",
        Structure::BroadsidePair => "broadside_pair",
        Structure::Coplanar => "coplanar",
        Structure::CoplanarPair => "coplanar_pair",
    }
}

fn solve_key(s: Solve) -> &'static str {
    match s {
        Solve::Width => "width",
        Solve::Spacing => "spacing",
        Solve::Nothing => "nothing",
    }
}

/// One labelled figure of the results strip.
fn figure(i: usize, key: &str, label: &str, text: String, value: Option<f64>) -> Html {
    html! {
        <div class="figure">
            <span class="fig-label">{ label.to_string() }</span>
            <span class="fig-value" data-testid={format!("rule-{i}-{key}")} data-value={value.map(|v| v.to_string())}>{ text }</span>
        </div>
    }
}

/// A target out of reach: what stopped the solve, and the one-click ways on.
fn unreached(i: usize, r: &RuleResult, project: &Project, d: &Callback<Action>) -> Html {
    let Some(u) = &r.unreached else {
        return html! {};
    };
    let unit = project.units;
    let rule = project.rules.get(i);
    let pair_by_width = rule.is_some_and(|rule| {
        matches!(
            rule.structure,
            Structure::EdgePair | Structure::CoplanarPair
        ) && rule.solve == Solve::Width
    });
    let at = if u.dimension == "spacing" {
        r.spacing_m.unwrap_or(r.width_m)
    } else {
        r.width_m
    };
    let keep_label = if u.bound.contains("minimum") {
        format!(
            "Build at the fabricator's minimum {} ({})",
            u.dimension,
            bridge::length_label(at, unit)
        )
    } else {
        format!(
            "Build at this {} ({})",
            u.dimension,
            bridge::length_label(at, unit)
        )
    };
    let keep = {
        let (d, w, s) = (d.clone(), r.width_m, r.spacing_m);
        Callback::from(move |_: MouseEvent| d.emit(Action::UseDimensions(i, w, s)))
    };
    let spacing = {
        let d = d.clone();
        Callback::from(move |_: MouseEvent| d.emit(Action::SetRuleSolve(i, Solve::Spacing)))
    };
    let verdict = if r.within_tolerance {
        "inside"
    } else {
        "outside"
    };
    html! {
        <div class="unreached" role="status" data-testid={format!("rule-{i}-unreached")}>
            <p>
                <strong>{ format!("Target {} Ω is out of reach", format_sig(r.target_ohm, 6)) }</strong>
                { format!(": {} stops the {}. The figures below are the nearest reachable design, {:.2} Ω ({:+.2} %, {verdict} ±{} %).",
                    u.bound, u.dimension, r.impedance_ohm, r.deviation_pct, format_sig(r.tolerance_pct, 3)) }
            </p>
            <p class="no-print alternatives">
                if pair_by_width {
                    <button type="button" id={format!("rule-{i}-solve-spacing")} onclick={spacing}>{ "Solve spacing instead" }</button>
                }
                <button type="button" id={format!("rule-{i}-keep-nearest")} onclick={keep}>{ keep_label }</button>
            </p>
        </div>
    }
}

/// Γ and return loss where they mean something: against the as-built spread's extremes when it is in; against the
/// target for dimensions analysed as drawn; never for a dimension solved onto the target (Γ ≈ 1e-12 is noise).
fn reflection(i: usize, r: &RuleResult) -> Html {
    let gamma = |z: f64| (z - r.target_ohm) / (z + r.target_ohm);
    let rl = |g: f64| -20.0 * g.abs().log10();
    if let Some(sp) = &r.spread {
        let worst = [sp.corners.min_ohm, sp.corners.max_ohm]
            .into_iter()
            .map(gamma)
            .fold(0.0_f64, |a, g| if g.abs() > a.abs() { g } else { a });
        return html! {
            <>
                { figure(i, "gamma", "Worst Γ as built", format!("{worst:+.3}"), Some(worst)) }
                { figure(i, "return-loss", "Return loss as built (dB)", format!("{:.1}", rl(worst)), Some(rl(worst)).filter(|v| v.is_finite())) }
            </>
        };
    }
    // A solved dimension sits on the target to the solver's tolerance: Γ there says nothing.
    if r.solved.is_some() && r.deviation_pct.abs() < 0.1 {
        return html! {};
    }
    html! {
        <>
            { figure(i, "gamma", "Γ vs target", format!("{:+.4}", r.gamma), Some(r.gamma)) }
            { figure(i, "return-loss", "Return loss (dB)", format!("{:.1}", r.return_loss_db), Some(r.return_loss_db).filter(|v| v.is_finite())) }
        </>
    }
}

/// The rule's notes, each once, problems first, each level styled apart, with a count per level.
fn notes(i: usize, r: &RuleResult) -> Html {
    use ohmstack_core::base::validity::Level;
    let mut list: Vec<&ohmstack_core::base::validity::Warning> = Vec::new();
    for w in &r.warnings {
        if !list.iter().any(|x| x.message == w.message) {
            list.push(w);
        }
    }
    list.sort_by_key(|w| std::cmp::Reverse(w.level));
    if list.is_empty() {
        return html! { <span class="badge ok" data-testid={format!("rule-{i}-validity")} data-value="0">{ "inside the model's fit" }</span> };
    }
    let count = |l: Level| list.iter().filter(|w| w.level == l).count();
    let plural = |n: usize, word: &str| format!("{n} {word}{}", if n == 1 { "" } else { "s" });
    html! {
        <>
            <span data-testid={format!("rule-{i}-validity")} data-value={list.len().to_string()}>
                if count(Level::Problem) > 0 { <span class="badge bad">{ plural(count(Level::Problem), "problem") }</span> }
                if count(Level::Caution) > 0 { <span class="badge warn">{ plural(count(Level::Caution), "caution") }</span> }
                if count(Level::Info) > 0 { <span class="badge info">{ plural(count(Level::Info), "note") }</span> }
            </span>
            <ul class="warnings" data-testid={format!("rule-{i}-warnings")}>
                { for list.iter().map(|w| html! {
                    <li class={w.level.label()} data-level={w.level.label()}><span class="level">{ format!("{}: ", w.level.label()) }</span>{ w.message.clone() }</li>
                }) }
            </ul>
        </>
    }
}

fn results(i: usize, r: &RuleResult, project: &Project, state: RowState) -> Html {
    let unit = project.units;
    let pair = bridge::z_common(r).is_some();
    let solved = |what: &str| r.solved.as_deref() == Some(what);
    let mark = |what: &str| if solved(what) { " (solved)" } else { "" };
    let delay_ps_per_mm = r.delay_s_per_m * 1e9;
    let delay_ps_per_in = r.delay_s_per_m * 0.0254 * 1e12;
    let z_label = if pair { "Zdiff (Ω)" } else { "Z0 (Ω)" };
    // The verdict follows the field engine when it checked the closed form: a board is built to these dimensions,
    // and the field figure is what it will measure.
    let tol = format_sig(r.tolerance_pct, 3);
    let verdict = match (&r.field_check, r.within_tolerance) {
        (Some(c), _) if !c.within_tolerance => html! {
            <span class="badge bad" data-testid={format!("rule-{i}-verdict")} title="the closed form's figure is inside, the 2D field engine's is not">{ format!("outside ±{tol}% by the field engine") }</span>
        },
        (_, true) => {
            html! { <span class="badge ok" data-testid={format!("rule-{i}-verdict")}>{ format!("within ±{tol}%") }</span> }
        }
        (_, false) => {
            html! { <span class="badge bad" data-testid={format!("rule-{i}-verdict")}>{ format!("outside ±{tol}%") }</span> }
        }
    };
    html! {
        <div class={classes!("rule-results", (state == RowState::Preview).then_some("pending"))} aria-busy={(state != RowState::Final).to_string()}>
            if state == RowState::Preview {
                <p class="pending-tag" role="status" data-testid={format!("rule-{i}-pending")}
                    title="closed-form preview; the 2D field engine's figures replace it when they land">{ "field engine…" }</p>
            }
            if state == RowState::Nominal {
                <p class="pending-tag" role="status" data-testid={format!("rule-{i}-spread-pending")}
                    title="the field engine's figures are in; the tolerance spread follows">{ "tolerance spread…" }</p>
            }
            <div class="figures">
                { figure(i, "width", &format!("Width{}", mark("width")), bridge::length_label(r.width_m, unit), Some(r.width_m)) }
                if let (Some(s), true) = (r.spacing_m, pair) {
                    { figure(i, "spacing", &format!("Spacing{}", mark("spacing")), bridge::length_label(s, unit), Some(s)) }
                }
                if let (Some(g), true) = (r.gap_m, r.structure.contains("coplanar")) {
                    { figure(i, "gap", "Gap to ground", bridge::length_label(g, unit), Some(g)) }
                }
                <div class="figure main">
                    <span class="fig-label">{ z_label }</span>
                    <span class="fig-value" data-testid={format!("rule-{i}-impedance")} data-value={r.impedance_ohm.to_string()}>{ format!("{:.2}", r.impedance_ohm) }</span>
                    <span class="fig-engine muted" data-testid={format!("rule-{i}-method")}>{ r.method.to_string() }</span>
                    // The closed form's measured band, when wide, sits next to the number it qualifies.
                    if let Some(b) = r.model_band_pct {
                        <span class="badge bad" data-testid={format!("rule-{i}-model-band")} title="measured against the 2D field solver (docs/accuracy.md); use the field solver for this rule">{ format!("closed form ±{}% vs field solver", format_sig(b, 3)) }</span>
                    }
                </div>
                if let Some(c) = &r.field_check {
                    { figure(i, "field-check", "Field engine (Ω)", format!("{:.2} ({:+.2}% vs target)", c.impedance_ohm, c.deviation_pct), Some(c.impedance_ohm)) }
                }
                // The instant closed form beside the field figure it approximates, with its difference.
                if let Some(c) = &r.closed_form_check {
                    { figure(i, "closed-form-check", "Closed form (Ω)", format!("{:.2} ({:+.1}% vs field)", c.impedance_ohm, c.difference_pct), Some(c.impedance_ohm)) }
                }
                if let Some(zc) = bridge::z_common(r) {
                    { figure(i, "zcommon", "Zcommon (Ω)", format!("{zc:.2}"), Some(zc)) }
                }
                { figure(i, "deviation", "vs target", format!("{:+.2}%", r.deviation_pct), Some(r.deviation_pct)) }
                { figure(i, "eps-eff", "Dk eff", format!("{:.3}", r.eps_eff), Some(r.eps_eff)) }
                { figure(i, "delay", "Delay (ps/mm)", format!("{delay_ps_per_mm:.3}"), Some(delay_ps_per_mm)) }
                { figure(i, "delay-in", "Delay (ps/in)", format!("{delay_ps_per_in:.1}"), Some(delay_ps_per_in)) }
                { reflection(i, r) }
                if let Some((f, db_in, db_cm)) = bridge::loss_at(r) {
                    { figure(i, "loss", &format!("Loss at {} GHz", format_sig(f / 1e9, 4)), format!("{db_in:.3} dB/in ({db_cm:.3} dB/cm)"), Some(db_in)) }
                }
                if let Some((lo, hi, yield_pct)) = bridge::spread_of(r) {
                    { figure(i, "spread", "Spread (Ω)", match yield_pct {
                        Some(y) => format!("{lo:.2}–{hi:.2}, yield {y:.1}%"),
                        None => format!("{lo:.2}–{hi:.2}"),
                    }, None) }
                }
            </div>
            if let Some(sp) = &r.spread {
                <p class="spread-detail" data-testid={format!("rule-{i}-spread-detail")}>
                    { format!("Tolerance spread: corners {:.2}–{:.2} Ω · Monte Carlo {:.2} ± {:.2} Ω (σ, {} samples){}",
                        sp.corners.min_ohm, sp.corners.max_ohm, sp.monte_carlo.mean_ohm, sp.monte_carlo.sigma_ohm,
                        sp.monte_carlo.samples,
                        sp.monte_carlo.cpk.map(|c| format!(", Cpk {c:.2}")).unwrap_or_default()) }
                    if let Some(top) = sp.sensitivities.first() {
                        { format!(" · most sensitive to {} ({:+.2} Ω at its limit)", top.parameter, top.impact_ohm) }
                    }
                    // A centred dimension is only a suggestion when it moved (the core keeps the nominal unless the
                    // yield gain is more than sampling noise).
                    if let Some(c) = sp.centred.as_ref().filter(|c| c.centred_m != c.nominal_m) {
                        <span data-testid={format!("rule-{i}-centred")} data-value={c.centred_m.to_string()}>
                            { format!(" · tolerance-centred {}: {} {} (yield {:.2} % → {:.2} %)", c.dimension,
                                bridge::length_text(c.centred_m, unit), unit.symbol(), c.nominal_yield_pct, c.centred_yield_pct) }
                        </span>
                    }
                </p>
            }
            { routing(i, r, unit) }
            <div class="rule-notes">
                { verdict }
                <span class="family">{ format!("{} · {}", r.description, r.method) }</span>
                if r.references.is_empty() {
                    <span class="refs">{ " · no reference plane" }</span>
                } else {
                    <span class="refs">{ format!(" · referenced to {}", r.references.join(" and ")) }</span>
                }
                { notes(i, r) }
            </div>
        </div>
    }
}

/// The routing rule beside the width: the least spacing to an identical neighbour for the board's crosstalk budget,
/// and the reach for its link budget when one is set (each, or why there is none).
fn routing(i: usize, r: &RuleResult, unit: ohmstack_core::base::units::LengthUnit) -> Html {
    let Some(rt) = &r.routing else {
        return html! {};
    };
    let spacing = match (&rt.spacing, &rt.spacing_note) {
        (Some(sp), _) => match sp.min_spacing_m {
            Some(s) => html! {
                <span data-testid={format!("rule-{i}-neighbour-spacing")} data-value={s.to_string()}>
                    { format!("Spacing to a neighbouring {} ≥ {} for ≤ {} % crosstalk ({} sets it: {} mm side by side, {} ps edges)",
                        if sp.arrangement.starts_with("pair") { "pair" } else { "trace" },
                        ohmstack_core::base::units::format_length_at_least(s, unit), format_sig(sp.budget * 100.0, 3), sp.limited_by,
                        format_sig(sp.parallel_m * 1e3, 4), format_sig(sp.rise_s * 1e12, 3)) }
                </span>
            },
            None => html! {
                <span class="bad" data-testid={format!("rule-{i}-neighbour-spacing")}>
                    { format!("No spacing searched keeps a neighbour within {} % crosstalk", format_sig(sp.budget * 100.0, 3)) }
                </span>
            },
        },
        (None, Some(note)) => html! {
            <span class="muted" data-testid={format!("rule-{i}-neighbour-spacing")}>{ format!("No spacing rule: {note}") }</span>
        },
        (None, None) => html! {},
    };
    let reach = match &rt.reach {
        Some(x) => html! {
            <span data-testid={format!("rule-{i}-reach")} data-value={x.reach_m.map(|m| m.to_string()).unwrap_or_default()}>
                { match x.reach_m {
                    Some(m) => format!(" · reach {} mm at {} GHz ({} dB budget, {} dB fixed; {} dB/in)",
                        format_sig(m * 1e3, 4), format_sig(x.nyquist_hz / 1e9, 4), format_sig(x.budget_db, 4),
                        format_sig(x.fixed_db, 4), format_sig(x.loss_db_per_m * 0.0254, 3)),
                    None => format!(" · the fixed {} dB spend the {} dB link budget", format_sig(x.fixed_db, 4), format_sig(x.budget_db, 4)),
                } }
            </span>
        },
        None => html! {},
    };
    let skew = match (&rt.skew, &rt.skew_note) {
        (Some(w), _) => html! {
            <span data-testid={format!("rule-{i}-skew")} data-value={w.skew_s_per_m.to_string()}>
                { format!(" · weave skew up to {} ps/in along the weave{}", format_sig(w.skew_s_per_m * 1e12 * 0.0254, 3),
                    match (w.run_at_budget_m, w.budget_s) {
                        (Some(run), Some(b)) => format!(" ({} ps budget spent after {} mm straight)",
                            format_sig(b * 1e12, 3), format_sig(run * 1e3, 3)),
                        _ => String::new(),
                    }) }
            </span>
        },
        (None, Some(note)) => html! {
            <span class="muted" data-testid={format!("rule-{i}-skew")}>
                { format!(" · weave skew: {}", note.split_once(": ").map_or(note.as_str(), |x| x.1)) }
            </span>
        },
        (None, None) => html! {},
    };
    html! {
        <p class="routing-detail" data-testid={format!("rule-{i}-routing")}>{ spacing }{ reach }{ skew }</p>
    }
}

#[component]
fn RuleCard(props: &RuleCardProps) -> Html {
    let i = props.index;
    let project = &props.project;
    let Some(rule) = project.rules.get(i) else {
        return html! {};
    };
    let unit = project.units;
    let d = &props.dispatch;
    let draft = |f: Field| props.drafts.get(&f).cloned();
    let coppers = &props.coppers;
    let title = if rule.name.trim().is_empty() {
        format!("Rule {}", i + 1)
    } else {
        rule.name.clone()
    };
    let mut layer_options: Vec<(AttrValue, AttrValue)> = coppers
        .iter()
        .map(|c| (AttrValue::from(c.clone()), AttrValue::from(c.clone())))
        .collect();
    if !coppers.contains(&rule.layer) {
        layer_options.insert(
            0,
            (
                rule.layer.clone().into(),
                format!("{} (missing)", rule.layer).into(),
            ),
        );
    }
    let allowed = bridge::structures_for(&project.stackup, &rule.layer);
    let structure_options: Vec<(AttrValue, AttrValue)> = Structure::ALL
        .into_iter()
        .filter(|s| allowed.contains(s) || *s == rule.structure)
        .map(|s| {
            let label = if allowed.contains(&s) {
                s.label().to_string()
            } else {
                format!("{} (not possible on this layer)", s.label())
            };
            (AttrValue::from(structure_key(s)), AttrValue::from(label))
        })
        .collect();
    let spacing_solvable = matches!(
        rule.structure,
        Structure::EdgePair | Structure::CoplanarPair
    );
    let mut solve_options: Vec<(AttrValue, AttrValue)> = vec![("width".into(), "width".into())];
    if spacing_solvable {
        solve_options.push(("spacing".into(), "spacing".into()));
    }
    solve_options.push(("nothing".into(), "nothing (analyse as drawn)".into()));
    let on_layer = {
        let d = d.clone();
        Callback::from(move |v: String| d.emit(Action::SetRuleLayer(i, v)))
    };
    let on_structure = {
        let d = d.clone();
        Callback::from(move |v: String| {
            if let Some(s) = Structure::ALL.into_iter().find(|s| structure_key(*s) == v) {
                d.emit(Action::SetRuleStructure(i, s))
            }
        })
    };
    let on_solve = {
        let d = d.clone();
        Callback::from(move |v: String| {
            let s = match v.as_str() {
                "spacing" => Solve::Spacing,
                "nothing" => Solve::Nothing,
                _ => Solve::Width,
            };
            d.emit(Action::SetRuleSolve(i, s))
        })
    };
    let on_model = {
        let d = d.clone();
        Callback::from(move |v: String| {
            let m = if v == "field_solver" {
                RuleModel::FieldSolver
            } else {
                RuleModel::ClosedForm
            };
            d.emit(Action::SetRuleModel(i, m))
        })
    };
    let on_link = {
        let d = d.clone();
        Callback::from(move |v: String| {
            d.emit(Action::SetRuleLink(
                i,
                v.strip_prefix('p').and_then(|k| k.parse().ok()),
            ))
        })
    };
    let (link_options, link_key) = {
        use ohmstack_core::line::reach::LINK_PRESETS;
        let mut options: Vec<(AttrValue, AttrValue)> = vec![("".into(), "the board's".into())];
        options.extend(LINK_PRESETS.iter().enumerate().map(|(k, l)| {
            (
                AttrValue::from(format!("p{k}")),
                AttrValue::from(format!(
                    "{} ({} GHz)",
                    l.name,
                    format_sig(l.nyquist_hz() / 1e9, 4)
                )),
            )
        }));
        let key = match rule.link {
            None => String::new(),
            Some(own) => match LINK_PRESETS
                .iter()
                .position(|l| (l.nyquist_hz() / own.nyquist_hz - 1.0).abs() < 1e-9)
            {
                Some(k) => format!("p{k}"),
                None => {
                    options.push((
                        "custom".into(),
                        format!("{} GHz", format_sig(own.nyquist_hz / 1e9, 4)).into(),
                    ));
                    "custom".to_string()
                }
            },
        };
        (options, key)
    };
    let model_options: Vec<(AttrValue, AttrValue)> = vec![
        ("closed_form".into(), "closed form".into()),
        ("field_solver".into(), "2D field solver".into()),
    ];
    let model_key = if rule.model == RuleModel::FieldSolver {
        "field_solver"
    } else {
        "closed_form"
    };
    let on_partner = {
        let d = d.clone();
        Callback::from(move |v: String| d.emit(Action::SetRulePartner(i, v)))
    };
    let len = |f: RuleField, label: &str, m: f64| {
        html! {
            <TextField field={Field::Rule(i, f)} label={format!("{label} ({})", unit.symbol())} size="narrow"
                value={bridge::length_text(m, unit)} draft={draft(Field::Rule(i, f))} dispatch={d.clone()} />
        }
    };
    let width_label = if rule.solve == Solve::Width {
        "Start width"
    } else {
        "Width"
    };
    let spacing_label = if rule.solve == Solve::Spacing {
        "Start spacing"
    } else {
        "Spacing"
    };
    let outcome = props.outcome.as_ref();
    let row = props.row;
    let body = match outcome {
        Some(RuleOutcome::Ok(r)) => {
            html! { <>{ unreached(i, r, project, d) }{ results(i, r, project, row) }</> }
        }
        Some(RuleOutcome::Error { message, .. }) => html! {
            <p class="error rule-error" data-testid={format!("rule-{i}-error")}>{ message.clone() }</p>
        },
        None => html! {},
    };
    let (dup, remove) = {
        let (d1, d2) = (d.clone(), d.clone());
        (
            Callback::from(move |_: MouseEvent| d1.emit(Action::DuplicateRule(i))),
            Callback::from(move |_: MouseEvent| d2.emit(Action::RemoveRule(i))),
        )
    };
    let partners = if rule.structure == Structure::BroadsidePair {
        let mut options: Vec<(AttrValue, AttrValue)> =
            bridge::broadside_partners(&project.stackup, &rule.layer)
                .into_iter()
                .map(|p| (AttrValue::from(p.clone()), AttrValue::from(p)))
                .collect();
        let current = rule.partner_layer.clone().unwrap_or_default();
        if !options.iter().any(|(v, _)| v.as_str() == current) {
            options.insert(
                0,
                (
                    current.clone().into(),
                    format!("{current} (not usable)").into(),
                ),
            );
        }
        html! { <Select id={format!("rule-{i}-partner")} label="Second trace on" options={options} selected={current} onchange={on_partner} /> }
    } else {
        html! {}
    };
    html! {
        <li class={classes!("rule-card", props.stale.then_some("stale"))} data-testid={format!("rule-card-{i}")} aria-label={title.clone()}
            data-field={match row { RowState::Preview => "pending", RowState::Nominal => "nominal", RowState::Final => "landed" }}>
            <div class="rule-inputs">
                <TextField field={Field::Rule(i, RuleField::Name)} label="Net class" size="wide" value={rule.name.clone()}
                    draft={draft(Field::Rule(i, RuleField::Name))} dispatch={d.clone()} />
                <Select id={format!("rule-{i}-layer")} label="Layer" options={layer_options} selected={rule.layer.clone()} onchange={on_layer} />
                <Select id={format!("rule-{i}-structure")} label="Structure" options={structure_options} selected={structure_key(rule.structure)} onchange={on_structure} />
                { partners }
                <TextField field={Field::Rule(i, RuleField::Target)} label={if rule.structure.is_pair() { "Target Zdiff (Ω)" } else { "Target Z0 (Ω)" }} size="narrow"
                    value={format_sig(rule.target_ohm, 6)} draft={draft(Field::Rule(i, RuleField::Target))} dispatch={d.clone()} />
                <TextField field={Field::Rule(i, RuleField::Tolerance)} label="± (%)" size="narrow"
                    value={format_sig(rule.tolerance_pct, 6)} draft={draft(Field::Rule(i, RuleField::Tolerance))} dispatch={d.clone()} />
                <Select id={format!("rule-{i}-solve")} label="Solve for" options={solve_options} selected={solve_key(rule.solve)} onchange={on_solve} />
                <Select id={format!("rule-{i}-model")} label="Model" options={model_options} selected={model_key} onchange={on_model} />
                <Select id={format!("rule-{i}-link")} label="Link" options={link_options} selected={link_key} onchange={on_link} />
                if let Some(own) = rule.link {
                    <TextField field={Field::Rule(i, RuleField::LinkBudget)} label="Loss budget (dB)" size="narrow"
                        value={format_sig(own.budget_db, 4)} draft={draft(Field::Rule(i, RuleField::LinkBudget))} dispatch={d.clone()} />
                    <TextField field={Field::Rule(i, RuleField::LinkFixed)} label="Fixed (dB)" size="narrow"
                        value={format_sig(own.fixed_db, 4)} draft={draft(Field::Rule(i, RuleField::LinkFixed))} dispatch={d.clone()} />
                }
                { len(RuleField::Width, width_label, rule.width_m) }
                if let (Some(s), true) = (rule.spacing_m, matches!(rule.structure, Structure::EdgePair | Structure::CoplanarPair)) {
                    { len(RuleField::Spacing, spacing_label, s) }
                }
                if let (Some(g), true) = (rule.gap_m, matches!(rule.structure, Structure::Coplanar | Structure::CoplanarPair)) {
                    { len(RuleField::Gap, "Gap to ground", g) }
                }
                <div class="card-actions no-print">
                    <button type="button" id={format!("rule-{i}-dup")} aria-label={format!("Duplicate rule {title}")} title="Duplicate" onclick={dup}>{ "Duplicate" }</button>
                    <button type="button" id={format!("rule-{i}-remove")} aria-label={format!("Remove rule {title}")} title="Remove" onclick={remove}>{ "Remove" }</button>
                </div>
            </div>
            { body }
            <super::FieldCheck project={props.project.clone()} index={i} on_map={props.on_field_map.clone()} />
        </li>
    }
}

/// One card's inputs. A keystroke in one rule changes only that card's props, so the other cards skip their
/// render (a whole-page render per keystroke was the long task left while typing on a 16-rule board).
#[derive(Properties)]
pub struct RuleCardProps {
    pub index: usize,
    /// The whole project (the field check and the one-click alternatives need it); compared without its other
    /// rules, see the `PartialEq` below.
    pub project: Rc<Project>,
    pub outcome: Option<RuleOutcome>,
    pub row: RowState,
    pub stale: bool,
    pub coppers: Rc<Vec<String>>,
    /// This card's drafts only.
    pub drafts: BTreeMap<Field, Draft>,
    pub dispatch: Callback<Action>,
    pub on_field_map: Callback<crate::bridge::FieldMapView>,
}

impl PartialEq for RuleCardProps {
    fn eq(&self, other: &Self) -> bool {
        let (a, b) = (&*self.project, &*other.project);
        // Everything but the other rules: the stack, fab, units, frequency, loss and process settings, this rule.
        let same_project = Rc::ptr_eq(&self.project, &other.project)
            || (a.rules.get(self.index) == b.rules.get(other.index)
                && a.stackup == b.stackup
                && a.fab == b.fab
                && a.units == b.units
                && a.analysis_freq_hz == b.analysis_freq_hz
                && a.loss == b.loss
                && a.process == b.process);
        self.index == other.index
            && same_project
            && self.outcome == other.outcome
            && self.row == other.row
            && self.stale == other.stale
            && self.coppers == other.coppers
            && self.drafts == other.drafts
            && self.dispatch == other.dispatch
            && self.on_field_map == other.on_field_map
    }
}

#[component]
pub fn Rules(props: &RulesProps) -> Html {
    let project = &props.project;
    let coppers: Rc<Vec<String>> = Rc::new(
        project
            .stackup
            .layers
            .iter()
            .filter_map(|l| l.copper())
            .map(|c| c.name.clone())
            .collect(),
    );
    let cards = (0..project.rules.len()).map(|i| {
        let drafts: BTreeMap<Field, Draft> = props
            .drafts
            .iter()
            .filter(|(f, _)| matches!(f, Field::Rule(k, _) if *k == i))
            .map(|(f, d)| (*f, d.clone()))
            .collect();
        html! {
            <RuleCard key={i} index={i} project={props.project.clone()}
                outcome={props.plan.as_ref().and_then(|p| p.rules.get(i)).cloned()}
                row={props.rows.get(i).copied().unwrap_or(RowState::Final)} stale={props.stale}
                coppers={coppers.clone()} drafts={drafts} dispatch={props.dispatch.clone()}
                on_field_map={props.on_field_map.clone()} />
        }
    });
    let d = &props.dispatch;
    let add = {
        let d = d.clone();
        Callback::from(move |_: MouseEvent| d.emit(Action::AddRule))
    };
    html! {
        <section class="panel" aria-labelledby="rules-title">
            <h2 id="rules-title">{ "Impedance rules" }<span class="sub">{ " one per controlled net class" }</span></h2>
            if props.stale {
                <p class="stale-note" role="status" data-testid="stale-note">{ "Figures below are for the values held before the marked field was edited; fix it to update them." }</p>
            }
            <ol class="rules">{ for cards }</ol>
            <p class="no-print"><button type="button" id="add-rule" onclick={add}>{ "Add rule" }</button></p>
        </section>
    }
}
