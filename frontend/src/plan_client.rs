//! The page's side of the field plan: shares each project among a small pool of plan workers (one per core, at
//! most [`MAX_WORKERS`]) and hands their updates to the app as if one planner sent them. Workers are made by the
//! page's loader (`ohmstackPlanWorker`, see xtask/src/dist.rs) from the same file's glue and the compiled WASM.
//! When no worker can be made, or the first ones fail, the same planner runs on this thread in per-rule slices (one
//! rule per task), slower to finish but never one long freeze.

use crate::plan_jobs::{share_rules, Landed, Planner, PoolTally, Request, Update};
use ohmstack_core::Project;
use std::cell::{Cell, RefCell};
use std::rc::{Rc, Weak};
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;
use web_sys::{MessageChannel, MessageEvent, Worker};

/// Plan workers at most: the rules of a board are a handful of independent jobs, and each worker holds its own
/// copy of the engine's memory.
pub const MAX_WORKERS: usize = 4;

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
    /// A request went out for the project, with the tolerance spread or (while typing) without, and the rules
    /// whose outcome the page already held (landed with it, in one render).
    Submitted(u64, Box<Project>, bool, Vec<Update>),
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

/// One worker of the pool with its handlers.
struct Slot {
    worker: Worker,
    _on_message: Closure<dyn FnMut(MessageEvent)>,
    _on_error: Closure<dyn FnMut(web_sys::Event)>,
}

impl Slot {
    fn stop(&self) {
        self.worker.set_onmessage(None);
        self.worker.set_onerror(None);
        self.worker.terminate();
    }
}

enum Backend {
    Workers(Vec<Slot>),
    Local(Local),
    /// Not even the fallback could start (no message channel): nothing is planned beyond the preview.
    None,
}

struct Inner {
    backend: Backend,
    /// Counted up each time the pool is made: a late message of a pool already replaced is dropped.
    pool: u64,
    /// The last request sent (for every rule) with its shares, re-sent to the fallback when the workers fail.
    last: Option<(Request, Vec<Vec<usize>>)>,
    /// The pool's updates joined into one planner's.
    tally: PoolTally,
    /// Every outcome that landed, so that a request asks only for what the page does not hold.
    landed: Landed,
    on_event: Rc<dyn Fn(Event)>,
}

impl Inner {
    fn workers(&self) -> usize {
        match &self.backend {
            Backend::Workers(slots) => slots.len(),
            _ => 0,
        }
    }
}

/// The app's handle on the field plan.
#[derive(Clone)]
pub struct PlanClient {
    inner: Rc<RefCell<Inner>>,
}

