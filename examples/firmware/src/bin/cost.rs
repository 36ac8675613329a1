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
//! The stage paths run `ITERATIONS` times over eight pairs of unit A of the
//! pipeline table (4096-cycle reciprocal gate, 16 MHz reference). The full
//! readings run `ITERATIONS` times over eight inputs of the readout's units
//! (`readout.rs`), with readers built at run time from the committed
//! calibration images, against `f32` versions of the same pipelines
//! (`cost/float.rs`); loading (parse, reader construction) runs
//! `LOAD_ITERATIONS` times. Inputs and context pass through `black_box` on
//! every iteration, as a reading from a timer and a calibration in RAM
//! would, and results go out through `black_box`; the same loop with no
//! work (the empty loop) is subtracted.
#![no_std]
#![no_main]

use core::fmt::{self, Write};
use core::hint::black_box;

use cortex_m::peripheral::{syst::SystClkSource, SYST};
use cortex_m_rt::entry;
use lc_core::counting::{CountPair, FaultWindow};
use lc_core::curve::CurveRef;
use lc_core::drift::TemperatureModel;
use lc_core::image::Image;
use lc_core::ratio::{frequency, period_ratio};
use lc_core::reader::{Input, LevelReader, ProximityReader, Reader};
use lc_core::shift::{Shift, ShiftConverter};
use lc_core::temperature::{CentiCelsius, NtcBeta};
use lc_firmware::pipeline::{Unit, UNITS};
use lc_firmware::readout::{
    self, BOARD, IMAGES, LEVEL, METAL, PROXIMITY, PROXIMITY_32, PROXIMITY_TC,
};
use lc_firmware::{exit, stdout};

#[path = "cost/cases.rs"]
mod cases;
#[path = "cost/float.rs"]
mod float;
use cases::PROXIMITY_CASES;
use float::{FloatLevel, FloatMetal, FloatNtc, FloatProximity};

/// Readings per timed path.
const ITERATIONS: u32 = 4096;

