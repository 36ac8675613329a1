//! LC tank laws in `f64`: resonance, damping, losses and stored energy.
//!
//! These are the reference (host and design-time) forms of the physics that
//! the fixed-point reading path relies on. All quantities are SI: henry (H),
//! farad (F), ohm (Ω), hertz (Hz), radians per second (rad/s), seconds (s),
//! coulomb (C), ampere (A), volt (V) and joule (J). The unit is part of each
//! function or argument name. Math goes through [`libm`], so the module
//! builds without `std`; on a target without an FPU it runs in soft float,
//! which suits design-time and host use rather than the per-reading path.
//!
//! # Three "resonant frequencies"
//!
//! They differ at order 1/Q², so every function says which one it means:
//!
//! | name | formula | meaning |
//! |---|---|---|
//! | f0 (undamped) | 1/(2π√(LC)) | natural frequency of the lossless L–C pair |
//! | fd (damped) | √(ω0² − α²)/(2π), α = Rs/(2L) | free ring-down frequency of a kicked tank |
//! | fr (tank zero-phase) | √(1/(LC) − Rs²/L²)/(2π) | where a lossy coil ∥ C has a purely resistive impedance |
//!
//! For a tank with quality factor Q: fd = f0·√(1 − 1/(4Q²)) and
//! fr = f0·√(1 − 1/Q²), so fr < fd < f0 for any finite Q > 1.
//!
//! # Circuits
//!
//! * **Series RLC**: R, L and C in one loop. A *tank* (a coil with series
//!   loss Rs, in parallel with C) rings down after a kick through this same
//!   loop, so the series-RLC laws (α, fd, τ, Q) describe its ring-down.
//! * **Parallel RLC**: an ideal resistor Rp across an ideal L ∥ C.
//! * **Series ↔ parallel loss**: the tank's coil loss Rs expressed as an
//!   equivalent Rp across the tank at f0.
//!
//! # Invalid inputs
//!
//! No function panics. Functions that return a plain `f64` evaluate their
//! formula without validation: zero, negative, NaN or infinite inputs give
//! whatever IEEE 754 arithmetic gives (NaN, ±∞ or a meaningless finite
//! number). Functions that return an [`Option`] validate their inputs and
//! return `None` for invalid inputs and for cases where the result would be
//! imaginary (for example an overdamped tank has no damped frequency).
//!
//! # Sources
//!
//! Standard circuit-theory relations unless a function names a source. The
//! free response of the series RLC follows Trench, *Elementary Differential
//! Equations* (2013), §6.3. The high-Q dynamic resistance Rp ≈ L/(C·Rs)
//! follows Boylestad, *Introductory Circuit Analysis*, ch. Resonance (the
//! Q ≥ 10 treatment) and Davis & Carr, *Newnes Radio and RF Engineer's Pocket
//! Book* (3rd ed., 2002), §5.1.
//!
//! # Example
//!
//! ```
//! use lc_core::tank;
//!
//! // A 10 µH coil with 1 Ω of loss, tuned by 1 nF.
//! let (l_h, c_f, rs_ohm) = (10e-6, 1e-9, 1.0);
//!
//! let f0 = tank::resonant_frequency_hz(l_h, c_f);
//! assert!((f0 - 1_591_549.43).abs() < 0.01);
//! assert!((tank::series_quality_factor(l_h, c_f, rs_ohm) - 100.0).abs() < 1e-9);
//!
//! // Ring-down frequency and tank zero-phase frequency sit just below f0.
//! let fd = tank::series_damped_frequency_hz(l_h, c_f, rs_ohm).unwrap();
//! let fr = tank::tank_zero_phase_frequency_hz(l_h, c_f, rs_ohm).unwrap();
//! assert!(fr < fd && fd < f0);
//!
//! // The tank looks like 10 kΩ at fr; the high-Q rule L/(C·Rs) gives the same.
//! let z_ohm = tank::tank_impedance_at_zero_phase_ohm(l_h, c_f, rs_ohm);
//! assert!((z_ohm - 10_000.0).abs() < 1e-6);
//! assert!((tank::parallel_resistance_high_q_ohm(l_h, c_f, rs_ohm) - z_ohm).abs() < 1e-6);
//!
//! // A 1 % rise of L (or C) lowers the frequency by about 0.5 %.
//! let f_hz = tank::resonant_frequency_hz(l_h * 1.01, c_f);
//! let s = tank::relative_lc_change_from_frequencies(f_hz, f0);
//! assert!((s - 0.01).abs() < 1e-12);
//! ```

use core::f64::consts::PI;

const TWO_PI: f64 = 2.0 * PI;

/// `true` for a finite value above zero.
fn is_positive_finite(x: f64) -> bool {
    x.is_finite() && x > 0.0
}

/// `true` for a finite value at or above zero.
fn is_non_negative_finite(x: f64) -> bool {
    x.is_finite() && x >= 0.0
}

/// `√(a² − b²)` for `a ≥ b ≥ 0`, written as `√((a − b)(a + b))` so that it
/// keeps full relative precision when `b` is close to `a`, and returning
/// `None` unless the result is real and above zero.
fn positive_sqrt_of_difference_of_squares(a: f64, b: f64) -> Option<f64> {
    let product = (a - b) * (a + b);
    if product > 0.0 && product.is_finite() {
        Some(libm::sqrt(product))
    } else {
        None
    }
}

// ---------------------------------------------------------------------------
// Undamped resonance f0 and its inverses
// ---------------------------------------------------------------------------

/// Undamped angular resonant frequency ω0 = 1/√(L·C), in rad/s.
///
/// This is the lossless L–C natural frequency (f0 in the module table), not
/// the damped or the zero-phase one. Standard textbook relation.
///
/// Invalid inputs are not checked: for example C = 0 gives +∞ and a
/// negative product gives NaN.
pub fn angular_resonant_frequency_rad_per_s(inductance_h: f64, capacitance_f: f64) -> f64 {
    1.0 / libm::sqrt(inductance_h * capacitance_f)
}

/// Undamped resonant frequency f0 = 1/(2π·√(L·C)), in Hz.
///
/// This is the lossless natural frequency, the one the readout's shift law
/// assumes. Standard textbook relation.
///
/// Invalid inputs are not checked (zero gives +∞, negative gives NaN).
pub fn resonant_frequency_hz(inductance_h: f64, capacitance_f: f64) -> f64 {
    angular_resonant_frequency_rad_per_s(inductance_h, capacitance_f) / TWO_PI
}

