//! `cargo xtask test`: the one test command. Installs what the tests need when missing (the wasm target, Debian's
//! chromium and chromium-driver, a Python venv with the reference libraries, the pinned axe-core accessibility
//! checker from the npm registry), then runs, in order: fmt check,
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

/// The axe-core release the accessibility tests inject into the page (tests/python/test_browser_a11y.py).
pub const AXE_CORE_VERSION: &str = "4.14.1";

/// Unpacks the pinned axe-core package into `<target>/axe/<version>/package/` with `npm pack` (installing Debian's
/// npm when missing and running as root); returns the path of `axe.min.js`.
fn ensure_axe(target: &Path) -> Result<PathBuf> {
    let dir = target.join("axe").join(AXE_CORE_VERSION);
    let script = dir.join("package").join("axe.min.js");
    if script.exists() {
        return Ok(script);
    }
    if !util::probe(Command::new("npm").arg("--version")) {
        if !util::is_root() {
            bail!("the accessibility tests need npm to fetch axe-core; install it with\n  sudo apt-get install -y npm");
        }
        util::run(
            Command::new("apt-get")
                .args(["install", "-y", "-q", "--no-install-recommends", "npm"])
                .env("DEBIAN_FRONTEND", "noninteractive"),
        )?;
    }
    std::fs::create_dir_all(&dir)?;
    util::run(
        Command::new("npm")
            .args(["pack", "--silent", &format!("axe-core@{AXE_CORE_VERSION}")])
            .arg("--pack-destination")
            .arg(&dir),
    )?;
    let tarball = dir.join(format!("axe-core-{AXE_CORE_VERSION}.tgz"));
    util::run(
        Command::new("tar")
            .arg("-xzf")
            .arg(&tarball)
            .arg("-C")
            .arg(&dir)
            .arg("package/axe.min.js"),
    )?;
    if !script.exists() {
        bail!("npm pack axe-core@{AXE_CORE_VERSION} gave no package/axe.min.js");
    }
    Ok(script)
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
    let axe = ensure_axe(&target)?;
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
            .env("OHMSTACK_AXE", &axe)
            .env("CHROMIUM", CHROMIUM)
            .env("CHROMEDRIVER", CHROMEDRIVER),
    )?;
    eprintln!(
        "xtask: all checks passed; screenshots and other artefacts are in {}",
        artifacts.display()
    );
    Ok(())
}
