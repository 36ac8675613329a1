//! The calibration image: the bytes the end-of-line rig writes into a
//! unit's flash, validated once at start-up and then read in place.
//!
//! The layout is the project's own, little endian, documented byte by byte
//! in `docs/image-format.md` and written once in code in [`layout`]. Format
//! 3 stores, besides the nodes of each table, every per-segment constant
//! the firmware's evaluation needs and the shift converters' reciprocals
//! with their exponents, computed on the host, so that start-up is
//! validation, not derivation: each derived constant is checked against
//! what it derives from by one shared routine of multiplies and compares.
//!
//! ## The firmware's flow
//!
//! ```text
//! image bytes in flash ─► Image::new (validate once) ─► ProximityReader::new
//!                                                    ─► read, read, read …
//! ```
//!
//! ```
//! use lc_core::counting::CountPair;
//! use lc_core::image::Image;
//! use lc_core::reader::{Input, ProximityReader, Status};
//!
//! // The image embedded 4-byte aligned (or a slice over its flash page).
//! static IMAGE: &[u8] =
//!     lc_core::include_image!("../../examples/firmware/data/demo-proximity.lcim");
//! let image = Image::new(IMAGE).unwrap(); // magic, version, length, CRC, every field
//! let mut reader = ProximityReader::new(&image).unwrap(); // checks the kind
//! let r = reader.read(&Input::counts(CountPair::new(16_384, 123_700)));
//! assert_eq!(r.status, Status::Ok);
//! assert!((1_000..=2_500).contains(&r.gap)); // micrometres
//! ```
//!
//! ## Panic and acceptance contract
//!
//! [`Image::new`] never panics, for any input: every read is a checked
//! access. An image is accepted only if its length, magic, version, CRC-32,
//! every field's rule and the consistency between fields pass; each
//! malformed input has its own [`ImageError`]. An image that validates
//! always builds the reader of its kind: the checks include everything a
//! reader's constructor would refuse. Raw bytes and the checked [`Image`]
//! are different types: nothing downstream sees unchecked bytes.
//!
//! The image must lie at a 4-byte aligned address ([`ImageError::Misaligned`]
//! otherwise), so that its constants are read with word loads:
//! [`include_image!`](crate::include_image) embeds a file aligned, and
//! [`ImageBuf`] copies one from anywhere.
//!
//! The CRC is CRC-32/ISO-HDLC ([`crc32`]).
//!
//! ## Formats 1 and 2
//!
//! Format 1 (nodes and node derivatives, no per-segment constants, no
//! calibration time or plan identity) and format 2 (no reciprocal
//! exponents: bytes 100 to 103 reserved) are refused by the firmware with
//! [`ImageError::OldFormat`]. The host reads both
//! (`Calibration::parse`, `design` feature) and rewrites them in format
//! 3 (`lc-host inspect IMAGE --rewrite OUT`).

pub mod layout;

mod crc;

pub use crc::{crc32, Crc32, CRC32};

use crate::counting::{FaultWindow, WindowError};
use crate::curve::{CurveError, CurveRef, MAX_NODES};
#[cfg(feature = "companion")]
use crate::drift::Companion;
use crate::drift::{DriftError, TemperatureModel};
use crate::ratio::PeriodRatio;
use crate::reader::Front;
use crate::shift::{RestPoint, ShiftConverter, ShiftError};
use crate::temperature::CentiCelsius;
use core::fmt;
use layout::*;

/// The first four bytes of every image: "LCIM".
pub const MAGIC: [u8; 4] = *b"LCIM";
/// The format version this crate writes and the firmware reads.
pub const VERSION: u16 = 3;
/// Format 2 (no reciprocal exponents), read by the host only.
pub const VERSION_2: u16 = 2;
/// Format 1 (node derivatives, no segment constants), read by the host
/// only.
pub const VERSION_1: u16 = 1;
/// The largest image: two full cubic tables.
pub const MAX_IMAGE_LEN: usize = HEADER_LEN + 2 * table_len(MAX_NODES, true) + CRC_LEN;
/// The largest format-1 image.
pub const MAX_IMAGE_LEN_V1: usize = HEADER_LEN_V1 + 2 * table_len_v1(MAX_NODES, true) + CRC_LEN;

/// A field of the image, named in errors and in the [`layout`] table.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Field {
    /// Magic "LCIM".
    Magic,
    /// Format version.
    Version,
    /// Image length.
    Length,
    /// Reader kind.
    ReaderKind,
    /// Flags.
    Flags,
    /// Curve node count.
    CurveNodes,
    /// Volume node count.
    VolumeNodes,
    /// Unit serial.
    Serial,
    /// Reference clock.
    ReferenceHz,
    /// Reciprocal gate (with the rest point: the shift converter).
    GateCycles,
    /// Fault window.
    Window,
    /// Rest point.
    RestPoint,
    /// Companion rest point.
    CompanionRest,
    /// Drift model.
    Drift,
    /// Output unit or exponent.
    Output,
    /// Volume unit or exponent.
    VolumeOutput,
    /// Metal parameters.
    Metal,
    /// A reserved byte that must be zero.
    Reserved,
    /// Calibration time.
    CalibratedAt,
    /// Plan identity.
    PlanId,
    /// A curve's nodes or segment constants.
    Curve,
}

/// Why an image was refused. Every malformed input has its own variant.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ImageError {
    /// Fewer bytes than the header, or than the length the header states.
    Truncated,
    /// The first four bytes are not "LCIM".
    BadMagic,
    /// A format version this firmware does not read.
    UnknownVersion,
    /// A format-1 or format-2 image: the host reads it and rewrites it in
    /// format 3 (`lc-host inspect IMAGE --rewrite OUT`).
    OldFormat,
    /// The stated length disagrees with the table sizes, or a byte after
    /// the stated length is not erased flash (0xFF).
    LengthMismatch,
    /// The image does not start at a 4-byte aligned address.
    Misaligned,
    /// The CRC-32 does not match: the image is corrupt.
    BadCrc,
    /// A field holds a value that is not defined or not allowed.
    OutOfRange(Field),
    /// The curve is malformed (too few nodes, not monotone, a segment's
    /// constants wrong, …).
    BadCurve(CurveError),
    /// The volume table is malformed.
    BadVolume(CurveError),
    /// The fault window is malformed.
    BadWindow(WindowError),
    /// The drift coefficients could overflow the fixed-point path.
    BadDrift(DriftError),
    /// The rest point and the gate do not form a shift converter.
    BadGate(ShiftError),
    /// The output buffer is too small to encode into, or the image too
    /// long for an [`ImageBuf`].
    BufferTooSmall,
}

impl fmt::Display for ImageError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ImageError::Truncated => f.write_str("image truncated"),
            ImageError::BadMagic => f.write_str("not a calibration image (bad magic)"),
            ImageError::UnknownVersion => f.write_str("unknown image format version"),
            ImageError::OldFormat => f.write_str(
                "older image format: rewrite it in format 3 with `lc-host inspect IMAGE --rewrite OUT`",
            ),
            ImageError::LengthMismatch => f.write_str(
                "stated length disagrees with the tables, or bytes after it are not erased (0xFF)",
            ),
            ImageError::Misaligned => f.write_str("image not at a 4-byte aligned address"),
            ImageError::BadCrc => f.write_str("CRC mismatch: image corrupt"),
            ImageError::OutOfRange(field) => write!(f, "field {field:?} out of range"),
            ImageError::BadCurve(e) => write!(f, "curve: {e}"),
            ImageError::BadVolume(e) => write!(f, "volume table: {e}"),
            ImageError::BadWindow(e) => write!(f, "fault window: {e}"),
            ImageError::BadDrift(e) => write!(f, "drift model: {e}"),
            ImageError::BadGate(e) => write!(f, "rest point and gate: {e}"),
            ImageError::BufferTooSmall => f.write_str("buffer too small for the image"),
        }
    }
}

impl core::error::Error for ImageError {}

/// What a unit measures, and so which reader the firmware runs.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ReaderKind {
    /// Inductive proximity: shift → gap.
    Proximity = 1,
    /// Capacitive level: shift → level (→ volume).
    Level = 2,
    /// Metal detection: presence and class.
    Metal = 3,
}

/// Physical unit of a reader's output.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum OutputUnit {
    /// Dimensionless (a count, a class).
    None = 0,
    /// Metre.
    Metre = 1,
    /// Litre.
    Litre = 2,
    /// Percent.
    Percent = 3,
}

impl OutputUnit {
    /// The unit's symbol.
    pub const fn symbol(self) -> &'static str {
        match self {
            OutputUnit::None => "",
            OutputUnit::Metre => "m",
            OutputUnit::Litre => "L",
            OutputUnit::Percent => "%",
        }
    }
}

/// How a raw output integer maps to a physical value:
/// value = raw · 10^decimal_exponent · unit.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct OutputScale {
    /// The unit.
    pub unit: OutputUnit,
    /// Decimal exponent, −18 ..= 18 (−6 with metres: micrometres).
    pub decimal_exponent: i8,
}

impl OutputScale {
    /// Raw value to the physical value in the unit.
    pub fn to_f64(&self, raw: i32) -> f64 {
        f64::from(raw) * libm::pow(10.0, f64::from(self.decimal_exponent))
    }
}

/// Parameters of the metal reader.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct MetalParams {
    /// |shift − baseline| at or above which a target enters, parts per
    /// billion of shift.
    pub enter_ppb: u32,
    /// |shift − baseline| below which it leaves (≤ `enter_ppb`).
    pub leave_ppb: u32,
    /// Consecutive readings beyond `enter_ppb` before "present".
    pub enter_samples: u16,
    /// Consecutive readings below `leave_ppb` before "absent".
    pub leave_samples: u16,
    /// Baseline EMA weight 2^-k, k in 1 ..= 16.
    pub baseline_k: u8,
    /// Ring-count drop (against the learned ring count) that confirms a
    /// lossy target; 0 when the unit has no ring-down.
    pub ring_drop: u16,
    /// Readings "present" after which the baseline is re-learned (a target
    /// that stays is the new background); 0 = never.
    pub relearn_readings: u32,
}

impl MetalParams {
    /// `enter_ppb` must be below this (validation): 3 906 250 ppb
    /// (0.390 625 % of shift, 2^32 · 10^9 / 2^40), so that the detector's
    /// thresholds in Q23.40 fit 32 bits.
    pub const PPB_LIMIT: u32 = 3_906_250;
}

/// A unit serial: 1 to 16 printable ASCII characters.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Serial([u8; 16]);

impl Serial {
    /// From text: 1 to 16 characters from space to '~'.
    pub fn new(text: &str) -> Option<Self> {
        let b = text.as_bytes();
        if b.is_empty() || b.len() > 16 || !b.iter().all(|c| (0x20..=0x7E).contains(c)) {
            return None;
        }
        let mut s = [0u8; 16];
        for (d, c) in s.iter_mut().zip(b) {
            *d = *c;
        }
        Some(Self(s))
    }

    #[cfg(feature = "design")]
    fn from_bytes(raw: [u8; 16]) -> Option<Self> {
        Self::valid(&raw).then_some(Self(raw))
    }

