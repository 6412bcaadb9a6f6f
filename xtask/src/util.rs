//! Small helpers: the workspace root, running cargo through `$CARGO`, and running commands loudly.

use anyhow::{bail, Context, Result};
use std::path::PathBuf;
use std::process::Command;

/// The workspace root (the parent of this crate's folder).
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .expect("xtask lives in the workspace")
        .to_path_buf()
}

/// A `cargo` command through the `CARGO` variable cargo sets for us, run in the workspace root.
pub fn cargo() -> Command {
    let mut c = Command::new(std::env::var("CARGO").unwrap_or_else(|_| "cargo".into()));
    c.current_dir(root());
    c
}

/// Runs `cmd`, echoing it first; fails with the command line if it exits non-zero.
pub fn run(cmd: &mut Command) -> Result<()> {
    eprintln!("$ {}", describe(cmd));
    let status = cmd
        .status()
        .with_context(|| format!("starting {}", describe(cmd)))?;
    if !status.success() {
        bail!("{} failed ({status})", describe(cmd));
    }
    Ok(())
}

/// Runs `cmd` quietly and returns whether it succeeded (for probes such as "is this installed?").
pub fn probe(cmd: &mut Command) -> bool {
    cmd.output().map(|o| o.status.success()).unwrap_or(false)
}

pub fn describe(cmd: &Command) -> String {
    let mut s = cmd.get_program().to_string_lossy().to_string();
    for a in cmd.get_args() {
        s.push(' ');
        s.push_str(&a.to_string_lossy());
    }
    s
}

/// True when running as root (so apt-get can install system packages).
pub fn is_root() -> bool {
    Command::new("id")
        .arg("-u")
        .output()
        .map(|o| String::from_utf8_lossy(&o.stdout).trim() == "0")
        .unwrap_or(false)
}
