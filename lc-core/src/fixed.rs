//! Integer helpers shared by the fixed-point stages (crate-private: the
//! stages' public APIs state their own rounding and bounds).
//!
//! Formats are written `Qm.n`: an integer holding a value times 2^n, with m
//! integer bits. Every helper says how it rounds. None of them panics.
//!
//! ```text
//! mul_u32_wide(u32::MAX, u32::MAX) == 0xFFFF_FFFE_0000_0001
//! round_shr_u64(5, 1) == 3          // 2.5 rounds up (half away from zero)
//! round_shr_u64(u64::MAX, 64) == 1
//! ```
//! (checked by the unit test `module_doc_examples`)

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
#[inline(always)]
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
            // sh ≥ 1; t >> 1 < 2^63, so adding the half bit cannot wrap.
            let t = shr_u64(x, sh.wrapping_sub(1));
            (t >> 1).wrapping_add(t & 1)
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
        // The arms bound sh, so no shift count below is out of range.
        1..=31 => {
            let carried = hi.wrapping_shl(32u32.wrapping_sub(sh));
            (u64::from(hi.wrapping_shr(sh)) << 32) | u64::from(lo.wrapping_shr(sh) | carried)
        }
        32..=63 => u64::from(hi.wrapping_shr(sh.wrapping_sub(32))),
        _ => 0,
    }
}

