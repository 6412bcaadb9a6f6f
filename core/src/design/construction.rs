//! A core or prepreg described by how it is built — glass style, number of plies, resin content — instead of by its
//! thickness and Dk: what it presses to, its Dk and Df from a published mixing rule calibrated to the laminate's
//! datasheet point, and the skew the glass weave can put between the two lines of a pair.
//!
//! - Thickness: volume conservation. A ply holds its glass (fabric weight / glass density) and its resin (the resin
//!   weight that the resin content by weight implies / resin density); the planner's pressing model then moves
//!   prepreg resin into the neighbouring copper as for any prepreg.
//! - Dk: Lichtenecker's logarithmic mixing rule, ln ε = v·ln ε_glass + (1 − v)·ln ε_resin with v the glass volume
//!   fraction (K. Lichtenecker, Physikalische Zeitschrift 27, 1926; from memory), the resin's ε solved from the
//!   datasheet's (resin content, Dk) point so the rule reproduces it exactly. It lies between the Wiener bounds (the
//!   series and parallel mixtures), as any mixture must. Df: the same rule on the complex permittivity, which to
//!   first order in the loss mixes the loss tangents linearly by volume.
//! - Weave skew: a line over a glass bundle sees more glass than one over a resin-rich window; the worst case for a
//!   pair routed along the weave is one line on each, Δt/ℓ = (√ε_bundle − √ε_window)/c.
//!
//! The glass styles' figures are typical values of the trade (common practice, from memory): use the laminate
//! maker's construction table where it differs.

use crate::base::error::{self, Error, Result};
use crate::base::units::C0;
use serde::{Deserialize, Serialize};

/// Density of E-glass, g/cm³ (common practice, from memory).
pub const GLASS_DENSITY: f64 = 2.55;
/// Density of a cured, filled laminate resin, g/cm³ (common practice, from memory; it reproduces the typical ply
/// thicknesses of the styles below to a few per cent).
pub const RESIN_DENSITY: f64 = 1.4;
/// Dk of E-glass near 1 GHz (common practice, from memory).
pub const GLASS_DK: f64 = 6.2;
/// Df of E-glass near 1 GHz (common practice, from memory).
pub const GLASS_DF: f64 = 0.002;

/// A woven glass style of the trade.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct GlassStyle {
    /// The trade style number.
    pub style: &'static str,
    /// Fabric weight, g/m².
    pub weight_g_m2: f64,
    /// Resin content by weight this style is usually bought at (common practice).
    pub typical_resin: f64,
    /// Share of the board's area under glass bundles (open weaves leave resin-only windows; spread styles almost
    /// none): sets how much more glass a line over a bundle sees than the mean.
    pub coverage: f64,
    /// Bundle pitch (the mean of warp and fill, from the yarn counts per inch), m.
    pub pitch_m: f64,
}

/// Common glass styles, thinnest first (typical values, common practice, from memory).
pub const GLASS_STYLES: [GlassStyle; 9] = [
    style("106", 24.4, 0.72, 0.55, 56.0, 56.0),
    style("1067", 31.0, 0.70, 0.9, 70.0, 70.0),
    style("1080", 46.8, 0.64, 0.65, 60.0, 47.0),
    style("1086", 54.0, 0.62, 0.9, 60.0, 62.0),
    style("3313", 81.4, 0.57, 0.85, 61.0, 62.0),
    style("2116", 103.8, 0.54, 0.8, 60.0, 58.0),
    style("1652", 139.0, 0.48, 0.85, 52.0, 52.0),
    style("7628", 203.4, 0.44, 0.85, 44.0, 32.0),
    style("1501", 165.0, 0.46, 0.85, 46.0, 45.0),
];

