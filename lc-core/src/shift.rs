//! The shift of a reading against the unit's rest point: the per-reading
//! hot path of the firmware.
//!
//! With period ratio p = ticks/cycles and the rest point p_rest (no target,
//! reference temperature), the **shift** is
//!
//! s = (p / p_rest)² − 1 = Δ(L·C) / (L·C)_rest,
//!
//! because the period of the tank is 2π·√(L·C). A target that lowers L (a
//! metal plate's eddy currents) gives s < 0; one that raises C (liquid
//! around a probe) gives s > 0.
//!
//! ## Format, domain, rounding and bound
//!
//! - Output: [`Shift`], `i64` Q23.40 (LSB 2^-40 ≈ 9.1e-13), representable
//!   from −1 up to 2^22.
//! - Declared domain: reference 1–200 MHz, sensor 10 kHz–30 MHz, rest point
//!   2^-8 ≤ p_rest < 2^20, the larger count at most 2^27 (134 217 728: a
//!   1.3 s gate at 100 MHz), shift −0.9 ≤ s ≤ 7.
//! - Bound against the exact value (and so against the `f64` twin):
//!   |s_fixed − s| ≤ (1 + s) · 1.04 · 2^-30 + 2^-41. The counter's own
//!   quantisation step at that reading is δs = 2·(1 + s)/n for one count of
//!   the quantised count n, so inside the domain the error is at most
//!   0.1 · δs / 1.6: the arithmetic never limits resolution. Outside the
//!   domain (larger counts) the relative bound still holds; it is just no
//!   longer below a tenth of a count.
//! - Rounding: the rest point's reciprocal and the normalised ratio are
//!   rounded to nearest; the one division (if any) truncates with at most
//!   2^-36 relative error in the domain (2^-31 for any `u32` count); the
//!   final shift is rounded to nearest, ties away from zero.
//!
//! ## Cost
//!
//! At construction the converter precomputes the rest point's reciprocal
//! 1/p_rest (and 1/(p_rest · N) for a reciprocal gate of N sensor cycles) as
//! a 32-bit mantissa with an exponent. Per reading:
//!
//! - cycles equal to the configured gate length N: r = ticks · m (one 32 ×
//!   32-bit multiply), a normalisation, and r² (a second multiply). **No
//!   division**, whether N is a power of two or not.
//! - any other count pair (direct gating, logged data): the same plus one
//!   64 ÷ 64-bit division by the cycle count.
//!
//! ```
//! use lc_core::counting::{CountPair, Gating};
//! use lc_core::shift::{RestPoint, Shift, ShiftConverter};
//!
//! let rest = RestPoint::from_counts(CountPair::new(1024, 16_384)).unwrap();
//! let conv = ShiftConverter::new(rest, Gating::Reciprocal, Some(1024)).unwrap();
//! // Period ratio 2 % above rest: s = 1.02² − 1 = 0.0404.
//! let reading = conv.convert(CountPair::new(1024, 16_712)).unwrap();
//! assert!((reading.shift().to_f64() - ((16_712.0f64 / 16_384.0).powi(2) - 1.0)).abs() < 1e-11);
//! // One tick moves the shift by about 2·(1 + s)/16_712.
//! let step = reading.quantisation_step().to_f64();
//! assert!((step - 2.0 * 1.0404 / 16_712.0).abs() < 1e-6);
//! ```

use crate::counting::{CountPair, Gate, Gating};
use crate::derived::{is_rounded_ratio, mul_wide};
use crate::fixed::{
    div_rem_u64_u32, mul_u32_wide, round_div_u128, round_shr_u64, shl_to_top, ARMV6M,
};
use crate::ratio::{period_ratio, PeriodRatio};
use core::fmt;

/// Why a shift could not be computed or a converter not built.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ShiftError {
    /// A count of the pair is zero.
    ZeroCount,
    /// The shift does not fit the Q23.40 format (s ≥ 2^22).
    OutOfRange,
    /// The rest point lies outside 2^-8 ≤ p_rest < 2^20.
    BadRestPoint,
}

impl fmt::Display for ShiftError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            ShiftError::ZeroCount => "count is zero",
            ShiftError::OutOfRange => "shift exceeds the fixed-point range",
            ShiftError::BadRestPoint => "rest point outside 2^-8 to 2^20 ticks per cycle",
        })
    }
}

impl core::error::Error for ShiftError {}

/// A shift s = Δ(L·C)/(L·C)_rest, `i64` Q23.40 (LSB 2^-40 ≈ 9.1e-13).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Shift(i64);

impl Shift {
    /// Fractional bits of the format.
    pub const FRAC_BITS: u32 = 40;
    /// One, as a raw value.
    pub const ONE_RAW: i64 = 1 << 40;
    /// Zero shift: the rest point.
    pub const ZERO: Shift = Shift(0);

    /// From the raw Q23.40 value.
    #[inline]
    pub const fn from_raw_q40(raw: i64) -> Self {
        Self(raw)
    }

    /// The raw Q23.40 value.
    #[inline]
    pub const fn raw_q40(self) -> i64 {
        self.0
    }

    /// The shift as `f64` (exact for |s| < 2^13).
    #[inline]
    pub fn to_f64(self) -> f64 {
        self.0 as f64 / 1_099_511_627_776.0
    }

    /// Parts per million, rounded to nearest (diagnostics and logs).
    #[inline]
    pub fn to_ppm_f64(self) -> f64 {
        self.to_f64() * 1e6
    }

    /// The nearest Q23.40 value to `s`, or `None` when `s` is not finite or
    /// outside the representable range. Host-side helper.
    pub fn from_f64(s: f64) -> Option<Self> {
        let scaled = libm::round(s * 1_099_511_627_776.0);
        if !(-9.223_372_036_854_775e18..9.223_372_036_854_775e18).contains(&scaled) {
            return None;
        }
        Some(Self(scaled as i64))
    }
}

