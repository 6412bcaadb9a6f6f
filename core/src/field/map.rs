//! The potential of a finished field solve, sampled for a picture: the finest level's nodal potential
//! (dielectrics in place) resampled bilinearly onto a display grid over a window around the signal conductors,
//! mirrored to the whole cross-section, with the outlines of the copper, the planes and the dielectric interfaces.
//!
//! Drive: a single line (or coplanar line) at 1 V with every ground at 0 V; a pair in its odd (differential)
//! mode, +1 V on one line and −1 V on the other — the mode its controlled impedance Zdiff belongs to. The values
//! are the solver's own (the nodes inside copper hold the drive exactly); only the bilinear sampling between the
//! solver's nodes is added. Display only: impedances come from the energy, never from this map.

use super::geometry::{Layout, Net, Trapezoid};
use super::grid::Grid;
use super::{solve, FieldSolve};
use serde::Serialize;

/// Display grid: columns across the window; rows follow the window's aspect within [`MIN_ROWS`, `MAX_ROWS`].
pub const COLUMNS: usize = 96;
pub const MIN_ROWS: usize = 24;
pub const MAX_ROWS: usize = 80;
/// The window reaches this many "nearest-return distances" beyond the signal copper (the field's own scale: most
/// of the energy of a line lies within about two such distances).
pub const WINDOW_MARGIN: f64 = 2.5;

/// How the conductors are driven in the map.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Drive {
    /// The signal conductor at 1 V, grounds at 0 V.
    Single,
    /// Odd mode: the right (or, for a broadside pair, the upper) line at +1 V, the other at −1 V.
    Differential,
}

/// What an outline marks.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum OutlineKind {
    /// Signal or coplanar-ground copper (a closed polygon).
    Copper,
    /// A reference plane (a line along the window's edge).
    Plane,
    /// A boundary between two dielectrics (a line or a closed polygon).
    Interface,
}

/// A polyline in metres, whole cross-section coordinates (x = 0 is the structure's axis).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Outline {
    pub kind: OutlineKind,
    pub points: Vec<(f64, f64)>,
}

/// The sampled potential of a finished solve.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PotentialMap {
    pub drive: Drive,
    /// Display node coordinates, ascending, m.
    pub xs: Vec<f64>,
    pub ys: Vec<f64>,
    /// Row-major potential, V: `values[j * xs.len() + i]` at (xs[i], ys[j]).
    pub values: Vec<f64>,
    pub outlines: Vec<Outline>,
    /// Node count of the solver grid sampled (half domain).
    pub solver_nodes: usize,
}

impl PotentialMap {
    /// The drive in words, for a title or caption.
    pub fn drive_label(&self) -> &'static str {
        match self.drive {
            Drive::Single => "trace at 1 V, grounds at 0 V",
            Drive::Differential => "differential drive, +1 V / −1 V",
        }
    }
}

/// The window of the map: x ∈ [−x_half, x_half], y ∈ [y_lo, y_hi].
#[derive(Debug, Clone, Copy, PartialEq)]
struct Window {
    x_half: f64,
    y_lo: f64,
    y_hi: f64,
}

