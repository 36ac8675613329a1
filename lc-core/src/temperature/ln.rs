//! Natural logarithm of an integer in fixed point ([`ln_q37`]).

use crate::fixed::{leading_zeros_u32, mul_u32_wide};
use core::num::NonZeroU32;

/// Fractional bits of the logarithm's fixed-point format (Q.37).
pub const LN_FRAC_BITS: u32 = 37;

/// r_j = ⌈2^37 / (64 + j)⌉: 1/(1 + j/64) rounded up, Q1.31.
const R_Q31: [u32; 64] = [
    0x80000000, 0x7E07E07F, 0x7C1F07C2, 0x7A44C6B0, //
    0x78787879, 0x76B981DB, 0x75075076, 0x73615A25, //
    0x71C71C72, 0x70381C0F, 0x6EB3E454, 0x6D3A06D4, //
    0x6BCA1AF3, 0x6A63BD82, 0x6906906A, 0x67B23A55, //
    0x66666667, 0x6522C3F4, 0x63E7063F, 0x62B2E43E, //
    0x61861862, 0x60606061, 0x5F417D06, 0x5E293206, //
    0x5D1745D2, 0x5C0B8171, 0x5B05B05C, 0x5A05A05B, //
    0x590B2165, 0x58160582, 0x572620AF, 0x563B48C3, //
    0x55555556, 0x54741FAC, 0x5397829D, 0x52BF5A82, //
    0x51EB851F, 0x511BE196, 0x50505051, 0x4F88B2F4, //
    0x4EC4EC4F, 0x4E04E04F, 0x4D4873ED, 0x4C8F8D29, //
    0x4BDA12F7, 0x4B27ED37, 0x4A7904A8, 0x49CD42E3, //
    0x4924924A, 0x487EDE05, 0x47DC11F8, 0x473C1AB7, //
    0x469EE585, 0x46046047, 0x456C797E, 0x44D72045, //
    0x44444445, 0x43B3D5B0, 0x4325C53F, 0x429A042A, //
    0x42108422, 0x4189374C, 0x41041042, 0x40810205, //
];

/// −ln(r_j / 2^31) rounded to nearest, Q0.32 (computed with mpmath at
/// 50 digits; the unit test re-derives every entry from `libm::log`).
const NEG_LN_R_Q32: [u32; 64] = [
    0x00000000, 0x03F81514, 0x07E0A6C3, 0x0BBA2C7B, //
    0x0F85185F, 0x1341D796, 0x16F0D289, 0x1A926D38, //
    0x1E27076E, 0x21AEFCF7, 0x252AA5EE, 0x289A56D9, //
    0x2BFE60E0, 0x2F571203, 0x32A4B538, 0x35E7929B, //
    0x391FEF8E, 0x3C4E0EDB, 0x3F7230D9, 0x428C9389, //
    0x459D72AD, 0x48A507EE, 0x4BA38AEB, 0x4E993155, //
    0x51862F07, 0x546AB61A, 0x5746F6FB, 0x5A1B2078, //
    0x5CE75FD9, 0x5FABE0EC, 0x6268CE19, 0x651E506E, //
    0x67CC8FB1, 0x6A73B269, 0x6D13DDEE, 0x6FAD3674, //
    0x723FDF1E, 0x74CBF9F7, 0x7751A811, 0x79D10986, //
    0x7C4A3D7E, 0x7EBD623B, 0x812A952C, 0x8391F2E0, //
    0x85F39720, 0x884F9CEE, 0x8AA61E96, 0x8CF735A0, //
    0x8F42FAF1, 0x918986BC, 0x93CAF091, 0x96074F68, //
    0x983EB998, 0x9A7144E9, 0x9C9F069A, 0x9EC81353, //
    0xA0EC7F3F, 0xA30C5E0F, 0xA527C2ED, 0xA73EC08C, //
    0xA951692F, 0xAB5FCEAD, 0xAD6A025E, 0xAF701545, //
];

/// ln 2 rounded to nearest, Q6.58 (below 2^58), split in 32-bit halves.
const LN2_Q58_HI: u32 = 0x02C5_C85F;
const LN2_Q58_LO: u32 = 0xDF47_3DE7;

/// 1/3 rounded to nearest, Q0.32.
const THIRD_Q32: u32 = 0x5555_5555;

