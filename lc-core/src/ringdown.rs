//! Quality factor from a ring-down.
//!
//! After a kick, a tank with quality factor Q rings at its damped frequency
//! fd (see [`crate::tank`]) and its positive peaks decay geometrically:
//!
//! A_k = A_0·e^(−k·δ), k = 0, 1, 2, …
//!
//! where δ is the *logarithmic decrement*, the decay per damped cycle:
//! δ = α·T_d = 2π·α/ωd. For a series loop (or a kicked tank) α = R/(2L) and
//! ωd = √(ω0² − α²), which gives exactly
//!
//! δ = 2π/√(4Q² − 1), so Q = √(π²/δ² + 1/4),
//!
//! with the high-Q approximation Q ≈ π/δ (low by the factor √(1 − 1/(4Q²)),
//! about 1/(8Q²) relative). The peaks of e^(−αt)·cos(ωd·t + φ) are exactly one
//! damped period apart and each is exactly e^(−δ) times the one before, for
//! any phase φ, so the geometric model is exact for the sampled peaks, not
//! only for the envelope. Q here is the usual Q = ω0·L/R at the undamped f0.
//!
//! Two estimators are provided:
//!
//! * **Two amplitudes**: two peaks n cycles apart give δ = ln(a_first/a_later)/n.
//! * **Ring count**: the number of peaks between two amplitude thresholds (a
//!   comparator-friendly measurement). The count is quantised, so the
//!   estimate comes with the interval of Q values that a count one lower or
//!   one higher would give; the true Q always lies inside it. See
//!   [`quality_factor_from_ring_count`] for the exact definition.
//!
//! Amplitudes and thresholds may be in any unit (volts, ADC codes, …) as long
//! as all of them use the same one; only ratios enter.
//!
//! No function panics; invalid inputs return a [`RingDownError`].
//!
//! Source: logarithmic decrement of a damped linear oscillator, a standard
//! relation; it follows from the series-RLC free response in Trench,
//! *Elementary Differential Equations* (2013), §6.3.
//!
//! # Example
//!
//! ```
//! use lc_core::ringdown;
//!
//! // Two peaks ten cycles apart, 1.0 V then 0.5 V.
//! let q = ringdown::quality_factor_from_amplitudes(1.0, 0.5, 10).unwrap();
//! assert!((q - 45.3264).abs() < 1e-4);
//! let q_approx = ringdown::quality_factor_from_amplitudes_high_q(1.0, 0.5, 10).unwrap();
//! assert!((q_approx - 45.3236).abs() < 1e-4);
//!
//! // A Q = 50 tank kicked to 1.0 V, counted between 0.8 V and 0.2 V.
//! let count = ringdown::ring_count(50.0, 1.0, 0.8, 0.2).unwrap();
//! assert_eq!(count, 22);
//! let est = ringdown::quality_factor_from_ring_count(count, 0.8, 0.2).unwrap();
//! assert!(est.quality_factor_low <= 50.0 && 50.0 <= est.quality_factor_high);
//! ```

use core::f64::consts::PI;

/// Why a ring-down computation was refused.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum RingDownError {
    /// An amplitude or threshold is zero, negative, NaN or infinite.
    NonPositiveAmplitude,
    /// The later amplitude is not below the first one, or the logarithmic
    /// decrement is zero, negative or NaN.
    NotDecaying,
    /// The two amplitude samples are zero cycles apart.
    ZeroCycles,
    /// The upper threshold is not strictly above the lower threshold.
    ThresholdsNotOrdered,
    /// The ring count is zero: no peak fell between the thresholds, so there
    /// is no point estimate of Q.
    ZeroCount,
    /// The first peak after the kick is below the upper threshold, so the
    /// count would not cover the whole window.
    FirstPeakBelowUpper,
    /// Q is NaN, infinite, or at or below 1/2 (a tank at Q ≤ 1/2 does not
    /// ring).
    QualityOutOfRange,
    /// The ring count, or the index of the last counted peak, is too large
    /// to represent exactly (count above `u32::MAX` or index above 2^53).
    CountOutOfRange,
}

