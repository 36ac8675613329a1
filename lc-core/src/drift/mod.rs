//! Drift compensation: taking temperature out of the shift.
//!
//! Temperature moves the tank's L·C product by itself: a class-1 capacitor
//! by up to ±30 ppm/K, the coil's geometry and the parasitics by their own
//! amounts. Two remedies, usable together:
//!
//! - [`TemperatureModel`]: a per-unit polynomial of the temperature,
//!   fitted at the end of the line, applied multiplicatively to 1 + s;
//! - [`Companion`]: a second coil or electrode that sees the temperature
//!   but not the target; the ratio of the two period ratios cancels what
//!   both see (ratiometric).
//!
//! The third kind, baseline tracking for detectors, lives with the metal
//! reader that uses it.

mod companion;
mod model;

pub use companion::{Companion, CompanionError};
pub use model::{DriftError, DriftFactor, TemperatureModel, TEMPERATURE_DOMAIN};
