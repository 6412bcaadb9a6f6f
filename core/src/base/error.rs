//! The one error type of the core: impossible input names its field and unit; nothing in the core panics on input.

use std::fmt;

/// The largest length any geometry field accepts (0.5 m): anything bigger is a typo, not a board.
pub const MAX_LENGTH_M: f64 = 0.5;
/// The shortest nonzero length any input may have, m (1e-15 m: far below any PCB feature, yet small enough for the
/// models' own limit tests such as touching strips). Found by the hostile-input tests: a subnormal width
/// (1e-320 m) passed the positivity check and gave a NaN impedance.
pub const MIN_LENGTH_M: f64 = 1e-15;

/// Everything that can go wrong in the core. `Display` is lower-case with no trailing period.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum Error {
    /// A value was NaN or infinite.
    NotFinite { field: String },
    /// A value that must be positive was zero or negative.
    NonPositive {
        field: String,
        value: f64,
        unit: &'static str,
    },
    /// A value lies outside what the input may physically be.
    OutOfRange {
        field: String,
        value: f64,
        min: f64,
        max: f64,
        unit: &'static str,
    },
    /// Text that should hold a quantity could not be read.
    BadQuantity {
        field: String,
        text: String,
        expected: &'static str,
    },
    /// A synthesis target cannot be reached inside the allowed bounds.
    Unreachable {
        field: String,
        target: f64,
        nearest: f64,
        bound: String,
        /// The dimension, m, at which the nearest reachable impedance lies (the bound), when known.
        at_m: Option<f64>,
    },
    /// An iteration stopped at its cap.
    NotConverged {
        what: String,
        iterations: usize,
        residual: f64,
    },
    /// The input is inconsistent (a layer that does not exist, a rule without reference planes, …).
    Invalid { field: String, reason: String },
    /// A project file or link could not be read.
    Schema { message: String },
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Error::NotFinite { field } => write!(f, "{field}: must be a finite number"),
            Error::NonPositive { field, value, unit } => {
                write!(f, "{field}: must be greater than zero (got {} {unit})", compact(*value))
            }
            Error::OutOfRange { field, value, min, max, unit } => write!(
                f,
                "{field}: {} {unit} is outside the allowed range {} to {} {unit}",
                compact(*value),
                compact(*min),
                compact(*max)
            ),
            Error::BadQuantity { field, text, expected } => {
                write!(f, "{field}: cannot read {text:?}, expected {expected}")
            }
            Error::Unreachable { field, target, nearest, bound, .. } => write!(
                f,
                "{field}: target {target:.2} Ω cannot be reached; {bound} stops it, nearest reachable is {nearest:.2} Ω"
            ),
            Error::NotConverged { what, iterations, residual } => {
                write!(f, "{what}: did not converge in {iterations} iterations (residual {residual:.3e})")
            }
            Error::Invalid { field, reason } => write!(f, "{field}: {reason}"),
            Error::Schema { message } => write!(f, "project: {message}"),
        }
    }
}

impl std::error::Error for Error {}

/// A number as a message shows it: six significant digits at most, plain between 0.001 and a million, otherwise
/// in exponent form (f64's own `Display` writes 1e-30 as thirty-odd zeros).
pub fn compact(v: f64) -> String {
    if !v.is_finite() || v == 0.0 {
        return format!("{v}");
    }
    let a = v.abs();
    if (1e-3..1e6).contains(&a) {
        let digits = (5 - a.log10().floor() as i32).clamp(0, 9) as usize;
        let s = format!("{v:.digits$}");
        let s = if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        };
        return s;
    }
    let s = format!("{v:.5e}");
    // Trim the mantissa's trailing zeros: 1.00000e-30 -> 1e-30.
    match s.split_once('e') {
        Some((m, e)) => {
            let m = if m.contains('.') {
                m.trim_end_matches('0').trim_end_matches('.')
            } else {
                m
            };
            format!("{m}e{e}")
        }
        None => s,
    }
}

/// Shorthand for results in the core.
pub type Result<T, E = Error> = std::result::Result<T, E>;

/// Rejects NaN and infinities.
pub fn finite(field: &str, value: f64) -> Result<f64> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(Error::NotFinite {
            field: field.to_string(),
        })
    }
}

/// Accepts a finite value strictly above zero.
pub fn positive(field: &str, value: f64, unit: &'static str) -> Result<f64> {
    finite(field, value)?;
    if value > 0.0 {
        Ok(value)
    } else {
        Err(Error::NonPositive {
            field: field.to_string(),
            value,
            unit,
        })
    }
}

/// Accepts a finite value inside `min..=max`.
pub fn in_range(field: &str, value: f64, min: f64, max: f64, unit: &'static str) -> Result<f64> {
    finite(field, value)?;
    if (min..=max).contains(&value) {
        Ok(value)
    } else {
        Err(Error::OutOfRange {
            field: field.to_string(),
            value,
            min,
            max,
            unit,
        })
    }
}

/// Accepts a geometric length: finite, at least [`MIN_LENGTH_M`] and at most
/// [`MAX_LENGTH_M`].
pub fn length(field: &str, metres: f64) -> Result<f64> {
    positive(field, metres, "m")?;
    in_range(field, metres, MIN_LENGTH_M, MAX_LENGTH_M, "m")
}

/// Accepts a length that may also be exactly zero (a copper thickness of zero is a valid idealisation).
pub fn length_or_zero(field: &str, metres: f64) -> Result<f64> {
    if metres == 0.0 {
        return Ok(0.0);
    }
    in_range(field, metres, MIN_LENGTH_M, MAX_LENGTH_M, "m")
}

/// Accepts a relative permittivity between 1 and 100.
pub fn permittivity(field: &str, er: f64) -> Result<f64> {
    in_range(field, er, 1.0, 100.0, "")
}

/// Puts `context` in front of the error's field name.
pub fn prefix(e: Error, context: &str) -> Error {
    match e {
        Error::NotFinite { field } => Error::NotFinite {
            field: format!("{context}.{field}"),
        },
        Error::NonPositive { field, value, unit } => Error::NonPositive {
            field: format!("{context}.{field}"),
            value,
            unit,
        },
        Error::OutOfRange {
            field,
            value,
            min,
            max,
            unit,
        } => Error::OutOfRange {
            field: format!("{context}.{field}"),
            value,
            min,
            max,
            unit,
        },
        Error::BadQuantity {
            field,
            text,
            expected,
        } => Error::BadQuantity {
            field: format!("{context}.{field}"),
            text,
            expected,
        },
        Error::Unreachable {
            field,
            target,
            nearest,
            bound,
            at_m,
        } => Error::Unreachable {
            field: format!("{context}.{field}"),
            target,
            nearest,
            bound,
            at_m,
        },
        Error::Invalid { field, reason } => Error::Invalid {
            field: format!("{context}.{field}"),
            reason,
        },
        other => other,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_in_messages_are_compact() {
        // The CLI once printed 1e-30 m as sixty characters of zeros.
        assert_eq!(compact(1e-30), "1e-30");
        assert_eq!(compact(-2.5e-7), "-2.5e-7");
        assert_eq!(compact(0.5), "0.5");
        assert_eq!(compact(12.345678), "12.3457");
        assert_eq!(compact(1e10), "1e10");
        assert_eq!(compact(0.0), "0");
        let e = Error::OutOfRange {
            field: "width".into(),
            value: 1e-30,
            min: 1e-15,
            max: 0.5,
            unit: "m",
        };
        assert_eq!(
            e.to_string(),
            "width: 1e-30 m is outside the allowed range 1e-15 to 0.5 m"
        );
    }
}
