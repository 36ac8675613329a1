//! Numbers into CSV bytes without a heap allocation per field, with exactly
//! the text `std::fmt` would give: integers through `itoa`, the shortest
//! round-trip form of an `f64` (`{}`) through `ryu`'s digits, and fixed
//! decimals (`{:.N}`) by exact integer arithmetic.
//!
//! Byte-for-byte equality with `std::fmt` is the contract (the output of
//! `convert` and `counts` must not change with the formatter); the property
//! tests below compare every function with `format!` over arbitrary bit
//! patterns. Rounding of [`push_fixed`] is that of `std::fmt`: the exact
//! binary value, rounded half to even at the last decimal.

/// Appends an integer.
#[inline]
pub fn push_int<I: itoa::Integer>(out: &mut Vec<u8>, v: I) {
    out.extend_from_slice(itoa::Buffer::new().format(v).as_bytes());
}

/// Appends an optional integer ("" for `None`).
#[inline]
pub fn push_int_opt<I: itoa::Integer>(out: &mut Vec<u8>, v: Option<I>) {
    if let Some(v) = v {
        push_int(out, v);
    }
}

/// Appends `v` as `format!("{v}")` would: the shortest decimal that reads
/// back to `v`, never in exponent form, `-0` for negative zero.
pub fn push_shortest(out: &mut Vec<u8>, v: f64) {
    use std::io::Write;
    if !v.is_finite() {
        out.extend_from_slice(format!("{v}").as_bytes());
        return;
    }
    let sign = v.is_sign_negative();
    if sign {
        out.push(b'-');
    }
    let v = v.abs();
    if v == 0.0 {
        out.push(b'0');
        return;
    }
    if let Some((n, k)) = few_decimals(v) {
        push_decimal(out, n, k);
        return;
    }
    let mut buf = ryu::Buffer::new();
    let text = buf.format_finite(v).as_bytes();
    // ryu writes `d.ddd`, `ddd.0`, `0.000ddd` or `d.ddde±x`: collect the
    // significant digits and the decimal exponent of the first one.
    let (mantissa, exp) = match text.iter().position(|&b| b == b'e') {
        Some(e) => (&text[..e], parse_exp(&text[e + 1..])),
        None => (text, 0),
    };
    let mut digits = [0u8; 24];
    let mut n = 0;
    let mut point = mantissa.len() as i32;
    for (i, &b) in mantissa.iter().enumerate() {
        if b == b'.' {
            point = i as i32;
        } else if n < digits.len() {
            digits[n] = b;
            n += 1;
        }
    }
    // Digits before the decimal point, relative to digits[0].
    let mut int_len = point + exp;
    let mut first = 0;
    while first < n && digits[first] == b'0' {
        first += 1;
        int_len -= 1;
    }
    while n > first && digits[n - 1] == b'0' {
        n -= 1;
    }
    let digits = &digits[first..n];
    if digits.len() >= 16 {
        // Two shortest candidates can tie only from 16 digits on (the
        // exact value then has 17 digits, the last a 5, and lies on a
        // binade of ulp above 10^-k); ryu breaks the tie to even, std to
        // the larger digit. Take std's answer.
        out.truncate(out.len() - usize::from(sign));
        let _ = write!(out, "{}", if sign { -v } else { v });
        return;
    }
    let len = digits.len() as i32;
    if int_len <= 0 {
        out.extend_from_slice(b"0.");
        out.extend(std::iter::repeat_n(b'0', (-int_len) as usize));
        out.extend_from_slice(digits);
    } else if int_len >= len {
        out.extend_from_slice(digits);
        out.extend(std::iter::repeat_n(b'0', (int_len - len) as usize));
    } else {
        let (a, b) = digits.split_at(int_len as usize);
        out.extend_from_slice(a);
        out.push(b'.');
        out.extend_from_slice(b);
    }
}

/// `v` (positive) as n·10^-k with the fewest decimals k ≤ 6, when n has
/// at most 15 digits: a logged time stamp or temperature. Such a decimal
/// is the only one of at most 15 significant digits that reads back to
/// `v` (15 digits always survive the trip through an `f64`), so it is the
/// shortest, and it has no tie. `n / 10^k == v` is checked exactly: both
/// are exact integers and the division is correctly rounded, like the
/// parse of the decimal.
fn few_decimals(v: f64) -> Option<(u64, usize)> {
    const POW10: [f64; 7] = [1.0, 10.0, 100.0, 1e3, 1e4, 1e5, 1e6];
    if v >= 1e9 {
        return None;
    }
    for (k, &p) in POW10.iter().enumerate() {
        let n = (v * p).round();
        if n < 1e15 && n / p == v {
            return Some((n as u64, k));
        }
    }
    None
}

