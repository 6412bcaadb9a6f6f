//! Reading project text from a file or stdin, and writing SVG output: the commands' only file handling.

use anyhow::{Context, Result};
use std::io::Read;

/// The text of `path`, or of stdin for `-` (capped at 8 MB, which the core's own size check then rejects).
pub fn read_input(path: &str) -> Result<String> {
    let mut text = String::new();
    if path == "-" {
        std::io::stdin()
            .take(8 << 20)
            .read_to_string(&mut text)
            .context("reading stdin")?;
    } else {
        text = std::fs::read_to_string(path).with_context(|| format!("reading {path}"))?;
    }
    Ok(text)
}

/// Writes an SVG to `output`, or to stdout when there is none (or it is `-`).
pub fn write_svg(output: Option<String>, svg: &str) -> Result<()> {
    match output {
        Some(out) if out != "-" => {
            std::fs::write(&out, svg).with_context(|| format!("writing {out}"))?
        }
        _ => print!("{svg}"),
    }
    Ok(())
}