/// A style from its trade figures: weight g/m², usual resin content, coverage, warp and fill yarns per inch.
const fn style(
    name: &'static str,
    weight_g_m2: f64,
    typical_resin: f64,
    coverage: f64,
    warp_per_in: f64,
    fill_per_in: f64,
) -> GlassStyle {
    GlassStyle {
        style: name,
        weight_g_m2,
        typical_resin,
        coverage,
        pitch_m: 0.5 * (0.0254 / warp_per_in + 0.0254 / fill_per_in),
    }
}

/// The style of a trade number.
pub fn glass_style(style: &str) -> Result<&'static GlassStyle> {
    GLASS_STYLES.iter().find(|g| g.style == style.trim()).ok_or_else(|| Error::Invalid {
        field: "glass style".into(),
        reason: format!(
            "{style:?} is not among the styles known here ({}); enter the layer's thickness and Dk directly",
            GLASS_STYLES.iter().map(|g| g.style).collect::<Vec<_>>().join(", ")
        ),
    })
}

/// The laminate's datasheet point the mixing rule is calibrated to: its Dk and Df at a resin content.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct DatasheetPoint {
    pub resin: f64,
    pub dk: f64,
    pub df: f64,
}

/// How a core or prepreg is built.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Construction {
    pub style: &'static GlassStyle,
    pub plies: u32,
    /// Resin content by weight (0–1).
    pub resin: f64,
    pub datasheet: DatasheetPoint,
}

/// What a construction gives.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Laminate {
    /// Thickness of the plies as a solid (resin and glass, no voids), m: a prepreg's before pressing.
    pub thickness_m: f64,
    /// Glass volume fraction.
    pub glass_fraction: f64,
    pub dk: f64,
    pub df: f64,
    /// The resin's own Dk and Df the datasheet point implies.
    pub resin_dk: f64,
    pub resin_df: f64,
    /// Worst-case intra-pair skew from the weave, s/m, for lines far narrower than the weave (one line over a
    /// bundle, one over a window); [`Construction::skew_over`] averages it over a line's field.
    pub weave_skew_s_per_m: f64,
    /// Dk over a bundle and over a window.
    pub dk_bundle: f64,
    pub dk_window: f64,
}

/// Glass volume fraction of a ply of `style` at resin content `resin` (by weight), and the ply's thickness (m).
pub fn ply(style: &GlassStyle, resin: f64) -> (f64, f64) {
    let glass_m = style.weight_g_m2 / (GLASS_DENSITY * 1e6);
    let resin_m = style.weight_g_m2 * resin / (1.0 - resin) / (RESIN_DENSITY * 1e6);
    (glass_m / (glass_m + resin_m), glass_m + resin_m)
}

/// Lichtenecker's logarithmic mixture of two permittivities at glass volume fraction `v`.
pub fn lichtenecker(v: f64, glass: f64, resin: f64) -> f64 {
    (v * glass.ln() + (1.0 - v) * resin.ln()).exp()
}

/// The Wiener bounds of a two-phase mixture at volume fraction `v`: (series, parallel).
pub fn wiener_bounds(v: f64, a: f64, b: f64) -> (f64, f64) {
    (1.0 / (v / a + (1.0 - v) / b), v * a + (1.0 - v) * b)
}

impl Construction {
    fn validate(&self) -> Result<()> {
        if !(1..=12).contains(&self.plies) {
            return Err(Error::Invalid {
                field: "plies".into(),
                reason: format!("{} plies: give 1 to 12", self.plies),
            });
        }
        error::in_range("resin content", self.resin * 100.0, 25.0, 85.0, "%")?;
        error::in_range(
            "datasheet resin content",
            self.datasheet.resin * 100.0,
            25.0,
            85.0,
            "%",
        )?;
        error::in_range("datasheet Dk", self.datasheet.dk, 1.5, GLASS_DK - 0.1, "")?;
        error::in_range("datasheet Df", self.datasheet.df, 0.0, 0.1, "")?;
        Ok(())
    }

