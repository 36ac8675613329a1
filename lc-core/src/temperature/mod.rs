//! Temperature input for drift compensation: an NTC thermistor on a
//! resistive divider, read by a ratiometric ADC, converted to
//! [`CentiCelsius`] in fixed point.
//!
//! The chain for one reading (code c of an n-bit ADC, N = 2^n):
//!
//! 1. [`Divider`]: c becomes the resistance ratio R/R_s = c/(N − c) (NTC on
//!    the low side) or (N − c)/c (high side). Code 0 and full scale N − 1
//!    are [`TemperatureError::SensorShorted`] / [`TemperatureError::SensorOpen`].
//! 2. [`ln_q37`]: ln c and ln(N − c) as integer logarithms (leading zeros,
//!    a 64-entry table and a degree-4 series; no division), so
//!    L = ln(R/R_s) + a precomputed offset needs no division either.
//! 3. The law, with constants precomputed at construction:
//!    - [`NtcBeta`]: 1/T = 1/T25 + ln(R/R25)/B;
//!    - [`NtcSteinhartHart`]: 1/T = A + B·ln R + C·(ln R)³ (Steinhart &
//!      Hart, *Deep-Sea Research* 15(4):497–503, 1968).
//! 4. T = 1/(1/T), straight into centi-kelvin, without a division: a
//!    reciprocal seeded from a 65-entry table and refined by one Newton
//!    step, within a relative 2^-28 (the same reciprocal as the level
//!    reader's ratio); then rounded to 0.01 °C.
//!
//! [`Beta`], [`SteinhartHart`] and [`steinhart_hart_fit`] are the same laws
//! in `f64`, forward (R from T, for the host simulator) and inverse (the
//! twins of the converters), plus the calibration fits.
//!
//! ## Formats, domain, rounding and bound
//!
//! - Output: [`CentiCelsius`], `i32` hundredths of a degree Celsius, rounded
//!   to nearest; readings outside [`MIN_READING`] ..= [`MAX_READING`]
//!   (−100 °C ..= +300 °C) are [`TemperatureError::OutOfRange`], as is
//!   |L| ≥ 32 (Beta: |ln(R/R25)|; Steinhart–Hart: |ln R|).
//! - Intermediate formats: logarithms Q.37; L as a rounded Q5.27 magnitude;
//!   1/T and its terms Q.60 (`i64`); the factor t multiplying L (1/B, or
//!   B + C·L² with L² as a rounded 32-bit mantissa) as a rounded 32-bit
//!   mantissa; 1/T as a rounded 32-bit mantissa before the reciprocal; the
//!   quotient in centi-kelvin with 16 fractional bits (within a relative
//!   2^-28, then rounded to nearest);
//!   then the reading, rounded to nearest (ties upward).
//! - Declared domain: −55 °C ..= +155 °C; ADC 10 ..= 16 bits; R25 100 Ω ..=
//!   1 MΩ; B 2000 ..= 6000 K (Steinhart–Hart: B from 1/6000 to 1/2000 K⁻¹,
//!   C from −2·10⁻⁸ to 5·10⁻⁷ K⁻¹); series resistor R25/30 ..= 30·R25;
//!   codes 1 ..= N − 2.
//! - Bound against the `f64` twin (`convert_f64`), before the final
//!   rounding, for any accepted configuration:
//!
//!   |ΔT| ≤ T²·(U′·ε_L + (|1/T − A| + 2·|C·L³|)·2^-32) + T·(2^-32 + 2^-28) + 7.6·10⁻⁸ K
//!
//!   with U′ = d(1/T)/dL = B + 3·C·L² (1/B for Beta), A = 1/T25 for Beta,
//!   and ε_L = 23·2^-32 ≈ 5.4·10⁻⁹ the error of L (6.6·2^-32 from the four
//!   logarithms, 16·2^-32 from rounding L to Q5.27). T·2^-32 is the
//!   rounding of 1/T to a 32-bit mantissa, T·2^-28 the reciprocal's
//!   (interpolated in a table, not corrected to the exact quotient).
//!   Inside the declared domain this is at most **2.83·10⁻⁶ K** (Beta:
//!   2.31·10⁻⁶ K), stated as 2.85·10⁻⁶ K. The reading adds its rounding: it
//!   is within **0.005 °C + 2.85·10⁻⁶ K** of the twin.
//! - Against the crate's bar (docs/numerics.md), with the ADC's own step
//!   in place of the counter's (one tenth of the step at that reading,
//!   δT = T²·U′·N/(c·(N − c)) ≥ T²·U′·4/N, or one output LSB where that is
//!   finer): the reading is within half an LSB plus 2.85 µK, so the bar
//!   holds everywhere. The unrounded result alone is within a tenth of a
//!   step up to 20 bits: over 2·10⁶ sampled points the largest error is
//!   1.4·10⁻³ of a step at 16 bits and 2.1·10⁻² at 20 bits. At 24 bits it
//!   reaches 0.33 of a step, so 24 bits is not claimed.
//! - The property tests in `ntc.rs` assert the bound formula on every case,
//!   2.85·10⁻⁶ K and a tenth of a step over the declared domain, the
//!   formula and a tenth of a step for 8 ..= 20 bits and −100 ..= +300 °C,
//!   and the formula for any accepted Steinhart–Hart coefficients.
//!
//! Measured (2·10⁶ seeded random points per row, both divider positions,
//! `sweep_worst_case` in `ntc.rs`):
//!
//! | range | law | max \|ΔT\| before rounding | max \|ΔT\| / ADC step | max reading error |
//! |---|---|---|---|---|
//! | declared domain (10–16 bits) | Beta | 1.33·10⁻⁶ K | 1.3·10⁻³ (at 16 bits) | 0.005 °C + 8.7·10⁻⁷ K |
//! | declared domain (10–16 bits) | Steinhart–Hart | 1.49·10⁻⁶ K | 1.4·10⁻³ (at 16 bits) | 0.005 °C + 7.7·10⁻⁷ K |
//! | 20 bits, −100 ..= +300 °C | either | 2.30·10⁻⁶ K | 2.1·10⁻² | 0.005 °C + 1.5·10⁻⁶ K |
//! | 24 bits, −55 ..= +155 °C | either | 1.46·10⁻⁶ K | 0.33 | 0.005 °C + 7.6·10⁻⁷ K |
//!
//! ## Cost per reading
//!
//! **No division.** Two integer logarithms sharing one k·ln 2 from a table
//! (six 32 × 32 → 64-bit products, two 16 × 16-bit ones, two leading-zero
//! counts), the law (Beta: one product; Steinhart–Hart with C ≠ 0: three,
//! and two normalisations), a normalisation of 1/T, the reciprocal (five
//! 16 × 16-bit products, a 65-entry table's chord and one Newton step)
//! and the quotient (one product). The wide products
//! use the crate-private `fixed::mul_u32_wide`: 8 for Beta, 10 for Steinhart–Hart.
//! The constants (ln(R_s/R25) or ln R_s, 1/B, the coefficients in fixed
//! point) are computed once, at construction. Tables: 64 × 2 `u32` and
//! 32 `u64` for the logarithm, 65 `u16` for the reciprocal (898 bytes),
//! and the 128-byte table of leading zeros shared with the other
//! normalisations. On a Cortex-M0 a Beta conversion costs 567.5
//! instructions (docs/performance.md).
//!
//! ## Example
//!
//! ```
//! use lc_core::temperature::{CentiCelsius, Divider, NtcBeta, NtcPosition, TemperatureError};
//!
//! // 10 kΩ / B 3950 K NTC to ground, 5 kΩ series resistor to the ADC's
//! // reference, 12-bit ADC.
//! let divider = Divider::new(12, 5_000, NtcPosition::LowSide).unwrap();
//! let ntc = NtcBeta::new(10_000, 3950, divider).unwrap();
//! // Mid scale: R = R_s = 5 kΩ, 41.4602 °C (docs/references.md, NTC cases).
//! assert_eq!(ntc.convert(2048), Ok(CentiCelsius(4146)));
//! assert!((ntc.convert_f64(2048).unwrap() - 41.4602).abs() < 1e-4);
//! // One code here moves the reading by T²/B · 4/N ≈ 0.0245 K.
//! assert!((ntc.step_per_code_k(2048).unwrap() - 0.0245).abs() < 1e-4);
//! // A broken wire reads full scale.
//! assert_eq!(ntc.convert(4095), Err(TemperatureError::SensorOpen));
//! ```
//!
//! Not a safety-rated component: a reading a person relies on for safety
//! needs its own qualified measurement.

