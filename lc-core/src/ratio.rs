//! Frequency and period ratio of a count pair, in fixed point with `f64`
//! twins.
//!
//! | quantity | formula | fixed format | rounding | bound vs exact |
//! |---|---|---|---|---|
//! | frequency | f = f_ref · cycles / ticks | [`Frequency`]: `u64` Q32.32 Hz | nearest | ≤ 2^-33 Hz |
//! | period ratio | p = ticks / cycles | [`PeriodRatio`]: `u64` Q20.44 | nearest | ≤ 2^-45 |
//!
//! Both are exact rationals rounded once, so the bounds hold for every input
//! that does not overflow the format. The counter's own quantisation step at
//! a reading is one count of the quantised count n (ticks for reciprocal
//! gating, cycles for direct): δf ≈ f/n and δp ≈ p/n. Over the declared
//! domain (reference 1–200 MHz, sensor 10 kHz–30 MHz, counts up to 2^32 − 1)
//! the bounds above are at most 0.4 % of that step; the property tests below
//! prove ≤ 0.1 step against the `f64` twins.
//!
//! These two quantities are diagnostics and inputs to the host; each costs
//! one long division of 96 by 32 bits, done as two 64 ÷ 32-bit steps. The per-reading firmware path is
//! [`crate::shift::ShiftConverter`], which never forms them.
//!
//! ```
//! use lc_core::counting::CountPair;
//! use lc_core::ratio::{frequency, period_ratio};
//! let pair = CountPair::new(4096, 40_960);
//! assert_eq!(frequency(pair, 16_000_000).unwrap().to_hz_f64(), 1_600_000.0);
//! assert_eq!(period_ratio(pair).unwrap().to_f64(), 10.0);
//! ```

use crate::counting::CountPair;
use crate::fixed::{mul_u32_wide, round_div_shl32};
use core::fmt;

/// Why a frequency or period ratio could not be formed.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum RatioError {
    /// The divisor count (ticks for frequency, cycles for period ratio) is zero.
    ZeroCount,
    /// The result does not fit the output format.
    OutOfRange,
}

impl fmt::Display for RatioError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            RatioError::ZeroCount => "count is zero",
            RatioError::OutOfRange => "result does not fit the fixed-point format",
        })
    }
}

impl core::error::Error for RatioError {}

/// A frequency in hertz, `u64` Q32.32 (LSB 2^-32 Hz ≈ 0.23 nHz, up to
/// 4.29 GHz).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Frequency(u64);

impl Frequency {
    /// Fractional bits of the format.
    pub const FRAC_BITS: u32 = 32;

    /// From the raw Q32.32 value.
    #[inline]
    pub const fn from_raw_q32(raw: u64) -> Self {
        Self(raw)
    }

    /// The raw Q32.32 value.
    #[inline]
    pub const fn raw_q32(self) -> u64 {
        self.0
    }

    /// Whole hertz, rounded down.
    #[inline]
    pub const fn hz_floor(self) -> u32 {
        (self.0 >> 32) as u32
    }

    /// The value in hertz as `f64` (exact below 2^21 Hz, else rounded to
    /// nearest by the conversion).
    #[inline]
    pub fn to_hz_f64(self) -> f64 {
        self.0 as f64 / 4_294_967_296.0
    }
}

/// A period ratio: reference ticks per sensor cycle, `u64` Q20.44 (LSB
/// 2^-44 ≈ 5.7e-14, up to 2^20 = 1 048 576).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct PeriodRatio(u64);

impl PeriodRatio {
    /// Fractional bits of the format.
    pub const FRAC_BITS: u32 = 44;

    /// From the raw Q20.44 value.
    #[inline]
    pub const fn from_raw_q44(raw: u64) -> Self {
        Self(raw)
    }

    /// The raw Q20.44 value.
    #[inline]
    pub const fn raw_q44(self) -> u64 {
        self.0
    }

