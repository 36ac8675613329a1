//! The firmware path of `lc-core` over a fixed table of inputs, one text
//! line of raw integer results per input.
//!
//! This one file is compiled twice: into the firmware (`src/bin/pipeline.rs`
//! prints [`run`] over semihosting on an emulated Cortex-M0 and Cortex-M4F)
//! and into the host test `tests/emulator.rs` (through `#[path]`), which
//! asserts that both outputs are equal byte for byte. It uses `core` and
//! `lc-core` only, and no float: every printed figure is an exact integer or
//! the `Debug` name of an error variant.
//!
//! Scenario (invented, see the design notes): the demo unit is a 20 mm PCB
//! spiral with a 100 pF tank capacitor, at rest about 3.4 MHz. Unit `A` gates
//! 4096 sensor cycles (reciprocal) against a 16 MHz reference, unit `B`
//! counts sensor cycles in 48 000 ticks (1 ms) of a 48 MHz reference
//! (direct). Units `C` to `G` are broken configurations. Rows cover the rest
//! point, shifts from about −0.9 to +7, the edges of the fault window, pairs
//! that do and do not match the configured gate, zero and saturated counts.
//!
//! [`digest`] folds the same results into a 32-bit FNV-1a hash without
//! `core::fmt`, for the panic-freedom proof (`src/bin/panic_proof.rs`).

use core::fmt::{self, Write};

use lc_core::counting::capture::{self, CaptureError, Widener};
use lc_core::counting::{CountPair, FaultError, FaultWindow, Gate, GateError, Gating, WindowError};
use lc_core::ratio::{frequency, period_ratio, Frequency, PeriodRatio, RatioError};
use lc_core::shift::{RestPoint, Shift, ShiftConverter, ShiftError, ShiftReading};

/// One unit's readout configuration, as its calibration image would hold it.
#[derive(Clone, Copy, Debug)]
pub struct UnitSpec {
    /// Label on the output lines.
    pub name: &'static str,
    /// Which count the gate fixes.
    pub gating: Gating,
    /// The gate's fixed count: sensor cycles (reciprocal) or reference
    /// ticks (direct).
    pub gate_count: u32,
    /// Reference clock in hertz.
    pub reference_hz: u32,
    /// Fault window: lowest plausible sensor frequency in hertz.
    pub min_hz: u32,
    /// Fault window: highest plausible sensor frequency in hertz.
    pub max_hz: u32,
    /// Fault window: fewest sensor cycles per gate.
    pub min_cycles: u32,
    /// The count pair measured at the rest point.
    pub rest: CountPair,
}

const UNIT_A: UnitSpec = UnitSpec {
    name: "A",
    gating: Gating::Reciprocal,
    gate_count: 4096,
    reference_hz: 16_000_000,
    min_hz: 1_000_000,
    max_hz: 8_000_000,
    min_cycles: 64,
    rest: CountPair::new(4096, 19_275),
};

/// The units: `A` and `B` work, `C` to `G` are refused at setup.
pub const UNITS: [UnitSpec; 7] = [
    UNIT_A,
    UnitSpec {
        name: "B",
        gating: Gating::Direct,
        gate_count: 48_000,
        reference_hz: 48_000_000,
        min_hz: 1_000_000,
        max_hz: 8_000_000,
        min_cycles: 1_000,
        rest: CountPair::new(3_400, 48_000),
    },
    // A gate of no cycles.
    UnitSpec {
        name: "C",
        gate_count: 0,
        ..UNIT_A
    },
    // A frequency band upside down.
    UnitSpec {
        name: "D",
        min_hz: 8_000_000,
        max_hz: 1_000_000,
        ..UNIT_A
    },
    // No reference clock.
    UnitSpec {
        name: "E",
        reference_hz: 0,
        ..UNIT_A
    },
    // Rest point taken while the oscillator was dead.
    UnitSpec {
        name: "F",
        rest: CountPair::new(0, 19_275),
        ..UNIT_A
    },
    // Rest point below 2^-8 ticks per cycle.
    UnitSpec {
        name: "G",
        rest: CountPair::new(4096, 15),
        ..UNIT_A
    },
];

