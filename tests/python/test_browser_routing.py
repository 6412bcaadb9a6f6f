"""Each rule card shows its routing rule once the field plan settles: the least spacing to an identical neighbour
for the board's crosstalk budget (or why there is none) and, with a link budget in the project, the reach. Every
expected number comes from the native CLI (`ohmstack crosstalk`, `ohmstack reach`)."""
import csv
import io
import json
import math
from pathlib import Path

import pytest
from selenium.webdriver.common.by import By
from selenium.webdriver.support.select import Select

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
        assert driver.find_element(By.CSS_SELECTOR, f"[data-testid='summary-reach-{i}']").text.endswith(
            "mm at 4 GHz")
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


def test_glass_constructions_set_the_layers_and_the_pairs_weave_skew(driver):
    project = w.demo()
    project["title"] = "Glass on the layers"
    project["routing"] = {"link": {"nyquist_hz": 8e9, "budget_db": 12}}
    w.put_local_work(driver, project)
    w.open_app(driver)
    w.wait_title(driver, project["title"])
    built = [i for i, layer in enumerate(project["stackup"]) if layer["type"] in ("core", "prepreg")]
    assert built
    for i in built:
        Select(driver.find_element(By.ID, f"layer-{i}-glass")).select_by_value("1080")

    def saved_constructions():
        saved = json.loads(browser.saved_text(driver) or "{}")
        layers = saved.get("stackup", [])
        return saved if all(layers[i].get("construction") for i in built) else None
    saved = browser.wait_for(saved_constructions, what="every core and prepreg built from 1080 and saved")
    w.wait_settled(driver)
    # Each layer is what the CLI's laminate command says its construction gives (the same core, another path).
    for i in built:
        layer = saved["stackup"][i]
        c = layer["construction"]
        out = json.loads(w.cli_ok(
            "laminate", "--style", c["glass"], "--plies", str(c["plies"]), "--resin", f"{c['resin_pct']!r}%",
            "--datasheet-dk", repr(c["datasheet_dk"]), "--datasheet-df", repr(c["datasheet_df"]),
            "--datasheet-resin", f"{c['datasheet_resin_pct']!r}%", "--json"))
        assert abs(out["laminate"]["thickness_m"] / layer["thickness_m"] - 1) < 1e-12, (layer, out)
        assert abs(out["laminate"]["dk"] / layer["dk"] - 1) < 1e-12, (layer, out)
        shown = float(driver.find_element(By.CSS_SELECTOR, f"[data-testid='layer-{i}-built-thickness']")
                      .get_attribute("data-value"))
        assert shown == layer["thickness_m"]
    # Every edge-coupled pair shows its weave skew, the figure the CLI's notes carry for the same project.
    csv_text = w.cli_ok("notes", "-", "--format", "csv", stdin=json.dumps(saved))
    tables = [t for t in csv_text.replace("\r\n", "\n").split("\n\n")]
    routing = list(csv.reader(io.StringIO(tables[2])))
    skew_by_rule = {row[0]: row[8] for row in routing[1:]}
    pairs = 0
    for i, rule in enumerate(saved["rules"]):
        if rule["structure"] != "edge_pair":
            continue
        pairs += 1
        card = driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-{i}-skew']")
        got = float(card.get_attribute("data-value")) * 1e12  # ps/m
        want = float(skew_by_rule[rule["name"]])
        assert abs(got / want - 1) < 1e-3, (rule["name"], got, want)
        assert "ps/in" in card.text and "budget spent after" in card.text, card.text
        # The board summary carries it too, per millimetre.
        cell = driver.find_element(By.CSS_SELECTOR, f"[data-testid='summary-skew-{i}']").text
        assert cell.startswith("≤ ") and cell.endswith(" ps/mm"), cell
        assert abs(float(cell[2:-6]) / (got * 1e-3) - 1) < 5e-3, (cell, got)
    assert pairs >= 1
    # Typing a thickness enters the layer directly again.
    i = built[0]
    type_value(driver, f"layer-{i}-thickness", "120")
    browser.wait_for(lambda: not (json.loads(browser.saved_text(driver) or "{}")["stackup"][i].get("construction")),
                     what="the typed thickness dropping the construction")
    browser.screenshot(driver, "glass-constructions")
    assert browser.console_errors(driver) == []


