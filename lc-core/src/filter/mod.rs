//! Filters for a stream of readings: a running median against spikes and an
//! exponential moving average against noise.
//!
//! The readings these filters see are shifts ([`Shift`], `i64` Q23.40) or
//! output values in integer units (an `i32` in micrometres from a
//! `Curve`, say). Both filters keep a fixed-size state: no
//! heap, no division, no panic.
//!
//! - [`Median<T, N>`]: the median of the last `N` samples (`N` odd, checked
//!   at compile time). Exact: the output is always one of the inputs, so it
//!   needs nothing of `T` but `Copy + Ord + Default` and works for any
//!   ordered type.
//! - [`Ema<T>`]: y ← y + (x − y)·2^-k, k in 1..=16, with a shift and no
//!   multiply. Generic over the [`Sample`] types `u16` (ring counts, 32-bit
//!   state), `i32` and [`Shift`] (64-bit state) and `i64` (128-bit state). Each
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

use crate::fixed::ARMV6M;
use crate::shift::Shift;
use core::fmt::Debug;
use core::hash::Hash;

/// The integer reading types the fixed-point filters ([`Ema`]) work on:
/// `u16` (ring counts), `i32` (output values in integer units), `i64` and
/// [`Shift`] (Q23.40).
///
/// The trait is sealed: each type brings its own accumulator (32-bit for
/// `u16`, 64-bit for `i32` and [`Shift`], 128-bit for `i64`) whose overflow
/// analysis lives in this crate.
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

