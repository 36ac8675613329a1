//! Quantities as people type and read them: one parser for numbers with SI
//! prefixes, one for lengths with a unit, and one engineering-notation
//! formatter. Every command that asks for a quantity uses these.
//!
//! ```
//! use lc_host::quantity::{eng, parse_length, parse_si};
//! assert_eq!(parse_si("48M").unwrap(), 48e6);
//! assert_eq!(parse_si("100pF").unwrap(), 100e-12);
//! assert_eq!(parse_si("4.7kΩ").unwrap(), 4700.0);
//! assert_eq!(parse_length("20mm").unwrap(), 0.02);
//! assert_eq!(eng(7.2461e-6, "H"), "7.246 µH");
//! ```

/// Why a quantity did not parse. The message quotes the text and shows
/// what would be accepted.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum QuantityError {
    /// Not a finite number with an optional SI prefix and unit.
    #[error(
        "{0:?} is not a number with an optional SI prefix (for example 7.25u, 100p, 48M, 4.7k)"
    )]
    NotANumber(String),
    /// A length without a unit.
    #[error("{0:?} needs a unit: mm, um (µm), cm, m, in or mil, for example 20mm or 300um")]
    LengthNeedsUnit(String),
    /// A length whose number does not parse.
    #[error("{0:?} is not a number followed by a unit, for example 20mm")]
    NotALength(String),
    /// A whole number that does not parse or is out of its range.
    #[error("{text:?} is not a whole number from {min} to {max}")]
    Count {
        /// The text.
        text: String,
        /// Smallest accepted value.
        min: u64,
        /// Largest accepted value.
        max: u64,
    },
}

/// Units a quantity may carry after its prefix; they are checked for shape
/// only (the option says which unit it wants).
const UNITS: [&str; 8] = ["Hz", "S/m", "ohm", "Ω", "H", "F", "s", "V"];

/// A number with an optional SI prefix (f, p, n, u or µ, m, k, M, G, T) and
/// an optional unit (Hz, H, F, s, Ω or ohm, S/m, V; not K, which would
/// read "10K" as ten): "7.25u", "100pF",
/// "48MHz", "4.7kΩ", "35MS/m", "1e-9". A bare "m" is milli; lengths use
/// [`parse_length`].
pub fn parse_si(text: &str) -> Result<f64, QuantityError> {
    let bad = || QuantityError::NotANumber(text.to_string());
    let t = text.trim();
    let t = UNITS
        .iter()
        .find_map(|u| t.strip_suffix(u))
        .unwrap_or(t)
        .trim_end();
    let prefixes: [(char, f64); 11] = [
        ('f', 1e-15),
        ('p', 1e-12),
        ('n', 1e-9),
        ('u', 1e-6),
        ('µ', 1e-6),
        ('μ', 1e-6),
        ('m', 1e-3),
        ('k', 1e3),
        ('M', 1e6),
        ('G', 1e9),
        ('T', 1e12),
    ];
    let (num, mult) = match t.chars().last() {
        Some(c) => match prefixes.iter().find(|(p, _)| *p == c) {
            Some(&(_, k)) => (&t[..t.len() - c.len_utf8()], k),
            None => (t, 1.0),
        },
        None => return Err(bad()),
    };
    num.trim()
        .parse::<f64>()
        .ok()
        .map(|v| v * mult)
        .filter(|v| v.is_finite())
        .ok_or_else(bad)
}

/// A length with a unit: "20mm", "300um", "300µm", "2.5cm", "0.5in",
/// "12mil", "0.02m", in metres. Zero needs no unit ("0").
pub fn parse_length(text: &str) -> Result<f64, QuantityError> {
    let t = text.trim();
    if t.parse::<f64>() == Ok(0.0) {
        return Ok(0.0);
    }
    let units: [(&str, f64); 8] = [
        ("mm", 1e-3),
        ("um", 1e-6),
        ("µm", 1e-6),
        ("μm", 1e-6),
        ("cm", 1e-2),
        ("mil", 25.4e-6),
        ("in", 0.0254),
        ("m", 1.0),
    ];
    let (num, scale) = units
        .iter()
        .find_map(|&(u, k)| t.strip_suffix(u).map(|n| (n, k)))
        .ok_or_else(|| QuantityError::LengthNeedsUnit(text.to_string()))?;
    num.trim()
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
        .map(|v| v * scale)
        .ok_or_else(|| QuantityError::NotALength(text.to_string()))
}

/// A whole number from `min` to `max` inclusive; SI prefixes k, M and G are
/// accepted when they give a whole number ("16k" is 16 000).
pub fn parse_count(text: &str, min: u64, max: u64) -> Result<u64, QuantityError> {
    let bad = || QuantityError::Count {
        text: text.to_string(),
        min,
        max,
    };
    let t = text.trim().replace('_', "");
    let v = match t.parse::<u64>() {
        Ok(v) => v,
        Err(_) => {
            let x = parse_si(&t).map_err(|_| bad())?;
            if x.fract() != 0.0 || !(0.0..=u64::MAX as f64).contains(&x) {
                return Err(bad());
            }
            // Exact: a whole, non-negative value below 2^64.
            x as u64
        }
    };
    if (min..=max).contains(&v) {
        Ok(v)
    } else {
        Err(bad())
    }
}

