//! The whole firmware readout of `lc-core`, from calibration image bytes to
//! readings, over fixed tables of inputs.
//!
//! ```text
//! image bytes ─► Image::new ─► Reader::new
//! count pairs, companion pairs, ring counts ─┐
//! NTC ADC code ─► NtcBeta::convert ──────────┴► Reader::read ─► Reading
//! proximity values ─► Median ─► Ema ─► Detector
//! ```
//!
//! Like `pipeline.rs`, this one file is compiled twice: into the firmware
//! (`src/bin/pipeline.rs` prints [`run`] over semihosting on an emulated
//! Cortex-M0 and Cortex-M4F) and into the host tests `tests/emulator.rs` and
//! `tests/firmware_images.rs` (through `#[path]`); the emulator test asserts
//! that both outputs are equal byte for byte. It uses `core` and `lc-core`
//! only, and no float: every printed figure is an exact integer or the
//! `Debug` name of a value.
//!
//! The calibration images are committed binary files (`data/*.lcim`),
//! embedded 4-byte aligned with `lc_core::include_image!` and read in place
//! from flash; `tests/firmware_images.rs` generates them
//! from calibrations built in Rust and fails when a committed file is stale.
//! The malformed images ([`MALFORMED`]) are made here, in RAM, by editing a
//! copy of a good one ([`Edit`]), as flash corruption would.
//!
//! Scenario (invented; the demo scenario of the design notes):
//!
//! - `demo-proximity`: a 20 mm PCB coil with 100 pF, 48 MHz reference,
//!   16 384-cycle reciprocal gate, rest 16384:139542; an aluminium plate
//!   from 0.5 to 8 mm; gap in micrometres.
//! - `demo-proximity-tc`: the same unit with a fitted temperature model (its
//!   L·C rises by 40 ppm/K), at 2.5 mm from −40 to +150 °C.
//! - `demo-level`: a capacitive level probe in a horizontal cylindrical
//!   coolant tank (400 mm diameter, 1 m long) with a reference electrode at
//!   the bottom (companion channel): level in 0.1 mm, volume in millilitres
//!   from a cubic table. The coolant's permittivity falls by 0.4 %/K; the
//!   probe / reference ratio cancels it, the temperature model takes out
//!   the tank capacitors' 30 ppm/K.
//! - `demo-metal`: the demo coil as a metal detector with ring-down: steel
//!   (L up, lossy), aluminium (L down, lossy), a hand (L up, no loss).
//! - `demo-proximity-32`: a DEMO-01 unit as `lc-host calibrate` wrote it:
//!   a 32-node monotone cubic curve and a fitted drift model.
//!
//! Temperatures come from the board's NTC ([`BOARD`]: 10 kΩ, B 3950 K, on a
//! 12-bit ADC with a 10 kΩ series resistor), as ADC codes. A code the NTC
//! converter refuses gives no temperature, and the line shows why: a unit
//! with a drift model then reads a sensor fault (`TemperatureMissing`), one
//! without reads as before.
//!
//! **Not a safety-rated component.** These readings are a test table, not a
//! measurement anyone should rely on for safety.
//!
//! [`digest`] folds the same results into a 32-bit FNV-1a hash without
//! `core::fmt`, for the panic-freedom proof (`src/bin/panic_proof.rs`).

use core::convert::Infallible;
use core::fmt::{self, Write};
use core::hash::{Hash, Hasher};

use lc_core::counting::CountPair;
use lc_core::detector::{Detector, DetectorConfig, DetectorError, Event, Polarity, Presence};
use lc_core::filter::{Ema, EmaError, Median};
use lc_core::image::layout::{self, HEADER_LEN, NODE_LEN, SEGMENT_LEN_CUBIC, SEGMENT_LEN_LINEAR};
use lc_core::image::{Image as CheckedImage, ImageError, ReaderKind, CRC32};
use lc_core::reader::{Input, Reader, ReaderError, Reading};
use lc_core::temperature::{
    CentiCelsius, ConfigError, Divider, NtcBeta, NtcPosition, TemperatureError,
};

/// A committed calibration image.
#[derive(Clone, Copy, Debug)]
pub struct Image {
    /// Its name (the file's, without `.lcim`).
    pub name: &'static str,
    /// Its bytes.
    pub bytes: &'static [u8],
}

/// Index of the demo proximity unit in [`IMAGES`].
pub const PROXIMITY: usize = 0;
/// Index of the demo proximity unit with a temperature model.
pub const PROXIMITY_TC: usize = 1;
/// Index of the level unit.
pub const LEVEL: usize = 2;
/// Index of the metal unit.
pub const METAL: usize = 3;
/// Index of the 32-node cubic proximity unit from `lc-host calibrate`.
pub const PROXIMITY_32: usize = 4;

