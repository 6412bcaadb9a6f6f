"""The board summary at the top of the page (issue 17 item 2): in real headless Chromium at 1366×768, every net
class of the demo is listed above the fold (no scrolling) with its layer, width/spacing, Z against target, deviation,
verdict and engine; the figures agree with each other and with `ohmstack analyze`; a board with a rule that cannot
be computed says it does not work. Screenshots are saved as artefacts."""
import json
import re

import pytest
from selenium.webdriver.common.by import By

import browser
import webapp as w


@pytest.fixture
def driver():
    d = browser.start(width=1366, height=768)
    yield d
    d.quit()


Z_TEXT = re.compile(r"^(?P<z>[\d.]+) Ω \(target (?P<target>[\d.]+) ± (?P<tol>[\d.]+) %\)$")


def rows(driver) -> list[dict]:
    out = []
    for tr in driver.find_elements(By.CSS_SELECTOR, "[data-testid='board-summary'] tbody tr"):
        cells = [td.text for td in tr.find_elements(By.TAG_NAME, "td")]
        out.append({"verdict": tr.get_attribute("data-verdict"), "cells": cells,
                    "bottom": driver.execute_script("return arguments[0].getBoundingClientRect().bottom;", tr)})
    return out


def test_summary_is_above_the_fold_and_agrees_with_the_core(driver):
    project = w.demo()
    w.open_app(driver)
    w.wait_title(driver, project["title"])
    assert driver.execute_script("return window.innerWidth") == 1366
    height = driver.execute_script("return window.innerHeight")
    assert driver.execute_script("return window.scrollY") == 0
    plan = w.analyze(project)
    shown = browser.wait_for(lambda: rows(driver) if len(rows(driver)) == len(plan["rules"]) else None,
                             what="a summary row per rule")
    summary = driver.find_element(By.CSS_SELECTOR, "[data-testid='board-summary']")
    bottom = driver.execute_script("return arguments[0].getBoundingClientRect().bottom;", summary)
    browser.screenshot(driver, "summary-above-the-fold-1366x768")
    print(f"summary bottom at {bottom:.0f} px of a {height} px viewport")
    assert bottom <= height, (bottom, height)
    for row, rule in zip(shown, plan["rules"]):
        name, layer, geometry, neighbour, z_text, deviation, verdict, engine = row["cells"]
        # The routing rule lands with the settled plan: pending, a least spacing, or none for this structure.
        assert neighbour in ("…", "—") or neighbour.startswith("≥ "), neighbour
        assert row["bottom"] <= height
        assert name == rule["name"] and layer == rule["layer"]
        m = Z_TEXT.match(z_text)
        assert m, z_text
        z, target, tol = float(m["z"]), float(m["target"]), float(m["tol"])
        assert target == rule["target_ohm"] and tol == rule["tolerance_pct"]
        # The shown deviation and verdict are those of the shown Z (to its rounding).
        dev = float(deviation.replace(" %", ""))
        assert abs(dev - (z / target - 1) * 100) <= 0.06, (dev, z, target)
        assert (row["verdict"] == "within") == (abs(dev) <= tol), row
        assert verdict == ("in tolerance" if row["verdict"] == "within" else "out of tolerance")
        # The app's settled plan checks each closed-form rule on the field engine and shows that figure.
        assert engine in ("closed form, field-checked", "field solver"), engine
        # Width (and spacing) are the core's, in the demo's µm, to the displayed rounding.
        parts = [float(p.split()[0]) for p in geometry.split(" / ")]
        assert abs(parts[0] - rule["width_m"] * 1e6) <= 0.5, (geometry, rule["width_m"])
        if rule.get("spacing_m") is not None:
            assert abs(parts[1] - rule["spacing_m"] * 1e6) <= 0.5, (geometry, rule["spacing_m"])
    works = summary.get_attribute("data-works") == "true"
    headline = driver.find_element(By.CSS_SELECTOR, "[data-testid='summary-headline']").text
    assert works == all(r["verdict"] == "within" for r in shown)
    assert headline.startswith("The board works" if works else "The board does not work"), headline
    assert browser.console_errors(driver) == []


def test_a_board_that_does_not_work_says_so_at_the_top(driver):
    project = w.demo()
    project["title"] = "Unreachable board"
    project["rules"][0]["target_ohm"] = 400.0
    w.put_local_work(driver, project)
    w.open_app(driver)
    w.wait_title(driver, project["title"])
    plan = w.analyze(project)
    assert plan["rules"][0]["status"] == "error"
    # The CLI reports the target out of reach; the app shows the nearest reachable design (issue 17, finding 3),
    # out of tolerance and said to be the nearest.
    first = browser.wait_for(lambda: rows(driver)[0], what="first summary row")
    assert first["verdict"] == "outside", first
    assert any("out of reach" in c for c in first["cells"]), first["cells"]
    summary = driver.find_element(By.CSS_SELECTOR, "[data-testid='board-summary']")
    assert summary.get_attribute("data-works") == "false"
    headline = driver.find_element(By.CSS_SELECTOR, "[data-testid='summary-headline']").text
    assert "does not work" in headline and "1 out of tolerance" in headline, headline
    browser.screenshot(driver, "summary-board-does-not-work")
    assert browser.console_errors(driver) == []
