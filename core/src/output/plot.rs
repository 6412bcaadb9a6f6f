//! Small, generic SVG plots: a line plot (several series, optional log-x, ticks, labels, legend), a histogram with
//! a shaded window (Monte Carlo spreads against a tolerance band) and a heat map with contour lines of a scalar
//! field on a rectilinear grid (the field solver's potential). Pure data in, SVG text out.
//!
//! Non-finite points are skipped (and non-positive x on a log axis), so no `NaN` ever reaches the output; labels
//! are XML-escaped; presentation attributes only (no `style=`, no external references). Also here:
//! [`z_vs_width`], the data of the impedance-versus-width plot around a rule's solution.

use crate::base::error::{Error, Result};
use crate::base::units::format_sig;
use crate::closed_form;
use crate::design::project::Project;
use crate::plan::evaluate_rule;
use crate::section::Dims;
use std::fmt::Write as _;

/// Escapes the five XML special characters, and drops characters XML 1.0 does not allow (most C0 controls).
pub fn xml_escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            '\t' | '\n' | '\r' => out.push(' '),
            c if (c as u32) < 0x20 || c == '\u{fffe}' || c == '\u{ffff}' => {}
            c => out.push(c),
        }
    }
    out
}

/// A coordinate for SVG output: two decimals at most, and never `NaN` or infinite (those become 0; callers skip
/// non-finite data before it gets here, this is the last guard).
pub fn num(v: f64) -> String {
    if !v.is_finite() {
        return "0".into();
    }
    let s = format!("{:.2}", v);
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" || s.is_empty() {
        "0".into()
    } else {
        s.to_string()
    }
}

/// Colours for series, distinguishable in print and for common colour-vision deficiencies (Okabe & Ito 2008
/// palette, from memory).
const PALETTE: [&str; 7] = [
    "#0072b2", "#d55e00", "#009e73", "#cc79a7", "#e69f00", "#56b4e9", "#000000",
];

/// One named data series.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    pub label: String,
    pub points: Vec<(f64, f64)>,
}

/// A line plot of one or more series.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct LinePlot {
    pub title: String,
    pub x_label: String,
    pub y_label: String,
    pub series: Vec<Series>,
    pub log_x: bool,
}

/// A histogram of samples with an optional shaded window (e.g. the tolerance band).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Histogram {
    pub title: String,
    pub x_label: String,
    pub samples: Vec<f64>,
    /// Number of bins (clamped to 1..=200).
    pub bins: usize,
    pub window: Option<(f64, f64)>,
}

/// A scalar field sampled at the nodes of a rectilinear grid.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Field2d {
    pub title: String,
    pub x_label: String,
    pub y_label: String,
    /// Node x coordinates, ascending.
    pub xs: Vec<f64>,
    /// Node y coordinates, ascending (drawn upward).
    pub ys: Vec<f64>,
    /// Row-major values: `values[j * xs.len() + i]` is the value at (xs[i], ys[j]).
    pub values: Vec<f64>,
    /// Number of contour levels drawn over the colours (0 for none; clamped to 50).
    pub contours: usize,
    /// Lines drawn over the field (in the field's coordinates), e.g. conductor outlines.
    pub overlays: Vec<Overlay>,
}

/// A polyline over a heat map.
#[derive(Debug, Clone, PartialEq)]
pub struct Overlay {
    /// SVG class of the path (also says what it is to a reader of the SVG).
    pub class: &'static str,
    pub points: Vec<(f64, f64)>,
    pub stroke: &'static str,
    pub width: f64,
    pub dashed: bool,
    /// Fill of a closed outline (`None` draws the line only).
    pub fill: Option<&'static str>,
}

const W: f64 = 640.0;
const H: f64 = 400.0;
const ML: f64 = 70.0;
const MR: f64 = 20.0;
const MT: f64 = 40.0;
const MB: f64 = 56.0;

/// "Nice" tick positions (1, 2 or 5 × 10ⁿ steps) covering `lo..=hi`, at most about `max_ticks`.
pub fn nice_ticks(lo: f64, hi: f64, max_ticks: usize) -> Vec<f64> {
    if !(lo.is_finite() && hi.is_finite()) || hi <= lo {
        return Vec::new();
    }
    let raw = (hi - lo) / max_ticks.max(1) as f64;
    let e = raw.log10().floor() as i32;
    let mag = 10f64.powi(e);
    let m = [1.0, 2.0, 5.0, 10.0]
        .into_iter()
        .find(|&m| m * mag >= raw)
        .unwrap_or(10.0);
    let step = m * mag;
    // k·m scaled by an exact power of ten, so 3 × 0.2 prints as 0.6, not 0.6000000000000001.
    let at = |k: i64| {
        if e < 0 {
            k as f64 * m / 10f64.powi(-e)
        } else {
            k as f64 * m * mag
        }
    };
    let first = (lo / step).ceil() as i64;
    let last = (hi / step).floor() as i64;
    // The cap keeps a degenerate range from producing millions of ticks.
    (first..=last.min(first + 50)).map(at).collect()
}

/// Decade ticks for a log axis over `lo..=hi` (both > 0); adds 2 and 5 when fewer than two decades show.
pub fn log_ticks(lo: f64, hi: f64) -> Vec<f64> {
    if !(lo > 0.0 && hi > lo && hi.is_finite()) {
        return Vec::new();
    }
    let (a, b) = (lo.log10().floor() as i32, hi.log10().ceil() as i32);
    let mut ticks = Vec::new();
    let few = b - a <= 2;
    for e in a..=b.min(a + 40) {
        for m in if few {
            &[1.0, 2.0, 5.0][..]
        } else {
            &[1.0][..]
        } {
            let v = m * 10f64.powi(e);
            if v >= lo * (1.0 - 1e-12) && v <= hi * (1.0 + 1e-12) {
                ticks.push(v);
            }
        }
    }
    ticks
}

