//! One text line per reading, without `core::fmt` (whose machinery costs
//! kilobytes of flash) and without a line buffer (RAM): `reading <i> value
//! <v> secondary <v|-> shift <Q23.40 as 16 hex digits> status <name>`,
//! written piece by piece (numbers digit by digit, as to a UART) to a
//! [`Sink`].
//!
//! The host test (`tests/firmware_budget.rs`) compiles this file too and
//! compares the firmware's lines with the host's, byte for byte.

use lc_core::reader::{LevelReading, MetalReading, ProximityReading, SensorFault, Status};

/// Where the pieces of a line go (the firmware: the host's standard
/// output).
pub trait Sink {
    /// Appends `bytes`.
    fn put(&mut self, bytes: &[u8]);
}

/// Powers of ten, largest first: the decimal digits come from repeated
/// subtraction. Cortex-M0 has no divide instruction, and `v / 10` would
/// link the runtime's division routine (about 400 bytes) for a few
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

/// Powers of sixteen, largest first: the hex digits of a 32-bit word by
/// the same subtraction.
const POWERS_OF_16: [u32; 8] = [
    1 << 28,
    1 << 24,
    1 << 20,
    1 << 16,
    1 << 12,
    1 << 8,
    1 << 4,
    1,
];

/// Appends the digits of `v`: in hex, every digit (8); in decimal,
/// without leading zeros (0 is "0"). One routine for every number of a
/// line.
#[inline(never)]
fn digits(out: &mut impl Sink, mut v: u32, hex: bool) {
    let powers: &[u32] = if hex { &POWERS_OF_16 } else { &POWERS_OF_TEN };
    let mut started = hex;
    for &p in powers {
        let mut digit = 0u8;
        // At most 15 rounds: v < 16 * p here (v < 10 * p for decimal),
        // except for the largest power of ten, where v <= u32::MAX <
        // 5 * 10^9.
        while v >= p {
            v -= p;
            digit += 1;
        }
        started |= digit != 0 || p == 1;
        if started {
            let c = if digit < 10 {
                b'0' + digit
            } else {
                b'a' - 10 + digit
            };
            out.put(&[c]);
        }
    }
}

/// Appends `label`, then `-` when `negative`, then `magnitude` in
/// decimal: one call for a line's label and its number.
#[inline(never)]
pub fn decimal(out: &mut impl Sink, label: &[u8], negative: bool, magnitude: u32) {
    out.put(label);
    if negative {
        out.put(b"-");
    }
    digits(out, magnitude, false);
}

/// Appends `label`, then `v` in decimal.
fn int(out: &mut impl Sink, label: &[u8], v: i32) {
    decimal(out, label, v < 0, v.unsigned_abs());
}

/// The line of reading number `index`: its value (gap, level, metal
/// class), its secondary value (volume, ring-count drop) if any, the raw
/// Q23.40 value it came from (shift, probe/reference ratio, shift minus
/// baseline, as the 16 hex digits of its two's complement) and its
/// status. The firmwares call it through [`proximity`], [`level`] and
/// [`metal`].
#[inline]
pub fn reading(
    out: &mut impl Sink,
    index: u32,
    value: i32,
    secondary: Option<i32>,
    raw_q40: i64,
    status: Status,
) {
    decimal(out, b"reading ", false, index);
    int(out, b" value ", value);
    match secondary {
        Some(v) => int(out, b" secondary ", v),
        None => out.put(b" secondary -"),
    }
    out.put(b" shift ");
    // Two 32-bit halves: M0 has no 64-bit shift instruction.
    digits(out, (raw_q40 >> 32) as u32, true);
    digits(out, raw_q40 as u32, true);
    out.put(b" status ");
    status_name(out, status);
}

// The line of each product's reading. Each takes the reading by
// reference, where `read` returned it, and is kept out of line: the
// line's working memory is then on the stack only while a line is
// written, not in the frame that holds the reader.

/// A proximity unit's line: the gap (µm) and the shift.
#[inline(never)]
pub fn proximity(out: &mut impl Sink, index: u32, r: &ProximityReading) {
    reading(out, index, r.gap, None, r.shift.raw_q40(), r.status);
}

/// A level unit's line: the level (0.1 mm), the volume (mL) and the
/// probe/reference ratio.
#[inline(never)]
pub fn level(out: &mut impl Sink, index: u32, r: &LevelReading) {
    reading(out, index, r.level, r.volume, r.axis.raw_q40(), r.status);
}

/// A metal detector's line: the class code, the ring-count drop and the
/// shift minus the baseline.
#[inline(never)]
pub fn metal(out: &mut impl Sink, index: u32, r: &MetalReading) {
    reading(
        out,
        index,
        r.class as i32,
        r.ring_drop,
        r.delta.raw_q40(),
        r.status,
    );
}

/// The status names after their `fault-` prefix, in the order of
/// [`status_name`]'s numbers (the order `Status` and `SensorFault`
/// declare them, so that the compiler numbers the faults by an addition
/// instead of a table), each with the line's end: one string, no table of
/// pointers.
const NAMES: &[u8] = b"ok\nbelow-range\nabove-range\nno-target\n\
    counts\ncompanion\nshift\nratio\nreference\nfrozen\n\
    temperature-domain\ntemperature-missing\nreference-low\nout-of-reach\n";

/// Appends the status's short name (`ok`, `no-target`, `fault-counts`, …)
/// and the line's end.
pub fn status_name(out: &mut impl Sink, s: Status) {
    let number = match s {
        Status::Ok => 0,
        Status::BelowRange => 1,
        Status::AboveRange => 2,
        Status::NoTarget => 3,
        Status::SensorFault(fault) => {
            out.put(b"fault-");
            match fault {
                SensorFault::Counts(_) => 4,
                SensorFault::Companion(_) => 5,
                SensorFault::Shift(_) => 6,
                SensorFault::Ratio(_) => 7,
                SensorFault::Reference => 8,
                SensorFault::Frozen => 9,
                SensorFault::TemperatureOutOfDomain => 10,
                SensorFault::TemperatureMissing => 11,
                SensorFault::ReferenceLow => 12,
                SensorFault::OutOfReach => 13,
            }
        }
    };
    // The name is the part of NAMES after `number` line ends, up to and
    // including the next.
    let mut rest = NAMES;
    let mut skip = number;
    while let Some(end) = rest.iter().position(|&b| b == b'\n') {
        let (name, tail) = rest.split_at(end + 1);
        if skip == 0 {
            out.put(name);
            return;
        }
        skip -= 1;
        rest = tail;
    }
}
