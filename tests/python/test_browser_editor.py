"""The stackup and rule editor in real headless Chromium (dist/ohmstack.html from file://).

Every number is checked against the core run through the CLI (`ohmstack analyze - --json`) on the very project the
app autosaved to localStorage, so the browser must agree with the native core; nothing here is a hard-coded result.
"""
import json
import tempfile

import pytest
from selenium.webdriver.common.by import By
from selenium.webdriver.common.keys import Keys
from selenium.webdriver.support.ui import Select

import browser
from conftest import run

# Demo layer 2 is the prepreg under the top signal layer; rule 0 is the top-layer single-ended 50 Ω line.
PREPREG = 2


def saved(driver) -> dict:
    text = browser.saved_text(driver)
    assert text, "nothing autosaved"
    return json.loads(text)


def core_plan(project: dict) -> dict:
    proc = run("analyze", "-", "--json", stdin=json.dumps(project))
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout)


def demo_project() -> dict:
    proc = run("demo")
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout)


def el(driver, testid):
    return driver.find_element(By.CSS_SELECTOR, f"[data-testid='{testid}']")


def value(driver, testid) -> float:
    return float(el(driver, testid).get_attribute("data-value"))


def type_into(driver, field_id: str, text: str, leave: bool = True):
    box = driver.find_element(By.ID, field_id)
    box.click()
    box.send_keys(Keys.CONTROL, "a")
    box.send_keys(text)
    if leave:
        box.send_keys(Keys.TAB)


def paste(driver, field_id: str, text: str):
    """Puts `text` into the field in one input event, as a paste does (typing would pass through valid prefixes)."""
    driver.execute_script(
        "const e = document.getElementById(arguments[0]); e.focus(); e.value = arguments[1];"
        "e.dispatchEvent(new InputEvent('input', {bubbles: true}));", field_id, text)


def wait_saved(driver, predicate, what) -> dict:
    """Waits until the autosaved project satisfies `predicate`; returns that project."""
    def check():
        p = saved(driver)
        return p if predicate(p) else None
    return browser.wait_for(check, what=what)


def test_dielectric_thickness_change_recomputes_the_rule(driver):
    # The rule solves for width by default; fix the width so the impedance itself must move with the height.
    Select(driver.find_element(By.ID, "rule-0-solve")).select_by_value("nothing")
    p = wait_saved(driver, lambda p: p["rules"][0]["solve"] == "nothing", "solve saved")
    browser.wait_for(lambda: abs(value(driver, "rule-0-impedance") - core_plan(p)["rules"][0]["impedance_ohm"]) < 1e-9,
                     what="Z as drawn")
    before = value(driver, "rule-0-impedance")
    type_into(driver, f"layer-{PREPREG}-thickness", "150")
    p = wait_saved(driver, lambda p: abs(p["stackup"][PREPREG]["thickness_m"] - 150e-6) < 1e-15,
                   "thickness saved")
    plan = core_plan(p)
    rule = plan["rules"][0]
    assert rule["status"] == "ok", rule
    z = browser.wait_for(lambda: abs(value(driver, "rule-0-impedance") - rule["impedance_ohm"]) < 1e-9,
                         what="browser Z equals core Z")
    assert z
    assert abs(rule["impedance_ohm"] - before) > 0.5, "a thicker dielectric must change Z"
    assert el(driver, "rule-0-impedance").text == f"{rule['impedance_ohm']:.2f}"
    assert abs(value(driver, "rule-0-eps-eff") - rule["eps_eff"]) < 1e-12
    assert abs(value(driver, "rule-0-delay") - rule["delay_s_per_m"] * 1e9) < 1e-9
    assert abs(value(driver, "board-thickness") - plan["total_thickness_m"]) < 1e-15
    assert browser.console_errors(driver) == []


