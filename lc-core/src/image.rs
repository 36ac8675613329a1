//! The calibration image: the bytes the end-of-line rig writes into a
//! unit's flash, and the validated calibration the firmware reads from them.
//!
//! The layout is the project's own, little endian, documented byte by byte
//! in `docs/image-format.md`. Its size is bounded ([`MAX_IMAGE_LEN`]) so the
//! firmware parses it from a `&[u8]` without a heap.
//!
//! ## Panic and acceptance contract
//!
//! [`Calibration::parse`] never panics, for any input: every read is a
//! checked slice access. An image is accepted only if its length, magic,
//! version, CRC-32 and every field check pass; each malformed input has its
//! own [`ImageError`]. Raw bytes and the checked [`Calibration`] are
//! different types: nothing downstream sees unchecked bytes.
//!
//! The CRC is CRC-32/ISO-HDLC (the CRC of zlib and IEEE 802.3; check value
//! 0xCBF43926 for "123456789" in Cook's catalogue of parametrised CRC
//! algorithms), computed by the `crc` crate.
//!
//! ```
//! use lc_core::image::{Calibration, MAX_IMAGE_LEN};
//! # let cal = lc_core::image::tests_support::demo_proximity().unwrap();
//! let mut buf = [0u8; MAX_IMAGE_LEN];
//! let n = cal.encode(&mut buf).unwrap();
//! let back = Calibration::parse(&buf[..n]).unwrap();
//! assert_eq!(back, cal);
//! // One flipped bit anywhere is caught.
//! buf[40] ^= 0x10;
//! assert!(Calibration::parse(&buf[..n]).is_err());
//! ```

use crate::counting::{FaultWindow, WindowError};
use crate::curve::{Curve, CurveError, Node, MAX_NODES};
use crate::drift::{DriftError, TemperatureModel};
use crate::ratio::PeriodRatio;
use crate::shift::{RestPoint, Shift};
use crate::temperature::CentiCelsius;
use core::fmt;

/// The first four bytes of every image: "LCIM".
pub const MAGIC: [u8; 4] = *b"LCIM";
/// The format version this crate reads and writes.
pub const VERSION: u16 = 1;
/// Bytes before the tables.
pub const HEADER_LEN: usize = 104;
/// Bytes per table node: shift or level (`i64`) and value (`i32`).
pub const NODE_LEN: usize = 12;
/// Bytes per stored derivative (`i64`, Q47.16).
pub const DERIVATIVE_LEN: usize = 8;
/// Bytes of the trailing CRC.
pub const CRC_LEN: usize = 4;
/// The largest image: two full cubic tables.
pub const MAX_IMAGE_LEN: usize = HEADER_LEN + 2 * MAX_NODES * (NODE_LEN + DERIVATIVE_LEN) + CRC_LEN;

/// CRC-32/ISO-HDLC.
pub const CRC32: crc::Crc<u32> = crc::Crc::<u32>::new(&crc::CRC_32_ISO_HDLC);

const FLAG_CUBIC: u8 = 1 << 0;
const FLAG_COMPANION: u8 = 1 << 1;
const FLAG_VOLUME: u8 = 1 << 2;
const FLAG_VOLUME_CUBIC: u8 = 1 << 3;
const KNOWN_FLAGS: u8 = FLAG_CUBIC | FLAG_COMPANION | FLAG_VOLUME | FLAG_VOLUME_CUBIC;

