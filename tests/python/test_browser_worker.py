"""The field plan in the browser runs in a Web Worker made from the one offline file: it starts from file:// under
the page's strict CSP, marks each rule pending until its field figures land, recomputes only the rule an edit
touched, ends a burst of edits with the last edit's figures, and falls back to the page's thread (with a note)
when the CSP refuses the worker. Every expected number comes from the native CLI."""
import json
import re
import tempfile
from pathlib import Path

import pytest
from selenium.webdriver.common.by import By

import browser
import webapp as w


@pytest.fixture
def driver():
    d = browser.start()
    yield d
    d.quit()


def app(driver):
    return driver.find_element(By.ID, "app")


def settled(driver) -> bool:
    return app(driver).get_attribute("data-settled") == "true"


def wait_settled(driver, what: str):
    browser.wait_for(lambda: settled(driver), timeout=90, what=what)


def computations(driver) -> int:
    return int(app(driver).get_attribute("data-field-computations"))


def type_value(driver, element_id: str, text: str):
    """Sets a text field to `text` in one input event: exactly one edit of the project."""
    driver.execute_script(
        "const el = document.getElementById(arguments[0]); el.value = arguments[1];"
        "el.dispatchEvent(new InputEvent('input', {bubbles: true}));", element_id, text)


def field_solver_demo(title: str) -> dict:
    """The demo with its first rule on the field solver: its headline figures are the field engine's, while the
    preview shows the closed form's."""
    p = w.demo()
    p["title"] = title
    p["rules"][0]["model"] = "field_solver"
    return p


def shown_rule(driver, i: int) -> dict:
    card = driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-card-{i}']")
    return {
        "field": card.get_attribute("data-field"),
        "busy": card.find_element(By.CSS_SELECTOR, ".rule-results").get_attribute("aria-busy"),
        "impedance": float(driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-{i}-impedance']")
                           .get_attribute("data-value")),
        "width": float(driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-{i}-width']")
                       .get_attribute("data-value")),
        "spread": bool(driver.find_elements(By.CSS_SELECTOR, f"[data-testid='rule-{i}-spread-detail']")),
    }


def cli_rule(project: dict, i: int) -> dict:
    return w.analyze(project)["rules"][i]


def test_the_worker_runs_from_file_and_a_rule_goes_from_pending_to_field_figures(driver):
    page = browser.DIST.read_text()
    csp = re.search(r'http-equiv="Content-Security-Policy" content="([^"]+)"', page).group(1)
    assert "worker-src blob:" in csp and "'wasm-unsafe-eval'" in csp, csp
    assert "'unsafe-eval'" not in csp and "'unsafe-inline'" not in csp, csp
    p = field_solver_demo("Worker check")
    w.open_app(driver, "#" + w.encode(p))
    w.wait_title(driver, "Worker check")
    wait_settled(driver, "first field plan")
    assert app(driver).get_attribute("data-field-runner") == "worker"
    assert not driver.find_elements(By.CSS_SELECTOR, "[data-testid='field-fallback']")
    # Record every state rule 0's card passes through while a new target is planned.
    driver.execute_script("""
        window.seen = [];
        const card = document.querySelector("[data-testid='rule-card-0']");
        const note = () => {
            const width = document.querySelector("[data-testid='rule-0-width']");
            window.seen.push([card.getAttribute('data-field'), width && Number(width.dataset.value),
                              !!document.querySelector("[data-testid='rule-0-pending']")]);
        };
        new MutationObserver(note).observe(card, {attributes: true, subtree: true, childList: true});
    """)
    type_value(driver, "rule-0-target-input", "52")
    wait_settled(driver, "field plan after the edit")
    p["rules"][0]["target_ohm"] = 52.0
    native = cli_rule(p, 0)
    closed = cli_rule({**p, "rules": [{**p["rules"][0], "model": "closed_form"}]}, 0)
    seen = driver.execute_script("return window.seen")
    pending = [s for s in seen if s[0] == "pending"]
    assert pending, seen
    # While pending, the card shows the closed-form preview of the new target (its solved width), with its tag.
    assert any(abs(wd - closed["width_m"]) < 1e-9 * closed["width_m"] and tag for _, wd, tag in pending), \
        (pending, closed["width_m"])
    now = shown_rule(driver, 0)
    assert now["field"] == "landed" and now["busy"] == "false" and now["spread"], now
    assert not driver.find_elements(By.CSS_SELECTOR, "[data-testid='rule-0-pending']")
    # The field figures: the native CLI's to round-off (same core), and not the closed form's.
    assert abs(now["width"] - native["width_m"]) < 1e-6 * native["width_m"], (now, native["width_m"])
    assert abs(now["impedance"] - native["impedance_ohm"]) < 1e-6 * native["impedance_ohm"], (now, native)
    assert abs(native["width_m"] - closed["width_m"]) > 0.01 * closed["width_m"], (native, closed)
    browser.screenshot(driver, "worker-landed")
    assert browser.console_errors(driver) == []


