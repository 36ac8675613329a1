//! The channel scanner on embedded-hal 1.0 mocks, on a simulated timer
//! board, and replaying the bundled demo field log.
//!
//! The mocks check each pin's and the delay's own sequence; a shared trace
//! records every pin write, delay and count in the order they happened, so
//! the tests also check the order across parts: select lines, then the
//! settle time, then the count.
//!
//! Counts are the demo scenario's (docs/references.md, Demo scenario;
//! `examples/demo_counts.rs`): 48 MHz reference, reciprocal gates of 16 384
//! sensor cycles, rest point 16 384 : 139 542. Settle times in the mock tests
//! are arbitrary: the mocks only check that the configured value reaches
//! `delay_us` unchanged.

use embedded_hal::delay::DelayNs;
use embedded_hal::digital::{ErrorType, OutputPin, PinState};
use embedded_hal_mock::eh1::delay::{CheckedDelay, NoopDelay, Transaction as DelayTx};
use embedded_hal_mock::eh1::digital::{Mock as PinMock, State, Transaction as PinTx};
use embedded_hal_mock::eh1::MockError;
use lc_core::counting::capture::{self, CaptureError};
use lc_core::counting::{CountPair, FaultError, FaultWindow, Gate, Gating};
use lc_core::scanner::{
    BinaryMux, Channel, CounterError, CounterErrorKind, CounterSource, EnabledMux, MuxError,
    ReplayError, ReplaySource, ScanError, Scanner, SelectError, SelectErrorKind, SingleInput,
};
use lc_core::shift::{shift_f64, RestPoint, ShiftConverter};
use proptest::prelude::*;
use std::cell::{Cell, RefCell};
use std::collections::VecDeque;
use std::convert::Infallible;
use std::io::ErrorKind;
use std::path::Path;
use std::rc::Rc;

/// The demo configuration's gate: 16 384 sensor cycles.
const DEMO_GATE_CYCLES: u32 = 16_384;
/// The demo configuration's reference clock.
const DEMO_REFERENCE_HZ: u32 = 48_000_000;
/// The demo unit's rest point, ticks per gate (`examples/demo_counts.rs`
/// prints it; `tests/host_matches_core.rs` uses it).
const DEMO_REST_TICKS: u32 = 139_542;

fn demo_gate() -> Gate {
    Gate::reciprocal(DEMO_GATE_CYCLES).unwrap()
}

/// The bundled demo field log's count pairs, in time order.
fn demo_log() -> Vec<CountPair> {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/data/demo-counts.csv");
    let text = std::fs::read_to_string(&path).expect("bundled demo log");
    let mut lines = text.lines().filter(|l| !l.starts_with('#'));
    let header: Vec<&str> = lines.next().expect("header").split(',').collect();
    let col = |name: &str| header.iter().position(|h| *h == name).expect(name);
    let (cycles, ticks) = (col("cycles"), col("ticks"));
    lines
        .map(|line| {
            let fields: Vec<&str> = line.split(',').collect();
            CountPair::new(
                fields[cycles].parse().unwrap(),
                fields[ticks].parse().unwrap(),
            )
        })
        .collect()
}