    /// Thickness, Dk, Df and weave skew of the construction.
    pub fn laminate(&self) -> Result<Laminate> {
        self.validate()?;
        // The resin's Dk and Df from the datasheet point (the rule inverted there).
        let (v_ds, _) = ply(self.style, self.datasheet.resin);
        let resin_dk = ((self.datasheet.dk.ln() - v_ds * GLASS_DK.ln()) / (1.0 - v_ds)).exp();
        let resin_df = ((self.datasheet.df - v_ds * GLASS_DF) / (1.0 - v_ds)).max(0.0);
        if !(resin_dk >= 1.0 && resin_dk.is_finite()) {
            return Err(Error::Invalid {
                field: "datasheet Dk".into(),
                reason: format!(
                    "{} at {:.0} % resin implies a resin Dk below 1: check the datasheet point",
                    self.datasheet.dk,
                    self.datasheet.resin * 100.0
                ),
            });
        }
        let (v, t_ply) = ply(self.style, self.resin);
        let dk = lichtenecker(v, GLASS_DK, resin_dk);
        let df = v * GLASS_DF + (1.0 - v) * resin_df;
        // Over a bundle the glass is concentrated (its mean spread over the covered share of the area, at most the
        // fraction of a close-packed bundle, ~0.8); over a window what is left (nothing for an open weave).
        let v_bundle = (v / self.style.coverage).min(0.8);
        let v_window =
            ((v - self.style.coverage * v_bundle) / (1.0 - self.style.coverage)).max(0.0);
        let (dk_bundle, dk_window) = (
            lichtenecker(v_bundle, GLASS_DK, resin_dk),
            lichtenecker(v_window, GLASS_DK, resin_dk),
        );
        Ok(Laminate {
            thickness_m: f64::from(self.plies) * t_ply,
            glass_fraction: v,
            dk,
            df,
            resin_dk,
            resin_df,
            weave_skew_s_per_m: (dk_bundle.sqrt() - dk_window.sqrt()) / C0,
            dk_bundle,
            dk_window,
        })
    }
}

/// Share of a window `width` long covered by bundles of duty `coverage` repeating every `pitch`, starting at `x`
/// (bundles on [k·pitch, k·pitch + coverage·pitch)).
fn bundle_share(x: f64, width: f64, pitch: f64, coverage: f64) -> f64 {
    let covered_to = |u: f64| {
        let k = (u / pitch).floor();
        k * coverage * pitch + (u - k * pitch).min(coverage * pitch)
    };
    (covered_to(x + width) - covered_to(x)) / width
}

impl Construction {
    /// Worst-case intra-pair skew per length, s/m, for lines whose field averages the weave over `width` m (about
    /// the trace width plus twice its height to the plane): the two lines at the offsets that see the most and the
    /// least glass. A narrow width gives the bundle-against-window worst case; a width of whole pitches gives none.
    pub fn skew_over(&self, width: f64) -> Result<f64> {
        let l = self.laminate()?;
        error::in_range("averaging width", width * 1e3, 1e-3, 100.0, "mm")?;
        let (v_bundle, v_window) = self.bundle_and_window(l.glass_fraction);
        let (p, cov) = (self.style.pitch_m, self.style.coverage);
        let (lo, hi) = (0..256)
            .map(|i| bundle_share(p * f64::from(i) / 256.0, width, p, cov))
            .fold((f64::MAX, f64::MIN), |(a, b), f| (a.min(f), b.max(f)));
        let dk = |f: f64| lichtenecker(v_window + f * (v_bundle - v_window), GLASS_DK, l.resin_dk);
        Ok((dk(hi).sqrt() - dk(lo).sqrt()) / C0)
    }

    /// Glass volume fraction over a bundle and over a window: the mean spread over the covered share of the area
    /// (at most ~0.8, a close-packed bundle), and what is left for the windows (nothing for an open weave).
    fn bundle_and_window(&self, v: f64) -> (f64, f64) {
        let v_bundle = (v / self.style.coverage).min(0.8);
        let v_window =
            ((v - self.style.coverage * v_bundle) / (1.0 - self.style.coverage)).max(0.0);
        (v_bundle, v_window)
    }
}

