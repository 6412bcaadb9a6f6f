//! A stack proposal off the page's thread: a worker of its own (the plan's loader, answering the tagged proposal
//! message), ended once it answers; planned on the page only when no worker can start.

use crate::plan_client::spawn_worker;
use crate::plan_jobs::{run_proposal, ProposalReply, ProposalRequest, PROPOSAL_TAG};
use ohmstack_core::Project;
use wasm_bindgen::prelude::*;
use web_sys::MessageEvent;
use yew::Callback;

/// The proposed project and what it could not meet, or why there is none.
pub type Proposed = Result<(Project, Vec<String>), String>;

fn read(reply: ProposalReply) -> Proposed {
    if let Some(e) = reply.error {
        return Err(e);
    }
    let text = reply.project.ok_or("the proposal came back empty")?;
    let project = Project::from_json(&text).map_err(|e| e.to_string())?;
    Ok((project, reply.unmet))
}

/// Proposes glass constructions for `project`'s stack (its target board thickness, if set), then calls `done`.
pub fn propose(project: &Project, done: Callback<Proposed>) {
    let request = ProposalRequest {
        project: serde_json::to_string(project).unwrap_or_default(),
        target_thickness_m: project.fab.target_thickness_m,
    };
    let Ok(worker) = spawn_worker() else {
        done.emit(read(run_proposal(&request)));
        return;
    };
    let ended = worker.clone();
    let on_done = done.clone();
    let on_message = Closure::<dyn FnMut(MessageEvent)>::new(move |e: MessageEvent| {
        let text = e.data().as_string().unwrap_or_default();
        let Some(body) = text.strip_prefix(PROPOSAL_TAG) else {
            return;
        };
        ended.terminate();
        on_done.emit(
            serde_json::from_str::<ProposalReply>(body)
                .map_err(|e| format!("the proposal could not be read: {e}"))
                .and_then(read),
        );
    });
    let failed = worker.clone();
    let on_error = Closure::<dyn FnMut(web_sys::Event)>::new(move |_: web_sys::Event| {
        failed.terminate();
        done.emit(Err("the proposal worker stopped".into()));
    });
    worker.set_onmessage(Some(on_message.as_ref().unchecked_ref()));
    worker.set_onerror(Some(on_error.as_ref().unchecked_ref()));
    // The closures live until the worker is ended; one proposal leaks two small closures.
    on_message.forget();
    on_error.forget();
    let _ = worker.post_message(&JsValue::from_str(&format!(
        "{PROPOSAL_TAG}{}",
        serde_json::to_string(&request).unwrap_or_default()
    )));
}
