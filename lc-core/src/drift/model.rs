//! The per-unit temperature model.

use crate::derived::mul_wide;
use crate::fixed::{mul_i32_u32_wide, reciprocal_q63};
use crate::shift::Shift;
use crate::temperature::CentiCelsius;
use core::fmt;

/// Temperatures the model accepts, −100 °C ..= +300 °C: the range of the
/// temperature converters ([`crate::temperature`]). Readings outside are
/// clamped to it before compensation.
pub const TEMPERATURE_DOMAIN: (CentiCelsius, CentiCelsius) =
    (CentiCelsius(-10_000), CentiCelsius(30_000));

/// Why a temperature model was refused.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum DriftError {
    /// The reference temperature lies outside [`TEMPERATURE_DOMAIN`].
    ReferenceOutOfRange,
    /// The correction |g(ΔT)| reaches 1/2 somewhere in the temperature
    /// domain: beyond the fixed-point path's range (and beyond any real
    /// tank's drift).
    CorrectionTooLarge,
}

impl fmt::Display for DriftError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            DriftError::ReferenceOutOfRange => "drift reference temperature outside -100..300 °C",
            DriftError::CorrectionTooLarge => {
                "drift coefficients give a correction of 50 % or more"
            }
        })
    }
}

impl core::error::Error for DriftError {}

/// Temperature compensation of the shift, fitted per unit:
///
/// 1 + s_c = (1 + s) · (1 + g(ΔT)),  g(ΔT) = b1·ΔT + b2·ΔT²,
///
/// with ΔT = T − T_ref in centi-kelvin. A drift that scales L·C (a
/// capacitor's tempco) is multiplicative, so the correction multiplies:
/// it stays right at any target distance, where an additive one would be
/// off by s·g.
///
/// Coefficient formats (as stored in the calibration image): b1 is an `i32`
/// in units of 2^-40 shift per centi-kelvin (±1.95e-3 per centi-kelvin),
/// b2 an `i32` in units of 2^-56 per centi-kelvin² (±2.98e-8).
///
/// ## Rounding and bound
///
/// g is computed exactly (in 32-bit words, with five 32-bit multiplies) and
/// rounded to Q31 (|g| < 1/2 is checked at construction over the whole
/// temperature domain, so nothing can overflow); 1 + s is rounded to Q29;
/// their product is exact and rounded into Q.40. Against the `f64` twin
/// with the same coefficients:
/// |s_fixed − s| ≤ (1 + s)·2^-32 + |g|·2^-30 + 2^-40.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct TemperatureModel {
    reference: CentiCelsius,
    b1: i32,
    b2: i32,
}

/// round(x · 2^-11) for x = hi·2^32 + lo with hi < 2^11 (a non-negative
/// Q.40 value to Q29): ⌊x·2^-11⌋ + bit 10 of x, from the 32-bit words (no
/// 64-bit shift on a 32-bit core). Saturates at `u32::MAX`.
#[inline]
fn q29_from_words(hi: u32, lo: u32) -> u32 {
    ((lo >> 11) | (hi << 21)).saturating_add((lo >> 10) & 1)
}

/// Arithmetic shift right with rounding to nearest (ties up), `sh` in 1..=63.
#[inline]
fn round_asr(x: i64, sh: u32) -> i64 {
    (x >> (sh - 1)).wrapping_add(1) >> 1
}

impl TemperatureModel {
    /// No compensation: g = 0 at every temperature.
    pub const NONE: TemperatureModel = TemperatureModel {
        reference: CentiCelsius(2_500),
        b1: 0,
        b2: 0,
    };

    /// A model [`TemperatureModel::new`] accepted before (a validated
    /// image's fields), built without the checks.
    pub(crate) const fn from_checked(reference: CentiCelsius, b1: i32, b2: i32) -> Self {
        Self { reference, b1, b2 }
    }