def test_solve_width_hits_target_and_matches_cli(driver):
    type_into(driver, "rule-0-target-input", "57")
    Select(driver.find_element(By.ID, "rule-0-solve")).select_by_value("width")
    p = wait_saved(driver, lambda p: p["rules"][0]["target_ohm"] == 57.0, "target saved")
    rule = core_plan(p)["rules"][0]
    assert rule["status"] == "ok" and rule["solved"] == "width", rule
    browser.wait_for(lambda: abs(value(driver, "rule-0-width") - rule["width_m"]) < 1e-15, what="width = CLI width")
    assert abs(value(driver, "rule-0-impedance") - 57.0) < 0.05
    assert abs(value(driver, "rule-0-impedance") - rule["impedance_ohm"]) < 1e-9
    assert browser.console_errors(driver) == []


@pytest.mark.parametrize("field_id", [f"layer-{PREPREG}-thickness", "rule-0-target-input", f"layer-{PREPREG}-dk"])
def test_bad_entries_are_marked_and_keep_the_design(driver, field_id):
    good = saved(driver)
    z_before = el(driver, "rule-0-impedance").get_attribute("data-value")
    for text in ["-1", "0", "abc", "1e9"]:
        paste(driver, field_id, text)
        box = driver.find_element(By.ID, field_id)
        browser.wait_for(lambda: box.get_attribute("aria-invalid") == "true", what=f"{text!r} marked invalid")
        message = el(driver, f"{field_id}-error").text
        assert message and ("thickness" in message or "target" in message or "dk" in message), message
        assert box.get_attribute("aria-describedby") == f"{field_id}-error"
        assert box.get_attribute("value") == text, "the typed text must stay in the field"
        assert saved(driver) == good, "an invalid entry must not change the stored design"
        # The last good results stay on screen (greyed), unchanged.
        assert el(driver, "rule-0-impedance").get_attribute("data-value") == z_before
        assert el(driver, "stale-note").is_displayed()
    if field_id.startswith("layer"):
        browser.screenshot(driver, "editor-error-state")
    type_into(driver, field_id, "4.2" if field_id.endswith("dk") else "120" if "thickness" in field_id else "50",
              leave=True)
    box = driver.find_element(By.ID, field_id)
    browser.wait_for(lambda: box.get_attribute("aria-invalid") == "false", what="fixed entry accepted")
    assert not driver.find_elements(By.CSS_SELECTOR, "[data-testid='stale-note']")
    assert browser.console_errors(driver) == []


def test_reload_restores_and_undo_twice_goes_back():
    profile = tempfile.mkdtemp(prefix="ohmstack-profile-")
    d = browser.start(profile_dir=profile, width=1366, height=768)
    try:
        d.get(browser.app_url())
        browser.wait_ready(d)
        original = saved(d)
        type_into(d, f"layer-{PREPREG}-thickness", "133")
        type_into(d, f"layer-{PREPREG}-dk", "3.9")
        edited = wait_saved(d, lambda p: p["stackup"][PREPREG]["dk"] == 3.9, "second edit saved")
        d.refresh()
        browser.wait_ready(d)
        assert saved(d) == edited
        assert d.find_element(By.ID, f"layer-{PREPREG}-thickness").get_attribute("value") == "133"
        assert d.find_element(By.ID, f"layer-{PREPREG}-dk").get_attribute("value") == "3.9"
        rule = core_plan(edited)["rules"][0]
        assert abs(value(d, "rule-0-impedance") - rule["impedance_ohm"]) < 1e-9
        # Undo with the keyboard, then with the button: history survives the reload.
        d.find_element(By.TAG_NAME, "body").send_keys(Keys.CONTROL, "z")
        wait_saved(d, lambda p: p["stackup"][PREPREG]["dk"] == original["stackup"][PREPREG]["dk"], "first undo")
        assert saved(d)["stackup"][PREPREG]["thickness_m"] == edited["stackup"][PREPREG]["thickness_m"]
        d.find_element(By.ID, "undo").click()
        wait_saved(d, lambda p: p == original, "second undo restores the original")
        assert original == demo_project()
        d.find_element(By.TAG_NAME, "body").send_keys(Keys.CONTROL, "y")
        wait_saved(d, lambda p: p["stackup"][PREPREG]["thickness_m"] == edited["stackup"][PREPREG]["thickness_m"],
                   "redo")
        assert browser.console_errors(d) == []
    finally:
        d.quit()


