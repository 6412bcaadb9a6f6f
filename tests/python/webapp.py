"""Helpers for the browser tests of share links, fab notes and pictures: projects made with the CLI, local work
put into a profile's storage, and the page's state read back. Every expected number comes from the CLI."""
import json
import time

from selenium.common.exceptions import NoAlertPresentException
from selenium.webdriver.common.by import By

import browser
from conftest import run



def cli_ok(*args: str, stdin: str = "") -> str:
    proc = run(*args, stdin=stdin)
    assert proc.returncode == 0, f"ohmstack {' '.join(args[:2])}: {proc.stderr}"
    return proc.stdout


def demo() -> dict:
    return json.loads(cli_ok("demo"))


def variant(title: str, target_shift: float = 5.0) -> dict:
    """The demo with another title and every rule's target moved, so its numbers differ from the demo's."""
    p = demo()
    p["title"] = title
    for r in p["rules"]:
        r["target_ohm"] = r["target_ohm"] + target_shift
    return p


def encode(project: dict) -> str:
    return cli_ok("share", "encode", "-", stdin=json.dumps(project)).strip()


def decode(link: str) -> dict:
    """The project a link holds, as the core reads it (the link goes through stdin: it may be long)."""
    return json.loads(cli_ok("share", "decode", "-", stdin=link))


def decode_error(link: str) -> str:
    """The core's message for a bad link (the CLI prints `error: <message>`)."""
    proc = run("share", "decode", "-", stdin=link)
    assert proc.returncode != 0, "the CLI accepted the link"
    return proc.stderr.strip().removeprefix("error: ")


def analyze(project: dict) -> dict:
    return json.loads(cli_ok("analyze", "-", "--json", stdin=json.dumps(project)))


def normalized(project: dict) -> dict:
    """The project as the core writes it back (defaults filled in), for comparing with what a link holds."""
    return decode(encode(project))


def open_app(driver, fragment: str = ""):
    """A fresh page load (a URL differing from the current one only in its fragment would not reload)."""
    driver.get("about:blank")
    driver.get(browser.app_url(fragment))
    browser.wait_ready(driver)


def put_local_work(driver, project: dict):
    """Stores `project` as the saved work of this tab (same origin: the file:// page)."""
    open_app(driver)
    driver.execute_script("localStorage.setItem('ohmstack.project.' + sessionStorage.getItem(arguments[0]), arguments[1]);",
                          browser.TAB_KEY, json.dumps(project))


def local_work(driver) -> dict | None:
    text = browser.saved_text(driver)
    return json.loads(text) if text else None


def notes_title(driver) -> str:
    return browser.wait_for(lambda: driver.find_element(By.CSS_SELECTOR, "[data-testid='notes-title']").text,
                            what="notes title")


def wait_title(driver, title: str):
    browser.wait_for(lambda: notes_title(driver) == f"Fab notes: {title}", what=f"project {title!r} on screen")


def wait_settled(driver, timeout: float = 90):
    """Waits until every figure on the page is final (field figures, spread and routing figures all in)."""
    browser.wait_for(
        lambda: driver.find_element(By.ID, "app").get_attribute("data-settled") == "true",
        timeout=timeout,
        what="the plan settled",
    )


def shown_impedances(driver) -> list[float]:
    cells = driver.find_elements(By.CSS_SELECTOR, "[data-testid$='-impedance'][data-value]")
    return [float(c.get_attribute("data-value")) for c in cells]


def core_impedances(project: dict) -> list[float]:
    return [r["impedance_ohm"] for r in analyze(project)["rules"] if r["status"] == "ok"]


def assert_same_numbers(driver, project: dict):
    shown, core = shown_impedances(driver), core_impedances(project)
    assert len(shown) == len(core) > 0
    for s, c in zip(shown, core):
        # Same core compiled to WASM. The field engine's synthesis stops within 1e-4 of target, and WASM's libm
        # differs from the native one in the last bits, so the root finder's iterates differ (measured 1.7e-7 and
        # 5.5e-6 relative): both sit inside the synthesis tolerance, which is the bound that holds.
        assert abs(s / c - 1) < 1e-4, (s, c)


def no_alert(driver) -> bool:
    try:
        driver.switch_to.alert
    except NoAlertPresentException:
        return True
    return False


def settle(seconds: float = 0.3):
    """Gives effects (loading saved work, saving) a moment to run before reading state that should not change."""
    time.sleep(seconds)
