//! Integrals of the 2D electrostatic Green's functions over straight panels carrying a unit charge density.
//!
//! All values are in units of 1/(2π ε0): the potential coefficient is P = ∫ −ln|c − r'| ds' and the field
//! coefficient is the vector ∫ (c − r')/|c − r'|² ds'. Both have closed forms over a straight segment (the
//! antiderivative of ½·ln(w² + v²) and of w/(w² + v²), v/(w² + v²); e.g. Harrington, "Field Computation by Moment
//! Methods", 1968, ch. 2, and any table of integrals). Far from the segment (distance > [`FAR`] × length) a
//! two-point Gauss rule replaces them: its relative error there is below (1/FAR)⁴/720 ≈ 5e-6.
//!
//! Grounded planes enter the Green's function so they need no unknowns:
//! - one plane at y = y0: the image charge −q at (x', 2y0 − y') (Kelvin/Maxwell image method);
//! - two planes y = y0 and y = y0 + b: summing the infinite image series gives (derived here, checked in the
//!   tests: zero on both planes, −ln r near the source)
//!   2π ε0 G = ½·ln[(cosh(πΔx/b) − cos(π(ŷ + ŷ')/b)) / (cosh(πΔx/b) − cos(π(ŷ − ŷ')/b))], ŷ = y − y0,
//!   evaluated as ½·ln1p(sin(πŷ/b)·sin(πŷ'/b) / (sinh²(πΔx/2b) + sin²(π(ŷ − ŷ')/2b))), which has no
//!   cancellation near the source and no overflow far from it. Near the source its three logarithmic terms (the
//!   charge and its first image in each plane) are integrated in closed form and the smooth rest by Gauss points.
//!   The fill evaluates it from per-point factors ([`PlateFrame`], [`PlateSource`]): half-angle sines and cosines
//!   and e^(kx/2) of every quadrature and collocation point, so a pair costs products and one logarithm instead of
//!   a hyperbolic sine, three sines and two logarithms (3–4× less fill time on stripline; [`with_planes`] is the
//!   direct form the tests hold it to).

/// Distance (in panel lengths) beyond which the two-point Gauss rule replaces the closed form.
pub const FAR: f64 = 4.0;

/// A straight panel from `a` to `b`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Seg {
    pub a: [f64; 2],
    pub b: [f64; 2],
}

impl Seg {
    pub fn len(&self) -> f64 {
        (self.b[0] - self.a[0]).hypot(self.b[1] - self.a[1])
    }
    pub fn mid(&self) -> [f64; 2] {
        [0.5 * (self.a[0] + self.b[0]), 0.5 * (self.a[1] + self.b[1])]
    }
    /// Unit normal: the tangent turned by +90°.
    pub fn normal(&self) -> [f64; 2] {
        let l = self.len();
        [-(self.b[1] - self.a[1]) / l, (self.b[0] - self.a[0]) / l]
    }
    /// Mirror image in the line x = 0.
    pub fn mirror_x(&self) -> Seg {
        Seg {
            a: [-self.a[0], self.a[1]],
            b: [-self.b[0], self.b[1]],
        }
    }
    /// Mirror image in the line y = y0.
    pub fn mirror_y(&self, y0: f64) -> Seg {
        Seg {
            a: [self.a[0], 2.0 * y0 - self.a[1]],
            b: [self.b[0], 2.0 * y0 - self.b[1]],
        }
    }
}

/// How the charge density varies along a panel.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Shape {
    /// Constant.
    Flat,
    /// (1 + β)·(r/L)^β at distance r from the conductor corner at `a` (or at `b` when `at_a` is false), mean 1:
    /// the corner's own singularity (β = π/(2π − α) − 1 for a conductor of interior angle α, −1/3 at a right
    /// angle, −1/2 at a thin edge; Van Bladel 1991). One such panel stands for a whole geometric run of flat ones.
    Corner { at_a: bool, beta: f64 },
}

impl Shape {
    /// The density at the panel's midpoint per unit mean density.
    pub fn at_middle(&self) -> f64 {
        match *self {
            Shape::Flat => 1.0,
            Shape::Corner { beta, .. } => (1.0 + beta) * 0.5f64.powf(beta),
        }
    }
}

/// Sub-panels standing for a corner panel's density in the panel integrals: geometric from the corner (the first
/// [`CORNER_INNER`] of the length, growing by [`CORNER_GROWTH`]), each with the mean of (1 + β)(r/L)^β over it,
/// so that their constant-density integrals (closed forms) sum to the corner panel's; a flat panel is itself with
/// weight 1.
pub fn sub_panels(seg: &Seg, shape: Shape) -> Vec<(Seg, f64)> {
    let Shape::Corner { at_a, beta } = shape else {
        return vec![(*seg, 1.0)];
    };
    let (corner, other) = if at_a { (seg.a, seg.b) } else { (seg.b, seg.a) };
    let at = |t: f64| {
        [
            corner[0] + t * (other[0] - corner[0]),
            corner[1] + t * (other[1] - corner[1]),
        ]
    };
    corner_cuts(beta)
        .into_iter()
        .map(|(t0, t1, mean)| {
            // Oriented as the panel (its normal is the panel's).
            let sub = if at_a {
                Seg {
                    a: at(t0),
                    b: at(t1),
                }
            } else {
                Seg {
                    a: at(t1),
                    b: at(t0),
                }
            };
            (sub, mean)
        })
        .collect()
}

