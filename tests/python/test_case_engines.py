"""`calc`, `solve` and `batch` on their default engine (the 2D field engine, boundary elements) against exact
results: Cohn 1954 (single stripline, t = 0), Cohn 1955 (edge-coupled stripline, t = 0) and Wen 1969 (coplanar
waveguide in air, t = 0), each within 0.1 %; and the engine's own error estimate against its true error there."""
import json

import mpmath as mp
import pytest
from conftest import batch, run

# η0 = µ0·c with CODATA 2018 µ0, as in core/src/units.rs.
ETA0 = mp.mpf("1.25663706212e-6") * 299792458


def cohn_1954(w, b, er):
    """Cohn 1954, exact for t = 0: Z0 = η0/(4√εr)·K(k)/K(k′), k = sech(πW/2b). mpmath.ellipk takes m = k²."""
    a = mp.pi * mp.mpf(w) / (2 * mp.mpf(b))
    return ETA0 / (4 * mp.sqrt(er)) * mp.ellipk(mp.sech(a) ** 2) / mp.ellipk(mp.tanh(a) ** 2)


def cohn_1955(w, s, b, er):
    """Cohn 1955, exact for t = 0: Z0e,o = η0/(4√εr)·K(k′)/K(k), ke = tanh(πW/2b)·tanh(π(W+S)/2b),
    ko = tanh(πW/2b)/tanh(π(W+S)/2b). Returns (even, odd)."""
    w, s, b = mp.mpf(w), mp.mpf(s), mp.mpf(b)
    a, c = mp.pi * w / (2 * b), mp.pi * (w + s) / (2 * b)
    return [ETA0 / (4 * mp.sqrt(er)) * mp.ellipk(1 - k**2) / mp.ellipk(k**2)
            for k in (mp.tanh(a) * mp.tanh(c), mp.tanh(a) / mp.tanh(c))]


def wen_1969_air(w, g):
    """Wen 1969, coplanar waveguide with zero-thickness conductors in a uniform medium (exact by conformal map):
    Z0 = η0/4·K(k′)/K(k), k = W/(W + 2G); here in air."""
    k = mp.mpf(w) / (w + 2 * g)
    return ETA0 / 4 * mp.ellipk(1 - k**2) / mp.ellipk(k**2)


def rel(a, b):
    return abs(float(a) - float(b)) / abs(float(b))


def field(cases):
    got = batch(cases, engine="field")
    for g in got:
        assert "error" not in g, g
        assert g["engine"] == "field" and "boundary elements" in g["method"], g
    return got


def test_calc_default_engine_is_field_and_matches_cohn_1954():
    # Plain `calc` with no --engine: the field engine's figure, within 0.1 % of Cohn 1954.
    b, er = 0.4e-3, 3.5
    proc = run("calc", "stripline", "--width", "0.3mm", "--height", "0.2mm", "--thickness", "0", "--dk", str(er),
               "--json")
    assert proc.returncode == 0, proc.stderr
    got = json.loads(proc.stdout)
    assert got["engine"] == "field"
    err = rel(got["z0_ohm"], cohn_1954(0.3e-3, b, er))
    print(f"calc stripline W/b=0.75: field engine {got['z0_ohm']:.5f} Ω, off Cohn 1954 by {err * 100:.4f} % "
          f"(estimate {got['error_estimate_pct']:.3f} %)")
    assert err < 1e-3
    assert got["error_estimate_pct"] >= err * 100


@pytest.mark.parametrize("u", [0.1, 0.3, 1.0, 2.0, 5.0])
def test_centred_zero_thickness_stripline_against_cohn_1954(u):
    b = 0.5e-3
    cases = [{"structure": "stripline", "width": u * b, "height": b / 2, "thickness": 0, "dk": er}
             for er in (1.0, 4.3, 10.2)]
    for case, got in zip(cases, field(cases)):
        exact = cohn_1954(case["width"], b, case["dk"])
        err = rel(got["z0_ohm"], exact)
        print(f"W/b={u} εr={case['dk']}: {got['z0_ohm']:.5f} Ω vs {float(exact):.5f} Ω, {err * 100:.4f} % "
              f"(estimate {got['error_estimate_pct']:.3f} %)")
        assert err < 1e-3, (u, case["dk"], err)
        # The engine's estimate covers its true error on an exact case.
        assert got["error_estimate_pct"] >= err * 100, (u, case["dk"], err)


@pytest.mark.parametrize("u,g", [(0.2, 0.1), (0.5, 0.3), (1.0, 1.0)])
def test_edge_coupled_zero_thickness_stripline_against_cohn_1955(u, g):
    b, er = 0.5e-3, 4.0
    got = field([{"structure": "edge-coupled-stripline", "width": u * b, "spacing": g * b, "height": b / 2,
                  "thickness": 0, "dk": er}])[0]
    ze, zo = cohn_1955(u * b, g * b, b, er)
    worst = max(rel(got["z_even_ohm"], ze), rel(got["z_odd_ohm"], zo))
    print(f"W/b={u} S/b={g}: Zodd {got['z_odd_ohm']:.4f} / {float(zo):.4f}, Zeven {got['z_even_ohm']:.4f} / "
          f"{float(ze):.4f}; worst {worst * 100:.4f} % (estimate {got['error_estimate_pct']:.3f} %)")
    assert worst < 1e-3


@pytest.mark.parametrize("w_um,g_um", [(100, 50), (200, 100), (300, 300)])
def test_coplanar_in_air_against_wen_1969(w_um, g_um):
    # dk 1: the "substrate" is air, so the line is in a uniform medium and Wen's result is exact.
    w, g = w_um * 1e-6, g_um * 1e-6
    got = field([{"structure": "coplanar", "width": w, "gap": g, "height": "1mm", "thickness": 0, "dk": 1}])[0]
    exact = wen_1969_air(w, g)
    err = rel(got["z0_ohm"], exact)
    print(f"CPW in air W={w_um} µm G={g_um} µm: {got['z0_ohm']:.4f} Ω vs {float(exact):.4f} Ω, {err * 100:.4f} % "
          f"(estimate {got['error_estimate_pct']:.3f} %)")
    assert err < 1e-3


def test_solve_on_the_field_engine_gives_a_width_cohn_1954_confirms():
    # `solve` for 50 Ω on the field engine; Cohn 1954 at the solved width gives 50 Ω within 0.1 %.
    b, er = 0.5e-3, 3.0
    proc = run("solve", "stripline", "--target", "50", "--height", "0.25mm", "--thickness", "0", "--dk", str(er),
               "--json")
    assert proc.returncode == 0, proc.stderr
    got = json.loads(proc.stdout)
    assert got["engine"] == "field"
    assert rel(cohn_1954(got["width_m"], b, er), 50) < 1e-3
