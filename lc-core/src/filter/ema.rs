//! Exponential moving average with a power-of-two weight (see [`Ema`]).

use super::private::Sealed;
use super::Sample;
use core::fmt;

/// Why an exponential moving average could not be built.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum EmaError {
    /// The weight exponent k is outside 1..=16.
    KOutOfRange,
}

impl fmt::Display for EmaError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            EmaError::KOutOfRange => "EMA weight exponent k must be in 1..=16 (weight 2^-k)",
        })
    }
}

impl core::error::Error for EmaError {}

/// Checks the weight exponent.
const fn check_k(k: u32) -> Result<u32, EmaError> {
    if k < K_MIN || k > K_MAX {
        return Err(EmaError::KOutOfRange);
    }
    Ok(k)
}

const K_MIN: u32 = 1;
const K_MAX: u32 = 16;

/// Exponential moving average y ← y + (x − y)·2^-k of [`Sample`]s in fixed
/// point.
///
/// ## Formula, format, rounding and bound
///
/// With weight α = 2^-k, k in 1..=16 (time constant about 2^k samples):
///
/// y₀ = x₀, y_n = y_{n−1} + (x_n − y_{n−1}) · 2^-k.
///
/// - **State**: y times 2^F (F fractional bits below the input's LSB,
///   [`Ema::FRAC_BITS`]), per sample type:
///
///   | sample | state | F | domain |
///   |---|---|---|---|
///   | `u16` (ring counts) | `u32` | 16 | every value |
///   | `i32` (output values) | `i64` | 31 | every value |
///   | `i64` | `i128` | 31 | every value |
///   | [`Shift`](crate::shift::Shift) | `i64` | 17 | −32 ≤ s < 32 |
///
///   A shift outside its domain (far beyond the converter's declared
///   −0.9 ≤ s ≤ 7) is clamped to it before it enters the state. The first
///   sample initialises the state exactly.
/// - **Step**: s ← s + round((x·2^F − s) · 2^-k): a subtraction, an
///   addition of 2^(k−1), a shift right by k and an addition. No multiply,
///   no division. Rounded to nearest, ties toward +∞ (`u16`: ties toward
///   the input).
/// - **Output**: round(s · 2^-F), to nearest, ties toward +∞.
/// - **Domain**: every value of the type (shifts: clamped as above);
///   nothing can overflow. Each step moves the state towards the input and
///   never past it, so the state stays between the smallest and the largest
///   input so far and the output is always within the type's range (the
///   conversion saturates at the type's limits all the same).
/// - **Bound against the exact recursion** y_n above (real arithmetic, on
///   the clamped inputs): each step rounds by at most half a state LSB
///   (2^-(F+1) input LSB) and the recursion shrinks old errors by
///   (1 − 2^-k), so for any sequence
///
///   |s_n · 2^-F − y_n| < 2^(k−F−1) LSB,
///
///   |output_n − y_n| ≤ 0.5 + 2^(k−F−1) LSB
///
///   (2^(k−32) for `i32` and `i64`, 2^-16 LSB at k = 16; 2^(k−18) for
///   shifts, 2^-2 LSB = 2^-42 at k = 16; 2^(k−17) for `u16`).
///
///   Against the `f64` twin [`EmaF64`] add the twin's own rounding, at most
///   M · 2^-53 · (2^k + 2) for inputs up to M in magnitude (2^-6 LSB for
///   `i32` inputs near ±2^31 at k = 16).
/// - **Dead band**: the state stops moving only when it is within
///   2^(k−F−1) LSB of the input (less than half an LSB for every type and
///   k, the step then rounds to zero), so a constant input is reached
///   **exactly**: after a step of Δ LSB the output equals the new input
///   after at most 2^k · (ln|Δ| + 0.7) + 1 samples (`i32`, `i64`; + 1.4
///   for `u16` and shifts) and stays there.
///   (Without the fractional bits, a truncating average stalls up to 2^k − 1
///   LSB short of a constant input.)
///
/// ## Cost
///
/// No multiply, no division, no runtime-library call on a Cortex-M0:
///
/// - `u16`: 32-bit arithmetic only; the cheapest.
/// - `i32` and [`Shift`](crate::shift::Shift): a 64-bit state, its
///   subtract, add and shift done in 32-bit halves (the variable shift too,
///   so no `__aeabi_lasr` call). A shift costs a clamp more.
/// - `i64`: a 128-bit state; on a Cortex-M0 its step and output are done on
///   an `i64` high part and a `u32` low word (the state fits 96 bits), not
///   by the compiler's 128-bit arithmetic, whose variable shift goes
///   through the stack there.
///
/// The metal reader's two baselines (a shift and a ring count, learning on
/// five readings of eight; the same arithmetic on bare states, the shift's
/// biased so that its output is a plain shift) cost 29 instructions per
/// reading together in the benchmark (`run.sh profile m0`).
///
/// ```
/// use lc_core::filter::{Ema, EmaF64};
///
/// let mut ema = Ema::<i32>::new(3).unwrap(); // α = 1/8
/// let mut twin = EmaF64::new(3).unwrap();
/// assert_eq!(ema.update(0), 0); // the first sample initialises
/// twin.update(0.0);
/// for _ in 0..10 {
///     let y = ema.update(1_000);
///     let y_f64 = twin.update(1_000.0);
///     assert!((f64::from(y) - y_f64).abs() <= ema.output_bound_lsb());
/// }
/// // 1000 · (1 − (7/8)^10) = 736.9
/// assert_eq!(ema.value(), Some(737));
/// // A constant input is reached exactly, not stalled short of it.
/// for _ in 0..200 {
///     ema.update(1_000);
/// }
/// assert_eq!(ema.value(), Some(1_000));
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Ema<T: Sample> {
    /// y · 2^F; `None` before the first sample.
    acc: Option<<T as Sealed>::Acc>,
    /// Weight exponent, in 1..=16.
    k: u32,
}

