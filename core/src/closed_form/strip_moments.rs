//! Zero-thickness strips between two parallel ground planes in one homogeneous dielectric, solved by the method
//! of moments: the capacitance matrix of any few strips at any heights and offsets, "exact" up to a
//! discretisation error that converges spectrally (we hold it below 1e-9 relative on the checks in the tests).
//!
//! Method: R. F. Harrington, "Field Computation by Moment Methods", Macmillan, 1968 (Galerkin moment method),
//! with the exact Green's function of a line charge between grounded planes y = 0 and y = b, from the map
//! ζ = exp(πz/b) onto a half plane and its image (exact):
//! G·ε = (1/4π)·ln{[sinh²Δ + sin²((θ+θ′)/2)] / [sinh²Δ + sin²((θ−θ′)/2)]}, Δ = π(x − x′)/2b, θ = πy/b.
//! The charge on each strip is expanded as Σ aₙ·Tₙ(u)/√(1 − u²) (Chebyshev, with the exact edge singularity of a
//! thin strip), tested with the same functions; the logarithmic singularity of the self terms is integrated
//! analytically (∫ ln|u − u′|·Tₙ(u′)/√(1 − u′²) du′ = −π·ln2 for n = 0, −(π/n)·Tₙ(u) otherwise: classical, from
//! memory) and the smooth rest by Gauss–Chebyshev quadrature.
//!
//! Checked against: Cohn 1954 (one centred strip) and Cohn 1955 (edge-coupled pair), both exact, to 1e-9;
//! the thin-wire image result for narrow strips; see the tests at the bottom.

use crate::base::error::{Error, Result};
use std::f64::consts::{LN_2, PI};

/// One zero-thickness strip: centre `x`, width `w`, height `y` above the lower plane (0 < y < b), m.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Strip {
    pub x: f64,
    pub w: f64,
    pub y: f64,
}

/// Chebyshev terms per strip.
pub const N_BASIS: usize = 16;
/// Upper limit of quadrature nodes per strip (the count adapts to how close a strip is to a plane or to
/// another strip); it bounds the work of one solve to a few million kernel evaluations.
pub const MAX_NODES: usize = 800;

/// The smooth part of the log kernel between strips `si` and `sj` (the same strip when `same`), per pair of
/// abscissae.
struct Kernel {
    same: bool,
    sp: f64,
    sm: f64,
    scale: f64,
    ln_alpha: f64,
    half_w: f64,
}

impl Kernel {
    fn new(b: f64, si: &Strip, sj: &Strip, same: bool) -> Kernel {
        let ti = PI * si.y / b;
        let tj = PI * sj.y / b;
        // The plane images enter only through these two constants per pair of strips.
        Kernel {
            same,
            sp: (0.5 * (ti + tj)).sin().powi(2),
            sm: (0.5 * (ti - tj)).sin().powi(2),
            scale: PI / (2.0 * b),
            ln_alpha: (PI * si.w / (4.0 * b)).ln(),
            half_w: 0.5 * si.w,
        }
    }

    /// The kernel at abscissae `x`, `xp` (m); even in x − x′.
    fn at(&self, x: f64, xp: f64) -> f64 {
        let d = self.scale * (x - xp);
        if self.same {
            // ln(sinh²Δ + sin²θ) − 2·ln|sinh Δ| + 2·ln|u − u′|; the −2·ln|u − u′| is integrated analytically.
            if d.abs() < 1.0 {
                let sh = d.sinh();
                let sinhc = if d == 0.0 { 1.0 } else { sh / d };
                (sh * sh + self.sp).ln() - 2.0 * sinhc.ln() - 2.0 * self.ln_alpha
            } else {
                let du = (x - xp).abs() / self.half_w;
                (self.sp / d.sinh().powi(2)).ln_1p() + 2.0 * du.ln()
            }
        } else if d.abs() < 300.0 {
            let sh = d.sinh().powi(2);
            ((self.sp - self.sm) / (sh + self.sm)).ln_1p()
        } else {
            0.0
        }
    }
}

/// The kernel between strips `si` and `sj` at the node abscissae `xi`, `xj` (m), into `out` (row-major,
/// `xi.len()` × `xj.len()`).
fn kernel_block(
    b: f64,
    si: &Strip,
    xi: &[f64],
    sj: &Strip,
    xj: &[f64],
    same: bool,
    out: &mut [f64],
) {
    let kernel = Kernel::new(b, si, sj, same);
    let n = xj.len();
    for (k, &x) in xi.iter().enumerate() {
        for (l, &xp) in xj.iter().enumerate() {
            out[k * n + l] = kernel.at(x, xp);
        }
    }
}