/// `x / 2^sh` rounded to nearest, ties away from zero, for `u128`. `sh`
/// larger than 128 gives 0.
#[inline]
pub fn round_shr_u128(x: u128, sh: u32) -> u128 {
    match sh {
        0 => x,
        // The half bit plus x >> sh (< 2^127): cannot wrap.
        1..=127 => ((x.wrapping_shr(sh.wrapping_sub(1))) & 1).wrapping_add(x.wrapping_shr(sh)),
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
    let (q, r) = if ARMV6M {
        div_rem_u128_serial(n, d)?
    } else {
        (n.checked_div(d)?, n % d)
    };
    // r < d, so d - r > 0; round up when r >= d - r, i.e. 2r >= d. That
    // needs d ≥ 2 (r = 0 for d = 1), so q ≤ n/2 and q + 1 cannot wrap.
    Some(if r >= d.wrapping_sub(r) {
        q.wrapping_add(1)
    } else {
        q
    })
}

/// `n / d` and `n % d` by shift and subtract, one quotient bit per step
/// and only as many steps as the quotient has bits: on a Cortex-M0 a few
/// hundred bytes of code instead of the library's 128-bit division (over
/// a kilobyte), at start-up only. `None` when `d` is zero. Compiled
/// everywhere; a property test holds it equal to the native operators.
#[cfg_attr(not(test), allow(dead_code))]
fn div_rem_u128_serial(n: u128, d: u128) -> Option<(u128, u128)> {
    if d == 0 {
        return None;
    }
    // Align d's top bit below n's: d·2^k ≤ n < d·2^(k+1).
    let (mut dk, mut k) = (d, 0u32);
    while dk <= n >> 1 {
        // dk ≤ n/2 < 2^127: doubling cannot wrap; k < 128.
        dk <<= 1;
        k = k.wrapping_add(1);
    }
    let (mut q, mut r) = (0u128, n);
    if dk > n {
        return Some((0, n)); // n < d
    }
    loop {
        // q < 2^(bits done) ≤ 2^128 / 2: the doubling cannot wrap.
        q <<= 1;
        if r >= dk {
            r -= dk;
            q |= 1;
        }
        if k == 0 {
            return Some((q, r));
        }
        dk >>= 1;
        k = k.wrapping_sub(1);
    }
}

/// `a · 2^32 / d` rounded to nearest, ties away from zero, or `None` when
/// `d` is zero or the result does not fit 64 bits. Exact: two 64 ÷ 32-bit
/// long-division steps with the remainder carried, the same result as the
/// 128-bit division at a fraction of its cost on a 32-bit core; on
/// ARMv6-M both steps divide by one [`Divisor`] (one reciprocal).
pub fn round_div_shl32(a: u64, d: u32) -> Option<u64> {
    let div = Divisor::new(d)?;
    let (q1, r1) = div.div_rem(a);
    if q1 >> 32 != 0 {
        return None; // a/d ≥ 2^32: the result is ≥ 2^64
    }
    // r1 < d < 2^32, so r1 · 2^32 fits and its quotient is below 2^32.
    let (q2, r2) = div.div_rem(u64::from(r1) << 32);
    let q = (q1 << 32) | q2;
    // r2 < d: d − r2 cannot wrap.
    if r2 >= d.wrapping_sub(r2) {
        q.checked_add(1)
    } else {
        Some(q)
    }
}

/// `n / d` and `n % d` for a `u64` dividend and a `u32` divisor, `None`
/// when `d` is zero. Exact, as the operators are; on ARMv6-M without the
/// library's 64-bit division (see [`Divisor`]). To divide several values by
/// one divisor, form the [`Divisor`] once.
#[inline]
pub(crate) fn div_rem_u64_u32(n: u64, d: u32) -> Option<(u64, u32)> {
    Divisor::new(d).map(|div| div.div_rem(n))
}

/// A non-zero `u32` divisor prepared for exact division of `u64` values.
///
/// ARMv6-M has no divide instruction, and there the compiler's 64-bit
/// division is a library routine of about 900 bytes (plus its 32-bit one,
/// about 400) and 300 to 700 instructions a call. Here instead: the divisor
/// is normalised (shifted left by its leading zeros s, top bit set) and
/// its reciprocal v = ⌊(2^64 − 1)/d_n⌋ − 2^32 is formed once
/// ([`reciprocal_word`], a bit-serial long division, about 320
/// instructions, no division instruction); each division is then the
/// dividend shifted left by s as three words and two 2-by-1-word steps
/// ([`div_step`], about 45 instructions each: one 32 × 32 → 64-bit
/// product, one 32-bit product and two conditional corrections; one step
/// when the quotient is below 2^32), the remainder shifted back. About 500
/// instructions for a 64-bit quotient, including the reciprocal; about
/// 390 bytes of code. Each step is the 2-by-1
/// division with a precomputed reciprocal of N. Möller and T. Granlund,
/// "Improved division by invariant integers", IEEE Transactions on
/// Computers 60(2), 2011; the reciprocal is computed here (below).
/// Elsewhere the native operators. Both forms are compiled everywhere and
/// held equal by the tests (every normalised divisor's reciprocal in an
/// ignored exhaustive test; dividends and divisors of every size in
/// property tests).
#[derive(Clone, Copy, Debug)]
pub(crate) struct Divisor {
    /// The divisor, ≥ 1.
    d: u32,
    /// Its leading zeros s, 0..=31.
    shift: u32,
    /// d · 2^s, in 2^31..2^32.
    normalised: u32,
    /// ⌊(2^64 − 1)/(d · 2^s)⌋ − 2^32 (ARMv6-M only; 0 elsewhere).
    reciprocal: u32,
}

impl Divisor {
    /// `d` prepared, `None` when it is zero. On ARMv6-M out of line (one
    /// copy of the reciprocal for every caller); elsewhere it only
    /// stores `d`.
    #[cfg_attr(all(target_arch = "arm", not(target_has_atomic = "32")), inline(never))]
    #[cfg_attr(not(all(target_arch = "arm", not(target_has_atomic = "32"))), inline)]
    pub(crate) fn new(d: u32) -> Option<Self> {
        if d == 0 {
            return None;
        }
        let shift = leading_zeros_u32(d); // 0..=31 for d ≠ 0
        let normalised = d.wrapping_shl(shift);
        let reciprocal = if ARMV6M {
            reciprocal_word(normalised)
        } else {
            0
        };
        Some(Divisor {
            d,
            shift,
            normalised,
            reciprocal,
        })
    }

    /// `n / d` and `n % d`. Exact.
    #[inline]
    pub(crate) fn div_rem(self, n: u64) -> (u64, u32) {
        if ARMV6M {
            self.div_rem_steps(n)
        } else {
            let d = u64::from(self.d);
            // d ≥ 1 (`new`); the remainder is below d < 2^32.
            (n / d, (n % d) as u32)
        }
    }

    /// [`Divisor::div_rem`] by the reciprocal (compiled everywhere so host
    /// tests hold it equal to the operators; the reciprocal is formed here
    /// when `new` left it out). Out of line: one copy for every caller.
    #[inline(never)]
    fn div_rem_steps(self, n: u64) -> (u64, u32) {
        let (s, dn) = (self.shift, self.normalised);
        let v = if ARMV6M {
            self.reciprocal
        } else {
            reciprocal_word(dn)
        };
        // n's exact halves, then n · 2^s as three words; the top one is
        // below 2^s ≤ 2^31 ≤ dn, as each step needs. (s ≤ 31: the shifts
        // below are in range.)
        let (hi, lo) = ((n >> 32) as u32, n as u32);
        let (n2, n1, n0) = if s == 0 {
            (0, hi, lo)
        } else {
            let back = 32u32.wrapping_sub(s);
            (
                hi.wrapping_shr(back),
                hi.wrapping_shl(s) | lo.wrapping_shr(back),
                lo.wrapping_shl(s),
            )
        };
        // The high quotient word is 0 when n's high word is below d: one
        // step then (every quotient below 2^32).
        let (q1, r) = if n2 == 0 && n1 < dn {
            (0, n1)
        } else {
            div_step(n2, n1, dn, v)
        };
        let (q0, r) = div_step(r, n0, dn, v);
        // r = (n · 2^s) mod dn = (n mod d) · 2^s: the shift back is exact.
        ((u64::from(q1) << 32) | u64::from(q0), r.wrapping_shr(s))
    }
}

/// One 2-by-1-word division step: (u1 · 2^32 + u0) / d and its remainder,
/// for a normalised d (top bit set), u1 < d (so the quotient is below
/// 2^32) and v = ⌊(2^64 − 1)/d⌋ − 2^32 ([`reciprocal_word`]). Möller and
/// Granlund's 2-by-1 division: the estimate u1 + 1 + ⌊(v · u1 + u0)/2^32⌋
/// (word arithmetic, modulo 2^32) is at most one above or below the
/// quotient's and its remainder, taken modulo 2^32, tells which; the
/// second correction is rare. Exact under those preconditions (the
/// property tests), and panic-free for any input (wrapping word
/// arithmetic). Out of line: one copy serves both steps (and the results
/// come back in two registers).
#[inline(never)]
fn div_step(u1: u32, u0: u32, d: u32, v: u32) -> (u32, u32) {
    let p = mul_u32_wide(v, u1).wrapping_add((u64::from(u1) << 32) | u64::from(u0));
    let (q1, q0) = ((p >> 32) as u32, p as u32); // exact halves
    let q1 = q1.wrapping_add(1);
    let r = u0.wrapping_sub(q1.wrapping_mul(d));
    let (q1, r) = if r > q0 {
        (q1.wrapping_sub(1), r.wrapping_add(d))
    } else {
        (q1, r)
    };
    if r >= d {
        (q1.wrapping_add(1), r.wrapping_sub(d))
    } else {
        (q1, r)
    }
}

/// v = ⌊(2^64 − 1)/d⌋ − 2^32 for a normalised d (2^31 ≤ d < 2^32; the top
/// bit is set here whatever the argument), exactly, without division.
///
/// Long division of 2^64 − 1 by d, one quotient bit per step (restoring,
/// in 32-bit words): the quotient lies in (2^32, 2^33), its top bit is 1
/// with the remainder r = (2^32 − 1) − d < d, and each of the 32 low
/// bits of the dividend (all ones) brings r to 2r + 1, which d goes into
/// at most once. Compared without forming 2r + 1 (which needs 33 bits):
/// 2r + 1 ≥ d exactly when r ≥ t = (d − 1) − r, and then 2r + 1 − d =
/// r − t. v collects the 32 low quotient bits behind the top one, which
/// marks the end of the loop and is shifted out by the last bit.
///
/// About 320 instructions on a Cortex-M0 (ten a bit) in a few dozen
/// bytes of code: memory before speed. A Newton iteration from a linear
/// seed (with a third-order step and a remainder check) takes about 120
/// instructions but costs every firmware linking [`Divisor`] about 190
/// bytes more. The reciprocal is formed at start-up (the converters' and
/// the fault window's checks) and by each division of the division path
/// (a pair off the configured gate) and of the frequency and period
/// ratios, never on the configured-gate path. Exact for every
/// normalised d (`reciprocal_word_exhaustive`, an ignored test of a few
/// minutes in release; `reciprocal_word_sweep` checks every 61st d and the
/// ends on every test run).
#[inline]
fn reciprocal_word(d: u32) -> u32 {
    let d = d | (1 << 31);
    let dm1 = d.wrapping_sub(1);
    // The top quotient bit: 1, with r = (2^32 − 1) − d < 2^31 ≤ d.
    let mut r = !d;
    let mut v = 1u32;
    // 31 steps: the top bit's 1 reaches bit 31.
    while v < 1 << 31 {
        // r < d, so t = (d − 1) − r ≥ 0 and r − t = 2r + 1 − d < d when
        // r ≥ t; otherwise 2r + 1 < d: no step wraps.
        let t = dm1.wrapping_sub(r);
        let bit = r >= t;
        r = if bit {
            r.wrapping_sub(t)
        } else {
            r.wrapping_add(r).wrapping_add(1)
        };
        v = (v << 1) | u32::from(bit);
    }
    // The 32nd bit; the top bit's 1 leaves v.
    let t = dm1.wrapping_sub(r);
    (v << 1) | u32::from(r >= t)
}

/// Whether this is ARMv6-M (Cortex-M0/M0+): no divide, no count of leading
/// zeros, only a 32 × 32 → 32-bit multiply.
pub(crate) const ARMV6M: bool = cfg!(all(target_arch = "arm", not(target_has_atomic = "32")));

/// Leading zeros of a `u32`. ARMv6-M has no count-leading-zeros
/// instruction; there two halving steps and a 128-byte table inline
/// ([`leading_zeros_steps`]) replace the library's count, a call of about
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
    // Each step's shift chosen, then applied (as a loop over the step
    // sizes, the compiler keeps the sizes in memory in some callers).
    let z16 = if x >> 16 == 0 { 16 } else { 0 };
    let v = x << z16;
    let z8 = if v >> 24 == 0 { 8 } else { 0 };
    let v = v << z8;
    // The top byte is 1..=255 here; its top seven bits index the table.
    z16 + z8 + u32::from(LEADING_ZEROS_OF_HALF_BYTE[(v >> 25) as usize])
}