impl FieldSolve {
    /// The potential map of the finished solve (`None` before the solve is done or when it failed).
    pub fn potential_map(&self) -> Option<PotentialMap> {
        match self.outcome.as_ref()? {
            Ok(_) => {}
            Err(_) => return None,
        }
        let (grid, solutions) = self.previous.as_ref()?;
        let g = &self.geometry;
        // Solutions are stored in job order (see `FieldSolve::jobs`): walls, then dielectric before vacuum, then
        // signals. Index 0 is the dielectric solve of signal 0 under the first wall: the even solve of a centred
        // structure, the odd (electric-wall) solve of a mirrored pair.
        let (drive, half, odd) = match (g.layout, g.n_signals) {
            (Layout::MirroredPair, _) => (Drive::Differential, solutions.first()?.clone(), true),
            (Layout::Centered, 2) => {
                // Broadside pair: upper line (signal 1) at +1 V, lower (signal 0) at −1 V, by superposition.
                let (lower, upper) = (solutions.first()?, solutions.get(1)?);
                let diff = upper.iter().zip(lower).map(|(u, l)| u - l).collect();
                (Drive::Differential, diff, false)
            }
            _ => (Drive::Single, solutions.first()?.clone(), false),
        };
        let w = self.window();
        let xs = axis_full(w.x_half, COLUMNS / 2, &self.edges_x(&w));
        let rows = ((COLUMNS as f64) * (w.y_hi - w.y_lo) / (2.0 * w.x_half))
            .round()
            .clamp(MIN_ROWS as f64, MAX_ROWS as f64) as usize;
        let ys = axis(w.y_lo, w.y_hi, rows, &self.edges_y(&w));
        // Sample the half-domain solution at |x| and apply the mirror's parity.
        let at = Grid {
            x: xs.iter().map(|x| x.abs()).collect(),
            y: ys.clone(),
        };
        let mut values = solve::interpolate(grid, &half, &at);
        if odd {
            let nx = xs.len();
            for (k, v) in values.iter_mut().enumerate() {
                if xs[k % nx] < 0.0 {
                    *v = -*v;
                }
            }
        }
        Some(PotentialMap {
            drive,
            outlines: self.outlines(&w),
            xs,
            ys,
            values,
            solver_nodes: grid.nodes(),
        })
    }

    fn signal_bounds(&self) -> (f64, f64, f64) {
        let mut x_right: f64 = 0.0;
        let (mut y0, mut y1) = (f64::INFINITY, f64::NEG_INFINITY);
        for c in &self.geometry.conductors {
            if let Net::Signal(_) = c.net {
                x_right = x_right.max(c.shape.x0r).max(c.shape.x1r);
                y0 = y0.min(c.shape.y0);
                y1 = y1.max(c.shape.y1);
            }
        }
        (x_right, y0, y1)
    }

    /// A window around the signal copper, reaching [`WINDOW_MARGIN`] times the distance to the nearest return
    /// (plane or coplanar ground) beyond it, clipped to the solver's box.
    fn window(&self) -> Window {
        let g = &self.geometry;
        let (x_right, y0, y1) = self.signal_bounds();
        let mut nearest = f64::INFINITY;
        // Far walls of an open side stand in for infinity; only real planes count as returns.
        let near = |d: f64| d > 0.0 && d < 50.0 * (y1 - y0 + x_right).max(g.fine);
        for d in [y0 - g.y_min, g.y_max - y1] {
            if near(d) {
                nearest = nearest.min(d);
            }
        }
        for c in &g.conductors {
            if c.net == Net::Ground {
                let d = c.shape.x0l.min(c.shape.x1l) - x_right;
                if d > 0.0 {
                    nearest = nearest.min(d);
                }
            }
        }
        if !nearest.is_finite() {
            nearest = (y1 - y0).max(x_right);
        }
        let margin = WINDOW_MARGIN * nearest;
        Window {
            x_half: (x_right + margin).min(g.x_max),
            y_lo: (y0 - margin).max(g.y_min),
            y_hi: (y1 + margin).min(g.y_max),
        }
    }

    /// Vertical edges of copper and interfaces inside the window (x > 0), to place display columns on.
    fn edges_x(&self, w: &Window) -> Vec<f64> {
        self.edges(|s| vec![s.x0l, s.x0r, s.x1l, s.x1r], 0.0, w.x_half)
    }

    /// Horizontal edges of copper and interfaces inside the window.
    fn edges_y(&self, w: &Window) -> Vec<f64> {
        self.edges(|s| vec![s.y0, s.y1], w.y_lo, w.y_hi)
    }

    /// The coordinates `of` every copper and dielectric shape that lie strictly between `lo` and `hi`.
    fn edges(&self, of: impl Fn(&Trapezoid) -> Vec<f64>, lo: f64, hi: f64) -> Vec<f64> {
        let g = &self.geometry;
        let shapes = g
            .conductors
            .iter()
            .map(|c| c.shape)
            .chain(g.regions.iter().map(|r| r.shape));
        shapes
            .flat_map(|s| of(&s))
            .filter(|&v| v > lo && v < hi)
            .collect()
    }

