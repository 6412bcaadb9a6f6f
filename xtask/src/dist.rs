//! `cargo xtask dist`: build the Yew app for wasm32, run wasm-bindgen as a library, and inline CSS, JS and the
//! base64 WASM into one HTML file that works from file:// with no network and no other file.

use crate::util::{self, cargo, root};
use anyhow::{bail, Context, Result};
use base64::Engine;
use sha2::{Digest, Sha256};
use std::path::PathBuf;
use std::process::Command;

const TARGET: &str = "wasm32-unknown-unknown";
/// Where index.html takes the app script.
const APP_MARKER: &str = "<!-- OHMSTACK:APP -->";
/// Where index.html takes the Content-Security-Policy hashes.
const CSP_SCRIPT_MARKER: &str = "OHMSTACK:SCRIPT-HASH";
const CSP_STYLE_MARKER: &str = "OHMSTACK:STYLE-HASH";
/// The id of the app's inline module script, which the worker loader reads back.
const APP_SCRIPT_ID: &str = "ohmstack-app";
/// Ends the wasm-bindgen glue inside the app script: the plan worker's source is the script's text up to here.
const GLUE_END: &str = "/*OHMSTACK:GLUE-END*/";
/// The plan worker's loader (the page calls `ohmstackPlanWorker()` from Rust, frontend/src/plan_client.rs). The
/// worker is a classic worker from a Blob URL (the CSP allows `worker-src blob:` and nothing else): its source is
/// this file's own glue, read back from the app script up to [`GLUE_END`] before the app renders, plus `ohmstackWorkerMain`; the WASM
/// reaches it as the compiled `WebAssembly.Module` in its first message. The worker's Rust `main` finds no
/// `window` and serves plan requests (frontend/src/worker.rs); requests that arrive while it instantiates are
/// queued and replayed. A worker that cannot start throws, which the page sees as the worker's `error` event and
/// answers by planning on its own thread.
const WORKER_LOADER: &str = r#"let ohmstackModule = null;
function ohmstackWorkerMain() {
  const queued = [];
  let starting = null;
  self.onmessage = (e) => {
    if (starting !== null) { queued.push(e.data); return; }
    starting = __wbg_init({ module_or_path: e.data.module }).then(() => {
      for (const data of queued) self.dispatchEvent(new MessageEvent("message", { data }));
      queued.length = 0;
    }, (err) => setTimeout(() => { throw new Error("the plan worker could not start: " + err); }));
  };
}
// Read before the app renders (rendering replaces the body's content, this script with it).
const ohmstackGlue = (() => {
  const own = document.getElementById("ohmstack-app")?.textContent ?? "";
  const end = own.indexOf("/*OHMSTACK:" + "GLUE-END*/");
  return end < 0 ? null : own.slice(0, end);
})();
globalThis.ohmstackPlanWorker = () => {
  if (ohmstackModule === null) throw new Error("the app is still loading");
  if (ohmstackGlue === null) throw new Error("the app script has no glue marker");
  const source = ohmstackGlue + "\n(" + ohmstackWorkerMain.toString() + ")();\n";
  const url = URL.createObjectURL(new Blob([source], { type: "text/javascript" }));
  // The URL stays valid for the page's life: the worker's fetch of it may still be under way after this returns.
  // A classic worker: a module worker from a blob: URL is refused on a file:// page (opaque origin), and the
  // glue has no imports or exports once its final export line is stripped.
  const worker = new Worker(url, { name: "ohmstack-plan" });
  worker.postMessage({ module: ohmstackModule });
  return worker;
};"#;

/// Adds the wasm32 target through rustup when it is missing.
pub fn ensure_wasm_target() -> Result<()> {
    let installed = Command::new("rustup")
        .args(["target", "list", "--installed"])
        .output();
    match installed {
        Ok(out)
            if String::from_utf8_lossy(&out.stdout)
                .lines()
                .any(|l| l.trim() == TARGET) =>
        {
            Ok(())
        }
        Ok(_) => util::run(Command::new("rustup").args(["target", "add", TARGET])),
        Err(_) => {
            eprintln!("xtask: rustup not found; assuming the {TARGET} target is available");
            Ok(())
        }
    }
}

fn sha256_b64(text: &str) -> String {
    base64::engine::general_purpose::STANDARD.encode(Sha256::digest(text.as_bytes()))
}

/// The cargo target directory (`CARGO_TARGET_DIR` or target/ in the workspace).
pub fn target_dir() -> PathBuf {
    std::env::var_os("CARGO_TARGET_DIR")
        .map(PathBuf::from)
        .unwrap_or_else(|| root().join("target"))
}

/// Builds `package` (its library) for wasm32 with the wasm-release profile and returns the .wasm path.
pub fn build_wasm(package: &str) -> Result<PathBuf> {
    ensure_wasm_target()?;
    util::run(cargo().args([
        "build",
        "-p",
        package,
        "--lib",
        "--profile",
        "wasm-release",
        "--target",
        TARGET,
    ]))?;
    Ok(target_dir()
        .join(TARGET)
        .join("wasm-release")
        .join(format!("{}.wasm", package.replace('-', "_"))))
}

