//! Share links: the "Copy link" button, opening a `#v1.…` link at start-up (and on `hashchange`), the
//! "replace your work?" dialog, and saving the project to local storage once start-up has settled.
//!
//! A link is untrusted input: a bad one shows the core's `ShareError` text and the current work stays.

use crate::bridge;
use crate::link;
use ohmstack_core::Project;
use std::rc::Rc;
use web_sys::HtmlInputElement;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct ShareProps {
    /// The project being edited.
    pub project: Rc<Project>,
    /// Replaces the project being edited (a link opened, or saved work restored).
    pub on_load: Callback<Project>,
    /// The work this browser had saved when the page opened (read before the first autosave), if any.
    #[prop_or_default]
    pub saved_work: Option<Rc<Project>>,
}

/// What the status line says, and how loudly.
#[derive(Debug, Clone, PartialEq)]
enum Status {
    Info(String),
    Error(String),
}

/// Whether edits may be saved yet: not before start-up has chosen the project, and not while a project handed
/// to `on_load` has still to arrive back in the props (that render would otherwise overwrite the saved work).
#[derive(Debug, Clone, PartialEq)]
enum Gate {
    Starting,
    Awaiting(Box<Project>),
    Open,
}

/// A linked project waiting for the user's answer.
#[derive(Debug, Clone, PartialEq)]
struct Pending {
    linked: Rc<Project>,
    local_title: String,
}

/// What to do with a fragment, given the work already in the browser (pure, so the policy reads in one place).
enum Decision {
    /// Open this project (the link, or saved work when there is no link).
    Load(Box<Project>, Option<Status>),
    /// Ask first: the link differs from the work in the browser (shown meanwhile, loaded if not on screen).
    Ask(Box<Project>, Option<Box<Project>>),
    /// Nothing to do (the link holds the work already shown), with what to say.
    Keep(Option<Status>),
}

fn decide(fragment: Option<&str>, local: Option<&Project>, current: &Project) -> Decision {
    let Some(fragment) = fragment else {
        return match local {
            Some(l) if l != current => Decision::Load(Box::new(l.clone()), None),
            _ => Decision::Keep(None),
        };
    };
    match bridge::decode_link_noting(fragment) {
        Err(message) => {
            let kept = "The link was not opened; your current work is kept.";
            let status = Some(Status::Error(format!("{message}. {kept}")));
            match local {
                Some(l) if l != current => Decision::Load(Box::new(l.clone()), status),
                _ => Decision::Keep(status),
            }
        }
        Ok((linked, notes)) => {
            // An old link's numbers may now come from another engine: say so rather than let them change silently.
            let opened = Status::Info(
                std::iter::once(format!("Opened the linked project “{}”.", linked.title))
                    .chain(notes.iter().map(|n| format!("It was {n}.")))
                    .collect::<Vec<_>>()
                    .join(" "),
            );
            match local {
                Some(l) if *l != linked => Decision::Ask(
                    Box::new(linked),
                    (l != current).then(|| Box::new(l.clone())),
                ),
                _ if linked == *current => Decision::Keep(Some(opened)),
                _ => Decision::Load(Box::new(linked), Some(opened)),
            }
        }
    }
}

/// The saved work, if there is any and it still reads as a valid project.
pub fn local_work() -> Option<Project> {
    link::load_local().and_then(|text| bridge::project_from_json(&text).ok())
}