/// The committed images, in the order of the indices above, each 4-byte
/// aligned in flash.
pub static IMAGES: [Image; 5] = [
    Image {
        name: "demo-proximity",
        bytes: lc_core::include_image!("../data/demo-proximity.lcim"),
    },
    Image {
        name: "demo-proximity-tc",
        bytes: lc_core::include_image!("../data/demo-proximity-tc.lcim"),
    },
    Image {
        name: "demo-level",
        bytes: lc_core::include_image!("../data/demo-level.lcim"),
    },
    Image {
        name: "demo-metal",
        bytes: lc_core::include_image!("../data/demo-metal.lcim"),
    },
    Image {
        name: "demo-proximity-32",
        bytes: lc_core::include_image!("../data/demo-proximity-32.lcim"),
    },
];

/// What the board adds to a calibration: its NTC and the proximity filter
/// chain. Firmware constants, not part of the image.
#[derive(Clone, Copy, Debug)]
pub struct Board {
    /// NTC resistance at 25 °C, ohms.
    pub ntc_r25_ohm: u32,
    /// NTC B constant, kelvin.
    pub ntc_beta_k: u32,
    /// ADC resolution, bits.
    pub adc_bits: u32,
    /// Series resistor from the ADC reference to the NTC, ohms (the NTC on
    /// the low side).
    pub series_ohm: u32,
    /// Weight exponent of the proximity EMA (weight 2^-k).
    pub ema_k: u32,
    /// The proximity presence detector on the filtered gap (micrometres).
    pub detector: DetectorConfig<i32>,
}

/// The demo board: 10 kΩ B 3950 K NTC, 12-bit ADC, 10 kΩ series resistor;
/// median of 3, EMA weight 1/2, target present at a gap of 2 mm or less
/// (two readings in a row), gone at 3 mm or more (two readings).
pub const BOARD: Board = Board {
    ntc_r25_ohm: 10_000,
    ntc_beta_k: 3_950,
    adc_bits: 12,
    series_ohm: 10_000,
    ema_k: 1,
    detector: DetectorConfig {
        polarity: Polarity::Falling,
        enter_threshold: 2_000,
        leave_threshold: 3_000,
        enter_samples: 2,
        leave_samples: 2,
    },
};

impl Board {
    /// The NTC converter.
    pub fn ntc(&self) -> Result<NtcBeta, ConfigError> {
        let divider = Divider::new(self.adc_bits, self.series_ohm, NtcPosition::LowSide)?;
        NtcBeta::new(self.ntc_r25_ohm, self.ntc_beta_k, divider)
    }

    /// A fresh proximity filter chain.
    pub fn chain(&self) -> Result<Chain, ChainError> {
        Ok(Chain {
            median: Median::new(),
            ema: Ema::new(self.ema_k).map_err(ChainError::Ema)?,
            detector: Detector::new(self.detector).map_err(ChainError::Detector)?,
        })
    }
}

/// Why the filter chain could not be built.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum ChainError {
    /// The EMA weight was refused.
    Ema(EmaError),
    /// The detector configuration was refused.
    Detector(DetectorError),
}

/// Median of 3, then EMA, then the presence detector, on proximity values.
#[derive(Clone, Debug)]
pub struct Chain {
    median: Median<i32, 3>,
    ema: Ema<i32>,
    detector: Detector<i32>,
}

/// What the filter chain made of one value.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct Filtered {
    /// Median of the last three values.
    pub median: i32,
    /// EMA of the medians.
    pub ema: i32,
    /// Presence after this value.
    pub presence: Presence,
    /// The switch this value caused.
    pub event: Option<Event>,
}

impl Chain {
    /// Feeds one value.
    pub fn update(&mut self, value: i32) -> Filtered {
        let median = self.median.push(value);
        let ema = self.ema.update(median);
        let event = self.detector.update(ema);
        Filtered {
            median,
            ema,
            presence: self.detector.presence(),
            event,
        }
    }
}

/// One reading's inputs, for the unit at [`IMAGES`]`[unit]`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct Row {
    /// Index into [`IMAGES`].
    pub unit: usize,
    /// Label on the output line.
    pub tag: &'static str,
    /// The sensor channel's count pair.
    pub pair: CountPair,
    /// The companion channel's (reference electrode's) count pair.
    pub companion: Option<CountPair>,
    /// The NTC's ADC code.
    pub ntc_code: Option<u32>,
    /// Ring count after the gate (metal).
    pub ring: Option<u16>,
}

/// Sensor cycles of every unit's reciprocal gate.
const GATE: u32 = 16_384;

impl Row {
    /// A reading of the unit's gate: `ticks` over 16 384 sensor cycles.
    const fn gated(unit: usize, tag: &'static str, ticks: u32) -> Self {
        Self::pair(unit, tag, GATE, ticks)
    }

    /// A reading of any count pair.
    const fn pair(unit: usize, tag: &'static str, cycles: u32, ticks: u32) -> Self {
        Self {
            unit,
            tag,
            pair: CountPair::new(cycles, ticks),
            companion: None,
            ntc_code: None,
            ring: None,
        }
    }

    /// With the NTC's ADC code.
    const fn ntc(mut self, code: u32) -> Self {
        self.ntc_code = Some(code);
        self
    }

    /// With the companion channel's ticks over the same gate.
    const fn companion(mut self, ticks: u32) -> Self {
        self.companion = Some(CountPair::new(GATE, ticks));
        self
    }

