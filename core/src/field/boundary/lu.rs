//! Dense LU factorisation with partial pivoting for the boundary-element systems (a few hundred unknowns).
//!
//! Doolittle elimination in place on a row-major matrix, blocked by columns (Golub & Van Loan, "Matrix
//! Computations", 4th ed., 2013, alg. 3.4.1 and §3.2.9). The inner loops are contiguous row updates, which the
//! compiler vectorises on every target, WASM included. No dependency, no threads.

/// Columns per panel of the blocked factorisation.
const BLOCK: usize = 4;

/// An LU factorisation P·A = L·U of a square matrix, stored in place.
pub struct Lu {
    n: usize,
    a: Vec<f64>,
    perm: Vec<usize>,
}

impl Lu {
    /// Factorises the row-major `n`×`n` matrix `a`. `None` when a pivot vanishes (a singular system).
    ///
    /// Blocked by four columns: each panel of four columns is factorised with partial pivoting, then the rows
    /// below are updated by one rank-4 pass (four times fewer sweeps over the trailing matrix, which is what
    /// limits the unblocked loop; the result is the same factorisation up to rounding).
    pub fn new(n: usize, mut a: Vec<f64>) -> Option<Lu> {
        assert_eq!(a.len(), n * n, "matrix size");
        let mut perm: Vec<usize> = (0..n).collect();
        let mut k = 0;
        while k < n {
            let nb = BLOCK.min(n - k);
            let end = k + nb;
            // Panel: columns k..end, all rows from k.
            for kk in k..end {
                let (mut p, mut best) = (kk, a[kk * n + kk].abs());
                for i in kk + 1..n {
                    let v = a[i * n + kk].abs();
                    if v > best {
                        best = v;
                        p = i;
                    }
                }
                if best == 0.0 || !best.is_finite() {
                    return None;
                }
                if p != kk {
                    for j in 0..n {
                        a.swap(kk * n + j, p * n + j);
                    }
                    perm.swap(kk, p);
                }
                let inv = 1.0 / a[kk * n + kk];
                for i in kk + 1..n {
                    let f = a[i * n + kk] * inv;
                    a[i * n + kk] = f;
                    if f != 0.0 {
                        for j in kk + 1..end {
                            a[i * n + j] -= f * a[kk * n + j];
                        }
                    }
                }
            }
            if end < n {
                // U rows of the block right of the panel: forward substitution with the panel's unit lower part.
                for r in k + 1..end {
                    for p in k..r {
                        let l = a[r * n + p];
                        if l != 0.0 {
                            let (top, bottom) = a.split_at_mut(r * n);
                            let src = &top[p * n + end..p * n + n];
                            for (x, &u) in bottom[end..n].iter_mut().zip(src) {
                                *x -= l * u;
                            }
                        }
                    }
                }
                // Trailing rows: one rank-nb update each.
                let (top, rest) = a.split_at_mut(end * n);
                let u: Vec<&[f64]> = (k..end).map(|p| &top[p * n + end..p * n + n]).collect();
                for row in rest.chunks_exact_mut(n) {
                    let (left, right) = row.split_at_mut(end);
                    let l = &left[k..end];
                    match nb {
                        4 => {
                            let (l0, l1, l2, l3) = (l[0], l[1], l[2], l[3]);
                            let m = right.len();
                            let (u0, u1, u2, u3) = (&u[0][..m], &u[1][..m], &u[2][..m], &u[3][..m]);
                            for j in 0..m {
                                right[j] -= l0 * u0[j] + l1 * u1[j] + l2 * u2[j] + l3 * u3[j];
                            }
                        }
                        _ => {
                            for (p, &lp) in l.iter().enumerate() {
                                for (x, &uv) in right.iter_mut().zip(u[p]) {
                                    *x -= lp * uv;
                                }
                            }
                        }
                    }
                }
            }
            k = end;
        }
        Some(Lu { n, a, perm })
    }

    /// Solves A·x = b.
    pub fn solve(&self, b: &[f64]) -> Vec<f64> {
        let n = self.n;
        let mut x: Vec<f64> = self.perm.iter().map(|&p| b[p]).collect();
        for i in 0..n {
            let row = &self.a[i * n..i * n + i];
            let s: f64 = row.iter().zip(&x[..i]).map(|(l, v)| l * v).sum();
            x[i] -= s;
        }
        for i in (0..n).rev() {
            let row = &self.a[i * n + i + 1..(i + 1) * n];
            let s: f64 = row.iter().zip(&x[i + 1..]).map(|(u, v)| u * v).sum();
            x[i] = (x[i] - s) / self.a[i * n + i];
        }
        x
    }

