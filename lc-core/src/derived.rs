//! The one start-up check of the constants `lc-host calibrate` derives
//! and the image stores: each is a correctly rounded ratio
//! m = round(n · 2^e / d), and [`is_rounded_ratio`] checks that with
//! multiplies, adds and compares. No division at start-up, and one test
//! for every kind of constant: a shift converter's reciprocals of the
//! rest point and of rest point times gate (divisors of up to three
//! words, [`is_rounded_ratio`]), and a curve segment's slope or
//! reciprocal width (one word, [`is_rounded_ratio_word`], the same test
//! in 64 bits; a metal firmware, which has no curve, links only the
//! first).

use crate::fixed::{mul_u32_wide, ARMV6M};

/// `a · b`, exact ([`mul_u32_wide`]), for the start-up checks, the metal
/// thresholds, the fault window's full check and the shift's general and
/// division paths: on ARMv6-M through one out-of-line copy
/// (inlined, the 16-bit partial products cost 40 to 80 bytes of flash at
/// each of about six places), elsewhere the single multiply instruction
/// inline.
#[inline(always)]
pub(crate) fn mul_wide(a: u32, b: u32) -> u64 {
    if ARMV6M {
        mul_wide_out_of_line(a, b)
    } else {
        mul_u32_wide(a, b)
    }
}

/// [`mul_wide`]'s out-of-line copy (ARMv6-M).
#[inline(never)]
fn mul_wide_out_of_line(a: u32, b: u32) -> u64 {
    mul_u32_wide(a, b)
}

/// Whether `m` = round(n · 2^e / d), rounding half up, for a divisor `d`
/// of up to three 32-bit words (least significant first, d > 0):
/// 0 ≤ n·2^e + ⌊d/2⌋ − m·d < d. Exact for every `n` and e ≤ 127; false
/// for d = 0 and for e > 127. For a divisor of one word (a curve
/// segment's), [`is_rounded_ratio_word`] gives the same answer.
///
/// The test in exact arithmetic: with s = x + ⌊d/2⌋ and r = s − m·d
/// taken modulo 2^128 (x = n·2^e), the true value lies in 0..d exactly
/// when the carry out of s equals the borrow out of r and r < d (m·d and
/// m·d + d are below 2^128, so n·2^e must be below 2^128 too); m·d from
/// three 32 × 32-bit products.
#[inline(never)]
pub(crate) fn is_rounded_ratio(m: u32, n: u32, e: u32, d: [u32; 3]) -> bool {
    if e > 127 {
        return false;
    }
    // n·2^e: n << b in word q, its top bits in word q + 1 (q ≤ 3), or at
    // least 2^128.
    let (q, b) = (e >> 5, e & 31);
    let (x_lo, x_hi) = (n << b, (n >> 1) >> (31 - b));
    let mut x = [0u32; 4];
    let q = q as usize & 3; // q ≤ 3: the mask changes nothing
    x[q] = x_lo;
    match x.get_mut(q + 1) {
        Some(w) => *w = x_hi,
        None if x_hi != 0 => return false,
        None => {}
    }
    let wide = |w: [u32; 4]| {
        u128::from(w[0]) | u128::from(w[1]) << 32 | u128::from(w[2]) << 64 | u128::from(w[3]) << 96
    };
    // m·d word by word: each product plus the carry word < 2^64.
    let p0 = mul_wide(m, d[0]);
    let p1 = mul_wide(m, d[1]).wrapping_add(p0 >> 32);
    let p2 = mul_wide(m, d[2]).wrapping_add(p1 >> 32);
    let p = wide([p0 as u32, p1 as u32, p2 as u32, (p2 >> 32) as u32]);
    let d = wide([d[0], d[1], d[2], 0]);
    let (s, carry) = wide(x).overflowing_add(d >> 1);
    let (r, borrow) = s.overflowing_sub(p);
    carry == borrow && r < d
}

