"""Two tabs of one browser profile in real headless Chromium (dist/ohmstack.html from file://).

Both windows of one driver session share local storage, as two tabs of one profile do. Each tab edits its own
project id (kept in session storage); a tab that sees another tab save over its project says so and never writes
over it. Also: the old single storage key is migrated, and status messages do not outlive the next edit.
"""
import json

import pytest
from selenium.webdriver.common.by import By
from selenium.webdriver.common.keys import Keys
from selenium.webdriver.support.ui import Select

import browser


@pytest.fixture
def driver():
    d = browser.start(width=1366, height=768)
    yield d
    d.quit()


def open_app(driver):
    driver.get(browser.app_url())
    browser.wait_ready(driver)


def type_into(driver, field_id: str, text: str):
    box = driver.find_element(By.ID, field_id)
    box.click()
    box.send_keys(Keys.CONTROL, "a")
    box.send_keys(text)
    box.send_keys(Keys.TAB)


def saved(driver) -> dict:
    text = browser.saved_text(driver)
    assert text, "nothing autosaved for this tab"
    return json.loads(text)


def wait_saved(driver, predicate, what: str) -> dict:
    def check():
        p = saved(driver)
        return p if predicate(p) else None
    return browser.wait_for(check, what=what)


def title(driver) -> str:
    return driver.find_element(By.ID, "project-title").get_attribute("value")


def tab_id(driver) -> str:
    return driver.execute_script("return sessionStorage.getItem(arguments[0]);", browser.TAB_KEY)


def conflicts(driver) -> list:
    return driver.find_elements(By.CSS_SELECTOR, "[data-testid='conflict']")


def notice(driver) -> str:
    found = driver.find_elements(By.CSS_SELECTOR, "[data-testid='notice']")
    return found[0].text if found else ""


def test_two_tabs_keep_both_boards(driver):
    open_app(driver)
    tab_a = driver.current_window_handle
    type_into(driver, "project-title", "Board A")
    wait_saved(driver, lambda p: p["title"] == "Board A", "Board A saved")

    # A second tab opens the most recent project: the same board, the same id.
    driver.switch_to.new_window("tab")
    tab_b = driver.current_window_handle
    open_app(driver)
    assert title(driver) == "Board A"
    type_into(driver, "project-title", "Board B")
    type_into(driver, "rule-0-target-input", "55")
    board_b = wait_saved(driver, lambda p: p["title"] == "Board B" and p["rules"][0]["target_ohm"] == 55,
                         "Board B saved")
    assert conflicts(driver) == []

    # The first tab heard about it and says so, and has not written over Board B.
    driver.switch_to.window(tab_a)
    note = browser.wait_for(lambda: conflicts(driver) and conflicts(driver)[0].text, what="conflict notice")
    assert "changed in another tab" in note and "Board B" in note, note
    assert driver.find_element(By.ID, "conflict-theirs").is_displayed()
    assert driver.find_element(By.ID, "conflict-copy").is_displayed()
    assert saved(driver) == board_b
    browser.screenshot(driver, "tabs-conflict-notice")

    # Editing on keeps this tab's work as a project of its own.
    type_into(driver, "project-title", "Board A rev2")
    type_into(driver, "rule-0-target-input", "48")
    board_a = wait_saved(driver, lambda p: p["title"] == "Board A rev2" and p["rules"][0]["target_ohm"] == 48,
                         "Board A rev2 saved")
    assert conflicts(driver) == []
    id_a = tab_id(driver)

    driver.switch_to.window(tab_b)
    assert tab_id(driver) != id_a
    assert saved(driver) == board_b
    assert conflicts(driver) == [], "the tab whose save came first must not be warned about the copy"

    for handle, board in [(tab_a, board_a), (tab_b, board_b)]:
        driver.switch_to.window(handle)
        driver.refresh()
        browser.wait_ready(driver)
        assert title(driver) == board["title"]
        assert saved(driver) == board
        assert conflicts(driver) == []
    # Each tab can reopen the other board from the recent list.
    options = [o.text for o in driver.find_elements(By.CSS_SELECTOR, "#recent-projects option")]
    assert any(o.startswith("Board A rev2") for o in options), options
    assert not any(o.startswith("Board B") for o in options), "the board on screen is not offered"
    menu = Select(driver.find_element(By.ID, "recent-projects"))
    menu.select_by_visible_text(next(o for o in options if o.startswith("Board A rev2")))
    browser.wait_for(lambda: title(driver) == "Board A rev2", what="Board A rev2 reopened")
    assert tab_id(driver) == id_a
    assert "reopened" in notice(driver)
    browser.wait_for(lambda: any(o.text.startswith("Board B")
                                 for o in driver.find_elements(By.CSS_SELECTOR, "#recent-projects option")),
                     what="Board B offered in the recent list")
    assert browser.console_errors(driver) == []


def test_open_the_other_tabs_version(driver):
    open_app(driver)
    tab_a = driver.current_window_handle
    driver.switch_to.new_window("tab")
    tab_b = driver.current_window_handle
    open_app(driver)
    type_into(driver, "project-title", "Their board")
    theirs = wait_saved(driver, lambda p: p["title"] == "Their board", "their save")
    driver.switch_to.window(tab_a)
    browser.wait_for(lambda: conflicts(driver), what="conflict notice")
    driver.find_element(By.ID, "conflict-theirs").click()
    browser.wait_for(lambda: title(driver) == "Their board", what="their version on screen")
    assert conflicts(driver) == []
    assert saved(driver) == theirs
    assert "as the other tab saved it" in notice(driver)
    # Both tabs edit the one project again; the other tab now hears from this one.
    type_into(driver, "project-title", "Our board")
    wait_saved(driver, lambda p: p["title"] == "Our board", "our save")
    driver.switch_to.window(tab_b)
    browser.wait_for(lambda: conflicts(driver), what="conflict notice in the other tab")
    driver.find_element(By.ID, "conflict-copy").click()
    browser.wait_for(lambda: "separate project" in notice(driver), what="copy kept")
    assert conflicts(driver) == []
    assert saved(driver)["title"] == "Their board"
    assert browser.console_errors(driver) == []


def test_the_old_single_key_is_migrated(driver):
    open_app(driver)
    legacy = saved(driver)
    legacy["title"] = "Legacy board"
    driver.execute_script("localStorage.clear(); sessionStorage.clear();"
                          "localStorage.setItem('ohmstack.project.v1', arguments[0]);", json.dumps(legacy))
    driver.refresh()
    browser.wait_ready(driver)
    assert title(driver) == "Legacy board"
    assert saved(driver) == legacy
    assert driver.execute_script("return localStorage.getItem('ohmstack.project.v1');") is None
    index = json.loads(driver.execute_script("return localStorage.getItem('ohmstack.projects.v1');"))
    assert [r["title"] for r in index] == ["Legacy board"]
    assert browser.console_errors(driver) == []


def test_status_messages_do_not_linger(driver):
    open_app(driver)
    # A fresh profile shows the untouched demo: there is nothing for Undo to bring back.
    driver.find_element(By.ID, "new-blank").click()
    browser.wait_for(lambda: notice(driver) == "new blank project", what="blank-project note")
    type_into(driver, "project-title", "First board")
    browser.wait_for(lambda: notice(driver) == "", what="note cleared by the edit")
    browser.screenshot(driver, "finding10-status-cleared")
    driver.find_element(By.ID, "new-demo").click()
    browser.wait_for(lambda: "Undo brings back your previous work" in notice(driver), what="demo note with undo")
    assert browser.console_errors(driver) == []
