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
//! C = ε0[Q_air + εr·Q_tanh (+ (εc−1)Q_cover)], Ca = ε0[Q_air + Q_tanh]; Zo,e = η0/(Ca/ε0 · √εeff), where a cover
//! (solder mask or dielectric) of height hc takes the sinh map in the even mode and, in the odd mode, the same
//! six-point wall-through-the-layer-only term as the substrate without a plane (see `q_cover`).
//! Without a plane, the odd mode's electric wall reaches only through the substrate, not through the air below it.
//! Mapping it as if it reached all the way (the plain sinh substitution, as in the coplanar-strip formulas of
//! Gupta et al. 1996 ch. 7) is the same as a ground plane under the substrate and overstates the substrate term
//! badly once h is not large against the pair (factor 1.7 at h = S/2). After the two maps the wall is one more
//! conductor segment, and the half-plane problem has six interval ends instead of four; we solve it with the
//! Schwarz–Christoffel form and three one-dimensional integrals (see `q_odd_layer`), which is exact within the
//! partial-capacitance split. Checked: it lies between the no-wall and wall-through 4-point results, tends to the
//! half-space value for h → ∞, to the 1-D slab value h/(S/2) + h/G for h → 0 (within the edge-spreading
//! correction of order h/S), and matches an mpmath quadrature of
//! the w-plane integrals. The even mode, and both modes with a plane (where the tanh map sends the wall onto the
//! whole imaginary axis), are closed forms exact within the partial-capacitance split.
//! These moduli are derived here; we checked them against exact limits rather than a printed table: S → 0 gives
//! the even mode of one CPW of width 2W (exact), G → ∞ gives the odd mode of coplanar strips (K(k′)/K(k) with
//! k = S/(S+2W), exact), and a far plane gives the no-plane line. The partial-capacitance split has the accuracy
//! of the single-line forms (about 1 %, from memory) for t = 0; Zdiff = 2·Zodd, Zcommon = Zeven/2.
//!
//! Against a scikit-fem field solve (`tests/python/fem_coplanar.py`), no plane, W = S = 200 µm, G = 150 µm,
//! h = 300 µm, εr = 4.3, t = 0: Zodd +0.27 % (67.50 vs 67.32 Ω), εeff,odd −0.5 %, Zeven +1.0 %, εeff,even −1.9 %;
//! over a plane, h = 150 µm: Zodd +0.28 % (54.76 vs 54.61 Ω), εeff,odd +0.2 %, Zeven +2.2 % (67.26 vs 65.79 Ω),
//! εeff,even +1.6 %.
//!
//! Finite thickness: no published closed form for the coupled case is known to us. We carry over Gupta et al.
//! 1996 (7.98)–(7.100) (see [`crate::closed_form::coplanar`]): each strip edge moves Δ/2 into its gap in the air term, and each
//! gap adds the wall capacitance 1.4ε0·t/gap per unit potential difference (odd mode: 2.8ε0·t/S from the inner gap,
//! even mode: none). Results with t > 0 carry a warning saying so.

use crate::base::error::{self, Result};
use crate::base::units::ETA0;
use crate::base::validity::{Bound, Warning};
use crate::closed_form::coplanar::{
    cover_layer, k_ratio_ln, slot_fill_dk, thickness_widening, Backing, Map,
};
use crate::section::lines::CoupledPair;

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

/// 10-point Gauss–Legendre nodes and weights on [−1, 1] (half of the symmetric set; A&S table 25.4).
const GL10: [(f64, f64); 5] = [
    (0.148_874_338_981_631_2, 0.295_524_224_714_752_9),
    (0.433_395_394_129_247_2, 0.269_266_719_309_996_3),
    (0.679_409_568_299_024_4, 0.219_086_362_515_982),
    (0.865_063_366_688_984_5, 0.149_451_349_150_580_6),
    (0.973_906_528_517_171_7, 0.066_671_344_308_688_1),
];

/// Above this mapped abscissa πx3/2h the layer is so thin against the pair that the odd mode's wall term is
/// dropped (cosh² would leave the f64 range in the weights below).
const MAX_MAPPED: f64 = 150.0;

