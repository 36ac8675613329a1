//! Widening narrow hardware timers into gate counts.
//!
//! Timers are 16, 24 (SysTick) or 32 bits wide, and a gate can be longer
//! than one timer period. The overflow interrupt counts wraps; a count is
//! `wraps · 2^width + end − start`. This module does that arithmetic once,
//! checked, so callers never do it ad hoc.
//!
//! Definition of `wraps` used everywhere here: the number of times the
//! counter rolled over from its maximum to zero between the start capture
//! and the end capture. A wrap whose interrupt is still pending when the end
//! capture is read must be counted; [`Widener`] resolves that race.
//!
//! ```
//! use lc_core::counting::capture::{elapsed, CaptureError};
//! // 24-bit SysTick-like counter: no wrap, 1000 counts.
//! assert_eq!(elapsed(5_000, 6_000, 0, 24), Ok(1_000));
//! // End before start without a wrap is impossible.
//! assert_eq!(elapsed(6_000, 5_000, 0, 24), Err(CaptureError::Inconsistent));
//! ```

use core::fmt;

/// Why two captures could not be turned into a count.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum CaptureError {
    /// The timer width is not within 1..=32 bits.
    BadWidth,
    /// A capture value does not fit in the timer width.
    OutOfRange,
    /// The end capture lies before the start capture and no wrap was counted.
    Inconsistent,
    /// The elapsed count does not fit in 32 bits.
    Overflow,
}

impl fmt::Display for CaptureError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            CaptureError::BadWidth => "timer width must be 1 to 32 bits",
            CaptureError::OutOfRange => "capture value does not fit the timer width",
            CaptureError::Inconsistent => "end capture lies before start capture without a wrap",
            CaptureError::Overflow => "elapsed count exceeds 32 bits",
        })
    }
}

impl core::error::Error for CaptureError {}

/// Elapsed counts between two captures of a `width_bits`-wide timer that
/// wrapped `wraps` times in between: `wraps · 2^width + end − start`.
/// Exact; every impossible or unrepresentable case is a typed error.
pub const fn elapsed(
    start: u32,
    end: u32,
    wraps: u32,
    width_bits: u32,
) -> Result<u32, CaptureError> {
    if width_bits == 0 || width_bits > 32 {
        return Err(CaptureError::BadWidth);
    }
    if width_bits < 32 && (start >> width_bits != 0 || end >> width_bits != 0) {
        return Err(CaptureError::OutOfRange);
    }
    // wraps · 2^32 + end ≤ (2^32 − 1) · 2^32 + 2^32 − 1 < 2^64: no overflow.
    let total = ((wraps as u64) << width_bits) + end as u64;
    let start = start as u64;
    if total < start {
        return Err(CaptureError::Inconsistent);
    }
    let span = total - start;
    if span > u32::MAX as u64 {
        return Err(CaptureError::Overflow);
    }
    Ok(span as u32)
}

/// [`elapsed`] for a 16-bit timer.
pub const fn elapsed_u16(start: u16, end: u16, wraps: u32) -> Result<u32, CaptureError> {
    elapsed(start as u32, end as u32, wraps, 16)
}

/// [`elapsed`] for a 24-bit timer (such as SysTick, counting up).
pub const fn elapsed_u24(start: u32, end: u32, wraps: u32) -> Result<u32, CaptureError> {
    elapsed(start, end, wraps, 24)
}

/// [`elapsed`] for a 32-bit timer.
pub const fn elapsed_u32(start: u32, end: u32, wraps: u32) -> Result<u32, CaptureError> {
    elapsed(start, end, wraps, 32)
}

/// Extends a free-running, up-counting timer of 1 to 32 bits to a 64-bit
/// timestamp by counting overflows.
///
/// Call [`Widener::on_overflow`] from the timer's overflow interrupt and
/// [`Widener::timestamp`] with each capture. The race between a capture and
/// an overflow interrupt that has not run yet is resolved the usual way: when
/// the overflow flag is pending and the captured value lies in the lower half
/// of the range, the capture was taken after the wrap.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Widener {
    width_bits: u32,
    wraps: u32,
}

impl Widener {
    /// A widener for a timer of `width_bits` bits, with no wrap counted yet.
    pub const fn new(width_bits: u32) -> Result<Self, CaptureError> {
        if width_bits == 0 || width_bits > 32 {
            return Err(CaptureError::BadWidth);
        }
        Ok(Self {
            width_bits,
            wraps: 0,
        })
    }

    /// Counts one overflow of the timer. Wraps modulo 2^32 overflows (after
    /// 2^32 timer periods the timestamps repeat).
    #[inline]
    pub fn on_overflow(&mut self) {
        self.wraps = self.wraps.wrapping_add(1);
    }

    /// Overflows counted so far.
    #[inline]
    pub const fn wraps(&self) -> u32 {
        self.wraps
    }

    /// The 64-bit timestamp of a capture `raw`, given whether the overflow
    /// flag is set but not yet handled by [`Widener::on_overflow`].
    pub const fn timestamp(&self, raw: u32, overflow_pending: bool) -> Result<u64, CaptureError> {
        let w = self.width_bits;
        if w < 32 && raw >> w != 0 {
            return Err(CaptureError::OutOfRange);
        }
        let half = 1u64 << (w - 1);
        let late = overflow_pending && (raw as u64) < half;
        let wraps = self.wraps as u64 + if late { 1 } else { 0 };
        // wraps ≤ 2^32 and w ≤ 32: wraps · 2^w ≤ 2^64 − 2^32 with raw < 2^32,
        // except wraps = 2^32 with w = 32, which is out of the 64-bit range.
        match (wraps << w).checked_add(raw as u64) {
            Some(t) if wraps >> (64 - w) == 0 => Ok(t),
            _ => Err(CaptureError::Overflow),
        }
    }