/// Why a unit could not be set up.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SetupError {
    /// The gate configuration was refused.
    Gate(GateError),
    /// The fault window was refused.
    Window(WindowError),
    /// The rest point was refused.
    Rest(ShiftError),
    /// The shift converter was refused.
    Converter(ShiftError),
}

/// A unit ready to convert readings: what firmware builds once at start-up.
#[derive(Clone, Copy, Debug)]
pub struct Unit {
    /// The gate that turns a measured count into a count pair.
    pub gate: Gate,
    /// The plausibility check.
    pub window: FaultWindow,
    /// The rest point.
    pub rest: RestPoint,
    /// Converter configured for the gate: division-free for pairs whose
    /// cycles equal a reciprocal gate's length.
    pub gated: ShiftConverter,
    /// Converter without a configured gate: always the division path.
    pub general: ShiftConverter,
}

impl Unit {
    /// Builds the unit from its configuration.
    pub fn new(spec: &UnitSpec) -> Result<Self, SetupError> {
        let gate = match spec.gating {
            Gating::Reciprocal => Gate::reciprocal(spec.gate_count),
            Gating::Direct => Gate::direct(spec.gate_count),
        }
        .map_err(SetupError::Gate)?;
        let window = FaultWindow::new(spec.reference_hz, spec.min_hz, spec.max_hz, spec.min_cycles)
            .map_err(SetupError::Window)?;
        let rest = RestPoint::from_counts(spec.rest).map_err(SetupError::Rest)?;
        let gated = ShiftConverter::for_gate(rest, gate).map_err(SetupError::Converter)?;
        let general =
            ShiftConverter::new(rest, gate.gating(), None).map_err(SetupError::Converter)?;
        Ok(Self {
            gate,
            window,
            rest,
            gated,
            general,
        })
    }
}

/// What the firmware got from its counter.
#[derive(Clone, Copy, Debug)]
pub enum Input {
    /// The measured count of one gate (ticks for a reciprocal gate, cycles
    /// for a direct one); the gate supplies the fixed count.
    Measured(u32),
    /// A raw count pair (a logged pair, or one from another gate).
    Pair(CountPair),
}

/// One row of the table.
#[derive(Clone, Copy, Debug)]
pub struct Row {
    /// Index into [`UNITS`].
    pub unit: usize,
    /// Label on the output line.
    pub tag: &'static str,
    /// The counts.
    pub input: Input,
}

const fn measured(unit: usize, tag: &'static str, count: u32) -> Row {
    Row {
        unit,
        tag,
        input: Input::Measured(count),
    }
}

const fn pair(unit: usize, tag: &'static str, cycles: u32, ticks: u32) -> Row {
    Row {
        unit,
        tag,
        input: Input::Pair(CountPair::new(cycles, ticks)),
    }
}

/// The readings. Shift tags are approximate: the exact values are printed.
pub const ROWS: [Row; 33] = [
    // Unit A: 4096-cycle reciprocal gate, measured reference ticks.
    measured(0, "rest", 19_275),
    measured(0, "warm", 19_290),
    measured(0, "s-0.01", 19_178),
    measured(0, "s-0.1", 18_286),
    measured(0, "s-0.3", 16_127),
    measured(0, "s-0.9", 6_096),
    measured(0, "s+7", 54_518),
    measured(0, "band-low-edge", 65_536),
    measured(0, "band-low-out", 65_537),
    measured(0, "band-high-edge", 8_192),
    measured(0, "band-high-out", 8_191),
    measured(0, "no-reference", 0),
    measured(0, "ticks-max", u32::MAX),
    measured(0, "s-limit-below", 39_475_199),
    measured(0, "s-limit", 39_475_200),
    // Unit A, pairs that do not match its gate: the division path.
    pair(0, "double-gate", 8_192, 38_551),
    pair(0, "gate-short", 4_095, 19_270),
    pair(0, "no-oscillation", 0, 19_275),
    pair(0, "all-zero", 0, 0),
    pair(0, "few-cycles", 63, 297),
    pair(0, "cycles-max", u32::MAX, 19_275),
    pair(0, "both-max", u32::MAX, u32::MAX),
    pair(0, "one-cycle-ticks-max", 1, u32::MAX),
    // Unit B: 1 ms direct gate at 48 MHz, measured sensor cycles.
    measured(1, "rest", 3_400),
    measured(1, "s-0.01", 3_417),
    measured(1, "s-0.1", 3_584),
    measured(1, "s-0.3", 4_064),
    measured(1, "s-0.9", 10_752),
    measured(1, "s+7", 1_202),
    measured(1, "few-cycles", 999),
    measured(1, "no-oscillation", 0),
    pair(1, "gate-long", 3_400, 48_001),
    // A unit refused at setup never converts.
    measured(2, "refused-unit", 19_275),
];

