//! Validity notes: input that is legal but outside a formula's published fit is still computed and comes back
//! with a warning that says which range was left.

use serde::{Deserialize, Serialize};

/// A note attached to a result: the value is computed, but the user should know this.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Warning {
    pub message: String,
}

impl Warning {
    pub fn new(message: impl Into<String>) -> Self {
        Warning {
            message: message.into(),
        }
    }
}

/// One published validity interval of a model input, e.g. `w/h` from 0.01 to 100.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bound {
    pub what: &'static str,
    pub min: f64,
    pub max: f64,
}

impl Bound {
    pub const fn new(what: &'static str, min: f64, max: f64) -> Self {
        Bound { what, min, max }
    }

    /// Pushes a warning when `value` lies outside this bound.
    pub fn check(&self, model: &str, value: f64, warnings: &mut Vec<Warning>) {
        if !(self.min..=self.max).contains(&value) {
            warnings.push(Warning::new(format!(
                "{model}: {} = {} is outside the published range {} to {}; the result is an extrapolation",
                self.what,
                crate::base::units::format_sig(value, 3),
                self.min,
                self.max
            )));
        }
    }
}
