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


def type_value(driver, element_id: str, text: str):
    """Sets a text field to `text` in one input event: exactly one edit of the project."""
    driver.execute_script(
        "const el = document.getElementById(arguments[0]); el.value = arguments[1];"
        "el.dispatchEvent(new InputEvent('input', {bubbles: true}));", element_id, text)


@pytest.mark.parametrize("how", ["file", "typed"])
def test_rule_cards_show_the_spacing_rule_and_the_reach(driver, how):
    project = w.demo()
    project["title"] = "Routing on the cards"
    budgets = {"crosstalk_budget_pct": 3, "link": {"nyquist_hz": 4e9, "budget_db": 10, "fixed_db": 2}}
    if how == "file":
        project["routing"] = budgets
    w.put_local_work(driver, project)
    w.open_app(driver)
    w.wait_title(driver, project["title"])
    if how == "typed":
        # The budgets typed into their panel; the link's figures appear once it has a frequency.
        assert not driver.find_elements(By.ID, "routing-link-budget")
        type_value(driver, "routing-crosstalk-budget", "3")
        type_value(driver, "routing-link-nyquist", "4")
        browser.wait_for(lambda: driver.find_elements(By.ID, "routing-link-budget"), what="the link budget field")
        type_value(driver, "routing-link-budget", "10")
        type_value(driver, "routing-link-fixed", "2")
        project["routing"] = budgets

        def saved_budgets():
            routing = json.loads(browser.saved_text(driver) or "{}").get("routing", {})
            return routing.get("crosstalk_budget_pct") == 3 and routing.get("link") == budgets["link"]
        browser.wait_for(saved_budgets, what="the typed budgets saved with the project")
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
    # The plots show the first rule's noise against spacing with the budget line.
    plot = browser.wait_for(lambda: driver.find_element(By.CSS_SELECTOR, "[data-testid='plot-crosstalk'] svg"),
                            what="the crosstalk plot")
    svg = plot.get_attribute("outerHTML")
    assert "near end" in svg and "far end" in svg and "budget 3 %" in svg, svg[:300]
    # And the insertion loss of a run of the rule's reach against frequency, with the link budget.
    il = browser.wait_for(lambda: driver.find_element(By.CSS_SELECTOR, "[data-testid='plot-insertion-loss'] svg"),
                          what="the insertion-loss plot")
    svg = il.get_attribute("outerHTML")
    assert "budget 10 dB" in svg and "run + fixed losses" in svg, svg[:300]
    driver.execute_script("document.querySelector(\"[data-testid='rule-0-routing']\").scrollIntoView({block: 'center'})")
    browser.screenshot(driver, "routing-on-cards")
    assert browser.console_errors(driver) == []
