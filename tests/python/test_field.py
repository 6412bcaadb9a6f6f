"""2D field solver (`ohmstack field-calc`) against an independent finite-element solve written here with scikit-fem.

The FEM model: quadratic triangles (ElementTriP2) on MeshTri.init_tensor with coordinates graded geometrically
toward every conductor edge, εr constant per element (from the element centroid), conductors as Dirichlet DOFs
(every DOF inside or on a conductor), the outer box grounded. C = u·K·u (twice the energy at 1 V), C0 from the same
mesh with εr = 1; Z0 = 1/(c·√(C·C0)), εeff = C/C0; a pair's odd/even modes from its 2×2 Maxwell matrices. The FEM
error estimate is the change between two meshes (spacing ratio 1/0.7) scaled as for first-order convergence
(conservative: the observed order is higher). Heavy results are cached in target/.

Agreement required: |Z_rust − Z_fem| ≤ (Rust error estimate + FEM error estimate), the combined error estimates.
"""
import json
import math
from pathlib import Path

import numpy as np
import pytest
from conftest import ROOT, run
from skfem import Basis, BilinearForm, ElementTriP2, MeshTri, asm, condense, solve
from skfem.helpers import dot, grad

EPS0 = 8.8541878128e-12
C_LIGHT = 299792458.0
CACHE = ROOT / "target" / "field_fem_cache.json"
MODEL_VERSION = "fem-p2-v1"


def graded_axis(keys, lo, hi, scale, growth=0.25):
    """Node coordinates on [lo, hi] through every key; spacing ≈ scale·min_k(d_k + growth·|x − x_k|). Each interval
    gets round(∫ dx / spacing) cells placed at equal steps of that integral (evaluated on a dense log-spaced sample)."""
    span = hi - lo
    tol = 1e-9 * span
    keys = [(min(max(p, lo), hi), d) for p, d in keys if lo - tol <= p <= hi + tol]
    pts = [lo]
    for p in sorted({p for p, _ in keys} | {hi}):
        if p - pts[-1] > tol:
            pts.append(p)
    pts[-1] = hi
    kp = np.array([p for p, _ in keys])
    kd = np.array([d for _, d in keys])

    def size(x):
        return scale * np.min(kd[None, :] + growth * np.abs(x[:, None] - kp[None, :]), axis=1)

    out = [lo]
    for a, b in zip(pts[:-1], pts[1:]):
        # Dense sample clustered at both ends (where the spacing is finest).
        u = np.concatenate([[0.0], np.geomspace(1e-9, 0.5, 4000)])
        x = np.unique(np.concatenate([a + (b - a) * u, b - (b - a) * u]))
        f = 1.0 / size(x)
        cum = np.concatenate([[0.0], np.cumsum(0.5 * (f[1:] + f[:-1]) * np.diff(x))])
        n = max(1, int(round(cum[-1])))
        inner = np.interp(cum[-1] * np.arange(1, n) / n, cum, x)
        out.extend(inner)
        out.append(b)
    return np.array(out)


