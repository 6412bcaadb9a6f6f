//! Browser glue for sharing and saving: the URL fragment, the clipboard, local storage and file downloads.
//! Every function here fails soft (an `Err` with a message, or `None`): a missing API, a locked-down
//! `file://` page or switched-off storage must never panic the app.

use gloo::utils::{document, window};
use wasm_bindgen::closure::Closure;
use wasm_bindgen::{JsCast, JsValue};
use web_sys::js_sys::{Function, Promise, Reflect};

/// The URL fragment without its `#`, if there is one.
pub fn fragment() -> Option<String> {
    let hash = window().location().hash().ok()?;
    let text = hash.strip_prefix('#').unwrap_or(&hash);
    (!text.is_empty()).then(|| text.to_string())
}

/// Replaces the URL fragment without adding a history entry or firing `hashchange` (allowed on `file://`, since
/// only path changes are refused there).
pub fn replace_fragment(fragment: &str) -> Result<(), String> {
    let history = window().history().map_err(js_text)?;
    let url = if fragment.is_empty() {
        // Drop the fragment: the page address without anything after `#`.
        let href = window().location().href().map_err(js_text)?;
        href.split('#').next().unwrap_or_default().to_string()
    } else {
        format!("#{fragment}")
    };
    history
        .replace_state_with_url(&JsValue::NULL, "", Some(&url))
        .map_err(js_text)
}

/// The page's full address, fragment included.
pub fn href() -> String {
    window().location().href().unwrap_or_default()
}

/// The saved text of the project this tab edits, if storage works and holds it.
pub fn load_local() -> Option<String> {
    crate::persist::saved_text()
}

/// Copies `text` to the clipboard. `done` gets `Ok` once the browser confirms, or `Err` with the reason when the
/// asynchronous clipboard is missing (older browsers, some `file://` pages) or refuses (no permission).
pub fn copy_text(text: &str, done: impl Fn(Result<(), String>) + 'static) {
    let navigator = window().navigator();
    let clipboard =
        Reflect::get(&navigator, &JsValue::from_str("clipboard")).unwrap_or(JsValue::UNDEFINED);
    if clipboard.is_undefined() || clipboard.is_null() {
        done(Err("this page has no clipboard access".into()));
        return;
    }
    let write = Reflect::get(&clipboard, &JsValue::from_str("writeText"))
        .ok()
        .and_then(|f| f.dyn_into::<Function>().ok());
    let Some(write) = write else {
        done(Err("this browser cannot write text to the clipboard".into()));
        return;
    };
    // `call1` catches a synchronous throw; the promise carries the asynchronous answer.
    let promise = match write.call1(&clipboard, &JsValue::from_str(text)) {
        Ok(p) => match p.dyn_into::<Promise>() {
            Ok(p) => p,
            Err(_) => {
                done(Ok(()));
                return;
            }
        },
        Err(e) => {
            done(Err(js_text(e)));
            return;
        }
    };
    let done = std::rc::Rc::new(done);
    let on_ok = {
        let done = done.clone();
        Closure::once(move |_: JsValue| done(Ok(())))
    };
    let on_err = Closure::once(move |e: JsValue| done(Err(js_text(e))));
    let _ = promise.then2(&on_ok, &on_err);
    // The closures must outlive this call; each runs at most once, so leaking the pair is a few bytes per copy.
    on_ok.forget();
    on_err.forget();
}

/// Offers `text` as a file download called `filename`: a Blob, an object URL and a temporary `<a download>`.
pub fn download(filename: &str, mime: &str, text: &str) -> Result<(), String> {
    let blob = gloo::file::Blob::new_with_options(text, Some(mime));
    let url = gloo::file::ObjectUrl::from(blob);
    let doc = document();
    let a = doc.create_element("a").map_err(js_text)?;
    a.set_attribute("href", &url).map_err(js_text)?;
    a.set_attribute("download", filename).map_err(js_text)?;
    a.set_attribute("hidden", "").map_err(js_text)?;
    let body = doc
        .body()
        .ok_or_else(|| "the page has no body".to_string())?;
    body.append_child(&a).map_err(js_text)?;
    let clicked = a
        .dyn_ref::<web_sys::HtmlElement>()
        .map(|el| el.click())
        .ok_or_else(|| "could not start the download".to_string());
    a.remove();
    // Revoking the URL at once can cancel the download in some browsers; keep it for a minute.
    gloo::timers::callback::Timeout::new(60_000, move || drop(url)).forget();
    clicked
}

/// A JavaScript exception or rejection value as readable text.
pub fn js_text(value: JsValue) -> String {
    if let Some(s) = value.as_string() {
        return s;
    }
    if let Some(e) = value.dyn_ref::<web_sys::js_sys::Error>() {
        return String::from(e.message());
    }
    "unknown browser error".into()
}
