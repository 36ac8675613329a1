//! The counter source: the hardware boundary that turns one gate into a
//! count pair.
//!
//! [`CounterSource`] is deliberately small: one fallible method that counts
//! one gate on whatever the channel selector routes to the counter. Its
//! error is the implementer's own type; generic code (the
//! [`Scanner`](super::Scanner)) asks it for a [`CounterErrorKind`] and never
//! needs to know the hardware. The two implementations that prove the trait
//! are a firmware-style timer counter (below) and the host replay of a logged
//! stream, [`ReplaySource`](super::ReplaySource).

use crate::counting::{CountPair, Gate};
use core::convert::Infallible;
use core::fmt;

/// What kind of failure a counter source reports, for generic code.
///
/// Implementers keep their own, richer error types and map them here
/// through [`CounterError::kind`]. New kinds may be added, so a `match`
/// needs a wildcard arm.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum CounterErrorKind {
    /// The gate did not close within the source's time limit: a reciprocal
    /// gate waited for sensor cycles that came too slowly or stopped.
    Timeout,
    /// A count did not fit: more timer overflows than the widening can
    /// represent, a count above `u32`, or a new capture arrived before the
    /// previous one was read.
    Overrun,
    /// No sensor edge reached the counter at all: open or shorted coil,
    /// oscillator not started, or a multiplexer input that passes nothing.
    NoSignal,
    /// A recorded source has played back all of its data.
    EndOfData,
    /// Any other failure; the implementer's error says more.
    Other,
}

impl fmt::Display for CounterErrorKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            CounterErrorKind::Timeout => "gate did not close in time",
            CounterErrorKind::Overrun => "count overran the counter",
            CounterErrorKind::NoSignal => "no sensor signal at the counter",
            CounterErrorKind::EndOfData => "recorded counts exhausted",
            CounterErrorKind::Other => "counter failure",
        })
    }
}

impl core::error::Error for CounterErrorKind {}

/// An error of a [`CounterSource`]: any `Debug` type that can say which
/// [`CounterErrorKind`] it is.
pub trait CounterError: fmt::Debug {
    /// The kind of this error, for generic code.
    fn kind(&self) -> CounterErrorKind;
}

/// A source whose errors are only kinds uses the kind itself as its error.
impl CounterError for CounterErrorKind {
    #[inline]
    fn kind(&self) -> CounterErrorKind {
        *self
    }
}

/// For sources that cannot fail.
impl CounterError for Infallible {
    #[inline]
    fn kind(&self) -> CounterErrorKind {
        match *self {}
    }
}

