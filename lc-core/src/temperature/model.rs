//! The NTC laws in `f64`: Beta and Steinhart–Hart, forward (R from T) and
//! inverse (T from R), and the three-point Steinhart–Hart fit. For the host
//! (calibration, simulator) and as the twins of the fixed-point converters.

use super::ConfigError;

/// 0 °C in kelvin.
pub const ZERO_C_K: f64 = 273.15;
/// The Beta model's reference temperature, 25 °C in kelvin.
pub const T25_K: f64 = 298.15;

/// One calibration point: an NTC resistance measured at a temperature.
#[derive(Clone, Copy, Debug, PartialEq, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct CalibrationPoint {
    /// Temperature, °C.
    pub temp_c: f64,
    /// Resistance, ohms.
    pub r_ohm: f64,
}

impl CalibrationPoint {
    /// A point at `temp_c` °C with `r_ohm` ohms.
    #[inline]
    pub const fn new(temp_c: f64, r_ohm: f64) -> Self {
        Self { temp_c, r_ohm }
    }

    /// Finite, above absolute zero, positive resistance.
    fn is_valid(&self) -> bool {
        self.temp_c.is_finite()
            && self.temp_c + ZERO_C_K > 0.0
            && self.r_ohm.is_finite()
            && self.r_ohm > 0.0
    }
}

/// The Beta model: R(T) = R25 · exp(B · (1/T − 1/T25)), T in kelvin,
/// T25 = 298.15 K; inverse 1/T = 1/T25 + ln(R/R25)/B.
#[derive(Clone, Copy, Debug, PartialEq, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Beta {
    /// Resistance at 25 °C, ohms.
    pub r25_ohm: f64,
    /// B constant, kelvin.
    pub beta_k: f64,
}

impl Beta {
    /// A Beta model with `r25_ohm` at 25 °C and B = `beta_k`.
    #[inline]
    pub const fn new(r25_ohm: f64, beta_k: f64) -> Self {
        Self { r25_ohm, beta_k }
    }

    /// The model through two points (for example a datasheet's B25/85 pair
    /// or two calibration baths): B = ln(R1/R2) / (1/T1 − 1/T2), and R25 from
    /// the first point. `ConfigError::BadCalibrationPoints` for equal
    /// temperatures or invalid points.
    pub fn from_two_points(
        p1: CalibrationPoint,
        p2: CalibrationPoint,
    ) -> Result<Self, ConfigError> {
        if !p1.is_valid() || !p2.is_valid() {
            return Err(ConfigError::BadCalibrationPoints);
        }
        let inv1 = 1.0 / (p1.temp_c + ZERO_C_K);
        let inv2 = 1.0 / (p2.temp_c + ZERO_C_K);
        let beta_k = libm::log(p1.r_ohm / p2.r_ohm) / (inv1 - inv2);
        let r25_ohm = p1.r_ohm * libm::exp(beta_k * (1.0 / T25_K - inv1));
        if !beta_k.is_finite() || !r25_ohm.is_finite() || r25_ohm <= 0.0 {
            return Err(ConfigError::BadCalibrationPoints);
        }
        Ok(Self { r25_ohm, beta_k })
    }

    /// Forward model: resistance in ohms at `temp_c` °C.
    #[inline]
    pub fn resistance_ohm(&self, temp_c: f64) -> f64 {
        self.r25_ohm * libm::exp(self.beta_k * (1.0 / (temp_c + ZERO_C_K) - 1.0 / T25_K))
    }

    /// Inverse model: temperature in °C at `r_ohm` ohms.
    #[inline]
    pub fn temperature_c(&self, r_ohm: f64) -> f64 {
        1.0 / (1.0 / T25_K + libm::log(r_ohm / self.r25_ohm) / self.beta_k) - ZERO_C_K
    }

    /// The same law as Steinhart–Hart coefficients: A = 1/T25 − ln(R25)/B,
    /// B_SH = 1/B, C = 0 (Steinhart & Hart 1968 with the cubic term off).
    #[inline]
    pub fn to_steinhart_hart(&self) -> SteinhartHart {
        SteinhartHart {
            a: 1.0 / T25_K - libm::log(self.r25_ohm) / self.beta_k,
            b: 1.0 / self.beta_k,
            c: 0.0,
        }
    }
}

/// Steinhart–Hart coefficients (Steinhart & Hart, *Deep-Sea Research*
/// 15(4):497–503, 1968): 1/T = A + B·ln R + C·(ln R)³ with T in kelvin and
/// R in ohms.
#[derive(Clone, Copy, Debug, PartialEq, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SteinhartHart {
    /// A, 1/K.
    pub a: f64,
    /// B, 1/K (per unit of ln R).
    pub b: f64,
    /// C, 1/K (per unit of (ln R)³).
    pub c: f64,
}

