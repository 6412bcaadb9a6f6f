"""'Verify with field solver' in the browser: the sliced WASM field solve gives the native CLI's value, and its
potential map is the native CLI's picture."""
import json
import re
import tempfile
from pathlib import Path

import pytest
from selenium.webdriver.common.by import By

import browser
from conftest import run


@pytest.fixture
def driver():
    d = browser.start()
    yield d
    d.quit()


def test_field_check_in_the_browser_equals_the_cli(driver):
    driver.get(browser.app_url())
    browser.wait_ready(driver)
    demo = run("demo").stdout
    rule = json.loads(demo)["rules"][0]["name"]
    proc = run("field", "-", "--rule", rule, "--json", stdin=demo)
    assert proc.returncode == 0, proc.stderr
    native = json.loads(proc.stdout)[0]["comparison"]["field_ohm"]
    driver.find_element(By.ID, "rule-0-field-run").click()
    cell = browser.wait_for(lambda: driver.find_elements(By.CSS_SELECTOR, "[data-testid='rule-0-field-z']"),
                            timeout=60, what="field result")[0]
    # Same solver, same grid, same default accuracy: WASM and native agree to round-off.
    assert abs(float(cell.get_attribute("data-value")) - native) / native < 1e-9
    browser.screenshot(driver, "field-check")
    assert browser.console_errors(driver) == []


def test_an_edit_clears_a_stale_field_result(driver):
    driver.get(browser.app_url())
    browser.wait_ready(driver)
    driver.find_element(By.ID, "rule-0-field-run").click()
    browser.wait_for(lambda: driver.find_elements(By.CSS_SELECTOR, "[data-testid='rule-0-field-z']"),
                     timeout=60, what="field result")
    target = driver.find_element(By.ID, "rule-0-target-input")
    target.clear()
    target.send_keys("55")
    browser.wait_for(lambda: not driver.find_elements(By.CSS_SELECTOR, "[data-testid='rule-0-field-z']"),
                     timeout=10, what="stale field result cleared")
    assert browser.console_errors(driver) == []


def wait_for_map(driver, rule_name, timeout):
    """The pictures panel's potential-map figure once it shows the map of `rule_name`."""
    return browser.wait_for(
        lambda: [f for f in driver.find_elements(By.CSS_SELECTOR, "figure[data-testid='field-map']")
                 if f.get_attribute("data-rule") == rule_name],
        timeout=timeout, what=f"potential map of {rule_name}")[0]


NUMBER = re.compile(r"-?\d+(?:\.\d+)?")
FILL = re.compile(r'fill="(#[0-9a-f]{6})"')


def test_potential_map_in_the_browser_is_the_cli_picture(driver):
    """The pair's map after a field check in the browser against `ohmstack field --map` on the same project: the
    same colours in the same order and every coordinate within rounding (WASM and native libm may differ in the
    last bits, and the SVG rounds coordinates to 0.01 px)."""
    driver.get(browser.app_url())
    browser.wait_ready(driver)
    demo = run("demo").stdout
    rules = json.loads(demo)["rules"]
    index = next(i for i, r in enumerate(rules) if r["structure"] == "edge_pair")
    name = rules[index]["name"]
    hint = driver.find_element(By.CSS_SELECTOR, "[data-testid='field-map-hint']").text
    assert "Verify with field solver" in hint
    driver.find_element(By.ID, f"rule-{index}-field-run").click()
    figure = wait_for_map(driver, name, timeout=90)
    assert figure.get_attribute("data-drive").startswith("differential")
    # The pictures panel switched to the solved rule, and the card links to the map.
    assert driver.find_element(By.ID, "picture-rule").get_attribute("value") == str(index)
    assert driver.find_elements(By.CSS_SELECTOR, f"[data-testid='rule-{index}-field-map-link']")
    web_svg = figure.find_element(By.CSS_SELECTOR, "svg").get_attribute("outerHTML")
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "map.svg"
        proc = run("field", "-", "--rule", name, "--map", str(out), stdin=demo)
        assert proc.returncode == 0, proc.stderr
        cli_svg = out.read_text()
    assert FILL.findall(web_svg) == FILL.findall(cli_svg)
    web_numbers = [float(v) for v in NUMBER.findall(web_svg)]
    cli_numbers = [float(v) for v in NUMBER.findall(cli_svg)]
    assert len(web_numbers) == len(cli_numbers)
    assert max(abs(a - b) for a, b in zip(web_numbers, cli_numbers)) <= 0.011
    assert web_svg.count('class="copper"') == 2 and 'class="contour"' in web_svg
    driver.execute_script("arguments[0].scrollIntoView({block: 'start'});", figure)
    browser.screenshot(driver, "field-potential-map")
    # Any edit makes the map stale: it goes, and the slot says how to get a new one.
    target = driver.find_element(By.ID, f"rule-{index}-target-input")
    target.clear()
    target.send_keys("95")
    browser.wait_for(lambda: driver.find_elements(By.CSS_SELECTOR, "[data-testid='field-map-hint']"),
                     timeout=10, what="stale map cleared")
    assert browser.console_errors(driver) == []