/// The unit's rest point: its period ratio with no target at the reference
/// temperature, 2^-8 ≤ p_rest < 2^20 (Q20.44 raw value in 2^36..2^64).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct RestPoint(PeriodRatio);

impl RestPoint {
    /// A rest point from a period ratio, checked against the range.
    pub const fn from_ratio(ratio: PeriodRatio) -> Result<Self, ShiftError> {
        if ratio.raw_q44() < 1 << 36 {
            return Err(ShiftError::BadRestPoint);
        }
        Ok(Self(ratio))
    }

    /// A rest point [`RestPoint::from_ratio`] accepted before (a
    /// validated image's field), built without the check.
    pub(crate) const fn from_checked(ratio: PeriodRatio) -> Self {
        Self(ratio)
    }

    /// A rest point measured as one count pair.
    pub fn from_counts(pair: CountPair) -> Result<Self, ShiftError> {
        let ratio = period_ratio(pair).map_err(|_| ShiftError::BadRestPoint)?;
        Self::from_ratio(ratio)
    }

    /// The rest point's period ratio.
    #[inline]
    pub const fn ratio(&self) -> PeriodRatio {
        self.0
    }

    /// The rest point's period ratio as `f64`.
    #[inline]
    pub fn to_f64(&self) -> f64 {
        self.0.to_f64()
    }
}

/// A reciprocal 2^e / d as a 32-bit mantissa with its top bit set:
/// returns (m, e) with m = round(2^e / d) and 2^31 ≤ m < 2^32, so the
/// relative rounding error is at most 2^-32. `d` must be below 2^96.
fn reciprocal_mantissa(d: u128) -> Option<(u32, u32)> {
    if d == 0 || d >> 96 != 0 {
        return None;
    }
    let bits = 128 - d.leading_zeros(); // 2^(bits-1) ≤ d < 2^bits
    let mut e = bits + 31; // ≤ 127: 2^e / d lies in (2^31, 2^32]
    let mut m = round_div_u128(1u128 << e, d)?;
    if m >> 32 != 0 {
        // d was a power of two (or rounded up to 2^32): halve the scale.
        e -= 1;
        m = round_div_u128(1u128 << e, d)?;
    }
    u32::try_from(m).ok().map(|m| (m, e))
}

/// The configured gate length for `gating`: N for a reciprocal gate of N
/// cycles, 0 otherwise.
fn gate_of(gating: Gating, gate_cycles: Option<u32>) -> u32 {
    match (gating, gate_cycles) {
        (Gating::Reciprocal, Some(n)) if n > 0 => n,
        _ => 0,
    }
}

/// Whether (m, e) is [`reciprocal_mantissa`]`(d)` for d of the words `d`
/// (least significant first): m = round(2^e / d) with its top bit set
/// ([`is_rounded_ratio`], multiplies and compares only), and for
/// m = 2^31 not the pair that function passes over, the one where
/// 2^32 − 1 is round(2^(e+1) / d) (both are correctly rounded there; the
/// function takes the larger exponent).
#[inline(never)]
fn reciprocal_checked((m, e): (u32, u32), d: [u32; 3]) -> bool {
    m >> 31 != 0
        && is_rounded_ratio(m, 1, e, d)
        // e ≤ 127 here (checked): e + 1 cannot wrap.
        && (m != 1 << 31 || !is_rounded_ratio(u32::MAX, 1, e.wrapping_add(1), d))
}

/// The words of p and of p·N for p < 2^64, N < 2^32, from two 32 × 32-bit
/// products (a 128-bit multiply is several library calls on a Cortex-M0).
fn rest_words(p: u64, n: u32) -> ([u32; 3], [u32; 3]) {
    let (p0, p1) = (p as u32, (p >> 32) as u32); // exact halves
    let lo = mul_wide(p0, n);
    // p1·N + the carry word < 2^64: cannot wrap.
    let hi = mul_wide(p1, n).wrapping_add(lo >> 32);
    ([p0, p1, 0], [lo as u32, hi as u32, (hi >> 32) as u32])
}

/// Converts count pairs into shifts against one rest point.
///
/// Build it once (at calibration load); [`ShiftConverter::convert`] is the
/// per-reading path. See the [module docs](self) for format, domain, bound
/// and cost.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ShiftConverter {
    rest: RestPoint,
    gating: Gating,
    /// 1/p_rest ≈ inv_mant · 2^-(inv_exp) · 2^44 … stored as the exponent
    /// of r = ticks · inv_mant / cycles · 2^-inv_exp.
    inv_mant: u32,
    inv_exp: i32,
    /// Configured gate length in sensor cycles, 0 when none.
    gate_cycles: u32,
    /// 1/(p_rest · N): r = ticks · gate_mant · 2^-gate_exp.
    gate_mant: u32,
    gate_exp: i32,
    /// gate_exp − 33 when in 1..=31 (the in-domain shortcut), else 0.
    fast_c: u8,
}

impl ShiftConverter {
    /// A converter for `rest`, with readings gated by `gating`; for a
    /// reciprocal gate, `gate_cycles` is its fixed number of sensor cycles
    /// (pairs with exactly that many cycles take the division-free path).
    pub fn new(
        rest: RestPoint,
        gating: Gating,
        gate_cycles: Option<u32>,
    ) -> Result<Self, ShiftError> {
        let n = gate_of(gating, gate_cycles);
        let p = u128::from(rest.0.raw_q44());
        let inv = reciprocal_mantissa(p).ok_or(ShiftError::BadRestPoint)?;
        let gate = if n > 0 {
            reciprocal_mantissa(p * u128::from(n)).ok_or(ShiftError::BadRestPoint)?
        } else {
            (0, 0)
        };
        Self::from_reciprocals(rest, gating, n, inv, gate)
    }

