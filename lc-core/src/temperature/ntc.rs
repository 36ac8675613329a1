//! Fixed-point NTC converters: ADC code → [`CentiCelsius`], Beta and
//! Steinhart–Hart. The per-reading firmware path of the temperature input.

use super::divider::Divider;
use super::ln::{ln_q37, ln_ratio_q37};
use super::model::{Beta, SteinhartHart, ZERO_C_K};
use super::{CentiCelsius, ConfigError, TemperatureError};
use crate::fixed::{mul_u32_wide, normalise, reciprocal_q63, round_shr_u64};
use core::num::NonZeroU64;

/// 1/298.15 K in Q.60: round(2^60 · 100/29815).
const INV_T25_Q60: i64 = 3_866_917_674_347_969;

/// Coldest reading returned, −100.00 °C (173.15 K); colder is
/// [`TemperatureError::OutOfRange`].
pub const MIN_READING: CentiCelsius = CentiCelsius(-10_000);
/// Hottest reading returned, +300.00 °C (573.15 K); hotter is
/// [`TemperatureError::OutOfRange`].
pub const MAX_READING: CentiCelsius = CentiCelsius(30_000);

/// 1/T limits in Q.60 for [`MIN_READING`] ..= [`MAX_READING`]:
/// ⌊2^60 · 100/57315⌋ and ⌊2^60 · 100/17315⌋ (both below 2^53: the casts
/// are exact).
const U_MIN_Q60: i64 = ((1u128 << 60) * 100 / 57_315) as i64;
const U_MAX_Q60: i64 = ((1u128 << 60) * 100 / 17_315) as i64;

/// Centi-kelvin of 0 °C.
const ZERO_C_CENTI_K: i32 = 27_315;

/// Fractional bits of the internal centi-kelvin result before the final
/// rounding.
const FINE_BITS: u32 = 16;

/// 100 · 2^sh / m rounded to nearest, within 2^-28 of it (relative) plus
/// half a unit, for m ≥ 2^31 and 32 ≤ sh ≤ 57; `None` outside those.
/// No division: (100 · Y) · 2^-(63 − sh) with Y ≈ 2^63/m from
/// [`reciprocal_q63`] (a 65-entry table's chord and one Newton step).
/// Cost: one 32 × 32 → 64-bit product besides the reciprocal's five
/// 16 × 16-bit ones.
#[inline]
fn quotient_nearest(m: u32, sh: u32) -> Option<u64> {
    if m < 1 << 31 || !(32..=57).contains(&sh) {
        return None;
    }
    // 100·Y < 2^39; the shift 63 − sh is in 6..=31 (checked above, so
    // the difference cannot wrap).
    Some(round_shr_u64(
        mul_u32_wide(reciprocal_q63(m), 100),
        63u32.wrapping_sub(sh),
    ))
}

/// The cubic term's coefficient C = ±mant · 2^(−shift − 38), 2^31 ≤ mant <
/// 2^32, stored so that C·L² in Q.60 is (mant · m2) >> (shift + z2) for L²
/// ≈ m2 · 2^(−22 − z2).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
struct Cubic {
    mant: u32,
    shift: u32,
    negative: bool,
}

/// The inverse-temperature law shared by both models, precomputed:
///
/// L = ln_offset + ln(R/R_s),  1/T = a + L · (b + c · L²).
///
/// Beta: ln_offset = ln(R_s/R25), a = 1/T25, b = 1/B, no cubic.
/// Steinhart–Hart: ln_offset = ln(R_s / 1 Ω), a = A, b = B, c = C.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
struct Law {
    divider: Divider,
    ln_offset_q37: i64,
    a_q60: i64,
    b_q60: i64,
    /// b normalised: b_q60 ≈ b_mant · 2^(32 − b_z).
    b_mant: u32,
    b_z: u32,
    cubic: Option<Cubic>,
}

impl Law {
    /// 1/T in Q.60 (1/K · 2^60) for one code.
    ///
    /// Formats: L in Q.37 (`i64`), then |L| in Q5.27 (`u32`, rounded; |L| ≥ 32
    /// is `OutOfRange`); L² exact, then a rounded 32-bit mantissa; C·L² and
    /// t = b + C·L² in Q.60; t as a rounded 32-bit mantissa; L·t rounded to
    /// Q.60.
    #[inline]
    fn inverse_temperature_q60(&self, code: u32) -> Result<i64, TemperatureError> {
        let (num, den) = self.divider.operands(code)?;
        // Both terms are below 23 · 2^37 in magnitude (ln of a u32 is below
        // 22.2): no overflow. The sums, differences and shift counts below
        // cannot wrap either (the bounds in the comments, set by the
        // constructors' limits on B and C); they are written in wrapping
        // form because the compiler cannot see those limits.
        let l = self.ln_offset_q37.wrapping_add(ln_ratio_q37(num, den));
        let lm = u32::try_from(round_shr_u64(l.unsigned_abs(), 10))
            .map_err(|_| TemperatureError::OutOfRange)?;
        let (t_mant, t_z, t_negative) = match self.cubic {
            None => (self.b_mant, self.b_z, false),
            Some(c) => {
                // L² exact (Q10.54), then as a rounded 32-bit mantissa:
                // L² ≈ m2 · 2^(32 − z2 − 54). With C = mant · 2^(e − 32),
                // C·L²·2^60 = (mant · m2) >> (z2 − 6 − e) = >> (shift + z2).
                let (m2, z2) = normalise(mul_u32_wide(lm, lm));
                // shift ≥ 9 (|C| ≤ 2^-16): below 2^55, the cast is exact.
                let cl2 = round_shr_u64(mul_u32_wide(c.mant, m2), c.shift.wrapping_add(z2)) as i64;
                let t = if c.negative {
                    self.b_q60.wrapping_sub(cl2)
                } else {
                    self.b_q60.wrapping_add(cl2)
                };
                let (m, z) = normalise(t.unsigned_abs());
                (m, z, t < 0)
            }
        };
        // |t| ≤ 2^-6 + 2^-6 = 2^-5 by the constructors' limits on B and C,
        // so t < 2^55 in Q.60 and t_z ≥ 8: the shift is ≥ 3 and the product
        // shifted below 2^61; the cast is exact. L·t·2^60 = lm · t_mant ·
        // 2^(32 − t_z − 27).
        let lt = round_shr_u64(mul_u32_wide(lm, t_mant), t_z.saturating_sub(5)) as i64;
        Ok(if (l < 0) != t_negative {
            self.a_q60.wrapping_sub(lt)
        } else {
            self.a_q60.wrapping_add(lt)
        })
    }

