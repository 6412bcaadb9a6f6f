//! What leaves the planner: fab notes (Markdown, CSV), the SVG stack drawing, SVG plots and Touchstone files.

pub mod draw;
pub mod plot;
pub mod report;
pub mod touchstone;