#[cfg(feature = "ntc")]
mod divider;
#[cfg(feature = "ntc")]
mod ln;
mod model;
#[cfg(feature = "ntc")]
mod ntc;

#[cfg(feature = "ntc")]
pub use divider::{Divider, LnRatio, NtcPosition};
#[cfg(feature = "ntc")]
pub use ln::{ln_q37, LN_FRAC_BITS};
pub use model::{steinhart_hart_fit, Beta, CalibrationPoint, SteinhartHart, T25_K, ZERO_C_K};
#[cfg(feature = "ntc")]
pub use ntc::{NtcBeta, NtcSteinhartHart, MAX_READING, MIN_READING};

use core::fmt;

/// A temperature in hundredths of a degree Celsius (`i32`; 2500 is
/// 25.00 °C).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct CentiCelsius(pub i32);

impl CentiCelsius {
    /// 0 °C.
    pub const ZERO: CentiCelsius = CentiCelsius(0);

    /// Degrees Celsius as `f64` (exact for the integer, then one rounding of
    /// the division by 100).
    #[inline]
    pub fn to_f64(self) -> f64 {
        f64::from(self.0) / 100.0
    }

    /// Kelvin as `f64`.
    #[inline]
    pub fn to_kelvin_f64(self) -> f64 {
        self.to_f64() + ZERO_C_K
    }

