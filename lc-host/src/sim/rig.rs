//! Rig logs of a simulated lot of proximity units.
//!
//! Each unit's tank has its own coil inductance, capacitor and parasitic
//! capacitance (manufacturing spread), its own temperature coefficients and
//! its own coupling to the target. A metal plate at gap d lowers the coil's
//! inductance by the image method (`crate::coil::target`): the demo coil
//! (20 mm square spiral, 11 turns per layer, two layers 1.6 mm apart) as
//! Maxwell loops, the aluminium plate as a perfect mirror half a skin depth
//! below its surface, so L(d) = L∞ · (1 − k·c(d + e)) with c the image
//! method's fractional pull, and k (about 1) and e (a mounting offset) the
//! unit's spread.
//! The rig steps the plate through its positions at each temperature; the
//! counter quantises to whole ticks with a little jitter.

use super::Rng;
use lc_core::ringdown::expected_ring_count;
use lc_core::tank::resonant_frequency_with_parasitic_hz;
use std::io::Write;
use std::sync::OnceLock;

/// What to simulate.
#[derive(Clone, Debug, PartialEq)]
pub struct LotSpec {
    /// Lot name; serials are `LOT-nnnn`.
    pub lot: String,
    /// Number of units.
    pub units: usize,
    /// Seed: the same seed gives the same log.
    pub seed: u64,
    /// Coil inductance far from any target (nominal), H.
    pub inductance_h: f64,
    /// Relative standard deviation of the inductance.
    pub inductance_spread: f64,
    /// Tank capacitor (nominal), F.
    pub capacitance_f: f64,
    /// Relative standard deviation of the capacitor.
    pub capacitance_spread: f64,
    /// Parasitic capacitance (nominal), F, and its standard deviation.
    pub parasitic_f: (f64, f64),
    /// Coupling scale k of the image-method pull (mean, standard deviation).
    pub coupling: (f64, f64),
    /// Mounting offset e of the coil behind its face, metres (mean, sd).
    pub coupling_length_m: (f64, f64),
    /// Capacitor temperature coefficient, per kelvin (mean, standard
    /// deviation); class-1 C0G is 0 ± 30 ppm/K.
    pub capacitor_tempco: (f64, f64),
    /// Coil inductance temperature coefficient, per kelvin (mean, sd).
    pub inductance_tempco: (f64, f64),
    /// Quality factor at rest (mean, standard deviation).
    pub quality: (f64, f64),
    /// Ring-down thresholds (upper, lower) as fractions of the first peak.
    pub ring_thresholds: (f64, f64),
    /// Reference clock, Hz.
    pub reference_hz: f64,
    /// Gate length, sensor cycles.
    pub gate_cycles: u32,
    /// Rig temperatures, °C.
    pub temperatures_c: Vec<f64>,
    /// Plate positions, metres.
    pub gaps_m: Vec<f64>,
    /// Counter jitter, ticks (standard deviation).
    pub jitter_ticks: f64,
    /// Every n-th unit gets a cracked capacitor (capacitance −30 %): it
    /// must fail the rest-frequency window. 0: none.
    pub bad_capacitor_every: usize,
    /// Every n-th unit gets a corrupted row: 0: none.
    pub corrupt_row_every: usize,
}