def test_field_synthesis_in_the_browser_equals_the_cli(driver):
    """"Solve with field solver" on the radio feed (thick copper in the coplanar gaps): the WASM synthesis finds the
    native CLI's width, and its potential map arrives in the pictures panel."""
    driver.get(browser.app_url())
    browser.wait_ready(driver)
    demo = run("demo").stdout
    rules = json.loads(demo)["rules"]
    index = next(i for i, r in enumerate(rules) if r["structure"] == "coplanar")
    name = rules[index]["name"]
    proc = run("field-solve", "-", "--rule", name, "--json", stdin=demo)
    assert proc.returncode == 0, proc.stderr
    native = json.loads(proc.stdout)[0]
    driver.find_element(By.ID, f"rule-{index}-field-solve").click()
    value = browser.wait_for(
        lambda: driver.find_elements(By.CSS_SELECTOR, f"[data-testid='rule-{index}-field-solved-value']"),
        timeout=120, what="field-solved width")[0]
    z = driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-{index}-field-solved-z']")
    assert abs(float(value.get_attribute("data-value")) / native["value_m"] - 1) < 1e-6
    assert abs(float(z.get_attribute("data-value")) / native["field_ohm"] - 1) < 1e-6
    text = driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-{index}-field-solved']").text
    assert "closed form" in text and "field solves" in text
    wait_for_map(driver, name, timeout=10)
    card = driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-{index}-field-solved']")
    driver.execute_script("arguments[0].scrollIntoView({block: 'center'});", card)
    browser.screenshot(driver, "field-synthesis")
    assert browser.console_errors(driver) == []


def test_field_solver_model_in_the_browser_equals_the_cli(driver):
    """Choosing the 2D field solver as a rule's model: once typing settles, the card shows the field-solved width
    and impedance of `ohmstack analyze` on the same project, and the fab notes list that width."""
    from selenium.webdriver.support.ui import Select

    driver.get(browser.app_url())
    browser.wait_ready(driver)
    project = json.loads(run("demo").stdout)
    index = next(i for i, r in enumerate(project["rules"]) if r["structure"] == "coplanar")
    project["rules"][index]["model"] = "field_solver"
    proc = run("analyze", "-", "--json", stdin=json.dumps(project))
    assert proc.returncode == 0, proc.stderr
    native = json.loads(proc.stdout)["rules"][index]
    assert native["method"].startswith("2D field solver")
    Select(driver.find_element(By.ID, f"rule-{index}-model")).select_by_value("field_solver")

    def shown(key):
        el = driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-{index}-{key}']")
        return float(el.get_attribute("data-value"))

    browser.wait_for(lambda: driver.find_element(By.ID, "app").get_attribute("data-settled") == "true"
                     and abs(shown("width") / native["width_m"] - 1) < 1e-6, timeout=60,
                     what="field-solved width on the card")
    assert abs(shown("impedance") / native["impedance_ohm"] - 1) < 1e-6
    notes = driver.find_element(By.CSS_SELECTOR, "[data-testid='fab-notes']").text
    # The notes write lengths as the trade does: whole micrometres (full precision is in the CSV).
    assert f"{native['width_m'] * 1e6:.0f} µm" in notes
    assert browser.console_errors(driver) == []


def test_every_card_shows_the_field_figure_with_the_closed_form_beside_it(driver):
    """Every rule is on the field engine by default: once each card's field figures land, its headline equals
    `ohmstack analyze` (the same engine natively) and the closed form's figure at the same dimensions sits beside it.
    The demo's radio feed is where the closed form misses most (thick copper in narrow coplanar gaps under mask)."""
    driver.get(browser.app_url())
    browser.wait_ready(driver)
    demo = run("demo").stdout
    rules = json.loads(demo)["rules"]
    browser.wait_for(lambda: all(
        driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-card-{i}']").get_attribute("data-field")
        in ("nominal", "landed")
        and driver.find_elements(By.CSS_SELECTOR, f"[data-testid='rule-{i}-closed-form-check']")
        for i in range(len(rules))), timeout=120, what="every card's field figures")
    proc = run("analyze", "-", "--json", stdin=demo)
    assert proc.returncode == 0, proc.stderr
    native = {r["name"]: r for r in json.loads(proc.stdout)["rules"]}
    for i, rule in enumerate(rules):
        n = native[rule["name"]]
        assert n["method"] == "2D field solver (boundary elements)", n["method"]
        shown = float(driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-{i}-impedance']").get_attribute("data-value"))
        # WASM and native libm differ in the last bits; the synthesis stops within 1e-6 of target on both
        # (plan::synthesis::FIELD_TOLERANCE), so the two figures agree to 1e-6 (each within 1e-6 of the target).
        assert abs(shown / n["impedance_ohm"] - 1) < 1e-6, (rule["name"], shown, n["impedance_ohm"])
        closed = float(driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-{i}-closed-form-check']").get_attribute("data-value"))
        assert abs(closed / n["closed_form_check"]["impedance_ohm"] - 1) < 1e-3, (rule["name"], closed)
    feed = next(i for i, r in enumerate(rules) if r["name"] == "Radio feed 50 Ω")
    closed = float(driver.find_element(By.CSS_SELECTOR, f"[data-testid='rule-{feed}-closed-form-check']").get_attribute("data-value"))
    assert closed > 1.05 * 50.0, closed
    browser.screenshot(driver, "field-engine-with-closed-form-beside")
    assert browser.console_errors(driver) == []