    /// The nearest hundredth of a degree to `temp_c` °C (ties away from
    /// zero), or `None` when not finite or beyond the `i32` range.
    pub fn from_f64(temp_c: f64) -> Option<Self> {
        let scaled = libm::round(temp_c * 100.0);
        if !(-2_147_483_648.0..=2_147_483_647.0).contains(&scaled) {
            return None;
        }
        // An integer inside the i32 range: the cast is exact.
        Some(Self(scaled as i32))
    }
}

impl fmt::Display for CentiCelsius {
    /// `-5.07 °C`, `25.00 °C`.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let sign = if self.0 < 0 { "-" } else { "" };
        let abs = self.0.unsigned_abs();
        write!(f, "{sign}{}.{:02} °C", abs / 100, abs % 100)
    }
}

/// Why a code could not be converted to a temperature.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum TemperatureError {
    /// The NTC reads as an open circuit: full scale (NTC on the low side) or
    /// zero (high side).
    SensorOpen,
    /// The NTC reads as a short: zero (low side) or full scale (high side).
    SensorShorted,
    /// The code is not below 2^bits.
    CodeOutOfRange,
    /// The temperature lies outside [`MIN_READING`] ..= [`MAX_READING`]
    /// (or |ln R| ≥ 32 in the law).
    OutOfRange,
}

impl fmt::Display for TemperatureError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            TemperatureError::SensorOpen => "temperature sensor open (code at the rail)",
            TemperatureError::SensorShorted => "temperature sensor shorted (code at the rail)",
            TemperatureError::CodeOutOfRange => "ADC code beyond the converter's resolution",
            TemperatureError::OutOfRange => "temperature outside -100 to +300 degC",
        })
    }
}

impl core::error::Error for TemperatureError {}

/// Why a divider, converter or calibration fit could not be built.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ConfigError {
    /// ADC resolution outside 8 ..= 24 bits.
    BadAdcBits,
    /// Series resistor of 0 Ω.
    BadSeriesResistance,
    /// R25 of 0 Ω.
    BadR25,
    /// B outside 500 ..= 20 000 K.
    BadBeta,
    /// Steinhart–Hart coefficients not finite, outside their ranges, or not
    /// monotone (see [`NtcSteinhartHart::new`]).
    BadCoefficients,
    /// Calibration points not finite, at or below absolute zero, with a
    /// resistance ≤ 0, or not distinct enough to fit.
    BadCalibrationPoints,
}

impl fmt::Display for ConfigError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            ConfigError::BadAdcBits => "ADC resolution outside 8 to 24 bits",
            ConfigError::BadSeriesResistance => "series resistor of 0 ohm",
            ConfigError::BadR25 => "NTC resistance at 25 degC of 0 ohm",
            ConfigError::BadBeta => "B constant outside 500 to 20000 K",
            ConfigError::BadCoefficients => {
                "Steinhart-Hart coefficients out of range or not monotone"
            }
            ConfigError::BadCalibrationPoints => "calibration points invalid or not distinct",
        })
    }
}

impl core::error::Error for ConfigError {}
