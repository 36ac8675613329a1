//! "Nice" axis ticks: steps of 1, 2 or 5 times a power of ten, and labels
//! printed with exactly the decimals the step needs.

use super::xml::count_f64;

/// Spans narrower than this fraction of the values' magnitude are treated
/// as a single value (the axis is widened around it).
const REL_SPAN: f64 = 1e-12;
/// Smallest tick step; data closer together than this (all subnormal) is
/// drawn on this coarser grid.
const MIN_STEP: f64 = 1e-290;
/// Tolerance for floating-point noise when snapping to a tick.
const SNAP: f64 = 1e-9;
/// Upper bound on the ticks one axis gets, whatever the input.
const MAX_TICKS: usize = 64;

/// Tick marks of one axis: the axis range (widened to whole steps) and the
/// tick values, a whole multiple of a step of 1, 2 or 5 × 10ⁿ.
///
/// Built by [`nice_ticks`]. Every value is finite and `lo() < hi()`.
#[derive(Clone, Debug, PartialEq)]
pub struct Ticks {
    lo: f64,
    hi: f64,
    values: Vec<f64>,
    mantissa: u8,
    exponent: i32,
}

impl Ticks {
    /// Lower end of the axis.
    pub fn lo(&self) -> f64 {
        self.lo
    }

    /// Upper end of the axis.
    pub fn hi(&self) -> f64 {
        self.hi
    }

    /// Tick values, ascending.
    pub fn values(&self) -> &[f64] {
        &self.values
    }

    /// The step between ticks.
    pub fn step(&self) -> f64 {
        scaled(1.0, self.mantissa, self.exponent)
    }

    /// The step as (mantissa, decimal exponent): step = mantissa × 10^exponent,
    /// mantissa one of 1, 2, 5.
    pub fn step_parts(&self) -> (u8, i32) {
        (self.mantissa, self.exponent)
    }

    /// Tick labels, one per value.
    ///
    /// Fixed notation with exactly the decimals the step needs (step 0.2 →
    /// one decimal, so 3 × 0.1 prints `0.3`) while the largest magnitude is
    /// below 10⁷ and the step at least 10⁻⁶; otherwise scientific notation
    /// (`2.5e-9`) with the mantissa digits the step needs. Zero prints as
    /// `0` (or `0.0`, … in fixed notation), never `-0`.
    pub fn labels(&self) -> Vec<String> {
        let max_abs = self.values.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        if max_abs < 1e7 && self.exponent >= -6 {
            // exponent >= -6 here, so the decimals are 0..=6.
            let decimals = usize::try_from(-self.exponent).unwrap_or(0);
            self.values
                .iter()
                .map(|&v| format!("{:.*}", decimals, v + 0.0))
                .collect()
        } else {
            let top = decimal_exponent(max_abs);
            let digits = usize::try_from(top - self.exponent).unwrap_or(0);
            self.values
                .iter()
                .map(|&v| {
                    if v == 0.0 {
                        "0".to_string()
                    } else {
                        format!("{:.*e}", digits, v)
                    }
                })
                .collect()
        }
    }
}

/// Chooses ticks for data spanning `lo..=hi`, aiming at about `target`
/// intervals (clamped to 2..=20).
///
/// The step is the smallest of 1, 2, 5 × 10ⁿ not below `(hi - lo) /
/// target`, so there are at most `target + 2` ticks; the axis runs from the
/// last tick at or below `lo` to the first at or above `hi`.
///
/// Degenerate input never fails: ends in either order are swapped; a
/// non-finite end is replaced by the other (both non-finite: 0..1); a span
/// below 10⁻¹² of the magnitude (equal ends, a single point) is widened by
/// ±5 % of the value, or to -1..1 around zero; ranges up to ±`f64::MAX`
/// are handled without overflow, the axis then ending at the data where the
/// next tick would not be finite.
///
/// ```
/// use lc_host::svg::nice_ticks;
/// let t = nice_ticks(0.0, 1.0, 5);
/// assert_eq!(t.values(), &[0.0, 0.2, 0.4, 0.6, 0.8, 1.0]);
/// assert_eq!(t.labels()[3], "0.6");
/// ```
pub fn nice_ticks(lo: f64, hi: f64, target: usize) -> Ticks {
    let target = target.clamp(2, 20);
    let (lo, hi) = widen_degenerate(sanitize(lo, hi));
    // Halves keep the span finite for ranges up to ±f64::MAX.
    let half_span = hi * 0.5 - lo * 0.5;
    let raw = (half_span / count_f64(target) * 2.0).max(MIN_STEP);
    let (mantissa, exponent) = nice_step(raw);
    let step = scaled(1.0, mantissa, exponent);
    let k0 = (lo / step + SNAP).floor();
    let k1 = (hi / step - SNAP).ceil().max(k0 + 1.0);
    let mut values = Vec::new();
    let mut k = k0;
    while k <= k1 && values.len() < MAX_TICKS {
        let v = scaled(k, mantissa, exponent);
        if v.is_finite() {
            values.push(v + 0.0);
        }
        k += 1.0;
    }
    let lo_axis = match values.first() {
        Some(&v) if v <= lo => v,
        _ => lo,
    };
    let hi_axis = match values.last() {
        Some(&v) if v >= hi => v,
        _ => hi,
    };
    Ticks {
        lo: lo_axis,
        hi: hi_axis,
        values,
        mantissa,
        exponent,
    }
}