    /// With a companion count pair.
    const fn companion_pair(mut self, cycles: u32, ticks: u32) -> Self {
        self.companion = Some(CountPair::new(cycles, ticks));
        self
    }

    /// With a ring count.
    const fn ring(mut self, count: u16) -> Self {
        self.ring = Some(count);
        self
    }
}

/// NTC codes of the board: 25 °C (R = R_s), 20 °C, and extremes.
const C25: u32 = 2_048;
const C20: u32 = 2_278;

const fn prox(tag: &'static str, ticks: u32) -> Row {
    Row::gated(PROXIMITY, tag, ticks).ntc(C25)
}

const fn tc(tag: &'static str, ticks: u32, code: u32) -> Row {
    Row::gated(PROXIMITY_TC, tag, ticks).ntc(code)
}

const fn level(tag: &'static str, probe: u32, reference: u32, code: u32) -> Row {
    Row::gated(LEVEL, tag, probe).companion(reference).ntc(code)
}

const fn metal(tag: &'static str, ticks: u32, ring: u16) -> Row {
    Row::gated(METAL, tag, ticks).ring(ring).ntc(C25)
}

const fn prox32(tag: &'static str, ticks: u32, code: u32) -> Row {
    Row::gated(PROXIMITY_32, tag, ticks).ntc(code)
}

/// Steel, aluminium and a hand in front of the metal unit: shifts of
/// +0.01, −0.01 and +0.004; ring counts 24 at rest, 19 (steel) and 20
/// (aluminium).
const STEEL: u32 = 140_238;
const ALUMINIUM: u32 = 138_843;
const HAND: u32 = 139_821;
const BACKGROUND: u32 = 139_544;

