"""Peer comparison: the same microstrip geometries (Hammerstad–Jensen 1980) through scikit-rf, timed.

Writes the geometries (and scikit-rf's impedances) to a CSV that core/benches/peer_microstrip.rs reads, so both
sides compute the same lines, and prints one JSON object of geometries/s:
  - per_line: one skrf.media.MLine object per geometry, finite thickness, model='hammerstadjensen', disp='none'
    (timed on a subsample, then scaled to the whole set: the rate is per geometry either way);
  - vectorised: MLine.analyse_quasi_static called once on whole numpy arrays. It only vectorises for zero
    thickness (t=None, the same as t=0), so this one is at t = 0.
Usage: python bench/peer_skrf.py OUT.csv [--count 100000] [--subsample 2000]
"""
import argparse
import json
import time

import numpy as np
import skrf
from skrf.media import MLine


def geometries(n: int, seed: int = 7):
    """w/h 0.1–10 (log-uniform), h 50 µm–1.6 mm, t 35 µm, er 2.2–10: the Hammerstad–Jensen fit range."""
    rng = np.random.default_rng(seed)
    h = rng.uniform(50e-6, 1.6e-3, n)
    w = h * 10 ** rng.uniform(-1.0, 1.0, n)
    er = rng.uniform(2.2, 10.0, n)
    return w, h, np.full(n, 35e-6), er


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("out")
    ap.add_argument("--count", type=int, default=100_000)
    ap.add_argument("--subsample", type=int, default=2_000)
    ap.add_argument("--repeats", type=int, default=5)
    a = ap.parse_args()
    w, h, t, er = geometries(a.count)
    freq = skrf.Frequency(1, 1, 1, unit="GHz")

    def one(i):
        m = MLine(frequency=freq, w=w[i], h=h[i], t=t[i], ep_r=er[i], model="hammerstadjensen", disp="none",
                  diel="frequencyinvariant", rho=1 / 5.8e7, tand=0.0, rough=0.0)
        return m.zl_eff

    one(0)  # imports and caches warm
    sub = min(a.subsample, a.count)
    start = time.perf_counter()
    z_sub = np.array([np.real(np.ravel(one(i))[0]) for i in range(sub)])
    per_line_s = (time.perf_counter() - start) / sub

    probe = MLine(frequency=freq, w=w[0], h=h[0], t=t[0], ep_r=er[0], model="hammerstadjensen", disp="none",
                  diel="frequencyinvariant", rho=1 / 5.8e7, tand=0.0, rough=0.0)
    best = float("inf")
    for _ in range(a.repeats):
        start = time.perf_counter()
        z0_flat, _, _ = probe.analyse_quasi_static(er, w, h, None, "hammerstadjensen")
        best = min(best, time.perf_counter() - start)
    vector_rate = a.count / best

    # The file: finite-thickness reference impedances where the per-line path computed them (the subsample).
    with open(a.out, "w") as f:
        f.write("# w,h,t,er[,z0 from skrf MLine per-line path] in metres / ohms\n")
        for i in range(a.count):
            ref = f",{float(z_sub[i])!r}" if i < sub else ""
            f.write(f"{float(w[i])!r},{float(h[i])!r},{float(t[i])!r},{float(er[i])!r}{ref}\n")
    print(json.dumps({
        "skrf_version": skrf.__version__,
        "numpy_version": np.__version__,
        "geometries": a.count,
        "per_line_subsample": sub,
        "per_line_per_s": 1.0 / per_line_s,
        "vectorised_zero_t_per_s": vector_rate,
        "vectorised_repeats": a.repeats,
    }))


if __name__ == "__main__":
    main()