impl SteinhartHart {
    /// Coefficients A, B, C.
    #[inline]
    pub const fn new(a: f64, b: f64, c: f64) -> Self {
        Self { a, b, c }
    }

    /// 1/T in 1/K at `r_ohm` ohms: A + B·L + C·L³ with L = ln R.
    #[inline]
    pub fn inverse_temperature_per_k(&self, r_ohm: f64) -> f64 {
        let l = libm::log(r_ohm);
        self.a + l * (self.b + self.c * l * l)
    }

    /// Inverse model: temperature in °C at `r_ohm` ohms.
    #[inline]
    pub fn temperature_c(&self, r_ohm: f64) -> f64 {
        1.0 / self.inverse_temperature_per_k(r_ohm) - ZERO_C_K
    }

    /// Forward model: resistance in ohms at `temp_c` °C, NaN where the law
    /// has no solution.
    ///
    /// For C > 0 the closed form of the cubic (docs/references.md, NTC cases):
    /// x = (A − 1/T)/C, y = √((B/3C)³ + x²/4),
    /// R = exp((y − x/2)^(1/3) − (y + x/2)^(1/3)); for C = 0 the Beta form
    /// R = exp((1/T − A)/B); for C < 0, Newton's method from that Beta form.
    /// The closed form loses digits to cancellation when C is tiny, so every
    /// case ends with Newton steps on A + B·L + C·L³ − 1/T = 0 (to 1e-15).
    pub fn resistance_ohm(&self, temp_c: f64) -> f64 {
        let inv_t = 1.0 / (temp_c + ZERO_C_K);
        let (a, b, c) = (self.a, self.b, self.c);
        let mut l = (inv_t - a) / b;
        if c > 0.0 {
            let x = (a - inv_t) / c;
            let q = b / (3.0 * c);
            let y = libm::sqrt(q * q * q + 0.25 * x * x);
            let cardano = libm::cbrt(y - 0.5 * x) - libm::cbrt(y + 0.5 * x);
            if cardano.is_finite() {
                l = cardano;
            }
        }
        if c != 0.0 {
            for _ in 0..50 {
                let f = a + l * (b + c * l * l) - inv_t;
                let step = f / (b + 3.0 * c * l * l);
                l -= step;
                if step.is_nan() || step.abs() <= 1e-15 * (1.0 + l.abs()) {
                    break;
                }
            }
        }
        libm::exp(l)
    }
}

