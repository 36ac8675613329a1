//! lc-core's readings of a unit firmware's script, in the firmwares' line
//! format (examples/unit-firmware/src/report.rs): what the Rust unit
//! firmwares (`tests/firmware_budget.rs`), the C API's host test
//! (`lc-core/capi/tests/host_c.rs`) and the C firmwares
//! (`tests/c_firmware.rs`) must print. Each includes this file beside
//! `report`.

use lc_core::image::{Image, ReaderKind};
use lc_core::reader::{Input, LevelReader, MetalReader, ProximityReader};

use crate::report;

/// The lines the unit firmware of `image`'s kind prints (`report::proximity`,
/// `level` or `metal`, as the firmwares call them) for its reader reading
/// `inputs` in order.
pub fn reading_lines(image: &Image<'_>, inputs: &[Input]) -> String {
    let mut out = Text(String::new());
    match image.kind() {
        ReaderKind::Proximity => {
            let mut r = ProximityReader::new(image).expect("a proximity image");
            for (i, input) in (0u32..).zip(inputs) {
                report::proximity(&mut out, i, &r.read(input));
            }
        }
        ReaderKind::Level => {
            let mut r = LevelReader::new(image).expect("a level image");
            for (i, input) in (0u32..).zip(inputs) {
                report::level(&mut out, i, &r.read(input));
            }
        }
        ReaderKind::Metal => {
            let mut r = MetalReader::new(image).expect("a metal image");
            for (i, input) in (0u32..).zip(inputs) {
                report::metal(&mut out, i, &r.read(input));
            }
        }
    }
    out.0
}

/// The lines as text.
struct Text(String);

impl report::Sink for Text {
    fn put(&mut self, bytes: &[u8]) {
        self.0
            .push_str(std::str::from_utf8(bytes).expect("ASCII pieces"));
    }
}
