//! A sample of the fault campaign's rows (docs/faults.md) through the
//! readers of the committed images: each kind of fault the campaign
//! injects, as the unit's front-end hands it to `Reader::read`. The `faults`
//! binary prints the statuses on the emulated cores; `tests/emulator.rs`
//! runs this very file on the host and compares the text byte for byte.
//!
//! Each row gets a new reader (built from the image in flash) and is read
//! `repeat` times in a row (a frozen counter needs the readers' default
//! limit of identical pairs); the line shows the first reading that was a
//! sensor fault and the last reading's status.
//!
//! **Not a safety-rated component.** A test table, not a measurement anyone
//! should rely on for safety.

use core::fmt::{self, Write};

use crate::readout::{IMAGES, LEVEL, METAL, PROXIMITY_32, PROXIMITY_TC};
use lc_core::counting::CountPair;
use lc_core::image::Image;
use lc_core::reader::{Input, Reader, Status, DEFAULT_FROZEN_LIMIT};
use lc_core::temperature::CentiCelsius;

/// One sampled row.
#[derive(Clone, Copy, Debug)]
pub struct Row {
    /// Index into [`IMAGES`].
    pub unit: usize,
    /// The campaign's label, and what the row stands for.
    pub tag: &'static str,
    /// The reader's input.
    pub input: Input,
    /// Readings in a row.
    pub repeat: u16,
}

const GATE: u32 = 16_384;

const fn input(ticks: u32, companion: Option<u32>, t: Option<i32>) -> Input {
    Input {
        pair: CountPair::new(GATE, ticks),
        companion: match companion {
            Some(c) => Some(CountPair::new(GATE, c)),
            None => None,
        },
        temperature: match t {
            Some(c) => Some(CentiCelsius(c)),
            None => None,
        },
        ring_count: None,
    }
}

const fn row(unit: usize, tag: &'static str, input: Input) -> Row {
    Row {
        unit,
        tag,
        input,
        repeat: 1,
    }
}

const fn frozen(unit: usize, tag: &'static str, input: Input) -> Row {
    Row {
        unit,
        tag,
        input,
        repeat: DEFAULT_FROZEN_LIMIT as u16,
    }
}

/// The demo proximity unit with its temperature fit at 2.5 mm, 25 °C.
const PROX_TICKS: u32 = 131_707;
/// The level unit at 390 mm and 200 mm, coolant at 20 °C; its reference
/// electrode wet (20 °C), with 10 % and 1 % of that shift left, and its
/// rest (dry).
const LEVEL_390: u32 = 660_258;
const LEVEL_200: u32 = 606_090;
const REF_WET: u32 = 548_016;
const REF_10_PERCENT: u32 = 510_613;
const REF_1_PERCENT: u32 = 506_770;

/// The sample: every fault kind of the campaign, with a clean reading of
/// each unit beside it.
pub const ROWS: &[Row] = &[
    row(PROXIMITY_TC, "clean", input(PROX_TICKS, None, Some(2_500))),
    frozen(PROXIMITY_TC, "stuck", input(PROX_TICKS, None, Some(2_500))),
    Row {
        repeat: DEFAULT_FROZEN_LIMIT as u16 - 1,
        ..row(
            PROXIMITY_TC,
            "stuck_onset",
            input(PROX_TICKS, None, Some(2_500)),
        )
    },
    row(PROXIMITY_TC, "ntc_open", input(PROX_TICKS, None, None)),
    row(
        PROXIMITY_TC,
        "ntc_short",
        input(PROX_TICKS, None, Some(52_743)),
    ),
    row(
        PROXIMITY_TC,
        "temp_spike-273.15",
        input(PROX_TICKS, None, Some(-27_315)),
    ),
    row(
        PROXIMITY_TC,
        "temp_spike1e7",
        input(PROX_TICKS, None, Some(1_000_000_000)),
    ),
    row(
        PROXIMITY_TC,
        "temp_domain_end",
        input(PROX_TICKS, None, Some(30_000)),
    ),
    row(
        PROXIMITY_TC,
        "channel_swap-level-counts",
        input(LEVEL_200, Some(REF_WET), Some(2_000)),
    ),
    row(PROXIMITY_32, "clean", input(125_000, None, Some(2_500))),
    row(PROXIMITY_32, "ntc_open", input(125_000, None, None)),
    frozen(PROXIMITY_32, "stuck", input(125_000, None, Some(2_500))),
    row(LEVEL, "clean", input(LEVEL_390, Some(REF_WET), Some(2_000))),
    frozen(LEVEL, "stuck", input(LEVEL_200, Some(REF_WET), Some(2_000))),
    row(LEVEL, "ntc_open", input(LEVEL_200, Some(REF_WET), None)),
    row(
        LEVEL,
        "temp_spike1000",
        input(LEVEL_200, Some(REF_WET), Some(100_000)),
    ),
    row(
        LEVEL,
        "reference_drying-10%",
        input(LEVEL_390, Some(REF_10_PERCENT), Some(2_000)),
    ),
    row(
        LEVEL,
        "reference_drying-1%",
        input(LEVEL_390, Some(REF_1_PERCENT), Some(2_000)),
    ),
    row(
        LEVEL,
        "channel_swap-proximity-counts",
        input(PROX_TICKS, None, Some(2_500)),
    ),
    // The metal unit has no drift model: its temperature is not checked.
    row(METAL, "clean-no-drift-model", input(139_542, None, None)),
    row(
        METAL,
        "temp_spike-no-drift-model",
        input(139_542, None, Some(1_000_000_000)),
    ),
    frozen(METAL, "stuck", input(139_542, None, Some(2_500))),
];

/// The readings of one row: (first reading that was a sensor fault, from
/// 1; the last reading's status and output). `None` when the image does
/// not build its reader.
pub fn read(row: &Row) -> Option<(Option<u16>, Status, i32)> {
    let image = Image::new(IMAGES.get(row.unit)?.bytes).ok()?;
    let mut reader = Reader::new(&image).ok()?;
    let mut first = None;
    let mut last = None;
    for i in 1..=row.repeat {
        let r = reader.read(&row.input);
        if first.is_none() && matches!(r.status(), Status::SensorFault(_)) {
            first = Some(i);
        }
        last = Some((r.status(), r.output()));
    }
    let (status, value) = last?;
    Some((first, status, value))
}

/// Prints one line per row.
pub fn run(out: &mut impl Write) -> fmt::Result {
    writeln!(
        out,
        "# lc-core fault sample: unit, campaign label, readings in a row, first sensor fault, last status"
    )?;
    for r in ROWS {
        let name = IMAGES.get(r.unit).map_or("?", |i| i.name);
        match read(r) {
            Some((first, status, value)) => {
                write!(out, "{name} {} n={} first_fault=", r.tag, r.repeat)?;
                match first {
                    Some(i) => write!(out, "{i}")?,
                    None => out.write_str("-")?,
                }
                writeln!(out, " status={status:?} value={value}")?;
            }
            None => writeln!(out, "{name} {} no reader", r.tag)?,
        }
    }
    writeln!(out, "# end faults")
}
