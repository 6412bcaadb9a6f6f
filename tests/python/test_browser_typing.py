"""Typing in headless Chromium (issue 17, finding 1): a typo such as "12o" on the way to "130" leaves the figures of
the value the field held before the edit began, never those of the valid prefix "12"; no card ever shows a negative
impedance or spread; and the tolerance spread is asked for only once typing pauses or the field is left. Every
expected number comes from the page's own figures before the edit or from the native CLI."""
import json
import re

from selenium.webdriver.common.by import By
from selenium.webdriver.common.keys import Keys

import browser
import webapp as w

# Demo layer 2 is PP1, the prepreg under the top signal layer (120 µm unpressed in the demo).
PREPREG = 2
# "-12.00" but not "5–12": a minus sign that starts a number.
NEGATIVE = re.compile(r"(^|[^\d\w.])-\d")


def app(driver):
    return driver.find_element(By.ID, "app")


def settled(driver) -> bool:
    return app(driver).get_attribute("data-settled") == "true"


def figures(driver) -> dict:
    """Every rule card's impedance, width and spread as the page shows them."""
    out = {}
    for card in driver.find_elements(By.CSS_SELECTOR, "[data-testid^='rule-card-']"):
        i = card.get_attribute("data-testid").removeprefix("rule-card-")
        z = card.find_elements(By.CSS_SELECTOR, f"[data-testid='rule-{i}-impedance']")
        wd = card.find_elements(By.CSS_SELECTOR, f"[data-testid='rule-{i}-width']")
        sp = card.find_elements(By.CSS_SELECTOR, f"[data-testid='rule-{i}-spread']")
        err = card.find_elements(By.CSS_SELECTOR, f"[data-testid='rule-{i}-error']")
        out[i] = (z[0].get_attribute("data-value") if z else None, wd[0].get_attribute("data-value") if wd else None,
                  sp[0].text if sp else None, err[0].text if err else None)
    return out


WATCH = """
    window.seenZ = []; window.seenSpread = []; window.spreadAsked = [];
    const record = () => {
        document.querySelectorAll("[data-testid$='-impedance'][data-value]").forEach(
            e => window.seenZ.push(Number(e.dataset.value)));
        document.querySelectorAll("[data-testid^='rule-'][data-testid$='-spread']").forEach(
            e => window.seenSpread.push(e.textContent));
    };
    new MutationObserver(record).observe(document.getElementById('app'),
        {attributes: true, subtree: true, childList: true, characterData: true});
"""


def test_a_typo_shows_the_pre_edit_figures_and_never_an_absurd_one(driver):
    box_id = f"layer-{PREPREG}-thickness"
    before = figures(driver)
    saved_before = json.loads(browser.saved_text(driver))
    assert all(z is not None for z, *_ in before.values()), before
    driver.execute_script(WATCH)
    box = driver.find_element(By.ID, box_id)
    box.click()
    box.send_keys(Keys.CONTROL, "a")
    # Keystroke by keystroke, as the user typed it: "1" and "12" are valid prefixes, "12o" is not.
    box.send_keys("12o")
    browser.wait_for(lambda: box.get_attribute("aria-invalid") == "true", what="12o marked invalid")
    message = driver.find_element(By.CSS_SELECTOR, f"[data-testid='{box_id}-error']").text
    assert "thickness" in message, message
    browser.wait_for(lambda: settled(driver), timeout=90, what="the plan settles on the pre-edit project")
    browser.wait_for(lambda: figures(driver) == before, timeout=30, what="the pre-edit figures back on every card")
    after = figures(driver)
    browser.screenshot(driver, "typing-typo-pre-edit-figures")
    # The figures equal those of the value held before the edit (120 µm), card by card, spread included.
    assert after == before
    assert box.get_attribute("value") == "12o", "the typed text stays in the field"
    # Nothing absurd on screen now, and nothing negative at any moment while typing (the spread was never asked
    # for a prefix, and a rule's impedance is never below zero). Sanity bounds: common practice, no source.
    for i, (z, _, spread, _) in after.items():
        assert float(z) > 10.0, (i, z)
        assert spread and not NEGATIVE.search(spread), (i, spread)
    seen_z = driver.execute_script("return window.seenZ")
    seen_spread = driver.execute_script("return window.seenSpread")
    assert seen_z and min(seen_z) > 0, min(seen_z or [0])
    assert not [s for s in seen_spread if NEGATIVE.search(s)], [s for s in seen_spread if NEGATIVE.search(s)][:3]
    # The stored design is the pre-edit one.
    assert json.loads(browser.saved_text(driver))["stackup"] == saved_before["stackup"]
    # The correction applies as one edit; leaving the field asks for its spread at once.
    box.send_keys(Keys.CONTROL, "a")
    box.send_keys("130", Keys.ENTER)
    browser.wait_for(lambda: box.get_attribute("aria-invalid") == "false", what="130 accepted")
    saved = browser.wait_for(
        lambda: abs((p := json.loads(browser.saved_text(driver)))["stackup"][PREPREG]["thickness_m"] - 130e-6) < 1e-12 and p,
        what="130 µm saved")
    browser.wait_for(lambda: settled(driver), timeout=90, what="the plan settles on 130 µm")
    cli = w.analyze(saved)["rules"]
    shown = figures(driver)
    for i, r in enumerate(cli):
        if r["status"] == "ok":
            # Same core in WASM and natively: equal within the field engine's synthesis tolerance (webapp.py).
            assert abs(float(shown[str(i)][0]) / r["impedance_ohm"] - 1) < 1e-4, (i, shown[str(i)], r)
    assert browser.console_errors(driver) == []


def test_the_spread_waits_for_a_pause_in_typing(driver):
    # While keys arrive the plan is asked without the spread (cards say the spread is waiting); once typing pauses
    # the spread of the value typed lands. No timing is asserted: only the order of what the page shows.
    driver.execute_script("""
        window.states = [];
        const main = document.getElementById('app');
        new MutationObserver(() => window.states.push([main.dataset.settled,
            document.querySelector("[data-testid='rule-card-0']").getAttribute('data-field')]))
            .observe(main, {attributes: true, subtree: true, childList: true});
    """)
    box = driver.find_element(By.ID, "rule-0-target-input")
    box.click()
    box.send_keys(Keys.CONTROL, "a")
    box.send_keys("52")
    browser.wait_for(lambda: settled(driver), timeout=90, what="the spread after the pause")
    states = driver.execute_script("return window.states")
    assert ["false", "nominal"] in states, states[:20]
    assert states[-1] == ["true", "landed"], states[-5:]
    assert driver.find_elements(By.CSS_SELECTOR, "[data-testid='rule-0-spread-detail']")
    browser.screenshot(driver, "typing-spread-after-pause")
    assert browser.console_errors(driver) == []
