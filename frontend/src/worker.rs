//! The plan worker's side: the same WASM started in a dedicated worker (no `window`) takes the page's requests and
//! plans them rule by rule, yielding to its message queue between rules so that a newer request is seen before the
//! next rule starts. The protocol and the cache are in `plan_jobs.rs`.

use crate::plan_jobs::{
    run_proposal, Planner, ProposalReply, ProposalRequest, Request, Update, PROPOSAL_TAG,
};
use std::cell::{Cell, RefCell};
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;
use web_sys::{DedicatedWorkerGlobalScope, MessageChannel, MessageEvent};

thread_local! {
    static PLANNER: RefCell<Planner> = RefCell::new(Planner::default());
    /// A step is already queued on the channel.
    static QUEUED: Cell<bool> = const { Cell::new(false) };
    /// Posting on one end of this channel queues a task on the other: a yield with no timer clamping.
    static TICK: RefCell<Option<MessageChannel>> = const { RefCell::new(None) };
}

/// Whether this code runs in a dedicated worker (the page has a `window`, a worker does not).
pub fn in_worker() -> bool {
    js_sys::global()
        .dyn_into::<DedicatedWorkerGlobalScope>()
        .is_ok()
}

/// Starts serving plan requests in this worker.
pub fn serve() {
    let scope: DedicatedWorkerGlobalScope = js_sys::global().unchecked_into();
    let Ok(channel) = MessageChannel::new() else {
        post(
            &scope,
            &Update::Failed {
                generation: 0,
                message: "the plan worker could not make a message channel".into(),
            },
        );
        return;
    };
    let on_tick = Closure::<dyn FnMut(MessageEvent)>::new(move |_| step());
    channel
        .port1()
        .set_onmessage(Some(on_tick.as_ref().unchecked_ref()));
    // Both closures live as long as the worker.
    on_tick.forget();
    TICK.with(|t| *t.borrow_mut() = Some(channel));
    let on_request = Closure::<dyn FnMut(MessageEvent)>::new(move |e: MessageEvent| {
        // A stack proposal (text with its tag) is answered at once, in the same tagged form.
        if let Some(body) = e
            .data()
            .as_string()
            .as_deref()
            .and_then(|t| t.strip_prefix(PROPOSAL_TAG))
        {
            let reply = match serde_json::from_str::<ProposalRequest>(body) {
                Ok(request) => run_proposal(&request),
                Err(err) => ProposalReply {
                    project: None,
                    unmet: Vec::new(),
                    error: Some(format!(
                        "the proposal worker got a message it cannot read: {err}"
                    )),
                },
            };
            let text = serde_json::to_string(&reply).unwrap_or_default();
            let scope: DedicatedWorkerGlobalScope = js_sys::global().unchecked_into();
            let _ = scope.post_message(&JsValue::from_str(&format!("{PROPOSAL_TAG}{text}")));
            return;
        }
        match serde_wasm_bindgen::from_value::<Request>(e.data()) {
            Ok(request) => {
                PLANNER.with(|p| p.borrow_mut().request(&request));
                queue_step();
            }
            Err(err) => post(
                &js_sys::global().unchecked_into(),
                &Update::Failed {
                    generation: 0,
                    message: format!("the plan worker got a message it cannot read: {err}"),
                },
            ),
        }
    });
    scope.set_onmessage(Some(on_request.as_ref().unchecked_ref()));
    on_request.forget();
}

fn queue_step() {
    if QUEUED.with(|q| q.replace(true)) {
        return;
    }
    TICK.with(|t| {
        if let Some(channel) = t.borrow().as_ref() {
            // A failed post leaves the job queued until the next request.
            let _ = channel.port2().post_message(&JsValue::NULL);
        }
    });
}

/// One computed rule (with the cached rows before it, or the job's end), then a yield before the next.
fn step() {
    QUEUED.with(|q| q.set(false));
    let (batch, busy) = PLANNER.with(|p| {
        let mut p = p.borrow_mut();
        (p.run_batch(), p.busy())
    });
    if !batch.is_empty() {
        post_batch(&js_sys::global().unchecked_into(), &batch);
    }
    if busy {
        queue_step();
    }
}

fn post(scope: &DedicatedWorkerGlobalScope, update: &Update) {
    post_batch(scope, std::slice::from_ref(update));
}

/// Posts updates as one message (a list, as JSON text), so the page renders them at once. Text because reading a
/// rule's outcome from JSON on the page costs a fraction of walking the same data as JS objects (the page's
/// thread spent 100–150 ms per plan decoding objects in the profiler).
fn post_batch(scope: &DedicatedWorkerGlobalScope, batch: &[Update]) {
    let text = serde_json::to_string(batch).unwrap_or_else(|e| {
        let failed = [Update::Failed {
            generation: batch.first().map_or(0, Update::generation),
            message: format!("the plan worker could not send its result: {e}"),
        }];
        serde_json::to_string(&failed).unwrap_or_default()
    });
    // Posting can only fail for values that cannot be cloned, which a string is not.
    let _ = scope.post_message(&JsValue::from_str(&text));
}