/// Calls per timed loading path (parse, reader construction).
const LOAD_ITERATIONS: u32 = 64;

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
        self.tenths_per_call(ticks, empty, ITERATIONS)
    }

    /// As [`Scale::tenths_per_reading`], over `iterations` calls.
    fn tenths_per_call(&self, ticks: u32, empty: u32, iterations: u32) -> i64 {
        let net = i64::from(ticks) - i64::from(empty);
        let num = net * 10 * self.instructions;
        let den = self.ticks * i64::from(iterations);
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
struct Text {
    bytes: [u8; 64],
    len: usize,
}

impl Default for Text {
    fn default() -> Self {
        Self {
            bytes: [0; 64],
            len: 0,
        }
    }
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
    stages(out, ctx, &pairs, &scale)?;
    full_readings(out, &scale)?;
    writeln!(out, "# size_of on this target, bytes")?;
    for (name, bytes) in lc_firmware::sizes::SIZES
        .iter()
        .chain(&lc_firmware::sizes::NTC_SIZES)
    {
        writeln!(out, "{name:<24} {bytes:>6}")?;
    }
    writeln!(out, "# end")
}

/// The stage table: one stage of the shift path per row.
fn stages(
    out: &mut impl Write,
    ctx: &Context,
    pairs: &[CountPair; 8],
    scale: &Scale,
) -> fmt::Result {
    let empty = time(ctx, pairs, |_, pair| {
        black_box(pair);
    });
    let timings = [
        Timing {
            label: "fixed shift, configured gate",
            ticks: time(ctx, pairs, |c, pair| {
                let _ = black_box(c.gated.shift(pair));
            }),
        },
        Timing {
            label: "fixed shift, division path",
            ticks: time(ctx, pairs, |c, pair| {
                let _ = black_box(c.general.shift(pair));
            }),
        },
        Timing {
            label: "fixed frequency",
            ticks: time(ctx, pairs, |c, pair| {
                let _ = black_box(frequency(pair, c.reference_hz));
            }),
        },
        Timing {
            label: "fixed period ratio",
            ticks: time(ctx, pairs, |_, pair| {
                let _ = black_box(period_ratio(pair));
            }),
        },
        Timing {
            label: "fixed fault window",
            ticks: time(ctx, pairs, |c, pair| {
                let _ = black_box(c.window.check(pair));
            }),
        },
        Timing {
            label: "f32 f, p, s with division",
            ticks: time(ctx, pairs, |c, pair| {
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
            ticks: time(ctx, pairs, |c, pair| {
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
            ticks: time(ctx, pairs, |c, pair| {
                let r = pair.ticks as f32 / pair.cycles as f32 * c.float.inv_rest;
                black_box(r * r - 1.0);
            }),
        },
        Timing {
            label: "f32 s only, 1/(p_rest N)",
            ticks: time(ctx, pairs, |c, pair| {
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
    Ok(())
}

/// SysTick ticks for `iterations` calls of `f` on the cases in turn, with
/// a mutable context (a reader keeps state).
#[inline(never)]
fn time_cases<C, T>(
    ctx: &mut C,
    cases: &[T; 8],
    iterations: u32,
    mut f: impl FnMut(&mut C, &T),
) -> u32 {
    let cases = black_box(cases);
    let start = SYST::get_current();
    for i in 0..iterations {
        // `i & 7` < 8: the cast is exact and the index in bounds.
        let case = black_box(&cases[(i & 7) as usize]);
        f(black_box(&mut *ctx), case);
    }
    ticks_between(start, SYST::get_current())
}

/// A reader from a committed image, the image hidden from the optimizer.
fn reader(unit: usize) -> Option<(Image<'static>, Reader<'static>)> {
    let bytes = black_box(IMAGES.get(unit)?.bytes);
    let image = Image::new(bytes).ok()?;
    let reader = Reader::new(&image).ok()?;
    Some((image, reader))
}

/// A row of the full-reading table.
fn row(out: &mut impl Write, label: &str, ticks: u32, tenths: i64) -> fmt::Result {
    writeln!(out, "{label:<46} {ticks:>9} {:>14}", Tenths(tenths))
}

/// The full readings: fixed readers against their `f32` versions, and
/// loading.
fn full_readings(out: &mut impl Write, scale: &Scale) -> fmt::Result {
    let Ok(ntc) = black_box(BOARD).ntc() else {
        return writeln!(out, "board NTC refused");
    };
    let b = black_box(BOARD);
    let float_ntc = FloatNtc::new(b.ntc_r25_ohm, b.ntc_beta_k, b.series_ohm, b.adc_bits);
    let temperature = |code: u32| ntc.convert(code).ok();

    writeln!(
        out,
        "# full readings: readers from the committed images, {ITERATIONS} readings per path, \
         empty loop subtracted"
    )?;
    let mut nothing = ();
    let empty = time_cases(&mut nothing, &[0u8; 8], ITERATIONS, |_, c| {
        black_box(c);
    });
    writeln!(
        out,
        "empty loop: {empty} ticks, {} instructions per iteration",
        Tenths(scale.tenths_per_reading(empty, 0))
    )?;
    writeln!(out, "{:<46} {:>9} {:>14}", "path", "ticks", "instr/reading")?;
    let per = |ticks| scale.tenths_per_reading(ticks, empty);

    proximity(out, &ntc, &float_ntc, &temperature, &per)?;
    level(out, &ntc, &float_ntc, &temperature, &per)?;
    metal(out, &per)?;
    parts(out, &ntc, &float_ntc, &per)?;
    loading(out, scale)
}

/// The proximity reader (the fitted demo unit) against its `f32` version.
#[inline(never)]
fn proximity(
    out: &mut impl Write,
    ntc: &NtcBeta,
    float_ntc: &FloatNtc,
    temperature: &impl Fn(u32) -> Option<CentiCelsius>,
    per: &impl Fn(u32) -> i64,
) -> fmt::Result {
    proximity_of::<5>(out, PROXIMITY_TC, "", ntc, float_ntc, temperature, per)?;
    proximity_of::<32>(
        out,
        PROXIMITY_32,
        " (32 cubic)",
        ntc,
        float_ntc,
        temperature,
        per,
    )
}

/// One proximity unit with an `N`-node curve against its `f32` version.
fn proximity_of<const N: usize>(
    out: &mut impl Write,
    unit: usize,
    what: &str,
    ntc: &NtcBeta,
    float_ntc: &FloatNtc,
    temperature: &impl Fn(u32) -> Option<CentiCelsius>,
    per: &impl Fn(u32) -> i64,
) -> fmt::Result {
    let Some((image, _)) = reader(unit) else {
        return writeln!(out, "proximity image refused");
    };
    let Ok(mut reader) = ProximityReader::new(&image) else {
        return writeln!(out, "proximity reader refused");
    };
    let Some(float) = FloatProximity::<N>::new(&image) else {
        return writeln!(out, "proximity f32 model refused");
    };
    let cases = cases::proximity(temperature, |code| float_ntc.convert(code));
    // The f32 version computes the same gaps.
    let mut worst = 0;
    for c in &cases {
        let fixed = reader.read(&c.input).gap;
        let (f, _) = float.read(c.input.pair, c.t_c);
        worst = worst.max((fixed - f).abs());
    }
    writeln!(
        out,
        "# check: proximity{what} f32 vs fixed, max |gap difference| {worst} um"
    )?;
    let mut label = Text::default();
    let ctx = &mut (reader, float, *ntc, *float_ntc);
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        black_box(c.0.read(&x.input));
    });
    write!(label, "fixed proximity{what}: pair + T -> gap")?;
    row(out, label.as_str(), t, per(t))?;
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        let input = Input {
            temperature: c.2.convert(x.code).ok(),
            ..x.input
        };
        black_box(c.0.read(&input));
    });
    let mut label = Text::default();
    write!(label, "fixed proximity{what}: pair + NTC -> gap")?;
    row(out, label.as_str(), t, per(t))?;
    // A steady temperature: the drift correction from the reader's cache,
    // as in a unit whose temperature moves far more slowly than its
    // readings come (the image has a drift model, so a reading without a
    // temperature would be a fault, not a reading).
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        let input = Input {
            temperature: Some(CentiCelsius(2_500)),
            ..Input::counts(x.input.pair)
        };
        black_box(c.0.read(&input));
    });
    let mut label = Text::default();
    write!(label, "fixed proximity{what}: pair + steady T -> gap")?;
    row(out, label.as_str(), t, per(t))?;
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        black_box(c.1.read(x.input.pair, x.t_c));
    });
    let mut label = Text::default();
    write!(label, "f32 proximity{what}: pair + T -> gap")?;
    row(out, label.as_str(), t, per(t))?;
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        black_box(c.1.read(x.input.pair, c.3.convert(x.code)));
    });
    let mut label = Text::default();
    write!(label, "f32 proximity{what}: pair + NTC (logf)")?;
    row(out, label.as_str(), t, per(t))
}