    /// Solves Aᵀ·y = w with the same factors (the adjoint system of a sensitivity): Uᵀ·z = w forward, Lᵀ·u = z
    /// backward, then y = Pᵀ·u.
    pub fn solve_transpose(&self, w: &[f64]) -> Vec<f64> {
        let n = self.n;
        let mut z = w.to_vec();
        for i in 0..n {
            let zi = z[i] / self.a[i * n + i];
            z[i] = zi;
            let row = &self.a[i * n + i + 1..(i + 1) * n];
            for (zj, &u) in z[i + 1..].iter_mut().zip(row) {
                *zj -= u * zi;
            }
        }
        for i in (0..n).rev() {
            let ui = z[i];
            let row = &self.a[i * n..i * n + i];
            for (zj, &l) in z[..i].iter_mut().zip(row) {
                *zj -= l * ui;
            }
        }
        let mut y = vec![0.0; n];
        for (i, &p) in self.perm.iter().enumerate() {
            y[p] = z[i];
        }
        y
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn solves_a_system_that_needs_pivoting() {
        // A zero leading entry forces a row swap; the exact solution is (1, 2, 3).
        let a = vec![0.0, 2.0, 1.0, 1.0, 1.0, 1.0, 4.0, -1.0, 2.0];
        let x_true = [1.0, 2.0, 3.0];
        let b: Vec<f64> = (0..3)
            .map(|i| (0..3).map(|j| a[i * 3 + j] * x_true[j]).sum())
            .collect();
        let x = Lu::new(3, a).unwrap().solve(&b);
        for (g, w) in x.iter().zip(x_true) {
            assert!((g - w).abs() < 1e-14, "{x:?}");
        }
    }

    #[test]
    fn blocked_factorisation_solves_larger_systems() {
        // Sizes that leave every remainder of the 4-column blocking; a diagonally weighted pseudo-random matrix with
        // a known solution (residual check).
        for n in [5, 6, 7, 8, 37] {
            let mut seed = 12345u64;
            let mut rnd = || {
                seed = seed
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                ((seed >> 11) as f64 / (1u64 << 53) as f64) - 0.5
            };
            let a: Vec<f64> = (0..n * n).map(|_| rnd()).collect();
            let x_true: Vec<f64> = (0..n).map(|i| 1.0 + i as f64).collect();
            let b: Vec<f64> = (0..n)
                .map(|i| (0..n).map(|j| a[i * n + j] * x_true[j]).sum())
                .collect();
            let x = Lu::new(n, a).unwrap().solve(&b);
            for (g, w) in x.iter().zip(&x_true) {
                assert!((g - w).abs() < 1e-9 * w, "n {n}: {g} vs {w}");
            }
        }
    }

    #[test]
    fn transposed_solve_inverts_the_transpose() {
        // Aᵀ·y = w on a matrix that pivots (non-identity permutation): check the residual against Aᵀ directly.
        let n = 9;
        let a: Vec<f64> = (0..n * n)
            .map(|k| {
                let (i, j) = (k / n, k % n);
                ((i * 7 + j * 3) % 11) as f64 - 5.0 + if i == (j + 4) % n { 9.0 } else { 0.0 }
            })
            .collect();
        let w: Vec<f64> = (0..n).map(|i| 1.0 + (i * i) as f64).collect();
        let lu = Lu::new(n, a.clone()).unwrap();
        assert!(
            lu.perm.iter().enumerate().any(|(i, &p)| i != p),
            "the case must pivot"
        );
        let y = lu.solve_transpose(&w);
        for j in 0..n {
            let back: f64 = (0..n).map(|i| a[i * n + j] * y[i]).sum();
            assert!(
                (back - w[j]).abs() < 1e-10 * w[j].abs().max(1.0),
                "row {j}: {back} vs {}",
                w[j]
            );
        }
    }

    #[test]
    fn singular_matrix_is_refused() {
        assert!(Lu::new(2, vec![1.0, 2.0, 2.0, 4.0]).is_none());
    }
}