/// The readings, per unit in order (the metal reader keeps state).
///
/// Count pairs follow the scenario: proximity ticks are 139 542·√(1 + s)
/// for the demo curve's shift at each gap; the temperature rows add the
/// unit's 40 ppm/K L·C drift; level rows come from the probe and reference
/// capacitances at each level and temperature (tests/firmware_images.rs
/// checks what they read).
pub const ROWS: &[Row] = &[
    // The plate approaches from beyond 8 mm to 0.3 mm, 25 °C.
    prox("rest", 139_542),
    prox("far", 138_843),
    prox("7mm", 137_671),
    prox("5mm", 136_601),
    prox("3mm", 132_879),
    prox("2mm", 128_761),
    // One wild but plausible reading (8 mm): the median removes it.
    prox("spike", 138_203),
    prox("1.5mm", 125_746),
    prox("1mm", 122_656),
    prox("0.7mm", 117_705),
    prox("0.5mm", 114_285),
    prox("0.3mm", 108_089),
    // Sensor faults: no value, the filters hold.
    Row::pair(PROXIMITY, "stalled", 0, 114_285).ntc(C25),
    prox("stuck-reference", 0),
    prox("too-fast", 30_000),
    prox("too-slow", 800_000),
    Row::pair(PROXIMITY, "few-cycles", 63, 537).ntc(C25),
    // A gate one cycle short: the division path.
    Row::pair(PROXIMITY, "short-gate-1mm", 16_383, 122_649).ntc(C25),
    // NTC faults: the unit has no model, the value is the same.
    prox("ntc-shorted", 122_656).ntc(0),
    prox("ntc-open", 122_656).ntc(4_095),
    prox("adc-overrange", 122_656).ntc(4_096),
    prox("ntc-too-hot", 122_656).ntc(1),
    // The plate leaves.
    prox("back-2mm", 128_761),
    prox("back-3mm", 132_879),
    prox("back-5mm", 136_601),
    prox("back-8mm", 138_203),
    prox("back-rest", 139_542),
    // The fitted unit at 2.5 mm from −40 °C to +150 °C, and beyond.
    tc("2.5mm-40C", 131_536, 3_997),
    tc("2.5mm0C", 131_641, 3_157),
    tc("2.5mm25C", 131_707, C25),
    tc("2.5mm60C", 131_799, 816),
    tc("2.5mm85C", 131_865, 401),
    tc("2.5mm150C", 132_036, 80),
    tc("2.5mm150C-ntc-open", 132_036, 4_095),
    tc("2.5mm290C", 132_404, 8),
    tc("2.5mm-84C", 131_420, 4_094),
    tc("0.5mm150C", 114_570, 80),
    tc("8mm-40C", 138_023, 3_997),
    tc("ntc-too-hot", 131_707, 1),
    // Level: probe and reference electrode ticks, coolant at 20 °C.
    level("30mm", 551_624, 548_016, C20),
    level("100mm", 574_844, 548_016, C20),
    level("200mm", 606_090, 548_016, C20),
    level("300mm", 635_370, 548_016, C20),
    level("390mm", 660_258, 548_016, C20),
    // Hot and cold coolant: permittivity −24 % / +16 %, L·C drift.
    level("200mm-hot", 591_718, 538_791, 462),
    level("200mm-cold", 615_456, 554_062, 3_741),
    level("100mm-60C", 569_923, 541_887, 816),
    level("200mm-hot-ntc-open", 591_718, 538_791, 4_095),
    // Below the reference electrode: no ratio.
    level("drained", 541_292, 506_332, C20),
    Row::gated(LEVEL, "no-reference-pair", 606_090).ntc(C20),
    Row::gated(LEVEL, "reference-stalled", 606_090)
        .companion_pair(0, 548_016)
        .ntc(C20),
    Row::gated(LEVEL, "reference-too-slow", 606_090)
        .companion(1_600_000)
        .ntc(C20),
    // A coated probe reads beyond full; a probe below its rest below empty.
    level("coated-probe", 680_393, 548_016, C20),
    level("probe-below-rest", 540_750, 548_016, C20),
    Row::pair(LEVEL, "probe-stalled", 0, 606_090)
        .companion(548_016)
        .ntc(C20),
    // Metal: learn the background.
    metal("bg-1", 139_542, 24),
    metal("bg-2", 139_543, 24),
    metal("bg-3", 139_543, 24),
    metal("bg-4", BACKGROUND, 24),
    // A steel screw: L up, lossy. Detected on the third reading.
    metal("steel-1", STEEL, 19),
    metal("steel-2", STEEL, 19),
    metal("steel-3", STEEL, 19),
    metal("steel-4", STEEL, 19),
    metal("clear-1", BACKGROUND, 24),
    metal("clear-2", BACKGROUND, 24),
    metal("clear-3", BACKGROUND, 24),
    // An aluminium part: L down, lossy.
    metal("aluminium-1", ALUMINIUM, 20),
    metal("aluminium-2", ALUMINIUM, 20),
    metal("aluminium-3", ALUMINIUM, 20),
    metal("clear-4", BACKGROUND, 24),
    metal("clear-5", BACKGROUND, 24),
    metal("clear-6", BACKGROUND, 24),
    // A hand: L up, no loss. Not metal.
    metal("hand-1", HAND, 24),
    metal("hand-2", HAND, 24),
    metal("hand-3", HAND, 24),
    metal("hand-4", HAND, 24),
    // Without a ring count there is no loss signal: not metal.
    Row::gated(METAL, "steel-no-ring", STEEL).ntc(C25),
    Row::pair(METAL, "stalled", 0, STEEL).ring(0).ntc(C25),
    metal("clear-7", BACKGROUND, 24),
    metal("clear-8", BACKGROUND, 24),
    metal("clear-9", BACKGROUND, 24),
    metal("clear-10", BACKGROUND, 24),
    // Steel that stays: present for 12 readings, then the background.
    metal("steel-stays-1", STEEL, 19),
    metal("steel-stays-2", STEEL, 19),
    metal("steel-stays-3", STEEL, 19),
    metal("steel-stays-4", STEEL, 19),
    metal("steel-stays-5", STEEL, 19),
    metal("steel-stays-6", STEEL, 19),
    metal("steel-stays-7", STEEL, 19),
    metal("steel-stays-8", STEEL, 19),
    metal("steel-stays-9", STEEL, 19),
    metal("steel-stays-10", STEEL, 19),
    metal("steel-stays-11", STEEL, 19),
    metal("steel-stays-12", STEEL, 19),
    metal("steel-stays-13", STEEL, 19),
    metal("steel-stays-14", STEEL, 19),
    metal("steel-stays-15", STEEL, 19),
    metal("steel-gone", BACKGROUND, 24),
    // The 32-node cubic unit (rest about 139 508 ticks): from beyond its
    // far end to closer than its near end, across temperatures.
    prox32("rest", 139_508, C25),
    prox32("far", 138_900, C25),
    prox32("near-far-end", 137_200, C20),
    prox32("mid-1", 134_000, C25),
    prox32("mid-2", 130_000, 816),
    prox32("mid-3", 125_000, 3_157),
    prox32("mid-4", 118_000, 401),
    prox32("near", 110_000, C25),
    prox32("closer-than-near-end", 100_000, C25),
    prox32("ntc-open", 125_000, 4_095),
];

/// One edit of a copy of an image.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Edit {
    /// Keep the first n bytes.
    Keep(usize),
    /// Drop the last n bytes.
    Drop(usize),
    /// Set a byte.
    Set(usize, u8),
    /// Flip bits of a byte.
    Xor(usize, u8),
    /// Write a `u32`, little endian.
    SetU32(usize, u32),
    /// Extend to n bytes with a fill byte (an image in an erased flash
    /// page).
    PadTo(usize, u8),
    /// Recompute the trailing CRC over the bytes before it, so that the
    /// field checks are what fails.
    FixCrc,
    /// Hand the image over one byte past a word boundary.
    Misalign,
}

/// A malformed (or oddly stored) image: a committed image and its edits.
#[derive(Clone, Copy, Debug)]
pub struct Malformed {
    /// Label on the output line.
    pub name: &'static str,
    /// Index into [`IMAGES`] of the image edited.
    pub base: usize,
    /// The edits, in order.
    pub edits: &'static [Edit],
}

/// Room for the edited copy: the largest committed image is 1 128 bytes.
pub const SCRATCH_LEN: usize = 1_152;

