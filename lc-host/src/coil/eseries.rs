//! IEC 60063 preferred numbers (the E series) and the nearest preferred
//! value.
//!
//! The tables are hard-coded from IEC 60063:2015 as listed in
//! docs/references.md, Preferred numbers (published, quoted from several
//! identical lists). They are **not** generated: E24 is not round(10^(i/24), 1)
//! (that gives 2.6 2.9 3.2 3.5 3.8 4.2 4.6 8.3 where the standard has 2.7 3.0
//! 3.3 3.6 3.9 4.3 4.7 8.2), and E12 and E6 inherit the same differences. E48
//! and E96 happen to equal round(10^(i/48), 2) and round(10^(i/96), 2) exactly
//! (the tests check it); E192 would not (9.20, not 9.19) and is not offered.
//!
//! Mantissas are stored as integers (two digits for E3–E24, three for
//! E48/E96) and scaled by an exact power of ten, so 4.7 nF comes out as
//! the same `f64` as the literal `4.7e-9`.
//!
//! # Nearest value: by log distance
//!
//! [`nearest`] picks the value v that minimises |ln(v/x)|, i.e. the smallest
//! ratio error, which is how tolerance bands are laid out. The boundary
//! between neighbours a < b is then their geometric mean √(ab), not the
//! arithmetic one: 4.898 is nearer 4.7 linearly but nearer **5.1** by log
//! distance in E24 (the geometric midpoint is 4.896; docs/references.md,
//! Preferred numbers). A value exactly on a boundary goes to the lower
//! neighbour.

use std::str::FromStr;

/// An IEC 60063 series.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, serde::Serialize)]
pub enum ESeries {
    /// 3 values per decade (±40 % class).
    E3,
    /// 6 values per decade (±20 %).
    E6,
    /// 12 values per decade (±10 %).
    E12,
    /// 24 values per decade (±5 %).
    E24,
    /// 48 values per decade (±2 %).
    E48,
    /// 96 values per decade (±1 %).
    E96,
}

const E3: [u16; 3] = [10, 22, 47];
const E6: [u16; 6] = [10, 15, 22, 33, 47, 68];
const E12: [u16; 12] = [10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82];
const E24: [u16; 24] = [
    10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91,
];
const E48: [u16; 48] = [
    100, 105, 110, 115, 121, 127, 133, 140, 147, 154, 162, 169, 178, 187, 196, 205, 215, 226, 237,
    249, 261, 274, 287, 301, 316, 332, 348, 365, 383, 402, 422, 442, 464, 487, 511, 536, 562, 590,
    619, 649, 681, 715, 750, 787, 825, 866, 909, 953,
];
// E96 (from memory); the tests check it equals round(10^(i/96), 2) for
// every i (computed) and that every other value is the confirmed E48.
const E96: [u16; 96] = [
    100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130, 133, 137, 140, 143, 147, 150, 154,
    158, 162, 165, 169, 174, 178, 182, 187, 191, 196, 200, 205, 210, 215, 221, 226, 232, 237, 243,
    249, 255, 261, 267, 274, 280, 287, 294, 301, 309, 316, 324, 332, 340, 348, 357, 365, 374, 383,
    392, 402, 412, 422, 432, 442, 453, 464, 475, 487, 499, 511, 523, 536, 549, 562, 576, 590, 604,
    619, 634, 649, 665, 681, 698, 715, 732, 750, 768, 787, 806, 825, 845, 866, 887, 909, 931, 953,
    976,
];

impl ESeries {
    /// All offered series, coarse to fine.
    pub const ALL: [ESeries; 6] = [
        ESeries::E3,
        ESeries::E6,
        ESeries::E12,
        ESeries::E24,
        ESeries::E48,
        ESeries::E96,
    ];

    /// The mantissas as integers (10…91 or 100…976).
    fn digits(self) -> &'static [u16] {
        match self {
            ESeries::E3 => &E3,
            ESeries::E6 => &E6,
            ESeries::E12 => &E12,
            ESeries::E24 => &E24,
            ESeries::E48 => &E48,
            ESeries::E96 => &E96,
        }
    }

    /// Power of ten that turns the integer mantissas into [1, 10).
    fn digit_exponent(self) -> i32 {
        match self {
            ESeries::E48 | ESeries::E96 => -2,
            _ => -1,
        }
    }

    /// The values of one decade in [1, 10), ascending.
    pub fn decade(self) -> Vec<f64> {
        self.digits()
            .iter()
            .map(|&d| scaled(d, self.digit_exponent()))
            .collect()
    }

    /// Values per decade.
    pub fn len(self) -> usize {
        self.digits().len()
    }

    /// Never empty; present for the `len` convention.
    pub fn is_empty(self) -> bool {
        false
    }

    /// The largest ratio between neighbouring values (including 10 / the
    /// last mantissa): the widest step of the series.
    pub fn widest_step_ratio(self) -> f64 {
        let d = self.decade();
        d.windows(2)
            .map(|p| p[1] / p[0])
            .chain(std::iter::once(10.0 / d[d.len() - 1]))
            .fold(1.0, f64::max)
    }

    /// Name: "E24".
    pub fn name(self) -> &'static str {
        match self {
            ESeries::E3 => "E3",
            ESeries::E6 => "E6",
            ESeries::E12 => "E12",
            ESeries::E24 => "E24",
            ESeries::E48 => "E48",
            ESeries::E96 => "E96",
        }
    }
}

