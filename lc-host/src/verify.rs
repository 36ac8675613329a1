//! Verification of a calibration's fixed-point path against its `f64`
//! twin, stage by stage and end to end, over the image's whole input domain.
//!
//! The domain: the gate of the image, shifts spanning the curve's range and
//! 5 % beyond each end (so the clamped statuses are exercised too),
//! temperatures from −40 °C to 125 °C. A dense grid (shift × temperature)
//! plus seeded random points, spread over all cores. Each stage is fed the
//! fixed-point output of the stage before, so a stage's error is its own:
//!
//! | stage | fixed | reference | bound (lc-core) |
//! |---|---|---|---|
//! | shift | `ShiftConverter::shift` | `shift_f64` | `shift::error_bound` |
//! | drift | `TemperatureModel::compensate` | `compensate_f64` | `TemperatureModel::error_bound` |
//! | curve | `Curve::eval` | `Curve::eval_f64` | `Curve::error_bound` |
//! | end to end | `ProximityReader` / `LevelReader::read` | `read_f64` | curve bound + slope · (shift + drift bounds); with a reference electrode (held at a shift of 1) the ratio's, q = (s − h)/(r − h) with the drift model's offset h: slope · ((1 + g)·(e_s + \|q\|·e_r + \|1 − q\|·e_h)/\|r_c\| + \|q\|·2^-27) |
//!
//! Errors are also reported relative to the counter's quantisation step at
//! each point (one tick: δs = 2·(1 + s)/ticks; in output units times the
//! curve's slope).

use lc_core::counting::{CountPair, Gating};
use lc_core::curve::{Curve, CurveValue};
use lc_core::drift::TemperatureModel;
use lc_core::image::Calibration;
use lc_core::reader::{Input, LevelReader, ProximityReader, Status};
use lc_core::shift::{error_bound as shift_bound, Shift, ShiftConverter};
use lc_core::temperature::CentiCelsius;

/// The fixed-point path under test. The default methods are lc-core's; a
/// test can override one to inject an error and see verification fail.
pub trait FixedPath: Sync {
    /// Shift stage.
    fn shift(&self, conv: &ShiftConverter, pair: CountPair) -> Option<Shift> {
        conv.shift(pair).ok()
    }
    /// Drift stage.
    fn drift(&self, model: &TemperatureModel, s: Shift, t: CentiCelsius) -> Shift {
        model.compensate(s, t)
    }
    /// Curve stage.
    fn curve(&self, curve: &Curve, s: Shift) -> CurveValue {
        curve.eval(s)
    }
    /// End to end.
    fn read(&self, reader: &mut EndToEnd, input: &Input) -> Reading {
        reader.read(input)
    }
}

/// lc-core's own path: what the firmware runs.
#[derive(Clone, Copy, Debug, Default)]
pub struct Firmware;

impl FixedPath for Firmware {}

/// The reader whose end-to-end path is verified.
#[derive(Clone, Debug)]
pub enum EndToEnd {
    /// Proximity.
    Proximity(ProximityReader<'static>),
    /// Level.
    Level(LevelReader<'static>),
}

/// One end-to-end reading, as verified: the value (gap or level), what
/// the curve was evaluated at (shift or probe / reference ratio) and the
/// status.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Reading {
    /// Gap or level, raw output units.
    pub value: i32,
    /// The curve's input, Q23.40.
    pub x: Shift,
    /// Status.
    pub status: Status,
}

impl EndToEnd {
    /// One fixed-point reading.
    pub fn read(&mut self, input: &Input) -> Reading {
        match self {
            EndToEnd::Proximity(r) => {
                let p = r.read(input);
                Reading {
                    value: p.gap,
                    x: p.shift,
                    status: p.status,
                }
            }
            EndToEnd::Level(r) => {
                let l = r.read(input);
                Reading {
                    value: l.level,
                    x: Shift::from_raw_q40(l.axis.raw_q40()),
                    status: l.status,
                }
            }
        }
    }
    fn read_f64(&self, input: &Input) -> f64 {
        match self {
            EndToEnd::Proximity(r) => r.read_f64(input),
            EndToEnd::Level(r) => r.read_f64(input).0,
        }
    }
}

/// One stage's statistics.
#[derive(Clone, Debug, Default, PartialEq, serde::Serialize)]
pub struct StageStats {
    /// Stage name.
    pub stage: &'static str,
    /// Unit of the errors ("shift" or the output unit).
    pub unit: String,
    /// Points compared.
    pub points: u64,
    /// Largest |fixed − reference|.
    pub max_error: f64,
    /// Root mean square error.
    pub rms_error: f64,
    /// Largest error as a fraction of one count's quantisation step.
    pub max_error_per_step: f64,
    /// Largest error as a fraction of the stated bound.
    pub max_error_per_bound: f64,
    /// Points beyond the stated bound.
    pub violations: u64,
    /// Where the largest error (per bound) occurred.
    pub worst_at: String,
    #[serde(skip)]
    sum_sq: f64,
}

impl StageStats {
    fn new(stage: &'static str, unit: &str) -> Self {
        Self {
            stage,
            unit: unit.to_string(),
            ..Self::default()
        }
    }

