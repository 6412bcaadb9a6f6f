"""Edge-coupled microstrip (Kirschning–Jansen 1984 in the core) against an independent Python implementation of
Garg–Bahl 1979, an independent scikit-fem field solve, a textbook statement and common practice.
Also the covered (coated/embedded) microstrip correction against the same field solve and its exact limits."""
import itertools
import math

import numpy as np
import pytest
import skrf
from scipy.special import ellipk

import fem2d
from conftest import batch

EPS0 = 1.0 / (4e-7 * math.pi * 1.00000000055 * 299792458.0**2)
C0 = 299792458.0
H = 1e-4


def hj_single(u, er):
    """Single-line zero-thickness Z0 and εeff: scikit-rf MLine, Hammerstad–Jensen, quasi-static (REFERENCES.md)."""
    freq = skrf.Frequency(1, 1, 1, unit="MHz")
    m = skrf.media.MLine(frequency=freq, w=u * H, h=H, t=None, ep_r=er, tand=0.0, rho=1 / 5.8e7, rough=0.0,
                         model="hammerstadjensen", disp="none", diel="frequencyinvariant", compatibility_mode=None)
    return float(np.real(m.zl_eff)), float(np.real(m.ep_reff))


def garg_bahl(u, g, er):
    """R. Garg and I. J. Bahl, "Characteristics of coupled microstriplines", IEEE Trans. MTT-27(7), 1979,
    pp. 700–705 (formulas from memory): even C_e = C_p + C_f + C_f', odd C_o = C_p + C_f + C_ga + C_gd; Z = 1/(c·√(C·C^a)),
    εeff = C/C^a with C^a the same with εr = 1. Here K(k')/K(k) is exact (scipy, parameter m = k²) instead of
    Hilberg's approximation, and the single line comes from scikit-rf, so nothing is shared with the Rust code.
    Claimed accuracy about 3 % for 0.2 ≤ W/h ≤ 2, 0.05 ≤ S/h ≤ 2, εr ≥ 1."""
    def caps(er_):
        z0, ee = hj_single(u, er_) if er_ > 1.0 else (hj_single(u, 2.0)[0] * math.sqrt(hj_single(u, 2.0)[1]), 1.0)
        cp = EPS0 * er_ * u
        cf = math.sqrt(ee) / (2 * C0 * z0) - cp / 2
        a = math.exp(-0.1 * math.exp(2.33 - 2.53 * u))
        cf_p = cf / (1 + a / g * math.tanh(8 * g)) * math.sqrt(er_ / ee)
        k = g / (g + 2 * u)
        cga = EPS0 * ellipk(1 - k * k) / ellipk(k * k)
        cgd = EPS0 * er_ / math.pi * math.log(1 / math.tanh(math.pi * g / 4)) \
            + 0.65 * cf * (0.02 * math.sqrt(er_) / g + 1 - er_**-2)
        return cp + cf + cf_p, cp + cf + cga + cgd

    (ce, co), (ce_a, co_a) = caps(er), caps(1.0)
    return {"z_even": 1 / (C0 * math.sqrt(ce * ce_a)), "z_odd": 1 / (C0 * math.sqrt(co * co_a)),
            "e_even": ce / ce_a, "e_odd": co / co_a}


def pair_case(u, g, er, t=0.0, **extra):
    return {"structure": "edge-coupled-microstrip", "width": u * H, "spacing": g * H, "height": H,
            "thickness": t, "dk": er, **extra}