impl core::fmt::Display for RingDownError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str(match self {
            Self::NonPositiveAmplitude => "amplitude or threshold is not finite and positive",
            Self::NotDecaying => "amplitude does not decay",
            Self::ZeroCycles => "amplitude samples are zero cycles apart",
            Self::ThresholdsNotOrdered => "upper threshold is not above lower threshold",
            Self::ZeroCount => "ring count is zero",
            Self::FirstPeakBelowUpper => "first peak is below the upper threshold",
            Self::QualityOutOfRange => "quality factor is not finite and above 1/2",
            Self::CountOutOfRange => "ring count is too large to represent",
        })
    }
}

impl core::error::Error for RingDownError {}

/// Above this, consecutive integers are no longer all representable in f64.
const MAX_EXACT_INTEGER_F64: f64 = 9_007_199_254_740_992.0; // 2^53

fn check_amplitude(amplitude: f64) -> Result<(), RingDownError> {
    if amplitude.is_finite() && amplitude > 0.0 {
        Ok(())
    } else {
        Err(RingDownError::NonPositiveAmplitude)
    }
}

/// Validates a threshold pair and returns Λ = ln(upper/lower) > 0.
fn threshold_window_nepers(upper: f64, lower: f64) -> Result<f64, RingDownError> {
    check_amplitude(upper)?;
    check_amplitude(lower)?;
    if upper > lower {
        Ok(ln_ratio(upper, lower))
    } else {
        Err(RingDownError::ThresholdsNotOrdered)
    }
}

/// ln(num/den) for finite positive inputs, without overflow of the ratio.
fn ln_ratio(num: f64, den: f64) -> f64 {
    let ratio = num / den;
    if ratio.is_finite() && ratio > 0.0 {
        libm::log(ratio)
    } else {
        libm::log(num) - libm::log(den)
    }
}

/// Exact Q = √(π²/δ² + 1/4), written with the number of cycles per neper
/// c = 1/δ as √((π·c)² + 1/4) so that c = 0 (δ = ∞) gives the limit 1/2.
fn quality_factor_from_cycles_per_neper(cycles_per_neper: f64) -> f64 {
    libm::hypot(PI * cycles_per_neper, 0.5)
}

/// Logarithmic decrement δ = 2π/√(4Q² − 1) of a tank with quality factor Q,
/// in nepers per damped cycle.
///
/// Exact (no high-Q approximation). Each positive peak of the ring-down is
/// e^(−δ) times the previous one.
///
/// # Errors
///
/// [`RingDownError::QualityOutOfRange`] when Q is NaN, infinite or ≤ 1/2.
pub fn logarithmic_decrement(quality_factor: f64) -> Result<f64, RingDownError> {
    let q = quality_factor;
    if !(q.is_finite() && q > 0.5) {
        return Err(RingDownError::QualityOutOfRange);
    }
    // 4Q² − 1 as (2Q − 1)(2Q + 1): exact cancellation near Q = 1/2.
    Ok(2.0 * PI / libm::sqrt((2.0 * q - 1.0) * (2.0 * q + 1.0)))
}

/// Quality factor from a logarithmic decrement δ (nepers per cycle), exact:
/// Q = √(π²/δ² + 1/4).
///
/// Inverse of [`logarithmic_decrement`]. δ = +∞ gives the limit Q = 1/2.
///
/// # Errors
///
/// [`RingDownError::NotDecaying`] when δ is zero, negative or NaN.
pub fn quality_factor_from_decrement(log_decrement: f64) -> Result<f64, RingDownError> {
    if log_decrement > 0.0 {
        Ok(quality_factor_from_cycles_per_neper(1.0 / log_decrement))
    } else {
        Err(RingDownError::NotDecaying)
    }
}

/// Quality factor from a logarithmic decrement δ, high-Q approximation:
/// Q ≈ π/δ.
///
/// Low against [`quality_factor_from_decrement`] by the factor
/// √(1 − 1/(4Q²)) (about 1/(8Q²) relative: 0.5 % at Q = 5, 12.5 ppm at
/// Q = 100). δ = +∞ gives 0.
///
/// # Errors
///
/// [`RingDownError::NotDecaying`] when δ is zero, negative or NaN.
pub fn quality_factor_from_decrement_high_q(log_decrement: f64) -> Result<f64, RingDownError> {
    if log_decrement > 0.0 {
        Ok(PI / log_decrement)
    } else {
        Err(RingDownError::NotDecaying)
    }
}

