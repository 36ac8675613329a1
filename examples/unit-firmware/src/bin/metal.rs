//! A whole metal-detector firmware: baseline tracking, detection with
//! hysteresis and debounce, and the class (ferrous or not) confirmed by
//! the ring-down.
//!
//! Copy this file to start a product; `proximity.rs` explains the steps
//! (image in flash pages of its own, validate, build, read). What a metal
//! detector adds:
//!
//! - each reading takes a count pair, the ring count of a ring-down
//!   after the gate (swings above the comparator's threshold) and, as
//!   the image holds a drift model, the temperature (without it the
//!   reading is a `TemperatureMissing` fault);
//! - the reader learns the background over its first readings: keep the
//!   coil clear of metal at power-up;
//! - the reading (`MetalReading`) is the class (`MetalClass`), the
//!   ring-count drop and the shift minus the baseline; the status is
//!   `NoTarget` while nothing is present. The printed line carries the
//!   class code as its value.
//!
//! Memory (measured by `tests/firmware_budget.rs`, docs/performance.md):
//! a metal detector's part may have 512 bytes of RAM, and the reader alone
//! takes over 200 bytes of it. So the steps run in functions of their own (kept out
//! of line), and the stack holds one step's working memory at a time:
//!
//! - `validate` runs before the reader exists;
//! - `build` writes the reader into `run`'s frame (its return slot);
//!   `run` then uses it in place, by reference (`match &mut built`, as
//!   in `proximity.rs`);
//! - `run` reads, with the reader and one `Input` on its frame.
//!
//! The peak stack is then `main` + the deepest of validation, `run` +
//! construction and `run` + a reading, not their sum. (Inlined into one
//! `main`, validation's and construction's temporaries share the frame
//! that holds the reader for the whole run.)
//!
//! **Not a safety-rated component.** A reading that protects people or
//! machines needs a safety function designed to the applicable standards.
#![no_std]
#![no_main]

use core::hint::black_box;
use cortex_m_rt::entry;
use lc_core::image::{Image, ImageError};
use lc_core::reader::{MetalReader, ReaderError};
use lc_unit::{report, script, Aligned, Host};

/// The calibration image, in flash pages of its own (see `proximity.rs`).
#[link_section = ".calibration"]
#[used]
static IMAGE: Aligned<[u8; IMAGE_LEN]> = Aligned(*include_bytes!("../../data/metal.lcim"));
const IMAGE_LEN: usize = include_bytes!("../../data/metal.lcim").len();

#[entry]
fn main() -> ! {
    let host = Host::open();
    host.write(b"boot\n");
    let Ok(image) = validate(black_box(&IMAGE.0)) else {
        host.fail(b"calibration image refused\n")
    };
    run(host, &image)
}

/// Step 2 (see `proximity.rs`): validates the image in place.
#[inline(never)]
fn validate(bytes: &[u8]) -> Result<Image<'_>, ImageError> {
    Image::new_metal(bytes)
}

/// Step 3: the reader, built in the caller's return slot.
#[inline(never)]
fn build(image: &Image<'_>) -> Result<MetalReader, ReaderError> {
    MetalReader::new(image)
}

/// Steps 3 and 4: builds the reader, then reads one gate after another.
/// In a product, the gate's count pair comes from the timer captures and
/// the ring count from the comparator's counter.
#[inline(never)]
fn run(mut host: Host, image: &Image<'_>) -> ! {
    let mut built = build(image);
    let reader = match &mut built {
        Ok(reader) => reader,
        Err(_) => host.fail(b"not a metal image\n"),
    };
    for (i, gate) in (0u32..).zip(black_box(&script::METAL_GATES)) {
        let r = reader.read(&gate.input());
        report::reading(
            &mut host,
            i,
            r.class as i32,
            r.ring_drop,
            r.delta.raw_q40(),
            r.status,
        );
    }
    host.finish()
}
