//! Simulation: rig logs and field logs from the project's own physics
//! model, seeded and reproducible, for demos and tests.

pub mod campaign;
pub mod field;
pub mod level;
pub mod rig;
mod rng;
pub mod tank;

pub use rng::Rng;