#[component]
pub fn SharePanel(props: &ShareProps) -> Html {
    let status = use_state(|| None::<Status>);
    let link_text = use_state(|| None::<String>);
    let pending = use_state(|| None::<Pending>);
    let gate = use_mut_ref(|| Gate::Starting);
    // The latest project, for the `hashchange` listener registered once at mount.
    let latest = use_mut_ref(|| (*props.project).clone());
    *latest.borrow_mut() = (*props.project).clone();

    // Resolves a fragment against the saved work; shared by start-up and `hashchange`.
    let resolve: Rc<dyn Fn(Option<String>, Option<Project>)> = {
        let (status, pending, gate, latest) = (
            status.clone(),
            pending.clone(),
            gate.clone(),
            latest.clone(),
        );
        let on_load = props.on_load.clone();
        Rc::new(move |fragment: Option<String>, local: Option<Project>| {
            let current = latest.borrow().clone();
            match decide(fragment.as_deref(), local.as_ref(), &current) {
                Decision::Load(project, said) => {
                    *gate.borrow_mut() = Gate::Awaiting(project.clone());
                    on_load.emit(*project);
                    status.set(said);
                }
                Decision::Ask(linked, show) => {
                    *gate.borrow_mut() = match show {
                        Some(local) => {
                            on_load.emit((*local).clone());
                            Gate::Awaiting(local)
                        }
                        None => Gate::Open,
                    };
                    pending.set(Some(Pending {
                        linked: Rc::new(*linked),
                        local_title: local.map(|l| l.title).unwrap_or_default(),
                    }));
                }
                Decision::Keep(said) => {
                    *gate.borrow_mut() = Gate::Open;
                    if said.is_some() {
                        status.set(said);
                    }
                }
            }
        })
    };

    {
        let (resolve, latest) = (resolve.clone(), latest.clone());
        let saved = props.saved_work.as_deref().cloned();
        use_effect_with((), move |_| {
            resolve(link::fragment(), saved);
            // A link pasted into the address bar of the open page changes only the fragment: no reload.
            let listener =
                gloo::events::EventListener::new(&gloo::utils::window(), "hashchange", {
                    let resolve = resolve.clone();
                    let latest = latest.clone();
                    move |_| {
                        // The work on screen is what a new link would replace.
                        let current = latest.borrow().clone();
                        resolve(link::fragment(), Some(current));
                    }
                });
            move || drop(listener)
        });
    }

    // Saving is the editor's autosave (this tab's project key); this panel only reads what was saved at start-up.
    let _ = &gate;

    let copy = {
        let (status, link_text, project) =
            (status.clone(), link_text.clone(), props.project.clone());
        Callback::from(move |_: MouseEvent| {
            let fragment = bridge::encode_link(&project);
            if let Err(e) = link::replace_fragment(&fragment) {
                status.set(Some(Status::Error(format!(
                    "The address bar could not be updated ({e}); copy the link below."
                ))));
            }
            let url = match link::href() {
                href if href.contains(&fragment) => href,
                href => format!("{}#{fragment}", href.split('#').next().unwrap_or_default()),
            };
            link_text.set(Some(url.clone()));
            let status = status.clone();
            link::copy_text(&url, move |result| {
                status.set(Some(match result {
                    Ok(()) => Status::Info("Link copied to the clipboard.".into()),
                    Err(e) => Status::Info(format!(
                        "Copy the link below (the clipboard is not available here: {e})."
                    )),
                }))
            });
        })
    };
    let select_all = Callback::from(|e: FocusEvent| {
        if let Some(input) = e.target_dyn_into::<HtmlInputElement>() {
            input.select();
        }
    });
    let open_linked = {
        let (pending, gate, status, on_load) = (
            pending.clone(),
            gate.clone(),
            status.clone(),
            props.on_load.clone(),
        );
        Callback::from(move |_: MouseEvent| {
            if let Some(p) = (*pending).clone() {
                let project = (*p.linked).clone();
                status.set(Some(Status::Info(format!(
                    "Opened the linked project “{}”.",
                    project.title
                ))));
                *gate.borrow_mut() = Gate::Awaiting(Box::new(project.clone()));
                on_load.emit(project);
            }
            pending.set(None);
        })
    };
    let keep_mine = {
        let (pending, status) = (pending.clone(), status.clone());
        Callback::from(move |_: MouseEvent| {
            pending.set(None);
            // Drop the fragment so a reload does not ask again.
            let _ = link::replace_fragment("");
            status.set(Some(Status::Info(
                "Kept your work; the linked project was not opened.".into(),
            )));
        })
    };

    let status_line = match &*status {
        None => html! {},
        Some(Status::Info(t)) => {
            html! { <p class="share-status" data-testid="share-status" role="status">{ t.clone() }</p> }
        }
        Some(Status::Error(t)) => html! {
            <p class="share-status error" data-testid="share-error" role="alert">{ t.clone() }</p>
        },
    };
    let link_field = match &*link_text {
        None => html! {},
        Some(url) => html! {
            <input class="share-link" data-testid="share-link" readonly=true aria-label="Share link"
                value={url.clone()} onfocus={select_all} />
        },
    };
    let dialog = match &*pending {
        None => html! {},
        Some(p) => html! {
            <div class="dialog-backdrop no-print">
                <div class="dialog" role="dialog" aria-modal="true" aria-labelledby="link-dialog-title"
                    data-testid="link-dialog">
                    <h2 id="link-dialog-title">{ "Open the linked project?" }</h2>
                    <p>
                        { "The link holds the project “" }<strong>{ p.linked.title.clone() }</strong>
                        { format!("” ({} layers, {} rules). ", p.linked.stackup.layers.len(), p.linked.rules.len()) }
                        { "This browser also holds your work “" }<strong>{ p.local_title.clone() }</strong>
                        { "”, which opening the link would replace." }
                    </p>
                    <div class="dialog-buttons">
                        <button data-testid="open-linked" onclick={open_linked}>{ "Open the linked project" }</button>
                        <button data-testid="keep-mine" onclick={keep_mine}>{ "Keep my work" }</button>
                    </div>
                </div>
            </div>
        },
    };
    html! {
        <section class="panel share-panel no-print" aria-label="Share">
            <button data-testid="copy-link" onclick={copy}>{ "Copy link" }</button>
            { link_field }
            { status_line }
            { dialog }
        </section>
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn demo_titled(title: &str) -> Project {
        let mut p = ohmstack_core::design::demo::project();
        p.title = title.into();
        p
    }

    #[test]
    fn no_link_restores_saved_work_once() {
        let (demo, mine) = (ohmstack_core::design::demo::project(), demo_titled("mine"));
        assert!(matches!(decide(None, Some(&mine), &demo), Decision::Load(p, None) if *p == mine));
        assert!(matches!(
            decide(None, Some(&mine), &mine),
            Decision::Keep(None)
        ));
        assert!(matches!(decide(None, None, &demo), Decision::Keep(None)));
    }

    #[test]
    fn a_link_to_other_work_asks_and_shows_the_saved_work_meanwhile() {
        let (demo, mine, theirs) = (
            ohmstack_core::design::demo::project(),
            demo_titled("mine"),
            demo_titled("theirs"),
        );
        let link = bridge::encode_link(&theirs);
        match decide(Some(&link), Some(&mine), &demo) {
            Decision::Ask(linked, Some(show)) => {
                assert_eq!(*linked, theirs);
                assert_eq!(*show, mine);
            }
            _ => panic!("expected a question"),
        }
        // Without saved work the link opens; a link to the work on screen changes nothing.
        assert!(
            matches!(decide(Some(&link), None, &demo), Decision::Load(p, Some(_)) if *p == theirs)
        );
        assert!(matches!(
            decide(Some(&link), Some(&theirs), &theirs),
            Decision::Keep(Some(_))
        ));
    }

    #[test]
    fn a_bad_link_keeps_the_work_and_says_the_core_error() {
        let (demo, mine) = (ohmstack_core::design::demo::project(), demo_titled("mine"));
        let core = ohmstack_core::design::share::decode("v9.abc")
            .unwrap_err()
            .to_string();
        match decide(Some("v9.abc"), Some(&mine), &demo) {
            Decision::Load(p, Some(Status::Error(msg))) => {
                assert_eq!(*p, mine);
                assert!(msg.starts_with(&core), "{msg}");
            }
            _ => panic!("expected the saved work and an error"),
        }
    }
}