/// Runs wasm-bindgen (web target) on `wasm_path` and returns the JS glue, ready to sit in one inline module
/// script, and the processed WASM bytes. Fails when the module needs JS snippets or local modules.
pub fn bindgen_inline(wasm_path: &std::path::Path) -> Result<(String, Vec<u8>)> {
    let mut output = wasm_bindgen_cli_support::Bindgen::new()
        .input_path(wasm_path)
        .web(true)?
        .typescript(false)
        // Function names only serve a profiler (set false to profile): 0.3 MB of the 1.9 MB module.
        .remove_name_section(true)
        .generate_output()
        .with_context(|| format!("wasm-bindgen on {}", wasm_path.display()))?;
    let snippet_count: usize = output.snippets().values().map(Vec::len).sum();
    if snippet_count > 0 || !output.local_modules().is_empty() {
        bail!(
            "the app uses JS snippets {:?} or local modules {:?}, which a one-file bundle cannot carry",
            output.snippets().keys().collect::<Vec<_>>(),
            output.local_modules().keys().collect::<Vec<_>>()
        );
    }
    let js = output.js().to_string();
    if js.contains("</script") {
        bail!("the generated JS contains `</script`, which would end the inline script early");
    }
    // The generated module ends with `export { initSync, __wbg_init as default }`; strip the export so the code can
    // sit in one inline module script.
    let js = js.replace("export { initSync, __wbg_init as default };", "");
    Ok((js, output.wasm_mut().emit_wasm()))
}

/// Builds dist/ohmstack.html and returns its path.
pub fn run() -> Result<PathBuf> {
    ensure_wasm_target()?;
    util::run(cargo().args([
        "build",
        "-p",
        "ohmstack-web",
        "--profile",
        "wasm-release",
        "--target",
        TARGET,
    ]))?;
    let wasm_path = target_dir()
        .join(TARGET)
        .join("wasm-release")
        .join("ohmstack-web.wasm");
    let (js, wasm) = bindgen_inline(&wasm_path)?;
    // The plan worker runs this glue as a classic script (see WORKER_LOADER).
    if js.contains("import.meta") || js.lines().any(|l| l.trim_start().starts_with("export ")) {
        bail!("the wasm-bindgen glue has imports or exports left, so the plan worker could not run it");
    }
    // The WASM travels deflate-compressed (raw deflate, decoded by the browser's own DecompressionStream), which
    // roughly halves the file against plain base64 of the binary; async compile, so no 8 MB sync limit either.
    let packed = miniz_oxide::deflate::compress_to_vec(&wasm, 10);
    let wasm_b64 = base64::engine::general_purpose::STANDARD.encode(&packed);
    let script = format!(
        "{js}\n{GLUE_END}\n{WORKER_LOADER}\nconst b64 = \"{wasm_b64}\";\n\
         try {{\n\
           const packed = Uint8Array.from(atob(b64), (c) => c.charCodeAt(0));\n\
           const inflated = new Blob([packed]).stream().pipeThrough(new DecompressionStream(\"deflate-raw\"));\n\
           const bytes = await new Response(inflated).arrayBuffer();\n\
           // Compiled once here and posted to the plan worker, which instantiates the same module.\n\
           ohmstackModule = await WebAssembly.compile(bytes);\n\
           await __wbg_init({{ module_or_path: ohmstackModule }});\n\
         }} catch (e) {{\n\
           document.body.dataset.loadError = String(e);\n\
           const p = document.createElement('p'); p.className = 'load-error';\n\
           p.textContent = 'The app could not start: ' + e; document.body.prepend(p);\n\
         }}\n"
    );
    let template_path = root().join("index.html");
    let template = std::fs::read_to_string(&template_path)
        .with_context(|| format!("reading {}", template_path.display()))?;
    let style = template
        .split_once("<style>")
        .and_then(|(_, rest)| rest.split_once("</style>"))
        .map(|(css, _)| css.to_string())
        .context("index.html has no <style> block")?;
    if !template.contains(APP_MARKER)
        || !template.contains(CSP_SCRIPT_MARKER)
        || !template.contains(CSP_STYLE_MARKER)
    {
        bail!("index.html lacks {APP_MARKER}, {CSP_SCRIPT_MARKER} or {CSP_STYLE_MARKER}");
    }
    let html = template
        .replace(
            CSP_SCRIPT_MARKER,
            &format!("sha256-{}", sha256_b64(&script)),
        )
        .replace(CSP_STYLE_MARKER, &format!("sha256-{}", sha256_b64(&style)))
        .replace(
            APP_MARKER,
            &format!("<script type=\"module\" id=\"{APP_SCRIPT_ID}\">{script}</script>"),
        );
    let dist = root().join("dist");
    std::fs::create_dir_all(&dist)?;
    let out = dist.join("ohmstack.html");
    std::fs::write(&out, &html)?;
    eprintln!(
        "xtask: wrote {} ({} bytes: wasm {} bytes, deflated {} bytes, js {} bytes)",
        out.display(),
        html.len(),
        wasm.len(),
        packed.len(),
        js.len()
    );
    Ok(out)
}