/// A core's or prepreg's construction as a project stores it: the glass style by its trade number, the plies, the
/// resin content, and the datasheet point the mixing rule is calibrated to (the layer's Dk and Df, at its spec
/// frequency, at a resin content).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LayerConstruction {
    /// Trade style number, e.g. "2116".
    pub glass: String,
    pub plies: u32,
    /// Resin content by weight, %.
    pub resin_pct: f64,
    pub datasheet_dk: f64,
    pub datasheet_df: f64,
    /// The resin content the datasheet's Dk and Df hold at, %.
    pub datasheet_resin_pct: f64,
}

impl LayerConstruction {
    /// `plies` of `style` at its usual resin content, calibrated so that it has Dk `dk` and Df `df` there: how a
    /// layer entered by its Dk takes a construction without its Dk moving.
    pub fn typical(style: &GlassStyle, plies: u32, dk: f64, df: f64) -> LayerConstruction {
        LayerConstruction {
            glass: style.style.to_string(),
            plies,
            resin_pct: style.typical_resin * 100.0,
            datasheet_dk: dk,
            datasheet_df: df,
            datasheet_resin_pct: style.typical_resin * 100.0,
        }
    }

    /// The construction it names; errors name the field.
    pub fn construction(&self) -> Result<Construction> {
        Ok(Construction {
            style: glass_style(&self.glass)?,
            plies: self.plies,
            resin: self.resin_pct / 100.0,
            datasheet: DatasheetPoint {
                resin: self.datasheet_resin_pct / 100.0,
                dk: self.datasheet_dk,
                df: self.datasheet_df,
            },
        })
    }

    /// A short label for tables: "2 × 1080, 64 % resin".
    pub fn label(&self) -> String {
        format!(
            "{} × {}, {} % resin",
            self.plies,
            self.glass,
            crate::base::units::format_sig(self.resin_pct, 3)
        )
    }
}

/// Ways to keep the weave's skew down, for the notes (common practice).
pub const WEAVE_MITIGATIONS: [&str; 4] = [
    "route the pair at an angle to the weave (10° or more), or rotate the panel image",
    "use spread or flat glass styles (1067, 1086, 3313) or two plies of a finer style",
    "choose a laminate whose resin Dk is close to the glass's",
    "keep the two lines of the pair on the same bundle pitch (pair pitch a multiple of the weave pitch)",
];

#[cfg(test)]
mod tests {
    use super::*;

    fn construction(style: &str, plies: u32, resin: f64) -> Construction {
        Construction {
            style: glass_style(style).unwrap(),
            plies,
            resin,
            datasheet: DatasheetPoint {
                resin: 0.54,
                dk: 3.9,
                df: 0.012,
            },
        }
    }

    #[test]
    fn the_mixing_rule_meets_its_limits_and_the_wiener_bounds() {
        // All glass → glass Dk, all resin → resin Dk (exact limits of any mixing rule); between, inside the
        // Wiener bounds (series ≤ ε ≤ parallel: the extremes of a two-phase mixture, any dielectrics text).
        assert!((lichtenecker(1.0, 6.2, 3.0) - 6.2).abs() < 1e-12);
        assert!((lichtenecker(0.0, 6.2, 3.0) - 3.0).abs() < 1e-12);
        for i in 1..20 {
            let v = f64::from(i) / 20.0;
            let e = lichtenecker(v, 6.2, 3.0);
            let (lo, hi) = wiener_bounds(v, 6.2, 3.0);
            assert!(lo < e && e < hi, "v {v}: {lo} < {e} < {hi}");
        }
    }

