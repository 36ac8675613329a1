//! One text line per reading, without `core::fmt` (whose machinery costs
//! kilobytes of flash) and without a line buffer (RAM): `reading <i> value
//! <v> secondary <v|-> shift <Q23.40 as 16 hex digits> status <name>`,
//! written piece by piece (numbers digit by digit, as to a UART) to a
//! [`Sink`].
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

/// Appends one byte.
fn byte(out: &mut impl Sink, b: u8) {
    out.put(core::slice::from_ref(&b));
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

/// Appends `-` when `negative`, then `magnitude` in decimal.
fn decimal(out: &mut impl Sink, negative: bool, mut magnitude: u32) {
    if negative {
        out.put(b"-");
    }
    let mut started = false;
    for p in POWERS_OF_TEN {
        let mut digit = b'0';
        // At most 9 rounds (4 for 10^9): magnitude < 10 * p here, except
        // for p = 10^9, where magnitude <= u32::MAX < 5 * 10^9.
        while magnitude >= p {
            magnitude -= p;
            digit += 1;
        }
        // No leading zeros; the last digit always (0 is "0").
        started |= digit != b'0' || p == 1;
        if started {
            byte(out, digit);
        }
    }
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
    for word in [(v >> 32) as u32, v as u32] {
        for i in (0..8).rev() {
            // A nibble (< 16): the cast is exact.
            let nibble = ((word >> (4 * i)) & 0xF) as u8;
            byte(
                out,
                if nibble < 10 {
                    b'0' + nibble
                } else {
                    b'a' - 10 + nibble
                },
            );
        }
    }
}

/// The line of reading number `index`: its value (gap, level, metal
/// class), its secondary value (volume, ring-count drop) if any, the raw
/// Q23.40 value it came from (shift, probe/reference ratio, shift minus
/// baseline) and its status.
///
/// Kept out of line: its working memory (the values kept across the
/// writes) is then on the stack only while a line is written, not in the
/// frame that holds the reader.
#[inline(never)]
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
    status_name(out, status);
}

/// The status names after their `fault-` prefix, in the order of
/// [`status_name`]'s numbers, each with the line's end: one string, no
/// table of pointers.
const NAMES: &[u8] = b"ok\nbelow-range\nabove-range\nno-target\n\
    counts\ncompanion\nshift\nratio\nreference\nreference-low\nfrozen\n\
    temperature-domain\ntemperature-missing\nout-of-reach\n";

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
                SensorFault::ReferenceLow => 9,
                SensorFault::Frozen => 10,
                SensorFault::TemperatureOutOfDomain => 11,
                SensorFault::TemperatureMissing => 12,
                SensorFault::OutOfReach => 13,
            }
        }
    };
    // The name is the part of NAMES after `number` line ends, up to and
    // including the next.
    let mut skip = number;
    let mut start = 0;
    for (at, &b) in NAMES.iter().enumerate() {
        if b == b'\n' {
            if skip == 0 {
                out.put(NAMES.get(start..=at).unwrap_or(&[]));
                return;
            }
            skip -= 1;
            start = at + 1;
        }
    }
}
