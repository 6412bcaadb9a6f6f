"""Loss and frequency checks against outside references: scikit-rf's microstrip media (dielectric loss, roughness
factor, Kirschning–Jansen dispersion, Djordjevic–Svensson/Sarkar dielectric), an independent scikit-fem field solve
for Wheeler's incremental-inductance rule, Wheeler's 1977 closed form, and scikit-rf reading our Touchstone files.

All project files are built here; the CLI computes (`ohmstack loss --json`, `ohmstack touchstone -o`).
"""
import itertools
import json
import math
import warnings

import numpy as np
import pytest
import skrf
from conftest import run

DB_PER_NP = 20 / math.log(10)
ETA0 = 376.730313668
C0 = 299792458.0
EPS0 = 8.8541878128e-12
MU0 = 1.25663706212e-6
SIGMA = 5.8e7
H = 254e-6


def project(w, h, t, er, df, rough=None, dielectric="constant", dispersion=False, spec=1e9, plane_rough=None):
    """Surface microstrip: trace on TOP over a core of height h, plane GND below; no solder mask."""
    r = rough or {"model": "smooth"}
    pr = plane_rough or r
    return {
        "schema": 1,
        "title": "loss reference",
        "stackup": [
            {"type": "copper", "name": "TOP", "thickness_m": t, "role": "signal", "roughness": r},
            {"type": "core", "name": "C1", "thickness_m": h, "dk": er, "df": df, "spec_freq_hz": spec},
            {"type": "copper", "name": "GND", "thickness_m": 35e-6, "role": "plane", "roughness": pr},
        ],
        "rules": [{"name": "ms", "layer": "TOP", "structure": "single", "target_ohm": 50, "width_m": w,
                   "solve": "nothing"}],
        "loss": {"dielectric": dielectric, "dispersion": dispersion},
    }


def loss_json(p, *args):
    # The scikit-rf comparisons check the closed forms (scikit-rf's microstrip is Hammerstad–Jensen), so the engine
    # is the closed form unless a test names another.
    if "--engine" not in args:
        args = (*args, "--engine", "closed-form")
    proc = run("loss", "-", "--rule", "ms", "--json", *args, stdin=json.dumps(p))
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout)


def sweep(p, f0, f1, n):
    return loss_json(p, "--from", str(f0), "--to", str(f1), "--points", str(n))


def skrf_mline(w, h, t, er, tand, freqs, rough=0.0, disp="none", diel="frequencyinvariant", f_epr_tand=1e9):
    # scikit-rf 2.2 MLine: model='hammerstadjensen' (same quasi-static model as ours), disp as given,
    # diel='frequencyinvariant' for our constant option or 'djordjevicsvensson', rho = 1/σ, rough = RMS in m,
    # compatibility_mode=None (dispersed values fed to the loss formulas, thickness-corrected width to dispersion).
    freq = skrf.Frequency.from_f(np.asarray(freqs, float), unit="Hz")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return skrf.media.MLine(frequency=freq, w=w, h=h, t=t, ep_r=er, tand=tand, rho=1 / SIGMA, rough=rough,
                                model="hammerstadjensen", disp=disp, diel=diel, f_epr_tand=f_epr_tand,
                                compatibility_mode=None)


GRID = list(itertools.product([2.2, 3.66, 4.3, 10.0], [0.3, 1.0, 2.0, 5.0], [17.5e-6, 35e-6]))


def test_dielectric_loss_matches_scikit_rf():
    # Same published formula (filling factor, quasi-static HJ εeff, constant Dk/Df): scikit-rf's alpha_dielectric.
    worst = 0.0
    for er, u, t in GRID:
        w = u * H
        got = sweep(project(w, H, t, er, 0.01), 1e8, 40e9, 6)
        freqs = [p["freq_hz"] for p in got["points"]]
        ref = skrf_mline(w, H, t, er, 0.01, freqs).alpha_dielectric * DB_PER_NP
        ours = np.array([p["line"]["dielectric"]["db_per_m"] for p in got["points"]])
        worst = max(worst, float(np.max(np.abs(ours / ref - 1))))
    # scikit-rf computes εeff from the complex ε (ε(1 − j·tanδ)); that changes Re εeff at second order in tanδ.
    assert worst < 1e-3, worst


