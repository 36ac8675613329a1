//! Integer helpers shared by the fixed-point stages.
//!
//! Formats are written `Qm.n`: an integer holding a value times 2^n, with m
//! integer bits. Every helper says how it rounds. None of them panics.
//!
//! ```
//! use lc_core::fixed::{mul_u32_wide, round_shr_u64};
//! assert_eq!(mul_u32_wide(u32::MAX, u32::MAX), 0xFFFF_FFFE_0000_0001);
//! assert_eq!(round_shr_u64(5, 1), 3); // 2.5 rounds up (half away from zero)
//! assert_eq!(round_shr_u64(u64::MAX, 64), 1);
//! ```

/// Full 64-bit product of two `u32`. Exact.
///
/// ARMv6-M (Cortex-M0/M0+) has only a 32 × 32 → 32-bit multiply, and the
/// compiler's generic 64-bit multiply routine costs about 40 instructions
/// there; four 16 × 16-bit partial products (`mul_u32_wide_parts`) cost
/// about 20. Elsewhere the native widening multiply is used (one `UMULL` on
/// ARMv7-M). ARMv6-M is recognised as the ARM profile without
/// compare-and-swap atomics.
#[inline]
pub fn mul_u32_wide(a: u32, b: u32) -> u64 {
    if ARMV6M {
        mul_u32_wide_parts(a, b)
    } else {
        u64::from(a) * u64::from(b)
    }
}

/// [`mul_u32_wide`] by 16 × 16-bit partial products (compiled everywhere so
/// host tests hold it equal to the native product).
///
/// The cross products enter the low word through carries. Written with
/// the cross products' halves summed into a middle term instead, the same
/// arithmetic is recognised by the optimizer as a 64-bit multiply in some
/// callers, and on ARMv6-M that is a call of `__aeabi_lmul`; in this form
/// it stays inline (measured: no `__aeabi_lmul` left on the readers' and
/// the NTC conversion's paths).
#[inline]
fn mul_u32_wide_parts(a: u32, b: u32) -> u64 {
    let (a0, a1) = (a & 0xFFFF, a >> 16);
    let (b0, b1) = (b & 0xFFFF, b >> 16);
    // Each partial product of two 16-bit halves fits in u32.
    let p00 = a0 * b0;
    let p01 = a0 * b1;
    let p10 = a1 * b0;
    let p11 = a1 * b1;
    let (lo, c1) = p00.overflowing_add(p01 << 16);
    let (lo, c2) = lo.overflowing_add(p10 << 16);
    // The high word: below 2^32 since the product is.
    let hi = p11 + (p01 >> 16) + (p10 >> 16) + u32::from(c1) + u32::from(c2);
    (u64::from(hi) << 32) | u64::from(lo)
}

/// Full 64-bit product of an `i32` and a `u32`. Exact.
///
/// From the unsigned product of a's two's-complement bits and b: a negative
/// a reads as a + 2^32 there, so b is taken off the high word. One product
/// and one subtraction, no negation of the operand or the 64-bit result.
#[inline]
pub fn mul_i32_u32_wide(a: i32, b: u32) -> i64 {
    let p = mul_u32_wide(a as u32, b);
    let (hi, lo) = ((p >> 32) as u32, p as u32); // exact halves
    let hi = if a < 0 { hi.wrapping_sub(b) } else { hi };
    ((u64::from(hi) << 32) | u64::from(lo)) as i64
}

/// `x / 2^sh` rounded to nearest, ties away from zero. `sh` may be 0..=64
/// and larger (the result is then 0). Exact otherwise; never overflows
/// (`u64::MAX` shifted by 1 gives 2^63).
#[inline]
pub fn round_shr_u64(x: u64, sh: u32) -> u64 {
    match sh {
        0 => x,
        // One 64-bit shift instead of two (each is a library call on
        // ARMv6-M): keep the half bit, then halve with rounding.
        1..=64 => {
            let t = shr_u64(x, sh - 1);
            (t >> 1) + (t & 1)
        }
        _ => 0,
    }
}

