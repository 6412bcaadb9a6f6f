//! 2D quasi-static field solver: capacitance matrices of a PCB cross-section with and without its dielectrics, and
//! from them Z0/εeff of single lines and the odd/even modes of pairs, with an error estimate.
//!
//! Method: Laplace's equation ∇·(εr∇φ) = 0 by finite volumes on a non-uniform rectilinear grid that conforms to
//! every interface and conductor edge and is graded geometrically toward conductor corners ([`grid`]); conductors are
//! Dirichlet nodes, the far box is grounded ([`geometry::BOX_FACTOR`]), εr is constant per cell so interfaces are
//! exact; solved by MIC(0)-preconditioned conjugate gradients ([`solve`]). C and C0 come from the discrete energy;
//! L = µ0ε0·C0⁻¹ ([`extract`]). The grid is refined by √2 per level until the Richardson error estimate of the
//! controlled impedance is below the tolerance; the result is the extrapolated value, reported with the estimate and
//! the observed order of convergence.
//!
//! Trapezoid sides (etched traces, conformal mask) are staircased on the grid: the grid has lines at every vertex,
//! and the tests show convergence under refinement for etched traces too.
//!
//! Validity: any cross-section the builders make, within [`geometry::MAX_ASPECT`] between largest and smallest
//! feature. Accuracy: the default tolerance is 0.3 % on the (conservative) estimate, checked against Cohn's exact stripline results
//! within 0.3 % and against an independent finite-element solve (scikit-fem, `tests/python/test_field.py`).
//!
//! Slow work never blocks a browser page: [`FieldSolve::step`] does a bounded amount of work and returns, so a
//! caller can run it in slices between frames; [`solve`] runs it to the end.
//!
//! ```
//! use ohmstack_core::section::{Cover, CrossSection, Medium};
//! use ohmstack_core::field::{build, FieldOptions, FieldSolve};
//! use ohmstack_core::section::Dims;
//! use ohmstack_core::Structure;
//!
//! let cs = CrossSection {
//!     loss: Default::default(),
//!     layering: None,
//!     medium: Medium::Microstrip { h: 170e-6, er: 4.2, cover: Cover::Air },
//!     t: 35e-6,
//!     references: vec![],
//!     warnings: vec![],
//! };
//! let dims = Dims { w: 300e-6, s: None, gap: None };
//! let geometry = build(&cs, Structure::Single, &dims, None).unwrap();
//! let mut job = FieldSolve::new(geometry, FieldOptions::default()).unwrap();
//! // One slice per animation frame in the browser; here simply a loop.
//! while !job.step(200_000).done {}
//! let result = job.result().unwrap().unwrap();
//! assert!((result.controlled_ohm - 50.7).abs() < 0.5);
//! assert!(result.error_estimate_pct < 0.3);
//! ```

// Index loops over grid nodes read closer to the stencil formulas than iterator chains.
#![allow(clippy::needless_range_loop)]

pub mod boundary;
pub mod extract;
pub mod geometry;
pub mod grid;
pub mod map;
pub mod solve;

use crate::base::error::{Error, Result};
use crate::base::units::EPS0;
use crate::base::validity::Warning;
use crate::design::project::Structure;
use crate::section::CrossSection;
use crate::section::{Analysis, Dims};
use geometry::{Geometry, Layout};
use grid::Grid;
use serde::Serialize;
use solve::{Pcg, System, Wall};

pub use extract::{compare, Comparison};
pub use geometry::{build, build_layered, LayerStack, Slab};
pub use map::PotentialMap;

/// Knobs of the solve. The defaults aim at 0.3 % estimated error (the extrapolated value is typically 5–10× better) in well under a second natively.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FieldOptions {
    /// Stop when the estimated relative error of the controlled impedance is below this (0.001 = 0.1 %).
    pub tolerance: f64,
    /// Levels always solved (three are needed for an observed order).
    pub min_levels: usize,
    /// Most refinement levels.
    pub max_levels: usize,
    /// Grid factor η of the first level (see [`grid`]); each level divides it by `ratio`.
    pub coarse_eta: f64,
    /// Refinement ratio between levels.
    pub ratio: f64,
    /// Most grid nodes of one level; refinement stops before exceeding it.
    pub max_nodes: usize,
    /// Relative residual at which conjugate gradients stop.
    pub cg_tolerance: f64,
    /// Most conjugate-gradient iterations of one solve.
    pub max_cg_iterations: usize,
    /// Grid grading (growth rate and finest spacings).
    pub grid: grid::GridParams,
}