    /// The count between two timestamps from [`Widener::timestamp`].
    pub const fn span(start: u64, end: u64) -> Result<u32, CaptureError> {
        if end < start {
            return Err(CaptureError::Inconsistent);
        }
        let d = end - start;
        if d > u32::MAX as u64 {
            return Err(CaptureError::Overflow);
        }
        Ok(d as u32)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn wrap_at_every_width() {
        for w in 1..=32u32 {
            let max = if w == 32 { u32::MAX } else { (1u32 << w) - 1 };
            // One count across the wrap: from max to 0 with one wrap.
            assert_eq!(elapsed(max, 0, 1, w), Ok(1), "width {w}");
            // A full period: same value, one wrap.
            let period = 1u64 << w;
            let expect = u32::try_from(period).map_err(|_| CaptureError::Overflow);
            assert_eq!(elapsed(0, 0, 1, w), expect, "width {w}");
            assert_eq!(elapsed(max, max, 0, w), Ok(0));
            if w < 32 {
                assert_eq!(elapsed(max + 1, 0, 0, w), Err(CaptureError::OutOfRange));
            }
        }
    }

    #[test]
    fn edge_cases() {
        assert_eq!(elapsed(0, u32::MAX, 0, 32), Ok(u32::MAX));
        assert_eq!(elapsed(1, 0, 1, 32), Ok(u32::MAX));
        assert_eq!(elapsed(0, 0, 1, 32), Err(CaptureError::Overflow));
        assert_eq!(elapsed(0, 0, u32::MAX, 16), Err(CaptureError::Overflow));
        assert_eq!(elapsed(0, 0, 0, 0), Err(CaptureError::BadWidth));
        assert_eq!(elapsed(0, 0, 0, 33), Err(CaptureError::BadWidth));
        assert_eq!(elapsed_u16(65_535, 0, 1), Ok(1));
        assert_eq!(elapsed_u16(100, 99, 0), Err(CaptureError::Inconsistent));
        assert_eq!(elapsed_u24(0xFF_FFFF, 0, 1), Ok(1));
        assert_eq!(elapsed_u32(10, 5, 1), Ok(u32::MAX - 4));
        // 65_536 wraps of a 16-bit timer is exactly 2^32: one too many.
        assert_eq!(elapsed_u16(0, 0, 65_536), Err(CaptureError::Overflow));
        assert_eq!(elapsed_u16(1, 0, 65_536), Ok(u32::MAX));
    }

    #[test]
    fn widener_resolves_the_overflow_race() {
        let mut w = Widener::new(16).unwrap();
        w.on_overflow();
        // Pending overflow, small capture: taken after the wrap.
        assert_eq!(w.timestamp(10, true), Ok(2 * 65_536 + 10));
        // Pending overflow, large capture: taken before it.
        assert_eq!(w.timestamp(65_000, true), Ok(65_536 + 65_000));
        assert_eq!(w.timestamp(10, false), Ok(65_536 + 10));
        assert_eq!(w.timestamp(70_000, false), Err(CaptureError::OutOfRange));
        let a = w.timestamp(65_000, false).unwrap();
        let b = w.timestamp(10, true).unwrap();
        assert_eq!(Widener::span(a, b), Ok(546));
        assert_eq!(Widener::span(b, a), Err(CaptureError::Inconsistent));
        assert_eq!(Widener::span(0, 1 << 32), Err(CaptureError::Overflow));
        let mut w32 = Widener::new(32).unwrap();
        for _ in 0..3 {
            w32.on_overflow();
        }
        assert_eq!(w32.wraps(), 3);
        assert_eq!(w32.timestamp(7, false), Ok((3 << 32) + 7));
        assert_eq!(Widener::new(0), Err(CaptureError::BadWidth));
    }

    proptest! {
        /// Any true span below 2^32 is recovered from the wrapped captures
        /// and the wrap count, at every width.
        #[test]
        fn elapsed_recovers_the_true_span(w in 1u32..=32, start: u64, span: u32) {
            let modulus = 1u64 << w;
            let start = start % modulus;
            let end_abs = start + u64::from(span);
            let wraps = u32::try_from(end_abs >> w).unwrap();
            let end = u32::try_from(end_abs % modulus).unwrap();
            let start = u32::try_from(start).unwrap();
            prop_assert_eq!(elapsed(start, end, wraps, w), Ok(span));
        }

        /// Arbitrary inputs never panic, and a success is always the exact
        /// span computed in wide arithmetic.
        #[test]
        fn elapsed_never_panics(start: u32, end: u32, wraps: u32, w in 0u32..40) {
            if let Ok(n) = elapsed(start, end, wraps, w) {
                let total = (i128::from(wraps) << w) + i128::from(end) - i128::from(start);
                prop_assert_eq!(i128::from(n), total);
            }
        }

        #[test]
        fn widener_never_panics(w in 0u32..40, wraps in 0u32..5, raw: u32, pending: bool) {
            if let Ok(mut wid) = Widener::new(w) {
                for _ in 0..wraps { wid.on_overflow(); }
                if let Ok(t) = wid.timestamp(raw, pending) {
                    prop_assert_eq!(t & ((1u64 << w) - 1), u64::from(raw));
                }
            }
        }
    }
}
