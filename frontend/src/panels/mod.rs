//! The app's panels, one per file; each gets plain data plus a `Callback<Action>` and never calls the core.

pub mod field_check;
pub mod layers;
pub mod rules;
pub mod toolbar;

pub use field_check::FieldCheck;
pub use layers::Layers;
pub use rules::Rules;
pub use toolbar::Toolbar;
