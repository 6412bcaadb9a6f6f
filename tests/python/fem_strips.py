"""Independent electrostatic solve of strips between two grounded planes with scikit-fem (P2 triangles on a tensor
mesh graded geometrically toward every conductor edge), for the stripline checks in test_stripline_fem.py.

Homogeneous dielectric, so only C/ε matters: Z = η0/(√εr·C/ε). Half domain x ≥ 0 (the cross-sections are symmetric
about x = 0): Neumann there for even symmetry, grounded for odd. Energy method: with unit potentials, C = 2W/V².
Zero-thickness strips are slits (Dirichlet dofs on a grid line); thick strips are holes.
"""
import numpy as np
from skfem import Basis, ElementTriP2, MeshTri, asm, condense, solve
from skfem.models.poisson import laplace


def graded(points, lo, hi, h_min, growth=1.25, h_max=None):
    """Coordinates from lo to hi containing `points`, spaced h_min at each point and growing geometrically."""
    pts = sorted(set([lo, hi, *points]))
    h_max = h_max or (hi - lo) / 20
    out = [lo]
    for a, b in zip(pts[:-1], pts[1:]):
        # Grow from both ends of [a, b] toward the middle.
        left, right = [a], [b]
        h = h_min
        while left[-1] + h < right[-1] - h:
            left.append(left[-1] + h)
            if left[-1] + h < right[-1] - h:
                right.append(right[-1] - h)
            h = min(h * growth, h_max)
        seg = left + right[::-1]
        out.extend(seg[1:])
    return np.array(sorted(set(np.round(out, 15))))


def capacitance(b, strips, mode_signs, x_wall="neumann", refine=1.0):
    """C/ε of the whole cross-section for the excitation `mode_signs` (one potential per strip).

    strips: list of (x0, x1, y0, y1) rectangles with x0 ≥ 0 (y0 == y1 for a zero-thickness strip); the mirror
    images at x < 0 are implied by the symmetry at x = 0 (`x_wall` "neumann" or "ground").
    Returns 2·(energy of the half domain)·2 / 1 = the full-section Σ Q·V (= C for one unit-potential line).
    """
    xs = [0.0]
    ys = [0.0, b]
    for x0, x1, y0, y1 in strips:
        xs += [x0, x1]
        ys += [y0, y1]
    h_min = 2e-4 * b / refine
    x_far = max(s[1] for s in strips) + 12 * b
    x = graded([p for p in xs if p > 0], 0.0, x_far, h_min, h_max=0.05 * b / refine)
    y = graded(ys[2:], 0.0, b, h_min, h_max=0.03 * b / refine)
    mesh = MeshTri.init_tensor(x, y)
    centroids = mesh.p[:, mesh.t].mean(axis=1)
    inside = np.zeros(mesh.t.shape[1], dtype=bool)
    for x0, x1, y0, y1 in strips:
        if y1 > y0:
            inside |= (centroids[0] > x0) & (centroids[0] < x1) & (centroids[1] > y0) & (centroids[1] < y1)
    if inside.any():
        mesh = mesh.remove_elements(np.nonzero(inside)[0])
    basis = Basis(mesh, ElementTriP2())
    K = asm(laplace, basis)
    loc = basis.doflocs
    tol = 1e-12 * b
    u = np.zeros(basis.N)
    fixed = (np.abs(loc[1]) < tol) | (np.abs(loc[1] - b) < tol) | (np.abs(loc[0] - x_far) < tol)
    if x_wall == "ground":
        fixed |= np.abs(loc[0]) < tol
    for (x0, x1, y0, y1), v in zip(strips, mode_signs):
        on = (loc[0] >= x0 - tol) & (loc[0] <= x1 + tol) & (loc[1] >= y0 - tol) & (loc[1] <= y1 + tol)
        u[on] = v
        fixed |= on
    u = solve(*condense(K, np.zeros(basis.N), x=u, D=np.nonzero(fixed)[0]))
    # Half-domain energy ×2 for the mirror half; C_total·V² = 2·W_total = u·K·u (full) = 2·u·K·u (half).
    return 2.0 * float(u @ (K @ u))