impl LotSpec {
    /// The demo lot (docs/references.md, Demo scenario): 20 mm two-layer PCB
    /// spiral about 7.25 µH, 100 pF class-1 capacitor, aluminium plate 0.5–8
    /// mm, 25 °C and 60 °C, 48 MHz reference, 16 384-cycle gates.
    pub fn demo(lot: &str, units: usize, seed: u64) -> Self {
        Self {
            lot: lot.to_string(),
            units,
            seed,
            inductance_h: 7.25e-6,
            inductance_spread: 0.015,
            capacitance_f: 100e-12,
            capacitance_spread: 0.005,
            parasitic_f: (10e-12, 1e-12),
            coupling: (1.0, 0.02),
            coupling_length_m: (0.0, 20e-6),
            capacitor_tempco: (0.0, 10e-6),
            inductance_tempco: (25e-6, 5e-6),
            quality: (40.0, 3.0),
            ring_thresholds: (1.0, 0.1),
            reference_hz: 48e6,
            gate_cycles: 16_384,
            temperatures_c: vec![25.0, 60.0],
            gaps_m: (0..16)
                .map(|i| (0.5 + 7.5 * f64::from(i) / 15.0) * 1e-3)
                .collect(),
            jitter_ticks: 0.3,
            bad_capacitor_every: 0,
            corrupt_row_every: 0,
        }
    }
}

/// One simulated unit's physical parameters.
#[derive(Clone, Debug, PartialEq)]
pub struct UnitModel {
    /// Serial.
    pub serial: String,
    /// Inductance far from targets at 25 °C, H.
    pub inductance_h: f64,
    /// Tank capacitance at 25 °C, F.
    pub capacitance_f: f64,
    /// Parasitic capacitance, F.
    pub parasitic_f: f64,
    /// Coupling scale k.
    pub coupling: f64,
    /// Mounting offset e, m.
    pub coupling_length_m: f64,
    /// Capacitor tempco, /K.
    pub capacitor_tempco: f64,
    /// Inductance tempco, /K.
    pub inductance_tempco: f64,
    /// Quality factor.
    pub quality: f64,
}

impl UnitModel {
    /// Resonant frequency at gap `gap_m` (`None`: no target) and temperature.
    pub fn frequency_hz(&self, gap_m: Option<f64>, temp_c: f64) -> f64 {
        let dt = temp_c - 25.0;
        let coupling = gap_m.map_or(0.0, |d| {
            self.coupling * demo_coupling(d + self.coupling_length_m)
        });
        let l = self.inductance_h * (1.0 - coupling) * (1.0 + self.inductance_tempco * dt);
        let c = self.capacitance_f * (1.0 + self.capacitor_tempco * dt);
        resonant_frequency_with_parasitic_hz(l, c, self.parasitic_f)
    }
}

/// The demo coil's fractional inductance change next to an aluminium
/// plate, −ΔL/L∞ at gap d, by the image method: a table on log-spaced gaps
/// from 50 µm to 50 mm, computed once.
fn coupling_table() -> &'static [(f64, f64)] {
    static TABLE: OnceLock<Vec<(f64, f64)>> = OnceLock::new();
    TABLE.get_or_init(|| {
        use crate::coil::spiral::{Shape, Spiral};
        use crate::coil::target::{good_conductor_change_h, Plate};
        let coil = Spiral::new(Shape::Square, 11, 20e-3, 0.3e-3, 0.3e-3)
            .and_then(|s| s.filament_coil(2, 1.6e-3, 35e-6));
        let Ok(coil) = coil else { return Vec::new() };
        let l_inf = coil.inductance_h();
        let delta = Plate::aluminium().skin_depth_m(5.6e6);
        (0..=120)
            .map(|i| {
                let d = 50e-6 * 1000f64.powf(f64::from(i) / 120.0);
                (d, -good_conductor_change_h(&coil, d, delta) / l_inf)
            })
            .collect()
    })
}

/// −ΔL/L∞ of the demo coil at gap `gap_m` (log-linear interpolation in the
/// table; clamped at its ends).
pub fn demo_coupling(gap_m: f64) -> f64 {
    let t = coupling_table();
    let (Some(first), Some(last)) = (t.first(), t.last()) else {
        return 0.0;
    };
    if gap_m <= first.0 {
        return first.1;
    }
    if gap_m >= last.0 {
        return last.1;
    }
    let i = t.partition_point(|p| p.0 <= gap_m).clamp(1, t.len() - 1);
    let (a, b) = (t[i - 1], t[i]);
    let w = (gap_m.ln() - a.0.ln()) / (b.0.ln() - a.0.ln());
    (a.1.ln() + w * (b.1.ln() - a.1.ln())).exp()
}

