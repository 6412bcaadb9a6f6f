//! The page's side of the field plan: sends each project to the plan worker and hands its updates to the app. The
//! worker is made by the page's loader (`ohmstackPlanWorker`, see xtask/src/dist.rs) from the same file's glue and
//! the compiled WASM. When no worker can be made, or the one made fails, the same planner runs on this thread in
//! per-rule slices (one rule per task), slower to finish but never one long freeze.

use crate::plan_jobs::{Planner, Request, Update};
use ohmstack_core::Project;
use std::cell::RefCell;
use std::rc::Rc;
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;
use web_sys::{MessageChannel, MessageEvent, Worker};

/// Where the field plan runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Runner {
    Worker,
    /// On the page's thread, rule by rule.
    Page,
}

impl Runner {
    pub fn name(self) -> &'static str {
        match self {
            Runner::Worker => "worker",
            Runner::Page => "page",
        }
    }
}

/// What the app's field state takes: the client started, a request went out, a worker update, or the news that
/// planning moved onto the page's thread (and why).
#[derive(Debug, Clone, PartialEq)]
pub enum Event {
    Started(Runner),
    /// A request went out for the project, with the tolerance spread or (while typing) without.
    Submitted(u64, Box<Project>, bool),
    /// Updates that arrived together (rendered at once).
    Updates(Vec<Update>),
    Fallback(String),
}

/// The page's thread running the planner one rule per task.
struct Local {
    planner: Rc<RefCell<Planner>>,
    channel: MessageChannel,
    queued: Rc<RefCell<bool>>,
    _on_tick: Closure<dyn FnMut(MessageEvent)>,
}

enum Backend {
    Worker {
        worker: Worker,
        _on_message: Closure<dyn FnMut(MessageEvent)>,
        _on_error: Closure<dyn FnMut(web_sys::Event)>,
    },
    Local(Local),
    /// Not even the fallback could start (no message channel): nothing is planned beyond the preview.
    None,
}

struct Inner {
    backend: Backend,
    /// The last request sent, re-sent to the fallback when the worker fails.
    last: Option<Request>,
    on_event: Rc<dyn Fn(Event)>,
}

/// The app's handle on the field plan.
#[derive(Clone)]
pub struct PlanClient {
    inner: Rc<RefCell<Inner>>,
}

/// The loader's worker factory, or why there is none.
fn spawn_worker() -> Result<Worker, String> {
    let factory = js_sys::Reflect::get(&js_sys::global(), &JsValue::from_str("ohmstackPlanWorker"))
        .ok()
        .and_then(|f| f.dyn_into::<js_sys::Function>().ok())
        .ok_or("this page has no plan worker loader")?;
    let worker = factory
        .call0(&JsValue::NULL)
        .map_err(|e| e.as_string().unwrap_or_else(|| format!("{e:?}")))?;
    worker
        .dyn_into::<Worker>()
        .map_err(|_| "the loader did not return a worker".to_string())
}

impl PlanClient {
    /// Starts the worker (or the fallback); `on_event` receives every update, on this thread.
    pub fn start(on_event: impl Fn(Event) + 'static) -> PlanClient {
        let client = PlanClient {
            inner: Rc::new(RefCell::new(Inner {
                backend: Backend::None,
                last: None,
                on_event: Rc::new(on_event),
            })),
        };
        match spawn_worker() {
            Ok(worker) => client.attach(worker),
            Err(why) => client.fall_back(&why),
        }
        client
    }

    /// Where the plan runs now.
    pub fn runner(&self) -> Runner {
        match self.inner.borrow().backend {
            Backend::Worker { .. } => Runner::Worker,
            _ => Runner::Page,
        }
    }

    fn attach(&self, worker: Worker) {
        let on_event = self.inner.borrow().on_event.clone();
        // Whether this worker ever answered: one that did and then stopped died on a request (which the page's
        // thread would die on too), not on the page's policy.
        let answered = Rc::new(std::cell::Cell::new(false));
        let seen = answered.clone();
        let on_message = Closure::<dyn FnMut(MessageEvent)>::new(move |e: MessageEvent| {
            seen.set(true);
            let text = e.data().as_string().unwrap_or_default();
            match serde_json::from_str::<Vec<Update>>(&text) {
                Ok(updates) => on_event(Event::Updates(updates)),
                Err(err) => on_event(Event::Updates(vec![Update::Failed {
                    generation: 0,
                    message: format!("a plan worker message could not be read: {err}"),
                }])),
            }
        });
        // A worker the page's policy refuses, or one that fails to start, reports here: plan on the page instead.
        // One that stopped after answering is replaced by a fresh worker, and the request it stopped on is reported
        // as failed rather than re-run. Handled on a later task: this closure belongs to the backend replaced.
        let weak = Rc::downgrade(&self.inner);
        let on_error = Closure::<dyn FnMut(web_sys::Event)>::new(move |e: web_sys::Event| {
            let why = e
                .dyn_ref::<web_sys::ErrorEvent>()
                .map(|e| e.message())
                .filter(|m| !m.is_empty())
                .unwrap_or_else(|| "the plan worker stopped".into());
            let (weak, answered) = (weak.clone(), answered.get());
            gloo::timers::callback::Timeout::new(0, move || {
                if let Some(inner) = weak.upgrade() {
                    let client = PlanClient { inner };
                    if answered {
                        client.replace_worker(&why);
                    } else {
                        client.fall_back(&why);
                    }
                }
            })
            .forget();
        });
        worker.set_onmessage(Some(on_message.as_ref().unchecked_ref()));
        worker.set_onerror(Some(on_error.as_ref().unchecked_ref()));
        self.inner.borrow_mut().backend = Backend::Worker {
            worker,
            _on_message: on_message,
            _on_error: on_error,
        };
    }

