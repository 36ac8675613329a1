//! The scanner, both multiplexers and both NTC conversions over fixed
//! inputs, folded into a 32-bit FNV-1a digest without `core::fmt`.
//!
//! Like `pipeline.rs` and `readout.rs`, this one file is compiled into the
//! firmware (the panic-freedom proof, `src/bin/panic_proof.rs`, prints
//! [`digest`]) and into the host test `tests/emulator.rs`, which compares
//! the two. It reaches:
//!
//! - `Scanner::new` / `scan_next` / `scan_all` / `scan_channel` /
//!   `next_channel` / `source` / `release`, with a window and without, an
//!   input the selector does not have and a channel index beyond the
//!   table;
//! - `BinaryMux::new` / `select` / `release` and `EnabledMux::new` /
//!   `select` / `disable` / `release`, on pins that fail after a given
//!   number of writes (every `MuxError` path);
//! - `SingleInput`, `ReplaySource::new` / `checked` / `position` /
//!   `remaining` / `rewind`, to the end of the log;
//! - `Divider::new`, `NtcSteinhartHart::new` / `convert` (Beta and
//!   Steinhart–Hart laws over every given ADC code, the cubic term on and
//!   off) and `steinhart_hart_fit`.
//!
//! The pins, the delay and the NTC values stand in for a board's; the
//! counts are the demo scenario's (16 384-cycle reciprocal gates at
//! 48 MHz, rest 16384:139542).

use core::cell::Cell;

use embedded_hal::delay::DelayNs;
use embedded_hal::digital::{ErrorKind, ErrorType, OutputPin, PinState};
use lc_core::counting::{CountPair, FaultWindow, Gate};
use lc_core::scanner::{
    BinaryMux, Channel, ChannelResult, ChannelSelector, CounterError, CounterSource, EnabledMux,
    MuxError, ReplaySource, ScanError, Scanner, SelectError, SingleInput,
};
use lc_core::temperature::{
    steinhart_hart_fit, Beta, CalibrationPoint, Divider, NtcBeta, NtcPosition, NtcSteinhartHart,
};

/// The count log every scanner replays: rest, a target, a stalled
/// oscillator, a pair outside the window, a pair of the wrong gate.
pub const LOG: [CountPair; 10] = [
    CountPair::new(16_384, 139_542),
    CountPair::new(16_384, 138_257),
    CountPair::new(16_384, 132_278),
    CountPair::new(0, 132_278),
    CountPair::new(16_384, 1),
    CountPair::new(16_383, 139_534),
    CountPair::new(16_384, 139_540),
    CountPair::new(16_384, u32::MAX),
    CountPair::new(u32::MAX, 139_542),
    CountPair::new(16_384, 139_542),
];

/// Pin writes each multiplexer may make before its pins fail (0: at once;
/// large: never, within the scans below).
pub const PIN_BUDGETS: [u32; 4] = [0, 3, 7, 1_000];

/// 12-bit ADC codes of the NTC, both ends and faults included.
pub const NTC_CODES: [u32; 10] = [0, 1, 80, 410, 1_200, 2_048, 3_100, 4_000, 4_095, 4_096];

/// FNV-1a over the results.
struct Fnv(u32);

impl Fnv {
    fn bytes(mut self, bytes: &[u8]) -> Self {
        for &b in bytes {
            self.0 = (self.0 ^ u32::from(b)).wrapping_mul(0x0100_0193);
        }
        self
    }
    fn u32(self, v: u32) -> Self {
        self.bytes(&v.to_le_bytes())
    }
    fn i32(self, v: i32) -> Self {
        self.bytes(&v.to_le_bytes())
    }
    fn usize(self, v: usize) -> Self {
        // Digests agree between 32- and 64-bit hosts: the low 32 bits.
        self.u32(v as u32)
    }
    fn channel(self, r: &ChannelResult) -> Self {
        match r {
            Ok(p) => self.bytes(&[0]).u32(p.cycles).u32(p.ticks),
            Err(e) => self.bytes(&[1, *e as u8]),
        }
    }
    fn scan<S: SelectError, C: CounterError>(self, e: &ScanError<S, C>) -> Self {
        match e {
            ScanError::Select(s) => self.bytes(&[2, s.kind() as u8]),
            ScanError::Counter(c) => self.bytes(&[3, c.kind() as u8]),
            ScanError::BadChannel => self.bytes(&[4]),
        }
    }
}

/// A pin error.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct PinFault;

impl embedded_hal::digital::Error for PinFault {
    fn kind(&self) -> ErrorKind {
        ErrorKind::Other
    }
}

/// One select or enable line: sets its bit of a shared level word, and
/// fails once the shared write budget is spent.
pub struct Line<'a> {
    bit: u32,
    levels: &'a Cell<u32>,
    budget: &'a Cell<u32>,
}

impl ErrorType for Line<'_> {
    type Error = PinFault;
}

impl OutputPin for Line<'_> {
    fn set_low(&mut self) -> Result<(), PinFault> {
        self.write(false)
    }
    fn set_high(&mut self) -> Result<(), PinFault> {
        self.write(true)
    }
}

impl Line<'_> {
    fn write(&mut self, high: bool) -> Result<(), PinFault> {
        let left = self.budget.get();
        if left == 0 {
            return Err(PinFault);
        }
        self.budget.set(left - 1);
        let mask = 1u32.wrapping_shl(self.bit);
        let levels = self.levels.get();
        self.levels
            .set(if high { levels | mask } else { levels & !mask });
        Ok(())
    }
}

/// A delay that only adds up what it was asked to wait.
pub struct Waits<'a>(&'a Cell<u64>);

