//! The live link (feature `link`): a unit streams its count pairs and its
//! own readings over any byte sink (a UART driver, a USB serial class, a
//! socket), framed so that a receiver resynchronises after lost or
//! corrupted bytes. Link format 1 is the project's own and is described
//! byte by byte in docs/link.md.
//!
//! A frame is a record body (kind, sequence number, fixed-length payload,
//! CRC-32) stuffed with COBS so that it holds no zero byte, then one
//! `0x00` delimiter. The [`Encoder`] numbers the frames and writes each one
//! whole into an [`embedded_io::Write`] sink;
//! [`Record::parse`] and [`unstuff`] are the receiving side's pieces
//! (lc-host's tolerant decoder is built on them).
//!
//! Cost: an [`Encoder`] is 4 bytes; sending a record builds its body and
//! its stuffed frame on the stack ([`MAX_BODY`] and [`MAX_FRAME`] bytes).
//! No heap, no panics: the firmware example's `panic-never` proof calls
//! every encoding path.
//!
//! ```
//! use lc_core::counting::CountPair;
//! use lc_core::link::{Counts, Encoder, Hello, Record, Thermal, unstuff, MAX_BODY};
//! use lc_core::temperature::CentiCelsius;
//!
//! let mut encoder = Encoder::new();
//! let mut wire = [0u8; 128];
//! let mut sink: &mut [u8] = &mut wire; // any embedded_io::Write
//! encoder.send(&mut sink, &Record::Hello(Hello::new(b"DEMO-01-0001", 0x1234_5678))).unwrap();
//! let counts = Counts {
//!     channel: 0,
//!     pair: CountPair::new(16_384, 139_506),
//!     companion: None,
//!     thermal: Thermal::Celsius(CentiCelsius(2_502)),
//!     ring_count: None,
//! };
//! encoder.send(&mut sink, &Record::Counts(counts)).unwrap();
//! // The receiver: split at 0x00, unstuff, parse.
//! let mut chunks = wire.split(|&b| b == 0).filter(|c| !c.is_empty());
//! let mut body = [0u8; MAX_BODY];
//! let n = unstuff(chunks.next().unwrap(), &mut body).unwrap();
//! let (seq, hello) = Record::parse(&body[..n]).unwrap();
//! assert_eq!(seq, 0);
//! assert!(matches!(hello, Record::Hello(h) if h.start && h.serial_str() == Some("DEMO-01-0001")));
//! let n = unstuff(chunks.next().unwrap(), &mut body).unwrap();
//! assert_eq!(Record::parse(&body[..n]).unwrap(), (1, Record::Counts(counts)));
//! ```

use crate::counting::{CountPair, FaultError};
use crate::drift::CompanionError;
use crate::image::{crc32, ReaderKind};
use crate::reader::{Input, SensorFault, Status};
use crate::shift::ShiftError;
use crate::temperature::CentiCelsius;
use core::fmt;

/// The link format this module writes and reads.
pub const FORMAT_VERSION: u8 = 1;
/// The longest record body (a count-pair record).
pub const MAX_BODY: usize = 31;
/// The longest frame on the wire: a stuffed body and its delimiter.
pub const MAX_FRAME: usize = MAX_BODY + 2;

/// Record kinds (byte 0 of a body).
const KIND_HELLO: u8 = 0x01;
const KIND_COUNTS: u8 = 0x02;
const KIND_READING: u8 = 0x03;
/// Body lengths: kind, sequence, payload, CRC.
const HELLO_LEN: usize = 3 + 22 + 4;
const COUNTS_LEN: usize = 3 + 24 + 4;
const READING_LEN: usize = 3 + 22 + 4;

/// A unit's hello: who is talking (docs/link.md, "Hello").
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Hello {
    /// The unit's serial, ASCII, padded with zero bytes.
    pub serial: [u8; 16],
    /// CRC-32 of the unit's calibration image.
    pub image_crc: u32,
    /// The unit's first frame since reset. [`Encoder`] sets it on its
    /// first hello and clears it afterwards.
    pub start: bool,
}

