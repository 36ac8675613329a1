//! One text line per reading, without `core::fmt` (whose machinery costs
//! kilobytes of flash): `reading <i> value <v> secondary <v|-> shift
//! <Q23.40 as 16 hex digits> status <name>`.
//!
//! The host test (`tests/firmware_budget.rs`) compiles this file too and
//! compares the firmware's lines with the host's, byte for byte.

use lc_core::reader::{SensorFault, Status};

/// Room for the longest line.
const CAPACITY: usize = 112;

/// A line being written. Text beyond its capacity is dropped.
pub struct Line {
    buf: [u8; CAPACITY],
    len: usize,
}

impl Default for Line {
    fn default() -> Self {
        Self::new()
    }
}

impl Line {
    /// An empty line.
    pub const fn new() -> Self {
        Self {
            buf: [0; CAPACITY],
            len: 0,
        }
    }

    /// The line's bytes.
    pub fn as_bytes(&self) -> &[u8] {
        self.buf.get(..self.len).unwrap_or(&[])
    }

    /// Appends `text`.
    pub fn text(&mut self, text: &[u8]) {
        for &b in text {
            if let Some(slot) = self.buf.get_mut(self.len) {
                *slot = b;
                self.len += 1;
            }
        }
    }

    /// Appends `v` in decimal.
    pub fn uint(&mut self, mut v: u32) {
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
        self.text(digits.get(start..).unwrap_or(&[]));
    }

    /// Appends `v` in decimal.
    pub fn int(&mut self, v: i32) {
        if v < 0 {
            self.text(b"-");
        }
        self.uint(v.unsigned_abs());
    }

    /// Appends the 64 bits of `v` as 16 hex digits (two's complement).
    pub fn hex64(&mut self, v: i64) {
        let hex = b"0123456789abcdef";
        for i in (0..16u32).rev() {
            // A nibble (< 16) indexes the 16 digits: exact and in bounds.
            let nibble = ((v >> (4 * i)) & 0xF) as usize;
            self.text(hex.get(nibble..=nibble).unwrap_or(b"?"));
        }
    }

    /// The line of reading number `index`: its value (gap, level, metal
    /// class), its secondary value (volume, ring-count drop) if any, the
    /// raw Q23.40 value it came from (shift, probe/reference ratio, shift
    /// minus baseline) and its status.
    pub fn reading(
        index: u32,
        value: i32,
        secondary: Option<i32>,
        raw_q40: i64,
        status: Status,
    ) -> Self {
        let mut line = Self::new();
        line.text(b"reading ");
        line.uint(index);
        line.text(b" value ");
        line.int(value);
        line.text(b" secondary ");
        match secondary {
            Some(v) => line.int(v),
            None => line.text(b"-"),
        }
        line.text(b" shift ");
        line.hex64(raw_q40);
        line.text(b" status ");
        line.text(status_name(status));
        line.text(b"\n");
        line
    }
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
