"""Stripline family (single, offset, edge-coupled, broadside) through the CLI against formulas evaluated here with
mpmath's elliptic integrals, exact limits, independent published closed forms and a handbook example."""
import itertools
import math

import mpmath as mp
from conftest import batch

mp.mp.dps = 160  # tanh² of a wide strip is 1 − O(e^(−πW/b)): K(k′) needs the digits of 1 − m
# η0 = µ0·c with CODATA 2018 µ0, as in core/src/units.rs (Cohn prints 30π = η0/4 for η0 = 120π; we compare like
# with like).
ETA0 = mp.mpf("1.25663706212e-6") * 299792458


def cohn_1954(w, b, er):
    """Cohn 1954, exact for t = 0: Z0 = η0/(4√εr)·K(k)/K(k′), k = sech(πW/2b). mpmath.ellipk takes m = k²."""
    a = mp.pi * mp.mpf(w) / (2 * mp.mpf(b))
    return ETA0 / (4 * mp.sqrt(er)) * mp.ellipk(mp.sech(a) ** 2) / mp.ellipk(mp.tanh(a) ** 2)


def cohn_1955(w, s, b, er):
    """Cohn 1955, exact for t = 0: Z0e,o = η0/(4√εr)·K(k′)/K(k)."""
    w, s, b = mp.mpf(w), mp.mpf(s), mp.mpf(b)
    a, c = mp.pi * w / (2 * b), mp.pi * (w + s) / (2 * b)
    out = []
    for k in (mp.tanh(a) * mp.tanh(c), mp.tanh(a) / mp.tanh(c)):
        out.append(ETA0 / (4 * mp.sqrt(er)) * mp.ellipk(1 - k**2) / mp.ellipk(k**2))
    return out  # even, odd


def rel(a, b):
    return abs(float(a) - float(b)) / abs(float(b))


def test_symmetric_zero_thickness_grid_against_cohn_1954():
    cases, refs = [], []
    b = 0.5e-3
    for u, er in itertools.product([0.01, 0.03, 0.1, 0.2, 0.35, 0.5, 0.8, 1.0, 1.5, 2.0, 3.0, 5.0, 8.0, 12.0, 20.0],
                                   [1.0, 2.2, 3.5, 4.3, 6.15, 10.2, 12.9]):
        cases.append({"structure": "stripline", "width": u * b, "height": b / 2, "thickness": 0, "dk": er})
        refs.append(cohn_1954(u * b, b, er))
    assert len(cases) >= 100
    worst = max(rel(got["z0_ohm"], ref) for got, ref in zip(batch(cases), refs))
    assert worst < 1e-9, worst


def thin_wire_offset(w, h1, h2, er):
    """Exact for W ≪ h1, h2: a flat strip of width W acts as a wire of diameter W/2 (conformal map, exact); by images
    a thin wire at height y between planes b apart has Z0 = η0/(2π√εr)·ln[(4b/(πd))·sin(πy/b)] (from memory)."""
    b = mp.mpf(h1) + h2
    return ETA0 / (2 * mp.pi * mp.sqrt(er)) * mp.log(4 * b / (mp.pi * w / 2) * mp.sin(mp.pi * h1 / b))


def superposition(w, h1, h2, er):
    # Handbook capacitance superposition (from memory, e.g. Wadell 1991 §3.6): Z = 2·Z(2h1)·Z(2h2)/(Z(2h1)+Z(2h2)).
    z1, z2 = cohn_1954(w, 2 * h1, er), cohn_1954(w, 2 * h2, er)
    return 2 * z1 * z2 / (z1 + z2)


def test_offset_zero_thickness_against_exact_limits():
    # Narrow strips: the thin-wire image result (exact as W → 0). Equal heights: Cohn 1954. Wide strips: the
    # superposition becomes exact (two parallel-plate halves plus fringes), so the model must approach it.
    cases, refs = [], []
    w = 1e-7  # the thin-wire result has O((W/h)²) corrections
    for h1, h2 in itertools.product([50e-6, 120e-6, 300e-6], [80e-6, 200e-6, 450e-6]):
        cases.append({"structure": "stripline", "width": w, "height": h1, "height2": h2, "thickness": 0, "dk": 3.6})
        refs.append((thin_wire_offset(w, h1, h2, 3.6), 1e-6))
    for h1, h2 in [(50e-6, 100e-6), (100e-6, 300e-6)]:
        w = 20 * (h1 + h2)
        cases.append({"structure": "stripline", "width": w, "height": h1, "height2": h2, "thickness": 0, "dk": 3.6})
        refs.append((superposition(w, h1, h2, 3.6), 2e-3))
    for got, (ref, tol) in zip(batch(cases), refs):
        assert "error" not in got, got
        assert rel(got["z0_ohm"], ref) < tol, (got, ref)


