//! lc-core's readings of a unit firmware's script, in the firmwares' line
//! format (`report::reading`, examples/unit-firmware/src/report.rs): what
//! the C API's host test (`lc-core/capi/tests/host_c.rs`) and the C
//! firmwares (`tests/c_firmware.rs`) must print. Each includes this file
//! beside `report`.

use lc_core::image::{Image, ReaderKind};
use lc_core::reader::{Input, LevelReader, MetalReader, ProximityReader, Status};

use crate::report;

/// The lines `report::reading` writes for the reader of `image`'s kind
/// reading `inputs` in order.
pub fn reading_lines(image: &Image<'_>, inputs: &[Input]) -> String {
    match image.kind() {
        ReaderKind::Proximity => {
            let mut r = ProximityReader::new(image).expect("a proximity image");
            lines(inputs, |input| {
                let x = r.read(input);
                (x.gap, None, x.shift.raw_q40(), x.status)
            })
        }
        ReaderKind::Level => {
            let mut r = LevelReader::new(image).expect("a level image");
            lines(inputs, |input| {
                let x = r.read(input);
                (x.level, x.volume, x.axis.raw_q40(), x.status)
            })
        }
        ReaderKind::Metal => {
            let mut r = MetalReader::new(image).expect("a metal image");
            lines(inputs, |input| {
                let x = r.read(input);
                (x.class as i32, x.ring_drop, x.delta.raw_q40(), x.status)
            })
        }
    }
}

/// One line per input: `read` gives its value, secondary value, Q.40
/// curve input and status.
fn lines(
    inputs: &[Input],
    mut read: impl FnMut(&Input) -> (i32, Option<i32>, i64, Status),
) -> String {
    let mut out = Text(String::new());
    for (i, input) in (0u32..).zip(inputs) {
        let (value, secondary, q40, status) = read(input);
        report::reading(&mut out, i, value, secondary, q40, status);
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
