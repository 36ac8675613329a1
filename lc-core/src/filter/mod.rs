//! Filters for a stream of readings: a running median against spikes and an
//! exponential moving average against noise.
//!
//! The readings these filters see are shifts ([`Shift`], `i64` Q23.40) or
//! output values in integer units (an `i32` in micrometres from a
//! [`crate::curve::Curve`], say). Both filters keep a fixed-size state: no
//! heap, no division, no panic.
//!
//! - [`Median<T, N>`]: the median of the last `N` samples (`N` odd, checked
//!   at compile time). Exact: the output is always one of the inputs, so it
//!   needs nothing of `T` but `Copy + Ord + Default` and works for any
//!   ordered type.
//! - [`Ema<T>`]: y ← y + (x − y)·2^-k, k in 1..=16, with a shift and no
//!   multiply. Generic over the [`Sample`] types `i32` (the fast path on a
//!   Cortex-M0: 64-bit state), `i64` and [`Shift`] (128-bit state). Each
//!   fixed-point step is rounded to nearest, and the error bound against
//!   the exact recursion is stated and proven by property tests; [`EmaF64`]
//!   is its `f64` twin.
//!
//! A typical chain puts the median first (it removes single-reading spikes
//! that would otherwise drag the average) and the average second; the
//! presence decision ([`crate::detector`]) comes last.
//!
//! ```
//! use lc_core::filter::{Ema, Median};
//!
//! // Gap readings in micrometres with one wild spike.
//! let readings = [1_000, 1_004, 998, 9_999, 1_002, 1_001, 999];
//! let mut median = Median::<i32, 3>::new();
//! let mut ema = Ema::<i32>::new(2).unwrap(); // weight 2^-2 per sample
//! let mut out = 0;
//! for x in readings {
//!     out = ema.update(median.push(x));
//! }
//! // The spike never reached the average.
//! assert!((998..=1_004).contains(&out));
//! assert_eq!(median.median(), Some(1_001));
//! ```
//!
//! [`Shift`]: crate::shift::Shift

mod ema;
mod median;

pub use ema::{Ema, EmaError, EmaF64};
pub use median::Median;

use crate::shift::Shift;
use core::fmt::Debug;
use core::hash::Hash;

/// The integer reading types the fixed-point filters ([`Ema`]) work on:
/// `i32` (output values in integer units), `i64` and [`Shift`] (Q23.40).
///
/// The trait is sealed: each type brings its own accumulator (64-bit for
/// `i32`, 128-bit for `i64`) whose overflow analysis lives in this crate.
/// Values are handled in units of the type's least significant bit (LSB):
/// one micrometre for an `i32` in micrometres, 2^-40 for a [`Shift`].
pub trait Sample: private::Sealed + Copy + Ord + Default + Debug {
    /// The value in LSB units as `f64`: exact for `i32` and for magnitudes
    /// up to 2^53, rounded to nearest beyond (the `f64` twins' input).
    fn to_lsb_f64(self) -> f64;
}

impl Sample for i32 {
    #[inline]
    fn to_lsb_f64(self) -> f64 {
        f64::from(self)
    }
}

impl Sample for i64 {
    #[inline]
    fn to_lsb_f64(self) -> f64 {
        // Rounds to nearest above 2^53; not a truncating cast.
        self as f64
    }
}

impl Sample for Shift {
    #[inline]
    fn to_lsb_f64(self) -> f64 {
        self.raw_q40().to_lsb_f64()
    }
}

/// Fractional bits the [`Ema`] state carries below the input's LSB.
pub(crate) const EMA_FRAC_BITS: u32 = 31;

/// ARMv6-M (Cortex-M0/M0+): no 64-bit shift instruction, and the compiler
/// calls a runtime routine (`__aeabi_lasr`) for a variable 64-bit shift.
/// Recognised, as in [`crate::fixed::mul_u32_wide`], as the ARM profile
/// without compare-and-swap atomics.
#[cfg(all(target_arch = "arm", not(target_has_atomic = "32")))]
#[inline]
fn asr_i64(x: i64, k: u32) -> i64 {
    asr_i64_halves(x, k)
}

/// `x >> k`: arithmetic shift right (rounds toward −∞), `k` in 1..=31.
#[cfg(not(all(target_arch = "arm", not(target_has_atomic = "32"))))]
#[inline]
fn asr_i64(x: i64, k: u32) -> i64 {
    x >> k
}

