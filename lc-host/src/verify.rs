//! Verification of a calibration's fixed-point path against its `f64`
//! twin, stage by stage and end to end, over the input domain of the
//! reader the image builds: each product's own path, fed what that reader
//! is fed on a unit.
//!
//! | product | swept | stages |
//! |---|---|---|
//! | proximity, level without reference electrode | the shift over the curve's range and 5 % beyond each end; temperature | shift, drift, curve, end to end |
//! | level with reference electrode | the ratio q over the curve's range and 5 % beyond; the reference electrode's compensated shift r over r_max/16 … r_max (r_max: the largest at which the full probe, q_max·r, stays inside the fault window); temperature | shift (probe and reference), drift offset, curve, end to end |
//! | metal | shift − baseline over ±10 times the enter threshold (at least ±1000 ppm) from a baseline learned at rest; temperature | shift, drift, delta, detection |
//!
//! Temperatures run from −40 °C to 125 °C. A dense grid plus seeded random
//! points, spread over all cores. Each stage is fed the fixed-point output
//! of the stage before, so a stage's error is its own:
//!
//! | stage | fixed | reference | bound (lc-core) |
//! |---|---|---|---|
//! | shift | `ShiftConverter::shift` | `shift_f64` | `shift::error_bound` |
//! | drift | `TemperatureModel::compensate` | `compensate_f64` | `TemperatureModel::error_bound` |
//! | drift offset | `DriftFactor::offset` | h = 1/(1 + g) − 1 | `TemperatureModel::offset_error_bound` |
//! | curve | `Curve::eval` | `Curve::eval_f64` | `Curve::error_bound` |
//! | end to end | `ProximityReader` / `LevelReader::read` | `read_f64` | curve bound + slope · (shift + drift bounds); with a reference electrode the ratio's, q = (s − h)/(r − h) with the drift model's offset h: slope · ((1 + g)·(e_s + \|q\|·e_r + \|1 − q\|·e_h)/\|r_c\| + \|q\|·2^-27) |
//! | delta | `MetalReader::read`'s shift − baseline | the difference of the compensated `f64` shifts | the shift and drift bounds of both |
//! | detection | `MetalReader::read`'s class after `enter_samples` readings | the class the `f64` delta gives against the enter threshold | none may differ (points within the delta's bound of the threshold are left out) |
//!
//! Errors are also reported relative to the counter's quantisation step at
//! each point (one tick: δs = 2·(1 + s)/ticks; in output units times the
//! curve's slope).

use lc_core::counting::{CountPair, Gating};
use lc_core::curve::{Curve, CurveValue};
use lc_core::drift::{Companion, TemperatureModel};
use lc_core::image::{Calibration, ReaderKind};
use lc_core::reader::{Input, LevelReader, MetalClass, MetalReader, ProximityReader, Status};
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
    /// Drift stage in offset form (level with a reference electrode).
    fn offset(&self, model: &TemperatureModel, t: CentiCelsius) -> Shift {
        model.factor(t).offset()
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
    /// Metal.
    Metal(MetalReader),
}