/// Counts one gate on the channel that is currently routed to the counter.
///
/// The call blocks for one gate. A reciprocal gate lasts a fixed number of
/// sensor cycles, so its duration depends on the sensor: an implementation
/// must bound the wait and report [`CounterErrorKind::Timeout`] rather than
/// hang on a dead oscillator. Interrupt-driven firmware implements it by
/// starting the gate and waiting for the capture interrupt's flag.
///
/// The returned pair is raw data: plausibility is the caller's job (the
/// [`Scanner`](super::Scanner) applies each channel's
/// [`FaultWindow`](crate::counting::FaultWindow)).
///
/// ```
/// use lc_core::counting::{capture, CountPair, Gate, Gating};
/// use lc_core::counting::capture::CaptureError;
/// use lc_core::scanner::{CounterError, CounterErrorKind, CounterSource};
///
/// /// The two capture registers of a 16-bit reference timer, latched at the
/// /// first and the last sensor edge of a gate, and the overflows counted in
/// /// between. `None` while the gate is still open.
/// trait CaptureRegisters {
///     fn gate(&mut self, sensor_cycles: u32) -> Option<(u16, u16, u32)>;
/// }
///
/// /// Firmware-style counter source: reciprocal gates only.
/// struct TimerCounter<R> {
///     regs: R,
/// }
///
/// #[derive(Debug)]
/// enum TimerError {
///     GateOpen,
///     DirectGateUnsupported,
///     Capture(CaptureError),
/// }
///
/// impl CounterError for TimerError {
///     fn kind(&self) -> CounterErrorKind {
///         match self {
///             TimerError::GateOpen => CounterErrorKind::Timeout,
///             TimerError::Capture(CaptureError::Overflow) => CounterErrorKind::Overrun,
///             _ => CounterErrorKind::Other,
///         }
///     }
/// }
///
/// impl<R: CaptureRegisters> CounterSource for TimerCounter<R> {
///     type Error = TimerError;
///     fn count(&mut self, gate: Gate) -> Result<CountPair, TimerError> {
///         if gate.gating() != Gating::Reciprocal {
///             return Err(TimerError::DirectGateUnsupported);
///         }
///         let (start, end, wraps) = self.regs.gate(gate.fixed_count()).ok_or(TimerError::GateOpen)?;
///         let ticks = capture::elapsed_u16(start, end, wraps).map_err(TimerError::Capture)?;
///         Ok(gate.pair(ticks))
///     }
/// }
///
/// // Stand-in registers: the gate of the `counting` module example, 4096
/// // sensor cycles with captures at 65 000 and, two overflows later, 1 000.
/// struct Latched;
/// impl CaptureRegisters for Latched {
///     fn gate(&mut self, _cycles: u32) -> Option<(u16, u16, u32)> {
///         Some((65_000, 1_000, 2))
///     }
/// }
///
/// let mut counter = TimerCounter { regs: Latched };
/// let gate = Gate::reciprocal(4096).unwrap();
/// assert_eq!(counter.count(gate).unwrap(), CountPair::new(4096, 67_072));
/// let direct = Gate::direct(16_000).unwrap();
/// assert_eq!(counter.count(direct).unwrap_err().kind(), CounterErrorKind::Other);
/// ```
pub trait CounterSource {
    /// The implementer's error type.
    type Error: CounterError;

    /// Count one gate configured as `gate` and return its count pair:
    /// `gate`'s fixed count and the measured one (see
    /// [`Gate::pair`]).
    fn count(&mut self, gate: Gate) -> Result<CountPair, Self::Error>;
}

/// A borrowed source counts like the source itself, so a scanner can be
/// built over `&mut source` and the source used again afterwards.
impl<T: CounterSource + ?Sized> CounterSource for &mut T {
    type Error = T::Error;

    #[inline]
    fn count(&mut self, gate: Gate) -> Result<CountPair, Self::Error> {
        T::count(self, gate)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Counts a fixed measured value: 4096 cycles against 40 960 ticks is
    /// the shift module's rest point at 10 ticks per cycle.
    struct Fixed(u32);

    impl CounterSource for Fixed {
        type Error = Infallible;
        fn count(&mut self, gate: Gate) -> Result<CountPair, Infallible> {
            Ok(gate.pair(self.0))
        }
    }

    struct Dead;

    impl CounterSource for Dead {
        type Error = CounterErrorKind;
        fn count(&mut self, _gate: Gate) -> Result<CountPair, CounterErrorKind> {
            Err(CounterErrorKind::NoSignal)
        }
    }

    fn count_twice<S: CounterSource>(mut s: S, gate: Gate) -> Result<CountPair, S::Error> {
        s.count(gate)?;
        s.count(gate)
    }

    #[test]
    fn borrowed_sources_count_like_owned_ones() {
        let gate = Gate::reciprocal(4096).unwrap();
        let mut fixed = Fixed(40_960);
        assert_eq!(
            count_twice(&mut fixed, gate),
            Ok(CountPair::new(4096, 40_960))
        );
        assert_eq!(fixed.count(gate), Ok(CountPair::new(4096, 40_960)));
        let mut dead = Dead;
        assert_eq!(
            count_twice(&mut dead, gate).map_err(|e| e.kind()),
            Err(CounterErrorKind::NoSignal)
        );
    }

    #[test]
    fn kinds_are_their_own_errors_and_say_what_failed() {
        for kind in [
            CounterErrorKind::Timeout,
            CounterErrorKind::Overrun,
            CounterErrorKind::NoSignal,
            CounterErrorKind::EndOfData,
            CounterErrorKind::Other,
        ] {
            assert_eq!(kind.kind(), kind);
            assert!(!format!("{kind}").is_empty());
        }
    }
}