impl Hello {
    /// A hello for `serial` (its first 16 bytes) and the image's CRC.
    pub fn new(serial: &[u8], image_crc: u32) -> Self {
        let mut s = [0u8; 16];
        for (d, b) in s.iter_mut().zip(serial) {
            *d = *b;
        }
        Self {
            serial: s,
            image_crc,
            start: false,
        }
    }

    /// The serial without its padding, when it is printable ASCII.
    pub fn serial_str(&self) -> Option<&str> {
        let n = self
            .serial
            .iter()
            .position(|&b| b == 0)
            .unwrap_or(self.serial.len());
        let s = self.serial.get(..n)?;
        let ok = !s.is_empty() && s.iter().all(|b| b.is_ascii_graphic());
        if ok {
            core::str::from_utf8(s).ok()
        } else {
            None
        }
    }
}

/// The temperature a count pair was measured at, as the unit has it.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Thermal {
    /// Not measured.
    #[default]
    None,
    /// Hundredths of a degree Celsius.
    Celsius(CentiCelsius),
    /// The NTC's raw ADC code (the unit did not convert it).
    NtcCode(u32),
}

/// One channel's measurement for one reading: a reader's [`Input`] and
/// its channel (docs/link.md, "Count pair").
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Counts {
    /// The sensor channel.
    pub channel: u8,
    /// The channel's count pair.
    pub pair: CountPair,
    /// The companion's count pair, when the unit has one.
    pub companion: Option<CountPair>,
    /// The temperature.
    pub thermal: Thermal,
    /// The ring count after the gate, when measured.
    pub ring_count: Option<u16>,
}

impl Counts {
    /// The record of a reader's input on `channel`.
    pub fn of_input(channel: u8, input: &Input) -> Self {
        Self {
            channel,
            pair: input.pair,
            companion: input.companion,
            thermal: input.temperature.map_or(Thermal::None, Thermal::Celsius),
            ring_count: input.ring_count,
        }
    }

    /// The reader's input (an NTC code gives no temperature).
    pub fn input(&self) -> Input {
        Input {
            pair: self.pair,
            companion: self.companion,
            temperature: match self.thermal {
                Thermal::Celsius(t) => Some(t),
                _ => None,
            },
            ring_count: self.ring_count,
        }
    }
}

/// What a unit read from one count pair (docs/link.md, "Reading").
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ReadingRecord {
    /// The sensor channel.
    pub channel: u8,
    /// The reader that made it.
    pub kind: ReaderKind,
    /// The reading's status.
    pub status: Status,
    /// Sequence number of the count-pair frame it was read from.
    pub of_sequence: u16,
    /// The primary output ([`crate::reader::Reading::output`]).
    pub value: i32,
    /// The secondary output ([`crate::reader::Reading::secondary`]).
    pub secondary: Option<i32>,
    /// The curve's input, Q23.40
    /// ([`crate::reader::Reading::curve_input_q40`]).
    pub curve_input_q40: i64,
}

#[cfg(any(feature = "proximity", feature = "level", feature = "metal"))]
impl ReadingRecord {
    /// The record of `reading`, read on `channel` from the count pair sent
    /// as frame `of_sequence`.
    pub fn of_reading(channel: u8, of_sequence: u16, reading: &crate::reader::Reading) -> Self {
        use crate::reader::Reading;
        let kind = match reading {
            #[cfg(feature = "proximity")]
            Reading::Proximity(_) => ReaderKind::Proximity,
            #[cfg(feature = "level")]
            Reading::Level(_) => ReaderKind::Level,
            #[cfg(feature = "metal")]
            Reading::Metal(_) => ReaderKind::Metal,
        };
        Self {
            channel,
            kind,
            status: reading.status(),
            of_sequence,
            value: reading.output(),
            secondary: reading.secondary(),
            curve_input_q40: reading.curve_input_q40(),
        }
    }
}

/// One record of the stream.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Record {
    /// Who is talking.
    Hello(Hello),
    /// A measurement.
    Counts(Counts),
    /// The unit's reading of a measurement.
    Reading(ReadingRecord),
}

