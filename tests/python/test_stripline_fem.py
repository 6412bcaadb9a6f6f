"""Thick-strip stripline models through the CLI against an independent scikit-fem electrostatic solve
(fem_strips.py). The finite-element solve is first checked against Cohn 1954 (exact, t = 0). Tolerances are the
measured deviations of our approximate thickness corrections plus margin; they document what the models get wrong.
Each solve takes a few seconds."""
import mpmath as mp
from conftest import batch
from fem_strips import capacitance

ETA0 = 1.25663706212e-6 * 299792458
MM = 1e-3
REFINE = 0.5  # measured FEM error about 1e-4 at this resolution (see the first test)


def rel(a, b):
    return abs(a - b) / abs(b)


def test_fem_reproduces_cohn_1954_at_zero_thickness():
    # Cohn 1954, exact: C/ε = 4·K(k′)/K(k), k = sech(πW/2b).
    u = 1.0
    a = mp.pi * u / 2
    exact = float(4 * mp.ellipk(mp.tanh(a) ** 2) / mp.ellipk(mp.sech(a) ** 2))
    assert rel(capacitance(1.0, [(0, u / 2, 0.5, 0.5)], [1.0], refine=REFINE), exact) < 3e-4


def test_thick_single_striplines_against_fem():
    # Measured: centred W/b = 0.3, t/b = 0.1: +0.06 %; offset (h 0.25/0.7, t 0.05, W 0.4): −0.36 %.
    u, x = 0.3, 0.1
    c = capacitance(1.0, [(0, u / 2, 0.5 - x / 2, 0.5 + x / 2)], [1.0], refine=REFINE)
    got = batch([{"structure": "stripline", "width": u * MM, "height": (1 - x) / 2 * MM, "thickness": x * MM,
                  "dk": 1}])[0]
    assert rel(got["z0_ohm"], ETA0 / c) < 3e-3, (got, ETA0 / c)
    u, h1, t, h2 = 0.4, 0.25, 0.05, 0.7
    c = capacitance(h1 + t + h2, [(0, u / 2, h1, h1 + t)], [1.0], refine=REFINE)
    got = batch([{"structure": "stripline", "width": u * MM, "height": h1 * MM, "height2": h2 * MM,
                  "thickness": t * MM, "dk": 1}])[0]
    assert rel(got["z0_ohm"], ETA0 / c) < 6e-3, (got, ETA0 / c)


def test_thick_coupled_striplines_against_fem():
    # Edge-coupled W/b = 0.5, S/b = 0.2, t/b = 0.05. Measured: Zeven −0.7 %, Zodd +4.0 % (the gap side walls; the
    # model warns). Odd mode: grounded wall at x = 0; even: Neumann. capacitance() sums Q·V over both strips.
    u, v, t = 0.5, 0.2, 0.05
    strip = [(v / 2, v / 2 + u, 0.5 - t / 2, 0.5 + t / 2)]
    c_odd = capacitance(1.0, strip, [1.0], x_wall="ground", refine=REFINE) / 2
    c_even = capacitance(1.0, strip, [1.0], refine=REFINE) / 2
    got = batch([{"structure": "edge-coupled-stripline", "width": u * MM, "spacing": v * MM,
                  "height": (1 - t) / 2 * MM, "thickness": t * MM, "dk": 1}])[0]
    assert rel(got["z_even_ohm"], ETA0 / c_even) < 0.012, (got, ETA0 / c_even)
    assert 0.0 < got["z_odd_ohm"] / (ETA0 / c_odd) - 1 < 0.05, (got, ETA0 / c_odd)
    assert any("side-wall" in w for w in got["warnings"]), got
    # Broadside W/b' = 0.5 with h = 0.3, s = 0.2, t = 0.05. Measured: Zodd +0.24 %, Zeven +2.7 % (the thickness
    # approximation, warned).
    u, h, s, t = 0.5, 0.3, 0.2, 0.05
    b = 2 * h + s + 2 * t
    strips = [(0, u / 2, h, h + t), (0, u / 2, h + t + s, h + 2 * t + s)]
    c_odd = capacitance(b, strips, [1.0, -1.0], refine=REFINE) / 2
    c_even = capacitance(b, strips, [1.0, 1.0], refine=REFINE) / 2
    got = batch([{"structure": "broadside-stripline", "width": u * MM, "height": h * MM, "separation": s * MM,
                  "height2": h * MM, "thickness": t * MM, "dk": 1}])[0]
    assert rel(got["z_odd_ohm"], ETA0 / c_odd) < 0.006, (got, ETA0 / c_odd)
    assert rel(got["z_even_ohm"], ETA0 / c_even) < 0.035, (got, ETA0 / c_even)
