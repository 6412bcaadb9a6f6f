//! The exact 2D cross-section the field solver sees: grounded box, dielectric regions of each Dk, trapezoidal
//! conductors of finite thickness, conformal solder mask, coplanar grounds and one or two signal conductors.
//!
//! Every structure this project routes is mirror-symmetric about the vertical line x = 0, so the geometry is
//! stored for the half x ≥ 0 only; the line x = 0 is a symmetry boundary (a magnetic wall for the even mode, an
//! electric wall for the odd mode of an edge-coupled pair). All shapes are trapezoids with horizontal top and
//! bottom edges, which covers rectangles, etched traces, zero-thickness strips (top = bottom), slabs and the
//! conformal mask around a trace.
//!
//! The box walls (x = `x_max`, y = `y_min`, y = `y_max`) are grounded. For microstrip and stripline the real planes
//! are box walls; the other walls are placed far away (see [`BOX_FACTOR`]).

use crate::base::error::{self, Error, Result};
use crate::base::validity::Warning;
use crate::design::project::Structure;
use crate::section::Dims;
use crate::section::{Cover, CrossSection, Medium};

/// Distance from the structure to an open side's grounded wall, in units of the structure's height scale.
/// Microstrip fields decay like a dipole (1/r²), so the wall must be far: the solver's test shows that doubling
/// this factor changes Z0 by less than 0.01 %. Stripline fields decay like exp(−πx/b) beside the strip, so the side
/// walls there sit at [`STRIPLINE_SIDE_FACTOR`] × b.
pub const BOX_FACTOR: f64 = 200.0;
/// Side-wall distance for structures between two planes, in plane spacings (exp(−20π) ≈ 1e-27: no effect).
pub const STRIPLINE_SIDE_FACTOR: f64 = 20.0;
/// Largest ratio between the biggest and the smallest feature the grid resolves (a cap that keeps the grid bounded).
pub const MAX_ASPECT: f64 = 2e4;

/// A trapezoid with horizontal bottom (y0) and top (y1) edges; `x0l..x0r` is the bottom edge, `x1l..x1r` the top.
/// A zero-height trapezoid (y0 = y1) is a zero-thickness strip.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Trapezoid {
    pub y0: f64,
    pub y1: f64,
    pub x0l: f64,
    pub x0r: f64,
    pub x1l: f64,
    pub x1r: f64,
}

impl Trapezoid {
    /// An axis-aligned rectangle.
    pub fn rect(x0: f64, x1: f64, y0: f64, y1: f64) -> Self {
        Trapezoid {
            y0,
            y1,
            x0l: x0,
            x0r: x1,
            x1l: x0,
            x1r: x1,
        }
    }

    /// Whether (x, y) lies in the closed trapezoid, with absolute tolerance `tol`.
    pub fn contains(&self, x: f64, y: f64, tol: f64) -> bool {
        if y < self.y0 - tol || y > self.y1 + tol {
            return false;
        }
        let f = if self.y1 > self.y0 {
            ((y - self.y0) / (self.y1 - self.y0)).clamp(0.0, 1.0)
        } else {
            0.0
        };
        let (xl, xr) = if self.y1 > self.y0 {
            (
                self.x0l + f * (self.x1l - self.x0l),
                self.x0r + f * (self.x1r - self.x0r),
            )
        } else {
            (self.x0l.min(self.x1l), self.x0r.max(self.x1r))
        };
        x >= xl - tol && x <= xr + tol
    }

