"""Outside checks of share links, fab notes and SVG output, with Python's standard library as the reference:

* the v1 link format is decoded independently (base64.urlsafe_b64decode + zlib.decompress, RFC 4648 / RFC 1950),
  and links built by Python's zlib are read by `ohmstack share decode`;
* the CSV fab notes are read with Python's csv module (an RFC 4180 reader) and compared with `ohmstack analyze --json`;
* every SVG is parsed with xml.etree.ElementTree (a conforming XML parser: well-formedness is checked for us).
"""
import base64
import csv
import io
import json
import subprocess
import zlib
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from conftest import ohmstack_bin, run

FIXTURES = Path(__file__).resolve().parents[1] / "fixtures"
FIXTURE = FIXTURES / "eight_layer_ten_rules.json"
SVG_NS = "{http://www.w3.org/2000/svg}"
# Metres per display unit (1 mil = 25.4 µm exactly, international inch 1959).
UNIT_M = {"um": 1e-6, "mm": 1e-3, "mil": 25.4e-6, "in": 25.4e-3}


def py_decode(link: str) -> dict:
    """Our own reading of the v1 format, from the standards alone."""
    link = link.strip().rsplit("#", 1)[-1]
    assert link.startswith("v1.")
    payload = link[3:]
    raw = base64.urlsafe_b64decode(payload + "=" * (-len(payload) % 4))
    return json.loads(zlib.decompress(raw).decode("utf-8"))


def py_encode(project: dict) -> str:
    data = zlib.compress(json.dumps(project, separators=(",", ":"), ensure_ascii=False).encode(), 9)
    return "v1." + base64.urlsafe_b64encode(data).decode().rstrip("=")


def ok(*args, stdin=""):
    proc = run(*args, stdin=stdin)
    assert proc.returncode == 0, proc.stderr
    return proc.stdout


def raw(*args, stdin=""):
    """Runs the CLI without newline translation (the CSV's CRLF line ends must reach the csv module as written)."""
    proc = subprocess.run([ohmstack_bin(), *args], input=stdin.encode(), capture_output=True, timeout=600)
    assert proc.returncode == 0, proc.stderr
    return proc.stdout.decode("utf-8")


def demo() -> dict:
    return json.loads(ok("demo"))


def hostile() -> dict:
    p = demo()
    p["title"] = "<script>alert(1)</script> a|b,\"c\""
    p["stackup"][2]["name"] = "a|b,\"c\""
    p["stackup"][2]["material"] = "<script>x</script>\nline two"
    p["rules"][0]["name"] = "<b>50 Ω</b> | top, \"quoted\""
    return p


def test_golden_links_decode_with_the_standard_library():
    # The demo evolves; the project its golden link was made from is frozen as demo_v1.json.
    assert py_decode((FIXTURES / "demo.link").read_text()) == json.loads((FIXTURES / "demo_v1.json").read_text())
    assert py_decode((FIXTURES / "eight_layer_ten_rules.link").read_text()) == json.loads(FIXTURE.read_text())


def test_fresh_links_decode_in_python_and_are_short():
    for project in (demo(), json.loads(FIXTURE.read_text()), hostile()):
        link = ok("share", "encode", "-", stdin=json.dumps(project)).strip()
        # A schema-1 file is written back as schema 2; the migration changes nothing else in the JSON (a rule
        # without "model" now means the field engine).
        assert py_decode(link) == dict(project, schema=2)
        assert set(link[3:]) <= set("ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-_")
    fixture_link = ok("share", "encode", str(FIXTURE)).strip()
    assert len(fixture_link) < 2000, len(fixture_link)


def test_python_made_links_decode_in_ohmstack():
    for project in (demo(), hostile()):
        back = json.loads(ok("share", "decode", py_encode(project)))
        assert back == project


@pytest.mark.parametrize("link, words", [
    ("v1." + base64.urlsafe_b64encode(zlib.compress(b" " * (4 << 20), 9)).decode().rstrip("="), "too large"),
    ("v1." + base64.urlsafe_b64encode(zlib.compress(b'{"schema": 1}')).decode().rstrip("="), "invalid project"),
    ("v1." + base64.urlsafe_b64encode(b"\x00" * 40).decode().rstrip("="), "corrupt"),
    ("v3.AAAA", "version 3"),
    ("v1.a b", "not base64"),
    ("v1." + "A" * 40000, "too long"),
])
def test_hostile_links_give_one_line_errors(link, words):
    proc = run("share", "decode", link)
    assert proc.returncode != 0
    assert "panicked" not in proc.stderr
    assert len(proc.stderr.strip().splitlines()) == 1, proc.stderr
    assert words in proc.stderr, proc.stderr


def test_truncated_python_link_is_reported_as_truncated():
    link = py_encode(demo())
    proc = run("share", "decode", link[:-10])
    assert proc.returncode != 0 and "truncated" in proc.stderr, proc.stderr


def csv_tables(text: str) -> list[list[list[str]]]:
    """Splits the CSV into its tables (separated by empty records)."""
    assert "\r\n" in text
    tables, current = [], []
    for row in csv.reader(io.StringIO(text, newline="")):
        if not row:
            tables.append(current)
            current = []
        else:
            current.append(row)
    tables.append(current)
    return tables


