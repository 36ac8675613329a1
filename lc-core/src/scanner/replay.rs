//! Host replay of a logged stream of count pairs.

use super::source::{CounterError, CounterErrorKind, CounterSource};
use crate::counting::{CountPair, Gate, Gating};
use core::fmt;

/// Why a replay returned no count pair.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ReplayError {
    /// Every logged pair has been played back.
    EndOfData,
    /// A checked replay's pair does not carry the gate's fixed count: the
    /// log is out of step with the channels. The pair is skipped.
    GateMismatch,
}

impl fmt::Display for ReplayError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            ReplayError::EndOfData => "logged count pairs exhausted",
            ReplayError::GateMismatch => "logged count pair does not match the channel's gate",
        })
    }
}

impl core::error::Error for ReplayError {}

impl CounterError for ReplayError {
    #[inline]
    fn kind(&self) -> CounterErrorKind {
        match self {
            ReplayError::EndOfData => CounterErrorKind::EndOfData,
            ReplayError::GateMismatch => CounterErrorKind::Other,
        }
    }
}

/// Plays back a slice of count pairs, one per
/// [`CounterSource::count`], in order. The slice is **interleaved in scan
/// order**: for a scanner of `N` channels measured round-robin, record
/// k·N + c is channel c's k-th gate, exactly as [`Scanner::scan_next`]
/// would have counted them. A field log filtered to the scanned channels,
/// in time order, has that layout.
///
/// The source returns the logged pair as it is; the gate argument is not
/// applied, since the log holds what the gate produced. [`ReplaySource::checked`]
/// additionally refuses a pair whose fixed count (a reciprocal gate's
/// cycles, a direct gate's ticks) is neither the gate's nor zero: with
/// channels gated differently, that catches a stream that is out of step
/// with the channel list. Zero counts pass, because that is what a dead
/// oscillator or reference logs, and the fault window reports them. Every
/// count consumes one logged pair, refused or not, so a replay always
/// moves on. When the slice is exhausted every further count returns
/// [`ReplayError::EndOfData`] (kind [`CounterErrorKind::EndOfData`]).
///
/// ```
/// use lc_core::counting::{CountPair, Gate};
/// use lc_core::scanner::{CounterError, CounterErrorKind, CounterSource, ReplaySource};
///
/// let log = [CountPair::new(4096, 40_960), CountPair::new(4096, 40_755)];
/// let gate = Gate::reciprocal(4096).unwrap();
/// let mut replay = ReplaySource::new(&log);
/// assert_eq!(replay.count(gate), Ok(log[0]));
/// assert_eq!(replay.count(gate), Ok(log[1]));
/// assert_eq!(replay.count(gate).unwrap_err().kind(), CounterErrorKind::EndOfData);
/// replay.rewind();
/// assert_eq!(replay.remaining(), 2);
/// ```
///
/// [`Scanner::scan_next`]: super::Scanner::scan_next
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ReplaySource<'a> {
    pairs: &'a [CountPair],
    next: usize,
    checked: bool,
}

impl<'a> ReplaySource<'a> {
    /// A replay of `pairs` that returns them as logged, ignoring the gate.
    pub const fn new(pairs: &'a [CountPair]) -> Self {
        Self {
            pairs,
            next: 0,
            checked: false,
        }
    }

    /// A replay of `pairs` that refuses a pair whose fixed count is neither
    /// the gate's nor zero with [`ReplayError::GateMismatch`] (the pair is
    /// skipped).
    pub const fn checked(pairs: &'a [CountPair]) -> Self {
        Self {
            pairs,
            next: 0,
            checked: true,
        }
    }

    /// Pairs played back so far: the index of the next one.
    #[inline]
    pub const fn position(&self) -> usize {
        self.next
    }

    /// Pairs not yet played back.
    #[inline]
    pub const fn remaining(&self) -> usize {
        // next ≤ len always: it only grows after a successful get.
        self.pairs.len().saturating_sub(self.next)
    }

    /// Start again from the first pair.
    #[inline]
    pub fn rewind(&mut self) {
        self.next = 0;
    }
}

impl CounterSource for ReplaySource<'_> {
    type Error = ReplayError;

    fn count(&mut self, gate: Gate) -> Result<CountPair, ReplayError> {
        let pair = *self.pairs.get(self.next).ok_or(ReplayError::EndOfData)?;
        // next < len ≤ isize::MAX after the get, so this never saturates.
        self.next = self.next.saturating_add(1);
        if self.checked {
            let fixed = match gate.gating() {
                Gating::Reciprocal => pair.cycles,
                Gating::Direct => pair.ticks,
            };
            if fixed != 0 && fixed != gate.fixed_count() {
                return Err(ReplayError::GateMismatch);
            }
        }
        Ok(pair)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn plays_in_order_then_reports_end_of_data() {
        let log = [CountPair::new(1, 2), CountPair::new(3, 4)];
        let gate = Gate::direct(99).unwrap();
        let mut r = ReplaySource::new(&log);
        assert_eq!((r.position(), r.remaining()), (0, 2));
        assert_eq!(r.count(gate), Ok(log[0]));
        assert_eq!(r.count(gate), Ok(log[1]));
        for _ in 0..3 {
            assert_eq!(r.count(gate), Err(ReplayError::EndOfData));
        }
        assert_eq!((r.position(), r.remaining()), (2, 0));
        r.rewind();
        assert_eq!(r.count(gate), Ok(log[0]));
        let mut empty = ReplaySource::new(&[]);
        assert_eq!(empty.count(gate), Err(ReplayError::EndOfData));
        assert_eq!(empty.remaining(), 0);
    }

    #[test]
    fn checked_replay_catches_a_stream_out_of_step() {
        // Two channels: a reciprocal gate of 4096 cycles and a direct gate
        // of 16 000 ticks. The log lost channel 0's second pair.
        let recip = Gate::reciprocal(4096).unwrap();
        let direct = Gate::direct(16_000).unwrap();
        let log = [
            CountPair::new(4096, 40_960),
            CountPair::new(1_600, 16_000),
            CountPair::new(1_601, 16_000),
            CountPair::new(0, 40_960), // dead oscillator: zero passes
            CountPair::new(1_600, 0),  // dead reference: zero passes
        ];
        let mut r = ReplaySource::checked(&log);
        assert_eq!(r.count(recip), Ok(log[0]));
        assert_eq!(r.count(direct), Ok(log[1]));
        assert_eq!(r.count(recip), Err(ReplayError::GateMismatch));
        assert_eq!(r.position(), 3, "a refused pair is skipped");
        assert_eq!(r.count(recip), Ok(log[3]));
        assert_eq!(r.count(direct), Ok(log[4]));
        assert_eq!(r.count(direct), Err(ReplayError::EndOfData));
        assert_eq!(ReplayError::GateMismatch.kind(), CounterErrorKind::Other);
        assert_eq!(ReplayError::EndOfData.kind(), CounterErrorKind::EndOfData);
        // The unchecked replay passes the same stream through.
        let mut r = ReplaySource::new(&log);
        assert!((0..5).all(|_| r.count(recip).is_ok()));
    }

    #[test]
    fn errors_say_what_failed() {
        assert_eq!(
            format!("{}", ReplayError::EndOfData),
            "logged count pairs exhausted"
        );
        assert!(!format!("{}", ReplayError::GateMismatch).is_empty());
    }
}