impl Default for FieldOptions {
    fn default() -> Self {
        FieldOptions {
            tolerance: 3e-3,
            min_levels: 3,
            max_levels: 6,
            coarse_eta: 2.0,
            ratio: std::f64::consts::SQRT_2,
            max_nodes: 300_000,
            cg_tolerance: 1e-6,
            max_cg_iterations: 5000,
            grid: grid::GridParams::default(),
        }
    }
}

impl FieldOptions {
    fn validate(&self) -> Result<()> {
        crate::base::error::in_range("tolerance", self.tolerance, 1e-7, 0.5, "")?;
        crate::base::error::in_range("coarse_eta", self.coarse_eta, 0.05, 20.0, "")?;
        crate::base::error::in_range("ratio", self.ratio, 1.1, 4.0, "")?;
        crate::base::error::in_range("cg_tolerance", self.cg_tolerance, 1e-15, 1e-3, "")?;
        crate::base::error::in_range("grid.kappa", self.grid.kappa, 0.01, 1.0, "")?;
        crate::base::error::in_range("grid.delta_corner", self.grid.delta_corner, 1e-4, 1.0, "")?;
        crate::base::error::in_range(
            "grid.delta_interface",
            self.grid.delta_interface,
            1e-4,
            1.0,
            "",
        )?;
        if self.min_levels < 1 || self.max_levels < self.min_levels || self.max_levels > 12 {
            return Err(Error::Invalid {
                field: "levels".into(),
                reason: "need 1 ≤ min_levels ≤ max_levels ≤ 12".into(),
            });
        }
        if self.max_nodes < 100 || self.max_nodes > 20_000_000 {
            return Err(Error::Invalid {
                field: "max_nodes".into(),
                reason: "between 100 and 20 000 000".into(),
            });
        }
        if self.max_cg_iterations == 0 || self.max_cg_iterations > 1_000_000 {
            return Err(Error::Invalid {
                field: "max_cg_iterations".into(),
                reason: "between 1 and 1 000 000".into(),
            });
        }
        Ok(())
    }
}

/// One refinement level's figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Level {
    pub eta: f64,
    pub nx: usize,
    pub ny: usize,
    /// Conjugate-gradient iterations summed over the level's solves.
    pub iterations: usize,
    /// Maxwell capacitance matrix with dielectrics, F/m (whole structure).
    pub c: Vec<Vec<f64>>,
    /// The same in vacuum, F/m.
    pub c0: Vec<Vec<f64>>,
    /// Controlled impedance at this level (Z0, or Zdiff for pairs), Ω.
    pub controlled_ohm: f64,
}

/// The outcome of a field solve.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FieldResult {
    /// Line parameters from the extrapolated (or, when not asymptotic, the finest) capacitances.
    pub analysis: Analysis,
    /// Maxwell capacitance matrix with dielectrics, F/m.
    pub c_matrix: Vec<Vec<f64>>,
    /// Vacuum capacitance matrix, F/m.
    pub c0_matrix: Vec<Vec<f64>>,
    /// Inductance matrix L = µ0ε0·C0⁻¹, H/m.
    pub l_matrix: Vec<Vec<f64>>,
    /// Controlled impedance (Z0, or Zdiff = 2·Zodd for pairs), Ω.
    pub controlled_ohm: f64,
    /// The same on the finest grid, before extrapolation, Ω.
    pub finest_ohm: f64,
    /// Estimated relative error of `controlled_ohm`, %.
    pub error_estimate_pct: f64,
    /// Observed order of convergence (in grid spacing) from the last three levels, when asymptotic.
    pub observed_order: Option<f64>,
    /// Whether the error estimate met the tolerance.
    pub converged: bool,
    pub levels: Vec<Level>,
    pub warnings: Vec<Warning>,
}