def test_roughness_factor_matches_scikit_rf():
    # Hammerstad–Groiss on every conductor: the rough/smooth ratio of the conductor loss is K itself in both codes.
    worst = 0.0
    for rms in [0.3e-6, 1.0e-6, 2.0e-6]:
        w, t, er = 1.9 * H, 35e-6, 3.66
        got = sweep(project(w, H, t, er, 0.0, rough={"model": "hammerstad_groiss", "rms_m": rms}), 1e8, 40e9, 9)
        freqs = [p["freq_hz"] for p in got["points"]]
        ratio_ref = skrf_mline(w, H, t, er, 0.0, freqs, rough=rms).alpha_conductor / \
            skrf_mline(w, H, t, er, 0.0, freqs, rough=0.0).alpha_conductor
        ours = np.array([p["line"]["roughness_factor"] for p in got["points"]])
        worst = max(worst, float(np.max(np.abs(ours / ratio_ref - 1))))
    assert worst < 1e-9, worst


def test_kirschning_jansen_dispersion_matches_scikit_rf():
    # scikit-rf disp='kirschningjansen': εeff(f) (Kirschning–Jansen 1982) and Z0(f) (Jansen–Kirschning 1983),
    # fed the HJ dielectric-side thickness-corrected width, like ours. tanδ = 0 so its Z0 is real.
    worst_e = worst_z = 0.0
    for er, u, t in GRID:
        w = u * H
        got = sweep(project(w, H, t, er, 0.0, dispersion=True), 1e8, 40e9, 8)
        freqs = [p["freq_hz"] for p in got["points"]]
        m = skrf_mline(w, H, t, er, 0.0, freqs, disp="kirschningjansen")
        ee = np.array([p["line"]["eps_eff"] for p in got["points"]])
        # Our external (lossless) Z0 from C = √εeff/(Z0·c).
        z_ext = np.array([math.sqrt(p["line"]["eps_eff"]) / (p["line"]["c_f_per_m"] * C0) for p in got["points"]])
        worst_e = max(worst_e, float(np.max(np.abs(ee / np.real(m.ep_reff_f) - 1))))
        worst_z = max(worst_z, float(np.max(np.abs(z_ext / np.real(m.z0) - 1))))
    assert worst_e < 1e-9, worst_e
    assert worst_z < 1e-9, worst_z


def test_djordjevic_sarkar_matches_scikit_rf():
    # scikit-rf diel='djordjevicsvensson' with its defaults f_low = 1 kHz, f_high = 1 THz: the same wideband Debye
    # model through the same datasheet point. Dk(f) = Re ε, Df(f) = −Im ε / Re ε.
    for dk, df, spec in [(4.2, 0.02, 1e9), (3.45, 0.004, 10e9), (3.0, 0.0015, 2e9)]:
        got = sweep(project(1.9 * H, H, 35e-6, dk, df, dielectric="wideband", spec=spec), 1e6, 1e11, 11)
        freqs = [p["freq_hz"] for p in got["points"]]
        m = skrf_mline(1.9 * H, H, 35e-6, dk, df, freqs, diel="djordjevicsvensson", f_epr_tand=spec)
        ours_dk = np.array([p["dk"] for p in got["points"]])
        ours_df = np.array([p["df"] for p in got["points"]])
        assert np.max(np.abs(ours_dk / np.real(m.ep_r_f) - 1)) < 1e-9
        assert np.max(np.abs(ours_df / m.tand_f - 1)) < 1e-9
        # Dk falls monotonically; the datasheet point is reproduced.
        assert np.all(np.diff(ours_dk) < 0)
        at_spec = loss_json(project(1.9 * H, H, 35e-6, dk, df, dielectric="wideband", spec=spec),
                            "--freq", str(spec))["points"][0]
        assert abs(at_spec["dk"] - dk) < 1e-9 and abs(at_spec["df"] - df) < 1e-12