    /// [`ShiftConverter::new`] with its two reciprocals given as
    /// (mantissa, exponent) pairs (1/p_rest and 1/(p_rest·N), as
    /// [`ShiftConverter::reciprocals`] returns them and a calibration image
    /// stores them): checked to be the ones `new` computes, by multiplies
    /// only. The same converter as `new`'s, or
    /// [`ShiftError::BadRestPoint`]. Start-up cost on a Cortex-M0: a few
    /// hundred instructions instead of two 128-bit divisions (about 8 800).
    pub fn with_reciprocals(
        rest: RestPoint,
        gating: Gating,
        gate_cycles: Option<u32>,
        rest_reciprocal: (u32, u32),
        gate_reciprocal: (u32, u32),
    ) -> Result<Self, ShiftError> {
        let n = gate_of(gating, gate_cycles);
        Self::check_reciprocals(rest, n, rest_reciprocal, gate_reciprocal)?;
        Self::from_reciprocals(rest, gating, n, rest_reciprocal, gate_reciprocal)
    }

    /// [`ShiftConverter::with_reciprocals`]'s checks for a reciprocal gate
    /// of `gate_cycles` (0: none, and then the gate's reciprocal (0, 0)),
    /// without building the converter.
    pub(crate) fn check_reciprocals(
        rest: RestPoint,
        gate_cycles: u32,
        rest_reciprocal: (u32, u32),
        gate_reciprocal: (u32, u32),
    ) -> Result<(), ShiftError> {
        let (p, pn) = rest_words(rest.0.raw_q44(), gate_cycles);
        let gate_ok = if gate_cycles > 0 {
            reciprocal_checked(gate_reciprocal, pn)
        } else {
            gate_reciprocal == (0, 0)
        };
        if reciprocal_checked(rest_reciprocal, p) && gate_ok {
            Ok(())
        } else {
            Err(ShiftError::BadRestPoint)
        }
    }

    /// The converter [`ShiftConverter::check_reciprocals`] accepted before
    /// (a validated image's rest point, gate of `gate_cycles` (0: none) and
    /// reciprocals), with a reciprocal gate, built without the checks.
    pub(crate) fn from_checked(
        rest: RestPoint,
        gate_cycles: u32,
        (inv_mant, e): (u32, u32),
        (gate_mant, ge): (u32, u32),
    ) -> Self {
        // Checked: e, ge ≤ 127, so the casts are exact and the subtractions
        // cannot wrap.
        let gate_exp = (ge as i32).wrapping_sub(44);
        let fast_c = match gate_exp.wrapping_sub(33) {
            c @ 1..=31 if gate_cycles > 0 => c as u8, // 1..=31 fits u8
            _ => 0,
        };
        Self {
            fast_c,
            rest,
            gating: Gating::Reciprocal,
            inv_mant,
            inv_exp: (e as i32).wrapping_sub(44),
            gate_cycles,
            gate_mant,
            gate_exp: if gate_cycles > 0 { gate_exp } else { 0 },
        }
    }

    /// The reciprocals as (mantissa, exponent) pairs: 1/p_rest ≈ m·2^-e in
    /// Q20.44 units of p_rest, and 1/(p_rest·N) ((0, 0) without a gate),
    /// for [`ShiftConverter::with_reciprocals`].
    pub const fn reciprocals(&self) -> ((u32, u32), (u32, u32)) {
        // The exponents are e − 44 with e ≤ 127 (`exp_i32`): e is back in
        // u32 exactly.
        let gate = if self.gate_cycles > 0 {
            (self.gate_mant, (self.gate_exp + 44) as u32)
        } else {
            (0, 0)
        };
        ((self.inv_mant, (self.inv_exp + 44) as u32), gate)
    }

    fn from_reciprocals(
        rest: RestPoint,
        gating: Gating,
        n: u32,
        (inv_mant, e): (u32, u32),
        (gate_mant, ge): (u32, u32),
    ) -> Result<Self, ShiftError> {
        let inv_exp = exp_i32(e)?;
        let gate_exp = if n > 0 { exp_i32(ge)? } else { 0 };
        let fast_c = match gate_exp - 33 {
            c @ 1..=31 if n > 0 => c as u8, // 1..=31 fits u8
            _ => 0,
        };
        Ok(Self {
            fast_c,
            rest,
            gating,
            inv_mant,
            inv_exp,
            gate_cycles: n,
            gate_mant,
            gate_exp,
        })
    }

    /// A converter for readings from `gate`.
    pub fn for_gate(rest: RestPoint, gate: Gate) -> Result<Self, ShiftError> {
        Self::new(rest, gate.gating(), gate.cycles())
    }

    /// The rest point.
    #[inline]
    pub const fn rest(&self) -> RestPoint {
        self.rest
    }

    /// The configured reciprocal gate, sensor cycles (`None` without one).
    #[inline]
    pub const fn gate_cycles(&self) -> Option<u32> {
        if self.gate_cycles > 0 {
            Some(self.gate_cycles)
        } else {
            None
        }
    }

    /// The gating of the readings.
    #[inline]
    pub const fn gating(&self) -> Gating {
        self.gating
    }

    /// The shift of one count pair.
    pub fn convert(&self, pair: CountPair) -> Result<ShiftReading, ShiftError> {
        let shift = self.shift(pair)?;
        Ok(ShiftReading {
            pair,
            gating: self.gating,
            shift,
        })
    }

    /// The shift of one count pair, without the reading around it.
    #[inline]
    pub fn shift(&self, pair: CountPair) -> Result<Shift, ShiftError> {
        let CountPair { cycles, ticks } = pair;
        if cycles == 0 || ticks == 0 {
            return Err(ShiftError::ZeroCount);
        }
        // r = p / p_rest = x · 2^-exp.
        if cycles == self.gate_cycles {
            let x = mul_u32_wide(ticks, self.gate_mant);
            if let Some(s) = self.square_in_domain(x) {
                return Ok(s);
            }
            return square_to_shift(x, self.gate_exp);
        }
        self.shift_by_division(ticks, cycles)
    }