/// How far a resumable solve is.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Progress {
    /// Rough fraction of the work done, 0..1.
    pub fraction: f64,
    pub done: bool,
}

#[derive(Debug, Clone, Copy, PartialEq)]
struct Job {
    wall: Wall,
    vacuum: bool,
    signal: usize,
}

struct LevelWork {
    eta: f64,
    grid: Grid,
    eps: Vec<f64>,
    jobs: Vec<Job>,
    job_idx: usize,
    active: Option<(System, Pcg)>,
    solutions: Vec<Vec<f64>>,
    iterations: usize,
    /// Every cell has the same εr (stripline): the vacuum solves are skipped.
    uniform: bool,
}

/// A field solve that runs in bounded slices: `FieldSolve::new(..)`, then `step(budget)` until `done`, then
/// `result()`.
pub struct FieldSolve {
    geometry: Geometry,
    options: FieldOptions,
    levels: Vec<Level>,
    current: Option<LevelWork>,
    previous: Option<(Grid, Vec<Vec<f64>>)>,
    outcome: Option<Result<FieldResult>>,
    warnings: Vec<Warning>,
    /// Largest fraction reported so far (the estimate of the total can grow when more levels are needed).
    reported: f64,
}

impl FieldSolve {
    /// Prepares a solve of `geometry`; checks the options.
    pub fn new(geometry: Geometry, options: FieldOptions) -> Result<FieldSolve> {
        options.validate()?;
        let warnings = geometry.warnings.clone();
        Ok(FieldSolve {
            geometry,
            options,
            levels: Vec::new(),
            current: None,
            previous: None,
            outcome: None,
            warnings,
            reported: 0.0,
        })
    }

    fn jobs(&self) -> Vec<Job> {
        let walls: &[Wall] = match self.geometry.layout {
            Layout::Centered => &[Wall::Neumann],
            Layout::MirroredPair => &[Wall::Dirichlet, Wall::Neumann],
        };
        let mut jobs = Vec::new();
        for &wall in walls {
            for vacuum in [false, true] {
                for signal in 0..self.geometry.n_signals {
                    jobs.push(Job {
                        wall,
                        vacuum,
                        signal,
                    });
                }
            }
        }
        jobs
    }

    fn eta(&self, level: usize) -> f64 {
        self.options.coarse_eta / self.options.ratio.powi(level as i32)
    }

    fn start_level(&mut self) -> Result<Option<LevelWork>> {
        let level = self.levels.len();
        let eta = self.eta(level);
        let grid = Grid::build_with(&self.geometry, eta, &self.options.grid)?;
        if grid.nodes() > self.options.max_nodes {
            if level == 0 {
                return Err(Error::Invalid {
                    field: "grid".into(),
                    reason: format!(
                        "the coarsest grid already has {} nodes, more than the cap of {}",
                        grid.nodes(),
                        self.options.max_nodes
                    ),
                });
            }
            return Ok(None);
        }
        let eps = solve::cell_permittivity(&self.geometry, &grid);
        let uniform = eps.iter().all(|&e| e == eps[0]);
        Ok(Some(LevelWork {
            uniform,
            eta,
            grid,
            eps,
            jobs: self.jobs(),
            job_idx: 0,
            active: None,
            solutions: Vec::new(),
            iterations: 0,
        }))
    }

    /// Does about `work_budget` units of work (one unit ≈ one grid node visited in one iteration) and reports
    /// progress. Calling it after `done` does nothing.
    pub fn step(&mut self, work_budget: usize) -> Progress {
        let mut budget = work_budget.max(1) as i64;
        while budget > 0 && self.outcome.is_none() {
            if let Err(e) = self.advance(&mut budget) {
                self.outcome = Some(Err(e));
            }
        }
        self.reported = self.reported.max(self.estimate_fraction());
        self.progress()
    }