    /// A model with reference temperature `reference`, b1 in 2^-40 per
    /// centi-kelvin and b2 in 2^-56 per centi-kelvin². Checked: the
    /// reference lies in [`TEMPERATURE_DOMAIN`], and with E the largest
    /// |ΔT| the domain allows from it, |b1|·E + |b2|·E² < 1/2, so that
    /// |g| < 1/2 across the domain (a bound on each term: no vertex to
    /// find, no division; two multiplies and a compare).
    #[inline(always)]
    pub fn new(reference: CentiCelsius, b1: i32, b2: i32) -> Result<Self, DriftError> {
        let (lo, hi) = TEMPERATURE_DOMAIN;
        if reference.0 < lo.0 || reference.0 > hi.0 {
            return Err(DriftError::ReferenceOutOfRange);
        }
        // E ≤ 40 000 < 2^16 (the reference in the domain: both
        // differences in 0..=40 000, no wrap), E² < 2^31.
        let e =
            hi.0.wrapping_sub(reference.0)
                .max(reference.0.wrapping_sub(lo.0)) as u32;
        // In units of 2^-56: |b1|·E·2^16 < 2^31·2^16·2^16 = 2^63 and
        // |b2|·E² < 2^62; the sum fits u64. E·2^16 < 2^32: both terms are
        // products of two words (on ARMv6-M through the one out-of-line
        // copy of the widening multiply).
        let sum = mul_wide(b1.unsigned_abs(), e << 16)
            .wrapping_add(mul_wide(b2.unsigned_abs(), e.wrapping_mul(e)));
        // |g| < 1/2 ⇔ below 2^55.
        if sum >= 1 << 55 {
            return Err(DriftError::CorrectionTooLarge);
        }
        Ok(Self { reference, b1, b2 })
    }

    /// From real coefficients: b1 per kelvin, b2 per kelvin² (host side;
    /// rounded to the stored formats). `None` when out of range.
    pub fn from_f64(reference_c: f64, b1_per_k: f64, b2_per_k2: f64) -> Option<Self> {
        let reference = CentiCelsius::from_f64(reference_c)?;
        let b1 = libm::round(b1_per_k / 100.0 * 1_099_511_627_776.0);
        let b2 = libm::round(b2_per_k2 / 10_000.0 * 72_057_594_037_927_936.0);
        let fits = |v: f64| (-2_147_483_648.0..=2_147_483_647.0).contains(&v);
        if !fits(b1) || !fits(b2) {
            return None;
        }
        Self::new(reference, b1 as i32, b2 as i32).ok()
    }

    /// Reference temperature.
    pub const fn reference(&self) -> CentiCelsius {
        self.reference
    }

    /// b1, in 2^-40 shift per centi-kelvin.
    pub const fn b1_raw(&self) -> i32 {
        self.b1
    }

    /// b2, in 2^-56 shift per centi-kelvin².
    pub const fn b2_raw(&self) -> i32 {
        self.b2
    }

    /// b1 per kelvin and b2 per kelvin², as `f64`.
    pub fn coefficients_f64(&self) -> (f64, f64) {
        (
            f64::from(self.b1) * 100.0 / 1_099_511_627_776.0,
            f64::from(self.b2) * 10_000.0 / 72_057_594_037_927_936.0,
        )
    }

    fn delta(&self, t: CentiCelsius) -> i32 {
        let (lo, hi) = TEMPERATURE_DOMAIN;
        // Both in −10 000..=30 000 (`new` refuses a reference outside the
        // domain): the difference cannot wrap.
        t.0.clamp(lo.0, hi.0).wrapping_sub(self.reference.0)
    }

    /// g(ΔT) in units of 2^-56, exact (|g| < 2^55): the formula in `i64`,
    /// the reference for [`TemperatureModel::g31`].
    #[cfg(test)]
    fn g_q56(&self, t: CentiCelsius) -> i64 {
        let d = i64::from(self.delta(t));
        (i64::from(self.b1) << 16) * d + i64::from(self.b2) * d * d
    }

