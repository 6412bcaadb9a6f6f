//! Physical constants and unit handling at the edges: inside the core every length is metres and every
//! frequency hertz, as `f64`; text such as `0.3mm`, `5mil`, `1oz` or `2.4GHz` is parsed and formatted only here.

use crate::base::error::Error;

/// Speed of light in vacuum, m/s (exact, SI 2019).
pub const C0: f64 = 299_792_458.0;
/// Vacuum permeability, H/m (CODATA 2018).
pub const MU0: f64 = 1.256_637_062_12e-6;
/// Vacuum permittivity, F/m, from µ0 and c so the three stay consistent.
pub const EPS0: f64 = 1.0 / (MU0 * C0 * C0);
/// Free-space wave impedance µ0·c ≈ 376.730 Ω. (Older papers print 120π = 376.991 Ω; we use µ0·c throughout.)
pub const ETA0: f64 = MU0 * C0;

/// One thousandth of an inch, in metres.
pub const MIL: f64 = 25.4e-6;
/// One inch, in metres.
pub const INCH: f64 = 25.4e-3;
/// Thickness of 1 oz/ft² copper foil: 1.37 mil ≈ 34.8 µm (common practice, no source).
pub const OZ_COPPER: f64 = 1.37 * MIL;

pub use crate::base::error::{MAX_LENGTH_M, MIN_LENGTH_M};

/// A unit for displaying and entering lengths.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize, Default)]
#[serde(rename_all = "lowercase")]
pub enum LengthUnit {
    #[default]
    Um,
    Mm,
    Mil,
    In,
}

impl LengthUnit {
    pub const ALL: [LengthUnit; 4] = [
        LengthUnit::Um,
        LengthUnit::Mm,
        LengthUnit::Mil,
        LengthUnit::In,
    ];

    /// Metres per one of this unit.
    pub fn metres(self) -> f64 {
        match self {
            LengthUnit::Um => 1e-6,
            LengthUnit::Mm => 1e-3,
            LengthUnit::Mil => MIL,
            LengthUnit::In => INCH,
        }
    }

    pub fn symbol(self) -> &'static str {
        match self {
            LengthUnit::Um => "µm",
            LengthUnit::Mm => "mm",
            LengthUnit::Mil => "mil",
            LengthUnit::In => "in",
        }
    }

    /// Converts metres into this unit.
    pub fn from_m(self, metres: f64) -> f64 {
        metres / self.metres()
    }

    /// Converts a value in this unit into metres.
    pub fn to_m(self, value: f64) -> f64 {
        value * self.metres()
    }
}

fn split_number(text: &str) -> Option<(f64, &str)> {
    let text = text.trim();
    let end = text
        .char_indices()
        .find(|&(i, c)| {
            !(c.is_ascii_digit()
                || c == '.'
                || c == '+'
                || c == '-'
                || ((c == 'e' || c == 'E')
                    && text[i + 1..]
                        .starts_with(|d: char| d.is_ascii_digit() || d == '-' || d == '+')))
        })
        .map(|(i, _)| i)
        .unwrap_or(text.len());
    let value: f64 = text[..end].parse().ok()?;
    Some((value, text[end..].trim()))
}

/// A number followed by one of the unit words of `scales` (lower case; "" for none), scaled to SI; `expected`
/// shows the form in the error, which names `field`.
fn parse_scaled(
    field: &str,
    text: &str,
    expected: &'static str,
    scales: &[(&[&str], f64)],
) -> Result<f64, Error> {
    let bad = || Error::BadQuantity {
        field: field.to_string(),
        text: text.to_string(),
        expected,
    };
    let (value, unit) = split_number(text).ok_or_else(bad)?;
    let unit = unit.to_ascii_lowercase();
    let scale = scales
        .iter()
        .find(|(words, _)| words.contains(&unit.as_str()))
        .map(|&(_, scale)| scale)
        .ok_or_else(bad)?;
    crate::base::error::finite(field, value * scale)
}

/// Parses a length such as `0.3mm`, `125um`, `5 mil`, `0.01in`, `1oz` (copper weight) or `3.5e-5` (metres).
/// `field` names the input in the error.
pub fn parse_length(field: &str, text: &str) -> Result<f64, Error> {
    parse_scaled(
        field,
        text,
        "a length such as 0.3mm, 125um, 5mil, 0.01in or 1oz",
        &[
            (&["", "m"], 1.0),
            (&["mm"], 1e-3),
            (&["um", "µm", "μm", "micron"], 1e-6),
            (&["nm"], 1e-9),
            (&["mil", "mils", "thou"], MIL),
            (&["in", "inch", "\""], INCH),
            (&["cm"], 1e-2),
            (&["oz"], OZ_COPPER),
        ],
    )
}