/// Why a received body is not a frame of this format: a bad frame.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum FrameError {
    /// The COBS stuffing is malformed (a code byte points past the chunk,
    /// or the body is longer than any record).
    Stuffing,
    /// The CRC differs.
    Crc,
    /// The kind byte is not a record kind.
    Kind,
    /// The body's length is not its kind's.
    Length,
    /// A hello of another format version.
    Version,
    /// A reserved flag bit, an unknown status code or reader kind.
    Field,
}

impl fmt::Display for FrameError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            FrameError::Stuffing => "malformed byte stuffing",
            FrameError::Crc => "CRC mismatch",
            FrameError::Kind => "unknown record kind",
            FrameError::Length => "wrong length for its kind",
            FrameError::Version => "hello of another link format version",
            FrameError::Field => "reserved bit, unknown status code or reader kind",
        })
    }
}

impl core::error::Error for FrameError {}

/// A stuffed frame ready for the wire, delimiter included.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Frame {
    bytes: [u8; MAX_FRAME],
    len: u8,
}

impl Frame {
    /// The frame's bytes.
    pub fn as_bytes(&self) -> &[u8] {
        self.bytes.get(..usize::from(self.len)).unwrap_or(&[])
    }
}

/// The sending side: numbers frames and writes them whole into a sink.
/// 4 bytes of state.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub struct Encoder {
    sequence: u16,
    said_hello: bool,
}

impl Encoder {
    /// An encoder whose first frame is numbered 0 and whose first hello
    /// carries the start flag.
    pub const fn new() -> Self {
        Self {
            sequence: 0,
            said_hello: false,
        }
    }

    /// The sequence number the next frame gets.
    pub const fn next_sequence(&self) -> u16 {
        self.sequence
    }

    /// Numbers and stuffs `record` (the first hello gets the start flag).
    pub fn encode(&mut self, record: &Record) -> Frame {
        let sequence = self.sequence;
        self.sequence = sequence.wrapping_add(1);
        let mut record = *record;
        if let Record::Hello(h) = &mut record {
            h.start = !self.said_hello;
            self.said_hello = true;
        }
        let body = body_of(sequence, &record);
        stuff(body.as_slice())
    }

    /// Sends `record` as one frame and returns its sequence number. The
    /// frame goes to the sink by `write` calls until it is all written
    /// (not by `write_all`, whose default panics on a sink that accepts
    /// nothing). A failed write still uses the number: the receiver
    /// counts the frame as dropped (and what arrived of it as bad).
    ///
    /// # Errors
    /// The sink's error, or [`SendError::Stalled`] when it accepted no
    /// byte of what was left.
    pub fn send<W: embedded_io::Write>(
        &mut self,
        sink: &mut W,
        record: &Record,
    ) -> Result<u16, SendError<W::Error>> {
        let sequence = self.sequence;
        let frame = self.encode(record);
        let mut rest = frame.as_bytes();
        while !rest.is_empty() {
            match sink.write(rest) {
                Ok(0) => return Err(SendError::Stalled),
                Ok(n) => rest = rest.get(n..).unwrap_or(&[]),
                Err(e) => return Err(SendError::Sink(e)),
            }
        }
        Ok(sequence)
    }
}

/// Why [`Encoder::send`] did not write a whole frame.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum SendError<E> {
    /// The sink's own error.
    Sink(E),
    /// The sink accepted no byte (a `write` returned 0).
    Stalled,
}

impl<E: fmt::Debug> fmt::Display for SendError<E> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SendError::Sink(e) => write!(f, "the byte sink failed: {e:?}"),
            SendError::Stalled => f.write_str("the byte sink accepted no byte"),
        }
    }
}

impl<E: fmt::Debug> core::error::Error for SendError<E> {}

/// A record body being built.
struct Body {
    buf: [u8; MAX_BODY],
    len: usize,
}

impl Body {
    fn put(&mut self, bytes: &[u8]) {
        if let Some(dst) = self.buf.get_mut(self.len..) {
            for (d, s) in dst.iter_mut().zip(bytes) {
                *d = *s;
            }
        }
        self.len = self.len.saturating_add(bytes.len()).min(MAX_BODY);
    }

