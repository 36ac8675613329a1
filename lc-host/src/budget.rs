//! Readout budget: what a counter set-up resolves, and what temperature
//! costs, before any hardware exists.
//!
//! Counting (Rubiola, *Rev. Sci. Instrum.* 76:054703, 2005; docs/references.md,
//! Rubiola 2005): a reciprocal gate of N whole sensor cycles counts the
//! reference ticks, ±1 tick, so δf/f = 1/ticks whatever the sensor frequency; a
//! direct gate of fixed time T counts sensor cycles, ±1 cycle, so
//! δf = 1/T. Since f ∝ (L·C)^(−1/2), one count moves the shift
//! s = Δ(L·C)/(L·C) by δs = 2·δf/f·(1 + s) (to first order), and
//! ΔL/L = ΔC/C = −2·Δf/f.

use crate::quantity::eng;
use lc_core::curve::Curve;
use lc_core::tank::resonant_frequency_with_parasitic_hz;

/// How the gate is closed.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Gating {
    /// Whole sensor cycles; count reference ticks.
    Reciprocal,
    /// Fixed time; count sensor cycles.
    Direct,
}

impl std::fmt::Display for Gating {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            Gating::Reciprocal => "reciprocal",
            Gating::Direct => "direct",
        })
    }
}

/// The temperature coefficient of an EIA class-1 ceramic capacitor code
/// (EIA-198; docs/references.md, EIA-198; published, quoted): (nominal,
/// tolerance) in ppm/K. `None` for an unknown code. Digits 4, 5 and 9 follow
/// the fuller table (4 = −10 000, 5 = +1, 9 = +10 000).
pub fn class1_tempco_ppm_per_k(code: &str) -> Option<(f64, f64)> {
    let b = code.trim().as_bytes();
    if b.len() != 3 {
        return None;
    }
    let sig = match b[0].to_ascii_uppercase() {
        b'C' => 0.0,
        b'B' => 0.3,
        b'L' => 0.8,
        b'A' => 0.9,
        b'M' => 1.0,
        b'P' => 1.5,
        b'R' => 2.2,
        b'S' => 3.3,
        b'T' => 4.7,
        b'V' => 5.6,
        b'U' => 7.5,
        _ => return None,
    };
    let mult = match b[1] {
        b'0' => -1.0,
        b'1' => -10.0,
        b'2' => -100.0,
        b'3' => -1000.0,
        b'4' => -10_000.0,
        b'5' => 1.0,
        b'6' => 10.0,
        b'7' => 100.0,
        b'8' => 1000.0,
        b'9' => 10_000.0,
        _ => return None,
    };
    let tol = match b[2].to_ascii_uppercase() {
        b'G' => 30.0,
        b'H' => 60.0,
        b'J' => 120.0,
        b'K' => 250.0,
        b'L' => 500.0,
        b'M' => 1000.0,
        b'N' => 2500.0,
        _ => return None,
    };
    Some((sig * mult, tol))
}

/// The set-up to budget.
#[derive(Clone, Debug, PartialEq)]
pub struct BudgetInput {
    /// Reference clock, Hz.
    pub reference_hz: f64,
    /// Reference clock tolerance over the temperature range, ppm.
    pub reference_ppm: f64,
    /// Gating.
    pub gating: Gating,
    /// Gate: sensor cycles (reciprocal) — or seconds (direct).
    pub gate: f64,
    /// Coil inductance, H, and its relative tolerance.
    pub inductance_h: (f64, f64),
    /// Tank capacitor, F, and its relative tolerance.
    pub capacitance_f: (f64, f64),
    /// Parasitic capacitance, F.
    pub parasitic_f: f64,
    /// Capacitor temperature coefficient: (nominal, tolerance), ppm/K.
    pub capacitor_tempco_ppm: (f64, f64),
    /// Coil inductance temperature coefficient, ppm/K (nominal).
    pub inductance_tempco_ppm: f64,
    /// Temperature range, °C, and the reference temperature.
    pub temperature_c: (f64, f64, f64),
    /// Calibration temperatures (for the compensation's residual).
    pub calibration_temps_c: Vec<f64>,
    /// A shift resolution to reach, for the gate that reaches it.
    pub target_resolution: Option<f64>,
}

/// Resolution at one curve node.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct NodeBudget {
    /// Shift at the node.
    pub shift: f64,
    /// Value at the node, output units.
    pub value: i32,
    /// |dy/ds| there, output units per unit shift.
    pub slope: f64,
    /// One count, in output units.
    pub resolution: f64,
    /// Temperature error over the range, output units, uncompensated.
    pub temperature_error: f64,
    /// The same after per-unit compensation.
    pub temperature_error_compensated: f64,
}

