"""Share links in real headless Chromium: copy a link, open it in a fresh profile, the ask-before-replacing dialog,
and hostile links (damaged, foreign, huge, random, script-laden). Expected numbers and messages come from the CLI
(`share encode/decode`, `analyze --json`), which runs the same core natively."""
import base64
import json
import os
import random
import urllib.parse

import pytest
from selenium.webdriver.common.by import By

import browser
import webapp as w


@pytest.fixture
def driver():
    d = browser.start()
    yield d
    d.quit()


def click(driver, testid: str):
    driver.find_element(By.CSS_SELECTOR, f"[data-testid='{testid}']").click()


def test_copy_link_then_open_it_in_a_fresh_profile(driver):
    work = w.variant("Roundtrip board")
    w.put_local_work(driver, work)
    w.open_app(driver)
    w.wait_title(driver, "Roundtrip board")
    w.assert_same_numbers(driver, work)
    click(driver, "copy-link")
    url = browser.wait_for(
        lambda: driver.find_element(By.CSS_SELECTOR, "[data-testid='share-link']").get_attribute("value"),
        what="the share link")
    # replaceState put the link into the address bar too (allowed on file://).
    assert driver.current_url == url
    fragment = urllib.parse.urlsplit(url).fragment
    assert fragment.startswith("v1.")
    # The core reads the link back into exactly the project on screen.
    assert w.decode(url) == w.normalized(work)
    status = browser.wait_for(
        lambda: driver.find_element(By.CSS_SELECTOR, "[data-testid='share-status']").text, what="copy status")
    assert "clipboard" in status.lower()
    assert browser.console_errors(driver) == []

    other = browser.start()
    try:
        other.get(url)
        browser.wait_ready(other)
        w.wait_title(other, "Roundtrip board")
        # No saved work in a fresh profile: the link opens without asking.
        assert other.find_elements(By.CSS_SELECTOR, "[data-testid='link-dialog']") == []
        w.assert_same_numbers(other, work)
        assert w.core_impedances(work) != w.core_impedances(w.demo())
        browser.screenshot(other, "share-opened-in-fresh-profile")
        assert browser.console_errors(other) == []
        # Opening the link saved it as this profile's work.
        w.settle()
        assert w.local_work(other) == w.normalized(work)
    finally:
        other.quit()


def test_a_link_to_another_project_asks_before_replacing_local_work(driver):
    mine, theirs = w.variant("My board"), w.variant("Their board", target_shift=-5.0)
    link = w.encode(theirs)
    w.put_local_work(driver, mine)
    w.open_app(driver, "#" + link)
    dialog = browser.wait_for(
        lambda: driver.find_element(By.CSS_SELECTOR, "[data-testid='link-dialog']"), what="the dialog")
    assert "Their board" in dialog.text and "My board" in dialog.text
    # Meanwhile the saved work is on screen, not the demo.
    w.wait_title(driver, "My board")
    browser.screenshot(driver, "share-ask-dialog")
    click(driver, "keep-mine")
    w.settle()
    assert driver.find_elements(By.CSS_SELECTOR, "[data-testid='link-dialog']") == []
    w.wait_title(driver, "My board")
    w.assert_same_numbers(driver, mine)
    assert w.local_work(driver) == w.normalized(mine)
    assert urllib.parse.urlsplit(driver.current_url).fragment == ""

    w.open_app(driver, "#" + link)
    browser.wait_for(lambda: driver.find_element(By.CSS_SELECTOR, "[data-testid='link-dialog']"), what="dialog")
    click(driver, "open-linked")
    w.wait_title(driver, "Their board")
    w.assert_same_numbers(driver, theirs)
    w.settle()
    assert w.local_work(driver) == w.normalized(theirs)
    # The same link again holds the saved work: nothing to ask.
    w.open_app(driver, "#" + link)
    w.wait_title(driver, "Their board")
    w.settle()
    assert driver.find_elements(By.CSS_SELECTOR, "[data-testid='link-dialog']") == []
    assert browser.console_errors(driver) == []


def test_a_link_pasted_into_the_open_page_is_read_on_hashchange(driver):
    theirs = w.variant("Pasted board")
    w.open_app(driver)
    w.wait_title(driver, w.demo()["title"])
    driver.execute_script("location.hash = arguments[0];", w.encode(theirs))
    # The demo on screen is work a link would replace: ask.
    browser.wait_for(lambda: driver.find_element(By.CSS_SELECTOR, "[data-testid='link-dialog']"), what="dialog")
    click(driver, "open-linked")
    w.wait_title(driver, "Pasted board")
    w.assert_same_numbers(driver, theirs)
    assert browser.console_errors(driver) == []


