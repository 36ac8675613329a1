//! Instructions per reading of lc-core's firmware stages and of an `f32`
//! version of the same computation, timed with SysTick.
//!
//! Run it under `qemu-system-arm -icount shift=0` (see `run.sh cost`):
//! every guest instruction then advances the virtual clock by exactly
//! 1 ns, and SysTick counts the core clock of the emulated board, so
//! SysTick ticks convert to executed instructions by a fixed factor. That
//! factor is measured here, not assumed: `cortex_m::asm::delay(n)` runs
//! n + 1 iterations of a two-instruction loop (`subs`, `bne`), so timing two
//! delays gives instructions per tick. These are instruction counts, not
//! cycle counts: QEMU charges every instruction the same, whatever the
//! core's pipeline, multiplier or memory would take.
//!
//! Each path runs `ITERATIONS` times over eight pairs of unit A of the
//! pipeline table (4096-cycle reciprocal gate, 16 MHz reference). Inputs
//! and context pass through `black_box` on every iteration, as a reading
//! from a timer and a calibration in RAM would, and results go out through
//! `black_box`; the same loop with no work (the empty loop) is subtracted.
#![no_std]
#![no_main]

use core::fmt::{self, Write};
use core::hint::black_box;

use cortex_m::peripheral::{syst::SystClkSource, SYST};
use cortex_m_rt::entry;
use lc_core::counting::{CountPair, FaultWindow};
use lc_core::ratio::{frequency, period_ratio};
use lc_core::shift::ShiftConverter;
use lc_firmware::pipeline::{Unit, UNITS};
use lc_firmware::{exit, stdout};

/// Readings per timed path.
const ITERATIONS: u32 = 4096;

/// Measured ticks over unit A's 4096-cycle gate, from the pipeline table:
/// rest, warm, shifts of about −0.01, −0.1, −0.3, −0.9 and +7, and one
/// more near rest.
const TICKS: [u32; 8] = [
    19_275, 19_290, 19_178, 18_286, 16_127, 6_096, 54_518, 19_260,
];

/// `asm::delay` iterations for the short and long calibration runs.
const CAL_SHORT: u32 = 100_000;
const CAL_LONG: u32 = 10_100_000;

/// SysTick is a 24-bit down-counter.
const SYST_MASK: u32 = 0x00FF_FFFF;

fn ticks_between(start: u32, end: u32) -> u32 {
    start.wrapping_sub(end) & SYST_MASK
}

/// SysTick ticks for `ITERATIONS` calls of `f` on the pairs in turn.
#[inline(never)]
fn time<C>(ctx: &C, pairs: &[CountPair; 8], f: impl Fn(&C, CountPair)) -> u32 {
    let pairs = black_box(pairs);
    let start = SYST::get_current();
    for i in 0..ITERATIONS {
        // `i & 7` < 8: the cast is exact and the index in bounds.
        let pair = black_box(pairs[(i & 7) as usize]);
        f(black_box(ctx), pair);
    }
    ticks_between(start, SYST::get_current())
}

/// SysTick ticks for `cortex_m::asm::delay(n)`: n + 1 loop iterations.
#[inline(never)]
fn time_delay(n: u32) -> u32 {
    let start = SYST::get_current();
    cortex_m::asm::delay(black_box(n));
    ticks_between(start, SYST::get_current())
}

/// The f32 version: the same rest point and gate, as floats.
#[derive(Clone, Copy)]
struct FloatModel {
    reference_hz: f32,
    /// 1 / p_rest.
    inv_rest: f32,
    /// 1 / N for the gate of N cycles.
    inv_gate: f32,
    /// f_ref · N.
    reference_times_gate: f32,
    /// 1 / (p_rest · N).
    inv_rest_gate: f32,
}

impl FloatModel {
    // The casts round to the nearest f32 (exact for the counts used here).
    fn new(reference_hz: u32, gate_cycles: u32, rest: CountPair) -> Self {
        let reference_hz = reference_hz as f32;
        let gate = gate_cycles as f32;
        let rest_ratio = rest.ticks as f32 / rest.cycles as f32;
        Self {
            reference_hz,
            inv_rest: 1.0 / rest_ratio,
            inv_gate: 1.0 / gate,
            reference_times_gate: reference_hz * gate,
            inv_rest_gate: 1.0 / (rest_ratio * gate),
        }
    }
}

/// Everything the timed paths need, built at run time from hidden inputs.
struct Context {
    gated: ShiftConverter,
    general: ShiftConverter,
    window: FaultWindow,
    reference_hz: u32,
    float: FloatModel,
}

/// One timed path: its label and its ticks.
struct Timing {
    label: &'static str,
    ticks: u32,
}

/// Instructions per tick as a ratio, from the calibration.
struct Scale {
    instructions: i64,
    ticks: i64,
}

impl Scale {
    /// Instructions per reading, in tenths, rounded to nearest, for `ticks`
    /// over `ITERATIONS` readings less the empty loop's `empty` ticks.
    fn tenths_per_reading(&self, ticks: u32, empty: u32) -> i64 {
        let net = i64::from(ticks) - i64::from(empty);
        let num = net * 10 * self.instructions;
        let den = self.ticks * i64::from(ITERATIONS);
        (2 * num + num.signum() * den) / (2 * den)
    }
}

/// A count in tenths, printed with one decimal; honours width and
/// alignment.
struct Tenths(i64);