/// `x >> sh` for `sh` in 0..=63 (larger gives 0). On ARMv6-M it is done in
/// 32-bit halves, inline (`shr_u64_words`), instead of the compiler's
/// 64-bit shift library call; elsewhere it is the native shift. Exact.
#[inline]
pub fn shr_u64(x: u64, sh: u32) -> u64 {
    if ARMV6M {
        shr_u64_words(x, sh)
    } else {
        x.checked_shr(sh).unwrap_or(0)
    }
}

/// [`shr_u64`] in 32-bit halves (compiled everywhere so host tests hold it
/// equal to the native shift).
#[inline]
fn shr_u64_words(x: u64, sh: u32) -> u64 {
    let (hi, lo) = ((x >> 32) as u32, x as u32); // exact halves
    match sh {
        0 => x,
        1..=31 => (u64::from(hi >> sh) << 32) | u64::from((lo >> sh) | (hi << (32 - sh))),
        32..=63 => u64::from(hi >> (sh - 32)),
        _ => 0,
    }
}

/// `x / 2^sh` rounded to nearest, ties away from zero, for `u128`. `sh`
/// larger than 128 gives 0.
#[inline]
pub fn round_shr_u128(x: u128, sh: u32) -> u128 {
    match sh {
        0 => x,
        1..=127 => ((x >> (sh - 1)) & 1) + (x >> sh),
        128 => x >> 127,
        _ => 0,
    }
}

/// `n / d` rounded to nearest, ties away from zero, or `None` when `d` is
/// zero. Never overflows: the rounding uses the remainder, not `n + d/2`.
///
/// Costly on 32-bit cores (the compiler expands a 128-bit division as a
/// bit-serial loop), so it is kept out of line and used only where a
/// calibration is loaded, never per reading.
#[inline(never)]
pub fn round_div_u128(n: u128, d: u128) -> Option<u128> {
    let q = n.checked_div(d)?;
    let r = n % d;
    // r < d, so d - r > 0; round up when r >= d - r, i.e. 2r >= d.
    Some(if r >= d - r { q + 1 } else { q })
}

/// `a · 2^32 / d` rounded to nearest, ties away from zero, or `None` when
/// `d` is zero or the result does not fit 64 bits. Exact: two 64 ÷ 32-bit
/// long-division steps with the remainder carried, the same result as the
/// 128-bit division at a fraction of its cost on a 32-bit core.
pub fn round_div_shl32(a: u64, d: u32) -> Option<u64> {
    if d == 0 {
        return None;
    }
    let d = u64::from(d);
    let (q1, r1) = (a / d, a % d);
    if q1 >> 32 != 0 {
        return None; // a/d ≥ 2^32: the result is ≥ 2^64
    }
    // r1 < d < 2^32, so r1 · 2^32 fits and its quotient is below 2^32.
    let n2 = r1 << 32;
    let (q2, r2) = (n2 / d, n2 % d);
    let q = (q1 << 32) | q2;
    if r2 >= d - r2 {
        q.checked_add(1)
    } else {
        Some(q)
    }
}

/// Whether this is ARMv6-M (Cortex-M0/M0+): no divide, no count of leading
/// zeros, only a 32 × 32 → 32-bit multiply.
pub(crate) const ARMV6M: bool = cfg!(all(target_arch = "arm", not(target_has_atomic = "32")));

/// Leading zeros of a `u32`. ARMv6-M has no count-leading-zeros
/// instruction; there a five-step binary search inline
/// ([`leading_zeros_steps`]) replaces the library's count, a call of about
/// 30 instructions.
#[inline]
pub(crate) fn leading_zeros_u32(x: u32) -> u32 {
    if ARMV6M {
        leading_zeros_steps(x)
    } else {
        x.leading_zeros()
    }
}

