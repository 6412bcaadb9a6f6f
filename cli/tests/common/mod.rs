//! What every CLI test file shares: running the built `ohmstack` binary with arguments and stdin.

use std::io::Write;
use std::process::{Command, Stdio};

/// Runs `ohmstack args…` with `stdin`; returns (exit code, stdout, stderr). Stdin is written from a thread: the
/// binary may stop reading early (a size cap, a bad argument), and the pipes must drain either way.
pub fn ohmstack(args: &[&str], stdin: impl AsRef<[u8]>) -> (i32, String, String) {
    let mut child = Command::new(env!("CARGO_BIN_EXE_ohmstack"))
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("spawn ohmstack");
    let mut pipe = child.stdin.take().unwrap();
    let data = stdin.as_ref().to_vec();
    let writer = std::thread::spawn(move || {
        // A closed pipe is expected when the binary rejects its arguments before reading stdin.
        let _ = pipe.write_all(&data);
    });
    let out = child.wait_with_output().unwrap();
    let _ = writer.join();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into(),
        String::from_utf8_lossy(&out.stderr).into(),
    )
}