    /// The temperature in centi-kelvin, Q.16 (`u64`), for one code:
    /// 100 · 2^16 / (1/T), rounded to nearest, without a division
    /// ([`quotient_nearest`]).
    #[inline]
    fn centi_kelvin_q16(&self, code: u32) -> Result<u64, TemperatureError> {
        let u = self.inverse_temperature_q60(code)?;
        if !(U_MIN_Q60..=U_MAX_Q60).contains(&u) {
            return Err(TemperatureError::OutOfRange);
        }
        // u > 0; u ≈ m · 2^(32 − z) with z in 10..=13 inside the limits.
        let (m, z) = normalise(u.unsigned_abs());
        // T · 100 · 2^16 = 100 · 2^(76 − (32 − z)) / m = 100 · 2^(44 + z) / m.
        // z ≤ 64: the sum cannot wrap.
        quotient_nearest(m, z.wrapping_add(44)).ok_or(TemperatureError::OutOfRange)
    }

    /// The reading, rounded to the nearest 0.01 °C.
    #[inline]
    fn convert(&self, code: u32) -> Result<CentiCelsius, TemperatureError> {
        let q = self.centi_kelvin_q16(code)?;
        let ck =
            i32::try_from(round_shr_u64(q, FINE_BITS)).map_err(|_| TemperatureError::OutOfRange)?;
        // ck ≥ 0 (from a u64): the difference cannot wrap.
        let c = CentiCelsius(ck.wrapping_sub(ZERO_C_CENTI_K));
        if c < MIN_READING || c > MAX_READING {
            return Err(TemperatureError::OutOfRange);
        }
        Ok(c)
    }

    /// The law for a normalised, checked b and an optional cubic term.
    fn new(
        divider: Divider,
        ln_offset_q37: i64,
        a_q60: i64,
        b_q60: i64,
        cubic: Option<Cubic>,
    ) -> Self {
        let (b_mant, b_z) = normalise(b_q60.unsigned_abs());
        Self {
            divider,
            ln_offset_q37,
            a_q60,
            b_q60,
            b_mant,
            b_z,
            cubic,
        }
    }
}

/// ln(x) − ln(y) in Q.37 for two resistances in ohms (construction only).
fn ln_ohm_ratio_q37(x_ohm: u32, y_ohm: u32) -> Result<i64, ConfigError> {
    let lx = ln_q37(x_ohm).ok_or(ConfigError::BadSeriesResistance)?;
    let ly = ln_q37(y_ohm).ok_or(ConfigError::BadR25)?;
    // Both below 2^42: the casts are exact and the difference cannot wrap.
    Ok((lx as i64).wrapping_sub(ly as i64))
}

/// Step of the reading for one ADC code, T² · (d(1/T)/dL) · N/(c·(N − c)),
/// in kelvin; `inv_t` is 1/T and `slope` is d(1/T)/dL at the code.
fn step_k(divider: &Divider, code: u32, inv_t: f64, slope: f64) -> Result<f64, TemperatureError> {
    let (a, b) = divider.operands(code)?;
    let n = f64::from(divider.full_scale());
    let dl = n / (f64::from(a.get()) * f64::from(b.get()));
    Ok(slope * dl / (inv_t * inv_t))
}

/// An NTC on a [`Divider`] read through the Beta model, in fixed point.
///
/// 1/T = 1/T25 + ln(R/R25)/B, with ln(R/R25) = ln(R_s/R25) + ln(R/R_s)
/// (the first term precomputed, the second from the code). See the
/// [module docs](super) for formats, domain and bound.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct NtcBeta {
    law: Law,
    model: Beta,
}

impl NtcBeta {
    /// Smallest accepted B, kelvin.
    pub const MIN_BETA_K: u32 = 500;
    /// Largest accepted B, kelvin.
    pub const MAX_BETA_K: u32 = 20_000;

    /// A converter for an NTC of `r25_ohm` at 25 °C (at least 1 Ω) with
    /// B = `beta_k` (500..=20 000 K) on `divider`. Precomputes ln(R_s/R25)
    /// and 1/B (one division, here, not per reading).
    pub fn new(r25_ohm: u32, beta_k: u32, divider: Divider) -> Result<Self, ConfigError> {
        if r25_ohm == 0 {
            return Err(ConfigError::BadR25);
        }
        if !(Self::MIN_BETA_K..=Self::MAX_BETA_K).contains(&beta_k) {
            return Err(ConfigError::BadBeta);
        }
        let ln_offset = ln_ohm_ratio_q37(divider.series_ohm(), r25_ohm)?;
        let beta = NonZeroU64::new(u64::from(beta_k)).ok_or(ConfigError::BadBeta)?;
        // round(2^60 / B): below 2^52 for B ≥ 500, the cast is exact.
        let b_q60 = (((1u64 << 60) + beta.get() / 2) / beta) as i64;
        Ok(Self {
            law: Law::new(divider, ln_offset, INV_T25_Q60, b_q60, None),
            model: Beta::new(f64::from(r25_ohm), f64::from(beta_k)),
        })
    }