fn tick_label(v: f64) -> String {
    let a = v.abs();
    if a != 0.0 && !(1e-3..1e5).contains(&a) {
        format!("{v:.0e}")
    } else {
        format_sig(v, 4)
    }
}

/// A padded range for data that may be a single value.
fn span(lo: f64, hi: f64) -> (f64, f64) {
    if hi > lo {
        (lo, hi)
    } else {
        let d = if lo == 0.0 { 1.0 } else { lo.abs() * 0.1 };
        (lo - d, hi + d)
    }
}

struct Frame {
    x0: f64,
    x1: f64,
    y0: f64,
    y1: f64,
    log_x: bool,
}

impl Frame {
    fn px(&self, x: f64) -> f64 {
        let (a, b, v) = if self.log_x {
            (self.x0.log10(), self.x1.log10(), x.log10())
        } else {
            (self.x0, self.x1, x)
        };
        ML + (W - ML - MR) * (v - a) / (b - a)
    }
    fn py(&self, y: f64) -> f64 {
        H - MB - (H - MT - MB) * (y - self.y0) / (self.y1 - self.y0)
    }
}

fn open_svg(s: &mut String, class: &str, title: &str) {
    let _ = write!(
        s,
        r##"<svg xmlns="http://www.w3.org/2000/svg" class="ohmstack-plot {class}" width="{w}" height="{h}" viewBox="0 0 {w} {h}" font-family="sans-serif" font-size="11" role="img"><title>{t}</title><rect class="background" x="0" y="0" width="{w}" height="{h}" fill="#ffffff"/><text class="title" x="{tx}" y="22" font-size="14" font-weight="bold" text-anchor="middle" fill="#222222">{t}</text>"##,
        w = num(W),
        h = num(H),
        t = xml_escape(title),
        tx = num(W / 2.0)
    );
}

fn axes(s: &mut String, f: &Frame, x_label: &str, y_label: &str) {
    let _ = write!(
        s,
        r##"<rect class="frame" x="{}" y="{}" width="{}" height="{}" fill="none" stroke="#444444"/>"##,
        num(ML),
        num(MT),
        num(W - ML - MR),
        num(H - MT - MB)
    );
    let xt = if f.log_x {
        log_ticks(f.x0, f.x1)
    } else {
        nice_ticks(f.x0, f.x1, 7)
    };
    for x in xt {
        let px = f.px(x);
        let _ = write!(
            s,
            r##"<line class="grid" x1="{p}" y1="{}" x2="{p}" y2="{}" stroke="#dddddd"/><text class="tick-label" x="{p}" y="{}" text-anchor="middle" fill="#222222">{}</text>"##,
            num(MT),
            num(H - MB),
            num(H - MB + 16.0),
            xml_escape(&tick_label(x)),
            p = num(px)
        );
    }
    for y in nice_ticks(f.y0, f.y1, 6) {
        let py = f.py(y);
        let _ = write!(
            s,
            r##"<line class="grid" x1="{}" y1="{p}" x2="{}" y2="{p}" stroke="#dddddd"/><text class="tick-label" x="{}" y="{}" text-anchor="end" fill="#222222">{}</text>"##,
            num(ML),
            num(W - MR),
            num(ML - 6.0),
            num(py + 4.0),
            xml_escape(&tick_label(y)),
            p = num(py)
        );
    }
    let _ = write!(
        s,
        r##"<text class="axis-label" x="{}" y="{}" text-anchor="middle" fill="#222222">{}</text><text class="axis-label" x="16" y="{}" text-anchor="middle" transform="rotate(-90 16 {})" fill="#222222">{}</text>"##,
        num((ML + W - MR) / 2.0),
        num(H - 14.0),
        xml_escape(x_label),
        num((MT + H - MB) / 2.0),
        num((MT + H - MB) / 2.0),
        xml_escape(y_label)
    );
}

fn no_data(s: &mut String) {
    let _ = write!(
        s,
        r##"<text class="no-data" x="{}" y="{}" text-anchor="middle" fill="#888888">no data</text></svg>"##,
        num(W / 2.0),
        num(H / 2.0)
    );
    s.push('\n');
}

/// Near- and far-end noise (% of the aggressor's swing, magnitudes) against the spacing to a neighbour, on a log
/// spacing axis in `unit`, with the budget as a line.
pub fn crosstalk_plot(
    r: &crate::plan::crosstalk::RuleCrosstalk,
    unit: crate::base::units::LengthUnit,
) -> String {
    crosstalk_curve_plot(
        format!("{}: crosstalk to a neighbour ({})", r.rule, r.arrangement),
        &r.curve,
        r.options.budget,
        r.options.length_m,
        unit,
    )
}

/// [`crosstalk_plot`] from its parts: the curve, the budget (a fraction) and the side-by-side run (m).
pub fn crosstalk_curve_plot(
    title: String,
    curve: &[crate::plan::crosstalk::CrosstalkPoint],
    budget: f64,
    length_m: f64,
    unit: crate::base::units::LengthUnit,
) -> String {
    use crate::base::units::format_sig;
    let x = |s: f64| unit.from_m(s);
    let noise = |label: String, end: fn(&crate::plan::crosstalk::CrosstalkPoint) -> f64| Series {
        label,
        points: curve
            .iter()
            .map(|p| (x(p.spacing_m), 100.0 * end(p).abs()))
            .collect(),
    };
    let ends = [curve.first(), curve.last()];
    let budget = 100.0 * budget;
    line_plot(&LinePlot {
        title,
        x_label: format!("edge-to-edge spacing ({})", unit.symbol()),
        y_label: "noise (% of the aggressor's swing)".into(),
        series: vec![
            noise("near end".into(), |p| p.near_end),
            noise(
                format!("far end, {} mm run", format_sig(length_m * 1e3, 4)),
                |p| p.far_end,
            ),
            Series {
                label: format!("budget {} %", format_sig(budget, 3)),
                points: ends
                    .iter()
                    .flatten()
                    .map(|p| (x(p.spacing_m), budget))
                    .collect(),
            },
        ],
        log_x: true,
    })
}

