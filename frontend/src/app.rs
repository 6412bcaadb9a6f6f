//! The app shell: owns the one state container, derives the plan, autosaves this tab's project, notices another
//! tab's saves to it, listens for undo/redo keys and lays out the panels.

use crate::bridge;
use crate::panels::{Layers, Rules, Toolbar};
use crate::persist;
use crate::plan_client::{self, PlanClient};
use crate::plan_jobs::{FieldPlan, Previewer, RowState};
use crate::state::{self, Action, Notice};
use ohmstack_core::Plan;
use std::rc::Rc;
use wasm_bindgen::JsCast;
use yew::prelude::*;

/// The field plan as the page sees it, with where it runs.
#[derive(Default, PartialEq)]
struct FieldState {
    plan: FieldPlan,
    /// "worker", or "page" when the plan runs on the page's thread ("" until the client starts).
    runner: &'static str,
    /// Why no worker plans, when none does.
    fallback: Option<String>,
}

impl Reducible for FieldState {
    type Action = plan_client::Event;

    fn reduce(self: Rc<Self>, event: Self::Action) -> Rc<Self> {
        let mut next = FieldState {
            plan: self.plan.clone(),
            runner: self.runner,
            fallback: self.fallback.clone(),
        };
        match event {
            plan_client::Event::Submitted(generation, project, spread, held) => {
                next.plan.submitted(generation, *project, spread);
                for update in held {
                    next.plan.apply(update);
                }
            }
            plan_client::Event::Updates(updates) => {
                // Results for an older generation are dropped without a render.
                let mut taken = false;
                for update in updates {
                    taken |= next.plan.apply(update);
                }
                if !taken {
                    return self;
                }
            }
            plan_client::Event::Started(runner) => {
                // A fallback reported while starting stands.
                if next.fallback.is_none() {
                    next.runner = runner.name();
                }
            }
            plan_client::Event::Fallback(why) => {
                next.runner = "page";
                next.fallback = Some(why);
            }
        }
        Rc::new(next)
    }
}

/// This tab's hold on its saved project.
#[derive(Default)]
struct Session {
    /// The project id this tab saves under.
    id: String,
    /// The text this tab last wrote or read there, to tell its own saves from another tab's.
    last_written: Option<String>,
    /// The version another tab saved over it, while this tab has not chosen what to do: autosave holds off.
    conflict: Option<ohmstack_core::Project>,
}

/// The recent list as menu entries, without the project this tab edits.
fn recent_entries(list: &[persist::Recent], current: &str) -> Rc<Vec<(AttrValue, AttrValue)>> {
    Rc::new(
        list.iter()
            .filter(|r| r.id != current)
            .map(|r| {
                let title = if r.title.trim().is_empty() {
                    "Untitled"
                } else {
                    r.title.as_str()
                };
                let label = format!("{title} — {}", persist::time_label(r.saved_ms));
                (AttrValue::from(r.id.clone()), AttrValue::from(label))
            })
            .collect(),
    )
}

/// How long typing must pause before the tolerance spread of the value typed is asked for (common practice for
/// search-as-you-type, no source: long enough to skip the prefixes of a number typed at a normal pace).
const TYPING_PAUSE_MS: u32 = 500;