/// Σ_k Σ_l T_p(u_k)·K(k, l)·T_n(u_l) of the kernel between two strips of the same centre and width (a strip with
/// itself, or the two strips of a broadside pair) into `out` (`n_basis` × `n_basis`, row p), by their mirror
/// symmetry: the nodes come in pairs u, −u, T_n(−u) = (−1)ⁿ·T_n(u), and the kernel depends on |x − x′| only, so
/// K(m−1−k, m−1−l) = K(k, l). Entries with p + n odd vanish exactly, and the rest need the kernel's rows k < m/2
/// only, folded over l: a quarter of the products of the plain double sum, with the same value to rounding.
#[allow(clippy::too_many_arguments)]
fn mirror_block(
    b: f64,
    s: &Strip,
    t: &Strip,
    same: bool,
    xs: &[f64],
    cheb_flat: &[f64],
    n_basis: usize,
    kmat: &mut [f64],
    out: &mut [f64],
) {
    let m = xs.len();
    let pairs = m / 2;
    // The rows k ≤ the middle node (when m is odd) of the kernel, each over every l.
    let rows = m - pairs;
    // The kernel's rows k < `rows`, each over every l. It is symmetric, K(k, l) = K(l, k), on the left half
    // (l < `rows`), and K(k, m−1−l) = K(l, m−1−k) on the right (both k, l < m/2; u_(m−1−l) = −u_l): each half is
    // evaluated on and above its diagonal and mirrored, a quarter of the m² kernel values in all.
    let kernel = Kernel::new(b, s, t, same);
    for k in 0..rows {
        for l in k..rows {
            let v = kernel.at(xs[k], xs[l]);
            kmat[k * m + l] = v;
            kmat[l * m + k] = v;
        }
        let from = if k < pairs { k } else { 0 };
        for l in from..pairs {
            let v = kernel.at(xs[k], xs[m - 1 - l]);
            kmat[k * m + m - 1 - l] = v;
            if k < pairs {
                kmat[l * m + m - 1 - k] = v;
            }
        }
    }
    // half[k][n] = Σ_l K(k, l)·T_n(u_l), folded: (K(k, l) ± K(k, m−1−l))·T_n(u_l) over l < m/2, + for n even, − for
    // n odd, plus the middle node of an odd m.
    let mut half = vec![0.0; rows * n_basis];
    for k in 0..rows {
        let krow = &kmat[k * m..(k + 1) * m];
        let hrow = &mut half[k * n_basis..(k + 1) * n_basis];
        for l in 0..pairs {
            let (a, c) = (krow[l], krow[m - 1 - l]);
            let (sum, diff) = (a + c, a - c);
            let crow = &cheb_flat[l * n_basis..(l + 1) * n_basis];
            for (n, (h, &t)) in hrow.iter_mut().zip(crow).enumerate() {
                *h += if n % 2 == 0 { sum } else { diff } * t;
            }
        }
        if rows > pairs {
            let crow = &cheb_flat[pairs * n_basis..(pairs + 1) * n_basis];
            for (h, &t) in hrow.iter_mut().zip(crow) {
                *h += krow[pairs] * t;
            }
        }
    }
    // out[p][n] = Σ_k T_p(u_k)·half[k][n] over all k = 2·Σ_{k < m/2} (p + n even) + the middle row of an odd m.
    out.iter_mut().for_each(|v| *v = 0.0);
    for k in 0..rows {
        let factor = if k < pairs { 2.0 } else { 1.0 };
        let hrow = &half[k * n_basis..(k + 1) * n_basis];
        let crow = &cheb_flat[k * n_basis..(k + 1) * n_basis];
        for (p, &tp) in crow.iter().enumerate() {
            let orow = &mut out[p * n_basis..(p + 1) * n_basis];
            for n in (p % 2..n_basis).step_by(2) {
                orow[n] += factor * tp * hrow[n];
            }
        }
    }
}

/// The smallest distance from a strip to a plane or to another strip, over that strip's width.
fn closeness(b: f64, strips: &[Strip]) -> f64 {
    let mut scale = f64::INFINITY;
    for (i, s) in strips.iter().enumerate() {
        scale = scale.min(s.y.min(b - s.y) / s.w);
        for t in &strips[i + 1..] {
            let gap_y = (s.y - t.y).abs();
            let gap_x = ((s.x - t.x).abs() - 0.5 * (s.w + t.w)).max(0.0);
            scale = scale.min(gap_y.hypot(gap_x) / s.w.max(t.w));
        }
    }
    scale
}

