//! Validity notes: input that is legal but outside a formula's published fit is still computed and comes back
//! with a warning that says which range was left.

use serde::{Deserialize, Serialize};

/// How much a note matters.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum Level {
    /// Worth knowing, nothing to do (a fit range the figure's engine does not rely on, an engine's error estimate).
    Info,
    /// Check before building: the figure may be off (an extrapolated closed form, a part not modelled).
    #[default]
    Caution,
    /// The figure is not what was asked (a solve that missed its target).
    Problem,
}

impl Level {
    pub fn is_caution(&self) -> bool {
        *self == Level::Caution
    }
    /// The word shown beside the note.
    pub fn label(self) -> &'static str {
        match self {
            Level::Info => "info",
            Level::Caution => "caution",
            Level::Problem => "problem",
        }
    }
}

/// A note attached to a result: the value is computed, but the user should know this.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Warning {
    pub message: String,
    /// Left out of the JSON when a caution, so files and outputs from before the levels read and look the same.
    #[serde(default, skip_serializing_if = "Level::is_caution")]
    pub level: Level,
}

impl Warning {
    /// A caution (the default level).
    pub fn new(message: impl Into<String>) -> Self {
        Warning {
            message: message.into(),
            level: Level::Caution,
        }
    }
    pub fn info(message: impl Into<String>) -> Self {
        Warning {
            level: Level::Info,
            ..Warning::new(message)
        }
    }
    pub fn problem(message: impl Into<String>) -> Self {
        Warning {
            level: Level::Problem,
            ..Warning::new(message)
        }
    }
    /// Whether this is the note of a closed form's published fit range left ([`Bound::check`]).
    pub fn is_fit_range(&self) -> bool {
        self.message.contains(FIT_RANGE)
    }
}

/// The words every fit-range note carries.
const FIT_RANGE: &str = "is outside the published range";

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
                "{model}: {} = {} {FIT_RANGE} {} to {}; the result is an extrapolation",
                self.what,
                crate::base::units::format_sig(value, 3),
                self.min,
                self.max
            )));
        }
    }
}