    /// g(ΔT) rounded to Q31 (ties up), computed exactly in 32-bit words.
    ///
    /// With e = |ΔT| < 2^16 and σ its sign, g = ΔT·(b1·2^16 + b2·ΔT) =
    /// e·J with J = σ·b1·2^16 + b2·e. b2·e comes from b2's 16-bit halves:
    /// (b2 >> 16)·e fits `i32` and (b2 & 0xFFFF)·e fits `u32`. e·J comes
    /// from J's words: e times the low word in two 16 × 16-bit products,
    /// e times the high word modulo 2^32, which is exact for the high word
    /// of g because |g| < 2^55 (checked at construction). No operand or
    /// product is negated, and on a Cortex-M0 it is five multiplies.
    #[inline(always)]
    fn g31(&self, t: CentiCelsius) -> i32 {
        self.g31_of_delta(self.delta(t))
    }

    /// [`TemperatureModel::g31`] of ΔT = `d` (|d| ≤ 40 000).
    #[inline(always)]
    fn g31_of_delta(&self, d: i32) -> i32 {
        let e = d.unsigned_abs(); // ≤ 40 000 < 2^16

        // J = (σ·b1 + (b2 >> 16)·e)·2^16 + (b2 & 0xFFFF)·e, |J| < 2^48.
        let b1 = if d < 0 {
            -i64::from(self.b1)
        } else {
            i64::from(self.b1)
        };
        let ph = (self.b2 >> 16).wrapping_mul(e as i32); // |·| < 2^15·2^16: exact
        let pl = (self.b2 as u32 & 0xFFFF).wrapping_mul(e); // < 2^32: exact
        let j = ((b1 + i64::from(ph)) << 16).wrapping_add(i64::from(pl));
        let (j_hi, j_lo) = ((j >> 32) as i32, j as u32);
        // e·j_lo = p1·2^16 + p0, below 2^48.
        let p0 = (j_lo & 0xFFFF).wrapping_mul(e);
        let p1 = (j_lo >> 16).wrapping_mul(e);
        let (g_lo, carry) = p0.overflowing_add(p1 << 16);
        let g_hi = (e as i32)
            .wrapping_mul(j_hi)
            .wrapping_add((p1 >> 16) as i32)
            .wrapping_add(i32::from(carry));
        // g·2^-24 fits i32 (|g| < 2^55); halve it rounding ties up.
        let x = (g_hi << 8) | (g_lo >> 24) as i32;
        // x >> 1 < 2^30: adding the half bit cannot wrap.
        (x >> 1).wrapping_add(x & 1)
    }

    /// The correction at temperature `t` (clamped to
    /// [`TEMPERATURE_DOMAIN`]), computed once to apply to many shifts: the
    /// temperature changes far more slowly than readings come.
    pub fn factor(&self, t: CentiCelsius) -> DriftFactor {
        if self.b1 == 0 && self.b2 == 0 {
            return DriftFactor::NONE;
        }
        // g in Q31: |g| < 1/2 → |g31| ≤ 2^30.
        DriftFactor { g31: self.g31(t) }
    }

    /// [`TemperatureModel::factor`] for a temperature already checked
    /// inside [`TEMPERATURE_DOMAIN`] (the readers' plausibility check does
    /// it before compensating): the clamp left out, and the test for a
    /// model without coefficients (whose g31 is 0 anyway: `NONE`), the
    /// same factor.
    #[inline(always)]
    pub(crate) fn factor_in_domain(&self, t: CentiCelsius) -> DriftFactor {
        // In the domain, as the reference is (`new` refuses one outside):
        // the difference cannot wrap and equals `delta`'s.
        DriftFactor {
            g31: self.g31_of_delta(t.0.wrapping_sub(self.reference.0)),
        }
    }

    /// The compensated shift at temperature `t` (clamped to
    /// [`TEMPERATURE_DOMAIN`]): `self.factor(t).apply(s)`.
    pub fn compensate(&self, s: Shift, t: CentiCelsius) -> Shift {
        self.factor(t).apply(s)
    }

