//! Autosave to localStorage and project files: pure encode/decode of the saved state, plus thin browser helpers
//! that never panic when storage is switched off or full (every web_sys call is checked).

use crate::state::State;
use ohmstack_core::Project;

/// Storage key of the current project (the CLI's project JSON).
pub const PROJECT_KEY: &str = "ohmstack.project.v1";
/// Storage key of the undo/redo history.
pub const HISTORY_KEY: &str = "ohmstack.history.v1";
/// Where an unreadable saved project is moved so it is not lost by the next autosave.
pub const UNREADABLE_KEY: &str = "ohmstack.project.unreadable";
/// Undo steps kept across reloads (the in-memory history keeps more).
pub const SAVED_HISTORY: usize = 30;

/// Reads a saved project: the strict schema first, then (for work saved mid-edit with a rule pointing at a removed
/// layer) the same schema with only the stack checked, since broken rules are shown in their rows anyway.
pub fn decode_project(text: &str) -> Result<Project, String> {
    match Project::from_json(text) {
        Ok(p) => Ok(p),
        Err(strict) => {
            let p: Project = serde_json::from_str(text).map_err(|_| strict.to_string())?;
            if p.schema != ohmstack_core::design::project::SCHEMA_VERSION {
                return Err(strict.to_string());
            }
            p.stackup.validate().map_err(|e| e.to_string())?;
            Ok(p)
        }
    }
}

/// Reads a project file chosen by the user: exactly the CLI's schema ([`Project::from_json`]), the core's message
/// on failure.
pub fn open_file(text: &str) -> Result<Project, String> {
    Project::from_json(text).map_err(|e| e.to_string())
}

/// The history as JSON: `{"undo": [...], "redo": [...]}`, the most recent steps only.
pub fn encode_history(state: &State) -> String {
    let tail = |v: &[Project]| v[v.len().saturating_sub(SAVED_HISTORY)..].to_vec();
    serde_json::json!({ "undo": tail(&state.undo), "redo": tail(&state.redo) }).to_string()
}

/// Reads the history back; unreadable entries are dropped (history is a convenience, never a reason to fail).
pub fn decode_history(text: &str) -> (Vec<Project>, Vec<Project>) {
    let Ok(value) = serde_json::from_str::<serde_json::Value>(text) else {
        return (Vec::new(), Vec::new());
    };
    let list = |key: &str| -> Vec<Project> {
        value
            .get(key)
            .and_then(|v| v.as_array())
            .map(|a| {
                a.iter()
                    .filter_map(|p| decode_project(&p.to_string()).ok())
                    .collect()
            })
            .unwrap_or_default()
    };
    (list("undo"), list("redo"))
}

fn storage() -> Option<web_sys::Storage> {
    web_sys::window()?.local_storage().ok().flatten()
}

/// The state to start with, and a message when saved work could not be read.
pub fn load() -> (State, Option<String>) {
    let Some(store) = storage() else {
        return (
            State::default(),
            Some("browser storage is unavailable: work will not be saved between visits".into()),
        );
    };
    let Ok(Some(text)) = store.get_item(PROJECT_KEY) else {
        return (State::default(), None);
    };
    match decode_project(&text) {
        Ok(project) => {
            let (undo, redo) = store
                .get_item(HISTORY_KEY)
                .ok()
                .flatten()
                .map(|h| decode_history(&h))
                .unwrap_or_default();
            (State::restored(project, undo, redo), None)
        }
        Err(e) => {
            let _ = store.set_item(UNREADABLE_KEY, &text);
            (
                State::default(),
                Some(format!(
                    "the saved project could not be read ({e}); it was kept under {UNREADABLE_KEY} and the demo opened"
                )),
            )
        }
    }
}

/// Saves the project and its history; the error is a message for the status line.
pub fn save(state: &State) -> Result<(), String> {
    let store = storage().ok_or("browser storage is unavailable: changes are not autosaved")?;
    store
        .set_item(PROJECT_KEY, &state.project.to_json())
        .map_err(|_| {
            "autosave failed (storage full or blocked): download the project to keep it"
        })?;
    // History is secondary: if it does not fit, drop it rather than report the project as unsaved.
    if store.set_item(HISTORY_KEY, &encode_history(state)).is_err() {
        let _ = store.remove_item(HISTORY_KEY);
    }
    Ok(())
}

/// A file name for downloading the project: the title with unsafe characters replaced.
pub fn file_name(project: &Project) -> String {
    let stem: String = project
        .title
        .chars()
        .map(|c| {
            if c.is_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '-'
            }
        })
        .collect();
    let stem = stem.trim_matches('-');
    if stem.is_empty() {
        "ohmstack-project.json".into()
    } else {
        format!("{stem}.ohmstack.json")
    }
}

/// Offers `text` as a download named `name` through a Blob URL. Returns the URL holder, which must live until the
/// browser has started the download (dropping it revokes the URL).
pub fn download(name: &str, text: &str) -> Result<gloo::file::ObjectUrl, String> {
    let blob = gloo::file::Blob::new_with_options(text, Some("application/json"));
    let url = gloo::file::ObjectUrl::from(blob);
    let document = web_sys::window()
        .and_then(|w| w.document())
        .ok_or("no document to download from")?;
    let anchor = document
        .create_element("a")
        .map_err(|_| "could not create a download link")?;
    let _ = anchor.set_attribute("href", &url);
    let _ = anchor.set_attribute("download", name);
    use wasm_bindgen::JsCast;
    let anchor: web_sys::HtmlElement = anchor
        .dyn_into()
        .map_err(|_| "could not create a download link")?;
    anchor.click();
    Ok(url)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::state::{Action, Field, RuleField};
    use std::rc::Rc;
    use yew::Reducible;

    #[test]
    fn project_and_history_round_trip() {
        let s = Rc::new(State::default());
        let s = s.reduce(Action::Edit(Field::Rule(0, RuleField::Target), "55".into()));
        let p = decode_project(&s.project.to_json()).unwrap();
        assert_eq!(p, s.project);
        let (undo, redo) = decode_history(&encode_history(&s));
        assert_eq!(undo, s.undo);
        assert!(redo.is_empty());
    }

    #[test]
    fn broken_rule_reference_still_restores_but_bad_stack_does_not() {
        let mut p = ohmstack_core::design::demo::project();
        p.rules[0].layer = "gone".into();
        assert!(Project::from_json(&p.to_json()).is_err());
        assert_eq!(decode_project(&p.to_json()).unwrap(), p);
        let mut bad = ohmstack_core::design::demo::project();
        bad.stackup.layers.clear();
        assert!(decode_project(&bad.to_json()).is_err());
        assert!(decode_project("{not json").is_err());
        assert_eq!(decode_history("garbage"), (Vec::new(), Vec::new()));
    }

    #[test]
    fn file_names_are_safe() {
        let mut p = ohmstack_core::design::demo::project();
        p.title = "a/b: c".into();
        assert_eq!(file_name(&p), "a-b--c.ohmstack.json");
        p.title = "//".into();
        assert_eq!(file_name(&p), "ohmstack-project.json");
    }
}