/// Appends n·10^-k with exactly k decimals.
fn push_decimal<N: itoa::Integer>(out: &mut Vec<u8>, n: N, k: usize) {
    let mut buf = itoa::Buffer::new();
    let digits = buf.format(n).as_bytes();
    if k == 0 {
        out.extend_from_slice(digits);
    } else if digits.len() > k {
        let (a, b) = digits.split_at(digits.len() - k);
        out.extend_from_slice(a);
        out.push(b'.');
        out.extend_from_slice(b);
    } else {
        out.extend_from_slice(b"0.");
        out.extend(std::iter::repeat_n(b'0', k - digits.len()));
        out.extend_from_slice(digits);
    }
}

fn parse_exp(t: &[u8]) -> i32 {
    let (neg, t) = match t.first() {
        Some(b'-') => (true, &t[1..]),
        _ => (false, t),
    };
    let v = t
        .iter()
        .fold(0i32, |a, &b| a * 10 + i32::from(b.wrapping_sub(b'0')));
    if neg {
        -v
    } else {
        v
    }
}

/// Appends an optional `f64` as [`push_shortest`] ("" for `None`).
#[inline]
pub fn push_shortest_opt(out: &mut Vec<u8>, v: Option<f64>) {
    if let Some(v) = v {
        push_shortest(out, v);
    }
}

/// Appends `v` with `decimals` decimals, as `format!("{v:.decimals$}")`
/// would. Values whose scaled magnitude does not fit 128 bits (beyond
/// about 10^20) and non-finite values go through `std::fmt` itself.
pub fn push_fixed(out: &mut Vec<u8>, v: f64, decimals: usize) {
    match scaled(v, decimals) {
        Some(n) => {
            if v.is_sign_negative() {
                out.push(b'-');
            }
            // 64-bit digits are faster to print where they suffice.
            match u64::try_from(n) {
                Ok(n) => push_decimal(out, n, decimals),
                Err(_) => push_decimal(out, n, decimals),
            }
        }
        None => {
            use std::io::Write;
            // Writing into a Vec cannot fail.
            let _ = write!(out, "{v:.decimals$}");
        }
    }
}

/// Appends raw·10^exp exactly, with −exp decimals when exp < 0 (an output
/// value on its image's scale: raw 1234 at 10^-4 is `0.1234`).
pub fn push_scaled(out: &mut Vec<u8>, raw: i64, exp: i8) {
    if exp >= 0 {
        push_int(out, raw);
        if raw != 0 {
            out.extend(std::iter::repeat_n(b'0', exp.unsigned_abs().into()));
        }
        return;
    }
    if raw < 0 {
        out.push(b'-');
    }
    push_decimal(out, raw.unsigned_abs(), exp.unsigned_abs().into());
}

/// Appends v·10^exp (v in raw output units, an `f64` reference) with
/// `decimals` more decimals than [`push_scaled`] writes for the same scale.
pub fn push_scaled_f64(out: &mut Vec<u8>, v: f64, exp: i8, decimals: usize) {
    let e = i32::from(exp);
    // 10^|e| ≤ 10^18 is exact in f64: the scaling rounds once.
    let scaled = if e < 0 {
        v / 10f64.powi(-e)
    } else {
        v * 10f64.powi(e)
    };
    push_fixed(
        out,
        scaled,
        (decimals + usize::from(exp.unsigned_abs())).min(19),
    );
}

/// Appends an optional `f64` as [`push_fixed`] ("" for `None`).
#[inline]
pub fn push_fixed_opt(out: &mut Vec<u8>, v: Option<f64>, decimals: usize) {
    if let Some(v) = v {
        push_fixed(out, v, decimals);
    }
}

