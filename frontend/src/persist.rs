//! Autosave to localStorage and project files: pure encode/decode of the saved state, plus thin browser helpers
//! that never panic when storage is switched off or full (every web_sys call is checked).

use crate::state::State;
use ohmstack_core::Project;

/// Where each project lives: `ohmstack.project.<id>`, its undo history beside it under `ohmstack.history.<id>`.
pub const PROJECT_PREFIX: &str = "ohmstack.project.";
pub const HISTORY_PREFIX: &str = "ohmstack.history.";
/// The list of projects kept in this browser (id, title, last save), for reopening them.
pub const INDEX_KEY: &str = "ohmstack.projects.v1";
/// Session-storage key holding the id of the project this tab edits (session storage is per tab).
pub const TAB_KEY: &str = "ohmstack.tab";
/// The single key every tab shared before projects had ids; read once and moved to its own id.
pub const LEGACY_PROJECT_KEY: &str = "ohmstack.project.v1";
pub const LEGACY_HISTORY_KEY: &str = "ohmstack.history.v1";
/// Where an unreadable saved project is moved so it is not lost by the next autosave.
pub const UNREADABLE_KEY: &str = "ohmstack.project.unreadable";
/// Undo steps kept across reloads (the in-memory history keeps more).
pub const SAVED_HISTORY: usize = 30;

/// The storage key of project `id`.
pub fn project_key(id: &str) -> String {
    format!("{PROJECT_PREFIX}{id}")
}

/// The storage key of the undo history of project `id`.
pub fn history_key(id: &str) -> String {
    format!("{HISTORY_PREFIX}{id}")
}

/// A project id from a time (ms since 1970) and a random number in [0, 1): `p` and base-36 digits, so it never
/// equals the legacy `v1` or the `unreadable` key.
pub fn make_id(now_ms: f64, random: f64) -> String {
    let base36 = |mut n: u64| {
        let mut digits = Vec::new();
        loop {
            digits.push(std::char::from_digit((n % 36) as u32, 36).unwrap_or('0'));
            n /= 36;
            if n == 0 {
                break;
            }
        }
        digits.iter().rev().collect::<String>()
    };
    let time = base36(now_ms.max(0.0) as u64);
    let salt = base36((random.clamp(0.0, 1.0) * 36f64.powi(5)) as u64);
    format!("p{time}-{salt:0>5}")
}

/// Whether `id` looks like one [`make_id`] made (anything else in session storage is ignored).
pub fn is_id(id: &str) -> bool {
    id.len() > 2
        && id.len() < 40
        && id.starts_with('p')
        && id[1..]
            .chars()
            .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '-')
}

/// One project in the list of recent projects.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Recent {
    pub id: String,
    pub title: String,
    /// When it was last saved, ms since 1970.
    pub saved_ms: f64,
}

/// Reads the list of recent projects, most recent first; unreadable entries are dropped.
pub fn decode_index(text: &str) -> Vec<Recent> {
    let Ok(serde_json::Value::Array(items)) = serde_json::from_str::<serde_json::Value>(text)
    else {
        return Vec::new();
    };
    let mut list: Vec<Recent> = items
        .into_iter()
        .filter_map(|v| serde_json::from_value::<Recent>(v).ok())
        .filter(|r| is_id(&r.id))
        .collect();
    list.sort_by(|a, b| b.saved_ms.total_cmp(&a.saved_ms));
    list.dedup_by(|a, b| a.id == b.id);
    list
}

pub fn encode_index(list: &[Recent]) -> String {
    serde_json::to_string(list).unwrap_or_else(|_| "[]".into())
}

/// The list with project `id` saved just now under `title`: moved to the front.
pub fn touch(mut list: Vec<Recent>, id: &str, title: &str, now_ms: f64) -> Vec<Recent> {
    list.retain(|r| r.id != id);
    list.insert(
        0,
        Recent {
            id: id.to_string(),
            title: title.to_string(),
            saved_ms: now_ms,
        },
    );
    list
}