/// The units of a lot, drawn from the spec.
pub fn units(spec: &LotSpec) -> Vec<UnitModel> {
    let mut rng = Rng::new(spec.seed);
    (0..spec.units)
        .map(|i| {
            let bad = spec.bad_capacitor_every > 0 && (i + 1) % spec.bad_capacitor_every == 0;
            UnitModel {
                serial: format!("{}-{:04}", spec.lot, i + 1),
                inductance_h: spec.inductance_h * (1.0 + rng.normal(0.0, spec.inductance_spread)),
                capacitance_f: spec.capacitance_f
                    * (1.0 + rng.normal(0.0, spec.capacitance_spread))
                    * if bad { 0.7 } else { 1.0 },
                parasitic_f: rng.normal(spec.parasitic_f.0, spec.parasitic_f.1).max(0.0),
                coupling: rng.normal(spec.coupling.0, spec.coupling.1),
                coupling_length_m: rng.normal(spec.coupling_length_m.0, spec.coupling_length_m.1),
                capacitor_tempco: rng.normal(spec.capacitor_tempco.0, spec.capacitor_tempco.1),
                inductance_tempco: rng.normal(spec.inductance_tempco.0, spec.inductance_tempco.1),
                quality: rng.normal(spec.quality.0, spec.quality.1).max(2.0),
            }
        })
        .collect()
}

/// The rig log header.
pub const HEADER: &str = "serial,step,temp_c,target,target_unit,cycles,ticks,ring_count";

/// Writes the lot's rig log (docs/formats.md) to `out`.
pub fn write_rig_log(spec: &LotSpec, mut out: impl Write) -> std::io::Result<()> {
    let mut rng = Rng::new(spec.seed ^ 0x5EED_0FC0_0A7E);
    writeln!(
        out,
        "# Simulated rig log, lot {}: {} units (lc-host simulate, seed {})",
        spec.lot, spec.units, spec.seed
    )?;
    writeln!(out, "{HEADER}")?;
    for (u, unit) in units(spec).iter().enumerate() {
        let corrupt_at =
            (spec.corrupt_row_every > 0 && (u + 1) % spec.corrupt_row_every == 0).then_some(3);
        let mut step = 0;
        for &t in &spec.temperatures_c {
            let temp = t + rng.normal(0.0, 0.05);
            for gap in std::iter::once(None).chain(spec.gaps_m.iter().copied().map(Some)) {
                step += 1;
                let f = unit.frequency_hz(gap, temp);
                let ticks = (f64::from(spec.gate_cycles) * spec.reference_hz / f
                    + rng.normal(0.0, spec.jitter_ticks))
                .round();
                // Eddy currents add loss near the plate: Q falls with coupling.
                let coupling = gap.map_or(0.0, |d| {
                    unit.coupling * demo_coupling(d + unit.coupling_length_m)
                });
                let q = unit.quality * (1.0 - 1.5 * coupling).max(0.2);
                let ring = expected_ring_count(q, spec.ring_thresholds.0, spec.ring_thresholds.1)
                    .map_or(0.0, f64::round);
                let target = gap.map_or_else(|| "none".to_string(), |d| format!("{:.4}", d * 1e3));
                if corrupt_at == Some(step) {
                    writeln!(
                        out,
                        "{},{step},{temp:.2},{target},mm,{},#{ticks:.0},{ring:.0}",
                        unit.serial, spec.gate_cycles
                    )?;
                } else {
                    writeln!(
                        out,
                        "{},{step},{temp:.2},{target},mm,{},{ticks:.0},{ring:.0}",
                        unit.serial, spec.gate_cycles
                    )?;
                }
            }
        }
    }
    Ok(())
}
