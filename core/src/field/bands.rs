//! Measured accuracy bands of the closed forms, per (structure × cover) family, against this field solver.
//!
//! Each figure is the worst |closed form − field| / field on the controlled impedance (Z0, or Zdiff for pairs)
//! that `tests/field_sweep.rs` measured over the points it sweeps for that family (rectangular traces), rounded up;
//! the same numbers are in docs/accuracy.md. They replace the papers' claims as the "stated band" wherever we
//! have a measurement, because a paper's claim holds for its own fit range and t = 0, not for the copper and
//! covers a stack gives a rule. Methods without a row keep [`super::extract::band_pct`].

use crate::project::Structure;

/// (family as `CrossSection::family_for` names it, pair?, band ± %). Measured, see the module doc.
/// Measured at the points of `tests/field_sweep.rs`, rectangular traces and trapezoids of etch factor 3 (the
/// closed forms take the base width); the worst of the two is in the comment (rectangular / etched), the band is
/// that + 0.25 % for the field solve's own error at its 1 % tolerance, rounded up to 0.5 %.
pub const MEASURED: &[(&str, bool, f64)] = &[
    ("surface microstrip", false, 1.5),         // −0.13 / −1.17 %
    ("coated microstrip", false, 2.5),          // +2.13 / −1.53 %
    ("embedded microstrip", false, 3.5),        // −2.49 / −3.09 %
    ("symmetric stripline", false, 3.5),        // −0.14 / −3.07 % (the etched trapezoid)
    ("offset stripline", false, 3.0),           // +0.11 / −2.64 %
    ("dual stripline", false, 3.0),             // +0.04 / −2.66 %
    ("surface microstrip", true, 2.0),          // +1.06 / −1.30 %
    ("coated microstrip", true, 8.0),           // +7.57 / +3.63 % (narrow pair, w/h 0.5)
    ("embedded microstrip", true, 8.0),         // +7.30 / +4.06 % (narrow pair, w/h 0.5)
    ("symmetric stripline", true, 3.0),         // +2.54 / −1.90 %
    ("offset stripline", true, 4.0),            // +3.59 / −1.23 %
    ("dual stripline", true, 4.0),              // +3.57 / −1.23 %
    ("broadside-coupled stripline", true, 4.5), // +0.87 / −3.94 %
    ("grounded coplanar", false, 13.5),         // +13.25 / +10.69 % (G/h 3)
    ("grounded coplanar under solder mask", false, 19.5), // +18.92 / +15.65 % (G/h 3)
    ("embedded grounded coplanar", false, 18.0), // +17.69 / +14.43 % (G/h 3)
    ("coplanar without plane", false, 17.5),    // −14.13 / −16.98 % (t/G 0.35)
    ("grounded coplanar", true, 9.5),           // +8.87 / +5.40 % (G/h 3)
    ("grounded coplanar under solder mask", true, 14.0), // +13.45 / +9.35 % (G/h 3)
    ("embedded grounded coplanar", true, 10.5), // +9.84 / −5.38 % (G/h 3)
    ("coplanar without plane", true, 19.0),     // −16.18 / −18.68 % (t/G 0.35)
];

/// Bands above this are told next to the number in the CLI table and the app's rule card (the common ±10 %
/// fabrication tolerance would be half used up by the model alone: common practice, no source).
pub const WIDE_BAND_PCT: f64 = 5.0;

/// The measured band of a closed-form rule when it is wide enough to be said next to the number.
pub fn wide(family: &str, structure: Structure) -> Option<f64> {
    measured(family, structure).filter(|b| *b > WIDE_BAND_PCT)
}

/// The band of a rule's closed form: the measured one for its family, else the method's stated one.
pub fn band_pct(family: &str, structure: Structure, method: &str) -> f64 {
    measured(family, structure).unwrap_or_else(|| super::extract::band_pct(method))
}

/// The measured band of `family` for `structure`, if the sweep covers it.
pub fn measured(family: &str, structure: Structure) -> Option<f64> {
    MEASURED
        .iter()
        .find(|(f, pair, _)| *f == family && *pair == structure.is_pair())
        .map(|b| b.2)
}