    /// The stage's stated error bound for input shift `s` at `t_c`:
    /// (1 + s)·2^-32 + |g|·2^-30 + 2^-40 (type docs). Verification helper.
    pub fn error_bound(&self, s: f64, t_c: f64) -> f64 {
        let g = (1.0 + self.compensate_f64(s, t_c)) / (1.0 + s) - 1.0;
        (1.0 + s).abs() * 2.328_306_436_538_696_3e-10
            + g.abs() * 9.313_225_746_154_785e-10
            + 9.094_947_017_729_282e-13
    }

    /// The stated error bound of the offset h at `t_c`
    /// ([`DriftFactor::offset`]): 2^-32/(1 + g)² + 2^-28·|h| + 2^-41.
    /// Verification helper.
    pub fn offset_error_bound(&self, t_c: f64) -> f64 {
        let one_plus_g = 1.0 + self.compensate_f64(0.0, t_c);
        let h = 1.0 / one_plus_g - 1.0;
        2.328_306_436_538_696_3e-10 / (one_plus_g * one_plus_g)
            + 3.725_290_298_461_914e-9 * h.abs()
            + 4.547_473_508_864_641e-13
    }

    /// `f64` twin of [`TemperatureModel::compensate`], same coefficients.
    pub fn compensate_f64(&self, s: f64, t_c: f64) -> f64 {
        let (lo, hi) = TEMPERATURE_DOMAIN;
        let t = t_c.clamp(lo.to_f64(), hi.to_f64());
        let d = (t - self.reference.to_f64()) * 100.0; // centi-kelvin
        let g = f64::from(self.b1) * d / 1_099_511_627_776.0
            + f64::from(self.b2) * d * d / 72_057_594_037_927_936.0;
        (1.0 + s) * (1.0 + g) - 1.0
    }
}

/// A temperature model's correction g at one temperature, Q31
/// ([`TemperatureModel::factor`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DriftFactor {
    g31: i32,
}

impl DriftFactor {
    /// No correction.
    pub const NONE: DriftFactor = DriftFactor { g31: 0 };

    /// The compensated shift: s + (1 + s)·g, with 1 + s rounded to Q29 and
    /// the product rounded into Q.40 (bound in [`TemperatureModel`]'s docs).
    ///
    /// 1 + s is taken as 0 below 0 and saturated at 2^32 − 1 in Q29 (1 + s
    /// near 8, beyond any useful reading), and the sum saturates in `i64`.
    /// Readings have 0 ≤ 1 + s < 8, and there none of that can happen: the
    /// high word of s alone says so, and the arithmetic is plain.
    #[inline]
    pub fn apply(self, s: Shift) -> Shift {
        if self.g31 == 0 {
            return s;
        }
        let raw = s.raw_q40();
        let hi = (raw >> 32) as i32;
        // −2^40 ≤ s < 7·2^40 in Q.40, that is 0 ≤ 1 + s < 8: the high word
        // of s in −256..1792.
        if !(-256..1792).contains(&hi) {
            return self.apply_saturated(s);
        }
        // 1 + s in Q29 from the words of x = s + 2^40 (high word
        // hi + 256 < 2^11).
        let u29 = q29_from_words((hi + 256) as u32, raw as u32);
        // Product Q60 → Q40: |g31·u29| < 2^62, its rounded part below 2^42,
        // and s below 2^43: the sum cannot overflow.
        let p = mul_i32_u32_wide(self.g31, u29);
        Shift::from_raw_q40(raw.wrapping_add(round_asr(p, 20)))
    }