/// ∫ f(ξ) dξ over (α, β) for an f with inverse-square-root end singularities, as (ln of the scale, ∫ scaled f,
/// ∫ scaled f·cosh²(πξ/2h)): ξ = α + (β−α)·sin²(θ/2) turns the end singularities into smooth θ-integrands, and
/// panels graded geometrically towards both ends of θ ∈ (0, π) resolve the neighbouring edges.
fn edge_integrals(h: f64, edges: [f64; 3], alpha: f64, beta: f64) -> (f64, f64, f64) {
    const LEVELS: i32 = 24;
    let s = std::f64::consts::PI / (2.0 * h);
    let len = beta - alpha;
    // ln of the integrand at θ: −½ Σ ln|sinh(s(ξ−xi))·sinh(s(ξ+xi))| + ½ ln(d_lo·d_hi), with the distances to
    // the two ends taken exactly (d_lo, d_hi) so nothing cancels near them.
    let ln_f = |theta: f64| -> (f64, f64) {
        let (sn, cs) = (0.5 * theta).sin_cos();
        let (d_lo, d_hi) = (len * sn * sn, len * cs * cs);
        let xi = alpha + d_lo;
        let mut l = 0.5 * (d_lo * d_hi).ln();
        for &x in &edges {
            let d = if x == alpha {
                d_lo
            } else if x == beta {
                d_hi
            } else {
                (xi - x).abs()
            };
            l -= 0.5
                * (crate::closed_form::coplanar::ln_sinh(s * d)
                    + crate::closed_form::coplanar::ln_sinh(s * (xi + x)));
        }
        let c = (s * xi).cosh();
        (l, c * c)
    };
    // Panel ends in θ/π: 0, 2^-24, …, 1/4, 1/2, 3/4, …, 1 − 2^-24, 1.
    let mut ends: Vec<f64> = vec![0.0];
    ends.extend((2..=LEVELS).rev().map(|k| 0.5f64.powi(k)));
    ends.push(0.5);
    ends.extend((2..=LEVELS).map(|k| 1.0 - 0.5f64.powi(k)));
    ends.push(1.0);
    let mut nodes: Vec<(f64, f64)> = Vec::with_capacity(10 * ends.len());
    for pair in ends.windows(2) {
        let (a, b) = (
            pair[0] * std::f64::consts::PI,
            pair[1] * std::f64::consts::PI,
        );
        let (mid, half) = (0.5 * (a + b), 0.5 * (b - a));
        for &(x, wt) in &GL10 {
            for theta in [mid - half * x, mid + half * x] {
                let (l, c2) = ln_f(theta);
                nodes.push((l + (half * wt).ln(), c2));
            }
        }
    }
    let l_max = nodes.iter().map(|n| n.0).fold(f64::NEG_INFINITY, f64::max);
    let (mut n, mut m) = (0.0, 0.0);
    for &(l, c2) in &nodes {
        let f = (l - l_max).exp();
        n += f;
        m += f * c2;
    }
    (l_max, n, m)
}

/// Odd-mode substrate term of the pair without a plane, K-ratio equivalent (capacitance of the mapped half-plane
/// per ε0), with the symmetry wall reaching only through the substrate.
///
/// After u = sinh(πx/2h) and w = u², the wall is the segment [−1, 0], the layer's lower face (−∞, −1), the strip
/// [a, b] and the ground [c, ∞) with a, b, c = u(x1..x3)². The Schwarz–Christoffel form
/// Ω′(w) = A(w − p)/√(−(w+1)w(w−a)(w−b)(w−c)) (from memory: the standard mixed-boundary form, e.g.
/// Henrici, "Applied and Computational Complex Analysis" vol. 1, §5.12) puts the wall and the ground at one
/// potential when p = (M₀ₐ − M_bc)/(N₀ₐ − N_bc), with N = ∫dw/√|P| and M = ∫w dw/√|P| over the two gaps.
/// Eliminating p, C/ε0 = N_ab·[(m_ab − m₀ₐ)/N_bc + (m_bc − m_ab)/N₀ₐ]/(m_bc − m₀ₐ), m = M/N (any constant may be
/// added to w; we weight by w + 1 = cosh²). In the physical abscissa ξ, dw/√((w+1)w) = (π/h)dξ, so each
/// integral runs over a gap or the strip with only edge singularities. Returns `None` when the layer is too thin
/// for the weights (πx3/2h > 150).
fn q_odd_layer(h: f64, x1: f64, x2: f64, x3: f64) -> Option<f64> {
    if std::f64::consts::PI * x3 / (2.0 * h) > MAX_MAPPED {
        return None;
    }
    let edges = [x1, x2, x3];
    let (l_g, n_g, m_g) = edge_integrals(h, edges, 0.0, x1); // inner gap (0, a): between wall and strip
    let (l_s, n_s, m_s) = edge_integrals(h, edges, x1, x2); // the strip (a, b)
    let (l_o, n_o, m_o) = edge_integrals(h, edges, x2, x3); // outer gap (b, c)
    let (mg, ms, mo) = (m_g / n_g, m_s / n_s, m_o / n_o);
    let ns_over_no = (l_s - l_o).exp() * n_s / n_o;
    let ns_over_ng = (l_s - l_g).exp() * n_s / n_g;
    let q = ((ms - mg) * ns_over_no + (mo - ms) * ns_over_ng) / (mo - mg);
    q.is_finite().then_some(q)
}

