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
    section = markdown.split("## Controlled impedance", 1)[1].split("\n## ", 1)[0]
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


def same_tokens(got: str, want: str, rel: float = 1e-9, absolute: float = 0.0):
    """Equal text, except that numbers may differ by round-off (WASM and native libm may differ in the last
    bit): within `rel` of the larger, or within `absolute` for numbers near zero."""
    # The CLI's output is read in text mode, which turns CRLF into LF.
    got, want = got.replace("\r\n", "\n"), want.replace("\r\n", "\n")
    g, e = re.split(r"([\s,]+)", got.strip()), re.split(r"([\s,]+)", want.strip())
    assert len(g) == len(e), (len(g), len(e))
    for a, b in zip(g, e):
        if NUMBER.match(a) and NUMBER.match(b):
            x, y = float(a), float(b)
            assert abs(x - y) <= max(rel * max(abs(x), abs(y), 1e-300), absolute), (a, b)
        else:
            assert a == b, (a, b)


def test_notes_downloads_equal_the_cli(driver):
    project = w.demo()
    folder = enable_downloads(driver)
    w.open_app(driver)
    w.wait_title(driver, project["title"])
    # The app dates the notes with the browser's today; the CLI is given the same date. The routing table comes
    # with the final figures, so the download waits for them.
    today = today_in_browser(driver)
    w.wait_settled(driver)
    driver.find_element(By.CSS_SELECTOR, "[data-testid='notes-csv']").click()
    csv = wait_file(folder, ".csv").read_bytes().decode()
    same_tokens(csv, w.cli_ok("notes", "-", "--format", "csv", "--date", today, stdin=json.dumps(project)))
    assert "\r\n" in csv  # RFC 4180 line ends kept through the Blob
    assert csv.rstrip().endswith(today)
    driver.find_element(By.CSS_SELECTOR, "[data-testid='notes-md']").click()
    md = wait_file(folder, ".md").read_text()
    same_tokens(md, w.cli_ok("notes", "-", "--format", "md", "--date", today, stdin=json.dumps(project)))
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
    # S entries are bounded by 1: a small one (a pair's far-end term, ~5e-4) shows the last-bit difference between
    # WASM and native libm as ~1e-9 of itself, so near zero the check is absolute (1e-10 of the full scale).
    same_tokens(got, want, absolute=1e-10)
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


# ---- The printed sheet: engine per row, roles, revision and date, drawing, and the page fit (issue 17 item 9) ----

# Paper sizes in inches (ISO 216 A4 is 210 × 297 mm; US Letter is 8.5 × 11 in) and the sheet's @page margin
# (index.html, 14 mm).
PAPERS = {"a4": (210 / 25.4, 297 / 25.4), "letter": (8.5, 11.0)}
MARGIN_IN = 14 / 25.4


def crowded() -> dict:
    """The demo with long net-class names and one rule that cannot be computed (its error fills the Status cell):
    the widest impedance table the sheet has to hold."""
    p = w.demo()
    for r in p["rules"]:
        r["name"] = r["name"] + " — long net-class name for the width check"
    bad = dict(p["rules"][0])
    bad["name"] = "Unreachable impedance net class"
    bad["target_ohm"] = 400.0
    p["rules"].append(bad)
    p["revision"] = "C3"
    return p


def print_pdf(driver, paper: str) -> bytes:
    width, height = PAPERS[paper]
    result = driver.execute_cdp_cmd("Page.printToPDF", {
        "paperWidth": width, "paperHeight": height, "printBackground": False, "preferCSSPageSize": False})
    pdf = base64.b64decode(result["data"])
    browser.ARTIFACTS.mkdir(parents=True, exist_ok=True)
    (browser.ARTIFACTS / f"notes-print-{paper}.pdf").write_bytes(pdf)
    return pdf


def text_runs(page) -> list[tuple[float, float, float, str]]:
    """(x, y, font size, text) of every text run on a PDF page, in PDF points (from the text and CTM matrices)."""
    runs = []

    def visit(text, cm, tm, _font, size):
        if text.strip():
            x = tm[4] * cm[0] + tm[5] * cm[2] + cm[4]
            y = tm[4] * cm[1] + tm[5] * cm[3] + cm[5]
            runs.append((x, y, size * (abs(tm[0] * cm[0]) or 1.0), text))

    page.extract_text(visitor_text=visit)
    return runs


def today_in_browser(driver) -> str:
    return driver.execute_script(
        "var d = new Date(); function p(n) { return (n < 10 ? '0' : '') + n; }"
        "return d.getFullYear() + '-' + p(d.getMonth() + 1) + '-' + p(d.getDate());")


def open_project(driver, project: dict):
    w.put_local_work(driver, project)
    w.open_app(driver)
    w.wait_title(driver, project["title"])