def test_unit_switch_keeps_stored_values_bit_identical(driver):
    type_into(driver, "rule-0-target-input", "52.5")
    start = wait_saved(driver, lambda p: p["rules"][0]["target_ohm"] == 52.5, "edit saved")
    raw_start = browser.saved_text(driver)
    units = Select(driver.find_element(By.ID, "units"))
    for unit in ["mm", "mil", "mm"]:
        units = Select(driver.find_element(By.ID, "units"))
        units.select_by_value(unit)
        wait_saved(driver, lambda p, u=unit: p["units"] == u, f"unit {unit}")
        if unit == "mil":
            # 1 mil = 25.4 µm exactly; the field shows the stored metres in mil, to the trade's 0.01 mil.
            text = driver.find_element(By.ID, f"layer-{PREPREG}-thickness").get_attribute("value")
            assert len(text.partition(".")[2]) <= 2, text
            assert abs(float(text) - start["stackup"][PREPREG]["thickness_m"] / 25.4e-6) <= 0.005 + 1e-12
    end = saved(driver)
    raw_end = browser.saved_text(driver)
    assert end["stackup"] == start["stackup"] and end["rules"] == start["rules"] and end["fab"] == start["fab"]
    # Same text apart from the unit line: every stored float is written identically (shortest round-trip form).
    assert raw_end.replace('"units": "mm"', '"units": "um"') == raw_start
    assert browser.console_errors(driver) == []


def test_rename_reorder_and_structures(driver):
    type_into(driver, "layer-1-name", "Top signal")
    p = wait_saved(driver, lambda p: p["stackup"][1]["name"] == "Top signal", "rename saved")
    assert all(r["layer"] != "L1 Top" for r in p["rules"])
    assert p["rules"][0]["layer"] == "Top signal"
    # Alt+ArrowDown on a focused row moves the layer and keeps focus on the same control.
    driver.find_element(By.ID, "layer-4-name").click()
    driver.find_element(By.ID, "layer-4-name").send_keys(Keys.ALT, Keys.ARROW_DOWN)
    p = wait_saved(driver, lambda p: p["stackup"][5]["name"] == "Core 1", "row moved down")
    browser.wait_for(lambda: driver.switch_to.active_element.get_attribute("id") == "layer-5-name",
                     what="focus follows the row")
    assert el(driver, "symmetry").text.strip().startswith("· not mirror-symmetric")
    driver.find_element(By.ID, "undo").click()
    wait_saved(driver, lambda p: p["stackup"][4]["name"] == "Core 1", "undo move")
    # The outer layer offers no broadside pair; the inner layer between two planes does.
    outer = [o.get_attribute("value") for o in Select(driver.find_element(By.ID, "rule-0-structure")).options]
    assert "broadside_pair" not in outer and "edge_pair" in outer
    inner = [o.get_attribute("value") for o in Select(driver.find_element(By.ID, "rule-2-structure")).options]
    assert "broadside_pair" in inner
    # A pair shows Zdiff and Zcommon, both equal to the core's (or the core's reason when it cannot compute yet).
    p = saved(driver)
    rule = core_plan(p)["rules"][1]
    # The field figures, not the closed-form preview shown while they are computed.
    browser.wait_for(lambda: driver.find_element(By.ID, "app").get_attribute("data-settled") == "true",
                     timeout=120, what="field figures in")
    if rule["status"] == "ok":
        # Same core in WASM: equal within the field synthesis tolerance (webapp.assert_same_numbers says why).
        assert abs(value(driver, "rule-1-impedance") / rule["impedance_ohm"] - 1) < 1e-4
        assert abs(value(driver, "rule-1-zcommon") / (rule["analysis"]["z_even"] / 2) - 1) < 1e-4
    else:
        assert el(driver, "rule-1-error").text == rule["message"]
    assert browser.console_errors(driver) == []


