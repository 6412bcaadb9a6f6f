//! The bottom layer: errors, units and their formatting, validity notes, bracketed root finding and complete
//! elliptic integrals. Nothing here knows about stackups or lines.

pub mod elliptic;
pub mod error;
pub mod roots;
pub mod units;
pub mod validity;