    /// The shape grown outward by `c` on its top and both sloped sides (the bottom stays put): a conformal
    /// coating of thickness `c` measured normal to each face, with square outer corners.
    pub fn coated(&self, c: f64) -> Self {
        let h = self.y1 - self.y0;
        let side = |xb: f64, xt: f64, outward: f64| -> (f64, f64) {
            // The side's line x = xb + slope·(y − y0); moving it a normal distance c shifts it horizontally by
            // c·√(1 + slope²).
            let slope = if h > 0.0 { (xt - xb) / h } else { 0.0 };
            let shift = outward * c * (1.0 + slope * slope).sqrt();
            (xb + shift, xb + shift + slope * (h + c))
        };
        let (l0, l1) = side(self.x0l, self.x1l, -1.0);
        let (r0, r1) = side(self.x0r, self.x1r, 1.0);
        Trapezoid {
            y0: self.y0,
            y1: self.y1 + c,
            x0l: l0,
            x0r: r0,
            x1l: l1,
            x1r: r1,
        }
    }
}

/// What a conductor is connected to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Net {
    Ground,
    /// Signal conductor number `k` of the half domain.
    Signal(usize),
}

/// A perfect conductor.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Conductor {
    pub shape: Trapezoid,
    pub net: Net,
}

/// A dielectric region; later regions paint over earlier ones, the background is vacuum (εr = 1).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Region {
    pub shape: Trapezoid,
    pub er: f64,
}

/// How the half domain relates to the whole structure.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Layout {
    /// The signal conductor(s) straddle x = 0 (single line, coplanar line, broadside pair): one even-symmetric
    /// solve per signal; the whole structure's capacitance is twice the half's.
    Centered,
    /// One line of a symmetric edge-coupled pair lies in the half: odd mode with an electric wall at x = 0, even
    /// mode with a magnetic wall.
    MirroredPair,
}

/// A 2D electrostatic problem on the half domain x ∈ [0, x_max], y ∈ [y_min, y_max].
#[derive(Debug, Clone, PartialEq)]
pub struct Geometry {
    pub x_max: f64,
    pub y_min: f64,
    pub y_max: f64,
    pub regions: Vec<Region>,
    pub conductors: Vec<Conductor>,
    /// Number of signal nets in the half domain (1, or 2 for a broadside pair).
    pub n_signals: usize,
    pub layout: Layout,
    /// The smallest feature size (sets the finest grid spacing), m.
    pub fine: f64,
    /// Notes from building (approximations made).
    pub warnings: Vec<Warning>,
}

impl Geometry {
    /// Relative permittivity at (x, y) (the last region containing the point wins).
    pub fn er_at(&self, x: f64, y: f64) -> f64 {
        let tol = 1e-12 * self.fine;
        self.regions
            .iter()
            .rev()
            .find(|r| r.shape.contains(x, y, tol))
            .map(|r| r.er)
            .unwrap_or(1.0)
    }

    /// Whether the structure is a pair (two modes).
    pub fn is_pair(&self) -> bool {
        self.layout == Layout::MirroredPair || self.n_signals == 2
    }

    /// The same geometry with every dielectric's εr multiplied by `factor` (air stays air): the derivative of C
    /// along it is the share of the electric energy stored in the dielectrics, which sets the dielectric loss.
    pub fn with_dielectrics_scaled(&self, factor: f64) -> Geometry {
        let mut out = self.clone();
        for r in &mut out.regions {
            if r.er != 1.0 {
                r.er *= factor;
            }
        }
        out
    }
}

/// A dielectric layer of a stack: its height and Dk.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Slab {
    pub h: f64,
    pub er: f64,
}

/// A cross-section given by explicit layers, so mixed prepreg/core heights can be modelled as they are rather than
/// merged into one Dk.
#[derive(Debug, Clone, PartialEq)]
pub struct LayerStack {
    /// Dielectric from the lower plane (or the bottom of the board) up to the trace's underside, bottom first.
    pub below: Vec<Slab>,
    /// Dielectric from the trace's upper face upward, first touching the trace; the trace level itself is filled
    /// with the first of these (the prepreg that flows around the trace). Empty: air over the trace.
    pub above: Vec<Slab>,
    /// A grounded plane under `below`. Without it the board floats in the far box (coplanar lines only).
    pub bottom_plane: bool,
    /// A grounded plane on top of `above`.
    pub top_plane: bool,
    /// Conformal solder mask over the traces and the board (thickness, Dk), only where `above` is empty.
    pub mask: Option<Slab>,
    /// Copper thickness, m.
    pub t: f64,
}