/// `x >> k` (arithmetic, rounds toward −∞) for `k` in 1..=31, in 32-bit
/// halves: three shifts, a subtraction and an OR inline, instead of a call. Exact; the
/// caller guarantees the range of `k` (the EMA's k is in 1..=16).
#[cfg_attr(
    not(any(test, all(target_arch = "arm", not(target_has_atomic = "32")))),
    allow(dead_code)
)]
#[inline]
fn asr_i64_halves(x: i64, k: u32) -> i64 {
    let [b0, b1, b2, b3, b4, b5, b6, b7] = x.to_le_bytes();
    let lo = u32::from_le_bytes([b0, b1, b2, b3]);
    let hi = i32::from_le_bytes([b4, b5, b6, b7]);
    let hi_bits = u32::from_le_bytes([b4, b5, b6, b7]);
    // 32 − k is in 1..=31: both shifts are in range.
    let new_lo = (lo >> k) | (hi_bits << (32 - k));
    let new_hi = hi >> k;
    (i64::from(new_hi) << 32) | i64::from(new_lo)
}

/// `x >> k` for an `i128` (arithmetic, rounds toward −∞), `k` in 1..=31.
#[cfg(not(all(target_arch = "arm", not(target_has_atomic = "32"))))]
#[inline]
fn asr_i128(x: i128, k: u32) -> i128 {
    x >> k
}

/// `x >> k` for an `i128` in 32-bit words on ARMv6-M. The compiler's own
/// variable 128-bit shift there goes through the stack: it stores the four
/// words and loads them back from an offset picked by k.
#[cfg(all(target_arch = "arm", not(target_has_atomic = "32")))]
#[inline]
fn asr_i128(x: i128, k: u32) -> i128 {
    asr_i128_words(x, k)
}

/// `x >> k` (arithmetic, rounds toward −∞) for `k` in 1..=31, word by word:
/// each word takes its own bits shifted down and the next word's low bits
/// shifted up. Exact; the caller guarantees the range of `k`.
#[cfg_attr(
    not(any(test, all(target_arch = "arm", not(target_has_atomic = "32")))),
    allow(dead_code)
)]
#[inline]
fn asr_i128_words(x: i128, k: u32) -> i128 {
    let w = |i: u32| (x >> (32 * i)) as u32; // exact words, constant shifts
    let (w0, w1, w2, w3) = (w(0), w(1), w(2), w(3));
    // 32 − k is in 1..=31: every shift is in range.
    let n0 = (w0 >> k) | (w1 << (32 - k));
    let n1 = (w1 >> k) | (w2 << (32 - k));
    let n2 = (w2 >> k) | (w3 << (32 - k));
    let n3 = (w3 as i32) >> k;
    (i128::from(n3) << 96) | (i128::from(n2) << 64) | (i128::from(n1) << 32) | i128::from(n0)
}

mod private {
    use super::{asr_i128, asr_i64, Debug, Hash, Shift, EMA_FRAC_BITS};

    /// `defmt::Format` when the feature is on, nothing otherwise, so the
    /// filters can derive `defmt::Format` over their accumulator.
    #[cfg(feature = "defmt")]
    pub trait MaybeFormat: defmt::Format {}
    #[cfg(feature = "defmt")]
    impl<T: defmt::Format> MaybeFormat for T {}
    /// `defmt::Format` when the feature is on, nothing otherwise.
    #[cfg(not(feature = "defmt"))]
    pub trait MaybeFormat {}
    #[cfg(not(feature = "defmt"))]
    impl<T> MaybeFormat for T {}

    /// Accumulator arithmetic of the exponential moving average, per type.
    ///
    /// The accumulator holds a value times 2^`EMA_FRAC_BITS`. Invariant the
    /// overflow analysis rests on: every accumulator value the EMA ever
    /// holds lies between the smallest and the largest input times
    /// 2^`EMA_FRAC_BITS` (each step moves it towards the input and never
    /// past it), and `k` is in 1..=16.
    pub trait Sealed: Sized {
        /// The accumulator: wide enough for any input times 2^F and for
        /// the difference of two such values.
        type Acc: Copy + Debug + PartialEq + Eq + Hash + MaybeFormat;
        /// x · 2^F, exact.
        fn ema_init(self) -> Self::Acc;
        /// acc + round((x · 2^F − acc) · 2^-k), ties toward +∞.
        fn ema_step(acc: Self::Acc, x: Self, k: u32) -> Self::Acc;
        /// round(acc · 2^-F), ties toward +∞.
        fn ema_output(acc: Self::Acc) -> Self;
        /// acc · 2^-F as `f64` (rounded to nearest).
        fn ema_acc_f64(acc: Self::Acc) -> f64;
    }