    #[test]
    fn the_datasheet_point_is_reproduced_and_more_resin_lowers_the_dk() {
        let at = |resin: f64| construction("2116", 1, resin).laminate().unwrap();
        let ds = at(0.54);
        assert!(
            (ds.dk - 3.9).abs() < 1e-12 && (ds.df - 0.012).abs() < 1e-12,
            "{ds:?}"
        );
        let (rich, lean) = (at(0.62), at(0.48));
        assert!(rich.dk < ds.dk && ds.dk < lean.dk);
        assert!(rich.df > ds.df, "resin is the lossier phase");
        assert!(ds.resin_dk > 1.0 && ds.resin_dk < ds.dk);
    }

    #[test]
    fn thickness_conserves_volume_and_adds_by_ply() {
        // Glass and resin volumes per area add up to the thickness (exact by construction; checked from the
        // weights so a slip in a density or a percent shows).
        let c = construction("1080", 2, 0.64);
        let l = c.laminate().unwrap();
        let glass = 2.0 * 46.8 / 2.55e6;
        let resin = 2.0 * 46.8 * 0.64 / 0.36 / 1.4e6;
        assert!((l.thickness_m - (glass + resin)).abs() < 1e-15);
        assert!((l.glass_fraction - glass / (glass + resin)).abs() < 1e-12);
        // Typical ply thicknesses of the trade at their usual resin (common practice, from memory, ±15 %):
        // 106 ≈ 50 µm, 1080 ≈ 75 µm, 2116 ≈ 120 µm, 7628 ≈ 190 µm.
        for (style, typical) in [
            ("106", 50e-6),
            ("1080", 75e-6),
            ("2116", 120e-6),
            ("7628", 190e-6),
        ] {
            let g = glass_style(style).unwrap();
            let t = ply(g, g.typical_resin).1;
            assert!((t / typical - 1.0).abs() < 0.15, "{style}: {t} m");
        }
    }

    #[test]
    fn an_open_weave_skews_more_than_a_spread_one() {
        let open = construction("1080", 1, 0.64).laminate().unwrap();
        let spread = construction("1086", 1, 0.62).laminate().unwrap();
        assert!(
            open.weave_skew_s_per_m > spread.weave_skew_s_per_m && spread.weave_skew_s_per_m >= 0.0
        );
        // Bounded by the glass/resin extremes: (√ε_glass − √ε_resin)/c.
        let bound = (GLASS_DK.sqrt() - open.resin_dk.sqrt()) / C0;
        assert!(open.weave_skew_s_per_m < bound);
        assert!(open.dk_window <= open.dk && open.dk <= open.dk_bundle);
    }

    #[test]
    fn averaging_over_the_field_shrinks_the_skew_to_nothing_at_whole_pitches() {
        let c = construction("1080", 1, 0.64);
        let worst = c.laminate().unwrap().weave_skew_s_per_m;
        let p = c.style.pitch_m;
        // Narrower than a window: the full contrast; whole pitches: every offset sees the same glass.
        assert!((c.skew_over(0.01 * p).unwrap() / worst - 1.0).abs() < 1e-6);
        assert!(c.skew_over(2.0 * p).unwrap().abs() < 1e-9 * worst);
        let (a, b) = (c.skew_over(0.5 * p).unwrap(), c.skew_over(0.8 * p).unwrap());
        assert!(0.0 < b && b < a && a < worst, "{a} {b} {worst}");
        // The covered share of one pitch is the coverage, wherever the window starts.
        assert!((bundle_share(0.3 * p, p, p, 0.65) - 0.65).abs() < 1e-12);
    }

    #[test]
    fn bad_inputs_name_the_field() {
        let e = glass_style("9999").unwrap_err().to_string();
        assert!(e.contains("glass style") && e.contains("2116"), "{e}");
        let e = construction("2116", 0, 0.5)
            .laminate()
            .unwrap_err()
            .to_string();
        assert!(e.contains("plies"), "{e}");
        let e = construction("2116", 1, 0.95)
            .laminate()
            .unwrap_err()
            .to_string();
        assert!(e.contains("resin content"), "{e}");
    }
}