/// The sub-panels of a corner panel as fractions of its length from the corner, (t0, t1, mean density on it).
fn corner_cuts(beta: f64) -> Vec<(f64, f64, f64)> {
    let mut cuts = vec![0.0];
    let mut h = CORNER_INNER;
    let mut x = 0.0;
    while x + h < 1.0 - 0.5 * h {
        x += h;
        cuts.push(x);
        h *= CORNER_GROWTH;
    }
    cuts.push(1.0);
    cuts.windows(2)
        // Mean of (1 + β)·t^β over [t0, t1] = (t1^(1+β) − t0^(1+β)) / (t1 − t0).
        .map(|w| {
            (
                w[0],
                w[1],
                (w[1].powf(1.0 + beta) - w[0].powf(1.0 + beta)) / (w[1] - w[0]),
            )
        })
        .collect()
}

/// First sub-panel of a corner panel, as a fraction of its length (it carries CORNER_INNER^(1+β), about 1 %, of the
/// panel's charge).
const CORNER_INNER: f64 = 1e-3;
/// Growth of the sub-panels of a corner panel.
const CORNER_GROWTH: f64 = 2.0;

/// The grounded planes of a cross-section.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Planes {
    /// Open (plane-less coplanar lines).
    None,
    /// One plane at y = y0 below the structure.
    Below(f64),
    /// One plane at y = y1 above the structure.
    Above(f64),
    /// Planes at y = y0 and y = y0 + b.
    Both(f64, f64),
}

fn xlog(w: f64, r2: f64) -> f64 {
    if r2 > 0.0 {
        w * r2.ln()
    } else {
        0.0
    }
}

/// Closed-form (P, field) of a unit density on `s` at `c`. `self_panel`: `c` is the panel's own midpoint, where
/// the field is taken as the principal value (zero normal part; the jump is added by the caller).
pub fn exact(c: [f64; 2], s: &Seg, self_panel: bool) -> (f64, [f64; 2]) {
    let l = s.len();
    let t = [(s.b[0] - s.a[0]) / l, (s.b[1] - s.a[1]) / l];
    let n = [-t[1], t[0]];
    let d = [c[0] - s.a[0], c[1] - s.a[1]];
    let u = d[0] * t[0] + d[1] * t[1];
    let v = if self_panel {
        0.0
    } else {
        d[0] * n[0] + d[1] * n[1]
    };
    let r1 = u * u + v * v;
    let r2 = (u - l) * (u - l) + v * v;
    // Signed angle the panel subtends at c.
    let theta = if self_panel {
        0.0
    } else {
        (v * l).atan2(u * (u - l) + v * v)
    };
    let integral = 0.5 * (xlog(u, r1) - xlog(u - l, r2)) - l + v * theta;
    let tang = if r1 > 0.0 && r2 > 0.0 {
        0.5 * (r1 / r2).ln()
    } else {
        0.0
    };
    (
        -integral,
        [tang * t[0] + theta * n[0], tang * t[1] + theta * n[1]],
    )
}

const G2: f64 = 0.577_350_269_189_625_8; // 1/√3

/// Two-point Gauss (P, field) of a unit density on `s` at `c` (for c far from the panel).
pub fn gauss(c: [f64; 2], s: &Seg) -> (f64, [f64; 2]) {
    let l = s.len();
    let m = s.mid();
    let h = [0.5 * (s.b[0] - s.a[0]), 0.5 * (s.b[1] - s.a[1])];
    let p1 = [m[0] - G2 * h[0], m[1] - G2 * h[1]];
    let p2 = [m[0] + G2 * h[0], m[1] + G2 * h[1]];
    let d1 = [c[0] - p1[0], c[1] - p1[1]];
    let d2 = [c[0] - p2[0], c[1] - p2[1]];
    let q1 = d1[0] * d1[0] + d1[1] * d1[1];
    let q2 = d2[0] * d2[0] + d2[1] * d2[1];
    let w = 0.5 * l;
    (
        -0.25 * l * (q1 * q2).ln(),
        [w * (d1[0] / q1 + d2[0] / q2), w * (d1[1] / q1 + d2[1] / q2)],
    )
}

/// Free-space (P, field) with the closed form near and Gauss far.
pub fn free(c: [f64; 2], s: &Seg, self_panel: bool) -> (f64, [f64; 2]) {
    if self_panel {
        return exact(c, s, true);
    }
    let m = s.mid();
    let d2 = (c[0] - m[0]).powi(2) + (c[1] - m[1]).powi(2);
    let l = s.len();
    if d2 > FAR * FAR * l * l {
        gauss(c, s)
    } else {
        exact(c, s, false)
    }
}

/// 2π ε0 × the potential at `c` of a unit line charge at `p` between planes ŷ = 0 and ŷ = b (ŷ = y − y0), and
/// its gradient with respect to c.
pub fn two_plates(c: [f64; 2], p: [f64; 2], y0: f64, b: f64) -> (f64, [f64; 2]) {
    let k = std::f64::consts::PI / b;
    let u = k * (c[0] - p[0]);
    if u.abs() > 80.0 {
        // exp(−80) ≈ 1e-35: nothing left.
        return (0.0, [0.0, 0.0]);
    }
    let (y, yp) = (c[1] - y0, p[1] - y0);
    let sy = (k * y).sin();
    let syp = (k * yp).sin();
    let sh = (0.5 * u).sinh();
    let sd = (0.5 * k * (y - yp)).sin();
    let den = sh * sh + sd * sd;
    let num = sy * syp;
    let g = 0.5 * (num / den).ln_1p();
    // d/dx, d/dy of ½·ln(N/D) with N = D + num.
    let nn = den + num;
    let dd_dx = 0.5 * k * u.sinh();
    let dd_dy = 0.5 * k * (k * (y - yp)).sin();
    let dn_dy = dd_dy + k * (k * y).cos() * syp;
    let gx = 0.5 * (dd_dx / nn - dd_dx / den);
    let gy = 0.5 * (dn_dy / nn - dd_dy / den);
    (g, [gx, gy])
}