/// The leading zeros of a byte value 1..=255 from its top seven bits i
/// (b = 2i or 2i + 1): those of 2i for i ≥ 1, 7 (b = 1) for i = 0. The
/// last three steps of [`leading_zeros_steps`] as one load, with the
/// lowest bit, which never changes the count of a nonzero byte but 1,
/// dropped: 128 bytes of flash instead of 256, and the same instructions.
const LEADING_ZEROS_OF_HALF_BYTE: [u8; 128] = {
    let mut table = [7u8; 128];
    let mut i = 1;
    while i < 128 {
        table[i] = ((2 * i) as u8).leading_zeros() as u8;
        i += 1;
    }
    table
};

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

/// `v` as a 32-bit mantissa m (2^31 ≤ m < 2^32), rounded to nearest, and z
/// with v ≈ m · 2^(32 − z); (0, 32) for v = 0. Relative error ≤ 2^-32.
/// Done in 32-bit halves ([`normalise_parts`]): ARMv6-M has no 64-bit shift
/// or count of leading zeros, and each would be a library call. The level
/// ratio ([`div_q40`]) and the NTC conversion use it.
#[inline]
pub(crate) fn normalise(v: u64) -> (u32, u32) {
    normalise_inline(v)
}

/// [`normalise`], always inlined: the level reader's ratio, where the
/// call and its spills would be paid on every reading.
#[inline(always)]
fn normalise_inline(v: u64) -> (u32, u32) {
    let Some((z, top, round)) = normalise_parts(v) else {
        return (0, 32);
    };
    match top.checked_add(round) {
        Some(m) => (m, z),
        // Rounded up to 2^32: 2^31 at the next exponent. z ≥ 1 here, since
        // with z = 0 the value would need 64 bits and a set rounding bit,
        // which only v ≥ 2^64 − 2^31 has; the callers pass at most 2^63,
        // and `saturating_sub` keeps even larger values panic-free (the
        // shift, which can reach 2^64 − 1, takes the parts instead).
        None => (1 << 31, z.saturating_sub(1)),
    }
}