/// Parses a frequency such as `2.4GHz`, `100MHz`, `5e9` (hertz).
pub fn parse_frequency(field: &str, text: &str) -> Result<f64, Error> {
    parse_scaled(
        field,
        text,
        "a frequency such as 2.4GHz, 100MHz or 5e9",
        &[
            (&["", "hz"], 1.0),
            (&["khz", "k"], 1e3),
            (&["mhz", "meg"], 1e6),
            (&["ghz", "g"], 1e9),
            (&["thz"], 1e12),
        ],
    )
}

/// Parses a time such as `50ps`, `0.1ns`, `2e-11` (seconds).
pub fn parse_time(field: &str, text: &str) -> Result<f64, Error> {
    parse_scaled(
        field,
        text,
        "a time such as 50ps, 0.1ns or 5e-11",
        &[
            (&["", "s"], 1.0),
            (&["ms"], 1e-3),
            (&["us", "µs", "μs"], 1e-6),
            (&["ns"], 1e-9),
            (&["ps"], 1e-12),
            (&["fs"], 1e-15),
        ],
    )
}

/// Parses a plain number (Dk, ohms, percent) with an optional unit word the caller allows.
pub fn parse_number(field: &str, text: &str, allowed_suffixes: &[&str]) -> Result<f64, Error> {
    let bad = || Error::BadQuantity {
        field: field.to_string(),
        text: text.to_string(),
        expected: "a number",
    };
    let (value, unit) = split_number(text).ok_or_else(bad)?;
    if !unit.is_empty()
        && !allowed_suffixes
            .iter()
            .any(|s| s.eq_ignore_ascii_case(unit))
    {
        return Err(bad());
    }
    crate::base::error::finite(field, value)
}

/// A least length (a minimum spacing) rounded up to the unit's display step, so the figure shown is never below
/// the one computed: 212.3 µm shows as "213 µm".
pub fn format_length_at_least(metres: f64, unit: LengthUnit) -> String {
    let value = unit.from_m(metres);
    let step = match unit {
        LengthUnit::Um if value < 10.0 => 0.1,
        LengthUnit::Um => 1.0,
        LengthUnit::Mm => 1e-3,
        LengthUnit::Mil => 0.01,
        LengthUnit::In => 1e-4,
    };
    // A hair of slack so a value already on the grid (to rounding) is not pushed up a step.
    let up = ((value / step) - 1e-9).ceil() * step;
    format_length(unit.to_m(up), unit)
}

/// Formats a length in `unit` with a sensible number of digits.
pub fn format_length(metres: f64, unit: LengthUnit) -> String {
    format!("{} {}", length_number(metres, unit), unit.symbol())
}

/// A length in `unit` as the trade writes it, without the unit: whole micrometres (one decimal below 10 µm),
/// millimetres to the micrometre, mil to two decimals, inches to 0.1 mil (common practice, no source); trailing
/// zeros dropped. A non-zero length too small for that grid is written compactly (`error::compact`) rather than
/// read 0.
/// Only the text is rounded: stored values keep full precision.
pub fn length_number(metres: f64, unit: LengthUnit) -> String {
    let value = unit.from_m(metres);
    let decimals = match unit {
        LengthUnit::Um if value.abs() >= 10.0 => 0,
        LengthUnit::Um => 1,
        LengthUnit::Mm => 3,
        LengthUnit::Mil => 2,
        LengthUnit::In => 4,
    };
    if !value.is_finite() {
        return format!("{value}");
    }
    let grid = 10f64.powi(-(decimals as i32));
    if value != 0.0 && value.abs() < grid / 2.0 {
        return crate::base::error::compact(value);
    }
    let text = format!("{value:.decimals$}");
    let text = if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    };
    if text == "-0" {
        "0".into()
    } else {
        text
    }
}