/// The level reader against its `f32` version.
#[inline(never)]
fn level(
    out: &mut impl Write,
    ntc: &NtcBeta,
    float_ntc: &FloatNtc,
    temperature: &impl Fn(u32) -> Option<CentiCelsius>,
    per: &impl Fn(u32) -> i64,
) -> fmt::Result {
    let Some((image, _)) = reader(LEVEL) else {
        return writeln!(out, "level image refused");
    };
    let Ok(mut reader) = LevelReader::new(&image) else {
        return writeln!(out, "level reader refused");
    };
    let Some(float) = FloatLevel::new(&image) else {
        return writeln!(out, "level f32 model refused");
    };
    let cases = cases::level(temperature, |code| float_ntc.convert(code));
    let (mut worst_level, mut worst_volume) = (0, 0);
    for c in &cases {
        let fixed = reader.read(&c.input);
        let reference = c.input.companion.unwrap_or_default();
        let (l, v, _) = float.read(c.input.pair, reference, c.t_c);
        worst_level = worst_level.max((fixed.level - l).abs());
        worst_volume = worst_volume.max((fixed.volume.unwrap_or(0) - v).abs());
    }
    writeln!(
        out,
        "# check: level f32 vs fixed, max |level difference| {worst_level} x 0.1 mm, \
         max |volume difference| {worst_volume} mL"
    )?;
    let ctx = &mut (reader, float, *ntc, *float_ntc);
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        black_box(c.0.read(&x.input));
    });
    row(out, "fixed level: 2 pairs + T -> level, volume", t, per(t))?;
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        let input = Input {
            temperature: c.2.convert(x.code).ok(),
            ..x.input
        };
        black_box(c.0.read(&input));
    });
    row(
        out,
        "fixed level: 2 pairs + NTC code -> level, volume",
        t,
        per(t),
    )?;
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        let reference = x.input.companion.unwrap_or_default();
        black_box(c.1.read(x.input.pair, reference, x.t_c));
    });
    row(out, "f32 level: 2 pairs + T -> level, volume", t, per(t))?;
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        let reference = x.input.companion.unwrap_or_default();
        black_box(c.1.read(x.input.pair, reference, c.3.convert(x.code)));
    });
    row(
        out,
        "f32 level: 2 pairs + NTC code (logf) -> ...",
        t,
        per(t),
    )
}