class Structure:
    """Rectangles only: conductors [(x0, x1, y0, y1, net)], net 0/1 = signal, -1 = ground; dielectrics
    [(x0, x1, y0, y1, er)] painted in order over vacuum; the outer box is grounded."""

    def __init__(self, name, box, conductors, dielectrics, fine, feature):
        self.name, self.box, self.conductors, self.dielectrics = name, box, conductors, dielectrics
        self.fine, self.feature = fine, feature

    def key(self, scale):
        return json.dumps([MODEL_VERSION, self.name, self.box, self.conductors, self.dielectrics, scale])

    def eps(self, x, y):
        e = np.ones_like(x)
        for x0, x1, y0, y1, er in self.dielectrics:
            e[(x >= x0) & (x <= x1) & (y >= y0) & (y <= y1)] = er
        return e

    def mesh(self, scale):
        x0, x1, y0, y1 = self.box
        xk, yk = [], []
        for cx0, cx1, cy0, cy1, _ in self.conductors:
            xk += [(cx0, self.fine), (cx1, self.fine)]
            yk += [(cy0, self.fine), (cy1, self.fine)]
        for dx0, dx1, dy0, dy1, _ in self.dielectrics:
            xk += [(dx0, self.feature), (dx1, self.feature)]
            yk += [(dy0, self.feature), (dy1, self.feature)]
        xk += [(x0, 1e9), (x1, 1e9)]
        yk += [(y0, self.feature if y0 == 0 else 1e9), (y1, 1e9)]
        return MeshTri.init_tensor(graded_axis(xk, x0, x1, scale), graded_axis(yk, y0, y1, scale))

    def system(self, scale):
        """The P2 basis of the mesh at `scale`, the conductor DOF masks per net (-1 = ground) and the fixed DOFs."""
        m = self.mesh(scale)
        basis = Basis(m, ElementTriP2())
        X = basis.doflocs
        tol = 1e-12
        boundary = basis.get_dofs().all()
        nets = sorted({c[4] for c in self.conductors if c[4] >= 0})
        on = {n: np.zeros(basis.N, dtype=bool) for n in nets + [-1]}
        for x0, x1, y0, y1, net in self.conductors:
            on[net] |= (X[0] >= x0 - tol) & (X[0] <= x1 + tol) & (X[1] >= y0 - tol) & (X[1] <= y1 + tol)
        fixed = np.zeros(basis.N, dtype=bool)
        fixed[boundary] = True
        for v in on.values():
            fixed |= v
        return basis, nets, on, np.nonzero(fixed)[0]

    def stiffness(self, basis, vacuum=False):
        """The matrix of ∫ εr ∇u·∇v (εr = 1 everywhere when `vacuum`)."""
        m = basis.mesh
        cx, cy = m.p[:, m.t].mean(axis=1)
        e = np.ones_like(cx) if vacuum else self.eps(cx, cy)
        nqp = basis.X.shape[1]

        @BilinearForm
        def laplace(u, v, w):
            return w["eps"] * dot(grad(u), grad(v))

        return asm(laplace, basis, eps=np.repeat(e[:, None], nqp, axis=1))

    def capacitances(self, scale):
        """Maxwell matrices C and C0 (F/m) for the signal nets."""
        basis, nets, on, D = self.system(scale)
        out = {}
        for label, vacuum in (("c", False), ("c0", True)):
            K = self.stiffness(basis, vacuum)
            sols = []
            for n in nets:
                u = np.zeros(basis.N)
                u[on[n]] = 1.0
                sols.append(solve(*condense(K, x=u, D=D)))
            out[label] = [[float(EPS0 * a @ (K @ b)) for b in sols] for a in sols]
        out["nodes"] = int(basis.mesh.p.shape[1])
        return out

    def potential(self, scale, drive, points):
        """The potential (dielectrics in place) with net n at drive[n] volts, at points (2 × N array)."""
        basis, nets, on, D = self.system(scale)
        K = self.stiffness(basis)
        u = np.zeros(basis.N)
        for n in nets:
            u[on[n]] = drive[n]
        u = solve(*condense(K, x=u, D=D))
        return basis.probes(points) @ u


def fem(structure, scale):
    cache = json.loads(CACHE.read_text()) if CACHE.exists() else {}
    key = structure.key(scale)
    if key not in cache:
        cache[key] = structure.capacitances(scale)
        CACHE.parent.mkdir(parents=True, exist_ok=True)
        CACHE.write_text(json.dumps(cache))
    return cache[key]


def modes(caps):
    """(controlled Z, εeff of the signal mode): Z0 for one line, Zdiff = 2·Zodd for a pair."""
    c, c0 = np.array(caps["c"]), np.array(caps["c0"])
    if c.shape == (1, 1):
        return 1 / (C_LIGHT * math.sqrt(c[0, 0] * c0[0, 0])), c[0, 0] / c0[0, 0]
    # Symmetric pair, odd mode (+1, −1): C_odd = C11 − C12 with Maxwell C12 < 0.
    co, c0o = c[0, 0] - c[0, 1], c0[0, 0] - c0[0, 1]
    return 2 / (C_LIGHT * math.sqrt(co * c0o)), co / c0o


def fem_result(structure):
    """FEM value on the finer mesh and its error estimate: the change from the coarser mesh (ratio r = 1/0.7 in
    spacing) scaled as for first-order convergence, |Δ|/(r − 1) — conservative, the observed order is higher."""
    r = 1.0 / 0.7
    zc, _ = modes(fem(structure, 1.0))
    zf, ef = modes(fem(structure, 0.7))
    return zf, ef, abs(zf - zc) / zf * 100 / (r - 1)


