//! Rig logs of a simulated lot of capacitive level probes.
//!
//! The demo's second scenario (docs/references.md, Demo scenario): a coolant
//! tank, a horizontal cylinder of 400 mm diameter, with a vertical coaxial
//! probe from the bottom to the top. The probe sits in parallel with the tank
//! capacitor of one LC oscillator; a short reference electrode at the bottom,
//! always submerged in service, has its own oscillator (the companion channel).
//! The liquid is water-based; its permittivity follows Malmberg & Maryott
//! (1956) for water, so both probes' shifts move with temperature and only
//! their ratio does not.
//!
//! Demo assumptions (invented for the scenario, not measured): bare
//! coaxial electrodes (a = 5 mm, b = 20 mm; no insulation layer), 22 µH
//! coils, 1 nF class-1 tank capacitors, the reference electrode's lower 20
//! mm only.

use super::Rng;
use lc_core::geometry::coaxial_capacitance_per_metre_f_per_m;
use lc_core::tank::resonant_frequency_with_parasitic_hz;
use std::io::Write;

/// Relative permittivity of water at t °C: Malmberg & Maryott, J. Res.
/// NBS 56(1):1–8, 1956 (docs/references.md, Malmberg & Maryott 1956; published,
/// quoted): ε = 87.740 − 0.40008·t + 9.398e-4·t² − 1.410e-6·t³, 0–100 °C.
pub fn water_permittivity(t_c: f64) -> f64 {
    87.740 - 0.40008 * t_c + 9.398e-4 * t_c * t_c - 1.410e-6 * t_c * t_c * t_c
}

/// One simulated level unit.
#[derive(Clone, Debug, PartialEq)]
pub struct LevelUnit {
    /// Serial.
    pub serial: String,
    /// Probe coil inductance, H.
    pub inductance_h: f64,
    /// Probe tank capacitor at 25 °C, F.
    pub capacitance_f: f64,
    /// Reference coil inductance, H.
    pub ref_inductance_h: f64,
    /// Reference tank capacitor at 25 °C, F.
    pub ref_capacitance_f: f64,
    /// Parasitic capacitance of each channel, F.
    pub parasitic_f: f64,
    /// Capacitor tempco, per kelvin.
    pub capacitor_tempco: f64,
    /// Probe capacitance per metre in air, F/m (manufacturing spread).
    pub probe_f_per_m: f64,
}

/// The tank and probe geometry of the scenario.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LevelGeometry {
    /// Tank diameter (the probe's span), m.
    pub diameter_m: f64,
    /// Tank length, m.
    pub length_m: f64,
    /// Height of the reference electrode's top above the bottom, m.
    pub reference_top_m: f64,
}

impl LevelGeometry {
    /// The demo coolant tank.
    pub const DEMO: LevelGeometry = LevelGeometry {
        diameter_m: 0.4,
        length_m: 1.0,
        reference_top_m: 0.02,
    };
}

impl LevelUnit {
    /// The probe's and the reference electrode's oscillator frequencies at a
    /// level and temperature, Hz.
    pub fn frequencies(&self, level_m: f64, temp_c: f64, g: &LevelGeometry) -> (f64, f64) {
        let dt = temp_c - 25.0;
        let eps = water_permittivity(temp_c);
        let scale = 1.0 + self.capacitor_tempco * dt;
        // Probe: the wet part has εr, the dry part air (εr = 1).
        let wet = level_m.clamp(0.0, g.diameter_m);
        let probe = self.probe_f_per_m * (wet * eps + (g.diameter_m - wet));
        let reference_wet = level_m.clamp(0.0, g.reference_top_m);
        let reference =
            self.probe_f_per_m * (reference_wet * eps + (g.reference_top_m - reference_wet));
        (
            resonant_frequency_with_parasitic_hz(
                self.inductance_h,
                self.capacitance_f * scale,
                self.parasitic_f + probe,
            ),
            resonant_frequency_with_parasitic_hz(
                self.ref_inductance_h,
                self.ref_capacitance_f * scale,
                self.parasitic_f + reference,
            ),
        )
    }
}

