//! The scanner: select a channel, let it settle, count it, check it.

use super::select::ChannelSelector;
use super::source::{CounterError, CounterErrorKind, CounterSource};
use crate::counting::{CountPair, FaultError, FaultWindow, Gate};
use core::fmt;
use embedded_hal::delay::DelayNs;

/// One channel of a scanner: which selector input it sits on, how it is
/// gated, and which count pairs are plausible for it.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Channel {
    input: u8,
    gate: Gate,
    window: Option<FaultWindow>,
}

impl Channel {
    /// A channel on selector input `input`, counted with `gate`, with no
    /// fault window (every count pair is passed on).
    pub const fn new(input: u8, gate: Gate) -> Self {
        Self {
            input,
            gate,
            window: None,
        }
    }

    /// The same channel, its count pairs checked against `window`.
    pub const fn with_window(self, window: FaultWindow) -> Self {
        Self {
            window: Some(window),
            ..self
        }
    }

    /// The selector input.
    #[inline]
    pub const fn input(&self) -> u8 {
        self.input
    }

    /// The gate.
    #[inline]
    pub const fn gate(&self) -> Gate {
        self.gate
    }

    /// The fault window, if any.
    #[inline]
    pub const fn window(&self) -> Option<FaultWindow> {
        self.window
    }
}

/// Why a channel was not measured.
///
/// `S` is the selector's error, `C` the counter source's. A count pair that
/// was measured but fails the channel's fault window is not a `ScanError`:
/// it comes back as the channel's `Err(FaultError)`, because the scan
/// itself worked. With the `defmt` feature this derives `defmt::Format`
/// when `S` and `C` implement it.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ScanError<S, C> {
    /// The selector failed (for a [`BinaryMux`](super::BinaryMux): a
    /// select line could not be driven). Nothing was counted.
    Select(S),
    /// The counter source failed; its [`CounterError::kind`] says how.
    Counter(C),
    /// No such channel: an index past the channel list, or a channel whose
    /// input the selector does not have. Nothing was switched.
    BadChannel,
}

impl<S, C: CounterError> ScanError<S, C> {
    /// The counter's error kind, when the counter failed.
    pub fn counter_kind(&self) -> Option<CounterErrorKind> {
        match self {
            ScanError::Counter(e) => Some(e.kind()),
            _ => None,
        }
    }
}

impl<S: fmt::Display, C: fmt::Display> fmt::Display for ScanError<S, C> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ScanError::Select(e) => write!(f, "channel selection failed: {e}"),
            ScanError::Counter(e) => write!(f, "counting failed: {e}"),
            ScanError::BadChannel => f.write_str("no such channel or selector input"),
        }
    }
}

impl<S, C> core::error::Error for ScanError<S, C>
where
    S: core::error::Error + 'static,
    C: core::error::Error + 'static,
{
    fn source(&self) -> Option<&(dyn core::error::Error + 'static)> {
        match self {
            ScanError::Select(e) => Some(e),
            ScanError::Counter(e) => Some(e),
            ScanError::BadChannel => None,
        }
    }
}

/// The result of measuring one channel: its count pair if plausible.
pub type ChannelResult = Result<CountPair, FaultError>;

/// Sequences `N` channels through one selector and one counter source.
///
/// Measuring a channel is always the same four steps: select its input,
/// wait the settle time (`delay_us`, skipped when it is 0), count one gate
/// with the channel's [`Gate`], and check the pair against the channel's
/// [`FaultWindow`]. The scanner owns its parts and gives them back with
/// [`Scanner::release`].
///
/// [`Scanner::scan_next`] measures the channels round-robin, 0, 1, …,
/// `N − 1`, 0, …; the turn passes to the next channel whether or not the
/// measurement succeeded, so a dead channel never stalls the others.
/// `N` is at least 1 (checked at compile time).
///
/// No method panics: channel indices and inputs are checked and reported
/// as [`ScanError::BadChannel`].
#[derive(Debug)]
pub struct Scanner<M, D, S, const N: usize> {
    selector: M,
    delay: D,
    source: S,
    channels: [Channel; N],
    settle_us: u32,
    next: usize,
}

