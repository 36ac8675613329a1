//! A whole proximity firmware: the calibration image in flash, validated
//! once, a proximity reader built from it, then one reading per count pair.
//!
//! Copy this file to start a product. The steps:
//!
//! 1. **The image.** `lc-host calibrate` writes one image per unit
//!    (`DEMO-01-0001.lcim`, docs/image-format.md); the end-of-line rig
//!    writes it into the unit's flash. Here it is linked into a section of
//!    its own, `.calibration`, which the linker script (build.rs) places at
//!    the start of pages of its own, 0x7000 (the last 4 KiB of a 32 KiB
//!    part): the rig can rewrite them without touching the program.
//!    `include_bytes!` puts a development image there, 4-byte aligned
//!    ([`Aligned`]: the image is read in place by words); a product may
//!    ship them erased and let the rig write the image. (Without a section
//!    of its own, `lc_core::include_image!` embeds an image aligned.)
//! 2. **Validate.** `Image::new_proximity` checks the magic, format
//!    version, length, CRC-32, every field and every curve segment, in
//!    place: the image stays in flash. (`Image::new` accepts every kind
//!    and links every kind's checks; this firmware runs one.) A unit whose image fails must not read:
//!    report it and stop (here: exit with a failure status).
//! 3. **Build the reader.** `ProximityReader::new` checks the image's
//!    kind and borrows its curve from flash; nothing is derived. Use the
//!    reader where it was built (`match &mut built`): moved out of its
//!    `Result`, it would be copied.
//! 4. **Read.** Per gate, the timer capture gives a count pair (sensor
//!    cycles, reference ticks) and the NTC a temperature; `read` turns them
//!    into a gap in micrometres with a status. A sensor fault is a status,
//!    never a panic. Here the registers' values come from a script
//!    (`lc_unit::script`: one row of a few bytes a gate, turned into an
//!    `Input` per reading, as the firmware would do with its capture
//!    registers) and the readings go to the host over semihosting.
//!
//! Memory (measured by `tests/firmware_budget.rs`, docs/performance.md):
//! everything lives in `main`'s frame; the stack sits at the bottom of RAM
//! (build.rs) so an overflow faults instead of corrupting the statics.
//! With less RAM to spare, run the steps in functions of their own, so
//! the stack holds one step's working memory at a time (`metal.rs`).
//!
//! **Not a safety-rated component.** A reading that protects people or
//! machines needs a safety function designed to the applicable standards.
#![no_std]
#![no_main]

use core::hint::black_box;
use cortex_m_rt::entry;
use lc_core::image::Image;
use lc_core::reader::ProximityReader;
use lc_unit::{report, script, Aligned, Host};

/// The calibration image, in flash pages of its own (see step 1).
#[link_section = ".calibration"]
#[used]
static IMAGE: Aligned<[u8; IMAGE_LEN]> = Aligned(*include_bytes!("../../data/proximity.lcim"));
const IMAGE_LEN: usize = include_bytes!("../../data/proximity.lcim").len();

#[entry]
fn main() -> ! {
    let mut host = Host::open();
    host.write(b"boot\n");
    // The bytes are read from flash at run time: `black_box` keeps the
    // optimizer from using what it knows of this build's image.
    let image: &[u8] = black_box(&IMAGE.0);

    let Ok(image) = Image::new_proximity(image) else {
        host.fail(b"calibration image refused\n")
    };
    // The reader is used in place, by reference: moving it out of the
    // `Result` (`let Ok(mut reader) = …`) would copy it into a second
    // slot of the frame (and may call `memcpy`).
    let mut built = ProximityReader::new(&image);
    let reader = match &mut built {
        Ok(reader) => reader,
        Err(_) => host.fail(b"calibration image refused\n"),
    };

    for (i, gate) in (0u32..).zip(black_box(&script::PROXIMITY_GATES)) {
        let r = reader.read(&gate.input());
        report::proximity(&mut host, i, &r);
    }
    host.finish()
}