    /// The reading for one ADC code, rounded to the nearest 0.01 °C.
    ///
    /// Errors: code 0 or full scale ([`TemperatureError::SensorOpen`],
    /// [`TemperatureError::SensorShorted`]), a code beyond the ADC's range
    /// ([`TemperatureError::CodeOutOfRange`]), a temperature outside
    /// [`MIN_READING`] ..= [`MAX_READING`] ([`TemperatureError::OutOfRange`]).
    /// Cost: two integer logarithms, four more 32 × 32 → 64-bit products
    /// (one for the law, three for the reciprocal), no division.
    #[inline]
    pub fn convert(&self, code: u32) -> Result<CentiCelsius, TemperatureError> {
        self.law.convert(code)
    }

    /// `f64` twin of [`NtcBeta::convert`]: [`Beta::temperature_c`] of
    /// [`Divider::resistance_ohm_f64`], unrounded, same code checks (no range
    /// check on the result).
    pub fn convert_f64(&self, code: u32) -> Result<f64, TemperatureError> {
        Ok(self
            .model
            .temperature_c(self.law.divider.resistance_ohm_f64(code)?))
    }

    /// The temperature change for one ADC code at `code`, kelvin (first
    /// order): T²/B · N/(c·(N − c)). The ADC's own quantisation step.
    pub fn step_per_code_k(&self, code: u32) -> Result<f64, TemperatureError> {
        let t = self.convert_f64(code)? + ZERO_C_K;
        step_k(&self.law.divider, code, 1.0 / t, 1.0 / self.model.beta_k)
    }

    /// The divider.
    #[inline]
    pub const fn divider(&self) -> Divider {
        self.law.divider
    }

    /// The Beta model in `f64` (the twin's, and the host's, view).
    #[inline]
    pub const fn model(&self) -> Beta {
        self.model
    }
}

/// An NTC on a [`Divider`] read through Steinhart–Hart, in fixed point.
///
/// 1/T = A + L·(B + C·L²) with L = ln R = ln R_s + ln(R/R_s) (Horner form
/// of A + B·L + C·L³; ln R_s precomputed). See the [module docs](super) for
/// formats, domain and bound.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct NtcSteinhartHart {
    law: Law,
    model: SteinhartHart,
}

impl NtcSteinhartHart {
    /// Largest accepted |A|, 1/K.
    pub const MAX_ABS_A: f64 = 0.0625;
    /// Smallest accepted B, 1/K: 2^-20 (a Beta model's B of about 10^6 K).
    pub const MIN_B: f64 = 9.536_743_164_062_5e-7;
    /// Largest accepted B, 1/K: 2^-6 (a Beta model's B of 64 K).
    pub const MAX_B: f64 = 0.015_625;
    /// Largest accepted |C|, 1/K: 2^-16.
    pub const MAX_ABS_C: f64 = 1.525_878_906_25e-5;

    /// A converter for Steinhart–Hart coefficients on `divider`.
    ///
    /// The coefficients are rounded once, here: A and B to Q.60 (nearest),
    /// C to a 32-bit mantissa (nearest). `ConfigError::BadCoefficients`
    /// unless all are finite, |A| ≤ 1/16, 2^-20 ≤ B ≤ 2^-6, |C| ≤ 2^-16 and
    /// the law is monotone for |ln R| < 32 (B + 3·C·L² > 0 there, which
    /// C ≥ 0 always is and C < 0 needs B > 3072·|C|).
    pub fn new(coefficients: SteinhartHart, divider: Divider) -> Result<Self, ConfigError> {
        let SteinhartHart { a, b, c } = coefficients;
        let ok = a.is_finite()
            && b.is_finite()
            && c.is_finite()
            && a.abs() <= Self::MAX_ABS_A
            && (Self::MIN_B..=Self::MAX_B).contains(&b)
            && c.abs() <= Self::MAX_ABS_C
            && b + 3072.0 * c.min(0.0) > 0.0;
        if !ok {
            return Err(ConfigError::BadCoefficients);
        }
        // |a|, b ≤ 2^-4: the scaled values are integers below 2^56, so the
        // casts are exact.
        let a_q60 = libm::round(a * 1_152_921_504_606_846_976.0) as i64;
        let b_q60 = libm::round(b * 1_152_921_504_606_846_976.0) as i64;
        let cubic = if c == 0.0 {
            None
        } else {
            // |C| = f · 2^e, f in [0.5, 1); e ≤ −15 since |C| ≤ 2^-16.
            let (f, e) = libm::frexp(c.abs());
            // f · 2^32 in [2^31, 2^32]: an integer after rounding, exact cast.
            let m = libm::round(f * 4_294_967_296.0) as u64;
            // e ≥ −1 075 (frexp of a finite double): the sums below
            // cannot saturate; saturating only says so to the compiler.
            let (m, e) = if m >> 32 != 0 {
                (m >> 1, e.saturating_add(1))
            } else {
                (m, e)
            };
            let mant = u32::try_from(m).map_err(|_| ConfigError::BadCoefficients)?;
            // C = mant · 2^(e − 32): stored as shift = −e − 6 ≥ 9 (see
            // `Law::inverse_temperature_q60`).
            let shift = u32::try_from(0i32.saturating_sub(e).saturating_sub(6))
                .map_err(|_| ConfigError::BadCoefficients)?;
            Some(Cubic {
                mant,
                shift,
                negative: c < 0.0,
            })
        };
        let ln_offset = ln_ohm_ratio_q37(divider.series_ohm(), 1)?;
        Ok(Self {
            law: Law::new(divider, ln_offset, a_q60, b_q60, cubic),
            model: coefficients,
        })
    }