/// [`two_plates`] without the gradient (potential rows need only the value).
fn two_plates_value(c: [f64; 2], p: [f64; 2], y0: f64, b: f64) -> f64 {
    let k = std::f64::consts::PI / b;
    let u = k * (c[0] - p[0]);
    if u.abs() > 80.0 {
        return 0.0;
    }
    let (y, yp) = (c[1] - y0, p[1] - y0);
    let sh = (0.5 * u).sinh();
    let sd = (0.5 * k * (y - yp)).sin();
    0.5 * ((k * y).sin() * (k * yp).sin() / (sh * sh + sd * sd)).ln_1p()
}

/// The smooth rest of the two-plate Green's function once the source and its first image in each plane are taken
/// out: G − (−ln r + ln r_below + ln r_above), and (when `grad`) its gradient.
fn two_plates_rest(c: [f64; 2], p: [f64; 2], y0: f64, b: f64, grad: bool) -> (f64, [f64; 2]) {
    if !grad {
        // One logarithm: ½·ln(N/D) + ln r − ln r_below − ln r_above = ½·ln(N·r² / (D·r_below²·r_above²)).
        let k = std::f64::consts::PI / b;
        let u = k * (c[0] - p[0]);
        let d = [c[0] - p[0], c[1] - p[1]];
        let db = c[1] - (2.0 * y0 - p[1]);
        let dt = c[1] - (2.0 * (y0 + b) - p[1]);
        let r2 = d[0] * d[0] + d[1] * d[1];
        let rb2 = d[0] * d[0] + db * db;
        let rt2 = d[0] * d[0] + dt * dt;
        if u.abs() > 80.0 {
            return (0.5 * (r2 / (rb2 * rt2)).ln(), [0.0, 0.0]);
        }
        let (y, yp) = (c[1] - y0, p[1] - y0);
        let sh = (0.5 * u).sinh();
        let sd = (0.5 * k * (y - yp)).sin();
        let den = sh * sh + sd * sd;
        let num = den + (k * y).sin() * (k * yp).sin();
        return (0.5 * (num * r2 / (den * rb2 * rt2)).ln(), [0.0, 0.0]);
    }
    let (g, gr) = two_plates(c, p, y0, b);
    let mut v = g;
    let mut grad = gr;
    for (py, sign) in [
        (p[1], 1.0),
        (2.0 * y0 - p[1], -1.0),
        (2.0 * (y0 + b) - p[1], -1.0),
    ] {
        // The log part of a charge of sign `sign` at (p.x, py): −sign·ln r.
        let d = [c[0] - p[0], c[1] - py];
        let r2 = d[0] * d[0] + d[1] * d[1];
        v += sign * 0.5 * r2.ln();
        grad[0] += sign * d[0] / r2;
        grad[1] += sign * d[1] / r2;
    }
    (v, grad)
}

/// Gauss points and weights on `s` with sub-panels no longer than `hmax` (two points each).
fn gauss_points(s: &Seg, hmax: f64, mut f: impl FnMut([f64; 2], f64)) {
    let l = s.len();
    let m = (l / hmax).ceil().max(1.0) as usize;
    let w = 0.5 * l / m as f64;
    for k in 0..m {
        for g in [-G2, G2] {
            let f0 = (k as f64 + 0.5 + 0.5 * g) / m as f64;
            f(
                [
                    s.a[0] + f0 * (s.b[0] - s.a[0]),
                    s.a[1] + f0 * (s.b[1] - s.a[1]),
                ],
                w,
            );
        }
    }
}

/// (P, field) at `c` of a unit density on `s` with the grounded `planes`; with two planes the field is only
/// computed when `need_field` (it is zero otherwise).
pub fn with_planes(
    c: [f64; 2],
    s: &Seg,
    self_panel: bool,
    planes: Planes,
    need_field: bool,
) -> (f64, [f64; 2]) {
    let add = |a: (f64, [f64; 2]), b: (f64, [f64; 2]), sign: f64| {
        (
            a.0 + sign * b.0,
            [a.1[0] + sign * b.1[0], a.1[1] + sign * b.1[1]],
        )
    };
    match planes {
        Planes::None => free(c, s, self_panel),
        Planes::Below(y0) | Planes::Above(y0) => add(
            free(c, s, self_panel),
            free(c, &s.mirror_y(y0), false),
            -1.0,
        ),
        Planes::Both(y0, b) => {
            let xlo = s.a[0].min(s.b[0]);
            let xhi = s.a[0].max(s.b[0]);
            let dx = (xlo - c[0]).max(c[0] - xhi).max(0.0);
            let mut acc = (0.0, [0.0, 0.0]);
            if dx > 3.0 * b {
                // Smooth everywhere on the panel: Gauss on the whole Green's function.
                gauss_points(s, 0.5 * b, |p, w| {
                    let (g, gr) = if need_field {
                        two_plates(c, p, y0, b)
                    } else {
                        (two_plates_value(c, p, y0, b), [0.0, 0.0])
                    };
                    acc = add(acc, (w * g, [-w * gr[0], -w * gr[1]]), 1.0);
                });
                return acc;
            }
            acc = free(c, s, self_panel);
            acc = add(acc, free(c, &s.mirror_y(y0), false), -1.0);
            acc = add(acc, free(c, &s.mirror_y(y0 + b), false), -1.0);
            gauss_points(s, 0.25 * b, |p, w| {
                let (g, gr) = two_plates_rest(c, p, y0, b, need_field);
                acc = add(acc, (w * g, [-w * gr[0], -w * gr[1]]), 1.0);
            });
            acc
        }
    }
}