/// The cover layer's partial capacitance (K-ratio equivalent) of one line in `mode`, for a cover of height `hc`
/// over the copper with air above it.
///
/// The odd mode's symmetry wall reaches through the cover only, not through the air above it, exactly as it
/// reaches through the substrate only without a plane; so the cover takes the six-point term of [`q_odd_layer`]
/// (exact within the partial-capacitance split). The four-point sinh map with the wall through (what this used to
/// use) is a ground plane at height hc over the pair: its capacitance grows like x/hc as the cover thins, which
/// gave Zodd of 11 Ω and εeff,odd of 80 under a 1 µm mask (issue "coplanar pairs under solder mask"). The even
/// mode's wall is magnetic, which the four-point sinh map already treats exactly.
fn q_cover(hc: f64, mode: Mode, x1: f64, x2: f64, x3: f64) -> f64 {
    match mode {
        Mode::Even => q_mode(Map::Layer { h: hc }, Mode::Even, x1, x2, x3),
        Mode::Odd => q_odd_layer(hc, x1, x2, x3).unwrap_or_else(|| thin_odd_layer(hc, x1, x2, x3)),
    }
}

/// The odd-mode layer term for a layer far thinner than the pair (πx3/2h > 150, where [`q_odd_layer`] leaves the
/// f64 range): the wall-free term (the outer gap alone) scaled by the 1-D slab ratio (h/x1 + h/G)/(h/G), the
/// thin-layer limit of the exact term (checked in `odd_layer_term_lies_between_its_bounds_and_has_the_slab_limit`).
/// Edge spreading changes both gaps' terms by a relative O(h/gap) < 1 % here, and the term itself is O(h/gap) of
/// the air term, so the approximation is far below the model's own error. Tends to 0 with h.
fn thin_odd_layer(h: f64, x1: f64, x2: f64, x3: f64) -> f64 {
    let outer = q_mode(Map::Layer { h }, Mode::Even, x1, x2, x3);
    outer * (1.0 + (x3 - x2) / x1)
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
        if matches!(self.backing, Backing::Plane(_)) {
            crate::closed_form::coplanar::BACKED_GAP_OVER_H.check(
                "grounded coplanar pair",
                self.g / self.h,
                &mut warnings,
            );
        }
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
        let mut fallback = false;
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
                    let q_sub = match mode {
                        Mode::Even => q_mode(Map::Layer { h: self.h }, mode, x1, x2, x3),
                        Mode::Odd => match q_odd_layer(self.h, x1, x2, x3) {
                            Some(q) => q,
                            None => {
                                fallback = true;
                                q_mode(Map::Layer { h: self.h }, Mode::Even, x1, x2, x3)
                            }
                        },
                    };
                    (
                        2.0 * q_air,
                        2.0 * q_air + (self.er - 1.0) * q_sub,
                        2.0 * q_air_e,
                    )
                }
                Backing::Plane(_) => {
                    let q_sub = q_mode(Map::OverPlane { h: self.h }, mode, x1, x2, x3);
                    let q_cov = cover
                        .map(|(hc, ec)| (ec - 1.0) * q_cover(hc, mode, x1, x2, x3))
                        .unwrap_or(0.0);
                    (
                        q_air + q_sub,
                        q_air + self.er * q_sub + q_cov,
                        q_air_e + q_sub,
                    )
                }
            };
            // Slot walls, air-filled (`wall`) and as filled by the cover (`wall_c`, see `slot_fill_dk`).
            let (eg, es) = (
                slot_fill_dk(self.backing, self.g),
                slot_fill_dk(self.backing, self.s),
            );
            let (wall, wall_c) = match mode {
                Mode::Odd => (
                    1.4 * self.t / self.g + 2.8 * self.t / self.s,
                    eg * 1.4 * self.t / self.g + es * 2.8 * self.t / self.s,
                ),
                Mode::Even => (1.4 * self.t / self.g, eg * 1.4 * self.t / self.g),
            };
            let eps_eff = (c + wall_c) / (c_air + wall);
            (ETA0 / (c_air_e * eps_eff.sqrt()), eps_eff)
        };
        let (z_odd, eps_eff_odd) = mode(Mode::Odd);
        let (z_even, eps_eff_even) = mode(Mode::Even);
        if fallback {
            warnings.push(Warning::new(
                "coplanar pair without plane on a substrate far thinner than the pair: the odd-mode substrate term ignores the symmetry wall",
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
    use crate::closed_form::coplanar::{k_ratio, Coplanar};
    use crate::section::Cover;

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

    #[test]
    fn odd_layer_term_lies_between_its_bounds_and_has_the_slab_limit() {
        let (x1, x2, x3) = (1e-4, 3e-4, 5e-4);
        for h in [1e-5, 1e-4, 3e-4, 1e-3, 1e-2] {
            let exact = q_odd_layer(h, x1, x2, x3).unwrap();
            // Removing the wall lowers the capacitance, extending it through the air raises it, and a layer over
            // a magnetic wall holds less than the air half-space (exact orderings).
            let no_wall = q_mode(Map::Layer { h }, Mode::Even, x1, x2, x3);
            let through = q_mode(Map::Layer { h }, Mode::Odd, x1, x2, x3);
            let air = q_mode(Map::HalfSpace, Mode::Odd, x1, x2, x3);
            assert!(no_wall < exact && exact < through && exact < air, "h={h}");
        }
        // Thin layer: the field is a 1-D slab, C/ε0 → h/x1 + h/(x3 − x2); the strip and ground touch the layer only
        // on its top face, so spreading at each edge lowers that by a relative amount of order h/x (a few % here).
        let h = 6e-6;
        let slab = h / x1 + h / (x3 - x2);
        let exact = q_odd_layer(h, x1, x2, x3).unwrap();
        assert!(exact < slab && exact > 0.9 * slab, "{exact} vs {slab}");
        // Thick layer: the half-space value (exact limit).
        let air = q_mode(Map::HalfSpace, Mode::Odd, x1, x2, x3);
        assert!((q_odd_layer(10.0, x1, x2, x3).unwrap() - air).abs() / air < 1e-9);
    }

    #[test]
    fn a_thinning_mask_tends_to_the_bare_pair_and_stays_below_its_dk() {
        // Exact: a cover of zero thickness is no cover, and a mixed dielectric's εeff lies between 1 and its
        // largest Dk. The 12-layer fixture's "Pair 90 grounded coplanar" at 84.72 µm once gave Zodd 11.2 Ω,
        // εeff,odd 80.1 under a 1 µm mask (67.3 Ω, 2.23 bare).
        let masked = |c: f64| {
            let cover = Cover::Mask {
                thickness_m: c,
                er: 3.8,
            };
            pair(
                84.72e-6,
                200e-6,
                300e-6,
                130e-6,
                35e-6,
                3.5,
                Backing::Plane(cover),
            )
            .analyze()
            .unwrap()
        };
        let bare = pair(84.72e-6, 200e-6, 300e-6, 130e-6, 35e-6, 3.5, GROUNDED)
            .analyze()
            .unwrap();
        // No dielectric anywhere exceeds Dk 3.8, so C ≤ 3.8·C_air and Zodd ≥ Zodd,air/√3.8 (exact bound).
        let air = pair(84.72e-6, 200e-6, 300e-6, 130e-6, 35e-6, 1.0, GROUNDED)
            .analyze()
            .unwrap();
        let floor = air.z_odd / 3.8f64.sqrt();
        let mut last = bare.z_odd;
        for c in [1e-9, 1e-7, 1e-6, 5e-6, 2e-5, 1e-4, 1e-3] {
            let m = masked(c);
            for e in [m.eps_eff_odd, m.eps_eff_even] {
                assert!((1.0..=3.8).contains(&e), "mask {c}: εeff {e}");
            }
            // More mask, more capacitance: Zodd falls, never jumps.
            assert!(m.z_odd <= last && m.z_odd >= floor, "mask {c}: {}", m.z_odd);
            last = m.z_odd;
            if c <= 1e-7 {
                assert!((m.z_odd - bare.z_odd).abs() / bare.z_odd < 1e-3);
                assert!((m.z_even - bare.z_even).abs() / bare.z_even < 1e-3);
            }
        }
    }

    #[test]
    fn thin_layer_odd_term_meets_the_exact_one_at_the_switch() {
        // Both sides of MAX_MAPPED must agree (the thin form is the exact one's slab limit), so no step appears.
        let (x1, x2, x3) = (1e-4, 3e-4, 5e-4);
        let h = std::f64::consts::PI * x3 / (2.0 * (MAX_MAPPED - 1e-6));
        let exact = q_odd_layer(h, x1, x2, x3).unwrap();
        let thin = thin_odd_layer(h, x1, x2, x3);
        assert!((exact - thin).abs() / exact < 0.02, "{exact} vs {thin}");
    }

    #[test]
    fn gauss_legendre_table_is_exact_to_degree_19() {
        // A 10-point Gauss–Legendre rule integrates x^18 over [−1, 1] exactly: 2/19.
        let sum: f64 = GL10.iter().map(|&(x, w)| 2.0 * w * x.powi(18)).sum();
        assert!((sum - 2.0 / 19.0).abs() < 1e-15);
        let total: f64 = GL10.iter().map(|&(_, w)| 2.0 * w).sum();
        assert!((total - 2.0).abs() < 1e-15);
    }
}