/// x = m·2^k with m in [1, 2): returns k (0..=31) and ln m in Q.37
/// (0 ≤ ln m < ln 2 + 2^-32).
#[inline]
fn ln_parts(x: NonZeroU32) -> (u32, u64) {
    // x ≥ 1: z ≤ 31, so neither the difference nor the shift wraps (the
    // wrapping forms are the plain operations; the compiler cannot see z's
    // range through `leading_zeros_u32`). So do the steps below, by the
    // bounds in their comments.
    let z = leading_zeros_u32(x.get());
    let k = 31u32.wrapping_sub(z);
    let m = x.get().wrapping_shl(z); // Q1.31, top bit set
                                     // The six bits after the leading one: m lies in [(64 + j)·2^25, (65 + j)·2^25).
    let j = ((m >> 25) & 63) as usize; // masked to 6 bits: the cast is exact
    let r = R_Q31[j];
    // m·r ≥ (64 + j)·2^25 · 2^37/(64 + j) = 2^62, and
    // m·r < 2^62·(65 + j)/(64 + j) + 2^32 ≤ 2^62 + 2^56 + 2^32.
    let p = mul_u32_wide(m, r); // Q2.62
                                // y = m·r − 1 in Q.37 (truncated): below 2^31 + 2^7, so the cast is exact.
    let y = (p.wrapping_sub(1 << 62) >> 25) as u32;
    // Horner, all terms non-negative since y < 1:
    // ln(1 + y) ≈ y − y·(y·(1/2 − y·(1/3 − y/4))).
    let h3 = THIRD_Q32.wrapping_sub(y >> 7); // 1/3 − y/4, Q.32 (y/4 < 2^-8)
                                             // y·h3 from their top bits: y >> 15 ≤ 2^16 and h3 >> 15 < 2^15.5, so
                                             // the product fits u32 (< 2^31.5); in Q.39 it is y·h3 to within
                                             // 2^-22.2, which moves ln(1 + y) by at most y²·2^-22.2 < 2^-34.2.
                                             // Shifted to Q.32 it is below 2^25.
    let h2 = (1u32 << 31).wrapping_sub((y >> 15).wrapping_mul(h3 >> 15) >> 7); // 1/2 − y·h3, Q.32
                                                                               // y·h2 < 2^-7, so below 2^30 in Q.37: the cast is exact.
    let g = (mul_u32_wide(y, h2) >> 32) as u32; // Q.37
    let ln1p = u64::from(y).wrapping_sub(mul_u32_wide(y, g) >> 37); // Q.37, y·g ≤ y
    (k, (u64::from(NEG_LN_R_Q32[j]) << 5).wrapping_add(ln1p))
}

/// k·ln 2 in Q.37 rounded to nearest, for k in 0..=31: round(k · LN2_Q58 ·
/// 2^-21), from the Q.58 constant (so within 2^-38 + k·2^-59 of k·ln 2).
/// A table: on a Cortex-M0 the product and rounding shift it replaces cost
/// about 40 instructions per logarithm.
const K_LN2_Q37: [u64; 32] = k_ln2_table();

const fn k_ln2_table() -> [u64; 32] {
    let ln2_q58 = ((LN2_Q58_HI as u64) << 32) | LN2_Q58_LO as u64;
    let mut table = [0u64; 32];
    let mut k = 0;
    while k < 32 {
        // k·ln2·2^58 < 31 · 2^57.5 < 2^63: no overflow.
        table[k] = (k as u64 * ln2_q58 + (1 << 20)) >> 21;
        k += 1;
    }
    table
}

/// k·ln 2 in Q.37, rounded to nearest, for k ≤ 31 (larger k is taken
/// modulo 32; the callers' k are at most 31).
#[inline]
fn k_ln2_q37(k: u32) -> u64 {
    K_LN2_Q37[(k & 31) as usize]
}