def hostile_links() -> dict[str, str]:
    good = w.encode(w.variant("Linked board"))
    rng = random.Random(20261201)
    random_bytes = bytes(rng.randrange(256) for _ in range(200))
    return {
        "truncated": good[: len(good) - 7],
        "wrong-version": "v9." + good[3:],
        "huge": "v1." + "A" * 100_000,
        "random-bytes": urllib.parse.quote(random_bytes, safe=""),
        "random-payload": "v1." + base64.urlsafe_b64encode(random_bytes).decode().rstrip("="),
        "not-a-link": "section-2",
    }


@pytest.mark.parametrize("kind", list(hostile_links()))
def test_a_hostile_link_shows_the_core_message_and_keeps_local_work(driver, kind):
    link = hostile_links()[kind]
    mine = w.variant("Kept board")
    w.put_local_work(driver, mine)
    driver.execute_script("window.__pwned = undefined;")
    w.open_app(driver, "#" + link)
    error = browser.wait_for(
        lambda: driver.find_element(By.CSS_SELECTOR, "[data-testid='share-error']").text, what="the error")
    # The message is the core's, for exactly the fragment the page saw.
    seen = driver.execute_script("return location.hash.slice(1);")
    assert w.decode_error(seen) in error
    assert "your current work is kept" in error
    w.wait_title(driver, "Kept board")
    w.assert_same_numbers(driver, mine)
    w.settle()
    assert w.local_work(driver) == w.normalized(mine)
    assert w.no_alert(driver)
    assert driver.execute_script("return window.__pwned;") is None
    assert browser.console_errors(driver) == []
    if kind == "truncated":
        browser.screenshot(driver, "share-hostile-truncated")


MARKUP = {
    "layer": "<script>alert(1)</script>",
    "rule": "<img src=x onerror=alert(1)>",
    "title": "<img src=x onerror=\"window.__pwned=1\"> & <b>bold</b>",
    "rule2": "<svg onload=window.__pwned=2>",
    "material": "</td><script>window.__pwned=3</script>",
}


def markup_project() -> dict:
    p = w.demo()
    p["title"] = MARKUP["title"]
    old = p["stackup"][1]["name"]
    p["stackup"][1]["name"] = MARKUP["layer"]
    p["stackup"][2]["material"] = MARKUP["material"]
    for r in p["rules"]:
        if r["layer"] == old:
            r["layer"] = MARKUP["layer"]
    p["rules"][0]["name"] = MARKUP["rule"]
    p["rules"][1]["name"] = MARKUP["rule2"]
    return p


def test_a_link_with_markup_in_names_renders_it_as_text(driver):
    project = markup_project()
    link = w.encode(project)
    w.open_app(driver, "#" + link)
    w.wait_title(driver, MARKUP["title"])
    w.assert_same_numbers(driver, project)
    body = driver.find_element(By.TAG_NAME, "body").text
    for text in MARKUP.values():
        assert text in body, text
    # Names in the rule selector and the drawing are text too.
    options = [o.text for o in driver.find_elements(By.CSS_SELECTOR, "[data-testid='picture-rule'] option")]
    assert options[0] == MARKUP["rule"] and options[1] == MARKUP["rule2"]
    svg_text = driver.find_element(By.CSS_SELECTOR, "[data-testid='cross-section'] svg").text
    assert MARKUP["layer"] in svg_text
    # Nothing the names hold became an element or ran.
    assert driver.execute_script("return document.querySelectorAll('img, b').length") == 0
    assert driver.execute_script("return document.querySelectorAll('#app script, #app iframe').length") == 0
    assert driver.execute_script("return document.querySelectorAll('[onerror], [onload]').length") == 0
    assert w.no_alert(driver)
    assert driver.execute_script("return window.__pwned;") is None
    browser.screenshot(driver, "share-markup-names")
    assert browser.console_errors(driver) == []


@pytest.mark.parametrize("breakage", [
    "Object.defineProperty(navigator, 'clipboard', {value: undefined, configurable: true});",
    "navigator.clipboard.writeText = () => Promise.reject(new DOMException('denied', 'NotAllowedError'));",
    "navigator.clipboard.writeText = () => { throw new Error('broken'); };",
])
def test_copy_link_without_a_working_clipboard_shows_the_link_to_copy(driver, breakage):
    w.open_app(driver)
    driver.execute_script(breakage)
    click(driver, "copy-link")
    status = browser.wait_for(
        lambda: driver.find_element(By.CSS_SELECTOR, "[data-testid='share-status']").text, what="status")
    assert status.startswith("Copy the link below"), status
    field = driver.find_element(By.CSS_SELECTOR, "[data-testid='share-link']")
    url = field.get_attribute("value")
    assert url == driver.current_url and w.decode(url) == w.normalized(w.demo())
    # Focus selects the whole link, ready for Ctrl+C.
    field.click()
    assert driver.execute_script("return window.getSelection().toString() || "
                                 "(document.activeElement.selectionEnd - document.activeElement.selectionStart);"
                                 ) in (url, len(url))
    assert browser.console_errors(driver) == []
