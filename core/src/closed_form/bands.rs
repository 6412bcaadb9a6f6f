//! Measured accuracy bands of the closed forms, per (structure × cover) family, against this field solver.
//!
//! Each figure is the worst |closed form − field| / field on the controlled impedance (Z0, or Zdiff for pairs)
//! that `tests/field_sweep.rs` measured over the points it sweeps for that family (rectangular and etched traces;
//! the coplanar families in two tiers, within their flags and beyond), rounded up;
//! the same numbers are in docs/accuracy.md. They replace the papers' claims as the "stated band" wherever we
//! have a measurement, because a paper's claim holds for its own fit range and t = 0, not for the copper and
//! covers a stack gives a rule. Methods without a row keep the stated band of `field::extract::band_pct`.

use crate::design::project::Structure;
use crate::section::Dims;
use crate::section::{CrossSection, Medium};

/// (family as `CrossSection::family_for` names it, pair?, band ± %), over everything the sweep covers (for the
/// coplanar families that reaches past their flags, t/G to 0.35 and G/h to 3, as real stacks do).
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

/// The coplanar families' bands within their flags (t/G ≤ 0.05, t/S ≤ 0.05 for a pair, G/h ≤ 1.6 over a plane;
/// [`within_flags`]), measured at the sweep's points inside them (same rounding).
pub const WITHIN_COPLANAR_FLAGS: &[(&str, bool, f64)] = &[
    ("grounded coplanar", false, 4.0), // +3.29 / +2.84 % (G/h 1.6)
    ("grounded coplanar under solder mask", false, 6.0), // +5.50 / +4.87 %
    ("embedded grounded coplanar", false, 5.5), // +4.92 / +4.32 %
    ("coplanar without plane", false, 2.5), // −1.20 / −1.80 %
    ("grounded coplanar", true, 3.0),  // +2.57 / +2.11 %
    ("grounded coplanar under solder mask", true, 5.5), // +4.77 / +4.12 %
    ("embedded grounded coplanar", true, 4.5), // +4.01 / +3.41 %
    ("coplanar without plane", true, 3.0), // −1.80 / −2.45 %
];

/// Whether a coplanar rule lies within the coplanar flags (copper thin against every slot, and over a plane a
/// gap not wide against the height): the single line's `coplanar::VALIDITY` t/G bound applied to each slot and
/// `coplanar::BACKED_GAP_OVER_H`. Always false for other structures (they have one band).
pub fn within_flags(cs: &CrossSection, structure: Structure, dims: &Dims) -> bool {
    let Some(g) = dims.gap else {
        return false;
    };
    let thin = crate::closed_form::coplanar::VALIDITY[0].max;
    let mut within = match structure {
        Structure::Coplanar => cs.t / g <= thin,
        Structure::CoplanarPair => cs.t / g <= thin && dims.s.is_some_and(|s| cs.t / s <= thin),
        _ => return false,
    };
    if let Medium::Microstrip { h, .. } = cs.medium {
        within &= g / h <= crate::closed_form::coplanar::BACKED_GAP_OVER_H.max;
    }
    within
}

/// The measured band of a rule's closed form on this cross-section and dimensions, if the sweep covers it.
pub fn measured_for(cs: &CrossSection, structure: Structure, dims: &Dims) -> Option<f64> {
    let family = cs.family_for(structure);
    let inner = within_flags(cs, structure, dims)
        .then(|| lookup(WITHIN_COPLANAR_FLAGS, family, structure))
        .flatten();
    inner.or_else(|| measured(family, structure))
}

/// [`measured_for`] when it is wide enough to be said next to the number.
pub fn wide_for(cs: &CrossSection, structure: Structure, dims: &Dims) -> Option<f64> {
    measured_for(cs, structure, dims).filter(|b| *b > WIDE_BAND_PCT)
}

fn lookup(table: &[(&str, bool, f64)], family: &str, structure: Structure) -> Option<f64> {
    table
        .iter()
        .find(|(f, pair, _)| *f == family && *pair == structure.is_pair())
        .map(|b| b.2)
}

/// Bands above this are told next to the number in the CLI table and the app's rule card (the common ±10 %
/// fabrication tolerance would be half used up by the model alone: common practice, no source).
pub const WIDE_BAND_PCT: f64 = 5.0;

/// The measured band of `family` for `structure` over the whole sweep, if it covers it.
pub fn measured(family: &str, structure: Structure) -> Option<f64> {
    lookup(MEASURED, family, structure)
}