/// Natural logarithm of `x` in Q.37 (value · 2^37, up to ln(2^32 − 1) ≈
/// 22.18, so below 2^42), or `None` for `x = 0`. No division; three
/// 32 × 32 → 64-bit products and one 16 × 16-bit product.
///
/// ln x = k·ln 2 + ln m, with x = m·2^k and m in [1, 2) found from the
/// leading zeros (exact). For m, the six bits after the leading one pick a
/// table entry r_j ≈ 1/(1 + j/64), rounded up so that 1 + y = m·r_j ≥ 1, and
///
/// ln m = −ln r_j + ln(1 + y),  0 ≤ y < 2^-6 + 2^-30,
///
/// with ln(1 + y) ≈ y − y²/2 + y³/3 − y⁴/4 (Horner: y·(1/3 − y/4) from the
/// top 16 bits of each factor, two 32 × 32 → 64-bit products for the
/// rest). The table holds r_j exactly (Q1.31) and −ln r_j rounded to
/// nearest in Q0.32; k·ln 2 comes from a 32-entry table, rounded to nearest
/// in Q.37.
///
/// Error budget of [`ln_q37`] against the exact logarithm, for every
/// `u32` x ≥ 1:
///
/// | source | bound |
/// |---|---|
/// | series truncation (alternating, first omitted term y⁵/5) | ≤ 0.81 · 2^-32 |
/// | table entry −ln r_j, nearest in Q0.32 | ≤ 0.5 · 2^-32 |
/// | truncations of y, y·h and y·g to Q.37 | ≤ 0.07 · 2^-32 |
/// | y·(1/3 − y/4) from 16-bit tops (within 2^-22.2, times y² ≤ 2^-12) | ≤ 0.22 · 2^-32 |
/// | k·ln 2, nearest in Q.37 from a Q.58 constant | ≤ 0.02 · 2^-32 |
/// | **total** | **≤ 1.65 · 2^-32 ≈ 3.8e-10** |
///
/// The property tests in this module check 1.65 · 2^-32 against
/// `libm::log` over all of `u32`; the largest error seen is 1.36 · 2^-32
/// (`ln_worst_case_sweep`: 2·10^6 pseudo-random x, every table interval
/// at 4096 points, and every x below 2^16). Cost: one leading-zero count,
/// three 32 × 32 → 64-bit products (one for the table) and one 16 × 16-bit
/// product; on a Cortex-M0 about 77 instructions.
///
/// ```
/// use lc_core::temperature::{ln_q37, LN_FRAC_BITS};
/// let ln10 = ln_q37(10).unwrap() as f64 / (1u64 << LN_FRAC_BITS) as f64;
/// assert!((ln10 - core::f64::consts::LN_10).abs() < 4e-10);
/// assert_eq!(ln_q37(1), Some(0));
/// assert_eq!(ln_q37(0), None);
/// ```
pub fn ln_q37(x: u32) -> Option<u64> {
    let x = NonZeroU32::new(x)?;
    let (k, f) = ln_parts(x);
    // Below 2^42 + 2^37 (the docs above): cannot wrap.
    Some(k_ln2_q37(k).wrapping_add(f))
}

