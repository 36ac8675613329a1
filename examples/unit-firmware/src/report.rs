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

/// Appends `v` in decimal.
pub fn uint(out: &mut impl Sink, mut v: u32) {
    let mut digits = [0u8; 10];
    let mut start = digits.len();
    while let Some(d) = start.checked_sub(1).and_then(|i| digits.get_mut(i)) {
        // v % 10 < 10: the cast is exact.
        *d = b'0' + (v % 10) as u8;
        start -= 1;
        v /= 10;
        if v == 0 {
            break;
        }
    }
    out.put(digits.get(start..).unwrap_or(&[]));
}

/// Appends `v` in decimal.
pub fn int(out: &mut impl Sink, v: i32) {
    if v < 0 {
        out.put(b"-");
    }
    uint(out, v.unsigned_abs());
}

/// Appends the 64 bits of `v` as 16 hex digits (two's complement).
pub fn hex64(out: &mut impl Sink, v: i64) {
    let mut digits = [0u8; 16];
    for (i, d) in (0..16u32).rev().zip(digits.iter_mut()) {
        // A nibble (< 16): the cast is exact.
        let nibble = ((v >> (4 * i)) & 0xF) as u8;
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
