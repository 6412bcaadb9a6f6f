//! Results shared by every structure family: one quasi-TEM mode for a single line, two (odd and even) for a pair,
//! and the per-length quantities that follow from impedance and effective permittivity alone.

use crate::base::units::C0;
use crate::base::validity::Warning;
use serde::{Deserialize, Serialize};

/// Quasi-static analysis of one line: characteristic impedance and effective relative permittivity.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SingleLine {
    /// Characteristic impedance, Ω.
    pub z0: f64,
    /// Effective relative permittivity of the quasi-TEM mode.
    pub eps_eff: f64,
    /// Validity notes (inputs outside the model's published fit).
    pub warnings: Vec<Warning>,
}

impl SingleLine {
    /// Phase velocity c/√εeff, m/s.
    pub fn velocity(&self) -> f64 {
        C0 / self.eps_eff.sqrt()
    }
    /// Propagation delay per metre, s/m.
    pub fn delay_per_m(&self) -> f64 {
        self.eps_eff.sqrt() / C0
    }
    /// Inductance per metre, H/m: L = Z0·√εeff / c (lossless quasi-TEM line).
    pub fn inductance_per_m(&self) -> f64 {
        self.z0 * self.eps_eff.sqrt() / C0
    }
    /// Capacitance per metre, F/m: C = √εeff / (Z0·c).
    pub fn capacitance_per_m(&self) -> f64 {
        self.eps_eff.sqrt() / (self.z0 * C0)
    }
}

/// Quasi-static analysis of a symmetric coupled pair by its odd and even modes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CoupledPair {
    /// Odd-mode impedance (one line against ground with the pair driven differentially), Ω.
    pub z_odd: f64,
    /// Even-mode impedance, Ω.
    pub z_even: f64,
    pub eps_eff_odd: f64,
    pub eps_eff_even: f64,
    pub warnings: Vec<Warning>,
}

impl CoupledPair {
    /// Differential impedance Zdiff = 2·Zodd, Ω.
    pub fn z_diff(&self) -> f64 {
        2.0 * self.z_odd
    }
    /// Common-mode impedance Zcommon = Zeven/2, Ω.
    pub fn z_common(&self) -> f64 {
        self.z_even / 2.0
    }
    /// The odd mode seen as one line (for delay and loss of the differential signal).
    pub fn odd(&self) -> SingleLine {
        SingleLine {
            z0: self.z_odd,
            eps_eff: self.eps_eff_odd,
            warnings: Vec::new(),
        }
    }
    /// The even mode seen as one line.
    pub fn even(&self) -> SingleLine {
        SingleLine {
            z0: self.z_even,
            eps_eff: self.eps_eff_even,
            warnings: Vec::new(),
        }
    }
    /// The 2×2 inductance and capacitance matrices per metre of the symmetric pair, from its two modes:
    /// L11 = (Le+Lo)/2, L12 = (Le−Lo)/2, C11 = (Ce+Co)/2, C12 = −(Ce−Co)/2 … with the mode quantities per line.
    pub fn matrices(&self) -> ([[f64; 2]; 2], [[f64; 2]; 2]) {
        let (o, e) = (self.odd(), self.even());
        let (lo, le) = (o.inductance_per_m(), e.inductance_per_m());
        let (co, ce) = (o.capacitance_per_m(), e.capacitance_per_m());
        let l11 = (le + lo) / 2.0;
        let l12 = (le - lo) / 2.0;
        let c11 = (ce + co) / 2.0;
        let c12 = (ce - co) / 2.0;
        ([[l11, l12], [l12, l11]], [[c11, c12], [c12, c11]])
    }
}

/// Reflection coefficient Γ = (Z − Zt)/(Z + Zt) of a line of impedance `z` against the target `z_target`.
pub fn reflection(z: f64, z_target: f64) -> f64 {
    (z - z_target) / (z + z_target)
}

/// Return loss −20·log10|Γ| in dB, at most [`MAX_RETURN_LOSS_DB`]: an exact match (Γ = 0, which synthesis can
/// hit to the last bit) would be +∞, which JSON cannot hold (serde_json writes `null`; found by the plan property
/// test in tests/properties.rs).
pub fn return_loss_db(gamma: f64) -> f64 {
    -20.0 * gamma.abs().max(1e-15).log10()
}

/// The largest return loss reported, dB (|Γ| = 1e-15, about the f64 resolution of Γ near a match).
pub const MAX_RETURN_LOSS_DB: f64 = 300.0;

/// The outcome of one model evaluation.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "modes", rename_all = "snake_case")]
pub enum Analysis {
    Single(SingleLine),
    Pair(CoupledPair),
}

impl Analysis {
    /// The controlled impedance: Z0 for a single line, Zdiff for a pair.
    pub fn controlled(&self) -> f64 {
        match self {
            Analysis::Single(s) => s.z0,
            Analysis::Pair(p) => p.z_diff(),
        }
    }
    pub fn warnings(&self) -> &[Warning] {
        match self {
            Analysis::Single(s) => &s.warnings,
            Analysis::Pair(p) => &p.warnings,
        }
    }
    pub fn warnings_mut(&mut self) -> &mut Vec<Warning> {
        match self {
            Analysis::Single(s) => &mut s.warnings,
            Analysis::Pair(p) => &mut p.warnings,
        }
    }
}