    /// After a worker stopped mid-request: reports that request as failed and starts a fresh worker for the next.
    fn replace_worker(&self, why: &str) {
        let (on_event, generation) = {
            let mut inner = self.inner.borrow_mut();
            if let Backend::Worker { worker, .. } = &inner.backend {
                worker.terminate();
            }
            inner.backend = Backend::None;
            (
                inner.on_event.clone(),
                inner.last.as_ref().map_or(0, |r| r.generation),
            )
        };
        on_event(Event::Updates(vec![Update::Failed {
            generation,
            message: format!(
                "the field engine stopped ({why}); the figures shown are the closed form's"
            ),
        }]));
        match spawn_worker() {
            Ok(worker) => self.attach(worker),
            Err(e) => self.fall_back(&e),
        }
    }

    /// Moves planning onto this thread and re-sends the last request there.
    fn fall_back(&self, why: &str) {
        let on_event = self.inner.borrow().on_event.clone();
        let local = start_local(on_event.clone());
        let last = {
            let mut inner = self.inner.borrow_mut();
            if let Backend::Worker { worker, .. } = &inner.backend {
                worker.terminate();
            }
            inner.backend = local.map(Backend::Local).unwrap_or(Backend::None);
            inner.last.clone()
        };
        on_event(Event::Fallback(why.to_string()));
        if let Some(request) = last {
            self.send(request);
        }
    }

    /// Asks for the field plan of `project` under `generation` (higher than every earlier one), with the
    /// tolerance spread when `spread`.
    pub fn submit(&self, generation: u64, project: &Project, spread: bool) {
        let request = Request {
            generation,
            project: serde_json::to_string(project).unwrap_or_default(),
            spread,
        };
        self.send(request);
    }

    fn send(&self, request: Request) {
        let failed = {
            let mut inner = self.inner.borrow_mut();
            inner.last = Some(request.clone());
            match &inner.backend {
                Backend::Worker { worker, .. } => serde_wasm_bindgen::to_value(&request)
                    .map_err(|e| e.to_string())
                    .and_then(|v| worker.post_message(&v).map_err(|e| format!("{e:?}")))
                    .err(),
                Backend::Local(local) => {
                    local.planner.borrow_mut().request(&request);
                    queue_local(local);
                    None
                }
                Backend::None => None,
            }
        };
        if let Some(why) = failed {
            self.fall_back(&why);
        }
    }
}

impl Drop for Inner {
    fn drop(&mut self) {
        if let Backend::Worker { worker, .. } = &self.backend {
            worker.terminate();
        }
    }
}

fn start_local(on_event: Rc<dyn Fn(Event)>) -> Option<Local> {
    let channel = MessageChannel::new().ok()?;
    let planner = Rc::new(RefCell::new(Planner::default()));
    let queued = Rc::new(RefCell::new(false));
    let on_tick = {
        let (planner, queued, port) = (planner.clone(), queued.clone(), channel.port2());
        Closure::<dyn FnMut(MessageEvent)>::new(move |_| {
            *queued.borrow_mut() = false;
            let (batch, busy) = {
                let mut p = planner.borrow_mut();
                (p.run_batch(), p.busy())
            };
            if busy && !queued.replace(true) {
                let _ = port.post_message(&JsValue::NULL);
            }
            if !batch.is_empty() {
                on_event(Event::Updates(batch));
            }
        })
    };
    channel
        .port1()
        .set_onmessage(Some(on_tick.as_ref().unchecked_ref()));
    Some(Local {
        planner,
        channel,
        queued,
        _on_tick: on_tick,
    })
}

fn queue_local(local: &Local) {
    if !local.queued.replace(true) {
        let _ = local.channel.port2().post_message(&JsValue::NULL);
    }
}