/// Every stage's result for one reading.
#[derive(Clone, Copy, Debug)]
pub struct Outcome {
    /// The count pair.
    pub pair: CountPair,
    /// Fault window check.
    pub window: Result<CountPair, FaultError>,
    /// Frequency diagnostic.
    pub frequency: Result<Frequency, RatioError>,
    /// Period ratio diagnostic.
    pub period: Result<PeriodRatio, RatioError>,
    /// The reading from the gate-configured converter.
    pub gated: Result<ShiftReading, ShiftError>,
    /// The shift from the converter without a configured gate.
    pub general: Result<Shift, ShiftError>,
}

/// Runs every stage on one input. Each stage runs on its own, whatever the
/// others gave, so that the table exercises every stage on every input.
pub fn evaluate(unit: &Unit, input: Input) -> Outcome {
    let pair = match input {
        Input::Measured(count) => unit.gate.pair(count),
        Input::Pair(pair) => pair,
    };
    Outcome {
        pair,
        window: unit.window.check(pair),
        frequency: frequency(pair, unit.window.reference_hz()),
        period: period_ratio(pair),
        gated: unit.gated.convert(pair),
        general: unit.general.shift(pair),
    }
}

/// Two captures of a free-running timer with the overflows between them.
#[derive(Clone, Copy, Debug)]
pub struct CaptureCase {
    /// Start capture.
    pub start: u32,
    /// End capture.
    pub end: u32,
    /// Overflows between the captures.
    pub wraps: u32,
    /// Timer width in bits.
    pub width_bits: u32,
}

const fn cap(start: u32, end: u32, wraps: u32, width_bits: u32) -> CaptureCase {
    CaptureCase {
        start,
        end,
        wraps,
        width_bits,
    }
}

/// Gates of 19 275 reference ticks seen by narrow timers, and faults.
pub const CAPTURES: [CaptureCase; 10] = [
    cap(60_000, 13_739, 1, 16),
    cap(5_000, 24_275, 0, 24),
    cap(16_770_000, 12_059, 1, 24),
    cap(4_294_967_000, 18_979, 1, 32),
    cap(60_000, 13_739, 0, 16),
    cap(70_000, 5, 1, 16),
    cap(0, 0, 0, 0),
    cap(0, 0, 0, 33),
    cap(0, 0, 1, 32),
    cap(0, 0, 65_536, 16),
];

/// A [`Widener`] session: start capture, overflows handled by the
/// interrupt, end capture with the overflow flag as read with it.
#[derive(Clone, Copy, Debug)]
pub struct WidenerCase {
    /// Timer width in bits.
    pub width_bits: u32,
    /// Start capture (no overflow pending).
    pub start: u32,
    /// Overflows handled between the captures.
    pub wraps: u32,
    /// End capture.
    pub end: u32,
    /// Overflow flag pending, not yet handled, at the end capture.
    pub end_pending: bool,
}

const fn widen_case(
    width_bits: u32,
    start: u32,
    wraps: u32,
    end: u32,
    end_pending: bool,
) -> WidenerCase {
    WidenerCase {
        width_bits,
        start,
        wraps,
        end,
        end_pending,
    }
}

/// Widener sessions: a handled wrap, the capture/interrupt race on both
/// sides of the wrap, and faults.
pub const WIDENERS: [WidenerCase; 8] = [
    widen_case(16, 60_000, 1, 13_739, false),
    widen_case(16, 60_000, 0, 13_739, true),
    widen_case(16, 45_725, 0, 65_000, true),
    widen_case(24, 16_770_000, 1, 12_059, false),
    widen_case(32, 4_294_967_000, 1, 18_979, false),
    widen_case(16, 60_000, 1, 70_000, false),
    widen_case(16, 13_739, 0, 5, false),
    widen_case(0, 0, 0, 0, false),
];