def test_the_app_proposes_the_stack_the_cli_proposes(driver):
    # The eight-layer fixture mirrors by layer kind; its rules at their widths and a 1.6 mm target. The proposal
    # runs in a worker of its own; the stack it leaves is the CLI's, layer by layer.
    fixture = Path(__file__).resolve().parents[1] / "fixtures" / "eight_layer_ten_rules.json"
    project = json.loads(fixture.read_text())
    project["title"] = "Proposed from glass"
    project["fab"]["target_thickness_m"] = 1.6e-3
    w.put_local_work(driver, project)
    w.open_app(driver)
    w.wait_title(driver, project["title"])
    # The button sits under the rule cards, which grow as their figures land: click once they are in.
    w.wait_settled(driver)
    driver.find_element(By.CSS_SELECTOR, "[data-testid='propose-stack']").click()
    status = browser.wait_for(
        lambda: (lambda el: el if el and "Proposing" not in el[0].text else None)(
            driver.find_elements(By.CSS_SELECTOR, "[data-testid='proposal-status']")),
        timeout=60, what="the proposal's outcome")[0]
    want = json.loads(w.cli_ok("propose", "-", "--json", stdin=json.dumps(project)))

    def saved_proposal():
        saved = json.loads(browser.saved_text(driver) or "{}")
        layers = saved.get("stackup", [])
        return saved if any(layer.get("construction") for layer in layers) else None
    saved = browser.wait_for(saved_proposal, what="the proposed stack saved")
    for got, expected in zip(saved["stackup"], want["project"]["stackup"]):
        assert got["name"] == expected["name"]
        if expected.get("construction"):
            a, b = got["construction"], expected["construction"]
            assert (a["glass"], a["plies"]) == (b["glass"], b["plies"]), (got["name"], a, b)
            # WASM and native field solves differ in the last bits; the root finder's tolerance bounds the rest.
            assert abs(got["thickness_m"] / expected["thickness_m"] - 1) < 1e-3, (got["name"], got, expected)
    if want["unmet"]:
        assert len(status.find_elements(By.TAG_NAME, "li")) == len(want["unmet"]), status.text
    else:
        assert "every rule on target" in status.text, status.text
    w.wait_settled(driver)
    browser.screenshot(driver, "proposed-stack")
    assert browser.console_errors(driver) == []


def test_a_rule_carries_its_own_link(driver):
    # Rule 0's link comes in the file; rule 1's is chosen on its card from the presets (PCIe 3.0: 4 GHz, the
    # starting 10 dB budget while the board has none). Each reach is the CLI's at that rule's own link.
    project = w.demo()
    project["title"] = "Links per rule"
    project["rules"][0]["link"] = {"nyquist_hz": 2e9, "budget_db": 6, "fixed_db": 1}
    w.put_local_work(driver, project)
    w.open_app(driver)
    w.wait_title(driver, project["title"])
    Select(driver.find_element(By.ID, "rule-1-link")).select_by_visible_text("PCIe 3.0 (8 GT/s) (4 GHz)")
    browser.wait_for(lambda: driver.find_elements(By.ID, "rule-1-link-budget-input"), what="rule 1's budget field")
    w.wait_settled(driver)
    text = json.dumps(project)
    for i, (nyquist, budget, fixed) in enumerate([("2GHz", "6", "1"), ("4GHz", "10", "0")]):
        rule = project["rules"][i]
        want = json.loads(w.cli_ok("reach", "-", "--rule", rule["name"], "--nyquist", nyquist, "--budget", budget,
                                   "--fixed", fixed, "--json", stdin=text))[0]["reach"]["reach_m"]
        got = browser.wait_for(
            lambda: driver.find_elements(By.CSS_SELECTOR, f"[data-testid='rule-{i}-reach']"),
            what=f"rule {i}'s reach")[0]
        assert abs(float(got.get_attribute("data-value")) / want - 1) < 1e-3, (rule["name"], want)
    # The board's other rules have no link and say nothing of a reach.
    assert not driver.find_elements(By.CSS_SELECTOR, "[data-testid='rule-2-reach']")
    saved = json.loads(browser.saved_text(driver) or "{}")
    assert saved["rules"][1]["link"] == {"nyquist_hz": 4e9, "budget_db": 10, "fixed_db": 0}
    assert browser.console_errors(driver) == []