/// Insertion loss (dB) against frequency (GHz, log axis) of a run, from `(Hz, dB)` points, with the budget as a
/// line; `title` names the rule and the run.
pub fn insertion_loss_plot(title: String, points: &[(f64, f64)], budget_db: f64) -> String {
    let ghz = |f: f64| f / 1e9;
    let ends = [points.first(), points.last()];
    line_plot(&LinePlot {
        title,
        x_label: "frequency (GHz)".into(),
        y_label: "insertion loss (dB)".into(),
        series: vec![
            Series {
                label: "run + fixed losses".into(),
                points: points.iter().map(|&(f, db)| (ghz(f), db)).collect(),
            },
            Series {
                label: format!("budget {} dB", crate::base::units::format_sig(budget_db, 3)),
                points: ends
                    .iter()
                    .flatten()
                    .map(|&&(f, _)| (ghz(f), budget_db))
                    .collect(),
            },
        ],
        log_x: true,
    })
}

/// Draws a line plot. Points with a non-finite coordinate (or x ≤ 0 on a log axis) are skipped and break the line.
pub fn line_plot(plot: &LinePlot) -> String {
    let ok = |&(x, y): &(f64, f64)| x.is_finite() && y.is_finite() && (!plot.log_x || x > 0.0);
    let mut s = String::new();
    open_svg(&mut s, "line-plot", &plot.title);
    let pts: Vec<(f64, f64)> = plot
        .series
        .iter()
        .flat_map(|se| se.points.iter().copied())
        .filter(ok)
        .collect();
    if pts.is_empty() {
        no_data(&mut s);
        return s;
    }
    let fold = |it: &mut dyn Iterator<Item = f64>| {
        it.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        })
    };
    let (x0, x1) = fold(&mut pts.iter().map(|p| p.0));
    let (y0, y1) = fold(&mut pts.iter().map(|p| p.1));
    let (x0, x1) = if plot.log_x {
        if x1 > x0 {
            (x0, x1)
        } else {
            (x0 / 2.0, x1 * 2.0)
        }
    } else {
        span(x0, x1)
    };
    let (y0, y1) = span(y0, y1);
    let pad = 0.05 * (y1 - y0);
    let f = Frame {
        x0,
        x1,
        y0: y0 - pad,
        y1: y1 + pad,
        log_x: plot.log_x,
    };
    axes(&mut s, &f, &plot.x_label, &plot.y_label);
    for (k, se) in plot.series.iter().enumerate() {
        let colour = PALETTE[k % PALETTE.len()];
        let mut d = String::new();
        let mut pen_down = false;
        for p in &se.points {
            if ok(p) {
                let _ = write!(
                    d,
                    "{}{} {} ",
                    if pen_down { "L" } else { "M" },
                    num(f.px(p.0)),
                    num(f.py(p.1))
                );
                pen_down = true;
            } else {
                pen_down = false;
            }
        }
        if !d.is_empty() {
            let _ = write!(
                s,
                r##"<path class="series series-{k}" d="{}" fill="none" stroke="{colour}" stroke-width="1.8"/>"##,
                d.trim_end()
            );
        }
        let ly = MT + 14.0 + 16.0 * k as f64;
        let lx = W - MR - 170.0;
        let _ = write!(
            s,
            r##"<line class="legend-swatch" x1="{}" y1="{}" x2="{}" y2="{}" stroke="{colour}" stroke-width="2.5"/><text class="legend-label" x="{}" y="{}" fill="#222222">{}</text>"##,
            num(lx),
            num(ly - 4.0),
            num(lx + 20.0),
            num(ly - 4.0),
            num(lx + 26.0),
            num(ly),
            xml_escape(&se.label)
        );
    }
    s.push_str("</svg>\n");
    s
}

/// Draws a histogram; the window, if any, is shaded and the share of samples inside it printed.
pub fn histogram(h: &Histogram) -> String {
    let mut s = String::new();
    open_svg(&mut s, "histogram", &h.title);
    let samples: Vec<f64> = h
        .samples
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    if samples.is_empty() {
        no_data(&mut s);
        return s;
    }
    let bins = h.bins.clamp(1, 200);
    let (mut lo, mut hi) = samples
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    let window = h
        .window
        .filter(|(a, b)| a.is_finite() && b.is_finite() && b > a);
    if let Some((a, b)) = window {
        lo = lo.min(a);
        hi = hi.max(b);
    }
    let (lo, hi) = span(lo, hi);
    let width = (hi - lo) / bins as f64;
    let mut counts = vec![0usize; bins];
    for v in &samples {
        let k = (((v - lo) / width) as usize).min(bins - 1);
        counts[k] += 1;
    }
    let inside = window.map(|(a, b)| {
        let n = samples.iter().filter(|&&v| v >= a && v <= b).count();
        (100.0 * n as f64 / samples.len() as f64, samples.len())
    });
    bars(&mut s, &h.x_label, lo, hi, &counts, window, inside);
    s
}

/// A histogram already binned: `counts` over equal bins from `lo` to `hi` (a spread summary's), with the
/// tolerance window shaded and labelled with `inside` (% of all samples in the window, the number of samples).
pub fn histogram_of_bins(
    title: &str,
    x_label: &str,
    lo: f64,
    hi: f64,
    counts: &[usize],
    window: Option<(f64, f64)>,
    inside: Option<(f64, usize)>,
) -> String {
    let mut s = String::new();
    open_svg(&mut s, "histogram", title);
    let window = window.filter(|(a, b)| a.is_finite() && b.is_finite() && b > a);
    if counts.is_empty() || counts.iter().all(|&c| c == 0) || !(lo.is_finite() && hi > lo) {
        no_data(&mut s);
        return s;
    }
    bars(&mut s, x_label, lo, hi, counts, window, inside);
    s
}