def test_kirschning_jansen_vs_garg_bahl_grid():
    # Two different published models; KJ claims ≈1 %, GB ≈3 %, so their combined accuracy is ≈4 %.
    # Measured (and confirmed against the field solve below): GB's odd mode is up to ≈6 % high at narrow gaps on
    # high-Dk substrates, above its claim, so the worst case is allowed 6.5 % and 90 % of points must be within 4 %;
    # GB's odd-mode εeff is up to ≈7 % off there too (measured 6.8 %), allowed 7.5 %.
    grid = list(itertools.product([0.2, 0.5, 1.0, 1.5, 2.0], [0.1, 0.2, 0.5, 1.0, 2.0], [2.2, 3.0, 4.3, 6.15, 9.8]))
    assert len(grid) >= 100
    results = batch([pair_case(u, g, er) for u, g, er in grid])
    devs, eps_devs = [], []
    for (u, g, er), got in zip(grid, results):
        assert "error" not in got, got
        ref = garg_bahl(u, g, er)
        for mode in ("odd", "even"):
            devs.append(abs(got[f"z_{mode}_ohm"] / ref[f"z_{mode}"] - 1))
            eps_devs.append(abs(got[f"eps_eff_{mode}"] / ref[f"e_{mode}"] - 1))
    devs, eps_devs = np.array(devs), np.array(eps_devs)
    print(f"KJ vs GB: Z worst {devs.max():.4f}, median {np.median(devs):.4f}, within 4 %: {np.mean(devs < 0.04):.3f}; "
          f"εeff worst {eps_devs.max():.4f}")
    assert devs.max() < 0.065
    assert np.mean(devs < 0.04) >= 0.9
    assert eps_devs.max() < 0.075


# Independent 2D field solve (scikit-fem, P2, graded mesh; its own error ≈1e-4 checked against HJ's 0.01 %-accurate
# air-line impedance during development). KJ claims ≈1 %; we require 1 %.
FEM_PAIRS = [(0.5, 0.1, 9.8), (1.0, 1.0, 4.3), (0.2, 0.3, 2.2), (2.0, 0.5, 9.8)]


@pytest.mark.parametrize("u,g,er", FEM_PAIRS)
def test_kirschning_jansen_vs_field_solve(u, g, er):
    got = batch([pair_case(u, g, er)])[0]
    for mode, odd in (("odd", True), ("even", False)):
        z, e = fem2d.line(u * H, H, er, s=g * H, odd=odd, dmin_rel=4e-3)
        assert abs(got[f"z_{mode}_ohm"] / z - 1) < 0.01, (mode, got, z)
        assert abs(got[f"eps_eff_{mode}"] / e - 1) < 0.01, (mode, got, e)


def test_huge_spacing_gives_the_single_line():
    # Exact limit: uncoupled strips (thickness included: the core carries HJ's thickness correction into each mode).
    cases = [pair_case(u, 2000.0, er, t) for u, er, t in [(0.5, 4.3, 0.0), (2.0, 3.0, 35e-6), (1.0, 9.8, 17e-6)]]
    singles = [{"structure": "microstrip", "width": c["width"], "height": H, "thickness": c["thickness"],
                "dk": c["dk"]} for c in cases]
    for p, s in zip(batch(cases), batch(singles)):
        for mode in ("odd", "even"):
            assert abs(p[f"z_{mode}_ohm"] / s["z0_ohm"] - 1) < 1e-4, (p, s)


def test_textbook_edge_coupling_is_too_loose_for_3_db():
    # Value from memory: Pozar, "Microwave Engineering", 4th ed., §7.6–7.7 — edge-coupled lines cannot reach the
    # tight coupling of a 3 dB (or even 6 dB) coupler at practical gaps, which is why the Lange coupler exists.
    # Check: in a 50 Ω system (√(Ze·Zo) = 50 Ω, the coupler's port condition) at the narrowest gap KJ covers
    # (s/h = 0.1), the voltage coupling (Ze − Zo)/(Ze + Zo) stays below 10^(−6/20) = 0.50 on any substrate.
    us = np.geomspace(0.1, 10, 60)
    for er in [2.2, 4.3, 10.0]:
        got = batch([pair_case(u, 0.1, er) for u in us])
        z0 = np.array([math.sqrt(r["z_even_ohm"] * r["z_odd_ohm"]) for r in got])
        coupling = np.array([(r["z_even_ohm"] - r["z_odd_ohm"]) / (r["z_even_ohm"] + r["z_odd_ohm"]) for r in got])
        # √(Ze·Zo) falls with width: interpolate the coupling at 50 Ω.
        c50 = float(np.interp(50.0, z0[::-1], coupling[::-1]))
        assert 0.2 < c50 < 10 ** (-6 / 20), (er, c50)


