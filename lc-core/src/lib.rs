//! # lc-core: readout core for resonant LC sensors
//!
//! A sensor built around an LC tank oscillates at f = 1/(2π·√(L·C)); a
//! target changes L or C and so the frequency. Firmware counts oscillator
//! cycles against a reference clock. This crate turns those counts into a
//! trustworthy reading on a Cortex-M0 without an FPU: integer math on the
//! reading path, an `f64` twin of every fixed-point stage for verification,
//! no heap, no `unsafe`, and no reachable panic.
//!
//! The modules follow the data path of one reading:
//!
//! 1. [`counting`]: raw timer captures become a [`counting::CountPair`]
//!    (sensor cycles, reference ticks over one gate); a
//!    [`counting::FaultWindow`] rejects implausible pairs with a typed error.
//! 2. [`ratio`]: a count pair becomes frequency and period ratio (ticks per
//!    sensor cycle), each in fixed point with an `f64` twin.
//! 3. [`shift`]: the period ratio against the unit's rest point becomes the
//!    shift s = (p/p_rest)² − 1, the relative change of the L·C product. This
//!    is the per-reading hot path: no division when the gate is a configured
//!    number of sensor cycles, one division otherwise.
//! 4. [`temperature`] and [`drift`]: an NTC thermistor read to hundredths
//!    of a degree, and temperature taken out of the shift by a per-unit
//!    temperature model or a companion channel (ratiometric).
//! 5. [`curve`]: shift to a physical value through a monotone calibration
//!    table (linear or monotone cubic), clamped with a status outside it.
//! 6. [`filter`] and [`detector`]: median and exponential moving average in
//!    fixed point, and a hysteresis-and-debounce detector.
//! 7. [`reader`]: the stages composed per product (proximity, level, metal)
//!    into a value with its status, built from a calibration [`image`];
//!    [`geometry`] turns a level into a volume (tank shapes, strapping
//!    tables) and sizes level probes.
//!
//! 8. [`scanner`]: several channels behind a multiplexer (embedded-hal
//!    1.0): select, settle, count, check, round-robin.
//!
//! Beside the path: [`tank`] and [`ringdown`], the LC tank laws in `f64`
//! (resonance, damping, losses, energy) and quality factor from a
//! ring-down, for the host and for design-time checks.
//!
//! [`fixed`] holds the small integer helpers (widening multiply, rounding
//! shifts) that the fixed-point stages share.
//!
//! ## Numeric contract
//!
//! Every fixed-point stage documents its input domain, its output format
//! (binary fixed point, `Qm.n`), how it rounds, and its error bound against
//! its `f64` twin. The bar: inside the declared domain the error is at most
//! one tenth of the counter's own quantisation step at that reading, so the
//! arithmetic never limits resolution. Property tests in each module prove
//! the bound over the whole domain.
//!
//! ## Panic contract
//!
//! No public function panics, for any input. Arithmetic that could overflow
//! is either impossible by construction (documented per function) or
//! checked, and failures come back as small `Copy` error enums. The firmware
//! example links with `panic-never` to prove this for the firmware path.
//!
//! ## Example
//!
//! ```
//! use lc_core::counting::{CountPair, Gating};
//! use lc_core::shift::{RestPoint, ShiftConverter};
//!
//! // 16 MHz reference; the rest point was 10.0 ticks per sensor cycle.
//! let rest = RestPoint::from_counts(CountPair::new(4096, 40_960)).unwrap();
//! let conv = ShiftConverter::new(rest, Gating::Reciprocal, Some(4096)).unwrap();
//! // A target lowered L·C by about 1 %: the period ratio fell by about 0.5 %.
//! let reading = conv.convert(CountPair::new(4096, 40_755)).unwrap();
//! let s = reading.shift().to_f64();
//! assert!((s - ((40_755.0f64 / 40_960.0).powi(2) - 1.0)).abs() < 1e-12);
//! ```
#![cfg_attr(not(test), no_std)]
#![forbid(unsafe_code)]
#![deny(missing_docs)]

pub mod counting;
pub mod curve;
pub mod detector;
pub mod drift;
pub mod filter;
pub mod fixed;
pub mod geometry;
pub mod image;
pub mod ratio;
pub mod reader;
pub mod ringdown;
pub mod scanner;
pub mod shift;
pub mod tank;
pub mod temperature;