/// |v|·10^decimals rounded half to even, when it fits the exact 128-bit
/// computation: v = m·2^e with m < 2^53, 10^decimals ≤ 10^19 < 2^64, so
/// m·10^decimals < 2^117; for e < 0 the rounding shift is exact, for
/// 0 ≤ e ≤ 10 the product stays below 2^127.
fn scaled(v: f64, decimals: usize) -> Option<u128> {
    if !v.is_finite() || decimals > 19 {
        return None;
    }
    let bits = v.to_bits();
    let exp_bits = ((bits >> 52) & 0x7ff) as i32;
    let frac = u128::from(bits & ((1u64 << 52) - 1));
    let (m, e) = if exp_bits == 0 {
        (frac, -1074)
    } else {
        (frac | (1u128 << 52), exp_bits - 1075)
    };
    let num = m * 10u128.pow(decimals as u32);
    if e >= 0 {
        return (e <= 10).then(|| num << e);
    }
    let shift = (-e) as u32;
    if shift >= 120 {
        // num < 2^117 is below half of 2^shift: rounds to zero.
        return Some(0);
    }
    let q = num >> shift;
    let r = num & ((1u128 << shift) - 1);
    let half = 1u128 << (shift - 1);
    Some(if r > half || (r == half && q & 1 == 1) {
        q + 1
    } else {
        q
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn shortest(v: f64) -> String {
        let mut out = Vec::new();
        push_shortest(&mut out, v);
        String::from_utf8(out).unwrap()
    }

    fn fixed(v: f64, d: usize) -> String {
        let mut out = Vec::new();
        push_fixed(&mut out, v, d);
        String::from_utf8(out).unwrap()
    }

    #[test]
    fn scaled_examples() {
        let f = |raw: i64, exp: i8| {
            let mut out = Vec::new();
            push_scaled(&mut out, raw, exp);
            String::from_utf8(out).unwrap()
        };
        assert_eq!(f(1234, -4), "0.1234");
        assert_eq!(f(-5, -6), "-0.000005");
        assert_eq!(f(8000, -6), "0.008000");
        assert_eq!(f(0, -3), "0.000");
        assert_eq!(f(12, 2), "1200");
        assert_eq!(f(2, 0), "2");
    }

    #[test]
    fn edges_match_std() {
        for v in [
            0.0,
            -0.0,
            0.1,
            119.4,
            1e21,
            1e-7,
            123456789012345680000.0,
            f64::MAX,
            f64::MIN_POSITIVE,
            5e-324,
            -2.5,
            0.30000000000000004,
            1e15,
            1e16,
            1e17,
        ] {
            assert_eq!(shortest(v), format!("{v}"), "{v:e}");
            for d in [0, 1, 4, 6, 12] {
                assert_eq!(fixed(v, d), format!("{v:.d$}"), "{v:e} {d}");
            }
        }
        // Ties round half to even, as std does.
        assert_eq!(fixed(0.25, 1), "0.2");
        assert_eq!(fixed(2.5, 0), "2");
        assert_eq!(fixed(-1e-20, 6), "-0.000000");
        assert_eq!(fixed(f64::NAN, 2), "NaN");
    }

    proptest! {
        #[test]
        fn shortest_matches_std(bits in any::<u64>()) {
            let v = f64::from_bits(bits);
            prop_assume!(v.is_finite());
            prop_assert_eq!(shortest(v), format!("{v}"));
        }

        #[test]
        fn shortest_matches_std_on_logged_decimals(int in 0u64..1_000_000_000, frac in 0u32..10_000_000, d in 0usize..8, neg: bool) {
            let frac = frac.to_string();
            let v: f64 = format!("{}{int}.{}", if neg { "-" } else { "" }, &frac[..d.min(frac.len())]).parse().unwrap();
            prop_assert_eq!(shortest(v), format!("{v}"));
        }

        #[test]
        fn shortest_matches_std_near_decimals(int in 0u64..1_000_000_000, frac in 0u32..1_000_000, ulps in -3i64..=3) {
            let v: f64 = format!("{int}.{frac:06}").parse().unwrap();
            let v = f64::from_bits(v.to_bits().saturating_add_signed(ulps));
            prop_assert_eq!(shortest(v), format!("{v}"));
        }

        #[test]
        fn fixed_matches_std(bits in any::<u64>(), d in 0usize..20) {
            let v = f64::from_bits(bits);
            prop_assert_eq!(fixed(v, d), format!("{v:.d$}"));
        }

        #[test]
        fn fixed_matches_std_near_ppm(q40 in -(1i64 << 45)..(1i64 << 45), d in 0usize..13) {
            let v = q40 as f64 / 1_099_511_627_776.0 * 1e6;
            prop_assert_eq!(fixed(v, d), format!("{v:.d$}"));
        }

        #[test]
        fn scaled_is_the_exact_decimal(raw in any::<i32>(), exp in -18i8..=6) {
            let mut out = Vec::new();
            push_scaled(&mut out, i64::from(raw), exp);
            let text = String::from_utf8(out).unwrap();
            // The decimal reads back to raw·10^exp: as an exact rational,
            // compare digit strings with the point removed.
            let digits: String = text.chars().filter(|c| *c != '.' && *c != '-').collect();
            let want = if exp >= 0 {
                if raw == 0 { "0".to_string() } else { format!("{}{}", raw.unsigned_abs(), "0".repeat(exp as usize)) }
            } else {
                format!("{:0>width$}", raw.unsigned_abs(), width = (-exp) as usize + 1)
            };
            prop_assert_eq!(digits, want);
            prop_assert_eq!(text.starts_with('-'), raw < 0);
            if exp < 0 {
                prop_assert_eq!(text.len() - text.find('.').unwrap() - 1, (-exp) as usize);
            }
        }

        #[test]
        fn integers_match_std(v in any::<i64>()) {
            let mut out = Vec::new();
            push_int(&mut out, v);
            prop_assert_eq!(String::from_utf8(out).unwrap(), v.to_string());
        }
    }
}