def test_edge_coupled_zero_thickness_grid_against_cohn_1955():
    cases, refs = [], []
    b = 0.4e-3
    for u, v, er in itertools.product([0.05, 0.2, 0.5, 1.0, 2.0, 4.0], [0.02, 0.1, 0.3, 0.6, 1.0, 2.0],
                                      [1.0, 3.0, 4.4]):
        cases.append({"structure": "edge-coupled-stripline", "width": u * b, "spacing": v * b, "height": b / 2,
                      "thickness": 0, "dk": er})
        refs.append(cohn_1955(u * b, v * b, b, er))
    assert len(cases) >= 100
    worst = 0.0
    for got, (ze, zo) in zip(batch(cases), refs):
        assert "error" not in got, got
        worst = max(worst, rel(got["z_even_ohm"], ze), rel(got["z_odd_ohm"], zo), rel(got["z_diff_ohm"], 2 * zo),
                    rel(got["z_common_ohm"], ze / 2))
    assert worst < 1e-9, worst


def wheeler_1978(w, b, t, er):
    """Wheeler 1978 closed form with his thickness correction (from memory), claimed 0.5 % for W′/(b−t) < 10."""
    x = t / b
    if t > 0:
        m = 2 / (1 + 2 / 3 * x / (1 - x))
        dw = x / (math.pi * (1 - x)) * (1 - 0.5 * math.log((x / (2 - x)) ** 2 + (0.0796 * x / (w / b + 1.1 * x)) ** m))
    else:
        dw = 0.0
    r = 1 / (w / (b - t) + dw)
    p = 8 / math.pi * r
    return float(ETA0) / (4 * math.pi * math.sqrt(er)) * math.log(1 + 4 / math.pi * r * (p + math.sqrt(p * p + 6.27)))


def cohn_1955_thick(w, b, t, er):
    """Cohn's thick-strip forms (from memory): wide strips W/(b−t) ≥ 0.35 with the exact thick-edge fringing
    C′f/ε; narrow strips by the equivalent round conductor d0 (t/W ≤ 0.11). Stated accuracy about 1 %."""
    x = t / b
    if w / (b - t) >= 0.35:
        cf = (2 / (1 - x) * math.log(1 / (1 - x) + 1) - (1 / (1 - x) - 1) * math.log(1 / (1 - x) ** 2 - 1)) / math.pi
        return float(ETA0) / 4 / math.sqrt(er) / (w / b / (1 - x) + cf)
    d0 = w / 2 * (1 + t / (math.pi * w) * (1 + math.log(4 * math.pi * w / t)) + 0.51 * math.pi * (t / w) ** 2)
    return float(ETA0) / (2 * math.pi * math.sqrt(er)) * math.log(4 * b / (math.pi * d0))


def test_thick_stripline_against_two_published_closed_forms():
    cases, refs = [], []
    for u, x in itertools.product([0.1, 0.2, 0.3, 0.5, 1.0, 2.0, 4.0], [0.01, 0.03, 0.05, 0.1]):
        b = 1e-3
        t, w = x * b, u * b
        if t / w > 0.11 and w / (b - t) < 0.35:
            continue  # outside Cohn's narrow-strip form
        cases.append({"structure": "stripline", "width": w, "height": (b - t) / 2, "thickness": t, "dk": 1.0})
        refs.append((wheeler_1978(w, b, t, 1.0), cohn_1955_thick(w, b, t, 1.0)))
    worst_w = worst_c = 0.0
    for got, (zw, zc) in zip(batch(cases), refs):
        worst_w = max(worst_w, rel(got["z0_ohm"], zw))
        worst_c = max(worst_c, rel(got["z0_ohm"], zc))
    print(f"thick stripline: worst vs Wheeler 1978 {worst_w:.4f}, vs Cohn 1955 thick {worst_c:.4f}")
    # Wheeler's closed form is within 0.5 % of exact at t = 0 (its own claim); ours uses the exact map with his
    # width increment, so the two differ by about his closed-form error. Cohn's thick forms claim about 1 %; the
    # largest gap (1.5 %) is at W/(b−t) ≈ 0.3, t/W = 0.1, the edge of his narrow-strip form.
    assert worst_w < 0.006, worst_w
    assert worst_c < 0.02, worst_c