    /// The ratio as `f64` (rounded to nearest by the conversion; relative
    /// error ≤ 2^-53).
    #[inline]
    pub fn to_f64(self) -> f64 {
        self.0 as f64 / 17_592_186_044_416.0
    }

    /// The nearest Q20.44 value to a real ratio, or `None` when it is not
    /// finite, negative, or 2^20 or more. Host-side helper; firmware takes
    /// raw values from the calibration image.
    pub fn from_f64(p: f64) -> Option<Self> {
        if !(0.0..1_048_576.0).contains(&p) {
            return None;
        }
        let scaled = libm::round(p * 17_592_186_044_416.0);
        // 0 ≤ scaled ≤ 2^64 after rounding; the top value does not fit.
        if scaled >= 18_446_744_073_709_551_616.0 {
            return None;
        }
        Some(Self(scaled as u64))
    }
}

/// Frequency f = f_ref · cycles / ticks, rounded to the nearest 2^-32 Hz.
///
/// Exact rational, rounded once: |error| ≤ 2^-33 Hz for every accepted
/// input. Errors: `ZeroCount` when ticks is zero, `OutOfRange` when f ≥ 2^32 Hz.
pub fn frequency(pair: CountPair, reference_hz: u32) -> Result<Frequency, RatioError> {
    if pair.ticks == 0 {
        return Err(RatioError::ZeroCount);
    }
    // f_ref · cycles < 2^64 exactly; then · 2^32 / ticks in two steps.
    round_div_shl32(mul_u32_wide(reference_hz, pair.cycles), pair.ticks)
        .map(Frequency)
        .ok_or(RatioError::OutOfRange)
}

/// Period ratio p = ticks / cycles, rounded to the nearest 2^-44.
///
/// Exact rational, rounded once: |error| ≤ 2^-45 for every accepted input.
/// Errors: `ZeroCount` when cycles is zero, `OutOfRange` when p ≥ 2^20.
pub fn period_ratio(pair: CountPair) -> Result<PeriodRatio, RatioError> {
    if pair.cycles == 0 {
        return Err(RatioError::ZeroCount);
    }
    // ticks · 2^12 < 2^44; then · 2^32 / cycles in two steps: · 2^44 in all.
    round_div_shl32(u64::from(pair.ticks) << 12, pair.cycles)
        .map(PeriodRatio)
        .ok_or(RatioError::OutOfRange)
}

/// `f64` twin of [`frequency`]: f_ref · cycles / ticks in hertz. NaN or
/// infinity for zero counts, as `f64` division gives.
#[inline]
pub fn frequency_hz_f64(pair: CountPair, reference_hz: f64) -> f64 {
    reference_hz * f64::from(pair.cycles) / f64::from(pair.ticks)
}

