//! "Verify with field solver" for one rule: runs the core's 2D field solve in slices between frames (so the page
//! stays responsive), shows progress, then the field impedance, its error estimate and the closed form's difference;
//! the potential map of the solve goes to the pictures panel through `on_map`.

use crate::bridge::{self, FieldJob};
use ohmstack_core::units::format_sig;
use ohmstack_core::Project;
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
    Running(f64),
    Done(Result<bridge::FieldSummary, String>),
}

type Shared<T> = Rc<RefCell<Option<T>>>;

/// What a running solve reports to when it ends.
#[derive(Clone)]
struct Sinks {
    status: UseStateHandle<Status>,
    on_map: Callback<bridge::FieldMapView>,
    index: usize,
}

fn run_slice(job: Shared<FieldJob>, timer: Shared<gloo::timers::callback::Timeout>, sinks: Sinks) {
    let status = sinks.status.clone();
    let progress = match job.borrow_mut().as_mut() {
        Some(j) => j.step(SLICE_BUDGET),
        None => return,
    };
    if progress.done {
        let summary = job.borrow().as_ref().map(bridge::field_summary);
        if let Some(Ok(map)) = job
            .borrow()
            .as_ref()
            .map(|j| bridge::field_map_view(j, sinks.index, 0))
        {
            sinks.on_map.emit(map);
        }
        *job.borrow_mut() = None;
        status.set(Status::Done(
            summary.unwrap_or_else(|| Err("the field solve was cancelled".into())),
        ));
        return;
    }
    status.set(Status::Running(progress.fraction));
    let (j, t) = (job.clone(), timer.clone());
    *timer.borrow_mut() = Some(gloo::timers::callback::Timeout::new(0, move || {
        run_slice(j, t, sinks)
    }));
}

#[component]
pub fn FieldCheck(props: &FieldCheckProps) -> Html {
    let status = use_state(|| Status::Idle);
    let job: Shared<FieldJob> = use_mut_ref(|| None).clone();
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
    let start = {
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
        };
        Callback::from(move |_: MouseEvent| match bridge::field_job(&project, i) {
            Ok(j) => {
                *job.borrow_mut() = Some(j);
                status.set(Status::Running(0.0));
                run_slice(job.clone(), timer.clone(), sinks.clone());
            }
            Err(e) => status.set(Status::Done(Err(e))),
        })
    };
    let body = match &*status {
        Status::Idle => html! {},
        Status::Running(f) => html! {
            <span class="field-progress" role="status">
                <progress max="1" value={f.to_string()} aria-label="field solve progress"></progress>
                { format!(" solving… {:.0} %", f * 100.0) }
            </span>
        },
        Status::Done(Err(e)) => {
            html! { <span class="error" data-testid={format!("rule-{i}-field-error")}>{ e.clone() }</span> }
        }
        Status::Done(Ok(s)) => html! {
            <span class="field-result" data-testid={format!("rule-{i}-field")}>
                { "Field solve: " }
                <strong data-testid={format!("rule-{i}-field-z")} data-value={s.field_ohm.to_string()}>{ format!("{:.2} Ω", s.field_ohm) }</strong>
                { format!(" ± {} % (est.)", format_sig(s.error_pct, 2)) }
                if let Some(d) = s.difference_pct {
                    <span class={classes!(s.outside_band.then_some("warn"))}>
                        { format!(" · closed form {}{} %{}", if d >= 0.0 { "+" } else { "" }, format_sig(d, 2),
                            s.band_pct.map(|b| format!(" (its band ±{} %)", format_sig(b, 2))).unwrap_or_default()) }
                    </span>
                }
                { for s.notes.iter().map(|n| html! { <span class="warn">{ format!(" · {n}") }</span> }) }
                { " · " }<a href="#field-map" data-testid={format!("rule-{i}-field-map-link")}>{ "potential map" }</a>
            </span>
        },
    };
    let running = matches!(*status, Status::Running(_));
    html! {
        <div class="field-check no-print">
            <button type="button" id={format!("rule-{i}-field-run")} onclick={start} disabled={running}>{ "Verify with field solver" }</button>
            { " " }{ body }
        </div>
    }
}