    /// The reading for one ADC code, rounded to the nearest 0.01 °C. Errors
    /// as [`NtcBeta::convert`]. Cost: two integer logarithms, six more
    /// 32 × 32 → 64-bit products (three for the law, three for the
    /// reciprocal), no division.
    #[inline]
    pub fn convert(&self, code: u32) -> Result<CentiCelsius, TemperatureError> {
        self.law.convert(code)
    }

    /// `f64` twin of [`NtcSteinhartHart::convert`]:
    /// [`SteinhartHart::temperature_c`] of [`Divider::resistance_ohm_f64`],
    /// unrounded, same code checks (no range check on the result).
    pub fn convert_f64(&self, code: u32) -> Result<f64, TemperatureError> {
        Ok(self
            .model
            .temperature_c(self.law.divider.resistance_ohm_f64(code)?))
    }

    /// The temperature change for one ADC code at `code`, kelvin (first
    /// order): T² · (B + 3·C·L²) · N/(c·(N − c)).
    pub fn step_per_code_k(&self, code: u32) -> Result<f64, TemperatureError> {
        let r = self.law.divider.resistance_ohm_f64(code)?;
        let l = libm::log(r);
        let sh = self.model;
        step_k(
            &self.law.divider,
            code,
            sh.inverse_temperature_per_k(r),
            sh.b + 3.0 * sh.c * l * l,
        )
    }

    /// The divider.
    #[inline]
    pub const fn divider(&self) -> Divider {
        self.law.divider
    }

    /// The coefficients as given (the twin's, and the host's, view).
    #[inline]
    pub const fn model(&self) -> SteinhartHart {
        self.model
    }
}

#[cfg(test)]
mod tests {
    use super::super::{steinhart_hart_fit, CalibrationPoint, NtcPosition};
    use super::*;
    use proptest::prelude::*;

    const Q60: f64 = 1_152_921_504_606_846_976.0;

    fn fine_c(law: &Law, code: u32) -> Result<f64, TemperatureError> {
        Ok(law.centi_kelvin_q16(code)? as f64 / 65_536.0 / 100.0 - ZERO_C_K)
    }

    fn low(bits: u32, rs: u32) -> Divider {
        Divider::new(bits, rs, NtcPosition::LowSide).unwrap()
    }

    #[test]
    fn constants() {
        assert_eq!(NtcSteinhartHart::MIN_B, 2f64.powi(-20));
        assert_eq!(NtcSteinhartHart::MAX_B, 2f64.powi(-6));
        assert_eq!(NtcSteinhartHart::MAX_ABS_C, 2f64.powi(-16));
        assert_eq!(
            i128::from(INV_T25_Q60),
            (((1i128 << 60) * 100) + 29_815 / 2) / 29_815
        );
        assert!((Q60 / U_MIN_Q60 as f64 - 573.15).abs() < 1e-9);
        assert!((Q60 / U_MAX_Q60 as f64 - 173.15).abs() < 1e-9);
    }

    /// The quotient's stated bound against the exact 100 · 2^sh / m:
    /// 2^-28 of it plus half a unit, checked in exact integers
    /// (|q·m − 100·2^sh| ≤ 2^-28 · 100·2^sh + m/2).
    fn quotient_within_bound(m: u32, sh: u32) -> bool {
        let Some(q) = quotient_nearest(m, sh) else {
            return false;
        };
        let n = 100u128 << sh;
        let err = (u128::from(q) * u128::from(m)).abs_diff(n);
        // 2^-28 · n = 16·n / 2^32; both sides times 2^32.
        (err << 32) <= 16 * n + (u128::from(m) << 31)
    }

    #[test]
    fn quotient_edges() {
        for sh in 32..=57 {
            for m in [1 << 31, (1 << 31) + 1, 3 << 30, u32::MAX - 1, u32::MAX] {
                assert!(quotient_within_bound(m, sh), "m {m} sh {sh}");
            }
            // Every interval of the reciprocal's table, at both ends and
            // in its middle.
            for i in 0..256u32 {
                let lo = (1 << 31) + (i << 23);
                for m in [lo, lo + (1 << 22), lo + ((1 << 23) - 1)] {
                    assert!(quotient_within_bound(m, sh), "m {m} sh {sh}");
                }
            }
        }
        assert_eq!(quotient_nearest((1 << 31) - 1, 50), None);
        assert_eq!(quotient_nearest(1 << 31, 58), None);
        assert_eq!(quotient_nearest(1 << 31, 31), None);
    }

    #[test]
    fn published_beta_points_through_the_fixed_path() {
        // docs/references.md, NTC cases (computed), 10 kΩ / B 3950 K: R = R_s
        // at mid scale, so R = 10 kΩ reads 25.00 °C and R = 5 kΩ 41.4602 °C.
        for bits in [10, 12, 16, 24] {
            let mid = 1 << (bits - 1);
            let at25 = NtcBeta::new(10_000, 3950, low(bits, 10_000)).unwrap();
            assert_eq!(at25.convert(mid), Ok(CentiCelsius(2500)));
            let at5k = NtcBeta::new(10_000, 3950, low(bits, 5_000)).unwrap();
            assert_eq!(at5k.convert(mid), Ok(CentiCelsius(4146)));
            assert!((fine_c(&at5k.law, mid).unwrap() - 41.460_234_798).abs() < 2e-6);
            // The same law as Steinhart–Hart (A = 1.022284695e-3,
            // B = 1/3950, C = 0) reads the same.
            let sh =
                NtcSteinhartHart::new(at5k.model().to_steinhart_hart(), low(bits, 5_000)).unwrap();
            assert_eq!(sh.convert(mid), Ok(CentiCelsius(4146)));
            assert!((fine_c(&sh.law, mid).unwrap() - 41.460_234_798).abs() < 2e-6);
        }
    }

