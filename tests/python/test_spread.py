"""Tolerance spread: the seeded random stream against scipy.stats (Kolmogorov–Smirnov), and the spread's
sensitivities against finite differences of scikit-rf's Hammerstad–Jensen microstrip."""
import json

import numpy as np
import pytest
import skrf
from scipy import stats
from conftest import run


def draws(kind: str, count: int, seed: int) -> np.ndarray:
    proc = run("random", kind, "--count", str(count), "--seed", str(seed))
    assert proc.returncode == 0, proc.stderr
    return np.array([float(x) for x in proc.stdout.split()])


@pytest.mark.parametrize("seed", [1, 2, 12345])
def test_normal_stream_passes_kolmogorov_smirnov(seed):
    # scipy.stats.kstest against N(0, 1); a correct generator fails at the 0.1 % level once in a thousand seeds.
    x = draws("normal", 20000, seed)
    assert stats.kstest(x, "norm").pvalue > 1e-3
    # Anderson–Darling weighs the tails (the ±3σ limits live there); 1 % critical value.
    ad = stats.anderson(x, "norm")
    assert ad.statistic < ad.critical_values[-1], ad


def test_uniform_stream_passes_kolmogorov_smirnov():
    x = draws("uniform", 20000, 7)
    assert stats.kstest(x, "uniform").pvalue > 1e-3
    assert x.min() >= 0.0 and x.max() < 1.0


H, T, ER = 200e-6, 35e-6, 4.3


def surface_project() -> dict:
    layer = lambda name, um, role: {"type": "copper", "name": name, "thickness_m": um * 1e-6, "role": role}
    return {
        "schema": 1, "title": "surface microstrip", "units": "um",
        "stackup": [
            layer("L1", 35, "signal"),
            {"type": "core", "name": "C1", "thickness_m": H, "dk": ER, "df": 0.02},
            layer("L2", 35, "plane"),
        ],
        # The closed form explicitly: the check below is against scikit-rf's coding of the same published model.
        "rules": [{"name": "50", "layer": "L1", "structure": "single", "target_ohm": 50, "width_m": 3e-4,
                   "model": "closed_form"}],
    }


def skrf_z(w, h, t, er):
    freq = skrf.Frequency(1, 1, 1, unit="MHz")
    m = skrf.media.MLine(frequency=freq, w=w, h=h, t=t, ep_r=er, tand=0.0, rho=1 / 5.8e7, rough=0.0,
                         model="hammerstadjensen", disp="none", diel="frequencyinvariant", compatibility_mode=None)
    return float(np.real(m.zl_eff))


def test_sensitivities_match_scikit_rf_finite_differences():
    proc = run("spread", "-", "--samples", "1000", "--json", stdin=json.dumps(surface_project()))
    assert proc.returncode == 0, proc.stderr
    rule = json.loads(proc.stdout)["rules"][0]
    w = rule["width_m"]
    sens = {s["parameter"]: s["dz_dp"] for s in rule["spread"]["sensitivities"]}
    # Central differences of scikit-rf MLine (the same published model, independently coded).
    def d(f, x, h):
        return (f(x + h) - f(x - h)) / (2 * h)
    ref = {
        "etched trace width": d(lambda x: skrf_z(x, H, T, ER), w, 1e-6),
        "thickness of C1 (core)": d(lambda x: skrf_z(w, x, T, ER), H, 1e-6),
        "Dk of C1 (core)": d(lambda x: skrf_z(w, H, T, x), ER, 1e-3),
        "thickness of L1 (copper)": d(lambda x: skrf_z(w, H, x, ER), T, 1e-7),
    }
    for name, r in ref.items():
        # Same model, different step sizes: measured agreement is ~1e-5; allow 1e-3.
        assert abs(sens[name] - r) / abs(r) < 1e-3, (name, sens[name], r)


def etch_only_project(distribution: str, limit: float, tol_pct: float) -> dict:
    p = surface_project()
    zero = {"pct": 0}
    p["process"] = {
        "etch_width": {"abs": limit, "distribution": distribution},
        "core_thickness": zero, "prepreg_thickness": zero, "copper_thickness": zero,
        "dk": {"abs": 0}, "mask_thickness": {"abs": 0},
    }
    p["rules"][0]["tolerance_pct"] = tol_pct
    return p


@pytest.mark.parametrize("distribution", ["uniform", "normal"])
def test_etch_only_yield_matches_the_exact_probability(distribution):
    # With only the etched width varying, Z(w) is monotone, so the yield is exactly P(w55 ≤ w + δ ≤ w45) where
    # Z(w_lo) and Z(w_hi) are the window edges: found here with scikit-rf's MLine and scipy's brentq,
    # and the probability from the uniform or normal law (limit = 3σ) with scipy.stats.
    from scipy.optimize import brentq
    limit, tol = 30e-6, 3.0
    proc = run("spread", "-", "--samples", "100000", "--seed", "4", "--json",
               stdin=json.dumps(etch_only_project(distribution, limit, tol)))
    assert proc.returncode == 0, proc.stderr
    rule = json.loads(proc.stdout)["rules"][0]
    w = rule["width_m"]
    lo_z, hi_z = 50 * (1 - tol / 100), 50 * (1 + tol / 100)
    w_hi = brentq(lambda x: skrf_z(x, H, T, ER) - lo_z, w, 3 * w, xtol=1e-12)  # wider → lower Z
    w_lo = brentq(lambda x: skrf_z(x, H, T, ER) - hi_z, w / 3, w, xtol=1e-12)
    law = stats.uniform(loc=w - limit, scale=2 * limit) if distribution == "uniform" else stats.norm(w, limit / 3)
    exact = 100 * (law.cdf(w_hi) - law.cdf(w_lo))
    got = rule["spread"]["monte_carlo"]["yield_pct"]
    se = 100 * np.sqrt(exact / 100 * (1 - exact / 100) / 100000)
    assert 20 < exact < 99, exact  # the window must actually cut the distribution
    assert abs(got - exact) < 4 * se + 0.01, (got, exact, se)