/// One end-to-end reading, as verified: the value (gap, level, or the
/// metal class's code), what the curve was evaluated at (shift or probe /
/// reference ratio; metal: shift − baseline) and the status.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Reading {
    /// Gap or level, raw output units; metal: the class (0 none, 1
    /// ferrous, 2 non-ferrous).
    pub value: i32,
    /// The curve's input, Q23.40 (metal: shift − baseline).
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
            EndToEnd::Metal(r) => {
                let m = r.read(input);
                Reading {
                    value: m.class as i32,
                    x: m.delta,
                    status: m.status,
                }
            }
        }
    }
    fn read_f64(&self, input: &Input) -> f64 {
        match self {
            EndToEnd::Proximity(r) => r.read_f64(input),
            EndToEnd::Level(r) => r.read_f64(input).0,
            EndToEnd::Metal(_) => f64::NAN,
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
    /// The product path verified ("proximity", "level", "level with
    /// reference electrode", "metal").
    pub product: String,
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
    /// A proximity or level image without a curve (an image that validates
    /// always has one).
    #[error("this {0} image has no curve to verify")]
    NoCurve(&'static str),
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

/// The reader kind as a word.
pub fn kind_name(kind: ReaderKind) -> &'static str {
    match kind {
        ReaderKind::Proximity => "proximity",
        ReaderKind::Level => "level",
        ReaderKind::Metal => "metal",
    }
}

/// What a product's path needs beyond the common front.
#[derive(Clone, Copy)]
enum Product {
    /// Shift → drift → curve (proximity; level without a reference
    /// electrode): the curve's x range in shift.
    Shift { s_min: f64, s_max: f64 },
    /// Level with a reference electrode: q range, reference shifts.
    Ratio {
        q_min: f64,
        q_max: f64,
        r_lo: f64,
        r_hi: f64,
        rc: ShiftConverter,
        p_rest_c: f64,
    },
    /// Metal: the delta range, the enter threshold, debounce and ring drop.
    Metal {
        d_max: f64,
        enter: f64,
        enter_samples: u16,
        ring_drop: u16,
        baseline_k: u8,
    },
}

/// Sweeps the calibration's domain through `path` and its f64 twins.
pub fn verify(
    cal: &Calibration,
    opts: &VerifyOptions,
    path: &dyn FixedPath,
    progress: &(dyn Fn(u64) + Sync),
) -> Result<VerifyReport, VerifyError> {
    let image = crate::host_image(cal).map_err(VerifyError::Image)?;
    let kind = cal.kind;
    // A sweep, not a field log: the same count pair may come many times in
    // a row, so the frozen-counter check is off.
    let reader = match kind {
        ReaderKind::Proximity => {
            let mut r = ProximityReader::new(&image).map_err(VerifyError::Reader)?;
            r.set_frozen_limit(0);
            EndToEnd::Proximity(r)
        }
        ReaderKind::Level => {
            let mut r = LevelReader::new(&image).map_err(VerifyError::Reader)?;
            r.set_frozen_limit(0);
            EndToEnd::Level(r)
        }
        ReaderKind::Metal => {
            let mut r = MetalReader::new(&image).map_err(VerifyError::Reader)?;
            r.set_frozen_limit(0);
            EndToEnd::Metal(r)
        }
    };
    let gate = cal.gate().unwrap_or(16_384);
    let conv = ShiftConverter::new(cal.rest, Gating::Reciprocal, Some(gate))
        .map_err(VerifyError::Shift)?;
    let p_rest = cal.rest.to_f64();
    // A proximity or metal unit with a companion coil reads the ratio of
    // the two channels; the companion is held at its rest point, so the
    // front's shift is the sensor channel's.
    let companion = match (kind, cal.companion_rest) {
        (ReaderKind::Level, _) | (_, None) => None,
        (_, Some(rest)) => {
            let c = Companion::new(cal.rest, rest).map_err(VerifyError::Shift)?;
            let pair = pair_at(gate, rest.to_f64(), 0.0)
                .ok_or(VerifyError::Shift(lc_core::shift::ShiftError::OutOfRange))?;
            Some((c, pair))
        }
    };
    // The largest shift of a channel with rest ratio `p` inside the fault
    // window (its lower frequency edge), at most 4.
    let window_shift = |p: f64| {
        let lo_hz = f64::from(cal.window.min_hz());
        if lo_hz <= 0.0 {
            return 4.0;
        }
        let p_max = f64::from(cal.reference_hz) / lo_hz;
        ((p_max / p).powi(2) - 1.0).clamp(0.0, 4.0)
    };
    let curve_range = |table: &lc_core::image::Table| {
        let nodes = table.nodes();
        let (lo, hi) = (
            nodes[0].shift.to_f64(),
            nodes[nodes.len() - 1].shift.to_f64(),
        );
        let margin = 0.05 * (hi - lo);
        (lo - margin, hi + margin)
    };
    let curve = cal.curve.map(|t| *t.curve());
    let product = match (kind, cal.curve, cal.companion_rest, cal.metal) {
        (ReaderKind::Metal, _, _, Some(m)) => {
            let enter = f64::from(m.enter_ppb) * 1e-9;
            Product::Metal {
                d_max: (10.0 * enter).max(1e-3),
                enter,
                enter_samples: m.enter_samples,
                ring_drop: m.ring_drop,
                baseline_k: m.baseline_k,
            }
        }
        (ReaderKind::Metal, _, _, None) => return Err(VerifyError::NoCurve("metal")),
        (ReaderKind::Level, Some(table), Some(rest), _) => {
            let (q_min, q_max) = curve_range(&table);
            let rc = ShiftConverter::new(rest, Gating::Reciprocal, Some(gate))
                .map_err(VerifyError::Shift)?;
            let p_rest_c = rest.to_f64();
            let r_hi = 0.9 * window_shift(p_rest_c).min(window_shift(p_rest) / q_max.max(1.0));
            Product::Ratio {
                q_min,
                q_max,
                r_lo: r_hi / 16.0,
                r_hi,
                rc,
                p_rest_c,
            }
        }
        (_, Some(table), _, _) => {
            let (s_min, s_max) = curve_range(&table);
            Product::Shift {
                s_min: s_min.max(-0.9),
                s_max,
            }
        }
        (k, None, _, _) => return Err(VerifyError::NoCurve(kind_name(k))),
    };
    let (t_min, t_max) = (-40.0, 125.0);
    let unit = match product {
        Product::Metal { .. } => "shift".to_string(),
        _ => format!(
            "1e{} {}",
            cal.output.decimal_exponent,
            cal.output.unit.symbol()
        ),
    };
    let names: [(&'static str, &str); 4] = match product {
        Product::Shift { .. } => [
            ("shift", "shift"),
            ("drift", "shift"),
            ("curve", &unit),
            ("end to end", &unit),
        ],
        Product::Ratio { .. } => [
            ("shift", "shift"),
            ("drift offset", "shift"),
            ("curve", &unit),
            ("end to end", &unit),
        ],
        Product::Metal { .. } => [
            ("shift", "shift"),
            ("drift", "shift"),
            ("delta", "shift"),
            ("detection", "class"),
        ],
    };
    let new_stages = || names.map(|(n, u)| StageStats::new(n, u));
    let (gs, gt) = opts.grid;
    let grid_points = u64::from(gs) * u64::from(gt);
    let total = grid_points + opts.random_points;
    let threads = opts.threads.max(1) as u64;
    let done = std::sync::atomic::AtomicU64::new(0);

    // A point of the sweep: (main axis, temperature, second axis), the
    // axes in [0, 1]. The grid's second axis follows the golden ratio.
    let point = |k: u64| -> (f64, f64, f64) {
        if k < grid_points {
            let (i, j) = (k % u64::from(gs), k / u64::from(gs));
            (
                i as f64 / f64::from(gs.max(2) - 1),
                t_min + (t_max - t_min) * j as f64 / f64::from(gt.max(2) - 1),
                (k as f64 * 0.618_033_988_749_894_9).fract(),
            )
        } else {
            let mut rng = crate::sim::Rng::new(opts.seed ^ k.wrapping_mul(0x9E37_79B9_7F4A_7C15));
            (
                rng.uniform(),
                t_min + (t_max - t_min) * rng.uniform(),
                rng.uniform(),
            )
        }
    };
    // The compensated f64 shift of the front (ratiometric with a
    // companion coil).
    let front_f64 = |pair: CountPair, t: f64| -> f64 {
        let s = match companion {
            Some((c, comp)) => c.shift_f64(pair, comp),
            None => conv.shift_f64(pair),
        };
        cal.drift.compensate_f64(s, t)
    };
    const H: f64 = 1e-7;
    let slope_at =
        |curve: &Curve, x: f64| (curve.eval_f64(x + H) - curve.eval_f64(x - H)) / (2.0 * H);

    let worker = |w: u64| -> ([StageStats; 4], u64) {
        // Each worker reads through its own reader (readers cache the
        // drift correction of the last temperature).
        let mut reader = reader.clone();
        let mut st = new_stages();
        let mut readings = 0u64;
        let mut k = w;
        let mut local = 0u64;
        while k < total {
            let (u, temp_c, v) = point(k);
            k += threads;
            local += 1;
            if local % 65_536 == 0 {
                progress(done.fetch_add(65_536, std::sync::atomic::Ordering::Relaxed) + 65_536);
            }
            let Some(t) = CentiCelsius::from_f64(temp_c) else {
                continue;
            };
            let t_c = t.to_f64();
            // 1 + g at this temperature.
            let one_plus_g = 1.0 + cal.drift.compensate_f64(0.0, t_c);
            // The raw shift whose compensated value is `c`.
            let raw_of = |c: f64| (1.0 + c) / one_plus_g - 1.0;
            match product {
                Product::Shift { s_min, s_max } => {
                    let Some(curve) = &curve else { continue };
                    let s_target = s_min + (s_max - s_min) * u;
                    let Some(pair) = pair_at(gate, p_rest, s_target) else {
                        continue;
                    };
                    let at = || format!("ticks {}, {t_c:.2} °C", pair.ticks);
                    let Some(s_fix) = path.shift(&conv, pair) else {
                        continue;
                    };
                    readings += 1;
                    let s_ref = conv.shift_f64(pair);
                    let step_s = 2.0 * (1.0 + s_ref) / f64::from(pair.ticks);
                    st[0].add(s_fix.to_f64() - s_ref, step_s, shift_bound(s_ref), at);
                    // Drift, fed the fixed shift.
                    let d_fix = path.drift(&cal.drift, s_fix, t);
                    let d_ref = cal.drift.compensate_f64(s_fix.to_f64(), t_c);
                    st[1].add(
                        d_fix.to_f64() - d_ref,
                        step_s,
                        cal.drift.error_bound(s_fix.to_f64(), t_c),
                        at,
                    );
                    // Curve, fed the fixed compensated shift.
                    let c_fix = path.curve(curve, d_fix);
                    let c_ref = curve.eval_f64(d_fix.to_f64());
                    let slope = slope_at(curve, d_fix.to_f64());
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
                        companion: companion.map(|(_, c)| c),
                        ..Input::counts(pair)
                    };
                    let r = path.read(&mut reader, &input);
                    if matches!(r.status, Status::SensorFault(_)) {
                        continue;
                    }
                    let e_ref = reader.read_f64(&input);
                    let e_s = shift_bound(s_ref) + cal.drift.error_bound(s_ref, t_c);
                    st[3].add(
                        f64::from(r.value) - e_ref,
                        step_y,
                        curve.error_bound(d_fix) + slope.abs() * e_s,
                        at,
                    );
                }
                Product::Ratio {
                    q_min,
                    q_max,
                    r_lo,
                    r_hi,
                    rc,
                    p_rest_c,
                } => {
                    let Some(curve) = &curve else { continue };
                    // q = s_c / r_c with r_c the compensated reference shift.
                    let q_target = q_min + (q_max - q_min) * u;
                    let r_target = r_lo * (r_hi / r_lo).powf(v);
                    let (Some(pair), Some(ref_pair)) = (
                        pair_at(gate, p_rest, raw_of(q_target * r_target)),
                        pair_at(gate, p_rest_c, raw_of(r_target)),
                    ) else {
                        continue;
                    };
                    let at = || {
                        format!(
                            "ticks {}, reference ticks {}, {t_c:.2} °C",
                            pair.ticks, ref_pair.ticks
                        )
                    };
                    let (Some(s_fix), Some(r_fix)) =
                        (path.shift(&conv, pair), path.shift(&rc, ref_pair))
                    else {
                        continue;
                    };
                    readings += 1;
                    let s_ref = conv.shift_f64(pair);
                    let r_raw = rc.shift_f64(ref_pair);
                    let step_s = 2.0 * (1.0 + s_ref) / f64::from(pair.ticks);
                    st[0].add(s_fix.to_f64() - s_ref, step_s, shift_bound(s_ref), at);
                    st[0].add(
                        r_fix.to_f64() - r_raw,
                        2.0 * (1.0 + r_raw) / f64::from(ref_pair.ticks),
                        shift_bound(r_raw),
                        at,
                    );
                    // The drift model's offset h = 1/(1 + g) − 1.
                    let h_fix = path.offset(&cal.drift, t);
                    st[1].add(
                        h_fix.to_f64() - (1.0 / one_plus_g - 1.0),
                        step_s,
                        cal.drift.offset_error_bound(t_c),
                        at,
                    );
                    // End to end: the reading's ratio feeds the curve stage.
                    let input = Input {
                        temperature: Some(t),
                        companion: Some(ref_pair),
                        ..Input::counts(pair)
                    };
                    let r = path.read(&mut reader, &input);
                    if matches!(r.status, Status::SensorFault(_)) {
                        continue;
                    }
                    let q = r.x.to_f64();
                    let c_fix = path.curve(curve, r.x);
                    let slope_q = slope_at(curve, q);
                    let r_c = cal.drift.compensate_f64(r_raw, t_c);
                    let step_e = slope_q.abs() * step_s / r_c.abs();
                    st[2].add(
                        f64::from(c_fix.value) - curve.eval_f64(q),
                        step_e,
                        curve.error_bound(r.x),
                        at,
                    );
                    // q = (s − h)/(r − h), h = 1/(1 + g) − 1 the drift
                    // model's offset form, equal to s_c / r_c with
                    // r − h = r_c/(1 + g). To first order
                    // |Δq| ≤ (1 + g)·(e_s + |q|·e_r + |1 − q|·e_h)/|r_c|
                    // + |q|·2^-27 (the division's own bound), with a
                    // margin for the second order.
                    let (e_s, e_r) = (shift_bound(s_ref), shift_bound(r_raw));
                    let e_h = cal.drift.offset_error_bound(t_c);
                    let e_q = (one_plus_g * (e_s + q.abs() * e_r + (1.0 - q).abs() * e_h)
                        / r_c.abs()
                        + q.abs() * 7.450_580_596_923_828e-9)
                        * (1.0 + 1e-6);
                    st[3].add(
                        f64::from(r.value) - reader.read_f64(&input),
                        step_e,
                        curve.error_bound(r.x) + slope_q.abs() * e_q,
                        at,
                    );
                }
                Product::Metal {
                    d_max,
                    enter,
                    enter_samples,
                    ring_drop,
                    baseline_k,
                } => {
                    // A baseline learned at rest (compensated shift 0),
                    // then a target at a compensated delta d.
                    let d_target = d_max * (2.0 * u - 1.0);
                    let (Some(base), Some(pair)) = (
                        pair_at(gate, p_rest, raw_of(0.0)),
                        pair_at(gate, p_rest, raw_of(d_target)),
                    ) else {
                        continue;
                    };
                    let at = || format!("ticks {} from {}, {t_c:.2} °C", pair.ticks, base.ticks);
                    let Some(s_fix) = path.shift(&conv, pair) else {
                        continue;
                    };
                    readings += 1;
                    let s_ref = conv.shift_f64(pair);
                    let step_s = 2.0 * (1.0 + s_ref) / f64::from(pair.ticks);
                    st[0].add(s_fix.to_f64() - s_ref, step_s, shift_bound(s_ref), at);
                    let d_fix = path.drift(&cal.drift, s_fix, t);
                    st[1].add(
                        d_fix.to_f64() - cal.drift.compensate_f64(s_fix.to_f64(), t_c),
                        step_s,
                        cal.drift.error_bound(s_fix.to_f64(), t_c),
                        at,
                    );
                    // End to end through a fresh reader: the baseline, then
                    // the target for `enter_samples` readings, with the ring
                    // count dropped by `ring_drop` (a lossy target).
                    let EndToEnd::Metal(fresh) = &reader else {
                        continue;
                    };
                    let mut m = EndToEnd::Metal(fresh.clone());
                    let ring = ring_drop.saturating_add(10);
                    let comp = companion.map(|(_, c)| c);
                    let rest_input = Input {
                        pair: base,
                        companion: comp,
                        temperature: Some(t),
                        ring_count: Some(ring),
                    };
                    let target = Input {
                        pair,
                        ring_count: Some(ring - ring_drop),
                        ..rest_input
                    };
                    let mut faulted = false;
                    for _ in 0..2 {
                        faulted |= matches!(
                            path.read(&mut m, &rest_input).status,
                            Status::SensorFault(_)
                        );
                    }
                    let first = path.read(&mut m, &target);
                    let mut last = first;
                    for _ in 1..enter_samples.max(1) {
                        last = path.read(&mut m, &target);
                    }
                    // A fault (on any reading of the sequence) leaves the
                    // point out: it says nothing about the arithmetic.
                    if faulted
                        || matches!(first.status, Status::SensorFault(_))
                        || matches!(last.status, Status::SensorFault(_))
                    {
                        continue;
                    }
                    let d_ref = front_f64(pair, t_c) - front_f64(base, t_c);
                    let s_base = conv.shift_f64(base);
                    let e_d = shift_bound(s_ref)
                        + cal.drift.error_bound(s_ref, t_c)
                        + shift_bound(s_base)
                        + cal.drift.error_bound(s_base, t_c)
                        + 2.0 * 9.094_947_017_729_282e-13;
                    st[2].add(first.x.to_f64() - d_ref, step_s, e_d, at);
                    // The class the f64 delta gives, where the threshold
                    // (rounded to Q.40) does not lie within the bound. While
                    // the target is not yet present the baseline keeps
                    // learning (weight 2^-k): the n-th reading's delta is
                    // d·(1 − 2^-k)^n, and the smallest, the last of the
                    // debounce, decides.
                    let decay = (1.0 - 0.5f64.powi(i32::from(baseline_k)))
                        .powi(i32::from(enter_samples.max(1)) - 1);
                    let margin = e_d + 4.0 * 9.094_947_017_729_282e-13;
                    let d_last = d_ref.abs() * decay;
                    let want = if d_last >= enter + margin {
                        Some(if d_ref > 0.0 {
                            MetalClass::Ferrous
                        } else {
                            MetalClass::NonFerrous
                        })
                    } else if d_last < enter - margin {
                        Some(MetalClass::None)
                    } else {
                        None
                    };
                    if let Some(want) = want {
                        let wrong = last.value != want as i32;
                        st[3].add(f64::from(u8::from(wrong)), 0.0, 0.5, at);
                    }
                }
            }
        }
        (st, readings)
    };
    let results: Vec<([StageStats; 4], u64)> = std::thread::scope(|scope| {
        let handles: Vec<_> = (0..threads)
            .map(|w| scope.spawn(move || worker(w)))
            .collect();
        handles.into_iter().filter_map(|h| h.join().ok()).collect()
    });
    let mut stages = new_stages();
    let mut readings = 0;
    for (r, n) in &results {
        readings += n;
        for (a, b) in stages.iter_mut().zip(r) {
            a.merge(b);
        }
    }
    for s in &mut stages {
        s.finish();
    }
    Ok(VerifyReport {
        serial: cal.serial.as_str().to_string(),
        product: match product {
            Product::Ratio { .. } => "level with reference electrode".to_string(),
            _ => kind_name(kind).to_string(),
        },
        readings,
        stages: stages.to_vec(),
    })
}

/// The report as a text table.
pub fn to_text(r: &VerifyReport) -> String {
    let mut s = format!(
        "verification of {} ({}): {} readings\n",
        r.serial, r.product, r.readings
    );
    s += &format!(
        "{:<12} {:>12} {:>12} {:>11} {:>10} {:>10}  {}\n",
        "stage", "max error", "rms error", "max/step", "max/bound", "beyond", "worst at"
    );
    for st in &r.stages {
        if st.points == 0 {
            s += &format!(
                "{:<12} no readings compared: every reading faulted or left the domain\n",
                st.stage
            );
            continue;
        }
        s += &format!(
            "{:<12} {:>12.3e} {:>12.3e} {:>11.2e} {:>10.3} {:>10}  {}  [{}]\n",
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

    fn image_file(rel: &str) -> Calibration {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("..")
            .join(rel);
        Calibration::parse(&std::fs::read(&path).unwrap()).unwrap()
    }

    /// Issue 19, item 1: the images `lc-host calibrate` makes for each
    /// product (examples/unit-firmware/data, written by `run.sh images`)
    /// pass; before, the level image failed with "BOUND EXCEEDED" (its
    /// ratio swept through the drift stage as a shift) and metal was not
    /// supported.
    #[test]
    fn the_images_calibrate_makes_pass_for_every_product() {
        for (file, product) in [
            ("proximity", "proximity"),
            ("level", "level with reference electrode"),
            ("metal", "metal"),
        ] {
            let cal = image_file(&format!("examples/unit-firmware/data/{file}.lcim"));
            let r = verify(&cal, &small(), &Firmware, &|_| {}).unwrap();
            assert!(r.passed(), "{file}: {}", to_text(&r));
            assert_eq!(r.product, product);
            assert!(
                r.stages.iter().all(|s| s.points > 10_000),
                "{file}: {}",
                to_text(&r)
            );
        }
    }

    /// The demo's eight tank probes, calibrated from the simulated level
    /// rig log exactly as `lc-host demo` does, all pass.
    #[test]
    fn the_demo_tank_probes_pass() {
        use crate::calib::lot::calibrate_lot;
        use crate::calib::plan::Plan;
        let dir = std::env::temp_dir().join(format!("lc-verify-tank-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        let mut rig = Vec::new();
        crate::sim::level::write_level_rig_log("TANK-01", 8, 1, &mut rig).unwrap();
        let plan = Plan::parse(crate::demo::LEVEL_PLAN, std::path::Path::new("p.toml")).unwrap();
        let mut store = crate::store::Store::open(dir.join("units.db")).unwrap();
        let reader =
            crate::riglog::RigLogReader::new(rig.as_slice(), std::path::Path::new("rig.csv"))
                .unwrap();
        let lot = calibrate_lot(reader, "TANK-01", &plan, &mut store, Some(&dir), |_| {}).unwrap();
        assert_eq!(lot.passed, 8);
        let opts = VerifyOptions {
            random_points: 20_000,
            grid: (100, 9),
            threads: 2,
            seed: 2,
        };
        for i in 1..=8 {
            let cal = Calibration::parse(
                &std::fs::read(dir.join(format!("TANK-01-{i:04}.lcim"))).unwrap(),
            )
            .unwrap();
            let r = verify(&cal, &opts, &Firmware, &|_| {}).unwrap();
            assert!(r.passed(), "{}", to_text(&r));
        }
        std::fs::remove_dir_all(&dir).ok();
    }

    /// A level probe without a reference electrode reads its shift through
    /// the drift model: verified on that path (the probe's shift over a
    /// curve of the calibrated level image, its ratio axis taken as shift).
    #[test]
    fn a_level_probe_without_a_reference_electrode_is_verified_on_its_shift() {
        use lc_core::curve::Node;
        let mut cal = image_file("examples/unit-firmware/data/level.lcim");
        let table = cal.curve.unwrap();
        let q_max = table.nodes()[table.nodes().len() - 1].shift.to_f64();
        let nodes: Vec<Node> = table
            .nodes()
            .iter()
            .map(|n| {
                Node::new(
                    Shift::from_f64(n.shift.to_f64() * 0.8 / q_max).unwrap(),
                    n.value,
                )
            })
            .collect();
        cal.curve = Some(lc_core::image::Table::linear(&nodes).unwrap());
        cal.companion_rest = None;
        let r = verify(&cal, &small(), &Firmware, &|_| {}).unwrap();
        assert_eq!(r.product, "level");
        assert!(r.passed(), "{}", to_text(&r));
    }

    /// A proximity or metal unit with a companion coil reads the ratio of
    /// its two channels: verified with the companion at its rest point.
    #[test]
    fn readers_with_a_companion_coil_are_verified() {
        for file in ["proximity", "metal"] {
            let mut cal = image_file(&format!("examples/unit-firmware/data/{file}.lcim"));
            cal.companion_rest = Some(
                lc_core::shift::RestPoint::from_counts(CountPair::new(16_384, 150_000)).unwrap(),
            );
            let r = verify(&cal, &small(), &Firmware, &|_| {}).unwrap();
            assert!(r.passed(), "{file}: {}", to_text(&r));
        }
    }

    /// Errors in the level ratio path and the metal path are caught.
    #[test]
    fn injected_errors_in_the_level_and_metal_paths_are_caught() {
        struct OffsetBit;
        impl FixedPath for OffsetBit {
            fn offset(&self, model: &TemperatureModel, t: CentiCelsius) -> Shift {
                Shift::from_raw_q40(model.factor(t).offset().raw_q40() + (1 << 14))
            }
        }
        let level = image_file("examples/unit-firmware/data/level.lcim");
        let r = verify(&level, &small(), &OffsetBit, &|_| {}).unwrap();
        assert!(r.stages[1].violations > 0, "{}", to_text(&r));
        struct WrongClass;
        impl FixedPath for WrongClass {
            fn read(&self, reader: &mut EndToEnd, input: &Input) -> Reading {
                let mut r = reader.read(input);
                if r.value == MetalClass::Ferrous as i32 {
                    r.value = MetalClass::NonFerrous as i32;
                }
                r
            }
        }
        struct DeltaBit;
        impl FixedPath for DeltaBit {
            fn read(&self, reader: &mut EndToEnd, input: &Input) -> Reading {
                let mut r = reader.read(input);
                r.x = Shift::from_raw_q40(r.x.raw_q40() + (1 << 12));
                r
            }
        }
        let metal = image_file("examples/unit-firmware/data/metal.lcim");
        let r = verify(&metal, &small(), &WrongClass, &|_| {}).unwrap();
        assert!(
            r.stages[3].violations > 0 && r.stages[2].violations == 0,
            "{}",
            to_text(&r)
        );
        let r = verify(&metal, &small(), &DeltaBit, &|_| {}).unwrap();
        assert!(r.stages[2].violations > 0, "{}", to_text(&r));
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