impl DelayNs for Waits<'_> {
    fn delay_ns(&mut self, ns: u32) {
        self.0.set(self.0.get().wrapping_add(u64::from(ns)));
    }
}

/// Runs `scanner` through every call and folds what it returns.
fn exercise<M, D, S, const N: usize>(mut h: Fnv, scanner: &mut Scanner<M, D, S, N>) -> Fnv
where
    M: ChannelSelector,
    D: DelayNs,
    S: CounterSource,
{
    for _ in 0..6 {
        h = match scanner.scan_next() {
            Ok((i, r)) => h.usize(i).channel(&r),
            Err(e) => h.scan(&e),
        };
        h = h.usize(scanner.next_channel());
    }
    let mut seen = Fnv(h.0);
    let all = scanner.scan_all(|i, r| seen = Fnv(seen.0).usize(i).channel(&r));
    h = Fnv(seen.0);
    if let Err(e) = all {
        h = h.scan(&e);
    }
    for index in [0, N.saturating_sub(1), N, usize::MAX] {
        h = match scanner.scan_channel(index) {
            Ok(r) => h.channel(&r),
            Err(e) => h.scan(&e),
        };
    }
    h.u32(scanner.settle_us())
}

/// The scanners, the multiplexers and the NTC conversions over `log`,
/// `budgets` (pin writes before failure, one run per budget) and
/// `ntc_codes`, folded into one digest.
pub fn digest(log: &[CountPair], budgets: &[u32], ntc_codes: &[u32]) -> u32 {
    let mut h = Fnv(0x811C_9DC5);
    let gate = Gate::reciprocal(16_384);
    let window = FaultWindow::new(48_000_000, 1_000_000, 20_000_000, 64);
    let (gate, window) = match (gate, window) {
        (Ok(g), Ok(w)) => (g, w),
        _ => return 0,
    };
    let waited = Cell::new(0u64);
    for &budget in budgets {
        // Two select lines, four inputs; channel 2 has no window.
        let levels = Cell::new(0);
        let left = Cell::new(budget);
        let line = |bit| Line {
            bit,
            levels: &levels,
            budget: &left,
        };
        let mux = BinaryMux::new([line(0), line(1)]);
        let channels = [
            Channel::new(0, gate).with_window(window),
            Channel::new(3, gate).with_window(window),
            Channel::new(2, gate),
        ];
        let mut scanner = Scanner::new(mux, Waits(&waited), ReplaySource::new(log), channels, 20);
        h = exercise(h, &mut scanner);
        h = h
            .usize(scanner.source().position())
            .usize(scanner.source().remaining());
        let (mux, _, mut source) = scanner.release();
        let _lines = mux.release();
        source.rewind();
        h = h.u32(levels.get()).usize(source.remaining());

        // The same lines behind an active-low enable; input 5 does not
        // exist on two lines. A checked replay refuses wrong-gate pairs.
        let mut mux = EnabledMux::new([line(0), line(1)], line(2), PinState::Low);
        h = match mux.disable() {
            Ok(()) => h.bytes(&[5]),
            Err(MuxError::Pin(PinFault)) => h.bytes(&[6]),
            Err(MuxError::NoSuchInput) => h.bytes(&[7]),
        };
        let channels = [
            Channel::new(1, gate).with_window(window),
            Channel::new(5, gate).with_window(window),
        ];
        let mut scanner =
            Scanner::new(mux, Waits(&waited), ReplaySource::checked(log), channels, 0);
        h = exercise(h, &mut scanner);
        let (mux, _, _) = scanner.release();
        let (_lines, _enable) = mux.release();
        h = h.u32(levels.get()).u32(left.get());
    }
    // One coil straight on the counter.
    let mut scanner: Scanner<SingleInput, Waits<'_>, ReplaySource<'_>, 2> = Scanner::new(
        SingleInput,
        Waits(&waited),
        ReplaySource::new(log),
        [Channel::new(0, gate), Channel::new(1, gate)],
        5,
    );
    h = exercise(h, &mut scanner);
    h = h.u32(waited.get() as u32).u32((waited.get() >> 32) as u32);
    ntc(h, ntc_codes).0
}

/// Both NTC conversions of a 10 kΩ, B 3950 K thermistor (low side, 10 kΩ
/// series resistor, 12-bit ADC): the Beta law, the Steinhart–Hart law of
/// the same Beta (no cubic term), and a Steinhart–Hart law fitted through
/// three points (cubic term on).
fn ntc(mut h: Fnv, codes: &[u32]) -> Fnv {
    let Ok(divider) = Divider::new(12, 10_000, NtcPosition::LowSide) else {
        return h.bytes(&[8]);
    };
    let beta = Beta::new(10_000.0, 3_950.0);
    let points = [
        CalibrationPoint::new(-20.0, 97_070.0),
        CalibrationPoint::new(25.0, 10_000.0),
        CalibrationPoint::new(85.0, 1_070.0),
    ];
    let laws = [
        NtcSteinhartHart::new(beta.to_steinhart_hart(), divider),
        steinhart_hart_fit(points).and_then(|c| NtcSteinhartHart::new(c, divider)),
    ];
    let by_beta = NtcBeta::new(10_000, 3_950, divider);
    for &code in codes {
        h = match by_beta.as_ref().map(|n| n.convert(code)) {
            Ok(Ok(t)) => h.i32(t.0),
            Ok(Err(e)) => h.bytes(&[9, e as u8]),
            Err(e) => h.bytes(&[10, *e as u8]),
        };
        for law in &laws {
            h = match law.as_ref().map(|n| n.convert(code)) {
                Ok(Ok(t)) => h.i32(t.0),
                Ok(Err(e)) => h.bytes(&[11, e as u8]),
                Err(e) => h.bytes(&[12, *e as u8]),
            };
        }
    }
    h
}