impl Sample for u16 {
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

/// `x >> k`: arithmetic shift right (rounds toward −∞), `k` in 1..=31. On
/// ARMv6-M (`fixed::ARMV6M`), which has no 64-bit shift and where the compiler
/// calls a runtime routine (`__aeabi_lasr`) for a variable one, in 32-bit
/// halves ([`asr_i64_halves`]).
#[inline]
fn asr_i64(x: i64, k: u32) -> i64 {
    if ARMV6M {
        asr_i64_halves(x, k)
    } else {
        // k in 1..=31 (the callers'): the plain shift.
        x.wrapping_shr(k)
    }
}

/// `x >> k` (arithmetic, rounds toward −∞) for `k` in 1..=31, in 32-bit
/// halves: three shifts, a subtraction and an OR inline, instead of a call.
/// Exact; the caller guarantees the range of `k` (the EMA's k is in
/// 1..=16). Compiled everywhere so host tests hold it equal to the native
/// shift.
#[inline]
fn asr_i64_halves(x: i64, k: u32) -> i64 {
    let [b0, b1, b2, b3, b4, b5, b6, b7] = x.to_le_bytes();
    let lo = u32::from_le_bytes([b0, b1, b2, b3]);
    let hi = i32::from_le_bytes([b4, b5, b6, b7]);
    let hi_bits = u32::from_le_bytes([b4, b5, b6, b7]);
    // 32 − k is in 1..=31: all three shifts are in range (the wrapping
    // forms are the plain shifts; the compiler cannot see k's range).
    let new_lo = lo.wrapping_shr(k) | hi_bits.wrapping_shl(32u32.wrapping_sub(k));
    let new_hi = hi.wrapping_shr(k);
    (i64::from(new_hi) << 32) | i64::from(new_lo)
}

/// One EMA step of an `i64` sample on its 128-bit state: the native
/// 128-bit arithmetic, or on ARMv6-M 96-bit words ([`ema_step_i64_words`]),
/// since the compiler's variable 128-bit shift goes through the stack there.
#[inline]
fn ema_step_i64(acc: i128, x: i64, k: u32) -> i128 {
    if ARMV6M {
        ema_step_i64_words(acc, x, k)
    } else {
        // No wrap: the bounds of `ema_step_i64_words` (k in 1..=31).
        let d = (i128::from(x) << EMA_FRAC_BITS).wrapping_sub(acc);
        let half = 1i128.wrapping_shl(k.wrapping_sub(1));
        acc.wrapping_add(d.wrapping_add(half).wrapping_shr(k))
    }
}

/// acc + round((x·2^31 − acc)·2^-k), ties toward +∞, for k in 1..=31 and
/// |acc| ≤ 2^94 (the hull invariant: acc lies between inputs times 2^31),
/// with every value held as an `i64` high part and a `u32` low word.
/// Exact: x·2^31 and acc fit 96 bits, their difference d lies strictly
/// within ±2^95 (so its high part fits `i64`), and so do d + 2^(k−1), its
/// shift and the new state. Compiled everywhere so host tests hold it
/// equal to the 128-bit formula.
#[inline]
fn ema_step_i64_words(acc: i128, x: i64, k: u32) -> i128 {
    // acc = a_hi·2^32 + a_lo and x·2^31 = (x >> 1)·2^32 + (x & 1)·2^31.
    let (a_hi, a_lo) = ((acc >> 32) as i64, acc as u32);
    let (x_hi, x_lo) = (x >> 1, (x as u32 & 1) << 31);
    let (d_lo, borrow) = x_lo.overflowing_sub(a_lo);
    let d_hi = x_hi.wrapping_sub(a_hi).wrapping_sub(i64::from(borrow));
    // + 2^(k−1), k − 1 ≤ 30.
    let (e_lo, carry) = d_lo.overflowing_add(1u32.wrapping_shl(k.wrapping_sub(1)));
    let e_hi = d_hi.wrapping_add(i64::from(carry));
    // >> k: 32 − k is in 1..=31 (the wrapping forms are the plain shifts).
    let s_lo = e_lo.wrapping_shr(k) | (e_hi as u32).wrapping_shl(32u32.wrapping_sub(k));
    let s_hi = asr_i64(e_hi, k);
    let (r_lo, c) = a_lo.overflowing_add(s_lo);
    let r_hi = a_hi.wrapping_add(s_hi).wrapping_add(i64::from(c));
    (i128::from(r_hi) << 32) | i128::from(r_lo)
}

/// round(acc·2^-31), ties toward +∞, saturated to `i64`: the native
/// 128-bit arithmetic, or on ARMv6-M words ([`ema_output_i64_words`]).
#[inline]
fn ema_output_i64(acc: i128) -> i64 {
    if ARMV6M {
        ema_output_i64_words(acc)
    } else {
        // |acc| ≤ 2^94 (the bounds above): adding the half cannot wrap.
        let y = acc.wrapping_add(1 << (EMA_FRAC_BITS - 1)) >> EMA_FRAC_BITS;
        i64::try_from(y).unwrap_or(if y < 0 { i64::MIN } else { i64::MAX })
    }
}

/// round(acc·2^-31), ties toward +∞, saturated to `i64`, for −2^95 < acc <
/// 2^95 − 2^30 (the hull: |acc| ≤ 2^94), from an `i64` high part and a
/// `u32` low word:
/// y = 2·hi + bit 31 of lo after adding 2^30. Compiled everywhere so host
/// tests hold it equal to the 128-bit formula.
#[inline]
fn ema_output_i64_words(acc: i128) -> i64 {
    let (hi, lo) = ((acc >> 32) as i64, acc as u32);
    let (lo, carry) = lo.overflowing_add(1 << (EMA_FRAC_BITS - 1));
    let hi = hi.wrapping_add(i64::from(carry)); // below 2^63 in the domain: exact
    match hi.checked_mul(2) {
        Some(twice) => twice | i64::from(lo >> 31),
        None if hi < 0 => i64::MIN,
        None => i64::MAX,
    }
}

mod private {
    use super::{
        asr_i64, ema_output_i64, ema_step_i64, shift_domain, Debug, Hash, Shift, EMA_FRAC_BITS,
        SHIFT_EMA_FRAC_BITS, U16_EMA_FRAC_BITS,
    };

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
    /// The accumulator holds a value times 2^F (`FRAC_BITS`). Invariant the
    /// overflow analysis rests on: every accumulator value the EMA ever
    /// holds lies between the smallest and the largest input (as
    /// `ema_init` takes it) times 2^F (each step moves it towards the input
    /// and never past it), and `k` is in 1..=16.
    pub trait Sealed: Sized {
        /// The accumulator: wide enough for any input times 2^F and for
        /// the difference of two such values.
        type Acc: Copy + Debug + PartialEq + Eq + Hash + MaybeFormat;
        /// F, the fractional bits of the accumulator below the input's LSB.
        const FRAC_BITS: u32;
        /// x · 2^F, exact.
        fn ema_init(self) -> Self::Acc;
        /// acc + round((x · 2^F − acc) · 2^-k), ties toward +∞ (`u16`:
        /// toward the input).
        fn ema_step(acc: Self::Acc, x: Self, k: u32) -> Self::Acc;
        /// round(acc · 2^-F), ties toward +∞.
        fn ema_output(acc: Self::Acc) -> Self;
        /// acc · 2^-F as `f64` (rounded to nearest).
        fn ema_acc_f64(acc: Self::Acc) -> f64;
    }

    /// 2^F as `f64` for F = 31.
    const ACC_SCALE: f64 = (1u64 << EMA_FRAC_BITS) as f64;