impl<T: Sample> Ema<T> {
    /// Smallest weight exponent (α = 1/2).
    pub const K_MIN: u32 = K_MIN;
    /// Largest weight exponent (α = 2^-16).
    pub const K_MAX: u32 = K_MAX;
    /// Fractional bits F of the state below the input's LSB: 31 for `i32`
    /// and `i64`, 17 for [`Shift`](crate::shift::Shift), 16 for `u16`.
    pub const FRAC_BITS: u32 = <T as Sealed>::FRAC_BITS;

    /// An average with weight 2^-`k` per sample; `k` must be in 1..=16.
    pub const fn new(k: u32) -> Result<Self, EmaError> {
        match check_k(k) {
            Ok(k) => Ok(Self { acc: None, k }),
            Err(e) => Err(e),
        }
    }

    /// Feeds one sample and returns the average rounded to nearest (ties
    /// toward +∞). The first sample after construction or
    /// [`reset`](Self::reset) initialises the average to itself.
    #[inline]
    pub fn update(&mut self, x: T) -> T {
        let acc = match self.acc {
            Some(acc) => T::ema_step(acc, x, self.k),
            None => x.ema_init(),
        };
        self.acc = Some(acc);
        T::ema_output(acc)
    }

    /// The average rounded to nearest (ties toward +∞), or `None` before the
    /// first sample.
    #[inline]
    pub fn value(&self) -> Option<T> {
        self.acc.map(T::ema_output)
    }

    /// The unrounded average in LSB units (the state divided by 2^F, as
    /// the nearest `f64`), or `None` before the first sample. Diagnostics
    /// and host use.
    #[inline]
    pub fn value_lsb_f64(&self) -> Option<f64> {
        self.acc.map(T::ema_acc_f64)
    }

    /// The weight exponent k (α = 2^-k).
    #[inline]
    pub const fn k(&self) -> u32 {
        self.k
    }

    /// Forgets the average; the next sample initialises it.
    #[inline]
    pub fn reset(&mut self) {
        self.acc = None;
    }

