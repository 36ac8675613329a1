//! NTC thermistors for the design commands: fit a law to calibration points
//! and convert a resistance or an ADC code to a temperature, in `f64` and
//! through lc-core's fixed-point converters (what the firmware computes).
//!
//! Two points give the Beta model; three give Steinhart–Hart (Steinhart &
//! Hart 1968; docs/references.md, NTC cases has the check values).
//!
//! ```
//! use lc_host::ntc::{fit, Law};
//! use lc_core::temperature::CalibrationPoint;
//! let f = fit(&[CalibrationPoint::new(0.0, 32_650.0), CalibrationPoint::new(50.0, 3_600.0)]).unwrap();
//! let Law::Beta { beta_k, .. } = f.law else { panic!() };
//! assert!((beta_k - 3892.5).abs() < 0.05);
//! ```

use lc_core::temperature::{
    steinhart_hart_fit, Beta, CalibrationPoint, ConfigError, Divider, NtcBeta, NtcPosition,
    NtcSteinhartHart, SteinhartHart, TemperatureError,
};

/// An NTC law.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
#[serde(tag = "model", rename_all = "kebab-case")]
pub enum Law {
    /// R(T) = R25·exp(B·(1/T − 1/T25)).
    Beta {
        /// Resistance at 25 °C, Ω.
        r25_ohm: f64,
        /// B constant, K.
        beta_k: f64,
    },
    /// 1/T = A + B·ln R + C·(ln R)³.
    SteinhartHart {
        /// A, 1/K.
        a: f64,
        /// B, 1/K.
        b: f64,
        /// C, 1/K.
        c: f64,
    },
}

impl Law {
    /// The same law as Steinhart–Hart coefficients (Beta is C = 0).
    pub fn steinhart_hart(&self) -> SteinhartHart {
        match *self {
            Law::Beta { r25_ohm, beta_k } => Beta::new(r25_ohm, beta_k).to_steinhart_hart(),
            Law::SteinhartHart { a, b, c } => SteinhartHart::new(a, b, c),
        }
    }

    /// Temperature at `r_ohm`, °C (f64).
    pub fn temperature_c(&self, r_ohm: f64) -> f64 {
        match *self {
            Law::Beta { r25_ohm, beta_k } => Beta::new(r25_ohm, beta_k).temperature_c(r_ohm),
            Law::SteinhartHart { a, b, c } => SteinhartHart::new(a, b, c).temperature_c(r_ohm),
        }
    }

    /// Resistance at `temp_c`, Ω (f64).
    pub fn resistance_ohm(&self, temp_c: f64) -> f64 {
        match *self {
            Law::Beta { r25_ohm, beta_k } => Beta::new(r25_ohm, beta_k).resistance_ohm(temp_c),
            Law::SteinhartHart { a, b, c } => SteinhartHart::new(a, b, c).resistance_ohm(temp_c),
        }
    }
}

/// Why an NTC fit or conversion failed.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum NtcError {
    /// Not two or three points.
    #[error("{0} calibration points: give 2 (Beta) or 3 (Steinhart-Hart), as TEMP:OHMS")]
    PointCount(usize),
    /// The points do not define a law.
    #[error("calibration points: {0}; they must be finite, above -273.15 degC, with positive resistances and distinct temperatures")]
    BadPoints(ConfigError),
    /// A resistance that is not finite and positive.
    #[error("resistance {0} ohm: must be finite and above zero")]
    BadResistance(f64),
    /// The divider or law is not one lc-core's converters take.
    #[error("{what}: {source}")]
    Config {
        /// Which input.
        what: &'static str,
        /// lc-core's reason.
        source: ConfigError,
    },
    /// lc-core could not convert the code.
    #[error("ADC code {code}: {source}")]
    Code {
        /// The code.
        code: u32,
        /// lc-core's reason.
        source: TemperatureError,
    },
}

/// A fitted law and how well it reproduces its points.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Fit {
    /// The law.
    pub law: Law,
    /// The same law as Steinhart–Hart coefficients.
    pub steinhart_hart: [f64; 3],
    /// Each point's temperature as the law gives it back, °C, and the
    /// difference, K.
    pub points: Vec<FitPoint>,
}

/// One calibration point against the fitted law.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct FitPoint {
    /// Given temperature, °C.
    pub temp_c: f64,
    /// Given resistance, Ω.
    pub r_ohm: f64,
    /// Temperature from the law at that resistance, °C.
    pub law_temp_c: f64,
}