    fn advance(&mut self, budget: &mut i64) -> Result<()> {
        if self.current.is_none() {
            match self.start_level()? {
                Some(level) => {
                    *budget -= 4 * level.grid.nodes() as i64;
                    self.current = Some(level);
                }
                None => {
                    self.warnings.push(Warning::new(format!(
                        "field solve: refinement stopped at the grid cap of {} nodes",
                        self.options.max_nodes
                    )));
                    self.finish();
                }
            }
            return Ok(());
        }
        let geometry = &self.geometry;
        let options = self.options;
        let previous = &self.previous;
        let Some(level) = self.current.as_mut() else {
            return Ok(());
        };
        if level.job_idx < level.jobs.len() {
            let job = level.jobs[level.job_idx];
            if level.active.is_none() && job.vacuum && level.uniform {
                // One dielectric everywhere: εr only scales the operator, so the vacuum potential equals the
                // dielectric one (its energy is taken with vacuum couplings later).
                let twin = level.job_idx - geometry.n_signals;
                let copy = level.solutions[twin].clone();
                level.solutions.push(copy);
                level.job_idx += 1;
                return Ok(());
            }
            if level.active.is_none() {
                let labels = solve::node_labels(geometry, &level.grid, job.wall);
                let wanted = 2 + job.signal as u8;
                if !labels.contains(&wanted) {
                    return Err(Error::Invalid {
                        field: "geometry".into(),
                        reason: "a signal conductor falls between grid nodes".into(),
                    });
                }
                let eps = if job.vacuum {
                    None
                } else {
                    Some(level.eps.as_slice())
                };
                let (cx, cy) = solve::couplings(&level.grid, eps);
                let sys = System::new(level.grid.nx(), &labels, &cx, &cy, job.signal);
                let guess = match previous {
                    Some((grid, sols)) => {
                        solve::interpolate(grid, &sols[level.job_idx], &level.grid)
                    }
                    None => vec![0.0; level.grid.nodes()],
                };
                let pcg = Pcg::new(&sys, guess);
                *budget -= 12 * level.grid.nodes() as i64;
                level.active = Some((sys, pcg));
                return Ok(());
            }
            let nodes = level.grid.nodes().max(1) as i64;
            let (sys, pcg) = level.active.as_mut().expect("active solve present");
            let iters = (*budget / nodes).clamp(1, 10_000) as usize;
            let left = options.max_cg_iterations.saturating_sub(pcg.iterations);
            pcg.run(sys, iters.min(left.max(1)), options.cg_tolerance);
            *budget -= iters as i64 * nodes;
            let capped = pcg.iterations >= options.max_cg_iterations;
            if pcg.done || capped {
                if capped && !pcg.done {
                    self.warnings.push(Warning::new(format!(
                        "field solve: conjugate gradients stopped at {} iterations (residual {:.1e})",
                        pcg.iterations, pcg.residual
                    )));
                }
                level.iterations += pcg.iterations;
                level.solutions.push(pcg.potential(sys));
                level.active = None;
                level.job_idx += 1;
            }
            return Ok(());
        }
        // All solves of the level are done: capacitances.
        let level = self.current.take().expect("level present");
        *budget -= 4 * level.grid.nodes() as i64;
        let record = self.capacitances(&level)?;
        self.levels.push(record);
        self.previous = Some((level.grid, level.solutions));
        if self.should_stop() {
            self.finish();
        }
        Ok(())
    }