/// ln(a/b) in Q.37 from two logarithms, with the integer parts combined
/// first (one k·ln 2 from the table). Error at most 3.3 · 2^-32 (two
/// [`ln_q37`] budgets); |result| < 22.2 · 2^37.
#[inline]
pub(crate) fn ln_ratio_q37(a: NonZeroU32, b: NonZeroU32) -> i64 {
    let (ka, fa) = ln_parts(a);
    let (kb, fb) = ln_parts(b);
    // fa, fb < 2^37 and k·ln2 < 2^42 in Q.37: every cast below is exact.
    // So none of the differences and sums below can wrap.
    let frac = (fa as i64).wrapping_sub(fb as i64);
    let whole = if ka >= kb {
        k_ln2_q37(ka.wrapping_sub(kb)) as i64
    } else {
        (k_ln2_q37(kb.wrapping_sub(ka)) as i64).wrapping_neg()
    };
    whole.wrapping_add(frac)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    const ULP: f64 = 1.0 / 137_438_953_472.0; // 2^-37
    const BOUND: f64 = 1.65 / 4_294_967_296.0; // 1.65 · 2^-32

    fn ln_f(x: u32) -> f64 {
        ln_q37(x).unwrap() as f64 * ULP
    }

    #[test]
    fn tables_are_what_they_claim() {
        for (j, (&r, &l)) in R_Q31.iter().zip(NEG_LN_R_Q32.iter()).enumerate() {
            let d = 64 + j as u64;
            // r = ⌈2^37 / d⌉
            assert_eq!(u64::from(r), (1u64 << 37).div_ceil(d), "r[{j}]");
            // l = round(−ln(r/2^31)·2^32): within half an LSB (+ f64 slack).
            let exact = -libm::log(f64::from(r) / 2_147_483_648.0) * 4_294_967_296.0;
            assert!((f64::from(l) - exact).abs() <= 0.5 + 1e-6, "ln r[{j}]");
        }
        let ln2 = (u64::from(LN2_Q58_HI) << 32 | u64::from(LN2_Q58_LO)) as f64;
        assert!((ln2 / 2f64.powi(58) - core::f64::consts::LN_2).abs() < 1e-16);
        assert_eq!(THIRD_Q32, ((1u64 << 32) / 3) as u32);
    }

    /// The k·ln 2 table is the rounded product of the Q.58 constant.
    #[test]
    fn k_ln2_table_is_the_rounded_product() {
        for k in 0u32..32 {
            let wide = mul_u32_wide(k, LN2_Q58_LO) + (u64::from(k * LN2_Q58_HI) << 32);
            assert_eq!(
                k_ln2_q37(k),
                crate::fixed::round_shr_u64(wide, 58 - LN_FRAC_BITS),
                "k {k}"
            );
        }
    }

    #[test]
    fn known_values() {
        assert_eq!(ln_q37(0), None);
        assert_eq!(ln_q37(1), Some(0));
        for k in 0..32 {
            let exact = f64::from(k) * core::f64::consts::LN_2;
            // Powers of two take the table's j = 0 entry (r = 1): only the
            // rounding of k·ln 2 remains.
            assert!((ln_f(1 << k) - exact).abs() <= 0.5 * ULP + 1e-15, "2^{k}");
        }
        for x in [2u32, 3, 10, 1000, 10_000, 65_535, 1 << 24, u32::MAX] {
            let err = (ln_f(x) - libm::log(f64::from(x))).abs();
            assert!(err <= BOUND, "x {x} err {err:e}");
        }
    }

    /// The largest error against `libm::log` over 2·10^6 pseudo-random x,
    /// every table interval at 4096 points and every x below 2^16, in units
    /// of 2^-32 (the figure in [`ln_q37`]'s docs). Run with
    /// `cargo test --release -p lc-core ln_worst_case_sweep -- --ignored --nocapture`.
    #[test]
    #[ignore]
    fn ln_worst_case_sweep() {
        let mut seed = 0x9E37_79B9_7F4A_7C15u64;
        let mut xs: Vec<u32> = (1..1 << 16).collect();
        for _ in 0..2_000_000 {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            xs.push((seed >> 32) as u32 | 1);
        }
        for j in 0..64u32 {
            xs.extend((0..4096u32).map(|i| ((64 + j) << 25) + i * 8191));
        }
        let worst = xs
            .iter()
            .map(|&x| (ln_f(x) - libm::log(f64::from(x))).abs())
            .fold(0.0, f64::max);
        println!("ln_q37: worst {:.3} · 2^-32", worst * 4_294_967_296.0);
        assert!(worst <= BOUND);
    }

    /// Worst case over a dense sweep of the mantissa range [2^31, 2^32):
    /// every table interval at 4096 points each, plus its ends.
    #[test]
    fn dense_mantissa_sweep() {
        let mut worst = 0.0f64;
        for j in 0..64u32 {
            let lo = (64 + j) << 25;
            for i in 0..=4096u32 {
                let x = lo + i * 8191; // 4096·8191 < 2^25
                let err = (ln_f(x) - libm::log(f64::from(x))).abs();
                worst = worst.max(err);
            }
            let x = lo + ((1 << 25) - 1);
            worst = worst.max((ln_f(x) - libm::log(f64::from(x))).abs());
        }
        assert!(worst <= BOUND, "worst {}·2^-32", worst * 4_294_967_296.0);
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(50_000))]

        /// The logarithm is within 1.65 · 2^-32 of `libm::log` for any
        /// non-zero `u32`.
        #[test]
        fn ln_within_bound(x in 1u32..) {
            let err = (ln_f(x) - libm::log(f64::from(x))).abs();
            prop_assert!(err <= BOUND, "x {} err {}·2^-32", x, err * 4_294_967_296.0);
        }

        /// ln(a/b) within two budgets of the exact difference, and never a
        /// panic.
        #[test]
        fn ln_ratio_within_bound(a in 1u32.., b in 1u32..) {
            let got = ln_ratio_q37(NonZeroU32::new(a).unwrap(), NonZeroU32::new(b).unwrap()) as f64 * ULP;
            let exact = libm::log(f64::from(a)) - libm::log(f64::from(b));
            prop_assert!((got - exact).abs() <= 2.0 * BOUND + 1e-15);
        }

        /// Monotone over ADC codes (x < 2^24, where one step of x moves the
        /// logarithm by more than 2^-24, far above the error): x < x' never
        /// gives a larger logarithm for x.
        #[test]
        fn ln_is_monotone(x in 1u32..(1 << 24), d in 1u32..1000) {
            let y = x.saturating_add(d);
            prop_assert!(ln_q37(x).unwrap() <= ln_q37(y).unwrap());
        }
    }
}
