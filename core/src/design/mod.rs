//! What the user designs and saves: the project (stackup, rules, fabrication limits), its layers and materials,
//! the process tolerances the spread varies, the demo, the starter stacks, and share links. Plain data with validation; no models.

pub mod construction;
pub mod demo;
pub mod dielectric;
pub mod loss_options;
pub mod material;
pub mod process;
pub mod project;
pub mod roughness;
pub mod share;
pub mod stackup;
pub mod starter;