    /// Whether the stored bytes are a serial: printable ASCII, then NUL
    /// padding, at least one character.
    fn valid(raw: &[u8]) -> bool {
        // One pass: after the first NUL only NULs.
        let mut padding = false;
        raw.first().is_some_and(|&c| c != 0)
            && raw.iter().all(|&c| {
                padding |= c == 0;
                if padding {
                    c == 0
                } else {
                    (0x20..=0x7E).contains(&c)
                }
            })
    }

    /// The serial as text.
    pub fn as_str(&self) -> &str {
        let len = self.0.iter().position(|&c| c == 0).unwrap_or(16);
        self.0
            .get(..len)
            .and_then(|t| core::str::from_utf8(t).ok())
            .unwrap_or("")
    }

    /// The 16 stored bytes (NUL padded).
    pub const fn to_bytes(&self) -> [u8; 16] {
        self.0
    }
}

/// The identity of the calibration plan an image was made with: the
/// first 8 bytes of the SHA-256 of the plan file's text (all zero when
/// unknown, as for an image rewritten from format 1).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct PlanId(pub [u8; 8]);

impl PlanId {
    /// No plan recorded.
    pub const UNKNOWN: PlanId = PlanId([0; 8]);
}

/// Checked little-endian reads from a byte slice; `None` past the end.
#[derive(Clone, Copy)]
struct Bytes<'a>(&'a [u8]);

impl Bytes<'_> {
    fn get<const N: usize>(&self, at: usize) -> Option<[u8; N]> {
        let s = self.0.get(at..at.checked_add(N)?)?;
        let mut out = [0u8; N];
        out.copy_from_slice(s);
        Some(out)
    }
    fn u8(&self, span: Span) -> Option<u8> {
        self.0.get(span.at).copied()
    }
    fn u16(&self, span: Span) -> Option<u16> {
        self.get(span.at).map(u16::from_le_bytes)
    }
    fn u32(&self, span: Span) -> Option<u32> {
        self.get(span.at).map(u32::from_le_bytes)
    }
    #[cfg(feature = "design")]
    fn i32(&self, span: Span) -> Option<i32> {
        self.get(span.at).map(i32::from_le_bytes)
    }
    fn u64(&self, span: Span) -> Option<u64> {
        self.get(span.at).map(u64::from_le_bytes)
    }
    #[cfg(feature = "design")]
    fn i64(&self, span: Span) -> Option<i64> {
        self.get(span.at).map(i64::from_le_bytes)
    }
}

/// The header's field reads: from bytes anywhere ([`Bytes`], the host's
/// format-1 parser) or from the words of a validated, aligned image
/// ([`Words`]: one word load per field, no byte assembly).
trait Fields: Copy {
    fn raw(&self) -> &[u8];
    fn u8(&self, span: Span) -> Option<u8>;
    fn u16(&self, span: Span) -> Option<u16>;
    fn u32(&self, span: Span) -> Option<u32>;
    fn u64(&self, span: Span) -> Option<u64>;
    fn i32(&self, span: Span) -> Option<i32> {
        self.u32(span).map(|v| v as i32) // the same 32 bits
    }
}

impl Fields for Bytes<'_> {
    fn raw(&self) -> &[u8] {
        self.0
    }
    fn u8(&self, span: Span) -> Option<u8> {
        Bytes::u8(self, span)
    }
    fn u16(&self, span: Span) -> Option<u16> {
        Bytes::u16(self, span)
    }
    fn u32(&self, span: Span) -> Option<u32> {
        Bytes::u32(self, span)
    }
    fn u64(&self, span: Span) -> Option<u64> {
        Bytes::u64(self, span)
    }
}

/// An aligned image's words (and the same bytes). Every field lies at a
/// multiple of its size ([`layout`]): a `u32` or `u64` field is whole
/// words, a `u8` or `u16` field inside one word.
#[derive(Clone, Copy)]
struct Words<'a>(&'a [u32]);

impl Words<'_> {
    #[inline(always)]
    fn word(&self, at: usize) -> Option<u32> {
        self.0.get(at / 4).map(|w| u32::from_le(*w))
    }
}

impl Fields for Words<'_> {
    fn raw(&self) -> &[u8] {
        bytemuck::cast_slice(self.0)
    }
    #[inline(always)]
    fn u8(&self, span: Span) -> Option<u8> {
        // The byte's place in its little-endian word: the cast keeps it.
        self.word(span.at).map(|w| (w >> (8 * (span.at % 4))) as u8)
    }
    #[inline(always)]
    fn u16(&self, span: Span) -> Option<u16> {
        self.word(span.at)
            .map(|w| (w >> (8 * (span.at % 4))) as u16)
    }
    #[inline(always)]
    fn u32(&self, span: Span) -> Option<u32> {
        self.word(span.at)
    }
    #[inline(always)]
    fn u64(&self, span: Span) -> Option<u64> {
        Some(u64::from(self.word(span.at)?) | u64::from(self.word(span.at + 4)?) << 32)
    }
}

fn unit_from(code: u8) -> Option<OutputUnit> {
    Some(match code {
        0 => OutputUnit::None,
        1 => OutputUnit::Metre,
        2 => OutputUnit::Litre,
        3 => OutputUnit::Percent,
        _ => return None,
    })
}

fn scale_from(unit: u8, exp: u8) -> Option<OutputScale> {
    let decimal_exponent = i8::from_le_bytes([exp]);
    if !(-18..=18).contains(&decimal_exponent) {
        return None;
    }
    Some(OutputScale {
        unit: unit_from(unit)?,
        decimal_exponent,
    })
}

/// The header fields both formats share (bytes 0 to 103), checked: every
/// field's own rule and the rules between header fields.
#[derive(Clone, Copy, Debug)]
#[cfg_attr(not(feature = "design"), allow(dead_code))]
struct Header {
    kind: ReaderKind,
    #[cfg(feature = "design")]
    serial: Serial,
    reference_hz: u32,
    gate_cycles: u32,
    window: FaultWindow,
    rest: RestPoint,
    companion_rest: Option<RestPoint>,
    drift: TemperatureModel,
    output: OutputScale,
    volume_output: Option<OutputScale>,
    metal: Option<MetalParams>,
}

/// Framing: length, magic, version, stated length; returns (version,
/// stated length).
fn framing(bytes: &[u8]) -> Result<(u16, usize), ImageError> {
    use ImageError::*;
    let r = Bytes(bytes);
    if bytes.len() < LENGTH.end() {
        return Err(Truncated);
    }
    if r.get::<4>(layout::MAGIC.at) != Some(MAGIC) {
        return Err(BadMagic);
    }
    let version = r.u16(layout::VERSION).ok_or(Truncated)?;
    let len = usize::from(r.u16(LENGTH).ok_or(Truncated)?);
    Ok((version, len))
}

/// The header's field checks, after the CRC.
#[inline(always)]
fn header(r: impl Fields, accept: u8) -> Result<Header, ImageError> {
    use ImageError::*;
    let t = |v: Option<u8>| v.ok_or(Truncated);
    let flags = t(r.u8(FLAGS))?;
    // `accept` is a constant: the kinds it leaves out fold away, and with
    // them their checks below.
    let kind = match r.u8(KIND) {
        Some(1) if accept & ACCEPT_PROXIMITY != 0 => ReaderKind::Proximity,
        Some(2) if accept & ACCEPT_LEVEL != 0 => ReaderKind::Level,
        Some(3) if accept & ACCEPT_METAL != 0 => ReaderKind::Metal,
        _ => return Err(OutOfRange(Field::ReaderKind)),
    };
    if flags & !KNOWN_FLAGS != 0 {
        return Err(OutOfRange(Field::Flags));
    }
    let raw = r.raw().get(SERIAL.at..SERIAL.end()).ok_or(Truncated)?;
    if !Serial::valid(raw) {
        return Err(OutOfRange(Field::Serial));
    }
    #[cfg(feature = "design")]
    let serial = Serial::from_bytes(raw.try_into().map_err(|_| Truncated)?)
        .ok_or(OutOfRange(Field::Serial))?;
    let reference_hz = r.u32(REFERENCE_HZ).ok_or(Truncated)?;
    if reference_hz == 0 {
        return Err(OutOfRange(Field::ReferenceHz));
    }
    let gate_cycles = r.u32(GATE_CYCLES).ok_or(Truncated)?;
    let window = FaultWindow::new(
        reference_hz,
        r.u32(WINDOW_MIN_HZ).ok_or(Truncated)?,
        r.u32(WINDOW_MAX_HZ).ok_or(Truncated)?,
        r.u32(WINDOW_MIN_CYCLES).ok_or(Truncated)?,
    )
    .map_err(BadWindow)?;
    let rest = RestPoint::from_ratio(PeriodRatio::from_raw_q44(r.u64(REST).ok_or(Truncated)?))
        .map_err(|_| OutOfRange(Field::RestPoint))?;
    let companion_raw = r.u64(COMPANION_REST).ok_or(Truncated)?;
    let companion_rest = if flags & FLAG_COMPANION != 0 {
        Some(
            RestPoint::from_ratio(PeriodRatio::from_raw_q44(companion_raw))
                .map_err(|_| OutOfRange(Field::CompanionRest))?,
        )
    } else if companion_raw != 0 {
        return Err(OutOfRange(Field::CompanionRest));
    } else {
        None
    };
    let drift = TemperatureModel::new(
        CentiCelsius(r.i32(DRIFT_REFERENCE).ok_or(Truncated)?),
        r.i32(DRIFT_B1).ok_or(Truncated)?,
        r.i32(DRIFT_B2).ok_or(Truncated)?,
    )
    .map_err(BadDrift)?;
    let second = |span: Span| Span {
        at: span.at + 1,
        len: 1,
    };
    let output =
        scale_from(t(r.u8(OUTPUT))?, t(r.u8(second(OUTPUT)))?).ok_or(OutOfRange(Field::Output))?;
    let volume_raw = [t(r.u8(VOLUME_OUTPUT))?, t(r.u8(second(VOLUME_OUTPUT)))?];
    let curve_n = usize::from(t(r.u8(CURVE_NODES))?);
    let volume_n = usize::from(t(r.u8(VOLUME_NODES))?);
    // Kind against tables.
    match kind {
        ReaderKind::Metal if curve_n != 0 => return Err(OutOfRange(Field::CurveNodes)),
        ReaderKind::Metal if flags & FLAG_CUBIC != 0 => return Err(OutOfRange(Field::Flags)),
        _ => {}
    }
    let volume_output = if flags & FLAG_VOLUME != 0 {
        if kind != ReaderKind::Level {
            return Err(OutOfRange(Field::Flags));
        }
        Some(scale_from(volume_raw[0], volume_raw[1]).ok_or(OutOfRange(Field::VolumeOutput))?)
    } else {
        if volume_n != 0 || flags & FLAG_VOLUME_CUBIC != 0 {
            return Err(OutOfRange(Field::VolumeNodes));
        }
        if volume_raw != [0, 0] {
            return Err(OutOfRange(Field::VolumeOutput));
        }
        None
    };
    let metal = if kind == ReaderKind::Metal {
        let p = MetalParams {
            enter_ppb: r.u32(METAL_ENTER_PPB).ok_or(Truncated)?,
            leave_ppb: r.u32(METAL_LEAVE_PPB).ok_or(Truncated)?,
            enter_samples: r.u16(METAL_ENTER_SAMPLES).ok_or(Truncated)?,
            leave_samples: r.u16(METAL_LEAVE_SAMPLES).ok_or(Truncated)?,
            baseline_k: t(r.u8(METAL_BASELINE_K))?,
            ring_drop: r.u16(METAL_RING_DROP).ok_or(Truncated)?,
            relearn_readings: r.u32(METAL_RELEARN).ok_or(Truncated)?,
        };
        // The one check of the parameters: what the reader needs to build
        // (`leave < enter` makes `enter` positive).
        if !crate::reader::metal_builds(&p) {
            return Err(OutOfRange(Field::Metal));
        }
        if r.u8(RESERVED_93) != Some(0) {
            return Err(OutOfRange(Field::Reserved));
        }
        Some(p)
    } else {
        let raw = r
            .raw()
            .get(METAL_ENTER_PPB.at..METAL_RELEARN.end())
            .ok_or(Truncated)?;
        if raw.iter().any(|&b| b != 0) {
            return Err(OutOfRange(Field::Metal));
        }
        None
    };
    Ok(Header {
        kind,
        #[cfg(feature = "design")]
        serial,
        reference_hz,
        gate_cycles,
        window,
        rest,
        companion_rest,
        drift,
        output,
        volume_output,
        metal,
    })
}