    fn as_slice(&self) -> &[u8] {
        self.buf.get(..self.len).unwrap_or(&[])
    }
}

fn body_of(sequence: u16, record: &Record) -> Body {
    let mut b = Body {
        buf: [0; MAX_BODY],
        len: 0,
    };
    let seq = sequence.to_le_bytes();
    match record {
        Record::Hello(h) => {
            b.put(&[
                KIND_HELLO,
                seq[0],
                seq[1],
                FORMAT_VERSION,
                u8::from(h.start),
            ]);
            b.put(&h.serial);
            b.put(&h.image_crc.to_le_bytes());
        }
        Record::Counts(c) => {
            let (thermal_flag, thermal) = match c.thermal {
                Thermal::None => (0, 0u32),
                Thermal::Celsius(t) => (2, u32::from_le_bytes(t.0.to_le_bytes())),
                Thermal::NtcCode(code) => (4, code),
            };
            let flags = u8::from(c.companion.is_some())
                | thermal_flag
                | (u8::from(c.ring_count.is_some()) << 3);
            let comp = c.companion.unwrap_or(CountPair::new(0, 0));
            b.put(&[KIND_COUNTS, seq[0], seq[1], c.channel, flags]);
            b.put(&c.pair.cycles.to_le_bytes());
            b.put(&c.pair.ticks.to_le_bytes());
            b.put(&comp.cycles.to_le_bytes());
            b.put(&comp.ticks.to_le_bytes());
            b.put(&thermal.to_le_bytes());
            b.put(&c.ring_count.unwrap_or(0).to_le_bytes());
        }
        Record::Reading(r) => {
            let of = r.of_sequence.to_le_bytes();
            b.put(&[
                KIND_READING,
                seq[0],
                seq[1],
                r.channel,
                u8::from(r.secondary.is_some()),
                r.kind as u8,
                status_code(r.status),
                of[0],
                of[1],
            ]);
            b.put(&r.value.to_le_bytes());
            b.put(&r.secondary.unwrap_or(0).to_le_bytes());
            b.put(&r.curve_input_q40.to_le_bytes());
        }
    }
    let crc = crc32(b.as_slice());
    b.put(&crc.to_le_bytes());
    b
}

/// COBS-stuffs `body` (at most [`MAX_BODY`] bytes) and appends the
/// delimiter.
fn stuff(body: &[u8]) -> Frame {
    let mut out = [0u8; MAX_FRAME];
    let mut set = |at: usize, v: u8| {
        if let Some(d) = out.get_mut(at) {
            *d = v;
        }
    };
    let mut code_at = 0usize;
    let mut w = 1usize;
    let mut code = 1u8;
    for &byte in body.iter().take(MAX_BODY) {
        // w <= 1 + MAX_BODY and code <= MAX_BODY + 1: no wrap.
        if byte == 0 {
            set(code_at, code);
            code_at = w;
            w = w.wrapping_add(1);
            code = 1;
        } else {
            set(w, byte);
            w = w.wrapping_add(1);
            code = code.wrapping_add(1);
        }
    }
    set(code_at, code);
    set(w, 0);
    Frame {
        bytes: out,
        // w <= MAX_BODY + 1 < 255.
        len: u8::try_from(w.wrapping_add(1)).unwrap_or(0),
    }
}

/// Undoes COBS: `chunk` is what came between two delimiters (no zero
/// byte in it). Writes the body into `out` and returns its length;
/// `None` when the stuffing is malformed or the body does not fit.
pub fn unstuff(chunk: &[u8], out: &mut [u8]) -> Option<usize> {
    let mut w = 0usize;
    let mut rest = chunk;
    while let Some((&code, tail)) = rest.split_first() {
        if code == 0 {
            return None;
        }
        let n = usize::from(code - 1);
        let data = tail.get(..n)?;
        for &b in data {
            if b == 0 {
                return None;
            }
            *out.get_mut(w)? = b;
            w += 1;
        }
        rest = tail.get(n..)?;
        if code != 0xFF && !rest.is_empty() {
            *out.get_mut(w)? = 0;
            w += 1;
        }
    }
    Some(w)
}