    fn capacitances(&self, level: &LevelWork) -> Result<Level> {
        let nx = level.grid.nx();
        let n = self.geometry.n_signals;
        // Energy matrices per (wall, medium) from the solutions in job order.
        let mut blocks: Vec<(Wall, bool, Vec<Vec<f64>>)> = Vec::new();
        let mut k = 0;
        while k < level.jobs.len() {
            let job = level.jobs[k];
            let eps = if job.vacuum {
                None
            } else {
                Some(level.eps.as_slice())
            };
            let (cx, cy) = solve::couplings(&level.grid, eps);
            let mut m = vec![vec![0.0; n]; n];
            for a in 0..n {
                for b in 0..n {
                    m[a][b] = EPS0
                        * solve::energy(
                            nx,
                            &cx,
                            &cy,
                            &level.solutions[k + a],
                            &level.solutions[k + b],
                        );
                }
            }
            blocks.push((job.wall, job.vacuum, m));
            k += n;
        }
        let pick = |wall: Wall, vacuum: bool| -> Vec<Vec<f64>> {
            blocks
                .iter()
                .find(|b| b.0 == wall && b.1 == vacuum)
                .map(|b| b.2.clone())
                .unwrap_or_default()
        };
        let (c, c0) = match self.geometry.layout {
            Layout::Centered => {
                let double = |m: Vec<Vec<f64>>| -> Vec<Vec<f64>> {
                    m.into_iter()
                        .map(|r| r.into_iter().map(|v| 2.0 * v).collect())
                        .collect()
                };
                (
                    double(pick(Wall::Neumann, false)),
                    double(pick(Wall::Neumann, true)),
                )
            }
            Layout::MirroredPair => {
                let maxwell = |odd: f64, even: f64| -> Vec<Vec<f64>> {
                    let (s, m) = (0.5 * (odd + even), 0.5 * (even - odd));
                    vec![vec![s, m], vec![m, s]]
                };
                (
                    maxwell(
                        pick(Wall::Dirichlet, false)[0][0],
                        pick(Wall::Neumann, false)[0][0],
                    ),
                    maxwell(
                        pick(Wall::Dirichlet, true)[0][0],
                        pick(Wall::Neumann, true)[0][0],
                    ),
                )
            }
        };
        let analysis = extract::analysis(&c, &c0).ok_or_else(|| Error::Invalid {
            field: "geometry".into(),
            reason: "the field solve gave a non-positive capacitance".into(),
        })?;
        let controlled = analysis.controlled();
        if !controlled.is_finite() {
            return Err(Error::Invalid {
                field: "geometry".into(),
                reason: "the field solve gave a non-finite impedance".into(),
            });
        }
        Ok(Level {
            eta: level.eta,
            nx,
            ny: level.grid.ny(),
            iterations: level.iterations,
            c,
            c0,
            controlled_ohm: controlled,
        })
    }

    /// Error estimate from the levels so far: (estimate as a fraction, order, extrapolation weight).
    fn estimate(&self) -> (f64, Option<f64>, Option<f64>) {
        let z: Vec<f64> = self.levels.iter().map(|l| l.controlled_ohm).collect();
        let k = z.len();
        if k < 2 {
            return (f64::INFINITY, None, None);
        }
        let zf = z[k - 1];
        if k >= 3 {
            if let Some((p, lim)) =
                extract::richardson([z[k - 3], z[k - 2], z[k - 1]], self.options.ratio)
            {
                if p.is_infinite() {
                    return (0.0, None, None);
                }
                // Weight w such that f_ext = f2 + w·(f2 − f1).
                let w = 1.0 / (self.options.ratio.powf(p) - 1.0);
                return (((lim - zf) / zf).abs(), Some(p), Some(w));
            }
        }
        // Not asymptotic (or only two levels): the larger of the last two changes, doubled, as a cautious bound (a
        // single small change can be an accident of a non-monotone sequence).
        let mut change = (z[k - 1] - z[k - 2]).abs();
        if k >= 3 {
            change = change.max((z[k - 2] - z[k - 3]).abs());
        }
        (2.0 * change / zf.abs(), None, None)
    }

    fn should_stop(&self) -> bool {
        let k = self.levels.len();
        if k >= self.options.max_levels {
            return true;
        }
        k >= self.options.min_levels && self.estimate().0 < self.options.tolerance
    }

    fn finish(&mut self) {
        self.outcome = Some(self.assemble());
    }

