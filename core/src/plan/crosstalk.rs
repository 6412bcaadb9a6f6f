//! A rule's crosstalk to an identical neighbour on its layer (a line beside a line, a pair beside a pair) as a
//! function of the edge-to-edge spacing, and the least spacing that keeps it inside a budget: the routing rule
//! that goes into the fab notes beside the width.
//!
//! The coupling comes from the rule's engine on the whole cross-section of both (the field engine by default;
//! [`crate::line::crosstalk`] turns its C and L matrices into the near- and far-end coefficients). The noise is
//! judged on a parallel run of a given length with a given aggressor rise time: the near end saturates at Kb once
//! the run's round trip reaches the rise time, the far end grows with the run (Kf·TD/t_rise).

use crate::base::error::{self, Error, Result};
use crate::design::project::{ImpedanceRule, Project, Structure};
use crate::engine::Engine;
use crate::field::geometry::LayerStack;
use crate::line::crosstalk::{self, Coupling};
use crate::plan::RuleResult;
use crate::section::Dims;
use serde::Serialize;

/// Default crosstalk budget per neighbour, fraction of the aggressor's swing (common practice, no source).
pub const DEFAULT_BUDGET: f64 = 0.02;
/// Default aggressor rise time, 10–90 %, s (common practice for fast edges on these boards, no source).
pub const DEFAULT_RISE_S: f64 = 50e-12;
/// Default parallel run of two neighbours, m (common practice, no source).
pub const DEFAULT_LENGTH_M: f64 = 25e-3;
/// Points of the noise-against-spacing curve (geometric from the fabricator's minimum space to the widest).
const CURVE_POINTS: usize = 9;
/// The widest spacing searched, in units of the larger of the trace width and the local board thickness.
const WIDEST: f64 = 20.0;

/// What the crosstalk is judged against.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CrosstalkOptions {
    /// Largest near- or far-end noise per neighbour, fraction of the aggressor's swing.
    pub budget: f64,
    /// Aggressor rise time, s.
    pub rise_s: f64,
    /// Length the two neighbours run side by side, m.
    pub length_m: f64,
}

impl Default for CrosstalkOptions {
    fn default() -> Self {
        CrosstalkOptions {
            budget: DEFAULT_BUDGET,
            rise_s: DEFAULT_RISE_S,
            length_m: DEFAULT_LENGTH_M,
        }
    }
}

impl CrosstalkOptions {
    /// Checks each figure against its sensible range; the error names it.
    pub fn validate(&self) -> Result<()> {
        error::in_range("crosstalk budget", self.budget * 100.0, 0.01, 50.0, "%")?;
        error::in_range("rise time", self.rise_s * 1e12, 1.0, 1e6, "ps")?;
        error::in_range("parallel length", self.length_m * 1e3, 0.01, 2000.0, "mm")?;
        Ok(())
    }
}

/// The coupling at one spacing.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, serde::Deserialize)]
pub struct CrosstalkPoint {
    pub spacing_m: f64,
    /// Saturated near-end coefficient Kb.
    pub backward: f64,
    /// Far-end coefficient Kf (noise = Kf·TD/t_rise).
    pub forward: f64,
    /// Near-end noise on the run, fraction of the aggressor's swing (signed).
    pub near_end: f64,
    /// Far-end noise on the run, fraction of the aggressor's swing (signed; negative in microstrip).
    pub far_end: f64,
    /// Velocity of the victim's mode, m/s (the far end's delay).
    pub velocity_m_per_s: f64,
}

impl CrosstalkPoint {
    fn new(spacing_m: f64, k: &Coupling, o: &CrosstalkOptions) -> CrosstalkPoint {
        CrosstalkPoint {
            spacing_m,
            backward: k.backward,
            forward: k.forward,
            near_end: k.near_end(o.length_m, o.rise_s),
            far_end: k.far_end(o.length_m, o.rise_s),
            velocity_m_per_s: k.velocity,
        }
    }