fn u16_at(b: &[u8], at: usize) -> u16 {
    let mut v = [0u8; 2];
    if let Some(s) = b.get(at..) {
        for (d, x) in v.iter_mut().zip(s) {
            *d = *x;
        }
    }
    u16::from_le_bytes(v)
}

fn u32_at(b: &[u8], at: usize) -> u32 {
    let mut v = [0u8; 4];
    if let Some(s) = b.get(at..) {
        for (d, x) in v.iter_mut().zip(s) {
            *d = *x;
        }
    }
    u32::from_le_bytes(v)
}

fn i32_at(b: &[u8], at: usize) -> i32 {
    i32::from_le_bytes(u32_at(b, at).to_le_bytes())
}

fn i64_at(b: &[u8], at: usize) -> i64 {
    let lo = u64::from(u32_at(b, at));
    let hi = u64::from(u32_at(b, at + 4));
    i64::from_le_bytes((lo | (hi << 32)).to_le_bytes())
}

fn byte_at(b: &[u8], at: usize) -> u8 {
    b.get(at).copied().unwrap_or(0)
}

impl Record {
    /// Checks and reads an unstuffed body: its sequence number and record.
    ///
    /// # Errors
    /// Why it is a bad frame.
    pub fn parse(body: &[u8]) -> Result<(u16, Record), FrameError> {
        let len = match body.first() {
            Some(&KIND_HELLO) => HELLO_LEN,
            Some(&KIND_COUNTS) => COUNTS_LEN,
            Some(&KIND_READING) => READING_LEN,
            _ => return Err(FrameError::Kind),
        };
        if body.len() != len {
            return Err(FrameError::Length);
        }
        let (data, crc) = body.split_at(len - 4);
        if crc32(data) != u32_at(crc, 0) {
            return Err(FrameError::Crc);
        }
        let sequence = u16_at(body, 1);
        let record = match byte_at(body, 0) {
            KIND_HELLO => {
                if byte_at(body, 3) != FORMAT_VERSION {
                    return Err(FrameError::Version);
                }
                let flags = byte_at(body, 4);
                if flags & !1 != 0 {
                    return Err(FrameError::Field);
                }
                let mut serial = [0u8; 16];
                for (d, s) in serial.iter_mut().zip(body.iter().skip(5)) {
                    *d = *s;
                }
                Record::Hello(Hello {
                    serial,
                    image_crc: u32_at(body, 21),
                    start: flags & 1 != 0,
                })
            }
            KIND_COUNTS => {
                let flags = byte_at(body, 4);
                if flags & !0x0F != 0 || flags & 0x06 == 0x06 {
                    return Err(FrameError::Field);
                }
                let raw = u32_at(body, 21);
                Record::Counts(Counts {
                    channel: byte_at(body, 3),
                    pair: CountPair::new(u32_at(body, 5), u32_at(body, 9)),
                    companion: (flags & 1 != 0)
                        .then(|| CountPair::new(u32_at(body, 13), u32_at(body, 17))),
                    thermal: match flags & 0x06 {
                        2 => Thermal::Celsius(CentiCelsius(i32_at(body, 21))),
                        4 => Thermal::NtcCode(raw),
                        _ => Thermal::None,
                    },
                    ring_count: (flags & 8 != 0).then(|| u16_at(body, 25)),
                })
            }
            _ => {
                let flags = byte_at(body, 4);
                if flags & !1 != 0 {
                    return Err(FrameError::Field);
                }
                let kind = match byte_at(body, 5) {
                    1 => ReaderKind::Proximity,
                    2 => ReaderKind::Level,
                    3 => ReaderKind::Metal,
                    _ => return Err(FrameError::Field),
                };
                let status = status_of_code(byte_at(body, 6)).ok_or(FrameError::Field)?;
                Record::Reading(ReadingRecord {
                    channel: byte_at(body, 3),
                    kind,
                    status,
                    of_sequence: u16_at(body, 7),
                    value: i32_at(body, 9),
                    secondary: (flags & 1 != 0).then(|| i32_at(body, 13)),
                    curve_input_q40: i64_at(body, 17),
                })
            }
        };
        Ok((sequence, record))
    }
}