/// Finite ends in ascending order.
fn sanitize(lo: f64, hi: f64) -> (f64, f64) {
    let (lo, hi) = match (lo.is_finite(), hi.is_finite()) {
        (true, true) => (lo, hi),
        (true, false) => (lo, lo),
        (false, true) => (hi, hi),
        (false, false) => (0.0, 1.0),
    };
    if lo <= hi {
        (lo, hi)
    } else {
        (hi, lo)
    }
}

/// Widens a zero or negligible span around its midpoint.
fn widen_degenerate((lo, hi): (f64, f64)) -> (f64, f64) {
    let mid = lo * 0.5 + hi * 0.5;
    let half_span = hi * 0.5 - lo * 0.5;
    if half_span > 0.0 && half_span > mid.abs() * (REL_SPAN * 0.5) {
        return (lo, hi);
    }
    if mid == 0.0 {
        return (-1.0, 1.0);
    }
    let d = mid.abs() * 0.05;
    (
        (mid - d).clamp(-f64::MAX, f64::MAX),
        (mid + d).clamp(-f64::MAX, f64::MAX),
    )
}

/// The 1-2-5 step not below `raw` (> 0, finite), as (mantissa, exponent).
pub(crate) fn nice_step(raw: f64) -> (u8, i32) {
    let mut exponent = decimal_exponent(raw);
    let mut f = raw / scaled(1.0, 1, exponent);
    if f < 1.0 {
        exponent -= 1;
        f *= 10.0;
    } else if f >= 10.0 {
        exponent += 1;
        f /= 10.0;
    }
    if f <= 1.0 + SNAP {
        (1, exponent)
    } else if f <= 2.0 + SNAP {
        (2, exponent)
    } else if f <= 5.0 + SNAP {
        (5, exponent)
    } else {
        (1, exponent + 1)
    }
}

/// `k × mantissa × 10^exponent`, dividing by the exact power of ten for
/// negative exponents so that e.g. 3 × 0.1 comes out as the `f64` nearest
/// 0.3. `k × mantissa` is an integer far below 2^53, hence exact.
pub(crate) fn scaled(k: f64, mantissa: u8, exponent: i32) -> f64 {
    let whole = k * f64::from(mantissa);
    if exponent >= 0 {
        whole * pow10(exponent)
    } else {
        whole / pow10(-exponent)
    }
}

/// 10^e, correctly rounded (parsed from its decimal form); `inf` above
/// 10^308, which callers filter.
fn pow10(e: i32) -> f64 {
    format!("1e{e}").parse().unwrap_or(f64::INFINITY)
}