/// Widths up to this many times the nearest distance (to a plane or a neighbour) are resolved to 1e-9 by
/// [`capacitance`]; beyond it the node cap is reached and the result degrades.
pub const MAX_WIDTH_OVER_GAP: f64 = MAX_NODES as f64 / DEFAULT_RESOLUTION;
const DEFAULT_RESOLUTION: f64 = 8.0;

/// Whether [`capacitance`] resolves `strips` fully (see [`MAX_WIDTH_OVER_GAP`]).
pub fn resolvable(b: f64, strips: &[Strip]) -> bool {
    closeness(b, strips) * MAX_WIDTH_OVER_GAP >= 1.0
}

/// Capacitance matrix C/ε (dimensionless, per unit length) of `strips` between planes `b` apart.
pub fn capacitance(b: f64, strips: &[Strip]) -> Result<Vec<Vec<f64>>> {
    capacitance_resolved(b, strips, DEFAULT_RESOLUTION, N_BASIS)
}

/// [`capacitance`] with 40 Chebyshev terms per strip: a reference for wide strips (many plane spacings wide),
/// whose flat middle and edge layers 16 terms resolve to only about 1e-7.
#[cfg(test)]
pub(crate) fn capacitance_reference(b: f64, strips: &[Strip]) -> Result<Vec<Vec<f64>>> {
    capacitance_resolved(b, strips, DEFAULT_RESOLUTION, 40)
}

/// [`capacitance`] with `resolution` quadrature nodes per unit of (strip width / nearest distance) and `n_basis`
/// Chebyshev terms per strip.
fn capacitance_resolved(
    b: f64,
    strips: &[Strip],
    resolution: f64,
    n_basis: usize,
) -> Result<Vec<Vec<f64>>> {
    let n_s = strips.len();
    for s in strips {
        if !(s.w > 0.0 && s.y > 0.0 && s.y < b && s.x.is_finite()) {
            return Err(Error::Invalid {
                field: "strips".into(),
                reason: "a strip must lie strictly between the planes with positive width".into(),
            });
        }
    }
    // Resolution: the smooth kernels vary on the scale of the nearest plane or neighbouring strip.
    let scale = closeness(b, strips);
    let m = ((resolution / scale.max(1e-9)).ceil() as usize).clamp(4 * n_basis, MAX_NODES);
    let nodes: Vec<f64> = (0..m)
        .map(|k| ((2 * k + 1) as f64 * PI / (2 * m) as f64).cos())
        .collect();
    let weight = PI / m as f64;
    // Chebyshev values at the nodes: T_n(cos φ) = cos(nφ).
    let cheb: Vec<Vec<f64>> = (0..m)
        .map(|k| {
            let phi = (2 * k + 1) as f64 * PI / (2 * m) as f64;
            (0..n_basis).map(|n| (n as f64 * phi).cos()).collect()
        })
        .collect();
    let dim = n_s * n_basis;
    let mut a = vec![vec![0.0; dim]; dim];
    let xs: Vec<Vec<f64>> = strips
        .iter()
        .map(|s| nodes.iter().map(|&u| s.x + 0.5 * s.w * u).collect())
        .collect();
    // cheb_flat[l·N + n] = T_n(v_l).
    let cheb_flat: Vec<f64> = cheb.iter().flatten().copied().collect();
    let mut kmat = vec![0.0; m * m];
    let mut half = vec![0.0; m * n_basis];
    for (i, si) in strips.iter().enumerate() {
        for (j, sj) in strips.iter().enumerate() {
            if j < i {
                // The kernel is symmetric between strips (K_ij(x, x′) = K_ji(x′, x)), so A_ij is A_ji transposed.
                for r in 0..n_basis {
                    for c in 0..n_basis {
                        a[i * n_basis + r][j * n_basis + c] = a[j * n_basis + c][i * n_basis + r];
                    }
                }
                continue;
            }
            let same = i == j;
            if same || (si.x == sj.x && si.w == sj.w) {
                mirror_block(
                    b, si, sj, same, &xs[i], &cheb_flat, n_basis, &mut kmat, &mut half,
                );
                for (mm, row) in half[..n_basis * n_basis].chunks_exact(n_basis).enumerate() {
                    let arow = &mut a[i * n_basis + mm][j * n_basis..(j + 1) * n_basis];
                    for (av, &hv) in arow.iter_mut().zip(row) {
                        *av += weight * weight * hv;
                    }
                }
            } else {
                kernel_block(b, si, &xs[i], sj, &xs[j], false, &mut kmat);
                // half[k][n] = Σ_l w·K(k, l)·T_n(v_l); then A[m][n] = Σ_k w·T_m(u_k)·half[k][n].
                half.iter_mut().for_each(|h| *h = 0.0);
                for k in 0..m {
                    let hrow = &mut half[k * n_basis..(k + 1) * n_basis];
                    for (l, &kv) in kmat[k * m..(k + 1) * m].iter().enumerate() {
                        let crow = &cheb_flat[l * n_basis..(l + 1) * n_basis];
                        for (h, &c) in hrow.iter_mut().zip(crow) {
                            *h += kv * c;
                        }
                    }
                }
                for k in 0..m {
                    let hrow = &half[k * n_basis..(k + 1) * n_basis];
                    let crow = &cheb_flat[k * n_basis..(k + 1) * n_basis];
                    for (mm, &cm) in crow.iter().enumerate() {
                        let arow = &mut a[i * n_basis + mm][j * n_basis..(j + 1) * n_basis];
                        for (av, &hv) in arow.iter_mut().zip(hrow) {
                            *av += weight * weight * cm * hv;
                        }
                    }
                }
            }
            if same {
                // −2·∫∫ ln|u − u′| Tm Tn /√·√ = 2π²·ln2 (m = n = 0), π²/n (m = n ≥ 1).
                a[i * n_basis][j * n_basis] += 2.0 * PI * PI * LN_2;
                for n in 1..n_basis {
                    a[i * n_basis + n][j * n_basis + n] += PI * PI / n as f64;
                }
            }
        }
    }
    // (1/4π)·A·c = π·V·δ(m,0) for each unit excitation; C_ij/ε = π·c_(i,0).
    let mut c = vec![vec![0.0; n_s]; n_s];
    for j in 0..n_s {
        let mut rhs = vec![0.0; dim];
        rhs[j * n_basis] = 4.0 * PI * PI;
        let x = solve_dense(a.clone(), rhs)?;
        for i in 0..n_s {
            c[i][j] = PI * x[i * n_basis];
        }
    }
    Ok(c)
}

