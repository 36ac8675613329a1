//! The one start-up check of the constants `lc-host calibrate` derives
//! and the image stores: each is a correctly rounded ratio
//! m = round(n · 2^e / d), and [`is_rounded_ratio`] checks that with
//! multiplies, adds and compares in 32-bit words. No division at
//! start-up, and one routine for every kind of constant: a curve
//! segment's slope or reciprocal width, and a shift converter's
//! reciprocals of the rest point and of rest point times gate.

use crate::fixed::mul_u32_wide;

/// Whether `m` = round(n · 2^e / d), rounding half up, for a divisor `d`
/// of up to three 32-bit words (least significant first, d > 0):
/// 0 ≤ n·2^e + ⌊d/2⌋ − m·d < d. Exact for every `n` and e ≤ 127; false
/// for d = 0 and for e > 127.
///
/// Word by word from the least significant: the running product m·d
/// (its carry word), n·2^e's word, ⌊d/2⌋'s word, the running difference
/// r = n·2^e + ⌊d/2⌋ − m·d (its signed carry) and the borrow of r − d,
/// which says at the end whether r < d. The loop stops after the last
/// word any of them reaches.
#[inline(never)]
pub(crate) fn is_rounded_ratio(m: u32, n: u32, e: u32, d: [u32; 3]) -> bool {
    if e > 127 {
        return false;
    }
    // n·2^e reaches word e / 32 + 1 ≤ 4; m·d one word past d's top word.
    let top = if d[2] != 0 {
        3
    } else if d[1] != 0 {
        2
    } else {
        1
    };
    let words = ((e >> 5) + 2).max(top + 1);
    let mut carry = 0u32; // the product's carry word
    let mut acc = 0i64; // r's carry: −1, 0, 1 or 2
    let mut below = false; // r < d over the words so far
    let mut i = 0u32;
    while i < words {
        let di = d.get(i as usize).copied().unwrap_or(0);
        let next = d.get(i as usize + 1).copied().unwrap_or(0);
        // m·d_i + carry < 2^64: cannot wrap.
        let p = mul_u32_wide(m, di).wrapping_add(u64::from(carry));
        carry = (p >> 32) as u32;
        // Word i of n·2^e: n shifted into it from below or above (i ≤ 4,
        // e ≤ 127: s in −128..=127; the arms bound the shift counts).
        let s = e.wrapping_sub(32 * i) as i32;
        let x = match s {
            0..=31 => n << s,
            -31..=-1 => n >> s.unsigned_abs(),
            _ => 0,
        };
        let h = (di >> 1) | (next << 31); // word i of ⌊d/2⌋
                                          // Each term below 2^32 and |acc| ≤ 2: far inside i64.
        acc = acc
            .wrapping_add(i64::from(x))
            .wrapping_add(i64::from(h))
            .wrapping_sub(i64::from(p as u32));
        let r = acc as u32; // word i of r
        acc >>= 32;
        // r < d on words 0..=i: by this word, or equal here and below.
        below = r < di || (r == di && below);
        i += 1;
    }
    // r ≥ 0 (no borrow left, nothing above), the product used up, r < d.
    acc == 0 && carry == 0 && below
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
