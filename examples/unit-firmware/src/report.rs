//! One text line per reading, without `core::fmt` (whose machinery costs
//! kilobytes of flash) and without a line buffer (RAM): `reading <i> value
//! <v> secondary <v|-> shift <Q23.40 as 16 hex digits> status <name>`,
//! written piece by piece to a [`Sink`].
//!
//! The host test (`tests/firmware_budget.rs`) compiles this file too and
//! compares the firmware's lines with the host's, byte for byte.

use lc_core::reader::{SensorFault, Status};

/// Where the pieces of a line go (the firmware: the host's standard
/// output).
pub trait Sink {
    /// Appends `bytes`.
    fn put(&mut self, bytes: &[u8]);
}

/// Powers of ten, largest first: the decimal digits come from repeated
/// subtraction. Cortex-M0 has no divide instruction, and `v / 10` would
/// link the runtime's division routine (about 500 bytes) for a few
/// numbers a line.
const POWERS_OF_TEN: [u32; 10] = [
    1_000_000_000,
    100_000_000,
    10_000_000,
    1_000_000,
    100_000,
    10_000,
    1_000,
    100,
    10,
    1,
];

/// Appends `-` when `negative`, then `magnitude` in decimal.
fn decimal(out: &mut impl Sink, negative: bool, mut magnitude: u32) {
    // A sign and at most 10 digits (u32::MAX = 4 294 967 295).
    let mut text = [b'-'; 11];
    let mut len = usize::from(negative);
    for p in POWERS_OF_TEN {
        let mut digit = b'0';
        // At most 9 rounds (4 for 10^9): magnitude < 10 * p here, except
        // for p = 10^9, where magnitude <= u32::MAX < 5 * 10^9.
        while magnitude >= p {
            magnitude -= p;
            digit += 1;
        }
        // No leading zeros; the last digit always (0 is "0").
        if len > usize::from(negative) || digit != b'0' || p == 1 {
            if let Some(slot) = text.get_mut(len) {
                *slot = digit;
                len += 1;
            }
        }
    }
    out.put(text.get(..len).unwrap_or(&[]));
}

/// Appends `v` in decimal.
pub fn uint(out: &mut impl Sink, v: u32) {
    decimal(out, false, v);
}

/// Appends `v` in decimal.
pub fn int(out: &mut impl Sink, v: i32) {
    decimal(out, v < 0, v.unsigned_abs());
}

/// Appends the 64 bits of `v` as 16 hex digits (two's complement).
pub fn hex64(out: &mut impl Sink, v: i64) {
    // Two 32-bit halves: M0 has no 64-bit shift instruction.
    let (high, low) = ((v >> 32) as u32, v as u32);
    let mut digits = [0u8; 16];
    for (i, d) in digits.iter_mut().enumerate() {
        let word = if i < 8 { high } else { low };
        // A nibble (< 16): the cast is exact.
        let nibble = ((word >> (28 - 4 * (i % 8))) & 0xF) as u8;
        *d = if nibble < 10 {
            b'0' + nibble
        } else {
            b'a' - 10 + nibble
        };
    }
    out.put(&digits);
}

/// The line of reading number `index`: its value (gap, level, metal
/// class), its secondary value (volume, ring-count drop) if any, the raw
/// Q23.40 value it came from (shift, probe/reference ratio, shift minus
/// baseline) and its status.
pub fn reading(
    out: &mut impl Sink,
    index: u32,
    value: i32,
    secondary: Option<i32>,
    raw_q40: i64,
    status: Status,
) {
    out.put(b"reading ");
    uint(out, index);
    out.put(b" value ");
    int(out, value);
    out.put(b" secondary ");
    match secondary {
        Some(v) => int(out, v),
        None => out.put(b"-"),
    }
    out.put(b" shift ");
    hex64(out, raw_q40);
    out.put(b" status ");
    out.put(status_name(status));
    out.put(b"\n");
}

/// A short name for each status.
pub fn status_name(s: Status) -> &'static [u8] {
    match s {
        Status::Ok => b"ok",
        Status::BelowRange => b"below-range",
        Status::AboveRange => b"above-range",
        Status::NoTarget => b"no-target",
        Status::SensorFault(SensorFault::Counts(_)) => b"fault-counts",
        Status::SensorFault(SensorFault::Companion(_)) => b"fault-companion",
        Status::SensorFault(SensorFault::Shift(_)) => b"fault-shift",
        Status::SensorFault(SensorFault::Ratio(_)) => b"fault-ratio",
        Status::SensorFault(SensorFault::Reference) => b"fault-reference",
        Status::SensorFault(SensorFault::ReferenceLow) => b"fault-reference-low",
        Status::SensorFault(SensorFault::Frozen) => b"fault-frozen",
        Status::SensorFault(SensorFault::TemperatureOutOfDomain) => b"fault-temperature-domain",
        Status::SensorFault(SensorFault::TemperatureMissing) => b"fault-temperature-missing",
        Status::SensorFault(SensorFault::OutOfReach) => b"fault-out-of-reach",
    }
}
