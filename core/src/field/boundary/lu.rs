//! Dense LU factorisation with partial pivoting for the boundary-element systems (a few hundred unknowns).
//!
//! Doolittle elimination in place on a row-major matrix (Golub & Van Loan, "Matrix Computations", 4th ed., 2013,
//! alg. 3.4.1). The inner loop is a contiguous row update (`axpy`), which the compiler vectorises on every target,
//! WASM included. No dependency, no threads.

/// An LU factorisation P·A = L·U of a square matrix, stored in place.
pub struct Lu {
    n: usize,
    a: Vec<f64>,
    perm: Vec<usize>,
}

impl Lu {
    /// Factorises the row-major `n`×`n` matrix `a`. `None` when a pivot vanishes (a singular system).
    pub fn new(n: usize, mut a: Vec<f64>) -> Option<Lu> {
        assert_eq!(a.len(), n * n, "matrix size");
        let mut perm: Vec<usize> = (0..n).collect();
        for k in 0..n {
            let (mut p, mut best) = (k, a[k * n + k].abs());
            for i in k + 1..n {
                let v = a[i * n + k].abs();
                if v > best {
                    best = v;
                    p = i;
                }
            }
            if best == 0.0 || !best.is_finite() {
                return None;
            }
            if p != k {
                for j in 0..n {
                    a.swap(k * n + j, p * n + j);
                }
                perm.swap(k, p);
            }
            let (top, rest) = a.split_at_mut((k + 1) * n);
            let pivot_row = &top[k * n..(k + 1) * n];
            let inv = 1.0 / pivot_row[k];
            for row in rest.chunks_exact_mut(n) {
                let f = row[k] * inv;
                row[k] = f;
                if f != 0.0 {
                    for (x, &u) in row[k + 1..].iter_mut().zip(&pivot_row[k + 1..]) {
                        *x -= f * u;
                    }
                }
            }
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
    fn singular_matrix_is_refused() {
        assert!(Lu::new(2, vec![1.0, 2.0, 2.0, 4.0]).is_none());
    }
}