/// Draws the bars of `counts` (equal bins on [lo, hi]), the window with its label and the axes, and closes the SVG.
fn bars(
    s: &mut String,
    x_label: &str,
    lo: f64,
    hi: f64,
    counts: &[usize],
    window: Option<(f64, f64)>,
    inside: Option<(f64, usize)>,
) {
    let width = (hi - lo) / counts.len() as f64;
    let top = *counts.iter().max().unwrap_or(&1) as f64;
    let f = Frame {
        x0: lo,
        x1: hi,
        y0: 0.0,
        y1: top * 1.1,
        log_x: false,
    };
    if let Some((a, b)) = window {
        let _ = write!(
            s,
            r##"<rect class="window" x="{}" y="{}" width="{}" height="{}" fill="#009e73" fill-opacity="0.18"/>"##,
            num(f.px(a)),
            num(MT),
            num(f.px(b) - f.px(a)),
            num(H - MT - MB)
        );
    }
    axes(s, &f, x_label, "count");
    for (k, &c) in counts.iter().enumerate() {
        if c == 0 {
            continue;
        }
        let xa = f.px(lo + width * k as f64);
        let xb = f.px(lo + width * (k + 1) as f64);
        let _ = write!(
            s,
            r##"<rect class="bar" x="{}" y="{}" width="{}" height="{}" fill="#0072b2" stroke="#ffffff" stroke-width="0.5"/>"##,
            num(xa),
            num(f.py(c as f64)),
            num((xb - xa).max(0.5)),
            num(f.py(0.0) - f.py(c as f64))
        );
    }
    if let (Some((a, b)), Some((pct, n))) = (window, inside) {
        let _ = write!(
            s,
            r##"<text class="window-label" x="{}" y="{}" fill="#222222">{} % of {} inside {} to {}</text>"##,
            num(ML + 8.0),
            num(MT + 16.0),
            format_sig(pct, 4),
            n,
            xml_escape(&format_sig(a, 4)),
            xml_escape(&format_sig(b, 4))
        );
    }
    s.push_str("</svg>\n");
}

/// Five stops of a perceptually ordered dark-blue → green → yellow ramp (viridis, stops from memory).
const RAMP: [(f64, f64, f64); 5] = [
    (68.0, 1.0, 84.0),
    (59.0, 82.0, 139.0),
    (33.0, 145.0, 140.0),
    (94.0, 201.0, 98.0),
    (253.0, 231.0, 37.0),
];

/// Colour levels of heat-map cells (finer than the eye separates next to contour lines).
const COLOUR_STEPS: f64 = 48.0;

fn colour(t: f64) -> String {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let x = t * (RAMP.len() - 1) as f64;
    let k = (x.floor() as usize).min(RAMP.len() - 2);
    let u = x - k as f64;
    let (a, b) = (RAMP[k], RAMP[k + 1]);
    let mix = |p: f64, q: f64| (p + (q - p) * u).round().clamp(0.0, 255.0) as u8;
    format!(
        "#{:02x}{:02x}{:02x}",
        mix(a.0, b.0),
        mix(a.1, b.1),
        mix(a.2, b.2)
    )
}

/// Checks a field's grid; errors name the field.
fn check_field(f: &Field2d) -> Result<()> {
    let (nx, ny) = (f.xs.len(), f.ys.len());
    if nx < 2 || ny < 2 || nx > 2000 || ny > 2000 {
        return Err(Error::Invalid {
            field: "grid".into(),
            reason: format!("{nx} × {ny} nodes; need 2 to 2000 in each direction"),
        });
    }
    if f.values.len() != nx * ny {
        return Err(Error::Invalid {
            field: "values".into(),
            reason: format!("{} values for a {nx} × {ny} grid", f.values.len()),
        });
    }
    for (name, axis) in [("xs", &f.xs), ("ys", &f.ys)] {
        if axis.iter().any(|v| !v.is_finite()) || axis.windows(2).any(|w| w[1] <= w[0]) {
            return Err(Error::Invalid {
                field: name.into(),
                reason: "coordinates must be finite and strictly ascending".into(),
            });
        }
    }
    Ok(())
}