/// Logarithmic decrement from two peak amplitudes `cycles_apart` damped
/// cycles apart: δ = ln(a_first/a_later)/n.
fn decrement_from_amplitudes(
    first_amplitude: f64,
    later_amplitude: f64,
    cycles_apart: u32,
) -> Result<f64, RingDownError> {
    check_amplitude(first_amplitude)?;
    check_amplitude(later_amplitude)?;
    if cycles_apart == 0 {
        return Err(RingDownError::ZeroCycles);
    }
    if later_amplitude >= first_amplitude {
        return Err(RingDownError::NotDecaying);
    }
    Ok(ln_ratio(first_amplitude, later_amplitude) / f64::from(cycles_apart))
}

/// Quality factor from two positive peak amplitudes taken `cycles_apart`
/// damped cycles apart (peak k and peak k + n), exact:
/// δ = ln(a_first/a_later)/n, Q = √(π²/δ² + 1/4).
///
/// # Errors
///
/// Checked in this order:
/// [`RingDownError::NonPositiveAmplitude`] when either amplitude is zero,
/// negative, NaN or infinite; [`RingDownError::ZeroCycles`] when
/// `cycles_apart` is 0; [`RingDownError::NotDecaying`] when
/// `later_amplitude >= first_amplitude`.
pub fn quality_factor_from_amplitudes(
    first_amplitude: f64,
    later_amplitude: f64,
    cycles_apart: u32,
) -> Result<f64, RingDownError> {
    let delta = decrement_from_amplitudes(first_amplitude, later_amplitude, cycles_apart)?;
    quality_factor_from_decrement(delta)
}

/// Quality factor from two positive peak amplitudes `cycles_apart` damped
/// cycles apart, high-Q approximation: Q ≈ π/δ = π·n/ln(a_first/a_later).
///
/// Low by about 1/(8Q²) relative against
/// [`quality_factor_from_amplitudes`].
///
/// # Errors
///
/// Same as [`quality_factor_from_amplitudes`].
pub fn quality_factor_from_amplitudes_high_q(
    first_amplitude: f64,
    later_amplitude: f64,
    cycles_apart: u32,
) -> Result<f64, RingDownError> {
    let delta = decrement_from_amplitudes(first_amplitude, later_amplitude, cycles_apart)?;
    quality_factor_from_decrement_high_q(delta)
}

/// Q estimated from a ring count, with the range of Q that the ±1
/// quantisation of the count allows.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct RingCountEstimate {
    /// Point estimate Q(N), exact decrement law, dimensionless.
    pub quality_factor: f64,
    /// Q(N − 1): the true Q is at or above this.
    pub quality_factor_low: f64,
    /// Q(N + 1): the true Q is below this.
    pub quality_factor_high: f64,
}