    /// The correction in offset form: h = 1/(1 + g) − 1, in Q.40, so that
    /// (1 + s)(1 + g) − 1 = (1 + g)·(s − h).
    ///
    /// In a ratio of two compensated shifts (the level probe over its
    /// reference electrode) the factor 1 + g cancels:
    /// ((1 + s)(1 + g) − 1) / ((1 + r)(1 + g) − 1) = (s − h)/(r − h), so a
    /// reader computes h once per temperature and then subtracts it from
    /// both shifts instead of compensating each.
    ///
    /// h = −g·(1/(1 + g)), with the reciprocal interpolated in a table
    /// (relative error ≤ 2^-28, `fixed::reciprocal_q63`) and the product
    /// rounded into Q.40. Against h of the exact g (g is held rounded to
    /// Q31): |h_fixed − h| ≤ 2^-32/(1 + g)² + 2^-28·|h| + 2^-41
    /// ([`TemperatureModel::offset_error_bound`]). |g| < 1/2 gives
    /// −1/3 < h < 1.
    pub fn offset(self) -> Shift {
        if self.g31 == 0 {
            return Shift::ZERO;
        }
        // 1 + g in Q31: 2^30 ≤ m0 ≤ 1.5·2^31 (|g31| ≤ 2^30). Normalised to
        // m = m0·2^e with its top bit set.
        let m0 = (self.g31 as u32).wrapping_add(1 << 31);
        let (m, e) = if m0 < 1 << 31 { (m0 << 1, 1) } else { (m0, 0) };
        // Y ≈ 2^63/m, so 1/(1 + g) = 2^31/m0 = Y·2^(e − 32), and
        // h = −g31·2^-31·Y·2^(e − 32) = −g31·Y·2^(e − 63): in Q.40,
        // −(g31·2^e)·Y·2^-23. e = 1 only for g < 0, where g31·2 ≥ −2^31
        // fits i32; |g31·2^e·Y| < 2^31·2^32 fits i64.
        let p = mul_i32_u32_wide(self.g31 << e, reciprocal_q63(m));
        Shift::from_raw_q40(-round_asr(p, 23))
    }

