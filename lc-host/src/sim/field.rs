//! Field logs of one simulated unit on a machine: a target moving in a
//! cycle, a machine warming up, counter jitter, and faults on request.
//!
//! The demo (docs/references.md, Demo scenario): a proximity unit on a press,
//! logged for two hours while the machine warms up by 20 °C; the ram plate
//! travels from 8 mm to 0.5 mm and back once per press cycle.

use super::rig::UnitModel;
use super::Rng;
use std::io::Write;

/// A fault to inject into a field log.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum FaultKind {
    /// The coil's circuit opens: no oscillation, zero sensor cycles.
    OpenCoil,
    /// The coil shorts: the oscillator stalls, zero cycles counted… and the
    /// reference keeps running.
    ShortedCoil,
    /// The reference counter sticks: zero ticks counted.
    StuckCounter,
    /// Single gates lost now and then (1 in 50 during the fault).
    Dropouts,
}

impl FaultKind {
    /// Parses a fault name: open, short, stuck, dropout.
    pub fn parse(s: &str) -> Option<Self> {
        Some(match s {
            "open" => FaultKind::OpenCoil,
            "short" => FaultKind::ShortedCoil,
            "stuck" => FaultKind::StuckCounter,
            "dropout" | "dropouts" => FaultKind::Dropouts,
            _ => return None,
        })
    }
}

/// A fault and when it happens.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Fault {
    /// Which fault.
    pub kind: FaultKind,
    /// Start, s.
    pub at_s: f64,
    /// Duration, s.
    pub duration_s: f64,
}

/// What to simulate.
#[derive(Clone, Debug, PartialEq)]
pub struct FieldSpec {
    /// The unit.
    pub unit: UnitModel,
    /// Reference clock, Hz.
    pub reference_hz: f64,
    /// Reciprocal gate, sensor cycles.
    pub gate_cycles: u32,
    /// Log length, s.
    pub duration_s: f64,
    /// Logged readings per second (every n-th gate is logged).
    pub log_rate_hz: f64,
    /// Target cycle period, s.
    pub cycle_s: f64,
    /// Nearest and farthest gap of the cycle, m.
    pub gap_m: (f64, f64),
    /// Temperature: start, rise, time constant of the warm-up, °C / s.
    pub temperature: (f64, f64, f64),
    /// Counter jitter, ticks (standard deviation).
    pub jitter_ticks: f64,
    /// Faults.
    pub faults: Vec<Fault>,
    /// Seed.
    pub seed: u64,
}

impl FieldSpec {
    /// The demo press: 2 h, one press cycle per 2 s, 8 → 0.5 mm, warming
    /// from 25 °C by 20 °C with a 40-minute time constant, 10 readings
    /// logged per second.
    pub fn demo(unit: UnitModel, seed: u64) -> Self {
        Self {
            unit,
            reference_hz: 48e6,
            gate_cycles: 16_384,
            duration_s: 7_200.0,
            log_rate_hz: 10.0,
            cycle_s: 2.0,
            gap_m: (0.5e-3, 8e-3),
            temperature: (25.0, 20.0, 2_400.0),
            jitter_ticks: 0.3,
            faults: Vec::new(),
            seed,
        }
    }

    /// Gap at time t: a smooth press stroke (raised cosine) between the
    /// nearest and farthest gap.
    pub fn gap_at(&self, t: f64) -> f64 {
        let phase = (t / self.cycle_s).fract();
        let (near, far) = self.gap_m;
        near + (far - near) * 0.5 * (1.0 + (2.0 * std::f64::consts::PI * phase).cos())
    }

    /// Temperature at time t.
    pub fn temperature_at(&self, t: f64) -> f64 {
        let (start, rise, tau) = self.temperature;
        start + rise * (1.0 - (-t / tau).exp())
    }
}

/// The field-log header written by [`write_field_log`].
pub const HEADER: &str = "time_s,channel,cycles,ticks,temp_c";

/// Writes the field log; returns the number of rows.
pub fn write_field_log(spec: &FieldSpec, mut out: impl Write) -> std::io::Result<u64> {
    let mut rng = Rng::new(spec.seed);
    writeln!(
        out,
        "# Simulated field log: unit {}, {:.0} s, {} readings/s (lc-host simulate field, seed {})",
        spec.unit.serial, spec.duration_s, spec.log_rate_hz, spec.seed
    )?;
    writeln!(out, "{HEADER}")?;
    let n = (spec.duration_s * spec.log_rate_hz).floor() as u64;
    let mut stuck_ticks = None;
    for i in 0..n {
        let t = i as f64 / spec.log_rate_hz;
        let temp = spec.temperature_at(t);
        let f = spec.unit.frequency_hz(Some(spec.gap_at(t)), temp);
        let mut cycles = spec.gate_cycles;
        let mut ticks = (f64::from(cycles) * spec.reference_hz / f
            + rng.normal(0.0, spec.jitter_ticks))
        .round() as u32;
        let fault = spec
            .faults
            .iter()
            .find(|x| t >= x.at_s && t < x.at_s + x.duration_s)
            .map(|x| x.kind);
        match fault {
            Some(FaultKind::OpenCoil | FaultKind::ShortedCoil) => cycles = 0,
            Some(FaultKind::StuckCounter) => ticks = *stuck_ticks.get_or_insert(0),
            Some(FaultKind::Dropouts) if rng.uniform() < 0.02 => cycles = 0,
            _ => {}
        }
        if fault != Some(FaultKind::StuckCounter) {
            stuck_ticks = None;
        }
        // A shorted coil leaves the gate open until the firmware's timeout:
        // the reference runs for the whole timeout (here: ten gates).
        if fault == Some(FaultKind::ShortedCoil) {
            ticks = ticks.saturating_mul(10);
        }
        writeln!(out, "{t:.3},0,{cycles},{ticks},{temp:.2}")?;
    }
    Ok(n)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sim::rig::{units, LotSpec};

    #[test]
    fn profile_and_faults() {
        let unit = units(&LotSpec::demo("F", 1, 1)).remove(0);
        let mut spec = FieldSpec::demo(unit, 9);
        spec.duration_s = 20.0;
        spec.faults = vec![
            Fault {
                kind: FaultKind::OpenCoil,
                at_s: 2.0,
                duration_s: 1.0,
            },
            Fault {
                kind: FaultKind::StuckCounter,
                at_s: 5.0,
                duration_s: 1.0,
            },
        ];
        assert!(
            (spec.gap_at(0.0) - 8e-3).abs() < 1e-12 && (spec.gap_at(1.0) - 0.5e-3).abs() < 1e-12
        );
        assert!((spec.temperature_at(0.0) - 25.0).abs() < 1e-12);
        let mut out = Vec::new();
        assert_eq!(write_field_log(&spec, &mut out).unwrap(), 200);
        let text = String::from_utf8(out).unwrap();
        let rows: Vec<&str> = text.lines().skip(2).collect();
        assert!(rows[25].split(',').nth(2) == Some("0"), "{}", rows[25]);
        assert!(rows[55].split(',').nth(3) == Some("0"), "{}", rows[55]);
        assert!(rows[10].split(',').nth(2) == Some("16384"));
    }
}