def rust(args, engine="reference"):
    proc = run("field-calc", *args, "--engine", engine, "--json")
    assert proc.returncode == 0, proc.stderr
    v = json.loads(proc.stdout)
    if "z_diff_ohm" in v:
        return v["z_diff_ohm"], v["eps_eff_odd"], v["error_estimate_pct"]
    return v["z0_ohm"], v["eps_eff"], v["error_estimate_pct"]


MM, UM = 1e-3, 1e-6


def microstrip_structure(name, w, h, t, er, mask=None, pair_s=None):
    far = 60 * h
    if pair_s is None:
        conductors = [(-w / 2, w / 2, h, h + t, 0)]
    else:
        conductors = [(-pair_s / 2 - w, -pair_s / 2, h, h + t, 0), (pair_s / 2, pair_s / 2 + w, h, h + t, 1)]
    dielectrics = [(-far, far, 0.0, h, er)]
    if mask is not None:
        c, er_m = mask
        dielectrics.append((-far, far, h, h + c, er_m))
        for x0, x1, y0, y1, _ in conductors:
            dielectrics.append((x0 - c, x1 + c, y0, y1 + c, er_m))
    return Structure(name, [-far, far, 0.0, far], conductors, dielectrics, fine=0.05 * t, feature=0.3 * t)


def coplanar_structure(name, w, g, h, t, er, plane):
    """A coplanar line with grounds reaching the box walls, over a plane (the box floor) or on a free substrate."""
    far = 60 * h
    floor = 0.0 if plane else -far
    conductors = [(-w / 2, w / 2, h, h + t, 0), (w / 2 + g, far, h, h + t, -1), (-far, -w / 2 - g, h, h + t, -1)]
    return Structure(name, [-far, far, floor, far], conductors, [(-far, far, 0.0, h, er)], fine=0.05 * t,
                     feature=0.3 * t)


CASES = {
    # name: (FEM structure, CLI arguments)
    "microstrip with thickness": (
        microstrip_structure("ms", 0.3 * MM, 0.17 * MM, 35 * UM, 4.2),
        ["microstrip", "--width", "0.3mm", "--height", "0.17mm", "--thickness", "35um", "--dk", "4.2"],
    ),
    "coated microstrip": (
        microstrip_structure("cms", 0.3 * MM, 0.17 * MM, 35 * UM, 4.2, mask=(20 * UM, 3.6)),
        ["coated-microstrip", "--width", "0.3mm", "--height", "0.17mm", "--thickness", "35um", "--dk", "4.2",
         "--mask-thickness", "20um", "--mask-dk", "3.6"],
    ),
    "offset stripline": (
        Structure("osl", [-3.0 * MM, 3.0 * MM, 0.0, 0.317 * MM], [(-0.06 * MM, 0.06 * MM, 0.1 * MM, 0.117 * MM, 0)],
                  [(-3.0 * MM, 3.0 * MM, 0.0, 0.317 * MM, 3.8)], fine=0.05 * 17 * UM, feature=0.3 * 17 * UM),
        ["stripline", "--width", "0.12mm", "--height", "0.1mm", "--height2", "0.2mm", "--thickness", "17um",
         "--dk", "3.8"],
    ),
    # Thick copper against the gap (t/G 0.24, the demo's radio feed): where the closed-form thickness correction
    # is off by 5–9 %, the field solver must still hold.
    "thick grounded coplanar": (
        coplanar_structure("gcpw", 169.6 * UM, 145 * UM, 94 * UM, 35 * UM, 4.0, plane=True),
        ["grounded-coplanar", "--width", "169.6um", "--gap", "145um", "--height", "94um", "--thickness", "35um",
         "--dk", "4"],
    ),
    "thick coplanar without plane": (
        coplanar_structure("cpw", 300 * UM, 150 * UM, 200 * UM, 35 * UM, 4.0, plane=False),
        ["coplanar", "--width", "300um", "--gap", "150um", "--height", "200um", "--thickness", "35um", "--dk", "4"],
    ),
    "edge-coupled microstrip pair": (
        microstrip_structure("ecm", 0.2 * MM, 0.1 * MM, 35 * UM, 4.0, pair_s=0.15 * MM),
        ["microstrip", "--width", "0.2mm", "--height", "0.1mm", "--thickness", "35um", "--dk", "4",
         "--spacing", "0.15mm"],
    ),
}


