//! The app's panels, one per file; each gets plain data plus callbacks and calls the core only through `bridge`.

pub mod field_check;
pub mod glass;
pub mod layers;
pub mod notes;
pub mod pictures;
pub mod process;
pub mod routing;
pub mod rules;
pub mod share;
pub mod stack_picture;
pub mod summary;
pub mod toolbar;

pub use field_check::FieldCheck;
pub use layers::Layers;
pub use rules::Rules;
pub use toolbar::Toolbar;