    // i32 in an i64 accumulator, F = 31. With every input and the
    // accumulator in [−2^31, 2^31 − 1] · 2^31 (the hull invariant):
    // |x · 2^31| ≤ 2^62; d = x · 2^31 − acc lies in
    // [−(2^63 − 2^31), 2^63 − 2^31], so d + 2^15 cannot overflow; the new
    // accumulator lies between acc and x · 2^31; acc + 2^30 < 2^62.
    impl Sealed for i32 {
        type Acc = i64;
        const FRAC_BITS: u32 = EMA_FRAC_BITS;
        #[inline]
        fn ema_init(self) -> i64 {
            i64::from(self) << EMA_FRAC_BITS
        }
        #[inline]
        fn ema_step(acc: i64, x: i32, k: u32) -> i64 {
            // No wrap (the bounds above); 2^(k−1) ≤ 2^15 as a 32-bit
            // shift: no 64-bit shift routine.
            let d = x.ema_init().wrapping_sub(acc);
            let half = i64::from(1i32.wrapping_shl(k.wrapping_sub(1)));
            acc.wrapping_add(asr_i64(d.wrapping_add(half), k))
        }
        #[inline]
        fn ema_output(acc: i64) -> i32 {
            let y = acc.wrapping_add(1 << (EMA_FRAC_BITS - 1)) >> EMA_FRAC_BITS;
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
        const FRAC_BITS: u32 = EMA_FRAC_BITS;
        #[inline]
        fn ema_init(self) -> i128 {
            i128::from(self) << EMA_FRAC_BITS
        }
        #[inline]
        fn ema_step(acc: i128, x: i64, k: u32) -> i128 {
            ema_step_i64(acc, x, k)
        }
        #[inline]
        fn ema_output(acc: i128) -> i64 {
            // In range by the hull invariant; saturates rather than wraps.
            ema_output_i64(acc)
        }
        #[inline]
        fn ema_acc_f64(acc: i128) -> f64 {
            // Rounds to nearest; not a truncating cast.
            acc as f64 / ACC_SCALE
        }
    }

    // u16 in a u32 accumulator, F = 16: x · 2^16 ≤ 2^32 − 2^16, and so is
    // every accumulator value (the hull invariant); e = |x · 2^16 − acc|
    // ≤ 2^32 − 2^16, so e + 2^15 cannot overflow; acc + 2^15 < 2^32. The
    // step rounds ties toward the input (the state then stops only within
    // less than half an LSB of a constant input, even at k = 16).
    impl Sealed for u16 {
        type Acc = u32;
        const FRAC_BITS: u32 = U16_EMA_FRAC_BITS;
        #[inline]
        fn ema_init(self) -> u32 {
            u32::from(self) << U16_EMA_FRAC_BITS
        }
        #[inline]
        fn ema_step(acc: u32, x: u16, k: u32) -> u32 {
            // No wrap (the bounds above; k in 1..=16).
            let xs = x.ema_init();
            let half = 1u32.wrapping_shl(k.wrapping_sub(1));
            if xs >= acc {
                acc.wrapping_add((xs - acc).wrapping_add(half).wrapping_shr(k))
            } else {
                acc.wrapping_sub((acc - xs).wrapping_add(half).wrapping_shr(k))
            }
        }
        #[inline]
        fn ema_output(acc: u32) -> u16 {
            // ≤ (2^32 − 2^16 + 2^15) >> 16 = 2^16 − 1: always a u16.
            (acc.wrapping_add(1 << (U16_EMA_FRAC_BITS - 1)) >> U16_EMA_FRAC_BITS) as u16
        }
        #[inline]
        fn ema_acc_f64(acc: u32) -> f64 {
            // Exact: acc < 2^32.
            f64::from(acc) / f64::from(1u32 << U16_EMA_FRAC_BITS)
        }
    }