/// The metal reader against its `f32` version.
#[inline(never)]
fn metal(out: &mut impl Write, per: &impl Fn(u32) -> i64) -> fmt::Result {
    let Some((image, reader)) = reader(METAL) else {
        return writeln!(out, "metal image refused");
    };
    let Some(float) = FloatMetal::new(&image) else {
        return writeln!(out, "metal f32 model refused");
    };
    let cases = cases::metal();
    // Two passes on fresh copies: the classes agree.
    let (mut fixed, mut f32_metal) = (reader.clone(), float);
    let mut mismatches = 0;
    for c in cases.iter().chain(&cases) {
        let a = fixed.read(&c.input).output();
        let (b, _) = f32_metal.read(c.input.pair, c.input.ring_count.unwrap_or(0));
        mismatches += u32::from(a != b);
    }
    writeln!(
        out,
        "# check: metal f32 vs fixed, {mismatches} class mismatches in 16 readings"
    )?;
    let ctx = &mut (reader, float);
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        black_box(c.0.read(&x.input));
    });
    row(out, "fixed metal: pair + ring count -> class", t, per(t))?;
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        black_box(c.1.read(x.input.pair, x.input.ring_count.unwrap_or(0)));
    });
    row(out, "f32 metal: pair + ring count -> class", t, per(t))
}

/// Single stages of the readers, to see where the instructions go.
#[inline(never)]
fn parts(
    out: &mut impl Write,
    ntc: &NtcBeta,
    float_ntc: &FloatNtc,
    per: &impl Fn(u32) -> i64,
) -> fmt::Result {
    let Some((image, _)) = reader(PROXIMITY_TC) else {
        return writeln!(out, "proximity image refused");
    };
    let Some(curve) = image.curve() else {
        return writeln!(out, "proximity curve refused");
    };
    let Some(curve32) = reader(PROXIMITY_32).and_then(|(i, _)| i.curve()) else {
        return writeln!(out, "32-node curve refused");
    };
    let Ok(chain) = BOARD.chain() else {
        return writeln!(out, "filter chain refused");
    };
    let cases = PROXIMITY_CASES.map(|(ticks, code)| (ticks, code));
    let shift_of = |ticks: u32| {
        // Shifts across the curve: −(ticks offset) in 2^-20 steps; only the
        // cost matters here.
        Shift::from_raw_q40(-(i64::from(ticks) << 20))
    };
    type Ctx<'a> = (
        NtcBeta,
        FloatNtc,
        TemperatureModel,
        CurveRef<'a>,
        readout::Chain,
        CurveRef<'a>,
    );
    let ctx: &mut Ctx<'_> = &mut (*ntc, *float_ntc, image.drift(), curve, chain, curve32);
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        let _ = black_box(c.0.convert(x.1));
    });
    row(out, "fixed NTC Beta: code -> 0.01 degC", t, per(t))?;
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        black_box(c.1.convert(x.1));
    });
    row(out, "f32 NTC Beta: code -> degC (logf)", t, per(t))?;
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        black_box(c.2.compensate(shift_of(x.0), CentiCelsius(x.1 as i32)));
    });
    row(out, "fixed drift model: compensate", t, per(t))?;
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        black_box(c.3.eval(shift_of(x.0)));
    });
    row(out, "fixed curve: 5 linear nodes", t, per(t))?;
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        black_box(c.5.eval(shift_of(x.0)));
    });
    row(out, "fixed curve: 32 cubic nodes", t, per(t))?;
    let t = time_cases(ctx, &cases, ITERATIONS, |c, x| {
        // Gap-like values in micrometres from the case.
        black_box(c.4.update((x.0 & 8_191) as i32));
    });
    row(out, "fixed median 3 + EMA + detector", t, per(t))
}