/// Undamped resonant frequency f0 = 1/(2π·√(L·C_total)), in Hz, with
/// C_total = C_tank + C_parasitic.
///
/// Use this when the tank capacitor is loaded by stray, pin or probe
/// capacitance, which sits in parallel with it. Same f0 as
/// [`resonant_frequency_hz`].
///
/// Invalid inputs are not checked.
pub fn resonant_frequency_with_parasitic_hz(
    inductance_h: f64,
    tank_capacitance_f: f64,
    parasitic_capacitance_f: f64,
) -> f64 {
    resonant_frequency_hz(inductance_h, tank_capacitance_f + parasitic_capacitance_f)
}

/// Inductance that resonates (undamped, f0) with `capacitance_f` at
/// `frequency_hz`: L = 1/((2π·f)²·C), in H.
///
/// Inverse of [`resonant_frequency_hz`] in L. Invalid inputs are not
/// checked (f = 0 or C = 0 gives +∞).
pub fn inductance_for_frequency_h(frequency_hz: f64, capacitance_f: f64) -> f64 {
    let omega = TWO_PI * frequency_hz;
    1.0 / (omega * omega * capacitance_f)
}

/// Capacitance that resonates (undamped, f0) with `inductance_h` at
/// `frequency_hz`: C = 1/((2π·f)²·L), in F.
///
/// Inverse of [`resonant_frequency_hz`] in C. Invalid inputs are not
/// checked (f = 0 or L = 0 gives +∞).
pub fn capacitance_for_frequency_f(frequency_hz: f64, inductance_h: f64) -> f64 {
    let omega = TWO_PI * frequency_hz;
    1.0 / (omega * omega * inductance_h)
}

// ---------------------------------------------------------------------------
// Series RLC (and the free ring-down of a tank)
// ---------------------------------------------------------------------------

/// Neper frequency of a series RLC, α = R/(2L), in s⁻¹ (1/s).
///
/// The envelope of the free response decays as e^(−α·t). Standard relation
/// (Trench, *Elementary Differential Equations*, 2013, §6.3, for the free
/// response). Invalid inputs are not checked.
pub fn series_neper_frequency_per_s(inductance_h: f64, series_resistance_ohm: f64) -> f64 {
    series_resistance_ohm / (2.0 * inductance_h)
}

/// Damped angular frequency of a series RLC (or a kicked tank),
/// ωd = √(ω0² − α²) with ω0 = 1/√(LC) and α = R/(2L), in rad/s.
///
/// This is the free ring-down frequency (fd in the module table), below the
/// undamped ω0 by the factor √(1 − 1/(4Q²)). Standard relation (Trench,
/// *Elementary Differential Equations*, 2013, §6.3).
///
/// Returns `None` when the circuit does not oscillate (critically damped,
/// α = ω0, or overdamped, α > ω0) and for invalid inputs: L or C not finite
/// and above zero, or R not finite and at or above zero (and if ω0
/// overflows to ∞). R = 0 gives ω0.
pub fn series_damped_angular_frequency_rad_per_s(
    inductance_h: f64,
    capacitance_f: f64,
    series_resistance_ohm: f64,
) -> Option<f64> {
    if !is_positive_finite(inductance_h)
        || !is_positive_finite(capacitance_f)
        || !is_non_negative_finite(series_resistance_ohm)
    {
        return None;
    }
    let omega0 = angular_resonant_frequency_rad_per_s(inductance_h, capacitance_f);
    let alpha = series_neper_frequency_per_s(inductance_h, series_resistance_ohm);
    positive_sqrt_of_difference_of_squares(omega0, alpha)
}

/// Damped (ring-down) frequency of a series RLC or a kicked tank,
/// fd = √(ω0² − α²)/(2π) = f0·√(1 − 1/(4Q²)), in Hz.
///
/// See [`series_damped_angular_frequency_rad_per_s`] for the validity rules;
/// `None` when critically damped, overdamped or given invalid inputs.
pub fn series_damped_frequency_hz(
    inductance_h: f64,
    capacitance_f: f64,
    series_resistance_ohm: f64,
) -> Option<f64> {
    series_damped_angular_frequency_rad_per_s(inductance_h, capacitance_f, series_resistance_ohm)
        .map(|omega_d| omega_d / TWO_PI)
}

/// Quality factor of a series RLC, Q = (1/R)·√(L/C) = ω0·L/R, dimensionless.
///
/// Q is defined at the undamped f0. Standard relation. Invalid inputs are
/// not checked (R = 0 gives +∞).
pub fn series_quality_factor(
    inductance_h: f64,
    capacitance_f: f64,
    series_resistance_ohm: f64,
) -> f64 {
    libm::sqrt(inductance_h / capacitance_f) / series_resistance_ohm
}

/// Amplitude decay time constant of a series RLC, τ = 2L/R = 1/α, in s.
///
/// The envelope falls as e^(−t/τ); the stored energy falls twice as fast.
/// Q = ω0·τ/2 = π·f0·τ. Standard relation. Invalid inputs are not checked
/// (R = 0 gives +∞).
pub fn series_decay_time_constant_s(inductance_h: f64, series_resistance_ohm: f64) -> f64 {
    2.0 * inductance_h / series_resistance_ohm
}

/// Half-power (−3 dB) bandwidth of a series RLC, BW = f0/Q = R/(2π·L), in Hz.
///
/// Equal to f2 − f1 of [`series_half_power_frequencies_hz`] exactly.
/// Standard relation. Invalid inputs are not checked.
pub fn series_bandwidth_hz(inductance_h: f64, series_resistance_ohm: f64) -> f64 {
    series_resistance_ohm / (TWO_PI * inductance_h)
}

/// The two half-power frequencies of a driven series RLC, in Hz.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct HalfPowerFrequencies {
    /// Lower half-power frequency f1, in Hz.
    pub lower_hz: f64,
    /// Upper half-power frequency f2, in Hz.
    pub upper_hz: f64,
}

/// Half-power frequencies of a driven series RLC:
/// ω1,2 = ∓α + √(α² + ω0²), f = ω/(2π), in Hz.
///
/// Exact (no high-Q approximation): f2 − f1 = R/(2πL) and f1·f2 = f0², so
/// they are placed geometrically, not arithmetically, around the undamped
/// f0. The lower one is evaluated as ω0²/(√(α² + ω0²) + α) to avoid
/// cancellation at low Q. Standard relation.
///
/// Invalid inputs are not checked; they give NaN or infinite fields.
pub fn series_half_power_frequencies_hz(
    inductance_h: f64,
    capacitance_f: f64,
    series_resistance_ohm: f64,
) -> HalfPowerFrequencies {
    let omega0 = angular_resonant_frequency_rad_per_s(inductance_h, capacitance_f);
    let alpha = series_neper_frequency_per_s(inductance_h, series_resistance_ohm);
    let upper = libm::hypot(alpha, omega0) + alpha;
    let lower = omega0 * omega0 / upper;
    HalfPowerFrequencies {
        lower_hz: lower / TWO_PI,
        upper_hz: upper / TWO_PI,
    }
}