@pytest.mark.parametrize("project", ["fixture", "demo", "hostile"])
def test_csv_values_round_trip_against_analyze(project):
    p = {"fixture": lambda: json.loads(FIXTURE.read_text()), "demo": demo, "hostile": hostile}[project]()
    text = json.dumps(p)
    plan = json.loads(ok("analyze", "-", "--json", stdin=text))
    stack, imp, routing, notes, document = csv_tables(
        raw("notes", "-", "--format", "csv", "--date", "2026-03-14", stdin=text)
    )
    assert document == [["title", "revision", "date"], [p["title"], p.get("revision", ""), "2026-03-14"]]
    m = UNIT_M[p["units"]]
    assert len(stack) == 1 + len(plan["layers"])
    for row, layer in zip(stack[1:], plan["layers"]):
        assert row[0] == layer["name"]
        assert row[1] == layer["kind"]
        assert float(row[3]) * m == pytest.approx(layer["thickness_m"], rel=1e-12)
        assert float(row[4]) * m == pytest.approx(layer["pressed_thickness_m"], rel=1e-12)
        if layer["dk"] is not None:
            assert float(row[5]) == layer["dk"] and float(row[6]) == layer["df"]
        if layer["copper_oz"] is not None:
            assert float(row[8]) == layer["copper_oz"]
        # A copper layer's role has its own column; Material holds only a dielectric's material.
        assert row[9] == (layer["role"] or "") and row[2] == layer["material"]
    assert len(imp) == 1 + len(plan["rules"])
    for row, rule in zip(imp[1:], plan["rules"]):
        if rule["status"] == "ok":
            assert row[0] == rule["name"] and row[1] == rule["layer"]
            assert float(row[10]) == rule["impedance_ohm"]  # shortest round-trip repr both ways: exact
            assert float(row[7]) * m == pytest.approx(rule["width_m"], rel=1e-12)
            assert row[4] == "; ".join(rule["references"])
            assert row[11] == "ok" or row[11].startswith("out of tolerance")
            # The engine that made the row: the method `analyze` reports.
            assert row[13] == rule["method"]
            assert row[12] == ("field solver" if rule["method"].startswith("2D field solver") else "closed form")
        else:
            assert row[0] == rule["name"]
            assert row[10] == "" and row[11] == "error: " + rule["message"]
    # The routing table: one row per computed rule, in the plan's order; a spacing rule is never below the
    # fabricator's minimum space (the search starts there), a missing figure says why.
    computed = [r for r in plan["rules"] if r["status"] == "ok"]
    assert routing[0][:4] == ["net class", "layer", "neighbour", routing[0][3]]
    assert [row[0] for row in routing[1:]] == [r["name"] for r in computed]
    for row in routing[1:]:
        if row[3]:
            assert float(row[3]) * m >= p.get("fab", {}).get("min_space_m", 0.0) * (1 - 1e-12), row
        else:
            assert row[10], row
    texts = [r[0] for r in notes[1:]]
    assert any("test coupons" in t for t in texts)
    assert any("electrical-safety" in t for t in texts)
    assert any("local codes" in t for t in texts)
    if project == "hostile":
        assert stack[3][0] == 'a|b,"c"'
        assert stack[3][2] == "<script>x</script>\nline two"
        assert imp[1][0] == '<b>50 Ω</b> | top, "quoted"'


def test_markdown_tables_keep_their_columns():
    md = ok("notes", "-", stdin=json.dumps(hostile()))
    assert "<script>" not in md and "<b>" not in md
    for block in md.split("\n\n"):
        lines = [l for l in block.splitlines() if l.startswith("|")]
        if not lines:
            continue
        counts = {l.replace("\\\\", "").replace("\\|", "").count("|") for l in lines}
        assert len(counts) == 1, block


def svg_root(text: str) -> ET.Element:
    root = ET.fromstring(text)  # raises on any well-formedness error
    assert root.tag == SVG_NS + "svg"
    for el in root.iter():
        assert "style" not in el.attrib, el.tag
        assert not any("href" in k for k in el.attrib), el.tag
        assert el.tag != SVG_NS + "script" and el.tag != SVG_NS + "style"
        for v in el.attrib.values():
            assert "NaN" not in v and "inf" not in v
    return root


def test_every_drawing_is_well_formed_svg():
    for path in (FIXTURE,):
        p = json.loads(path.read_text())
        svg_root(ok("draw", str(path)))
        for rule in p["rules"]:
            root = svg_root(ok("draw", str(path), "--rule", rule["name"]))
            assert root.find(f".//{SVG_NS}polygon[@class='copper trace']") is not None


def test_hostile_names_survive_svg_literally():
    text = json.dumps(hostile())
    root = svg_root(ok("draw", "-", "--rule", hostile()["rules"][0]["name"], stdin=text))
    all_text = " ".join("".join(el.itertext()) for el in root.iter(SVG_NS + "text"))
    assert "<script>alert(1)</script>" in all_text
    assert "<b>50 Ω</b> | top" in all_text


def test_z_vs_width_plot_is_well_formed_and_matches_analyze():
    p = demo()
    name = p["rules"][0]["name"]
    text = json.dumps(p)
    root = svg_root(ok("plot", "-", "--rule", name, stdin=text))
    assert root.find(f".//{SVG_NS}path[@class='series series-0']") is not None
    pts = json.loads(ok("plot", "-", "--rule", name, "--points", "21", "--json", stdin=text))
    plan = json.loads(ok("analyze", "-", "--json", stdin=text))
    w0 = plan["rules"][0]["width_m"]
    assert pts[0][0] == pytest.approx(0.7 * w0, rel=1e-12) and pts[-1][0] == pytest.approx(1.3 * w0, rel=1e-12)
    assert pts[10][1] == pytest.approx(plan["rules"][0]["impedance_ohm"], rel=1e-12)