/// Checks a length that must be positive and finite.
fn len(field: &str, v: f64) -> Result<f64> {
    error::length(field, v)
}

/// `(height, Dk)` layers as slabs, neighbours of equal Dk merged (no interface to mesh) and empty ones dropped.
fn slabs(side: &[(f64, f64)], name: &str) -> Result<Vec<Slab>> {
    let mut out: Vec<Slab> = Vec::with_capacity(side.len());
    for &(h, er) in side {
        let er = error::permittivity(name, er)?;
        let h = error::length_or_zero(name, h)?;
        match out.last_mut() {
            Some(last) if last.er == er => last.h += h,
            _ if h > 0.0 => out.push(Slab { h, er }),
            _ => {}
        }
    }
    Ok(out)
}

/// The dielectric regions of a broadside pair, bottom plane (y = 0) up, each layer as it is: the lower trace's
/// level is filled by the dielectric above it and the upper trace's by the one below it (each trace is pressed into
/// the dielectric between them). `None` when the layering's heights do not add up to the medium's.
fn broadside_regions(
    layering: &crate::section::Layering,
    x_max: f64,
    heights: [f64; 3],
    t: f64,
) -> Result<Option<Vec<Region>>> {
    let mut below = slabs(&layering.below, "dk")?;
    below.reverse();
    let between = slabs(&layering.between, "dk")?;
    let above = slabs(&layering.above, "dk")?;
    let sum = |v: &[Slab]| v.iter().map(|s| s.h).sum::<f64>();
    let [h_below, separation, h_above] = heights;
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * b.max(a);
    if below.is_empty() || between.is_empty() || above.is_empty() {
        return Ok(None);
    }
    if !(close(sum(&below), h_below)
        && close(sum(&between), separation)
        && close(sum(&above), h_above))
    {
        return Ok(None);
    }
    let mut regions = Vec::new();
    let mut y = 0.0;
    let mut paint = |h: f64, er: f64, y: &mut f64| {
        if h <= 0.0 {
            return;
        }
        regions.push(Region {
            shape: Trapezoid::rect(-x_max, 2.0 * x_max, *y, *y + h),
            er,
        });
        *y += h;
    };
    for s in &below {
        paint(s.h, s.er, &mut y);
    }
    paint(t, between[0].er, &mut y);
    for s in &between {
        paint(s.h, s.er, &mut y);
    }
    paint(t, between[between.len() - 1].er, &mut y);
    for s in &above {
        paint(s.h, s.er, &mut y);
    }
    Ok(Some(regions))
}

impl LayerStack {
    /// The layer stack a resolved cross-section stands for: each dielectric layer as it is in the stack when the
    /// section carries its layering, else one Dk per side.
    pub fn from_cross_section(cs: &CrossSection) -> Result<LayerStack> {
        let mut stack = LayerStack::merged(cs)?;
        if let Some(layering) = &cs.layering {
            match cs.medium {
                Medium::Microstrip { .. } | Medium::Stripline { .. } => {
                    let mut below = slabs(&layering.below, "dk")?;
                    below.reverse();
                    if !below.is_empty() {
                        stack.below = below;
                    }
                }
                _ => {}
            }
            if let Medium::Stripline { .. } = cs.medium {
                let above = slabs(&layering.above, "dk")?;
                if !above.is_empty() {
                    stack.above = above;
                }
            }
        }
        Ok(stack)
    }