    /// The division path of [`ShiftConverter::shift`], for non-zero ticks
    /// and cycles: what `shift` gives for a pair off the configured gate
    /// (cycles other than the gate's), by which the metal reader converts
    /// the pairs its fault window passes off the gate's accepted ticks.
    /// Out of line on ARMv6-M: inlined, its registers cost the
    /// configured-gate path spills on a Cortex-M0.
    #[cfg_attr(all(target_arch = "arm", not(target_has_atomic = "32")), inline(never))]
    pub(crate) fn shift_by_division(&self, ticks: u32, cycles: u32) -> Result<Shift, ShiftError> {
        // ticks ≥ 1 and inv_mant ≥ 2^31: x ≥ 2^31, so z ≤ 32.
        let (x, z) = shl_to_top(mul_wide(ticks, self.inv_mant));
        // x ≥ 2^63 and cycles < 2^32: the quotient has ≥ 32 bits.
        // z ≤ 32 and |inv_exp| < 2^8 (a rest point's scale): the sum
        // cannot wrap.
        let exp = self.inv_exp.wrapping_add(z as i32);
        // cycles ≥ 1: the division is always there.
        let q = div_rem_u64_u32(x, cycles).map_or(0, |(q, _)| q);
        square_to_shift(q, exp)
    }

    /// [`ShiftConverter::shift`] without the configured gate's shortcut
    /// (the same results, the gate's pairs by the general normalisation):
    /// for callers that took the shortcut already or never meet the gate
    /// (`Front::checked_shift`, a companion ratio). A firmware whose code
    /// calls only this links one copy of the shortcut, not two (about 200
    /// bytes on a Cortex-M0). Out of line: the readers' rare path.
    #[inline(never)]
    pub(crate) fn shift_general(&self, pair: CountPair) -> Result<Shift, ShiftError> {
        let CountPair { cycles, ticks } = pair;
        if cycles == 0 || ticks == 0 {
            return Err(ShiftError::ZeroCount);
        }
        if cycles == self.gate_cycles {
            return self.gate_general(ticks);
        }
        // Off the gate: `shift`'s own tests, repeated, fold away, and its
        // division path remains.
        self.shift(pair)
    }

    /// The shift of a pair of the configured gate's cycles with `ticks`
    /// ticks (non-zero: 0 gives a [`ShiftError::ZeroCount`]), by the
    /// general normalisation: what [`ShiftConverter::shift_general`] gives
    /// for such a pair, without its tests of the counts (a caller that
    /// knows the pair is on the gate: the metal reader, through the fault
    /// window's accepted ticks).
    #[inline(always)]
    pub(crate) fn gate_general(&self, ticks: u32) -> Result<Shift, ShiftError> {
        square_to_shift(mul_wide(ticks, self.gate_mant), self.gate_exp)
    }

    /// The shift of `ticks` over the configured gate when it lies in the
    /// declared domain (`None` otherwise, and for 0 ticks): what
    /// [`ShiftConverter::shift`] gives there, by the shortcut, inlined into
    /// the caller (`Front::checked_shift`, one copy per reader). On a
    /// Cortex-M0 the call of `shift` and its result passed through memory
    /// cost about a tenth of a proximity reading.
    #[inline(always)]
    pub(crate) fn gate_shortcut(&self, ticks: u32) -> Option<Shift> {
        // ticks = 0 gives x = 0, which `square_in_domain` refuses.
        self.square_in_domain(mul_u32_wide(ticks, self.gate_mant))
    }

    /// The configured-gate path's shortcut for 1/4 ≤ r < 4 (the declared
    /// shift domain and more): with x = r · 2^(c+33), the bits above 2^(c+31)
    /// say where r's leading bit is, so the normalisation needs no count of
    /// leading zeros. The result is bit-identical to [`square_to_shift`]:
    /// it picks the same 32-bit mantissa and exponent. `None` outside that
    /// range or when the gate's scale does not allow it.
    #[inline]
    fn square_in_domain(&self, x: u64) -> Option<Shift> {
        /// Position of q's leading bit for q in 1..16 (the class of r).
        const LEAD: [u8; 16] = [0xFF, 0, 1, 1, 2, 2, 2, 2, 3, 3, 3, 3, 3, 3, 3, 3];
        let c = u32::from(self.fast_c);
        if c == 0 {
            return None;
        }
        // Everything in 32-bit words: the ARMv6-M instruction set has
        // nothing wider. c ≤ 31: q = ⌊x / 2^(c+31)⌋ = ⌊4r⌋.
        let (hi, lo) = ((x >> 32) as u32, x as u32); // exact halves
        let q = hi.wrapping_shr(c - 1);
        let sh = u32::from(*LEAD.get(q as usize)?); // q < 16 or None; usize ≥ 32 bits
        if sh > 3 {
            return None;
        }
        // x ∈ [2^(c+31+sh), 2^(c+32+sh)): y = x >> a has exactly 32 bits,
        // a = c + sh in 1..=34; round to nearest with the next bit down.
        let a = c + sh;
        let (y, half) = if a < 32 {
            (hi.wrapping_shl(32 - a) | (lo >> a), (lo >> (a - 1)) & 1)
        } else if a == 32 {
            (hi, lo >> 31)
        } else {
            // a is 33 or 34 here: both shift counts are in range.
            (
                hi.wrapping_shr(a.wrapping_sub(32)),
                hi.wrapping_shr(a.wrapping_sub(33)) & 1,
            )
        };
        let (y, sh) = match y.checked_add(half) {
            Some(y) => (y, sh),
            None => (1 << 31, sh + 1), // rounded up to 2^32
        };
        // r = y · 2^(sh − 33), so r² in Q.40 is y² · 2^-b with b = 26 − 2·sh
        // in 18..=26: a 46-bit result, rounded to nearest.
        let sq = mul_u32_wide(y, y);
        let (sq_hi, sq_lo) = ((sq >> 32) as u32, sq as u32); // exact halves
        let b = 26 - 2 * sh;
        let u_hi = sq_hi >> b;
        let u_lo = (sq_hi << (32 - b)) | (sq_lo >> b);
        let (u_lo, carry) = u_lo.overflowing_add((sq_lo >> (b - 1)) & 1);
        let u = (i64::from(u_hi) << 32 | i64::from(u_lo)) + i64::from(carry);
        Some(Shift(u - Shift::ONE_RAW))
    }