    fn outlines(&self, w: &Window) -> Vec<Outline> {
        let g = &self.geometry;
        let mut out = Vec::new();
        let tol = 1e-9 * g.fine;
        for c in &g.conductors {
            for points in mirrored(&c.shape, tol) {
                out.push(Outline {
                    kind: OutlineKind::Copper,
                    points: clip(points, w),
                });
            }
        }
        for (y, is_plane) in [(g.y_min, true), (g.y_max, true)] {
            if is_plane && y >= w.y_lo - tol && y <= w.y_hi + tol && self.is_real_plane(y) {
                out.push(Outline {
                    kind: OutlineKind::Plane,
                    points: vec![(-w.x_half, y), (w.x_half, y)],
                });
            }
        }
        // Dielectric interfaces: horizontal lines where the permittivity changes across the window, and the
        // outlines of regions that end inside it (a conformal mask around a trace).
        let mut lines: Vec<f64> = Vec::new();
        for r in &g.regions {
            let s = r.shape;
            let spans = s.x0l.min(s.x1l) <= -w.x_half && s.x0r.min(s.x1r) >= w.x_half;
            if spans {
                for y in [s.y0, s.y1] {
                    let inside = y > w.y_lo + tol && y < w.y_hi - tol;
                    let changes =
                        g.er_at(w.x_half, y - tol * 1e3) != g.er_at(w.x_half, y + tol * 1e3);
                    if inside && changes && !lines.iter().any(|&l| (l - y).abs() <= tol) {
                        lines.push(y);
                    }
                }
            } else {
                for points in mirrored(&s, tol) {
                    out.push(Outline {
                        kind: OutlineKind::Interface,
                        points: clip(points, w),
                    });
                }
            }
        }
        for y in lines {
            out.push(Outline {
                kind: OutlineKind::Interface,
                points: vec![(-w.x_half, y), (w.x_half, y)],
            });
        }
        out
    }

    /// Whether a horizontal box wall at `y` is one of the structure's planes (not a far wall standing in for
    /// infinity).
    fn is_real_plane(&self, y: f64) -> bool {
        let (x_right, y0, y1) = self.signal_bounds();
        let scale = (y1 - y0 + x_right).max(self.geometry.fine);
        (y - y0).abs().min((y - y1).abs()) < 50.0 * scale
    }
}

/// The closed outline of a geometry trapezoid in whole-domain coordinates. Shapes centred on the axis are stored
/// whole (they reach x < 0) and are drawn as they are; a shape that starts at the axis is joined with its mirror
/// image; any other shape gets its mirror image beside it.
fn mirrored(s: &Trapezoid, tol: f64) -> Vec<Vec<(f64, f64)>> {
    let right = vec![
        (s.x0l, s.y0),
        (s.x0r, s.y0),
        (s.x1r, s.y1),
        (s.x1l, s.y1),
        (s.x0l, s.y0),
    ];
    if s.x0l < -tol || s.x1l < -tol {
        return vec![right];
    }
    if s.x0l.abs() <= tol && s.x1l.abs() <= tol {
        return vec![vec![
            (-s.x0r, s.y0),
            (s.x0r, s.y0),
            (s.x1r, s.y1),
            (-s.x1r, s.y1),
            (-s.x0r, s.y0),
        ]];
    }
    let left = right.iter().map(|&(x, y)| (-x, y)).collect();
    vec![right, left]
}

/// Clamps a polyline's points into the window (shapes that run past it, like a coplanar pour, end at its edge).
fn clip(points: Vec<(f64, f64)>, w: &Window) -> Vec<(f64, f64)> {
    points
        .into_iter()
        .map(|(x, y)| (x.clamp(-w.x_half, w.x_half), y.clamp(w.y_lo, w.y_hi)))
        .collect()
}

