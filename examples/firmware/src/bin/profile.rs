//! Where one full reading's instructions go: the benchmark's reading paths
//! (`cost`), eight readings each, between marker functions, for an
//! instruction trace.
//!
//! Run it with `run.sh profile m0|m4f`: QEMU executes one instruction per
//! translation block (`-singlestep`) and logs each with its function's
//! symbol (`-d exec,nochain`); `run.sh` counts the instructions per
//! function between the markers `path_<name>` (each a function of its own,
//! so its symbol names the path that follows it) and prints them per
//! reading. Loading (parse, reader construction) runs outside the markers
//! and is not counted, except in `path_load_proximity`: eight start-ups
//! with the 32-node cubic proximity image (`Image::new` and `Reader::new`),
//! where "per reading" is per start-up; and `path_fixed_proximity_32`, the
//! readings of that image.
#![no_std]
#![no_main]

use core::hint::black_box;

use cortex_m_rt::entry;
use lc_core::image::Image;
use lc_core::reader::{Input, ProximityReader, Reader};
use lc_firmware::exit;
use lc_firmware::readout::{BOARD, IMAGES, LEVEL, METAL, PROXIMITY_32, PROXIMITY_TC};

#[path = "cost/cases.rs"]
mod cases;
#[path = "cost/float.rs"]
mod float;
use float::{FloatLevel, FloatMetal, FloatNtc, FloatProximity};

/// Marker functions: the trace shows their symbols.
macro_rules! markers {
    ($($name:ident),* $(,)?) => {
        $(
            #[inline(never)]
            fn $name() {
                black_box(stringify!($name));
            }
        )*
    };
}

markers!(
    path_fixed_proximity,
    path_fixed_proximity_ntc,
    path_f32_proximity,
    path_f32_proximity_ntc,
    path_fixed_level,
    path_f32_level,
    path_fixed_metal,
    path_f32_metal,
    path_load_proximity,
    path_fixed_proximity_32,
    path_end,
);

/// A reader from a committed image, the image hidden from the optimizer.
fn load(unit: usize) -> Option<(Image<'static>, Reader<'static>)> {
    let image = Image::new(black_box(IMAGES.get(unit)?.bytes)).ok()?;
    let reader = Reader::new(&image).ok()?;
    Some((image, reader))
}

/// Proximity: eight readings of each path.
#[inline(never)]
fn proximity(ntc: &lc_core::temperature::NtcBeta, float_ntc: &FloatNtc) -> Option<()> {
    let (image, reader) = load(PROXIMITY_TC)?;
    let float = FloatProximity::<5>::new(&image)?;
    let cases = cases::proximity(|c| ntc.convert(c).ok(), |c| float_ntc.convert(c));
    let mut state = (reader, float, *ntc, *float_ntc);
    let ctx = black_box(&mut state);
    path_fixed_proximity();
    for x in black_box(&cases) {
        black_box(ctx.0.read(&x.input));
    }
    path_fixed_proximity_ntc();
    for x in black_box(&cases) {
        let input = Input {
            temperature: ctx.2.convert(x.code).ok(),
            ..x.input
        };
        black_box(ctx.0.read(&input));
    }
    path_f32_proximity();
    for x in black_box(&cases) {
        black_box(ctx.1.read(x.input.pair, x.t_c));
    }
    path_f32_proximity_ntc();
    for x in black_box(&cases) {
        black_box(ctx.1.read(x.input.pair, ctx.3.convert(x.code)));
    }
    path_end();
    Some(())
}

/// Level: eight readings of each path.
#[inline(never)]
fn level(ntc: &lc_core::temperature::NtcBeta, float_ntc: &FloatNtc) -> Option<()> {
    let (image, reader) = load(LEVEL)?;
    let float = FloatLevel::new(&image)?;
    let cases = cases::level(|c| ntc.convert(c).ok(), |c| float_ntc.convert(c));
    let mut state = (reader, float);
    let ctx = black_box(&mut state);
    path_fixed_level();
    for x in black_box(&cases) {
        black_box(ctx.0.read(&x.input));
    }
    path_f32_level();
    for x in black_box(&cases) {
        let reference = x.input.companion.unwrap_or_default();
        black_box(ctx.1.read(x.input.pair, reference, x.t_c));
    }
    path_end();
    Some(())
}

/// Metal: eight readings of each path.
#[inline(never)]
fn metal() -> Option<()> {
    let (image, reader) = load(METAL)?;
    let float = FloatMetal::new(&image)?;
    let cases = cases::metal();
    let mut state = (reader, float);
    let ctx = black_box(&mut state);
    path_fixed_metal();
    for x in black_box(&cases) {
        black_box(ctx.0.read(&x.input));
    }
    path_f32_metal();
    for x in black_box(&cases) {
        black_box(ctx.1.read(x.input.pair, x.input.ring_count.unwrap_or(0)));
    }
    path_end();
    Some(())
}

/// Loading: eight start-ups with the 32-node cubic proximity image, then
/// eight readings of it.
#[inline(never)]
fn loading(ntc: &lc_core::temperature::NtcBeta) -> Option<()> {
    let image = IMAGES.get(PROXIMITY_32)?;
    path_load_proximity();
    for _ in 0..8 {
        let checked = Image::new(black_box(image.bytes)).ok()?;
        black_box(ProximityReader::new(black_box(&checked)).ok()?);
    }
    path_end();
    let checked = Image::new(black_box(image.bytes)).ok()?;
    let mut reader = ProximityReader::new(&checked).ok()?;
    let cases = cases::proximity(|c| ntc.convert(c).ok(), |_| 0.0);
    let ctx = black_box(&mut reader);
    path_fixed_proximity_32();
    for x in black_box(&cases) {
        black_box(ctx.read(&x.input));
    }
    path_end();
    Some(())
}

#[entry]
fn main() -> ! {
    let board = black_box(BOARD);
    let Ok(ntc) = board.ntc() else { exit(false) };
    let float_ntc = FloatNtc::new(
        board.ntc_r25_ohm,
        board.ntc_beta_k,
        board.series_ohm,
        board.adc_bits,
    );
    let ok = proximity(&ntc, &float_ntc).is_some() && level(&ntc, &float_ntc).is_some();
    exit(ok && metal().is_some() && loading(&ntc).is_some())
}
