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