/// A field of the image, named in errors.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Field {
    /// Reader kind (byte 8).
    ReaderKind,
    /// Flags (byte 9).
    Flags,
    /// Curve node count (byte 10).
    CurveNodes,
    /// Volume node count (byte 11).
    VolumeNodes,
    /// Unit serial (bytes 12–27).
    Serial,
    /// Reference clock (bytes 28–31).
    ReferenceHz,
    /// Fault window (bytes 36–47).
    Window,
    /// Rest point (bytes 48–55).
    RestPoint,
    /// Companion rest point (bytes 56–63).
    CompanionRest,
    /// Drift model (bytes 64–75).
    Drift,
    /// Output unit or exponent (bytes 76–77).
    Output,
    /// Volume unit or exponent (bytes 78–79).
    VolumeOutput,
    /// Metal parameters (bytes 80–103).
    Metal,
    /// A reserved byte that must be zero.
    Reserved,
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
    /// The stated length disagrees with the table sizes.
    LengthMismatch,
    /// The CRC-32 does not match: the image is corrupt.
    BadCrc,
    /// A field holds a value that is not defined or not allowed.
    OutOfRange(Field),
    /// The curve is malformed (too few nodes, not monotone, …).
    BadCurve(CurveError),
    /// The volume table is malformed.
    BadVolume(CurveError),
    /// The fault window is malformed.
    BadWindow(WindowError),
    /// The drift coefficients could overflow the fixed-point path.
    BadDrift(DriftError),
    /// The output buffer is too small to encode into.
    BufferTooSmall,
}

impl fmt::Display for ImageError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ImageError::Truncated => f.write_str("image truncated"),
            ImageError::BadMagic => f.write_str("not a calibration image (bad magic)"),
            ImageError::UnknownVersion => f.write_str("unknown image format version"),
            ImageError::LengthMismatch => f.write_str("stated length disagrees with the tables"),
            ImageError::BadCrc => f.write_str("CRC mismatch: image corrupt"),
            ImageError::OutOfRange(field) => write!(f, "field {field:?} out of range"),
            ImageError::BadCurve(e) => write!(f, "curve: {e}"),
            ImageError::BadVolume(e) => write!(f, "volume table: {e}"),
            ImageError::BadWindow(e) => write!(f, "fault window: {e}"),
            ImageError::BadDrift(e) => write!(f, "drift model: {e}"),
            ImageError::BufferTooSmall => f.write_str("output buffer too small"),
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

/// A table as stored: nodes, and derivatives when cubic. Validated by
/// building a [`Curve`] from it.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Table {
    len: u8,
    cubic: bool,
    nodes: [Node; MAX_NODES],
    derivatives_q16: [i64; MAX_NODES],
}

impl Table {
    /// A linear table from nodes (validated).
    pub fn linear(nodes: &[Node]) -> Result<Self, CurveError> {
        Curve::check(nodes, None)?;
        Ok(Self::fill(nodes, None))
    }

    /// A monotone cubic table from nodes and their derivatives dy/ds in
    /// Q47.16 (validated).
    pub fn cubic(nodes: &[Node], derivatives_q16: &[i64]) -> Result<Self, CurveError> {
        Curve::check(nodes, Some(derivatives_q16))?;
        Ok(Self::fill(nodes, Some(derivatives_q16)))
    }

    /// A table without nodes, for the parser to fill in place
    /// ([`Table::read_into`]): never handed out as a value.
    const PLACEHOLDER: Table = Table {
        len: 0,
        cubic: false,
        nodes: [Node::new(Shift::ZERO, 0); MAX_NODES],
        derivatives_q16: [0; MAX_NODES],
    };

    /// Reads `n` nodes (and their derivatives when `cubic`) at `at` into
    /// this table, in place (no 1.5 KB temporary on the parser's stack),
    /// and validates them as [`Table::linear`] and [`Table::cubic`] do.
    /// `Ok(None)` when the bytes end early.
    fn read_into(
        &mut self,
        r: &Reader<'_>,
        at: usize,
        n: usize,
        cubic: bool,
    ) -> Result<Option<()>, CurveError> {
        self.len = 0;
        self.cubic = cubic;
        if n > MAX_NODES {
            return Err(CurveError::TooManyNodes);
        }
        for (i, slot) in self.nodes.iter_mut().enumerate().take(n) {
            let p = at + i * NODE_LEN;
            let (Some(x), Some(y)) = (r.i64(p), r.i32(p + 8)) else {
                return Ok(None);
            };
            *slot = Node::new(Shift::from_raw_q40(x), y);
        }
        if cubic {
            let base = at + n * NODE_LEN;
            for (i, slot) in self.derivatives_q16.iter_mut().enumerate().take(n) {
                let Some(d) = r.i64(base + i * DERIVATIVE_LEN) else {
                    return Ok(None);
                };
                *slot = d;
            }
        }
        self.len = n as u8; // ≤ 64
        Curve::check(self.nodes(), cubic.then(|| self.derivatives_q16()))?;
        Ok(Some(()))
    }