/// The steps of [`normalise`] before its rounding: for v ≠ 0, the leading
/// zeros z (0..=63), the top 32 bits from the leading one (`top`, its top
/// bit set) and the next bit (`round`, 0 or 1); `None` for v = 0. The
/// caller adds `round` to `top` and, on a carry out, takes 2^31 at z − 1.
/// One count of leading zeros: a zero high word takes the low one (32
/// zeros more) first, so on ARMv6-M, where the count is inline steps and a
/// table, each caller holds one copy of them instead of one per word.
/// Always inlined: the level reader's ratio and the shift's squaring pay
/// no call.
#[inline(always)]
pub(crate) fn normalise_parts(v: u64) -> Option<(u32, u32, u32)> {
    let (hi, lo) = ((v >> 32) as u32, v as u32); // exact halves
    let (hi, lo, z_word) = if hi != 0 {
        (hi, lo, 0)
    } else if lo != 0 {
        (lo, 0, 32)
    } else {
        return None;
    };
    // 0..=31 for hi ≠ 0: the shift counts below are in range (the
    // compiler cannot see it through `leading_zeros_u32`, hence the
    // wrapping forms, which are the plain shifts here).
    let z = leading_zeros_u32(hi);
    let top = if z == 0 {
        hi
    } else {
        hi.wrapping_shl(z) | lo.wrapping_shr(32u32.wrapping_sub(z))
    };
    Some((z.wrapping_add(z_word), top, lo.wrapping_shl(z) >> 31))
}

/// `x` shifted left by its leading zeros z (top bit set) and z; (0, 64)
/// for x = 0. On ARMv6-M in 32-bit words ([`shl_to_top_words`]): no
/// library call. Exact.
#[inline]
pub(crate) fn shl_to_top(x: u64) -> (u64, u32) {
    if ARMV6M {
        shl_to_top_words(x)
    } else {
        let z = x.leading_zeros();
        (x.checked_shl(z).unwrap_or(0), z)
    }
}