/// Formats `value` with `digits` significant digits, dropping trailing zeros.
pub fn format_sig(value: f64, digits: usize) -> String {
    if !value.is_finite() {
        return format!("{value}");
    }
    if value == 0.0 {
        return "0".into();
    }
    let magnitude = value.abs().log10().floor() as i32;
    let decimals = (digits as i32 - 1 - magnitude).clamp(0, 12) as usize;
    let text = format!("{value:.decimals$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lengths_parse_in_every_unit() {
        // 1 mil = 25.4 µm exactly (international inch, 1959).
        assert!((parse_length("w", "5mil").unwrap() - 127e-6).abs() < 1e-15);
        assert!((parse_length("w", "0.3 mm").unwrap() - 0.3e-3).abs() < 1e-15);
        assert!((parse_length("w", "35um").unwrap() - 35e-6).abs() < 1e-15);
        assert!((parse_length("w", "1e-4").unwrap() - 1e-4).abs() < 1e-18);
        assert!((parse_length("t", "1oz").unwrap() - 34.798e-6).abs() < 1e-9);
        assert!(parse_length("w", "abc").is_err());
        assert!(parse_length("w", "3 furlongs").is_err());
        assert!(parse_length("w", "nan").is_err());
    }

    #[test]
    fn lengths_show_as_the_trade_writes_them() {
        // 1 oz/ft² copper is 34.798 µm (value from memory: 1.37 mil); the trade writes 35 µm / 1.37 mil.
        let oz = 34.798e-6;
        assert_eq!(format_length(oz, LengthUnit::Um), "35 µm");
        assert_eq!(format_length(oz, LengthUnit::Mil), "1.37 mil");
        assert_eq!(format_length(oz, LengthUnit::Mm), "0.035 mm");
        // 0.12 mm, 0.02 mm and 0.1 mm in mil (1 mil = 25.4 µm exactly): 4.72441…, 0.787402…, 3.93701…
        assert_eq!(length_number(120e-6, LengthUnit::Mil), "4.72");
        assert_eq!(length_number(20e-6, LengthUnit::Mil), "0.79");
        assert_eq!(length_number(100e-6, LengthUnit::Mil), "3.94");
        assert_eq!(length_number(1.6e-3, LengthUnit::In), "0.063");
        assert_eq!(length_number(1535e-6, LengthUnit::Mm), "1.535");
        assert_eq!(length_number(8.54e-6, LengthUnit::Um), "8.5");
        assert_eq!(length_number(144.4e-6, LengthUnit::Um), "144");
        assert_eq!(length_number(0.0, LengthUnit::Um), "0");
        assert_eq!(length_number(-1e-9, LengthUnit::Um), "-0.001");
        // Too small for the grid: written compactly, never a bare 0.
        assert_eq!(length_number(0.3e-6, LengthUnit::Mil), "0.01");
        assert_eq!(length_number(0.1e-6, LengthUnit::Mil), "0.00393701");
        assert_eq!(length_number(1e-30, LengthUnit::Mm), "1e-27");
    }

    #[test]
    fn frequencies_parse() {
        assert_eq!(parse_frequency("f", "2.4GHz").unwrap(), 2.4e9);
        assert_eq!(parse_frequency("f", "100 MHz").unwrap(), 100e6);
    }

    #[test]
    fn times_parse() {
        assert!((parse_time("t", "50ps").unwrap() - 50e-12).abs() < 1e-24);
        assert!((parse_time("t", "0.1 ns").unwrap() - 1e-10).abs() < 1e-24);
        assert_eq!(parse_time("t", "2e-11").unwrap(), 2e-11);
        let e = parse_time("rise", "50 pF").unwrap_err().to_string();
        assert!(e.contains("rise") && e.contains("50ps"), "{e}");
    }

    #[test]
    fn unit_round_trip_is_exact_enough() {
        for unit in LengthUnit::ALL {
            let m = 123.456e-6;
            assert!((unit.to_m(unit.from_m(m)) - m).abs() < 1e-18);
        }
    }

    #[test]
    fn eta0_is_mu0_c() {
        // CODATA free-space impedance 376.730 313 Ω.
        assert!((ETA0 - 376.730_313).abs() < 1e-5);
    }
    #[test]
    fn a_least_length_is_rounded_up_to_the_display_grid() {
        assert_eq!(format_length_at_least(777.2e-6, LengthUnit::Um), "778 µm");
        assert_eq!(format_length_at_least(778e-6, LengthUnit::Um), "778 µm");
        assert_eq!(format_length_at_least(5.04e-6, LengthUnit::Um), "5.1 µm");
        assert_eq!(
            format_length_at_least(0.20011e-3, LengthUnit::Mm),
            "0.201 mm"
        );
        assert_eq!(
            format_length_at_least(5.001 * 25.4e-6, LengthUnit::Mil),
            "5.01 mil"
        );
    }
}