    fn fill(nodes: &[Node], derivatives: Option<&[i64]>) -> Self {
        let mut t = Table {
            len: 0,
            cubic: derivatives.is_some(),
            nodes: [Node::default(); MAX_NODES],
            derivatives_q16: [0; MAX_NODES],
        };
        for (slot, n) in t.nodes.iter_mut().zip(nodes) {
            *slot = *n;
            t.len += 1;
        }
        if let Some(d) = derivatives {
            for (slot, v) in t.derivatives_q16.iter_mut().zip(d) {
                *slot = *v;
            }
        }
        t
    }

    /// The nodes.
    pub fn nodes(&self) -> &[Node] {
        self.nodes.get(..usize::from(self.len)).unwrap_or(&[])
    }

    /// The derivatives (empty for a linear table).
    pub fn derivatives_q16(&self) -> &[i64] {
        if self.cubic {
            self.derivatives_q16
                .get(..usize::from(self.len))
                .unwrap_or(&[])
        } else {
            &[]
        }
    }

    /// Whether the table interpolates with monotone cubics.
    pub fn is_cubic(&self) -> bool {
        self.cubic
    }

    /// The curve this table describes.
    pub fn curve(&self) -> Result<Curve, CurveError> {
        let mut c = Curve::PLACEHOLDER;
        self.build_curve(&mut c)?;
        Ok(c)
    }

    /// [`Table::curve`] built in place (readers: no temporary curve).
    pub(crate) fn build_curve(&self, curve: &mut Curve) -> Result<(), CurveError> {
        curve.rebuild(self.nodes(), self.cubic.then(|| self.derivatives_q16()))
    }
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

    fn from_bytes(raw: [u8; 16]) -> Option<Self> {
        let len = raw.iter().position(|&c| c == 0).unwrap_or(16);
        let (text, pad) = raw.split_at(len);
        if text.is_empty()
            || !text.iter().all(|c| (0x20..=0x7E).contains(c))
            || pad.iter().any(|&c| c != 0)
        {
            return None;
        }
        Some(Self(raw))
    }

    /// The serial as text.
    pub fn as_str(&self) -> &str {
        let len = self.0.iter().position(|&c| c == 0).unwrap_or(16);
        self.0
            .get(..len)
            .and_then(|t| core::str::from_utf8(t).ok())
            .unwrap_or("")
    }
}

/// A validated calibration: what the firmware runs on.
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
    /// Level → volume table and its scale (level only). Its x axis is the
    /// level in the curve's output units as `geometry::level_to_shift`
    /// (level · 2^32 in the Q23.40 field).
    pub volume: Option<(Table, OutputScale)>,
    /// Metal parameters (metal only).
    pub metal: Option<MetalParams>,
}

/// Checked little-endian reads from a byte slice; `None` past the end.
struct Reader<'a>(&'a [u8]);

impl Reader<'_> {
    fn bytes<const N: usize>(&self, at: usize) -> Option<[u8; N]> {
        let s = self.0.get(at..at.checked_add(N)?)?;
        let mut out = [0u8; N];
        out.copy_from_slice(s);
        Some(out)
    }
    fn u8(&self, at: usize) -> Option<u8> {
        self.0.get(at).copied()
    }
    fn u16(&self, at: usize) -> Option<u16> {
        self.bytes(at).map(u16::from_le_bytes)
    }
    fn u32(&self, at: usize) -> Option<u32> {
        self.bytes(at).map(u32::from_le_bytes)
    }
    fn i32(&self, at: usize) -> Option<i32> {
        self.bytes(at).map(i32::from_le_bytes)
    }
    fn u64(&self, at: usize) -> Option<u64> {
        self.bytes(at).map(u64::from_le_bytes)
    }
    fn i64(&self, at: usize) -> Option<i64> {
        self.bytes(at).map(i64::from_le_bytes)
    }
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