/// [`leading_zeros_u32`] by binary search (compiled everywhere so host tests
/// hold it equal to `u32::leading_zeros`).
#[inline]
fn leading_zeros_steps(x: u32) -> u32 {
    if x == 0 {
        return 32;
    }
    let (mut v, mut z) = (x, 0);
    for step in [16u32, 8, 4, 2, 1] {
        if v >> (32 - step) == 0 {
            v <<= step;
            z += step;
        }
    }
    z
}

/// Leading zeros of a `u64`. On ARMv6-M a binary search on the words
/// ([`leading_zeros_words`]) replaces the library's count, a call of about
/// 50 instructions per word there.
#[inline]
fn leading_zeros_u64(x: u64) -> u32 {
    if ARMV6M {
        leading_zeros_words(x)
    } else {
        x.leading_zeros()
    }
}

/// [`leading_zeros_u64`] by binary search in 32-bit words (compiled
/// everywhere so host tests hold it equal to `u64::leading_zeros`).
#[inline]
fn leading_zeros_words(x: u64) -> u32 {
    let (hi, lo) = ((x >> 32) as u32, x as u32);
    if hi != 0 {
        leading_zeros_steps(hi)
    } else {
        32 + leading_zeros_steps(lo)
    }
}

/// `x` as a 32-bit mantissa with its top bit set, rounded to nearest, and
/// the exponent e with x ≈ m · 2^e. `x` must not be 0.
fn mantissa32(x: u64) -> (u32, i32) {
    let z = leading_zeros_u64(x); // x > 0: z ≤ 63
    let v = shl_u64(x, z);
    let top = (v >> 32) as u32; // the top half: exact
    let e = 32 - z as i32; // z ≤ 63
    match top.checked_add(((v >> 31) & 1) as u32) {
        Some(m) => (m, e),
        None => (1 << 31, e + 1), // rounded up to 2^32
    }
}

/// `x << sh` for `sh` in 0..=63, in 32-bit words on ARMv6-M (no library
/// call). Bits shifted out are lost.
#[inline]
fn shl_u64(x: u64, sh: u32) -> u64 {
    if ARMV6M {
        let (hi, lo) = ((x >> 32) as u32, x as u32);
        match sh {
            0 => x,
            1..=31 => (u64::from((hi << sh) | (lo >> (32 - sh))) << 32) | u64::from(lo << sh),
            32..=63 => u64::from(lo << (sh - 32)) << 32,
            _ => 0,
        }
    } else {
        x.checked_shl(sh).unwrap_or(0)
    }
}

/// Quotient and remainder of `a · 2^32 / b` for normalised `a`, `b` (top
/// bit set): the quotient lies in (2^31, 2^33). Exact. On ARMv6-M, which
/// has no divide instruction, a reciprocal by Newton steps and a corrected
/// estimate ([`div_normalised_newton`]) replace the library's 64 ÷ 64-bit
/// division.
#[inline]
fn div_normalised(a: u32, b: u32) -> (u64, u32) {
    if ARMV6M {
        div_normalised_newton(a, b)
    } else {
        let n = u64::from(a) << 32;
        let d = u64::from(b.max(1));
        (n / d, (n % d) as u32) // remainder < d < 2^32
    }
}

/// 2^40/(256 + i + 1/2) rounded, for i in 0..256: the reciprocal of a
/// normalised divisor from its top 9 bits, to about 2^-9 (the seed of
/// [`div_normalised_newton`]). 512 bytes of flash.
const RECIPROCAL_SEED: [u16; 256] = {
    let mut t = [0u16; 256];
    let mut i = 0;
    while i < 256 {
        // 2^25/(513 + 2i) lies in (32 799, 65 409): fits u16.
        let d = 513 + 2 * i as u64;
        t[i] = ((((1u64 << 25) << 1) / d + 1) >> 1) as u16;
        i += 1;
    }
    t
};