/// The units of a level lot.
pub fn level_units(lot: &str, n: usize, seed: u64) -> Vec<LevelUnit> {
    let mut rng = Rng::new(seed);
    let air = coaxial_capacitance_per_metre_f_per_m(0.005, 0.02, 1.0);
    (0..n)
        .map(|i| LevelUnit {
            serial: format!("{lot}-{:04}", i + 1),
            inductance_h: 22e-6 * (1.0 + rng.normal(0.0, 0.01)),
            capacitance_f: 1e-9 * (1.0 + rng.normal(0.0, 0.005)),
            ref_inductance_h: 22e-6 * (1.0 + rng.normal(0.0, 0.01)),
            ref_capacitance_f: 1e-9 * (1.0 + rng.normal(0.0, 0.005)),
            parasitic_f: rng.normal(15e-12, 1e-12),
            capacitor_tempco: rng.normal(0.0, 10e-6),
            probe_f_per_m: air * (1.0 + rng.normal(0.0, 0.01)),
        })
        .collect()
}

/// Writes a level lot's rig log: the empty tank, then levels from just above
/// the reference electrode to the top, at 25 °C and 50 °C; both channels
/// counted over 4096-cycle gates at 48 MHz.
pub fn write_level_rig_log(
    lot: &str,
    n: usize,
    seed: u64,
    mut out: impl Write,
) -> std::io::Result<()> {
    let g = LevelGeometry::DEMO;
    let mut rng = Rng::new(seed ^ 0x1E7E_1000);
    writeln!(out, "# Simulated rig log, level lot {lot}: {n} units (coolant tank, 400 mm horizontal cylinder; seed {seed})")?;
    writeln!(
        out,
        "serial,step,temp_c,target,target_unit,cycles,ticks,comp_cycles,comp_ticks"
    )?;
    let levels: Vec<Option<f64>> = std::iter::once(None)
        .chain((0..=15).map(|i| Some(0.03 + 0.37 * f64::from(i) / 15.0)))
        .collect();
    for u in level_units(lot, n, seed) {
        let mut step = 0;
        for t in [25.0, 50.0] {
            let temp = t + rng.normal(0.0, 0.05);
            for level in &levels {
                step += 1;
                let (fp, fr) = u.frequencies(level.unwrap_or(0.0), temp, &g);
                let gate = 4096.0;
                let ticks = (gate * 48e6 / fp + rng.normal(0.0, 0.3)).round();
                let comp = (gate * 48e6 / fr + rng.normal(0.0, 0.3)).round();
                let target =
                    level.map_or_else(|| "none".to_string(), |h| format!("{:.2}", h * 1e3));
                writeln!(
                    out,
                    "{},{step},{temp:.2},{target},mm,4096,{ticks:.0},4096,{comp:.0}",
                    u.serial
                )?;
            }
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Malmberg & Maryott (1956) values (docs/references.md, Water and liquids;
    /// computed from the published polynomial): 80.103 at 20 °C, 78.303 at 25
    /// °C (their abstract: 78.30), 55.720 at 100 °C.
    #[test]
    fn water_permittivity_published_values() {
        assert!((water_permittivity(20.0) - 80.103).abs() < 5e-4);
        assert!((water_permittivity(25.0) - 78.303).abs() < 5e-4);
        assert!((water_permittivity(100.0) - 55.720).abs() < 5e-4);
    }

    #[test]
    fn probe_shift_grows_with_level_and_the_ratio_ignores_temperature() {
        let u = &level_units("L", 1, 1)[0];
        let g = LevelGeometry::DEMO;
        let (p0, r0) = u.frequencies(0.0, 25.0, &g);
        let s = |f0: f64, f: f64| (f0 / f).powi(2) - 1.0;
        let mut last = 0.0;
        for i in 1..=10 {
            let h = 0.04 * f64::from(i);
            let (p, _) = u.frequencies(h, 25.0, &g);
            assert!(s(p0, p) > last);
            last = s(p0, p);
        }
        // The probe/reference ratio at one level barely moves from 25 °C
        // to 50 °C although each shift drops with the permittivity.
        let q = |t: f64| {
            let (p, r) = u.frequencies(0.2, t, &g);
            s(p0, p) / s(r0, r)
        };
        let (p25, _) = u.frequencies(0.2, 25.0, &g);
        let (p50, _) = u.frequencies(0.2, 50.0, &g);
        assert!((s(p0, p25) - s(p0, p50)).abs() / s(p0, p25) > 0.05);
        assert!(
            (q(25.0) - q(50.0)).abs() / q(25.0) < 0.01,
            "{} {}",
            q(25.0),
            q(50.0)
        );
    }
}