impl std::fmt::Display for ESeries {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for ESeries {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        let t = s.trim().to_ascii_uppercase();
        ESeries::ALL
            .into_iter()
            .find(|e| e.name() == t)
            .ok_or_else(|| {
                format!("{s:?} is not an offered E series: E3, E6, E12, E24, E48 or E96")
            })
    }
}

/// digits × 10^exp, correctly rounded: both operands are exact in `f64` for
/// |exp| ≤ 22, so one multiplication or division rounds once.
fn scaled(digits: u16, exp: i32) -> f64 {
    let d = f64::from(digits);
    if exp >= 0 {
        d * 10f64.powi(exp)
    } else {
        d / 10f64.powi(-exp)
    }
}

/// The preferred value nearest to `value` by log distance (ties to the
/// lower value). `None` unless `value` is finite and above zero and within
/// 1e-280 … 1e280 (so the scaling stays exact enough).
pub fn nearest(series: ESeries, value: f64) -> Option<f64> {
    if !(value.is_finite() && (1e-280..=1e280).contains(&value)) {
        return None;
    }
    let decade = value.log10().floor();
    // |decade| ≤ 280 fits an i32 exactly.
    let decade = decade as i32;
    let mut best: Option<(f64, f64)> = None;
    for dec in [decade - 1, decade, decade + 1] {
        for &d in series.digits() {
            let v = scaled(d, dec + series.digit_exponent());
            let dist = (v / value).ln().abs();
            match best {
                Some((_, bd)) if dist >= bd => {}
                _ => best = Some((v, dist)),
            }
        }
    }
    best.map(|(v, _)| v)
}