def test_textbook_odd_mode_is_faster():
    # Value from memory: Pozar, "Microwave Engineering", 4th ed., §7.6 — in coupled microstrip the odd mode has more
    # of its field in air than the even mode, so εeff,odd < εeff,even and the modes travel at different speeds
    # (the cause of the poor directivity of microstrip couplers). Also exact for εr = 1: both equal 1.
    grid = list(itertools.product([0.2, 1.0, 5.0], [0.1, 0.5, 2.0], [2.2, 4.3, 10.0]))
    for got in batch([pair_case(u, g, er) for u, g, er in grid]):
        assert got["eps_eff_odd"] < got["eps_eff_even"], got
    air = batch([pair_case(1.0, 0.5, 1.0)])[0]
    assert abs(air["eps_eff_odd"] - 1) < 1e-12 and abs(air["eps_eff_even"] - 1) < 1e-12


def test_fr4_100_ohm_pair_common_practice():
    # Common practice, no source: a 100 Ω surface edge-coupled pair on ≈0.1 mm FR-4 (Dk ≈ 4.2, 1 oz copper) with a
    # gap of 1.5 h has traces roughly as wide as the dielectric is thick (W/h ≈ 0.8–1.6), and its Zodd lies just
    # below the single-line Z0 of the same trace (tens of per cent of coupling, not more).
    got = batch([{"structure": "edge-coupled-microstrip", "target": 100, "spacing": "0.15mm", "height": "0.1mm",
                  "thickness": "35um", "dk": 4.2}])[0]
    assert abs(got["z_diff_ohm"] - 100) < 1e-6, got
    ratio = got["width_m"] / 0.1e-3
    assert 0.8 < ratio < 1.6, ratio
    single = batch([{"structure": "microstrip", "width": got["width_m"], "height": "0.1mm", "thickness": "35um",
                     "dk": 4.2}])[0]
    assert 0.8 * single["z0_ohm"] < got["z_odd_ohm"] < single["z0_ohm"], (got, single)


# Covered microstrip: the filling-factor cover correction against the field solve (zero-thickness strip under a
# planar dielectric of thickness c; for a zero-thickness strip a conformal mask is the same geometry). The method has
# no published accuracy; measured during development: up to ≈2.4 % in Z0 (slow approach to the thick-cover limit),
# so 3 % is required.
FEM_COVERS = [(2.0, 4.3, 0.1, 3.5), (2.0, 4.3, 1.0, 4.3), (0.5, 4.3, 0.2, 3.5), (1.0, 3.0, 0.3, 6.0)]


@pytest.mark.parametrize("u,er,c,em", FEM_COVERS)
def test_cover_correction_vs_field_solve(u, er, c, em):
    got = batch([{"structure": "embedded-microstrip", "width": u * H, "height": H, "dk": er, "cover": c * H,
                  "cover-dk": em}])[0]
    z, e = fem2d.line(u * H, H, er, cover=c * H, cover_er=em, dmin_rel=4e-3)
    assert abs(got["z0_ohm"] / z - 1) < 0.03, (got, z)
    assert abs(got["eps_eff"] / e - 1) < 0.06, (got, e)


def test_cover_exact_limits_through_the_cli():
    base = {"width": "0.3mm", "height": "0.17mm", "thickness": "35um", "dk": 4.2}
    surface, air_mask, thin, thick = batch([
        {"structure": "microstrip", **base},
        {"structure": "coated-microstrip", **base, "mask-thickness": "25um", "mask-dk": 1.0},  # εm = 1: exact
        {"structure": "coated-microstrip", **base, "mask-thickness": "1e-12", "mask-dk": 3.8},  # c → 0
        {"structure": "embedded-microstrip", **base, "cover": "5mm", "cover-dk": 4.2},  # fully embedded
    ])
    assert abs(air_mask["z0_ohm"] - surface["z0_ohm"]) < 1e-9 * surface["z0_ohm"]
    assert abs(thin["z0_ohm"] / surface["z0_ohm"] - 1) < 1e-6
    assert abs(thick["eps_eff"] - 4.2) < 1e-6
    # Common practice, no source: a typical ≈25 µm solder mask lowers a 50 Ω FR-4 microstrip by about 1–3 Ω.
    masked = batch([{"structure": "coated-microstrip", **base, "mask-thickness": "25um", "mask-dk": 3.8}])[0]
    assert 0.5 < surface["z0_ohm"] - masked["z0_ohm"] < 4.0, (surface, masked)


