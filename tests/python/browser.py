"""Headless Chromium through Debian's chromedriver (WebDriver), for the real-browser tests.

The flags keep Chromium from reaching for the network (this machine has none) and give every session a fresh
profile, so no state leaks between tests unless a test reuses a profile on purpose.
"""
import os
import tempfile
import time
from pathlib import Path

from selenium import webdriver
from selenium.webdriver.chrome.service import Service
from selenium.webdriver.common.by import By

ROOT = Path(__file__).resolve().parents[2]
DIST = Path(os.environ.get("OHMSTACK_DIST", ROOT / "dist" / "ohmstack.html"))
ARTIFACTS = Path(os.environ.get("OHMSTACK_ARTIFACTS", ROOT / "target" / "test-artifacts"))


def app_url(fragment: str = "") -> str:
    return DIST.resolve().as_uri() + fragment


def start(profile_dir: str | None = None, width: int = 1400, height: int = 1000) -> webdriver.Chrome:
    opts = webdriver.ChromeOptions()
    opts.binary_location = os.environ.get("CHROMIUM", "/usr/bin/chromium")
    for flag in ["--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                 "--disable-background-networking", "--disable-component-update", "--disable-sync",
                 "--no-first-run", "--disable-quic", "--disable-features=Translate,MediaRouter",
                 f"--window-size={width},{height}",
                 f"--user-data-dir={profile_dir or tempfile.mkdtemp(prefix='ohmstack-profile-')}"]:
        opts.add_argument(flag)
    opts.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    service = Service(executable_path=os.environ.get("CHROMEDRIVER", "/usr/bin/chromedriver"))
    driver = webdriver.Chrome(service=service, options=opts)
    driver.set_page_load_timeout(60)
    return driver


def wait_ready(driver, timeout: float = 30.0):
    """Waits until the app has rendered (main#app[data-ready]) or the loader reported an error."""
    deadline = time.time() + timeout
    while time.time() < deadline:
        err = driver.execute_script("return document.body && document.body.dataset.loadError")
        if err:
            raise AssertionError(f"app failed to start: {err}")
        # Ready, and settled: the tolerance spread (computed once edits pause) is in for the project on screen.
        if driver.find_elements(By.CSS_SELECTOR, "main#app[data-ready='true']:not([data-settled='false'])"):
            return
        time.sleep(0.05)
    raise AssertionError("app did not render within %.0f s" % timeout)


def console_errors(driver) -> list[str]:
    """Console messages of level SEVERE (errors) since the last call."""
    return [e["message"] for e in driver.get_log("browser") if e.get("level") == "SEVERE"]


def screenshot(driver, name: str) -> Path:
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    path = ARTIFACTS / f"{name}.png"
    driver.save_screenshot(str(path))
    return path


def wait_for(predicate, timeout: float = 10.0, what: str = "condition"):
    deadline = time.time() + timeout
    last = None
    while time.time() < deadline:
        try:
            last = predicate()
            if last:
                return last
        except Exception as e:  # the DOM may be mid-render
            last = e
        time.sleep(0.05)
    raise AssertionError(f"timed out waiting for {what} (last: {last!r})")


# This tab's project lives under "ohmstack.project.<id>", the id kept per tab in session storage
# (frontend/src/persist.rs).
TAB_KEY = "ohmstack.tab"
SAVED_TEXT_JS = ("var id = sessionStorage.getItem('ohmstack.tab');"
                 "return id ? localStorage.getItem('ohmstack.project.' + id) : null;")


def saved_text(driver) -> str | None:
    """The text this tab autosaved for its project, or None."""
    return driver.execute_script(SAVED_TEXT_JS)

