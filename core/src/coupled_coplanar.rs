//! Differential coplanar line: an edge-coupled pair (width W, spacing S) with coplanar ground copper at a gap G on
//! both outer sides, without a plane below or conductor-backed, by conformal mapping of the odd and even modes.
//!
//! Method (t = 0). Put the symmetry plane at x = 0; the conductor edges on the interface are x1 = S/2,
//! x2 = S/2 + W, x3 = S/2 + W + G. The symmetry plane is an electric wall (odd mode) or a magnetic wall (even mode).
//! The map z ↦ z² opens the quarter-plane onto a half-plane, where one line and its ground occupy intervals of the
//! real axis; the half-plane capacitance per line is then ε0·K(m)/K(m′) with m² the cross-ratio of the four
//! interval ends (the form Wen 1969 used for the single CPW; Simons 2001, "Coplanar Waveguide Circuits, Components,
//! and Systems", ch. 7, treats coupled CPW the same way — from memory, equation numbers not checked):
//! - odd:  m² = (u2² − u1²)·u3² / ((u3² − u1²)·u2²)
//! - even: m² = (u2² − u1²) / (u3² − u1²)
//!
//! with u = x for a half-space, u = sinh(πx/2h) for the substrate layer (partial capacitance over a magnetic wall,
//! as Ghione & Naldi 1984 do for the single CPW), u = tanh(πx/2h) for the layer over a plane (as Ghione & Naldi 1983).
//! Per line: without a plane C = ε0[2Q_air + (εr−1)Q_sinh], Ca = 2ε0Q_air; with a plane
//! C = ε0[Q_air + εr·Q_tanh (+ (εc−1)Q_sinh,cover)], Ca = ε0[Q_air + Q_tanh]; Zo,e = η0/(Ca/ε0 · √εeff).
//! Without a plane, the odd mode's electric wall reaches only through the substrate, not through the air below it;
//! mapping it as if it reached all the way (the usual sinh substitution, as in the coplanar-strip formulas of
//! Gupta et al. 1996 ch. 7) overstates the substrate term when h is small against S. We use that substitution,
//! cap the substrate term at the air half-space one (the physical bound), and warn when h < S. The other three
//! cases (even mode, and both modes with a plane, where the tanh map sends the wall onto the whole imaginary axis)
//! are exact within the partial-capacitance split.
//! These moduli are derived here; we checked them against exact limits rather than a printed table: S → 0 gives
//! the even mode of one CPW of width 2W (exact), G → ∞ gives the odd mode of coplanar strips (K(k′)/K(k) with
//! k = S/(S+2W), exact), and a far plane gives the no-plane line. The partial-capacitance split has the accuracy
//! of the single-line forms (about 1 %, from memory) for t = 0; Zdiff = 2·Zodd, Zcommon = Zeven/2.
//!
//! Finite thickness: no published closed form for the coupled case is known to us. We carry over Gupta et al.
//! 1996 (7.98)–(7.100) (see [`crate::coplanar`]): each strip edge moves Δ/2 into its gap in the air term, and each
//! gap adds the wall capacitance 1.4ε0·t/gap per unit potential difference (odd mode: 2.8ε0·t/S from the inner gap,
//! even mode: none). Results with t > 0 carry a warning saying so.

use crate::coplanar::{cover_layer, k_ratio_ln, thickness_widening, Backing, Map};
use crate::error::{self, Result};
use crate::lines::CoupledPair;
use crate::units::ETA0;
use crate::validity::{Bound, Warning};

/// Our flags for the carried-over thickness correction.
pub const VALIDITY: [Bound; 3] = [
    Bound::new("t/G", 0.0, 0.25),
    Bound::new("t/S", 0.0, 0.25),
    Bound::new("t/W", 0.0, 0.5),
];

/// An edge-coupled coplanar pair with coplanar grounds (SI units).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CoplanarPair {
    /// Width W of each strip, m.
    pub w: f64,
    /// Edge-to-edge spacing S between the strips, m.
    pub s: f64,
    /// Gap G from each strip's outer edge to the coplanar ground, m.
    pub g: f64,
    /// Substrate height h, m.
    pub h: f64,
    /// Copper thickness t, m (0 allowed).
    pub t: f64,
    /// Substrate relative permittivity.
    pub er: f64,
    pub backing: Backing,
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Mode {
    Odd,
    Even,
}