/// The two-plate frame: planes at ŷ = 0 and ŷ = b (ŷ = y − y0), k = π/b.
#[derive(Debug, Clone, Copy)]
pub struct PlateFrame {
    y0: f64,
    b: f64,
    k: f64,
}

/// A point with the factors of the two-plate Green's function that depend on it alone: the half-angle sine and
/// cosine of kŷ, sin kŷ, cos kŷ and e^(kx/2). With them a pair needs no sine, cosine or hyperbolic function, only
/// products (sin((A − B)/2) = sin(A/2)·cos(B/2) − cos(A/2)·sin(B/2), sinh(u/2) from e^(u/2) = e^(kx/2)/e^(kx'/2)),
/// and one logarithm.
#[derive(Debug, Clone, Copy)]
pub struct PlatePoint {
    x: f64,
    y: f64,
    w: f64,
    sh: f64,
    ch: f64,
    s: f64,
    c: f64,
    ex: f64,
}

impl PlateFrame {
    pub fn new(y0: f64, b: f64) -> PlateFrame {
        PlateFrame {
            y0,
            b,
            k: std::f64::consts::PI / b,
        }
    }

    /// `p` with weight `w` (a quadrature point) or 0 (a collocation point).
    pub fn point(&self, p: [f64; 2], w: f64) -> PlatePoint {
        let (sh, ch) = (0.5 * self.k * (p[1] - self.y0)).sin_cos();
        PlatePoint {
            x: p[0],
            y: p[1],
            w,
            sh,
            ch,
            s: 2.0 * sh * ch,
            c: ch * ch - sh * sh,
            ex: (0.5 * self.k * p[0]).exp(),
        }
    }

    /// [`two_plates`] at target `t` of a unit line charge at `p` from the precomputed factors; the gradient only
    /// when `grad`. With `rest`, the source and its first image in each plane are taken out (as [`two_plates_rest`]).
    fn green(&self, t: &PlatePoint, p: &PlatePoint, grad: bool, rest: bool) -> (f64, [f64; 2]) {
        let k = self.k;
        let u = k * (t.x - p.x);
        let d = [t.x - p.x, t.y - p.y];
        let r2 = d[0] * d[0] + d[1] * d[1];
        let (db, dt) = (
            t.y - (2.0 * self.y0 - p.y),
            t.y - (2.0 * (self.y0 + self.b) - p.y),
        );
        let (rb2, rt2) = (d[0] * d[0] + db * db, d[0] * d[0] + dt * dt);
        // The log terms the rest takes out: −ln r (the source) + ln r_below + ln r_above, and their gradient.
        let logs = |v: f64| -> (f64, [f64; 2]) {
            if !rest {
                return (v, [0.0, 0.0]);
            }
            let gr = [
                d[0] / r2 - d[0] / rb2 - d[0] / rt2,
                d[1] / r2 - db / rb2 - dt / rt2,
            ];
            (v, gr)
        };
        if u.abs() > 80.0 {
            // exp(−80) ≈ 1e-35: the Green's function is zero; the rest is minus the log terms.
            let v = if rest {
                0.5 * (r2 / (rb2 * rt2)).ln()
            } else {
                0.0
            };
            return if grad { logs(v) } else { (v, [0.0, 0.0]) };
        }
        let q = t.ex / p.ex;
        let sh = 0.5 * (q - 1.0 / q);
        let sd = t.sh * p.ch - t.ch * p.sh;
        let den = sh * sh + sd * sd;
        let num = t.s * p.s;
        let nn = den + num;
        let v = if rest {
            0.5 * (nn * r2 / (den * rb2 * rt2)).ln()
        } else {
            0.5 * (num / den).ln_1p()
        };
        if !grad {
            return (v, [0.0, 0.0]);
        }
        let chu = 0.5 * (q + 1.0 / q);
        let dd_dx = k * sh * chu;
        let dd_dy = k * sd * (t.ch * p.ch + t.sh * p.sh);
        let dn_dy = dd_dy + k * t.c * p.s;
        let g = [
            0.5 * (dd_dx / nn - dd_dx / den),
            0.5 * (dn_dy / nn - dd_dy / den),
        ];
        let (v, l) = logs(v);
        (v, [g[0] + l[0], g[1] + l[1]])
    }
}

/// A source panel for the two-plate fill: its free-space parts (itself and its first image in each plane) and the
/// quadrature points of the smooth rest (sub-panels ≤ b/4) and of the whole function far away (≤ b/2) — the rules
/// of [`with_planes`], which the tests hold it to.
pub struct PlateSource {
    near: [Source; 3],
    xlo: f64,
    xhi: f64,
    rest: Vec<PlatePoint>,
    far: Vec<PlatePoint>,
}

impl PlateSource {
    pub fn new(frame: &PlateFrame, s: &Seg, shape: Shape) -> PlateSource {
        let own = Source::new(s, shape);
        let points = |hmax: f64| {
            let mut v = Vec::new();
            own.points(s, hmax, |p, w| v.push(frame.point(p, w)));
            v
        };
        PlateSource {
            near: [
                own.clone(),
                Source::new(&s.mirror_y(frame.y0), shape),
                Source::new(&s.mirror_y(frame.y0 + frame.b), shape),
            ],
            xlo: s.a[0].min(s.b[0]),
            xhi: s.a[0].max(s.b[0]),
            rest: points(0.25 * frame.b),
            far: points(0.5 * frame.b),
        }
    }