    /// The layer stack with one Dk per side, as the closed forms see it.
    fn merged(cs: &CrossSection) -> Result<LayerStack> {
        let t = error::length_or_zero("thickness", cs.t)?;
        Ok(match cs.medium {
            Medium::Microstrip { h, er, cover } => {
                let below = vec![Slab {
                    h: len("height", h)?,
                    er: error::permittivity("dk", er)?,
                }];
                let (above, mask) = match cover {
                    Cover::Air => (vec![], None),
                    Cover::Mask { thickness_m, er } => (
                        vec![],
                        Some(Slab {
                            h: len("mask_thickness", thickness_m)?,
                            er: error::permittivity("mask_dk", er)?,
                        }),
                    ),
                    Cover::Dielectric { thickness_m, er } => (
                        vec![Slab {
                            h: len("cover", thickness_m)?,
                            er: error::permittivity("cover_dk", er)?,
                        }],
                        None,
                    ),
                };
                LayerStack {
                    below,
                    above,
                    bottom_plane: true,
                    top_plane: false,
                    mask,
                    t,
                }
            }
            Medium::NoPlane { h, er } => LayerStack {
                below: vec![Slab {
                    h: len("height", h)?,
                    er: error::permittivity("dk", er)?,
                }],
                above: vec![],
                bottom_plane: false,
                top_plane: false,
                mask: None,
                t,
            },
            Medium::Stripline {
                h_below,
                h_above,
                er,
                ..
            } => {
                let er = error::permittivity("dk", er)?;
                LayerStack {
                    below: vec![Slab {
                        h: len("height", h_below)?,
                        er,
                    }],
                    above: vec![Slab {
                        h: len("height_above", h_above)?,
                        er,
                    }],
                    bottom_plane: true,
                    top_plane: true,
                    mask: None,
                    t,
                }
            }
            Medium::Broadside { .. } => {
                return Err(Error::Invalid {
                    field: "structure".into(),
                    reason: "a broadside cross-section is built by `build`, not as a layer stack"
                        .into(),
                })
            }
        })
    }
}

/// Trace shape: bottom width `w` from `x_left`, top narrower by 2·t/etch_factor.
fn trace(x_left: f64, w: f64, y: f64, t: f64, undercut: f64) -> Trapezoid {
    Trapezoid {
        y0: y,
        y1: y + t,
        x0l: x_left,
        x0r: x_left + w,
        x1l: x_left + undercut,
        x1r: x_left + w - undercut,
    }
}

/// One-side undercut t/etch_factor, checked so the trace top keeps a positive width.
fn undercut(t: f64, w: f64, etch_factor: Option<f64>) -> Result<f64> {
    let Some(ef) = etch_factor else {
        return Ok(0.0);
    };
    error::in_range("etch_factor", ef, 0.5, 100.0, "")?;
    let u = t / ef;
    if w - 2.0 * u <= 0.01 * w {
        return Err(Error::Invalid {
            field: "etch_factor".into(),
            reason: format!(
                "an etch factor of {ef} leaves no top width on a trace {:.1} µm wide and {:.1} µm thick",
                w * 1e6,
                t * 1e6
            ),
        });
    }
    Ok(u)
}

/// Horizontal layout of the conductors on the trace layer (half domain): signal traces and coplanar grounds.
struct TraceLayout {
    layout: Layout,
    /// Left edge (bottom) of each signal trace in the half domain (signal k is `Net::Signal(k)`) and their width.
    signals_left: Vec<f64>,
    w: f64,
    /// Left edge of the coplanar ground, if any.
    ground_left: Option<f64>,
    /// Horizontal half-extent of the copper features (for the box size).
    extent: f64,
    features: Vec<(String, f64)>,
}