def test_presets_and_add_remove(driver):
    Select(driver.find_element(By.ID, f"layer-{PREPREG}-preset")).select_by_value("low-loss")
    p = wait_saved(driver, lambda p: p["stackup"][PREPREG]["material"] == "low-loss laminate", "preset applied")
    rule = core_plan(p)["rules"][0]
    browser.wait_for(lambda: abs(value(driver, "rule-0-impedance") - rule["impedance_ohm"]) < 1e-9, what="Z updated")
    n_layers, n_rules = len(p["stackup"]), len(p["rules"])
    driver.find_element(By.ID, "layer-0-dup").click()
    wait_saved(driver, lambda p: len(p["stackup"]) == n_layers + 1, "layer duplicated")
    driver.find_element(By.ID, "layer-1-remove").click()
    wait_saved(driver, lambda p: len(p["stackup"]) == n_layers, "layer removed")
    # "Add rule" sits under the rule cards, which grow when their routing figures land: a click while they land
    # can find the button moved (the gate's flake). The figures are in first, as a user would see them.
    browser.wait_for(lambda: driver.find_element(By.ID, "app").get_attribute("data-settled") == "true",
                     timeout=120, what="the figures settled")
    driver.find_element(By.ID, "add-rule").click()
    p = wait_saved(driver, lambda p: len(p["rules"]) == n_rules + 1, "rule added")
    new = core_plan(p)["rules"][n_rules]
    assert new["status"] == "ok", new
    browser.wait_for(lambda: abs(value(driver, f"rule-{n_rules}-impedance") - new["impedance_ohm"]) < 1e-9,
                     what="new rule computed")
    driver.find_element(By.ID, f"rule-{n_rules}-remove").click()
    wait_saved(driver, lambda p: len(p["rules"]) == n_rules, "rule removed")
    assert browser.console_errors(driver) == []


def test_bad_file_keeps_work_and_good_file_opens(driver, tmp_path):
    type_into(driver, "rule-0-target-input", "51")
    work = wait_saved(driver, lambda p: p["rules"][0]["target_ohm"] == 51.0, "edit saved")
    bad = tmp_path / "bad.json"
    bad.write_text('{"schema": 1, "title": "x", "stackup": [], "bogus": 3}')
    driver.find_element(By.ID, "open-file").send_keys(str(bad))
    notice = browser.wait_for(lambda: el(driver, "notice").text, what="error notice")
    assert "could not open bad.json" in notice and "bogus" in notice, notice
    assert saved(driver) == work
    good = demo_project()
    good["title"] = "Opened from a file"
    path = tmp_path / "good.json"
    path.write_text(json.dumps(good))
    driver.find_element(By.ID, "open-file").send_keys(str(path))
    wait_saved(driver, lambda p: p == good, "file opened")
    assert driver.find_element(By.ID, "project-title").get_attribute("value") == "Opened from a file"
    assert browser.console_errors(driver) == []


def test_main_view_screenshot(driver):
    browser.screenshot(driver, "editor-main-1366x768")
    driver.set_window_size(1366, 2400)
    browser.screenshot(driver, "editor-main-full")
    # Every input and select has a label pointing at it (screen readers announce it).
    unlabelled = driver.execute_script(
        "return [...document.querySelectorAll('input, select')]"
        ".filter(e => !document.querySelector(`label[for='${e.id}']`)).map(e => e.outerHTML)")
    assert unlabelled == []
    # Print view: buttons go, inputs read as plain text.
    driver.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": "print"})
    assert not driver.find_element(By.ID, "add-rule").is_displayed()
    browser.screenshot(driver, "editor-print")
    assert browser.console_errors(driver) == []


