"""Shared fixtures for the outside-reference checks: run the `ohmstack` CLI and talk JSON lines to it.

`cargo xtask test` sets OHMSTACK_BIN to the built binary and OHMSTACK_DIST to dist/ohmstack.html.
"""
import json
import os
import subprocess
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


def ohmstack_bin() -> str:
    exe = os.environ.get("OHMSTACK_BIN") or str(ROOT / "target" / "debug" / "ohmstack")
    if not Path(exe).exists():
        raise RuntimeError(f"ohmstack binary not found at {exe}; run `cargo build -p ohmstack` or `cargo xtask test`")
    return exe


def run(*args: str, stdin: str = "") -> subprocess.CompletedProcess:
    """Runs the CLI and returns the completed process (text mode)."""
    return subprocess.run([ohmstack_bin(), *args], input=stdin, capture_output=True, text=True, timeout=600)


def batch(cases: list[dict], engine: str = "closed-form") -> list[dict]:
    """Sends cases to `ohmstack batch` as JSON lines; returns one result dict per case (in order).

    `batch` computes on the field engine unless told otherwise; most modules here check the published closed forms,
    so each case gets `"engine": engine` (closed-form by default) unless it names one itself."""
    text = "".join(json.dumps({"engine": engine, **c}) + "\n" for c in cases)
    proc = run("batch", stdin=text)
    assert proc.returncode == 0, proc.stderr
    out = [json.loads(line) for line in proc.stdout.splitlines() if line.strip()]
    assert len(out) == len(cases), f"{len(out)} results for {len(cases)} cases"
    return out


@pytest.fixture
def cli():
    return run


@pytest.fixture
def cli_batch():
    return batch


@pytest.fixture
def driver():
    """Headless Chromium at 1366×768 with the app open on the demo and ready. Browser test modules that need
    another window or start elsewhere define their own `driver`, which takes precedence over this one."""
    import browser  # selenium is only needed by the browser tests

    d = browser.start(width=1366, height=768)
    d.get(browser.app_url())
    browser.wait_ready(d)
    yield d
    d.quit()