    /// The larger of the two noises, as a magnitude.
    pub fn worst(&self) -> f64 {
        self.near_end.abs().max(self.far_end.abs())
    }
}

/// A rule's crosstalk to its neighbour and the spacing rule it gives.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RuleCrosstalk {
    pub rule: String,
    /// "line beside line" or "pair beside pair".
    pub arrangement: &'static str,
    pub method: &'static str,
    pub options: CrosstalkOptions,
    /// The least edge-to-edge spacing to the neighbour that keeps both noises within the budget (never below the
    /// fabricator's minimum space), m; `None` when even the widest spacing searched does not.
    pub min_spacing_m: Option<f64>,
    /// Which end sets it: "near end" or "far end".
    pub limited_by: &'static str,
    /// The coupling at the minimum spacing (or at the widest spacing searched).
    pub at_min: CrosstalkPoint,
    /// Noise against spacing from the fabricator's minimum space to the widest searched, narrowest first.
    pub curve: Vec<CrosstalkPoint>,
    pub notes: Vec<String>,
}

/// Conductor patterns of the victim and the aggressor: the line nearest the neighbour, or the pair driven +1/−1
/// (its inner line positive, mirrored on the neighbour).
fn patterns(structure: Structure) -> (Vec<f64>, Vec<f64>) {
    match structure {
        Structure::EdgePair => (vec![1.0, -1.0, 0.0, 0.0], vec![0.0, 0.0, 1.0, -1.0]),
        _ => (vec![1.0, 0.0], vec![0.0, 1.0]),
    }
}

/// A planned rule and its identical neighbour, ready to be solved at any spacing.
pub struct Neighbour<'a> {
    rule: &'a ImpedanceRule,
    result: &'a RuleResult,
    engine: Engine,
    options: CrosstalkOptions,
    pub arrangement: &'static str,
    /// Notes on how the coupling is computed (which engine, and why).
    pub notes: Vec<String>,
}

impl<'a> Neighbour<'a> {
    /// The rule's neighbour at the dimensions of its planned `result`, on the rule's engine (the field engine for
    /// two pairs, which the closed forms do not model).
    pub fn new(
        project: &Project,
        rule: &'a ImpedanceRule,
        result: &'a RuleResult,
        options: &CrosstalkOptions,
    ) -> Result<Neighbour<'a>> {
        options.validate()?;
        let mut notes = Vec::new();
        let mut engine = Engine::for_rule(project, rule);
        if engine.is_closed_form() && rule.structure == Structure::EdgePair {
            engine = Engine::field(project);
            notes.push("two pairs side by side come from the field engine: the closed forms model one pair".into());
        }
        let arrangement = match rule.structure {
            Structure::Single => "line beside line",
            Structure::EdgePair => "pair beside pair",
            _ => {
                return Err(Error::Invalid {
                    field: "structure".into(),
                    reason: format!(
                        "crosstalk to a neighbour is computed for single lines and edge-coupled pairs, not for a {}",
                        rule.structure.label()
                    ),
                })
            }
        };
        Ok(Neighbour {
            rule,
            result,
            engine,
            options: *options,
            arrangement,
            notes,
        })
    }

    /// The coupling with the neighbour `spacing` m away (edge to edge), and the method that made it.
    pub fn at(&self, spacing: f64) -> Result<(CrosstalkPoint, &'static str)> {
        let dims = Dims {
            w: self.result.width_m,
            s: self.result.spacing_m,
            gap: self.result.gap_m,
        };
        let m = self.engine.neighbour_matrices(
            &self.result.cross_section,
            self.rule.structure,
            &dims,
            spacing,
        )?;
        let (victim, aggressor) = patterns(self.rule.structure);
        let k = crosstalk::coupling(&m.c, &m.c0, &victim, &aggressor).ok_or_else(|| {
            Error::Invalid {
                field: "geometry".into(),
                reason: "the neighbour's cross-section gave no positive line parameters".into(),
            }
        })?;
        Ok((CrosstalkPoint::new(spacing, &k, &self.options), m.method))
    }
}