fn trace_layout(structure: Structure, dims: &Dims) -> Result<TraceLayout> {
    let w = len("width", dims.w)?;
    let spacing = || -> Result<f64> {
        len(
            "spacing",
            dims.s.ok_or_else(|| Error::Invalid {
                field: "spacing".into(),
                reason: "a pair needs a spacing".into(),
            })?,
        )
    };
    let gap = || -> Result<f64> {
        len(
            "gap",
            dims.gap.ok_or_else(|| Error::Invalid {
                field: "gap".into(),
                reason: "a coplanar structure needs a gap to ground".into(),
            })?,
        )
    };
    let mut features = vec![("width".to_string(), w)];
    let (layout, signal_left, ground_left) = match structure {
        Structure::Single | Structure::BroadsidePair => (Layout::Centered, -w / 2.0, None),
        Structure::Coplanar => {
            let g = gap()?;
            features.push(("gap".into(), g));
            (Layout::Centered, -w / 2.0, Some(w / 2.0 + g))
        }
        Structure::EdgePair => {
            let s = spacing()?;
            features.push(("spacing".into(), s));
            (Layout::MirroredPair, s / 2.0, None)
        }
        Structure::CoplanarPair => {
            let s = spacing()?;
            let g = gap()?;
            features.push(("spacing".into(), s));
            features.push(("gap".into(), g));
            (Layout::MirroredPair, s / 2.0, Some(s / 2.0 + w + g))
        }
    };
    let extent = ground_left.unwrap_or(signal_left + w).max(w);
    Ok(TraceLayout {
        layout,
        signals_left: vec![signal_left],
        w,
        ground_left,
        extent,
        features,
    })
}

/// Checks the features against the aspect cap; the error names the smallest feature.
fn check_aspect(features: &[(String, f64)]) -> Result<f64> {
    let (small_name, small) = features
        .iter()
        .filter(|f| f.1 > 0.0)
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .cloned()
        .unwrap_or(("width".into(), 1.0));
    let (big_name, big) = features
        .iter()
        .max_by(|a, b| a.1.total_cmp(&b.1))
        .cloned()
        .unwrap_or(("width".into(), 1.0));
    if big / small > MAX_ASPECT {
        return Err(Error::Invalid {
            field: small_name.clone(),
            reason: format!(
                "{small_name} ({:.3e} m) is more than {MAX_ASPECT:.0} times smaller than {big_name} ({:.3e} m); \
                 the field solver cannot grid such a cross-section",
                small, big
            ),
        });
    }
    Ok(small)
}

/// Builds the half-domain geometry of `structure` with dimensions `dims` in the layer stack `stack`.
pub fn build_layered(
    stack: &LayerStack,
    structure: Structure,
    dims: &Dims,
    etch_factor: Option<f64>,
) -> Result<Geometry> {
    build_on_layout(
        stack,
        structure,
        trace_layout(structure, dims)?,
        etch_factor,
    )
}

/// The geometry of a rule's line or pair beside an identical neighbour on the same layer, `spacing` apart edge to
/// edge (bottom edges), for crosstalk: two single lines, or two edge-coupled pairs (four signals), mirrored about
/// the middle of the spacing. Signal 0 is the one nearest the neighbour. Coplanar lines keep ground copper between
/// neighbours and broadside pairs sit on two layers: neither is built here.
pub fn build_neighbours(
    cs: &CrossSection,
    structure: Structure,
    dims: &Dims,
    spacing: f64,
    etch_factor: Option<f64>,
) -> Result<Geometry> {
    const NEIGHBOUR: &str = "spacing to the neighbour";
    let spacing = len(NEIGHBOUR, spacing)?;
    let stack = LayerStack::from_cross_section(cs)?;
    if !matches!(structure, Structure::Single | Structure::EdgePair) {
        return Err(Error::Invalid {
            field: "structure".into(),
            reason: "crosstalk to a neighbour is computed for single lines and edge-coupled pairs (coplanar ground \
                     copper separates coplanar neighbours; a broadside pair spans two layers)"
                .into(),
        });
    }
    // The two nearest traces are laid out as an edge-coupled pair at the neighbour spacing.
    let mut tl = trace_layout(
        Structure::EdgePair,
        &Dims {
            s: Some(spacing),
            ..*dims
        },
    )?;
    for f in tl.features.iter_mut().filter(|f| f.0 == "spacing") {
        f.0 = NEIGHBOUR.into();
    }
    if structure == Structure::EdgePair {
        let inner = dims.s.ok_or_else(|| Error::Invalid {
            field: "spacing".into(),
            reason: "a pair needs a spacing".into(),
        })?;
        let inner = len("spacing", inner)?;
        tl.signals_left.push(spacing / 2.0 + tl.w + inner);
        tl.extent = spacing / 2.0 + 2.0 * tl.w + inner;
        tl.features.push(("spacing".into(), inner));
    }
    let mut g = build_on_layout(&stack, structure, tl, etch_factor)?;
    note_dual(cs, &mut g);
    Ok(g)
}

