//! Counting: from raw timer captures to a plausible count pair.
//!
//! A reading starts as two counts over one gate: sensor oscillator cycles and
//! reference clock ticks ([`CountPair`]). How the gate is closed decides
//! which count is exact and which carries the ±1 quantisation ([`Gating`]):
//!
//! - **reciprocal**: the gate spans a whole number of sensor cycles and the
//!   reference ticks are counted; resolution ±1 tick, relative 1/ticks,
//!   independent of the sensor frequency (Rubiola 2005);
//! - **direct**: the gate is a fixed number of reference ticks and sensor
//!   cycles are counted; resolution ±1 cycle, relative 1/cycles.
//!
//! Hardware timers are narrower than the counts ([`capture`] widens them by
//! counting overflows), and a dead or wild oscillator must never turn into a
//! reading ([`FaultWindow`]).
//!
//! ```
//! use lc_core::counting::{capture, CountPair, FaultWindow, Gate};
//!
//! // A 16-bit timer captured the reference count at 65_000 and, after two
//! // overflows, at 1_000: 2 · 65_536 + 1_000 − 65_000 = 67_072 ticks.
//! let ticks = capture::elapsed_u16(65_000, 1_000, 2).unwrap();
//! assert_eq!(ticks, 67_072);
//! // The gate spanned 4096 sensor cycles (reciprocal gating).
//! let gate = Gate::reciprocal(4096).unwrap();
//! let pair = gate.pair(ticks);
//! assert_eq!(pair, CountPair::new(4096, 67_072));
//! // 16 MHz reference: about 977 kHz, inside a 100 kHz – 5 MHz window.
//! let window = FaultWindow::new(16_000_000, 100_000, 5_000_000, 64).unwrap();
//! assert!(window.check(pair).is_ok());
//! ```

pub mod capture;
mod gate;
mod pair;
mod window;

pub use gate::{Gate, GateError, Gating};
pub use pair::CountPair;
pub use window::{AcceptedTicks, FaultError, FaultWindow, WindowError};