/// The preferred values just below and just above `value` (equal to it
/// when `value` is itself preferred). `None` as for [`nearest`].
pub fn bracket(series: ESeries, value: f64) -> Option<(f64, f64)> {
    if !(value.is_finite() && (1e-280..=1e280).contains(&value)) {
        return None;
    }
    // |decade| ≤ 280 fits an i32 exactly.
    let decade = value.log10().floor() as i32;
    let mut below = f64::NEG_INFINITY;
    let mut above = f64::INFINITY;
    for dec in [decade - 1, decade, decade + 1] {
        for &d in series.digits() {
            let v = scaled(d, dec + series.digit_exponent());
            if v <= value && v > below {
                below = v;
            }
            if v >= value && v < above {
                above = v;
            }
        }
    }
    Some((below, above))
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// The lists of docs/references.md, Preferred numbers (IEC 60063:2015;
    /// published, quoted).
    #[test]
    fn tables_as_published() {
        let e24: Vec<f64> = "1.0 1.1 1.2 1.3 1.5 1.6 1.8 2.0 2.2 2.4 2.7 3.0 3.3 3.6 3.9 4.3 4.7 5.1 5.6 6.2 6.8 7.5 8.2 9.1"
            .split(' ')
            .map(|s| s.parse().unwrap())
            .collect();
        assert_eq!(ESeries::E24.decade(), e24);
        let e12: Vec<f64> = "1.0 1.2 1.5 1.8 2.2 2.7 3.3 3.9 4.7 5.6 6.8 8.2"
            .split(' ')
            .map(|s| s.parse().unwrap())
            .collect();
        assert_eq!(ESeries::E12.decade(), e12);
        assert_eq!(ESeries::E6.decade(), vec![1.0, 1.5, 2.2, 3.3, 4.7, 6.8]);
        assert_eq!(ESeries::E3.decade(), vec![1.0, 2.2, 4.7]);
        let e48: Vec<f64> = "1.00 1.05 1.10 1.15 1.21 1.27 1.33 1.40 1.47 1.54 1.62 1.69 1.78 1.87 1.96 2.05 2.15 2.26 2.37 2.49 2.61 2.74 2.87 3.01 3.16 3.32 3.48 3.65 3.83 4.02 4.22 4.42 4.64 4.87 5.11 5.36 5.62 5.90 6.19 6.49 6.81 7.15 7.50 7.87 8.25 8.66 9.09 9.53"
            .split(' ')
            .map(|s| s.parse().unwrap())
            .collect();
        assert_eq!(ESeries::E48.decade(), e48);
        // E96: every other value is E48; E48 and E96 are round(10^(i/N), 2)
        // (docs/references.md, Preferred numbers: E48 computed; E96 computed
        // here).
        let e96 = ESeries::E96.decade();
        assert_eq!(e96.iter().step_by(2).copied().collect::<Vec<_>>(), e48);
        for (series, n) in [(ESeries::E48, 48), (ESeries::E96, 96)] {
            for (i, v) in series.decade().into_iter().enumerate() {
                let g = 10f64.powf(f64::from(u32::try_from(i).unwrap()) / f64::from(n));
                assert_eq!((g * 100.0).round() / 100.0, v, "{series} {i}");
            }
        }
        // Exact scaling: 4.7 nF is the literal.
        assert_eq!(nearest(ESeries::E12, 4.6e-9), Some(4.7e-9));
        assert_eq!(nearest(ESeries::E24, 100e-12), Some(100e-12));
    }

    /// The trap of docs/references.md, Preferred numbers / Traps, item 1: E24
    /// is not round(10^(i/24), 1); the formula differs in exactly these eight
    /// places.
    #[test]
    fn e24_is_not_a_rounded_geometric_series() {
        let mut diffs = vec![];
        for (i, v) in ESeries::E24.decade().into_iter().enumerate() {
            let g = (10f64.powf(f64::from(u32::try_from(i).unwrap()) / 24.0) * 10.0).round() / 10.0;
            if g != v {
                diffs.push((g, v));
            }
        }
        assert_eq!(
            diffs,
            vec![
                (2.6, 2.7),
                (2.9, 3.0),
                (3.2, 3.3),
                (3.5, 3.6),
                (3.8, 3.9),
                (4.2, 4.3),
                (4.6, 4.7),
                (8.3, 8.2)
            ]
        );
        assert!(!ESeries::E24.decade().contains(&4.2));
    }

    /// docs/references.md, Preferred numbers nearest-value cases (computed),
    /// log distance.
    #[test]
    fn nearest_cases() {
        assert_eq!(nearest(ESeries::E12, 5.0), Some(4.7));
        assert_eq!(nearest(ESeries::E24, 5.0), Some(5.1));
        assert_eq!(nearest(ESeries::E24, 2.5), Some(2.4));
        assert_eq!(nearest(ESeries::E12, 8.7), Some(8.2));
        assert_eq!(nearest(ESeries::E24, 8.7), Some(9.1));
        assert_eq!(nearest(ESeries::E24, 9.6), Some(10.0));
        assert_eq!(nearest(ESeries::E12, 9.6), Some(10.0));
        assert_eq!(nearest(ESeries::E12, 3162.28), Some(3300.0));
        assert_eq!(nearest(ESeries::E24, 3162.28), Some(3300.0));
        // The edge case: 4.898 is linearly nearer 4.7 but by log distance
        // nearer 5.1 (geometric midpoint √(4.7·5.1) = 4.896).
        assert_eq!(nearest(ESeries::E24, 4.898), Some(5.1));
        assert_eq!(nearest(ESeries::E24, 4.895), Some(4.7));
        assert!(((4.7f64 * 5.1).sqrt() - 4.896).abs() < 1e-3);
        assert_eq!(bracket(ESeries::E24, 4.898), Some((4.7, 5.1)));
        assert_eq!(bracket(ESeries::E24, 4.7), Some((4.7, 4.7)));
        for bad in [0.0, -1.0, f64::NAN, f64::INFINITY, 1e-300] {
            assert_eq!(nearest(ESeries::E12, bad), None);
        }
        assert_eq!("e24".parse::<ESeries>(), Ok(ESeries::E24));
        assert!("E192".parse::<ESeries>().is_err());
    }

    proptest! {
        /// The nearest value is in the series, within one step of the input
        /// (in fact within half the widest step), and no other value of the
        /// series is nearer.
        #[test]
        fn nearest_in_series_within_one_step(series_i in 0usize..6, exp in -15.0f64..9.0) {
            let series = ESeries::ALL[series_i];
            let x = 10f64.powf(exp);
            let v = nearest(series, x).unwrap();
            // In the series: its mantissa is one of the table's.
            let dec = v.log10().floor();
            let mant = v / 10f64.powf(dec);
            prop_assert!(series.decade().iter().any(|m| (m / mant - 1.0).abs() < 1e-12), "{v}");
            let step = series.widest_step_ratio();
            prop_assert!((v / x).ln().abs() <= 0.5 * step.ln() + 1e-12);
            let (lo, hi) = bracket(series, x).unwrap();
            prop_assert!(lo <= x && x <= hi && (v == lo || v == hi));
            prop_assert!(hi / lo <= step * (1.0 + 1e-12));
        }
    }
}
