"""A small independent 2D electrostatic solve with scikit-fem, used as an outside reference for microstrip-family
models: strip(s) of thickness t ≥ 0 at height h over a ground plane, layered dielectric (substrate, optional cover),
grounded far box. Half-domain by symmetry: the plane x = 0 is a magnetic wall (Neumann, even mode / single line) or
an electric wall (φ = 0, odd mode).

Method: ∇·(ε∇φ) = 0 with P2 triangles on a tensor grid graded geometrically toward the strip edges and the
dielectric interfaces (the field is singular at the edges); C = ∫ε|∇φ|² for V = 1 (C = 2W/V²), C0 from the same mesh
with ε = 1; Z = η0/√(C·C0) with C, C0 in units of ε0 (1/(c·ε0) = η0), εeff = C/C0. REFERENCES.md: a box of
~100 h changes Z by ~1e-6; graded meshes reach 1e-4 to 1e-5.
"""
import numpy as np
from skfem import Basis, BilinearForm, ElementTriP0, ElementTriP2, MeshTri, asm, condense, solve
from skfem.helpers import dot, grad

ETA0 = 4e-7 * np.pi * 1.00000000055 * 299792458.0  # µ0·c with CODATA 2018 µ0 (as the core's units.rs)


def _graded(key_points, lo, hi, dmin, ratio=1.3, dmax=None):
    """1D grid on [lo, hi] with spacing dmin at each key point growing geometrically by `ratio`, capped at dmax."""
    dmax = dmax or (hi - lo) / 20
    pts = {lo, hi}
    for c in key_points:
        pts.add(c)
        for sign in (-1.0, 1.0):
            x, d = c, dmin
            while True:
                x = x + sign * d
                if x <= lo or x >= hi:
                    break
                pts.add(x)
                d = min(d * ratio, dmax)
    grid = np.array(sorted(pts))
    # Merge points closer than a fraction of dmin (from overlapping clusters).
    keep = [grid[0]]
    for x in grid[1:]:
        if x - keep[-1] > 0.3 * dmin:
            keep.append(x)
    if keep[-1] != hi:
        keep[-1] = hi
    return np.array(keep)


def _solve(xs, ys, eps_of_y, strip_x, strip_y, odd, t=0.0):
    mesh = MeshTri.init_tensor(xs, ys)
    basis = Basis(mesh, ElementTriP2())
    centroid_y = mesh.p[1, mesh.t].mean(axis=0)
    eps_elem = eps_of_y(centroid_y)
    eps = basis.with_element(ElementTriP0()).interpolate(eps_elem)

    @BilinearForm
    def laplace(u, v, w):
        return w.eps * dot(grad(u), grad(v))

    K = asm(laplace, basis, eps=eps)
    x, y = basis.doflocs
    tol = 1e-12 * max(xs[-1], ys[-1])
    box = (np.abs(y) < tol) | (np.abs(y - ys[-1]) < tol) | (np.abs(x - xs[-1]) < tol)
    if odd:
        box |= np.abs(x) < tol
    strip = (y >= strip_y - tol) & (y <= strip_y + t + tol) & (x >= strip_x[0] - tol) & (x <= strip_x[1] + tol)
    phi = np.zeros(basis.N)
    phi[strip] = 1.0
    D = np.flatnonzero(box | strip)
    phi = solve(*condense(K, np.zeros_like(phi), x=phi, D=D))
    return float(phi @ (K @ phi))


def line(w, h, er, s=None, odd=False, cover=0.0, cover_er=1.0, box=100.0, dmin_rel=1e-3, t=0.0):
    """Z and εeff of a zero-thickness strip (s=None) or of one mode of a symmetric pair with edge spacing s.

    `cover` is a dielectric of thickness `cover` and Dk `cover_er` directly above the strip plane (y from h to h+c).
    `t` is the strip thickness (a rectangle of conductor from y = h to h + t; the region beside it is air or cover).
    Returns (z, eps_eff).
    """
    x0 = 0.0 if s is None else s / 2.0
    x1 = x0 + (w / 2.0 if s is None else w)
    big = box * max(h, w, s or 0.0)
    dmin = dmin_rel * min(h, w, s or w)
    xs = _graded([x0, x1] if s is not None else [x1], 0.0, big, dmin, dmax=big / 30)
    ykeys = [h] + ([h + t] if t > 0 else []) + ([h + cover] if cover > 0 else [])
    ys = _graded(ykeys, 0.0, big, dmin, dmax=big / 30)

    def eps(er_sub, er_cov):
        def f(yc):
            out = np.ones_like(yc)
            out[yc < h] = er_sub
            if cover > 0:
                out[(yc > h) & (yc < h + cover)] = er_cov
            return out
        return f

    c = _solve(xs, ys, eps(er, cover_er), (x0, x1), h, odd, t)
    c0 = _solve(xs, ys, eps(1.0, 1.0), (x0, x1), h, odd, t)
    # The half-domain holds one strip (or half of a single strip: double its capacitance).
    scale = 2.0 if s is None else 1.0
    c, c0 = c * scale, c0 * scale
    return ETA0 / np.sqrt(c * c0), c / c0