    /// `f64` twin of [`ShiftConverter::shift`]: (ticks / (cycles · p_rest))² − 1
    /// with the same rest point.
    #[inline]
    pub fn shift_f64(&self, pair: CountPair) -> f64 {
        shift_f64(pair, self.rest.to_f64())
    }
}

/// s = r² − 1 from r = x · 2^-exp, x > 0: normalise x to a 32-bit mantissa
/// y rounded to nearest, square it exactly, and round into Q23.40.
#[inline(never)]
fn square_to_shift(x: u64, exp: i32) -> Result<Shift, ShiftError> {
    // x ≈ y · 2^(32 − z), so r ≈ y · 2^(32 − z − exp): the steps of
    // `fixed::normalise`, with the rounding's carry taken here, since x
    // may reach 2^64 − 1 and the carry then gives z = −1.
    let Some((z, top, round)) = crate::fixed::normalise_parts(x) else {
        return Err(ShiftError::ZeroCount);
    };
    let z = z as i32; // ≤ 63
    let (y, z) = match top.checked_add(round) {
        Some(y) => (y, z),
        None => (1 << 31, z.wrapping_sub(1)),
    };
    // s + 1 = r² = y² · 2^(2·(32 − z − exp)); in Q.40: y² · 2^k. With
    // −1 ≤ z ≤ 63 and |exp| < 2^9 (the converters' scales) k cannot wrap.
    let k = 32i32
        .wrapping_sub(z)
        .wrapping_sub(exp)
        .wrapping_mul(2)
        .wrapping_add(40);
    if k >= 0 {
        // y² ≥ 2^62, so r² ≥ 2^22: beyond the format.
        return Err(ShiftError::OutOfRange);
    }
    let u = round_shr_u64(square_u32(y), k.unsigned_abs());
    let u = i64::try_from(u).map_err(|_| ShiftError::OutOfRange)?;
    Ok(Shift(u - Shift::ONE_RAW))
}

/// y², exact. On ARMv6-M (a 32 × 32 → 32-bit multiply only) from the
/// halves y = a·2^16 + b: y² = a²·2^32 + ab·2^17 + b², three 16 × 16-bit
/// products where a general product takes four, inline; elsewhere the
/// one wide multiply.
#[inline(always)]
fn square_u32(y: u32) -> u64 {
    if ARMV6M {
        square_by_halves(y)
    } else {
        mul_u32_wide(y, y)
    }
}

/// [`square_u32`]'s ARMv6-M form: y² from the 16-bit halves of y.
#[inline(always)]
fn square_by_halves(y: u32) -> u64 {
    let (a, b) = (y >> 16, y & 0xFFFF);
    // Each product of two halves is below 2^32: no multiply wraps.
    let ab = a.wrapping_mul(b);
    let (lo, carry) = b.wrapping_mul(b).overflowing_add(ab << 17);
    // The high word of y² < 2^64: the sum is below 2^32 and cannot wrap.
    let hi = a
        .wrapping_mul(a)
        .wrapping_add(ab >> 15)
        .wrapping_add(u32::from(carry));
    (u64::from(hi) << 32) | u64::from(lo)
}

fn exp_i32(e: u32) -> Result<i32, ShiftError> {
    // e ≤ 127, and the Q20.44 scale of p_rest contributes 2^44.
    i32::try_from(e)
        .map(|e| e - 44)
        .map_err(|_| ShiftError::BadRestPoint)
}

/// The shift stage's stated error bound at shift `s`, against the exact
/// value: (1 + s)·1.04·2^-30 + 2^-41 (module docs). Host and verification
/// helper.
pub fn error_bound(s: f64) -> f64 {
    (1.0 + s).abs() * 1.04 * 9.313_225_746_154_785e-10 + 4.547_473_508_864_641e-13
}

/// `f64` reference of the shift: (ticks / (cycles · p_rest))² − 1.
#[inline]
pub fn shift_f64(pair: CountPair, rest_ratio: f64) -> f64 {
    let r = f64::from(pair.ticks) / (f64::from(pair.cycles) * rest_ratio);
    r * r - 1.0
}

/// One reading's shift, with the count pair it came from.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ShiftReading {
    pair: CountPair,
    gating: Gating,
    shift: Shift,
}

impl ShiftReading {
    /// The shift.
    #[inline]
    pub const fn shift(&self) -> Shift {
        self.shift
    }

    /// The count pair.
    #[inline]
    pub const fn pair(&self) -> CountPair {
        self.pair
    }

    /// The gating the pair came from.
    #[inline]
    pub const fn gating(&self) -> Gating {
        self.gating
    }

    /// The count that carries the ±1 quantisation.
    #[inline]
    pub const fn quantised_count(&self) -> u32 {
        self.gating.quantised_count(self.pair)
    }