def test_coated_pair_lowers_zdiff_and_warns():
    bare, masked = batch([pair_case(1.0, 1.0, 4.3, 35e-6),
                          pair_case(1.0, 1.0, 4.3, 35e-6, **{"mask-thickness": 20e-6, "mask-dk": 3.5})])
    assert masked["z_diff_ohm"] < bare["z_diff_ohm"]
    assert any("per mode" in w for w in masked["warnings"])


def test_bad_pair_inputs_name_the_field():
    got = batch([{"structure": "edge-coupled-microstrip", "width": "0.1mm", "height": "0.1mm", "dk": 4.2},
                 {"structure": "edge-coupled-microstrip", "width": "0.1mm", "spacing": "-1mm", "height": "0.1mm",
                  "dk": 4.2},
                 pair_case(1.0, 1.0, 4.3, **{"mask-thickness": 1e-5, "mask-dk": 3.0, "cover": 1e-4,
                                             "cover-dk": 3.0})])
    assert got[0]["error"].startswith("spacing"), got[0]
    assert got[1]["error"].startswith("spacing"), got[1]
    assert got[2]["error"].startswith("cover"), got[2]


# Covered pairs: the per-mode cover correction against the field solve. Measured during development: Zodd up to
# ≈3.1 % high at narrow gaps (a thin cover in the gap matters more to the odd mode than the c/h decay says) and Zeven
# ≈2.5 % low under a thick cover; the core warns that covered pairs are rough. Required: 4 %.
@pytest.mark.parametrize("u,g,er,c,em", [(1.0, 0.3, 4.3, 0.2, 3.5), (1.0, 0.5, 4.3, 1.0, 4.3)])
def test_covered_pair_vs_field_solve(u, g, er, c, em):
    got = batch([pair_case(u, g, er, **{"cover": c * H, "cover-dk": em})])[0]
    for mode, odd in (("odd", True), ("even", False)):
        z, _ = fem2d.line(u * H, H, er, s=g * H, odd=odd, cover=c * H, cover_er=em, dmin_rel=4e-3)
        assert abs(got[f"z_{mode}_ohm"] / z - 1) < 0.04, (mode, got, z)


# Finite thickness: the Jansen-form mode width increments (core) against the field solve with rectangular strips
# (the same solve reproduces HJ's thickness-corrected single line to 0.03 %). Measured during development for board
# geometries (t/h 0.17–0.35, t/s ≤ 0.35): Zodd 1.0–3.3 % high, Zeven 1.3–2.1 % low. Required: 4 %; Zdiff is 2·Zodd.
@pytest.mark.parametrize("u,g,tn,er", [(1.2, 1.5, 0.35, 4.2), (1.0, 1.0, 0.35, 4.2)])
def test_thick_pair_vs_field_solve(u, g, tn, er):
    got = batch([pair_case(u, g, er, tn * H)])[0]
    for mode, odd in (("odd", True), ("even", False)):
        z, _ = fem2d.line(u * H, H, er, s=g * H, odd=odd, t=tn * H, dmin_rel=4e-3)
        assert abs(got[f"z_{mode}_ohm"] / z - 1) < 0.04, (mode, got, z)


def test_thick_single_line_field_solve_matches_hammerstad_jensen():
    # Sanity check of the field solve itself with thickness: HJ 1980 claims ≈0.2 % with its thickness correction.
    z, e = fem2d.line(2 * H, H, 4.3, t=0.1 * H, dmin_rel=4e-3)
    got = batch([{"structure": "microstrip", "width": 2 * H, "height": H, "thickness": 0.1 * H, "dk": 4.3}])[0]
    assert abs(got["z0_ohm"] / z - 1) < 0.003 and abs(got["eps_eff"] / e - 1) < 0.003, (got, z, e)