/// [`is_rounded_ratio`] for a divisor of one word (a curve segment's
/// w'), in 64 bits: m·d < 2^64, so n·2^e must be below 2^64 too, and
/// the same test modulo 2^64.
#[inline(never)]
pub(crate) fn is_rounded_ratio_word(m: u32, n: u32, e: u32, d: u32) -> bool {
    let x = match (e >> 5, (n >> 1) >> (31 - (e & 31))) {
        _ if e > 127 => return false,
        (0, x_hi) => (u64::from(x_hi) << 32) | u64::from(n << (e & 31)),
        (1, 0) => u64::from(n << (e & 31)) << 32,
        _ if n == 0 => 0,
        _ => return false,
    };
    let (s, carry) = x.overflowing_add(u64::from(d >> 1));
    let (r, borrow) = s.overflowing_sub(mul_wide(m, d));
    carry == borrow && r < u64::from(d)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn words(d: u128) -> [u32; 3] {
        [d as u32, (d >> 32) as u32, (d >> 64) as u32]
    }

    /// round(n · 2^e / d) half up, in u128 where it fits.
    fn reference(n: u32, e: u32, d: u128) -> Option<u128> {
        let x = u128::from(n).checked_shl(e)?;
        if x >> e != u128::from(n) {
            return None;
        }
        x.checked_add(d / 2).map(|v| v / d)
    }

    #[test]
    fn small_cases() {
        // 7/2 = 3.5 rounds up to 4; 5/3 = 1.67 to 2; 4/3 to 1.
        assert!(is_rounded_ratio(4, 7, 0, [2, 0, 0]));
        assert!(!is_rounded_ratio(3, 7, 0, [2, 0, 0]));
        assert!(is_rounded_ratio(2, 5, 0, [3, 0, 0]));
        assert!(is_rounded_ratio(1, 4, 0, [3, 0, 0]));
        assert!(!is_rounded_ratio(2, 4, 0, [3, 0, 0]));
        assert!(!is_rounded_ratio(0, 0, 0, [0, 0, 0]));
        assert!(is_rounded_ratio_word(4, 7, 0, 2));
        assert!(!is_rounded_ratio_word(3, 7, 0, 2));
        assert!(!is_rounded_ratio_word(0, 0, 0, 0));
        // 2^63 / (3·2^30) = 2^33 / 3 = 2 863 311 530.67: 2 863 311 531;
        // 2^64 is past the one-word path's 64 bits.
        assert!(is_rounded_ratio_word(2_863_311_531, 1, 63, 3 << 30));
        assert!(!is_rounded_ratio_word(2_863_311_530, 1, 63, 3 << 30));
        assert!(!is_rounded_ratio_word(u32::MAX, 1, 64, 1));
        assert!(!is_rounded_ratio_word(0, 0, 128, 1));
        // 2^127 / (2^95 + 2^64) = 2^32 − 2 + 2^-30 + …: 2^32 − 2.
        let d = (1u128 << 95) + (1 << 64);
        let m = reference(1, 127, d).unwrap() as u32;
        assert_eq!(m, u32::MAX - 1);
        assert!(is_rounded_ratio(m, 1, 127, words(d)));
        assert!(!is_rounded_ratio(m - 1, 1, 127, words(d)));
        assert!(!is_rounded_ratio(m, 1, 128, words(d)));
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(20_000))]

        /// The check accepts exactly the rounded quotient, and its
        /// neighbours never.
        #[test]
        fn accepts_exactly_the_rounded_ratio(n: u32, e in 0u32..=127, d in 1u128..(1 << 96), near in -2i64..=2) {
            if let Some(q) = reference(n, e, d) {
                if let Ok(q32) = u32::try_from(q) {
                    prop_assert!(is_rounded_ratio(q32, n, e, words(d)));
                }
                let other = i128::try_from(q).unwrap() + i128::from(near);
                if near != 0 {
                    if let Ok(m) = u32::try_from(other) {
                        prop_assert!(!is_rounded_ratio(m, n, e, words(d)));
                    }
                }
            }
        }

        /// Against the reference for any mantissa, small divisors too.
        #[test]
        fn agrees_with_division(m: u32, n: u32, e in 0u32..=70, d in 1u128..(1 << 40)) {
            let want = reference(n, e, d).is_some_and(|q| q == u128::from(m));
            prop_assert_eq!(is_rounded_ratio(m, n, e, words(d)), want);
        }

        /// The one-word check answers as the general one, for every
        /// exponent a byte can hold and d = 0 too.
        #[test]
        fn one_word_agrees(m: u32, n: u32, e in 0u32..=255, d: u32, near in -2i64..=2) {
            prop_assert_eq!(
                is_rounded_ratio_word(m, n, e, d),
                is_rounded_ratio(m, n, e, [d, 0, 0])
            );
            // And on the rounded quotient and its neighbours.
            if let Some(q) = (d > 0).then(|| reference(n, e, d.into())).flatten() {
                let near = i128::try_from(q).unwrap() + i128::from(near);
                if let Ok(m) = u32::try_from(near) {
                    prop_assert_eq!(
                        is_rounded_ratio_word(m, n, e, d),
                        is_rounded_ratio(m, n, e, [d, 0, 0])
                    );
                }
            }
        }
    }
}