    /// (P, field) at the collocation point `t` (at `c`), as [`with_planes`] with two planes; the field only when
    /// `need_field`.
    pub fn at(
        &self,
        frame: &PlateFrame,
        t: &PlatePoint,
        self_panel: bool,
        need_field: bool,
    ) -> (f64, [f64; 2]) {
        let c = [t.x, t.y];
        let dx = (self.xlo - c[0]).max(c[0] - self.xhi).max(0.0);
        let (mut v, mut f) = (0.0, [0.0, 0.0]);
        let far = dx > 3.0 * frame.b;
        if !far {
            v = self.near[0].potential(c, self_panel)
                - self.near[1].potential(c, false)
                - self.near[2].potential(c, false);
            if need_field {
                let (a, b, e) = (
                    self.near[0].field(c, self_panel),
                    self.near[1].field(c, false),
                    self.near[2].field(c, false),
                );
                f = [a[0] - b[0] - e[0], a[1] - b[1] - e[1]];
            }
        }
        for p in if far { &self.far } else { &self.rest } {
            let (g, gr) = frame.green(t, p, need_field, !far);
            v += p.w * g;
            f[0] -= p.w * gr[0];
            f[1] -= p.w * gr[1];
        }
        (v, f)
    }
}

/// A panel with its geometry precomputed for the separate potential and field integrals of the fill loop.
#[derive(Debug, Clone, Copy)]
pub struct Src {
    a: [f64; 2],
    mid: [f64; 2],
    t: [f64; 2],
    n: [f64; 2],
    len: f64,
    /// Half-length vector scaled by 1/√3: the Gauss points are mid ± this.
    hg: [f64; 2],
}

impl Src {
    pub fn new(s: &Seg) -> Src {
        let len = s.len();
        let t = [(s.b[0] - s.a[0]) / len, (s.b[1] - s.a[1]) / len];
        Src {
            a: s.a,
            mid: s.mid(),
            t,
            n: [-t[1], t[0]],
            len,
            hg: [0.5 * G2 * (s.b[0] - s.a[0]), 0.5 * G2 * (s.b[1] - s.a[1])],
        }
    }

    fn far(&self, c: [f64; 2]) -> bool {
        let d = [c[0] - self.mid[0], c[1] - self.mid[1]];
        d[0] * d[0] + d[1] * d[1] > FAR * FAR * self.len * self.len
    }

    /// P = ∫ −ln|c − r'| ds' (closed form near, two Gauss points far; the same rules as [`free`]).
    #[inline]
    pub fn potential(&self, c: [f64; 2], self_panel: bool) -> f64 {
        if !self_panel && self.far(c) {
            return -0.25 * self.len * self.gauss_product(c).ln();
        }
        self.potential_exact(c, self_panel)
    }

    /// The vectors from the two Gauss points to `c`.
    #[inline]
    fn gauss_offsets(&self, c: [f64; 2]) -> [[f64; 2]; 2] {
        [
            [
                c[0] - self.mid[0] + self.hg[0],
                c[1] - self.mid[1] + self.hg[1],
            ],
            [
                c[0] - self.mid[0] - self.hg[0],
                c[1] - self.mid[1] - self.hg[1],
            ],
        ]
    }

    /// The product of the squared distances from `c` to the two Gauss points.
    #[inline]
    fn gauss_product(&self, c: [f64; 2]) -> f64 {
        let [d1, d2] = self.gauss_offsets(c);
        (d1[0] * d1[0] + d1[1] * d1[1]) * (d2[0] * d2[0] + d2[1] * d2[1])
    }

    /// [`Src::potential`] of this panel less that of `image`, its mirror in a plane (the same length): where both
    /// are far from `c`, one logarithm of the ratio instead of two. The potential rows of a line over a plane are
    /// most of the fill's logarithms.
    #[inline]
    pub fn potential_less(&self, image: &Src, c: [f64; 2], self_panel: bool) -> f64 {
        if !self_panel && self.far(c) && image.far(c) {
            return -0.25 * self.len * (self.gauss_product(c) / image.gauss_product(c)).ln();
        }
        self.potential(c, self_panel) - image.potential(c, false)
    }

    /// [`Src::potential`] by the closed form at any distance.
    #[inline]
    fn potential_exact(&self, c: [f64; 2], self_panel: bool) -> f64 {
        let l = self.len;
        let d = [c[0] - self.a[0], c[1] - self.a[1]];
        let u = d[0] * self.t[0] + d[1] * self.t[1];
        let v = if self_panel {
            0.0
        } else {
            d[0] * self.n[0] + d[1] * self.n[1]
        };
        let r1 = u * u + v * v;
        let r2 = (u - l) * (u - l) + v * v;
        let vt = if v == 0.0 {
            0.0
        } else {
            v * (v * l).atan2(u * (u - l) + v * v)
        };
        -(0.5 * (xlog(u, r1) - xlog(u - l, r2)) - l + vt)
    }

    /// Field vector ∫ (c − r')/|c − r'|² ds' (principal value on the panel itself).
    #[inline]
    pub fn field(&self, c: [f64; 2], self_panel: bool) -> [f64; 2] {
        if self_panel {
            return [0.0, 0.0];
        }
        if self.far(c) {
            let [d1, d2] = self.gauss_offsets(c);
            let q1 = d1[0] * d1[0] + d1[1] * d1[1];
            let q2 = d2[0] * d2[0] + d2[1] * d2[1];
            let w = 0.5 * self.len;
            return [w * (d1[0] / q1 + d2[0] / q2), w * (d1[1] / q1 + d2[1] / q2)];
        }
        self.field_exact(c)
    }

