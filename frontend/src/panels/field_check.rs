//! The field solver from a rule card: "Verify with field solver" re-analyses the closed form's dimensions, "Solve
//! with field solver" finds the width (or spacing) that puts the field impedance on target. Both run the core's 2D
//! field solve in slices between frames (so the page stays responsive) and show progress; the potential map of the
//! last solve goes to the pictures panel through `on_map`.

use crate::bridge::{self, FieldOutcome, FieldWork};
use ohmstack_core::base::units::format_sig;
use ohmstack_core::{Project, Solve};
use std::cell::RefCell;
use std::rc::Rc;
use yew::prelude::*;

/// Work units per slice: small enough that one slice takes a few milliseconds in WASM.
const SLICE_BUDGET: usize = 150_000;

#[derive(Properties, PartialEq)]
pub struct FieldCheckProps {
    pub project: Rc<Project>,
    pub index: usize,
    /// Receives the potential map of each finished solve (its serial is set by the receiver).
    #[prop_or_default]
    pub on_map: Callback<bridge::FieldMapView>,
}

#[derive(Clone, PartialEq)]
enum Status {
    Idle,
    Running(&'static str, f64),
    Done(Result<FieldOutcome, String>),
}

type Shared<T> = Rc<RefCell<Option<T>>>;

/// What a running solve reports to when it ends.
#[derive(Clone)]
struct Sinks {
    status: UseStateHandle<Status>,
    on_map: Callback<bridge::FieldMapView>,
    index: usize,
    unit: ohmstack_core::base::units::LengthUnit,
    what: &'static str,
}

fn run_slice(job: Shared<FieldWork>, timer: Shared<gloo::timers::callback::Timeout>, sinks: Sinks) {
    let status = sinks.status.clone();
    let progress = match job.borrow_mut().as_mut() {
        Some(j) => j.step(SLICE_BUDGET),
        None => return,
    };
    if progress.done {
        let outcome = job
            .borrow()
            .as_ref()
            .map(|j| bridge::field_outcome(j, sinks.unit));
        if let Some(Ok(map)) = job
            .borrow()
            .as_ref()
            .map(|j| bridge::field_map_view(j, sinks.index, 0))
        {
            sinks.on_map.emit(map);
        }
        *job.borrow_mut() = None;
        status.set(Status::Done(
            outcome.unwrap_or_else(|| Err("the field solve was cancelled".into())),
        ));
        return;
    }
    status.set(Status::Running(sinks.what, progress.fraction));
    let (j, t) = (job.clone(), timer.clone());
    *timer.borrow_mut() = Some(gloo::timers::callback::Timeout::new(0, move || {
        run_slice(j, t, sinks)
    }));
}

fn signed(v: f64) -> String {
    format!("{}{}", if v >= 0.0 { "+" } else { "" }, format_sig(v, 2))
}

fn outcome_html(i: usize, outcome: &FieldOutcome) -> Html {
    let map_link = html! {
        <>{ " · " }<a href="#field-map" data-testid={format!("rule-{i}-field-map-link")}>{ "potential map" }</a></>
    };
    match outcome {
        FieldOutcome::Check(s) => html! {
            <span class="field-result" data-testid={format!("rule-{i}-field")}>
                { "Field solve: " }
                <strong data-testid={format!("rule-{i}-field-z")} data-value={s.field_ohm.to_string()}>{ format!("{:.2} Ω", s.field_ohm) }</strong>
                { format!(" ± {} % (est.)", format_sig(s.error_pct, 2)) }
                if let Some(d) = s.difference_pct {
                    <span class={classes!(s.outside_band.then_some("warn"))}>
                        { format!(" · closed form {} %{}", signed(d),
                            s.band_pct.map(|b| format!(" (its band ±{} %)", format_sig(b, 2))).unwrap_or_default()) }
                    </span>
                }
                { for s.notes.iter().map(|n| html! { <span class="warn">{ format!(" · {n}") }</span> }) }
                { map_link }
            </span>
        },
        FieldOutcome::Synthesis(s) => html! {
            <span class="field-result" data-testid={format!("rule-{i}-field-solved")}>
                { format!("Field-solved {}: ", s.dimension) }
                <strong data-testid={format!("rule-{i}-field-solved-value")} data-value={s.value_m.to_string()}>{ s.value.clone() }</strong>
                if let (Some(c), Some(d)) = (&s.closed_form, s.change_pct) {
                    { format!(" (closed form {c}, {} %)", signed(d)) }
                }
                { " gives " }
                <strong data-testid={format!("rule-{i}-field-solved-z")} data-value={s.field_ohm.to_string()}>{ format!("{:.2} Ω", s.field_ohm) }</strong>
                { format!(" ± {} % (est.) after {} field solves", format_sig(s.error_pct, 2), s.solves) }
                if let Some(z) = s.closed_form_ohm_at_value {
                    { format!("; the closed form says {z:.2} Ω there") }
                }
                if !s.converged {
                    <span class="warn">{ " · not converged" }</span>
                }
                { for s.notes.iter().map(|n| html! { <span class="warn">{ format!(" · {n}") }</span> }) }
                { map_link }
            </span>
        },
    }
}

#[component]
pub fn FieldCheck(props: &FieldCheckProps) -> Html {
    let status = use_state(|| Status::Idle);
    let job: Shared<FieldWork> = use_mut_ref(|| None).clone();
    let timer: Shared<gloo::timers::callback::Timeout> = use_mut_ref(|| None).clone();
    {
        // Any edit makes an old field result stale: drop it and stop a running solve.
        let (status, job, timer) = (status.clone(), job.clone(), timer.clone());
        use_effect_with(props.project.clone(), move |_| {
            *job.borrow_mut() = None;
            *timer.borrow_mut() = None;
            status.set(Status::Idle);
        });
    }
    let i = props.index;
    let starter = |what: &'static str, make: fn(&Project, usize) -> Result<FieldWork, String>| {
        let (status, job, timer, project) = (
            status.clone(),
            job.clone(),
            timer.clone(),
            props.project.clone(),
        );
        let sinks = Sinks {
            status: status.clone(),
            on_map: props.on_map.clone(),
            index: i,
            unit: props.project.units,
            what,
        };
        Callback::from(move |_: MouseEvent| match make(&project, i) {
            Ok(j) => {
                *job.borrow_mut() = Some(j);
                status.set(Status::Running(what, 0.0));
                run_slice(job.clone(), timer.clone(), sinks.clone());
            }
            Err(e) => status.set(Status::Done(Err(e))),
        })
    };
    let verify = starter("solving", bridge::field_job);
    let solve = starter("solving for the target", bridge::field_synthesis_job);
    let body = match &*status {
        Status::Idle => html! {},
        Status::Running(what, f) => html! {
            <span class="field-progress" role="status">
                <progress max="1" value={f.to_string()} aria-label="field solve progress"></progress>
                { format!(" {what}… {:.0} %", f * 100.0) }
            </span>
        },
        Status::Done(Err(e)) => {
            html! { <span class="error" data-testid={format!("rule-{i}-field-error")}>{ e.clone() }</span> }
        }
        Status::Done(Ok(outcome)) => outcome_html(i, outcome),
    };
    let running = matches!(*status, Status::Running(..));
    let solves_something = props
        .project
        .rules
        .get(i)
        .is_some_and(|r| r.solve != Solve::Nothing);
    html! {
        <div class="field-check no-print">
            <button type="button" id={format!("rule-{i}-field-run")} onclick={verify} disabled={running}>{ "Verify with field solver" }</button>
            { " " }
            <button type="button" id={format!("rule-{i}-field-solve")} onclick={solve} disabled={running || !solves_something}
                title="Find the width (or spacing) that puts the field solver's impedance on target">{ "Solve with field solver" }</button>
            { " " }{ body }
        </div>
    }
}