    #[test]
    fn beta_table_through_the_fixed_path() {
        // docs/references.md, NTC cases (computed) table rows, 16-bit ADC, 10
        // kΩ series resistor: the code nearest each row's resistance reads the
        // row's temperature within half an ADC step and half an output LSB.
        let ntc = NtcBeta::new(10_000, 3950, low(16, 10_000)).unwrap();
        let rows = [
            (-40.0, 401_859.7),
            (-20.0, 105_384.7),
            (0.0, 33_620.6),
            (10.0, 20_174.6),
            (20.0, 12_535.3),
            (25.0, 10_000.0),
            (30.0, 8_037.1),
            (40.0, 5_301.5),
            (50.0, 3_588.2),
            (60.0, 2_486.2),
            (85.0, 1_086.7),
            (100.0, 697.5),
        ];
        for (t, r) in rows {
            let code = libm::round(ntc.divider().code_f64(r)) as u32;
            let got = ntc.convert(code).unwrap().to_f64();
            let step = ntc.step_per_code_k(code).unwrap();
            assert!(
                (got - t).abs() <= 0.5 * step + 0.005 + 1e-3,
                "{t} °C: {got}"
            );
        }
    }

    #[test]
    fn configuration_is_checked() {
        let d = low(12, 10_000);
        assert_eq!(NtcBeta::new(0, 3950, d), Err(ConfigError::BadR25));
        assert_eq!(NtcBeta::new(10_000, 499, d), Err(ConfigError::BadBeta));
        assert_eq!(NtcBeta::new(10_000, 20_001, d), Err(ConfigError::BadBeta));
        assert!(NtcBeta::new(1, 500, low(8, 1)).is_ok());
        assert!(NtcBeta::new(u32::MAX, 20_000, low(24, u32::MAX)).is_ok());
        let good = SteinhartHart::new(1.0e-3, 2.4e-4, 2.0e-7);
        assert!(NtcSteinhartHart::new(good, d).is_ok());
        for bad in [
            SteinhartHart::new(f64::NAN, 2.4e-4, 0.0),
            SteinhartHart::new(1.0e-3, f64::INFINITY, 0.0),
            SteinhartHart::new(0.07, 2.4e-4, 0.0),
            SteinhartHart::new(1.0e-3, 0.0, 0.0),
            SteinhartHart::new(1.0e-3, -2.4e-4, 0.0),
            SteinhartHart::new(1.0e-3, 0.02, 0.0),
            SteinhartHart::new(1.0e-3, 2.4e-4, 2e-5),
            // Not monotone for |ln R| < 32: B ≤ 3072·|C|.
            SteinhartHart::new(1.0e-3, 2.4e-4, -1e-7),
        ] {
            assert_eq!(
                NtcSteinhartHart::new(bad, d),
                Err(ConfigError::BadCoefficients),
                "{bad:?}"
            );
        }
    }

    #[test]
    fn rails_and_range() {
        let ntc = NtcBeta::new(10_000, 3950, low(10, 10_000)).unwrap();
        assert_eq!(ntc.convert(0), Err(TemperatureError::SensorShorted));
        assert_eq!(ntc.convert(1023), Err(TemperatureError::SensorOpen));
        assert_eq!(ntc.convert(1024), Err(TemperatureError::CodeOutOfRange));
        assert_eq!(ntc.convert_f64(1023), Err(TemperatureError::SensorOpen));
        // Code 1: R ≈ 9.8 Ω, about 352 °C: out of the reading range.
        assert_eq!(ntc.convert(1), Err(TemperatureError::OutOfRange));
        // Code 1022: R ≈ 5.1 MΩ, about −66 °C: still a reading.
        let cold = ntc.convert(1022).unwrap();
        assert!((cold.to_f64() - ntc.convert_f64(1022).unwrap()).abs() <= 0.005 + 1e-6);
        let high = NtcBeta::new(
            10_000,
            3950,
            Divider::new(10, 10_000, NtcPosition::HighSide).unwrap(),
        )
        .unwrap();
        assert_eq!(high.convert(0), Err(TemperatureError::SensorOpen));
        assert_eq!(high.convert(1023), Err(TemperatureError::SensorShorted));
        // High side code c reads as low side code N − c.
        assert_eq!(high.convert(1022), ntc.convert(2));
    }

    #[test]
    fn reading_limits_are_exact() {
        // A reading just inside each limit converts; the limits themselves
        // are the MIN_READING/MAX_READING values.
        let ntc = NtcBeta::new(10_000, 3950, low(24, 10_000)).unwrap();
        let d = ntc.divider();
        for (t, limit) in [(-99.99, MIN_READING), (299.99, MAX_READING)] {
            let code = libm::round(d.code_f64(ntc.model().resistance_ohm(t))) as u32;
            let got = ntc.convert(code).unwrap();
            assert!((got.0 - limit.0).abs() <= 2, "{got:?}");
        }
    }

    /// One point of the declared domain (or, with `wide`, of the accepted
    /// configuration space at 8 to 24 bits).
    #[derive(Debug, Clone)]
    struct Case {
        divider: Divider,
        r25_ohm: u32,
        beta_k: u32,
        /// Steinhart–Hart: B_SH = 1/beta_k, this C, and A so that
        /// R(25 °C) = R25.
        c: f64,
        code: u32,
    }

    impl Case {
        fn sh(&self) -> SteinhartHart {
            let base =
                Beta::new(f64::from(self.r25_ohm), f64::from(self.beta_k)).to_steinhart_hart();
            let l25 = libm::log(f64::from(self.r25_ohm));
            SteinhartHart::new(base.a - self.c * l25 * l25 * l25, base.b, self.c)
        }
    }

    fn log_uniform(lo: f64, hi: f64, x: f64) -> f64 {
        lo * libm::pow(hi / lo, x)
    }