    /// [`Src::field`] by the closed form at any distance (not on the panel itself).
    #[inline]
    fn field_exact(&self, c: [f64; 2]) -> [f64; 2] {
        let l = self.len;
        let d = [c[0] - self.a[0], c[1] - self.a[1]];
        let u = d[0] * self.t[0] + d[1] * self.t[1];
        let v = d[0] * self.n[0] + d[1] * self.n[1];
        let r1 = u * u + v * v;
        let r2 = (u - l) * (u - l) + v * v;
        let theta = (v * l).atan2(u * (u - l) + v * v);
        let tang = if r1 > 0.0 && r2 > 0.0 {
            0.5 * (r1 / r2).ln()
        } else {
            0.0
        };
        [
            tang * self.t[0] + theta * self.n[0],
            tang * self.t[1] + theta * self.n[1],
        ]
    }
}

/// Two points of a corner panel's density for targets far from it: the Gauss rule of the sub-panels' own staircase
/// density (nodes the roots of its second orthogonal polynomial, from the moments m0…m3 on [0, 1]), so that it
/// integrates exactly what the sub-panels integrate up to cubics, as the two-point rule of a flat panel does. Where
/// a target crosses [`FAR`] the two then differ by what a flat panel's do (a rule of other moments, e.g. Gauss in
/// (r/L)^(1+β), differed at first order there and made loss derivatives along receding walls jump).
fn corner_points(seg: &Seg, shape: Shape) -> [([f64; 2], f64); 2] {
    let Shape::Corner { at_a, beta } = shape else {
        unreachable!("corner points of a flat panel")
    };
    let (corner, other) = if at_a { (seg.a, seg.b) } else { (seg.b, seg.a) };
    let l = seg.len();
    let mut m = [0.0f64; 4];
    for (t0, t1, mean) in corner_cuts(beta) {
        for (k, mk) in m.iter_mut().enumerate() {
            let e = (k + 1) as i32;
            *mk += mean * (t1.powi(e) - t0.powi(e)) / e as f64;
        }
    }
    // x² + a·x + b orthogonal to 1 and x under the staircase.
    let det = m[1] * m[1] - m[0] * m[2];
    let a = (m[0] * m[3] - m[1] * m[2]) / det;
    let b = (m[2] * m[2] - m[1] * m[3]) / det;
    let root = (0.25 * a * a - b).max(0.0).sqrt();
    let (x1, x2) = (-0.5 * a - root, -0.5 * a + root);
    let w1 = (m[1] - m[0] * x2) / (x1 - x2);
    let w2 = m[0] - w1;
    [(x1, w1), (x2, w2)].map(|(t, w)| {
        (
            [
                corner[0] + t * (other[0] - corner[0]),
                corner[1] + t * (other[1] - corner[1]),
            ],
            w * l,
        )
    })
}

/// A corner panel ([`Shape::Corner`]) for the fill: its flat sub-panels with their weights near it, three points
/// far from it (the same [`FAR`] rule as a flat panel).
#[derive(Debug, Clone)]
pub struct CornerSrc {
    whole: Src,
    subs: Vec<(Src, f64)>,
    points: [([f64; 2], f64); 2],
}

impl CornerSrc {
    // Out of line: a few columns of the fill, which keeps the flat panels' calls inlined.
    #[inline(never)]
    fn potential(&self, c: [f64; 2], self_panel: bool) -> f64 {
        if !self_panel && self.whole.far(c) {
            return self
                .points
                .iter()
                .map(|(p, w)| -0.5 * w * ((c[0] - p[0]).powi(2) + (c[1] - p[1]).powi(2)).ln())
                .sum();
        }
        // Closed forms on every sub-panel, however far: their own two-point switch, crossed somewhere by any
        // target near a corner as the geometry moves, made the loss probes' derivatives along receding walls jitter
        // by 0.2 %.
        self.subs
            .iter()
            .map(|(s, w)| w * s.potential_exact(c, self_panel))
            .sum()
    }

    #[inline(never)]
    fn field(&self, c: [f64; 2], self_panel: bool) -> [f64; 2] {
        if self_panel {
            return [0.0, 0.0];
        }
        let mut f = [0.0, 0.0];
        if self.whole.far(c) {
            for (p, w) in &self.points {
                let d = [c[0] - p[0], c[1] - p[1]];
                let q = d[0] * d[0] + d[1] * d[1];
                f[0] += w * d[0] / q;
                f[1] += w * d[1] / q;
            }
            return f;
        }
        for (s, w) in &self.subs {
            let g = s.field_exact(c);
            f[0] += w * g[0];
            f[1] += w * g[1];
        }
        f
    }
}

/// A panel's source in the fill: flat (closed forms) or a corner panel.
#[derive(Debug, Clone)]
pub enum Source {
    Flat(Src),
    Corner(CornerSrc),
}

impl Source {
    pub fn new(s: &Seg, shape: Shape) -> Source {
        match shape {
            Shape::Flat => Source::Flat(Src::new(s)),
            Shape::Corner { .. } => Source::Corner(CornerSrc {
                whole: Src::new(s),
                subs: sub_panels(s, shape)
                    .iter()
                    .map(|(q, w)| (Src::new(q), *w))
                    .collect(),
                points: corner_points(s, shape),
            }),
        }
    }

    /// P at `c` (see [`Src::potential`]); `self_panel`: `c` is this panel's midpoint (on every sub-panel's line).
    #[inline(always)]
    pub fn potential(&self, c: [f64; 2], self_panel: bool) -> f64 {
        match self {
            Source::Flat(s) => s.potential(c, self_panel),
            Source::Corner(k) => k.potential(c, self_panel),
        }
    }

