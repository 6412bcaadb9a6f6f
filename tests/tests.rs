//! Workspace integration tests: exact analytic references and regressions, against the public core API.

mod closed_form;
mod crosstalk;
mod field_sweep;
mod physical_bounds;
mod properties;
mod regression;
mod schema;
mod stack_solving;
mod starters;
mod tidy;
