"""Fab notes, drawing and plots in real headless Chromium: the notes printed to PDF by Chromium carry the core's
widths and impedances as the notes format them; the CSV, Markdown and Touchstone downloads equal the CLI's output
(numbers to round-off); the spread statistics equal `ohmstack spread --model quadratic`; screenshots of the
drawing, the plots and the notes are saved as artefacts."""
import base64
import io
import json
import re
import tempfile
import time
import unicodedata
from pathlib import Path

import pytest
from pypdf import PdfReader
from selenium.webdriver.common.by import By
from selenium.webdriver.common.print_page_options import PrintOptions
from selenium.webdriver.support.ui import Select

import browser
import webapp as w


@pytest.fixture
def driver():
    d = browser.start(height=1400)
    yield d
    d.quit()


def squash(text: str) -> str:
    """Text with all whitespace removed (PDF text extraction breaks lines and cells in its own places) and
    ligatures such as "ﬁ" taken apart (NFKC)."""
    return "".join(unicodedata.normalize("NFKC", text).split())


def md_impedance_rows(markdown: str) -> list[list[str]]:
    """Cells of the Markdown impedance table, unescaped (the core escapes punctuation with a backslash)."""
    section = markdown.split("## Controlled impedance", 1)[1].split("## Notes", 1)[0]
    rows = [line for line in section.splitlines() if line.startswith("|")][2:]
    out = []
    for line in rows:
        cells = re.split(r"(?<!\\)\|", line.strip())[1:-1]
        out.append([re.sub(r"\\(.)", r"\1", c.strip()) for c in cells])
    return out


def pdf_text(driver) -> str:
    opts = PrintOptions()
    opts.background = False
    pdf = base64.b64decode(driver.print_page(opts))
    browser.ARTIFACTS.mkdir(parents=True, exist_ok=True)
    (browser.ARTIFACTS / "notes-print.pdf").write_bytes(pdf)
    reader = PdfReader(io.BytesIO(pdf))
    return "\n".join(page.extract_text() for page in reader.pages)


def test_fab_notes_print_to_pdf_with_the_core_numbers(driver):
    project = w.demo()
    w.open_app(driver)
    w.wait_title(driver, project["title"])
    text = pdf_text(driver)
    flat = squash(text)
    assert squash(f"Fab notes: {project['title']}") in flat
    rows = md_impedance_rows(w.cli_ok("notes", "-", "--format", "md", stdin=json.dumps(project)))
    plan = w.analyze(project)
    assert len(rows) == len(plan["rules"]) == len(project["rules"])
    for row, rule in zip(rows, plan["rules"]):
        net, width, z = row[0], row[5], row[8]
        assert squash(net) in flat, net
        assert squash(width) in flat, width
        assert squash(z) in flat, z
        # The notes' Z column is the analysed impedance to 2 decimals (analyze --json, full precision).
        assert z == f"{rule['impedance_ohm']:.2f} Ω"
    # The general notes and the cautions are in the document; editor controls are not.
    assert squash("Impedance to be verified on test coupons by the fabricator") in flat
    assert squash("not electrical-safety clearance") in flat
    for control in ["Copy link", "Download CSV", "Download Markdown", "Download Touchstone", "Load demo"]:
        assert control not in text, control
    # Pictures and the share bar are editor views: not printed.
    assert "Drawing and plots" not in text
    # What the printed page looks like (print media emulated on screen), for a look by eye.
    driver.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": "print"})
    browser.screenshot(driver, "notes-print-media")
    driver.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": ""})
    assert browser.console_errors(driver) == []


def enable_downloads(driver) -> Path:
    folder = Path(tempfile.mkdtemp(prefix="ohmstack-downloads-"))
    driver.execute_cdp_cmd("Browser.setDownloadBehavior", {"behavior": "allow", "downloadPath": str(folder)})
    return folder


def wait_file(folder: Path, suffix: str, timeout: float = 15.0) -> Path:
    deadline = time.time() + timeout
    while time.time() < deadline:
        done = [p for p in folder.iterdir() if p.name.endswith(suffix)]
        if done:
            time.sleep(0.2)
            return done[0]
        time.sleep(0.1)
    raise AssertionError(f"no {suffix} download in {folder}: {list(folder.iterdir())}")


NUMBER = re.compile(r"^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$")


def same_tokens(got: str, want: str, rel: float = 1e-9):
    """Equal text, except that numbers may differ by round-off (WASM and native libm may differ in the last
    bit)."""
    # The CLI's output is read in text mode, which turns CRLF into LF.
    got, want = got.replace("\r\n", "\n"), want.replace("\r\n", "\n")
    g, e = re.split(r"([\s,]+)", got.strip()), re.split(r"([\s,]+)", want.strip())
    assert len(g) == len(e), (len(g), len(e))
    for a, b in zip(g, e):
        if NUMBER.match(a) and NUMBER.match(b):
            x, y = float(a), float(b)
            assert abs(x - y) <= rel * max(abs(x), abs(y), 1e-300), (a, b)
        else:
            assert a == b, (a, b)