/// A dual stripline's other signal layer carries copper the solve leaves out: said on the result.
fn note_dual(cs: &CrossSection, g: &mut Geometry) {
    if let Medium::Stripline { dual: true, .. } = cs.medium {
        g.warnings.push(Warning::new(
            "field solve: the other signal layer of the dual stripline is not modelled (no copper there)",
        ));
    }
}

fn build_on_layout(
    stack: &LayerStack,
    structure: Structure,
    tl: TraceLayout,
    etch_factor: Option<f64>,
) -> Result<Geometry> {
    if structure == Structure::BroadsidePair {
        return Err(Error::Invalid {
            field: "structure".into(),
            reason: "a broadside pair needs two trace layers; use a broadside cross-section".into(),
        });
    }
    if stack.below.is_empty() || stack.below.len() > 20 || stack.above.len() > 20 {
        return Err(Error::Invalid {
            field: "layers".into(),
            reason: "give 1 to 20 dielectric layers below the trace and at most 20 above".into(),
        });
    }
    if stack.top_plane && stack.above.is_empty() {
        return Err(Error::Invalid {
            field: "layers".into(),
            reason: "a top plane needs dielectric between it and the trace".into(),
        });
    }
    if !stack.bottom_plane
        && !stack.top_plane
        && !matches!(structure, Structure::Coplanar | Structure::CoplanarPair)
    {
        return Err(Error::Invalid {
            field: "references".into(),
            reason: "without a plane only coplanar structures have a return path".into(),
        });
    }
    let t = error::length_or_zero("thickness", stack.t)?;
    let mut features = tl.features.clone();
    for (i, s) in stack.below.iter().chain(stack.above.iter()).enumerate() {
        len(&format!("layers[{i}].height"), s.h)?;
        error::permittivity(&format!("layers[{i}].dk"), s.er)?;
        features.push((format!("layers[{i}].height"), s.h));
    }
    if t > 0.0 {
        features.push(("thickness".into(), t));
    }
    if let Some(m) = stack.mask {
        len("mask_thickness", m.h)?;
        error::permittivity("mask_dk", m.er)?;
        features.push(("mask_thickness".into(), m.h));
    }
    let fine = check_aspect(&features)?;
    let u = undercut(t, tl.w, etch_factor)?;
    let y_trace: f64 = stack.below.iter().map(|s| s.h).sum();
    let h_above: f64 = stack.above.iter().map(|s| s.h).sum();
    let board_top = y_trace + t + h_above;
    let height_scale = y_trace.max(t + h_above);
    // Box: planes are walls; open sides get a far wall.
    let (y_min, y_max, x_max);
    let mut warnings = Vec::new();
    if stack.bottom_plane && stack.top_plane {
        y_min = 0.0;
        y_max = board_top;
        x_max = tl.extent + STRIPLINE_SIDE_FACTOR * board_top;
    } else {
        let far = BOX_FACTOR * height_scale.max(tl.extent);
        y_min = if stack.bottom_plane { 0.0 } else { -far };
        y_max = if stack.top_plane {
            board_top
        } else {
            board_top.max(y_trace + t + stack.mask.map(|m| m.h).unwrap_or(0.0)) + far
        };
        x_max = tl.extent + far;
        if !stack.bottom_plane {
            warnings.push(Warning::new(
                "field solve: no plane, the far grounded box stands in for infinity",
            ));
        }
    }
    let mut regions = Vec::new();
    let mut y = 0.0;
    for s in &stack.below {
        regions.push(Region {
            shape: Trapezoid::rect(-x_max, 2.0 * x_max, y, y + s.h),
            er: s.er,
        });
        y += s.h;
    }
    if let Some(first) = stack.above.first() {
        // The trace level is filled by the first dielectric above it.
        regions.push(Region {
            shape: Trapezoid::rect(-x_max, 2.0 * x_max, y, y + t),
            er: first.er,
        });
        y += t;
        for s in &stack.above {
            regions.push(Region {
                shape: Trapezoid::rect(-x_max, 2.0 * x_max, y, y + s.h),
                er: s.er,
            });
            y += s.h;
        }
    }
    let mut conductors: Vec<Conductor> = tl
        .signals_left
        .iter()
        .enumerate()
        .map(|(k, &left)| Conductor {
            shape: trace(left, tl.w, y_trace, t, u),
            net: Net::Signal(k),
        })
        .collect();
    if let Some(g) = tl.ground_left {
        // Coplanar ground copper reaches the side wall (a wide pour); its inner edge is etched like the trace.
        conductors.push(Conductor {
            shape: Trapezoid {
                y0: y_trace,
                y1: y_trace + t,
                x0l: g,
                x0r: 2.0 * x_max,
                x1l: g + u,
                x1r: 2.0 * x_max,
            },
            net: Net::Ground,
        });
    }
    if let Some(m) = stack.mask {
        if stack.above.is_empty() {
            regions.push(Region {
                shape: Trapezoid::rect(-x_max, 2.0 * x_max, y_trace, y_trace + m.h),
                er: m.er,
            });
            for c in &conductors {
                regions.push(Region {
                    shape: c.shape.coated(m.h),
                    er: m.er,
                });
            }
        } else {
            warnings.push(Warning::new(
                "field solve: solder mask ignored under further dielectric",
            ));
        }
    }
    if matches!(structure, Structure::Coplanar | Structure::CoplanarPair) {
        warnings.push(Warning::new(
            "field solve: coplanar ground copper modelled as extending to the far side wall",
        ));
    }
    Ok(Geometry {
        x_max,
        y_min,
        y_max,
        regions,
        n_signals: tl.signals_left.len(),
        conductors,
        layout: tl.layout,
        fine,
        warnings,
    })
}