/// A validated calibration image, read in place: a borrowed view of the
/// image's bytes (normally in flash), its kind and one byte of what
/// validation found (which tables lie on whole levels).
///
/// Built only by [`Image::new`] (or the one-kind [`Image::new_proximity`],
/// [`Image::new_level`], [`Image::new_metal`]), which check everything; readers
/// are built from it ([`ProximityReader::new`](crate::reader::ProximityReader::new)
/// and the others, [`Reader::new`](crate::reader::Reader::new)) and borrow
/// its curves for as long as the bytes live (`'static` for an image in
/// flash). Every accessor reads its field in place.
///
/// Size: 12 bytes on a 32-bit target (the crate docs, "Memory").
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Image<'a> {
    /// The image's words (little endian), exactly its stated length.
    words: &'a [u32],
    kind: ReaderKind,
    /// Bit 0: the curve is on whole levels, bit 1: the volume table
    /// (`CurveRef::on_whole_levels`, found by the tables' checks).
    whole: u8,
}

/// The kinds a validation accepts, one bit per kind code.
const ACCEPT_PROXIMITY: u8 = 1 << 1;
const ACCEPT_LEVEL: u8 = 1 << 2;
const ACCEPT_METAL: u8 = 1 << 3;
const ACCEPT_ANY: u8 = ACCEPT_PROXIMITY | ACCEPT_LEVEL | ACCEPT_METAL;

impl<'a> Image<'a> {
    /// Validates an image in place. `bytes` may be longer than the image
    /// (a flash page): the header's length field decides, and every byte
    /// after the image must be erased flash (0xFF;
    /// [`ImageError::LengthMismatch`] otherwise). `bytes` must start at a
    /// 4-byte aligned address.
    ///
    /// Order of the checks (the first failing one is reported): length of
    /// the framing, magic, version, stated length against the node
    /// counts and the bytes given, alignment, the bytes after the image,
    /// CRC-32, then each header field (the metal detector's parameters
    /// as its reader needs them), the consistency between fields and kind,
    /// the tables (nodes and every segment's constants), and what the
    /// readers derive (shift converter, companion ratio).
    ///
    /// Cost on a Cortex-M0: the CRC by words (about 6 instructions per
    /// image byte with the byte table), about 300 per cubic curve segment,
    /// and one to two thousand for the header and the converters' checks
    /// (docs/performance.md, "Loading"). Stack: a few hundred bytes
    /// besides the returned 12-byte `Image`.
    ///
    /// Flash: the checks of every kind. A firmware that runs one kind
    /// calls [`Image::new_proximity`], [`Image::new_level`] or [`Image::new_metal`]
    /// instead, and the linker leaves the other kinds' checks out.
    pub fn new(bytes: &'a [u8]) -> Result<Self, ImageError> {
        Self::check(bytes, ACCEPT_ANY)
    }

    /// [`Image::new`] for a proximity unit's firmware: the same checks,
    /// and an image of another kind is refused with
    /// [`ImageError::OutOfRange`]`(`[`Field::ReaderKind`]`)`. Only the
    /// proximity checks are linked in.
    pub fn new_proximity(bytes: &'a [u8]) -> Result<Self, ImageError> {
        Self::check(bytes, ACCEPT_PROXIMITY)
    }

    /// [`Image::new`] for a level unit's firmware (see
    /// [`Image::new_proximity`]).
    pub fn new_level(bytes: &'a [u8]) -> Result<Self, ImageError> {
        Self::check(bytes, ACCEPT_LEVEL)
    }

    /// [`Image::new`] for a metal detector's firmware (see
    /// [`Image::new_proximity`]).
    pub fn new_metal(bytes: &'a [u8]) -> Result<Self, ImageError> {
        Self::check(bytes, ACCEPT_METAL)
    }

    /// The validation of the kinds in `accept` (a constant: the others'
    /// checks fold away).
    #[inline(always)]
    fn check(bytes: &'a [u8], accept: u8) -> Result<Self, ImageError> {
        use ImageError::*;
        let (version, len) = framing(bytes)?;
        match version {
            VERSION => {}
            VERSION_1 | VERSION_2 => return Err(OldFormat),
            _ => return Err(UnknownVersion),
        }
        if bytes.len() < HEADER_LEN + CRC_LEN || len > bytes.len() {
            return Err(Truncated);
        }
        let r = Bytes(bytes);
        let flags = r.u8(FLAGS).ok_or(Truncated)?;
        let curve_n = usize::from(r.u8(CURVE_NODES).ok_or(Truncated)?);
        let volume_n = usize::from(r.u8(VOLUME_NODES).ok_or(Truncated)?);
        if curve_n > MAX_NODES {
            return Err(OutOfRange(Field::CurveNodes));
        }
        if volume_n > MAX_NODES {
            return Err(OutOfRange(Field::VolumeNodes));
        }
        let curve_len = table_len(curve_n, flags & FLAG_CUBIC != 0);
        let expected =
            HEADER_LEN + curve_len + table_len(volume_n, flags & FLAG_VOLUME_CUBIC != 0) + CRC_LEN;
        if len != expected {
            return Err(LengthMismatch);
        }
        let (bytes, after) = bytes.split_at_checked(len).ok_or(Truncated)?;
        let words: &[u32] = bytemuck::try_cast_slice(bytes).map_err(|_| Misaligned)?;
        if !erased(after) {
            return Err(LengthMismatch);
        }
        // The CRC by words (the length is a whole number of words).
        let (body, stored) = words.split_at(words.len().saturating_sub(1));
        if stored.first().map(|w| u32::from_le(*w)) != Some(crc::crc32_words(body)) {
            return Err(BadCrc);
        }
        let h = header(Words(words), accept)?;
        // Tables: nodes, then segments, each table after the last.
        // Each table's (rising, on whole levels), or its error.
        let table = |at: usize, n: usize, cubic: bool| {
            let w = words.get(at / 4..).unwrap_or(&[]);
            let segs = w.get(n * 3..).unwrap_or(&[]);
            CurveRef::check_words(w, segs, n, cubic)
        };
        let mut whole = 0;
        if h.kind != ReaderKind::Metal {
            let (_, w) = table(HEADER_LEN, curve_n, flags & FLAG_CUBIC != 0).map_err(BadCurve)?;
            whole |= u8::from(w);
        }
        if h.kind == ReaderKind::Level && h.volume_output.is_some() {
            let (rising, w) = table(
                HEADER_LEN + curve_len,
                volume_n,
                flags & FLAG_VOLUME_CUBIC != 0,
            )
            .map_err(BadVolume)?;
            if !rising {
                return Err(BadVolume(CurveError::NotMonotone));
            }
            whole |= u8::from(w) << 1;
        }
        Self::derived(words, &h)?;
        Ok(Image {
            words,
            kind: h.kind,
            whole,
        })
    }

    /// What the readers derive, checked here so that every reader builds:
    /// the converters' stored reciprocals (by multiplies, no 128-bit
    /// division at start-up) and the companion coil (the metal detector's
    /// parameters are checked with the header's fields).
    #[inline(always)]
    fn derived(words: &'a [u32], h: &Header) -> Result<(), ImageError> {
        use ImageError::*;
        let r = Words(words);
        let reciprocal =
            |m: Span, e: Span| (r.u32(m).unwrap_or(0), u32::from(r.u8(e).unwrap_or(0)));
        ShiftConverter::check_reciprocals(
            h.rest,
            h.gate_cycles,
            reciprocal(REST_RECIPROCAL, REST_EXPONENT),
            reciprocal(GATE_RECIPROCAL, GATE_EXPONENT),
        )
        .map_err(BadGate)?;
        let companion = reciprocal(COMPANION_RECIPROCAL, COMPANION_EXPONENT);
        let companion_gate = reciprocal(COMPANION_GATE_RECIPROCAL, COMPANION_GATE_EXPONENT);
        // Proximity and metal: a companion coil (ratiometric shift, its
        // ratio derived by the reader: one division). Level: a reference
        // electrode with its own converter.
        match (h.kind, h.companion_rest) {
            (ReaderKind::Level, Some(c)) => {
                ShiftConverter::check_reciprocals(c, h.gate_cycles, companion, companion_gate)
                    .map_err(|_| OutOfRange(Field::CompanionRest))?;
            }
            _ if companion != (0, 0) || companion_gate != (0, 0) => {
                return Err(OutOfRange(Field::CompanionRest));
            }
            (_, None) => {}
            #[cfg(feature = "companion")]
            (_, Some(c)) => {
                Companion::new(h.rest, c).map_err(|_| OutOfRange(Field::CompanionRest))?;
            }
            // Built without the companion coil's support: refused here, so
            // that a validated image always builds its reader.
            #[cfg(not(feature = "companion"))]
            (_, Some(_)) => return Err(OutOfRange(Field::CompanionRest)),
        }
        // Metal: `header` checked the parameters (`metal_builds`).
        Ok(())
    }

