//! Relative permittivity of liquids, for level probes.
//!
//! - Water: Malmberg & Maryott, "Dielectric constant of water from 0° to
//!   100 °C", J. Res. NBS 56(1):1–8, 1956: ε = 87.740 − 0.40008·t +
//!   9.398e-4·t² − 1.410e-6·t³, t in °C, 0–100 °C (docs/references.md,
//!   Malmberg & Maryott 1956; published, quoted).
//! - Other liquids: the CRC Handbook table "Permittivity (Dielectric
//!   Constant) of Liquids" (CRC 95th ed., 2014, as shipped in the `chemicals`
//!   data; docs/references.md, Water and liquids; published), single values at
//!   20 °C (toluene at 23.2 °C); no temperature model, so the value is returned
//!   for any temperature and the caller is told so.

/// A liquid's permittivity at a temperature, and where the value comes from.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct Permittivity {
    /// Relative permittivity εr.
    pub value: f64,
    /// Whether the value follows the temperature (water) or is the table's
    /// single value.
    pub temperature_model: bool,
    /// The source.
    pub source: &'static str,
}

/// CRC Handbook values at 20 °C (docs/references.md, Water and liquids;
/// published).
const CRC: [(&str, f64); 15] = [
    ("ethanol", 25.3),
    ("methanol", 33.0),
    ("2-propanol", 20.18),
    ("acetone", 21.01),
    ("glycerol", 46.53),
    ("ethylene-glycol", 41.4),
    ("benzene", 2.2825),
    ("toluene", 2.379),
    ("cyclohexane", 2.0243),
    ("n-hexane", 1.8865),
    ("n-heptane", 1.9209),
    ("n-octane", 1.948),
    ("n-decane", 1.9853),
    ("n-dodecane", 2.012),
    ("n-hexadecane", 2.046),
];

/// The names this module knows.
pub fn names() -> impl Iterator<Item = &'static str> {
    std::iter::once("water").chain(CRC.iter().map(|(n, _)| *n))
}

/// Why a liquid's permittivity is not given.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum LiquidError {
    /// A name this module does not know.
    #[error("liquid {0:?}: unknown; `lc-host probe --liquid list` shows the known names")]
    Unknown(String),
    /// Water outside the range of its formula.
    #[error("water at {0} °C: Malmberg & Maryott's formula holds from 0 to 100 °C only; give a liquid temperature in that range")]
    WaterOutOfRange(f64),
}

/// Water by Malmberg & Maryott (1956), for 0–100 °C; outside that range
/// (or NaN) an error, not an extrapolation.
pub fn water(t_c: f64) -> Result<f64, LiquidError> {
    if !(0.0..=100.0).contains(&t_c) {
        return Err(LiquidError::WaterOutOfRange(t_c));
    }
    let t = t_c;
    Ok(87.740 - 0.40008 * t + 9.398e-4 * t * t - 1.410e-6 * t * t * t)
}

/// The permittivity of a named liquid at `t_c`: water by its formula (an
/// error outside 0–100 °C), the others by their single CRC value (flagged
/// by `temperature_model: false`).
pub fn permittivity(name: &str, t_c: f64) -> Result<Permittivity, LiquidError> {
    let key = name.trim().to_ascii_lowercase();
    if key == "water" {
        return Ok(Permittivity {
            value: water(t_c)?,
            temperature_model: true,
            source: "Malmberg & Maryott 1956",
        });
    }
    CRC.iter()
        .find(|(n, _)| *n == key)
        .map(|&(_, value)| Permittivity {
            value,
            temperature_model: false,
            source: "CRC Handbook, 95th ed. (2014), at 20 °C",
        })
        .ok_or_else(|| LiquidError::Unknown(name.to_string()))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// docs/references.md, Water and liquids: Malmberg & Maryott, computed
    /// from the published polynomial: 87.740 at 0 °C, 80.103 at 20 °C, 78.303
    /// at 25 °C (the paper's abstract: 78.30), 55.720 at 100 °C.
    #[test]
    fn water_published_values() {
        for (t, e) in [
            (0.0, 87.740),
            (20.0, 80.103),
            (25.0, 78.303),
            (100.0, 55.720),
        ] {
            let w = water(t).unwrap();
            assert!((w - e).abs() < 5e-4, "{t}: {w}");
        }
        // The same formula as the level simulator.
        assert_eq!(water(42.0), Ok(crate::sim::level::water_permittivity(42.0)));
    }

    /// Outside 0–100 °C the formula does not hold: an error naming the
    /// range, never the value at the nearest end.
    #[test]
    fn water_outside_its_range_is_an_error() {
        for t in [-10.0, -0.001, 100.5, f64::NAN] {
            let e = permittivity("water", t).unwrap_err();
            assert!(e.to_string().contains("0 to 100 °C"), "{e}");
        }
        assert!(permittivity("water", 0.0).is_ok() && permittivity("water", 100.0).is_ok());
    }

    /// CRC values (docs/references.md, Water and liquids; published);
    /// hexadecane is the citable diesel surrogate.
    #[test]
    fn crc_values() {
        assert_eq!(permittivity("Ethanol", 20.0).unwrap().value, 25.3);
        assert_eq!(permittivity("n-hexadecane", 20.0).unwrap().value, 2.046);
        assert!(!permittivity("glycerol", 60.0).unwrap().temperature_model);
        assert_eq!(
            permittivity("mercury", 20.0),
            Err(LiquidError::Unknown("mercury".into()))
        );
        assert_eq!(names().count(), 16);
    }

    /// docs/references.md, Coaxial capacitor cases, 7d: a level sensor of two
    /// capacitors in parallel (H = 1 m, a = 5 mm, b = 20 mm): with εr = 2.046
    /// (hexadecane), C at h = 0 / 0.25 / 0.5 / 1 m is 40.130 / 50.624 / 61.119
    /// / 82.107 pF (computed).
    #[test]
    fn probe_with_a_crc_liquid() {
        let probe = lc_core::geometry::CoaxialProbe {
            length_m: 1.0,
            inner_radius_m: 0.005,
            outer_radius_m: 0.02,
        };
        let eps = permittivity("n-hexadecane", 20.0).unwrap().value;
        for (h, c_pf) in [(0.0, 40.130), (0.25, 50.624), (0.5, 61.119), (1.0, 82.107)] {
            let c = probe.immersed_capacitance_f(h, eps, 1.0) * 1e12;
            assert!((c - c_pf).abs() < 5e-3, "{h}: {c}");
        }
    }
}
