"""Building a stack fast (issue 17 item 7) and the stack picture (item 2), in real headless Chromium at 1366×768.

The issue's task, done as a new user would: an 8-layer 1.6 mm board with a 50 Ω trace and a 100 Ω pair on four
signal layers and a 90 Ω pair. Every click, menu choice and field entry counts as one action; the issue measured 61
actions for the stack alone before starter stacks existed. The built project is read back from autosave and
checked against the core through the CLI; screenshots are saved as artefacts.
"""
import json

from selenium.webdriver.common.action_chains import ActionChains
from selenium.webdriver.common.by import By
from selenium.webdriver.common.keys import Keys
from selenium.webdriver.support.ui import Select

import browser
import webapp as w

# The count for the 8-layer stack before this work (issue 17 item 7).
ACTIONS_BEFORE = 61
# The bound: a starter gives the stack, its rules and the target in one choice, so the task is a handful of steps
# (a fresh project, the starter, and the one net class the starter lacks: copy a pair, retarget it, name it). Twelve
# leaves room for a user who also names the board and checks a layer, and is still under a fifth of the old count.
ACTIONS_BOUND = 12


class Counter:
    """Does what a user does and counts it: one click, one menu choice or one field entry is one action."""

    def __init__(self, driver):
        self.driver, self.n = driver, 0

    def click(self, css: str):
        self.driver.find_element(By.CSS_SELECTOR, css).click()
        self.n += 1

    def choose(self, element_id: str, value: str):
        Select(self.driver.find_element(By.ID, element_id)).select_by_value(value)
        self.n += 1

    def enter(self, element_id: str, text: str):
        box = self.driver.find_element(By.ID, element_id)
        box.click()
        box.send_keys(Keys.CONTROL, "a")
        box.send_keys(text, Keys.ENTER)
        self.n += 1


def saved(driver) -> dict:
    text = browser.saved_text(driver)
    assert text, "nothing autosaved"
    return json.loads(text)


def wait_saved(driver, predicate, what: str) -> dict:
    def check():
        p = saved(driver)
        return p if predicate(p) else None
    return browser.wait_for(check, timeout=30, what=what)


def test_the_eight_layer_task_takes_a_handful_of_actions(driver):
    user = Counter(driver)
    user.click("#new-blank")
    wait_saved(driver, lambda p: not p["rules"], "blank project")
    user.choose("starter-stack", "8")
    p = wait_saved(driver, lambda p: sum(l["type"] == "copper" for l in p["stackup"]) == 8, "8-layer starter")
    # The one net class the starter lacks: a 90 Ω pair, copied from the top layer's 100 Ω pair and retargeted.
    pair = next(i for i, r in enumerate(p["rules"]) if r["structure"] == "edge_pair")
    user.click(f"#rule-{pair}-dup")
    user.enter(f"rule-{pair + 1}-target-input", "90")
    user.enter(f"rule-{pair + 1}-name-input", "USB 90 Ω")
    p = wait_saved(driver, lambda p: any(r["name"] == "USB 90 Ω" and r["target_ohm"] == 90 for r in p["rules"]),
                   "the 90 Ω pair")
    browser.wait_ready(driver, timeout=120)
    print(f"8-layer task: {user.n} actions (the issue counted {ACTIONS_BEFORE} before)")
    assert user.n <= ACTIONS_BOUND < ACTIONS_BEFORE

    # The board the task asks for: 8 copper layers; a 50 Ω trace and a 100 Ω pair on each of four signal layers;
    # the 90 Ω pair; a 1.6 mm target met within the board thickness tolerance.
    copper = [l for l in p["stackup"] if l["type"] == "copper"]
    assert len(copper) == 8
    signal = {l["name"] for l in copper if l["role"] == "signal"}
    assert len(signal) == 4
    for target, structure in [(50, "single"), (100, "edge_pair")]:
        assert {r["layer"] for r in p["rules"] if r["target_ohm"] == target and r["structure"] == structure} == signal
    assert p["fab"]["target_thickness_m"] == 1.6e-3
    core = w.analyze(p)
    shown = float(driver.find_element(By.CSS_SELECTOR, "[data-testid='board-thickness']").get_attribute("data-value"))
    assert abs(shown / core["total_thickness_m"] - 1) < 1e-12
    diff = driver.find_element(By.CSS_SELECTOR, "[data-testid='target-difference']")
    assert diff.get_attribute("data-within") == "true", diff.text
    assert abs(float(diff.get_attribute("data-value")) - (shown - 1.6e-3)) < 1e-12
    # Every rule solved on the page agrees with the core (same checks as the share tests).
    w.assert_same_numbers(driver, p)
    browser.screenshot(driver, "eight-layer-task")

    # A target the stack misses by more than the tolerance is flagged (1.0 mm against ~1.6 mm is about +60 %).
    w.open_app(driver)
    box = driver.find_element(By.ID, "fab-target-thickness")
    box.send_keys(Keys.CONTROL, "a")
    box.send_keys("1000", Keys.ENTER)  # µm, the page's unit
    flagged = browser.wait_for(lambda: driver.find_element(By.CSS_SELECTOR,
                               "[data-testid='target-difference'][data-within='false']"), what="flag")
    assert "outside" in flagged.text and "%" in flagged.text
    # Undo brings back the stack the starter replaced: one step for the whole starter (after the target, the
    # name, the 90 Ω and the copy are undone, one at a time).
    for _ in range(4):
        driver.find_element(By.ID, "undo").click()
    wait_saved(driver, lambda p: sum(l["type"] == "copper" for l in p["stackup"]) == 8 and len(p["rules"]) == 8,
               "undo to the starter")
    driver.find_element(By.ID, "undo").click()
    wait_saved(driver, lambda p: not p["rules"] and sum(l["type"] == "copper" for l in p["stackup"]) == 2,
               "undo to the blank project")


