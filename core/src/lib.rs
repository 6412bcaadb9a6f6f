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

pub mod case;
pub mod cross_section;
pub mod demo;
pub mod error;
pub mod lines;
pub mod material;
pub mod microstrip;
pub mod models;
pub mod plan;
pub mod project;
pub mod stackup;
pub mod synth;
pub mod units;
pub mod validity;

pub use error::{Error, Result};
pub use plan::{plan, Plan, RuleOutcome, RuleResult};
pub use project::{ImpedanceRule, Project, Solve, Structure};
pub use stackup::{Layer, Stackup};
