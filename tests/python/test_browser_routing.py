"""Each rule card shows its routing rule once the field plan settles: the least spacing to an identical neighbour
for the board's crosstalk budget (or why there is none) and, with a link budget in the project, the reach. Every
expected number comes from the native CLI (`ohmstack crosstalk`, `ohmstack reach`)."""
import json
import math

import pytest
from selenium.webdriver.common.by import By

import browser
import webapp as w


@pytest.fixture
def driver():
    d = browser.start()
    yield d
    d.quit()


def settled(driver) -> bool:
    return driver.find_element(By.ID, "app").get_attribute("data-settled") == "true"


def summary(driver, i: int) -> str:
    return driver.find_element(By.CSS_SELECTOR, f"[data-testid='summary-neighbour-{i}']").text


def test_rule_cards_show_the_spacing_rule_and_the_reach(driver):
    project = w.demo()
    project["title"] = "Routing on the cards"
    project["routing"] = {"crosstalk_budget_pct": 3, "link": {"nyquist_hz": 4e9, "budget_db": 10, "fixed_db": 2}}
    w.put_local_work(driver, project)
    w.open_app(driver)
    w.wait_title(driver, project["title"])
    browser.wait_for(lambda: settled(driver), timeout=90, what="the plan settled")
    text = json.dumps(project)
    for i, rule in enumerate(project["rules"]):
        card = driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-{i}-neighbour-spacing']")
        if rule["structure"] in ("single", "edge_pair"):
            want = json.loads(w.cli_ok("crosstalk", "-", "--rule", rule["name"], "--budget", "3", "--json",
                                       stdin=text))[0]["min_spacing_m"]
            got = float(card.get_attribute("data-value"))
            # Same core in WASM; the field synthesis's width differs from the native one by up to 1e-5 (its
            # tolerance), which the spacing follows.
            assert abs(got / want - 1) < 1e-3, (rule["name"], got, want)
            assert "3 % crosstalk" in card.text, card.text
            # The board summary carries the same rule at the top of the page.
            # A least spacing is rounded up to the displayed micrometre.
            assert summary(driver, i) == f"≥ {math.ceil(got * 1e6 - 1e-9)} µm", (summary(driver, i), got)
        else:
            assert card.text.startswith("No spacing rule"), card.text
            assert summary(driver, i) == "—"
        reach = driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-{i}-reach']")
        want = json.loads(w.cli_ok("reach", "-", "--rule", rule["name"], "--nyquist", "4GHz", "--budget", "10",
                                   "--fixed", "2", "--json", stdin=text))[0]["reach"]["reach_m"]
        assert abs(float(reach.get_attribute("data-value")) / want - 1) < 1e-3, (rule["name"], want)
    driver.execute_script("document.querySelector(\"[data-testid='rule-0-routing']\").scrollIntoView({block: 'center'})")
    browser.screenshot(driver, "routing-on-cards")
    assert browser.console_errors(driver) == []
