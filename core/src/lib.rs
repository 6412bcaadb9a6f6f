//! Ohmstack core: closed-form and field-solver models for PCB controlled-impedance stackups, with synthesis,
//! loss and tolerance spread. Pure Rust: no I/O, no clocks, no web types, so it runs natively and in WASM.
//!
//! ```
//! let project = ohmstack_core::demo::project();
//! let plan = ohmstack_core::plan(&project).unwrap();
//! let first = plan.rules[0].ok().unwrap();
//! assert!((first.impedance_ohm - 50.0).abs() < 1e-6);
//! ```
//!
//! Data flows one way: [`Project`] → [`cross_section::resolve`] → [`models::evaluate`] (one module per structure
//! family) → [`synth::solve`] for the free dimension → [`Plan`].
//!
//! Around the plan, also pure: [`share`] packs a project into a URL-fragment link and reads it back (untrusted
//! input), [`report`] writes fab notes (Markdown, CSV), [`draw`] the SVG cross-section and [`plot`] small SVG plots.

pub mod case;
pub mod coated_microstrip;
pub mod coplanar;
pub mod coupled_coplanar;
pub mod coupled_microstrip;
pub mod coupled_stripline;
pub mod cross_section;
pub mod demo;
pub mod dielectric;
pub mod dispersion;
pub mod draw;
pub mod elliptic;
pub mod error;
pub mod field;
pub mod lines;
pub mod loss;
pub mod material;
pub mod microstrip;
pub mod models;
pub mod plan;
pub mod plot;
pub mod project;
pub mod report;
pub mod roughness;
pub mod share;
pub mod spread;
pub mod stackup;
pub mod strip_moments;
pub mod stripline;
pub mod synth;
pub mod touchstone;
pub mod units;
pub mod validity;

pub use error::{Error, Result};
pub use plan::{plan, plan_with, Plan, PlanOptions, RuleOutcome, RuleResult};
pub use project::{ImpedanceRule, Project, Solve, Structure};
pub use spread::{Process, SpreadSummary};
pub use stackup::{Layer, Stackup};