    /// P at `c` less that of `image`, this source's mirror in a plane (see [`Src::potential_less`]).
    #[inline(always)]
    pub fn potential_less(&self, image: &Source, c: [f64; 2], self_panel: bool) -> f64 {
        match (self, image) {
            (Source::Flat(s), Source::Flat(i)) => s.potential_less(i, c, self_panel),
            _ => self.potential(c, self_panel) - image.potential(c, false),
        }
    }

    /// Field vector at `c` (see [`Src::field`]; principal value on the panel itself).
    #[inline(always)]
    pub fn field(&self, c: [f64; 2], self_panel: bool) -> [f64; 2] {
        match self {
            Source::Flat(s) => s.field(c, self_panel),
            Source::Corner(k) => k.field(c, self_panel),
        }
    }

    /// Quadrature points (point, weight) of the density for a smooth integrand: two Gauss points per piece of at
    /// most `hmax` on a flat panel, the three far points on a corner panel (which is much shorter than `hmax`).
    fn points(&self, seg: &Seg, hmax: f64, mut f: impl FnMut([f64; 2], f64)) {
        match self {
            Source::Flat(_) => gauss_points(seg, hmax, f),
            Source::Corner(k) => {
                for (p, w) in k.points {
                    f(p, w)
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_panel_less_its_image_is_the_difference_of_the_two_potentials() {
        // One logarithm of the ratio where both are far, the two potentials otherwise: the same value to rounding
        // of the larger term, at targets near the panel, past the far switch, near the plane and far away.
        let seg = Seg {
            a: [0.2, 0.5],
            b: [0.5, 0.9],
        };
        let image_seg = seg.mirror_y(0.1);
        let (own, image) = (
            Source::new(&seg, Shape::Flat),
            Source::new(&image_seg, Shape::Flat),
        );
        for c in [
            [0.35, 0.7],
            [0.9, 1.0],
            [1.9, 2.1],
            [3.0, 0.1],
            [-4.0, 0.3],
            [0.3, 40.0],
        ] {
            let self_panel = c == [0.35, 0.7];
            let want = own.potential(c, self_panel) - image.potential(c, false);
            let got = own.potential_less(&image, c, self_panel);
            let scale = own
                .potential(c, self_panel)
                .abs()
                .max(image.potential(c, false).abs());
            assert!(
                (got - want).abs() <= 1e-13 * scale,
                "{c:?}: {got} vs {want}"
            );
        }
    }

    #[test]
    fn a_corner_panel_carries_its_charge_and_looks_the_same_near_and_far() {
        // Sub-panel weights × lengths = the panel's charge at mean density 1 (exact by construction); the three far
        // points and the sub-panel sum (closed forms) agree where the rule switches (4 panel lengths) to the size of
        // the two-point Gauss rule's own error there, and both differ from a flat panel's potential by the dipole
        // of the corner-heavy density (the test fails if the weights or the far points lose the shape).
        let seg = Seg {
            a: [0.0, 0.0],
            b: [0.3, 0.4],
        };
        for (at_a, beta) in [(true, -1.0 / 3.0), (false, -0.45), (true, -0.5)] {
            let shape = Shape::Corner { at_a, beta };
            let subs = sub_panels(&seg, shape);
            let charge: f64 = subs.iter().map(|(q, w)| q.len() * w).sum();
            assert!((charge - seg.len()).abs() < 1e-12, "{charge}");
            let src = Source::new(&seg, shape);
            let Source::Corner(k) = &src else { panic!() };
            let flat = Src::new(&seg);
            for d in [4.0001, 6.0, 20.0] {
                let c = [0.15 + d * 0.5 * 0.8, 0.2 - d * 0.5 * 0.6];
                let near: f64 = k.subs.iter().map(|(s, w)| w * s.potential(c, false)).sum();
                let far = src.potential(c, false);
                assert!(
                    (near - far).abs() < 2e-4 * near.abs(),
                    "{d}: {near} vs {far}"
                );
                let fl = flat.potential(c, false);
                assert!(
                    (near - fl).abs() > 10.0 * (near - far).abs(),
                    "{d}: flat {fl}"
                );
            }
        }
    }

    #[test]
    fn closed_form_matches_fine_quadrature() {
        // Reference: a 20 000-point midpoint rule of the same integrals (accurate to ~1e-9 at this distance).
        let s = Seg {
            a: [0.3, -0.2],
            b: [1.1, 0.4],
        };
        let c = [0.5, 0.6];
        let (p, f) = exact(c, &s, false);
        let n = 20_000;
        let (mut pr, mut fr) = (0.0, [0.0, 0.0]);
        let l = s.len();
        for k in 0..n {
            let t = (k as f64 + 0.5) / n as f64;
            let q = [
                s.a[0] + t * (s.b[0] - s.a[0]),
                s.a[1] + t * (s.b[1] - s.a[1]),
            ];
            let d = [c[0] - q[0], c[1] - q[1]];
            let r2 = d[0] * d[0] + d[1] * d[1];
            let w = l / n as f64;
            pr -= w * 0.5 * r2.ln();
            fr[0] += w * d[0] / r2;
            fr[1] += w * d[1] / r2;
        }
        assert!((p - pr).abs() < 1e-8, "{p} {pr}");
        assert!((f[0] - fr[0]).abs() < 1e-8 && (f[1] - fr[1]).abs() < 1e-8);
        // The far rule agrees to its stated bound at 4 panel lengths.
        let far = [0.7 + 4.0 * l, 0.1];
        let (pe, _) = exact(far, &s, false);
        let (pg, _) = gauss(far, &s);
        assert!((pe - pg).abs() < 1e-5 * pe.abs().max(l), "{pe} {pg}");
    }

    #[test]
    fn split_integrals_match_the_combined_ones() {
        // The fill loop's separate potential/field routines against `free` (same rules), near, far and on itself.
        let s = Seg {
            a: [0.3, -0.2],
            b: [1.1, 0.4],
        };
        let src = Src::new(&s);
        for (c, me) in [([0.5, 0.6], false), ([9.0, 3.0], false), (s.mid(), true)] {
            let (p, f) = free(c, &s, me);
            assert!((src.potential(c, me) - p).abs() < 1e-12);
            let g = src.field(c, me);
            let n = s.normal();
            let fn_ = if me { 0.0 } else { f[0] * n[0] + f[1] * n[1] };
            assert!((g[0] * n[0] + g[1] * n[1] - fn_).abs() < 1e-12);
        }
    }

    #[test]
    fn two_plate_green_function_is_grounded_and_logarithmic() {
        // Zero on both planes (the boundary condition), −ln r + const near the source, and its gradient agrees with
        // a central difference.
        let (y0, b) = (0.5, 2.0);
        let p = [0.1, 1.2];
        for x in [-3.0, 0.0, 0.4, 5.0] {
            assert!(two_plates([x, y0], p, y0, b).0.abs() < 1e-12);
            assert!(two_plates([x, y0 + b], p, y0, b).0.abs() < 1e-12);
        }
        let g1 = two_plates([0.1 + 1e-3, 1.2], p, y0, b).0;
        let g2 = two_plates([0.1 + 1e-4, 1.2], p, y0, b).0;
        assert!(((g2 - g1) - 10f64.ln()).abs() < 1e-5, "{}", g2 - g1);
        let c = [0.7, 0.9];
        let (_, gr) = two_plates(c, p, y0, b);
        let e = 1e-6;
        let gx = (two_plates([c[0] + e, c[1]], p, y0, b).0
            - two_plates([c[0] - e, c[1]], p, y0, b).0)
            / (2.0 * e);
        let gy = (two_plates([c[0], c[1] + e], p, y0, b).0
            - two_plates([c[0], c[1] - e], p, y0, b).0)
            / (2.0 * e);
        assert!((gx - gr[0]).abs() < 1e-7 && (gy - gr[1]).abs() < 1e-7);
    }

    #[test]
    fn two_plate_rest_value_matches_the_gradient_path() {
        // The one-logarithm value used by potential rows against the value of the gradient path.
        let (y0, b) = (0.0, 1.0);
        for (c, p) in [
            ([0.3, 0.7], [0.0, 0.2]),
            ([0.01, 0.5], [0.0, 0.51]),
            ([5.0, 0.1], [0.0, 0.9]),
        ] {
            let v = two_plates_rest(c, p, y0, b, false).0;
            let w = two_plates_rest(c, p, y0, b, true).0;
            assert!((v - w).abs() < 1e-10, "{v} {w}");
        }
    }

    #[test]
    fn precomputed_two_plate_fill_matches_the_direct_integrals() {
        // The fill's factored two-plate integrals against `with_planes` (the direct sines and hyperbolic functions)
        // near, far (beyond 3b), on the panel itself and for a panel longer than b/4 (several sub-panels).
        let (y0, b) = (0.2, 2.0);
        let frame = PlateFrame::new(y0, b);
        let planes = Planes::Both(y0, b);
        let panels = [
            Seg {
                a: [0.3, 0.9],
                b: [0.35, 0.95],
            },
            Seg {
                a: [-0.4, 1.6],
                b: [1.1, 1.6],
            },
            Seg {
                a: [0.5, 0.3],
                b: [0.5, 0.31],
            },
        ];
        for s in &panels {
            let src = PlateSource::new(&frame, s, Shape::Flat);
            for (c, me) in [
                (s.mid(), true),
                ([0.33, 0.99], false),
                ([0.7, 1.2], false),
                ([9.0, 1.0], false),
                ([-20.0, 2.1], false),
                ([0.31, 0.21], false),
            ] {
                let t = frame.point(c, 0.0);
                let (p, f) = src.at(&frame, &t, me, true);
                let (pr, fr) = with_planes(c, s, me, planes, true);
                let scale = pr.abs().max(1e-3);
                assert!((p - pr).abs() < 1e-10 * scale, "{c:?}: {p} vs {pr}");
                let fs = fr[0].hypot(fr[1]).max(1e-3);
                assert!(
                    (f[0] - fr[0]).abs() < 1e-9 * fs && (f[1] - fr[1]).abs() < 1e-9 * fs,
                    "{c:?}: {f:?} vs {fr:?}"
                );
                let (p2, _) = src.at(&frame, &t, me, false);
                assert_eq!(p, p2);
            }
        }
    }

    #[test]
    fn two_plate_series_matches_its_image_sum() {
        // The closed form against a direct sum of 200 001 image pairs (±q at ŷ' + 2nb and −ŷ' + 2nb).
        let (y0, b) = (0.0, 1.0);
        let (c, p) = ([0.3, 0.7], [0.0, 0.2]);
        let mut sum = 0.0;
        for n in -100_000..=100_000 {
            let yn = p[1] + 2.0 * n as f64 * b;
            let ym = -p[1] + 2.0 * n as f64 * b;
            let r = (c[0] - p[0]).hypot(c[1] - yn);
            let ri = (c[0] - p[0]).hypot(c[1] - ym);
            sum += -(r.ln()) + ri.ln();
        }
        let g = two_plates(c, p, y0, b).0;
        assert!((g - sum).abs() < 1e-5, "{g} {sum}");
    }
}