# ---------------------------------------------------------------------------------------------------------------
# Conductor loss: Wheeler's incremental-inductance rule with an exact (field-solved) Z0 in air.


def _geometric(length, h0, ratio):
    pts = [0.0]
    step = h0
    while pts[-1] + step < length:
        pts.append(pts[-1] + step)
        step *= ratio
    pts.append(length)
    return np.array(pts)


def _segment(a, b, h0, ratio, both):
    length = b - a
    if both:
        half = _geometric(length / 2, h0, ratio)
        pts = np.concatenate([half, length - half[::-1]])
    else:
        pts = _geometric(length, h0, ratio)
    return a + np.unique(pts)


def fem_z_air(w, h, t, er=1.0):
    """Z0 of a rectangular strip (w × t) at height h over an infinite plane, in air, by scikit-fem (P2 triangles on
    a tensor mesh graded geometrically toward every strip face and corner; half-domain by symmetry; grounded box at
    200 h). Z0 = 1/(c·C), C = 2W/V² (energy). With `er` the substrate (y < h) has that εr and the value returned
    is 1/(c·C), C the loaded capacitance."""
    from skfem import Basis, BilinearForm, ElementTriP2, MeshTri, asm, condense, solve
    from skfem.helpers import dot, grad

    h0 = min(w, t, h) * 2e-3
    far = 200 * h
    xs = np.unique(np.concatenate([_segment(0, w / 2, h0, 1.2, True), _segment(w / 2, far, h0, 1.3, False)]))
    ys = np.unique(np.concatenate([_segment(0, h, h0, 1.2, True), _segment(h, h + t, h0, 1.2, True),
                                   _segment(h + t, far, h0, 1.3, False)]))
    mesh = MeshTri.init_tensor(xs, ys)
    mid = mesh.p[:, mesh.t].mean(axis=1)
    inside = (mid[0] < w / 2) & (mid[1] > h) & (mid[1] < h + t)
    tri = mesh.t[:, ~inside]
    used = np.unique(tri)
    remap = -np.ones(mesh.p.shape[1], dtype=np.int64)
    remap[used] = np.arange(len(used))
    mesh = MeshTri(np.ascontiguousarray(mesh.p[:, used]), np.ascontiguousarray(remap[tri]))
    basis = Basis(mesh, ElementTriP2())

    @BilinearForm
    def laplace(u, v, w_):
        return np.where(w_.x[1] < h, er, 1.0) * dot(grad(u), grad(v))

    a = asm(laplace, basis)
    x = basis.doflocs
    tol = 1e-9 * h
    strip = (x[0] <= w / 2 + tol) & (x[1] >= h - tol) & (x[1] <= h + t + tol)
    ground = (x[1] <= tol) | (x[1] >= far - tol) | (x[0] >= far - tol)
    u = np.zeros(basis.N)
    u[strip] = 1.0
    u = solve(*condense(a, x=u, D=np.where(strip | ground)[0]))
    c = 2 * (u @ (a @ u)) * EPS0  # full width: twice the half-domain energy 2W = u·A·u
    return 1 / (C0 * c)


# Allowed deviation of the rule's R from the reference, per engine. The closed form differentiates Hammerstad–Jensen's
# Z0_air (~0.2 % on Z0, so its derivative is a few tenths of a percent to ~1 % off; measured −1.2 … +1.0 %): 2 %.
# The field engine differentiates its own air solves (boundary elements, walls receded on one mesh layout);
# measured 2026-12-02 within 0.015 % on all four: 0.1 %.
WHEELER_ALLOWED = {"closed-form": 0.02, "field": 0.001}


