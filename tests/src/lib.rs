//! Shared helpers for the integration tests (fixtures and comparisons).
pub mod stacks;