/// [`div_normalised`] with multiplies only (ARMv6-M has no divide but a
/// 32-bit multiply): a reciprocal v ≈ 2^63/b from [`RECIPROCAL_SEED`] and
/// two Newton steps v += v·(2^63 − b·v)/2^63, the quotient estimate
/// a·v·2^-31, and the exact remainder a·2^32 − q·b to correct it (a few
/// steps at most). Exact; compiled everywhere so host tests hold it equal
/// to the division.
#[inline]
fn div_normalised_newton(a: u32, b: u32) -> (u64, u32) {
    let b = b | (1 << 31); // normalised by contract; keeps the seed's index in range
    let mut v = u32::from(RECIPROCAL_SEED[((b >> 23) & 0xFF) as usize]) << 16;
    for _ in 0..2 {
        // e = 2^63 − b·v, |e| < 2^56: its top bits times v.
        let e = (1u64 << 63).wrapping_sub(mul_u32_wide(b, v)) as i64;
        let e31 = (e >> 31) as i32; // |e| < 2^56: fits after the shift
        let corr = (mul_u32_wide(v, e31.unsigned_abs()) >> 32) as u32;
        v = if e31 < 0 {
            v.wrapping_sub(corr)
        } else {
            v.saturating_add(corr)
        };
    }
    // q ≈ a·2^32/b = a·v·2^-31, within a few units.
    let mut q = mul_u32_wide(a, v) >> 31;
    let n = u64::from(a) << 32;
    let qb =
        mul_u32_wide(q as u32, b).wrapping_add(u64::from(((q >> 32) as u32).wrapping_mul(b)) << 32);
    // |r| is a few times b: exact in wrapping i64 arithmetic.
    let mut r = n.wrapping_sub(qb) as i64;
    let b64 = i64::from(b);
    for _ in 0..64 {
        if r < 0 {
            q = q.wrapping_sub(1);
            r += b64;
        } else if r >= b64 {
            q = q.wrapping_add(1);
            r -= b64;
        } else {
            break;
        }
    }
    (q, r as u32) // 0 ≤ r < b after the correction
}

/// [`div_normalised`] by restoring division, one quotient bit per step:
/// the plain method, kept as a second reference for the tests.
#[cfg(test)]
fn div_normalised_steps(a: u32, b: u32) -> (u64, u32) {
    // The top quotient bit: a/b < 2 for normalised operands.
    let (top, mut r) = if a >= b { (1u64, a - b) } else { (0, a) };
    let mut q: u32 = 0;
    for _ in 0..32 {
        // r < b: 2r < 2^33; its carry out of 32 bits means 2r ≥ b.
        // Branch-free: the step's bit selects the subtraction by a mask.
        let carry = r >> 31;
        r <<= 1;
        let bit = carry | u32::from(r >= b);
        r = r.wrapping_sub(b & bit.wrapping_neg());
        q = (q << 1) | bit;
    }
    ((top << 32) | u64::from(q), r)
}

/// The quotient a/b in Q.40, `round(a · 2^40 / b)` to within a relative
/// 3·2^-32 (< 2^-31), or `None` when b is zero or the quotient does not fit
/// an `i64`. One division: both operands are first rounded to 32-bit
/// mantissas (relative error ≤ 2^-32 each), then the mantissas are divided
/// once (exactly; on ARMv6-M by multiplies, without a divide) and the
/// quotient rounded to nearest (≤ 2^-32).
pub fn div_q40(a: i64, b: i64) -> Option<i64> {
    if b == 0 {
        return None;
    }
    if a == 0 {
        return Some(0);
    }
    let negative = (a < 0) != (b < 0);
    let (ma, ea) = mantissa32(a.unsigned_abs());
    let (mb, eb) = mantissa32(b.unsigned_abs());
    // ma·2^32/mb lies in (2^31, 2^33): the one division.
    let (q, r) = div_normalised(ma, mb);
    let q = if r >= mb - r { q + 1 } else { q };
    // a/b ≈ q · 2^(ea − eb − 32); in Q.40: q · 2^(ea − eb + 8).
    let sh = ea - eb + 8;
    let q = if sh >= 0 {
        let sh = sh.unsigned_abs();
        if sh >= 64 || leading_zeros_u64(q) <= sh {
            return None;
        }
        shl_u64(q, sh)
    } else {
        round_shr_u64(q, sh.unsigned_abs())
    };
    let q = i64::try_from(q).ok()?;
    Some(if negative { -q } else { q })
}