def test_storage_failure_is_reported_not_fatal(driver):
    # Storage that refuses writes (full quota, or blocked by policy): the app keeps computing and says so.
    driver.execute_script(
        "Storage.prototype.setItem = function () { throw new DOMException('full', 'QuotaExceededError'); };")
    type_into(driver, "rule-0-target-input", "53")
    message = browser.wait_for(lambda: el(driver, "storage-error").text, what="storage error shown")
    assert "autosave failed" in message, message
    browser.wait_for(lambda: abs(value(driver, "rule-0-impedance") - 53.0) < 0.05, what="still solving")
    assert browser.console_errors(driver) == []


def test_save_downloads_the_cli_schema(driver, tmp_path):
    driver.execute_cdp_cmd("Browser.setDownloadBehavior", {"behavior": "allow", "downloadPath": str(tmp_path)})
    type_into(driver, "project-title", "Saved board")
    p = wait_saved(driver, lambda p: p["title"] == "Saved board", "title saved")
    driver.find_element(By.ID, "save-file").click()
    path = tmp_path / "Saved-board.ohmstack.json"
    browser.wait_for(lambda: path.exists() and path.stat().st_size > 0, what="download written")
    assert json.loads(path.read_text()) == p
    # The CLI reads the downloaded file as it is.
    proc = run("analyze", str(path), "--json")
    assert proc.returncode == 0, proc.stderr
    assert browser.console_errors(driver) == []


@pytest.mark.parametrize("seed", [7, 11, 23])
def test_random_structural_edits_never_break_the_app(driver, seed):
    """A seeded random walk over the editing controls: the app must never panic (a WASM panic logs a console error)
    and every rule row must show either the core's figures or the core's message."""
    import random
    rng = random.Random(seed)
    pick = """
        const sel = 'td.actions button:not([disabled]), .card-actions button, #add-rule, #add-layer, #new-blank,'
                  + ' #undo:not([disabled]), #redo:not([disabled]), select';
        const all = [...document.querySelectorAll(sel)].filter(e => e.offsetParent !== null);
        const c = all[Math.floor(arguments[0] * all.length)];
        if (c.tagName === 'SELECT') {
            c.selectedIndex = Math.floor(arguments[1] * c.options.length);
            c.dispatchEvent(new Event('change', {bubbles: true}));
        } else {
            c.click();
        }
    """
    for _ in range(80):
        driver.execute_script(pick, rng.random(), rng.random())
    browser.wait_ready(driver)
    p = saved(driver)
    proc = run("analyze", "-", "--json", stdin=json.dumps(p))
    if proc.returncode == 0:
        for i, rule in enumerate(json.loads(proc.stdout)["rules"]):
            if rule["status"] == "ok":
                browser.wait_for(lambda: abs(value(driver, f"rule-{i}-impedance") - rule["impedance_ohm"]) < 1e-9,
                                 what=f"rule {i} equals core")
            else:
                assert el(driver, f"rule-{i}-error").text == rule["message"]
    else:
        # The CLI reads files strictly; the app keeps work whose rules point at removed layers and flags the rows.
        assert "rules[" in proc.stderr, proc.stderr
    assert browser.console_errors(driver) == []


def test_partial_typing_is_not_clobbered(driver):
    Select(driver.find_element(By.ID, "units")).select_by_value("mm")
    wait_saved(driver, lambda p: p["units"] == "mm", "unit mm")
    box = driver.find_element(By.ID, f"layer-{PREPREG}-thickness")
    type_into(driver, f"layer-{PREPREG}-thickness", "0.", leave=False)
    assert box.get_attribute("value") == "0."
    assert box.get_attribute("aria-invalid") == "true"  # zero thickness, for now
    box.send_keys("13")
    browser.wait_for(lambda: box.get_attribute("value") == "0.13", what="text kept while typing")
    p = wait_saved(driver, lambda p: abs(p["stackup"][PREPREG]["thickness_m"] - 0.13e-3) < 1e-15, "0.13 mm saved")
    assert box.get_attribute("aria-invalid") == "false"
    rule = core_plan(p)["rules"][0]
    browser.wait_for(lambda: abs(value(driver, "rule-0-width") - rule["width_m"]) < 1e-15, what="re-solved width")
    assert browser.console_errors(driver) == []