// ---------------------------------------------------------------------------
// Trace of everything the scanner does, across parts.

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Event {
    Pin(&'static str, bool),
    DelayUs(u32),
    Count(Gate),
}

type Trace = Rc<RefCell<Vec<Event>>>;

/// A part that writes what it is asked into the shared trace, then passes
/// the call on.
struct Traced<T> {
    inner: T,
    name: &'static str,
    trace: Trace,
}

fn traced<T>(inner: T, name: &'static str, trace: &Trace) -> Traced<T> {
    Traced {
        inner,
        name,
        trace: Rc::clone(trace),
    }
}

impl ErrorType for Traced<PinMock> {
    type Error = MockError;
}

impl OutputPin for Traced<PinMock> {
    fn set_low(&mut self) -> Result<(), MockError> {
        self.trace.borrow_mut().push(Event::Pin(self.name, false));
        self.inner.set_low()
    }
    fn set_high(&mut self) -> Result<(), MockError> {
        self.trace.borrow_mut().push(Event::Pin(self.name, true));
        self.inner.set_high()
    }
}

impl DelayNs for Traced<CheckedDelay> {
    fn delay_ns(&mut self, ns: u32) {
        unreachable!("the scanner waits in microseconds, not {ns} ns");
    }
    fn delay_us(&mut self, us: u32) {
        self.trace.borrow_mut().push(Event::DelayUs(us));
        self.inner.delay_us(us);
    }
}

/// A counter that plays a script of measured counts or error kinds.
struct Scripted {
    script: VecDeque<Result<u32, CounterErrorKind>>,
    trace: Trace,
}

impl CounterSource for Scripted {
    type Error = CounterErrorKind;
    fn count(&mut self, gate: Gate) -> Result<CountPair, CounterErrorKind> {
        self.trace.borrow_mut().push(Event::Count(gate));
        let next = self.script.pop_front().expect("script long enough");
        next.map(|measured| gate.pair(measured))
    }
}

fn set(state: bool) -> PinTx {
    PinTx::set(if state { State::High } else { State::Low })
}

/// Expected trace of measuring mux input `input` on a two-line mux.
fn switch_settle_count(input: u8, settle_us: u32, gate: Gate) -> [Event; 4] {
    [
        Event::Pin("A0", input & 1 == 1),
        Event::Pin("A1", input & 2 == 2),
        Event::DelayUs(settle_us),
        Event::Count(gate),
    ]
}

// ---------------------------------------------------------------------------
// Mocked hardware.

#[test]
fn four_channels_on_two_lines_switch_then_settle_then_count() {
    const SETTLE_US: u32 = 50;
    let trace = Trace::default();
    let gate = demo_gate();
    // The companion coil on input 3 with a shorter gate: each channel's own
    // gate must reach the counter.
    let companion_gate = Gate::reciprocal(4096).unwrap();
    // Five scans: inputs 0, 1, 2, 3 and round again to 0.
    let order = [0u8, 1, 2, 3, 0];
    let a0 = PinMock::new(&order.map(|k| set(k & 1 == 1)));
    let a1 = PinMock::new(&order.map(|k| set(k & 2 == 2)));
    let delay = CheckedDelay::new(&vec![DelayTx::delay_us(SETTLE_US); 5]);
    let log = demo_log();
    let measured = [
        log[0].ticks,
        log[1].ticks,
        log[2].ticks,
        DEMO_REST_TICKS / 4, // a quarter of the rest gate's ticks: 4096 cycles
        log[3].ticks,
    ];
    let counter = Scripted {
        script: measured.iter().map(|&t| Ok(t)).collect(),
        trace: Rc::clone(&trace),
    };
    let mux = BinaryMux::new([traced(a0, "A0", &trace), traced(a1, "A1", &trace)]);
    let channels = [
        Channel::new(0, gate),
        Channel::new(1, gate),
        Channel::new(2, gate),
        Channel::new(3, companion_gate),
    ];
    let mut scanner = Scanner::new(
        mux,
        traced(delay, "delay", &trace),
        counter,
        channels,
        SETTLE_US,
    );

    for (i, &input) in order.iter().enumerate() {
        let g = channels[usize::from(input)].gate();
        let (channel, result) = scanner.scan_next().unwrap();
        assert_eq!(channel, usize::from(input));
        assert_eq!(result, Ok(g.pair(measured[i])));
    }
    let expected: Vec<Event> = order
        .iter()
        .flat_map(|&k| switch_settle_count(k, SETTLE_US, channels[usize::from(k)].gate()))
        .collect();
    assert_eq!(*trace.borrow(), expected);

    let (mux, mut delay_back, _) = scanner.release();
    let [mut a0, mut a1] = mux.release();
    a0.inner.done();
    a1.inner.done();
    delay_back.inner.done();
}

#[test]
fn enabled_mux_breaks_before_make_then_settles() {
    const SETTLE_US: u32 = 1;
    let trace = Trace::default();
    let gate = demo_gate();
    // Active-low enable: high while the lines change.
    let en = PinMock::new(&[set(true), set(false), set(true), set(false)]);
    let a0 = PinMock::new(&[set(true), set(false)]);
    let a1 = PinMock::new(&[set(true), set(true)]);
    let delay = CheckedDelay::new(&vec![DelayTx::delay_us(SETTLE_US); 2]);
    let counter = Scripted {
        script: [Ok(DEMO_REST_TICKS), Ok(DEMO_REST_TICKS)].into(),
        trace: Rc::clone(&trace),
    };
    let mux = EnabledMux::new(
        [traced(a0, "A0", &trace), traced(a1, "A1", &trace)],
        traced(en, "EN", &trace),
        PinState::Low,
    );
    let channels = [Channel::new(3, gate), Channel::new(2, gate)];
    let mut scanner = Scanner::new(
        mux,
        traced(delay, "delay", &trace),
        counter,
        channels,
        SETTLE_US,
    );
    let mut seen = Vec::new();
    scanner.scan_all(|c, r| seen.push((c, r))).unwrap();
    let rest = CountPair::new(DEMO_GATE_CYCLES, DEMO_REST_TICKS);
    assert_eq!(seen, [(0, Ok(rest)), (1, Ok(rest))]);
    let mut expected = Vec::new();
    for input in [3u8, 2] {
        expected.push(Event::Pin("EN", true));
        expected.push(Event::Pin("A0", input & 1 == 1));
        expected.push(Event::Pin("A1", input & 2 == 2));
        expected.push(Event::Pin("EN", false));
        expected.push(Event::DelayUs(SETTLE_US));
        expected.push(Event::Count(gate));
    }
    assert_eq!(*trace.borrow(), expected);
    let (mux, mut delay, _) = scanner.release();
    let ([mut a0, mut a1], mut en) = mux.release();
    for pin in [&mut a0, &mut a1, &mut en] {
        pin.inner.done();
    }
    delay.inner.done();
}

#[test]
fn pin_error_propagates_and_nothing_is_counted() {
    const SETTLE_US: u32 = 50;
    let trace = Trace::default();
    let gate = demo_gate();
    let broken = MockError::Io(ErrorKind::NotConnected);
    // Channel 0 (input 0) works; on channel 1 (input 1) line A1 fails;
    // channel 2 (input 2) works again.
    let a0 = PinMock::new(&[set(false), set(true), set(false)]);
    let a1 = PinMock::new(&[set(false), set(false).with_error(broken.clone()), set(true)]);
    let delay = CheckedDelay::new(&vec![DelayTx::delay_us(SETTLE_US); 2]);
    let counter = Scripted {
        script: [Ok(DEMO_REST_TICKS), Ok(DEMO_REST_TICKS)].into(),
        trace: Rc::clone(&trace),
    };
    let mux = BinaryMux::new([traced(a0, "A0", &trace), traced(a1, "A1", &trace)]);
    let channels = [0, 1, 2, 3].map(|k| Channel::new(k, gate));
    let mut scanner = Scanner::new(
        mux,
        traced(delay, "delay", &trace),
        counter,
        channels,
        SETTLE_US,
    );
    assert!(scanner.scan_next().is_ok());
    assert_eq!(scanner.next_channel(), 1);
    let err = scanner.scan_next().unwrap_err();
    assert_eq!(err, ScanError::Select(MuxError::Pin(broken)));
    match &err {
        ScanError::Select(e) => assert_eq!(e.kind(), SelectErrorKind::Pin),
        other => panic!("expected a select error, got {other:?}"),
    }
    assert_eq!(err.counter_kind(), None);
    assert_eq!(
        err.to_string(),
        "channel selection failed: multiplexer line could not be driven: I/O error: NotConnected"
    );
    // The failed select was neither settled nor counted; the turn moved on.
    let mut expected: Vec<Event> = switch_settle_count(0, SETTLE_US, gate).into();
    expected.extend([Event::Pin("A0", true), Event::Pin("A1", false)]);
    assert_eq!(*trace.borrow(), expected);
    assert_eq!(scanner.next_channel(), 2);
    assert_eq!(scanner.scan_next().map(|(c, _)| c), Ok(2));
    let (mux, mut delay, _) = scanner.release();
    let [mut a0, mut a1] = mux.release();
    a0.inner.done();
    a1.inner.done();
    delay.inner.done();
}

#[test]
fn counter_error_propagates_with_its_kind() {
    const SETTLE_US: u32 = 50;
    let trace = Trace::default();
    let gate = demo_gate();
    let a0 = PinMock::new(&[set(false), set(true)]);
    let a1 = PinMock::new(&[set(false), set(false)]);
    let delay = CheckedDelay::new(&vec![DelayTx::delay_us(SETTLE_US); 2]);
    let counter = Scripted {
        script: [
            Err(CounterErrorKind::Timeout),
            Err(CounterErrorKind::NoSignal),
        ]
        .into(),
        trace: Rc::clone(&trace),
    };
    let mux = BinaryMux::new([traced(a0, "A0", &trace), traced(a1, "A1", &trace)]);
    let channels = [Channel::new(0, gate), Channel::new(1, gate)];
    let mut scanner = Scanner::new(
        mux,
        traced(delay, "delay", &trace),
        counter,
        channels,
        SETTLE_US,
    );
    let err = scanner.scan_next().unwrap_err();
    assert_eq!(err, ScanError::Counter(CounterErrorKind::Timeout));
    assert_eq!(err.counter_kind(), Some(CounterErrorKind::Timeout));
    assert_eq!(
        err.to_string(),
        "counting failed: gate did not close in time"
    );
    let err = scanner.scan_next().unwrap_err();
    assert_eq!(err.counter_kind(), Some(CounterErrorKind::NoSignal));
    let expected: Vec<Event> = [0, 1]
        .into_iter()
        .flat_map(|k| switch_settle_count(k, SETTLE_US, gate))
        .collect();
    assert_eq!(*trace.borrow(), expected);
    let (mux, mut delay, _) = scanner.release();
    let [mut a0, mut a1] = mux.release();
    a0.inner.done();
    a1.inner.done();
    delay.inner.done();
}

#[test]
fn bad_channel_touches_no_pin() {
    let trace = Trace::default();
    let gate = demo_gate();
    // No expectations: any pin write or delay fails the mock.
    let a0 = PinMock::new(&[]);
    let a1 = PinMock::new(&[]);
    let delay = CheckedDelay::new(&[]);
    let counter = Scripted {
        script: VecDeque::new(),
        trace: Rc::clone(&trace),
    };
    let mux = BinaryMux::new([traced(a0, "A0", &trace), traced(a1, "A1", &trace)]);
    // Input 4 does not exist on a two-line multiplexer.
    let channels = [Channel::new(4, gate)];
    let mut scanner = Scanner::new(mux, traced(delay, "delay", &trace), counter, channels, 50);
    assert_eq!(scanner.scan_next(), Err(ScanError::BadChannel));
    assert_eq!(scanner.scan_channel(0), Err(ScanError::BadChannel));
    assert_eq!(scanner.scan_channel(1), Err(ScanError::BadChannel));
    assert_eq!(scanner.scan_all(|_, _| ()), Err(ScanError::BadChannel));
    assert!(trace.borrow().is_empty());
    let (mux, mut delay, _) = scanner.release();
    let [mut a0, mut a1] = mux.release();
    a0.inner.done();
    a1.inner.done();
    delay.inner.done();
}

// ---------------------------------------------------------------------------
// Firmware-style counter source on a simulated board.

/// Select lines that write their level into the board's shared input
/// register, as the multiplexer would see them.
struct BoardLine {
    bit: u8,
    selected: Rc<Cell<u8>>,
}

impl ErrorType for BoardLine {
    type Error = Infallible;
}

impl OutputPin for BoardLine {
    fn set_low(&mut self) -> Result<(), Infallible> {
        self.selected.set(self.selected.get() & !(1 << self.bit));
        Ok(())
    }
    fn set_high(&mut self) -> Result<(), Infallible> {
        self.selected.set(self.selected.get() | 1 << self.bit);
        Ok(())
    }
}

/// The capture registers of a 16-bit reference timer: latched at the first
/// and the last sensor edge of a gate, with the overflows in between.
trait CaptureRegisters {
    /// Run one gate of `sensor_cycles`; `None` when the gate did not close
    /// in time.
    fn gate(&mut self, sensor_cycles: u32) -> Option<(u16, u16, u32)>;
}

/// Firmware-style counter source: reciprocal gates on a 16-bit timer.
struct TimerCounter<R> {
    regs: R,
}

#[derive(Debug, PartialEq)]
enum TimerError {
    GateOpen,
    DirectGate,
    Capture(CaptureError),
}

impl CounterError for TimerError {
    fn kind(&self) -> CounterErrorKind {
        match self {
            TimerError::GateOpen => CounterErrorKind::Timeout,
            TimerError::Capture(CaptureError::Overflow) => CounterErrorKind::Overrun,
            _ => CounterErrorKind::Other,
        }
    }
}

impl<R: CaptureRegisters> CounterSource for TimerCounter<R> {
    type Error = TimerError;
    fn count(&mut self, gate: Gate) -> Result<CountPair, TimerError> {
        if gate.gating() != Gating::Reciprocal {
            return Err(TimerError::DirectGate);
        }
        let (start, end, wraps) = self
            .regs
            .gate(gate.fixed_count())
            .ok_or(TimerError::GateOpen)?;
        let ticks = capture::elapsed_u16(start, end, wraps).map_err(TimerError::Capture)?;
        Ok(gate.pair(ticks))
    }
}

/// The simulated board: a free-running 16-bit reference timer and, per
/// multiplexer input, the ticks one demo gate takes there (`None`: the
/// oscillator on that input is dead and the gate never closes).
struct Board {
    selected: Rc<Cell<u8>>,
    ticks_per_gate: [Option<u32>; 4],
    timer: u64,
}

impl CaptureRegisters for Board {
    fn gate(&mut self, sensor_cycles: u32) -> Option<(u16, u16, u32)> {
        assert_eq!(sensor_cycles, DEMO_GATE_CYCLES);
        let ticks = self.ticks_per_gate[usize::from(self.selected.get())]?;
        let start = self.timer;
        self.timer += u64::from(ticks);
        let wraps = (self.timer >> 16) - (start >> 16);
        let low = |t: u64| u16::try_from(t & 0xFFFF).unwrap();
        Some((low(start), low(self.timer), u32::try_from(wraps).unwrap()))
    }
}

#[test]
fn firmware_timer_counter_scans_a_simulated_board() {
    let log = demo_log();
    let selected = Rc::new(Cell::new(0));
    let lines = [0, 1].map(|bit| BoardLine {
        bit,
        selected: Rc::clone(&selected),
    });
    // Inputs 0 and 1: sensor coils at two rows of the demo log; input 2:
    // the companion coil at the rest point; input 3: a dead oscillator.
    let board = Board {
        selected: Rc::clone(&selected),
        ticks_per_gate: [
            Some(log[0].ticks),
            Some(log[100].ticks),
            Some(DEMO_REST_TICKS),
            None,
        ],
        // Start just below a wrap so the first gate crosses it.
        timer: 0xFFF0,
    };
    let gate = demo_gate();
    let window = FaultWindow::new(DEMO_REFERENCE_HZ, 0, u32::MAX, 1).unwrap();
    let channels = [0, 1, 2, 3].map(|k| Channel::new(k, gate).with_window(window));
    let mut scanner = Scanner::new(
        BinaryMux::new(lines),
        NoopDelay::new(),
        TimerCounter { regs: board },
        channels,
        50,
    );
    let mut seen = Vec::new();
    let err = scanner.scan_all(|c, r| seen.push((c, r))).unwrap_err();
    assert_eq!(
        seen,
        [
            (0, Ok(log[0])),
            (1, Ok(log[100])),
            (2, Ok(CountPair::new(DEMO_GATE_CYCLES, DEMO_REST_TICKS))),
        ]
    );
    assert_eq!(err, ScanError::Counter(TimerError::GateOpen));
    assert_eq!(err.counter_kind(), Some(CounterErrorKind::Timeout));
    // A direct gate is not what this timer does: a typed error, no panic.
    let mut direct = Scanner::new(
        SingleInput,
        NoopDelay::new(),
        scanner.release().2,
        [Channel::new(
            0,
            Gate::direct(DEMO_REFERENCE_HZ / 100).unwrap(),
        )],
        0,
    );
    let err = direct.scan_next().unwrap_err();
    assert_eq!(err.counter_kind(), Some(CounterErrorKind::Other));
}

// ---------------------------------------------------------------------------
// Replay of the logged demo stream through the scanner and the shift path.

/// The shift bound of docs/numerics.md: |s_fixed − s| ≤ (1 + s)·1.04·2^-30
/// + 2^-41, and at most a tenth of the quantisation step 2·(1 + s)/n.
fn assert_shift_within_bound(conv: &ShiftConverter, pair: CountPair, rest_ratio: f64) {
    let fixed = conv.shift(pair).expect("demo shifts are in range").to_f64();
    let exact = shift_f64(pair, rest_ratio);
    let err = (fixed - exact).abs();
    let bound = (1.0 + exact) * 1.04 * 2f64.powi(-30) + 2f64.powi(-41);
    assert!(err <= bound, "{pair:?}: err {err:e} bound {bound:e}");
    let step = 2.0 * (1.0 + exact) / f64::from(pair.ticks);
    assert!(err <= 0.1 * step, "{pair:?}: err {err:e} step {step:e}");
}

#[test]
fn demo_log_replays_through_the_scanner_and_shift_converter() {
    let log = demo_log();
    assert_eq!(log.len(), 201);
    let gate = demo_gate();
    // Any frequency, at least one cycle (lc-host's default window): only
    // the demo log's two dead gates are faults.
    let window = FaultWindow::new(DEMO_REFERENCE_HZ, 0, u32::MAX, 1).unwrap();
    let rest_pair = CountPair::new(DEMO_GATE_CYCLES, DEMO_REST_TICKS);
    let rest = RestPoint::from_counts(rest_pair).unwrap();
    let conv = ShiftConverter::for_gate(rest, gate).unwrap();
    let rest_ratio = rest.to_f64();
    let mut scanner = Scanner::new(
        SingleInput,
        NoopDelay::new(),
        ReplaySource::checked(&log),
        [Channel::new(0, gate).with_window(window)],
        0,
    );
    let (mut ok, mut faults) = (0, Vec::new());
    let end = loop {
        match scanner.scan_next() {
            Ok((0, Ok(pair))) => {
                assert_shift_within_bound(&conv, pair, rest_ratio);
                ok += 1;
            }
            Ok((0, Err(fault))) => faults.push((scanner.source().position() - 1, fault)),
            Ok(other) => panic!("one channel only, got {other:?}"),
            Err(e) => break e,
        }
    };
    assert_eq!(end, ScanError::Counter(ReplayError::EndOfData));
    assert_eq!(ok, 199);
    // Row 57: the oscillator stalled; row 143: the reference counter stuck.
    assert_eq!(
        faults,
        [
            (57, FaultError::NoOscillation),
            (143, FaultError::NoReference)
        ]
    );
}

#[test]
fn interleaved_sensor_and_companion_replay() {
    let log = demo_log();
    let gate = demo_gate();
    let rest_pair = CountPair::new(DEMO_GATE_CYCLES, DEMO_REST_TICKS);
    // Sensor coil on input 0, companion coil on input 1: built like the
    // sensor and away from the target, it counts the rest point each gate.
    let stream: Vec<CountPair> = log
        .iter()
        .filter(|p| p.cycles != 0 && p.ticks != 0)
        .flat_map(|&p| [p, rest_pair])
        .collect();
    let rest = RestPoint::from_counts(rest_pair).unwrap();
    let conv = ShiftConverter::for_gate(rest, gate).unwrap();
    let mut scanner = Scanner::new(
        BinaryMux::new([0].map(|bit| BoardLine {
            bit,
            selected: Rc::new(Cell::new(0)),
        })),
        NoopDelay::new(),
        ReplaySource::checked(&stream),
        [Channel::new(0, gate), Channel::new(1, gate)],
        0,
    );
    let mut per_channel = [0usize; 2];
    loop {
        let mut round = Vec::new();
        match scanner.scan_all(|c, r| round.push((c, r.unwrap()))) {
            Ok(()) => {}
            Err(e) => {
                assert_eq!(e.counter_kind(), Some(CounterErrorKind::EndOfData));
                assert!(round.is_empty(), "the stream holds whole rounds");
                break;
            }
        }
        let [(0, sensor), (1, companion)] = round[..] else {
            panic!("round out of order: {round:?}");
        };
        assert_shift_within_bound(&conv, sensor, rest.to_f64());
        // The companion reads the rest point: shift 0 within the bound.
        assert_eq!(companion, rest_pair);
        assert_shift_within_bound(&conv, companion, rest.to_f64());
        per_channel[0] += 1;
        per_channel[1] += 1;
    }
    assert_eq!(per_channel, [199, 199]);
}

// ---------------------------------------------------------------------------
// Any replayed stream: no panic, channels in turn.

/// A counter around a replay that also notes the multiplexer input routed
/// when each gate was counted.
struct Probe<'a> {
    replay: ReplaySource<'a>,
    selected: Rc<Cell<u8>>,
    counted_on: Vec<u8>,
}

