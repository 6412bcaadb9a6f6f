//! Loss budget and reach: the insertion loss per length of a rule's signal at a link's Nyquist frequency, and the
//! longest run that fits a loss budget after the fixed losses (connectors, vias, packages).
//!
//! The signal is the line itself, or for a pair its differential mode: a symmetric pair carries the differential
//! signal on its odd mode, so the mixed-mode SDD21 of a matched run of length ℓ is exp(−γ_odd·ℓ) (any mixed-mode
//! S-parameter text; checked against scikit-rf's single-ended to mixed-mode conversion of our Touchstone files).
//! The run is taken as matched at both ends: reflections from an impedance step are the fab window's business, not
//! the budget's.

use crate::base::error::{self, Error, Result};
use crate::line::loss::{LineModel, MAX_FREQ_HZ};
use serde::Serialize;

/// How many bits one symbol carries.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Signalling {
    /// Two levels, one bit a symbol.
    Nrz,
    /// Four levels, two bits a symbol.
    Pam4,
}

impl Signalling {
    pub fn bits_per_symbol(self) -> f64 {
        match self {
            Signalling::Nrz => 1.0,
            Signalling::Pam4 => 2.0,
        }
    }
}

/// A serial link's line rate, for picking a Nyquist frequency.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LinkRate {
    pub name: &'static str,
    /// Line rate, bit/s (after coding).
    pub bit_rate: f64,
    pub signalling: Signalling,
}

impl LinkRate {
    /// The Nyquist frequency: half the symbol rate (common practice for the loss budget of a serial link).
    pub fn nyquist_hz(&self) -> f64 {
        nyquist_hz(self.bit_rate, self.signalling)
    }
}

/// Half the symbol rate of `bit_rate` bit/s sent with `signalling`.
pub fn nyquist_hz(bit_rate: f64, signalling: Signalling) -> f64 {
    0.5 * bit_rate / signalling.bits_per_symbol()
}

/// Line rates of common serial links, from their open standards as commonly quoted (common practice: check the
/// standard you design to).
pub const LINK_PRESETS: [LinkRate; 9] = [
    LinkRate {
        name: "DDR4-3200 data",
        bit_rate: 3.2e9,
        signalling: Signalling::Nrz,
    },
    LinkRate {
        name: "SATA 6 Gb/s",
        bit_rate: 6.0e9,
        signalling: Signalling::Nrz,
    },
    LinkRate {
        name: "PCIe 3.0 (8 GT/s)",
        bit_rate: 8.0e9,
        signalling: Signalling::Nrz,
    },
    LinkRate {
        name: "USB 10 Gb/s",
        bit_rate: 10.0e9,
        signalling: Signalling::Nrz,
    },
    LinkRate {
        name: "10GBASE-KR (10.3125 Gb/s)",
        bit_rate: 10.3125e9,
        signalling: Signalling::Nrz,
    },
    LinkRate {
        name: "PCIe 4.0 (16 GT/s)",
        bit_rate: 16.0e9,
        signalling: Signalling::Nrz,
    },
    LinkRate {
        name: "25G NRZ (25.78125 Gb/s)",
        bit_rate: 25.78125e9,
        signalling: Signalling::Nrz,
    },
    LinkRate {
        name: "PCIe 5.0 (32 GT/s)",
        bit_rate: 32.0e9,
        signalling: Signalling::Nrz,
    },
    LinkRate {
        name: "50G PAM4 (53.125 Gb/s)",
        bit_rate: 53.125e9,
        signalling: Signalling::Pam4,
    },
];

/// What the run is judged against.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ReachOptions {
    /// Frequency the budget is set at (a link's Nyquist frequency), Hz.
    pub freq_hz: f64,
    /// Insertion-loss budget of the whole channel at that frequency, dB.
    pub budget_db: f64,
    /// Losses outside the traces (connectors, vias, packages) taken from the budget first, dB.
    pub fixed_db: f64,
}

impl ReachOptions {
    /// Checks each figure against its sensible range; the error names it.
    pub fn validate(&self) -> Result<()> {
        error::in_range("frequency", self.freq_hz, 1e6, MAX_FREQ_HZ, "Hz")?;
        error::in_range("loss budget", self.budget_db, 0.01, 200.0, "dB")?;
        error::in_range("fixed losses", self.fixed_db, 0.0, 200.0, "dB")?;
        Ok(())
    }
}

/// A rule's loss at the budget's frequency and the run it allows.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Reach {
    /// "line" or "differential (odd mode)".
    pub signal: &'static str,
    pub options: ReachOptions,
    /// Insertion loss per metre of the signal at the frequency: total, conductor and dielectric, dB/m.
    pub loss_db_per_m: f64,
    pub conductor_db_per_m: f64,
    pub dielectric_db_per_m: f64,
    /// The longest matched run inside the budget after the fixed losses, m; `None` when the fixed losses alone
    /// spend it.
    pub reach_m: Option<f64>,
}

/// The reach of the line `model` describes.
pub fn reach(model: &LineModel, options: &ReachOptions) -> Result<Reach> {
    options.validate()?;
    let at = model.at(options.freq_hz)?;
    let (signal, m) = match (&at.line, &at.odd) {
        (Some(l), _) => ("line", l),
        (None, Some(o)) => ("differential (odd mode)", o),
        _ => {
            return Err(Error::Invalid {
                field: "structure".into(),
                reason: "the line has no signal mode".into(),
            })
        }
    };
    let loss = m.total.db_per_m;
    if !(loss.is_finite() && loss > 0.0) {
        return Err(Error::Invalid {
            field: "loss".into(),
            reason: "the line shows no loss at this frequency, so its reach is unbounded".into(),
        });
    }
    let left = options.budget_db - options.fixed_db;
    Ok(Reach {
        signal,
        options: *options,
        loss_db_per_m: loss,
        conductor_db_per_m: m.conductor.db_per_m,
        dielectric_db_per_m: m.dielectric.db_per_m,
        reach_m: (left > 0.0).then(|| left / loss),
    })
}

/// Insertion loss (dB, positive) of a matched run of `length_m` of the signal at each of `freqs`, with the fixed
/// losses added flat.
pub fn insertion_loss(
    model: &LineModel,
    length_m: f64,
    fixed_db: f64,
    freqs: &[f64],
) -> Result<Vec<(f64, f64)>> {
    error::in_range("length", length_m, 1e-6, 100.0, "m")?;
    freqs
        .iter()
        .map(|&f| {
            let at = model.at(f)?;
            let m = at.signal().ok_or_else(|| Error::Invalid {
                field: "structure".into(),
                reason: "the line has no signal mode".into(),
            })?;
            Ok((f, m.total.db_per_m * length_m + fixed_db))
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nyquist_is_half_the_symbol_rate() {
        // Common practice: NRZ at 16 Gb/s → 8 GHz; PAM4 carries two bits a symbol, 53.125 Gb/s → 13.28125 GHz.
        let at = |name: &str| {
            LINK_PRESETS
                .iter()
                .find(|p| p.name.starts_with(name))
                .unwrap()
                .nyquist_hz()
        };
        assert_eq!(at("PCIe 4.0"), 8e9);
        assert_eq!(at("50G PAM4"), 13.28125e9);
        assert_eq!(nyquist_hz(10e9, Signalling::Nrz), 5e9);
    }
}
