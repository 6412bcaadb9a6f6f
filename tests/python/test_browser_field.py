"""'Verify with field solver' in the browser: the sliced WASM field solve gives the native CLI's value."""
import json

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