    fn cases(
        bits: core::ops::RangeInclusive<u32>,
        t_lo: f64,
        t_hi: f64,
    ) -> impl Strategy<Value = Case> {
        (
            bits,
            0.0f64..=1.0,
            2000u32..=6000,
            -2e-8f64..=5e-7,
            0.0f64..=1.0,
            t_lo..=t_hi,
            any::<bool>(),
        )
            .prop_map(move |(bits, r25x, beta_k, c, rsx, t, high)| {
                let r25_ohm = libm::round(log_uniform(100.0, 1e6, r25x)) as u32;
                // Series resistor from R25/30 to 30·R25: the useful span.
                let rs = libm::round(f64::from(r25_ohm) * log_uniform(1.0 / 30.0, 30.0, rsx))
                    .max(1.0) as u32;
                let pos = if high {
                    NtcPosition::HighSide
                } else {
                    NtcPosition::LowSide
                };
                let divider = Divider::new(bits, rs, pos).unwrap();
                let mut case = Case {
                    divider,
                    r25_ohm,
                    beta_k,
                    c,
                    code: 0,
                };
                let r = case.sh().resistance_ohm(t);
                let n = divider.full_scale();
                let code = libm::round(divider.code_f64(r)).clamp(1.0, f64::from(n - 2));
                case.code = code as u32;
                case
            })
    }

    /// Checks one converter at one code: (fine error, reading error, step),
    /// all in kelvin, or `None` when the twin is outside [t_lo, t_hi].
    /// Asserts the analytic bound of the module docs on the fine error.
    fn check(
        law: &Law,
        code: u32,
        twin: f64,
        step: f64,
        t_lo: f64,
        t_hi: f64,
    ) -> Option<(f64, f64, f64)> {
        if !(t_lo..=t_hi).contains(&twin) {
            return None;
        }
        let fine = fine_c(law, code).ok()?;
        let out = law.convert(code).ok()?.to_f64();
        let bound = analytic_bound_k(law, code, twin);
        assert!(
            (fine - twin).abs() <= bound,
            "fine {} > bound {bound:e}",
            (fine - twin).abs()
        );
        Some(((fine - twin).abs(), (out - twin).abs(), step))
    }

    /// The analytic bound of the module docs for the unrounded result, from
    /// the law's own (rounded) constants and the twin's temperature:
    /// T²·(U'·ε_L + (|L·t| + 2·|C·L³|)·2^-32) + T·(2^-32 + 2^-28)
    /// + 2^-17 cK, with ε_L = 23 · 2^-32 and U' = b + 3·C·L².
    fn analytic_bound_k(law: &Law, code: u32, twin_c: f64) -> f64 {
        let p32 = 2f64.powi(-32);
        let t = twin_c + ZERO_C_K;
        let l = law.ln_offset_q37 as f64 / 2f64.powi(37)
            + libm::log(law.divider.resistance_ratio_f64(code).unwrap());
        let b = law.b_q60 as f64 / Q60;
        let c = law.cubic.map_or(0.0, |c| {
            let m = f64::from(c.mant) * 2f64.powi(-(c.shift as i32) - 38);
            if c.negative {
                -m
            } else {
                m
            }
        });
        let slope = b + 3.0 * c * l * l;
        let lt = (l * (b + c * l * l)).abs();
        t * t * (slope * 23.0 * p32 + (lt + 2.0 * (c * l * l * l).abs()) * p32)
            + t * (p32 + 2f64.powi(-28))
            + 0.01 * 2f64.powi(-17)
            + 1e-11
    }