def test_broadside_against_exact_special_cases():
    # (1) Odd mode with s = b/2: electric wall at mid-plane → centred stripline of spacing b/2 (exact, Cohn 1954).
    # (2) Narrow strips: thin-wire image potential coefficients (exact for W ≪ s, h; flat strip ≡ wire of d = W/2).
    cases, refs = [], []
    for u in [0.05, 0.2, 0.6, 1.5]:
        b = 1e-3
        cases.append({"structure": "broadside-stripline", "width": u * b, "height": b / 4, "separation": b / 2,
                      "height2": b / 4, "thickness": 0, "dk": 2.0})
        refs.append(("odd", cohn_1954(u * b, b / 2, 2.0)))
    w = 1e-7  # the thin-wire result has O((W/b)²) corrections
    for h1, s, h2 in [(300e-6, 400e-6, 300e-6), (100e-6, 500e-6, 250e-6), (450e-6, 100e-6, 450e-6)]:
        b = h1 + s + h2
        y1, y2 = h2, h2 + s  # heights above the lower plane: the lower strip sits h2 (height2) above it
        d = w / 2
        p11 = ETA0 / (2 * mp.pi) * mp.log(4 * b / (mp.pi * d) * mp.sin(mp.pi * y1 / b))
        p22 = ETA0 / (2 * mp.pi) * mp.log(4 * b / (mp.pi * d) * mp.sin(mp.pi * y2 / b))
        p12 = ETA0 / (2 * mp.pi) * mp.log(abs(mp.sin(mp.pi * (y1 + y2) / (2 * b)) / mp.sin(mp.pi * (y1 - y2) / (2 * b))))
        cases.append({"structure": "broadside-stripline", "width": w, "height": h1, "separation": s, "height2": h2,
                      "thickness": 0, "dk": 1.0})
        refs.append(("diff", p11 + p22 - 2 * p12))
    for got, (what, ref) in zip(batch(cases), refs):
        assert "error" not in got, got
        if what == "odd":
            assert rel(got["z_odd_ohm"], ref) < 1e-9, (got, ref)
        else:
            assert rel(got["z_diff_ohm"], ref) < 1e-6, (got, ref)


def test_pozar_50_ohm_stripline_example():
    # Value from memory: Pozar, "Microwave Engineering", Example 3.5 — a 50 Ω stripline with b = 0.32 cm,
    # εr = 2.20 needs W = 0.266 cm. Pozar's design formula is a fit to the exact solution "to about 1 %" in Z0, and
    # dZ/Z ≈ −0.6·dW/W here, so we allow 2.5 % on W.
    got = batch([{"structure": "stripline", "target": 50, "height": "1.6mm", "thickness": 0, "dk": 2.2}])[0]
    assert abs(got["width_m"] - 2.66e-3) / 2.66e-3 < 0.025, got


def test_synthesis_round_trip():
    solves = [
        {"structure": "stripline", "target": 50, "height": "0.2mm", "height2": "0.3mm", "thickness": "17um",
         "dk": 3.8},
        {"structure": "stripline", "target": 35, "height": "0.15mm", "thickness": "35um", "dk": 4.2},
        {"structure": "edge-coupled-stripline", "target": 100, "spacing": "0.2mm", "height": "0.2mm",
         "thickness": "17um", "dk": 3.8},
        {"structure": "edge-coupled-stripline", "target": 85, "spacing": "0.1mm", "height": "0.12mm",
         "height2": "0.2mm", "thickness": "17um", "dk": 3.5},
        {"structure": "broadside-stripline", "target": 100, "height": "0.2mm", "separation": "0.15mm",
         "height2": "0.25mm", "thickness": 0, "dk": 4.0},
    ]
    solved = batch(solves)
    again = []
    for case, res in zip(solves, solved):
        assert "error" not in res, res
        c = {k: v for k, v in case.items() if k != "target"}
        c["width"] = res["width_m"]
        again.append(c)
    for case, res in zip(solves, batch(again)):
        z = res.get("z0_ohm", res.get("z_diff_ohm"))
        assert abs(z - case["target"]) / case["target"] < 1e-6, (case, res)


def test_bad_stripline_inputs_name_their_field():
    out = batch([
        {"structure": "edge-coupled-stripline", "width": "0.1mm", "height": "0.2mm", "dk": 4},
        {"structure": "broadside-stripline", "width": "0.1mm", "height": "0.2mm", "separation": "-1mm", "dk": 4},
        {"structure": "stripline", "width": "0.1mm", "height": "0.2mm", "height2": "nan", "dk": 4},
    ])
    assert out[0]["error"].startswith("spacing"), out[0]
    assert out[1]["error"].startswith("separation"), out[1]
    assert out[2]["error"].startswith("height2"), out[2]


def test_extreme_geometries_stay_finite_and_positive():
    # No reference value: legal but absurd sizes must give a finite positive impedance (with notes), never a crash.
    vals = ["1e-12", "1e-9", "1e-6", "1e-3", "0.5"]
    cases = []
    for w, h, h2 in itertools.product(vals, vals, vals):
        cases.append({"structure": "stripline", "width": w, "height": h, "height2": h2, "thickness": 0, "dk": 4})
        cases.append({"structure": "edge-coupled-stripline", "width": w, "spacing": "1e-4", "height": h,
                      "height2": h2, "thickness": "1e-9", "dk": 4})
    for w, h, s in itertools.product(["1e-9", "1e-4", "0.5"], ["1e-9", "0.4"], ["1e-12", "1e-4", "0.4"]):
        cases.append({"structure": "broadside-stripline", "width": w, "height": h, "separation": s, "thickness": 0,
                      "dk": 4})
    for got in batch(cases):
        assert "error" not in got, got
        for key in ("z0_ohm", "z_odd_ohm", "z_even_ohm"):
            if key in got:
                assert math.isfinite(got[key]) and got[key] > 0, got