    /// The image's bytes (exactly its stated length).
    pub fn bytes(&self) -> &'a [u8] {
        bytemuck::cast_slice(self.words)
    }

    /// Which reader the unit runs.
    pub fn kind(&self) -> ReaderKind {
        self.kind
    }

    /// A header field's bytes (the [`layout`] spans).
    fn field<const N: usize>(&self, span: Span) -> [u8; N] {
        Bytes(self.bytes()).get(span.at).unwrap_or([0; N])
    }

    /// A `u32` field (one word load).
    fn u32(&self, span: Span) -> u32 {
        Words(self.words).u32(span).unwrap_or(0)
    }

    /// A `u64` field (two word loads).
    fn u64(&self, span: Span) -> u64 {
        Words(self.words).u64(span).unwrap_or(0)
    }

    /// A `u8` field.
    fn u8(&self, span: Span) -> u8 {
        Words(self.words).u8(span).unwrap_or(0)
    }

    /// The unit serial.
    pub fn serial(&self) -> &'a str {
        let raw = self.bytes().get(SERIAL.at..SERIAL.end()).unwrap_or(&[]);
        let len = raw.iter().position(|&c| c == 0).unwrap_or(raw.len());
        raw.get(..len)
            .and_then(|t| core::str::from_utf8(t).ok())
            .unwrap_or("")
    }

    /// Reference clock of the counter, hertz.
    pub fn reference_hz(&self) -> u32 {
        self.u32(REFERENCE_HZ)
    }

    /// The configured reciprocal gate in sensor cycles, `None` when the
    /// image has none (stored as 0).
    pub fn gate(&self) -> Option<u32> {
        let g = self.u32(GATE_CYCLES);
        (g > 0).then_some(g)
    }

    /// The plausibility window.
    pub fn window(&self) -> FaultWindow {
        FaultWindow::from_checked(
            self.reference_hz(),
            self.u32(WINDOW_MIN_HZ),
            self.u32(WINDOW_MAX_HZ),
            self.u32(WINDOW_MIN_CYCLES),
        )
    }

    /// The unit's rest point.
    pub fn rest(&self) -> RestPoint {
        RestPoint::from_checked(PeriodRatio::from_raw_q44(self.u64(REST)))
    }

    /// The companion channel's (level: the reference electrode's) rest
    /// point, when the unit has one.
    pub fn companion_rest(&self) -> Option<RestPoint> {
        let raw = self.u64(COMPANION_REST);
        (raw != 0).then(|| RestPoint::from_checked(PeriodRatio::from_raw_q44(raw)))
    }

    /// The temperature model ([`TemperatureModel::NONE`] when not fitted).
    pub fn drift(&self) -> TemperatureModel {
        TemperatureModel::from_checked(
            CentiCelsius(self.u32(DRIFT_REFERENCE) as i32),
            self.u32(DRIFT_B1) as i32,
            self.u32(DRIFT_B2) as i32,
        )
    }

    /// Scale of the output (gap, level).
    pub fn output(&self) -> OutputScale {
        let [unit, exp] = self.field(OUTPUT);
        scale_from(unit, exp).unwrap_or(OutputScale {
            unit: OutputUnit::None,
            decimal_exponent: 0,
        })
    }

    /// A table's view, read in place (`None` for an empty table).
    fn table(&self, at: usize, n: usize, cubic: bool, whole: bool) -> Option<CurveRef<'a>> {
        let w = self.words.get(at / 4..)?;
        CurveRef::from_checked_words(w, w.get(n * 3..)?, n, cubic, whole)
    }

    fn flags(&self) -> u8 {
        self.u8(FLAGS)
    }

    /// The shift → value curve (proximity, level).
    pub fn curve(&self) -> Option<CurveRef<'a>> {
        let n = usize::from(self.u8(CURVE_NODES));
        self.table(
            HEADER_LEN,
            n,
            self.flags() & FLAG_CUBIC != 0,
            self.whole & 1 != 0,
        )
    }

    /// The level → volume table and its scale (level only): its x axis is
    /// the level in the curve's output units, times 2^32, in the Q23.40
    /// field.
    pub fn volume(&self) -> Option<(CurveRef<'a>, OutputScale)> {
        let [unit, exp] = self.field(VOLUME_OUTPUT);
        Some((self.volume_table()?, scale_from(unit, exp)?))
    }

    /// The level → volume table without its scale (what the level reader
    /// holds: validation checked the scale, which the reading does not
    /// use).
    pub(crate) fn volume_table(&self) -> Option<CurveRef<'a>> {
        let flags = self.flags();
        if flags & FLAG_VOLUME == 0 {
            return None;
        }
        let curve_n = usize::from(self.u8(CURVE_NODES));
        let n = usize::from(self.u8(VOLUME_NODES));
        let at = HEADER_LEN + table_len(curve_n, flags & FLAG_CUBIC != 0);
        self.table(at, n, flags & FLAG_VOLUME_CUBIC != 0, self.whole & 2 != 0)
    }

    /// Metal parameters (metal only).
    pub fn metal(&self) -> Option<MetalParams> {
        if self.kind != ReaderKind::Metal {
            return None;
        }
        // One length check for all the fields (the words up to the last
        // one's end): each field's own check then folds away.
        let r = Words(self.words.get(..METAL_RELEARN.end() / 4)?);
        Some(MetalParams {
            enter_ppb: r.u32(METAL_ENTER_PPB)?,
            leave_ppb: r.u32(METAL_LEAVE_PPB)?,
            enter_samples: r.u16(METAL_ENTER_SAMPLES)?,
            leave_samples: r.u16(METAL_LEAVE_SAMPLES)?,
            baseline_k: r.u8(METAL_BASELINE_K)?,
            ring_drop: r.u16(METAL_RING_DROP)?,
            relearn_readings: r.u32(METAL_RELEARN)?,
        })
    }

    /// Calibration time, UTC, Unix seconds.
    pub fn calibrated_at(&self) -> i64 {
        i64::from_le_bytes(self.field(CALIBRATED_AT))
    }

    /// The calibration plan's identity.
    pub fn plan_id(&self) -> PlanId {
        PlanId(self.field(PLAN_ID))
    }

    /// The image's stored CRC-32.
    pub fn crc(&self) -> u32 {
        self.words.last().map_or(0, |w| u32::from_le(*w))
    }

    /// A stored reciprocal: its mantissa and exponent fields.
    fn reciprocal(&self, mantissa: Span, exponent: Span) -> (u32, u32) {
        (self.u32(mantissa), u32::from(self.u8(exponent)))
    }

    /// The converter of the stored rest point and reciprocals, as
    /// validation checked it. Inlined at each use, where the fields'
    /// places are constants: plain word loads, no bounds checks.
    #[inline(always)]
    fn converter(&self, rest: RestPoint, reciprocals: [(Span, Span); 2]) -> ShiftConverter {
        let [(m, e), (gm, ge)] = reciprocals;
        ShiftConverter::from_checked(
            rest,
            self.gate().unwrap_or(0),
            self.reciprocal(m, e),
            self.reciprocal(gm, ge),
        )
    }

    /// The reader front the image describes: fault window, shift
    /// converter, companion coil, drift model. Built by each reader's
    /// constructor (validation checked that it builds). Inlined: the front
    /// is built in place in the reader, not copied into it.
    #[inline(always)]
    pub(crate) fn front(&self) -> Front {
        // The accepted ticks first: their divisions' values are then
        // stored before the other fields are read (fewer values held across
        // the calls, a smaller frame and less code).
        let window = self.window();
        let accepted = self.gate().and_then(|g| window.accepted_ticks(g));
        let drift = self.drift();
        let rest = self.rest();
        let converter = self.converter(
            rest,
            [
                (REST_RECIPROCAL, REST_EXPONENT),
                (GATE_RECIPROCAL, GATE_EXPONENT),
            ],
        );
        #[cfg(feature = "companion")]
        let companion = match (self.kind, self.companion_rest()) {
            (ReaderKind::Level, _) | (_, None) => None,
            (_, Some(c)) => Companion::new(rest, c).ok(),
        };
        // Without the feature, validation refuses a companion coil.
        #[cfg(not(feature = "companion"))]
        let companion = None;
        Front::new(window, converter, companion, drift, accepted)
    }

    /// Level: the reference electrode's converter.
    pub(crate) fn reference(&self) -> Option<ShiftConverter> {
        match self.kind {
            ReaderKind::Level => Some(self.converter(
                self.companion_rest()?,
                [
                    (COMPANION_RECIPROCAL, COMPANION_EXPONENT),
                    (COMPANION_GATE_RECIPROCAL, COMPANION_GATE_EXPONENT),
                ],
            )),
            _ => None,
        }
    }
}

/// Whether every byte is erased flash (0xFF): the whole words by words
/// where they are aligned (after a validated image they are), the rest
/// by bytes. Inlined into validation, where that alignment is known and
/// the byte-wise fallback folds away.
#[inline(always)]
fn erased(bytes: &[u8]) -> bool {
    let (head, tail) = bytes.split_at(bytes.len() & !3);
    let (words, tail): (&[u32], &[u8]) = match bytemuck::try_cast_slice(head) {
        Ok(words) => (words, tail),
        Err(_) => (&[], bytes),
    };
    words.iter().all(|&w| w == u32::MAX) && tail.iter().all(|&b| b == 0xFF)
}

/// Embeds a calibration image file at a 4-byte aligned address, as
/// [`Image::new`] needs it: `static IMAGE: &[u8] =
/// lc_core::include_image!("unit.lcim");` (the path as for
/// `include_bytes!`). Expands to a `&'static [u8]`.
#[macro_export]
macro_rules! include_image {
    ($path:expr) => {{
        #[repr(C, align(4))]
        struct Aligned<T: ?Sized>(T);
        static ALIGNED: &Aligned<[u8]> = &Aligned(*include_bytes!($path));
        &ALIGNED.0
    }};
}

/// Words in an [`ImageBuf`].
const BUF_WORDS: usize = MAX_IMAGE_LEN.div_ceil(4);

/// An image copied into an aligned buffer of the largest image's size
/// (4 180 bytes): for an image read from external storage, a radio or a
/// file, and for the host. Firmware with the image in flash does not need
/// it.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct ImageBuf {
    words: [u32; BUF_WORDS],
    len: usize,
}

impl ImageBuf {
    /// A copy of `bytes` (an image, not validated here);
    /// [`ImageError::BufferTooSmall`] when longer than [`MAX_IMAGE_LEN`].
    pub fn from_bytes(bytes: &[u8]) -> Result<Self, ImageError> {
        let mut b = ImageBuf {
            words: [0; BUF_WORDS],
            len: bytes.len(),
        };
        bytemuck::cast_slice_mut::<u32, u8>(&mut b.words)
            .get_mut(..bytes.len())
            .ok_or(ImageError::BufferTooSmall)?
            .copy_from_slice(bytes);
        Ok(b)
    }

    /// The bytes held.
    pub fn as_bytes(&self) -> &[u8] {
        bytemuck::cast_slice::<u32, u8>(&self.words)
            .get(..self.len)
            .unwrap_or(&[])
    }

    /// The bytes held, to edit (tests, fault injection).
    pub fn as_bytes_mut(&mut self) -> &mut [u8] {
        bytemuck::cast_slice_mut::<u32, u8>(&mut self.words)
            .get_mut(..self.len)
            .unwrap_or(&mut [])
    }

    /// The validated image ([`Image::new`] on the bytes held).
    pub fn image(&self) -> Result<Image<'_>, ImageError> {
        Image::new(self.as_bytes())
    }
}

#[cfg(feature = "design")]
pub use host::{Calibration, Table};

/// The host's side of the image: owned calibrations, the encoder (format
/// 3) and the reader of formats 1 to 3. Design feature.
#[cfg(feature = "design")]
mod host {
    use super::*;
    use crate::curve::{Curve, Node};
    use crate::shift::Shift;

    /// A table as the host builds it: nodes, and the curve with its
    /// segment constants (derived from node derivatives when cubic).
    #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
    #[cfg_attr(feature = "defmt", derive(defmt::Format))]
    pub struct Table {
        len: u8,
        nodes: [Node; MAX_NODES],
        curve: Curve,
    }

    impl Table {
        /// A linear table from nodes (validated).
        pub fn linear(nodes: &[Node]) -> Result<Self, CurveError> {
            Ok(Self::of(nodes, Curve::linear(nodes)?))
        }

