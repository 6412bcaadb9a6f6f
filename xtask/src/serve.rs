//! `cargo xtask serve`: serve the one-file app on 127.0.0.1 only, with a tiny HTTP/1.1 responder.

use anyhow::{Context, Result};
use std::io::{BufRead, BufReader, Write};
use std::net::TcpListener;
use std::path::Path;

pub fn run(file: &Path, port: u16) -> Result<()> {
    let listener = TcpListener::bind(("127.0.0.1", port))
        .with_context(|| format!("binding 127.0.0.1:{port}"))?;
    println!("Ohmstack is served at http://127.0.0.1:{port}/  (Ctrl+C stops; the same file also works offline: {})", file.display());
    for stream in listener.incoming() {
        let Ok(mut stream) = stream else { continue };
        let mut request_line = String::new();
        let mut reader = BufReader::new(&stream);
        if reader.read_line(&mut request_line).is_err() {
            continue;
        }
        // Drain the headers so the client sees a clean response.
        let mut line = String::new();
        while reader.read_line(&mut line).map(|n| n > 2).unwrap_or(false) {
            line.clear();
        }
        let path = request_line.split_whitespace().nth(1).unwrap_or("/");
        let response = if path == "/"
            || path.starts_with("/ohmstack.html")
            || path.starts_with("/#")
        {
            match std::fs::read(file) {
                Ok(body) => {
                    let mut r = format!(
                        "HTTP/1.1 200 OK\r\nContent-Type: text/html; charset=utf-8\r\nContent-Length: {}\r\nCache-Control: no-store\r\nConnection: close\r\n\r\n",
                        body.len()
                    )
                    .into_bytes();
                    r.extend(body);
                    r
                }
                Err(e) => {
                    format!("HTTP/1.1 500 Internal Server Error\r\nConnection: close\r\n\r\n{e}")
                        .into_bytes()
                }
            }
        } else {
            b"HTTP/1.1 404 Not Found\r\nContent-Length: 9\r\nConnection: close\r\n\r\nnot found"
                .to_vec()
        };
        let _ = stream.write_all(&response);
    }
    Ok(())
}