def check_against_fem(name, engine, estimate_cap):
    """`field-calc --engine ENGINE` on CASES[name] against the independent scikit-fem solve: Z and εeff agree within
    the sum of the two error estimates, and each estimate stays under its cap (both solvers accurate on their own,
    not only agreeing through wide error bars)."""
    structure, args = CASES[name]
    z_fem, e_fem, err_fem = fem_result(structure)
    z_rs, e_rs, err_rs = rust(args, engine=engine)
    dz = abs(z_rs - z_fem) / z_fem * 100
    de = abs(e_rs - e_fem) / e_fem * 100
    bound = err_rs + err_fem
    print(f"{name} ({engine}): {z_rs:.4f} Ω (±{err_rs:.3f} %), fem {z_fem:.4f} Ω (±{err_fem:.3f} %), diff {dz:.3f} %; "
          f"εeff {e_rs:.4f} vs {e_fem:.4f} ({de:.3f} %)")
    assert dz <= bound, f"{name}: {dz:.3f} % > {bound:.3f} %"
    assert de <= bound, f"{name}: εeff {de:.3f} % > {bound:.3f} %"
    assert err_rs < estimate_cap and err_fem < 0.3, (err_rs, err_fem)
    if engine == "field":
        # The fast engine's accuracy target against an independent solve (the plane-less line's εeff was 0.17 %
        # off while the substrate's faces were graded as coarsely as the copper).
        assert dz <= 0.1 and de <= 0.1, f"{name}: Z {dz:.3f} %, εeff {de:.3f} % against the 0.1 % target"


@pytest.mark.parametrize("name", list(CASES))
def test_field_solver_agrees_with_scikit_fem(name):
    check_against_fem(name, "reference", 0.3)


@pytest.mark.parametrize("name", list(CASES))
def test_fast_field_engine_agrees_with_scikit_fem(name):
    """The boundary-element engine (the field figure of a rule) against the same solves: within 0.1 % on Z and εeff,
    and its estimate stays under 1.1 % (docs/accuracy.md)."""
    check_against_fem(name, "field", 1.1)


def test_field_synthesis_lands_on_target_by_scikit_fem():
    """`ohmstack field-solve` on a thick grounded coplanar line (t/G ≈ 0.24, where the closed form's thickness
    correction is several percent off): the independent FEM solve at the field-solved width gives the target within
    the combined error estimates, and the closed form's own width does not."""
    demo = json.loads(run("demo").stdout)
    core = next(layer for layer in demo["stackup"] if layer["type"] == "core")
    copper = next(layer for layer in demo["stackup"] if layer["type"] == "copper")
    h, t, er, g = 94 * UM, 35 * UM, 4.0, 145 * UM
    project = dict(demo, title="thick coplanar check", stackup=[
        dict(copper, name="Top", thickness_m=t, role="signal"),
        dict(core, name="Core", thickness_m=h, dk=er),
        dict(copper, name="Plane", thickness_m=t, role="plane"),
    ], rules=[{"name": "feed", "layer": "Top", "structure": "coplanar", "target_ohm": 50.0, "tolerance_pct": 5.0,
               "solve": "width", "width_m": 2e-4, "gap_m": g}])
    proc = run("field-solve", "-", "--json", stdin=json.dumps(project))
    assert proc.returncode == 0, proc.stderr
    r = json.loads(proc.stdout)[0]
    assert r["converged"], r
    w, w_closed = r["value_m"], r["closed_form_m"]
    z_fem, _, err_fem = fem_result(coplanar_structure("gcpw-synth", w, g, h, t, er, plane=True))
    bound = r["error_estimate_pct"] + err_fem + 0.1  # + the synthesis' own stopping tolerance
    print(f"field-solved width {w * 1e6:.2f} µm (closed form {w_closed * 1e6:.2f} µm): FEM {z_fem:.3f} Ω "
          f"(±{err_fem:.3f} %), bound {bound:.3f} %")
    assert abs(z_fem - 50.0) / 50.0 * 100 <= bound
    z_fem_closed, _, _ = fem_result(coplanar_structure("gcpw-closed", w_closed, g, h, t, er, plane=True))
    assert abs(z_fem_closed - 50.0) / 50.0 * 100 > 3 * bound, z_fem_closed
