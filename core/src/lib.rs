//! Ohmstack core: closed-form and field-solver models for PCB controlled-impedance stackups, with synthesis,
//! loss and tolerance spread. Pure Rust: no I/O, no clocks, no web types, so it runs natively and in WASM.
//!
//! ```
//! let project = ohmstack_core::design::demo::project();
//! let plan = ohmstack_core::plan(&project).unwrap();
//! let first = plan.rules[0].ok().unwrap();
//! // Solved on the 2D field engine (every rule's default) to 0.01 % of the 50 Ω target.
//! assert!((first.impedance_ohm - 50.0).abs() < 5e-3);
//! assert!(ohmstack_core::engine::is_field_method(&first.method));
//! ```
//!
//! The modules are layers, listed here from the bottom up; a layer imports only from layers below it (held by
//! `tests/tidy.rs`, written down in ARCHITECTURE.md):
//!
//! 1. [`base`]: errors, units, validity notes, root finding, elliptic integrals: no physics of lines.
//! 2. [`design`]: what the user saves: project, stackup, materials, process tolerances, demo, share links.
//! 3. [`section`]: a stackup and a rule resolved into the cross-section an engine needs, and the shape of an
//!    engine's answer (modes, Z, εeff).
//! 4. [`closed_form`] and [`field`]: the two families of engines, side by side (neither imports the other).
//! 5. [`engine`]: the one boundary: cross-section + dimensions → line parameters, by the engine a rule chose.
//! 6. [`line`]: what follows from a line's parameters over frequency: loss, roughness, dispersion.
//! 7. [`plan`]: per-rule orchestration: synthesis, the whole plan, tolerance spread, field checks.
//! 8. [`output`]: fab notes, drawings, plots, Touchstone files.

pub mod base;
pub mod closed_form;
pub mod design;
pub mod engine;
pub mod field;
pub mod line;
pub mod output;
pub mod plan;
pub mod section;

pub use base::error::{Error, Result};
pub use design::process::Process;
pub use design::project::{ImpedanceRule, Project, Solve, Structure};
pub use design::stackup::{Layer, Stackup};
pub use plan::spread::SpreadSummary;
pub use plan::{plan, plan_with, Plan, PlanOptions, RuleOutcome, RuleResult};