    /// The bound of the module docs inside the declared domain, before the
    /// final rounding (the analytic bound's largest value over the sweep's
    /// 2·10⁶ points there is 2.825e-6 K, Steinhart–Hart).
    const FINE_BOUND_K: f64 = 2.85e-6;

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(20_000))]

        /// Declared domain, Beta: the unrounded result within 2.85e-6 K and
        /// a tenth of the ADC step of the f64 twin; the reading within half
        /// an output LSB plus that.
        #[test]
        fn beta_within_bound(case in cases(10..=16, -55.0, 155.0)) {
            let ntc = NtcBeta::new(case.r25_ohm, case.beta_k, case.divider).unwrap();
            let twin = ntc.convert_f64(case.code).unwrap();
            let step = ntc.step_per_code_k(case.code).unwrap();
            if let Some((fine, out, step)) = check(&ntc.law, case.code, twin, step, -55.0, 155.0) {
                prop_assert!(fine <= FINE_BOUND_K, "fine {fine:e}");
                prop_assert!(fine <= 0.1 * step, "fine {fine:e} step {step:e}");
                prop_assert!(out <= 0.005 + FINE_BOUND_K, "out {out}");
                prop_assert!(out <= (0.1 * step).max(0.01));
            } else {
                // In the domain, a clamped code may leave the temperature
                // range; it still converts or reports OutOfRange.
                let r = ntc.convert(case.code);
                prop_assert!(r.is_ok() || r == Err(TemperatureError::OutOfRange));
            }
        }

        /// Declared domain, Steinhart–Hart with C from −2e-8 to 5e-7.
        #[test]
        fn steinhart_hart_within_bound(case in cases(10..=16, -55.0, 155.0)) {
            let ntc = NtcSteinhartHart::new(case.sh(), case.divider).unwrap();
            let twin = ntc.convert_f64(case.code).unwrap();
            let step = ntc.step_per_code_k(case.code).unwrap();
            if let Some((fine, out, step)) = check(&ntc.law, case.code, twin, step, -55.0, 155.0) {
                prop_assert!(fine <= FINE_BOUND_K, "fine {fine:e}");
                prop_assert!(fine <= 0.1 * step, "fine {fine:e} step {step:e}");
                prop_assert!(out <= 0.005 + FINE_BOUND_K, "out {out}");
            }
        }

        /// Beyond the declared domain: 8 to 24 bits, −100 to +300 °C. The
        /// analytic bound holds (at most 4.1e-6 K here; measured 2.5e-6 K),
        /// and up to 20 bits so does a tenth of the step (24 bits: measured
        /// 0.33 of a step, not claimed).
        #[test]
        fn wide_range_within_bound(case in cases(8..=24, -100.0, 300.0), sh: bool) {
            let (law, twin, step) = if sh {
                let ntc = NtcSteinhartHart::new(case.sh(), case.divider).unwrap();
                (ntc.law, ntc.convert_f64(case.code).unwrap(), ntc.step_per_code_k(case.code).unwrap())
            } else {
                let ntc = NtcBeta::new(case.r25_ohm, case.beta_k, case.divider).unwrap();
                (ntc.law, ntc.convert_f64(case.code).unwrap(), ntc.step_per_code_k(case.code).unwrap())
            };
            if let Some((fine, out, step)) = check(&law, case.code, twin, step, -99.99, 299.99) {
                prop_assert!(fine <= 3e-6, "fine {fine:e}");
                if case.divider.adc_bits() <= 20 {
                    prop_assert!(fine <= 0.1 * step, "fine {fine:e} step {step:e}");
                }
                prop_assert!(out <= 0.005 + 3e-6, "out {out}");
            }
        }

        /// Any accepted configuration and any code: no panic, and every
        /// reading that converts is within the analytic bound of the twin.
        #[test]
        fn never_panics(bits in 8u32..=24, rs in 1u32.., r25 in 1u32.., beta in 500u32..=20_000,
                        a in -0.0625f64..=0.0625, b in 9.6e-7f64..=0.015625, c in -1.6e-5f64..=1.6e-5,
                        code: u32, high: bool) {
            let pos = if high { NtcPosition::HighSide } else { NtcPosition::LowSide };
            let d = Divider::new(bits, rs, pos).unwrap();
            let code = if code % 8 == 0 { code } else { code % d.full_scale() };
            let beta_ntc = NtcBeta::new(r25, beta, d).unwrap();
            if let Ok(t) = beta_ntc.convert(code) {
                let twin = beta_ntc.convert_f64(code).unwrap();
                let bound = analytic_bound_k(&beta_ntc.law, code, twin);
                prop_assert!((t.to_f64() - twin).abs() <= 0.005 + bound, "{t:?} {twin}");
                check(&beta_ntc.law, code, twin, 0.0, -101.0, 301.0);
            }
            if let Ok(sh) = NtcSteinhartHart::new(SteinhartHart::new(a, b, c), d) {
                if let Ok(t) = sh.convert(code) {
                    let twin = sh.convert_f64(code).unwrap();
                    let bound = analytic_bound_k(&sh.law, code, twin);
                    prop_assert!((t.to_f64() - twin).abs() <= 0.005 + bound, "{t:?} {twin}");
                    check(&sh.law, code, twin, 0.0, -101.0, 301.0);
                }
            }
        }

        /// Any accepted Steinhart–Hart coefficients (B and C over their whole
        /// ranges, A chosen so that the code reads a temperature in the
        /// reading range): within the analytic bound.
        #[test]
        fn any_steinhart_hart_within_bound(bits in 8u32..=24, rs_log2 in 0.0f64..32.0, code: u32, high: bool,
                                           b_log2 in -20.0f64..=-6.0, c_log2 in -40.0f64..=-16.0,
                                           c_sign in -1i32..=1, t in -100.0f64..300.0) {
            let pos = if high { NtcPosition::HighSide } else { NtcPosition::LowSide };
            let rs = libm::round(libm::exp2(rs_log2)).min(f64::from(u32::MAX)) as u32;
            let d = Divider::new(bits, rs, pos).unwrap();
            let code = 1 + code % (d.full_scale() - 2);
            let l = libm::log(d.resistance_ohm_f64(code).unwrap());
            let (b, c) = (libm::exp2(b_log2), f64::from(c_sign) * libm::exp2(c_log2));
            let a = 1.0 / (t + ZERO_C_K) - l * (b + c * l * l);
            if let Ok(sh) = NtcSteinhartHart::new(SteinhartHart::new(a, b, c), d) {
                let twin = sh.convert_f64(code).unwrap();
                match sh.convert(code) {
                    Ok(got) => {
                        let bound = analytic_bound_k(&sh.law, code, twin);
                        prop_assert!((got.to_f64() - twin).abs() <= 0.005 + bound);
                        check(&sh.law, code, twin, 0.0, -101.0, 301.0);
                    }
                    // Only at the edges of the reading range, or for
                    // |ln R| ≥ 32.
                    Err(e) => prop_assert!(e == TemperatureError::OutOfRange
                        && (!(-99.99..=299.99).contains(&twin) || l.abs() > 31.9), "{e:?} {twin}"),
                }
            }
        }

        /// The division-free quotient is within its stated bound for every
        /// divisor and every shift the converter uses (and beyond).
        #[test]
        fn quotient_is_within_its_bound(m in (1u32 << 31).., sh in 32u32..=57) {
            prop_assert!(quotient_within_bound(m, sh), "m {} sh {}", m, sh);
        }

        /// Monotone: a higher NTC resistance never reads warmer. Low side,
        /// the code rises with R; high side, it falls.
        #[test]
        fn monotone_in_resistance(case in cases(8..=24, -100.0, 300.0), d in 1u32..64, sh: bool) {
            let n = case.divider.full_scale();
            let (c1, c2) = (case.code, (case.code + d).min(n - 2));
            let (r1, r2) = match case.divider.position() {
                NtcPosition::LowSide => (c1, c2),
                NtcPosition::HighSide => (c2, c1),
            };
            // r1 is the code of the lower resistance.
            let law = if sh {
                NtcSteinhartHart::new(case.sh(), case.divider).unwrap().law
            } else {
                NtcBeta::new(case.r25_ohm, case.beta_k, case.divider).unwrap().law
            };
            if let (Ok(t1), Ok(t2)) = (law.centi_kelvin_q16(r1), law.centi_kelvin_q16(r2)) {
                prop_assert!(t1 >= t2, "{t1} < {t2}");
                prop_assert!(law.convert(r1).unwrap() >= law.convert(r2).unwrap());
            }
        }
    }

    /// The measured table of the module docs: 2·10⁶ seeded random points
    /// per range and law. Run with
    /// `cargo test --release -p lc-core sweep_worst_case -- --ignored --nocapture`.
    #[test]
    #[ignore]
    fn sweep_worst_case() {
        use proptest::strategy::ValueTree;
        use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};
        let ranges = [
            ("10-16 bits, -55..155 C", 10..=16, -55.0, 155.0),
            ("16 bits, -55..155 C", 16..=16, -55.0, 155.0),
            ("20 bits, -100..300 C", 20..=20, -99.99, 299.99),
            ("24 bits, -55..155 C", 24..=24, -55.0, 155.0),
            ("8-24 bits, -100..300 C", 8..=24, -99.99, 299.99),
        ];
        for (name, bits, lo, hi) in ranges {
            for sh in [false, true] {
                let seed = TestRng::from_seed(RngAlgorithm::ChaCha, &[7; 32]);
                let mut runner = TestRunner::new_with_rng(Config::default(), seed);
                let strategy = cases(bits.clone(), lo, hi);
                // Largest error (K), error per step, reading error, bound.
                let (mut err, mut per_step, mut reading, mut bound) =
                    (0.0f64, 0.0f64, 0.0f64, 0.0f64);
                let mut worst = None;
                for _ in 0..2_000_000 {
                    let case = strategy.new_tree(&mut runner).unwrap().current();
                    let (law, twin, step) = if sh {
                        let ntc = NtcSteinhartHart::new(case.sh(), case.divider).unwrap();
                        let (twin, step) =
                            (ntc.convert_f64(case.code), ntc.step_per_code_k(case.code));
                        (ntc.law, twin.unwrap(), step.unwrap())
                    } else {
                        let ntc = NtcBeta::new(case.r25_ohm, case.beta_k, case.divider).unwrap();
                        let (twin, step) =
                            (ntc.convert_f64(case.code), ntc.step_per_code_k(case.code));
                        (ntc.law, twin.unwrap(), step.unwrap())
                    };
                    if let Some((fine, out, step)) = check(&law, case.code, twin, step, lo, hi) {
                        if fine / step > per_step {
                            per_step = fine / step;
                            worst = Some((case.clone(), twin));
                        }
                        err = err.max(fine);
                        reading = reading.max(out);
                        bound = bound.max(analytic_bound_k(&law, case.code, twin));
                    }
                }
                std::println!(
                    "{name}, {}: max error {err:.3e} K (bound {bound:.3e} K), \
                     {per_step:.3e} of a step, reading 0.005 + {:.2e} K; worst per step {worst:?}",
                    if sh { "Steinhart-Hart" } else { "Beta" },
                    reading - 0.005
                );
            }
        }
    }

    /// Every code of a 12-bit converter, both laws and both positions:
    /// strictly monotone before rounding, within the bound throughout.
    #[test]
    fn exhaustive_12_bit() {
        for pos in [NtcPosition::LowSide, NtcPosition::HighSide] {
            let d = Divider::new(12, 10_000, pos).unwrap();
            let beta = NtcBeta::new(10_000, 3950, d).unwrap();
            // The three points of the measured table in docs/references.md,
            // NTC cases (C ≈ 8.9e-8).
            let fit = steinhart_hart_fit([
                CalibrationPoint::new(0.0, 32_650.0),
                CalibrationPoint::new(25.0, 10_000.0),
                CalibrationPoint::new(50.0, 3_600.0),
            ])
            .unwrap();
            let sh = NtcSteinhartHart::new(fit, d).unwrap();
            let mut last = [None, None];
            for code in 1..4095 {
                let fines = [fine_c(&beta.law, code), fine_c(&sh.law, code)];
                let twins = [
                    beta.convert_f64(code).unwrap(),
                    sh.convert_f64(code).unwrap(),
                ];
                for i in 0..2 {
                    if let Ok(f) = fines[i] {
                        assert!((f - twins[i]).abs() <= FINE_BOUND_K, "code {code}");
                        if let Some(prev) = last[i] {
                            let rising = pos == NtcPosition::HighSide;
                            assert!(if rising { f > prev } else { f < prev }, "code {code}");
                        }
                        last[i] = Some(f);
                    }
                }
            }
        }
    }

    #[test]
    fn display_and_f64() {
        extern crate std;
        use std::string::ToString;
        assert_eq!(CentiCelsius(-507).to_string(), "-5.07 °C");
        assert_eq!(CentiCelsius(2500).to_string(), "25.00 °C");
        assert_eq!(CentiCelsius(i32::MIN).to_string(), "-21474836.48 °C");
        assert_eq!(CentiCelsius::from_f64(-5.065), Some(CentiCelsius(-507)));
        assert_eq!(CentiCelsius::from_f64(f64::NAN), None);
        assert_eq!(CentiCelsius::from_f64(3e7), None);
        assert_eq!(CentiCelsius(2500).to_kelvin_f64(), 298.15);
        assert_eq!(
            TemperatureError::SensorOpen.to_string(),
            "temperature sensor open (code at the rail)"
        );
        assert_eq!(
            ConfigError::BadBeta.to_string(),
            "B constant outside 500 to 20000 K"
        );
    }
}
