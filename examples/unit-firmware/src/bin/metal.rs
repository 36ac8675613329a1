//! A whole metal-detector firmware: baseline tracking, detection with
//! hysteresis and debounce, and the class (ferrous or not) confirmed by
//! the ring-down.
//!
//! Copy this file to start a product; `proximity.rs` explains the steps
//! (image in flash pages of its own, validate, build, read). What a metal
//! detector adds:
//!
//! - each reading takes a count pair and the ring count of a ring-down
//!   after the gate (swings above the comparator's threshold);
//! - the reader learns the background over its first readings: keep the
//!   coil clear of metal at power-up;
//! - the reading (`MetalReading`) is the class (`MetalClass`), the
//!   ring-count drop and the shift minus the baseline; the status is
//!   `NoTarget` while nothing is present. The printed line carries the
//!   class code as its value.
//!
//! Memory: measured by `tests/firmware_budget.rs` (docs/performance.md).
//!
//! **Not a safety-rated component.** A reading that protects people or
//! machines needs a safety function designed to the applicable standards.
#![no_std]
#![no_main]

use core::hint::black_box;
use cortex_m_rt::entry;
use lc_core::image::Image;
use lc_core::reader::MetalReader;
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
    let image: &[u8] = black_box(&IMAGE.0);

    let Ok(image) = Image::new_metal(image) else {
        host.fail(b"calibration image refused\n")
    };
    let Ok(mut reader) = MetalReader::new(&image) else {
        host.fail(b"not a metal image\n")
    };

    for (i, input) in (0u32..).zip(black_box(&script::METAL)) {
        let r = reader.read(input);
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