/// Number of significant bits of `x` (0 for 0, 64 for values ≥ 2^63).
#[inline]
pub fn bit_length_u128(x: u128) -> u32 {
    128 - x.leading_zeros()
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    proptest! {
        /// The ARMv6-M forms (restoring division, binary-search count of
        /// leading zeros, shifts in words) equal the native operations.
        #[test]
        fn armv6m_forms_equal_the_native_operations(a in (1u32 << 31).., b in (1u32 << 31).., x: u64, sh in 0u32..64) {
            let n = u64::from(a) << 32;
            prop_assert_eq!(div_normalised_steps(a, b), (n / u64::from(b), (n % u64::from(b)) as u32));
            prop_assert_eq!(div_normalised_newton(a, b), (n / u64::from(b), (n % u64::from(b)) as u32));
            prop_assert_eq!(leading_zeros_words(x), x.leading_zeros());
            prop_assert_eq!(leading_zeros_words(x >> sh), (x >> sh).leading_zeros());
            prop_assert_eq!(leading_zeros_steps((x >> sh) as u32), ((x >> sh) as u32).leading_zeros());
            prop_assert_eq!(shl_u64(x, sh), x << sh);
            prop_assert_eq!(shr_u64_words(x, sh), x >> sh);
        }

    }

    #[test]
    fn armv6m_forms_at_the_edges() {
        for (a, b) in [
            (1u32 << 31, 1u32 << 31),
            (u32::MAX, 1 << 31),
            (1 << 31, u32::MAX),
            (u32::MAX, u32::MAX),
        ] {
            let n = u64::from(a) << 32;
            assert_eq!(
                div_normalised_steps(a, b),
                (n / u64::from(b), (n % u64::from(b)) as u32)
            );
        }
        // Both ends of every seed interval, with the smallest and largest
        // dividends: the Newton steps and the correction always land.
        for i in 0u32..256 {
            for b in [(1 << 31) | (i << 23), (1 << 31) | (i << 23) | 0x7F_FFFF] {
                for a in [1u32 << 31, b, b.wrapping_sub(1) | (1 << 31), u32::MAX] {
                    let n = u64::from(a) << 32;
                    let want = (n / u64::from(b), (n % u64::from(b)) as u32);
                    assert_eq!(div_normalised_newton(a, b), want, "{a} / {b}");
                }
            }
        }
        for x in [0u64, 1, 1 << 31, 1 << 32, 1 << 63, u64::MAX] {
            assert_eq!(leading_zeros_words(x), x.leading_zeros());
            assert_eq!(shr_u64_words(x, 64), 0);
            assert_eq!(shr_u64_words(x, 63), x >> 63);
            assert_eq!(leading_zeros_steps(x as u32), (x as u32).leading_zeros());
        }
    }

    proptest! {
        /// The signed × unsigned product from the unsigned one, and the
        /// ARMv6-M partial products, equal the native products.
        #[test]
        fn wide_products_equal_the_products(a: u32, b: u32, c: i32) {
            prop_assert_eq!(mul_u32_wide_parts(a, b), u64::from(a) * u64::from(b));
            prop_assert_eq!(mul_i32_u32_wide(c, b), i64::from(c) * i64::from(b));
        }
    }

    #[test]
    fn wide_multiply_corners() {
        for (a, b) in [
            (0, u32::MAX),
            (u32::MAX, u32::MAX),
            (0xFFFF, 0xFFFF),
            (0x1_0000, 0xFFFF_0000),
        ] {
            assert_eq!(
                mul_u32_wide_parts(a, b),
                u64::from(a) * u64::from(b),
                "{a} * {b}"
            );
        }
        for (a, b) in [
            (i32::MIN, u32::MAX),
            (i32::MIN, 0),
            (-1, u32::MAX),
            (i32::MAX, u32::MAX),
            (-1, 1),
        ] {
            assert_eq!(
                mul_i32_u32_wide(a, b),
                i64::from(a) * i64::from(b),
                "{a} * {b}"
            );
        }
        assert_eq!(mul_u32_wide(0, u32::MAX), 0);
        assert_eq!(mul_u32_wide(1, u32::MAX), u64::from(u32::MAX));
        assert_eq!(mul_u32_wide(0x1_0000, 0x1_0000), 1 << 32);
        assert_eq!(mul_u32_wide(u32::MAX, u32::MAX), 0xFFFF_FFFE_0000_0001);
    }

    #[test]
    fn rounding_shift_ties_and_limits() {
        assert_eq!(round_shr_u64(3, 1), 2); // 1.5 -> 2
        assert_eq!(round_shr_u64(2, 2), 1); // 0.5 -> 1
        assert_eq!(round_shr_u64(1, 2), 0); // 0.25 -> 0
        assert_eq!(round_shr_u64(u64::MAX, 1), 1 << 63);
        assert_eq!(round_shr_u64(u64::MAX, 64), 1);
        assert_eq!(round_shr_u64(u64::MAX, 65), 0);
        assert_eq!(round_shr_u128(u128::MAX, 128), 1);
        assert_eq!(round_shr_u128(7, 200), 0);
    }

    #[test]
    fn rounding_division() {
        assert_eq!(round_div_u128(7, 2), Some(4));
        assert_eq!(round_div_u128(5, 3), Some(2));
        assert_eq!(round_div_u128(4, 3), Some(1));
        assert_eq!(round_div_u128(1, 0), None);
        assert_eq!(round_div_u128(u128::MAX, u128::MAX), Some(1));
        assert_eq!(round_div_u128(u128::MAX, 2), Some(1 << 127));
    }

    proptest! {
        #[test]
        fn wide_multiply_is_exact(a: u32, b: u32) {
            prop_assert_eq!(u128::from(mul_u32_wide(a, b)), u128::from(a) * u128::from(b));
        }

        #[test]
        fn shift_right_matches_native(x: u64, sh in 0u32..70) {
            prop_assert_eq!(shr_u64(x, sh), x.checked_shr(sh).unwrap_or(0));
        }

        #[test]
        fn rounding_shift_is_nearest(x: u64, sh in 0u32..70) {
            // Exact rational comparison: |result·2^sh − x| ≤ 2^sh / 2.
            let got = u128::from(round_shr_u64(x, sh));
            let scaled = got << sh.min(64);
            let err = scaled.abs_diff(u128::from(x));
            if sh <= 64 {
                prop_assert!(2 * err <= 1u128 << sh);
            } else {
                prop_assert_eq!(got, 0);
            }
        }

        #[test]
        fn q40_division_within_its_bound(a: i64, b: i64) {
            if let Some(q) = div_q40(a, b) {
                let exact = (a as f64) / (b as f64) * 2f64.powi(40);
                prop_assert!((q as f64 - exact).abs() <= exact.abs() * 3.0 * 2f64.powi(-32) + 1.0, "{} vs {}", q, exact);
            } else {
                let exact = (a as f64) / (b as f64) * 2f64.powi(40);
                prop_assert!(b == 0 || exact.abs() >= 2f64.powi(62), "refused {} / {}", a, b);
            }
        }

        #[test]
        fn shifted_division_equals_the_wide_one(a: u64, d: u32) {
            let wide = round_div_u128(u128::from(a) << 32, u128::from(d)).and_then(|q| u64::try_from(q).ok());
            prop_assert_eq!(round_div_shl32(a, d), wide);
        }

        #[test]
        fn rounding_division_is_nearest(n: u128, d in 1u128..) {
            let q = round_div_u128(n, d).unwrap();
            // |q·d − n| ≤ d/2, computed without overflow via the floor quotient.
            let f = n / d;
            prop_assert!(q == f || q == f + 1);
            let r = n % d;
            if q == f { prop_assert!(2 * r <= d) } else { prop_assert!(2 * (d - r) <= d) }
        }
    }
}