/// Which project a tab opens: its own (from session storage, so a reload keeps it), else the most recently
/// saved one, else none (a new project).
pub fn choose_project(tab_id: Option<&str>, index: &[Recent]) -> Option<String> {
    tab_id
        .filter(|id| is_id(id))
        .map(str::to_string)
        .or_else(|| index.first().map(|r| r.id.clone()))
}

/// What another tab's save to a project key means for this tab.
#[derive(Debug, Clone, PartialEq)]
pub enum Outside {
    /// Not this tab's project, or the text this tab wrote itself: nothing to do.
    Ignore,
    /// The other tab saved the same design this tab shows: remember its text as the saved one.
    Same,
    /// The other tab saved a different design: tell the user, and stop autosaving over it.
    Changed(Box<Project>),
}

/// Weighs a `storage` event (`key`, `new_value`) against this tab's project id, the text it last wrote and the
/// design on screen.
pub fn outside_change(
    key: Option<&str>,
    new_value: Option<&str>,
    id: &str,
    last_written: Option<&str>,
    current: &Project,
) -> Outside {
    if key != Some(project_key(id).as_str()) {
        return Outside::Ignore;
    }
    let Some(text) = new_value else {
        return Outside::Ignore;
    };
    if Some(text) == last_written {
        return Outside::Ignore;
    }
    match decode_project(text) {
        Ok(p) if p == *current => Outside::Same,
        Ok(p) => Outside::Changed(Box::new(p)),
        Err(_) => Outside::Ignore,
    }
}

/// Reads a saved project: the strict schema first, then (for work saved mid-edit with a rule pointing at a removed
/// layer) the same schema with only the stack checked, since broken rules are shown in their rows anyway.
pub fn decode_project(text: &str) -> Result<Project, String> {
    match Project::from_json(text) {
        Ok(p) => Ok(p),
        Err(strict) => {
            let p: Project = serde_json::from_str(text).map_err(|_| strict.to_string())?;
            // Schema 1 reads as schema 2 (the only change is what a missing `model` means).
            if p.schema > ohmstack_core::design::project::SCHEMA_VERSION {
                return Err(strict.to_string());
            }
            p.stackup.validate().map_err(|e| e.to_string())?;
            Ok(p)
        }
    }
}

