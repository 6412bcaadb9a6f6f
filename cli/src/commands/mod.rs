//! One module per `ohmstack` command: its options (a clap `Args` struct, whose doc comments are the help) and a
//! `run` that does the work.

pub mod analyze;
pub mod batch;
pub mod calc;
pub mod completions;
pub mod crosstalk;
pub mod demo;
pub mod draw;
pub mod field;
pub mod field_calc;
pub mod field_solve;
pub mod kinds;
pub mod laminate;
pub mod loss;
pub mod materials;
pub mod notes;
pub mod plot;
pub mod propose;
pub mod random;
pub mod reach;
pub mod share;
pub mod spread;
pub mod thickness;
pub mod touchstone;