        /// A monotone cubic table from nodes and their derivatives dy/ds in
        /// Q47.16 (validated); the image stores the segment constants
        /// derived from them.
        pub fn cubic(nodes: &[Node], derivatives_q16: &[i64]) -> Result<Self, CurveError> {
            Ok(Self::of(
                nodes,
                Curve::monotone_cubic(nodes, derivatives_q16)?,
            ))
        }

        /// The table of a curve.
        pub fn from_curve(curve: Curve) -> Self {
            let mut nodes = [Node::default(); MAX_NODES];
            for (slot, n) in nodes.iter_mut().zip(curve.view().nodes()) {
                *slot = n;
            }
            Self {
                len: curve.len() as u8, // ≤ 64
                nodes,
                curve,
            }
        }

        fn of(nodes: &[Node], curve: Curve) -> Self {
            let mut t = Self {
                len: nodes.len() as u8, // ≤ 64 after validation
                nodes: [Node::default(); MAX_NODES],
                curve,
            };
            for (slot, n) in t.nodes.iter_mut().zip(nodes) {
                *slot = *n;
            }
            t
        }

        /// The nodes.
        pub fn nodes(&self) -> &[Node] {
            self.nodes.get(..usize::from(self.len)).unwrap_or(&[])
        }

        /// Whether the table interpolates with monotone cubics.
        pub fn is_cubic(&self) -> bool {
            self.curve.interpolation() == crate::curve::Interpolation::MonotoneCubic
        }

        /// The curve this table describes.
        pub fn curve(&self) -> &Curve {
            &self.curve
        }
    }

    /// A calibration as the host builds and edits it: what an image holds,
    /// owned (about 3 KB). [`Calibration::encode`] writes it in format 3;
    /// [`Calibration::parse`] reads either format.
    #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
    #[cfg_attr(feature = "defmt", derive(defmt::Format))]
    pub struct Calibration {
        /// Which reader.
        pub kind: ReaderKind,
        /// Unit serial.
        pub serial: Serial,
        /// Reference clock of the counter, hertz.
        pub reference_hz: u32,
        /// Reciprocal gate length in sensor cycles; 0 when not configured.
        pub gate_cycles: u32,
        /// Plausibility window.
        pub window: FaultWindow,
        /// The unit's rest point.
        pub rest: RestPoint,
        /// The companion channel's rest point, when the unit has one.
        pub companion_rest: Option<RestPoint>,
        /// Temperature model ([`TemperatureModel::NONE`] when not fitted).
        pub drift: TemperatureModel,
        /// Scale of the output.
        pub output: OutputScale,
        /// Shift → value table (proximity, level).
        pub curve: Option<Table>,
        /// Level → volume table and its scale (level only). Its x axis is
        /// the level in the curve's output units as
        /// `geometry::level_to_shift` (level · 2^32 in the Q23.40 field).
        pub volume: Option<(Table, OutputScale)>,
        /// Metal parameters (metal only).
        pub metal: Option<MetalParams>,
        /// Calibration time, UTC, Unix seconds (0 when unknown).
        pub calibrated_at: i64,
        /// The calibration plan's identity.
        pub plan_id: PlanId,
    }

    /// Checked little-endian writes into a byte slice.
    struct Writer<'a>(&'a mut [u8]);

    impl Writer<'_> {
        fn put(&mut self, at: usize, b: &[u8]) -> Result<(), ImageError> {
            let end = at.checked_add(b.len()).ok_or(ImageError::BufferTooSmall)?;
            self.0
                .get_mut(at..end)
                .ok_or(ImageError::BufferTooSmall)?
                .copy_from_slice(b);
            Ok(())
        }
    }

    impl Calibration {
        /// The configured reciprocal gate length in sensor cycles, `None`
        /// when the image has none (stored as 0).
        pub fn gate(&self) -> Option<u32> {
            (self.gate_cycles > 0).then_some(self.gate_cycles)
        }

        /// Length of this calibration's image in bytes (format 3).
        pub fn encoded_len(&self) -> usize {
            HEADER_LEN
                + self
                    .curve
                    .map_or(0, |t| table_len(t.nodes().len(), t.is_cubic()))
                + self
                    .volume
                    .map_or(0, |(t, _)| table_len(t.nodes().len(), t.is_cubic()))
                + CRC_LEN
        }

        /// The image's format version (1, 2 or 3) from its framing, without
        /// validating anything else.
        pub fn format_version(bytes: &[u8]) -> Result<u16, ImageError> {
            framing(bytes).map(|(v, _)| v)
        }

        /// Parses and validates an image of any of the three formats
        /// (format 1 by the rules it was written with, its cubic tables'
        /// segment constants derived here from the stored node derivatives;
        /// format 2 with the reciprocals' exponents filled in). `bytes` may be
        /// longer than the image and need not be aligned.
        pub fn parse(bytes: &[u8]) -> Result<Self, ImageError> {
            match framing(bytes)?.0 {
                VERSION => {
                    let buf = ImageBuf::from_bytes(bytes.get(..MAX_IMAGE_LEN).unwrap_or(bytes))?;
                    let image = buf.image()?;
                    Ok(Self::from_image(&image))
                }
                VERSION_2 => Self::parse_v2(bytes),
                VERSION_1 => Self::parse_v1(bytes),
                _ => Err(ImageError::UnknownVersion),
            }
        }

        /// Format 2: format 3 without the reciprocals' exponents (bytes
        /// 100 to 103 reserved, zero). Its CRC checked, the exponents of
        /// its rest points and gate filled in, then validated as format 3:
        /// the same rules, the stored mantissas checked against them.
        fn parse_v2(bytes: &[u8]) -> Result<Self, ImageError> {
            use ImageError::*;
            let (_, len) = framing(bytes)?;
            let image = bytes.get(..len).ok_or(Truncated)?;
            let body = image.get(..len.saturating_sub(CRC_LEN)).ok_or(Truncated)?;
            let r = Bytes(image);
            if len < HEADER_LEN + CRC_LEN {
                return Err(Truncated);
            }
            if r.u32(Span {
                at: len - CRC_LEN,
                len: CRC_LEN,
            }) != Some(crc32(body))
            {
                return Err(BadCrc);
            }
            if r.get::<4>(REST_EXPONENT.at) != Some([0; 4]) {
                return Err(OutOfRange(Field::Reserved));
            }
            let mut buf = ImageBuf::from_bytes(image)?;
            let gate = r.u32(GATE_CYCLES).filter(|&g| g > 0);
            let exponents = |at: Span| {
                let rest = RestPoint::from_ratio(PeriodRatio::from_raw_q44(r.u64(at)?)).ok()?;
                let (inv, gate) =
                    ShiftConverter::new(rest, crate::counting::Gating::Reciprocal, gate)
                        .ok()?
                        .reciprocals();
                Some([u8::try_from(inv.1).ok()?, u8::try_from(gate.1).ok()?])
            };
            let put = |b: &mut ImageBuf, at: usize, v: &[u8]| {
                if let Some(d) = b.as_bytes_mut().get_mut(at..at + v.len()) {
                    d.copy_from_slice(v);
                }
            };
            put(&mut buf, layout::VERSION.at, &VERSION.to_le_bytes());
            // Where the rest points are not valid, the exponents stay 0 and
            // the validation below names the field.
            if let Some(e) = exponents(REST) {
                put(&mut buf, REST_EXPONENT.at, &e);
            }
            let level_reference = r.u8(KIND) == Some(ReaderKind::Level as u8)
                && r.u8(FLAGS).is_some_and(|f| f & FLAG_COMPANION != 0);
            if level_reference {
                if let Some(e) = exponents(COMPANION_REST) {
                    put(&mut buf, COMPANION_EXPONENT.at, &e);
                }
            }
            let crc = crc32(buf.as_bytes().get(..len - CRC_LEN).unwrap_or(&[]));
            put(&mut buf, len - CRC_LEN, &crc.to_le_bytes());
            Ok(Self::from_image(&buf.image()?))
        }

        /// The calibration a validated image holds.
        pub fn from_image(image: &Image<'_>) -> Self {
            let r = Bytes(image.bytes());
            let owned = |c: CurveRef<'_>| {
                let (n, s) = c.words();
                // Validated already: the same words validate again.
                Curve::from_words(
                    n,
                    s,
                    c.len(),
                    c.interpolation() == crate::curve::Interpolation::MonotoneCubic,
                )
                .map(Table::from_curve)
                .ok()
            };
            Calibration {
                kind: image.kind(),
                serial: Serial::from_bytes(r.get::<16>(SERIAL.at).unwrap_or([0; 16]))
                    .unwrap_or(Serial([b'?'; 16])),
                reference_hz: image.reference_hz(),
                gate_cycles: image.gate().unwrap_or(0),
                window: image.window(),
                rest: image.rest(),
                companion_rest: image.companion_rest(),
                drift: image.drift(),
                output: image.output(),
                curve: image.curve().and_then(owned),
                volume: image.volume().and_then(|(c, s)| owned(c).map(|t| (t, s))),
                metal: image.metal(),
                calibrated_at: image.calibrated_at(),
                plan_id: image.plan_id(),
            }
        }

        fn parse_v1(bytes: &[u8]) -> Result<Self, ImageError> {
            use ImageError::*;
            let (_, len) = framing(bytes)?;
            if bytes.len() < HEADER_LEN_V1 + CRC_LEN || len > bytes.len() {
                return Err(Truncated);
            }
            let r = Bytes(bytes);
            let flags = r.u8(FLAGS).ok_or(Truncated)?;
            let curve_n = usize::from(r.u8(CURVE_NODES).ok_or(Truncated)?);
            let volume_n = usize::from(r.u8(VOLUME_NODES).ok_or(Truncated)?);
            if curve_n > MAX_NODES {
                return Err(OutOfRange(Field::CurveNodes));
            }
            if volume_n > MAX_NODES {
                return Err(OutOfRange(Field::VolumeNodes));
            }
            let curve_len = table_len_v1(curve_n, flags & FLAG_CUBIC != 0);
            let expected = HEADER_LEN_V1
                + curve_len
                + table_len_v1(volume_n, flags & FLAG_VOLUME_CUBIC != 0)
                + CRC_LEN;
            if len != expected {
                return Err(LengthMismatch);
            }
            let body = bytes.get(..len - CRC_LEN).ok_or(Truncated)?;
            if r.u32(Span {
                at: len - CRC_LEN,
                len: CRC_LEN,
            }) != Some(crc32(body))
            {
                return Err(BadCrc);
            }
            let h = header(Bytes(bytes), ACCEPT_ANY)?;
            // Bytes 100 to 103: reserved, zero, in format 1.
            if r.get::<4>(REST_EXPONENT.at) != Some([0; 4]) {
                return Err(OutOfRange(if h.kind == ReaderKind::Metal {
                    Field::Reserved
                } else {
                    Field::Metal
                }));
            }
            let read = |at: usize, n: usize, cubic: bool| -> Result<Table, CurveError> {
                let mut nodes = [Node::default(); MAX_NODES];
                let mut ders = [0i64; MAX_NODES];
                for (i, slot) in nodes.iter_mut().enumerate().take(n) {
                    let p = at + i * NODE_LEN;
                    let x = r.i64(Span { at: p, len: 8 }).unwrap_or(0);
                    let y = r.i32(Span { at: p + 8, len: 4 }).unwrap_or(0);
                    *slot = Node::new(Shift::from_raw_q40(x), y);
                }
                let nodes = nodes.get(..n).unwrap_or(&[]);
                if cubic {
                    let base = at + n * NODE_LEN;
                    for (i, slot) in ders.iter_mut().enumerate().take(n) {
                        *slot = r
                            .i64(Span {
                                at: base + 8 * i,
                                len: 8,
                            })
                            .unwrap_or(0);
                    }
                    Table::cubic(nodes, ders.get(..n).unwrap_or(&[]))
                } else {
                    Table::linear(nodes)
                }
            };
            let curve = match h.kind {
                ReaderKind::Metal => None,
                _ => Some(read(HEADER_LEN_V1, curve_n, flags & FLAG_CUBIC != 0).map_err(BadCurve)?),
            };
            let volume = match h.volume_output {
                Some(scale) => {
                    let t = read(
                        HEADER_LEN_V1 + curve_len,
                        volume_n,
                        flags & FLAG_VOLUME_CUBIC != 0,
                    )
                    .map_err(BadVolume)?;
                    if !t.curve().is_rising() {
                        return Err(BadVolume(CurveError::NotMonotone));
                    }
                    Some((t, scale))
                }
                None => None,
            };
            Ok(Calibration {
                kind: h.kind,
                serial: h.serial,
                reference_hz: h.reference_hz,
                gate_cycles: h.gate_cycles,
                window: h.window,
                rest: h.rest,
                companion_rest: h.companion_rest,
                drift: h.drift,
                output: h.output,
                curve,
                volume,
                metal: h.metal,
                calibrated_at: 0,
                plan_id: PlanId::UNKNOWN,
            })
        }

        /// Writes the image (format 3) into `out`; returns its length. The
        /// result always validates ([`Image::new`]) and parses back to an
        /// equal calibration when `self` is consistent: the encoder checks
        /// its output with the firmware's own validation.
        pub fn encode(&self, out: &mut [u8]) -> Result<usize, ImageError> {
            let len = self.encoded_len();
            let len16 = u16::try_from(len).map_err(|_| ImageError::LengthMismatch)?;
            let buf = out.get_mut(..len).ok_or(ImageError::BufferTooSmall)?;
            buf.fill(0);
            let mut w = Writer(buf);
            let mut flags = 0u8;
            let curve_n = self.curve.map_or(0, |t| t.nodes().len());
            let volume_n = self.volume.map_or(0, |(t, _)| t.nodes().len());
            if self.curve.is_some_and(|t| t.is_cubic()) {
                flags |= FLAG_CUBIC;
            }
            if self.companion_rest.is_some() {
                flags |= FLAG_COMPANION;
            }
            if let Some((t, _)) = self.volume {
                flags |= FLAG_VOLUME;
                if t.is_cubic() {
                    flags |= FLAG_VOLUME_CUBIC;
                }
            }
            let n8 =
                |n: usize| u8::try_from(n).map_err(|_| ImageError::OutOfRange(Field::CurveNodes));
            w.put(layout::MAGIC.at, &MAGIC)?;
            w.put(layout::VERSION.at, &super::VERSION.to_le_bytes())?;
            w.put(LENGTH.at, &len16.to_le_bytes())?;
            w.put(KIND.at, &[self.kind as u8])?;
            w.put(FLAGS.at, &[flags])?;
            w.put(CURVE_NODES.at, &[n8(curve_n)?])?;
            w.put(VOLUME_NODES.at, &[n8(volume_n)?])?;
            w.put(SERIAL.at, &self.serial.0)?;
            w.put(REFERENCE_HZ.at, &self.reference_hz.to_le_bytes())?;
            w.put(GATE_CYCLES.at, &self.gate_cycles.to_le_bytes())?;
            w.put(WINDOW_MIN_HZ.at, &self.window.min_hz().to_le_bytes())?;
            w.put(WINDOW_MAX_HZ.at, &self.window.max_hz().to_le_bytes())?;
            w.put(
                WINDOW_MIN_CYCLES.at,
                &self.window.min_cycles().to_le_bytes(),
            )?;
            w.put(REST.at, &self.rest.ratio().raw_q44().to_le_bytes())?;
            w.put(
                COMPANION_REST.at,
                &self
                    .companion_rest
                    .map_or(0, |r| r.ratio().raw_q44())
                    .to_le_bytes(),
            )?;
            w.put(DRIFT_REFERENCE.at, &self.drift.reference().0.to_le_bytes())?;
            w.put(DRIFT_B1.at, &self.drift.b1_raw().to_le_bytes())?;
            w.put(DRIFT_B2.at, &self.drift.b2_raw().to_le_bytes())?;
            let scale = |s: OutputScale| [s.unit as u8, s.decimal_exponent.to_le_bytes()[0]];
            w.put(OUTPUT.at, &scale(self.output))?;
            if let Some((_, s)) = self.volume {
                w.put(VOLUME_OUTPUT.at, &scale(s))?;
            }
            if let Some(m) = self.metal {
                w.put(METAL_ENTER_PPB.at, &m.enter_ppb.to_le_bytes())?;
                w.put(METAL_LEAVE_PPB.at, &m.leave_ppb.to_le_bytes())?;
                w.put(METAL_ENTER_SAMPLES.at, &m.enter_samples.to_le_bytes())?;
                w.put(METAL_LEAVE_SAMPLES.at, &m.leave_samples.to_le_bytes())?;
                w.put(METAL_BASELINE_K.at, &[m.baseline_k])?;
                w.put(METAL_RING_DROP.at, &m.ring_drop.to_le_bytes())?;
                w.put(METAL_RELEARN.at, &m.relearn_readings.to_le_bytes())?;
            }
            w.put(CALIBRATED_AT.at, &self.calibrated_at.to_le_bytes())?;
            w.put(PLAN_ID.at, &self.plan_id.0)?;
            // The converters' reciprocals, which the firmware checks
            // instead of dividing.
            let reciprocals = |rest: RestPoint| {
                ShiftConverter::new(rest, crate::counting::Gating::Reciprocal, self.gate())
                    .map(|c| c.reciprocals())
                    .map_err(ImageError::BadGate)
            };
            let mut put = |(m, e): (u32, u32), mantissa: Span, exponent: Span| {
                // e ≤ 127 (`ShiftConverter::new`).
                let e =
                    u8::try_from(e).map_err(|_| ImageError::BadGate(ShiftError::BadRestPoint))?;
                w.put(mantissa.at, &m.to_le_bytes())?;
                w.put(exponent.at, &[e])
            };
            let (inv, gate_inv) = reciprocals(self.rest)?;
            put(inv, REST_RECIPROCAL, REST_EXPONENT)?;
            put(gate_inv, GATE_RECIPROCAL, GATE_EXPONENT)?;
            if let (ReaderKind::Level, Some(c)) = (self.kind, self.companion_rest) {
                let (inv, gate_inv) = reciprocals(c)?;
                put(inv, COMPANION_RECIPROCAL, COMPANION_EXPONENT)?;
                put(gate_inv, COMPANION_GATE_RECIPROCAL, COMPANION_GATE_EXPONENT)?;
            }
            let mut at = HEADER_LEN;
            for table in [self.curve, self.volume.map(|(t, _)| t)]
                .into_iter()
                .flatten()
            {
                let view = table.curve().view();
                let (nodes, segs) = view.words();
                for word in nodes.iter().chain(segs) {
                    // The curve's words are stored little endian already.
                    w.put(at, &u32::from_le(*word).to_le_bytes())?;
                    at += 4;
                }
            }
            let crc = crc32(w.0.get(..len - CRC_LEN).ok_or(ImageError::BufferTooSmall)?);
            w.put(len - CRC_LEN, &crc.to_le_bytes())?;
            // The encoder holds itself to the firmware's rules.
            let back = Self::parse(w.0)?;
            if back != *self {
                return Err(ImageError::LengthMismatch);
            }
            Ok(len)
        }

        /// The image in an aligned buffer, validated: for building readers
        /// on the host ([`ImageBuf::image`]).
        pub fn to_image_buf(&self) -> Result<ImageBuf, ImageError> {
            let mut bytes = [0u8; MAX_IMAGE_LEN];
            let n = self.encode(&mut bytes)?;
            ImageBuf::from_bytes(bytes.get(..n).unwrap_or(&[]))
        }
    }
}