    fn assemble(&self) -> Result<FieldResult> {
        let Some(finest) = self.levels.last() else {
            return Err(Error::Invalid {
                field: "grid".into(),
                reason: "no refinement level could be solved".into(),
            });
        };
        let (est, order, weight) = self.estimate();
        let k = self.levels.len();
        let extrapolate = |pick: &dyn Fn(&Level) -> &Vec<Vec<f64>>| -> Vec<Vec<f64>> {
            let f2 = pick(finest);
            match weight {
                Some(w) if k >= 2 => {
                    let f1 = pick(&self.levels[k - 2]);
                    f2.iter()
                        .zip(f1)
                        .map(|(r2, r1)| r2.iter().zip(r1).map(|(a, b)| a + w * (a - b)).collect())
                        .collect()
                }
                _ => f2.clone(),
            }
        };
        let c = extrapolate(&|l: &Level| &l.c);
        let c0 = extrapolate(&|l: &Level| &l.c0);
        let mut analysis = extract::analysis(&c, &c0).ok_or_else(|| Error::Invalid {
            field: "geometry".into(),
            reason: "the extrapolated capacitances are not positive".into(),
        })?;
        let l_matrix = extract::inductance(&c0).unwrap_or_default();
        let converged = est < self.options.tolerance;
        let mut warnings = self.warnings.clone();
        if !converged {
            warnings.push(Warning::new(format!(
                "field solve: estimated error {:.3} % is above the tolerance {:.3} %",
                est * 100.0,
                self.options.tolerance * 100.0
            )));
        }
        analysis.warnings_mut().extend(warnings.iter().cloned());
        let controlled = analysis.controlled();
        Ok(FieldResult {
            analysis,
            c_matrix: c,
            c0_matrix: c0,
            l_matrix,
            controlled_ohm: controlled,
            finest_ohm: finest.controlled_ohm,
            error_estimate_pct: est * 100.0,
            observed_order: order,
            converged,
            levels: self.levels.clone(),
            warnings,
        })
    }

    /// Runs the rest of the solve (blocking; bounded by the options' caps).
    pub fn run(&mut self) {
        // Every call to `step` makes progress and the level/iteration caps bound the total, so this ends; the count
        // below is a second safety net.
        for _ in 0..1_000_000 {
            if self.step(5_000_000).done {
                break;
            }
        }
    }

    /// Progress so far (the fraction never decreases).
    pub fn progress(&self) -> Progress {
        if self.outcome.is_some() {
            return Progress {
                fraction: 1.0,
                done: true,
            };
        }
        Progress {
            fraction: self.reported,
            done: false,
        }
    }

    fn estimate_fraction(&self) -> f64 {
        // Each level costs about `ratio²` times the previous one.
        let r2 = self.options.ratio * self.options.ratio;
        let done_levels = self.levels.len();
        let expected = self.options.min_levels.max(done_levels + 1);
        let weight = |k: usize| r2.powi(k as i32);
        let total: f64 = (0..expected).map(weight).sum();
        let mut done: f64 = (0..done_levels).map(weight).sum();
        if let Some(level) = &self.current {
            let n = level.jobs.len().max(1) as f64;
            done += weight(done_levels) * level.job_idx as f64 / n;
        }
        (done / total).min(0.99)
    }

    /// The result once `step` reported `done` (`None` before).
    pub fn result(&self) -> Option<Result<FieldResult>> {
        self.outcome.clone()
    }
}

/// Runs a whole field solve of `geometry` (blocking; bounded by the options' caps).
pub fn solve(geometry: Geometry, options: FieldOptions) -> Result<FieldResult> {
    let mut s = FieldSolve::new(geometry, options)?;
    s.run();
    s.result().unwrap_or_else(|| {
        Err(Error::NotConverged {
            what: "field solve".into(),
            iterations: 1_000_000,
            residual: f64::NAN,
        })
    })
}

/// Builds and solves a resolved cross-section.
pub fn solve_cross_section(
    cs: &CrossSection,
    structure: Structure,
    dims: &Dims,
    etch_factor: Option<f64>,
    options: FieldOptions,
) -> Result<FieldResult> {
    solve(build(cs, structure, dims, etch_factor)?, options)
}

#[cfg(test)]
mod tests;
