//! The one start-up check of the constants `lc-host calibrate` derives
//! and the image stores: each is a correctly rounded ratio
//! m = round(n · 2^e / d), and [`is_rounded_ratio`] checks that with
//! multiplies, adds and compares in 32-bit words. No division at
//! start-up, and one routine for every kind of constant: a curve
//! segment's slope or reciprocal width, and a shift converter's
//! reciprocals of the rest point and of rest point times gate.

use crate::fixed::{mul_u32_wide, ARMV6M};

/// `a · b`, exact ([`mul_u32_wide`]), for the start-up checks and the
/// fault window's full check: on ARMv6-M through one out-of-line copy
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
/// for d = 0 and for e > 127.
///
/// A divisor of one word (a curve segment's) takes a 64-bit path; a
/// longer one goes word by word from the least significant, in 32-bit
/// operations only: the running product m·d (its carry word), the sum
/// n·2^e + ⌊d/2⌋ (its carry), their difference r (its borrow) and the
/// borrow of r − d, which says at the end whether r < d. The loop stops
/// after the last word any of them reaches.
#[inline(never)]
pub(crate) fn is_rounded_ratio(m: u32, n: u32, e: u32, d: [u32; 3]) -> bool {
    if e > 127 {
        return false;
    }
    // n·2^e: n << b in word q, its top bits in word q + 1 (q ≤ 3).
    let (q, b) = (e >> 5, e & 31);
    let (x_lo, x_hi) = (n << b, (n >> 1) >> (31 - b));
    if d[1] == 0 && d[2] == 0 {
        // One word (a curve segment's w'): m·d < 2^64, so n·2^e must be
        // below 2^64 too, and all of it is u64.
        let x = match q {
            0 => (u64::from(x_hi) << 32) | u64::from(x_lo),
            1 if x_hi == 0 => u64::from(x_lo) << 32,
            _ if n == 0 => 0,
            _ => return false,
        };
        let p = mul_wide(m, d[0]);
        // x + ⌊d/2⌋ − p in 0..d, without forming the sum (it may reach
        // 2^64): p − x ≤ ⌊d/2⌋ when p ≥ x, x − p < d − ⌊d/2⌋ otherwise.
        let h = d[0] >> 1;
        return if d[0] == 0 {
            false
        } else if p >= x {
            p - x <= u64::from(h)
        } else {
            x - p < u64::from(d[0] - h)
        };
    }
    // m·d reaches one word past d's top word, n·2^e word q + 1.
    let top = if d[2] != 0 {
        3
    } else if d[1] != 0 {
        2
    } else {
        1
    };
    let words = (q + 2).max(top + 1);
    let mut product_carry = 0u32;
    let mut sum_carry = 0u32; // 0 or 1
    let mut borrow = false; // of r = sum − product
    let mut below = false; // r < d on the words so far
    let mut i = 0u32;
    while i < words {
        let di = d.get(i as usize).copied().unwrap_or(0);
        let next = d.get(i as usize + 1).copied().unwrap_or(0);
        // Word i of m·d: m·d_i + carry < 2^64 cannot wrap (a zero word
        // of d skips the multiply).
        let p = if di == 0 {
            core::mem::take(&mut product_carry)
        } else {
            let p = mul_wide(m, di).wrapping_add(u64::from(product_carry));
            product_carry = (p >> 32) as u32;
            p as u32
        };
        let x = if i == q {
            x_lo
        } else if i == q + 1 {
            x_hi
        } else {
            0
        };
        let h = (di >> 1) | (next << 31); // word i of ⌊d/2⌋
        let (s, c1) = x.overflowing_add(h);
        let (s, c2) = s.overflowing_add(sum_carry);
        sum_carry = u32::from(c1) + u32::from(c2);
        let (r, b1) = s.overflowing_sub(p);
        let (r, b2) = r.overflowing_sub(u32::from(borrow));
        borrow = b1 | b2;
        let (t, l1) = r.overflowing_sub(di);
        let (_, l2) = t.overflowing_sub(u32::from(below));
        below = l1 | l2;
        i += 1;
    }
    // r ≥ 0 and nothing above the words (the sum's carry out is the
    // difference's borrow out), the product used up, and r < d.
    sum_carry == u32::from(borrow) && product_carry == 0 && below
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
    }
}