/// floor(log10(|v|)) for finite non-zero `v`, read from the decimal
/// scientific form so it is exact at powers of ten; 0 for zero.
fn decimal_exponent(v: f64) -> i32 {
    let s = format!("{:e}", v.abs());
    s.rsplit_once('e')
        .and_then(|(_, e)| e.parse().ok())
        .unwrap_or(0)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn is_one_two_five(t: &Ticks) -> bool {
        matches!(t.step_parts().0, 1 | 2 | 5)
    }

    #[test]
    fn unit_range_gives_fifths() {
        let t = nice_ticks(0.0, 1.0, 5);
        assert_eq!(t.values(), &[0.0, 0.2, 0.4, 0.6, 0.8, 1.0]);
        assert_eq!(t.labels(), ["0.0", "0.2", "0.4", "0.6", "0.8", "1.0"]);
        assert_eq!((t.lo(), t.hi()), (0.0, 1.0));
    }

    #[test]
    fn tenths_print_without_float_noise() {
        let t = nice_ticks(0.0, 0.9, 10);
        assert_eq!(t.step_parts(), (1, -1));
        assert!(t.values().contains(&0.3));
        assert!(t.labels().iter().any(|l| l == "0.3"));
        assert!(t.labels().iter().all(|l| l.len() == 3), "{:?}", t.labels());
    }

    #[test]
    fn milli_range() {
        let t = nice_ticks(0.0012, 0.0047, 5);
        assert!(is_one_two_five(&t));
        assert_eq!(t.step_parts(), (1, -3));
        assert_eq!(t.values(), &[0.001, 0.002, 0.003, 0.004, 0.005]);
        assert_eq!(t.labels(), ["0.001", "0.002", "0.003", "0.004", "0.005"]);
        assert!(t.lo() <= 0.0012 && t.hi() >= 0.0047);
    }

    #[test]
    fn wide_range_across_zero() {
        let t = nice_ticks(-3.0, 1e6, 5);
        assert!(is_one_two_five(&t));
        assert_eq!(t.step(), 500_000.0);
        assert_eq!(t.values(), &[-500_000.0, 0.0, 500_000.0, 1_000_000.0]);
        assert_eq!(t.labels(), ["-500000", "0", "500000", "1000000"]);
        assert!(t.values().contains(&0.0));
    }

    #[test]
    fn large_values_switch_to_scientific() {
        let t = nice_ticks(0.0, 1e8, 5);
        assert_eq!(
            t.labels(),
            ["0", "2.0e7", "4.0e7", "6.0e7", "8.0e7", "1.0e8"]
        );
        let t = nice_ticks(1e-9, 5e-9, 4);
        assert_eq!(t.labels(), ["1e-9", "2e-9", "3e-9", "4e-9", "5e-9"]);
    }

    #[test]
    fn equal_ends_widen_around_the_value() {
        for v in [
            3.0,
            -812.25,
            0.0,
            1e-200,
            -1e300,
            f64::MAX,
            f64::MIN_POSITIVE,
        ] {
            let t = nice_ticks(v, v, 5);
            assert!(t.lo() < t.hi(), "{v}: {t:?}");
            assert!(t.lo() <= v && v <= t.hi(), "{v}: {t:?}");
            assert!(t.values().len() >= 2, "{v}: {t:?}");
            assert!(t.values().iter().all(|x| x.is_finite()));
        }
        let t = nice_ticks(3.0, 3.0, 5);
        assert_eq!(t.values(), &[2.8, 2.9, 3.0, 3.1, 3.2]);
        assert_eq!(
            nice_ticks(0.0, 0.0, 5).values(),
            &[-1.0, -0.5, 0.0, 0.5, 1.0]
        );
    }

    #[test]
    fn reversed_and_non_finite_ends() {
        assert_eq!(nice_ticks(1.0, 0.0, 5), nice_ticks(0.0, 1.0, 5));
        assert_eq!(
            nice_ticks(f64::NAN, f64::INFINITY, 5),
            nice_ticks(0.0, 1.0, 5)
        );
        let t = nice_ticks(f64::NAN, 7.0, 5);
        assert!(t.lo() <= 7.0 && t.hi() >= 7.0);
    }

    #[test]
    fn full_f64_range_stays_finite() {
        let t = nice_ticks(-f64::MAX, f64::MAX, 5);
        assert!(t.lo().is_finite() && t.hi().is_finite() && t.lo() < t.hi());
        assert!(t.values().len() >= 2 && t.values().len() <= 7);
        assert!(t
            .labels()
            .iter()
            .all(|l| !l.contains("inf") && !l.contains("NaN")));
    }

    #[test]
    fn tick_count_stays_near_target() {
        for (lo, hi) in [
            (0.0, 7.0),
            (-1.5, 2.5),
            (123.4, 123.9),
            (1e-7, 3e-6),
            (-9e9, -1e9),
        ] {
            for target in 2..=12 {
                let t = nice_ticks(lo, hi, target);
                let n = t.values().len();
                assert!(n >= 2 && n <= target + 2, "{lo}..{hi} target {target}: {n}");
                assert!(is_one_two_five(&t));
                assert!(t.lo() <= lo && t.hi() >= hi);
            }
        }
    }

    #[test]
    fn negative_zero_never_printed() {
        let t = nice_ticks(-0.4, 0.4, 4);
        assert!(t.labels().iter().all(|l| l != "-0.0" && l != "-0"));
        assert!(t.labels().contains(&"0.0".to_string()));
    }
}