/// Loading: validate an image in place, build its reader.
#[inline(never)]
fn loading(out: &mut impl Write, scale: &Scale) -> fmt::Result {
    let mut nothing = ();
    let empty = time_cases(&mut nothing, &[0u8; 8], LOAD_ITERATIONS, |_, c| {
        black_box(c);
    });
    let per = |ticks| scale.tenths_per_call(ticks, empty, LOAD_ITERATIONS);
    writeln!(
        out,
        "# loading: {LOAD_ITERATIONS} calls per path, instructions per call"
    )?;
    for unit in [PROXIMITY, PROXIMITY_32, LEVEL, METAL] {
        let Some(image) = IMAGES.get(unit) else {
            continue;
        };
        let images = [image.bytes; 8];
        let t = time_cases(&mut nothing, &images, LOAD_ITERATIONS, |_, bytes| {
            let _ = black_box(Image::new(bytes));
        });
        let mut label = Text::default();
        write!(label, "Image::new {}", image.name)?;
        row(out, label.as_str(), t, per(t))?;
        let Ok(checked) = Image::new(image.bytes) else {
            continue;
        };
        let checked = [(); 8].map(|()| &checked);
        let t = time_cases(&mut nothing, &checked, LOAD_ITERATIONS, |_, image| {
            let _ = black_box(Reader::new(image));
        });
        let mut label = Text::default();
        write!(label, "Reader::new {}", image.name)?;
        row(out, label.as_str(), t, per(t))?;
        let t = time_cases(&mut nothing, &images, LOAD_ITERATIONS, |_, bytes| {
            if let Ok(image) = Image::new(bytes) {
                let _ = black_box(Reader::new(&image));
            }
        });
        let mut label = Text::default();
        write!(label, "start-up (both) {}", image.name)?;
        row(out, label.as_str(), t, per(t))?;
        // What a one-product firmware runs (examples/unit-firmware).
        if checked[0].kind() == lc_core::image::ReaderKind::Proximity {
            let t = time_cases(&mut nothing, &images, LOAD_ITERATIONS, |_, bytes| {
                if let Ok(image) = Image::new_proximity(bytes) {
                    let _ = black_box(lc_core::reader::ProximityReader::new(&image));
                }
            });
            let mut label = Text::default();
            write!(label, "start-up (proximity) {}", image.name)?;
            row(out, label.as_str(), t, per(t))?;
        }
    }
    // Where the start-up of the 32-node image goes.
    let Some(image) = IMAGES.get(PROXIMITY_32) else {
        return Ok(());
    };
    let Ok(checked) = Image::new(image.bytes) else {
        return Ok(());
    };
    let images = [image.bytes; 8];
    let t = time_cases(&mut nothing, &images, LOAD_ITERATIONS, |_, bytes| {
        black_box(lc_core::image::crc32(bytes));
    });
    row(out, "  crc32 of the 32-node image, by bytes", t, per(t))?;
    let rests = [(checked.rest(), checked.gate()); 8];
    let t = time_cases(&mut nothing, &rests, LOAD_ITERATIONS, |_, (rest, gate)| {
        let _ = black_box(ShiftConverter::new(
            *rest,
            lc_core::counting::Gating::Reciprocal,
            *gate,
        ));
    });
    row(out, "  ShiftConverter::new", t, per(t))?;
    let windows = [(checked.window(), checked.gate().unwrap_or(0)); 8];
    let t = time_cases(&mut nothing, &windows, LOAD_ITERATIONS, |_, (w, g)| {
        black_box(w.accepted_ticks(*g));
    });
    row(out, "  FaultWindow::accepted_ticks", t, per(t))?;
    if let Some(curve) = checked.curve() {
        let (n, sg) = curve.words();
        let words = [(n, sg); 8];
        let t = time_cases(&mut nothing, &words, LOAD_ITERATIONS, |_, (n, sg)| {
            let _ = black_box(CurveRef::from_words(n, sg, 32, true));
        });
        row(out, "  CurveRef::from_words 32 cubic", t, per(t))?;
    }
    Ok(())
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