/// Where the curve's nodes start, and node `i` (the image layout,
/// `lc_core::image::layout`).
const CURVE_AT: usize = HEADER_LEN;
const fn node(i: usize) -> usize {
    HEADER_LEN + i * NODE_LEN
}

/// Malformed images, each refused with its own error, and one accepted
/// (an image at the start of an erased flash page).
pub const MALFORMED: [Malformed; 18] = [
    Malformed {
        name: "empty",
        base: PROXIMITY,
        edits: &[Edit::Keep(0)],
    },
    Malformed {
        name: "header-only",
        base: PROXIMITY,
        edits: &[Edit::Keep(CURVE_AT)],
    },
    Malformed {
        name: "one-byte-short",
        base: PROXIMITY,
        edits: &[Edit::Drop(1)],
    },
    Malformed {
        name: "bad-magic",
        base: PROXIMITY,
        edits: &[Edit::Set(0, b'X')],
    },
    Malformed {
        name: "unknown-version",
        base: PROXIMITY,
        // The version after the current one.
        edits: &[Edit::Set(
            layout::VERSION.at,
            lc_core::image::VERSION as u8 + 1,
        )],
    },
    Malformed {
        name: "format-one",
        base: PROXIMITY,
        edits: &[Edit::Set(layout::VERSION.at, 1)],
    },
    Malformed {
        name: "length-mismatch",
        base: PROXIMITY,
        edits: &[Edit::Set(layout::CURVE_NODES.at, 4)],
    },
    Malformed {
        name: "bad-crc",
        base: PROXIMITY,
        edits: &[Edit::Xor(CURVE_AT + 3, 0x10)],
    },
    Malformed {
        name: "bad-crc-level",
        base: LEVEL,
        edits: &[Edit::Xor(300, 0x01)],
    },
    Malformed {
        name: "bad-kind",
        base: PROXIMITY,
        edits: &[Edit::Set(layout::KIND.at, 9), Edit::FixCrc],
    },
    Malformed {
        name: "curve-not-monotone",
        base: PROXIMITY,
        edits: &[Edit::SetU32(node(1) + layout::NODE_Y.at, 100), Edit::FixCrc],
    },
    Malformed {
        name: "segment-slope-off-by-one",
        // The first segment's slope mantissa, one unit off.
        base: PROXIMITY,
        edits: &[Edit::Xor(node(5) + layout::SEG_K.at, 0x01), Edit::FixCrc],
    },
    Malformed {
        name: "empty-band",
        base: PROXIMITY,
        edits: &[Edit::SetU32(layout::WINDOW_MAX_HZ.at, 1), Edit::FixCrc],
    },
    Malformed {
        name: "drift-too-large",
        base: PROXIMITY_TC,
        edits: &[Edit::SetU32(layout::DRIFT_B1.at, 0x7FFF_FFFF), Edit::FixCrc],
    },
    Malformed {
        name: "volume-tangent-sign",
        // The top byte of the ninth volume segment's c1 (its start tangent
        // D0): a falling tangent in a rising table.
        base: LEVEL,
        edits: &[
            Edit::Set(
                node(5)
                    + 4 * SEGMENT_LEN_LINEAR
                    + 17 * NODE_LEN
                    + 8 * SEGMENT_LEN_CUBIC
                    + layout::SEG_C1.at
                    + 3,
                0xFF,
            ),
            Edit::FixCrc,
        ],
    },
    Malformed {
        name: "metal-reserved",
        base: METAL,
        edits: &[Edit::Set(layout::RESERVED_93.at, 1), Edit::FixCrc],
    },
    Malformed {
        name: "misaligned",
        base: PROXIMITY,
        edits: &[Edit::Misalign],
    },
    Malformed {
        name: "flash-page",
        base: PROXIMITY,
        edits: &[Edit::PadTo(256, 0xFF)],
    },
];

/// A scratch buffer at a 4-byte aligned address, as an image in flash
/// would be, with one byte of room in front for [`Edit::Misalign`].
#[repr(C, align(4))]
pub struct Scratch(pub [u8; SCRATCH_LEN + 4]);

/// Applies `edits` to a copy of `image` in `buf`; returns the copy's
/// bytes (aligned unless an edit misaligned them). Edits beyond the
/// buffer are ignored.
pub fn edit<'b>(image: &[u8], edits: &[Edit], scratch: &'b mut Scratch) -> &'b [u8] {
    let buf = &mut scratch.0;
    let mut len = 0;
    for (d, s) in buf.iter_mut().zip(image) {
        *d = *s;
        len += 1;
    }
    let mut start = 0;
    for e in edits {
        match *e {
            Edit::Keep(n) => len = len.min(n),
            Edit::Drop(n) => len = len.saturating_sub(n),
            Edit::Set(at, b) => {
                if let Some(x) = buf.get_mut(at) {
                    *x = b;
                }
            }
            Edit::Xor(at, b) => {
                if let Some(x) = buf.get_mut(at) {
                    *x ^= b;
                }
            }
            Edit::SetU32(at, v) => put(buf, at, &v.to_le_bytes()),
            Edit::PadTo(n, b) => {
                let n = n.min(SCRATCH_LEN);
                if let Some(tail) = buf.get_mut(len..n) {
                    tail.fill(b);
                }
                len = len.max(n);
            }
            Edit::FixCrc => {
                let body = len.saturating_sub(4);
                let crc = CRC32.checksum(buf.get(..body).unwrap_or(&[]));
                put(buf, body, &crc.to_le_bytes());
            }
            Edit::Misalign => {
                buf.copy_within(0..len.min(SCRATCH_LEN), 1);
                start = 1;
            }
        }
    }
    scratch.0.get(start..start + len).unwrap_or(&[])
}