/// The rule's crosstalk to an identical neighbour at the dimensions of its planned `result` ([`Neighbour::new`]):
/// noise against spacing and the least spacing inside the budget.
pub fn rule_crosstalk(
    project: &Project,
    rule: &ImpedanceRule,
    result: &RuleResult,
    options: &CrosstalkOptions,
) -> Result<RuleCrosstalk> {
    let neighbour = Neighbour::new(project, rule, result, options)?;
    let mut method = "";
    let mut at = |spacing: f64| -> Result<CrosstalkPoint> {
        let (p, m) = neighbour.at(spacing)?;
        method = m;
        Ok(p)
    };
    let cs = &result.cross_section;
    let dims_w = result.width_m;
    let mut notes = neighbour.notes.clone();
    // From the fabricator's minimum space out to many board thicknesses, where any coupling has died away.
    let narrowest = project.fab.min_space_m.max(1e-6);
    let stack = LayerStack::from_cross_section(cs).ok();
    let local = stack.map_or(0.0, |s| {
        s.below.iter().chain(&s.above).map(|l| l.h).sum::<f64>() + s.t
    });
    let widest = (WIDEST * dims_w.max(local)).max(4.0 * narrowest);
    // The far end can rise before it falls as the neighbour recedes (its inductive and capacitive parts cancel
    // at some spacing), so the curve is sampled first and the rule is the spacing beyond which every sample
    // meets the budget, refined by bisection in log spacing between the last failing sample and the next.
    let curve: Vec<CrosstalkPoint> = (0..CURVE_POINTS)
        .map(|i| at(narrowest * (widest / narrowest).powf(i as f64 / (CURVE_POINTS - 1) as f64)))
        .collect::<Result<_>>()?;
    let failing = curve.iter().rposition(|p| p.worst() > options.budget);
    let (min_spacing_m, at_min) = match failing {
        None => (Some(narrowest), curve[0]),
        Some(i) if i + 1 == curve.len() => {
            notes.push(format!(
                "even {} mm apart the noise is {:.2} % of the swing, above the budget",
                crate::base::units::format_sig(widest * 1e3, 3),
                curve[i].worst() * 100.0
            ));
            (None, curve[i])
        }
        Some(i) => {
            // Between two scan points the noise falls about exponentially with spacing: false position on
            // ln(noise/budget), Illinois-modified so it cannot stall, to 0.2 % in spacing.
            let g = |p: &CrosstalkPoint| (p.worst() / options.budget).ln();
            let (mut a, mut b) = (curve[i], curve[i + 1]);
            let (mut ga, mut gb) = (g(&a), g(&b));
            let mut side = 0;
            while b.spacing_m / a.spacing_m > 1.002 {
                let s = (a.spacing_m - ga * (b.spacing_m - a.spacing_m) / (gb - ga))
                    .clamp(a.spacing_m * 1.0005, b.spacing_m / 1.0005);
                let p = at(s)?;
                let gp = g(&p);
                if gp > 0.0 {
                    (a, ga) = (p, gp);
                    if side == -1 {
                        gb *= 0.5;
                    }
                    side = -1;
                } else {
                    (b, gb) = (p, gp);
                    if side == 1 {
                        ga *= 0.5;
                    }
                    side = 1;
                }
            }
            (Some(b.spacing_m), b)
        }
    };
    let limited_by = if at_min.near_end.abs() >= at_min.far_end.abs() {
        "near end"
    } else {
        "far end"
    };
    Ok(RuleCrosstalk {
        rule: rule.name.clone(),
        arrangement: neighbour.arrangement,
        method,
        options: *options,
        min_spacing_m,
        limited_by,
        at_min,
        curve,
        notes,
    })
}