/// The budget.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct BudgetReport {
    /// Nominal resonant frequency, Hz.
    pub frequency_hz: f64,
    /// Lowest and highest frequency from the L and C tolerances, Hz.
    pub frequency_range_hz: (f64, f64),
    /// Gating.
    pub gating: Gating,
    /// Sensor cycles per gate.
    pub cycles: f64,
    /// Reference ticks per gate.
    pub ticks: f64,
    /// Gate time, s.
    pub gate_time_s: f64,
    /// Readings per second (back-to-back gates).
    pub readings_per_s: f64,
    /// One count as a frequency step, Hz.
    pub frequency_step_hz: f64,
    /// One count, relative frequency.
    pub frequency_step_rel: f64,
    /// One count as a shift step (= ΔL/L = ΔC/C) at rest.
    pub shift_step: f64,
    /// RMS of the count quantisation (uniform ±½ count on one end:
    /// step/√12; both ends independent: step/√6), shift.
    pub shift_step_rms: f64,
    /// Shift error from the reference clock's tolerance if it drifts
    /// between calibration and reading: 2·ppm.
    pub reference_shift_error: f64,
    /// Shift drift over the temperature range, uncompensated (worst case
    /// with the capacitor's tolerance).
    pub temperature_shift_error: f64,
    /// The same after per-unit compensation: the coefficient's uncertainty
    /// from one count at each calibration temperature, over the range.
    pub temperature_shift_error_compensated: f64,
    /// Gate that reaches the requested shift resolution: (cycles, seconds).
    pub gate_for_target: Option<(f64, f64)>,
    /// Per curve node, when an image was given.
    pub nodes: Vec<NodeBudget>,
}

/// Computes the budget; with a curve, per node in output units.
pub fn budget(b: &BudgetInput, curve: Option<&Curve>) -> BudgetReport {
    let (l, ltol) = b.inductance_h;
    let (c, ctol) = b.capacitance_f;
    let f = resonant_frequency_with_parasitic_hz(l, c, b.parasitic_f);
    let f_lo =
        resonant_frequency_with_parasitic_hz(l * (1.0 + ltol), c * (1.0 + ctol), b.parasitic_f);
    let f_hi =
        resonant_frequency_with_parasitic_hz(l * (1.0 - ltol), c * (1.0 - ctol), b.parasitic_f);
    let (cycles, gate_time, ticks, step_rel) = match b.gating {
        Gating::Reciprocal => {
            let t = b.gate / f;
            let ticks = t * b.reference_hz;
            (b.gate, t, ticks, 1.0 / ticks)
        }
        Gating::Direct => {
            let cyc = f * b.gate;
            (cyc, b.gate, b.gate * b.reference_hz, 1.0 / cyc)
        }
    };
    let shift_step = 2.0 * step_rel;
    let (t_min, t_max, t_ref) = b.temperature_c;
    let dt_max = (t_max - t_ref).abs().max((t_min - t_ref).abs());
    let c_share = c / (c + b.parasitic_f);
    let tempco = (b.inductance_tempco_ppm.abs()
        + (b.capacitor_tempco_ppm.0.abs() + b.capacitor_tempco_ppm.1) * c_share)
        * 1e-6;
    let temperature_shift_error = tempco * dt_max;
    // Two calibration temperatures at ΔT apart, each ±1 count: the slope's
    // error is √2·δs/ΔT; over dt_max that is the residual.
    let cal_span = b
        .calibration_temps_c
        .iter()
        .copied()
        .fold(None, |acc: Option<(f64, f64)>, t| {
            Some(acc.map_or((t, t), |(lo, hi)| (lo.min(t), hi.max(t))))
        })
        .map_or(0.0, |(lo, hi)| hi - lo);
    let temperature_shift_error_compensated = if cal_span > 0.0 {
        std::f64::consts::SQRT_2 * shift_step / cal_span * dt_max
    } else {
        temperature_shift_error
    };
    let gate_for_target = b
        .target_resolution
        .filter(|r| *r > 0.0)
        .map(|r| match b.gating {
            Gating::Reciprocal => {
                let ticks_needed = 2.0 / r;
                let t = ticks_needed / b.reference_hz;
                (t * f, t)
            }
            Gating::Direct => {
                let cyc = 2.0 / r;
                (cyc, cyc / f)
            }
        });
    let nodes = curve
        .map(|cv| {
            (0..cv.len())
                .filter_map(|i| cv.node(i))
                .enumerate()
                .map(|(i, n)| {
                    let s = n.shift.to_f64();
                    let h = 1e-7;
                    // One-sided at the ends: beyond them the curve is clamped.
                    let (a, b) = match i {
                        0 => (s, s + h),
                        i if i + 1 == cv.len() => (s - h, s),
                        _ => (s - h, s + h),
                    };
                    let slope = ((cv.eval_f64(b) - cv.eval_f64(a)) / (b - a)).abs();
                    // One count at this shift: ticks scale with √(1 + s).
                    let ds = shift_step * (1.0 + s) / (1.0 + s).sqrt();
                    NodeBudget {
                        shift: s,
                        value: n.value,
                        slope,
                        resolution: slope * ds,
                        temperature_error: slope * temperature_shift_error * (1.0 + s),
                        temperature_error_compensated: slope
                            * temperature_shift_error_compensated
                            * (1.0 + s),
                    }
                })
                .collect()
        })
        .unwrap_or_default();
    BudgetReport {
        frequency_hz: f,
        frequency_range_hz: (f_lo, f_hi),
        gating: b.gating,
        cycles,
        ticks,
        gate_time_s: gate_time,
        readings_per_s: 1.0 / gate_time,
        frequency_step_hz: f * step_rel,
        frequency_step_rel: step_rel,
        shift_step,
        shift_step_rms: shift_step / 12f64.sqrt(),
        reference_shift_error: 2.0 * b.reference_ppm * 1e-6,
        temperature_shift_error,
        temperature_shift_error_compensated,
        gate_for_target,
        nodes,
    }
}