    /// The counter's quantisation step at this reading: the change of the
    /// shift for one count of the quantised count n, to first order
    /// δs = 2·(1 + s)/n, rounded to nearest. Costs one division; not part of
    /// the per-reading path.
    pub fn quantisation_step(&self) -> Shift {
        let n = u128::from(self.quantised_count());
        // 1 + s ≥ 0 and < 2^63 for any valid reading.
        let one_plus = u128::from(self.shift.0.saturating_add(Shift::ONE_RAW).unsigned_abs());
        let step = round_div_u128(2 * one_plus, n).unwrap_or(0);
        Shift(i64::try_from(step).unwrap_or(i64::MAX))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn rest(p: f64) -> RestPoint {
        RestPoint::from_ratio(PeriodRatio::from_f64(p).unwrap()).unwrap()
    }

    #[test]
    fn rest_point_range() {
        assert_eq!(
            RestPoint::from_ratio(PeriodRatio::from_raw_q44((1 << 36) - 1)),
            Err(ShiftError::BadRestPoint)
        );
        assert!(RestPoint::from_ratio(PeriodRatio::from_raw_q44(1 << 36)).is_ok());
        assert!(RestPoint::from_ratio(PeriodRatio::from_raw_q44(u64::MAX)).is_ok());
        assert_eq!(
            RestPoint::from_counts(CountPair::new(0, 10)),
            Err(ShiftError::BadRestPoint)
        );
        assert_eq!(
            RestPoint::from_counts(CountPair::new(1, u32::MAX)),
            Err(ShiftError::BadRestPoint)
        );
    }

    /// The words of p and p·N equal the 128-bit values, at the ends of the
    /// ranges and between.
    /// The square from the halves is the exact square, at the ends of
    /// each half's range and where the middle product's carry goes up.
    #[test]
    fn square_by_halves_is_exact() {
        for y in [
            0,
            1,
            0xFFFF,
            0x1_0000,
            0x8000_0000,
            0xFFFF_0000,
            0x0001_FFFF,
            0xFFFF_FFFF,
            0xB504_F334,
        ] {
            assert_eq!(square_by_halves(y), u64::from(y) * u64::from(y), "{y:#x}");
        }
    }

    #[test]
    fn rest_words_are_the_products() {
        let value =
            |w: [u32; 3]| u128::from(w[0]) | u128::from(w[1]) << 32 | u128::from(w[2]) << 64;
        for p in [0, 1, 1 << 36, 139_542u64 << 30, u64::MAX - 1, u64::MAX] {
            for n in [0, 1, 16_384, u32::MAX - 1, u32::MAX] {
                let (a, b) = rest_words(p, n);
                assert_eq!(value(a), u128::from(p));
                assert_eq!(value(b), u128::from(p) * u128::from(n), "{p} {n}");
            }
        }
    }

    /// A converter rebuilt from what validation found (`check_reciprocals`,
    /// `from_checked`) is the one `new` builds.
    #[test]
    fn from_checked_rebuilds_the_converter() {
        for (raw, n) in [
            (1u64 << 36, 1),
            (1 << 44, 4_096),
            (u64::MAX, u32::MAX),
            (139_542u64 << 30, 16_384),
            (3 << 43, 0),
        ] {
            let rest = RestPoint::from_ratio(PeriodRatio::from_raw_q44(raw)).unwrap();
            let gate = (n > 0).then_some(n);
            let c = ShiftConverter::new(rest, Gating::Reciprocal, gate).unwrap();
            let (r, g) = c.reciprocals();
            ShiftConverter::check_reciprocals(rest, n, r, g).unwrap();
            assert_eq!(ShiftConverter::from_checked(rest, n, r, g), c, "{raw} {n}");
            assert!(ShiftConverter::check_reciprocals(rest, n, (r.0 ^ 1, r.1), g).is_err());
            assert!(ShiftConverter::check_reciprocals(rest, n, (r.0, r.1 + 1), g).is_err());
            if n > 0 {
                assert!(ShiftConverter::check_reciprocals(rest, n, r, (g.0, g.1 - 1)).is_err());
            } else {
                assert!(ShiftConverter::check_reciprocals(rest, n, r, (1 << 31, 70)).is_err());
            }
        }
    }

    /// The stored-reciprocal check accepts exactly what
    /// `reciprocal_mantissa` computes: its mantissa with its exponent, and
    /// not the mantissa one off either way, nor the other correctly
    /// rounded pair where there are two.
    #[test]
    fn reciprocal_check_accepts_exactly_the_computed_mantissa() {
        let mut x = 0x9E37_79B9_7F4A_7C15u64;
        let mut ds: Vec<u128> = vec![
            1,
            2,
            3,
            7,
            1 << 36,
            (1 << 64) - 1,
            10 << 44,
            (1 << 95) + 12345,
            (1 << 96) - 1,
            1 << 95,
            (1 << 40) + 1,
            (1 << 40) - 1,
        ];
        for _ in 0..20_000 {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            let shift = (x % 96) as u32;
            ds.push(
                (u128::from(x) << 32 | u128::from(x >> 17)) >> (128 - 96 + shift)
                    | 1 << (95 - shift),
            );
        }
        for d in ds {
            let (m, e) = reciprocal_mantissa(d).unwrap();
            let d_words = [d as u32, (d >> 32) as u32, (d >> 64) as u32];
            assert!(reciprocal_checked((m, e), d_words), "d {d}");
            for wrong in [
                (m.wrapping_add(1), e),
                (m.wrapping_sub(1), e),
                (m, e + 1),
                (m, e - 1),
            ] {
                assert!(!reciprocal_checked(wrong, d_words), "d {d} {wrong:?}");
            }
            // The neighbouring scale's normal mantissa, which is also
            // correctly rounded in the one case of two such pairs: refused.
            let other = if m == u32::MAX {
                (1 << 31, e - 1)
            } else if m == 1 << 31 {
                (u32::MAX, e + 1)
            } else {
                continue;
            };
            assert!(!reciprocal_checked(other, d_words), "d {d} {other:?}");
        }
    }

    #[test]
    fn reciprocal_mantissa_is_normalised_and_nearest() {
        for d in [
            1u128,
            2,
            3,
            7,
            1 << 36,
            (1 << 64) - 1,
            10 << 44,
            (1 << 95) + 12345,
        ] {
            let (m, e) = reciprocal_mantissa(d).unwrap();
            assert!(m >> 31 == 1, "d {d}");
            // |m·d − 2^e| ≤ d/2
            let err = (u128::from(m) * d).abs_diff(1u128 << e);
            assert!(2 * err <= d, "d {d}");
        }
        assert_eq!(reciprocal_mantissa(0), None);
        assert_eq!(reciprocal_mantissa(1 << 96), None);
    }

    /// A converter from its stored reciprocals is the converter `new`
    /// builds; a wrong one is refused.
    #[test]
    fn with_reciprocals_is_new() {
        for (cycles, ticks) in [
            (4096u32, 40_960u32),
            (16_384, 139_542),
            (16_384, 541_292),
            (1, 1),
        ] {
            let rest = RestPoint::from_counts(CountPair::new(cycles, ticks)).unwrap();
            for gate in [None, Some(4096), Some(16_384), Some(u32::MAX)] {
                let Ok(c) = ShiftConverter::new(rest, Gating::Reciprocal, gate) else {
                    continue;
                };
                let (r, g) = c.reciprocals();
                let with =
                    |r, g| ShiftConverter::with_reciprocals(rest, Gating::Reciprocal, gate, r, g);
                assert_eq!(with(r, g), Ok(c));
                assert!(with((r.0 ^ 1, r.1), g).is_err());
                if gate.is_some() {
                    assert!(with(r, (g.0 ^ 1, g.1)).is_err());
                }
            }
        }
    }

    #[test]
    fn rest_gives_zero_and_known_shifts() {
        let r = RestPoint::from_counts(CountPair::new(4096, 40_960)).unwrap();
        for gate in [None, Some(4096), Some(4095)] {
            let c = ShiftConverter::new(r, Gating::Reciprocal, gate).unwrap();
            assert_eq!(c.shift(CountPair::new(4096, 40_960)), Ok(Shift::ZERO));
            // Doubling the period ratio: s = 3 exactly.
            assert_eq!(
                c.shift(CountPair::new(4096, 81_920)).unwrap().raw_q40(),
                3 << 40
            );
            // Halving it: s = −0.75 exactly.
            assert_eq!(
                c.shift(CountPair::new(4096, 20_480)).unwrap().raw_q40(),
                -(3 << 38)
            );
        }
    }

    #[test]
    fn edge_cases_are_typed_errors() {
        let c = ShiftConverter::new(rest(10.0), Gating::Direct, None).unwrap();
        assert_eq!(c.shift(CountPair::new(0, 5)), Err(ShiftError::ZeroCount));
        assert_eq!(c.shift(CountPair::new(5, 0)), Err(ShiftError::ZeroCount));
        // s ≈ (2^32/10)² far beyond 2^22.
        assert_eq!(
            c.shift(CountPair::new(1, u32::MAX)),
            Err(ShiftError::OutOfRange)
        );
        // Tiny ratio: s → −1 without panic.
        let s = c.shift(CountPair::new(u32::MAX, 1)).unwrap();
        assert_eq!(s.raw_q40(), -Shift::ONE_RAW);
        let s = c
            .shift(CountPair::new(u32::MAX, u32::MAX))
            .unwrap()
            .to_f64();
        assert!((s - (0.01 - 1.0)).abs() <= 0.01 * 1.04 * 2f64.powi(-30) + 2f64.powi(-41));
        // Just below and above the format edge s = 2^22 − 1 → r² = 2^22.
        let edge = ShiftConverter::new(rest(1.0), Gating::Direct, None).unwrap();
        assert!(edge.shift(CountPair::new(1, 2047)).is_ok());
        assert_eq!(
            edge.shift(CountPair::new(1, 2048)),
            Err(ShiftError::OutOfRange)
        );
    }

    #[test]
    fn quantisation_step_of_a_reading() {
        let c = ShiftConverter::new(rest(10.0), Gating::Reciprocal, Some(1000)).unwrap();
        let r = c.convert(CountPair::new(1000, 10_000)).unwrap();
        assert_eq!(r.quantised_count(), 10_000);
        // 2·(1 + 0)/10_000, rounded to the nearest 2^-40.
        assert!((r.quantisation_step().to_f64() - 2e-4).abs() <= 2f64.powi(-41));
        let d = ShiftConverter::new(rest(10.0), Gating::Direct, None).unwrap();
        let r = d.convert(CountPair::new(1000, 10_000)).unwrap();
        assert!((r.quantisation_step().to_f64() - 2e-3).abs() <= 2f64.powi(-41));
    }

    /// The shortcut at its class edges and rounding carries equals the
    /// general normalisation, for gates whose scale c spans 1..=31.
    #[test]
    fn shortcut_edges_equal_general_path() {
        let mut seen = [false; 32];
        for k in 1..32u32 {
            let rest_ticks = (1u32 << k) | (0x2545_F491 & ((1 << k) - 1));
            for n in [1u32, 3, 4096] {
                let Ok(rest) = RestPoint::from_counts(CountPair::new(n, rest_ticks)) else {
                    continue;
                };
                let conv = ShiftConverter::new(rest, Gating::Reciprocal, Some(n)).unwrap();
                let c = u32::from(conv.fast_c);
                if c == 0 {
                    continue;
                }
                seen[c as usize] = true;
                for sh in 0..4u32 {
                    let a = c + sh;
                    if a + 32 > 64 {
                        continue; // x < 2^64 never reaches this class
                    }
                    let lo_edge = 1u64 << (a + 31);
                    let carry = (u64::from(u32::MAX) << a) | (1 << (a - 1));
                    for x in [
                        lo_edge,
                        lo_edge - 1,
                        lo_edge + 1,
                        carry,
                        carry - 1,
                        (lo_edge << 1).wrapping_sub(1),
                    ] {
                        if let Some(s) = conv.square_in_domain(x) {
                            assert_eq!(
                                Ok(s),
                                square_to_shift(x, conv.gate_exp),
                                "c {c} sh {sh} x {x:#x}"
                            );
                        }
                    }
                }
            }
        }
        assert!(seen[1..31].iter().all(|&v| v), "scales covered: {seen:?}");
    }

    /// One point of the declared domain: a converter, a pair, and the gate.
    #[derive(Debug, Clone)]
    struct Case {
        rest_ratio: f64,
        pair: CountPair,
        gate_cycles: Option<u32>,
    }

    const MAX_COUNT: u32 = 1 << 27;

    fn domain() -> impl Strategy<Value = Case> {
        (
            1.0e6f64..=200.0e6,
            1.0e4f64..=30.0e6,
            -0.9f64..=7.0,
            1u32..=MAX_COUNT,
            any::<bool>(),
            any::<bool>(),
        )
            .prop_filter_map(
                "counts in domain",
                |(f_ref, f_rest, s, n, ticks_larger, gated)| {
                    let rest_ratio = PeriodRatio::from_f64(f_ref / f_rest)?.to_f64();
                    let p = rest_ratio * libm::sqrt(1.0 + s);
                    let (cycles, ticks) = if ticks_larger {
                        (libm::round(f64::from(n) / p), f64::from(n))
                    } else {
                        (f64::from(n), libm::round(f64::from(n) * p))
                    };
                    if !(1.0..=f64::from(MAX_COUNT)).contains(&cycles)
                        || !(1.0..=f64::from(MAX_COUNT)).contains(&ticks)
                    {
                        return None;
                    }
                    let pair = CountPair::new(cycles as u32, ticks as u32);
                    let exact = shift_f64(pair, rest_ratio);
                    if !(-0.9..=7.0).contains(&exact) {
                        return None;
                    }
                    Some(Case {
                        rest_ratio,
                        pair,
                        gate_cycles: gated.then_some(pair.cycles),
                    })
                },
            )
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(50_000))]