/// Writes `bytes` at `at`, as far as the buffer reaches.
fn put(buf: &mut [u8], at: usize, bytes: &[u8]) {
    if let Some(slot) = buf.get_mut(at..) {
        for (d, s) in slot.iter_mut().zip(bytes) {
            *d = *s;
        }
    }
}

/// One output line's content.
#[derive(Clone, Copy, Debug, Hash)]
pub enum Line<'a> {
    /// The board's converters.
    Board {
        /// The NTC converter, or why it was refused.
        ntc: Result<(), ConfigError>,
        /// The proximity filter chain, or why it was refused.
        chain: Result<(), ChainError>,
    },
    /// An image, parsed, and the reader built from it.
    Image {
        /// Its name.
        name: &'a str,
        /// For a malformed image, the image it was made from.
        from: Option<&'a str>,
        /// Its length in bytes.
        len: usize,
        /// What the validation made of it.
        parsed: &'a Result<CheckedImage<'a>, ImageError>,
        /// The reader built from the calibration.
        reader: Option<Result<ReaderKind, ReaderError>>,
        /// For an accepted malformed image: whether it validates to the
        /// same image as the one it was made from.
        same_as_base: Option<bool>,
    },
    /// One reading.
    Reading {
        /// The unit's image name.
        unit: &'a str,
        /// Row index in [`ROWS`].
        index: usize,
        /// The inputs.
        row: &'a Row,
        /// The NTC's temperature, or why there is none.
        temperature: Option<Result<CentiCelsius, TemperatureError>>,
        /// The reading.
        reading: Reading,
        /// The proximity filter chain's output (proximity units, no fault).
        filtered: Option<Filtered>,
    },
    /// A row whose unit has no reader.
    Refused {
        /// The unit's image name.
        unit: &'a str,
        /// Row index in [`ROWS`].
        index: usize,
        /// The inputs.
        row: &'a Row,
    },
}

/// Where the lines go: text for the host and semihosting, a hash for the
/// panic-freedom proof.
pub trait Sink {
    /// Why writing failed.
    type Error;
    /// Takes one line.
    fn line(&mut self, line: &Line<'_>) -> Result<(), Self::Error>;
}

/// Runs everything: the board, every image with its rows, every malformed
/// image.
pub fn walk<S: Sink>(
    board: &Board,
    images: &[Image],
    malformed: &[Malformed],
    rows: &[Row],
    sink: &mut S,
) -> Result<(), S::Error> {
    let ntc = board.ntc();
    let chain = board.chain();
    sink.line(&Line::Board {
        ntc: ntc.map(|_| ()),
        chain: chain.as_ref().map(|_| ()).map_err(|e| *e),
    })?;
    // Indices from a range zipped with the slice, not `enumerate`: its
    // counter has an overflow check the optimiser cannot always drop.
    for (u, image) in (0..images.len()).zip(images) {
        unit(u, image, rows, ntc.ok().as_ref(), chain.as_ref().ok(), sink)?;
    }
    for m in malformed {
        malformed_image(m, images, sink)?;
    }
    Ok(())
}

/// One unit: its image validated in place, its reader, its rows. Out of
/// line, so that its reader leaves the stack before the next unit's.
///
/// The image stays in flash: [`CheckedImage::new`] checks it once and the
/// reader borrows its curves from it; nothing kilobyte-sized is built or
/// moved.
#[inline(never)]
fn unit<S: Sink>(
    u: usize,
    image: &Image,
    rows: &[Row],
    ntc: Option<&NtcBeta>,
    chain: Option<&Chain>,
    sink: &mut S,
) -> Result<(), S::Error> {
    let parsed = CheckedImage::new(image.bytes);
    let line = |reader| Line::Image {
        name: image.name,
        from: None,
        len: image.bytes.len(),
        parsed: &parsed,
        reader,
        same_as_base: None,
    };
    let mut built = match &parsed {
        Ok(checked) => Reader::new(checked),
        Err(_) => {
            sink.line(&line(None))?;
            return refused(u, image, rows, sink);
        }
    };
    sink.line(&line(Some(
        built.as_ref().map(Reader::kind).map_err(|e| *e),
    )))?;
    let reader = match &mut built {
        Ok(reader) => reader,
        Err(_) => return refused(u, image, rows, sink),
    };
    let mut chain = match reader.kind() {
        ReaderKind::Proximity => chain.cloned(),
        _ => None,
    };
    for (index, row) in (0..rows.len()).zip(rows).filter(|(_, r)| r.unit == u) {
        let temperature = match (row.ntc_code, ntc) {
            (Some(code), Some(ntc)) => Some(ntc.convert(code)),
            _ => None,
        };
        let input = Input {
            pair: row.pair,
            companion: row.companion,
            temperature: temperature.and_then(Result::ok),
            ring_count: row.ring,
        };
        let reading = reader.read(&input);
        let filtered = match (&mut chain, reading) {
            (Some(chain), Reading::Proximity(p))
                if !matches!(p.status, lc_core::reader::Status::SensorFault(_)) =>
            {
                Some(chain.update(p.gap))
            }
            _ => None,
        };
        sink.line(&Line::Reading {
            unit: image.name,
            index,
            row,
            temperature,
            reading,
            filtered,
        })?;
    }
    Ok(())
}

/// The rows of a unit without a reader.
fn refused<S: Sink>(u: usize, image: &Image, rows: &[Row], sink: &mut S) -> Result<(), S::Error> {
    for (index, row) in (0..rows.len()).zip(rows).filter(|(_, r)| r.unit == u) {
        sink.line(&Line::Refused {
            unit: image.name,
            index,
            row,
        })?;
    }
    Ok(())
}

/// One malformed image: edited in RAM, parsed, and compared with its base
/// when accepted.
#[inline(never)]
fn malformed_image<S: Sink>(m: &Malformed, images: &[Image], sink: &mut S) -> Result<(), S::Error> {
    let base = images.get(m.base);
    let mut scratch = Scratch([0u8; SCRATCH_LEN + 4]);
    let bytes = edit(base.map_or(&[], |b| b.bytes), m.edits, &mut scratch);
    let len = bytes.len();
    let parsed = CheckedImage::new(bytes);
    let same_as_base = match (&parsed, base) {
        (Ok(image), Some(b)) => Some(CheckedImage::new(b.bytes).as_ref() == Ok(image)),
        _ => None,
    };
    sink.line(&Line::Image {
        name: m.name,
        from: Some(base.map_or("?", |b| b.name)),
        len,
        parsed: &parsed,
        reader: None,
        same_as_base,
    })
}

/// The text sink: one line of text per [`Line`].
pub struct Text<'w, W: Write>(pub &'w mut W);