/// K(m)/K(m′) of one line of the pair in `mode`, for edges x1 < x2 < x3 seen through `map`.
fn q_mode(map: Map, mode: Mode, x1: f64, x2: f64, x3: f64) -> f64 {
    let d21 = map.ln_du2(x1, x2);
    let d31 = map.ln_du2(x1, x3);
    let d32 = map.ln_du2(x2, x3);
    let (ln_m2, ln_mp2) = match mode {
        Mode::Odd => {
            let (u1, u2, u3) = (map.ln_u2(x1), map.ln_u2(x2), map.ln_u2(x3));
            (d21 + u3 - d31 - u2, u1 + d32 - d31 - u2)
        }
        Mode::Even => (d21 - d31, d32 - d31),
    };
    k_ratio_ln(ln_m2, ln_mp2)
}

impl CoplanarPair {
    /// Checks the inputs for physical sense; names the field on failure.
    pub fn validate(&self) -> Result<()> {
        error::length("width", self.w)?;
        error::length("spacing", self.s)?;
        error::length("gap", self.g)?;
        error::length("height", self.h)?;
        error::length_or_zero("thickness", self.t)?;
        error::permittivity("dk", self.er)?;
        Ok(())
    }

    /// Odd- and even-mode impedances and effective permittivities.
    pub fn analyze(&self) -> Result<CoupledPair> {
        self.validate()?;
        let mut warnings = Vec::new();
        let cover = cover_layer(self.backing, &mut warnings)?;
        let model = "coplanar pair thickness correction";
        VALIDITY[0].check(model, self.t / self.g, &mut warnings);
        VALIDITY[1].check(model, self.t / self.s, &mut warnings);
        VALIDITY[2].check(model, self.t / self.w, &mut warnings);
        if self.t > 0.0 {
            warnings.push(Warning::new(
                "coplanar pair: thickness correction carried over from the single CPW (Gupta et al. 1996), not published for pairs",
            ));
        }
        let x1 = self.s / 2.0;
        let x2 = x1 + self.w;
        let x3 = x2 + self.g;
        let mut delta = thickness_widening(self.w, self.t);
        let cap = 0.9 * self.s.min(self.g);
        if delta > cap {
            warnings.push(Warning::new(
                "copper thickness closes most of a gap: thickness correction capped, result is rough",
            ));
            delta = cap;
        }
        let mut thin = false;
        let mut mode = |mode: Mode| -> (f64, f64) {
            let q_air = q_mode(Map::HalfSpace, mode, x1, x2, x3);
            let q_air_e = if delta > 0.0 {
                q_mode(
                    Map::HalfSpace,
                    mode,
                    x1 - delta / 2.0,
                    x2 + delta / 2.0,
                    x3 - delta / 2.0,
                )
            } else {
                q_air
            };
            let (c_air, c, c_air_e) = match self.backing {
                Backing::None => {
                    let mut q_sub = q_mode(Map::Layer { h: self.h }, mode, x1, x2, x3);
                    if q_sub > q_air {
                        // A layer over a magnetic wall holds less charge than a half-space of the same
                        // material; only the approximate odd-mode map (see the module doc) can break this.
                        q_sub = q_air;
                        thin = true;
                    }
                    (
                        2.0 * q_air,
                        2.0 * q_air + (self.er - 1.0) * q_sub,
                        2.0 * q_air_e,
                    )
                }
                Backing::Plane(_) => {
                    let q_sub = q_mode(Map::OverPlane { h: self.h }, mode, x1, x2, x3);
                    let q_cov = cover
                        .map(|(hc, ec)| (ec - 1.0) * q_mode(Map::Layer { h: hc }, mode, x1, x2, x3))
                        .unwrap_or(0.0);
                    (
                        q_air + q_sub,
                        q_air + self.er * q_sub + q_cov,
                        q_air_e + q_sub,
                    )
                }
            };
            let wall = match mode {
                Mode::Odd => 1.4 * self.t / self.g + 2.8 * self.t / self.s,
                Mode::Even => 1.4 * self.t / self.g,
            };
            let eps_eff = (c + wall) / (c_air + wall);
            (ETA0 / (c_air_e * eps_eff.sqrt()), eps_eff)
        };
        let (z_odd, eps_eff_odd) = mode(Mode::Odd);
        let (z_even, eps_eff_even) = mode(Mode::Even);
        if thin || (self.backing == Backing::None && self.h < self.s) {
            warnings.push(Warning::new(
                "coplanar pair without plane on a substrate thinner than the spacing: the odd-mode substrate term is approximate",
            ));
        }
        Ok(CoupledPair {
            z_odd,
            z_even,
            eps_eff_odd,
            eps_eff_even,
            warnings,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::coplanar::{k_ratio, Coplanar};
    use crate::cross_section::Cover;

    const GROUNDED: Backing = Backing::Plane(Cover::Air);

    fn pair(w: f64, s: f64, g: f64, h: f64, t: f64, er: f64, backing: Backing) -> CoplanarPair {
        CoplanarPair {
            w,
            s,
            g,
            h,
            t,
            er,
            backing,
        }
    }

    #[test]
    fn touching_strips_give_even_mode_of_one_wide_cpw() {
        // Exact: as S → 0 the even mode is one CPW of width 2W, gap G, each line carrying half its charge.
        for backing in [Backing::None, GROUNDED] {
            let (w, g, h, er) = (1.5e-4, 1e-4, 2e-4, 4.3);
            let p = pair(w, 1e-13, g, h, 0.0, er, backing).analyze().unwrap();
            let single = Coplanar {
                w: 2.0 * w,
                g,
                h,
                t: 0.0,
                er,
                backing,
            }
            .analyze()
            .unwrap();
            assert!(
                (p.z_even - 2.0 * single.z0).abs() / single.z0 < 1e-6,
                "{backing:?}"
            );
            assert!(
                (p.eps_eff_even - single.eps_eff).abs() < 1e-6,
                "{backing:?}"
            );
        }
    }

    #[test]
    fn far_grounds_give_coplanar_strips_odd_mode() {
        // Exact (air): coplanar strips have C = ε0·K(k′)/K(k), k = S/(S+2W), so Zodd = η0·q(k)/2.
        let (w, s) = (1e-5, 5e-6);
        let p = pair(w, s, 1e4 * w, 1e-3, 0.0, 1.0, Backing::None)
            .analyze()
            .unwrap();
        let z = ETA0 * k_ratio(s / (s + 2.0 * w)) / 2.0;
        assert!((p.z_odd - z).abs() / z < 1e-6, "{} vs {z}", p.z_odd);
        assert!((p.eps_eff_odd - 1.0).abs() < 1e-14);
    }

    #[test]
    fn far_plane_equals_no_plane_and_thick_substrate_is_mean_permittivity() {
        // Exact for h → ∞ (t = 0): both substrate maps tend to the half-space one, εeff → (εr+1)/2.
        let a = pair(1e-4, 1e-4, 1e-4, 0.4, 0.0, 6.0, Backing::None)
            .analyze()
            .unwrap();
        let b = pair(1e-4, 1e-4, 1e-4, 0.4, 0.0, 6.0, GROUNDED)
            .analyze()
            .unwrap();
        for e in [a.eps_eff_odd, a.eps_eff_even, b.eps_eff_odd, b.eps_eff_even] {
            assert!((e - 3.5).abs() < 1e-5, "{e}");
        }
        assert!((a.z_odd - b.z_odd).abs() / a.z_odd < 1e-5);
        assert!((a.z_even - b.z_even).abs() / a.z_even < 1e-5);
    }

    #[test]
    fn wide_spacing_decouples_the_lines() {
        // Common practice: with S ≫ W, G the two modes merge, slowly (no ground copper between the strips) (each line is a CPW with its own grounds only on one
        // side, so the value is not the single-CPW one, only the odd/even split vanishes).
        // Without a plane the substrate is kept thicker than the spacing, where the odd-mode map is good.
        for (backing, h) in [(GROUNDED, 2e-3), (Backing::None, 0.2)] {
            let split = |s: f64| {
                let p = pair(1e-4, s, 1e-4, h, 0.0, 4.3, backing).analyze().unwrap();
                (p.z_even - p.z_odd) / p.z_even
            };
            assert!(
                split(0.05) < 5e-3 && split(0.05) > 0.0,
                "{backing:?} {}",
                split(0.05)
            );
            assert!(split(0.05) < split(0.01) && split(0.01) < split(1e-3));
        }
    }

    #[test]
    fn monotonic_in_spacing_width_gap_height() {
        for backing in [Backing::None, GROUNDED] {
            let an = |w: f64, s: f64, g: f64, h: f64| {
                pair(w, s, g, h, 18e-6, 4.0, backing).analyze().unwrap()
            };
            let (w, s, g, h) = (1.2e-4, 1.5e-4, 1.5e-4, 1.0e-4);
            let base = an(w, s, g, h);
            assert!(base.z_odd < base.z_even);
            assert!(an(w, s * 1.2, g, h).z_odd > base.z_odd);
            assert!(an(w, s * 1.2, g, h).z_even < base.z_even);
            assert!(an(w * 1.2, s, g, h).z_diff() < base.z_diff());
            assert!(an(w, s, g * 1.2, h).z_diff() > base.z_diff());
            let e = an(w, s, g, h * 1.2);
            match backing {
                // More substrate: more field in the dielectric (the even mode's map is exact).
                Backing::None => assert!(e.eps_eff_even > base.eps_eff_even),
                // A farther plane: less capacitance, higher Z.
                Backing::Plane(_) => assert!(e.z_even > base.z_even && e.z_odd > base.z_odd),
            }
            // The lower half-space can hold at most εr times the upper one's charge: εeff ≤ (εr+1)/2 = 2.5.
            if backing == Backing::None {
                assert!(base.eps_eff_odd <= 2.5 + 1e-12 && base.eps_eff_even <= 2.5 + 1e-12);
            }
        }
    }

    #[test]
    fn thickness_lowers_both_modes_and_warns() {
        let thin = pair(1e-4, 1e-4, 1e-4, 1e-4, 0.0, 4.0, GROUNDED)
            .analyze()
            .unwrap();
        let thick = pair(1e-4, 1e-4, 1e-4, 1e-4, 35e-6, 4.0, GROUNDED)
            .analyze()
            .unwrap();
        assert!(thick.z_odd < thin.z_odd && thick.z_even < thin.z_even);
        assert!(thick.eps_eff_odd < thin.eps_eff_odd);
        assert!(!thick.warnings.is_empty() && thin.warnings.is_empty());
        let closed = pair(1e-4, 1e-5, 1e-5, 1e-4, 1e-4, 4.0, Backing::None)
            .analyze()
            .unwrap();
        assert!(closed.z_odd.is_finite() && closed.z_odd > 0.0);
    }

    #[test]
    fn extreme_geometries_stay_finite() {
        for &(w, s, g, h) in &[
            (1e-6, 0.4, 1e-6, 1e-6),
            (0.3, 1e-6, 1e-6, 1e-6),
            (1e-6, 1e-6, 0.3, 0.4),
            (0.1, 0.1, 0.1, 1e-6),
        ] {
            for backing in [Backing::None, GROUNDED] {
                let p = pair(w, s, g, h, 0.0, 4.0, backing).analyze().unwrap();
                for z in [p.z_odd, p.z_even] {
                    assert!(z.is_finite() && z > 0.0, "{w} {s} {g} {h} {backing:?}: {z}");
                }
                for e in [p.eps_eff_odd, p.eps_eff_even] {
                    assert!((1.0 - 1e-12..=4.0 + 1e-12).contains(&e), "{e}");
                }
            }
        }
    }

    #[test]
    fn bad_inputs_name_their_field() {
        let cases = [
            (
                pair(0.0, 1e-4, 1e-4, 1e-4, 0.0, 4.0, Backing::None),
                "width",
            ),
            (
                pair(1e-4, -1.0, 1e-4, 1e-4, 0.0, 4.0, Backing::None),
                "spacing",
            ),
            (pair(1e-4, 1e-4, f64::NAN, 1e-4, 0.0, 4.0, GROUNDED), "gap"),
            (pair(1e-4, 1e-4, 1e-4, 2.0, 0.0, 4.0, GROUNDED), "height"),
            (pair(1e-4, 1e-4, 1e-4, 1e-4, 0.0, 200.0, GROUNDED), "dk"),
        ];
        for (c, field) in cases {
            let e = c.analyze().unwrap_err();
            assert!(e.to_string().starts_with(field), "{e}");
        }
    }
}
