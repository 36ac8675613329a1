//! A whole level firmware: a capacitive probe with a reference electrode
//! (the companion channel) in a coolant tank, level and volume.
//!
//! Copy this file to start a product; `proximity.rs` explains the steps
//! (image in flash pages of its own, validate, build, read). What a level unit
//! adds:
//!
//! - each reading takes two count pairs over the same gate: the probe's
//!   and the reference electrode's, which is always submerged; the level
//!   comes from the ratio of their shifts, so it does not move when the
//!   liquid's permittivity drifts with temperature;
//! - the image's volume table turns the level (0.1 mm) into a volume
//!   (mL): `volume` in the reading (`LevelReading`);
//! - a reference electrode out of the liquid, or a missing reference pair,
//!   is a sensor fault.
//! - the reader is built for a unit with a reference electrode
//!   (`LevelReader::with_electrodes(&image, WithReference)`), so the
//!   probe-only reading path is not linked (about 570 bytes of flash less
//!   than `LevelReader::new`, which reads either arrangement) and an image
//!   without a reference electrode is refused at start-up. For a unit
//!   with a probe only, pass `ProbeOnly` instead.
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
use lc_core::reader::{LevelReader, WithReference};
use lc_unit::{report, script, Aligned, Host};

/// The calibration image, in flash pages of its own (see `proximity.rs`).
#[link_section = ".calibration"]
#[used]
static IMAGE: Aligned<[u8; IMAGE_LEN]> = Aligned(*include_bytes!("../../data/level.lcim"));
const IMAGE_LEN: usize = include_bytes!("../../data/level.lcim").len();

#[entry]
fn main() -> ! {
    let mut host = Host::open();
    host.write(b"boot\n");
    let image: &[u8] = black_box(&IMAGE.0);

    let Ok(image) = Image::new_level(image) else {
        host.fail(b"calibration image refused\n")
    };
    // Used in place (see `proximity.rs`, step 3); built for this unit's
    // electrodes, a probe and a reference electrode.
    let mut built = LevelReader::with_electrodes(&image, WithReference);
    let reader = match &mut built {
        Ok(reader) => reader,
        Err(_) => host.fail(b"calibration image refused\n"),
    };

    for (i, gate) in (0u32..).zip(black_box(&script::LEVEL_GATES)) {
        let r = reader.read(&gate.input());
        report::level(&mut host, i, &r);
    }
    host.finish()
}