#[component]
pub fn App() -> Html {
    let session = use_mut_ref(Session::default);
    let state = {
        let session = session.clone();
        use_reducer(move || {
            let opened = persist::load();
            *session.borrow_mut() = Session {
                id: opened.id,
                last_written: opened.text,
                conflict: None,
            };
            let mut s = opened.state;
            s.notice = opened.message.map(|text| Notice { error: true, text });
            s
        })
    };
    let recent = use_state(persist::recent);
    // The title the other tab saved, shown until this tab chooses (the session holds the project itself).
    let conflict = use_state(|| None::<AttrValue>);
    // The design on screen, for the `storage` listener registered once at mount.
    let latest = use_mut_ref(|| state.project.clone());
    *latest.borrow_mut() = state.project.clone();
    // What this browser had saved when the page opened, read before the first autosave (the share panel weighs a
    // link against it).
    let saved_work = use_memo((), |_| crate::panels::share::local_work().map(Rc::new));
    let project = Rc::new(state.project.clone());
    let drafts = Rc::new(state.drafts.clone());
    // The closed-form preview follows every keystroke at once; the field figures (field check and tolerance
    // spread, every rule on its engine) come from the plan worker rule by rule and replace the preview's row by
    // row as they land (plan_client.rs, plan_jobs.rs).
    let previewer = use_mut_ref(Previewer::default);
    let preview = use_memo(state.project.clone(), move |p| {
        previewer.borrow_mut().plan(p)
    });
    let field = use_reducer(FieldState::default);
    let planner = use_mut_ref(|| None::<PlanClient>);
    let generation = use_mut_ref(|| 0u64);
    {
        let (planner, field) = (planner.clone(), field.dispatcher());
        use_effect_with((), move |_| {
            let dispatch = field.clone();
            let client = PlanClient::start(move |event| dispatch.dispatch(event));
            field.dispatch(plan_client::Event::Started(client.runner()));
            *planner.borrow_mut() = Some(client);
        });
    }
    // What was asked of the plan last (the project, with the spread or not), and the pause timer while typing.
    let sent = use_mut_ref(|| None::<(ohmstack_core::Project, bool)>);
    let pause = use_mut_ref(|| None::<gloo::timers::callback::Timeout>);
    {
        let (planner, generation, field) =
            (planner.clone(), generation.clone(), field.dispatcher());
        let plannable = preview.is_ok();
        let typing = state.typing();
        use_effect_with((state.project.clone(), typing), move |(p, typing)| {
            // Sends `p` unless the last request already covers it (a spread request covers a nominal one).
            let send = Rc::new(move |p: &ohmstack_core::Project, spread: bool| {
                {
                    let mut last = sent.borrow_mut();
                    if let Some((q, s)) = &*last {
                        if q == p && (*s || !spread) {
                            return;
                        }
                    }
                    *last = Some((p.clone(), spread));
                }
                let g = {
                    let mut g = generation.borrow_mut();
                    *g += 1;
                    *g
                };
                // The workers answer on later tasks, so the request can go out before the page takes it in.
                let held = planner
                    .borrow()
                    .as_ref()
                    .map(|client| client.submit(g, p, spread))
                    .unwrap_or_default();
                field.dispatch(plan_client::Event::Submitted(
                    g,
                    Box::new(p.clone()),
                    spread,
                    held,
                ));
            });
            // Any earlier pause timer is for an older project.
            pause.borrow_mut().take();
            // A stack that cannot be planned keeps the last good figures on screen (issue 17): nothing to send.
            if plannable {
                if *typing {
                    // The figures follow each keystroke; the spread waits until typing pauses (or the field is
                    // left, or Enter pressed), so a transient value never feeds it.
                    send(p, false);
                    let (send, p) = (send.clone(), p.clone());
                    *pause.borrow_mut() = Some(gloo::timers::callback::Timeout::new(
                        TYPING_PAUSE_MS,
                        move || send(&p, true),
                    ));
                } else {
                    send(p, true);
                }
            }
        });
    }
    // The potential map of the last field check, with the project it was solved for (any edit makes it stale).
    let field_map = use_state(|| None::<(ohmstack_core::Project, Rc<bridge::FieldMapView>)>);
    let map_serial = use_mut_ref(|| 0u32);
    // The map is tagged with the project on screen when it lands. The callback itself stays the same across
    // renders (it reads that project from a cell), so the rule cards' props do not change with it.
    let shown_project = use_mut_ref(|| state.project.clone());
    *shown_project.borrow_mut() = state.project.clone();
    let on_field_map = {
        let field_map = field_map.clone();
        use_callback((), move |mut view: bridge::FieldMapView, _| {
            let mut serial = map_serial.borrow_mut();
            *serial += 1;
            view.serial = *serial;
            field_map.set(Some((shown_project.borrow().clone(), Rc::new(view))));
        })
    };
    let current_map = match &*field_map {
        Some((p, view)) if *p == state.project => Some(view.clone()),
        _ => None,
    };
    let settled = field.plan.settled_for(&state.project);
    let (plan, rows): (Rc<Result<Plan, String>>, Rc<Vec<RowState>>) = match &*preview {
        Ok(p) => {
            let (merged, rows) = field.plan.merge(&state.project, p);
            (Rc::new(Ok(merged)), Rc::new(rows))
        }
        Err(e) => (Rc::new(Err(e.clone())), Rc::new(Vec::new())),
    };
    // The last plan that computed, shown greyed while the current one cannot be.
    let last_good = use_mut_ref(|| None::<(Rc<Plan>, Rc<Vec<RowState>>)>);
    let (shown, rows, plan_error) = match &*plan {
        Ok(p) => {
            let p = Rc::new(p.clone());
            *last_good.borrow_mut() = Some((p.clone(), rows.clone()));
            (Some(p), rows, None)
        }
        Err(e) => {
            let kept = last_good.borrow().clone();
            let (p, w) = kept.map(|(p, w)| (Some(p), w)).unwrap_or_default();
            (p, w, Some(e.clone()))
        }
    };
    let stale = plan_error.is_some() || state.has_errors();
    let plan_rc = plan.clone();
    let storage = use_state_eq(|| None::<AttrValue>);
    {
        let state = state.clone();
        let (storage, session, recent, conflict) = (
            storage.clone(),
            session.clone(),
            recent.clone(),
            conflict.clone(),
        );
        use_effect_with(
            (state.project.clone(), state.undo.len(), state.redo.len()),
            move |_| {
                // The session is borrowed only inside this block: setting state below may render at once, and
                // rendering reads the session.
                let (note, cleared, saved) = {
                    let mut session = session.borrow_mut();
                    let mut note = None;
                    let theirs = session.conflict.take();
                    if let Some(theirs) = &theirs {
                        // Another tab saved over this project and this tab has changed since: never write over
                        // theirs; this tab's work goes on as a project of its own.
                        if state.project != *theirs {
                            session.id = persist::fork();
                            note = Some(format!(
                                "“{}” was changed in another tab, so your work here is now kept as a separate project “{}”; both are in the recent list",
                                theirs.title, state.project.title
                            ));
                        }
                    }
                    let saved = persist::save(&state, &session.id);
                    if let Ok((text, _)) = &saved {
                        session.last_written = Some(text.clone());
                    }
                    (note, theirs.is_some(), saved)
                };
                if cleared {
                    conflict.set(None);
                }
                match saved {
                    Ok((_, list)) => {
                        recent.set(list);
                        storage.set(None);
                    }
                    Err(e) => storage.set(Some(AttrValue::from(e))),
                }
                if let Some(text) = note {
                    state.dispatch(Action::Notify(Some(Notice { error: false, text })));
                }
            },
        );
    }
    {
        let (session, recent, conflict, latest) = (
            session.clone(),
            recent.clone(),
            conflict.clone(),
            latest.clone(),
        );
        use_effect_with((), move |_| {
            // Fired in every other tab of this browser when one of them writes to storage.
            let listener = web_sys::window().map(|window| {
                gloo::events::EventListener::new(&window, "storage", move |e| {
                    let Some(e) = e.dyn_ref::<web_sys::StorageEvent>() else {
                        return;
                    };
                    let (key, value) = (e.key(), e.new_value());
                    if key.as_deref() == Some(persist::INDEX_KEY) {
                        recent.set(value.map(|v| persist::decode_index(&v)).unwrap_or_default());
                        return;
                    }
                    let current = latest.borrow().clone();
                    let outside = {
                        let session = session.borrow();
                        persist::outside_change(
                            key.as_deref(),
                            value.as_deref(),
                            &session.id,
                            session.last_written.as_deref(),
                            &current,
                        )
                    };
                    match outside {
                        persist::Outside::Ignore => {}
                        persist::Outside::Same => {
                            {
                                let mut session = session.borrow_mut();
                                session.last_written = value;
                                session.conflict = None;
                            }
                            conflict.set(None);
                        }
                        persist::Outside::Changed(theirs) => {
                            let title = AttrValue::from(theirs.title.clone());
                            session.borrow_mut().conflict = Some(*theirs);
                            conflict.set(Some(title));
                        }
                    }
                })
            });
            move || drop(listener)
        });
    }
    {
        let dispatcher = state.dispatcher();
        use_effect_with((), move |_| {
            let listener = web_sys::window().and_then(|w| w.document()).map(|doc| {
                // Not passive: the handler must stop the browser's own undo in text fields.
                let options = gloo::events::EventListenerOptions::enable_prevent_default();
                gloo::events::EventListener::new_with_options(&doc, "keydown", options, move |e| {
                    let Some(e) = e.dyn_ref::<web_sys::KeyboardEvent>() else {
                        return;
                    };
                    if !(e.ctrl_key() || e.meta_key()) || e.alt_key() {
                        return;
                    }
                    let key = e.key().to_ascii_lowercase();
                    let action = match (key.as_str(), e.shift_key()) {
                        ("z", false) => Action::Undo,
                        ("z", true) | ("y", false) => Action::Redo,
                        _ => return,
                    };
                    e.prevent_default();
                    dispatcher.dispatch(action);
                })
            });
            move || drop(listener)
        });
    }
    // One callback for the whole session (the dispatcher does not change), so components given it can skip renders.
    let dispatch = {
        let d = state.dispatcher();
        use_callback((), move |a: Action, _| d.dispatch(a))
    };
    let on_load = {
        let d = dispatch.clone();
        Callback::from(move |p: ohmstack_core::Project| {
            d.emit(Action::Load(
                Box::new(p),
                "opened the linked project".into(),
            ))
        })
    };
    let on_demo = {
        let d = dispatch.clone();
        Callback::from(move |_: ()| {
            d.emit(Action::Load(
                Box::new(ohmstack_core::design::demo::project()),
                "opened the demo".into(),
            ))
        })
    };
    let on_blank = {
        let d = dispatch.clone();
        Callback::from(move |_: ()| {
            d.emit(Action::Load(
                Box::new(state::blank_project()),
                "new blank project".into(),
            ))
        })
    };
    let on_take_theirs = {
        let (d, session, conflict) = (dispatch.clone(), session.clone(), conflict.clone());
        Callback::from(move |_: ()| {
            let theirs = session.borrow_mut().conflict.take();
            conflict.set(None);
            if let Some(p) = theirs {
                let message = format!("opened “{}” as the other tab saved it", p.title);
                d.emit(Action::Load(Box::new(p), message));
            }
        })
    };
    let on_keep_copy = {
        let (d, session, conflict, recent, storage) = (
            dispatch.clone(),
            session.clone(),
            conflict.clone(),
            recent.clone(),
            storage.clone(),
        );
        let state = state.clone();
        Callback::from(move |_: ()| {
            let Some(theirs) = session.borrow_mut().conflict.take() else {
                return;
            };
            let id = persist::fork();
            // Nothing else changes on screen, so the autosave effect will not run: save the copy now.
            let saved = persist::save(&state, &id);
            {
                let mut session = session.borrow_mut();
                session.id = id;
                if let Ok((text, _)) = &saved {
                    session.last_written = Some(text.clone());
                }
            }
            conflict.set(None);
            match saved {
                Ok((_, list)) => {
                    recent.set(list);
                    d.emit(Action::Notify(Some(Notice {
                        error: false,
                        text: format!(
                            "kept your work as a separate project “{}”; the other tab's “{}” is in the recent list",
                            state.project.title, theirs.title
                        ),
                    })));
                }
                Err(e) => storage.set(Some(AttrValue::from(e))),
            }
        })
    };
    let on_reopen = {
        let (d, session, conflict, recent) = (
            dispatch.clone(),
            session.clone(),
            conflict.clone(),
            recent.clone(),
        );
        Callback::from(move |id: String| {
            let title = recent
                .iter()
                .find(|r| r.id == id)
                .map(|r| r.title.clone())
                .unwrap_or_else(|| "that project".into());
            match persist::reopen(&id, &title) {
                Ok((opened, text)) => {
                    *session.borrow_mut() = Session {
                        id,
                        last_written: Some(text),
                        conflict: None,
                    };
                    conflict.set(None);
                    d.emit(Action::Reopen(
                        Box::new(opened),
                        format!("reopened “{title}”; the project you left is in the recent list"),
                    ));
                }
                Err(text) => d.emit(Action::Notify(Some(Notice { error: true, text }))),
            }
        })
    };
    let recent_menu = recent_entries(&recent, &session.borrow().id);
    let download_url = use_mut_ref(|| None::<gloo::file::ObjectUrl>);
    let on_save = {
        let d = dispatch.clone();
        let project = project.clone();
        let download_url = download_url.clone();
        Callback::from(move |_: ()| {
            let name = persist::file_name(&project);
            match persist::download(&name, &project.to_json()) {
                // Keep the URL alive until the next save so the browser can finish reading it.
                Ok(url) => *download_url.borrow_mut() = Some(url),
                Err(e) => d.emit(Action::Notify(Some(Notice {
                    error: true,
                    text: format!("could not save: {e}"),
                }))),
            }
        })
    };
    let reader = use_mut_ref(|| None::<gloo::file::callbacks::FileReader>);
    let on_open = {
        let d = dispatch.clone();
        let reader = reader.clone();
        Callback::from(move |file: web_sys::File| {
            let file = gloo::file::File::from(file);
            let name = file.name();
            if file.size() > ohmstack_core::design::project::MAX_JSON_BYTES as u64 {
                d.emit(Action::Notify(Some(Notice {
                    error: true,
                    text: format!(
                        "could not open {name}: larger than {} bytes; your work is unchanged",
                        ohmstack_core::design::project::MAX_JSON_BYTES
                    ),
                })));
                return;
            }
            let d = d.clone();
            let task = gloo::file::callbacks::read_as_text(&file, move |result| {
                let action = match result
                    .map_err(|e| e.to_string())
                    .and_then(|text| persist::open_file(&text))
                {
                    Ok((project, notes)) => Action::Load(
                        Box::new(project),
                        std::iter::once(format!("opened {name}"))
                            .chain(notes.iter().map(|n| format!("it was {n}")))
                            .collect::<Vec<_>>()
                            .join("; "),
                    ),
                    Err(e) => Action::Notify(Some(Notice {
                        error: true,
                        text: format!("could not open {name}: {e}; your work is unchanged"),
                    })),
                };
                d.emit(action);
            });
            *reader.borrow_mut() = Some(task);
        })
    };
    html! {
        <main id="app" data-ready="true" data-stale={stale.to_string()} data-settled={settled.to_string()}
            data-field-runner={field.runner} data-field-generation={field.plan.generation.to_string()}
            data-field-computations={field.plan.computations.to_string()}>
            <Toolbar project={project.clone()} drafts={drafts.clone()} can_undo={!state.undo.is_empty()} can_redo={!state.redo.is_empty()}
                notice={state.notice.clone()} storage={(*storage).clone()} dispatch={dispatch.clone()}
                {on_demo} {on_blank} {on_save} {on_open} recent={recent_menu} {on_reopen}
                conflict={(*conflict).clone()} {on_take_theirs} {on_keep_copy} />
            <crate::panels::summary::SummaryPanel plan={shown.clone()} unit={state.project.units} {stale} />
            if let Some(why) = &field.fallback {
                <p class="note" role="status" data-testid="field-fallback" title={why.clone()}>
                    { "The field engine runs on this page (a background worker could not start), one rule at a time: typing may pause briefly while it works." }
                </p>
            }
            if let Some(e) = &field.plan.failure {
                <p class="error" role="alert" data-testid="field-failure">{ format!("The field engine could not plan this project: {e}") }</p>
            }
            if let Some(e) = plan_error {
                <p class="error" role="alert" data-testid="plan-error">{ e }</p>
            }
            <crate::panels::share::SharePanel project={project.clone()} on_load={on_load} saved_work={(*saved_work).clone()} />
            <Layers project={project.clone()} drafts={drafts.clone()} plan={shown.clone()} dispatch={dispatch.clone()} />
            <Rules project={project.clone()} drafts={drafts.clone()} plan={shown} {rows} {stale} dispatch={dispatch.clone()} {on_field_map} />
            <crate::panels::glass::GlassPanel project={project.clone()} drafts={drafts.clone()} dispatch={dispatch.clone()} />
            <crate::panels::process::ProcessPanel project={project.clone()} drafts={drafts.clone()} dispatch={dispatch.clone()} />
            <crate::panels::routing::RoutingPanel project={project.clone()} {drafts} {dispatch} />
            <crate::panels::pictures::PicturesPanel project={project.clone()} plan={plan_rc.clone()} field_map={current_map} />
            <crate::panels::notes::NotesPanel project={project} plan={plan_rc} />
            <footer class="cautions">
                { "Design estimates only. Final impedance is confirmed by the fabricator on test coupons. Trace spacing here is not electrical-safety clearance; follow local codes and licensed practice." }
            </footer>
        </main>
    }
}