    /// Bound on |state · 2^-F − y| against the exact recursion, in LSB:
    /// 2^(k−F−1).
    pub fn state_bound_lsb(&self) -> f64 {
        // 2^k · 2^-(F+1); both factors exact.
        f64::from(1u32 << self.k) / (2u64 << Self::FRAC_BITS) as f64
    }

    /// Bound on |output − y| against the exact recursion, in LSB:
    /// 0.5 + 2^(k−F−1).
    pub fn output_bound_lsb(&self) -> f64 {
        0.5 + self.state_bound_lsb()
    }
}

/// `f64` twin of [`Ema`]: y₀ = x₀, y ← y + (x − y)·2^-k, in LSB units
/// (feed it [`Sample::to_lsb_f64`] of the fixed filter's inputs).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct EmaF64 {
    alpha: f64,
    k: u32,
    y: Option<f64>,
}

impl EmaF64 {
    /// A twin with weight 2^-`k`; `k` must be in 1..=16.
    pub fn new(k: u32) -> Result<Self, EmaError> {
        let k = check_k(k)?;
        Ok(Self {
            // 2^-k, exact.
            alpha: 1.0 / f64::from(1u32 << k),
            k,
            y: None,
        })
    }

    /// Feeds one sample and returns the average (unrounded).
    pub fn update(&mut self, x: f64) -> f64 {
        let y = match self.y {
            Some(y) => y + (x - y) * self.alpha,
            None => x,
        };
        self.y = Some(y);
        y
    }

    /// The average, or `None` before the first sample.
    pub fn value(&self) -> Option<f64> {
        self.y
    }

    /// The weight exponent k.
    pub fn k(&self) -> u32 {
        self.k
    }