/// An optional value, or `-`.
struct Opt<T>(Option<T>);

impl<T: fmt::Display> fmt::Display for Opt<T> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match &self.0 {
            Some(v) => fmt::Display::fmt(v, f),
            None => f.write_str("-"),
        }
    }
}

/// A result as its value, or its error's `Debug` name.
struct Show<T, E>(Result<T, E>);

impl<T: fmt::Display, E: fmt::Debug> fmt::Display for Show<T, E> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match &self.0 {
            Ok(v) => fmt::Display::fmt(v, f),
            Err(e) => fmt::Debug::fmt(e, f),
        }
    }
}

/// A count pair as `cycles/ticks`.
struct PairText(CountPair);

impl fmt::Display for PairText {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}/{}", self.0.cycles, self.0.ticks)
    }
}

fn write_image(out: &mut impl Write, image: &CheckedImage<'_>) -> fmt::Result {
    let window = image.window();
    let drift = image.drift();
    let output = image.output();
    write!(
        out,
        "serial={} kind={:?} ref_hz={} gate={} band_hz={}..={} min_cycles={} rest_q44={} \
         companion_q44={} drift={}/{}/{} output={:?}*10^{} calibrated_at={} plan={}",
        image.serial(),
        image.kind(),
        image.reference_hz(),
        Opt(image.gate()),
        window.min_hz(),
        window.max_hz(),
        window.min_cycles(),
        image.rest().ratio().raw_q44(),
        Opt(image.companion_rest().map(|r| r.ratio().raw_q44())),
        drift.reference().0,
        drift.b1_raw(),
        drift.b2_raw(),
        output.unit,
        output.decimal_exponent,
        image.calibrated_at(),
        Hex(image.plan_id().0),
    )?;
    let cubic = |c: lc_core::curve::Interpolation| {
        if c == lc_core::curve::Interpolation::Linear {
            "linear"
        } else {
            "cubic"
        }
    };
    match image.curve() {
        Some(c) => write!(out, " curve={}/{}", c.len(), cubic(c.interpolation()))?,
        None => out.write_str(" curve=-")?,
    }
    match image.volume() {
        Some((c, s)) => write!(
            out,
            " volume={}/{} {:?}*10^{}",
            c.len(),
            cubic(c.interpolation()),
            s.unit,
            s.decimal_exponent
        )?,
        None => out.write_str(" volume=-")?,
    }
    match image.metal() {
        Some(m) => write!(
            out,
            " metal=enter_ppb:{} leave_ppb:{} enter_n:{} leave_n:{} k:{} ring_drop:{} relearn:{}",
            m.enter_ppb,
            m.leave_ppb,
            m.enter_samples,
            m.leave_samples,
            m.baseline_k,
            m.ring_drop,
            m.relearn_readings
        ),
        None => out.write_str(" metal=-"),
    }
}