/// Steinhart–Hart coefficients through three (T, R) points, the usual
/// three-point calibration: with L_i = ln R_i, Y_i = 1/T_i,
/// γ2 = (Y2 − Y1)/(L2 − L1), γ3 = (Y3 − Y1)/(L3 − L1),
/// C = (γ3 − γ2)/((L3 − L2)·(L1 + L2 + L3)), B = γ2 − C·(L1² + L1·L2 + L2²),
/// A = Y1 − (B + C·L1²)·L1.
///
/// `ConfigError::BadCalibrationPoints` for invalid or repeated points, or
/// when L1 + L2 + L3 = 0 (no unique C).
pub fn steinhart_hart_fit(points: [CalibrationPoint; 3]) -> Result<SteinhartHart, ConfigError> {
    if !points.iter().all(CalibrationPoint::is_valid) {
        return Err(ConfigError::BadCalibrationPoints);
    }
    let [p1, p2, p3] = points;
    let (l1, l2, l3) = (
        libm::log(p1.r_ohm),
        libm::log(p2.r_ohm),
        libm::log(p3.r_ohm),
    );
    let (y1, y2, y3) = (
        1.0 / (p1.temp_c + ZERO_C_K),
        1.0 / (p2.temp_c + ZERO_C_K),
        1.0 / (p3.temp_c + ZERO_C_K),
    );
    let g2 = (y2 - y1) / (l2 - l1);
    let g3 = (y3 - y1) / (l3 - l1);
    let c = (g3 - g2) / ((l3 - l2) * (l1 + l2 + l3));
    let b = g2 - c * (l1 * l1 + l1 * l2 + l2 * l2);
    let a = y1 - (b + c * l1 * l1) * l1;
    if a.is_finite() && b.is_finite() && c.is_finite() {
        Ok(SteinhartHart { a, b, c })
    } else {
        Err(ConfigError::BadCalibrationPoints)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// docs/references.md, NTC cases, "generic 10 kΩ at 25 °C, B = 3950 K",
    /// Beta model table (computed; printed to 0.1 Ω), with the same rows
    /// recomputed here with mpmath at 50 digits (computed) for the 1e-9
    /// relative check.
    const TABLE_10K_3950: [(f64, f64, f64); 12] = [
        (-40.0, 401_859.7, 401_859.724_625_002),
        (-20.0, 105_384.7, 105_384.690_206_038),
        (0.0, 33_620.6, 33_620.603_721_435_7),
        (10.0, 20_174.6, 20_174.577_023_984_8),
        (20.0, 12_535.3, 12_535.325_812_662_8),
        (25.0, 10_000.0, 10_000.0),
        (30.0, 8_037.1, 8_037.140_686_973_14),
        (40.0, 5_301.5, 5_301.466_859_409_67),
        (50.0, 3_588.2, 3_588.182_581_929_09),
        (60.0, 2_486.2, 2_486.164_751_473_38),
        (85.0, 1_086.7, 1_086.670_769_393_03),
        (100.0, 697.5, 697.519_772_986_189),
    ];

    const NTC: Beta = Beta::new(10_000.0, 3950.0);

    #[test]
    fn beta_table_10k_3950() {
        // docs/references.md, NTC cases (computed): 1e-9 relative against
        // full-precision values, and the printed 0.1 Ω values to their last
        // digit.
        for (t, printed, exact) in TABLE_10K_3950 {
            let r = NTC.resistance_ohm(t);
            assert!((r - exact).abs() <= 1e-9 * exact, "{t} °C: {r}");
            assert!((r - printed).abs() <= 0.05, "{t} °C: {r} vs {printed}");
            // And back.
            assert!((NTC.temperature_c(r) - t).abs() < 1e-9, "{t} °C");
        }
    }

    #[test]
    fn beta_inverse_5k() {
        // docs/references.md, NTC cases (computed): R = 5 kΩ gives 41.4602 °C.
        assert!((NTC.temperature_c(5_000.0) - 41.4602).abs() < 5e-5);
    }

    #[test]
    fn beta_is_steinhart_hart_with_c_zero() {
        // docs/references.md, NTC cases (computed): A = 1.022284695e-3,
        // B = 2.531645570e-4 (= 1/3950), C = 0.
        let sh = NTC.to_steinhart_hart();
        assert!((sh.a - 1.022_284_695e-3).abs() < 5e-13);
        assert!((sh.b - 2.531_645_570e-4).abs() < 5e-14);
        assert_eq!(sh.c, 0.0);
        for (t, _, exact) in TABLE_10K_3950 {
            assert!(
                (sh.resistance_ohm(t) - exact).abs() <= 1e-9 * exact,
                "{t} °C"
            );
            assert!((sh.temperature_c(exact) - t).abs() < 1e-9, "{t} °C");
        }
    }

    #[test]
    fn three_point_fit_of_a_beta_curve() {
        // docs/references.md, NTC cases (computed): a fit at 0/25/50 °C returns
        // C ≈ 0 to machine precision and reproduces all rows to 1e-4 K.
        let pts = [0.0, 25.0, 50.0].map(|t| CalibrationPoint::new(t, NTC.resistance_ohm(t)));
        let sh = steinhart_hart_fit(pts).unwrap();
        assert!(sh.c.abs() < 1e-16, "C = {:e}", sh.c);
        assert!((sh.a - 1.022_284_695e-3).abs() < 1e-12);
        assert!((sh.b - 1.0 / 3950.0).abs() < 1e-13);
        for (t, printed, exact) in TABLE_10K_3950 {
            assert!((sh.temperature_c(exact) - t).abs() < 1e-4, "{t} °C");
            assert!((sh.resistance_ohm(t) - printed).abs() <= 0.05, "{t} °C");
        }
    }

    #[test]
    fn measured_table_trap() {
        // docs/references.md, NTC cases and Traps, item 4: a web calculator's
        // "10k B3950" table lists 32 650 Ω at 0 °C and 3 600 Ω at 50 °C. That
        // is a measured R–T table, not the Beta equation, which gives 33 620.6
        // Ω and 3 588.2 Ω (computed). A Beta through the two table points is
        // 3892.5 K (computed).
        assert!((NTC.resistance_ohm(0.0) - 33_620.6).abs() < 0.05);
        assert!((NTC.resistance_ohm(0.0) - 32_650.0).abs() > 900.0);
        assert!((NTC.resistance_ohm(50.0) - 3_588.2).abs() < 0.05);
        assert!((NTC.resistance_ohm(50.0) - 3_600.0).abs() > 10.0);
        let fitted = Beta::from_two_points(
            CalibrationPoint::new(0.0, 32_650.0),
            CalibrationPoint::new(50.0, 3_600.0),
        )
        .unwrap();
        assert!((fitted.beta_k - 3892.5).abs() < 0.05, "{}", fitted.beta_k);
    }

    /// docs/references.md, NTC cases: the three-point Steinhart–Hart fit
    /// through (0 °C, 32 650 Ω), (25 °C, 10 000 Ω), (50 °C, 3 600 Ω) and its
    /// predicted temperatures, against `scripts/reference-values.py`
    /// (mpmath 1.3 at 50 digits: the 3×3 system solved exactly, then the
    /// fitted law evaluated). A, B and C to 1e-12 relative, temperatures to
    /// 1e-12 K (measured: 1.6e-15, 1.2e-15, 1.4e-14 and 4.6e-14 K at worst).
    #[test]
    fn three_point_fit_against_mpmath() {
        let sh = steinhart_hart_fit([
            CalibrationPoint::new(0.0, 32_650.0),
            CalibrationPoint::new(25.0, 10_000.0),
            CalibrationPoint::new(50.0, 3_600.0),
        ])
        .unwrap();
        let rel = |got: f64, want: f64| (got / want - 1.0).abs();
        assert!(
            rel(sh.a, 1.131_547_537_723_803e-3) < 1e-12,
            "A = {:e}",
            sh.a
        );
        assert!(
            rel(sh.b, 2.337_530_598_714_644_3e-4) < 1e-12,
            "B = {:e}",
            sh.b
        );
        assert!(
            rel(sh.c, 8.898_269_200_863_592e-8) < 1e-12,
            "C = {:e}",
            sh.c
        );
        for (r, t) in [
            (100_000.0, -20.530_173_062_192_926),
            (20_000.0, 9.899_644_023_478_015),
            (5_000.0, 41.568_145_317_696_78),
            (1_000.0, 87.134_179_802_754_16),
        ] {
            let got = sh.temperature_c(r);
            assert!((got - t).abs() < 1e-12, "T({r} Ω) = {got} vs {t}");
        }
    }

    #[test]
    fn bad_points_are_rejected() {
        let p = CalibrationPoint::new(25.0, 10_000.0);
        let q = CalibrationPoint::new(50.0, 3_588.0);
        assert_eq!(
            steinhart_hart_fit([p, p, q]),
            Err(ConfigError::BadCalibrationPoints)
        );
        assert_eq!(
            steinhart_hart_fit([p, q, CalibrationPoint::new(0.0, -1.0)]),
            Err(ConfigError::BadCalibrationPoints)
        );
        assert_eq!(
            steinhart_hart_fit([p, q, CalibrationPoint::new(-300.0, 1.0)]),
            Err(ConfigError::BadCalibrationPoints)
        );
        assert_eq!(
            Beta::from_two_points(p, p),
            Err(ConfigError::BadCalibrationPoints)
        );
        assert_eq!(
            Beta::from_two_points(p, CalibrationPoint::new(f64::NAN, 1.0)),
            Err(ConfigError::BadCalibrationPoints)
        );
    }

    #[test]
    fn measured_table_fit_round_trip() {
        // A set with a real cubic term: the three points of the measured
        // "10k B3950" table of docs/references.md, NTC cases and Traps, item 4
        // (32 650 Ω at 0 °C, 10 kΩ at 25 °C, 3 600 Ω at 50 °C) give C ≈ 8.9e-8.
        let sh = steinhart_hart_fit([
            CalibrationPoint::new(0.0, 32_650.0),
            CalibrationPoint::new(25.0, 10_000.0),
            CalibrationPoint::new(50.0, 3_600.0),
        ])
        .unwrap();
        assert!((sh.c - 8.898e-8).abs() < 1e-11, "C = {:e}", sh.c);
        assert!((sh.resistance_ohm(0.0) - 32_650.0).abs() < 1e-6);
        assert!((sh.resistance_ohm(50.0) - 3_600.0).abs() < 1e-7);
        for t in [-55.0, -20.0, 0.0, 25.0, 85.0, 155.0] {
            let r = sh.resistance_ohm(t);
            assert!((sh.temperature_c(r) - t).abs() < 1e-9, "{t} °C");
        }
    }

    proptest! {
        /// Forward and inverse Steinhart–Hart agree over the temperature
        /// domain, for C of either sign, and a fit through three points of a
        /// law returns that law.
        #[test]
        fn steinhart_hart_round_trip(
            beta in 2000.0f64..6000.0,
            r25 in 100.0f64..1e6,
            c in -2e-8f64..5e-7,
            t in -55.0f64..155.0,
        ) {
            let base = Beta::new(r25, beta).to_steinhart_hart();
            let l25 = libm::log(r25);
            // Keep R(25 °C) = R25 with the cubic term on.
            let sh = SteinhartHart::new(base.a - c * l25 * l25 * l25, base.b, c);
            let r = sh.resistance_ohm(t);
            prop_assert!((sh.temperature_c(r) - t).abs() < 1e-8, "r {}", r);
            let pts = [-40.0, 25.0, 100.0].map(|t| CalibrationPoint::new(t, sh.resistance_ohm(t)));
            let fit = steinhart_hart_fit(pts).unwrap();
            prop_assert!((fit.temperature_c(r) - t).abs() < 1e-6);
        }
    }
}
