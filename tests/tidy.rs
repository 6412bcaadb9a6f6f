//! Tidy checks in the spirit of rust-analyzer's: every Rust file documents itself, and core stays free of web,
//! I/O-framework and CLI dependencies.

use std::path::{Path, PathBuf};

fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .unwrap()
        .to_path_buf()
}

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for entry in std::fs::read_dir(dir).unwrap().flatten() {
        let p = entry.path();
        if p.is_dir() {
            if p.file_name().is_some_and(|n| {
                n == "target" || n == "fuzz" || n.to_string_lossy().starts_with('.')
            }) {
                continue;
            }
            rust_files(&p, out);
        } else if p.extension().is_some_and(|e| e == "rs") {
            out.push(p);
        }
    }
}

#[test]
fn every_rust_file_starts_with_a_doc_line() {
    let mut files = Vec::new();
    for dir in ["core", "cli", "frontend", "xtask", "tests", "bench-wasm"] {
        rust_files(&root().join(dir), &mut files);
    }
    assert!(files.len() > 10);
    let missing: Vec<_> = files
        .iter()
        .filter(|p| {
            !std::fs::read_to_string(p)
                .unwrap()
                .trim_start()
                .starts_with("//!")
        })
        .collect();
    assert!(
        missing.is_empty(),
        "files without a leading //! line: {missing:?}"
    );
}

#[test]
fn core_has_no_web_or_cli_dependencies() {
    let manifest = std::fs::read_to_string(root().join("core/Cargo.toml")).unwrap();
    for banned in [
        "yew",
        "wasm-bindgen",
        "web-sys",
        "gloo",
        "anyhow",
        "clap",
        "tokio",
    ] {
        assert!(
            !manifest.lines().any(|l| l.trim_start().starts_with(banned)),
            "core/Cargo.toml must not depend on {banned}"
        );
    }
}

/// The layer order of core, read from the one place it is written: the `layers` block of ARCHITECTURE.md (bottom
/// first; modules on one line are siblings and may not import each other).
fn layer_order() -> Vec<Vec<String>> {
    let doc = std::fs::read_to_string(root().join("ARCHITECTURE.md")).unwrap();
    let start = doc
        .find("```layers\n")
        .expect("ARCHITECTURE.md has a ```layers block");
    let body = &doc[start + "```layers\n".len()..];
    let end = body.find("```").expect("the layers block is closed");
    body[..end]
        .lines()
        .map(|l| l.split_whitespace().map(str::to_string).collect::<Vec<_>>())
        .filter(|l| !l.is_empty())
        .collect()
}

/// The top-level modules a source file of core uses (`crate::name`), outside comments and test code.
fn used_modules(source: &str) -> Vec<String> {
    let code = source.split("#[cfg(test)]").next().unwrap_or("");
    let mut used = Vec::new();
    for line in code.lines() {
        let line = line.trim_start();
        if line.starts_with("//") {
            continue;
        }
        let mut rest = line;
        while let Some(i) = rest.find("crate::") {
            let after = &rest[i + "crate::".len()..];
            let name: String = after
                .chars()
                .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
                .collect();
            if !name.is_empty() && !used.contains(&name) {
                used.push(name);
            }
            rest = after;
        }
    }
    used
}

/// Imports that break the layer order: (importing module, imported module) pairs where the imported one is not in
/// a lower layer.
fn layer_violations(layers: &[Vec<String>], uses: &[(String, Vec<String>)]) -> Vec<String> {
    let rank = |m: &str| layers.iter().position(|l| l.iter().any(|x| x == m));
    let mut bad = Vec::new();
    for (from, used) in uses {
        let Some(r_from) = rank(from) else {
            bad.push(format!("{from}: not in the layers block"));
            continue;
        };
        for to in used.iter().filter(|t| *t != from) {
            match rank(to) {
                Some(r_to) if r_to < r_from => {}
                Some(_) => bad.push(format!(
                    "{from} imports {to}, which is not in a lower layer"
                )),
                // Items defined in lib.rs itself (the flat re-exports) belong to no layer: inside core use the
                // layer path instead.
                None => bad.push(format!("{from} imports crate::{to}, which is no layer")),
            }
        }
    }
    bad
}

#[test]
fn core_layers_only_import_downward() {
    let layers = layer_order();
    assert!(layers.len() >= 6, "layers block: {layers:?}");
    let src = root().join("core/src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    let mut uses: Vec<(String, Vec<String>)> = Vec::new();
    for f in &files {
        let rel = f.strip_prefix(&src).unwrap();
        if rel == Path::new("lib.rs") || f.file_name().is_some_and(|n| n == "tests.rs") {
            continue;
        }
        let module = rel
            .components()
            .next()
            .unwrap()
            .as_os_str()
            .to_string_lossy()
            .trim_end_matches(".rs")
            .to_string();
        let used = used_modules(&std::fs::read_to_string(f).unwrap());
        match uses.iter_mut().find(|(m, _)| *m == module) {
            Some((_, all)) => all.extend(used),
            None => uses.push((module, used)),
        }
    }
    let bad = layer_violations(&layers, &uses);
    assert!(
        bad.is_empty(),
        "imports against the layer order:\n{}",
        bad.join("\n")
    );

    // Every layer module is declared in lib.rs and every declared module is a layer.
    let lib = std::fs::read_to_string(src.join("lib.rs")).unwrap();
    let declared: Vec<&str> = lib
        .lines()
        .filter_map(|l| l.strip_prefix("pub mod ")?.strip_suffix(';'))
        .collect();
    let listed: Vec<&str> = layers.iter().flatten().map(String::as_str).collect();
    let mut a = declared.clone();
    let mut b = listed.clone();
    a.sort_unstable();
    b.sort_unstable();
    assert_eq!(
        a, b,
        "lib.rs modules vs the layers block of ARCHITECTURE.md"
    );
}

#[test]
fn the_layer_check_catches_upward_and_sideways_imports() {
    let layers: Vec<Vec<String>> = [vec!["base"], vec!["design"], vec!["closed_form", "field"]]
        .iter()
        .map(|l| l.iter().map(|s| s.to_string()).collect())
        .collect();
    let src = "use crate::field::x;\n// crate::design in a comment\nuse crate::base::y;\n#[cfg(test)]\nuse crate::closed_form::z;";
    assert_eq!(used_modules(src), vec!["field", "base"]);
    let uses = vec![
        ("design".to_string(), vec!["base".to_string()]),
        ("base".to_string(), vec!["design".to_string()]),
        ("closed_form".to_string(), vec!["field".to_string()]),
        (
            "field".to_string(),
            vec!["field".to_string(), "base".to_string()],
        ),
    ];
    let bad = layer_violations(&layers, &uses);
    assert_eq!(bad.len(), 2, "{bad:?}");
    assert!(bad[0].starts_with("base imports design"));
    assert!(bad[1].starts_with("closed_form imports field"));
}