def test_insert_above_and_below_name_the_new_layers_by_position(driver):
    Select(driver.find_element(By.ID, "starter-stack")).select_by_value("4")
    p = wait_saved(driver, lambda p: sum(l["type"] == "copper" for l in p["stackup"]) == 4, "4-layer starter")
    names = [l["name"] for l in p["stackup"]]
    core = names.index("Core L2–L3")
    driver.find_element(By.ID, f"layer-{core}-insert-above").click()
    p = wait_saved(driver, lambda p: len(p["stackup"]) == len(names) + 1, "inserted above")
    assert p["stackup"][core]["name"] == "L3 new" and p["stackup"][core]["type"] == "copper"
    driver.find_element(By.ID, f"layer-{core}-insert").click()
    p = wait_saved(driver, lambda p: len(p["stackup"]) == len(names) + 2, "inserted below")
    assert p["stackup"][core + 1]["name"] == "Prepreg L3–L3"
    driver.find_element(By.ID, "renumber-layers").click()
    p = wait_saved(driver, lambda p: any(l["name"] == "L5 Bottom" for l in p["stackup"]), "renumbered")
    by_layer = {r["layer"] for r in p["rules"]}
    assert by_layer <= {l["name"] for l in p["stackup"]}, "every rule still names a layer of the stack"
    assert "L5 Bottom" in by_layer, "the bottom layer's rules followed its new name"


def test_picking_a_layer_in_the_picture_focuses_its_row(driver):
    picture = driver.find_element(By.CSS_SELECTOR, "[data-testid='stack-picture']")
    layers = picture.find_elements(By.CSS_SELECTOR, "[data-testid^='pic-layer-']")
    p = saved(driver) or w.demo()
    assert len(layers) == len(p["stackup"])
    # Drawn top to bottom in stack order, each at least the minimum height; the thickest layer drawn tallest.
    boxes = [driver.execute_script("const r = arguments[0].getBoundingClientRect(); return [r.top, r.height];", g)
             for g in layers]
    assert all(a[0] < b[0] for a, b in zip(boxes, boxes[1:]))
    thick = [l["thickness_m"] for l in p["stackup"]]
    assert max(range(len(thick)), key=thick.__getitem__) == max(range(len(boxes)), key=lambda i: boxes[i][1])
    assert min(h for _, h in boxes) >= 10
    # Mouse: the row's first input takes the focus.
    i = 6
    layers[i].click()
    browser.wait_for(lambda: driver.switch_to.active_element.get_attribute("id") == f"layer-{i}-name",
                     what="the picked row's name focused")
    assert "picked" in driver.find_element(By.CSS_SELECTOR, f"[data-testid='layer-row-{i}']").get_attribute("class")
    browser.screenshot(driver, "stack-picture")
    # Keyboard: Tab reaches the picture's layers, Enter picks one; each has an accessible name.
    j = 3
    driver.execute_script("arguments[0].focus();", layers[j - 1])
    ActionChains(driver).send_keys(Keys.TAB).perform()
    assert driver.switch_to.active_element.get_attribute("data-testid") == f"pic-layer-{j}"
    assert p["stackup"][j]["name"] in driver.switch_to.active_element.get_attribute("aria-label")
    ActionChains(driver).send_keys(Keys.ENTER).perform()
    browser.wait_for(lambda: driver.switch_to.active_element.get_attribute("id") == f"layer-{j}-name",
                     what="Enter picks the layer")
    driver.execute_script("arguments[0].focus();", layers[1])
    ActionChains(driver).send_keys(Keys.SPACE).perform()
    browser.wait_for(lambda: driver.switch_to.active_element.get_attribute("id") == "layer-1-name",
                     what="Space picks the layer")