/// [`shl_to_top`] in words: a zero high word takes the low one (32 more
/// zeros), then one count and one two-word shift (compiled everywhere so
/// host tests hold it equal to the native operations).
#[inline]
fn shl_to_top_words(x: u64) -> (u64, u32) {
    let (mut hi, mut lo, mut z) = ((x >> 32) as u32, x as u32, 0u32); // exact halves
    if hi == 0 {
        (hi, lo, z) = (lo, 0, 32);
    }
    // k ≤ 31 for hi ≠ 0; k = 32 only for x = 0, where every word is 0.
    let k = leading_zeros_u32(hi);
    if k != 0 {
        // 1 ≤ k ≤ 32: the shift counts are in range or shift a zero word.
        hi = hi.wrapping_shl(k) | lo.wrapping_shr(32u32.wrapping_sub(k));
        lo = lo.wrapping_shl(k);
    }
    // z ≤ 32 and k ≤ 32: the sum cannot wrap.
    ((u64::from(hi) << 32) | u64::from(lo), z.wrapping_add(k))
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

/// Seeds of Y ≈ 2^63/m at the nodes m = (64 + k)·2^25, k in 0..=64: the
/// seed there is 2^31 + S_k·2^15 with S_k = ⌊2^23/d − 2^20/d³⌋ − 2^16,
/// d = 64 + k (0 at k = 64, where the formula gives −1). The 2^20/d³
/// (4/x³ units of 2^15 for x = d/64) sets the nodes below 2^38/d by about
/// half of the chord's largest excess over the convex 2^38/d between two
/// nodes (8/x³ units) and of the interpolation's truncation (under one),
/// so a seed's error is centred on zero. 130 bytes of flash.
const RECIPROCAL_SEEDS: [u16; 65] = {
    let mut table = [0u16; 65];
    let mut k = 0;
    while k < 65 {
        // d in 64..=128: 2^23·d² ≤ 2^37 and d³ ≤ 2^21 fit u64; the quotient
        // lies in [2^16 − 1, 2^17), so less 2^16 it fits u16.
        let d = 64 + k as u64;
        let v = ((1u64 << 23) * d * d - (1 << 20)) / (d * d * d);
        table[k] = if v < 1 << 16 {
            0
        } else {
            (v - (1 << 16)) as u16
        };
        k += 1;
    }
    table
};

/// Y ≈ 2^63/m for a normalised m (top bit set; then 2^31 ≤ Y < 2^32),
/// within a relative 2^-28, the bound its users state theirs from: the
/// worst over every normalised m is 0.4815·2^-28 (below the exact
/// quotient, at m = 0x80F9_0575; 0.0625·2^-28 above it, at m =
/// 0xDC2D_23D2), measured by `reciprocal_exhaustive` (an ignored test of
/// about 25 s in release; `reciprocal_sweep` runs a sixty-first of it on
/// every test run).
///
/// The method: a seed y0 = 2^31 + s·2^15 from the chord between the two
/// [`RECIPROCAL_SEEDS`] around m (64 intervals, m's bits 9..24 the place
/// t on the chord), relative error e below 2^-14.7 (the chord's excess
/// and the 16-bit nodes' rounding, centred on zero), then one Newton step
/// y = y0 + y0·e with e·2^32 = r = 2^32 − m − m·s/2^16 (modulo 2^32; the
/// exact residual 2^63 − m·y0 over 2^31): its error is e², below
/// 2^-29.4, and the truncations of the residual's and the correction's
/// low bits add at most about 3 units (2^-29.4 relative at m near 2^32).
/// No division and no 32 × 32 → 64-bit product: five multiplies, each
/// below 2^32 (|r| < 2^17.22 over every m, `reciprocal_exhaustive`), 40
/// instructions on a Cortex-M0, the call included (`run.sh profile`).
/// The level ratio ([`div_q40`]), the drift model's offset form and the
/// NTC's temperature from 1/T use it: on ARMv6-M through one out-of-line
/// copy (inlined into the level reading and again into the drift offset,
/// an earlier form of it cost a level firmware about 120 bytes more and
/// its reading 1.5 instructions more, the spills around it included).
#[cfg_attr(all(target_arch = "arm", not(target_has_atomic = "32")), inline(never))]
#[cfg_attr(not(all(target_arch = "arm", not(target_has_atomic = "32"))), inline)]
pub(crate) fn reciprocal_q63(m: u32) -> u32 {
    // Normalised by contract. Bits 25..30 pick the chord j, bits 9..24 the
    // place t on it (Q16).
    let m = m | (1 << 31);
    let j = ((m >> 25) & 63) as usize;
    let t = (m >> 9) & 0xFFFF;
    // Nodes j and j + 1 ≤ 64: in bounds. The seeds fall with k, so the
    // difference is positive, below 2^11; times t it is below 2^27.
    let (a, b) = (
        u32::from(RECIPROCAL_SEEDS[j]),
        u32::from(RECIPROCAL_SEEDS[j + 1]),
    );
    // None of the operations below can wrap, except where written modulo
    // 2^32 on purpose (the residual); they are written in their wrapping
    // forms because the compiler cannot see the table's values.
    let s = a.wrapping_sub(a.wrapping_sub(b).wrapping_mul(t) >> 16);
    // m·s/2^16 = (m >> 16)·s + (m mod 2^16)·s/2^16, s < 2^16: each product
    // below 2^32. r = 2^32 − m − m·s/2^16 is small (|r| < 2^17.22), so
    // modulo 2^32 read as an i32 it is exact (the truncation raises it by
    // under 1).
    let r = 0u32
        .wrapping_sub(m)
        .wrapping_sub((m >> 16).wrapping_mul(s))
        .wrapping_sub((m & 0xFFFF).wrapping_mul(s) >> 16) as i32;
    // y0·e = r·(2^31 + s·2^15)/2^32 = r/2 + r·s/2^17, r·s from r's top
    // (|r >> 9| < 2^8.3) and its low 9 bits: both products below 2^26.
    let (rh, rl) = (r >> 9, (r & 511) as u32);
    let correction = (r >> 1)
        .wrapping_add(rh.wrapping_mul(s as i32) >> 8)
        .wrapping_add((rl.wrapping_mul(s) >> 17) as i32);
    // y = 2^31 + s·2^15 + correction lies in [2^31, 2^32) (the exhaustive
    // test); s·2^15 < 2^31.
    (s << 15)
        .wrapping_add(correction as u32)
        .wrapping_add(1 << 31)
}

/// The quotient a/b in Q.40, a · 2^40 / b to within a relative 2^-27
/// plus half a unit, or `None` when b is zero or the quotient does not fit
/// an `i64`. No division: both operands are rounded to 32-bit mantissas
/// (relative error ≤ 2^-32 each), the divisor's reciprocal comes from a
/// table chord and one Newton step (`reciprocal_q63`, ≤ 2^-28; the same
/// reciprocal as the NTC conversion's), their product is rounded to Q.40
/// (≤ 2^-32 relative, or half a unit): 2^-28 + 3·2^-32 in all, stated as
/// 2^-27. For the level reader's ratio of two shifts, finer than `f32`
/// (2^-24) and than the counts behind the shifts (a count in 550 000 is
/// 2^-19).
pub fn div_q40(a: i64, b: i64) -> Option<i64> {
    if b == 0 {
        return None;
    }
    let q = div_q40_by_positive(a, b.unsigned_abs())?;
    Some(if b < 0 { -q } else { q })
}

/// [`div_q40`] for a positive divisor (the level reader's reference shift,
/// checked positive first), without the divisor's sign and zero tests; a
/// zero `b` divides by 1.
#[inline(always)]
pub(crate) fn div_q40_by_positive(a: i64, b: u64) -> Option<i64> {
    let q = quotient_q40(a.unsigned_abs(), b | u64::from(b == 0))?;
    Some(if a < 0 { -q } else { q })
}

/// |a|·2^40/b for b ≠ 0, as [`div_q40`] states it; `None` when it does
/// not fit an `i64`.
#[inline(always)]
fn quotient_q40(a: u64, b: u64) -> Option<i64> {
    // a, b ≤ 2^63: a ≈ ma · 2^(32 − za), b ≈ mb · 2^(32 − zb); a = 0 gives
    // ma = 0 and so q = 0.
    let (ma, za) = normalise_inline(a);
    let (mb, zb) = normalise_inline(b);
    // ma·Y ≈ ma·2^63/mb lies in [2^62, 2^64).
    let p = mul_u32_wide(ma, reciprocal_q63(mb));
    // a/b ≈ p · 2^(zb − za − 63); in Q.40: p · 2^(zb − za − 23). z ≤ 63.
    // z ≤ 63 each (normalise's contract): the difference cannot wrap.
    let sh = (zb as i32).wrapping_sub(za as i32).wrapping_sub(23);
    let q = if sh >= 0 {
        let sh = sh.unsigned_abs();
        if sh >= 64 || leading_zeros_u64(p) <= sh {
            return None;
        }
        shl_u64(p, sh)
    } else {
        round_shr_u64(p, sh.unsigned_abs())
    };
    i64::try_from(q).ok()
}

/// Number of significant bits of `x` (0 for 0, 64 for values ≥ 2^63).
#[inline]
pub fn bit_length_u128(x: u128) -> u32 {
    128 - x.leading_zeros()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn module_doc_examples() {
        assert_eq!(mul_u32_wide(u32::MAX, u32::MAX), 0xFFFF_FFFE_0000_0001);
        assert_eq!(round_shr_u64(5, 1), 3);
        assert_eq!(round_shr_u64(u64::MAX, 64), 1);
    }
    use proptest::prelude::*;

    proptest! {
        /// The shift-and-subtract 128-bit division (the ARMv6-M form of
        /// `round_div_u128`) equals the native operators.
        #[test]
        fn serial_division_equals_the_native_one(n: u128, d in 1u128.., sh in 0u32..128) {
            let d = (d >> sh).max(1);
            prop_assert_eq!(div_rem_u128_serial(n, d), Some((n / d, n % d)));
            prop_assert_eq!(div_rem_u128_serial(n >> sh, d), Some(((n >> sh) / d, (n >> sh) % d)));
        }
    }

    proptest! {
        /// `normalise_parts` is the native normalisation: x shifted left
        /// by its leading zeros, its top word and the bit below it.
        #[test]
        fn normalise_parts_is_the_native_shift(hi in prop_oneof![Just(0u32), Just(1), any::<u32>()], lo in prop_oneof![Just(0u32), Just(1), any::<u32>()]) {
            let x = (u64::from(hi) << 32) | u64::from(lo);
            let native = (x != 0).then(|| {
                let z = x.leading_zeros();
                let y = x << z;
                (z, (y >> 32) as u32, ((y >> 31) & 1) as u32)
            });
            prop_assert_eq!(normalise_parts(x), native);
        }
    }

    proptest! {
        /// The ARMv6-M forms (binary-search count of leading zeros, shifts
        /// in words) equal the native operations.
        #[test]
        fn armv6m_forms_equal_the_native_operations(x: u64, sh in 0u32..64) {
            prop_assert_eq!(leading_zeros_words(x), x.leading_zeros());
            prop_assert_eq!(leading_zeros_words(x >> sh), (x >> sh).leading_zeros());
            prop_assert_eq!(leading_zeros_steps((x >> sh) as u32), ((x >> sh) as u32).leading_zeros());
            prop_assert_eq!(shl_u64(x, sh), x << sh);
            prop_assert_eq!(shr_u64_words(x, sh), x >> sh);
            let y = (x >> sh).max(1);
            prop_assert_eq!(shl_to_top_words(y), (y << y.leading_zeros(), y.leading_zeros()));
        }

        /// The reciprocal within its stated 2^-28 for any normalised m,
        /// checked in exact integers: |Y·m − 2^63| ≤ 2^-28 · 2^63.
        #[test]
        fn reciprocal_within_its_bound(m in (1u32 << 31)..) {
            let err = (u128::from(reciprocal_q63(m)) * u128::from(m)).abs_diff(1 << 63);
            prop_assert!(err <= 1 << 35, "m {} err {}", m, err);
        }
    }

    /// |Y·m − 2^63| for the reciprocal Y of a normalised m, exactly; and Y
    /// in [2^31, 2^32), as its callers rely on.
    fn reciprocal_error(m: u32) -> u128 {
        let y = reciprocal_q63(m);
        assert!(y >= 1 << 31, "m {m:#x} y {y:#x}");
        (u128::from(y) * u128::from(m)).abs_diff(1 << 63)
    }

    /// The seeds as stated (recomputed in floating point: within half a
    /// unit of 2^23/d − 2^16 − 4/x³ − 1/2, the last one 0), and the
    /// reciprocal within its bound at both ends and the middle of every
    /// chord and on a sweep of every 61st mantissa (2^25.1 of them, the
    /// worst relative error seen 0.4707·2^-28), checked in exact
    /// integers.
    #[test]
    fn reciprocal_sweep() {
        for (k, &v) in RECIPROCAL_SEEDS.iter().enumerate() {
            let d = 64.0 + k as f64;
            let x = d / 64.0;
            let exact = 2f64.powi(23) / d - 2f64.powi(16) - 4.0 / (x * x * x) - 0.5;
            let expected = if k == 64 { 0.0 } else { exact };
            assert!((f64::from(v) - expected).abs() <= 0.5, "seed {k}");
        }
        let mut ms: Vec<u32> = (0u32..64)
            .flat_map(|j| {
                let lo = (1 << 31) + (j << 25);
                [lo, lo + 1, lo + (1 << 24), lo + ((1 << 25) - 1)]
            })
            .collect();
        ms.extend(((1u64 << 31)..(1u64 << 32)).step_by(61).map(|m| m as u32));
        ms.push(u32::MAX);
        let worst = ms.iter().map(|&m| reciprocal_error(m)).max().unwrap_or(0);
        // The contract, 2^-28 · 2^63; and the measured worst, 0.48·2^-28.
        assert!(worst <= 1 << 35);
        assert!(
            worst <= (1 << 35) / 100 * 48,
            "worst {}·2^-28",
            worst as f64 / 2f64.powi(35)
        );
    }

    /// Every normalised mantissa: the reciprocal within its stated 2^-28
    /// and in [2^31, 2^32), the worst 0.4815·2^-28 at m = 0x80F9_0575;
    /// the Newton step's residual within its stated 2^17.22.
    /// About 25 s in release:
    /// `cargo test --release -p lc-core reciprocal_exhaustive -- --ignored`.
    #[test]
    #[ignore]
    fn reciprocal_exhaustive() {
        let (mut worst, mut at, mut residual) = (0u128, 0u32, 0i64);
        for m in (1u32 << 31)..=u32::MAX {
            let err = reciprocal_error(m);
            if err > worst {
                (worst, at) = (err, m);
            }
            // The seed and the residual r as `reciprocal_q63` forms them
            // (r here in an i64, the same value): the bound its comments
            // state.
            let j = ((m >> 25) & 63) as usize;
            let (a, b) = (
                u32::from(RECIPROCAL_SEEDS[j]),
                u32::from(RECIPROCAL_SEEDS[j + 1]),
            );
            let s = a - (((a - b) * ((m >> 9) & 0xFFFF)) >> 16);
            let r = (1i64 << 32) - i64::from(m) - ((i64::from(m) * i64::from(s)) >> 16);
            residual = residual.max(r.abs());
        }
        // |r| < 2^17.22.
        assert!((residual as f64) < 2f64.powf(17.22), "|r| {residual}");
        assert!(
            worst <= (1 << 35) / 10000 * 4816,
            "{}·2^-28 at {at:#x}",
            worst as f64 / 2f64.powi(35)
        );
        assert_eq!(at, 0x80F9_0575);
    }

    /// The exact reciprocal of a normalised divisor, from the definition in
    /// 128-bit integers.
    fn exact_reciprocal(d: u32) -> u32 {
        (u128::from(u64::MAX) / u128::from(d) - (1u128 << 32)) as u32
    }

    /// [`reciprocal_word`] exact at `d`.
    fn check_reciprocal_word(d: u32) {
        assert_eq!(reciprocal_word(d), exact_reciprocal(d), "d {d:#x}");
    }

    /// The reciprocal at both ends of the normalised range, around every
    /// 2^16 boundary (every 97th), and at every 61st d.
    #[test]
    fn reciprocal_word_sweep() {
        for d in [
            1u32 << 31,
            (1 << 31) + 1,
            3 << 30,
            (3 << 30) - 1,
            u32::MAX - 1,
            u32::MAX,
        ] {
            check_reciprocal_word(d);
        }
        for k in (0u32..1 << 15).step_by(97) {
            let base = (1u32 << 31) + (k << 16);
            for d in [base, base + 1, base + 0xFFFF] {
                check_reciprocal_word(d);
            }
        }
        for d in ((1u64 << 31)..(1u64 << 32)).step_by(61) {
            check_reciprocal_word(d as u32);
        }
    }

    /// Every normalised divisor: the reciprocal exact. A few minutes in
    /// release:
    /// `cargo test --release -p lc-core reciprocal_word_exhaustive -- --ignored`.
    #[test]
    #[ignore]
    fn reciprocal_word_exhaustive() {
        for d in (1u32 << 31)..=u32::MAX {
            check_reciprocal_word(d);
        }
    }

    /// The division by a reciprocal (the ARMv6-M form) and the native one.
    fn check_division(n: u64, d: u32) {
        let expected = (n / u64::from(d), (n % u64::from(d)) as u32);
        let div = Divisor::new(d).unwrap();
        assert_eq!(div.div_rem_steps(n), expected, "{n} / {d}");
        assert_eq!(div.div_rem(n), expected, "{n} / {d}");
        assert_eq!(div_rem_u64_u32(n, d), Some(expected), "{n} / {d}");
    }

    #[test]
    fn division_corners() {
        assert!(Divisor::new(0).is_none());
        assert_eq!(div_rem_u64_u32(5, 0), None);
        let ds = [
            1u32,
            2,
            3,
            7,
            0xFFFF,
            0x1_0000,
            0x1_0001,
            1 << 31,
            (1 << 31) + 1,
            (1 << 31) - 1,
            u32::MAX - 1,
            u32::MAX,
        ];
        for d in ds {
            let wide = u64::from(d);
            for n in [
                0u64,
                1,
                wide - 1,
                wide,
                wide + 1,
                (wide << 32) - 1,
                wide << 32,
                1 << 63,
                u64::MAX - 1,
                u64::MAX,
                u64::MAX / wide * wide,
                (u64::MAX / wide * wide).wrapping_sub(1),
            ] {
                check_division(n, d);
            }
        }
    }

    proptest! {
        /// Exact for dividends and divisors of every size (shifted right
        /// by random amounts so small ones are drawn as often as large).
        #[test]
        fn division_by_a_reciprocal_is_exact(n: u64, d in 1u32.., ns in 0u32..64, ds in 0u32..32) {
            let d = (d >> ds).max(1);
            check_division(n, d);
            check_division(n >> ns, d);
            // Quotients just below and at a multiple of d.
            let m = (n >> ns) / u64::from(d) * u64::from(d);
            check_division(m, d);
            check_division(m.wrapping_sub(1), d);
        }
    }

    #[test]
    fn normalised_mantissas() {
        assert_eq!(normalise(0), (0, 32));
        assert_eq!(normalise(1), (1 << 31, 63));
        assert_eq!(normalise(u64::MAX >> 1), (1 << 31, 0));
        assert_eq!(normalise(3 << 40), (3 << 30, 22));
        assert_eq!(normalise(0xFFFF_FFFF_7FFF_FFFF), (u32::MAX, 0));
        assert_eq!(normalise(0x1_FFFF_FFFF), (1 << 31, 30));
    }

    #[test]
    fn shifted_to_the_top() {
        for f in [shl_to_top, shl_to_top_words] {
            assert_eq!(f(0), (0, 64));
            assert_eq!(f(1), (1 << 63, 63));
            assert_eq!(f(u64::MAX), (u64::MAX, 0));
            assert_eq!(f(3 << 31), (3 << 62, 31));
            assert_eq!(f(1 << 32), (1 << 63, 31));
            assert_eq!(f(u64::from(u32::MAX)), (u64::from(u32::MAX) << 32, 32));
        }
    }

    #[test]
    fn armv6m_forms_at_the_edges() {
        for x in [0u64, 1, 1 << 31, 1 << 32, 1 << 63, u64::MAX] {
            assert_eq!(leading_zeros_words(x), x.leading_zeros());
            assert_eq!(shr_u64_words(x, 64), 0);
            assert_eq!(shr_u64_words(x, 63), x >> 63);
            assert_eq!(leading_zeros_steps(x as u32), (x as u32).leading_zeros());
        }
        // Every byte value at every place: each table entry, both values
        // that share it, and each step's choice.
        for b in 0u32..256 {
            for sh in 0..=24 {
                for x in [b << sh, (b << sh) | ((1 << sh) - 1)] {
                    assert_eq!(leading_zeros_steps(x), x.leading_zeros(), "{x:#x}");
                }
            }
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
        for (n, d) in [
            (0u128, 1u128),
            (1, 1),
            (7, 2),
            (5, 3),
            (u128::MAX, 1),
            (u128::MAX, u128::MAX),
            (1 << 127, 3),
            (12345, 1 << 100),
        ] {
            assert_eq!(div_rem_u128_serial(n, d), Some((n / d, n % d)), "{n} / {d}");
        }
        assert_eq!(div_rem_u128_serial(5, 0), None);
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

        /// The positive-divisor form equals the general division.
        #[test]
        fn division_by_a_positive_divisor_is_the_division(a: i64, b in 1i64.., small in 1i64..1 << 20) {
            prop_assert_eq!(div_q40_by_positive(a, b.unsigned_abs()), div_q40(a, b));
            prop_assert_eq!(div_q40_by_positive(a, small.unsigned_abs()), div_q40(a, small));
            prop_assert_eq!(div_q40_by_positive(a >> 20, b.unsigned_abs()), div_q40(a >> 20, b));
        }

        #[test]
        fn q40_division_within_its_bound(a: i64, b: i64) {
            if let Some(q) = div_q40(a, b) {
                let exact = (a as f64) / (b as f64) * 2f64.powi(40);
                prop_assert!((q as f64 - exact).abs() <= exact.abs() * 2f64.powi(-27) + 1.0, "{} vs {}", q, exact);
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