fn table_len(nodes: usize, cubic: bool) -> usize {
    nodes * (NODE_LEN + if cubic { DERIVATIVE_LEN } else { 0 })
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

impl Calibration {
    /// Parses and validates an image. `bytes` may be longer than the image
    /// (a flash page): the header's length field decides.
    pub fn parse(bytes: &[u8]) -> Result<Self, ImageError> {
        use ImageError::*;
        let r = Reader(bytes);
        let t = |v: Option<u8>| v.ok_or(Truncated);
        if bytes.len() < HEADER_LEN + CRC_LEN {
            return Err(Truncated);
        }
        if r.bytes::<4>(0) != Some(MAGIC) {
            return Err(BadMagic);
        }
        if r.u16(4) != Some(VERSION) {
            return Err(UnknownVersion);
        }
        let len = usize::from(r.u16(6).ok_or(Truncated)?);
        if len > bytes.len() {
            return Err(Truncated);
        }
        let flags = t(r.u8(9))?;
        let curve_n = usize::from(t(r.u8(10))?);
        let volume_n = usize::from(t(r.u8(11))?);
        if curve_n > MAX_NODES {
            return Err(OutOfRange(Field::CurveNodes));
        }
        if volume_n > MAX_NODES {
            return Err(OutOfRange(Field::VolumeNodes));
        }
        let expected = HEADER_LEN
            + table_len(curve_n, flags & FLAG_CUBIC != 0)
            + table_len(volume_n, flags & FLAG_VOLUME_CUBIC != 0)
            + CRC_LEN;
        if len != expected {
            return Err(LengthMismatch);
        }
        let body = bytes.get(..len - CRC_LEN).ok_or(Truncated)?;
        if r.u32(len - CRC_LEN) != Some(CRC32.checksum(body)) {
            return Err(BadCrc);
        }
        // Fields.
        let kind = match r.u8(8) {
            Some(1) => ReaderKind::Proximity,
            Some(2) => ReaderKind::Level,
            Some(3) => ReaderKind::Metal,
            _ => return Err(OutOfRange(Field::ReaderKind)),
        };
        if flags & !KNOWN_FLAGS != 0 {
            return Err(OutOfRange(Field::Flags));
        }
        let serial = Serial::from_bytes(r.bytes::<16>(12).ok_or(Truncated)?)
            .ok_or(OutOfRange(Field::Serial))?;
        let reference_hz = r.u32(28).ok_or(Truncated)?;
        if reference_hz == 0 {
            return Err(OutOfRange(Field::ReferenceHz));
        }
        let gate_cycles = r.u32(32).ok_or(Truncated)?;
        let window = FaultWindow::new(
            reference_hz,
            r.u32(36).ok_or(Truncated)?,
            r.u32(40).ok_or(Truncated)?,
            r.u32(44).ok_or(Truncated)?,
        )
        .map_err(BadWindow)?;
        let rest = RestPoint::from_ratio(PeriodRatio::from_raw_q44(r.u64(48).ok_or(Truncated)?))
            .map_err(|_| OutOfRange(Field::RestPoint))?;
        let companion_raw = r.u64(56).ok_or(Truncated)?;
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
            CentiCelsius(r.i32(64).ok_or(Truncated)?),
            r.i32(68).ok_or(Truncated)?,
            r.i32(72).ok_or(Truncated)?,
        )
        .map_err(BadDrift)?;
        let output = scale_from(t(r.u8(76))?, t(r.u8(77))?).ok_or(OutOfRange(Field::Output))?;
        let volume_unit = (t(r.u8(78))?, t(r.u8(79))?);
        let metal_raw = r.bytes::<24>(80).ok_or(Truncated)?;

        // Tables and kind-specific parts, read into the calibration in
        // place: a table is 1.5 KB, and the firmware's stack should hold
        // each once.
        let mut cal = Calibration {
            kind,
            serial,
            reference_hz,
            gate_cycles,
            window,
            rest,
            companion_rest,
            drift,
            output,
            curve: None,
            volume: None,
            metal: None,
        };
        let tables_at = HEADER_LEN;
        match (kind, curve_n) {
            (ReaderKind::Metal, 0) => {}
            (ReaderKind::Metal, _) => return Err(OutOfRange(Field::CurveNodes)),
            _ => {
                cal.curve
                    .insert(Table::PLACEHOLDER)
                    .read_into(&r, tables_at, curve_n, flags & FLAG_CUBIC != 0)
                    .map_err(BadCurve)?
                    .ok_or(Truncated)?;
            }
        }
        if kind == ReaderKind::Metal && flags & FLAG_CUBIC != 0 {
            return Err(OutOfRange(Field::Flags));
        }
        let volume_at = tables_at + table_len(curve_n, flags & FLAG_CUBIC != 0);
        if flags & FLAG_VOLUME != 0 {
            if kind != ReaderKind::Level {
                return Err(OutOfRange(Field::Flags));
            }
            let (table, _) = cal.volume.insert((Table::PLACEHOLDER, output));
            table
                .read_into(&r, volume_at, volume_n, flags & FLAG_VOLUME_CUBIC != 0)
                .map_err(BadVolume)?
                .ok_or(Truncated)?;
            let scale =
                scale_from(volume_unit.0, volume_unit.1).ok_or(OutOfRange(Field::VolumeOutput))?;
            if let Some((_, s)) = cal.volume.as_mut() {
                *s = scale;
            }
        } else {
            if volume_n != 0 || flags & FLAG_VOLUME_CUBIC != 0 {
                return Err(OutOfRange(Field::VolumeNodes));
            }
            if volume_unit != (0, 0) {
                return Err(OutOfRange(Field::VolumeOutput));
            }
        }
        let metal = if kind == ReaderKind::Metal {
            let m = Reader(&metal_raw);
            let p = MetalParams {
                enter_ppb: m.u32(0).ok_or(Truncated)?,
                leave_ppb: m.u32(4).ok_or(Truncated)?,
                enter_samples: m.u16(8).ok_or(Truncated)?,
                leave_samples: m.u16(10).ok_or(Truncated)?,
                baseline_k: m.u8(12).ok_or(Truncated)?,
                ring_drop: m.u16(14).ok_or(Truncated)?,
                relearn_readings: m.u32(16).ok_or(Truncated)?,
            };
            let reserved_ok = m.u8(13) == Some(0) && m.u32(20) == Some(0);
            let valid = p.enter_ppb > 0
                && p.leave_ppb < p.enter_ppb
                && p.enter_samples > 0
                && p.leave_samples > 0
                && (1..=16).contains(&p.baseline_k);
            if !valid {
                return Err(OutOfRange(Field::Metal));
            }
            if !reserved_ok {
                return Err(OutOfRange(Field::Reserved));
            }
            Some(p)
        } else {
            if metal_raw.iter().any(|&b| b != 0) {
                return Err(OutOfRange(Field::Metal));
            }
            None
        };
        cal.metal = metal;
        Ok(cal)
    }

    /// The configured reciprocal gate length in sensor cycles, `None` when
    /// the image has none (stored as 0).
    pub fn gate(&self) -> Option<u32> {
        (self.gate_cycles > 0).then_some(self.gate_cycles)
    }

    /// Length of this calibration's image in bytes.
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

    /// Writes the image into `out`; returns its length. The result always
    /// parses back to an equal calibration when `self` is consistent (the
    /// encoder checks the same rules as the parser by parsing its output).
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
        let n8 = |n: usize| u8::try_from(n).map_err(|_| ImageError::OutOfRange(Field::CurveNodes));
        w.put(0, &MAGIC)?;
        w.put(4, &VERSION.to_le_bytes())?;
        w.put(6, &len16.to_le_bytes())?;
        w.put(8, &[self.kind as u8, flags, n8(curve_n)?, n8(volume_n)?])?;
        w.put(12, &self.serial.0)?;
        w.put(28, &self.reference_hz.to_le_bytes())?;
        w.put(32, &self.gate_cycles.to_le_bytes())?;
        w.put(36, &self.window.min_hz().to_le_bytes())?;
        w.put(40, &self.window.max_hz().to_le_bytes())?;
        w.put(44, &self.window.min_cycles().to_le_bytes())?;
        w.put(48, &self.rest.ratio().raw_q44().to_le_bytes())?;
        w.put(
            56,
            &self
                .companion_rest
                .map_or(0, |r| r.ratio().raw_q44())
                .to_le_bytes(),
        )?;
        w.put(64, &self.drift.reference().0.to_le_bytes())?;
        w.put(68, &self.drift.b1_raw().to_le_bytes())?;
        w.put(72, &self.drift.b2_raw().to_le_bytes())?;
        w.put(
            76,
            &[
                self.output.unit as u8,
                self.output.decimal_exponent.to_le_bytes()[0],
            ],
        )?;
        if let Some((_, s)) = self.volume {
            w.put(78, &[s.unit as u8, s.decimal_exponent.to_le_bytes()[0]])?;
        }
        if let Some(m) = self.metal {
            w.put(80, &m.enter_ppb.to_le_bytes())?;
            w.put(84, &m.leave_ppb.to_le_bytes())?;
            w.put(88, &m.enter_samples.to_le_bytes())?;
            w.put(90, &m.leave_samples.to_le_bytes())?;
            w.put(92, &[m.baseline_k, 0])?;
            w.put(94, &m.ring_drop.to_le_bytes())?;
            w.put(96, &m.relearn_readings.to_le_bytes())?;
        }
        let mut at = HEADER_LEN;
        for table in [self.curve, self.volume.map(|(t, _)| t)]
            .into_iter()
            .flatten()
        {
            for n in table.nodes() {
                w.put(at, &n.shift.raw_q40().to_le_bytes())?;
                w.put(at + 8, &n.value.to_le_bytes())?;
                at += NODE_LEN;
            }
            for d in table.derivatives_q16() {
                w.put(at, &d.to_le_bytes())?;
                at += DERIVATIVE_LEN;
            }
        }
        let crc = CRC32.checksum(w.0.get(..len - CRC_LEN).ok_or(ImageError::BufferTooSmall)?);
        w.put(len - CRC_LEN, &crc.to_le_bytes())?;
        // The encoder holds itself to the parser's rules.
        let back = Self::parse(w.0)?;
        if back != *self {
            return Err(ImageError::LengthMismatch);
        }
        Ok(len)
    }
}