/// Reads a project file chosen by the user: exactly the CLI's schema ([`Project::from_json`]), the core's message
/// on failure.
pub fn open_file(text: &str) -> Result<(Project, Vec<String>), String> {
    Project::from_json_noting(text).map_err(|e| e.to_string())
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

fn session() -> Option<web_sys::Storage> {
    web_sys::window()?.session_storage().ok().flatten()
}

fn now_ms() -> f64 {
    web_sys::js_sys::Date::now()
}

fn new_id() -> String {
    make_id(now_ms(), web_sys::js_sys::Math::random())
}

/// Makes `id` the project this tab reopens after a reload.
fn set_tab(id: &str) {
    if let Some(s) = session() {
        let _ = s.set_item(TAB_KEY, id);
    }
}

fn read_index(store: &web_sys::Storage) -> Vec<Recent> {
    store
        .get_item(INDEX_KEY)
        .ok()
        .flatten()
        .map(|t| decode_index(&t))
        .unwrap_or_default()
}

/// The projects kept in this browser, most recent first.
pub fn recent() -> Vec<Recent> {
    storage().map(|s| read_index(&s)).unwrap_or_default()
}

/// The saved text of the project this tab edits, if any.
pub fn saved_text() -> Option<String> {
    let id = session()?.get_item(TAB_KEY).ok().flatten()?;
    storage()?.get_item(&project_key(&id)).ok().flatten()
}

/// Moves a project saved under the old shared key to a key of its own, so existing users keep their board.
fn migrate(store: &web_sys::Storage) -> Option<String> {
    let text = store.get_item(LEGACY_PROJECT_KEY).ok().flatten()?;
    let history = store.get_item(LEGACY_HISTORY_KEY).ok().flatten();
    let id = new_id();
    match decode_project(&text) {
        Ok(project) => {
            if store.set_item(&project_key(&id), &text).is_err() {
                // Leave the old key in place: nothing is lost, and the move is tried again next time.
                return Some(
                    "your saved board could not be moved to its new place (storage full); download it to keep it"
                        .into(),
                );
            }
            if let Some(h) = history {
                let _ = store.set_item(&history_key(&id), &h);
            }
            let index = touch(read_index(store), &id, &project.title, now_ms());
            let _ = store.set_item(INDEX_KEY, &encode_index(&index));
        }
        Err(e) => {
            let _ = store.set_item(UNREADABLE_KEY, &text);
            let _ = store.remove_item(LEGACY_PROJECT_KEY);
            let _ = store.remove_item(LEGACY_HISTORY_KEY);
            return Some(format!(
                "the saved project could not be read ({e}); it was kept under {UNREADABLE_KEY}"
            ));
        }
    }
    let _ = store.remove_item(LEGACY_PROJECT_KEY);
    let _ = store.remove_item(LEGACY_HISTORY_KEY);
    None
}

/// Reads project `id` with its history; `None` when it was never saved.
fn read_project(store: &web_sys::Storage, id: &str) -> Option<Result<(State, String), String>> {
    let text = store.get_item(&project_key(id)).ok().flatten()?;
    Some(decode_project(&text).map(|project| {
        let (undo, redo) = store
            .get_item(&history_key(id))
            .ok()
            .flatten()
            .map(|h| decode_history(&h))
            .unwrap_or_default();
        (State::restored(project, undo, redo), text)
    }))
}

/// What a tab starts with.
pub struct Opened {
    pub state: State,
    /// The project id this tab loads and saves.
    pub id: String,
    /// The saved text the state came from (to tell this tab's own saves from another tab's).
    pub text: Option<String>,
    /// A message when saved work could not be read or storage is off.
    pub message: Option<String>,
}

/// Opens this tab's project: its own after a reload, else the most recent one, else a new one.
pub fn load() -> Opened {
    let Some(store) = storage() else {
        return Opened {
            state: State::default(),
            id: new_id(),
            text: None,
            message: Some(
                "browser storage is unavailable: work will not be saved between visits".into(),
            ),
        };
    };
    let mut message = migrate(&store);
    let tab = session().and_then(|s| s.get_item(TAB_KEY).ok().flatten());
    let id = choose_project(tab.as_deref(), &read_index(&store)).unwrap_or_else(new_id);
    set_tab(&id);
    let (state, text) = match read_project(&store, &id) {
        None => (State::default(), None),
        Some(Ok((state, text))) => (state, Some(text)),
        Some(Err(e)) => {
            if let Ok(Some(text)) = store.get_item(&project_key(&id)) {
                let _ = store.set_item(UNREADABLE_KEY, &text);
            }
            message = Some(format!(
                "the saved project could not be read ({e}); it was kept under {UNREADABLE_KEY} and the demo opened"
            ));
            (State::default(), None)
        }
    };
    Opened {
        state,
        id,
        text,
        message,
    }
}

/// Reopens project `id` from the recent list in this tab; the error names the project.
pub fn reopen(id: &str, title: &str) -> Result<(State, String), String> {
    let store = storage().ok_or("browser storage is unavailable")?;
    match read_project(&store, id) {
        Some(Ok(opened)) => {
            set_tab(id);
            Ok(opened)
        }
        Some(Err(e)) => Err(format!("could not reopen “{title}”: {e}")),
        None => Err(format!(
            "could not reopen “{title}”: it is no longer in this browser"
        )),
    }
}

/// A new id for this tab's work (kept as a copy beside a version another tab saved).
pub fn fork() -> String {
    let id = new_id();
    set_tab(&id);
    id
}

/// Saves the project and its history under `id` and lists it as the most recent; returns the text written and
/// the updated list. The error is a message for the status line.
pub fn save(state: &State, id: &str) -> Result<(String, Vec<Recent>), String> {
    let store = storage().ok_or("browser storage is unavailable: changes are not autosaved")?;
    let text = state.project.to_json();
    store.set_item(&project_key(id), &text).map_err(|_| {
        "autosave failed (storage full or blocked): download the project to keep it"
    })?;
    // History is secondary: if it does not fit, drop it rather than report the project as unsaved.
    if store
        .set_item(&history_key(id), &encode_history(state))
        .is_err()
    {
        let _ = store.remove_item(&history_key(id));
    }
    let index = touch(read_index(&store), id, &state.project.title, now_ms());
    let _ = store.set_item(INDEX_KEY, &encode_index(&index));
    Ok((text, index))
}

/// A short local date and time for the recent list.
pub fn time_label(ms: f64) -> String {
    let d = web_sys::js_sys::Date::new(&wasm_bindgen::JsValue::from_f64(ms));
    format!(
        "{}-{:02}-{:02} {:02}:{:02}",
        d.get_full_year(),
        d.get_month() + 1,
        d.get_date(),
        d.get_hours(),
        d.get_minutes()
    )
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

    #[test]
    fn ids_are_distinct_from_the_old_keys() {
        let id = make_id(1_764_650_000_000.0, 0.5);
        assert!(is_id(&id), "{id}");
        assert_ne!(make_id(1_764_650_000_000.0, 0.25), id);
        assert!(!is_id("v1") && !is_id("unreadable") && !is_id("p") && !is_id("p<script>"));
        assert_eq!(project_key("v1"), LEGACY_PROJECT_KEY);
        assert_eq!(history_key("v1"), LEGACY_HISTORY_KEY);
        assert_ne!(project_key(&id), LEGACY_PROJECT_KEY);
    }

    #[test]
    fn the_index_keeps_the_most_recent_first() {
        let list = touch(Vec::new(), "pa-00001", "Board A", 1.0);
        let list = touch(list, "pb-00002", "Board B", 2.0);
        let list = touch(list, "pa-00001", "Board A rev2", 3.0);
        assert_eq!(list.len(), 2);
        assert_eq!(list[0].title, "Board A rev2");
        let back = decode_index(&encode_index(&list));
        assert_eq!(back, list);
        // Out of order, duplicated or foreign entries are tidied rather than trusted.
        let messy = r#"[{"id":"pa-1","title":"old","saved_ms":1},{"id":"pb-2","title":"B","saved_ms":5},
            {"id":"pa-1","title":"older","saved_ms":0},{"id":"v1","title":"x","saved_ms":9},{"bogus":true}]"#;
        let tidy = decode_index(messy);
        assert_eq!(
            tidy.iter().map(|r| r.id.as_str()).collect::<Vec<_>>(),
            ["pb-2", "pa-1"]
        );
        assert_eq!(tidy[1].title, "old");
        assert!(decode_index("not json").is_empty());
    }

    #[test]
    fn a_tab_reopens_its_own_project_else_the_latest() {
        let list = touch(touch(Vec::new(), "pa-1", "A", 1.0), "pb-2", "B", 2.0);
        assert_eq!(choose_project(Some("pa-1"), &list).as_deref(), Some("pa-1"));
        assert_eq!(choose_project(None, &list).as_deref(), Some("pb-2"));
        assert_eq!(
            choose_project(Some("junk!"), &list).as_deref(),
            Some("pb-2")
        );
        assert_eq!(choose_project(None, &[]), None);
    }

    #[test]
    fn another_tabs_save_is_noticed_only_when_it_differs() {
        let mine = ohmstack_core::design::demo::project();
        let mut theirs = mine.clone();
        theirs.title = "Board B".into();
        let (key, text) = (project_key("pa-1"), theirs.to_json());
        let weigh = |key: &str, value: Option<&str>, last: Option<&str>| {
            outside_change(Some(key), value, "pa-1", last, &mine)
        };
        assert_eq!(
            weigh(&key, Some(&text), None),
            Outside::Changed(Box::new(theirs.clone()))
        );
        assert_eq!(weigh(&key, Some(&text), Some(&text)), Outside::Ignore);
        assert_eq!(
            weigh(&project_key("pb-2"), Some(&text), None),
            Outside::Ignore
        );
        assert_eq!(weigh(INDEX_KEY, Some("[]"), None), Outside::Ignore);
        assert_eq!(weigh(&key, None, None), Outside::Ignore);
        assert_eq!(weigh(&key, Some("{broken"), None), Outside::Ignore);
        assert_eq!(weigh(&key, Some(&mine.to_json()), None), Outside::Same);
    }
}