/// Calibrations for this crate's tests (the demo scenario's proximity
/// unit).
#[cfg(all(test, feature = "design"))]
pub(crate) mod tests_support {
    use super::*;
    use crate::counting::CountPair;
    use crate::curve::Node;
    use crate::shift::Shift;

    /// The demo proximity unit: 16 384-cycle gate at 48 MHz, a linear curve
    /// from 0.5 mm to 8 mm.
    pub(crate) fn demo_proximity() -> Option<Calibration> {
        let nodes = [
            Node::new(Shift::from_raw_q40(-362_000_000_000), 500),
            Node::new(Shift::from_raw_q40(-250_000_000_000), 1_000),
            Node::new(Shift::from_raw_q40(-120_000_000_000), 2_500),
            Node::new(Shift::from_raw_q40(-50_000_000_000), 4_500),
            Node::new(Shift::from_raw_q40(-21_000_000_000), 8_000),
        ];
        Some(Calibration {
            kind: ReaderKind::Proximity,
            serial: Serial::new("DEMO-01-0007")?,
            reference_hz: 48_000_000,
            gate_cycles: 16_384,
            window: FaultWindow::new(48_000_000, 1_000_000, 20_000_000, 64).ok()?,
            rest: RestPoint::from_counts(CountPair::new(16_384, 139_542)).ok()?,
            companion_rest: None,
            drift: TemperatureModel::NONE,
            output: OutputScale {
                unit: OutputUnit::Metre,
                decimal_exponent: -6,
            },
            curve: Some(Table::linear(&nodes).ok()?),
            volume: None,
            metal: None,
            calibrated_at: 1_764_000_000,
            plan_id: PlanId(*b"demoplan"),
        })
    }
}

#[cfg(all(test, feature = "design"))]
mod tests {
    use super::tests_support::demo_proximity;
    use super::*;
    use crate::counting::CountPair;
    use crate::curve::{pchip_derivatives, Node};
    use crate::shift::Shift;
    use proptest::prelude::*;

    /// Erased flash is all 0xFF, at any start and length: whole words
    /// by words, the rest (or all of a misaligned start) by bytes.
    #[test]
    fn erased_bytes_anywhere() {
        let page = ImageBuf::from_bytes(&[0xFF; 64]).unwrap();
        let all = page.as_bytes();
        for start in 0..5 {
            for end in start..all.len() {
                assert!(erased(&all[start..end]));
                for at in start..end {
                    let mut dirty = page.clone();
                    dirty.as_bytes_mut()[at] = 0x7F;
                    assert!(
                        !erased(&dirty.as_bytes()[start..end]),
                        "{start}..{end}, byte {at}"
                    );
                }
            }
        }
    }