    fn add(&mut self, err: f64, step: f64, bound: f64, at: impl FnOnce() -> String) {
        let err = err.abs();
        self.points += 1;
        self.sum_sq += err * err;
        self.max_error = self.max_error.max(err);
        if step > 0.0 {
            self.max_error_per_step = self.max_error_per_step.max(err / step);
        }
        let per_bound = err / bound;
        if per_bound > 1.0 {
            self.violations += 1;
        }
        if per_bound > self.max_error_per_bound {
            self.max_error_per_bound = per_bound;
            self.worst_at = at();
        }
    }

    fn merge(&mut self, o: &StageStats) {
        self.points += o.points;
        self.sum_sq += o.sum_sq;
        self.max_error = self.max_error.max(o.max_error);
        self.max_error_per_step = self.max_error_per_step.max(o.max_error_per_step);
        self.violations += o.violations;
        if o.max_error_per_bound > self.max_error_per_bound {
            self.max_error_per_bound = o.max_error_per_bound;
            self.worst_at = o.worst_at.clone();
        }
    }

    fn finish(&mut self) {
        self.rms_error = if self.points > 0 {
            (self.sum_sq / self.points as f64).sqrt()
        } else {
            0.0
        };
    }
}

/// The verification's result.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct VerifyReport {
    /// Unit serial.
    pub serial: String,
    /// Readings swept.
    pub readings: u64,
    /// Per stage, in path order.
    pub stages: Vec<StageStats>,
}

impl VerifyReport {
    /// Whether every stage compared readings and stayed within its stated
    /// bound.
    pub fn passed(&self) -> bool {
        self.complete() && self.stages.iter().all(|s| s.violations == 0)
    }

    /// Whether every stage compared at least one reading (a stage whose
    /// readings all faulted verifies nothing).
    pub fn complete(&self) -> bool {
        self.stages.iter().all(|s| s.points > 0)
    }
}

/// Options of a sweep.
#[derive(Clone, Copy, Debug)]
pub struct VerifyOptions {
    /// Random points in addition to the grid.
    pub random_points: u64,
    /// Grid size: shifts × temperatures.
    pub grid: (u32, u32),
    /// Worker threads.
    pub threads: usize,
    /// Seed of the random points.
    pub seed: u64,
}

impl Default for VerifyOptions {
    fn default() -> Self {
        Self {
            random_points: 10_000_000,
            grid: (2_000, 83),
            threads: std::thread::available_parallelism().map_or(1, usize::from),
            seed: 0x5EED,
        }
    }
}

/// Why a calibration cannot be verified.
#[derive(Debug, thiserror::Error)]
pub enum VerifyError {
    /// Metal images have no curve to verify end to end.
    #[error(
        "this image has no curve (metal reader): only proximity and level images are verified"
    )]
    NoCurve,
    /// The reader could not be built.
    #[error("the image does not form a reader: {0}")]
    Reader(lc_core::reader::ReaderError),
    /// The calibration does not form a valid image.
    #[error("the calibration does not form a valid image: {0}")]
    Image(lc_core::image::ImageError),
    /// The rest point does not form a shift converter.
    #[error("the rest point does not form a shift converter: {0}")]
    Shift(lc_core::shift::ShiftError),
}

/// The count pair over a gate of `gate` cycles of a channel with rest
/// ratio `p_rest` at shift `s`: ticks = gate · p_rest · √(1 + s), rounded;
/// `None` when that is not a positive `u32`.
fn pair_at(gate: u32, p_rest: f64, s: f64) -> Option<CountPair> {
    let ticks = (f64::from(gate) * p_rest * (1.0 + s).sqrt()).round();
    // In range and integral: the cast is exact.
    (1.0..=f64::from(u32::MAX))
        .contains(&ticks)
        .then(|| CountPair::new(gate, ticks as u32))
}