/// Calibrations for examples and tests (the demo scenario's proximity
/// unit). Not part of the API contract.
#[doc(hidden)]
pub mod tests_support {
    use super::*;
    use crate::counting::CountPair;

    /// The demo proximity unit: 16 384-cycle gate at 48 MHz, a linear curve
    /// from 0.5 mm to 8 mm.
    pub fn demo_proximity() -> Option<Calibration> {
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
        })
    }
}

#[cfg(test)]
mod tests {
    use super::tests_support::demo_proximity;
    use super::*;
    use crate::counting::CountPair;
    use crate::curve::pchip_derivatives;
    use proptest::prelude::*;

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

    #[test]
    fn every_kind_round_trips() {
        for cal in [demo_proximity().unwrap(), level_with_volume(), metal()] {
            let img = encode(&cal);
            assert_eq!(img.len(), cal.encoded_len());
            assert_eq!(Calibration::parse(&img), Ok(cal));
            // A longer buffer (a flash page) parses the same.
            let mut page = img.clone();
            page.resize(4096, 0xFF);
            assert_eq!(Calibration::parse(&page), Ok(cal));
        }
        assert_eq!(
            encode(&demo_proximity().unwrap()).len(),
            HEADER_LEN + 5 * NODE_LEN + CRC_LEN
        );
        assert_eq!(MAX_IMAGE_LEN, 2_668);
    }