/// Fits the Beta model to two points or Steinhart–Hart to three.
pub fn fit(points: &[CalibrationPoint]) -> Result<Fit, NtcError> {
    let law = match *points {
        [p, q] => {
            let m = Beta::from_two_points(p, q).map_err(NtcError::BadPoints)?;
            Law::Beta {
                r25_ohm: m.r25_ohm,
                beta_k: m.beta_k,
            }
        }
        [p, q, r] => {
            let m = steinhart_hart_fit([p, q, r]).map_err(NtcError::BadPoints)?;
            Law::SteinhartHart {
                a: m.a,
                b: m.b,
                c: m.c,
            }
        }
        _ => return Err(NtcError::PointCount(points.len())),
    };
    let sh = law.steinhart_hart();
    Ok(Fit {
        law,
        steinhart_hart: [sh.a, sh.b, sh.c],
        points: points
            .iter()
            .map(|p| FitPoint {
                temp_c: p.temp_c,
                r_ohm: p.r_ohm,
                law_temp_c: law.temperature_c(p.r_ohm),
            })
            .collect(),
    })
}

/// The ADC side: an ADC of `adc_bits`, a series resistor and where the NTC
/// sits.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct AdcDivider {
    /// ADC resolution, bits (8–24).
    pub adc_bits: u32,
    /// Series resistor, Ω (whole ohms: the firmware's divider).
    pub series_ohm: u32,
    /// Where the NTC sits.
    pub position: NtcPosition,
}

/// A conversion: the temperature in `f64` and, for an ADC code, through
/// lc-core's fixed-point converter.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Conversion {
    /// The NTC's resistance, Ω.
    pub resistance_ohm: f64,
    /// Temperature from the law in `f64`, °C.
    pub temperature_c: f64,
    /// The ADC code, when one was given.
    pub code: Option<u32>,
    /// The firmware's reading, °C in steps of 0.01 (lc-core's fixed point).
    pub firmware_temperature_c: Option<f64>,
    /// Temperature step of one ADC code there, K.
    pub step_per_code_k: Option<f64>,
    /// Which lc-core converter the firmware path used.
    pub firmware_converter: Option<&'static str>,
}

/// Converts a resistance with `law` (f64 only: there is no ADC code).
pub fn convert_resistance(law: &Law, r_ohm: f64) -> Result<Conversion, NtcError> {
    if !(r_ohm.is_finite() && r_ohm > 0.0) {
        return Err(NtcError::BadResistance(r_ohm));
    }
    Ok(Conversion {
        resistance_ohm: r_ohm,
        temperature_c: law.temperature_c(r_ohm),
        code: None,
        firmware_temperature_c: None,
        step_per_code_k: None,
        firmware_converter: None,
    })
}