// ---------------------------------------------------------------------------
// Parallel RLC
// ---------------------------------------------------------------------------

/// Quality factor of an ideal parallel RLC, Q = Rp·√(C/L), dimensionless.
///
/// Q is defined at the undamped f0. Standard relation. Invalid inputs are
/// not checked.
pub fn parallel_quality_factor(
    inductance_h: f64,
    capacitance_f: f64,
    parallel_resistance_ohm: f64,
) -> f64 {
    parallel_resistance_ohm * libm::sqrt(capacitance_f / inductance_h)
}

/// Neper frequency of an ideal parallel RLC, α = 1/(2·Rp·C), in s⁻¹.
///
/// Standard relation. Invalid inputs are not checked (Rp = 0 gives +∞).
pub fn parallel_neper_frequency_per_s(capacitance_f: f64, parallel_resistance_ohm: f64) -> f64 {
    1.0 / (2.0 * parallel_resistance_ohm * capacitance_f)
}

/// Amplitude decay time constant of an ideal parallel RLC, τ = 2·Rp·C, in s.
///
/// Q = π·f0·τ as for the series circuit. Standard relation. Invalid inputs
/// are not checked.
pub fn parallel_decay_time_constant_s(capacitance_f: f64, parallel_resistance_ohm: f64) -> f64 {
    2.0 * parallel_resistance_ohm * capacitance_f
}

// ---------------------------------------------------------------------------
// Series <-> parallel loss of a tank
// ---------------------------------------------------------------------------

/// Exact parallel loss resistance equivalent to the coil's series loss at
/// the undamped f0: Rp = Rs·(1 + Q²) with Q = ω0·L/Rs, which equals
/// Rs + L/(C·Rs), in Ω.
///
/// The series-to-parallel conversion holds at one frequency; this function
/// uses ω0 = 1/√(LC). Standard relation. Invalid inputs are not checked
/// (Rs = 0 gives +∞).
pub fn parallel_resistance_exact_ohm(
    inductance_h: f64,
    capacitance_f: f64,
    series_resistance_ohm: f64,
) -> f64 {
    series_resistance_ohm + inductance_h / (capacitance_f * series_resistance_ohm)
}

/// High-Q parallel loss resistance (dynamic resistance) of a tank,
/// Rp ≈ Q²·Rs = L/(C·Rs), in Ω.
///
/// Low by the factor Q²/(1 + Q²) against [`parallel_resistance_exact_ohm`]:
/// about 1 % at Q = 10, the textbook lower limit for this rule. It is also
/// exactly the tank's impedance at its zero-phase frequency fr (see
/// [`tank_impedance_at_zero_phase_ohm`]). Sources: Boylestad, *Introductory
/// Circuit Analysis*, ch. Resonance (the Q ≥ 10 treatment, as followed on
/// realnfo.com, "Effect of Quality Factor ≥ 10"); Davis & Carr, *Newnes
/// Radio and RF Engineer's Pocket Book* (3rd ed., 2002), §5.1:
/// R_d = L/(CR). Invalid inputs are not checked.
pub fn parallel_resistance_high_q_ohm(
    inductance_h: f64,
    capacitance_f: f64,
    series_resistance_ohm: f64,
) -> f64 {
    inductance_h / (capacitance_f * series_resistance_ohm)
}

/// Exact inverse of [`parallel_resistance_exact_ohm`]: the series coil loss
/// Rs whose equivalent parallel resistance at f0 is `parallel_resistance_ohm`,
/// in Ω.
///
/// Solves Rs² − Rp·Rs + L/C = 0 and returns the low-loss root
/// Rs = (Rp − √(Rp² − 4L/C))/2, the one with Q = ω0·L/Rs ≥ 1 (evaluated as
/// 2(L/C)/(Rp + √(Rp² − 4L/C)) to avoid cancellation). The other root is
/// (L/C)/Rs. Standard relation.
///
/// Returns `None` for invalid inputs (any argument not finite and above
/// zero) and when Rp < 2·√(L/C), which no real Rs can produce.
pub fn series_resistance_exact_ohm(
    inductance_h: f64,
    capacitance_f: f64,
    parallel_resistance_ohm: f64,
) -> Option<f64> {
    if !is_positive_finite(inductance_h)
        || !is_positive_finite(capacitance_f)
        || !is_positive_finite(parallel_resistance_ohm)
    {
        return None;
    }
    let z0_squared = inductance_h / capacitance_f;
    let two_z0 = 2.0 * libm::sqrt(z0_squared);
    let excess = parallel_resistance_ohm - two_z0;
    if excess < 0.0 {
        return None;
    }
    // √(Rp² − 4L/C) as a product of square roots: no overflow for large Rp.
    let root = libm::sqrt(excess) * libm::sqrt(parallel_resistance_ohm + two_z0);
    let rs = 2.0 * z0_squared / (parallel_resistance_ohm + root);
    if is_positive_finite(rs) {
        Some(rs)
    } else {
        None
    }
}

/// High-Q inverse of [`parallel_resistance_high_q_ohm`]:
/// Rs ≈ L/(C·Rp), in Ω.
///
/// Same sources as [`parallel_resistance_high_q_ohm`]. Invalid inputs are
/// not checked.
pub fn series_resistance_high_q_ohm(
    inductance_h: f64,
    capacitance_f: f64,
    parallel_resistance_ohm: f64,
) -> f64 {
    inductance_h / (capacitance_f * parallel_resistance_ohm)
}

// ---------------------------------------------------------------------------
// Tank zero-phase frequency
// ---------------------------------------------------------------------------

/// Zero-phase (unity power factor) angular frequency of a tank, a coil L
/// with series loss Rs in parallel with C: ωr = √(1/(LC) − Rs²/L²), in rad/s.
///
/// This is fr in the module table, ω0·√(1 − 1/Q²), below both the undamped
/// f0 and the damped fd. It is neither the |Z| maximum nor the ring-down
/// frequency. Standard relation.
///
/// Returns `None` when Rs ≥ √(L/C) (Q ≤ 1: the impedance is real only at
/// DC) and for invalid inputs (L or C not finite and above zero, Rs not
/// finite and at or above zero; or ω0 overflowing to ∞). Rs = 0 gives ω0.
pub fn tank_zero_phase_angular_frequency_rad_per_s(
    inductance_h: f64,
    capacitance_f: f64,
    series_resistance_ohm: f64,
) -> Option<f64> {
    if !is_positive_finite(inductance_h)
        || !is_positive_finite(capacitance_f)
        || !is_non_negative_finite(series_resistance_ohm)
    {
        return None;
    }
    let omega0 = angular_resonant_frequency_rad_per_s(inductance_h, capacitance_f);
    positive_sqrt_of_difference_of_squares(omega0, series_resistance_ohm / inductance_h)
}

