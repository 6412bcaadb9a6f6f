"""Field solve against a scikit-fem finite-element solve of the same cross-section, at matched accuracy.

Case: centred zero-thickness stripline, W = b = 0.4 mm, εr = 4 — its exact impedance is Cohn's 1954 conformal map,
Z0 = η0/(4√εr)·K(k)/K(k′), k = sech(πW/2b), so both solvers' accuracy is measured against the same exact value.
Ours: `ohmstack field-calc` (release build) at its default accuracy; the time is the solver's own (`time_ms`).
scikit-fem: the P2 model of tests/python/test_field.py on meshes from coarse to fine; the first mesh whose error is
≤ 0.5 % (and the first at least as accurate as ours) is the matched one. Prints a table and the ratio.

Run: python bench/field_peer.py [path/to/release/ohmstack]   (from the test venv: target/pyenv/bin/python)
"""
import json
import math
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
from scipy.special import ellipk

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests" / "python"))
from test_field import Structure, modes  # noqa: E402  (the test's independent FEM model)

ETA0 = 4e-7 * math.pi * 299792458.0  # µ0·c, the core's η0 to 1e-9
W, B, ER = 0.4e-3, 0.4e-3, 4.0


def cohn():
    k = 1 / math.cosh(math.pi * W / (2 * B))
    kp = math.tanh(math.pi * W / (2 * B))
    return ETA0 / (4 * math.sqrt(ER)) * ellipk(k * k) / ellipk(kp * kp)


def ours(exe):
    args = [exe, "field-calc", "stripline", "--width", f"{W}", "--height", f"{B / 2}", "--thickness", "0",
            "--dk", f"{ER}", "--json"]
    best = None
    for _ in range(5):
        out = json.loads(subprocess.run(args, capture_output=True, text=True, check=True).stdout)
        ms = out["time_ms"]
        z = out["controlled_ohm"]
        best = (z, ms) if best is None or ms < best[1] else best
    return best


def fem_case():
    half = 12 * B  # grounded side walls far away (the planes are the box's top and bottom)
    strip = (-W / 2, W / 2, B / 2, B / 2, 0)
    return Structure("bench-stripline", (-half, half, 0.0, B), [strip], [(-half, half, 0.0, B, ER)],
                     fine=W / 40, feature=B / 4)


def main():
    exe = sys.argv[1] if len(sys.argv) > 1 else str(ROOT / "target" / "release" / "ohmstack")
    exact = cohn()
    z_ours, ms_ours = ours(exe)
    err_ours = abs(z_ours - exact) / exact * 100
    print(f"exact (Cohn 1954): {exact:.6f} Ω")
    print(f"ohmstack field-calc: {z_ours:.6f} Ω, error {err_ours:.4f} %, {ms_ours:.1f} ms (best of 5)")
    rows = []
    for scale in [4.0, 2.8, 2.0, 1.4, 1.0, 0.7, 0.5, 0.35, 0.25, 0.18]:
        s = fem_case()
        t0 = time.perf_counter()
        caps = s.capacitances(scale)
        ms = (time.perf_counter() - t0) * 1e3
        z, _ = modes(caps)
        err = abs(z - exact) / exact * 100
        rows.append((scale, caps["nodes"], z, err, ms))
        print(f"scikit-fem P2 scale {scale}: {caps['nodes']} nodes, {z:.6f} Ω, error {err:.4f} %, {ms:.0f} ms")
        if err <= min(0.5, err_ours):
            break
    matched = next((r for r in rows if r[3] <= 0.5), None)
    equal = next((r for r in rows if r[3] <= err_ours), None)
    if matched:
        print(f"at ≤ 0.5 %: scikit-fem {matched[4]:.0f} ms vs ours {ms_ours:.1f} ms → {matched[4] / ms_ours:.1f}× faster")
    if equal:
        print(f"at ours' accuracy ({err_ours:.3f} %): scikit-fem {equal[4]:.0f} ms → {equal[4] / ms_ours:.1f}× faster")


if __name__ == "__main__":
    main()