    /// Forgets the average.
    pub fn reset(&mut self) {
        self.y = None;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::shift::Shift;
    use proptest::prelude::*;

    /// Fractional bits of the high-precision reference recursion.
    const REF_FRAC: u32 = 62;

    /// Reference recursion in i128 with 62 fractional bits, rounded the same
    /// way: its own error is below 2^(k−63) LSB, so it stands for the exact
    /// recursion y_n. Valid for any i64 input (|x·2^62| ≤ 2^125).
    #[derive(Default)]
    struct Reference {
        r: Option<i128>,
    }

    impl Reference {
        fn update(&mut self, x: i64, k: u32) -> i128 {
            let xs = i128::from(x) << REF_FRAC;
            let r = match self.r {
                Some(r) => r + ((xs - r + (1 << (k - 1))) >> k),
                None => xs,
            };
            self.r = Some(r);
            r
        }
    }

    /// Runs the fixed filter and the reference over `xs` (`raw` gives each
    /// sample as the reference sees it) and checks the state bound exactly
    /// in integers, after every sample:
    /// |s·2^(62−F) − r| < 2^(k−1)·2^(62−F) + 2^(k−1) (both in 2^-62 LSB).
    /// Returns the largest |s·2^-F − r·2^-62| seen, in units of 2^(k−F−1).
    fn check_state_bound<T>(xs: &[T], k: u32, raw: fn(T) -> i64) -> Result<f64, TestCaseError>
    where
        T: Sample,
        <T as Sealed>::Acc: Into<i128>,
    {
        let f = Ema::<T>::FRAC_BITS;
        let mut ema = Ema::<T>::new(k).unwrap();
        let mut reference = Reference::default();
        let limit = (1i128 << (k - 1)) * (1 << (REF_FRAC - f)) + (1 << (k - 1));
        let mut worst = 0.0f64;
        for &x in xs {
            ema.update(x);
            let r = reference.update(raw(x), k);
            let s: i128 = ema.acc.unwrap().into();
            let err = (s << (REF_FRAC - f)).abs_diff(r);
            prop_assert!(
                err < limit.unsigned_abs(),
                "k {} err {} limit {}",
                k,
                err,
                limit
            );
            // err in 2^-62 LSB; the unit 2^(k−F−1) LSB is 2^(k−F+61) of those.
            worst = worst.max(err as f64 / 2f64.powi((k + 61 - f) as i32));
        }
        Ok(worst)
    }

    /// From a first sample x0, a constant input x (Δ = |x − x0| LSB) is
    /// reached exactly within 2^k·(ln Δ + c) + 1 samples; then the state
    /// settles (a fixed point) and the output never leaves x.
    fn converges_exactly<T: Sample>(
        x0: T,
        x: T,
        k: u32,
        delta: u64,
        c: f64,
    ) -> Result<(), TestCaseError> {
        let mut ema = Ema::<T>::new(k).unwrap();
        ema.update(x0);
        let limit = if delta == 0 {
            0.0
        } else {
            f64::from(1u32 << k) * ((delta as f64).ln() + c) + 1.0
        };
        let mut n = 0u64;
        while ema.value() != Some(x) {
            ema.update(x);
            n += 1;
            prop_assert!(n as f64 <= limit, "k {} delta {} n {}", k, delta, n);
        }
        let mut last = ema.acc;
        for _ in 0..(4u32 << k) {
            prop_assert_eq!(ema.update(x), x);
            if ema.acc == last {
                break;
            }
            last = ema.acc;
        }
        prop_assert_eq!(ema.acc, last);
        Ok(())
    }

    /// A shift as the EMA sees it: clamped to −32 ≤ s < 32.
    fn shift_raw(x: Shift) -> i64 {
        x.raw_q40().clamp(-(1 << 45), (1 << 45) - 1)
    }

    /// Sequences with long constant stretches (so the error has time to
    /// build up over ~2^k samples) and full-range values.
    fn runs<S: Strategy>(value: S) -> impl Strategy<Value = Vec<S::Value>>
    where
        S::Value: Clone,
    {
        prop::collection::vec((value, 1usize..=3000), 1..12).prop_map(|segments| {
            segments
                .into_iter()
                .flat_map(|(x, n)| std::iter::repeat_n(x, n))
                .collect()
        })
    }

    fn extreme_i32() -> impl Strategy<Value = i32> {
        prop_oneof![Just(i32::MIN), Just(i32::MAX), Just(0), any::<i32>()]
    }

    fn extreme_i64() -> impl Strategy<Value = i64> {
        prop_oneof![Just(i64::MIN), Just(i64::MAX), Just(0), any::<i64>()]
    }

    fn extreme_u16() -> impl Strategy<Value = u16> {
        prop_oneof![Just(0), Just(u16::MAX), any::<u16>()]
    }

    /// Shifts across and beyond the EMA's domain: its edges, the
    /// converter's declared domain, and any raw value.
    fn extreme_shift() -> impl Strategy<Value = Shift> {
        prop_oneof![
            Just(-(1i64 << 40)),
            Just((1i64 << 45) - 1),
            Just(-(1i64 << 45)),
            Just(i64::MIN),
            Just(i64::MAX),
            -(1i64 << 40)..(7i64 << 40),
            any::<i64>(),
        ]
        .prop_map(Shift::from_raw_q40)
    }

    #[test]
    fn k_is_validated() {
        assert_eq!(Ema::<i32>::new(0), Err(EmaError::KOutOfRange));
        assert_eq!(Ema::<i32>::new(17), Err(EmaError::KOutOfRange));
        assert_eq!(Ema::<i64>::new(u32::MAX), Err(EmaError::KOutOfRange));
        assert_eq!(EmaF64::new(0), Err(EmaError::KOutOfRange));
        assert_eq!(Ema::<i32>::new(1).unwrap().k(), 1);
        assert_eq!(Ema::<Shift>::new(16).unwrap().k(), 16);
        assert_eq!(EmaF64::new(16).unwrap().k(), 16);
        assert_eq!(
            EmaError::KOutOfRange.to_string(),
            "EMA weight exponent k must be in 1..=16 (weight 2^-k)"
        );
    }

    #[test]
    fn first_sample_initialises_exactly() {
        for x in [i32::MIN, -1, 0, 1, i32::MAX] {
            let mut ema = Ema::<i32>::new(16).unwrap();
            assert_eq!(ema.value(), None);
            assert_eq!(ema.update(x), x);
            assert_eq!(ema.value(), Some(x));
            assert_eq!(ema.value_lsb_f64(), Some(f64::from(x)));
        }
        for x in [i64::MIN, i64::MAX] {
            assert_eq!(Ema::<i64>::new(16).unwrap().update(x), x);
        }
        let mut ema = Ema::<i32>::new(4).unwrap();
        ema.update(100);
        ema.update(0);
        ema.reset();
        assert_eq!(ema.value(), None);
        assert_eq!(ema.update(-5), -5);
        let mut twin = EmaF64::new(4).unwrap();
        assert_eq!(twin.update(3.0), 3.0);
        twin.reset();
        assert_eq!(twin.value(), None);
    }

    #[test]
    fn halves_and_ties() {
        let mut ema = Ema::<i32>::new(1).unwrap();
        ema.update(0);
        // y = 0.5: the tie rounds toward +∞.
        assert_eq!(ema.update(1), 1);
        assert_eq!(ema.value_lsb_f64(), Some(0.5));
        let mut ema = Ema::<i32>::new(1).unwrap();
        ema.update(0);
        // y = −0.5: toward +∞ gives 0.
        assert_eq!(ema.update(-1), 0);
        assert_eq!(ema.value_lsb_f64(), Some(-0.5));
    }

    #[test]
    fn saturated_inputs_stay_in_range() {
        for k in [1, 2, 16] {
            let mut ema = Ema::<i32>::new(k).unwrap();
            assert_eq!(ema.update(i32::MAX), i32::MAX);
            for _ in 0..100 {
                ema.update(i32::MAX);
            }
            assert_eq!(ema.value(), Some(i32::MAX));
            // Full-scale step down: the output falls monotonically.
            let mut last = i32::MAX;
            for _ in 0..1000 {
                let y = ema.update(i32::MIN);
                assert!(y <= last);
                last = y;
            }
            if k <= 2 {
                assert_eq!(last, i32::MIN);
            }
            // Full-scale alternation: at k = 1 the output settles to ±2^31/3,
            // at k = 2 to ±2^31/7.
            for i in 0..1000 {
                let y = ema.update(if i % 2 == 0 { i32::MIN } else { i32::MAX });
                if k <= 2 && i > 60 {
                    assert!(y.unsigned_abs() <= (1 << 31) / 3 + 1, "k {k} y {y}");
                }
            }
            let mut ema = Ema::<i64>::new(k).unwrap();
            ema.update(i64::MIN);
            for i in 0..1000 {
                let y = ema.update(if i % 2 == 0 { i64::MIN } else { i64::MAX });
                if k <= 2 && i > 100 {
                    assert!(y.unsigned_abs() <= (1 << 63) / 3 + 1, "k {k} y {y}");
                }
            }
        }
        // α = 1/2 from MIN to MAX: MIN + (MAX − MIN)/2 = −0.5 → 0.
        let mut ema = Ema::<i32>::new(1).unwrap();
        ema.update(i32::MIN);
        assert_eq!(ema.update(i32::MAX), 0);
        let mut ema = Ema::<i32>::new(1).unwrap();
        for _ in 0..40 {
            ema.update(i32::MIN);
        }
        for _ in 0..40 {
            ema.update(i32::MAX);
        }
        assert_eq!(ema.value(), Some(i32::MAX));
    }

    #[test]
    fn no_dead_band_at_the_slowest_weight() {
        // From 0 to a constant 1 LSB at k = 16: a truncating average without
        // fractional bits would never leave 0.
        let mut ema = Ema::<i32>::new(16).unwrap();
        ema.update(0);
        let n = (1..=200_000).find(|_| ema.update(1) == 1).unwrap();
        // 2^16 · (ln 1 + 0.7) + 1 = 45 876
        assert!(n <= 45_876, "{n}");
        // The worst step of the type: i32::MIN to i32::MAX.
        let mut ema = Ema::<i32>::new(16).unwrap();
        ema.update(i32::MIN);
        let n = (1..=3_000_000)
            .find(|_| ema.update(i32::MAX) == i32::MAX)
            .unwrap();
        let limit = 65_536.0 * ((u32::MAX as f64).ln() + 0.7) + 1.0;
        assert!(f64::from(n) <= limit, "{n} {limit}");
    }

    #[test]
    fn shift_samples() {
        let mut ema = Ema::<Shift>::new(2).unwrap();
        let s = |x: f64| Shift::from_f64(x).unwrap();
        ema.update(s(0.0));
        let y = ema.update(s(-0.01));
        // 0 + (−0.01 − 0)/4, rounded to the nearest 2^-40.
        assert!((y.to_f64() + 0.0025).abs() <= 2f64.powi(-41));
        assert_eq!(ema.value_lsb_f64(), Some(s(-0.01).raw_q40() as f64 / 4.0));
    }

    /// Seeded sweep: long random walks and noise at every k, measured
    /// against the reference and the f64 twin. Prints the worst ratios
    /// (`cargo test ema_error_sweep -- --nocapture`).
    #[test]
    fn ema_error_sweep() {
        let mut seed = 0x2545_f491_4f6c_dd1du64;
        let mut next = move || {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            seed
        };
        for k in 1..=16 {
            let mut xs = Vec::with_capacity(100_000);
            let mut level: i64 = 0;
            for i in 0..100_000 {
                if i % 5_000 == 0 {
                    level = (next() >> 33) as i64 - (1 << 30); // a new level in ±2^30
                }
                let noise = (next() >> 54) as i64 - 512; // ±512 LSB
                xs.push(i32::try_from(level + noise).unwrap());
            }
            let state = check_state_bound::<i32>(&xs, k, i64::from).unwrap();
            let mut ema = Ema::<i32>::new(k).unwrap();
            let mut twin = EmaF64::new(k).unwrap();
            let m = 2f64.powi(31);
            let slack = m * 2f64.powi(-53) * (f64::from(1u32 << k) + 2.0);
            let mut worst_out = 0.0f64;
            for &x in &xs {
                let y = ema.update(x);
                let t = twin.update(f64::from(x));
                let err = (f64::from(y) - t).abs();
                assert!(err <= ema.output_bound_lsb() + slack, "k {k} err {err}");
                worst_out = worst_out.max(err);
            }
            println!(
                "k {k:2}: state error ≤ {state:.3} · 2^(k−32) LSB, |output − f64 twin| ≤ {worst_out:.6} LSB"
            );
            assert!(state < 1.0, "k {k} state {state}");
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(400))]

        /// The fixed state stays within 2^(k−32) LSB of the exact recursion
        /// for arbitrary i32 sequences (checked in integers against the
        /// 62-fraction-bit reference after every sample).
        #[test]
        fn ema_i32_state_within_bound(xs in runs(extreme_i32()), k in 1u32..=16) {
            check_state_bound::<i32>(&xs, k, i64::from)?;
        }

        /// The same for i64 over the whole type (128-bit state).
        #[test]
        fn ema_i64_state_within_bound(xs in runs(extreme_i64()), k in 1u32..=16) {
            check_state_bound::<i64>(&xs, k, |x| x)?;
        }

        /// The same for u16 (32-bit state, F = 16, steps rounded toward
        /// the input): within 2^(k−17) LSB.
        #[test]
        fn ema_u16_state_within_bound(xs in runs(extreme_u16()), k in 1u32..=16) {
            check_state_bound::<u16>(&xs, k, i64::from)?;
        }

        /// The same for shifts (64-bit state, F = 17), on the inputs clamped
        /// to the domain −32 ≤ s < 32: within 2^(k−18) LSB.
        #[test]
        fn ema_shift_state_within_bound(xs in runs(extreme_shift()), k in 1u32..=16) {
            check_state_bound::<Shift>(&xs, k, shift_raw)?;
        }

        /// Output against the f64 twin, i32 over the whole type:
        /// |output − y_f64| ≤ 0.5 + 2^(k−32) + M·2^-53·(2^k + 2), and the
        /// unrounded state within 2^(k−32) plus the same twin slack (and
        /// one more M·2^-53 for the state's own conversion to f64).
        #[test]
        fn ema_within_bound_of_f64_twin(xs in runs(extreme_i32()), k in 1u32..=16) {
            let mut ema = Ema::<i32>::new(k).unwrap();
            let mut twin = EmaF64::new(k).unwrap();
            let m = xs.iter().map(|&x| f64::from(x).abs()).fold(0.0, f64::max);
            let slack = m * 2f64.powi(-53) * (f64::from(1u32 << k) + 2.0);
            for &x in &xs {
                let y = f64::from(ema.update(x));
                let t = twin.update(x.to_lsb_f64());
                prop_assert!((y - t).abs() <= ema.output_bound_lsb() + slack,
                    "k {} y {} twin {}", k, y, t);
                let v = ema.value_lsb_f64().unwrap();
                prop_assert!((v - t).abs() <= ema.state_bound_lsb() + slack + m * 2f64.powi(-53));
            }
        }

        /// A constant input after any first sample is reached exactly within
        /// 2^k·(ln|Δ| + 0.7) + 1 samples, and the output stays there.
        #[test]
        fn ema_constant_converges_exactly(x0 in extreme_i32(), x in extreme_i32(), k in 1u32..=16) {
            let delta = (i64::from(x) - i64::from(x0)).unsigned_abs();
            converges_exactly(x0, x, k, delta, 0.7)?;
        }

        /// Never a panic for any i32, i64, u16 or Shift sequence; the
        /// output always lies between the smallest and largest input so far
        /// (for shifts: input clamped to the domain).
        #[test]
        fn ema_never_panics_and_stays_in_hull(
            xs in prop::collection::vec(extreme_i64(), 1..200),
            k in 0u32..=40,
        ) {
            let (Ok(mut a), Ok(mut b), Ok(mut c), Ok(mut d)) =
                (Ema::<i64>::new(k), Ema::<i32>::new(k), Ema::<Shift>::new(k), Ema::<u16>::new(k))
            else {
                prop_assert!(!(1..=16).contains(&k));
                return Ok(());
            };
            let hull = |lo: &mut i64, hi: &mut i64, x: i64, y: i64| {
                *lo = (*lo).min(x);
                *hi = (*hi).max(x);
                *lo <= y && y <= *hi
            };
            let mut h = [(i64::MAX, i64::MIN); 4];
            for &x in &xs {
                let [(l0, h0), (l1, h1), (l2, h2), (l3, h3)] = &mut h;
                prop_assert!(hull(l0, h0, x, a.update(x)));
                let x32 = (x >> 32) as i32; // the top half: exact
                prop_assert!(hull(l1, h1, x32.into(), b.update(x32).into()));
                let s = Shift::from_raw_q40(x >> (x & 31)); // all magnitudes
                prop_assert!(hull(l2, h2, shift_raw(s), c.update(s).raw_q40()));
                let x16 = x as u16;
                prop_assert!(hull(l3, h3, x16.into(), d.update(x16).into()));
            }
        }

        /// A constant input after any first sample is reached exactly
        /// within 2^k·(ln|Δ| + 1.4) + 1 samples by the u16 and shift
        /// averages too (their dead bands are below half an LSB; for
        /// shifts the state error decays to 0.5 − 2^(k−18) ≥ 1/4 LSB,
        /// ln 4 < 1.4).
        #[test]
        fn ema_narrow_states_converge_exactly(
            x0 in extreme_u16(), x in extreme_u16(),
            s0 in extreme_shift(), s in extreme_shift(),
            k in 1u32..=16,
        ) {
            converges_exactly(x0, x, k, u64::from(x0.abs_diff(x)), 1.4)?;
            // A shift in the domain (the clamped value is what comes out).
            let s = Shift::from_raw_q40(shift_raw(s));
            converges_exactly(s0, s, k, shift_raw(s0).abs_diff(shift_raw(s)), 1.4)?;
        }
    }
}
