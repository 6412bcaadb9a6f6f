//! The seeded random stream of the Monte Carlo spread: reproducible on every platform, no clocks, no entropy
//! source, from well-kept crates.
//!
//! xoshiro256** (D. Blackman and S. Vigna, "Scrambled linear pseudorandom number generators", ACM Trans. Math.
//! Softw. 47(4), 2021) from `rand_xoshiro`, seeded through SplitMix64 as its authors recommend (the crate's
//! `seed_from_u64`); normal deviates from `rand_distr::StandardNormal` (a ziggurat); uniform deviates on [0, 1)
//! from `rand_distr::StandardUniform`. The tests below and the Kolmogorov–Smirnov and Anderson–Darling checks in
//! tests/python/test_spread.py hold the stream to the exact distributions.

use rand_distr::{Distribution, StandardNormal, StandardUniform};
use rand_xoshiro::rand_core::{Rng as _, SeedableRng};
use rand_xoshiro::{SplitMix64, Xoshiro256StarStar};

/// A seeded generator of uniform and standard normal deviates.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Rng {
    inner: Xoshiro256StarStar,
}

impl Rng {
    /// A generator whose whole stream is fixed by `seed`.
    pub fn new(seed: u64) -> Rng {
        Rng {
            inner: Xoshiro256StarStar::seed_from_u64(seed),
        }
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.inner.next_u64()
    }

    /// Uniform on [0, 1).
    pub fn uniform(&mut self) -> f64 {
        StandardUniform.sample(&mut self.inner)
    }

    /// Uniform on (−1, 1).
    pub fn symmetric(&mut self) -> f64 {
        2.0 * self.uniform() - 1.0
    }

    /// A standard normal deviate (mean 0, σ 1).
    pub fn normal(&mut self) -> f64 {
        StandardNormal.sample(&mut self.inner)
    }
}

/// Mixes `value` into a new 64-bit seed (one SplitMix64 output), so that nearby seeds give unrelated streams.
pub fn mix(value: u64) -> u64 {
    SplitMix64::seed_from_u64(value).next_u64()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn uniform_moments_match_the_exact_ones() {
        // Exact: U(0,1) has mean 1/2 and variance 1/12; with n = 200 000 the standard errors are 6.5e-4 and 1.9e-4.
        let mut r = Rng::new(7);
        let n = 200_000;
        let xs: Vec<f64> = (0..n).map(|_| r.uniform()).collect();
        let mean = xs.iter().sum::<f64>() / n as f64;
        let var = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
        assert!((mean - 0.5).abs() < 4.0 * 6.5e-4, "mean {mean}");
        assert!((var - 1.0 / 12.0).abs() < 4.0 * 1.9e-4, "var {var}");
        assert!(xs.iter().all(|&x| (0.0..1.0).contains(&x)));
    }

    #[test]
    fn normal_far_tails_match_the_table() {
        // P(|z| > 3) = 0.0026998 (standard normal table); beyond the ziggurat's base layer (about 3.44) only its
        // tail branch produces samples, so |z| > 3.5 checks that branch.
        let n = 400_000;
        let mut r = Rng::new(13);
        let zig = (0..n).filter(|_| r.normal().abs() > 3.0).count() as f64 / n as f64;
        let se = (0.0027f64 * (1.0 - 0.0027) / n as f64).sqrt();
        assert!((zig - 0.0026998).abs() < 4.0 * se, "P(|z| > 3) = {zig}");
        // P(|z| > 3.5) = 4.6525e-4 (table).
        let mut r = Rng::new(14);
        let far = (0..n).filter(|_| r.normal().abs() > 3.5).count() as f64 / n as f64;
        let se = (4.6525e-4f64 / n as f64).sqrt();
        assert!((far - 4.6525e-4).abs() < 4.0 * se, "tail {far}");
    }

    #[test]
    fn normal_moments_and_tails_match_the_exact_ones() {
        // Exact: N(0,1) has mean 0, variance 1, kurtosis 3, and P(|z| > 1.959964) = 0.05 (standard normal table).
        let mut r = Rng::new(11);
        let n = 200_000;
        let xs: Vec<f64> = (0..n).map(|_| r.normal()).collect();
        let mean = xs.iter().sum::<f64>() / n as f64;
        let var = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n as f64;
        let kurt = xs.iter().map(|x| (x - mean).powi(4)).sum::<f64>() / n as f64 / var / var;
        let tail = xs.iter().filter(|x| x.abs() > 1.959964).count() as f64 / n as f64;
        assert!(mean.abs() < 4.0 * (1.0 / n as f64).sqrt(), "mean {mean}");
        assert!(
            (var - 1.0).abs() < 4.0 * (2.0 / n as f64).sqrt(),
            "var {var}"
        );
        assert!(
            (kurt - 3.0).abs() < 4.0 * (24.0 / n as f64).sqrt(),
            "kurtosis {kurt}"
        );
        assert!(
            (tail - 0.05).abs() < 4.0 * (0.05 * 0.95 / n as f64).sqrt(),
            "tail {tail}"
        );
    }

    #[test]
    fn same_seed_same_stream_other_seed_other_stream() {
        let a: Vec<u64> = {
            let mut r = Rng::new(42);
            (0..8).map(|_| r.next_u64()).collect()
        };
        let b: Vec<u64> = {
            let mut r = Rng::new(42);
            (0..8).map(|_| r.next_u64()).collect()
        };
        let c: Vec<u64> = {
            let mut r = Rng::new(43);
            (0..8).map(|_| r.next_u64()).collect()
        };
        assert_eq!(a, b);
        assert_ne!(a, c);
    }
}