    // Shift in an i64 accumulator, F = 17, inputs clamped to −32 ≤ s < 32
    // (|raw| ≤ 2^45): |x · 2^17| ≤ 2^62; d = x · 2^17 − acc lies within
    // ±(2^63 − 2^17), so d + 2^15 cannot overflow; acc + 2^16 < 2^63.
    impl Sealed for Shift {
        type Acc = i64;
        const FRAC_BITS: u32 = SHIFT_EMA_FRAC_BITS;
        #[inline]
        fn ema_init(self) -> i64 {
            shift_domain(self.raw_q40()) << SHIFT_EMA_FRAC_BITS
        }
        #[inline]
        fn ema_step(acc: i64, x: Shift, k: u32) -> i64 {
            // No wrap (the bounds above; k in 1..=16).
            let d = x.ema_init().wrapping_sub(acc);
            let half = i64::from(1i32.wrapping_shl(k.wrapping_sub(1)));
            acc.wrapping_add(asr_i64(d.wrapping_add(half), k))
        }
        #[inline]
        fn ema_output(acc: i64) -> Shift {
            Shift::from_raw_q40(
                acc.wrapping_add(1 << (SHIFT_EMA_FRAC_BITS - 1)) >> SHIFT_EMA_FRAC_BITS,
            )
        }
        #[inline]
        fn ema_acc_f64(acc: i64) -> f64 {
            acc as f64 / (1u64 << SHIFT_EMA_FRAC_BITS) as f64
        }
    }
}

/// Fractional bits of the [`Ema`] state of `u16` samples.
pub(crate) const U16_EMA_FRAC_BITS: u32 = 16;

/// Fractional bits of the [`Ema`] state of [`Shift`] samples.
pub(crate) const SHIFT_EMA_FRAC_BITS: u32 = 17;

/// A raw Q40 shift clamped to the [`Ema`]'s domain for [`Shift`] samples,
/// −32 ≤ s < 32 (|raw| ≤ 2^45). Idempotent.
#[inline]
pub(crate) fn shift_domain(raw: i64) -> i64 {
    let hi = (raw >> 32) as i32;
    if (hi >> 13) == (hi >> 31) {
        raw
    } else {
        shift_domain_saturated(hi)
    }
}

/// The [`Ema`] of [`Shift`] samples held as its state plus 2^16 (half an
/// output LSB at F = 17), for a reader that wants the output after every
/// sample: the output round(state · 2^-17) is then `biased >> 17`, with no
/// rounding step. The same recursion as [`Ema::update`], bit for bit
/// (tests below). The functions take raw Q40 shifts already in the domain
/// ([`shift_domain`]).
pub(crate) mod biased_shift_ema {
    use super::{asr_i64, SHIFT_EMA_FRAC_BITS};

    /// The bias, 2^16.
    const BIAS: i64 = 1 << (SHIFT_EMA_FRAC_BITS - 1);

    /// The biased state of a first sample: raw·2^17 + 2^16 (|raw| ≤ 2^45:
    /// no wrap; the low 17 bits of raw·2^17 are zero, so the OR adds).
    #[inline(always)]
    pub(crate) fn init(raw: i64) -> i64 {
        (raw << SHIFT_EMA_FRAC_BITS) | BIAS
    }

    /// One step on the biased state `b`: b + round((raw·2^17 − (b − 2^16))
    /// · 2^-k), ties toward +∞, k in 1..=16. The operand of the shift is
    /// the unbiased step's d + 2^(k−1), exactly, and within its bounds
    /// (`Sealed for Shift`): nothing wraps.
    #[inline(always)]
    pub(crate) fn step(b: i64, raw: i64, k: u32) -> i64 {
        // 2^16 + 2^(k−1), k − 1 ≤ 15: disjoint bits, the OR adds.
        let c = (1u32 << (SHIFT_EMA_FRAC_BITS - 1)) | 1u32.wrapping_shl(k.wrapping_sub(1));
        let e = (raw << SHIFT_EMA_FRAC_BITS)
            .wrapping_sub(b)
            .wrapping_add(i64::from(c));
        b.wrapping_add(asr_i64(e, k))
    }

    /// The output of a biased state, round(state · 2^-17), ties toward +∞.
    #[inline(always)]
    pub(crate) fn output(b: i64) -> i64 {
        b >> SHIFT_EMA_FRAC_BITS
    }
}

/// The [`Ema`] of `u16` samples (ring counts) as its bare state, for a
/// reader that keeps the weight exponent and whether it has started
/// itself: the same functions as [`Ema::update`] and [`Ema::value`].
pub(crate) mod u16_ema {
    use super::private::Sealed;

    /// The state of a first sample, x·2^16.
    #[inline(always)]
    pub(crate) fn init(x: u16) -> u32 {
        x.ema_init()
    }

    /// One step, k in 1..=16.
    #[inline(always)]
    pub(crate) fn step(acc: u32, x: u16, k: u32) -> u32 {
        <u16 as Sealed>::ema_step(acc, x, k)
    }