    /// [`DriftFactor::apply`] for any shift, with the saturations spelled
    /// out: 1 + s clamped to 0..=i64::MAX before its rounding to Q29, Q29
    /// saturated to `u32`, and the sum saturated in `i64`. The same result
    /// as `apply` for every shift (where `apply` takes its plain path no
    /// saturation acts): the metal reader calls it for every compensated
    /// reading, one copy of the product in its firmware instead of two.
    #[cold]
    #[inline(never)]
    pub(crate) fn apply_saturated(self, s: Shift) -> Shift {
        let one_plus = s.raw_q40().saturating_add(Shift::ONE_RAW).max(0) as u64;
        let (hi, lo) = ((one_plus >> 32) as u32, one_plus as u32);
        let u29 = if hi >= 1 << 11 {
            u32::MAX
        } else {
            q29_from_words(hi, lo)
        };
        let p = mul_i32_u32_wide(self.g31, u29);
        Shift::from_raw_q40(s.raw_q40().saturating_add(round_asr(p, 20)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// `DriftFactor::apply` as the formula in `i128`: 1 + s clamped to
    /// 0..=i64::MAX, rounded to Q29 and saturated at u32::MAX, times g31,
    /// rounded to Q40, added to s and clamped to `i64`.
    fn apply_i128(g31: i32, s: i64) -> i128 {
        let round = |x: i128, sh: u32| ((x >> (sh - 1)) + 1) >> 1;
        let one_plus = (i128::from(s) + (1 << 40)).clamp(0, i128::from(i64::MAX));
        let u29 = round(one_plus, 11).min(i128::from(u32::MAX));
        if g31 == 0 {
            i128::from(s)
        } else {
            (i128::from(s) + round(i128::from(g31) * u29, 20))
                .clamp(i128::from(i64::MIN), i128::from(i64::MAX))
        }
    }

    /// The offset at the largest corrections either way (g = ±1/2, where
    /// 1 + g needs normalising or not), at none, and at the smallest.
    #[test]
    fn offset_at_the_ends_of_its_range() {
        for g31 in [-(1 << 30), -(1 << 30) + 1, -1, 0, 1, (1 << 30) - 1, 1 << 30] {
            let g = f64::from(g31) * 2f64.powi(-31);
            let exact = 1.0 / (1.0 + g) - 1.0;
            let h = DriftFactor { g31 }.offset().to_f64();
            // g31 is exact here, so only the reciprocal and the rounding.
            let bound = 2f64.powi(-28) * exact.abs() + 2f64.powi(-41);
            assert!((h - exact).abs() <= bound, "g31 {g31}: {h} vs {exact}");
        }
    }

    /// Both sides of every edge of `apply`'s plain range (0 ≤ 1 + s < 8)
    /// and the ends of `i64`, with the largest corrections either way.
    #[test]
    fn apply_at_the_edges_of_its_plain_range() {
        let one = 1i64 << 40;
        let edges = [
            i64::MIN,
            -one - 1,
            -one,
            -one + (1 << 32) - 1,
            -1,
            0,
            7 * one - (1 << 10) - 1,
            7 * one - 1,
            7 * one,
            8 * one,
            i64::MAX - (1 << 42),
            i64::MAX,
        ];
        for g31 in [1 << 30, -(1 << 30), 1, -1, 12_345, 0] {
            for s in edges {
                let got = DriftFactor { g31 }.apply(Shift::from_raw_q40(s)).raw_q40();
                assert_eq!(i128::from(got), apply_i128(g31, s), "g31 {g31}, s {s}");
                // The out-of-line form (the metal reader's) is the same.
                let got = DriftFactor { g31 }.apply_saturated(Shift::from_raw_q40(s));
                assert_eq!(
                    i128::from(got.raw_q40()),
                    apply_i128(g31, s),
                    "g31 {g31}, s {s}"
                );
            }
        }
    }

    #[test]
    fn none_is_the_identity() {
        let s = Shift::from_f64(-0.123).unwrap();
        assert_eq!(TemperatureModel::NONE.compensate(s, CentiCelsius(8_000)), s);
    }

    /// A C0G capacitor at its +30 ppm/K limit raises C by 30e-6 per kelvin
    /// (EIA-198 class 1, docs/references.md, EIA-198: C0G = 0 ± 30 ppm/K). With
    /// L fixed, 1 + s = 1 + 30e-6·ΔT; the model g = −30e-6·ΔT/(1 + 30e-6·ΔT)
    /// to first order removes it: at +35 K the residual is the second-order
    /// term only, (30e-6·35)² ≈ 1.1e-6.
    #[test]
    fn removes_a_capacitor_tempco() {
        let m = TemperatureModel::from_f64(25.0, -30e-6, 0.0).unwrap();
        let drift = 30e-6 * 35.0;
        let s = Shift::from_f64(drift).unwrap();
        let c = m.compensate(s, CentiCelsius(6_000)).to_f64();
        // b1 is stored to 2^-40 per centi-kelvin: −30e-6/K becomes −329 853.5 →
        // −329 854 units, 1.5e-6 relative, worth 1.6e-9 here.
        assert!((c - (-drift * drift)).abs() < 3e-9, "{c}");
        // With the second-order term fitted too, the residual vanishes to
        // third order: g = −x + x² with x = 30e-6·ΔT.
        let m2 = TemperatureModel::from_f64(25.0, -30e-6, 9e-10).unwrap();
        let c2 = m2.compensate(s, CentiCelsius(6_000)).to_f64();
        assert!(c2.abs() < 4e-9, "{c2}");
    }

    #[test]
    fn construction_limits() {
        assert_eq!(
            TemperatureModel::new(CentiCelsius(-10_001), 0, 0),
            Err(DriftError::ReferenceOutOfRange)
        );
        assert_eq!(
            TemperatureModel::new(CentiCelsius(30_001), 0, 0),
            Err(DriftError::ReferenceOutOfRange)
        );
        // b1 at its i32 limit: 1.95e-3 per centi-kelvin over 400 K is far
        // beyond 1/2.
        assert_eq!(
            TemperatureModel::new(CentiCelsius(2_500), i32::MAX, 0),
            Err(DriftError::CorrectionTooLarge)
        );
        // 1e-3 per kelvin over at most 275 K: 0.275 < 1/2.
        assert!(TemperatureModel::from_f64(25.0, 1e-3, 0.0).is_some());
        // b2 alone from a 100 °C reference: |ΔT| ≤ 200 K, so |g| < 1/2 needs
        // |b2| < 0.5/200² = 1.25e-5 per kelvin².
        assert!(TemperatureModel::from_f64(100.0, 0.0, -1.2e-5).is_some());
        assert!(TemperatureModel::from_f64(100.0, 0.0, -1.3e-5).is_none());
    }

    fn model() -> impl Strategy<Value = TemperatureModel> {
        (
            -5_500i32..=15_500,
            -200_000i32..=200_000,
            -2_000_000i32..=2_000_000,
        )
            .prop_filter_map("in range", |(r, b1, b2)| {
                TemperatureModel::new(CentiCelsius(r), b1, b2).ok()
            })
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(20_000))]

        /// `new` accepts exactly the models whose terms' bound
        /// |b1|·E + |b2|·E² (E the largest |ΔT| from the reference) lies
        /// below 1/2, computed in i128; and every accepted model has
        /// |g| < 1/2 across the domain (its worst over the domain, at the
        /// ends or at the parabola's vertex, in i128).
        #[test]
        fn new_bounds_g_across_the_domain(
            r in -10_000i32..=30_000,
            b1 in prop_oneof![any::<i32>(), -20_000_000i32..=20_000_000],
            b2 in prop_oneof![any::<i32>(), -100_000i32..=100_000, -100i32..=100],
        ) {
            let (lo, hi) = TEMPERATURE_DOMAIN;
            let e = i128::from((hi.0 - r).max(r - lo.0));
            let bound = i128::from(b1).abs() * e * (1 << 16) + i128::from(b2).abs() * e * e;
            let ok = TemperatureModel::new(CentiCelsius(r), b1, b2).is_ok();
            prop_assert_eq!(ok, bound < 1 << 55);
            let g_at = |d: i128| i128::from(b1) * d * (1 << 16) + i128::from(b2) * d * d;
            let d = |t: i32| i128::from(t) - i128::from(r);
            let mut worst = g_at(d(lo.0)).abs().max(g_at(d(hi.0)).abs());
            if b2 != 0 {
                let v = -(i128::from(b1) << 16) / (2 * i128::from(b2));
                if (i128::from(lo.0)..=i128::from(hi.0)).contains(&(i128::from(r) + v)) {
                    worst = worst.max(g_at(v).abs());
                }
            }
            prop_assert!(!ok || worst < 1 << 55);
        }

        /// The offset form within its stated bound of 1/(1 + g) − 1 for
        /// the exact g, over the whole temperature domain; and the factor
        /// form of the same correction, (1 + g)·(s − h), agrees with the
        /// compensated shift.
        #[test]
        fn offset_within_bound(m in model(), s in -0.9f64..=7.0, t in -10_000i32..=30_000) {
            let t_c = f64::from(t) / 100.0;
            let h = m.factor(CentiCelsius(t)).offset().to_f64();
            let one_plus_g = 1.0 + m.compensate_f64(0.0, t_c);
            let exact = 1.0 / one_plus_g - 1.0;
            let bound = m.offset_error_bound(t_c);
            prop_assert!((h - exact).abs() <= bound, "{} vs {} bound {}", h, exact, bound);
            prop_assert!(bound <= 2f64.powi(-27), "{}", bound);
            let compensated = m.compensate_f64(s, t_c);
            prop_assert!((one_plus_g * (s - h) - compensated).abs() <= 2.0 * bound + 1e-14);
        }

        /// Within the stated bound of the f64 twin over shifts −0.9…7 and
        /// the whole temperature domain.
        #[test]
        fn within_bound(m in model(), s in -0.9f64..=7.0, t in -10_000i32..=30_000) {
            let sq = Shift::from_f64(s).unwrap();
            let fixed = m.compensate(sq, CentiCelsius(t)).to_f64();
            let float = m.compensate_f64(sq.to_f64(), f64::from(t) / 100.0);
            let g = (1.0 + float) / (1.0 + sq.to_f64()) - 1.0;
            let bound = (1.0 + sq.to_f64()) * 2f64.powi(-32) + g.abs() * 2f64.powi(-30) + 2f64.powi(-40) + 1e-15;
            prop_assert!((fixed - float).abs() <= bound, "{} vs {} bound {}", fixed, float, bound);
        }

        /// The 32-bit-word arithmetic of `factor` and `apply` equals the
        /// same formulas in `i128`: g = b1·ΔT·2^16 + b2·ΔT², rounded to Q31;
        /// 1 + s rounded to Q29 and saturated; the product rounded to Q40.
        #[test]
        fn words_equal_the_i128_formulas(r in -10_000i32..=30_000, b1 in -(1i32 << 22)..(1 << 22), b2 in -(1i32 << 25)..(1 << 25), s in prop_oneof![any::<i64>(), -(1i64 << 41)..(1i64 << 44)], t in -12_000i32..32_000) {
            // These ranges keep |g| < 1/2 (accepted) for all but the
            // largest b2 at the far ends of the domain.
            let Ok(m) = TemperatureModel::new(CentiCelsius(r), b1, b2) else { return Ok(()) };
            let round = |x: i128, sh: u32| ((x >> (sh - 1)) + 1) >> 1;
            let d = i128::from(m.delta(CentiCelsius(t)));
            let g31 = round(i128::from(b1) * d * 65_536 + i128::from(b2) * d * d, 25);
            let f = m.factor(CentiCelsius(t));
            prop_assert_eq!(i128::from(f.g31), if b1 == 0 && b2 == 0 { 0 } else { g31 });
            prop_assert_eq!(i128::from(f.apply(Shift::from_raw_q40(s)).raw_q40()), apply_i128(f.g31, s));
            prop_assert_eq!(f.apply_saturated(Shift::from_raw_q40(s)), f.apply(Shift::from_raw_q40(s)));
        }

        /// g31 from 32-bit words equals g rounded from the exact `i64`
        /// formula, up to the largest accepted coefficients, with the
        /// reference at either end of the domain (|ΔT| up to 40 000).
        #[test]
        fn g31_equals_the_rounded_exact_g(r in prop_oneof![Just(-10_000i32), Just(30_000), -10_000i32..=30_000], b1 in -(1i32 << 24)..(1 << 24), b2 in -(1i32 << 25)..(1 << 25), t in -12_000i32..32_000) {
            let Ok(m) = TemperatureModel::new(CentiCelsius(r), b1, b2) else { return Ok(()) };
            let t = CentiCelsius(t);
            prop_assert_eq!(i64::from(m.g31(t)), round_asr(m.g_q56(t), 25));
        }

        /// The readers' factor without the clamp equals the factor at
        /// every temperature of the domain.
        #[test]
        fn factor_in_domain_is_factor(r in -10_000i32..=30_000, b1 in -(1i32 << 24)..(1 << 24), b2 in -(1i32 << 25)..(1 << 25), t in -10_000i32..=30_000) {
            let Ok(m) = TemperatureModel::new(CentiCelsius(r), b1, b2) else { return Ok(()) };
            prop_assert_eq!(m.factor_in_domain(CentiCelsius(t)), m.factor(CentiCelsius(t)));
            prop_assert_eq!(TemperatureModel::NONE.factor_in_domain(CentiCelsius(t)), TemperatureModel::NONE.factor(CentiCelsius(t)));
        }

        /// Arbitrary inputs never panic; any accepted model keeps |g| < 1/2.
        #[test]
        fn never_panics(r: i32, b1: i32, b2: i32, s: i64, t: i32) {
            if let Ok(m) = TemperatureModel::new(CentiCelsius(r), b1, b2) {
                let _ = m.compensate(Shift::from_raw_q40(s), CentiCelsius(t));
                prop_assert!(m.g_q56(CentiCelsius(t)).unsigned_abs() < 1 << 55);
            }
        }
    }
}