const FAULTS: [FaultError; 5] = [
    FaultError::NoOscillation,
    FaultError::NoReference,
    FaultError::TooFewCycles,
    FaultError::FrequencyTooLow,
    FaultError::FrequencyTooHigh,
];
const SHIFTS: [ShiftError; 3] = [
    ShiftError::ZeroCount,
    ShiftError::OutOfRange,
    ShiftError::BadRestPoint,
];

fn fault_index(e: FaultError) -> u8 {
    match e {
        FaultError::NoOscillation => 0,
        FaultError::NoReference => 1,
        FaultError::TooFewCycles => 2,
        FaultError::FrequencyTooLow => 3,
        FaultError::FrequencyTooHigh => 4,
    }
}

fn shift_index(e: ShiftError) -> u8 {
    match e {
        ShiftError::ZeroCount => 0,
        ShiftError::OutOfRange => 1,
        ShiftError::BadRestPoint => 2,
    }
}

/// A status's code on the link (docs/link.md, "Status codes").
pub fn status_code(status: Status) -> u8 {
    match status {
        Status::Ok => 0x00,
        Status::BelowRange => 0x01,
        Status::AboveRange => 0x02,
        Status::NoTarget => 0x03,
        Status::SensorFault(f) => match f {
            SensorFault::Counts(e) => 0x10 | fault_index(e),
            SensorFault::Companion(Some(e)) => 0x20 | fault_index(e),
            SensorFault::Companion(None) => 0x25,
            SensorFault::Shift(e) => 0x30 | shift_index(e),
            SensorFault::Ratio(CompanionError::GateMismatch) => 0x40,
            SensorFault::Ratio(CompanionError::Shift(e)) => match e {
                ShiftError::ZeroCount => 0x41,
                ShiftError::OutOfRange => 0x42,
                ShiftError::BadRestPoint => 0x43,
            },
            SensorFault::Reference => 0x50,
            SensorFault::ReferenceLow => 0x51,
            SensorFault::Frozen => 0x60,
            SensorFault::TemperatureOutOfDomain => 0x61,
            SensorFault::TemperatureMissing => 0x62,
            SensorFault::OutOfReach => 0x63,
        },
    }
}

