//! The app's panels: one self-contained component per file, taking plain props and callbacks.

pub mod notes;
pub mod pictures;
pub mod share;