/// Draws a heat map of the field (one rectangle per grid cell, coloured by the mean of its finite corner values)
/// with contour lines by marching squares, and a colour bar. A bad grid is an error naming the field.
pub fn heat_map(field: &Field2d) -> Result<String> {
    check_field(field)?;
    let (nx, ny) = (field.xs.len(), field.ys.len());
    let at = |i: usize, j: usize| field.values[j * nx + i];
    let mut s = String::new();
    open_svg(&mut s, "heat-map", &field.title);
    let finite: Vec<f64> = field
        .values
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    if finite.is_empty() {
        no_data(&mut s);
        return Ok(s);
    }
    let (vmin, vmax) = finite
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    let (vlo, vhi) = span(vmin, vmax);
    let right = 90.0; // room for the colour bar
    let (xa, xb) = (field.xs[0], field.xs[nx - 1]);
    let (ya, yb) = (field.ys[0], field.ys[ny - 1]);
    // Keep the aspect ratio of the physical grid inside the plot area.
    let (aw, ah) = (W - ML - MR - right, H - MT - MB);
    let scale = (aw / (xb - xa)).min(ah / (yb - ya));
    // Centre the drawn field vertically in the plot area.
    let y_base = MT + (ah + (yb - ya) * scale) / 2.0;
    let px = |x: f64| ML + (x - xa) * scale;
    let py = |y: f64| y_base - (y - ya) * scale;
    // One rectangle per run of cells of the same (quantised) colour along a row: a potential map has wide
    // regions of one colour (inside copper, far from it), and the SVG stays small.
    let cell_colour = |i: usize, j: usize| -> Option<String> {
        let corners = [at(i, j), at(i + 1, j), at(i, j + 1), at(i + 1, j + 1)];
        let good: Vec<f64> = corners.iter().copied().filter(|v| v.is_finite()).collect();
        if good.is_empty() {
            return None;
        }
        let mean = good.iter().sum::<f64>() / good.len() as f64;
        let t = (mean - vlo) / (vhi - vlo);
        Some(colour((t * COLOUR_STEPS).round() / COLOUR_STEPS))
    };
    // All runs of one colour go into one path (a few dozen paths instead of thousands of rectangles).
    let mut by_colour: std::collections::BTreeMap<String, String> = Default::default();
    for j in 0..ny - 1 {
        let (y0, y1) = (py(field.ys[j + 1]), py(field.ys[j]));
        let mut i = 0;
        while i < nx - 1 {
            let Some(fill) = cell_colour(i, j) else {
                i += 1;
                continue;
            };
            let mut end = i + 1;
            while end < nx - 1 && cell_colour(end, j).as_ref() == Some(&fill) {
                end += 1;
            }
            let (x0, x1) = (px(field.xs[i]), px(field.xs[end]));
            // A slight overlap hides seams between neighbouring runs.
            let (w, h) = (x1 - x0 + 0.3, y1 - y0 + 0.3);
            let d = by_colour.entry(fill).or_default();
            let _ = write!(
                d,
                "M{} {}h{}v{}h-{}z",
                num(x0),
                num(y0),
                num(w),
                num(h),
                num(w)
            );
            i = end;
        }
    }
    for (fill, d) in &by_colour {
        let _ = write!(
            s,
            r##"<path class="cells" fill="{fill}" shape-rendering="crispEdges" d="{d}"/>"##
        );
    }
    let levels = field.contours.min(50);
    for l in 1..=levels {
        let level = vmin + (vmax - vmin) * l as f64 / (levels + 1) as f64;
        let mut d = String::new();
        for j in 0..ny - 1 {
            for i in 0..nx - 1 {
                for (p, q) in cell_segments(field, i, j, level) {
                    let _ = write!(
                        d,
                        "M{} {} L{} {} ",
                        num(px(p.0)),
                        num(py(p.1)),
                        num(px(q.0)),
                        num(py(q.1))
                    );
                }
            }
        }
        if !d.is_empty() {
            let _ = write!(
                s,
                r##"<path class="contour" d="{}" fill="none" stroke="#ffffff" stroke-width="0.8" stroke-opacity="0.85"/>"##,
                d.trim_end()
            );
        }
    }
    for o in &field.overlays {
        let d: Vec<String> = o
            .points
            .iter()
            .filter(|p| p.0.is_finite() && p.1.is_finite())
            .enumerate()
            .map(|(k, p)| {
                format!(
                    "{}{} {}",
                    if k == 0 { 'M' } else { 'L' },
                    num(px(p.0)),
                    num(py(p.1))
                )
            })
            .collect();
        if d.len() < 2 {
            continue;
        }
        let _ = write!(
            s,
            r##"<path class="{}" d="{}" fill="{}" stroke="{}" stroke-width="{}"{}/>"##,
            xml_escape(o.class),
            d.join(" "),
            xml_escape(o.fill.unwrap_or("none")),
            xml_escape(o.stroke),
            num(o.width),
            if o.dashed {
                r#" stroke-dasharray="4 3""#
            } else {
                ""
            }
        );
    }
    let _ = write!(
        s,
        r##"<rect class="frame" x="{}" y="{}" width="{}" height="{}" fill="none" stroke="#444444"/>"##,
        num(ML),
        num(py(yb)),
        num(px(xb) - ML),
        num(py(ya) - py(yb))
    );
    for x in nice_ticks(xa, xb, 6) {
        let _ = write!(
            s,
            r##"<text class="tick-label" x="{}" y="{}" text-anchor="middle" fill="#222222">{}</text>"##,
            num(px(x)),
            num(py(ya) + 16.0),
            xml_escape(&tick_label(x))
        );
    }
    for y in nice_ticks(ya, yb, 5) {
        let _ = write!(
            s,
            r##"<text class="tick-label" x="{}" y="{}" text-anchor="end" fill="#222222">{}</text>"##,
            num(ML - 6.0),
            num(py(y) + 4.0),
            xml_escape(&tick_label(y))
        );
    }
    let _ = write!(
        s,
        r##"<text class="axis-label" x="{}" y="{}" text-anchor="middle" fill="#222222">{}</text><text class="axis-label" x="16" y="{}" text-anchor="middle" transform="rotate(-90 16 {})" fill="#222222">{}</text>"##,
        num((ML + px(xb)) / 2.0),
        num(py(ya) + 34.0),
        xml_escape(&field.x_label),
        num((py(ya) + py(yb)) / 2.0),
        num((py(ya) + py(yb)) / 2.0),
        xml_escape(&field.y_label)
    );
    // Colour bar.
    let bx = W - MR - 50.0;
    for k in 0..20 {
        let t0 = k as f64 / 20.0;
        let _ = write!(
            s,
            r##"<rect class="colour-bar" x="{}" y="{}" width="14" height="{}" fill="{}"/>"##,
            num(bx),
            num(MT + ah * (1.0 - t0 - 0.05)),
            num(ah * 0.05 + 0.3),
            colour(t0 + 0.025)
        );
    }
    for v in nice_ticks(vlo, vhi, 5) {
        let y = MT + ah * (1.0 - (v - vlo) / (vhi - vlo));
        let _ = write!(
            s,
            r##"<text class="tick-label" x="{}" y="{}" fill="#222222">{}</text>"##,
            num(bx + 18.0),
            num(y + 4.0),
            xml_escape(&tick_label(v))
        );
    }
    s.push_str("</svg>\n");
    Ok(s)
}