/// The loader's worker factory, or why there is none.
pub fn spawn_worker() -> Result<Worker, String> {
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

/// Workers for this machine: one per core the browser reports, at most [`MAX_WORKERS`].
fn pool_size() -> usize {
    let cores = web_sys::window().map_or(1.0, |w| w.navigator().hardware_concurrency());
    (cores as usize).clamp(1, MAX_WORKERS)
}

impl PlanClient {
    /// Starts the workers (or the fallback); `on_event` receives every update, on this thread.
    pub fn start(on_event: impl Fn(Event) + 'static) -> PlanClient {
        let client = PlanClient {
            inner: Rc::new(RefCell::new(Inner {
                backend: Backend::None,
                pool: 0,
                last: None,
                tally: PoolTally::new(0),
                landed: Landed::default(),
                on_event: Rc::new(on_event),
            })),
        };
        if let Err(why) = client.make_pool() {
            client.fall_back(&why);
        }
        client
    }

    /// Where the plan runs now.
    pub fn runner(&self) -> Runner {
        match self.inner.borrow().backend {
            Backend::Workers(_) => Runner::Worker,
            _ => Runner::Page,
        }
    }

    /// Makes the pool (replacing any earlier one): an error when not even one worker could be made.
    fn make_pool(&self) -> Result<(), String> {
        let pool = {
            let mut inner = self.inner.borrow_mut();
            if let Backend::Workers(slots) = &inner.backend {
                slots.iter().for_each(Slot::stop);
            }
            inner.backend = Backend::None;
            inner.pool += 1;
            inner.pool
        };
        let mut slots = Vec::new();
        for k in 0..pool_size() {
            match spawn_worker() {
                Ok(worker) => slots.push(self.slot(worker, k, pool)),
                // Fewer workers than cores still plan everything (the shares follow the pool's size).
                Err(why) if slots.is_empty() => return Err(why),
                Err(_) => break,
            }
        }
        let mut inner = self.inner.borrow_mut();
        inner.tally = PoolTally::new(slots.len());
        inner.backend = Backend::Workers(slots);
        Ok(())
    }

    /// Worker `k` of pool `pool`, with its handlers.
    fn slot(&self, worker: Worker, k: usize, pool: u64) -> Slot {
        let weak: Weak<RefCell<Inner>> = Rc::downgrade(&self.inner);
        // Whether this worker ever answered: one that did and then stopped died on a request (which the page's
        // thread would die on too), not on the page's policy.
        let answered = Rc::new(Cell::new(false));
        let seen = answered.clone();
        let on_message = Closure::<dyn FnMut(MessageEvent)>::new(move |e: MessageEvent| {
            seen.set(true);
            let Some(inner) = weak.upgrade() else { return };
            let text = e.data().as_string().unwrap_or_default();
            let updates = match serde_json::from_str::<Vec<Update>>(&text) {
                Ok(updates) => updates,
                Err(err) => vec![Update::Failed {
                    generation: 0,
                    message: format!("a plan worker message could not be read: {err}"),
                }],
            };
            // The borrow ends before the app runs: it may submit the next request from its handler.
            let (updates, on_event) = {
                let mut inner = inner.borrow_mut();
                if inner.pool != pool {
                    return;
                }
                updates.iter().for_each(|u| inner.landed.keep(u));
                (inner.tally.merge(k, updates), inner.on_event.clone())
            };
            if !updates.is_empty() {
                on_event(Event::Updates(updates));
            }
        });
        // A worker the page's policy refuses, or one that fails to start, reports here: plan on the page instead.
        // One that stopped after answering is replaced by a fresh pool, and the request it stopped on is reported
        // as failed rather than re-run. Handled on a later task: this closure belongs to the pool replaced.
        let weak = Rc::downgrade(&self.inner);
        let on_error = Closure::<dyn FnMut(web_sys::Event)>::new(move |e: web_sys::Event| {
            let why = e
                .dyn_ref::<web_sys::ErrorEvent>()
                .map(|e| e.message())
                .filter(|m| !m.is_empty())
                .unwrap_or_else(|| "the plan worker stopped".into());
            let (weak, answered) = (weak.clone(), answered.get());
            gloo::timers::callback::Timeout::new(0, move || {
                let Some(inner) = weak.upgrade() else { return };
                if inner.borrow().pool != pool
                    || !matches!(inner.borrow().backend, Backend::Workers(_))
                {
                    return;
                }
                let client = PlanClient { inner };
                if answered {
                    client.replace_pool(&why);
                } else {
                    client.fall_back(&why);
                }
            })
            .forget();
        });
        worker.set_onmessage(Some(on_message.as_ref().unchecked_ref()));
        worker.set_onerror(Some(on_error.as_ref().unchecked_ref()));
        Slot {
            worker,
            _on_message: on_message,
            _on_error: on_error,
        }
    }

    /// After a worker stopped mid-request: reports that request as failed and starts a fresh pool for the next.
    fn replace_pool(&self, why: &str) {
        let (on_event, generation) = {
            let inner = self.inner.borrow();
            (
                inner.on_event.clone(),
                inner.last.as_ref().map_or(0, |(r, _)| r.generation),
            )
        };
        on_event(Event::Updates(vec![Update::Failed {
            generation,
            message: format!(
                "the field engine stopped ({why}); the figures shown are the closed form's"
            ),
        }]));
        if let Err(e) = self.make_pool() {
            self.fall_back(&e);
        }
    }

    /// Moves planning onto this thread and re-sends the last request there.
    fn fall_back(&self, why: &str) {
        let on_event = self.inner.borrow().on_event.clone();
        let weak = Rc::downgrade(&self.inner);
        let forward = on_event.clone();
        let local = start_local(Rc::new(move |batch: Vec<Update>| {
            if let Some(inner) = weak.upgrade() {
                batch.iter().for_each(|u| inner.borrow_mut().landed.keep(u));
            }
            forward(Event::Updates(batch));
        }));
        let last = {
            let mut inner = self.inner.borrow_mut();
            if let Backend::Workers(slots) = &inner.backend {
                slots.iter().for_each(Slot::stop);
            }
            inner.pool += 1;
            inner.backend = local.map(Backend::Local).unwrap_or(Backend::None);
            inner.last.clone()
        };
        on_event(Event::Fallback(why.to_string()));
        if let Some((request, shares)) = last {
            self.send(request, shares);
        }
    }

    /// Asks for the field plan of `project` under `generation` (higher than every earlier one), with the
    /// tolerance spread when `spread`. Returns the outcomes the page already holds (from earlier requests), to be
    /// shown with the request; the workers get the other rules, each its share.
    pub fn submit(&self, generation: u64, project: &Project, spread: bool) -> Vec<Update> {
        let (held, needed, workers) = {
            let mut inner = self.inner.borrow_mut();
            let (held, needed) = inner.landed.prepare(generation, project, spread);
            (held, needed, inner.workers())
        };
        let shares = share_rules(project, workers)
            .into_iter()
            .map(|share| share.into_iter().filter(|i| needed.contains(i)).collect())
            .collect();
        let request = Request {
            generation,
            project: serde_json::to_string(project).unwrap_or_default(),
            spread,
            rules: Some(needed),
        };
        self.send(request, shares);
        held
    }

    /// Sends `request` to every worker with its share of the rules (all of it to the page's planner).
    fn send(&self, request: Request, shares: Vec<Vec<usize>>) {
        let failed = {
            let mut inner = self.inner.borrow_mut();
            inner.last = Some((request.clone(), shares.clone()));
            match &inner.backend {
                Backend::Workers(slots) => slots
                    .iter()
                    .enumerate()
                    .map(|(k, slot)| {
                        // A pool smaller than the shares (never, unless made so since): the last worker takes the rest.
                        let rules = if k + 1 == slots.len() {
                            shares.get(k..).map(|s| s.concat()).unwrap_or_default()
                        } else {
                            shares.get(k).cloned().unwrap_or_default()
                        };
                        let mine = Request {
                            rules: Some(rules),
                            ..request.clone()
                        };
                        serde_wasm_bindgen::to_value(&mine)
                            .map_err(|e| e.to_string())
                            .and_then(|v| {
                                slot.worker.post_message(&v).map_err(|e| format!("{e:?}"))
                            })
                    })
                    .find_map(Result::err),
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
        if let Backend::Workers(slots) = &self.backend {
            slots.iter().for_each(Slot::stop);
        }
    }
}

/// The page's own planner; `on_updates` takes each batch it reports.
fn start_local(on_updates: Rc<dyn Fn(Vec<Update>)>) -> Option<Local> {
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
                on_updates(batch);
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