    /// 2^F as `f64`.
    const ACC_SCALE: f64 = (1u64 << EMA_FRAC_BITS) as f64;

    // i32 in an i64 accumulator, F = 31. With every input and the
    // accumulator in [−2^31, 2^31 − 1] · 2^31 (the hull invariant):
    // |x · 2^31| ≤ 2^62; d = x · 2^31 − acc lies in
    // [−(2^63 − 2^31), 2^63 − 2^31], so d + 2^15 cannot overflow; the new
    // accumulator lies between acc and x · 2^31; acc + 2^30 < 2^62.
    impl Sealed for i32 {
        type Acc = i64;
        #[inline]
        fn ema_init(self) -> i64 {
            i64::from(self) << EMA_FRAC_BITS
        }
        #[inline]
        fn ema_step(acc: i64, x: i32, k: u32) -> i64 {
            let d = x.ema_init() - acc;
            // 2^(k−1) ≤ 2^15 as a 32-bit shift: no 64-bit shift routine.
            acc + asr_i64(d + i64::from(1i32 << (k - 1)), k)
        }
        #[inline]
        fn ema_output(acc: i64) -> i32 {
            let y = (acc + (1 << (EMA_FRAC_BITS - 1))) >> EMA_FRAC_BITS;
            // In range by the hull invariant; saturate rather than wrap.
            i32::try_from(y).unwrap_or(if y < 0 { i32::MIN } else { i32::MAX })
        }
        #[inline]
        fn ema_acc_f64(acc: i64) -> f64 {
            // Rounds to nearest above 2^53; not a truncating cast.
            acc as f64 / ACC_SCALE
        }
    }

    // i64 in an i128 accumulator, F = 31: |x · 2^31| ≤ 2^94, d ≤ 2^95 in
    // magnitude; nothing comes near the i128 limits.
    impl Sealed for i64 {
        type Acc = i128;
        #[inline]
        fn ema_init(self) -> i128 {
            i128::from(self) << EMA_FRAC_BITS
        }
        #[inline]
        fn ema_step(acc: i128, x: i64, k: u32) -> i128 {
            let d = x.ema_init() - acc;
            // 2^(k−1) ≤ 2^15 as a 32-bit shift, then a word-wise shift.
            acc + asr_i128(d + i128::from(1i32 << (k - 1)), k)
        }
        #[inline]
        fn ema_output(acc: i128) -> i64 {
            let y = (acc + (1 << (EMA_FRAC_BITS - 1))) >> EMA_FRAC_BITS;
            // In range by the hull invariant; saturate rather than wrap.
            i64::try_from(y).unwrap_or(if y < 0 { i64::MIN } else { i64::MAX })
        }
        #[inline]
        fn ema_acc_f64(acc: i128) -> f64 {
            // Rounds to nearest; not a truncating cast.
            acc as f64 / ACC_SCALE
        }
    }

    impl Sealed for Shift {
        type Acc = i128;
        #[inline]
        fn ema_init(self) -> i128 {
            self.raw_q40().ema_init()
        }
        #[inline]
        fn ema_step(acc: i128, x: Shift, k: u32) -> i128 {
            i64::ema_step(acc, x.raw_q40(), k)
        }
        #[inline]
        fn ema_output(acc: i128) -> Shift {
            Shift::from_raw_q40(i64::ema_output(acc))
        }
        #[inline]
        fn ema_acc_f64(acc: i128) -> f64 {
            i64::ema_acc_f64(acc)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn asr_halves_corners() {
        for x in [
            0,
            1,
            -1,
            i64::MIN,
            i64::MAX,
            1 << 32,
            -(1 << 32),
            0x1_8000_0000,
        ] {
            for k in 1..=31 {
                assert_eq!(asr_i64_halves(x, k), x >> k, "x {x} k {k}");
                let y = i128::from(x) << 40;
                assert_eq!(asr_i128_words(y, k), y >> k, "y {y} k {k}");
            }
        }
    }

    proptest! {
        /// The ARMv6-M shifts in halves and words equal the native shifts.
        #[test]
        fn asr_halves_is_exact(x: i64, y: i128, k in 1u32..=31) {
            prop_assert_eq!(asr_i64_halves(x, k), x >> k);
            prop_assert_eq!(asr_i64(x, k), x >> k);
            prop_assert_eq!(asr_i128_words(y, k), y >> k);
            prop_assert_eq!(asr_i128(y, k), y >> k);
        }
    }
}
