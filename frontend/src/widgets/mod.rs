//! Small controlled inputs shared by the panels: a labelled text field and a labelled select.

pub mod field;
pub mod select;

pub use field::TextField;
pub use select::Select;