/// Bytes as lower-case hex.
struct Hex<const N: usize>([u8; N]);

impl<const N: usize> fmt::Display for Hex<N> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for b in self.0 {
            write!(f, "{b:02x}")?;
        }
        Ok(())
    }
}

impl<W: Write> Sink for Text<'_, W> {
    type Error = fmt::Error;

    fn line(&mut self, line: &Line<'_>) -> fmt::Result {
        let out = &mut *self.0;
        match line {
            Line::Board { ntc, chain } => writeln!(
                out,
                "board ntc={} chain={}",
                Show(ntc.map(|()| "ok")),
                Show(chain.map(|()| "ok"))
            ),
            Line::Image {
                name,
                from,
                len,
                parsed,
                reader,
                same_as_base,
            } => {
                write!(out, "image {name} ({len} bytes")?;
                if let Some(from) = from {
                    write!(out, ", from {from}")?;
                }
                out.write_str("): ")?;
                match parsed {
                    Ok(image) => write_image(out, image)?,
                    Err(e) => write!(out, "error={e:?} ({e})")?,
                }
                if let Some(r) = reader {
                    match r {
                        Ok(kind) => write!(out, " -> reader={kind:?}")?,
                        Err(e) => write!(out, " -> reader error={e:?} ({e})")?,
                    }
                }
                if let Some(same) = same_as_base {
                    write!(out, " same_as_base={same}")?;
                }
                writeln!(out)
            }
            Line::Reading {
                unit,
                index,
                row,
                temperature,
                reading,
                filtered,
            } => {
                write!(
                    out,
                    "read {unit} {index:02} {} pair={} comp={} ntc={} t={} ring={} -> \
                     value={} secondary={} x_q40={} status={:?}",
                    row.tag,
                    PairText(row.pair),
                    Opt(row.companion.map(PairText)),
                    Opt(row.ntc_code),
                    Opt(temperature.map(|t| Show(t.map(|c| c.0)))),
                    Opt(row.ring),
                    reading.output(),
                    Opt(reading.secondary()),
                    reading.curve_input_q40(),
                    reading.status(),
                )?;
                if let Some(f) = filtered {
                    write!(
                        out,
                        " | median={} ema={} presence={:?} event=",
                        f.median, f.ema, f.presence
                    )?;
                    match f.event {
                        Some(e) => write!(out, "{e:?}")?,
                        None => out.write_str("-")?,
                    }
                }
                writeln!(out)
            }
            Line::Refused { unit, index, row } => {
                writeln!(out, "read {unit} {index:02} {} -> no reader", row.tag)
            }
        }
    }
}

/// Writes the whole readout table.
pub fn run(out: &mut impl Write) -> fmt::Result {
    writeln!(
        out,
        "# lc-core readout: image -> Image::new -> Reader::new -> Reader::read; value and \
         secondary in the image's raw output units (metal: class code, ring drop), x_q40 the \
         curve's input in Q23.40, t in 0.01 degC from the NTC's ADC code. Not a safety-rated \
         component."
    )?;
    walk(&BOARD, &IMAGES, &MALFORMED, ROWS, &mut Text(out))?;
    writeln!(out, "# end readout")
}

/// 32-bit FNV-1a as a [`Hasher`], the same on every target: sizes and
/// enum discriminants (`usize`, `isize`) are hashed as 64-bit little-endian
/// values, and every other integer in little-endian bytes (the native order
/// of both the host and the Cortex-M targets, which `Hasher`'s defaults
/// use).
#[derive(Clone, Copy, Debug)]
pub struct Fnv(pub u32);

impl Fnv {
    /// The FNV-1a offset basis.
    pub const fn new() -> Self {
        Self(0x811c_9dc5)
    }
}

impl Default for Fnv {
    fn default() -> Self {
        Self::new()
    }
}

impl Hasher for Fnv {
    fn finish(&self) -> u64 {
        u64::from(self.0)
    }

    fn write(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.0 ^= u32::from(b);
            self.0 = self.0.wrapping_mul(0x0100_0193);
        }
    }

    fn write_usize(&mut self, i: usize) {
        // usize is 32 or 64 bits wide on every target here: the widening
        // is exact.
        self.write(&(i as u64).to_le_bytes());
    }

    fn write_isize(&mut self, i: isize) {
        // As above, sign-extending: exact.
        self.write(&(i as i64).to_le_bytes());
    }
}

impl Sink for Fnv {
    type Error = Infallible;

    fn line(&mut self, line: &Line<'_>) -> Result<(), Infallible> {
        line.hash(self);
        Ok(())
    }
}

/// Every line of the readout folded into a 32-bit FNV-1a hash, without
/// `core::fmt`. Takes the tables as arguments so that the panic proof can
/// hide them from the optimizer.
pub fn digest(board: &Board, images: &[Image], malformed: &[Malformed], rows: &[Row]) -> u32 {
    let mut h = Fnv::new();
    match walk(board, images, malformed, rows, &mut h) {
        Ok(()) => h.0,
        Err(never) => match never {},
    }
}