/// Gaussian elimination with partial pivoting (the systems are small and well conditioned).
fn solve_dense(mut a: Vec<Vec<f64>>, mut rhs: Vec<f64>) -> Result<Vec<f64>> {
    let n = rhs.len();
    for col in 0..n {
        let piv = (col..n)
            .max_by(|&p, &q| a[p][col].abs().total_cmp(&a[q][col].abs()))
            .unwrap_or(col);
        if a[piv][col] == 0.0 || !a[piv][col].is_finite() {
            return Err(Error::NotConverged {
                what: "strip moment solve".into(),
                iterations: col,
                residual: f64::NAN,
            });
        }
        a.swap(col, piv);
        rhs.swap(col, piv);
        let (top, rest) = a.split_at_mut(col + 1);
        let pivot_row = &top[col];
        for (r, row) in rest.iter_mut().enumerate() {
            let f = row[col] / pivot_row[col];
            if f != 0.0 {
                for (x, &p) in row[col..].iter_mut().zip(&pivot_row[col..]) {
                    *x -= f * p;
                }
                rhs[col + 1 + r] -= f * rhs[col];
            }
        }
    }
    let mut x = vec![0.0; n];
    for r in (0..n).rev() {
        let mut acc = rhs[r];
        for cc in r + 1..n {
            acc -= a[r][cc] * x[cc];
        }
        x[r] = acc / a[r][r];
    }
    Ok(x)
}