def test_an_edit_recomputes_only_the_rule_it_touched(driver):
    w.open_app(driver)
    wait_settled(driver, "first field plan")
    rules = len(driver.find_elements(By.CSS_SELECTOR, "[data-testid^='rule-card-']"))
    before = computations(driver)
    assert before >= rules > 1
    generation = int(app(driver).get_attribute("data-field-generation"))
    # Every change of a card's field state from here on: only the edited card may leave its landed figures (the
    # page keeps every other rule's outcome, even in the render between the keystroke and its request).
    driver.execute_script("""
        window.changes = [];
        new MutationObserver(ms => ms.forEach(m => window.changes.push(
            [m.target.dataset.testid, m.target.getAttribute('data-field')])))
          .observe(document, {subtree: true, attributes: true, attributeFilter: ['data-field']});
    """)
    type_value(driver, "rule-1-target-input", "93")
    browser.wait_for(lambda: int(app(driver).get_attribute("data-field-generation")) > generation,
                     what="a new generation")
    wait_settled(driver, "field plan after the edit")
    assert computations(driver) == before + 1
    changes = driver.execute_script("return window.changes")
    assert ["rule-card-1", "pending"] in changes, changes
    assert all(card == "rule-card-1" for card, state in changes if state != "landed"), changes
    # Undoing the edit brings back figures the worker already has: nothing is computed.
    type_value(driver, "rule-1-target-input", repr(float(w.demo()["rules"][1]["target_ohm"])))
    browser.wait_for(lambda: int(app(driver).get_attribute("data-field-generation")) > generation + 1,
                     what="another generation")
    wait_settled(driver, "field plan after the undo")
    assert computations(driver) == before + 1
    assert browser.console_errors(driver) == []


def test_a_burst_of_edits_ends_with_the_last_edits_figures(driver):
    p = field_solver_demo("Burst")
    w.open_app(driver, "#" + w.encode(p))
    w.wait_title(driver, "Burst")
    wait_settled(driver, "first field plan")
    target = driver.find_element(By.ID, "rule-0-target-input")
    target.click()
    # Key by key, without waiting: each keystroke is a new project and a new request to the worker.
    target.send_keys("\b\b\b\b\b\b")
    target.send_keys("47.5")
    browser.wait_for(lambda: target.get_attribute("value") == "47.5", what="typed text")
    wait_settled(driver, "field plan after the burst")
    saved = json.loads(browser.saved_text(driver))
    assert saved["rules"][0]["target_ohm"] == 47.5
    native = cli_rule(saved, 0)
    now = shown_rule(driver, 0)
    assert now["field"] == "landed"
    assert abs(now["impedance"] - native["impedance_ohm"]) < 1e-6 * native["impedance_ohm"], (now, native)
    width = float(driver.find_element(By.CSS_SELECTOR, "[data-testid='rule-0-width']").get_attribute("data-value"))
    assert abs(width - native["width_m"]) < 1e-6 * native["width_m"], (width, native["width_m"])
    assert browser.console_errors(driver) == []


def test_a_refused_worker_falls_back_to_the_page_with_a_note(driver):
    page = browser.DIST.read_text()
    assert "worker-src blob:;" in page
    blocked = Path(tempfile.mkdtemp(prefix="ohmstack-csp-")) / "ohmstack.html"
    blocked.write_text(page.replace("worker-src blob:;", "worker-src 'none';", 1))
    driver.get(blocked.as_uri())
    browser.wait_ready(driver, timeout=90)
    assert app(driver).get_attribute("data-field-runner") == "page"
    note = driver.find_element(By.CSS_SELECTOR, "[data-testid='field-fallback']")
    assert note.is_displayed() and "on this page" in note.text
    # The figures still land, rule by rule, and equal the worker's (the native CLI's spread is not needed: the
    # page's own rows carry their spread like the worker's).
    cards = driver.find_elements(By.CSS_SELECTOR, "[data-testid^='rule-card-']")
    assert cards and all(c.get_attribute("data-field") == "landed" for c in cards)
    assert driver.find_elements(By.CSS_SELECTOR, "[data-testid='rule-0-spread-detail']")
    w.assert_same_numbers(driver, w.demo())