        /// Fixed shift vs its f64 twin over the declared domain, on both the
        /// division-free (configured gate) and the division path: within the
        /// stated bound, and within a tenth of the quantisation step.
        #[test]
        fn shift_within_a_tenth_of_a_step(case in domain()) {
            let rest = RestPoint::from_ratio(PeriodRatio::from_f64(case.rest_ratio).unwrap()).unwrap();
            let conv = ShiftConverter::new(rest, Gating::Reciprocal, case.gate_cycles).unwrap();
            let fixed = conv.shift(case.pair).unwrap().to_f64();
            let float = conv.shift_f64(case.pair);
            let err = (fixed - float).abs();
            let bound = (1.0 + float) * 1.04 * 2f64.powi(-30) + 2f64.powi(-41) + 1e-15;
            prop_assert!(err <= bound, "err {err:e} bound {bound:e}");
            let step = 2.0 * (1.0 + float) / f64::from(case.pair.max_count());
            prop_assert!(err <= 0.1 * step, "err {err:e} step {step:e}");
        }

        #[test]
        fn square_by_halves_is_the_square(y: u32) {
            prop_assert_eq!(square_by_halves(y), u64::from(y) * u64::from(y));
        }

        #[test]
        fn shortcut_equals_general_path(case in domain()) {
            let rest = RestPoint::from_ratio(PeriodRatio::from_f64(case.rest_ratio).unwrap()).unwrap();
            let conv = ShiftConverter::new(rest, Gating::Reciprocal, Some(case.pair.cycles)).unwrap();
            let x = mul_u32_wide(case.pair.ticks, conv.gate_mant);
            let fast = conv.square_in_domain(x);
            if conv.fast_c != 0 {
                prop_assert!(fast.is_some(), "in-domain reading missed the shortcut");
            }
            if let Some(s) = fast {
                prop_assert_eq!(Ok(s), square_to_shift(x, conv.gate_exp));
            }
            if let Some(s) = conv.gate_shortcut(case.pair.ticks) {
                prop_assert_eq!(Ok(s), conv.shift(case.pair));
            }
        }

