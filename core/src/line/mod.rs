//! What follows from a line's parameters and its section over frequency: conductor and dielectric loss,
//! copper roughness (the surface model in `design::roughness`), microstrip dispersion, complex Z0 and propagation.

pub mod crosstalk;
pub mod dispersion;
pub mod loss;
pub mod reach;