/// The budget as a text table.
pub fn to_text(r: &BudgetReport, unit: &str) -> String {
    let mut s = String::new();
    let mut row = |k: &str, v: String| s.push_str(&format!("  {k:<38} {v}\n"));
    row(
        "resonant frequency",
        format!(
            "{} ({} … {} with L, C tolerances)",
            eng(r.frequency_hz, "Hz"),
            eng(r.frequency_range_hz.0, "Hz"),
            eng(r.frequency_range_hz.1, "Hz")
        ),
    );
    row(
        "gating",
        format!(
            "{}: {:.0} cycles, {:.0} ticks, {}",
            r.gating,
            r.cycles,
            r.ticks,
            eng(r.gate_time_s, "s")
        ),
    );
    row("readings per second", format!("{:.1}", r.readings_per_s));
    row(
        "one count: frequency",
        format!(
            "{} ({:.3e} relative)",
            eng(r.frequency_step_hz, "Hz"),
            r.frequency_step_rel
        ),
    );
    row(
        "one count: shift = ΔL/L = ΔC/C",
        format!(
            "{:.3e} ({:.3} ppm; rms {:.3} ppm)",
            r.shift_step,
            r.shift_step * 1e6,
            r.shift_step_rms * 1e6
        ),
    );
    row(
        "reference tolerance as shift",
        format!("{:.1} ppm", r.reference_shift_error * 1e6),
    );
    row(
        "temperature drift as shift",
        format!(
            "{:.1} ppm uncompensated, {:.2} ppm compensated",
            r.temperature_shift_error * 1e6,
            r.temperature_shift_error_compensated * 1e6
        ),
    );
    if let Some((cyc, t)) = r.gate_for_target {
        row(
            "gate for the requested resolution",
            format!("{cyc:.0} cycles, {}", eng(t, "s")),
        );
    }
    if !r.nodes.is_empty() {
        s.push_str(&format!(
            "\n  {:>12} {:>10} {:>14} {:>14} {:>14} {:>14}\n",
            "shift (ppm)", "value", "slope", "1 count", "temp. raw", "temp. comp."
        ));
        for n in &r.nodes {
            s.push_str(&format!(
                "  {:>12.1} {:>10} {:>14.1} {:>14.3} {:>14.2} {:>14.3}\n",
                n.shift * 1e6,
                n.value,
                n.slope,
                n.resolution,
                n.temperature_error,
                n.temperature_error_compensated
            ));
        }
        s.push_str(&format!(
            "  (value, resolution and temperature errors in {unit})\n"
        ));
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    fn input(gating: Gating, gate: f64, f_ref: f64, f_sensor: f64) -> BudgetInput {
        // A tank tuned to f_sensor: L for C = 1 nF.
        let c = 1e-9;
        let l = lc_core::tank::inductance_for_frequency_h(f_sensor, c);
        BudgetInput {
            reference_hz: f_ref,
            reference_ppm: 0.0,
            gating,
            gate,
            inductance_h: (l, 0.0),
            capacitance_f: (c, 0.0),
            parasitic_f: 0.0,
            capacitor_tempco_ppm: (0.0, 30.0),
            inductance_tempco_ppm: 0.0,
            temperature_c: (25.0, 85.0, 25.0),
            calibration_temps_c: vec![25.0, 60.0],
            target_resolution: None,
        }
    }

    /// Counter quantisation examples, docs/references.md, Counter quantisation
    /// cases (Rubiola 2005 principles; values computed).
    #[test]
    fn published_counter_examples() {
        // 13b: reciprocal, 1 kHz, 10 MHz reference, 1 s (1000 periods):
        // relative ±1e-7, Δf = ±0.1 mHz.
        let r = budget(&input(Gating::Reciprocal, 1000.0, 10e6, 1e3), None);
        assert!((r.frequency_step_rel - 1e-7).abs() < 1e-15);
        assert!((r.frequency_step_hz - 1e-4).abs() < 1e-12);
        // 13a: direct, 1 kHz, 1 s gate: ±1 Hz (1e-3).
        let r = budget(&input(Gating::Direct, 1.0, 10e6, 1e3), None);
        assert!(
            (r.frequency_step_hz - 1.0).abs() < 1e-9 && (r.frequency_step_rel - 1e-3).abs() < 1e-12
        );
        // 13c: 1 MHz, 10 ms: direct ±100 Hz; reciprocal at 100 MHz ±1 Hz.
        let r = budget(&input(Gating::Direct, 0.01, 100e6, 1e6), None);
        assert!((r.frequency_step_hz - 100.0).abs() < 1e-6);
        let r = budget(&input(Gating::Reciprocal, 10_000.0, 100e6, 1e6), None);
        assert!((r.frequency_step_hz - 1.0).abs() < 1e-6);
        // 13e: 2 MHz, 1 ms: direct 1 kHz; reciprocal 40 MHz: 50 Hz
        // (2.5e-5), so ΔC/C = 5e-5 (the small-signal law ΔC/C = −2Δf/f).
        let r = budget(&input(Gating::Direct, 1e-3, 40e6, 2e6), None);
        assert!((r.frequency_step_hz - 1000.0).abs() < 1e-6);
        let r = budget(&input(Gating::Reciprocal, 2000.0, 40e6, 2e6), None);
        assert!((r.frequency_step_hz - 50.0).abs() < 1e-6);
        assert!((r.shift_step - 5e-5).abs() < 1e-15);
        assert!(
            (r.shift_step - lc_core::tank::relative_lc_change_small_signal(-r.frequency_step_rel))
                .abs()
                < 1e-15
        );
    }

    /// EIA class-1 codes (EIA-198, docs/references.md, EIA-198; published,
    /// quoted).
    #[test]
    fn class1_codes() {
        assert_eq!(class1_tempco_ppm_per_k("C0G"), Some((0.0, 30.0)));
        assert_eq!(class1_tempco_ppm_per_k("U2J"), Some((-750.0, 120.0)));
        assert_eq!(class1_tempco_ppm_per_k("P2H"), Some((-150.0, 60.0)));
        assert_eq!(class1_tempco_ppm_per_k("M7G"), Some((100.0, 30.0)));
        assert_eq!(class1_tempco_ppm_per_k("X7R"), None);
        // C0G 100 pF at +85 °C: ±0.18 %; df/f = 1/√1.0018 − 1 = −8.988e-4
        // (docs/references.md, EIA-198; computed).
        let (_, tol) = class1_tempco_ppm_per_k("C0G").unwrap();
        let dc = tol * 1e-6 * 60.0;
        assert!((dc - 0.0018).abs() < 1e-12);
        assert!(((1.0 / (1.0 + dc).sqrt() - 1.0) + 8.988e-4).abs() < 5e-7);
    }

    #[test]
    fn temperature_terms_and_target_gate() {
        let mut b = input(Gating::Reciprocal, 16_384.0, 48e6, 5.6e6);
        b.target_resolution = Some(1e-6);
        let r = budget(&b, None);
        // C0G worst case over 60 K: 30 ppm/K · 60 K = 1800 ppm.
        assert!((r.temperature_shift_error - 1.8e-3).abs() < 1e-12);
        assert!(r.temperature_shift_error_compensated < r.temperature_shift_error);
        // 1 ppm of shift needs 2e6 ticks: 41.7 ms at 48 MHz.
        let (_, t) = r.gate_for_target.unwrap();
        assert!((t - 2e6 / 48e6).abs() < 1e-12);
    }
}