        #[test]
        fn shortcut_equals_general_path_anywhere(rest_raw in (1u64 << 36).., n in 1u32.., ticks in 1u32..) {
            let rest = RestPoint::from_ratio(PeriodRatio::from_raw_q44(rest_raw)).unwrap();
            let conv = ShiftConverter::new(rest, Gating::Reciprocal, Some(n)).unwrap();
            let x = mul_u32_wide(ticks, conv.gate_mant);
            if let Some(s) = conv.square_in_domain(x) {
                prop_assert_eq!(Ok(s), square_to_shift(x, conv.gate_exp));
            }
        }

        /// The readers' entries (the inlined shortcut, the general path)
        /// give what `shift` gives, for any pair and gate (the configured
        /// one, another, none, zero counts).
        #[test]
        fn inlined_entry_equals_shift(rest_raw in (1u64 << 36).., gate: Option<u32>, cycles: u32, ticks: u32, on_gate: bool) {
            let rest = RestPoint::from_ratio(PeriodRatio::from_raw_q44(rest_raw)).unwrap();
            let conv = ShiftConverter::new(rest, Gating::Reciprocal, gate).unwrap();
            let cycles = match (on_gate, gate) {
                (true, Some(g)) => g,
                _ => cycles,
            };
            let pair = CountPair::new(cycles, ticks);
            prop_assert_eq!(conv.shift_general(pair), conv.shift(pair));
            // As `Front::checked_shift` takes it: on the gate's cycles.
            if gate == Some(cycles) {
                if let Some(s) = conv.gate_shortcut(ticks) {
                    prop_assert_eq!(Ok(s), conv.shift(pair));
                }
            }
        }

        /// Any pair and rest point: never a panic; any success is within the
        /// relative bound that holds for every u32 count.
        #[test]
        fn shift_never_panics(rest_raw in (1u64 << 36).., cycles: u32, ticks: u32, gate: Option<u32>, direct: bool) {
            let rest = RestPoint::from_ratio(PeriodRatio::from_raw_q44(rest_raw)).unwrap();
            let gating = if direct { Gating::Direct } else { Gating::Reciprocal };
            let conv = ShiftConverter::new(rest, gating, gate).unwrap();
            if let Ok(r) = conv.convert(CountPair::new(cycles, ticks)) {
                let float = conv.shift_f64(r.pair());
                let fixed = r.shift().to_f64();
                prop_assert!((fixed - float).abs() <= (1.0 + float) * 2f64.powi(-29) + 2f64.powi(-40));
                let _ = r.quantisation_step();
            }
        }
    }
}