def test_preset_menus_are_the_cores_table(driver):
    proc = run("materials", "--json")
    assert proc.returncode == 0, proc.stderr
    table = json.loads(proc.stdout)
    assert "datasheet" in table["caveat"] and table["caveat"] in driver.find_element(By.CSS_SELECTOR, ".hint").text
    laminate = [p["id"] for p in table["presets"] if p["use"] == "laminate"]
    mask = [p["id"] for p in table["presets"] if p["use"] == "solder_mask"]
    ids = lambda i: [o.get_attribute("value") for o in Select(driver.find_element(By.ID, f"layer-{i}-preset")).options][1:]
    assert ids(PREPREG) == laminate and ids(0) == mask
    for preset in table["presets"]:
        i = 0 if preset["use"] == "solder_mask" else PREPREG
        Select(driver.find_element(By.ID, f"layer-{i}-preset")).select_by_value(preset["id"])
        p = wait_saved(driver, lambda p: p["stackup"][i]["material"] == preset["name"], preset["id"])
        layer = p["stackup"][i]
        assert (layer["dk"], layer["df"], layer["spec_freq_hz"]) == (preset["dk"], preset["df"], preset["spec_freq_hz"])
        # Every preset value stays editable.
        assert driver.find_element(By.ID, f"layer-{i}-dk").get_attribute("value") == f"{preset['dk']:g}"
    assert browser.console_errors(driver) == []


def test_figures_are_rounded_as_the_trade_writes_them(driver):
    """Issue 17 item 8: copper chosen as 1 oz reads 35 µm (34.798 µm stored, 1 oz = 1.37 mil, value from memory);
    in mil every length field and summary figure has at most two decimals (0.1 mm min trace reads 3.94, not
    3.93701), while the saved project keeps full precision."""
    copper = next(i for i, l in enumerate(demo_project()["stackup"]) if l["type"] == "copper")
    Select(driver.find_element(By.ID, f"layer-{copper}-weight")).select_by_value("1")
    p = wait_saved(driver, lambda p: abs(p["stackup"][copper]["thickness_m"] - 34.798e-6) < 1e-12, "1 oz copper")
    assert p["stackup"][copper]["thickness_m"] != 35e-6  # full precision inside
    browser.wait_for(lambda: driver.find_element(By.ID, f"layer-{copper}-thickness").get_attribute("value") == "35",
                     what="1 oz shown as 35 µm")
    Select(driver.find_element(By.ID, "units")).select_by_value("mil")
    wait_saved(driver, lambda p: p["units"] == "mil", "unit mil")
    assert driver.find_element(By.ID, "fab-min-trace").get_attribute("value") == "3.94"
    fields = driver.find_elements(By.CSS_SELECTOR, "input[id$='-thickness'], input[id^='fab-min']")
    assert len(fields) > 5
    for f in fields:
        # A process limit carries its unit word ("0.39 mil"); the number is what is rounded.
        text = (f.get_attribute("value") or "").split(" ")[0]
        assert len(text.partition(".")[2]) <= 2, (f.get_attribute("id"), text)
    summary = browser.wait_for(lambda: [td.text for td in driver.find_elements(
        By.CSS_SELECTOR, "[data-testid='board-summary'] tbody td:nth-child(3)")], what="summary widths")
    for cell in summary:
        for part in cell.split(" / "):
            number, unit = part.split()
            assert unit == "mil" and len(number.partition(".")[2]) <= 2, cell
    browser.screenshot(driver, "rounded-figures-mil")
    assert saved(driver)["fab"]["min_trace_m"] == demo_project()["fab"]["min_trace_m"]
    assert browser.console_errors(driver) == []
