"""A target out of reach in headless Chromium (issue 17, finding 3): the card shows the nearest reachable design
with all its figures and the bound that stopped it, names the rule by its name (never a path such as `rules[1]`),
and offers the alternatives in one click. The nearest design's figures are checked against the native CLI on the
same rule drawn at that width."""
import json

from selenium.webdriver.common.by import By
from selenium.webdriver.common.keys import Keys

import browser
import webapp as w


def el(driver, testid):
    return driver.find_element(By.CSS_SELECTOR, f"[data-testid='{testid}']")


def saved(driver) -> dict:
    return json.loads(browser.saved_text(driver))


def settled(driver) -> bool:
    return driver.find_element(By.ID, "app").get_attribute("data-settled") == "true"


def test_an_unreachable_target_shows_the_nearest_design_and_its_way_out(driver):
    # Demo rule 1 is a pair side by side on the top layer, solved for width. No width gives 400 Ω: the narrowest
    # the fabricator builds comes nearest.
    box = driver.find_element(By.ID, "rule-1-target-input")
    box.click()
    box.send_keys(Keys.CONTROL, "a")
    box.send_keys("400", Keys.ENTER)
    browser.wait_for(lambda: settled(driver) and driver.find_elements(By.CSS_SELECTOR, "[data-testid='rule-1-unreached']"),
                     timeout=120, what="the nearest design")
    card = el(driver, "rule-card-1")
    banner = el(driver, "rule-1-unreached").text
    assert "out of reach" in banner and "minimum" in banner, banner
    assert "rules[" not in card.text and "layers[" not in card.text, card.text
    assert not driver.find_elements(By.CSS_SELECTOR, "[data-testid='rule-1-error']")
    # Every figure of the nearest design is on the card, its spread too.
    for key in ["width", "spacing", "impedance", "deviation", "eps-eff", "delay", "spread"]:
        assert el(driver, f"rule-1-{key}").text, key
    p = saved(driver)
    width = float(el(driver, "rule-1-width").get_attribute("data-value"))
    assert width == p["fab"]["min_trace_m"], (width, p["fab"])
    # The same rule drawn at that width and solved for nothing, by the native core.
    drawn = json.loads(json.dumps(p))
    drawn["rules"][1].update(width_m=width, solve="nothing")
    cli = w.analyze(drawn)["rules"][1]
    assert cli["status"] == "ok", cli
    z = float(el(driver, "rule-1-impedance").get_attribute("data-value"))
    assert abs(z / cli["impedance_ohm"] - 1) < 1e-4, (z, cli["impedance_ohm"])
    assert f"{z:.2f} Ω" in banner, banner
    driver.execute_script("arguments[0].scrollIntoView()", card)
    browser.screenshot(driver, "unreachable-nearest-design")
    # One click: solve the spacing instead (a pair solved for width).
    driver.find_element(By.ID, "rule-1-solve-spacing").click()
    browser.wait_for(lambda: saved(driver)["rules"][1]["solve"] == "spacing", what="solve spacing saved")
    browser.wait_for(lambda: settled(driver), timeout=120, what="the spacing solve")
    # Still out of reach at 400 Ω: now the spacing's bound is named, and the card still shows a design.
    banner = el(driver, "rule-1-unreached").text
    assert "spacing" in banner, banner
    # One click: build as shown (solve for nothing at the nearest dimensions); the card says no more than that.
    shown_spacing = float(el(driver, "rule-1-spacing").get_attribute("data-value"))
    driver.find_element(By.ID, "rule-1-keep-nearest").click()
    kept = browser.wait_for(lambda: (q := saved(driver))["rules"][1]["solve"] == "nothing" and q, what="kept")
    assert kept["rules"][1]["spacing_m"] == shown_spacing
    browser.wait_for(lambda: settled(driver), timeout=120, what="the kept design")
    assert not driver.find_elements(By.CSS_SELECTOR, "[data-testid='rule-1-unreached']")
    assert el(driver, "rule-1-verdict").text.startswith("outside")
    driver.execute_script("arguments[0].scrollIntoView()", el(driver, "rule-card-1"))
    browser.screenshot(driver, "unreachable-kept")
    assert browser.console_errors(driver) == []