    /// Catalogue check value and zlib vectors for CRC-32/ISO-HDLC (Cook,
    /// "Catalogue of parametrised CRC algorithms"; docs/references.md, CRC check values:
    /// check value published, others computed with zlib).
    #[test]
    fn crc_matches_the_catalogue() {
        assert_eq!(CRC32.checksum(b"123456789"), 0xCBF4_3926);
        assert_eq!(CRC32.checksum(b""), 0);
        assert_eq!(CRC32.checksum(b"a"), 0xE8B7_BE43);
        assert_eq!(
            CRC32.checksum(b"The quick brown fox jumps over the lazy dog"),
            0x414F_A339
        );
        // Data followed by its little-endian CRC gives the fixed residue.
        let mut v = b"123456789".to_vec();
        v.extend_from_slice(&0xCBF4_3926u32.to_le_bytes());
        assert_eq!(CRC32.checksum(&v), 0x2144_DF1C);
    }

    fn level_with_volume() -> Calibration {
        let xs = [0.0, 0.02, 0.05, 0.09, 0.12];
        let ys = [0, 1_000, 2_500, 4_500, 6_000];
        let nodes: Vec<Node> = xs
            .iter()
            .zip(ys)
            .map(|(&x, y)| Node::new(Shift::from_f64(x).unwrap(), y))
            .collect();
        let d = pchip_derivatives(&xs, &ys.map(f64::from)).unwrap();
        let dq: Vec<i64> = d[..5]
            .iter()
            .map(|v| (v * 65_536.0).round() as i64)
            .collect();
        let vol_nodes = [
            Node::new(Shift::from_raw_q40(0), 0),
            Node::new(Shift::from_raw_q40(6_000), 300_000),
        ];
        let mut cal = demo_proximity().unwrap();
        cal.kind = ReaderKind::Level;
        cal.serial = Serial::new("TANK-7").unwrap();
        cal.curve = Some(Table::cubic(&nodes, &dq).unwrap());
        cal.companion_rest = Some(RestPoint::from_counts(CountPair::new(16_384, 150_000)).unwrap());
        cal.drift = TemperatureModel::from_f64(20.0, -2e-4, 1e-7).unwrap();
        cal.output = OutputScale {
            unit: OutputUnit::Metre,
            decimal_exponent: -4,
        };
        cal.volume = Some((
            Table::linear(&vol_nodes).unwrap(),
            OutputScale {
                unit: OutputUnit::Litre,
                decimal_exponent: -3,
            },
        ));
        cal
    }

    fn metal() -> Calibration {
        let mut cal = demo_proximity().unwrap();
        cal.kind = ReaderKind::Metal;
        cal.curve = None;
        cal.output = OutputScale {
            unit: OutputUnit::None,
            decimal_exponent: 0,
        };
        cal.metal = Some(MetalParams {
            enter_ppb: 200_000,
            leave_ppb: 120_000,
            enter_samples: 3,
            leave_samples: 5,
            baseline_k: 8,
            ring_drop: 2,
            relearn_readings: 60_000,
        });
        cal
    }

    fn encode(cal: &Calibration) -> Vec<u8> {
        let mut buf = [0u8; MAX_IMAGE_LEN];
        let n = cal.encode(&mut buf).unwrap();
        buf[..n].to_vec()
    }

    fn fix_crc(img: &mut [u8]) {
        let n = img.len();
        let crc = CRC32.checksum(&img[..n - CRC_LEN]);
        img[n - CRC_LEN..].copy_from_slice(&crc.to_le_bytes());
    }

    /// The firmware's validation of `img` (copied aligned).
    fn validate(img: &[u8]) -> Result<ReaderKind, ImageError> {
        ImageBuf::from_bytes(img)?.image().map(|i| i.kind())
    }

    #[test]
    fn every_kind_round_trips() {
        for cal in [demo_proximity().unwrap(), level_with_volume(), metal()] {
            let img = encode(&cal);
            assert_eq!(img.len(), cal.encoded_len());
            assert_eq!(Calibration::parse(&img), Ok(cal));
            assert_eq!(validate(&img), Ok(cal.kind));
            // A longer buffer (a flash page) parses the same.
            let mut page = img.clone();
            page.resize(4096, 0xFF);
            assert_eq!(Calibration::parse(&page), Ok(cal));
        }
        assert_eq!(
            encode(&demo_proximity().unwrap()).len(),
            HEADER_LEN + 5 * NODE_LEN + 4 * SEGMENT_LEN_LINEAR + CRC_LEN
        );
        assert_eq!(MAX_IMAGE_LEN, 4_196);
    }

    #[test]
    fn the_view_reads_what_was_written() {
        let cal = level_with_volume();
        let buf = cal.to_image_buf().unwrap();
        let image = buf.image().unwrap();
        assert_eq!(image.serial(), "TANK-7");
        assert_eq!(image.reference_hz(), 48_000_000);
        assert_eq!(image.gate(), Some(16_384));
        assert_eq!(image.window(), cal.window);
        assert_eq!(image.rest(), cal.rest);
        assert_eq!(image.companion_rest(), cal.companion_rest);
        assert_eq!(image.drift(), cal.drift);
        assert_eq!(image.output(), cal.output);
        assert_eq!(image.calibrated_at(), 1_764_000_000);
        assert_eq!(image.plan_id(), PlanId(*b"demoplan"));
        let curve = image.curve().unwrap();
        assert!(curve.nodes().eq(cal.curve.unwrap().nodes().iter().copied()));
        assert_eq!(image.volume().unwrap().1, cal.volume.unwrap().1);
        assert_eq!(
            image.crc(),
            crc32(&buf.as_bytes()[..buf.as_bytes().len() - 4])
        );
    }

    #[test]
    fn framing_errors() {
        let img = encode(&demo_proximity().unwrap());
        let buf = ImageBuf::from_bytes(&img).unwrap();
        let bytes = buf.as_bytes();
        assert_eq!(Image::new(&[]), Err(ImageError::Truncated));
        assert_eq!(Image::new(&bytes[..HEADER_LEN]), Err(ImageError::Truncated));
        assert_eq!(
            Image::new(&bytes[..bytes.len() - 1]),
            Err(ImageError::Truncated)
        );
        // Off a word boundary.
        let mut shifted = vec![0u8];
        shifted.extend_from_slice(&img);
        let big = ImageBuf::from_bytes(&shifted).unwrap();
        assert_eq!(
            Image::new(&big.as_bytes()[1..]),
            Err(ImageError::Misaligned)
        );
        let case = |f: &dyn Fn(&mut Vec<u8>)| {
            let mut bad = img.clone();
            f(&mut bad);
            validate(&bad)
        };
        assert_eq!(case(&|i| i[0] = b'X'), Err(ImageError::BadMagic));
        assert_eq!(case(&|i| i[4] = 4), Err(ImageError::UnknownVersion));
        assert_eq!(case(&|i| i[4] = 1), Err(ImageError::OldFormat));
        assert_eq!(case(&|i| i[4] = 2), Err(ImageError::OldFormat));
        assert_eq!(case(&|i| i[10] = 4), Err(ImageError::LengthMismatch));
        assert_eq!(
            case(&|i| i[10] = 65),
            Err(ImageError::OutOfRange(Field::CurveNodes))
        );
        assert_eq!(case(&|i| i[HEADER_LEN + 3] ^= 1), Err(ImageError::BadCrc));
        // Bytes after the stated length: erased flash (0xFF) only, however
        // many and wherever the image ends.
        for extra in [1, 3, 4, 5, 600] {
            let mut page = img.clone();
            page.resize(img.len() + extra, 0xFF);
            let page = ImageBuf::from_bytes(&page).unwrap();
            let image = Image::new(page.as_bytes()).unwrap();
            assert_eq!(image.bytes(), &img[..]);
            for at in [img.len(), img.len() + extra - 1] {
                let mut dirty = page.clone();
                dirty.as_bytes_mut()[at] = 0xFE;
                assert_eq!(
                    Image::new(dirty.as_bytes()),
                    Err(ImageError::LengthMismatch),
                    "{extra} bytes after, byte {at} programmed"
                );
            }
        }
        // A one-kind validation refuses the other kinds.
        assert!(Image::new_proximity(bytes).is_ok());
        assert_eq!(
            Image::new_level(bytes),
            Err(ImageError::OutOfRange(Field::ReaderKind))
        );
        assert_eq!(
            Image::new_metal(bytes),
            Err(ImageError::OutOfRange(Field::ReaderKind))
        );
        let mut short = [0u8; 10];
        assert_eq!(
            demo_proximity().unwrap().encode(&mut short),
            Err(ImageError::BufferTooSmall)
        );
    }

    /// Each field check, with the CRC made valid again so the field check
    /// itself is what fails.
    #[test]
    fn field_errors() {
        let base = encode(&demo_proximity().unwrap());
        let case = |f: &dyn Fn(&mut Vec<u8>)| {
            let mut img = base.clone();
            f(&mut img);
            fix_crc(&mut img);
            validate(&img)
        };
        let put = |i: &mut Vec<u8>, span: Span, b: &[u8]| i[span.at..span.end()].copy_from_slice(b);
        use ImageError::*;
        assert_eq!(
            case(&|i| i[KIND.at] = 9),
            Err(OutOfRange(Field::ReaderKind))
        );
        assert_eq!(case(&|i| i[FLAGS.at] = 0x80), Err(OutOfRange(Field::Flags)));
        assert_eq!(case(&|i| i[SERIAL.at] = 0), Err(OutOfRange(Field::Serial)));
        assert_eq!(
            case(&|i| i[SERIAL.at] = 0x07),
            Err(OutOfRange(Field::Serial))
        );
        assert_eq!(
            case(&|i| i[SERIAL.end() - 1] = b'x'),
            Err(OutOfRange(Field::Serial))
        ); // text after the padding
        assert_eq!(
            case(&|i| put(i, REFERENCE_HZ, &0u32.to_le_bytes())),
            Err(OutOfRange(Field::ReferenceHz))
        );
        assert_eq!(
            case(&|i| put(i, WINDOW_MAX_HZ, &1u32.to_le_bytes())),
            Err(BadWindow(WindowError::EmptyBand))
        );
        assert_eq!(
            case(&|i| put(i, REST, &1u64.to_le_bytes())),
            Err(OutOfRange(Field::RestPoint))
        );
        assert_eq!(
            case(&|i| i[COMPANION_REST.at] = 1),
            Err(OutOfRange(Field::CompanionRest))
        );
        assert_eq!(
            case(&|i| put(i, DRIFT_REFERENCE, &40_000i32.to_le_bytes())),
            Err(BadDrift(DriftError::ReferenceOutOfRange))
        );
        assert_eq!(
            case(&|i| put(i, DRIFT_B1, &i32::MAX.to_le_bytes())),
            Err(BadDrift(DriftError::CorrectionTooLarge))
        );
        assert_eq!(case(&|i| i[OUTPUT.at] = 9), Err(OutOfRange(Field::Output)));
        assert_eq!(
            case(&|i| i[OUTPUT.at + 1] = 19),
            Err(OutOfRange(Field::Output))
        );
        assert_eq!(
            case(&|i| i[VOLUME_OUTPUT.at] = 2),
            Err(OutOfRange(Field::VolumeOutput))
        );
        assert_eq!(
            case(&|i| i[METAL_ENTER_PPB.at] = 1),
            Err(OutOfRange(Field::Metal))
        );
        // Curve: the second node's shift below the first.
        let node = |k: usize| HEADER_LEN + k * NODE_LEN;
        assert_eq!(
            case(&|i| i[node(1)..node(1) + 8].copy_from_slice(&(-400_000_000_000i64).to_le_bytes())),
            Err(BadCurve(CurveError::ShiftsNotIncreasing))
        );
        // Curve: values rising then falling.
        assert_eq!(
            case(&|i| i[node(1) + 8..node(1) + 12].copy_from_slice(&100i32.to_le_bytes())),
            Err(BadCurve(CurveError::NotMonotone))
        );
        // A segment's constants: wrong width shift, wrong slope mantissa by
        // one unit, a reserved bit set.
        let seg = node(5);
        assert_eq!(
            case(&|i| i[seg] ^= 1),
            Err(BadCurve(CurveError::BadSegment))
        );
        assert_eq!(
            case(&|i| i[seg + 4] ^= 1),
            Err(BadCurve(CurveError::BadSegment))
        );
        assert_eq!(
            case(&|i| i[seg + 3] = 1),
            Err(BadCurve(CurveError::BadSegment))
        );
        // A metal image must not carry a curve; a proximity image must not
        // carry a volume table.
        assert_eq!(
            case(&|i| i[KIND.at] = 3),
            Err(OutOfRange(Field::CurveNodes))
        );
        assert_eq!(
            case(&|i| i[FLAGS.at] = FLAG_VOLUME),
            Err(OutOfRange(Field::Flags))
        );
        // Metal parameters out of range, and reserved bytes.
        let mbase = encode(&metal());
        let mcase = |f: &dyn Fn(&mut Vec<u8>)| {
            let mut img = mbase.clone();
            f(&mut img);
            fix_crc(&mut img);
            validate(&img)
        };
        assert_eq!(
            mcase(&|i| i[METAL_BASELINE_K.at] = 0),
            Err(OutOfRange(Field::Metal))
        );
        assert_eq!(
            mcase(&|i| put(i, METAL_LEAVE_PPB, &300_000u32.to_le_bytes())),
            Err(OutOfRange(Field::Metal))
        );
        assert_eq!(
            mcase(&|i| i[METAL_ENTER_SAMPLES.at] = 0),
            Err(OutOfRange(Field::Metal))
        ); // zero debounce
           // The enter threshold below the limit (its Q23.40 below 2^32).
        let limit = MetalParams::PPB_LIMIT;
        assert_eq!(
            mcase(&|i| put(i, METAL_ENTER_PPB, &limit.to_le_bytes())),
            Err(OutOfRange(Field::Metal))
        );
        assert!(mcase(&|i| put(i, METAL_ENTER_PPB, &(limit - 1).to_le_bytes())).is_ok());
        assert_eq!(
            mcase(&|i| i[RESERVED_93.at] = 1),
            Err(OutOfRange(Field::Reserved))
        );
        assert_eq!(
            mcase(&|i| i[FLAGS.at] = FLAG_CUBIC),
            Err(OutOfRange(Field::Flags))
        );
    }