@pytest.mark.parametrize("engine", sorted(WHEELER_ALLOWED))
@pytest.mark.parametrize("u,t", [(0.3, 35e-6), (1.0, 35e-6), (1.0, 5e-6), (5.0, 35e-6)])
def test_wheeler_rule_against_field_solved_air_impedance(u, t, engine):
    # Wheeler 1942: R = (Rs/η0)·dZ0_air/dn. Reference: the same rule with Z0_air from an independent 2-D Laplace
    # solve (scikit-fem), walls receded by ±n (trace w − 2n, t − 2n, height + 2n), central difference.
    w = u * H
    n = 0.25e-6
    dz = (fem_z_air(w - 2 * n, H + 2 * n, t - 2 * n) - fem_z_air(w + 2 * n, H - 2 * n, t + 2 * n)) / (2 * n)
    f = 10e9
    rs = math.sqrt(math.pi * f * MU0 / SIGMA)
    r_ref = rs / ETA0 * dz
    got = loss_json(project(w, H, t, 4.3, 0.0), "--freq", str(f), "--engine", engine)["points"][0]["line"]
    assert abs(got["r_skin_ohm_per_m"] / r_ref - 1) < WHEELER_ALLOWED[engine], (got["r_skin_ohm_per_m"], r_ref)


def test_field_dielectric_share_against_scikit_fem():
    # Dielectric loss on the field engine: G = ωC·tanδ·(share of the electric energy in the dielectric). For a bare
    # microstrip that share is εr·∂C/∂εr / C; reference: the same derivative from two scikit-fem solves of C with
    # the substrate's εr ± 0.1 % (P2, the mesh above with the substrate marked). tanδ = 0.02, 10 GHz. Measured
    # 2026-12-03: −0.077 % with the engine's adjoint share (−0.024 % from two Dk-scaled solves; the closed form's
    # filling factor: +1.7 %); allow 0.2 %.
    pytest.importorskip("skfem")
    w, t, er, df, f = 1.0 * H, 35e-6, 4.3, 0.02, 10e9
    c = lambda e: 1 / (C0 * fem_z_air(w, H, t, er=e))  # noqa: E731  (C = 1/(c·Z) with Z0 from C alone)
    share = (c(er * 1.001) - c(er / 1.001)) / (c(er) * 2 * math.log(1.001))
    got = loss_json(project(w, H, t, er, df), "--freq", str(f), "--engine", "field")["points"][0]["line"]
    alpha_d = got["dielectric"]["db_per_m"] / DB_PER_NP
    # α_d = G·Z0/2 = ωC·tanδ·share·Z0/2 = (π f √εeff / c)·tanδ·share.
    ref = math.pi * f * math.sqrt(got["eps_eff"]) / C0 * df * share
    assert abs(alpha_d / ref - 1) < 0.002, (alpha_d, ref, share)


def wheeler77_z_air(w, h, t):
    # H. A. Wheeler, IEEE Trans. MTT-25(8), 1977, eqs. (4)–(6) with εr = 1: a second, independent closed form.
    if t > 0:
        dw = t / math.pi * math.log(4 * math.e / math.sqrt((t / h) ** 2 + (1 / math.pi / (w / t + 1.1)) ** 2))
        w = w + dw
    r = 4 * h / w
    x = (14 + 8) / 11 * r
    return ETA0 / (2 * math.pi * math.sqrt(4)) * math.log(1 + r * (x + math.sqrt(x * x + math.pi ** 2)))


def test_wheeler_rule_agrees_across_two_closed_forms():
    # Wheeler 1977 states ~1 % on Z0; the rule on its formula must agree with ours on HJ within 3 % over a grid.
    worst = 0.0
    f = 10e9
    rs = math.sqrt(math.pi * f * MU0 / SIGMA)
    for u, t in itertools.product([0.3, 1.0, 2.0, 5.0, 20.0], [5e-6, 17.5e-6, 35e-6]):
        w = u * H
        n = 1e-9
        dz = (wheeler77_z_air(w - 2 * n, H + 2 * n, t - 2 * n) - wheeler77_z_air(w + 2 * n, H - 2 * n, t + 2 * n)) \
            / (2 * n)
        got = loss_json(project(w, H, t, 4.3, 0.0), "--freq", str(f))["points"][0]["line"]["r_skin_ohm_per_m"]
        worst = max(worst, abs(got / (rs / ETA0 * dz) - 1))
    assert worst < 0.03, worst