impl fmt::Display for Tenths {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut text = Text::default();
        let a = self.0.unsigned_abs();
        write!(text, "{}.{}", a / 10, a % 10)?;
        f.pad_integral(self.0 >= 0, "", text.as_str())
    }
}

/// A short text built in place.
#[derive(Default)]
struct Text {
    bytes: [u8; 24],
    len: usize,
}

impl Text {
    fn as_str(&self) -> &str {
        self.bytes
            .get(..self.len)
            .and_then(|b| core::str::from_utf8(b).ok())
            .unwrap_or("?")
    }
}

impl Write for Text {
    fn write_str(&mut self, s: &str) -> fmt::Result {
        let end = self.len + s.len();
        let slot = self.bytes.get_mut(self.len..end).ok_or(fmt::Error)?;
        slot.copy_from_slice(s.as_bytes());
        self.len = end;
        Ok(())
    }
}

fn report(out: &mut impl Write, ctx: &Context) -> fmt::Result {
    let pairs = TICKS.map(|t| CountPair::new(4096, t));

    let short = time_delay(CAL_SHORT);
    let long = time_delay(CAL_LONG);
    let scale = Scale {
        instructions: 2 * i64::from(CAL_LONG - CAL_SHORT),
        ticks: i64::from(long.wrapping_sub(short)).max(1),
    };
    writeln!(
        out,
        "# lc-core cost: SysTick under qemu -icount shift=0, {ITERATIONS} readings per path"
    )?;
    writeln!(
        out,
        "calibration: delay({CAL_SHORT}) {short} ticks, delay({CAL_LONG}) {long} ticks: \
         {} instructions in {} ticks = {}.{:03} instructions per tick",
        scale.instructions,
        scale.ticks,
        scale.instructions / scale.ticks,
        (scale.instructions % scale.ticks) * 1000 / scale.ticks,
    )?;

    let empty = time(ctx, &pairs, |_, pair| {
        black_box(pair);
    });
    let timings = [
        Timing {
            label: "fixed shift, configured gate",
            ticks: time(ctx, &pairs, |c, pair| {
                let _ = black_box(c.gated.shift(pair));
            }),
        },
        Timing {
            label: "fixed shift, division path",
            ticks: time(ctx, &pairs, |c, pair| {
                let _ = black_box(c.general.shift(pair));
            }),
        },
        Timing {
            label: "fixed frequency",
            ticks: time(ctx, &pairs, |c, pair| {
                let _ = black_box(frequency(pair, c.reference_hz));
            }),
        },
        Timing {
            label: "fixed period ratio",
            ticks: time(ctx, &pairs, |_, pair| {
                let _ = black_box(period_ratio(pair));
            }),
        },
        Timing {
            label: "fixed fault window",
            ticks: time(ctx, &pairs, |c, pair| {
                let _ = black_box(c.window.check(pair));
            }),
        },
        Timing {
            label: "f32 f, p, s with division",
            ticks: time(ctx, &pairs, |c, pair| {
                let m = &c.float;
                let (cycles, ticks) = (pair.cycles as f32, pair.ticks as f32);
                let f = m.reference_hz * cycles / ticks;
                let p = ticks / cycles;
                let r = p * m.inv_rest;
                black_box((f, p, r * r - 1.0));
            }),
        },
        Timing {
            label: "f32 f, p, s with 1/N",
            ticks: time(ctx, &pairs, |c, pair| {
                let m = &c.float;
                let ticks = pair.ticks as f32;
                let f = m.reference_times_gate / ticks;
                let p = ticks * m.inv_gate;
                let r = p * m.inv_rest;
                black_box((f, p, r * r - 1.0));
            }),
        },
        Timing {
            label: "f32 s only, division",
            ticks: time(ctx, &pairs, |c, pair| {
                let r = pair.ticks as f32 / pair.cycles as f32 * c.float.inv_rest;
                black_box(r * r - 1.0);
            }),
        },
        Timing {
            label: "f32 s only, 1/(p_rest N)",
            ticks: time(ctx, &pairs, |c, pair| {
                let r = pair.ticks as f32 * c.float.inv_rest_gate;
                black_box(r * r - 1.0);
            }),
        },
    ];

    writeln!(
        out,
        "empty loop: {empty} ticks, {} instructions per iteration (subtracted below)",
        Tenths(scale.tenths_per_reading(empty, 0))
    )?;
    writeln!(out, "{:<30} {:>8} {:>14}", "path", "ticks", "instr/reading")?;
    for t in &timings {
        writeln!(
            out,
            "{:<30} {:>8} {:>14}",
            t.label,
            t.ticks,
            Tenths(scale.tenths_per_reading(t.ticks, empty))
        )?;
    }
    writeln!(out, "# end")
}

#[entry]
fn main() -> ! {
    let Some(mut core) = cortex_m::Peripherals::take() else {
        exit(false)
    };
    core.SYST.set_clock_source(SystClkSource::Core);
    core.SYST.set_reload(SYST_MASK);
    core.SYST.clear_current();
    core.SYST.enable_counter();

    // Unit A of the pipeline table, read as a calibration image would be.
    let spec = black_box(UNITS[0]);
    let Ok(unit) = Unit::new(&spec) else {
        exit(false)
    };
    let ctx = Context {
        gated: unit.gated,
        general: unit.general,
        window: unit.window,
        reference_hz: spec.reference_hz,
        float: FloatModel::new(spec.reference_hz, spec.gate_count, spec.rest),
    };
    let ok = match stdout() {
        Some(mut out) => report(&mut out, &ctx).is_ok(),
        None => false,
    };
    exit(ok)
}