impl<M, D, S, const N: usize> Scanner<M, D, S, N>
where
    M: ChannelSelector,
    D: DelayNs,
    S: CounterSource,
{
    /// A scanner over `channels`, waiting `settle_us` microseconds after
    /// each select. The first [`Scanner::scan_next`] measures channel 0.
    ///
    /// Choose the settle time as the multiplexer's switching time plus the
    /// oscillator's start-up: its amplitude envelope grows with the time
    /// constant 2Q/ω0 = Q/(π·f0), and a gate should open only after several
    /// of them.
    pub fn new(selector: M, delay: D, source: S, channels: [Channel; N], settle_us: u32) -> Self {
        const { assert!(N >= 1, "a Scanner needs at least one channel") };
        Self {
            selector,
            delay,
            source,
            channels,
            settle_us,
            next: 0,
        }
    }

    /// Measure the next channel in turn: its index and its result.
    pub fn scan_next(&mut self) -> Result<(usize, ChannelResult), ScanError<M::Error, S::Error>> {
        let index = self.next;
        // index < N ≤ isize::MAX, so this never saturates; saturating keeps
        // a panic branch out of builds with overflow checks.
        let following = index.saturating_add(1);
        self.next = if following < N { following } else { 0 };
        self.measure(index).map(|result| (index, result))
    }

    /// Measure channel `index` out of turn (a companion channel more often
    /// than the others, say). The round-robin turn does not change.
    pub fn scan_channel(
        &mut self,
        index: usize,
    ) -> Result<ChannelResult, ScanError<M::Error, S::Error>> {
        self.measure(index)
    }

    /// Measure every channel once, in list order from channel 0, and hand
    /// each index and result to `each`. Stops at the first `ScanError`,
    /// after `each` has seen the channels before it. Afterwards the turn is
    /// at the channel after the last one measured (channel 0 after a
    /// complete round).
    pub fn scan_all<F>(&mut self, mut each: F) -> Result<(), ScanError<M::Error, S::Error>>
    where
        F: FnMut(usize, ChannelResult),
    {
        self.next = 0;
        for _ in 0..N {
            let (index, result) = self.scan_next()?;
            each(index, result);
        }
        Ok(())
    }

    fn measure(&mut self, index: usize) -> Result<ChannelResult, ScanError<M::Error, S::Error>> {
        let channel = *self.channels.get(index).ok_or(ScanError::BadChannel)?;
        if usize::from(channel.input) >= self.selector.input_count() {
            return Err(ScanError::BadChannel);
        }
        self.selector
            .select(channel.input)
            .map_err(ScanError::Select)?;
        if self.settle_us > 0 {
            self.delay.delay_us(self.settle_us);
        }
        let pair = self
            .source
            .count(channel.gate)
            .map_err(ScanError::Counter)?;
        Ok(match channel.window {
            Some(window) => window.check(pair),
            None => Ok(pair),
        })
    }

    /// The index [`Scanner::scan_next`] measures next.
    #[inline]
    pub const fn next_channel(&self) -> usize {
        self.next
    }

    /// The channels.
    #[inline]
    pub const fn channels(&self) -> &[Channel; N] {
        &self.channels
    }

    /// The settle time after each select, in microseconds.
    #[inline]
    pub const fn settle_us(&self) -> u32 {
        self.settle_us
    }

    /// The counter source (a replay's position, say).
    #[inline]
    pub const fn source(&self) -> &S {
        &self.source
    }

    /// The selector, the delay and the counter source, for reuse.
    pub fn release(self) -> (M, D, S) {
        (self.selector, self.delay, self.source)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scanner::{ReplayError, ReplaySource, SelectErrorKind, SingleInput};
    use std::vec::Vec;

    /// Records the settle waits.
    #[derive(Default)]
    struct Waits(Vec<u32>);

    impl DelayNs for Waits {
        fn delay_ns(&mut self, ns: u32) {
            self.0.push(ns);
        }
        fn delay_us(&mut self, us: u32) {
            self.0.push(us);
        }
    }

    /// A selector with `n` inputs that records what it was asked.
    struct Recorder {
        n: usize,
        selected: Vec<u8>,
    }

    impl ChannelSelector for Recorder {
        type Error = SelectErrorKind;
        fn input_count(&self) -> usize {
            self.n
        }
        fn select(&mut self, input: u8) -> Result<(), SelectErrorKind> {
            self.selected.push(input);
            Ok(())
        }
    }

    fn gate() -> Gate {
        Gate::reciprocal(4096).unwrap()
    }

    /// Pairs of the shift module's example: rest at 10 ticks per cycle.
    const LOG: [CountPair; 5] = [
        CountPair::new(4096, 40_960),
        CountPair::new(4096, 40_755),
        CountPair::new(0, 40_960),
        CountPair::new(4096, 40_960),
        CountPair::new(4096, 40_755),
    ];

    #[test]
    fn round_robin_with_settle_and_window() {
        let window = FaultWindow::new(16_000_000, 100_000, 5_000_000, 64).unwrap();
        let channels = [
            Channel::new(2, gate()).with_window(window),
            Channel::new(0, gate()),
        ];
        let selector = Recorder {
            n: 4,
            selected: Vec::new(),
        };
        let mut s = Scanner::new(
            selector,
            Waits::default(),
            ReplaySource::new(&LOG),
            channels,
            20,
        );
        assert_eq!(s.channels()[0].window(), Some(window));
        assert_eq!(s.scan_next(), Ok((0, Ok(LOG[0]))));
        assert_eq!(s.next_channel(), 1);
        assert_eq!(s.scan_next(), Ok((1, Ok(LOG[1]))));
        assert_eq!(s.scan_next(), Ok((0, Err(FaultError::NoOscillation))));
        assert_eq!(s.scan_channel(1), Ok(Ok(LOG[3])));
        assert_eq!(s.next_channel(), 1, "out-of-turn scans keep the turn");
        assert_eq!(s.scan_next(), Ok((1, Ok(LOG[4]))));
        let e = s.scan_next().unwrap_err();
        assert_eq!(e, ScanError::Counter(ReplayError::EndOfData));
        assert_eq!(e.counter_kind(), Some(CounterErrorKind::EndOfData));
        assert_eq!(s.next_channel(), 1, "a failed scan passes the turn on");
        assert_eq!(s.settle_us(), 20);
        assert_eq!(s.source().remaining(), 0);
        let (sel, waits, _) = s.release();
        assert_eq!(sel.selected, [2, 0, 2, 0, 0, 2]);
        assert_eq!(waits.0, [20; 6]);
    }

    #[test]
    fn bad_channels_touch_nothing() {
        let selector = Recorder {
            n: 2,
            selected: Vec::new(),
        };
        let channels = [Channel::new(0, gate()), Channel::new(2, gate())];
        let mut s = Scanner::new(
            selector,
            Waits::default(),
            ReplaySource::new(&LOG),
            channels,
            0,
        );
        assert_eq!(s.scan_channel(2), Err(ScanError::BadChannel));
        assert_eq!(s.scan_channel(usize::MAX), Err(ScanError::BadChannel));
        assert_eq!(s.scan_next(), Ok((0, Ok(LOG[0]))));
        assert_eq!(s.scan_next(), Err(ScanError::BadChannel));
        assert_eq!(
            ScanError::<(), ReplayError>::BadChannel.counter_kind(),
            None
        );
        let (sel, waits, replay) = s.release();
        assert_eq!(sel.selected, [0]);
        assert!(waits.0.is_empty(), "settle time 0: no delay call");
        assert_eq!(replay.position(), 1);
    }

    #[test]
    fn scan_all_restarts_at_channel_zero_and_stops_at_an_error() {
        let channels = [Channel::new(0, gate()); 3];
        let mut s = Scanner::new(
            SingleInput,
            Waits::default(),
            ReplaySource::new(&LOG),
            channels,
            5,
        );
        assert_eq!(s.scan_next(), Ok((0, Ok(LOG[0]))));
        let mut seen = Vec::new();
        s.scan_all(|i, r| seen.push((i, r))).unwrap();
        assert_eq!(seen, [(0, Ok(LOG[1])), (1, Ok(LOG[2])), (2, Ok(LOG[3]))]);
        assert_eq!(s.next_channel(), 0);
        seen.clear();
        let e = s.scan_all(|i, r| seen.push((i, r)));
        assert_eq!(e, Err(ScanError::Counter(ReplayError::EndOfData)));
        assert_eq!(seen, [(0, Ok(LOG[4]))]);
        assert_eq!(s.next_channel(), 2);
    }

    #[test]
    fn errors_display_their_cause() {
        let e: ScanError<SelectErrorKind, CounterErrorKind> =
            ScanError::Counter(CounterErrorKind::Timeout);
        assert_eq!(
            format!("{e}"),
            "counting failed: gate did not close in time"
        );
        let e: ScanError<SelectErrorKind, CounterErrorKind> =
            ScanError::Select(SelectErrorKind::Pin);
        assert_eq!(
            format!("{e}"),
            "channel selection failed: multiplexer line could not be driven"
        );
        use core::error::Error;
        assert!(e.source().is_some());
        let e: ScanError<SelectErrorKind, CounterErrorKind> = ScanError::BadChannel;
        assert!(e.source().is_none());
        assert_eq!(format!("{e}"), "no such channel or selector input");
    }
}