    /// The demo calibration's image, byte for byte where the layout fixes
    /// it (docs/image-format.md).
    #[test]
    fn layout_matches_the_documentation() {
        let img = encode(&demo_proximity().unwrap());
        assert_eq!(&img[0..4], b"LCIM");
        assert_eq!(&img[4..6], &[3, 0]);
        assert_eq!(u16::from_le_bytes([img[6], img[7]]), 232);
        assert_eq!(&img[8..12], &[1, 0, 5, 0]);
        assert_eq!(&img[12..24], b"DEMO-01-0007");
        assert_eq!(
            u32::from_le_bytes(img[28..32].try_into().unwrap()),
            48_000_000
        );
        assert_eq!(u32::from_le_bytes(img[32..36].try_into().unwrap()), 16_384);
        assert_eq!(img[76], 1);
        assert_eq!(img[77] as i8, -6);
        assert_eq!(
            i64::from_le_bytes(img[104..112].try_into().unwrap()),
            1_764_000_000
        );
        assert_eq!(&img[112..120], b"demoplan");
        // 1/p_rest's mantissa: p_rest = 139 542/16 384 ≈ 8.517, so
        // 2^35/p_rest ≈ 4.034e9 with its top bit set.
        let inv = u32::from_le_bytes(img[120..124].try_into().unwrap());
        assert!((f64::from(inv) - 2f64.powi(35) * 16_384.0 / 139_542.0).abs() < 1.0);
        // Its exponent: p_rest in Q20.44 has 48 bits, 2^(48+31)/p_rest is
        // in [2^31, 2^32); p_rest·N (N = 2^14) has 62.
        assert_eq!(&img[100..104], &[79, 93, 0, 0]);
        assert_eq!(&img[128..136], &[0; 8]);
        assert_eq!(
            i64::from_le_bytes(img[136..144].try_into().unwrap()),
            -362_000_000_000
        );
        assert_eq!(i32::from_le_bytes(img[144..148].try_into().unwrap()), 500);
        // The first segment: width 112e9 raw units needs sh = 6 (2^36 ≤ w
        // < 2^37), slope 500 units over w' = round(w / 64).
        assert_eq!(img[196], 6);
        let (k, e) = (
            i32::from_le_bytes(img[200..204].try_into().unwrap()),
            img[197],
        );
        let w = 1_750_000_000f64;
        assert!((f64::from(k) * 2f64.powi(-i32::from(e)) - 500.0 / w).abs() < 1e-9 * 500.0 / w);
    }

    /// Format 1 is read on the host and rewritten: the same calibration,
    /// without time and plan.
    #[test]
    fn format_one_reads_and_rewrites() {
        for cal in [demo_proximity().unwrap(), level_with_volume(), metal()] {
            let v1 = encode_v1(&cal);
            assert_eq!(Calibration::format_version(&v1), Ok(1));
            assert_eq!(validate(&v1), Err(ImageError::OldFormat));
            let back = Calibration::parse(&v1).unwrap();
            let want = Calibration {
                calibrated_at: 0,
                plan_id: PlanId::UNKNOWN,
                ..cal
            };
            assert_eq!(back, want);
            let v3 = encode(&back);
            assert_eq!(Calibration::parse(&v3), Ok(want));
        }
    }

    /// Format 2 (bytes 100 to 103 reserved) is read on the host, the
    /// same calibration, and refused by the firmware; a reserved byte set
    /// or a wrong stored mantissa is still refused.
    #[test]
    fn format_two_reads_and_rewrites() {
        for cal in [demo_proximity().unwrap(), level_with_volume(), metal()] {
            let mut v2 = encode(&cal);
            v2[4] = 2;
            v2[100..104].fill(0);
            fix_crc(&mut v2);
            assert_eq!(Calibration::format_version(&v2), Ok(2));
            assert_eq!(validate(&v2), Err(ImageError::OldFormat));
            assert_eq!(Calibration::parse(&v2), Ok(cal));
            let mut bad = v2.clone();
            bad[103] = 1;
            fix_crc(&mut bad);
            assert_eq!(
                Calibration::parse(&bad),
                Err(ImageError::OutOfRange(Field::Reserved))
            );
            let mut bad = v2.clone();
            bad[REST_RECIPROCAL.at] ^= 1;
            fix_crc(&mut bad);
            assert_eq!(
                Calibration::parse(&bad),
                Err(ImageError::BadGate(ShiftError::BadRestPoint))
            );
            let mut bad = v2.clone();
            bad[10] ^= 0x40;
            assert!(Calibration::parse(&bad).is_err());
        }
    }

    /// A format-1 encoder, as the format was written (header of 104
    /// bytes, nodes then derivatives).
    fn encode_v1(cal: &Calibration) -> Vec<u8> {
        let v2 = encode(cal);
        let mut img = v2[..HEADER_LEN_V1].to_vec();
        img[4] = 1;
        img[100..104].fill(0); // reserved in format 1
        for t in [cal.curve, cal.volume.map(|(t, _)| t)]
            .into_iter()
            .flatten()
        {
            for n in t.nodes() {
                img.extend_from_slice(&n.shift.raw_q40().to_le_bytes());
                img.extend_from_slice(&n.value.to_le_bytes());
            }
            if t.is_cubic() {
                let x: Vec<f64> = t.nodes().iter().map(|n| n.shift.to_f64()).collect();
                let y: Vec<f64> = t.nodes().iter().map(|n| f64::from(n.value)).collect();
                let d = pchip_derivatives(&x, &y).unwrap();
                for v in &d[..x.len()] {
                    img.extend_from_slice(&((v * 65_536.0).round() as i64).to_le_bytes());
                }
            }
        }
        let len = u16::try_from(img.len() + CRC_LEN).unwrap();
        img[6..8].copy_from_slice(&len.to_le_bytes());
        img.extend_from_slice(&[0; CRC_LEN]);
        fix_crc(&mut img);
        img
    }

    /// Every owned curve's words pass the firmware's segment checks, and
    /// one changed bit in a segment's constants fails them.
    #[test]
    fn built_curves_pass_the_firmware_checks() {
        let cal = level_with_volume();
        for t in [cal.curve.unwrap(), cal.volume.unwrap().0] {
            let c = t.curve();
            let (n, s) = c.view().words();
            assert!(CurveRef::from_words(n, s, c.len(), t.is_cubic()).is_ok());
            for i in 0..s.len() {
                let mut bad = s.to_vec();
                bad[i] ^= 1 << 3;
                assert!(
                    CurveRef::from_words(n, &bad, c.len(), t.is_cubic()).is_err(),
                    "word {i}"
                );
            }
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(3_000))]

        /// Arbitrary bytes never panic the validation, and are never
        /// accepted unless they form a complete, CRC-valid image.
        #[test]
        fn arbitrary_bytes_are_safe(bytes in proptest::collection::vec(any::<u8>(), 0..3_000)) {
            if let Ok(buf) = ImageBuf::from_bytes(&bytes) {
                if let Ok(img) = buf.image() {
                    let len = img.bytes().len();
                    prop_assert_eq!(&CRC32.checksum(&bytes[..len - CRC_LEN]).to_le_bytes()[..], &bytes[len - CRC_LEN..len]);
                }
            }
            let _ = Calibration::parse(&bytes);
        }

        /// Valid headers with arbitrary bodies: never a panic.
        #[test]
        fn plausible_headers_are_safe(body in proptest::collection::vec(any::<u8>(), 0..1_200), n in 0u8..70, flags: u8, v1: bool) {
            let mut img = encode(&level_with_volume());
            img[FLAGS.at] = flags;
            img[CURVE_NODES.at] = n;
            img.truncate(if v1 { HEADER_LEN_V1 } else { HEADER_LEN });
            if v1 {
                img[4] = 1;
            }
            img.extend_from_slice(&body);
            let len = u16::try_from(img.len() + CRC_LEN).unwrap();
            img[6..8].copy_from_slice(&len.to_le_bytes());
            img.extend_from_slice(&[0; CRC_LEN]);
            fix_crc(&mut img);
            let _ = validate(&img);
            let _ = Calibration::parse(&img);
        }

        /// Any single corrupted byte of a valid image is rejected.
        #[test]
        fn single_byte_corruption_is_caught(which in 0usize..3, at: prop::sample::Index, flip in 1u8..=255) {
            let cal = [demo_proximity().unwrap(), level_with_volume(), metal()][which];
            let mut img = encode(&cal);
            let i = at.index(img.len());
            img[i] ^= flip;
            prop_assert!(validate(&img).is_err());
            prop_assert!(Calibration::parse(&img).is_err());
        }
    }
}