impl CounterSource for Probe<'_> {
    type Error = ReplayError;
    fn count(&mut self, gate: Gate) -> Result<CountPair, ReplayError> {
        self.counted_on.push(self.selected.get());
        self.replay.count(gate)
    }
}

fn any_window() -> impl Strategy<Value = Option<FaultWindow>> {
    proptest::option::of(
        (1u32.., any::<u32>(), any::<u32>(), any::<u32>())
            .prop_map(|(f, a, b, m)| FaultWindow::new(f, a.min(b), a.max(b), m).unwrap()),
    )
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2_000))]

    /// Any logged stream, any channel inputs (some beyond the two-line
    /// multiplexer), any windows and settle time: the scanner never
    /// panics, visits the channels in turn, counts each on its own input,
    /// plays the stream in order and then reports the end of the data.
    #[test]
    fn replayed_streams_never_panic_and_visit_round_robin(
        stream in proptest::collection::vec((any::<u32>(), any::<u32>()), 0..48),
        inputs in [0u8..6, 0u8..6, 0u8..6],
        windows in [any_window(), any_window(), any_window()],
        settle_us: u32,
    ) {
        let stream: Vec<CountPair> = stream.iter().map(|&(c, t)| CountPair::new(c, t)).collect();
        let gate = demo_gate();
        let selected = Rc::new(Cell::new(0));
        let lines = [0, 1].map(|bit| BoardLine { bit, selected: Rc::clone(&selected) });
        let channels: [Channel; 3] = std::array::from_fn(|i| match windows[i] {
            Some(w) => Channel::new(inputs[i], gate).with_window(w),
            None => Channel::new(inputs[i], gate),
        });
        let probe = Probe { replay: ReplaySource::new(&stream), selected, counted_on: Vec::new() };
        let mut scanner = Scanner::new(BinaryMux::new(lines), NoopDelay::new(), probe, channels, settle_us);

        let any_good = inputs.iter().any(|&k| k < 4);
        let mut played = 0;
        let mut ended = 0;
        for call in 0..(3 * stream.len() + 9) {
            let expect = call % 3;
            prop_assert_eq!(scanner.next_channel(), expect);
            let input_ok = inputs[expect] < 4;
            match scanner.scan_next() {
                Ok((channel, result)) => {
                    prop_assert_eq!(channel, expect);
                    prop_assert!(input_ok);
                    let pair = stream[played];
                    played += 1;
                    let want = match windows[channel] {
                        Some(w) => w.check(pair),
                        None => Ok(pair),
                    };
                    prop_assert_eq!(result, want);
                }
                Err(ScanError::BadChannel) => prop_assert!(!input_ok),
                Err(e) => {
                    prop_assert!(input_ok);
                    prop_assert_eq!(played, stream.len());
                    prop_assert_eq!(e.counter_kind(), Some(CounterErrorKind::EndOfData));
                    ended += 1;
                }
            }
        }
        if any_good {
            prop_assert_eq!(played, stream.len());
            prop_assert!(ended >= 1);
        } else {
            prop_assert_eq!(played, 0);
        }
        // Every count happened with the channel's own input routed.
        let probe = scanner.release().2;
        let good: Vec<u8> = inputs.iter().copied().filter(|&k| k < 4).collect();
        for (i, &on) in probe.counted_on.iter().enumerate() {
            prop_assert_eq!(on, good[i % good.len()]);
        }
    }
}