@pytest.mark.parametrize("paper", ["a4", "letter"])
def test_printed_notes_fit_the_page(driver, paper):
    project = crowded()
    open_project(driver, project)
    # Layout check in the browser: print media at the page's printable width, no cell wider than its column
    # and the tables inside the sheet.
    width_px = round((PAPERS[paper][0] - 2 * MARGIN_IN) * 96)
    driver.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": "print"})
    driver.execute_cdp_cmd("Emulation.setDeviceMetricsOverride",
                           {"width": width_px, "height": 1100, "deviceScaleFactor": 1, "mobile": False})
    overflow = driver.execute_script("""
        var sheet = document.querySelector("[data-testid='fab-notes']").getBoundingClientRect();
        var bad = [];
        document.querySelectorAll('.fab-notes table').forEach(function (t) {
            var r = t.getBoundingClientRect();
            if (r.right > sheet.right + 0.5 || t.scrollWidth > t.clientWidth + 1) bad.push('table ' + t.className);
            t.querySelectorAll('td, th').forEach(function (c) {
                if (c.scrollWidth > c.clientWidth + 1) bad.push(c.textContent.slice(0, 40));
            });
        });
        return bad;""")
    browser.screenshot(driver, f"notes-print-media-{paper}")
    driver.execute_cdp_cmd("Emulation.clearDeviceMetricsOverride", {})
    driver.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": ""})
    assert overflow == [], overflow
    # The PDF Chromium prints: every text run starts inside the printable area, and the impedance table's
    # last column is on the page.
    reader = PdfReader(io.BytesIO(print_pdf(driver, paper)))
    pages = len(reader.pages)
    assert 1 <= pages <= 3, pages
    runs = []
    for page in reader.pages:
        page_w = float(page.mediabox.width)
        assert abs(page_w - PAPERS[paper][0] * 72) < 1.0, page_w
        runs += [(x, y, s, t, page_w) for (x, y, s, t) in text_runs(page)]
    right_edge = PAPERS[paper][0] * 72 - MARGIN_IN * 72
    outside = [(round(x), t) for (x, _, _, t, _) in runs if x < MARGIN_IN * 72 - 2 or x > right_edge]
    assert outside == [], outside
    flat = squash("".join(t for (*_, t, _) in runs))
    for head in ["Engine", "Status", "Computed Z", "Role"]:
        assert squash(head) in flat, head
    cells = driver.find_elements(By.CSS_SELECTOR, "[data-testid='notes-impedance'] tbody tr td:last-child")
    assert len(cells) == len(project["rules"])
    for c in cells:
        if c.text:
            assert squash(c.text) in flat, c.text
    print(f"{paper}: {pages} page(s), {len(runs)} text runs, rightmost run starts at "
          f"{max(x for (x, *_rest) in runs):.0f} pt of {right_edge:.0f} pt")
    assert browser.console_errors(driver) == []


def test_notes_name_engines_roles_revision_and_date(driver):
    project = w.demo()
    # Rule 0 on the field engine (the default), the others on the closed form, chosen explicitly.
    for rule in project["rules"][1:]:
        rule["model"] = "closed_form"
    open_project(driver, project)
    plan = w.analyze(project)
    # Revision typed in the header shows on the sheet with the browser's date.
    revision = driver.find_element(By.CSS_SELECTOR, "[data-testid='project-revision']")
    revision.clear()
    revision.send_keys("B7")
    today = today_in_browser(driver)
    issue = browser.wait_for(
        lambda: driver.find_element(By.CSS_SELECTOR, "[data-testid='notes-issue']").text, what="issue line")
    browser.wait_for(lambda: driver.find_element(
        By.CSS_SELECTOR, "[data-testid='notes-issue']").text == f"Revision B7 · Issued {today}", what="revision")
    # Engine per row: the method `analyze` reports, named as field solver or closed form.
    head = [th.text for th in driver.find_elements(By.CSS_SELECTOR, "[data-testid='notes-impedance'] thead th")]
    engine_col = head.index("Engine")
    rows = driver.find_elements(By.CSS_SELECTOR, "[data-testid='notes-impedance'] tbody tr")
    assert len(rows) == len(plan["rules"])
    kinds = set()
    for row, rule in zip(rows, plan["rules"]):
        cell = row.find_elements(By.TAG_NAME, "td")[engine_col].text
        if rule["status"] != "ok":
            continue
        if rule["method"].startswith("2D field solver"):
            assert cell == "field solver: boundary elements", cell
            kinds.add("field")
        else:
            assert cell == f"closed form: {rule['method']}", cell
            kinds.add("closed")
    assert kinds == {"field", "closed"}
    notes = driver.find_element(By.CSS_SELECTOR, "[data-testid='fab-notes']").text
    assert "from closed-form models;" not in notes
    assert "1 impedance is from a 2D field solver" in notes
    # Copper rows: the role in its own column, nothing in Material.
    head = [th.text for th in driver.find_elements(By.CSS_SELECTOR, ".notes-stack thead th")]
    role_col, material_col = head.index("Role"), head.index("Material")
    stack_rows = driver.find_elements(By.CSS_SELECTOR, ".notes-stack tbody tr")
    for row, layer in zip(stack_rows, plan["layers"]):
        cells = [td.text for td in row.find_elements(By.TAG_NAME, "td")]
        if layer["kind"] == "copper":
            assert cells[role_col] == layer["role"] and cells[material_col] == "", cells
        else:
            assert cells[role_col] == "" and cells[material_col] == layer["material"], cells
    # The cross-section drawing is on the sheet with every layer's name, and it prints.
    drawing = driver.find_element(By.CSS_SELECTOR, "[data-testid='notes-drawing'] svg").text
    for layer in project["stackup"]:
        assert layer["name"] in drawing
    text = "\n".join(p.extract_text() for p in PdfReader(io.BytesIO(print_pdf(driver, "a4"))).pages)
    assert squash(f"Revision B7 · Issued {today}") in squash(text)
    assert squash(project["stackup"][0]["name"]) in squash(text)
    # The download equals the CLI's notes for the same date.
    folder = enable_downloads(driver)
    w.wait_settled(driver)
    driver.find_element(By.CSS_SELECTOR, "[data-testid='notes-md']").click()
    md = wait_file(folder, ".md").read_text()
    project["revision"] = "B7"
    same_tokens(md, w.cli_ok("notes", "-", "--format", "md", "--date", today, stdin=json.dumps(project)))
    scroll_to(driver, "fab-notes")
    browser.screenshot(driver, "notes-engines-roles")
    assert browser.console_errors(driver) == []