def test_notes_downloads_equal_the_cli(driver):
    project = w.demo()
    folder = enable_downloads(driver)
    w.open_app(driver)
    w.wait_title(driver, project["title"])
    driver.find_element(By.CSS_SELECTOR, "[data-testid='notes-csv']").click()
    csv = wait_file(folder, ".csv").read_bytes().decode()
    same_tokens(csv, w.cli_ok("notes", "-", "--format", "csv", stdin=json.dumps(project)))
    assert "\r\n" in csv  # RFC 4180 line ends kept through the Blob
    driver.find_element(By.CSS_SELECTOR, "[data-testid='notes-md']").click()
    md = wait_file(folder, ".md").read_text()
    same_tokens(md, w.cli_ok("notes", "-", "--format", "md", stdin=json.dumps(project)))
    assert browser.console_errors(driver) == []


@pytest.mark.parametrize("rule_idx,ports", [(0, 2), (1, 4)])
def test_touchstone_download_equals_the_cli(driver, rule_idx, ports):
    project = w.demo()
    rule = project["rules"][rule_idx]
    folder = enable_downloads(driver)
    w.open_app(driver)
    Select(driver.find_element(By.CSS_SELECTOR, "[data-testid='picture-rule']")).select_by_index(rule_idx)
    length = driver.find_element(By.CSS_SELECTOR, "[data-testid='touchstone-length']")
    assert length.get_attribute("value") == "100 mm"
    length.clear()
    length.send_keys("75mm")
    driver.find_element(By.CSS_SELECTOR, "[data-testid='touchstone-download']").click()
    got = wait_file(folder, f".s{ports}p").read_text()
    want = w.cli_ok("touchstone", "-", "--rule", rule["name"], "--length", "75mm", stdin=json.dumps(project))
    same_tokens(got, want)
    # A bad length is a message, not a crash.
    length.clear()
    length.send_keys("-3 furlongs")
    driver.find_element(By.CSS_SELECTOR, "[data-testid='touchstone-download']").click()
    err = browser.wait_for(
        lambda: driver.find_element(By.CSS_SELECTOR, "[data-testid='touchstone-error']").text, what="error")
    assert "length" in err
    assert browser.console_errors(driver) == []


def scroll_to(driver, testid: str):
    el = driver.find_element(By.CSS_SELECTOR, f"[data-testid='{testid}']")
    driver.execute_script("arguments[0].scrollIntoView({block: 'start'});", el)
    return el


def test_pictures_match_the_core_and_are_saved_as_artefacts(driver):
    project = w.demo()
    w.open_app(driver)
    w.wait_title(driver, project["title"])
    for rule_idx in [1, 0]:
        Select(driver.find_element(By.CSS_SELECTOR, "[data-testid='picture-rule']")).select_by_index(rule_idx)
        rule = project["rules"][rule_idx]
        stats = browser.wait_for(
            lambda: driver.find_element(By.CSS_SELECTOR, "[data-testid='spread-stats']"), what="spread stats")
        browser.wait_for(lambda: rule["name"] in driver.find_element(
            By.CSS_SELECTOR, "[data-testid='plot-spread'] svg").text, what="the spread of the chosen rule")
        core = json.loads(w.cli_ok("spread", "-", "--rule", rule["name"], "--model", "quadratic", "--json",
                                   stdin=json.dumps(project)))
        mc = core["rules"][0]["spread"]["monte_carlo"]
        assert abs(float(stats.get_attribute("data-mean")) - mc["mean_ohm"]) < 1e-9 * mc["mean_ohm"]
        assert abs(float(stats.get_attribute("data-sigma")) - mc["sigma_ohm"]) < 1e-6 * mc["sigma_ohm"]
        # Counted: one sample landing on the other side of a limit by round-off moves it by 0.01 %.
        assert abs(float(stats.get_attribute("data-yield")) - mc["yield_pct"]) <= 0.011
        # The histogram's window label counts the same samples as the core's yield.
        label = driver.find_element(By.CSS_SELECTOR, "[data-testid='plot-spread'] svg .window-label").text
        assert label.startswith(f"{mc['yield_pct']:.4g} % of {mc['samples']}") or abs(
            float(label.split(" %")[0]) - mc["yield_pct"]) <= 0.011, label
        # Loss plot: three series (total, conductor, dielectric); Z-vs-width has the computed curve.
        loss_svg = driver.find_element(By.CSS_SELECTOR, "[data-testid='plot-loss'] svg")
        assert all(s in loss_svg.text for s in ["total", "conductor", "dielectric", "dB/in"])
        zw = driver.find_element(By.CSS_SELECTOR, "[data-testid='plot-z-width'] svg")
        assert "computed" in zw.text and "target" in zw.text
    # The drawing shows every layer name of the stack.
    drawing = driver.find_element(By.CSS_SELECTOR, "[data-testid='cross-section'] svg").text
    for layer in project["stackup"]:
        assert layer["name"] in drawing
    # No field check has run yet: the map slot says how to get one.
    hint = driver.find_element(By.CSS_SELECTOR, "[data-testid='field-map-hint']").text
    assert "Verify with field solver" in hint
    scroll_to(driver, "cross-section")
    browser.screenshot(driver, "pictures-cross-section")
    scroll_to(driver, "plot-loss")
    browser.screenshot(driver, "pictures-plots")
    scroll_to(driver, "plot-spread")
    browser.screenshot(driver, "pictures-spread")
    scroll_to(driver, "fab-notes")
    browser.screenshot(driver, "notes-view")
    assert browser.console_errors(driver) == []
