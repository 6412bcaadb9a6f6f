//! Workspace integration tests: exact analytic references and regressions, against the public core API.

mod closed_form;
mod properties;
mod regression;
mod schema;
mod tidy;