/// Converts an ADC code: the divider gives the resistance, the law the
/// temperature in `f64`, and lc-core's converter (`NtcBeta` for a Beta law
/// with whole-number R25 and B, `NtcSteinhartHart` otherwise) the
/// firmware's reading.
pub fn convert_code(law: &Law, divider: AdcDivider, code: u32) -> Result<Conversion, NtcError> {
    let d =
        Divider::new(divider.adc_bits, divider.series_ohm, divider.position).map_err(|source| {
            NtcError::Config {
                what: "divider",
                source,
            }
        })?;
    let code_err = |source| NtcError::Code { code, source };
    let r = d.resistance_ohm_f64(code).map_err(code_err)?;
    let whole = |v: f64| (v.fract() == 0.0 && v >= 1.0 && v <= f64::from(u32::MAX)).then_some(v);
    let (fixed, step, name) = match *law {
        Law::Beta { r25_ohm, beta_k } if whole(r25_ohm).is_some() && whole(beta_k).is_some() => {
            // Exact: both are whole numbers within u32 (checked above).
            let conv = NtcBeta::new(r25_ohm as u32, beta_k as u32, d).map_err(|source| {
                NtcError::Config {
                    what: "Beta law",
                    source,
                }
            })?;
            (
                conv.convert(code).map_err(code_err)?,
                conv.step_per_code_k(code).map_err(code_err)?,
                "NtcBeta",
            )
        }
        _ => {
            let conv = NtcSteinhartHart::new(law.steinhart_hart(), d).map_err(|source| {
                NtcError::Config {
                    what: "Steinhart-Hart law",
                    source,
                }
            })?;
            (
                conv.convert(code).map_err(code_err)?,
                conv.step_per_code_k(code).map_err(code_err)?,
                "NtcSteinhartHart",
            )
        }
    };
    Ok(Conversion {
        resistance_ohm: r,
        temperature_c: law.temperature_c(r),
        code: Some(code),
        firmware_temperature_c: Some(fixed.to_f64()),
        step_per_code_k: Some(step),
        firmware_converter: Some(name),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// docs/references.md, NTC cases: the three-point fit through the
    /// "10k B3950" table points against mpmath (50 digits), and the Beta
    /// through its 0 °C and 50 °C points (3892.5 K, computed).
    #[test]
    fn fits_match_the_reference_values() {
        let f = fit(&[
            CalibrationPoint::new(0.0, 32_650.0),
            CalibrationPoint::new(25.0, 10_000.0),
            CalibrationPoint::new(50.0, 3_600.0),
        ])
        .unwrap();
        let [a, b, c] = f.steinhart_hart;
        assert!((a / 1.131_547_537_723_803e-3 - 1.0).abs() < 1e-12);
        assert!((b / 2.337_530_598_714_644_3e-4 - 1.0).abs() < 1e-12);
        assert!((c / 8.898_269_200_863_592e-8 - 1.0).abs() < 1e-12);
        for p in &f.points {
            assert!((p.law_temp_c - p.temp_c).abs() < 1e-9);
        }
        let t = f.law.temperature_c(5_000.0);
        assert!((t - 41.568_145_317_696_78).abs() < 1e-12, "{t}");
        let beta = fit(&[
            CalibrationPoint::new(0.0, 32_650.0),
            CalibrationPoint::new(50.0, 3_600.0),
        ])
        .unwrap();
        match beta.law {
            Law::Beta { beta_k, .. } => assert!((beta_k - 3892.5).abs() < 0.05, "{beta_k}"),
            other => panic!("{other:?}"),
        }
        assert_eq!(fit(&[]), Err(NtcError::PointCount(0)));
        assert!(matches!(
            fit(&[
                CalibrationPoint::new(25.0, 1.0),
                CalibrationPoint::new(25.0, 2.0)
            ]),
            Err(NtcError::BadPoints(_))
        ));
    }

    /// docs/references.md, NTC cases: 10 kΩ / B 3950 K, 16-bit ADC, 10 kΩ
    /// series resistor, NTC on the low side: mid scale is R = 10 kΩ, 25 °C;
    /// the code for 5 kΩ (21 845) reads 41.46 °C in both paths.
    #[test]
    fn code_conversion_through_the_firmware_path() {
        let law = Law::Beta {
            r25_ohm: 10_000.0,
            beta_k: 3950.0,
        };
        let div = AdcDivider {
            adc_bits: 16,
            series_ohm: 10_000,
            position: NtcPosition::LowSide,
        };
        let mid = convert_code(&law, div, 32_768).unwrap();
        assert_eq!(mid.firmware_converter, Some("NtcBeta"));
        assert!((mid.resistance_ohm - 10_000.0).abs() < 1e-9);
        assert!((mid.temperature_c - 25.0).abs() < 1e-9);
        assert_eq!(mid.firmware_temperature_c, Some(25.0));
        // R = 5 kΩ: c/(N − c) = 1/2, c = N/3 = 21 845.33.
        let c = convert_code(&law, div, 21_845).unwrap();
        assert!(
            (c.temperature_c - 41.46).abs() < 0.01,
            "{}",
            c.temperature_c
        );
        let fw = c.firmware_temperature_c.unwrap();
        assert!(
            (fw - c.temperature_c).abs() <= 0.006,
            "{fw} vs {}",
            c.temperature_c
        );
        // A fractional B goes through the Steinhart–Hart converter.
        let frac = Law::Beta {
            r25_ohm: 10_000.0,
            beta_k: 3892.5,
        };
        let s = convert_code(&frac, div, 21_845).unwrap();
        assert_eq!(s.firmware_converter, Some("NtcSteinhartHart"));
        assert!((s.firmware_temperature_c.unwrap() - s.temperature_c).abs() <= 0.006);
        assert!(matches!(
            convert_code(&law, div, 65_535),
            Err(NtcError::Code { .. })
        ));
        assert!(matches!(
            convert_code(&law, AdcDivider { adc_bits: 4, ..div }, 3),
            Err(NtcError::Config { .. })
        ));
        assert!(convert_resistance(&law, -1.0).is_err());
        let r = convert_resistance(&law, 5_000.0).unwrap();
        assert!((r.temperature_c - 41.4602).abs() < 5e-5);
    }

    proptest! {
        /// Any code on any divider: an error or a reading within 0.006 K of
        /// the f64 law (half an output step plus the converter's bound),
        /// never a panic.
        #[test]
        fn any_code_converts_or_errs(code in 0u32..(1 << 16), series in 100u32..1_000_000, low in any::<bool>()) {
            let law = Law::Beta { r25_ohm: 10_000.0, beta_k: 3950.0 };
            let div = AdcDivider {
                adc_bits: 16,
                series_ohm: series,
                position: if low { NtcPosition::LowSide } else { NtcPosition::HighSide },
            };
            if let Ok(c) = convert_code(&law, div, code) {
                let fw = c.firmware_temperature_c.unwrap();
                prop_assert!((fw - c.temperature_c).abs() <= 0.006, "{fw} vs {}", c.temperature_c);
            }
        }
    }
}