/// Zero-phase frequency of a tank (lossy coil ∥ C),
/// fr = √(1/(LC) − Rs²/L²)/(2π) = f0·√(1 − 1/Q²), in Hz.
///
/// See [`tank_zero_phase_angular_frequency_rad_per_s`] for the validity
/// rules; `None` when Q ≤ 1 or for invalid inputs.
pub fn tank_zero_phase_frequency_hz(
    inductance_h: f64,
    capacitance_f: f64,
    series_resistance_ohm: f64,
) -> Option<f64> {
    tank_zero_phase_angular_frequency_rad_per_s(inductance_h, capacitance_f, series_resistance_ohm)
        .map(|omega_r| omega_r / TWO_PI)
}

/// Impedance of a tank (lossy coil ∥ C) at its zero-phase frequency fr:
/// Z(fr) = L/(Rs·C), in Ω, real and exact (no high-Q approximation).
///
/// At fr the admittance is jωC + 1/(Rs + jωL) with Rs² + ωr²L² = L/C, which
/// leaves Y = Rs·C/L. Numerically equal to
/// [`parallel_resistance_high_q_ohm`]. Standard relation. Invalid inputs
/// are not checked (Rs = 0 gives +∞).
pub fn tank_impedance_at_zero_phase_ohm(
    inductance_h: f64,
    capacitance_f: f64,
    series_resistance_ohm: f64,
) -> f64 {
    inductance_h / (series_resistance_ohm * capacitance_f)
}

// ---------------------------------------------------------------------------
// Energy
// ---------------------------------------------------------------------------

/// Energy stored in an L–C pair, U = q²/(2C) + L·i²/2, in J, for capacitor
/// charge `charge_c` (coulomb) and coil current `current_a` (ampere).
///
/// Without loss U is constant along the oscillation. Standard relation.
/// Invalid inputs are not checked.
pub fn stored_energy_j(
    inductance_h: f64,
    capacitance_f: f64,
    charge_c: f64,
    current_a: f64,
) -> f64 {
    charge_c * charge_c / (2.0 * capacitance_f) + 0.5 * inductance_h * current_a * current_a
}

/// Energy held in a capacitor charged to `peak_voltage_v`, U = ½·C·V², in J.
///
/// For a lossless tank this is the total energy when V is the peak
/// capacitor voltage (the current is then zero). Standard relation.
/// Invalid inputs are not checked.
pub fn peak_energy_j(capacitance_f: f64, peak_voltage_v: f64) -> f64 {
    0.5 * capacitance_f * peak_voltage_v * peak_voltage_v
}

// ---------------------------------------------------------------------------
// Small-signal law
// ---------------------------------------------------------------------------

/// Small-signal relative change of L (with C fixed), of C (with L fixed) or
/// of the product L·C, from a relative change of the undamped f0:
/// ΔL/L ≈ −2·Δf/f, dimensionless.
///
/// First-order form of [`relative_lc_change_exact`]; the error is
/// 3·(Δf/f)² + O((Δf/f)³). Follows from f0 ∝ (LC)^(−½). Valid for any
/// finite input; NaN in gives NaN out.
pub fn relative_lc_change_small_signal(relative_frequency_change: f64) -> f64 {
    -2.0 * relative_frequency_change
}

/// Exact relative change of L (with C fixed), of C (with L fixed) or of the
/// product L·C, from a relative change x = Δf/f of the undamped f0:
/// (1 + x)^(−2) − 1, dimensionless.
///
/// Evaluated as −x·(2 + x)/(1 + x)², which keeps full precision for small x.
/// x = −1 (frequency zero) gives +∞; x < −1 has no physical meaning and is
/// not checked.
pub fn relative_lc_change_exact(relative_frequency_change: f64) -> f64 {
    let x = relative_frequency_change;
    let one_plus_x = 1.0 + x;
    -x * (2.0 + x) / (one_plus_x * one_plus_x)
}

/// Exact relative change of L, C or L·C between a rest frequency f_rest and
/// a frequency f (both undamped f0, in Hz): (f_rest/f)² − 1, dimensionless.
///
/// This is the readout's shift s = Δ(LC)/(LC)_rest. Evaluated as
/// (f_rest − f)(f_rest + f)/f². Invalid inputs are not checked (f = 0
/// gives ±∞ or NaN).
pub fn relative_lc_change_from_frequencies(frequency_hz: f64, rest_frequency_hz: f64) -> f64 {
    (rest_frequency_hz - frequency_hz) * (rest_frequency_hz + frequency_hz)
        / (frequency_hz * frequency_hz)
}