/// `f64` twin of [`period_ratio`]: ticks / cycles.
#[inline]
pub fn period_ratio_f64(pair: CountPair) -> f64 {
    f64::from(pair.ticks) / f64::from(pair.cycles)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::counting::Gating;
    use proptest::prelude::*;

    /// Published counter-quantisation examples, docs/references.md, Counter
    /// quantisation cases.
    #[test]
    fn counter_quantisation_examples() {
        // 13d: single-period reciprocal count, 1 MHz clock, 1345 Hz input:
        // 743 counts give f = 1e6/743 = 1345.895 Hz, the next code 1344.086 Hz
        // (tutorial example, published, quoted; step computed: ≈ f²/f_ref).
        let f743 = frequency(CountPair::new(1, 743), 1_000_000)
            .unwrap()
            .to_hz_f64();
        let f744 = frequency(CountPair::new(1, 744), 1_000_000)
            .unwrap()
            .to_hz_f64();
        assert!((f743 - 1345.895).abs() < 5e-4, "{f743}");
        assert!((f744 - 1344.086).abs() < 5e-4, "{f744}");
        assert!((f743 - f744 - 1.809).abs() < 1e-3);
        assert!(((f743 - f744) - 1345.0f64 * 1345.0 / 1e6).abs() < 0.01);

        // 13b: reciprocal, 1 kHz input, 10 MHz reference, 1 s (1000 periods):
        // relative resolution ±1e-7, Δf = ±0.1 mHz (Rubiola 2005; computed).
        let pair = CountPair::new(1000, 10_000_000);
        let f = frequency(pair, 10_000_000).unwrap().to_hz_f64();
        let f_next = frequency(CountPair::new(1000, 10_000_001), 10_000_000)
            .unwrap()
            .to_hz_f64();
        assert_eq!(f, 1000.0);
        assert!(((f - f_next) - 1e-4).abs() < 1e-9);
        assert_eq!(Gating::Reciprocal.quantised_count(pair), 10_000_000);

        // 13a: direct, 1 kHz input, 1 s gate: one cycle is ±1 Hz (1e-3).
        let f_ref = 1_000_000; // any reference: gate = 1 s = f_ref ticks
        let d0 = frequency(CountPair::new(1000, f_ref), f_ref)
            .unwrap()
            .to_hz_f64();
        let d1 = frequency(CountPair::new(1001, f_ref), f_ref)
            .unwrap()
            .to_hz_f64();
        assert_eq!(d1 - d0, 1.0);

        // 13c: 1 MHz, 10 ms gate: direct ±100 Hz; reciprocal with a 100 MHz
        // reference ±1 Hz (1e-6).
        let c0 = frequency(CountPair::new(10_000, 100_000), 10_000_000)
            .unwrap()
            .to_hz_f64();
        let c1 = frequency(CountPair::new(10_001, 100_000), 10_000_000)
            .unwrap()
            .to_hz_f64();
        assert_eq!(c1 - c0, 100.0);
        let r0 = frequency(CountPair::new(10_000, 1_000_000), 100_000_000)
            .unwrap()
            .to_hz_f64();
        let r1 = frequency(CountPair::new(10_000, 999_999), 100_000_000)
            .unwrap()
            .to_hz_f64();
        assert!(((r1 - r0) - 1.0).abs() < 1e-5, "{}", r1 - r0);

        // 13e: LC sensor at 2 MHz, 1 ms window, 40 MHz reference: direct
        // Δf = 1 kHz; reciprocal Δf = 50 Hz (2.5e-5), so ΔC/C = 5e-5.
        let e0 = frequency(CountPair::new(2000, 40_000), 40_000_000)
            .unwrap()
            .to_hz_f64();
        let e1 = frequency(CountPair::new(2001, 40_000), 40_000_000)
            .unwrap()
            .to_hz_f64();
        assert_eq!(e1 - e0, 1000.0);
        let e2 = frequency(CountPair::new(2000, 39_999), 40_000_000)
            .unwrap()
            .to_hz_f64();
        assert!(((e2 - e0) - 50.0).abs() < 2e-3);
        // Small-signal law: ΔC/C = −2 Δf/f.
        assert!((2.0 * (e2 - e0) / e0 - 5e-5).abs() < 2e-9);
    }

    #[test]
    fn edge_cases() {
        assert_eq!(
            frequency(CountPair::new(5, 0), 1),
            Err(RatioError::ZeroCount)
        );
        assert_eq!(
            period_ratio(CountPair::new(0, 5)),
            Err(RatioError::ZeroCount)
        );
        assert_eq!(
            frequency(CountPair::new(0, 5), 16_000_000)
                .unwrap()
                .raw_q32(),
            0
        );
        assert_eq!(
            frequency(CountPair::new(u32::MAX, 1), u32::MAX),
            Err(RatioError::OutOfRange)
        );
        assert_eq!(
            frequency(CountPair::new(u32::MAX, u32::MAX), u32::MAX)
                .unwrap()
                .hz_floor(),
            u32::MAX
        );
        assert_eq!(
            period_ratio(CountPair::new(1, u32::MAX)),
            Err(RatioError::OutOfRange)
        );
        assert_eq!(
            period_ratio(CountPair::new(4096, 1 << 31))
                .unwrap()
                .raw_q44(),
            (1u64 << 31) << 32
        );
        assert_eq!(
            period_ratio(CountPair::new(u32::MAX, 1)).unwrap().raw_q44(),
            4096
        );
        assert_eq!(PeriodRatio::from_f64(10.0).unwrap().raw_q44(), 10 << 44);
        assert_eq!(PeriodRatio::from_f64(-1.0), None);
        assert_eq!(PeriodRatio::from_f64(f64::NAN), None);
        assert_eq!(PeriodRatio::from_f64(1_048_576.0), None);
        assert_eq!(
            PeriodRatio::from_f64(1_048_575.5).map(|p| p.raw_q44()),
            Some(0xFFFF_F800_0000_0000)
        );
    }

    /// The declared domain: reference 1–200 MHz, sensor 10 kHz–30 MHz, the
    /// larger count up to 2^32 − 1.
    fn domain() -> impl Strategy<Value = (u32, CountPair)> {
        (
            1_000_000u32..=200_000_000,
            10_000u32..=30_000_000,
            1u32..=u32::MAX,
            any::<bool>(),
        )
            .prop_filter_map("counts fit u32", |(f_ref, f_s, n, by_ticks)| {
                // Choose the larger count n, derive the other from the ratio.
                let p = f64::from(f_ref) / f64::from(f_s);
                let (cycles, ticks) = if by_ticks {
                    (libm::round(f64::from(n) / p), f64::from(n))
                } else {
                    (f64::from(n), libm::round(f64::from(n) * p))
                };
                if cycles < 1.0
                    || ticks < 1.0
                    || cycles > 4_294_967_295.0
                    || ticks > 4_294_967_295.0
                {
                    return None;
                }
                Some((f_ref, CountPair::new(cycles as u32, ticks as u32)))
            })
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(20_000))]

        /// Fixed frequency vs its f64 twin: ≤ 0.1 quantisation step (one
        /// count of the larger count, the stricter of both gatings).
        #[test]
        fn frequency_within_a_tenth_of_a_step((f_ref, pair) in domain()) {
            let fixed = frequency(pair, f_ref).unwrap().to_hz_f64();
            let float = frequency_hz_f64(pair, f64::from(f_ref));
            let step = float / f64::from(pair.max_count());
            prop_assert!((fixed - float).abs() <= 0.1 * step, "err {} step {}", fixed - float, step);
            // And the stated LSB bound, with f64's own rounding allowed for.
            prop_assert!((fixed - float).abs() <= 2f64.powi(-33) + float * 2f64.powi(-51));
        }

        #[test]
        fn period_ratio_within_a_tenth_of_a_step((_f_ref, pair) in domain()) {
            let fixed = period_ratio(pair).unwrap().to_f64();
            let float = period_ratio_f64(pair);
            let step = float / f64::from(pair.max_count());
            prop_assert!((fixed - float).abs() <= 0.1 * step);
            prop_assert!((fixed - float).abs() <= 2f64.powi(-45) + float * 2f64.powi(-51));
        }

        /// Arbitrary pairs never panic; successes are exact roundings.
        #[test]
        fn never_panics(cycles: u32, ticks: u32, f_ref: u32) {
            if let Ok(f) = frequency(CountPair::new(cycles, ticks), f_ref) {
                let exact = (u128::from(f_ref) * u128::from(cycles)) << 32;
                let err = (u128::from(f.raw_q32()) * u128::from(ticks)).abs_diff(exact);
                prop_assert!(2 * err <= u128::from(ticks));
            }
            if let Ok(p) = period_ratio(CountPair::new(cycles, ticks)) {
                let exact = u128::from(ticks) << 44;
                let err = (u128::from(p.raw_q44()) * u128::from(cycles)).abs_diff(exact);
                prop_assert!(2 * err <= u128::from(cycles));
            }
        }
    }
}