/// The potential map of a field solve as a heat map with equipotentials every tenth of the drive (0.1 V steps
/// for a single line; 0.2 V from −0.8 to +0.8 V for a pair's ±1 V), the copper outlined, planes drawn thick and
/// dielectric interfaces dashed. Coordinates in µm (mm for windows wider than 3 mm).
pub fn potential_map(map: &crate::field::PotentialMap, title: &str) -> Result<String> {
    use crate::field::map::OutlineKind;
    let width = map.xs.last().copied().unwrap_or(0.0) - map.xs.first().copied().unwrap_or(0.0);
    let (scale, unit) = if width > 3e-3 {
        (1e3, "mm")
    } else {
        (1e6, "µm")
    };
    // Interfaces first, then planes, then copper (filled in a copper colour: its potential is the drive's, and the
    // fill hides interface lines that run through it). Copper gets a light halo under a dark line, so it shows on
    // both ends of the colour ramp.
    let mut overlays = Vec::new();
    for kind in [
        OutlineKind::Interface,
        OutlineKind::Plane,
        OutlineKind::Copper,
    ] {
        let strokes: &[(&'static str, &'static str, f64, bool, Option<&'static str>)] = match kind {
            OutlineKind::Interface => &[("interface", "#e8e8e8", 0.9, true, None)],
            OutlineKind::Plane => &[("plane", "#b87333", 4.0, false, None)],
            OutlineKind::Copper => &[
                ("copper-halo", "#ffffff", 3.0, false, None),
                ("copper", "#1a1a1a", 1.2, false, Some("#c9874f")),
            ],
        };
        for o in map.outlines.iter().filter(|o| o.kind == kind) {
            for &(class, stroke, width, dashed, fill) in strokes {
                overlays.push(Overlay {
                    class,
                    points: o
                        .points
                        .iter()
                        .map(|&(x, y)| (x * scale, y * scale))
                        .collect(),
                    stroke,
                    width,
                    dashed,
                    fill,
                });
            }
        }
    }
    heat_map(&Field2d {
        title: title.to_string(),
        x_label: format!("x ({unit})"),
        y_label: format!("y ({unit})"),
        xs: map.xs.iter().map(|x| x * scale).collect(),
        ys: map.ys.iter().map(|y| y * scale).collect(),
        values: map.values.clone(),
        // Nine levels between the extremes: tenths of the span (the values reach the drive's extremes in copper).
        contours: 9,
        overlays,
    })
}

/// Contour segments of one grid cell at `level` (marching squares; saddles split by the cell's mean value).
fn cell_segments(f: &Field2d, i: usize, j: usize, level: f64) -> Vec<((f64, f64), (f64, f64))> {
    let nx = f.xs.len();
    let v = |i: usize, j: usize| f.values[j * nx + i];
    // Corners counter-clockwise from bottom-left.
    let c = [
        (f.xs[i], f.ys[j], v(i, j)),
        (f.xs[i + 1], f.ys[j], v(i + 1, j)),
        (f.xs[i + 1], f.ys[j + 1], v(i + 1, j + 1)),
        (f.xs[i], f.ys[j + 1], v(i, j + 1)),
    ];
    if c.iter().any(|p| !p.2.is_finite()) {
        return Vec::new();
    }
    // The crossing point on edge k (between corner k and k+1).
    let cross = |k: usize| {
        let (a, b) = (c[k], c[(k + 1) % 4]);
        let t = if b.2 != a.2 {
            ((level - a.2) / (b.2 - a.2)).clamp(0.0, 1.0)
        } else {
            0.5
        };
        (a.0 + t * (b.0 - a.0), a.1 + t * (b.1 - a.1))
    };
    let above: Vec<bool> = c.iter().map(|p| p.2 > level).collect();
    let edges: Vec<usize> = (0..4).filter(|&k| above[k] != above[(k + 1) % 4]).collect();
    match edges.len() {
        2 => vec![(cross(edges[0]), cross(edges[1]))],
        4 => {
            let mean = c.iter().map(|p| p.2).sum::<f64>() / 4.0;
            // Saddle: pair each edge with the neighbour that keeps the centre on its own side.
            if (mean > level) == above[0] {
                vec![(cross(0), cross(1)), (cross(2), cross(3))]
            } else {
                vec![(cross(3), cross(0)), (cross(1), cross(2))]
            }
        }
        _ => Vec::new(),
    }
}

/// Impedance (Z0, or Zdiff for pairs) against trace width over ±30 % of the rule's solved width, `points`
/// samples (clamped to 2..=1000): `(width_m, impedance_ohm)`. Widths the model rejects are left out.
pub fn z_vs_width(project: &Project, rule_idx: usize, points: usize) -> Result<Vec<(f64, f64)>> {
    let rule = project.rules.get(rule_idx).ok_or_else(|| Error::Invalid {
        field: "rule".into(),
        reason: format!(
            "index {rule_idx} is past the last of the {} rules",
            project.rules.len()
        ),
    })?;
    let res = evaluate_rule(project, rule)?;
    Ok(z_vs_width_of(rule, &res, points))
}

/// [`z_vs_width`] from a rule's planned result (no solve: the closed form's curve, scaled to a field figure).
pub fn z_vs_width_of(
    rule: &crate::design::project::ImpedanceRule,
    res: &crate::plan::RuleResult,
    points: usize,
) -> Vec<(f64, f64)> {
    let n = points.clamp(2, 1000);
    let base = Dims {
        w: res.width_m,
        s: res.spacing_m,
        gap: res.gap_m,
    };
    let closed = |w: f64| {
        closed_form::evaluate(&res.cross_section, rule.structure, &Dims { w, ..base })
            .ok()
            .map(|e| e.analysis.controlled())
    };
    // A field figure: the closed form's curve scaled to it at the solution.
    let factor = if crate::engine::is_field_method(&res.method) {
        closed(res.width_m)
            .map(|z| res.impedance_ohm / z)
            .unwrap_or(1.0)
    } else {
        1.0
    };
    (0..n)
        .filter_map(|k| {
            let w = res.width_m * (0.7 + 0.6 * k as f64 / (n - 1) as f64);
            let z = factor * closed(w)?;
            z.is_finite().then_some((w, z))
        })
        .collect()
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;

    #[test]
    fn crosstalk_and_insertion_loss_plots_carry_both_ends_and_the_budget() {
        let p = crate::design::demo::project();
        let rule = &p.rules[0];
        let r = crate::plan::evaluate_rule(&p, rule).unwrap();
        let x = crate::plan::crosstalk::rule_crosstalk(&p, rule, &r, &Default::default()).unwrap();
        let svg = crosstalk_plot(&x, p.units);
        well_formed(&svg).unwrap();
        for label in [
            "near end",
            "far end, 25 mm run",
            "budget 2 %",
            "edge-to-edge spacing (µm)",
        ] {
            assert!(svg.contains(label), "{label}");
        }
        // One path per series: the two ends and the budget.
        assert_eq!(svg.matches("class=\"series series-").count(), 3, "{svg}");
        let svg = insertion_loss_plot("a run".into(), &[(1e9, 1.0), (2e9, 2.5), (4e9, 5.0)], 4.0);
        well_formed(&svg).unwrap();
        assert!(svg.contains("budget 4 dB") && svg.contains("insertion loss (dB)"));
        assert_eq!(svg.matches("class=\"series series-").count(), 2, "{svg}");
    }

    /// A strict-enough XML 1.0 well-formedness check for our own output: balanced tags, quoted attributes with
    /// no raw `<`, text with no raw `<` or stray `&`, only the five predefined entities, one root element.
    pub(crate) fn well_formed(xml: &str) -> std::result::Result<(), String> {
        fn check_text(t: &str) -> std::result::Result<(), String> {
            for p in t.split('&').skip(1) {
                if !["amp;", "lt;", "gt;", "quot;", "apos;"]
                    .iter()
                    .any(|e| p.starts_with(e))
                {
                    return Err(format!(
                        "bad entity near {:?}",
                        p.chars().take(20).collect::<String>()
                    ));
                }
            }
            Ok(())
        }
        let mut stack: Vec<&str> = Vec::new();
        let mut rest = xml.trim_end();
        let mut roots = 0;
        while !rest.is_empty() {
            let lt = rest.find('<').unwrap_or(rest.len());
            let text = &rest[..lt];
            check_text(text)?;
            if stack.is_empty() && !text.trim().is_empty() {
                return Err(format!("text outside the root: {text:?}"));
            }
            if lt == rest.len() {
                break;
            }
            rest = &rest[lt + 1..];
            // The tag ends at the first '>' outside a quoted attribute value.
            let mut end = None;
            let mut quote: Option<char> = None;
            for (k, ch) in rest.char_indices() {
                match (quote, ch) {
                    (None, '"') | (None, '\'') => quote = Some(ch),
                    (Some(q), c) if c == q => quote = None,
                    (Some(_), '<') => return Err("raw < in an attribute".into()),
                    (None, '<') => return Err("raw < in a tag".into()),
                    (None, '>') => {
                        end = Some(k);
                        break;
                    }
                    _ => {}
                }
            }
            let end = end.ok_or("unterminated tag")?;
            let tag = &rest[..end];
            rest = &rest[end + 1..];
            if let Some(name) = tag.strip_prefix('/') {
                if stack.pop() != Some(name.trim()) {
                    return Err(format!("mismatched close tag {name:?}"));
                }
                continue;
            }
            let self_closing = tag.ends_with('/');
            let body = tag.trim_end_matches('/');
            let name = body.split_whitespace().next().ok_or("empty tag")?;
            if !name
                .chars()
                .all(|c| c.is_ascii_alphanumeric() || c == '-' || c == ':')
            {
                return Err(format!("bad tag name {name:?}"));
            }
            let mut attrs = body[name.len()..].trim();
            let mut seen = Vec::new();
            while !attrs.is_empty() {
                let eq = attrs.find('=').ok_or("attribute without =")?;
                let an = attrs[..eq].trim();
                if seen.contains(&an) {
                    return Err(format!("duplicate attribute {an}"));
                }
                seen.push(an);
                let after = &attrs[eq + 1..];
                let q = after.chars().next().ok_or("attribute without value")?;
                if q != '"' && q != '\'' {
                    return Err(format!("unquoted attribute {an}"));
                }
                let close = after[1..].find(q).ok_or("unterminated attribute")?;
                check_text(&after[1..1 + close])?;
                attrs = after[close + 2..].trim_start();
            }
            if stack.is_empty() {
                roots += 1;
            }
            if !self_closing {
                stack.push(name);
            }
        }
        if !stack.is_empty() {
            return Err(format!("unclosed {stack:?}"));
        }
        if roots != 1 {
            return Err(format!("{roots} root elements"));
        }
        Ok(())
    }

    pub(crate) fn assert_well_formed(xml: &str) {
        if let Err(e) = well_formed(xml) {
            panic!("not well-formed XML: {e}\n{xml}");
        }
    }

    #[test]
    fn checker_catches_bad_xml() {
        assert_well_formed("<svg><g a=\"1\"/></svg>");
        for bad in [
            "<svg><g></svg>",
            "<svg>a < b</svg>",
            "<svg>&nbsp;</svg>",
            "<svg a=1></svg>",
            "<svg></svg><svg></svg>",
        ] {
            assert!(well_formed(bad).is_err(), "{bad}");
        }
    }

    #[test]
    fn escape_and_numbers() {
        assert_eq!(
            xml_escape("<a href=\"x\">&'"),
            "&lt;a href=&quot;x&quot;&gt;&amp;&apos;"
        );
        assert_eq!(num(f64::NAN), "0");
        assert_eq!(num(1.0 / 3.0), "0.33");
        assert_eq!(num(-0.001), "0");
        assert_eq!(num(12.0), "12");
    }

    #[test]
    fn ticks_are_nice_and_cover_the_range() {
        assert_eq!(
            nice_ticks(0.0, 10.0, 5),
            vec![0.0, 2.0, 4.0, 6.0, 8.0, 10.0]
        );
        assert_eq!(nice_ticks(0.13, 0.91, 4), vec![0.2, 0.4, 0.6, 0.8]);
        assert!(nice_ticks(1.0, 1.0, 5).is_empty());
        assert!(nice_ticks(f64::NAN, 1.0, 5).is_empty());
        assert_eq!(log_ticks(1e6, 1e10), vec![1e6, 1e7, 1e8, 1e9, 1e10]);
        assert_eq!(log_ticks(1.0, 20.0), vec![1.0, 2.0, 5.0, 10.0, 20.0]);
    }

    #[test]
    fn line_plot_skips_non_finite_and_escapes() {
        let p = LinePlot {
            title: "<script>loss</script>".into(),
            x_label: "f (Hz)".into(),
            y_label: "dB/m".into(),
            log_x: true,
            series: vec![
                Series {
                    label: "a|b,\"c\" & <d>".into(),
                    points: vec![
                        (1e6, 1.0),
                        (f64::NAN, 2.0),
                        (1e8, f64::INFINITY),
                        (1e9, 3.0),
                        (-5.0, 1.0),
                    ],
                },
                Series {
                    label: "second".into(),
                    points: vec![(1e7, 0.5), (1e9, 0.7)],
                },
            ],
        };
        let svg = line_plot(&p);
        assert_well_formed(&svg);
        assert!(!svg.contains("NaN") && !svg.contains("inf"));
        assert!(!svg.contains("<script"));
        assert_eq!(svg.matches("class=\"series ").count(), 2);
        assert_eq!(svg.matches("class=\"legend-label\"").count(), 2);
        assert!(svg.contains(">1e9<"), "{svg}");
        let empty = line_plot(&LinePlot::default());
        assert_well_formed(&empty);
        assert!(empty.contains("no data"));
    }

    #[test]
    fn histogram_counts_every_sample_and_shades_window() {
        // 0..99 in 10 bins: each bin holds 10 samples; a window 25..=74 holds 50 of them.
        let samples: Vec<f64> = (0..100).map(f64::from).chain([f64::NAN]).collect();
        let h = Histogram {
            title: "Z spread".into(),
            x_label: "Z (Ω)".into(),
            samples,
            bins: 10,
            window: Some((25.0, 74.0)),
        };
        let svg = histogram(&h);
        assert_well_formed(&svg);
        assert_eq!(svg.matches("class=\"bar\"").count(), 10);
        assert!(svg.contains("50 % of 100 inside"), "{svg}");
        assert!(svg.contains("class=\"window\""));
        assert!(!svg.contains("NaN"));
        // The same bins handed over already counted (a spread summary's) draw the same bars and label.
        let binned = histogram_of_bins(
            "Z spread",
            "Z (Ω)",
            0.0,
            99.0,
            &[10; 10],
            Some((25.0, 74.0)),
            Some((50.0, 100)),
        );
        assert_well_formed(&binned);
        assert_eq!(binned.matches("class=\"bar\"").count(), 10);
        assert!(binned.contains("50 % of 100 inside"), "{binned}");
        // Nothing counted: a "no data" picture, never a panic.
        assert_well_formed(&histogram_of_bins("x", "Z", 0.0, 1.0, &[], None, None));
    }

    #[test]
    fn heat_map_of_a_linear_field_has_straight_contours() {
        // φ = x on a 5 × 4 grid: every contour is the vertical line x = level (exact for linear interpolation).
        let xs: Vec<f64> = (0..5).map(f64::from).collect();
        let ys: Vec<f64> = (0..4).map(f64::from).collect();
        let values: Vec<f64> = ys.iter().flat_map(|_| xs.iter().copied()).collect();
        let f = Field2d {
            title: "potential".into(),
            x_label: "x".into(),
            y_label: "y".into(),
            xs,
            ys,
            values,
            contours: 3,
            overlays: vec![],
        };
        let svg = heat_map(&f).unwrap();
        assert_well_formed(&svg);
        // 12 cells, one run each (every column has its own colour), in 4 colour paths.
        assert_eq!(svg.matches("class=\"cells\"").count(), 4);
        let runs: usize = svg
            .split("class=\"cells\"")
            .skip(1)
            .map(|p| p[..p.find("/>").unwrap()].matches('z').count())
            .sum();
        assert_eq!(runs, 12);
        assert_eq!(svg.matches("class=\"contour\"").count(), 3);
        // Each level crosses 3 rows of cells: one segment each, all with equal x at both ends.
        for seg in cell_segments(&f, 1, 0, 1.5) {
            assert!((seg.0 .0 - 1.5).abs() < 1e-12 && (seg.1 .0 - 1.5).abs() < 1e-12);
        }
        let mut bad = f.clone();
        bad.values.pop();
        assert!(heat_map(&bad).unwrap_err().to_string().contains("values"));
        bad = f.clone();
        bad.xs[2] = 0.5;
        assert!(heat_map(&bad).unwrap_err().to_string().contains("xs"));
        let mut holes = f.clone();
        holes.values[0] = f64::NAN;
        assert!(!heat_map(&holes).unwrap().contains("NaN"));
    }

    #[test]
    fn z_vs_width_brackets_the_solution() {
        let p = crate::design::demo::project();
        let pts = z_vs_width(&p, 0, 31).unwrap();
        assert_eq!(pts.len(), 31);
        let w0 = crate::plan(&p).unwrap().rules[0].ok().unwrap().width_m;
        assert!((pts[0].0 - 0.7 * w0).abs() < 1e-12 && (pts[30].0 - 1.3 * w0).abs() < 1e-12);
        // The middle point is the solution itself; impedance falls as the trace widens.
        // (to the field engine's root-finding tolerance, 0.01 % of target)
        assert!((pts[15].1 - 50.0).abs() < 50.0 * 1e-4, "{}", pts[15].1);
        assert!(pts.windows(2).all(|w| w[1].1 < w[0].1));
        assert!(z_vs_width(&p, 99, 10).is_err());
        let svg = line_plot(&LinePlot {
            title: "Z vs width".into(),
            x_label: "width (m)".into(),
            y_label: "Z (Ω)".into(),
            series: vec![Series {
                label: p.rules[0].name.clone(),
                points: pts,
            }],
            log_x: false,
        });
        assert_well_formed(&svg);
    }
}