/// The timestamps and the count of a [`WidenerCase`].
#[derive(Clone, Copy, Debug)]
pub struct WidenerOutcome {
    /// Timestamp of the start capture.
    pub start: Result<u64, CaptureError>,
    /// Timestamp of the end capture.
    pub end: Result<u64, CaptureError>,
    /// Counts between them.
    pub span: Result<u32, CaptureError>,
}

/// Runs a [`WidenerCase`]; the error when the widener itself is refused.
pub fn widen(case: &WidenerCase) -> Result<WidenerOutcome, CaptureError> {
    let mut widener = Widener::new(case.width_bits)?;
    let start = widener.timestamp(case.start, false);
    for _ in 0..case.wraps {
        widener.on_overflow();
    }
    let end = widener.timestamp(case.end, case.end_pending);
    let span = match (start, end) {
        (Ok(a), Ok(b)) => Widener::span(a, b),
        (Err(e), _) | (_, Err(e)) => Err(e),
    };
    Ok(WidenerOutcome { start, end, span })
}

/// A result as its value, or its error's `Debug` name.
struct Show<T, E>(Result<T, E>);

impl<T: fmt::Display, E: fmt::Debug> fmt::Display for Show<T, E> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match &self.0 {
            Ok(value) => fmt::Display::fmt(value, f),
            Err(error) => fmt::Debug::fmt(error, f),
        }
    }
}

/// Writes the whole table, one line per unit, row, capture and widener
/// session. Formats: `f_q32` Q32.32 Hz, `p_q44` Q20.44 ticks per cycle,
/// `s_gate_q40`, `s_div_q40` and `step_q40` Q23.40.
pub fn run(out: &mut impl Write) -> fmt::Result {
    writeln!(
        out,
        "# lc-core pipeline: f_q32 Q32.32 Hz, p_q44 Q20.44, s_gate_q40/s_div_q40/step_q40 Q23.40"
    )?;
    let units = UNITS.each_ref().map(Unit::new);
    for (spec, unit) in UNITS.iter().zip(&units) {
        write!(
            out,
            "unit {} {:?} gate={} ref_hz={} band_hz={}..={} min_cycles={} rest={}/{} -> ",
            spec.name,
            spec.gating,
            spec.gate_count,
            spec.reference_hz,
            spec.min_hz,
            spec.max_hz,
            spec.min_cycles,
            spec.rest.cycles,
            spec.rest.ticks,
        )?;
        match unit {
            Ok(unit) => writeln!(out, "rest_q44={}", unit.rest.ratio().raw_q44())?,
            Err(e) => writeln!(out, "{e:?}")?,
        }
    }
    for (i, row) in ROWS.iter().enumerate() {
        let name = UNITS.get(row.unit).map_or("?", |spec| spec.name);
        write!(out, "row {i:02} {name} {} ", row.tag)?;
        let unit = match units.get(row.unit) {
            Some(Ok(unit)) => unit,
            Some(Err(e)) => {
                writeln!(out, "unit refused: {e:?}")?;
                continue;
            }
            None => {
                writeln!(out, "no such unit")?;
                continue;
            }
        };
        let o = evaluate(unit, row.input);
        writeln!(
            out,
            "pair={}/{} window={} f_q32={} p_q44={} s_gate_q40={} s_div_q40={} n={} step_q40={}",
            o.pair.cycles,
            o.pair.ticks,
            Show(o.window.map(|_| "ok")),
            Show(o.frequency.map(Frequency::raw_q32)),
            Show(o.period.map(PeriodRatio::raw_q44)),
            Show(o.gated.map(|r| r.shift().raw_q40())),
            Show(o.general.map(Shift::raw_q40)),
            Show(o.gated.map(|r| r.quantised_count())),
            Show(o.gated.map(|r| r.quantisation_step().raw_q40())),
        )?;
    }
    for c in &CAPTURES {
        writeln!(
            out,
            "capture start={} end={} wraps={} width={} -> {}",
            c.start,
            c.end,
            c.wraps,
            c.width_bits,
            Show(capture::elapsed(c.start, c.end, c.wraps, c.width_bits)),
        )?;
    }
    for w in &WIDENERS {
        write!(
            out,
            "widener width={} start={} wraps={} end={} pending={} -> ",
            w.width_bits, w.start, w.wraps, w.end, w.end_pending,
        )?;
        match widen(w) {
            Ok(o) => writeln!(
                out,
                "start_ts={} end_ts={} span={}",
                Show(o.start),
                Show(o.end),
                Show(o.span)
            )?,
            Err(e) => writeln!(out, "{e:?}")?,
        }
    }
    writeln!(out, "# end")
}

