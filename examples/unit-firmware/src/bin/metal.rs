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
//! a metal detector's part may have 512 bytes of RAM, and the reader
//! takes a good part of it. So start-up runs in functions of its own
//! (kept out of line), and the stack holds one step's working memory at a
//! time:
//!
//! - `validate` runs before the reader exists;
//! - `build` writes the reader into `main`'s frame (its return slot);
//!   `main` then uses it in place, by reference (`match &mut built`, as
//!   in `proximity.rs`);
//! - the image's view lives in a block that ends once the reader is
//!   built, so its slot is free again for the read loop's `Input`;
//! - `main` reads, with the reader, one `Input` and one reading on its
//!   frame; each line is written from a frame of its own
//!   (`report::metal`).
//!
//! The peak stack is then `main`'s frame + the deepest of validation,
//! construction and a reading, not their sum. (Inlined into `main`,
//! validation's and construction's temporaries would share the frame that
//! holds the reader for the whole run.)
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
    let mut host = Host::open();
    host.write(b"boot\n");
    // The image's view is needed only to build the reader: in a block of
    // its own, its slot is free for the read loop's input.
    let mut built = {
        let Ok(image) = validate(black_box(&IMAGE.0)) else {
            host.fail(b"calibration image refused\n")
        };
        build(&image)
    };
    let reader = match &mut built {
        Ok(reader) => reader,
        Err(_) => host.fail(b"calibration image refused\n"),
    };
    // Step 4. In a product, the gate's count pair comes from the timer
    // captures and the ring count from the comparator's counter.
    // An index loop (not `zip` or `enumerate`), with the gate's `Input`
    // built out of line (`MetalGate::input`), leaves `main` fewer values
    // to keep across the reading: 8 bytes less stack here.
    let gates = black_box(&script::METAL_GATES);
    #[allow(clippy::needless_range_loop)]
    for i in 0..gates.len() {
        let r = reader.read(&gates[i].input());
        report::metal(&mut host, i as u32, &r);
    }
    host.finish()
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