/// Sweeps the calibration's domain through `path` and its f64 twins.
pub fn verify(
    cal: &Calibration,
    opts: &VerifyOptions,
    path: &dyn FixedPath,
    progress: &(dyn Fn(u64) + Sync),
) -> Result<VerifyReport, VerifyError> {
    let table = cal.curve.ok_or(VerifyError::NoCurve)?;
    let curve = *table.curve();
    let image = crate::host_image(cal).map_err(VerifyError::Image)?;
    // A sweep, not a field log: the same count pair may come many times in
    // a row, so the frozen-counter check is off.
    let reader = match cal.kind {
        lc_core::image::ReaderKind::Proximity => {
            let mut r = ProximityReader::new(&image).map_err(VerifyError::Reader)?;
            r.set_frozen_limit(0);
            EndToEnd::Proximity(r)
        }
        lc_core::image::ReaderKind::Level => {
            let mut r = LevelReader::new(&image).map_err(VerifyError::Reader)?;
            r.set_frozen_limit(0);
            EndToEnd::Level(r)
        }
        lc_core::image::ReaderKind::Metal => return Err(VerifyError::NoCurve),
    };
    let gate = cal.gate().unwrap_or(16_384);
    let conv = ShiftConverter::new(cal.rest, Gating::Reciprocal, Some(gate))
        .map_err(VerifyError::Shift)?;
    // A level probe with a reference electrode reads q = s_probe / s_reference.
    // End to end, the reference electrode is held at a shift of 1 (its pair
    // for (p/p_rest)² = 2), so q sweeps the curve as the probe's shift does.
    let reference = match (cal.kind, cal.companion_rest) {
        (lc_core::image::ReaderKind::Level, Some(rest)) => {
            let rc = ShiftConverter::new(rest, Gating::Reciprocal, Some(gate))
                .map_err(VerifyError::Shift)?;
            let pair = pair_at(gate, rest.to_f64(), 1.0)
                .ok_or(VerifyError::Shift(lc_core::shift::ShiftError::OutOfRange))?;
            Some((rc, pair))
        }
        _ => None,
    };
    let nodes = table.nodes();
    let (s_lo, s_hi) = (
        nodes[0].shift.to_f64(),
        nodes[nodes.len() - 1].shift.to_f64(),
    );
    let margin = 0.05 * (s_hi - s_lo);
    let (s_min, s_max) = ((s_lo - margin).max(-0.9), s_hi + margin);
    let (t_min, t_max) = (-40.0, 125.0);
    let p_rest = cal.rest.to_f64();
    let unit = format!(
        "1e{} {}",
        cal.output.decimal_exponent,
        cal.output.unit.symbol()
    );
    let (gs, gt) = opts.grid;
    let grid_points = u64::from(gs) * u64::from(gt);
    let total = grid_points + opts.random_points;
    let threads = opts.threads.max(1) as u64;
    let done = std::sync::atomic::AtomicU64::new(0);

    let point = |k: u64| -> (f64, f64) {
        if k < grid_points {
            let (i, j) = (k % u64::from(gs), k / u64::from(gs));
            (
                s_min + (s_max - s_min) * i as f64 / f64::from(gs - 1),
                t_min + (t_max - t_min) * j as f64 / f64::from(gt.max(2) - 1),
            )
        } else {
            let mut rng = crate::sim::Rng::new(opts.seed ^ k.wrapping_mul(0x9E37_79B9_7F4A_7C15));
            (
                s_min + (s_max - s_min) * rng.uniform(),
                t_min + (t_max - t_min) * rng.uniform(),
            )
        }
    };

    let worker = |w: u64| -> [StageStats; 4] {
        // Each worker reads through its own reader (readers cache the
        // drift correction of the last temperature).
        let mut reader = reader.clone();
        let mut st = [
            StageStats::new("shift", "shift"),
            StageStats::new("drift", "shift"),
            StageStats::new("curve", &unit),
            StageStats::new("end to end", &unit),
        ];
        let mut k = w;
        let mut local = 0u64;
        while k < total {
            let (s_target, temp_c) = point(k);
            k += threads;
            local += 1;
            if local % 65_536 == 0 {
                progress(done.fetch_add(65_536, std::sync::atomic::Ordering::Relaxed) + 65_536);
            }
            let Some(pair) = pair_at(gate, p_rest, s_target) else {
                continue;
            };
            let Some(t) = CentiCelsius::from_f64(temp_c) else {
                continue;
            };
            let at = || format!("ticks {}, {:.2} °C", pair.ticks, t.to_f64());
            // Shift.
            let Some(s_fix) = path.shift(&conv, pair) else {
                continue;
            };
            let s_ref = conv.shift_f64(pair);
            let step_s = 2.0 * (1.0 + s_ref) / f64::from(pair.ticks);
            st[0].add(s_fix.to_f64() - s_ref, step_s, shift_bound(s_ref), at);
            // Drift, fed the fixed shift.
            let d_fix = path.drift(&cal.drift, s_fix, t);
            let d_ref = cal.drift.compensate_f64(s_fix.to_f64(), t.to_f64());
            st[1].add(
                d_fix.to_f64() - d_ref,
                step_s,
                cal.drift.error_bound(s_fix.to_f64(), t.to_f64()),
                at,
            );
            // Curve, fed the fixed compensated shift.
            let c_fix = path.curve(&curve, d_fix);
            let c_ref = curve.eval_f64(d_fix.to_f64());
            let h = 1e-7;
            let slope = (curve.eval_f64(d_fix.to_f64() + h) - curve.eval_f64(d_fix.to_f64() - h))
                / (2.0 * h);
            let step_y = slope.abs() * step_s;
            st[2].add(
                f64::from(c_fix.value) - c_ref,
                step_y,
                curve.error_bound(d_fix),
                at,
            );
            // End to end.
            let input = Input {
                temperature: Some(t),
                companion: reference.map(|(_, pair)| pair),
                ..Input::counts(pair)
            };
            let r = path.read(&mut reader, &input);
            if matches!(r.status, Status::SensorFault(_)) {
                continue;
            }
            let e_ref = reader.read_f64(&input);
            let e_s = shift_bound(s_ref) + cal.drift.error_bound(s_ref, t.to_f64());
            let (bound, step_e) = match &reference {
                None => (curve.error_bound(d_fix) + slope.abs() * e_s, step_y),
                Some((rc, ref_pair)) => {
                    // q = (s − h)/(r − h), h = 1/(1 + g) − 1 the drift
                    // model's offset form, equal to s_c / r_c with
                    // r − h = r_c/(1 + g). To first order
                    // |Δq| ≤ (1 + g)·(e_s + |q|·e_r + |1 − q|·e_h)/|r_c|
                    // + |q|·2^-27 (the division's own bound), with a
                    // margin for the second order.
                    let r_raw = rc.shift_f64(*ref_pair);
                    let t_c = t.to_f64();
                    let r_c = cal.drift.compensate_f64(r_raw, t_c);
                    let one_plus_g = 1.0 + cal.drift.compensate_f64(0.0, t_c);
                    let (e_s, e_r) = (shift_bound(s_ref), shift_bound(r_raw));
                    let e_h = cal.drift.offset_error_bound(t_c);
                    let q = r.x.to_f64();
                    let slope_q = (curve.eval_f64(q + h) - curve.eval_f64(q - h)) / (2.0 * h);
                    let e_q = (one_plus_g * (e_s + q.abs() * e_r + (1.0 - q).abs() * e_h)
                        / r_c.abs()
                        + q.abs() * 7.450_580_596_923_828e-9)
                        * (1.0 + 1e-6);
                    (
                        curve.error_bound(r.x) + slope_q.abs() * e_q,
                        slope_q.abs() * step_s / r_c.abs(),
                    )
                }
            };
            st[3].add(f64::from(r.value) - e_ref, step_e, bound, at);
        }
        st
    };
    let results: Vec<[StageStats; 4]> = std::thread::scope(|scope| {
        let handles: Vec<_> = (0..threads)
            .map(|w| scope.spawn(move || worker(w)))
            .collect();
        handles.into_iter().filter_map(|h| h.join().ok()).collect()
    });
    let mut stages = [
        StageStats::new("shift", "shift"),
        StageStats::new("drift", "shift"),
        StageStats::new("curve", &unit),
        StageStats::new("end to end", &unit),
    ];
    for r in &results {
        for (a, b) in stages.iter_mut().zip(r) {
            a.merge(b);
        }
    }
    for s in &mut stages {
        s.finish();
    }
    Ok(VerifyReport {
        serial: cal.serial.as_str().to_string(),
        readings: stages[0].points,
        stages: stages.to_vec(),
    })
}