/// 32-bit FNV-1a over little-endian bytes.
#[derive(Clone, Copy)]
struct Fnv(u32);

impl Fnv {
    const fn new() -> Self {
        Self(0x811c_9dc5)
    }

    fn bytes(self, bytes: &[u8]) -> Self {
        let mut h = self.0;
        for &b in bytes {
            h ^= u32::from(b);
            h = h.wrapping_mul(0x0100_0193);
        }
        Self(h)
    }

    fn u32(self, x: u32) -> Self {
        self.bytes(&x.to_le_bytes())
    }

    fn u64(self, x: u64) -> Self {
        self.bytes(&x.to_le_bytes())
    }

    fn i64(self, x: i64) -> Self {
        self.bytes(&x.to_le_bytes())
    }

    /// Tag 0 and the value, or tag 1 and the error's code. The codes are
    /// `as u8` casts of fieldless error enums: their discriminants, exact.
    fn result<T, E>(
        self,
        r: &Result<T, E>,
        ok: impl FnOnce(Self, &T) -> Self,
        code: impl FnOnce(&E) -> u8,
    ) -> Self {
        match r {
            Ok(v) => ok(self.bytes(&[0]), v),
            Err(e) => self.bytes(&[1, code(e)]),
        }
    }
}

fn setup_code(e: &SetupError) -> u8 {
    match *e {
        SetupError::Gate(e) => 0x10 | e as u8,
        SetupError::Window(e) => 0x20 | e as u8,
        SetupError::Rest(e) => 0x30 | e as u8,
        SetupError::Converter(e) => 0x40 | e as u8,
    }
}

/// The table's results folded into a 32-bit FNV-1a hash, without
/// `core::fmt`: every unit's setup, every row's stages, every capture and
/// widener session. Takes the tables as arguments so that the panic proof
/// can hide them from the optimizer.
pub fn digest<const U: usize>(
    units: &[UnitSpec; U],
    rows: &[Row],
    captures: &[CaptureCase],
    wideners: &[WidenerCase],
) -> u32 {
    let built = units.each_ref().map(Unit::new);
    let mut h = Fnv::new();
    for unit in &built {
        h = h.result(unit, |h, u| h.u64(u.rest.ratio().raw_q44()), setup_code);
    }
    for row in rows {
        let Some(Ok(unit)) = built.get(row.unit) else {
            h = h.bytes(&[2]);
            continue;
        };
        let o = evaluate(unit, row.input);
        h = h
            .u32(o.pair.cycles)
            .u32(o.pair.ticks)
            .result(&o.window, |h, p| h.u32(p.cycles).u32(p.ticks), |e| *e as u8)
            .result(&o.frequency, |h, f| h.u64(f.raw_q32()), |e| *e as u8)
            .result(&o.period, |h, p| h.u64(p.raw_q44()), |e| *e as u8)
            .result(
                &o.gated,
                |h, r| {
                    h.i64(r.shift().raw_q40())
                        .u32(r.quantised_count())
                        .i64(r.quantisation_step().raw_q40())
                },
                |e| *e as u8,
            )
            .result(&o.general, |h, s| h.i64(s.raw_q40()), |e| *e as u8);
    }
    for c in captures {
        h = h.result(
            &capture::elapsed(c.start, c.end, c.wraps, c.width_bits),
            |h, n| h.u32(*n),
            |e| *e as u8,
        );
    }
    for w in wideners {
        h = h.result(
            &widen(w),
            |h, o| {
                h.result(&o.start, |h, t| h.u64(*t), |e| *e as u8)
                    .result(&o.end, |h, t| h.u64(*t), |e| *e as u8)
                    .result(&o.span, |h, n| h.u32(*n), |e| *e as u8)
            },
            |e| *e as u8,
        );
    }
    h.0
}
