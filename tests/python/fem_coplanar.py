"""One-off field-solver reference for the coplanar closed forms (not collected by pytest: each solve takes
~100 s on a shared 2-core machine). Run `python fem_coplanar.py` from tests/python.

scikit-fem, P2 triangles on a tensor grid graded geometrically (first cell 1e-4 of the smallest feature, growth
1.35) towards every conductor edge and the dielectric interface; zero-thickness conductors as Dirichlet nodes on
y = 0; coplanar grounds run to a grounded box 60x the structure. Z0 = eta0/sqrt(c*c0), eps_eff = c/c0 from the
energies with and without the dielectric. Self-check: the air CPW (W = 300 um, G = 150 um) gives 120.4775 Ohm against
Wen's exact 120.4842 Ohm (5.5e-5).
"""
import numpy as np, time
import skfem
from skfem import MeshTri, Basis, ElementTriP2, BilinearForm, asm, condense, solve, ElementTriP0
from skfem.helpers import dot, grad

def graded(breaks, sing, d0, q=1.35):
    """1D nodes: from each singular point, spacing growing geometrically from d0 by q; elsewhere spacing q-grown
    from the neighbouring points (capped at a tenth of the interval)."""
    pts = set(breaks)
    for a, b in zip(breaks[:-1], breaks[1:]):
        L = b - a
        for end, sgn in ((a, 1), (b, -1)):
            if end in sing:
                d, x = d0, 0.0
                while x + d < L / 2:
                    x += d; pts.add(end + sgn * x); d *= q
        n = max(2, int(L / (L / 10)))
        pts |= set(np.linspace(a, b, 11)[1:-1])
    return np.array(sorted(pts))

def solve_cs(conductors, h, er, backed, L):
    """conductors: list of (x0, x1, V) at y=0 (zero thickness). Grounds = conductors with V=0 extend to +-L.
    Returns ∫ε|∇φ|² (in ε0 units) with the dielectric and with air."""
    edges = sorted({e for c in conductors for e in c[:2] if abs(e) < L})
    xb = sorted({-L, L, *edges})
    d0 = 1e-4 * min(np.diff(edges)) if len(edges) > 1 else 1e-4 * h
    xs = graded(xb, set(edges), d0)
    ybot = -h if backed else -L
    yb = sorted({ybot, -h, 0.0, L})
    ys = graded(yb, {0.0, -h}, d0)
    m = MeshTri.init_tensor(xs, ys)
    out = []
    for eps in (er, 1.0):
        basis = Basis(m, ElementTriP2())
        b0 = basis.with_element(ElementTriP0())
        ymid = m.p[1, m.t].mean(axis=0)
        epsv = b0.zeros(); epsv[:] = np.where((ymid < 0) & (ymid > -h), eps, 1.0)
        @BilinearForm
        def lap(u, v, w):
            return w['e'] * dot(grad(u), grad(v))
        K = asm(lap, basis, e=b0.interpolate(epsv))
        x = basis.zeros()
        dofs_xy = basis.doflocs
        fixed = []
        on0 = np.abs(dofs_xy[1]) < 1e-15
        for (x0, x1, V) in conductors:
            sel = on0 & (dofs_xy[0] >= x0 - 1e-15) & (dofs_xy[0] <= x1 + 1e-15)
            x[sel] = V; fixed.append(np.nonzero(sel)[0])
        bnd = basis.get_dofs().all()
        x[bnd] = 0.0 if True else x[bnd]
        # outer box and plane are ground; but conductors touching the box keep their V (grounds are 0 anyway)
        fixed.append(bnd)
        D = np.unique(np.concatenate(fixed))
        x = solve(*condense(K, x=x, D=D))
        out.append(float(x @ (K @ x)))
    return out

ETA0 = 1.25663706212e-6 * 299792458.0

def cpw(w, g, h, er, backed, Lf=60):
    L = Lf * max(w + 2*g, h)
    a, b = w/2, w/2 + g
    c, c0 = solve_cs([(-L, -b, 0.0), (-a, a, 1.0), (b, L, 0.0)], h, er, backed, L)
    return ETA0 / np.sqrt(c * c0), c / c0

def pair(w, s, g, h, er, backed, Lf=60):
    L = Lf * max(s + 2*w + 2*g, h)
    x1, x2, x3 = s/2, s/2 + w, s/2 + w + g
    res = {}
    for mode, v2 in (("odd", -1.0), ("even", 1.0)):
        c, c0 = solve_cs([(-L, -x3, 0.0), (-x2, -x1, v2), (x1, x2, 1.0), (x3, L, 0.0)], h, er, backed, L)
        c, c0 = c / 2, c0 / 2
        res[mode] = (ETA0 / np.sqrt(c * c0), c / c0)
    return res

if __name__ == "__main__":  # the geometries quoted in coplanar.rs / coupled_coplanar.rs
    t = time.time()
    print(cpw(3e-4, 1.5e-4, 2e-4, 1.0, False))
    # Wen exact: eta0/(4 q(k)) k=0.5
    from scipy.special import ellipk
    k = 0.5; print("wen", ETA0/4*ellipk(1-k*k)/ellipk(k*k))
    print(cpw(3e-4, 1.5e-4, 2e-4, 4.3, False), time.time()-t)
    print(cpw(3e-4, 1.5e-4, 2e-4, 4.3, True), time.time()-t)
    print(pair(2e-4, 2e-4, 1.5e-4, 3e-4, 4.3, False), time.time()-t)
    print(pair(2e-4, 2e-4, 1.5e-4, 1.5e-4, 4.3, True), time.time()-t)