    #[test]
    fn framing_errors() {
        let img = encode(&demo_proximity().unwrap());
        assert_eq!(Calibration::parse(&[]), Err(ImageError::Truncated));
        assert_eq!(
            Calibration::parse(&img[..HEADER_LEN]),
            Err(ImageError::Truncated)
        );
        assert_eq!(
            Calibration::parse(&img[..img.len() - 1]),
            Err(ImageError::Truncated)
        );
        let mut bad = img.clone();
        bad[0] = b'X';
        assert_eq!(Calibration::parse(&bad), Err(ImageError::BadMagic));
        let mut bad = img.clone();
        bad[4] = 2;
        assert_eq!(Calibration::parse(&bad), Err(ImageError::UnknownVersion));
        let mut bad = img.clone();
        bad[10] = 4; // four nodes stated, five stored
        assert_eq!(Calibration::parse(&bad), Err(ImageError::LengthMismatch));
        let mut bad = img.clone();
        bad[10] = 65;
        assert_eq!(
            Calibration::parse(&bad),
            Err(ImageError::OutOfRange(Field::CurveNodes))
        );
        let mut bad = img.clone();
        bad[HEADER_LEN + 3] ^= 1;
        assert_eq!(Calibration::parse(&bad), Err(ImageError::BadCrc));
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
            Calibration::parse(&img)
        };
        use ImageError::*;
        assert_eq!(case(&|i| i[8] = 9), Err(OutOfRange(Field::ReaderKind)));
        assert_eq!(case(&|i| i[9] = 0x80), Err(OutOfRange(Field::Flags)));
        assert_eq!(case(&|i| i[12] = 0), Err(OutOfRange(Field::Serial)));
        assert_eq!(case(&|i| i[12] = 0x07), Err(OutOfRange(Field::Serial)));
        assert_eq!(case(&|i| i[27] = b'x'), Err(OutOfRange(Field::Serial))); // text after the padding
        assert_eq!(
            case(&|i| i[28..32].copy_from_slice(&0u32.to_le_bytes())),
            Err(OutOfRange(Field::ReferenceHz))
        );
        assert_eq!(
            case(&|i| i[40..44].copy_from_slice(&1u32.to_le_bytes())),
            Err(BadWindow(WindowError::EmptyBand))
        );
        assert_eq!(
            case(&|i| i[48..56].copy_from_slice(&1u64.to_le_bytes())),
            Err(OutOfRange(Field::RestPoint))
        );
        assert_eq!(case(&|i| i[56] = 1), Err(OutOfRange(Field::CompanionRest)));
        assert_eq!(
            case(&|i| i[64..68].copy_from_slice(&40_000i32.to_le_bytes())),
            Err(BadDrift(DriftError::ReferenceOutOfRange))
        );
        assert_eq!(
            case(&|i| i[68..72].copy_from_slice(&i32::MAX.to_le_bytes())),
            Err(BadDrift(DriftError::CorrectionTooLarge))
        );
        assert_eq!(case(&|i| i[76] = 9), Err(OutOfRange(Field::Output)));
        assert_eq!(case(&|i| i[77] = 19), Err(OutOfRange(Field::Output)));
        assert_eq!(case(&|i| i[78] = 2), Err(OutOfRange(Field::VolumeOutput)));
        assert_eq!(case(&|i| i[80] = 1), Err(OutOfRange(Field::Metal)));
        // Curve: the second node's shift below the first.
        assert_eq!(
            case(&|i| i[HEADER_LEN + 12..HEADER_LEN + 20]
                .copy_from_slice(&(-400_000_000_000i64).to_le_bytes())),
            Err(BadCurve(CurveError::ShiftsNotIncreasing))
        );
        // Curve: values rising then falling.
        assert_eq!(
            case(&|i| i[HEADER_LEN + 20..HEADER_LEN + 24].copy_from_slice(&100i32.to_le_bytes())),
            Err(BadCurve(CurveError::NotMonotone))
        );
        // A metal image must not carry a curve; a proximity image must not
        // carry a volume table.
        assert_eq!(case(&|i| i[8] = 3), Err(OutOfRange(Field::CurveNodes)));
        assert_eq!(case(&|i| i[9] = FLAG_VOLUME), Err(OutOfRange(Field::Flags)));
        // A curve needs two nodes (one-node image, length made consistent).
        let mut one = base[..HEADER_LEN + NODE_LEN + CRC_LEN].to_vec();
        one[10] = 1;
        let len = u16::try_from(one.len()).unwrap();
        one[6..8].copy_from_slice(&len.to_le_bytes());
        fix_crc(&mut one);
        assert_eq!(
            Calibration::parse(&one),
            Err(BadCurve(CurveError::TooFewNodes))
        );
        // Metal parameters out of range, and reserved bytes.
        let mbase = encode(&metal());
        let mcase = |f: &dyn Fn(&mut Vec<u8>)| {
            let mut img = mbase.clone();
            f(&mut img);
            fix_crc(&mut img);
            Calibration::parse(&img)
        };
        assert_eq!(mcase(&|i| i[92] = 0), Err(OutOfRange(Field::Metal))); // baseline k
        assert_eq!(
            mcase(&|i| i[84..88].copy_from_slice(&300_000u32.to_le_bytes())),
            Err(OutOfRange(Field::Metal))
        );
        assert_eq!(mcase(&|i| i[88] = 0), Err(OutOfRange(Field::Metal))); // zero debounce
        assert_eq!(mcase(&|i| i[93] = 1), Err(OutOfRange(Field::Reserved)));
        assert_eq!(mcase(&|i| i[9] = FLAG_CUBIC), Err(OutOfRange(Field::Flags)));
    }

    /// The demo calibration's image, byte for byte where the layout fixes
    /// it (docs/image-format.md).
    #[test]
    fn layout_matches_the_documentation() {
        let img = encode(&demo_proximity().unwrap());
        assert_eq!(&img[0..4], b"LCIM");
        assert_eq!(&img[4..6], &[1, 0]);
        assert_eq!(u16::from_le_bytes([img[6], img[7]]), 168);
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
            -362_000_000_000
        );
        assert_eq!(i32::from_le_bytes(img[112..116].try_into().unwrap()), 500);
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(5_000))]

        /// Arbitrary bytes never panic the parser, and are never accepted
        /// unless they form a complete, CRC-valid image.
        #[test]
        fn arbitrary_bytes_are_safe(bytes in proptest::collection::vec(any::<u8>(), 0..3_000)) {
            if let Ok(cal) = Calibration::parse(&bytes) {
                let len = cal.encoded_len();
                prop_assert_eq!(&CRC32.checksum(&bytes[..len - CRC_LEN]).to_le_bytes()[..], &bytes[len - CRC_LEN..len]);
            }
        }

        /// Valid headers with arbitrary bodies: never a panic.
        #[test]
        fn plausible_headers_are_safe(body in proptest::collection::vec(any::<u8>(), 0..1_200), n in 0u8..70, flags: u8) {
            let mut img = encode(&level_with_volume());
            img[9] = flags;
            img[10] = n;
            img.truncate(HEADER_LEN);
            img.extend_from_slice(&body);
            let len = u16::try_from(img.len() + CRC_LEN).unwrap();
            img[6..8].copy_from_slice(&len.to_le_bytes());
            img.extend_from_slice(&[0; CRC_LEN]);
            fix_crc(&mut img);
            let _ = Calibration::parse(&img);
        }

        /// Any single corrupted byte of a valid image is rejected.
        #[test]
        fn single_byte_corruption_is_caught(which in 0usize..3, at: prop::sample::Index, flip in 1u8..=255) {
            let cal = [demo_proximity().unwrap(), level_with_volume(), metal()][which];
            let mut img = encode(&cal);
            let i = at.index(img.len());
            img[i] ^= flip;
            prop_assert!(Calibration::parse(&img).is_err());
        }
    }
}
