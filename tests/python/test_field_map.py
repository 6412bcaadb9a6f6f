"""The potential map of a field solve (`ohmstack field-calc … --map out.json`) against outside references:

- a zero-thickness strip centred between two planes, whose potential is known exactly by conformal mapping (derived
  here, evaluated with mpmath): the half region above the strip plane maps by ζ = exp(2πz/b) onto the upper half
  plane, the strip onto (1/a, a) with a = exp(πw/b), the ground plane onto the negative real axis and the symmetry
  plane onto the rest of the positive axis; the Schwarz–Christoffel map F(ζ) = ∫₀^ζ dt / √(t (t − 1/a)(t − a)) takes
  that onto a rectangle with the ground at Re F = 0 and the strip at Re F = F(1/a), so φ = Re F(ζ) / F(1/a) exactly
  (the same map gives Cohn's K(k)/K(k′) capacitance);
- an edge-coupled microstrip pair in its odd mode (+1 V / −1 V, dielectric in place) against an independent
  scikit-fem P2 solve of the same cross-section (tests/python/test_field.py), probed at the map's nodes.

The map samples the solver's finest grid bilinearly, so it is a picture, not the impedance (that comes from the
energy, checked in test_field.py); the bounds below say how good a picture: volts against a 1 V drive.
"""
import json
import math
import tempfile
from pathlib import Path

import mpmath as mp
import numpy as np
from conftest import run
from test_field import MM, UM, microstrip_structure


def solve_map(*args):
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "map.json"
        proc = run("field-calc", *args, "--map", str(out))
        assert proc.returncode == 0, proc.stderr
        return json.loads(out.read_text())


def nodes(m, every_x, every_y):
    """(x, y, value) at a regular subset of the map's nodes."""
    xs, ys, v = m["xs"], m["ys"], m["values"]
    nx = len(xs)
    return [(xs[i], ys[j], v[j * nx + i]) for j in range(0, len(ys), every_y) for i in range(0, nx, every_x)]


def stripline_potential(w, b):
    """Exact potential of a zero-thickness strip of width w centred between planes at y = 0 and y = b (1 V).
    Call it inside `mp.workdps(...)`: other tests set mpmath's global precision, and this one must not."""
    a = mp.e ** (mp.pi * w / b)
    p, q = 1 / a, a

    def g(t):
        # Principal square roots: continuous in the upper half plane and equal to its limits on the real axis.
        return 1 / (mp.sqrt(t) * mp.sqrt(t - p) * mp.sqrt(t - q))

    strip = mp.re(mp.quad(g, [0, p]))

    def F(zeta):
        x = mp.re(zeta)
        # Along the real axis (through the integrable end-point singularities), then straight up to ζ.
        val = mp.quad(g, [mp.mpf(0)] + [c for c in (p, q) if c < x] + [x])
        if mp.im(zeta) > 0:
            val += mp.quad(g, [mp.mpc(x, 0), zeta])
        return val

    def phi(x, y):
        height = abs(y - b / 2)
        if height >= b / 2 * (1 - 1e-12):
            return 0.0
        zeta = mp.e ** (2 * mp.pi * mp.mpc(x, height) / b)
        return float(mp.re(F(zeta)) / strip)

    return phi


def test_exact_potential_of_a_thin_centred_stripline():
    w, h = 0.2 * MM, 0.2 * MM
    m = solve_map("stripline", "--width", "0.2mm", "--height", "0.2mm", "--thickness", "0", "--dk", "4")
    assert m["drive"] == "single"
    # The strip's own nodes carry the drive exactly; the planes are at 0.
    with mp.workdps(15):
        phi = stripline_potential(w, 2 * h)
        assert phi(0.0, h) == 1.0 and abs(phi(0.09 * MM, h) - 1.0) < 1e-12
        errors = [value - phi(x, y) for x, y, value in nodes(m, 4, 3)]
    worst = max(abs(e) for e in errors)
    rms = math.sqrt(sum(e * e for e in errors) / len(errors))
    print(f"stripline t=0: {len(errors)} nodes, max |Δφ| {worst:.2e} V, rms {rms:.2e} V")
    # Measured: max 1.7e-3 V (beside the strip edge, where the gradient is singular), rms 4.1e-4 V.
    assert worst < 5e-3 and rms < 1.2e-3


def test_pair_potential_agrees_with_scikit_fem():
    w, h, t, s = 0.2 * MM, 0.1 * MM, 35 * UM, 0.15 * MM
    m = solve_map("microstrip", "--width", "0.2mm", "--height", "0.1mm", "--thickness", "35um", "--dk", "4",
                  "--spacing", "0.15mm")
    assert m["drive"] == "differential"
    structure = microstrip_structure("ecm-map", w, h, t, 4.0, pair_s=s)
    pts = nodes(m, 3, 2)
    # The last point lies on the symmetry axis, where the odd mode is 0 V in the reference too (a check of the
    # comparison's drive and orientation).
    xy = np.array([[x for x, _, _ in pts] + [0.0], [y for _, y, _ in pts] + [h + t / 2]])
    # Net 1 is the right-hand trace (x > 0): the map drives it at +1 V.
    fem = structure.potential(0.7, {0: -1.0, 1: 1.0}, xy)
    assert abs(fem[-1]) < 1e-9
    errors = np.array([v for _, _, v in pts]) - fem[:-1]
    worst, rms = float(np.max(np.abs(errors))), float(np.sqrt(np.mean(errors ** 2)))
    print(f"edge-coupled pair: {len(pts)} nodes, max |Δφ| {worst:.2e} V, rms {rms:.2e} V")
    # Measured: max 1.9e-3 V, rms 5.6e-4 V.
    assert worst < 5e-3 and rms < 1.5e-3