/// Quality factor from a ring count N between an upper and a lower amplitude
/// threshold, with its ±1-count interval.
///
/// # Definition of the ring count
///
/// The *ring count* N is the number of positive peaks A_k (k = 0, 1, 2, …
/// from the kick) with lower ≤ A_k ≤ upper. Since the peaks fall
/// monotonically, this is the same as: start at the first peak at or below
/// the upper threshold, and count it and every following peak whose
/// amplitude is at or above the lower threshold. The first peak after the
/// kick must be at or above the upper threshold, so that the count covers
/// the whole window (see [`ring_count`]).
///
/// # Estimate and interval
///
/// The log-amplitudes of the peaks are evenly spaced by δ. A closed window
/// of width Λ = ln(upper/lower) nepers therefore holds ⌊r⌋ or ⌊r⌋ + 1 of
/// them, r = Λ/δ, depending on where the first peak falls (the phase). So a
/// count N means N − 1 ≤ r < N + 1, and with Q(m) = √((π·m/Λ)² + 1/4)
/// (Q is increasing in r):
///
/// * `quality_factor` = Q(N). N is the phase-averaged (unbiased) estimate of
///   r; see [`expected_ring_count`].
/// * `quality_factor_low` = Q(N − 1), `quality_factor_high` = Q(N + 1), and
///   Q(N − 1) ≤ true Q < Q(N + 1). For N = 1 the lower bound is 1/2.
///
/// The relative width of the interval is about 2/N: count more peaks
/// (a wider window) for a tighter estimate.
///
/// # Errors
///
/// Checked in this order: [`RingDownError::NonPositiveAmplitude`] when a
/// threshold is zero, negative, NaN or infinite;
/// [`RingDownError::ThresholdsNotOrdered`] when `upper_threshold <=
/// lower_threshold`; [`RingDownError::ZeroCount`] when `ring_count` is 0
/// (then r < 1: Q is below Q(1), but there is no point estimate).
pub fn quality_factor_from_ring_count(
    ring_count: u32,
    upper_threshold: f64,
    lower_threshold: f64,
) -> Result<RingCountEstimate, RingDownError> {
    let window = threshold_window_nepers(upper_threshold, lower_threshold)?;
    if ring_count == 0 {
        return Err(RingDownError::ZeroCount);
    }
    let n = f64::from(ring_count);
    let q_of = |cycles: f64| quality_factor_from_cycles_per_neper(cycles / window);
    Ok(RingCountEstimate {
        quality_factor: q_of(n),
        quality_factor_low: q_of(n - 1.0),
        quality_factor_high: q_of(n + 1.0),
    })
}

/// Expected ring count r = ln(upper/lower)/δ for a tank with quality factor
/// Q, averaged over the phase of the first peak (dimensionless, not an
/// integer).
///
/// Forward model of [`quality_factor_from_ring_count`] (same definition of
/// the count). For a first peak whose log-amplitude is uniformly
/// distributed over one decrement, the mean count is exactly r, and every
/// single count is ⌊r⌋ or ⌊r⌋ + 1. [`ring_count`] gives the count for one
/// given first peak.
///
/// # Errors
///
/// [`RingDownError::QualityOutOfRange`] when Q is NaN, infinite or ≤ 1/2;
/// then the threshold errors of [`quality_factor_from_ring_count`].
pub fn expected_ring_count(
    quality_factor: f64,
    upper_threshold: f64,
    lower_threshold: f64,
) -> Result<f64, RingDownError> {
    let delta = logarithmic_decrement(quality_factor)?;
    let window = threshold_window_nepers(upper_threshold, lower_threshold)?;
    Ok(window / delta)
}

