//! `cargo xtask test`: the one test command. Installs what the tests need when missing (the wasm target, Debian's
//! chromium and chromium-driver, a Python venv with the reference libraries), then runs, in order: fmt check,
//! clippy with -D warnings, every workspace test, the one-file build, and the pytest suite (outside references and
//! real-browser tests in headless Chromium).

use crate::util::{self, cargo, root};
use anyhow::{bail, Context, Result};
use sha2::{Digest, Sha256};
use std::path::{Path, PathBuf};
use std::process::Command;

pub const CHROMIUM: &str = "/usr/bin/chromium";
pub const CHROMEDRIVER: &str = "/usr/bin/chromedriver";

fn ensure_chromium() -> Result<()> {
    if Path::new(CHROMIUM).exists() && Path::new(CHROMEDRIVER).exists() {
        return Ok(());
    }
    if !util::is_root() {
        bail!("the browser tests need Debian's chromium and chromium-driver; install them with\n  sudo apt-get install -y chromium chromium-driver");
    }
    util::run(Command::new("apt-get").arg("update").arg("-q"))?;
    util::run(
        Command::new("apt-get")
            .args([
                "install",
                "-y",
                "-q",
                "--no-install-recommends",
                "chromium",
                "chromium-driver",
            ])
            .env("DEBIAN_FRONTEND", "noninteractive"),
    )
}

/// Creates target/pyenv and installs tests/python/requirements.txt into it, once per requirements change.
pub fn ensure_venv() -> Result<PathBuf> {
    let venv = root().join("target").join("pyenv");
    let python = venv.join("bin").join("python");
    let requirements = root().join("tests").join("python").join("requirements.txt");
    let wanted = format!(
        "{:x}",
        Sha256::digest(std::fs::read(&requirements).context("reading requirements.txt")?)
    );
    let stamp = venv.join(".requirements.sha256");
    if python.exists()
        && std::fs::read_to_string(&stamp)
            .map(|s| s.trim() == wanted)
            .unwrap_or(false)
    {
        return Ok(python);
    }
    if !python.exists() {
        let made = util::probe(Command::new("python3").args(["-m", "venv"]).arg(&venv));
        if !made {
            if util::is_root() {
                util::run(
                    Command::new("apt-get")
                        .args(["install", "-y", "-q", "python3-venv"])
                        .env("DEBIAN_FRONTEND", "noninteractive"),
                )?;
            }
            util::run(Command::new("python3").args(["-m", "venv"]).arg(&venv))?;
        }
    }
    util::run(
        Command::new(&python)
            .args([
                "-m",
                "pip",
                "install",
                "-q",
                "--disable-pip-version-check",
                "-r",
            ])
            .arg(&requirements),
    )?;
    std::fs::write(&stamp, wanted)?;
    Ok(python)
}

pub fn run() -> Result<()> {
    crate::dist::ensure_wasm_target()?;
    ensure_chromium()?;
    let python = ensure_venv()?;
    util::run(cargo().args(["fmt", "--all", "--check"]))?;
    util::run(cargo().args([
        "clippy",
        "--workspace",
        "--all-targets",
        "--",
        "-D",
        "warnings",
    ]))?;
    util::run(cargo().args(["test", "--workspace"]))?;
    util::run(cargo().args(["build", "-p", "ohmstack"]))?;
    let dist = crate::dist::run()?;
    let target = std::env::var_os("CARGO_TARGET_DIR")
        .map(PathBuf::from)
        .unwrap_or_else(|| root().join("target"));
    let artifacts = target.join("test-artifacts");
    std::fs::create_dir_all(&artifacts)?;
    util::run(
        Command::new(&python)
            .args([
                "-m",
                "pytest",
                "-q",
                "-p",
                "no:cacheprovider",
                "tests/python",
            ])
            .current_dir(root())
            .env("OHMSTACK_BIN", target.join("debug").join("ohmstack"))
            .env("OHMSTACK_DIST", &dist)
            .env("OHMSTACK_ARTIFACTS", &artifacts)
            .env("CHROMIUM", CHROMIUM)
            .env("CHROMEDRIVER", CHROMEDRIVER),
    )?;
    eprintln!(
        "xtask: all checks passed; screenshots and other artefacts are in {}",
        artifacts.display()
    );
    Ok(())
}