/// The status of a code on the link; `None` for a code that names none.
pub fn status_of_code(code: u8) -> Option<Status> {
    let low = usize::from(code & 0x0F);
    let fault = match code {
        0x00 => return Some(Status::Ok),
        0x01 => return Some(Status::BelowRange),
        0x02 => return Some(Status::AboveRange),
        0x03 => return Some(Status::NoTarget),
        0x10..=0x14 => SensorFault::Counts(*FAULTS.get(low)?),
        0x20..=0x24 => SensorFault::Companion(Some(*FAULTS.get(low)?)),
        0x25 => SensorFault::Companion(None),
        0x30..=0x32 => SensorFault::Shift(*SHIFTS.get(low)?),
        0x40 => SensorFault::Ratio(CompanionError::GateMismatch),
        0x41 => SensorFault::Ratio(CompanionError::Shift(ShiftError::ZeroCount)),
        0x42 => SensorFault::Ratio(CompanionError::Shift(ShiftError::OutOfRange)),
        0x43 => SensorFault::Ratio(CompanionError::Shift(ShiftError::BadRestPoint)),
        0x50 => SensorFault::Reference,
        0x51 => SensorFault::ReferenceLow,
        0x60 => SensorFault::Frozen,
        0x61 => SensorFault::TemperatureOutOfDomain,
        0x62 => SensorFault::TemperatureMissing,
        0x63 => SensorFault::OutOfReach,
        _ => return None,
    };
    Some(Status::SensorFault(fault))
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn decode(frame: &Frame) -> Result<(u16, Record), FrameError> {
        let bytes = frame.as_bytes();
        assert_eq!(bytes.last(), Some(&0));
        let chunk = &bytes[..bytes.len() - 1];
        assert!(!chunk.contains(&0));
        let mut body = [0u8; MAX_BODY];
        let n = unstuff(chunk, &mut body).ok_or(FrameError::Stuffing)?;
        Record::parse(&body[..n])
    }

    fn all_statuses() -> impl Iterator<Item = Status> {
        let mut v = vec![
            Status::Ok,
            Status::BelowRange,
            Status::AboveRange,
            Status::NoTarget,
            Status::SensorFault(SensorFault::Companion(None)),
            Status::SensorFault(SensorFault::Reference),
            Status::SensorFault(SensorFault::ReferenceLow),
            Status::SensorFault(SensorFault::Frozen),
            Status::SensorFault(SensorFault::TemperatureOutOfDomain),
            Status::SensorFault(SensorFault::TemperatureMissing),
            Status::SensorFault(SensorFault::OutOfReach),
            Status::SensorFault(SensorFault::Ratio(CompanionError::GateMismatch)),
        ];
        for e in FAULTS {
            v.push(Status::SensorFault(SensorFault::Counts(e)));
            v.push(Status::SensorFault(SensorFault::Companion(Some(e))));
        }
        for e in SHIFTS {
            v.push(Status::SensorFault(SensorFault::Shift(e)));
            v.push(Status::SensorFault(SensorFault::Ratio(
                CompanionError::Shift(e),
            )));
        }
        v.into_iter()
    }

    #[test]
    fn every_status_has_its_own_code() {
        let mut seen = std::collections::BTreeSet::new();
        for s in all_statuses() {
            let c = status_code(s);
            assert!(seen.insert(c), "{c:#x} twice");
            assert_eq!(status_of_code(c), Some(s));
        }
        assert_eq!(seen.len(), 28);
        for c in 0..=255u8 {
            if let Some(s) = status_of_code(c) {
                assert_eq!(status_code(s), c);
            }
        }
    }

    #[test]
    fn a_hello_byte_by_byte() {
        // docs/link.md, "Hello": the layout written out by hand.
        let mut e = Encoder::new();
        let f = e.encode(&Record::Hello(Hello::new(b"AB", 0x0403_0201)));
        let mut body = vec![0x01, 0x00, 0x00, 1, 1, b'A', b'B'];
        body.extend_from_slice(&[0; 14]);
        body.extend_from_slice(&[1, 2, 3, 4]);
        let crc = crc32(&body);
        body.extend_from_slice(&crc.to_le_bytes());
        assert_eq!(body.len(), HELLO_LEN);
        let mut body_back = [0u8; MAX_BODY];
        let bytes = f.as_bytes();
        let n = unstuff(&bytes[..bytes.len() - 1], &mut body_back).unwrap();
        assert_eq!(&body_back[..n], body.as_slice());
        // Stuffed: the sequence's first zero ends the first piece (kind
        // byte only): code 2.
        assert_eq!(&bytes[..3], &[2, 0x01, 1]);
        // The second hello has no start flag and the next number.
        let (seq, r) = decode(&e.encode(&Record::Hello(Hello::new(b"AB", 1)))).unwrap();
        assert_eq!(seq, 1);
        assert!(matches!(r, Record::Hello(h) if !h.start));
    }

    #[test]
    fn cobs_of_long_runs() {
        // Bodies of 300 non-zero bytes and of zeros: the 0xFF code.
        for body in [vec![7u8; 300], vec![0u8; 10], vec![]] {
            let mut out = vec![0u8; 400];
            let mut enc = vec![];
            // Reference COBS, written out independently from the paper:
            // docs/references.md, Cheshire & Baker 1999 (from memory).
            let mut block = vec![];
            for &b in &body {
                if b == 0 {
                    enc.push(block.len() as u8 + 1);
                    enc.extend_from_slice(&block);
                    block.clear();
                } else {
                    block.push(b);
                    if block.len() == 254 {
                        enc.push(255);
                        enc.extend_from_slice(&block);
                        block.clear();
                    }
                }
            }
            enc.push(block.len() as u8 + 1);
            enc.extend_from_slice(&block);
            let n = unstuff(&enc, &mut out).unwrap();
            // A trailing 0xFF block leaves an empty final piece; the
            // published encoder writes its code byte (1) too.
            assert_eq!(&out[..n], body.as_slice());
        }
    }

    fn arb_counts() -> impl Strategy<Value = Counts> {
        (
            any::<u8>(),
            any::<(u32, u32)>(),
            proptest::option::of(any::<(u32, u32)>()),
            0u8..3,
            any::<i32>(),
            proptest::option::of(any::<u16>()),
        )
            .prop_map(|(channel, p, comp, t, traw, ring_count)| Counts {
                channel,
                pair: CountPair::new(p.0, p.1),
                companion: comp.map(|c| CountPair::new(c.0, c.1)),
                thermal: match t {
                    0 => Thermal::None,
                    1 => Thermal::Celsius(CentiCelsius(traw)),
                    _ => Thermal::NtcCode(traw as u32),
                },
                ring_count,
            })
    }

    fn arb_reading() -> impl Strategy<Value = ReadingRecord> {
        let statuses: Vec<Status> = all_statuses().collect();
        (
            any::<u8>(),
            0usize..3,
            proptest::sample::select(statuses),
            any::<u16>(),
            any::<i32>(),
            proptest::option::of(any::<i32>()),
            any::<i64>(),
        )
            .prop_map(|(channel, k, status, of_sequence, value, secondary, q)| {
                ReadingRecord {
                    channel,
                    kind: [ReaderKind::Proximity, ReaderKind::Level, ReaderKind::Metal][k],
                    status,
                    of_sequence,
                    value,
                    secondary,
                    curve_input_q40: q,
                }
            })
    }

    proptest! {
        #[test]
        fn records_round_trip(
            start in any::<u16>(),
            c in arb_counts(),
            r in arb_reading(),
            serial in proptest::collection::vec(1u8..=255, 0..20),
            crc in any::<u32>(),
        ) {
            let mut e = Encoder { sequence: start, said_hello: true };
            let hello = Hello::new(&serial, crc);
            for (i, rec) in [Record::Counts(c), Record::Reading(r), Record::Hello(hello)]
                .iter()
                .enumerate()
            {
                let f = e.encode(rec);
                prop_assert!(f.as_bytes().len() <= MAX_FRAME);
                let (seq, back) = decode(&f).unwrap();
                prop_assert_eq!(seq, start.wrapping_add(i as u16));
                prop_assert_eq!(&back, rec);
            }
        }

        #[test]
        fn any_body_parses_or_is_refused(body in proptest::collection::vec(any::<u8>(), 0..40)) {
            let _ = Record::parse(&body);
            let mut out = [0u8; MAX_BODY];
            let _ = unstuff(&body, &mut out);
        }

        #[test]
        fn one_flipped_bit_is_refused(c in arb_counts(), bit in 0usize..(COUNTS_LEN * 8)) {
            let body = body_of(9, &Record::Counts(c));
            let mut b = body.as_slice().to_vec();
            b[bit / 8] ^= 1 << (bit % 8);
            prop_assert!(Record::parse(&b).is_err());
        }
    }

    #[test]
    fn send_writes_one_frame_and_reports_the_sink() {
        let mut e = Encoder::new();
        let mut small = [0u8; 8];
        let mut sink: &mut [u8] = &mut small;
        let c = Counts::of_input(3, &Input::counts(CountPair::new(1, 2)));
        assert!(e.send(&mut sink, &Record::Counts(c)).is_err());
        // The number was used.
        assert_eq!(e.next_sequence(), 1);
        let mut wire = [0u8; 64];
        let mut sink: &mut [u8] = &mut wire;
        assert_eq!(e.send(&mut sink, &Record::Counts(c)), Ok(1));
        let n = 64 - sink.len();
        assert_eq!(n, COUNTS_LEN + 2);
        assert_eq!(wire[n - 1], 0);
    }
}