/// Ring count of one ring-down: the number of peaks
/// A_k = a_first·e^(−k·δ) (δ from Q, exact law) with
/// lower ≤ A_k ≤ upper, as defined at [`quality_factor_from_ring_count`].
///
/// Forward model for tests and for sizing thresholds. The count is computed
/// in closed form: peaks k = ⌈ln(a_first/upper)/δ⌉ … ⌊ln(a_first/lower)/δ⌋
/// are counted. A peak that lies within rounding error of a threshold may
/// be counted either way.
///
/// # Errors
///
/// Checked in this order: [`RingDownError::QualityOutOfRange`];
/// [`RingDownError::NonPositiveAmplitude`] for the first peak or a
/// threshold; [`RingDownError::ThresholdsNotOrdered`];
/// [`RingDownError::FirstPeakBelowUpper`] when `first_peak_amplitude <
/// upper_threshold`; [`RingDownError::CountOutOfRange`] when the count
/// exceeds `u32::MAX` or the last counted peak index exceeds 2^53.
pub fn ring_count(
    quality_factor: f64,
    first_peak_amplitude: f64,
    upper_threshold: f64,
    lower_threshold: f64,
) -> Result<u32, RingDownError> {
    let delta = logarithmic_decrement(quality_factor)?;
    check_amplitude(first_peak_amplitude)?;
    threshold_window_nepers(upper_threshold, lower_threshold)?;
    if first_peak_amplitude < upper_threshold {
        return Err(RingDownError::FirstPeakBelowUpper);
    }
    let k_first = libm::ceil(ln_ratio(first_peak_amplitude, upper_threshold) / delta);
    let k_last = libm::floor(ln_ratio(first_peak_amplitude, lower_threshold) / delta);
    if k_last.is_nan() || k_last > MAX_EXACT_INTEGER_F64 {
        return Err(RingDownError::CountOutOfRange);
    }
    // k_last ≥ k_first − 1 because the lower threshold is below the upper
    // one; the max() only guards against rounding.
    let count = libm::fmax(k_last - k_first + 1.0, 0.0);
    if count > f64::from(u32::MAX) {
        return Err(RingDownError::CountOutOfRange);
    }
    // `count` is an integer in 0..=u32::MAX (checked above), so the cast is
    // exact: no truncation or saturation can happen.
    Ok(count as u32)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::tank;
    use crate::tank::tests::assert_rel;
    use proptest::prelude::*;

    // ---- Published checks, docs/references.md, LC tank cases ----

    #[test]
    fn case_1d_trench_free_response_peaks_give_q() {
        // docs/references.md, LC tank cases, 1d: q(t) = e^(−100t)(cos 200t +
        // 0.51 sin 200t) (published, quoted: LibreTexts copy of Trench,
        // Elementary Differential Equations, 2013, §6.3), from R = 40 Ω, L =
        // 0.2 H, C = 1e-4 F (from memory, consistent). Expected Q = 1.1180 (=
        // √5/2), 1e-9. The peaks are one damped period (ωd = 200 rad/s) apart.
        let q_of_t =
            |t: f64| libm::exp(-100.0 * t) * (libm::cos(200.0 * t) + 0.51 * libm::sin(200.0 * t));
        // dq/dt = e^(−100t)(2 cos 200t − 251 sin 200t) = 0 at tan(200t) = 2/251.
        let t0 = libm::atan(2.0 / 251.0) / 200.0;
        let period = 2.0 * PI / 200.0;
        let slope = |t: f64| {
            libm::exp(-100.0 * t) * (2.0 * libm::cos(200.0 * t) - 251.0 * libm::sin(200.0 * t))
        };
        assert!(slope(t0).abs() < 1e-12 && slope(t0 + period).abs() < 1e-12);
        let a0 = q_of_t(t0);
        let a1 = q_of_t(t0 + period);
        let a3 = q_of_t(t0 + 3.0 * period);
        assert!(a0 > 0.0 && a1 > 0.0 && a3 > 0.0);
        let q1 = quality_factor_from_amplitudes(a0, a1, 1).unwrap();
        assert_rel(q1, libm::sqrt(5.0) / 2.0, 1e-9, "Q from adjacent peaks");
        assert!((q1 - 1.1180).abs() <= 5e-5, "Q printed 1.1180");
        let q3 = quality_factor_from_amplitudes(a0, a3, 3).unwrap();
        assert_rel(q3, libm::sqrt(5.0) / 2.0, 1e-9, "Q from peaks 3 apart");
        // δ = α·Td = 100·2π/200 = π; the high-Q rule π/δ gives 1, 11 % low.
        assert_rel(logarithmic_decrement(q1).unwrap(), PI, 1e-9, "delta");
        let q_approx = quality_factor_from_amplitudes_high_q(a0, a1, 1).unwrap();
        assert_rel(q_approx, 1.0, 1e-9, "high-Q approximation");
        // Same Q as the tank laws give for the circuit.
        assert_rel(
            q1,
            tank::series_quality_factor(0.2, 1e-4, 40.0),
            1e-9,
            "tank Q",
        );
    }

    #[test]
    fn cases_1e_1f_decrement_matches_tank_ring_down() {
        // docs/references.md, LC tank cases, 1e (computed): L = 10 µH, C = 1
        // nF, Rs = 1 Ω, Q = 100; "amplitude falls to 1/e in Q/π = 31.83 cycles"
        // (printed to 0.01 cycle). Counted in damped cycles (peaks), the exact
        // number is 1/δ = fd·τ = (Q/π)·√(1 − 1/(4Q²)) = 31.8306; Q/π is its
        // high-Q form. Case 1f (Rs = 20 Ω, Q = 5) checks the same identity at
        // low Q. Uses the damped frequency fd.
        let delta = logarithmic_decrement(100.0).unwrap();
        assert!(
            (1.0 / delta - 31.83).abs() <= 0.005,
            "1/δ = {}",
            1.0 / delta
        );
        assert!((100.0 / PI - 31.83).abs() <= 0.005);
        assert_rel(
            1.0 / delta,
            (100.0 / PI) * libm::sqrt(1.0 - 1.0 / 40_000.0),
            1e-12,
            "1/δ vs Q/π",
        );
        for &(rs_ohm, q) in &[(1.0, 100.0), (20.0, 5.0)] {
            let (l_h, c_f) = (10e-6, 1e-9);
            let fd = tank::series_damped_frequency_hz(l_h, c_f, rs_ohm).unwrap();
            let tau = tank::series_decay_time_constant_s(l_h, rs_ohm);
            let delta = logarithmic_decrement(q).unwrap();
            // δ = α·Td = 1/(fd·τ).
            assert_rel(delta, 1.0 / (fd * tau), 1e-12, "δ = 1/(fd τ)");
            assert_rel(
                quality_factor_from_decrement(delta).unwrap(),
                q,
                1e-12,
                "Q back",
            );
        }
    }

    // ---- Deterministic behaviour ------------------------------------------

    #[test]
    fn counts_take_two_values_and_average_to_expected() {
        // Sweep the phase of the first peak over one decrement: the count is
        // ⌊r⌋ or ⌊r⌋ + 1 and its mean over phase is r.
        let (q, upper, lower) = (37.5, 1.0, 0.3);
        let delta = logarithmic_decrement(q).unwrap();
        let r = expected_ring_count(q, upper, lower).unwrap();
        let floor_r = libm::floor(r);
        let steps: u32 = 10_000;
        let mut sum = 0.0;
        let (mut seen_low, mut seen_high) = (false, false);
        for j in 0..steps {
            let first = upper * libm::exp(delta * (f64::from(j) + 0.5) / f64::from(steps));
            let n = f64::from(ring_count(q, first, upper, lower).unwrap());
            assert!(n == floor_r || n == floor_r + 1.0, "n = {n}, r = {r}");
            seen_low |= n == floor_r;
            seen_high |= n == floor_r + 1.0;
            sum += n;
        }
        assert!(seen_low && seen_high);
        let mean = sum / f64::from(steps);
        assert!(
            (mean - r).abs() <= 2.0 / f64::from(steps),
            "mean {mean} vs r {r}"
        );
    }

    #[test]
    fn first_peak_exactly_at_upper_is_counted() {
        // Window narrower than one decrement: only the first peak can count.
        let (q, upper, lower) = (50.0, 1.0, 0.99);
        assert_eq!(ring_count(q, 1.0, upper, lower), Ok(1));
        assert_eq!(ring_count(q, 1.0001, upper, lower), Ok(0));
        // A zero count has no point estimate.
        assert_eq!(
            quality_factor_from_ring_count(0, upper, lower),
            Err(RingDownError::ZeroCount)
        );
    }

    #[test]
    fn ring_count_one_has_lower_bound_one_half() {
        let est = quality_factor_from_ring_count(1, 1.0, 0.5).unwrap();
        assert_eq!(est.quality_factor_low, 0.5);
        assert!(est.quality_factor > 0.5 && est.quality_factor_high > est.quality_factor);
    }

    #[test]
    fn error_cases() {
        use RingDownError::*;
        let bad = [0.0, -1.0, f64::NAN, f64::INFINITY];
        for &a in &bad {
            assert_eq!(
                quality_factor_from_amplitudes(a, 0.5, 1),
                Err(NonPositiveAmplitude)
            );
            assert_eq!(
                quality_factor_from_amplitudes(1.0, a, 1),
                Err(NonPositiveAmplitude)
            );
            assert_eq!(
                quality_factor_from_amplitudes_high_q(a, 0.5, 1),
                Err(NonPositiveAmplitude)
            );
            assert_eq!(
                quality_factor_from_ring_count(5, a, 0.5),
                Err(NonPositiveAmplitude)
            );
            assert_eq!(
                quality_factor_from_ring_count(5, 1.0, a),
                Err(NonPositiveAmplitude)
            );
            assert_eq!(expected_ring_count(10.0, a, 0.5), Err(NonPositiveAmplitude));
            assert_eq!(ring_count(10.0, a, 1.0, 0.5), Err(NonPositiveAmplitude));
            assert_eq!(ring_count(10.0, 2.0, 1.0, a), Err(NonPositiveAmplitude));
        }
        assert_eq!(quality_factor_from_amplitudes(1.0, 0.5, 0), Err(ZeroCycles));
        assert_eq!(
            quality_factor_from_amplitudes_high_q(1.0, 0.5, 0),
            Err(ZeroCycles)
        );
        assert_eq!(
            quality_factor_from_amplitudes(1.0, 1.0, 3),
            Err(NotDecaying)
        );
        assert_eq!(
            quality_factor_from_amplitudes(0.5, 1.0, 3),
            Err(NotDecaying)
        );
        assert_eq!(
            quality_factor_from_amplitudes_high_q(0.5, 1.0, 3),
            Err(NotDecaying)
        );
        for &d in &[0.0, -0.1, f64::NAN] {
            assert_eq!(quality_factor_from_decrement(d), Err(NotDecaying));
            assert_eq!(quality_factor_from_decrement_high_q(d), Err(NotDecaying));
        }
        assert_eq!(quality_factor_from_decrement(f64::INFINITY), Ok(0.5));
        assert_eq!(
            quality_factor_from_ring_count(5, 0.5, 0.5),
            Err(ThresholdsNotOrdered)
        );
        assert_eq!(
            quality_factor_from_ring_count(5, 0.4, 0.5),
            Err(ThresholdsNotOrdered)
        );
        assert_eq!(
            expected_ring_count(10.0, 0.4, 0.5),
            Err(ThresholdsNotOrdered)
        );
        assert_eq!(ring_count(10.0, 1.0, 0.4, 0.5), Err(ThresholdsNotOrdered));
        assert_eq!(ring_count(10.0, 0.9, 1.0, 0.5), Err(FirstPeakBelowUpper));
        for &q in &[0.5, 0.1, -3.0, f64::NAN, f64::INFINITY] {
            assert_eq!(logarithmic_decrement(q), Err(QualityOutOfRange));
            assert_eq!(expected_ring_count(q, 1.0, 0.5), Err(QualityOutOfRange));
            assert_eq!(ring_count(q, 1.0, 1.0, 0.5), Err(QualityOutOfRange));
        }
        // ~1.1e10 peaks between 1 and 1e-5 at Q = 3e9: above u32::MAX.
        assert_eq!(ring_count(3e9, 1.0, 1.0, 1e-5), Err(CountOutOfRange));
        // Index of the last peak above 2^53.
        assert_eq!(
            ring_count(1e20, 1e300, 1e-300, 1e-301),
            Err(CountOutOfRange)
        );
    }

    #[test]
    fn errors_display_distinct_messages() {
        use RingDownError::*;
        let all = [
            NonPositiveAmplitude,
            NotDecaying,
            ZeroCycles,
            ThresholdsNotOrdered,
            ZeroCount,
            FirstPeakBelowUpper,
            QualityOutOfRange,
            CountOutOfRange,
        ];
        let messages: Vec<String> = all.iter().map(|e| e.to_string()).collect();
        for (i, m) in messages.iter().enumerate() {
            assert!(!m.is_empty());
            for other in &messages[i + 1..] {
                assert_ne!(m, other);
            }
        }
        let as_error: &dyn core::error::Error = &ZeroCycles;
        assert_eq!(
            as_error.to_string(),
            "amplitude samples are zero cycles apart"
        );
        assert!(as_error.source().is_none());
    }

    // ---- Properties --------------------------------------------------------

    fn log_uniform(lo: f64, hi: f64) -> impl Strategy<Value = f64> {
        (lo..hi).prop_map(|e| 10f64.powf(e))
    }

    proptest! {
        #[test]
        fn decrement_round_trip(q in prop_oneof![0.5001f64..2.0, log_uniform(0.3, 6.0)]) {
            let delta = logarithmic_decrement(q).unwrap();
            let q_back = quality_factor_from_decrement(delta).unwrap();
            prop_assert!(((q_back - q) / q).abs() <= 1e-12, "{q} -> {q_back}");
        }

        #[test]
        fn two_sample_estimate_reproduces_q(
            q in 5.0f64..500.0,
            cycles in 1u32..=200,
            first in log_uniform(-6.0, 3.0),
        ) {
            let delta = logarithmic_decrement(q).unwrap();
            let later = first * libm::exp(-f64::from(cycles) * delta);
            let q_est = quality_factor_from_amplitudes(first, later, cycles).unwrap();
            prop_assert!(((q_est - q) / q).abs() <= 1e-9, "{q} -> {q_est}");
            // The high-Q form is low by 1 − √(1 − 1/(4Q²)) ∈ [1/(8Q²), 1/(7.46Q²)].
            let q_hq = quality_factor_from_amplitudes_high_q(first, later, cycles).unwrap();
            let low_by = 1.0 - q_hq / q_est;
            let x = 1.0 / (4.0 * q * q);
            prop_assert!(low_by >= x / 2.0 * (1.0 - 1e-6) && low_by <= x / 1.866, "{low_by}");
        }

        #[test]
        fn two_sample_estimate_wide_q(
            q in prop_oneof![0.6f64..5.0, log_uniform(0.7, 5.0)],
            cycles in 1u32..=60,
        ) {
            // δ ≤ 9.5 for Q ≥ 0.6, so the later sample stays above e^(−570).
            let delta = logarithmic_decrement(q).unwrap();
            let later = libm::exp(-f64::from(cycles) * delta);
            let q_est = quality_factor_from_amplitudes(1.0, later, cycles).unwrap();
            prop_assert!(((q_est - q) / q).abs() <= 1e-9, "{q} -> {q_est}");
        }

        #[test]
        fn ring_count_round_trip_interval_contains_q(
            q in 5.0f64..500.0,
            upper in log_uniform(-3.0, 0.0),
            lower_fraction in 0.01f64..0.9,
            kick_nepers in 0.0f64..10.0,
        ) {
            let lower = upper * lower_fraction;
            let first = upper * libm::exp(kick_nepers);
            let delta = logarithmic_decrement(q).unwrap();
            // Simulate the peaks one by one and count them by the definition.
            let mut simulated: u32 = 0;
            let mut near_threshold = false;
            let mut k: u32 = 0;
            loop {
                let a = first * libm::exp(-f64::from(k) * delta);
                if a < lower * (1.0 - 1e-9) {
                    break;
                }
                near_threshold |= ((a - upper) / upper).abs() < 1e-9
                    || ((a - lower) / lower).abs() < 1e-9;
                if a <= upper && a >= lower {
                    simulated += 1;
                }
                k += 1;
            }
            prop_assume!(!near_threshold);
            let n = ring_count(q, first, upper, lower).unwrap();
            prop_assert_eq!(n, simulated);
            let r = expected_ring_count(q, upper, lower).unwrap();
            let nf = f64::from(n);
            prop_assert!(nf - 1.0 <= r + 1e-9 && r < nf + 1.0 + 1e-9, "n {n} r {r}");
            if n == 0 {
                prop_assert_eq!(
                    quality_factor_from_ring_count(n, upper, lower),
                    Err(RingDownError::ZeroCount)
                );
                prop_assert!(r < 1.0 + 1e-9);
            } else {
                let est = quality_factor_from_ring_count(n, upper, lower).unwrap();
                prop_assert!(est.quality_factor_low < est.quality_factor);
                prop_assert!(est.quality_factor < est.quality_factor_high);
                prop_assert!(
                    est.quality_factor_low <= q * (1.0 + 1e-9)
                        && q <= est.quality_factor_high * (1.0 + 1e-9),
                    "Q {q} not in [{}, {}]", est.quality_factor_low, est.quality_factor_high
                );
            }
        }
    }
}
