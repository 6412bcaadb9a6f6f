"""The one-file app opened from file:// in real headless Chromium shows the core's numbers for the demo."""
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


def core_plan():
    demo = run("demo")
    assert demo.returncode == 0, demo.stderr
    proc = run("analyze", "-", "--json", stdin=demo.stdout)
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout)


def test_demo_first_result_equals_the_core(driver):
    driver.get(browser.app_url())
    browser.wait_ready(driver)
    plan = core_plan()
    first = plan["rules"][0]
    assert first["status"] == "ok", first
    cell = driver.find_element(By.CSS_SELECTOR, "[data-testid='rule-0-impedance']")
    # Same input through the same core compiled to WASM: agreement to round-off, and the same 2-decimal text.
    assert abs(float(cell.get_attribute("data-value")) - first["impedance_ohm"]) < 1e-9
    assert cell.text == f"{first['impedance_ohm']:.2f}"
    width = driver.find_element(By.CSS_SELECTOR, "[data-testid='rule-0-width']")
    assert abs(float(width.get_attribute("data-value")) - first["width_m"]) < 1e-15
    browser.screenshot(driver, "foundation-demo")
    assert browser.console_errors(driver) == []