/// Exact relative change of the undamped f0 from a relative change s of
/// L, C or L·C: Δf/f = (1 + s)^(−½) − 1, dimensionless.
///
/// Inverse of [`relative_lc_change_exact`]. Evaluated as
/// −s/(√(1 + s)·(1 + √(1 + s))) to keep precision for small s. s = −1
/// gives +∞ and s < −1 gives NaN; neither is checked.
pub fn relative_frequency_change_exact(relative_lc_change: f64) -> f64 {
    let root = libm::sqrt(1.0 + relative_lc_change);
    -relative_lc_change / (root * (1.0 + root))
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use proptest::prelude::*;

    /// |actual − expected| ≤ rel_tol·|expected|.
    pub(crate) fn assert_rel(actual: f64, expected: f64, rel_tol: f64, what: &str) {
        let err = (actual - expected).abs();
        assert!(
            err <= rel_tol * expected.abs(),
            "{what}: got {actual}, expected {expected}, rel err {} > {rel_tol}",
            err / expected.abs()
        );
    }

    /// Compare against a value as printed in docs/references.md: allow the
    /// stated relative tolerance plus half a step of the last printed digit,
    /// since the printed value is itself rounded.
    fn assert_printed(actual: f64, printed: f64, rel_tol: f64, half_step: f64, what: &str) {
        let err = (actual - printed).abs();
        assert!(
            err <= rel_tol * printed.abs() + half_step,
            "{what}: got {actual}, printed {printed}, err {err}"
        );
    }

    // ---- Published checks, docs/references.md, LC tank cases ----

    #[test]
    fn case_1a_undamped_f0_10mh_1uf() {
        // docs/references.md, LC tank cases, 1a: f0 = 1591.549 Hz, the
        // classic textbook value (computed, not read in a source). Checked by
        // two laws that share nothing with the code's 1/(2π√(LC)): √(LC) =
        // 10⁻⁴ s exactly, so f0 = 10⁴/(2π) Hz; and at f0 the reactances
        // cancel, 2πf0·L = 1/(2πf0·C), the definition of series resonance.
        let (l_h, c_f) = (10e-3, 1e-6);
        let f0 = resonant_frequency_hz(l_h, c_f);
        assert_printed(f0, 1591.549, 0.0, 0.0005, "f0");
        assert_rel(f0, 1e4 / (2.0 * PI), 2e-15, "f0 = 10⁴/(2π)");
        let x_l = 2.0 * PI * f0 * l_h;
        let x_c = 1.0 / (2.0 * PI * f0 * c_f);
        assert_rel(x_l, x_c, 2e-15, "X_L = X_C at f0");
    }

    #[test]
    fn case_1b_undamped_f0_1mh_1uf() {
        // docs/references.md, LC tank cases, 1b: f0 = 5032.921 Hz, 1e-6 rel.,
        // computed. Checks the undamped f0.
        assert_rel(resonant_frequency_hz(1e-3, 1e-6), 5032.921, 1e-6, "f0");
    }

    #[test]
    fn case_1c_series_rlc_600mh_80pf_540ohm() {
        // docs/references.md, LC tank cases, 1c: textbook worked example as
        // reproduced on holooly.com (p=1494326) (published, quoted): f0 = 22.97
        // kHz, Q = 160.38, f1 = 22.90 kHz, f2 = 23.04 kHz; 0.05 % against these
        // published 4-digit values. BW = 143.24 Hz is computed (the page's
        // printed BW is garbled). f0 here is the undamped f0; f1, f2 are the
        // exact half-power frequencies of the driven series circuit.
        let (l_h, c_f, r_ohm) = (0.6, 80e-12, 540.0);
        let tol = 5e-4;
        let f0 = resonant_frequency_hz(l_h, c_f);
        assert_rel(f0, 22.97e3, tol, "f0");
        let q = series_quality_factor(l_h, c_f, r_ohm);
        assert_rel(q, 160.38, tol, "Q");
        let bw = series_bandwidth_hz(l_h, r_ohm);
        assert_rel(bw, 143.24, tol, "BW");
        assert_rel(bw, f0 / q, 1e-12, "BW = f0/Q");
        let hp = series_half_power_frequencies_hz(l_h, c_f, r_ohm);
        assert_rel(hp.lower_hz, 22.90e3, tol, "f1");
        assert_rel(hp.upper_hz, 23.04e3, tol, "f2");
        // The computed 7-digit values of the same case.
        assert_printed(hp.lower_hz, 22_900.53, 1e-9, 0.005, "f1");
        assert_printed(hp.upper_hz, 23_043.77, 1e-9, 0.005, "f2");
        assert_rel(hp.upper_hz - hp.lower_hz, bw, 1e-9, "f2 - f1 = BW");
    }

    #[test]
    fn case_1d_series_free_response_trench() {
        // docs/references.md, LC tank cases, 1d: R = 40 Ω, L = 0.2 H, C = 1e-4
        // F. The free response q(t) = e^(−100t)(cos 200t + 0.51 sin 200t) for
        // q(0) = 1 C, i(0) = 2 A is published, quoted (LibreTexts copy of
        // Trench, Elementary Differential Equations, 2013, §6.3); the R, L, C
        // values are from memory (Example 6.3.1) but consistent. Tolerance
        // 1e-9. Checks α, the undamped ω0, the damped ωd = 200 rad/s (fd), τ
        // and Q.
        let (l_h, c_f, r_ohm) = (0.2, 1e-4, 40.0);
        let alpha = series_neper_frequency_per_s(l_h, r_ohm);
        assert_rel(alpha, 100.0, 1e-9, "alpha");
        let omega0 = angular_resonant_frequency_rad_per_s(l_h, c_f);
        assert_rel(omega0, libm::sqrt(5e4), 1e-9, "omega0");
        assert_printed(omega0, 223.607, 1e-9, 5e-4, "omega0 printed");
        let omega_d = series_damped_angular_frequency_rad_per_s(l_h, c_f, r_ohm).unwrap();
        assert_rel(omega_d, 200.0, 1e-9, "omega_d");
        let fd = series_damped_frequency_hz(l_h, c_f, r_ohm).unwrap();
        assert_rel(fd, 100.0 / PI, 1e-9, "fd");
        assert_printed(fd, 31.831, 1e-9, 5e-4, "fd printed");
        assert_rel(series_decay_time_constant_s(l_h, r_ohm), 10e-3, 1e-9, "tau");
        let q = series_quality_factor(l_h, c_f, r_ohm);
        assert_rel(q, libm::sqrt(5.0) / 2.0, 1e-9, "Q");
        assert_printed(q, 1.1180, 1e-9, 5e-5, "Q printed");
        // Trench's sin coefficient follows from q(0) = 1, i(0) = 2:
        // (i0 + α·q0)/ωd = 0.51.
        assert_rel(
            (2.0 + alpha * 1.0) / omega_d,
            0.51,
            1e-12,
            "sin coefficient",
        );
    }

    #[test]
    fn case_1e_tank_10uh_1nf_1ohm() {
        // docs/references.md, LC tank cases, 1e: computed, 1e-9. The printed
        // values are rounded to 0.01 Hz / 0.01 cycle, so half a step of the
        // last digit is allowed on top (fd's printed rounding alone is 2.3e-9
        // rel). Checks all three: undamped f0, damped fd, tank zero-phase fr.
        let (l_h, c_f, rs_ohm) = (10e-6, 1e-9, 1.0);
        let f0 = resonant_frequency_hz(l_h, c_f);
        assert_printed(f0, 1_591_549.43, 1e-9, 0.005, "f0");
        let q = series_quality_factor(l_h, c_f, rs_ohm);
        assert_rel(q, 100.0, 1e-9, "Q");
        let tau = series_decay_time_constant_s(l_h, rs_ohm);
        assert_rel(tau, 20e-6, 1e-9, "tau");
        let fd = series_damped_frequency_hz(l_h, c_f, rs_ohm).unwrap();
        assert_printed(fd, 1_591_529.54, 1e-9, 0.005, "fd");
        assert_printed(f0 - fd, 19.89, 0.0, 0.005, "f0 - fd");
        assert_rel(
            parallel_resistance_high_q_ohm(l_h, c_f, rs_ohm),
            10_000.0,
            1e-9,
            "Rp approx",
        );
        assert_rel(
            parallel_resistance_exact_ohm(l_h, c_f, rs_ohm),
            10_001.0,
            1e-9,
            "Rp exact",
        );
        let fr = tank_zero_phase_frequency_hz(l_h, c_f, rs_ohm).unwrap();
        assert_printed(fr, 1_591_469.85, 1e-9, 0.005, "fr");
        assert_rel(
            tank_impedance_at_zero_phase_ohm(l_h, c_f, rs_ohm),
            10_000.0,
            1e-9,
            "|Z(fr)|",
        );
        // Amplitude falls to 1/e in f0·τ = Q/π = 31.83 cycles of f0.
        assert_printed(f0 * tau, 31.83, 1e-9, 0.005, "cycles to 1/e");
        assert_rel(PI * f0 * tau, q, 1e-9, "Q = π f0 τ");
    }

    #[test]
    fn case_1f_tank_low_q_approximation_error() {
        // docs/references.md, LC tank cases, 1f: same L, C with Rs = 20 Ω (Q =
        // 5), computed, 1e-9. Tests the high-Q approximation error at low Q.
        // Checks the damped fd and the tank zero-phase fr.
        let (l_h, c_f, rs_ohm) = (10e-6, 1e-9, 20.0);
        let q = series_quality_factor(l_h, c_f, rs_ohm);
        assert_rel(q, 5.0, 1e-9, "Q");
        let rp_approx = parallel_resistance_high_q_ohm(l_h, c_f, rs_ohm);
        let rp_exact = parallel_resistance_exact_ohm(l_h, c_f, rs_ohm);
        assert_rel(rp_approx, 500.0, 1e-9, "Rp approx");
        assert_rel(rp_exact, 520.0, 1e-9, "Rp exact");
        assert_rel(rs_ohm * (1.0 + q * q), rp_exact, 1e-9, "Rs(1 + Q²)");
        // The approximation is low by exactly 1/(1 + Q²).
        assert_rel(
            (rp_exact - rp_approx) / rp_exact,
            1.0 / 26.0,
            1e-9,
            "approx error",
        );
        let fd = series_damped_frequency_hz(l_h, c_f, rs_ohm).unwrap();
        assert_printed(fd, 1_583_571.69, 1e-9, 0.005, "fd");
        let fr = tank_zero_phase_frequency_hz(l_h, c_f, rs_ohm).unwrap();
        assert_printed(fr, 1_559_393.60, 1e-9, 0.005, "fr");
    }

    #[test]
    fn case_1g_parallel_rlc_matches_series_equivalent() {
        // docs/references.md, LC tank cases, 1g: parallel Rp = 10 kΩ, L = 10
        // µH, C = 1 nF: Q = 100, τ = 2RpC = 20 µs, the same as case 1e.
        // Computed, 1e-12. Q is defined at the undamped f0.
        let (l_h, c_f, rp_ohm) = (10e-6, 1e-9, 10_000.0);
        assert_rel(parallel_quality_factor(l_h, c_f, rp_ohm), 100.0, 1e-12, "Q");
        let tau = parallel_decay_time_constant_s(c_f, rp_ohm);
        assert_rel(tau, 20e-6, 1e-12, "tau");
        assert_rel(
            tau,
            series_decay_time_constant_s(l_h, 1.0),
            1e-12,
            "tau vs 1e",
        );
        assert_rel(
            parallel_neper_frequency_per_s(c_f, rp_ohm),
            1.0 / tau,
            1e-12,
            "alpha",
        );
    }

    #[test]
    fn c0g_limit_frequency_change() {
        // docs/references.md, LC tank cases, 6 (computed): C0G at +0.18 % gives
        // df/f = −0.0899 % (exact 1/√1.0018 − 1 = −8.988e-4). Undamped f0.
        let df = relative_frequency_change_exact(0.0018);
        assert_printed(df, -8.988e-4, 0.0, 5e-8, "df/f");
        assert_rel(df, 1.0 / libm::sqrt(1.0018) - 1.0, 1e-12, "df/f exact");
    }

    // ---- Invalid inputs ----------------------------------------------------

    #[test]
    fn option_functions_reject_invalid_inputs() {
        let bad = [0.0, -1.0, f64::NAN, f64::INFINITY, f64::NEG_INFINITY];
        for &x in &bad {
            assert_eq!(
                series_damped_angular_frequency_rad_per_s(x, 1e-9, 1.0),
                None
            );
            assert_eq!(series_damped_frequency_hz(10e-6, x, 1.0), None);
            assert_eq!(
                tank_zero_phase_angular_frequency_rad_per_s(x, 1e-9, 1.0),
                None
            );
            assert_eq!(tank_zero_phase_frequency_hz(10e-6, x, 1.0), None);
            assert_eq!(series_resistance_exact_ohm(x, 1e-9, 1e4), None);
            assert_eq!(series_resistance_exact_ohm(10e-6, x, 1e4), None);
            assert_eq!(series_resistance_exact_ohm(10e-6, 1e-9, x), None);
        }
        // Resistance: zero is valid (lossless), negative / NaN / inf is not.
        for &r in &[-1.0, f64::NAN, f64::INFINITY] {
            assert_eq!(series_damped_frequency_hz(10e-6, 1e-9, r), None);
            assert_eq!(tank_zero_phase_frequency_hz(10e-6, 1e-9, r), None);
        }
        let f0 = resonant_frequency_hz(10e-6, 1e-9);
        assert_rel(
            series_damped_frequency_hz(10e-6, 1e-9, 0.0).unwrap(),
            f0,
            1e-15,
            "fd(R=0)",
        );
        assert_rel(
            tank_zero_phase_frequency_hz(10e-6, 1e-9, 0.0).unwrap(),
            f0,
            1e-15,
            "fr(R=0)",
        );
    }

    #[test]
    fn no_oscillation_gives_none() {
        // L = 1 H, C = 1 F: ω0 = 1 rad/s, √(L/C) = 1 Ω.
        // Critically damped: R = 2√(L/C) = 2 Ω, α = ω0.
        assert_eq!(series_damped_frequency_hz(1.0, 1.0, 2.0), None);
        // Overdamped.
        assert_eq!(series_damped_frequency_hz(1.0, 1.0, 3.0), None);
        assert!(series_damped_frequency_hz(1.0, 1.0, 1.999).is_some());
        // Tank zero-phase needs Rs < √(L/C) (Q > 1).
        assert_eq!(tank_zero_phase_frequency_hz(1.0, 1.0, 1.0), None);
        assert_eq!(tank_zero_phase_frequency_hz(1.0, 1.0, 1.5), None);
        assert!(tank_zero_phase_frequency_hz(1.0, 1.0, 0.999).is_some());
        // Rp below 2√(L/C) has no series equivalent; Rp = 2√(L/C) is Q = 1.
        assert_eq!(series_resistance_exact_ohm(1.0, 1.0, 1.999), None);
        assert_rel(
            series_resistance_exact_ohm(1.0, 1.0, 2.0).unwrap(),
            1.0,
            1e-15,
            "Q=1",
        );
    }

    #[test]
    fn plain_functions_follow_ieee_without_panicking() {
        assert_eq!(resonant_frequency_hz(0.0, 1e-9), f64::INFINITY);
        assert!(resonant_frequency_hz(-1e-6, 1e-9).is_nan());
        assert!(resonant_frequency_hz(f64::NAN, 1e-9).is_nan());
        assert_eq!(inductance_for_frequency_h(0.0, 1e-9), f64::INFINITY);
        assert_eq!(capacitance_for_frequency_f(1e6, 0.0), f64::INFINITY);
        assert_eq!(series_quality_factor(1e-6, 1e-9, 0.0), f64::INFINITY);
        assert_eq!(
            parallel_resistance_high_q_ohm(1e-6, 1e-9, 0.0),
            f64::INFINITY
        );
        let hp = series_half_power_frequencies_hz(f64::NAN, 1e-9, 1.0);
        assert!(hp.lower_hz.is_nan() && hp.upper_hz.is_nan());
        assert_eq!(relative_frequency_change_exact(-1.0), f64::INFINITY);
        assert!(relative_frequency_change_exact(-2.0).is_nan());
    }

    // ---- Properties --------------------------------------------------------

    /// Log-uniform value between 10^lo and 10^hi.
    fn log_uniform(lo: f64, hi: f64) -> impl Strategy<Value = f64> {
        (lo..hi).prop_map(|e| 10f64.powf(e))
    }

    fn inductance() -> impl Strategy<Value = f64> {
        log_uniform(-7.0, -2.0) // 100 nH .. 10 mH
    }

    fn capacitance() -> impl Strategy<Value = f64> {
        log_uniform(-12.0, -5.0) // 1 pF .. 10 µF
    }

    fn resistance() -> impl Strategy<Value = f64> {
        log_uniform(-6.0, 7.0) // 1 µΩ .. 10 MΩ
    }

    proptest! {
        #[test]
        fn inductance_round_trip(l_h in inductance(), c_f in capacitance()) {
            let f0 = resonant_frequency_hz(l_h, c_f);
            let l_back = inductance_for_frequency_h(f0, c_f);
            prop_assert!(((l_back - l_h) / l_h).abs() <= 1e-12, "{l_h} -> {l_back}");
        }

        #[test]
        fn capacitance_round_trip(l_h in inductance(), c_f in capacitance()) {
            let f0 = resonant_frequency_hz(l_h, c_f);
            let c_back = capacitance_for_frequency_f(f0, l_h);
            prop_assert!(((c_back - c_f) / c_f).abs() <= 1e-12, "{c_f} -> {c_back}");
        }

        #[test]
        fn parasitic_capacitance_adds_and_lowers_f0(
            l_h in inductance(),
            c_f in capacitance(),
            fraction in 1e-6f64..1.0,
        ) {
            let cp_f = c_f * fraction;
            let f = resonant_frequency_with_parasitic_hz(l_h, c_f, cp_f);
            prop_assert_eq!(f, resonant_frequency_hz(l_h, c_f + cp_f));
            prop_assert!(f < resonant_frequency_hz(l_h, c_f));
            prop_assert_eq!(resonant_frequency_with_parasitic_hz(l_h, c_f, 0.0),
                resonant_frequency_hz(l_h, c_f));
        }

        #[test]
        fn series_parallel_round_trip_exact(
            l_h in inductance(),
            c_f in capacitance(),
            q in log_uniform(0.18, 6.0), // Q from 1.5 to 1e6
        ) {
            let rs = libm::sqrt(l_h / c_f) / q;
            let rp = parallel_resistance_exact_ohm(l_h, c_f, rs);
            prop_assert!(((rp - rs * (1.0 + q * q)) / rp).abs() <= 1e-12);
            let rs_back = series_resistance_exact_ohm(l_h, c_f, rp).unwrap();
            prop_assert!(((rs_back - rs) / rs).abs() <= 1e-12, "{rs} -> {rp} -> {rs_back}");
        }

        #[test]
        fn series_parallel_low_q_returns_other_root(
            l_h in inductance(),
            c_f in capacitance(),
            q in 0.01f64..0.67,
        ) {
            let z0_sq = l_h / c_f;
            let rs = libm::sqrt(z0_sq) / q;
            let rp = parallel_resistance_exact_ohm(l_h, c_f, rs);
            let rs_back = series_resistance_exact_ohm(l_h, c_f, rp).unwrap();
            let other = z0_sq / rs;
            prop_assert!(((rs_back - other) / other).abs() <= 1e-12);
        }

        #[test]
        fn series_parallel_round_trip_high_q(
            l_h in inductance(),
            c_f in capacitance(),
            rs in resistance(),
        ) {
            let rp = parallel_resistance_high_q_ohm(l_h, c_f, rs);
            let rs_back = series_resistance_high_q_ohm(l_h, c_f, rp);
            prop_assert!(((rs_back - rs) / rs).abs() <= 1e-12);
            // Rp(high Q) is exactly the tank's impedance at fr.
            prop_assert_eq!(rp, tank_impedance_at_zero_phase_ohm(l_h, c_f, rs));
        }

        #[test]
        fn quality_factor_relations(
            l_h in inductance(),
            c_f in capacitance(),
            rs in resistance(),
        ) {
            let q = series_quality_factor(l_h, c_f, rs);
            let omega0 = angular_resonant_frequency_rad_per_s(l_h, c_f);
            let f0 = resonant_frequency_hz(l_h, c_f);
            let tau = series_decay_time_constant_s(l_h, rs);
            let close = |a: f64, b: f64| ((a - b) / b).abs() <= 1e-12;
            prop_assert!(close(omega0 * l_h / rs, q), "ω0L/R");
            prop_assert!(close(omega0 * tau / 2.0, q), "ω0τ/2");
            prop_assert!(close(PI * f0 * tau, q), "π f0 τ");
            prop_assert!(close(1.0 / series_neper_frequency_per_s(l_h, rs), tau), "τ = 1/α");
            prop_assert!(close(series_bandwidth_hz(l_h, rs), f0 / q), "BW = f0/Q");
            // Parallel view of the same tank.
            let rp_hq = parallel_resistance_high_q_ohm(l_h, c_f, rs);
            prop_assert!(close(parallel_quality_factor(l_h, c_f, rp_hq), q), "Qp(high Q)");
            prop_assert!(close(parallel_decay_time_constant_s(c_f, rp_hq), tau), "τp");
            let rp = parallel_resistance_exact_ohm(l_h, c_f, rs);
            prop_assert!(close(parallel_quality_factor(l_h, c_f, rp), q + 1.0 / q), "Qp exact");
        }

        #[test]
        fn damped_frequency_below_f0_and_tends_to_it(
            l_h in inductance(),
            c_f in capacitance(),
            rs in resistance(),
        ) {
            let q = series_quality_factor(l_h, c_f, rs);
            prop_assume!((q - 0.5).abs() > 1e-9 * q);
            let omega0 = angular_resonant_frequency_rad_per_s(l_h, c_f);
            let alpha = series_neper_frequency_per_s(l_h, rs);
            let omega_d = series_damped_angular_frequency_rad_per_s(l_h, c_f, rs);
            prop_assert_eq!(omega_d.is_some(), q > 0.5);
            if let Some(wd) = omega_d {
                prop_assert!(wd <= omega0);
                // ωd² + α² = ω0².
                prop_assert!(((wd * wd + alpha * alpha) / (omega0 * omega0) - 1.0).abs() <= 1e-12);
            }
            if q >= 1.0 {
                let f0 = resonant_frequency_hz(l_h, c_f);
                let fd = series_damped_frequency_hz(l_h, c_f, rs).unwrap();
                // (f0 − fd)/f0 = 1 − √(1 − x), x = 1/(4Q²), lies in [x/2, x/1.866].
                let x = 1.0 / (4.0 * q * q);
                let d = (f0 - fd) / f0;
                prop_assert!(d >= x / 2.0 - 1e-15 && d <= x / 1.866 + 1e-15, "d={d} x={x}");
                if x > 1e-13 {
                    prop_assert!(fd < f0);
                }
                // Shrinking R by 10 moves fd 100 times closer to f0 (up to rounding).
                let fd_small = series_damped_frequency_hz(l_h, c_f, rs / 10.0).unwrap();
                prop_assert!((f0 - fd_small) <= (f0 - fd) / 90.0 + 4e-16 * f0);
            }
            // R → 0: fd → f0.
            let fd0 = series_damped_frequency_hz(l_h, c_f, 0.0).unwrap();
            let f0 = resonant_frequency_hz(l_h, c_f);
            prop_assert!(((fd0 - f0) / f0).abs() <= 1e-15);
        }

        #[test]
        fn tank_zero_phase_is_resistive(
            l_h in inductance(),
            c_f in capacitance(),
            q in log_uniform(0.01, 6.0), // Q from 1.02 to 1e6
        ) {
            let rs = libm::sqrt(l_h / c_f) / q;
            let wr = tank_zero_phase_angular_frequency_rad_per_s(l_h, c_f, rs).unwrap();
            let w0 = angular_resonant_frequency_rad_per_s(l_h, c_f);
            let wd = series_damped_angular_frequency_rad_per_s(l_h, c_f, rs).unwrap();
            prop_assert!(wr < wd && wd <= w0);
            // Admittance Y = jωC + (Rs − jωL)/(Rs² + ω²L²) at ωr.
            let den = rs * rs + wr * wr * l_h * l_h;
            let y_re = rs / den;
            let y_im = wr * c_f - wr * l_h / den;
            prop_assert!(y_im.abs() <= 1e-9 * wr * c_f, "Im Y = {y_im}");
            let z = tank_impedance_at_zero_phase_ohm(l_h, c_f, rs);
            prop_assert!(((1.0 / y_re - z) / z).abs() <= 1e-9);
        }

        #[test]
        fn half_power_frequencies_bracket_f0(
            l_h in inductance(),
            c_f in capacitance(),
            rs in resistance(),
        ) {
            let hp = series_half_power_frequencies_hz(l_h, c_f, rs);
            let f0 = resonant_frequency_hz(l_h, c_f);
            let bw = series_bandwidth_hz(l_h, rs);
            prop_assert!(hp.lower_hz < f0 && f0 < hp.upper_hz);
            prop_assert!(((hp.lower_hz * hp.upper_hz) / (f0 * f0) - 1.0).abs() <= 1e-12);
            let tol = 1e-12 + 1e-15 * hp.upper_hz / bw;
            prop_assert!(((hp.upper_hz - hp.lower_hz) / bw - 1.0).abs() <= tol);
        }

        #[test]
        fn energy_constant_on_undamped_orbit(
            l_h in inductance(),
            c_f in capacitance(),
            q0_c in log_uniform(-15.0, -3.0),
            phase in 0.0f64..core::f64::consts::TAU,
        ) {
            // q(t) = q0 cos θ, i(t) = dq/dt = −q0 ω0 sin θ.
            let w0 = angular_resonant_frequency_rad_per_s(l_h, c_f);
            let q = q0_c * libm::cos(phase);
            let i = -q0_c * w0 * libm::sin(phase);
            let u = stored_energy_j(l_h, c_f, q, i);
            let u0 = q0_c * q0_c / (2.0 * c_f);
            prop_assert!(((u - u0) / u0).abs() <= 1e-12, "U {u} vs {u0}");
            prop_assert!(((peak_energy_j(c_f, q0_c / c_f) - u0) / u0).abs() <= 1e-12);
        }

        #[test]
        fn small_signal_law(x in -0.01f64..0.01) {
            let exact = relative_lc_change_exact(x);
            let approx = relative_lc_change_small_signal(x);
            prop_assert!((exact - approx).abs() <= 3.1 * x * x);
            // Exact form against its definition.
            let direct = 1.0 / ((1.0 + x) * (1.0 + x)) - 1.0;
            prop_assert!((exact - direct).abs() <= 1e-15);
        }

        #[test]
        fn exact_lc_change_round_trips(
            l_h in inductance(),
            c_f in capacitance(),
            s in -0.5f64..1.0,
        ) {
            // Change L by s; the frequencies give s back.
            let f_rest = resonant_frequency_hz(l_h, c_f);
            let f = resonant_frequency_hz(l_h * (1.0 + s), c_f);
            let s_back = relative_lc_change_from_frequencies(f, f_rest);
            prop_assert!((s_back - s).abs() <= 1e-14 + 1e-12 * s.abs());
            // Frequency change and LC change are exact inverses.
            let df = relative_frequency_change_exact(s);
            prop_assert!((relative_lc_change_exact(df) - s).abs() <= 1e-15 + 1e-12 * s.abs());
            prop_assert!((df - (f / f_rest - 1.0)).abs() <= 1e-14 + 1e-12 * df.abs());
        }
    }
}