    /// The output, round(acc · 2^-16), ties toward +∞.
    #[inline(always)]
    pub(crate) fn output(acc: u32) -> u16 {
        <u16 as Sealed>::ema_output(acc)
    }
}

/// [`shift_domain`] outside the domain: −2^45 below, 2^45 − 1 above.
#[cold]
#[inline(never)]
fn shift_domain_saturated(hi: i32) -> i64 {
    i64::from(hi >> 31) ^ ((1 << 45) - 1)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// The step formula in 128 bits: the reference.
    fn step_i128(acc: i128, x: i64, k: u32) -> i128 {
        acc + ((((i128::from(x) << 31) - acc) + (1 << (k - 1))) >> k)
    }

    /// The output formula in 128 bits, saturated: the reference.
    fn output_i128(acc: i128) -> i64 {
        let y = (acc + (1 << 30)) >> 31;
        i64::try_from(y).unwrap_or(if y < 0 { i64::MIN } else { i64::MAX })
    }

    /// The output in words at the hull's ends and either side of where it
    /// saturates.
    #[test]
    fn ema_output_in_words_corners() {
        let top = i128::from(i64::MAX) << 31;
        let bottom = i128::from(i64::MIN) << 31;
        for acc in [
            bottom,
            bottom - (1 << 30),
            bottom - (1 << 30) - 1,
            top,
            top + (1 << 30) - 1,
            top + (1 << 30),
            (1i128 << 95) - (1 << 30) - 1,
            -(1i128 << 95) + 1,
            0,
            -1,
        ] {
            assert_eq!(ema_output_i64_words(acc), output_i128(acc), "acc {acc}");
        }
    }

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
                // The hull's corners: the state at either extreme input.
                for acc in [
                    i128::from(i64::MIN) << 31,
                    i128::from(i64::MAX) << 31,
                    0,
                    -1,
                ] {
                    assert_eq!(
                        ema_step_i64_words(acc, x, k),
                        step_i128(acc, x, k),
                        "acc {acc} x {x} k {k}"
                    );
                }
            }
        }
    }

    proptest! {
        /// The biased state of the metal reader's baseline gives the
        /// outputs of `Ema<Shift>`, sample for sample, over the whole
        /// domain (and beyond it, clamped) and every k.
        #[test]
        fn biased_shift_ema_equals_ema(
            k in 1u32..=16,
            xs in prop::collection::vec(prop_oneof![
                -(1i64 << 45)..(1i64 << 45),
                -(1i64 << 20)..(1i64 << 20),
                any::<i64>(),
                Just(-(1i64 << 45)),
                Just((1i64 << 45) - 1),
            ], 1..200),
        ) {
            let mut ema = Ema::<Shift>::new(k).unwrap();
            let mut b = None;
            for &x in &xs {
                let raw = shift_domain(x);
                let want = ema.update(Shift::from_raw_q40(x)).raw_q40();
                let next = match b {
                    None => biased_shift_ema::init(raw),
                    Some(b) => biased_shift_ema::step(b, raw, k),
                };
                b = Some(next);
                prop_assert_eq!(biased_shift_ema::output(next), want);
            }
        }

        /// The bare `u16` state gives the outputs of `Ema<u16>`.
        #[test]
        fn bare_u16_ema_equals_ema(k in 1u32..=16, xs in prop::collection::vec(any::<u16>(), 1..200)) {
            let mut ema = Ema::<u16>::new(k).unwrap();
            let mut acc = None;
            for &x in &xs {
                let want = ema.update(x);
                let next = match acc {
                    None => u16_ema::init(x),
                    Some(a) => u16_ema::step(a, x, k),
                };
                acc = Some(next);
                prop_assert_eq!(u16_ema::output(next), want);
            }
        }

        /// The ARMv6-M shift in halves equals the native shift.
        #[test]
        fn asr_halves_is_exact(x: i64, k in 1u32..=31) {
            prop_assert_eq!(asr_i64_halves(x, k), x >> k);
            prop_assert_eq!(asr_i64(x, k), x >> k);
        }

        /// The EMA step of an `i64` sample in 96-bit words equals the
        /// 128-bit formula over the whole hull (|acc| ≤ 2^94, any x).
        #[test]
        fn ema_step_in_words_is_exact(acc in -(1i128 << 94)..=(1i128 << 94), x: i64, k in 1u32..=31) {
            prop_assert_eq!(ema_step_i64_words(acc, x, k), step_i128(acc, x, k));
            prop_assert_eq!(ema_step_i64(acc, x, k), step_i128(acc, x, k));
        }

        /// The output in words equals the 128-bit formula, saturation
        /// included, over its domain (twice the hull and more).
        #[test]
        fn ema_output_in_words_is_exact(acc in -(1i128 << 95) + 1..(1i128 << 95) - (1 << 30)) {
            prop_assert_eq!(ema_output_i64_words(acc), output_i128(acc));
            prop_assert_eq!(ema_output_i64(acc), output_i128(acc));
        }
    }
}
