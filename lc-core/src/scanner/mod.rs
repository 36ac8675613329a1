//! Scanner: several LC channels behind one multiplexer and one counter.
//!
//! A product may carry several coils (sensor coils, and a companion coil
//! that sees temperature but not the target) on the inputs of an analog
//! multiplexer in front of one counter. The scanner sequences them through
//! two small hardware-boundary traits, in the manner of embedded-hal 1.0:
//!
//! - [`ChannelSelector`]: routes one input to the counter.
//!   [`BinaryMux`] drives binary-coded select lines on
//!   `embedded_hal::digital::OutputPin`s, [`EnabledMux`] adds an enable
//!   line (break-before-make), [`SingleInput`] is a coil wired straight to
//!   the counter.
//! - [`CounterSource`]: counts one [`Gate`](crate::counting::Gate) and
//!   returns the [`CountPair`](crate::counting::CountPair). Firmware
//!   implements it on its timers (see the example on [`CounterSource`]);
//!   [`ReplaySource`] plays back a logged stream on the host.
//!
//! Both traits are fallible and have an associated error type of the
//! implementer's choosing; generic code matches on a `#[non_exhaustive]`
//! kind ([`CounterErrorKind`], [`SelectErrorKind`]). The [`Scanner`] is the
//! generic consumer: for each [`Channel`] it selects the input, waits the
//! settle time through `embedded_hal::delay::DelayNs`, counts the channel's
//! gate and checks the pair against the channel's
//! [`FaultWindow`](crate::counting::FaultWindow). Failures of the parts come
//! back as [`ScanError`]; an implausible pair is a per-channel
//! [`FaultError`](crate::counting::FaultError), because the scan worked.
//!
//! Nothing here allocates or panics; the channel count `N` and the number of
//! select lines are const generics checked at compile time.
//!
//! ## Example
//!
//! Two channels behind a two-line multiplexer, replayed from a log: a
//! sensor coil on input 0 and, on input 1, a companion coil built like it
//! but away from the target, so it counts the rest point. The counts are the
//! demo scenario's (48 MHz reference, reciprocal gates of 16 384 sensor
//! cycles; rows of `examples/data/demo-counts.csv` and its rest point). The
//! pins and the delay stand in for a HAL's; a replay does not wait, so the
//! settle time here only shows where it goes (see [`Scanner::new`] for how
//! to choose it on hardware).
//!
//! ```
//! use lc_core::counting::{CountPair, FaultError, FaultWindow, Gate};
//! use lc_core::scanner::{BinaryMux, Channel, CounterErrorKind, ReplaySource, Scanner};
//! # use core::convert::Infallible;
//! # use embedded_hal::{delay::DelayNs, digital::{ErrorType, OutputPin}};
//! # struct Line;
//! # impl ErrorType for Line { type Error = Infallible; }
//! # impl OutputPin for Line {
//! #     fn set_low(&mut self) -> Result<(), Infallible> { Ok(()) }
//! #     fn set_high(&mut self) -> Result<(), Infallible> { Ok(()) }
//! # }
//! # struct Delay;
//! # impl DelayNs for Delay { fn delay_ns(&mut self, _ns: u32) {} }
//!
//! let gate = Gate::reciprocal(16_384).unwrap();
//! // Any frequency, at least one sensor cycle: only dead counts are faults.
//! let window = FaultWindow::new(48_000_000, 0, u32::MAX, 1).unwrap();
//! let channels = [
//!     Channel::new(0, gate).with_window(window), // sensor coil
//!     Channel::new(1, gate).with_window(window), // companion coil
//! ];
//! // Interleaved in scan order: sensor, companion, sensor, companion.
//! let log = [
//!     CountPair::new(16_384, 138_257),
//!     CountPair::new(16_384, 139_542),
//!     CountPair::new(0, 132_278), // the sensor's oscillator stalled
//!     CountPair::new(16_384, 139_542),
//! ];
//! let mux = BinaryMux::new([Line, Line]);
//! let settle_us = 20;
//! let mut scanner = Scanner::new(mux, Delay, ReplaySource::new(&log), channels, settle_us);
//!
//! assert_eq!(scanner.scan_next(), Ok((0, Ok(log[0]))));
//! assert_eq!(scanner.scan_next(), Ok((1, Ok(log[1]))));
//! let mut round = [None; 2];
//! scanner.scan_all(|channel, result| round[channel] = Some(result)).unwrap();
//! assert_eq!(round, [Some(Err(FaultError::NoOscillation)), Some(Ok(log[3]))]);
//! // The log is exhausted: the counter reports it with its kind.
//! let end = scanner.scan_next().unwrap_err();
//! assert_eq!(end.counter_kind(), Some(CounterErrorKind::EndOfData));
//! ```

mod mux;
mod replay;
mod scan;
mod select;
mod source;

pub use mux::{BinaryMux, EnabledMux, MuxError};
pub use replay::{ReplayError, ReplaySource};
pub use scan::{Channel, ChannelResult, ScanError, Scanner};
pub use select::{ChannelSelector, SelectError, SelectErrorKind, SingleInput};
pub use source::{CounterError, CounterErrorKind, CounterSource};