/// The report as a text table.
pub fn to_text(r: &VerifyReport) -> String {
    let mut s = format!("verification of {}: {} readings\n", r.serial, r.readings);
    s += &format!(
        "{:<11} {:>12} {:>12} {:>11} {:>10} {:>10}  {}\n",
        "stage", "max error", "rms error", "max/step", "max/bound", "beyond", "worst at"
    );
    for st in &r.stages {
        if st.points == 0 {
            s += &format!(
                "{:<11} no readings compared: every reading faulted or left the domain\n",
                st.stage
            );
            continue;
        }
        s += &format!(
            "{:<11} {:>12.3e} {:>12.3e} {:>11.2e} {:>10.3} {:>10}  {}  [{}]\n",
            st.stage,
            st.max_error,
            st.rms_error,
            st.max_error_per_step,
            st.max_error_per_bound,
            st.violations,
            st.worst_at,
            st.unit
        );
    }
    s += if r.passed() {
        "every stage within its stated bound\n"
    } else if !r.complete() {
        "NOT VERIFIED: a stage compared no readings\n"
    } else {
        "BOUND EXCEEDED\n"
    };
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::testdata::demo_proximity;

    fn small() -> VerifyOptions {
        VerifyOptions {
            random_points: 50_000,
            grid: (200, 9),
            threads: 2,
            seed: 1,
        }
    }

    #[test]
    fn the_firmware_path_passes() {
        let mut cal = demo_proximity().unwrap();
        cal.drift = TemperatureModel::from_f64(25.0, -3e-5, 2e-8).unwrap();
        let r = verify(&cal, &small(), &Firmware, &|_| {}).unwrap();
        assert!(r.passed(), "{}", to_text(&r));
        assert_eq!(r.readings, 51_800);
        assert!(r.stages[0].max_error_per_step < 0.1, "{}", to_text(&r));
    }

    /// A level image with a reference electrode is verified end to end
    /// too: the reference electrode's pair goes with every reading.
    #[test]
    fn a_level_probe_with_a_reference_electrode_is_verified_end_to_end() {
        let bytes = include_bytes!("../../examples/firmware/data/demo-level.lcim");
        let cal = Calibration::parse(bytes).unwrap();
        assert!(cal.companion_rest.is_some());
        let r = verify(&cal, &small(), &Firmware, &|_| {}).unwrap();
        assert!(r.passed(), "{}", to_text(&r));
        assert!(r.stages[3].points > 40_000, "{}", to_text(&r));
        // And an error there is caught.
        struct OffByOne;
        impl FixedPath for OffByOne {
            fn read(&self, reader: &mut EndToEnd, input: &Input) -> Reading {
                let mut r = reader.read(input);
                r.value += 1;
                r
            }
        }
        let r = verify(&cal, &small(), &OffByOne, &|_| {}).unwrap();
        assert!(r.stages[3].violations > 0, "{}", to_text(&r));
    }

    /// A fixed path with an injected error is caught.
    #[test]
    fn an_injected_error_fails_verification() {
        struct OffByOne;
        impl FixedPath for OffByOne {
            fn curve(&self, curve: &Curve, s: Shift) -> CurveValue {
                let mut v = curve.eval(s);
                v.value += 1;
                v
            }
            fn read(&self, reader: &mut EndToEnd, input: &Input) -> Reading {
                let mut r = reader.read(input);
                r.value += 1;
                r
            }
        }
        struct ShiftBit;
        impl FixedPath for ShiftBit {
            fn shift(&self, conv: &ShiftConverter, pair: CountPair) -> Option<Shift> {
                conv.shift(pair)
                    .ok()
                    .map(|s| Shift::from_raw_q40(s.raw_q40() + (1 << 12)))
            }
        }
        let cal = demo_proximity().unwrap();
        let r = verify(&cal, &small(), &OffByOne, &|_| {}).unwrap();
        assert!(!r.passed());
        assert!(r.stages[2].violations > 0 && r.stages[3].violations > 0);
        assert_eq!(r.stages[0].violations, 0);
        let r = verify(&cal, &small(), &ShiftBit, &|_| {}).unwrap();
        assert!(r.stages[0].violations > 0, "{}", to_text(&r));
    }
}