/// Odd- and even-mode impedances (Ω, for εr = 1; divide by √εr) of two strips from their capacitance matrix:
/// Z = η0·(C/ε)⁻¹, Zodd = (Z11 + Z22 − 2·Z12)/2 and Zeven = (Z11 + Z22 + 2·Z12)/2, which are the usual modes for
/// identical lines and give Zdiff = 2·Zodd and Zcommon = Zeven/2 for unequal ones.
pub fn pair_modes(c: &[Vec<f64>]) -> (f64, f64) {
    let det = c[0][0] * c[1][1] - c[0][1] * c[1][0];
    let (p11, p22, p12) = (
        c[1][1] / det,
        c[0][0] / det,
        -0.5 * (c[0][1] + c[1][0]) / det,
    );
    let eta = crate::base::units::ETA0;
    (
        eta * (p11 + p22 + 2.0 * p12) / 2.0,
        eta * (p11 + p22 - 2.0 * p12) / 2.0,
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::base::units::ETA0;
    use crate::closed_form::coupled_stripline::edge_zero_thickness;
    use crate::closed_form::stripline::z0_zero_thickness;

    fn rel(a: f64, b: f64) -> f64 {
        (a - b).abs() / b.abs()
    }

    #[test]
    fn one_centred_strip_is_cohn_1954() {
        for &u in &[0.05, 0.3, 1.0, 3.0] {
            let c = capacitance(
                1.0,
                &[Strip {
                    x: 0.0,
                    w: u,
                    y: 0.5,
                }],
            )
            .unwrap();
            let z = ETA0 / c[0][0];
            let exact = z0_zero_thickness(u, 1.0, 1.0);
            assert!(rel(z, exact) < 1e-9, "u={u}: {z} vs {exact}");
        }
    }

    #[test]
    fn doubling_the_quadrature_changes_nothing() {
        // Self-convergence on hard cases: a wide strip close to one plane, an offset coplanar pair, a tight
        // broadside pair with unequal heights.
        let cases: [(f64, Vec<Strip>); 3] = [
            (
                1.0,
                vec![Strip {
                    x: 0.0,
                    w: 2.0,
                    y: 0.1,
                }],
            ),
            (
                1.0,
                vec![
                    Strip {
                        x: -0.3,
                        w: 0.4,
                        y: 0.3,
                    },
                    Strip {
                        x: 0.3,
                        w: 0.4,
                        y: 0.3,
                    },
                ],
            ),
            (
                1.0,
                vec![
                    Strip {
                        x: 0.0,
                        w: 0.8,
                        y: 0.3,
                    },
                    Strip {
                        x: 0.0,
                        w: 0.8,
                        y: 0.4,
                    },
                ],
            ),
        ];
        for (b, strips) in &cases {
            let a = capacitance_resolved(*b, strips, 8.0, N_BASIS).unwrap();
            let c = capacitance_resolved(*b, strips, 32.0, N_BASIS).unwrap();
            for i in 0..strips.len() {
                for j in 0..strips.len() {
                    assert!(rel(a[i][j], c[i][j]) < 1e-9, "{strips:?}: {a:?} vs {c:?}");
                }
            }
        }
    }

    #[test]
    fn a_folded_mirror_block_is_the_plain_double_sum() {
        // Reference: the unfolded Σ_k Σ_l T_p(u_k)·K(k, l)·T_n(u_l) over every node, for an even and an odd node
        // count (the odd one has a middle node at u = 0), for a strip with itself and with its broadside partner.
        let s = Strip {
            x: 0.2,
            w: 0.7,
            y: 0.3,
        };
        let above = Strip { y: 0.55, ..s };
        let nb = 6;
        for (m, t, same) in [
            (64usize, s, true),
            (65, s, true),
            (64, above, false),
            (65, above, false),
        ] {
            let phi = |k: usize| (2 * k + 1) as f64 * PI / (2 * m) as f64;
            let xs: Vec<f64> = (0..m).map(|k| s.x + 0.5 * s.w * phi(k).cos()).collect();
            let cheb: Vec<f64> = (0..m)
                .flat_map(|k| (0..nb).map(move |n| (n as f64 * phi(k)).cos()))
                .collect();
            let mut full = vec![0.0; m * m];
            kernel_block(1.0, &s, &xs, &t, &xs, same, &mut full);
            let mut kmat = vec![0.0; m * m];
            let mut folded = vec![0.0; nb * nb];
            mirror_block(1.0, &s, &t, same, &xs, &cheb, nb, &mut kmat, &mut folded);
            for p in 0..nb {
                for n in 0..nb {
                    let plain: f64 = (0..m)
                        .flat_map(|k| (0..m).map(move |l| (k, l)))
                        .map(|(k, l)| cheb[k * nb + p] * full[k * m + l] * cheb[l * nb + n])
                        .sum();
                    let got = folded[p * nb + n];
                    assert!(
                        (got - plain).abs() < 1e-11 * (1.0 + plain.abs()),
                        "m {m}, same {same} ({p}, {n}): {got} vs {plain}"
                    );
                }
            }
        }
    }

    #[test]
    fn coplanar_pair_is_cohn_1955() {
        for &(u, v) in &[(0.2, 0.1), (0.5, 0.5), (1.0, 0.2)] {
            let strips = [
                Strip {
                    x: -(u + v) / 2.0,
                    w: u,
                    y: 0.5,
                },
                Strip {
                    x: (u + v) / 2.0,
                    w: u,
                    y: 0.5,
                },
            ];
            let c = capacitance(1.0, &strips).unwrap();
            let (ze, zo) = pair_modes(&c);
            let (e, o) = edge_zero_thickness(u, v, 1.0, 1.0);
            assert!(
                rel(ze, e) < 1e-9 && rel(zo, o) < 1e-9,
                "{u} {v}: {ze} {e} {zo} {o}"
            );
        }
    }
}