/// A value with an engineering prefix and 4 significant digits: "7.246 µH",
/// "48.00 MHz", "0 Hz". Non-finite values print as "inf Hz" or "NaN Hz".
pub fn eng(v: f64, unit: &str) -> String {
    if !v.is_finite() {
        return format!("{v} {unit}");
    }
    let a = v.abs();
    let prefixes = [
        (1e12, "T"),
        (1e9, "G"),
        (1e6, "M"),
        (1e3, "k"),
        (1.0, ""),
        (1e-3, "m"),
        (1e-6, "µ"),
        (1e-9, "n"),
        (1e-12, "p"),
        (1e-15, "f"),
    ];
    let (scale, p) = if a == 0.0 {
        (1.0, "")
    } else {
        prefixes
            .iter()
            .copied()
            .find(|(s, _)| a >= *s * 0.999_95)
            .unwrap_or((1e-15, "f"))
    };
    let x = v / scale;
    let digits = if x.abs() >= 99.995 {
        1
    } else if x.abs() >= 9.9995 {
        2
    } else {
        3
    };
    format!("{x:.digits$} {p}{unit}")
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn si_prefixes_and_units() {
        let cases = [
            ("48M", 48e6),
            ("48MHz", 48e6),
            ("48 MHz", 48e6),
            ("100p", 100e-12),
            ("100pF", 100e-12),
            ("7.25u", 7.25e-6),
            ("7.25µH", 7.25e-6),
            ("4.7k", 4700.0),
            ("4.7kΩ", 4700.0),
            ("10kohm", 10e3),
            ("35MS/m", 35e6),
            ("1e-9", 1e-9),
            ("0", 0.0),
            ("-3m", -3e-3),
            ("2f", 2e-15),
            ("1.5T", 1.5e12),
            ("25", 25.0),
        ];
        for (t, want) in cases {
            let got = parse_si(t).unwrap_or_else(|e| panic!("{t}: {e}"));
            assert!((got - want).abs() <= 1e-12 * want.abs(), "{t}: {got}");
        }
        for t in ["", "M", "abc", "1x", "inf", "NaN", "1e400", "--1"] {
            assert!(parse_si(t).is_err(), "{t:?} parsed");
        }
        let msg = parse_si("4x").unwrap_err().to_string();
        assert!(msg.contains("\"4x\"") && msg.contains("48M"), "{msg}");
    }

    #[test]
    fn lengths() {
        assert_eq!(parse_length("20mm"), Ok(0.02));
        assert_eq!(parse_length("300um"), Ok(300e-6));
        assert_eq!(parse_length("300µm"), Ok(300e-6));
        assert_eq!(parse_length(" 1.6 mm"), Ok(1.6e-3));
        assert_eq!(parse_length("0.5in"), Ok(0.0127));
        assert!((parse_length("12mil").unwrap() - 304.8e-6).abs() < 1e-15);
        assert_eq!(parse_length("0.02m"), Ok(0.02));
        assert_eq!(parse_length("0"), Ok(0.0));
        assert_eq!(parse_length("-2mm"), Ok(-0.002));
        assert!(matches!(
            parse_length("20"),
            Err(QuantityError::LengthNeedsUnit(_))
        ));
        assert!(parse_length("mm").is_err());
        assert!(parse_length("infmm").is_err());
    }

    #[test]
    fn counts() {
        assert_eq!(parse_count("16384", 1, 1 << 24), Ok(16_384));
        assert_eq!(parse_count("16k", 1, 1 << 24), Ok(16_000));
        assert_eq!(parse_count("1_000", 1, 10_000), Ok(1_000));
        assert!(parse_count("0", 1, 10).is_err());
        assert!(parse_count("11", 1, 10).is_err());
        assert!(parse_count("1.5", 1, 10).is_err());
        assert!(parse_count("-1", 0, 10).is_err());
        assert!(parse_count("4000000000", 1, 100_000).is_err());
        let msg = parse_count("0", 1, 10).unwrap_err().to_string();
        assert!(msg.contains("from 1 to 10"), "{msg}");
    }

    #[test]
    fn engineering_format() {
        assert_eq!(eng(7.2461e-6, "H"), "7.246 µH");
        assert_eq!(eng(48e6, "Hz"), "48.00 MHz");
        assert_eq!(eng(100e-12, "F"), "100.0 pF");
        assert_eq!(eng(0.0, "Hz"), "0.000 Hz");
        assert_eq!(eng(-1.5e3, "Ω"), "-1.500 kΩ");
        assert_eq!(eng(999.99, "Hz"), "1.000 kHz");
        assert_eq!(eng(f64::INFINITY, "Hz"), "inf Hz");
    }

    proptest! {
        /// Any text: no panic. A formatted value parses back within the
        /// printed precision.
        #[test]
        fn parse_never_panics_and_round_trips(s in ".{0,12}", v in -1e12f64..1e12) {
            let _ = parse_si(&s);
            let _ = parse_length(&s);
            let _ = parse_count(&s, 0, 100);
            prop_assume!(v.abs() > 1e-14);
            let text = eng(v, "F");
            let back = parse_si(&text).unwrap();
            prop_assert!((back - v).abs() <= 1e-3 * v.abs(), "{v} -> {text} -> {back}");
        }
    }
}