def test_conductor_loss_versus_scikit_rf_current_distribution_factor():
    # scikit-rf's MLine conductor loss is not Wheeler's rule despite its docstring: it is Hammerstad–Jensen's
    # α_c = Rs/(Z0·w)·Ki, Ki = exp(−1.2(Z0/η0)^0.7), with no thickness dependence beyond Z0. It should approach
    # ours for wide, thin strips and stay above ours for thick, narrow ones (where it ignores the current spreading
    # onto the strip's sides). Measured: −7 % at u = 20, t = 5 µm; −22 % at u = 1, t = 5 µm; −60 % at u = 0.3,
    # t = 35 µm.
    f = [10e9]
    devs = {}
    for u, t in [(20.0, 5e-6), (1.0, 5e-6), (0.3, 35e-6)]:
        w = u * H
        got = loss_json(project(w, H, t, 4.3, 0.0), "--freq", "10GHz")["points"][0]["line"]["conductor"]["db_per_m"]
        ref = skrf_mline(w, H, t, 4.3, 0.0, f).alpha_conductor[0] * DB_PER_NP
        devs[(u, t)] = got / ref - 1
    assert -0.10 < devs[(20.0, 5e-6)] < 0.0, devs
    assert devs[(20.0, 5e-6)] > devs[(1.0, 5e-6)] > devs[(0.3, 35e-6)], devs


# ---------------------------------------------------------------------------------------------------------------
# Touchstone export read back by scikit-rf.


def test_touchstone_reads_back_with_scikit_rf(tmp_path):
    p = project(1.9 * H, H, 35e-6, 3.66, 0.004, rough={"model": "hammerstad_groiss", "rms_m": 0.5e-6},
                dielectric="wideband", dispersion=True)
    out = tmp_path / "segment.s2p"
    proc = run("touchstone", "-", "--rule", "ms", "--length", "75mm", "--z-ref", "45", "--from", "10MHz",
               "--to", "30GHz", "--points", "21", "-o", str(out), stdin=json.dumps(p))
    assert proc.returncode == 0, proc.stderr
    net = skrf.Network(str(out))
    assert net.nports == 2 and len(net.f) == 21
    assert np.allclose(net.z0, 45.0)
    # Reference: scikit-rf's own line from the same γ and Zc (DefinedGammaZ0), renormalised to 45 Ω ports.
    # The touchstone command runs on the rule's engine (the field engine); read the same engine's sweep.
    got = loss_json(p, "--from", "10e6", "--to", "30e9", "--points", "21", "--engine", "field")
    gamma = np.array([complex(q["line"]["alpha_np_per_m"], q["line"]["beta_rad_per_m"]) for q in got["points"]])
    zc = np.array([complex(q["line"]["z0_re_ohm"], q["line"]["z0_im_ohm"]) for q in got["points"]])
    freq = skrf.Frequency.from_f(np.array([q["freq_hz"] for q in got["points"]]), unit="Hz")
    media = skrf.media.DefinedGammaZ0(frequency=freq, gamma=gamma, z0=zc, z0_port=45.0)
    ref = media.line(0.075, unit="m")
    assert np.allclose(net.f, ref.f, rtol=1e-9)
    assert np.max(np.abs(net.s - ref.s)) < 1e-8, np.max(np.abs(net.s - ref.s))
    # Passive: no power gain anywhere.
    s = net.s
    assert np.all(np.linalg.svd(s, compute_uv=False) <= 1 + 1e-12)


def test_touchstone_refuses_wrong_extension_and_bad_length(tmp_path):
    p = json.dumps(project(1.9 * H, H, 35e-6, 3.66, 0.004))
    proc = run("touchstone", "-", "--rule", "ms", "--length", "75mm", "-o", str(tmp_path / "x.s4p"), stdin=p)
    assert proc.returncode != 0 and "output" in proc.stderr
    proc = run("touchstone", "-", "--rule", "ms", "--length", "-3mm", stdin=p)
    assert proc.returncode != 0 and "length" in proc.stderr
