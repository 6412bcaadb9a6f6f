//! The app shell: owns the one state container and lays out the panels.

use crate::bridge;
use crate::state::{Action, State};
use ohmstack_core::units::{format_length, format_sig};
use ohmstack_core::RuleOutcome;
use yew::prelude::*;

#[component]
pub fn App() -> Html {
    let state = use_reducer(State::default);
    let project = state.project.clone();
    let plan = use_memo(project.clone(), bridge::analyse);
    let unit = project.units;
    let load_demo = {
        let state = state.clone();
        Callback::from(move |_| {
            state.dispatch(Action::Load(Box::new(ohmstack_core::demo::project())))
        })
    };
    let (shared, on_load) = (std::rc::Rc::new(project.clone()), {
        let state = state.clone();
        Callback::from(move |p| state.dispatch(Action::Load(Box::new(p))))
    });
    let body = match &*plan {
        Err(message) => html! { <p class="error" role="alert">{ message.clone() }</p> },
        Ok(plan) => html! {
            <>
            <section class="panel" aria-labelledby="stack-title">
                <h2 id="stack-title">{ "Layer stack" }</h2>
                <p class="totals">
                    { format!("Board {} · {} copper layers", format_length(plan.total_thickness_m, unit), plan.copper_count) }
                </p>
                <table class="stack">
                    <thead><tr><th>{"Layer"}</th><th>{"Type"}</th><th>{"Material"}</th><th>{"Thickness"}</th><th>{"Dk"}</th><th>{"Df"}</th></tr></thead>
                    <tbody>
                    { for plan.layers.iter().map(|l| html! {
                        <tr class={classes!("layer", l.kind.replace(' ', "-"))}>
                            <td>{ l.name.clone() }</td>
                            <td>{ l.role.map(|r| format!("{} ({r})", l.kind)).unwrap_or_else(|| l.kind.to_string()) }</td>
                            <td>{ l.material.clone() }</td>
                            <td>{ format_length(l.pressed_thickness_m, unit) }</td>
                            <td>{ l.dk.map(|d| format_sig(d, 3)).unwrap_or_default() }</td>
                            <td>{ l.df.map(|d| format_sig(d, 3)).unwrap_or_default() }</td>
                        </tr>
                    }) }
                    </tbody>
                </table>
            </section>
            <section class="panel" aria-labelledby="rules-title">
                <h2 id="rules-title">{ "Impedance rules" }</h2>
                <table class="rules">
                    <thead><tr><th>{"Net class"}</th><th>{"Layer"}</th><th>{"Structure"}</th><th>{"Width"}</th><th>{"Z (Ω)"}</th><th>{"Target"}</th><th>{"Dk eff"}</th><th>{"Delay (ps/mm)"}</th></tr></thead>
                    <tbody>
                    { for plan.rules.iter().enumerate().map(|(i, outcome)| match outcome {
                        RuleOutcome::Ok(r) => html! {
                            <tr class="rule">
                                <td>{ r.name.clone() }</td>
                                <td>{ r.layer.clone() }</td>
                                <td>{ format!("{}, {}", r.family, r.structure) }</td>
                                <td data-testid={format!("rule-{i}-width")} data-value={r.width_m.to_string()}>{ format_length(r.width_m, unit) }</td>
                                <td data-testid={format!("rule-{i}-impedance")} data-value={r.impedance_ohm.to_string()}>{ format!("{:.2}", r.impedance_ohm) }</td>
                                <td>{ format!("{} ± {}%", r.target_ohm, r.tolerance_pct) }</td>
                                <td>{ format!("{:.3}", r.eps_eff) }</td>
                                <td>{ format!("{:.3}", r.delay_s_per_m * 1e9) }</td>
                            </tr>
                        },
                        RuleOutcome::Error { name, message } => html! {
                            <tr class="rule failed"><td>{ name.clone() }</td><td colspan="7" class="error" data-testid={format!("rule-{i}-error")}>{ message.clone() }</td></tr>
                        },
                    }) }
                    </tbody>
                </table>
            </section>
            </>
        },
    };
    html! {
        <main id="app" data-ready="true">
            <header class="top">
                <h1>{ "Ohmstack" }</h1>
                <span class="project-title">{ project.title.clone() }</span>
                <button class="no-print" onclick={load_demo}>{ "Load demo" }</button>
            </header>
            <crate::panels::share::SharePanel project={shared.clone()} on_load={on_load} />
            { body }
            <crate::panels::pictures::PicturesPanel project={shared.clone()} plan={plan.clone()} />
            <crate::panels::notes::NotesPanel project={shared} plan={plan.clone()} />
            <footer class="cautions">
                { "Design estimates only. Final impedance is confirmed by the fabricator on test coupons. Trace spacing here is not electrical-safety clearance; follow local codes and licensed practice." }
            </footer>
        </main>
    }
}