/// `n` equal intervals on [lo, hi], each interior node moved onto an edge that lies within half a step of it (so
/// copper and interface edges fall on display nodes and stay crisp).
fn axis(lo: f64, hi: f64, n: usize, edges: &[f64]) -> Vec<f64> {
    let n = n.max(2);
    let step = (hi - lo) / n as f64;
    let mut nodes: Vec<f64> = (0..=n).map(|k| lo + step * k as f64).collect();
    for &e in edges {
        let k = ((e - lo) / step).round() as usize;
        if k > 0 && k < n && (nodes[k] - e).abs() < 0.5 * step {
            nodes[k] = e;
        }
    }
    nodes
}

/// A symmetric axis on [−half, half] with `n` intervals on each side and x = 0 a node.
fn axis_full(half: f64, n: usize, edges: &[f64]) -> Vec<f64> {
    let right = axis(0.0, half, n, edges);
    let mut full: Vec<f64> = right[1..].iter().rev().map(|x| -x).collect();
    full.extend(right);
    full
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::project::Structure;
    use crate::field::{build, FieldOptions};
    use crate::section::Dims;
    use crate::section::{Cover, CrossSection, Medium};

    fn microstrip() -> CrossSection {
        CrossSection {
            loss: Default::default(),
            layering: None,
            medium: Medium::Microstrip {
                h: 170e-6,
                er: 4.2,
                cover: Cover::Air,
            },
            t: 35e-6,
            references: vec![],
            warnings: vec![],
        }
    }

    fn solved(cs: &CrossSection, structure: Structure, dims: Dims) -> FieldSolve {
        let g = build(cs, structure, &dims, None).unwrap();
        let mut job = FieldSolve::new(g, FieldOptions::default()).unwrap();
        while !job.step(2_000_000).done {}
        job
    }

    fn value(map: &PotentialMap, x: f64, y: f64) -> f64 {
        let i = map.xs.iter().position(|&v| (v - x).abs() < 1e-12).unwrap();
        let j = map.ys.iter().position(|&v| (v - y).abs() < 1e-12).unwrap();
        map.values[j * map.xs.len() + i]
    }

    #[test]
    fn single_line_map_obeys_the_maximum_principle_and_mirror() {
        let dims = Dims {
            w: 300e-6,
            s: None,
            gap: None,
        };
        let job = solved(&microstrip(), Structure::Single, dims);
        let map = job.potential_map().unwrap();
        assert_eq!(map.drive, Drive::Single);
        let (nx, ny) = (map.xs.len(), map.ys.len());
        assert_eq!(map.values.len(), nx * ny);
        assert!((MIN_ROWS + 1..=MAX_ROWS + 1).contains(&ny));
        assert!(map.xs.windows(2).all(|w| w[1] > w[0]) && map.ys.windows(2).all(|w| w[1] > w[0]));
        // Laplace's equation: no value outside the conductor potentials; the plane at 0, the trace at 1.
        assert!(map
            .values
            .iter()
            .all(|&v| (-1e-12..=1.0 + 1e-12).contains(&v)));
        assert_eq!(map.ys[0], 0.0);
        assert!(map.values[..nx].iter().all(|&v| v == 0.0));
        assert_eq!(value(&map, 0.0, 170e-6), 1.0);
        assert_eq!(value(&map, 150e-6, 205e-6), 1.0);
        // Even in x.
        for j in 0..ny {
            for i in 0..nx {
                let a = map.values[j * nx + i];
                let b = map.values[j * nx + (nx - 1 - i)];
                assert!((a - b).abs() < 1e-12);
            }
        }
        // The window reaches the plane and 2.5 h beside the trace.
        let x_half = *map.xs.last().unwrap();
        assert!((x_half - (150e-6 + 2.5 * 170e-6)).abs() < 1e-12, "{x_half}");
        // The trace outline is one polygon across the axis; the plane is drawn; air/laminate interface at h.
        let copper: Vec<_> = map
            .outlines
            .iter()
            .filter(|o| o.kind == OutlineKind::Copper)
            .collect();
        assert_eq!(copper.len(), 1);
        assert!(copper[0].points.contains(&(-150e-6, 170e-6)));
        assert_eq!(
            map.outlines
                .iter()
                .filter(|o| o.kind == OutlineKind::Plane)
                .count(),
            1
        );
        assert!(map
            .outlines
            .iter()
            .any(|o| o.kind == OutlineKind::Interface && o.points[0].1 == 170e-6));
        // Potential falls away from the trace: above it, and beside it along the substrate surface.
        let top = 205e-6;
        let above: Vec<f64> = map
            .ys
            .iter()
            .filter(|&&y| y >= top)
            .map(|&y| value(&map, 0.0, y))
            .collect();
        assert!(above.windows(2).all(|w| w[1] <= w[0]));
    }

    #[test]
    fn pair_map_is_odd_and_zero_on_the_axis() {
        let dims = Dims {
            w: 200e-6,
            s: Some(150e-6),
            gap: None,
        };
        let job = solved(&microstrip(), Structure::EdgePair, dims);
        let map = job.potential_map().unwrap();
        assert_eq!(map.drive, Drive::Differential);
        let nx = map.xs.len();
        let mid = nx / 2;
        assert_eq!(map.xs[mid], 0.0);
        for j in 0..map.ys.len() {
            assert_eq!(map.values[j * nx + mid], 0.0);
            for i in 0..nx {
                let a = map.values[j * nx + i];
                let b = map.values[j * nx + (nx - 1 - i)];
                assert!((a + b).abs() < 1e-12);
            }
        }
        assert!(map.values.iter().all(|&v| v.abs() <= 1.0 + 1e-12));
        assert_eq!(value(&map, 75e-6, 170e-6), 1.0);
        assert_eq!(value(&map, -275e-6, 205e-6), -1.0);
        let copper = map
            .outlines
            .iter()
            .filter(|o| o.kind == OutlineKind::Copper)
            .count();
        assert_eq!(copper, 2);
    }

    #[test]
    fn broadside_map_drives_upper_positive() {
        let cs = CrossSection {
            loss: Default::default(),
            layering: None,
            medium: Medium::Broadside {
                h_above: 150e-6,
                separation: 120e-6,
                h_below: 150e-6,
                er: 3.8,
            },
            t: 17e-6,
            references: vec![],
            warnings: vec![],
        };
        let dims = Dims {
            w: 120e-6,
            s: None,
            gap: None,
        };
        let job = solved(&cs, Structure::BroadsidePair, dims);
        let map = job.potential_map().unwrap();
        assert_eq!(map.drive, Drive::Differential);
        assert_eq!(value(&map, 0.0, 150e-6), -1.0);
        assert_eq!(value(&map, 0.0, 150e-6 + 17e-6 + 120e-6), 1.0);
        // Both planes are in the window and at 0 V.
        let (nx, ny) = (map.xs.len(), map.ys.len());
        assert_eq!(map.ys[0], 0.0);
        assert!((map.ys[ny - 1] - (2.0 * 150e-6 + 120e-6 + 34e-6)).abs() < 1e-15);
        assert!(map.values[..nx].iter().all(|&v| v == 0.0));
        assert!(map.values[(ny - 1) * nx..].iter().all(|&v| v == 0.0));
        assert_eq!(
            map.outlines
                .iter()
                .filter(|o| o.kind == OutlineKind::Plane)
                .count(),
            2
        );
    }

    #[test]
    fn no_map_before_the_solve_ends() {
        let dims = Dims {
            w: 300e-6,
            s: None,
            gap: None,
        };
        let g = build(&microstrip(), Structure::Single, &dims, None).unwrap();
        let mut job = FieldSolve::new(g, FieldOptions::default()).unwrap();
        assert!(job.potential_map().is_none());
        job.step(1000);
        assert!(job.potential_map().is_none());
    }

    #[test]
    fn axis_snaps_edges_onto_nodes() {
        let a = axis(0.0, 1.0, 10, &[0.33, 0.94, 2.0]);
        assert_eq!(a.len(), 11);
        assert_eq!(a[3], 0.33);
        assert_eq!(a[10], 1.0);
        assert_eq!(a[9], 0.94);
        let f = axis_full(1.0, 4, &[]);
        assert_eq!(f, vec![-1.0, -0.75, -0.5, -0.25, 0.0, 0.25, 0.5, 0.75, 1.0]);
    }
}