/// Builds the geometry of a resolved cross-section (one Dk per side, as the stackup merged them).
pub fn build(
    cs: &CrossSection,
    structure: Structure,
    dims: &Dims,
    etch_factor: Option<f64>,
) -> Result<Geometry> {
    match cs.medium {
        Medium::Broadside {
            h_above,
            separation,
            h_below,
            er,
        } => {
            if structure != Structure::BroadsidePair {
                return Err(Error::Invalid {
                    field: "structure".into(),
                    reason: "a broadside cross-section carries a broadside pair".into(),
                });
            }
            let er = error::permittivity("dk", er)?;
            let t = error::length_or_zero("thickness", cs.t)?;
            let tl = trace_layout(Structure::Single, dims)?;
            let signal_left = tl.signals_left[0];
            let mut features = tl.features.clone();
            features.push(("height_above".into(), len("height_above", h_above)?));
            features.push(("separation".into(), len("separation", separation)?));
            features.push(("height".into(), len("height", h_below)?));
            if t > 0.0 {
                features.push(("thickness".into(), t));
            }
            if let Some(l) = &cs.layering {
                for (i, &(h, _)) in l.layers().enumerate() {
                    if h > 0.0 {
                        features.push((format!("layers[{i}].height"), h));
                    }
                }
            }
            let fine = check_aspect(&features)?;
            let u = undercut(t, tl.w, etch_factor)?;
            let top = h_below + 2.0 * t + separation + h_above;
            let x_max = tl.extent + STRIPLINE_SIDE_FACTOR * top;
            // The upper trace is etched from its own copper foil, which faces the other way: its wide face is up.
            let lower = trace(signal_left, tl.w, h_below, t, u);
            let y_up = h_below + t + separation;
            let layered = match &cs.layering {
                Some(l) => broadside_regions(l, x_max, [h_below, separation, h_above], t)?,
                None => None,
            };
            let regions = layered.unwrap_or_else(|| {
                vec![Region {
                    shape: Trapezoid::rect(-x_max, 2.0 * x_max, 0.0, top),
                    er,
                }]
            });
            let upper = Trapezoid {
                y0: y_up,
                y1: y_up + t,
                x0l: lower.x1l,
                x0r: lower.x1r,
                x1l: lower.x0l,
                x1r: lower.x0r,
            };
            Ok(Geometry {
                x_max,
                y_min: 0.0,
                y_max: top,
                regions,
                conductors: vec![
                    Conductor {
                        shape: lower,
                        net: Net::Signal(0),
                    },
                    Conductor {
                        shape: upper,
                        net: Net::Signal(1),
                    },
                ],
                n_signals: 2,
                layout: Layout::Centered,
                fine,
                warnings: Vec::new(),
            })
        }
        _ => {
            let stack = LayerStack::from_cross_section(cs)?;
            let mut g = build_layered(&stack, structure, dims, etch_factor)?;
            note_dual(cs, &mut g);
            Ok(g)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ms(cover: Cover) -> CrossSection {
        CrossSection {
            loss: Default::default(),
            layering: None,
            medium: Medium::Microstrip {
                h: 100e-6,
                er: 4.0,
                cover,
            },
            t: 35e-6,
            references: vec![],
            warnings: vec![],
        }
    }

    fn dims(w: f64) -> Dims {
        Dims {
            w,
            s: None,
            gap: None,
        }
    }

    #[test]
    fn etched_trace_is_narrower_on_top() {
        let g = build(&ms(Cover::Air), Structure::Single, &dims(200e-6), Some(2.0)).unwrap();
        let s = g.conductors[0].shape;
        assert!((s.x0r - 100e-6).abs() < 1e-12);
        // Top width W − 2·t/etch = 200 − 35 = 165 µm, half of it in the half domain.
        assert!((s.x1r - 82.5e-6).abs() < 1e-12, "{}", s.x1r);
    }

    #[test]
    fn mask_follows_trace_contour() {
        let cover = Cover::Mask {
            thickness_m: 20e-6,
            er: 3.5,
        };
        let g = build(&ms(cover), Structure::Single, &dims(200e-6), None).unwrap();
        // Above the trace top, inside the coating: mask; above the coating: air; beside the trace at the
        // substrate, within the coating thickness: mask; a little higher beside the trace but outside the side
        // coating: air.
        let y_top = 100e-6 + 35e-6;
        assert_eq!(g.er_at(50e-6, y_top + 10e-6), 3.5);
        assert_eq!(g.er_at(50e-6, y_top + 30e-6), 1.0);
        assert_eq!(g.er_at(300e-6, 100e-6 + 10e-6), 3.5);
        assert_eq!(g.er_at(115e-6, 100e-6 + 30e-6), 3.5);
        assert_eq!(g.er_at(125e-6, 100e-6 + 30e-6), 1.0);
        assert_eq!(g.er_at(50e-6, 50e-6), 4.0);
    }

    #[test]
    fn absurd_geometry_names_the_field() {
        let e = build(&ms(Cover::Air), Structure::Single, &dims(1e-9), None).unwrap_err();
        assert!(e.to_string().starts_with("width"), "{e}");
        let e = build(&ms(Cover::Air), Structure::Single, &dims(f64::NAN), None).unwrap_err();
        assert!(e.to_string().starts_with("width"), "{e}");
        let e = build(&ms(Cover::Air), Structure::EdgePair, &dims(1e-4), None).unwrap_err();
        assert!(e.to_string().starts_with("spacing"), "{e}");
        let e = build(&ms(Cover::Air), Structure::Single, &dims(50e-6), Some(0.6)).unwrap_err();
        assert!(e.to_string().starts_with("etch_factor"), "{e}");
    }
}
