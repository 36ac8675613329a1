//! Fitting one unit: rest point, drift model, curve, quality factor, the
//! calibration image, and residuals through lc-core's own reader.

use super::linalg::{least_squares, Matrix};
use super::monotone::MonotoneFit;
use super::plan::{Kind, Plan};
use crate::riglog::{RigRow, UnitLog};
use lc_core::counting::{CountPair, FaultWindow};
use lc_core::curve::{pchip_derivatives, Node};
use lc_core::drift::TemperatureModel;
use lc_core::image::{
    Calibration, MetalParams, OutputScale, OutputUnit, ReaderKind, Serial, Table,
};
use lc_core::ratio::PeriodRatio;
use lc_core::reader::{Input, LevelReader, ProximityReader, Reader, Status};
use lc_core::ringdown::quality_factor_from_ring_count;
use lc_core::shift::{RestPoint, Shift};
use lc_core::temperature::CentiCelsius;

/// The drift model's fit.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct DriftFit {
    /// Reference temperature (the rest point's group), °C.
    pub reference_c: f64,
    /// First-order coefficient of g, per kelvin.
    pub b1_per_k: f64,
    /// Second-order coefficient of g, per kelvin².
    pub b2_per_k2: f64,
    /// Standard error of b1, when there were spare points.
    pub sigma_b1_per_k: Option<f64>,
    /// Standard error of b2.
    pub sigma_b2_per_k2: Option<f64>,
    /// Points that entered the fit.
    pub points: usize,
    /// Distinct temperature groups seen.
    pub temperatures: Vec<f64>,
}

/// A rig point seen through the finished calibration.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Residual {
    /// Rig log line.
    pub line: u64,
    /// Temperature, °C.
    pub temp_c: f64,
    /// The rig's reference value, output units.
    pub target: f64,
    /// The f64 model's value, output units.
    pub value_f64: f64,
    /// The firmware path's value (lc-core reader), output units.
    pub value_fixed: i32,
    /// value_fixed − target.
    pub residual_fixed: f64,
    /// value_f64 − target.
    pub residual_f64: f64,
    /// The drift-compensated shift the firmware path formed, ppm.
    pub shift_ppm: f64,
}

/// Everything fitted for one unit.
#[derive(Clone, Debug, serde::Serialize)]
pub struct UnitFit {
    /// Serial.
    pub serial: String,
    /// Rest period ratio, ticks per cycle.
    pub rest_ratio: f64,
    /// Rest frequency, Hz.
    pub rest_frequency_hz: f64,
    /// Companion rest period ratio, when the rig logged a companion.
    pub companion_rest_ratio: Option<f64>,
    /// Quality factor from the ring count at rest: (estimate, low, high).
    pub q: Option<(f64, f64, f64)>,
    /// Drift model.
    pub drift: DriftFit,
    /// Sensitivity |ds/dx| per millimetre at the plan's point.
    pub sensitivity_per_mm: Option<f64>,
    /// Largest interpolation error of the written curve against the fit,
    /// output units.
    pub curve_error: Option<f64>,
    /// Rig points whose shift runs against the curve's direction beyond
    /// three quantisation steps.
    pub monotone_violations: usize,
    /// Curve nodes written: (shift, value).
    pub nodes: Vec<(f64, i32)>,
    /// Residuals at every rig point with a target.
    pub residuals: Vec<Residual>,
    /// Good rig steps used.
    pub steps: usize,
    /// One raw output unit, metres (the plan's `product.output_step_m`).
    pub output_step_m: f64,
    /// The calibration, when one could be built.
    #[serde(skip)]
    pub calibration: Option<Calibration>,
    /// The calibration's image as [`Calibration::encode`] writes it (the
    /// check that it encodes made it), when there is a calibration.
    #[serde(skip)]
    pub image: Option<Vec<u8>>,
}

impl UnitFit {
    /// Largest |residual| of the firmware path, output units.
    pub fn max_residual(&self) -> Option<f64> {
        self.residuals
            .iter()
            .map(|r| r.residual_fixed.abs())
            .reduce(f64::max)
    }

    /// Largest |residual| of the firmware path, µm.
    pub fn max_residual_um(&self) -> Option<f64> {
        self.max_residual().map(|r| r * self.output_step_m * 1e6)
    }

    /// How many output steps the written curve spans (its largest node
    /// value less its smallest); `None` without a curve.
    pub fn range_steps(&self) -> Option<f64> {
        let lo = self.nodes.iter().map(|n| n.1).min()?;
        let hi = self.nodes.iter().map(|n| n.1).max()?;
        Some(f64::from(hi) - f64::from(lo))
    }
}

/// The period ratio of a pair, as f64.
fn ratio(p: CountPair) -> f64 {
    f64::from(p.ticks) / f64::from(p.cycles)
}

/// Temperature groups: sorted temperatures split where they jump by more
/// than 2 K. Returns each row's group index and the groups' mean values.
fn temperature_groups(rows: &[RigRow]) -> (Vec<usize>, Vec<f64>) {
    let mut temps: Vec<f64> = rows.iter().map(|r| r.temp_c).collect();
    temps.sort_by(f64::total_cmp);
    let mut bounds: Vec<(f64, f64)> = Vec::new();
    for t in temps {
        match bounds.last_mut() {
            Some((_, hi)) if t - *hi <= 2.0 => *hi = t,
            _ => bounds.push((t, t)),
        }
    }
    let group = |t: f64| {
        bounds
            .iter()
            .position(|&(lo, hi)| t >= lo && t <= hi)
            .unwrap_or(0)
    };
    let idx: Vec<usize> = rows.iter().map(|r| group(r.temp_c)).collect();
    let means = (0..bounds.len())
        .map(|g| {
            let v: Vec<f64> = rows
                .iter()
                .zip(&idx)
                .filter(|(_, &i)| i == g)
                .map(|(r, _)| r.temp_c)
                .collect();
            v.iter().sum::<f64>() / v.len() as f64
        })
        .collect();
    (idx, means)
}

fn same_target(a: Option<f64>, b: Option<f64>) -> bool {
    match (a, b) {
        (None, None) => true,
        (Some(x), Some(y)) => (x - y).abs() <= 1e-9 + 1e-9 * x.abs(),
        _ => false,
    }
}

fn mean(v: impl Iterator<Item = f64>) -> Option<f64> {
    let (n, s) = v.fold((0usize, 0.0), |(n, s), x| (n + 1, s + x));
    (n > 0).then(|| s / n as f64)
}

/// Fits one unit. `Err` carries the reasons when nothing can be fitted (no
/// usable step, no rest step at the reference temperature). Otherwise the
/// fit comes back with whatever could be determined and the problems met on
/// the way (each one fails the unit); the acceptance limits add theirs.
pub fn fit_unit(unit: &UnitLog, plan: &Plan) -> Result<(UnitFit, Vec<String>), Vec<String>> {
    let p = &plan.product;
    let window = FaultWindow::new(p.reference_hz, p.band_hz[0], p.band_hz[1], p.min_cycles)
        .map_err(|e| vec![format!("plan: fault window: {e}")])?;
    let mut reasons = Vec::new();
    let rows: Vec<RigRow> = unit
        .rows
        .iter()
        .filter(|r| {
            match window
                .check(r.pair)
                .and_then(|_| r.companion.map_or(Ok(r.pair), |c| window.check(c)))
            {
                Ok(_) => true,
                Err(e) => {
                    reasons.push(format!(
                        "line {}: counts {}:{} rejected: {e}",
                        r.line, r.pair.cycles, r.pair.ticks
                    ));
                    false
                }
            }
        })
        .cloned()
        .collect();
    if rows.is_empty() {
        reasons.push("no usable rig step".to_string());
        return Err(reasons);
    }
    let (group_of, group_means) = temperature_groups(&rows);
    let ref_group = group_means
        .iter()
        .enumerate()
        .min_by(|a, b| {
            (a.1 - p.reference_temp_c)
                .abs()
                .total_cmp(&(b.1 - p.reference_temp_c).abs())
        })
        .map_or(0, |(i, _)| i);
    let t_ref = group_means[ref_group];
    if (t_ref - p.reference_temp_c).abs() > 5.0 {
        reasons.push(format!(
            "no rig steps near the reference temperature {} °C (nearest group {t_ref:.2} °C)",
            p.reference_temp_c
        ));
        return Err(reasons);
    }
    let in_ref = |i: usize| group_of[i] == ref_group;
    let rest_rows = || {
        rows.iter()
            .enumerate()
            .filter(|(i, r)| in_ref(*i) && r.target_m.is_none())
            .map(|(_, r)| r)
    };
    let Some(rest_ratio) = mean(rest_rows().map(|r| ratio(r.pair))) else {
        reasons.push(format!(
            "no rest step (target none) at the reference temperature {t_ref:.2} °C"
        ));
        return Err(reasons);
    };
    let companion_rest_ratio = if rows.iter().all(|r| r.companion.is_some()) {
        mean(rest_rows().filter_map(|r| r.companion.map(ratio)))
    } else {
        None
    };
    // Front shift of every row, as the firmware will form it: ratiometric
    // with a companion coil (proximity, metal), plain otherwise; a level
    // product's companion is its reference electrode, used below.
    let ratiometric = companion_rest_ratio.is_some() && p.kind != Kind::Level;
    let shift_of = |r: &RigRow| -> f64 {
        match (ratiometric, companion_rest_ratio, r.companion) {
            (true, Some(cr), Some(c)) => {
                let q = (ratio(r.pair) / ratio(c)) / (rest_ratio / cr);
                q * q - 1.0
            }
            _ => {
                let q = ratio(r.pair) / rest_ratio;
                q * q - 1.0
            }
        }
    };
    let s: Vec<f64> = rows.iter().map(shift_of).collect();

    // Drift: g = (1 + s_ref)/(1 + s_T) − 1 at each off-reference point
    // whose target was also measured at the reference temperature.
    let mut dts = Vec::new();
    let mut gs = Vec::new();
    // A level probe's shift with liquid moves with the liquid's
    // permittivity, not with the tank's L·C: its drift model comes from the
    // empty steps alone (the reference electrode handles the liquid).
    for (i, r) in rows.iter().enumerate() {
        if in_ref(i) || (p.kind == Kind::Level && r.target_m.is_some()) {
            continue;
        }
        let same = rows
            .iter()
            .enumerate()
            .filter(|(j, q)| in_ref(*j) && same_target(q.target_m, r.target_m))
            .map(|(j, _)| s[j]);
        if let Some(s_ref) = mean(same) {
            dts.push(r.temp_c - t_ref);
            gs.push((1.0 + s_ref) / (1.0 + s[i]) - 1.0);
        }
    }
    let other_groups = group_means.len() - 1;
    let order = other_groups.min(2);
    let (mut b1, mut b2, mut sig1, mut sig2) = (0.0, 0.0, None, None);
    if order > 0 && dts.len() >= order {
        let data: Vec<f64> = dts
            .iter()
            .flat_map(|&d| if order == 2 { vec![d, d * d] } else { vec![d] })
            .collect();
        if let Some(ls) = Matrix::new(dts.len(), order, data).and_then(|a| least_squares(&a, &gs)) {
            let se = ls.standard_errors(dts.len());
            b1 = ls.x[0];
            sig1 = se.as_ref().map(|e| e[0]);
            if order == 2 {
                b2 = ls.x[1];
                sig2 = se.as_ref().map(|e| e[1]);
            }
        } else {
            reasons.push("drift fit failed: temperature steps are degenerate".to_string());
        }
    }
    let drift = DriftFit {
        reference_c: t_ref,
        b1_per_k: b1,
        b2_per_k2: b2,
        sigma_b1_per_k: sig1,
        sigma_b2_per_k2: sig2,
        points: dts.len(),
        temperatures: group_means.clone(),
    };
    let g = |dt: f64| b1 * dt + b2 * dt * dt;
    let s_comp: Vec<f64> = rows
        .iter()
        .zip(&s)
        .map(|(r, &si)| (1.0 + si) * (1.0 + g(r.temp_c - t_ref)) - 1.0)
        .collect();
    // The curve's input per row: the compensated shift, or for a level
    // product with a reference electrode the ratio of probe and reference
    // shifts (both compensated), as the level reader forms it.
    let reference = |r: &RigRow| -> Option<f64> {
        let (cr, c) = (companion_rest_ratio?, r.companion?);
        let q = ratio(c) / cr;
        Some((q * q) * (1.0 + g(r.temp_c - t_ref)) - 1.0)
    };
    let curve_x: Vec<Option<f64>> = rows
        .iter()
        .zip(&s_comp)
        .map(|(r, &sc)| match (p.kind, companion_rest_ratio) {
            (Kind::Level, Some(_)) => reference(r).filter(|sr| *sr > 1e-4).map(|sr| sc / sr),
            _ => Some(sc),
        })
        .collect();

    // Quality factor from the ring count at rest.
    let q = match (
        plan.ringdown,
        mean(rest_rows().filter_map(|r| r.ring_count.map(f64::from))),
    ) {
        (Some(rd), Some(count)) => {
            quality_factor_from_ring_count(count.round() as u32, rd.upper, rd.lower)
                .ok()
                .map(|e| {
                    (
                        e.quality_factor,
                        e.quality_factor_low,
                        e.quality_factor_high,
                    )
                })
        }
        _ => None,
    };

    // Curve.
    let step = p.output_step_m;
    let points: Vec<(f64, f64, usize)> = rows
        .iter()
        .enumerate()
        .filter_map(|(i, r)| Some((r.target_m?, curve_x[i]?, i)))
        .collect();
    let mut nodes = Vec::new();
    let mut table = None;
    let mut curve_error = None;
    let mut sensitivity_per_mm = None;
    let mut monotone_violations = 0;
    if p.kind != Kind::Metal {
        let xs: Vec<f64> = points.iter().map(|p| p.0).collect();
        let ss: Vec<f64> = points.iter().map(|p| p.1).collect();
        match MonotoneFit::fit(&xs, &ss, p.fit_knots) {
            None => reasons.push(format!(
                "curve fit needs at least three distinct targets, got {}",
                {
                    let mut d = xs.clone();
                    d.sort_by(f64::total_cmp);
                    d.dedup();
                    d.len()
                }
            )),
            Some(fit) => {
                let xs_or_nan: Vec<f64> = curve_x.iter().map(|v| v.unwrap_or(f64::NAN)).collect();
                monotone_violations = count_violations(&rows, &xs_or_nan, &fit, in_ref);
                let (lo, hi) = fit.range();
                let mut pts: Vec<(f64, f64)> = (0..p.curve_nodes)
                    .map(|k| {
                        let x = lo + (hi - lo) * k as f64 / (p.curve_nodes - 1) as f64;
                        (fit.eval(x), x)
                    })
                    .collect();
                pts.sort_by(|a, b| a.0.total_cmp(&b.0));
                pts.dedup_by(|a, b| Shift::from_f64(a.0) == Shift::from_f64(b.0));
                let sx: Vec<f64> = pts
                    .iter()
                    .map(|p| Shift::from_f64(p.0).map_or(p.0, Shift::to_f64))
                    .collect();
                let yv: Vec<i32> = pts.iter().map(|p| (p.1 / step).round() as i32).collect();
                nodes = sx.iter().copied().zip(yv.iter().copied()).collect();
                let node_list: Vec<Node> = nodes
                    .iter()
                    .filter_map(|&(sv, y)| Shift::from_f64(sv).map(|s| Node::new(s, y)))
                    .collect();
                let yf: Vec<f64> = yv.iter().map(|&y| f64::from(y)).collect();
                let built = pchip_derivatives(&sx, &yf)
                    .ok_or(lc_core::curve::CurveError::TooFewNodes)
                    .and_then(|d| {
                        let dq: Vec<i64> = d[..node_list.len()]
                            .iter()
                            .map(|v| (v * 65_536.0).round() as i64)
                            .collect();
                        Table::cubic(&node_list, &dq)
                    })
                    .or_else(|_| Table::linear(&node_list));
                match built {
                    Ok(t) => {
                        {
                            // One view for the 1 001 points (a view checks its segments
                            // once; the owned curve makes one per call).
                            let curve = t.curve().view();
                            let err = (0..=1000)
                                .map(|i| {
                                    let x = lo + (hi - lo) * f64::from(i) / 1000.0;
                                    (curve.eval_f64(fit.eval(x)) - x / step).abs()
                                })
                                .fold(0.0, f64::max);
                            curve_error = Some(err);
                        }
                        table = Some(t);
                    }
                    Err(e) => reasons.push(format!("curve cannot be written into an image: {e}")),
                }
                if let Some(sens) = plan.limits.sensitivity {
                    sensitivity_per_mm = Some(fit.slope(sens.at_mm * 1e-3).abs() * 1e-3);
                }
            }
        }
    }

    // The calibration.
    let calibration = build_calibration(
        unit,
        plan,
        rest_ratio,
        companion_rest_ratio,
        &drift,
        table,
        &mut reasons,
    );
    let (calibration, image) = calibration.map_or((None, None), |(c, b)| (Some(c), Some(b)));
    let residuals = calibration
        .as_ref()
        .map_or_else(Vec::new, |cal| residuals(cal, &rows, step));
    let fit = UnitFit {
        serial: unit.serial.clone(),
        rest_ratio,
        rest_frequency_hz: f64::from(p.reference_hz) / rest_ratio,
        companion_rest_ratio,
        q,
        drift,
        sensitivity_per_mm,
        curve_error,
        monotone_violations,
        nodes,
        residuals,
        steps: rows.len(),
        output_step_m: step,
        calibration,
        image,
    };
    Ok((fit, reasons))
}

fn count_violations(
    rows: &[RigRow],
    s: &[f64],
    fit: &MonotoneFit,
    in_ref: impl Fn(usize) -> bool,
) -> usize {
    let mut by_target: Vec<(f64, f64, f64)> = Vec::new(); // (x, mean s, quantisation step)
    for (i, r) in rows.iter().enumerate() {
        if let (Some(x), true, false) = (r.target_m, in_ref(i), s[i].is_nan()) {
            let q = 2.0 * (1.0 + s[i]) / f64::from(r.pair.ticks.max(1));
            match by_target
                .iter_mut()
                .find(|t| same_target(Some(t.0), Some(x)))
            {
                Some(t) => {
                    t.1 = 0.5 * (t.1 + s[i]);
                    t.2 = t.2.max(q);
                }
                None => by_target.push((x, s[i], q)),
            }
        }
    }
    by_target.sort_by(|a, b| a.0.total_cmp(&b.0));
    by_target
        .windows(2)
        .filter(|w| (w[1].1 - w[0].1) * fit.direction() < -3.0 * w[0].2.max(w[1].2))
        .count()
}

fn build_calibration(
    unit: &UnitLog,
    plan: &Plan,
    rest_ratio: f64,
    companion_rest_ratio: Option<f64>,
    drift: &DriftFit,
    table: Option<Table>,
    reasons: &mut Vec<String>,
) -> Option<(Calibration, Vec<u8>)> {
    let p = &plan.product;
    let serial = Serial::new(&unit.serial).or_else(|| {
        reasons.push(format!(
            "serial {:?} does not fit an image (1–16 printable characters)",
            unit.serial
        ));
        None
    })?;
    let rest = |r: f64, what: &str, reasons: &mut Vec<String>| {
        PeriodRatio::from_f64(r)
            .and_then(|pr| RestPoint::from_ratio(pr).ok())
            .or_else(|| {
                reasons.push(format!("{what} {r} ticks per cycle is outside 2^-8 … 2^20"));
                None
            })
    };
    let rest_point = rest(rest_ratio, "rest point", reasons)?;
    let companion_rest = match companion_rest_ratio {
        Some(c) => Some(rest(c, "companion rest point", reasons)?),
        None => None,
    };
    let model = TemperatureModel::from_f64(drift.reference_c, drift.b1_per_k, drift.b2_per_k2)
        .or_else(|| {
            reasons.push(format!(
                "drift model b1 = {:.3e}/K, b2 = {:.3e}/K² does not fit the image's range",
                drift.b1_per_k, drift.b2_per_k2
            ));
            None
        })?;
    let exponent = p.output_step_m.log10().round();
    if (10f64.powf(exponent) - p.output_step_m).abs() > 1e-9 * p.output_step_m {
        reasons.push(format!(
            "output step {} m is not a power of ten",
            p.output_step_m
        ));
        return None;
    }
    let kind = match p.kind {
        Kind::Proximity => ReaderKind::Proximity,
        Kind::Level => ReaderKind::Level,
        Kind::Metal => ReaderKind::Metal,
    };
    let metal = plan.metal.map(|m| MetalParams {
        enter_ppb: (m.enter_ppm * 1e3).round() as u32,
        leave_ppb: (m.leave_ppm * 1e3).round() as u32,
        enter_samples: m.enter_samples,
        leave_samples: m.leave_samples,
        baseline_k: m.baseline_k,
        ring_drop: m.ring_drop,
        relearn_readings: m.relearn_readings,
    });
    if kind != ReaderKind::Metal && table.is_none() {
        return None;
    }
    let volume = match (&plan.tank, kind) {
        (Some(t), ReaderKind::Level) => match volume_table(t, p.output_step_m) {
            Ok(v) => Some(v),
            Err(e) => {
                reasons.push(e);
                return None;
            }
        },
        _ => None,
    };
    let cal = Calibration {
        kind,
        serial,
        reference_hz: p.reference_hz,
        gate_cycles: p.gate_cycles,
        window: FaultWindow::new(p.reference_hz, p.band_hz[0], p.band_hz[1], p.min_cycles).ok()?,
        rest: rest_point,
        companion_rest,
        drift: model,
        output: OutputScale {
            unit: if kind == ReaderKind::Metal {
                OutputUnit::None
            } else {
                OutputUnit::Metre
            },
            decimal_exponent: if kind == ReaderKind::Metal {
                0
            } else {
                exponent as i8
            },
        },
        curve: if kind == ReaderKind::Metal {
            None
        } else {
            table
        },
        volume,
        metal,
        calibrated_at: plan.calibrated_at,
        plan_id: plan.id,
    };
    // The image must encode and parse back: the firmware will see exactly it.
    let mut buf = [0u8; lc_core::image::MAX_IMAGE_LEN];
    match cal.encode(&mut buf) {
        Ok(n) => Some((cal, buf[..n].to_vec())),
        Err(e) => {
            reasons.push(format!("calibration image rejected: {e}"));
            None
        }
    }
}

/// The level → volume table of a plan's tank, for the image.
pub(crate) fn volume_table(
    tank: &super::plan::Tank,
    output_step_m: f64,
) -> Result<(Table, OutputScale), String> {
    let vt = tank.volume_table(1.0 / output_step_m)?;
    let nodes: Vec<Node> = (0..vt.len()).filter_map(|i| vt.curve().node(i)).collect();
    let xs: Vec<f64> = nodes.iter().map(|n| n.shift.to_f64()).collect();
    let ys: Vec<f64> = nodes.iter().map(|n| f64::from(n.value)).collect();
    let d = pchip_derivatives(&xs, &ys).ok_or("too few nodes")?;
    let dq: Vec<i64> = d[..nodes.len()]
        .iter()
        .map(|v| (v * 65_536.0).round() as i64)
        .collect();
    let table = Table::cubic(&nodes, &dq).map_err(|e| e.to_string())?;
    // Litres: one raw unit = volume_step_m3 · 1000 L.
    let exponent = (tank.volume_step_m3 * 1e3).log10().round();
    if (10f64.powf(exponent) - tank.volume_step_m3 * 1e3).abs() > 1e-9 * tank.volume_step_m3 * 1e3 {
        return Err(format!(
            "volume step {} m³ is not a power of ten of a litre",
            tank.volume_step_m3
        ));
    }
    Ok((
        table,
        OutputScale {
            unit: OutputUnit::Litre,
            decimal_exponent: exponent as i8,
        },
    ))
}

fn residuals(cal: &Calibration, rows: &[RigRow], step: f64) -> Vec<Residual> {
    let Ok(buf) = cal.to_image_buf() else {
        return Vec::new();
    };
    let Ok(image) = buf.image() else {
        return Vec::new();
    };
    let Ok(mut reader) = Reader::new(&image) else {
        return Vec::new();
    };
    let prox = ProximityReader::new(&image).ok();
    let level = LevelReader::new(&image).ok();
    rows.iter()
        .filter_map(|r| {
            let target = r.target_m? / step;
            let input = Input {
                pair: r.pair,
                companion: r.companion,
                temperature: CentiCelsius::from_f64(r.temp_c),
                ring_count: r.ring_count,
            };
            let fixed = reader.read(&input);
            if matches!(fixed.status(), Status::SensorFault(_)) {
                return None;
            }
            let value_f64 = match (&prox, &level) {
                (Some(p), _) => p.read_f64(&input),
                (_, Some(l)) => l.read_f64(&input).0,
                _ => return None,
            };
            Some(Residual {
                line: r.line,
                temp_c: r.temp_c,
                target,
                value_f64,
                value_fixed: fixed.output(),
                residual_fixed: f64::from(fixed.output()) - target,
                residual_f64: value_f64 - target,
                shift_ppm: Shift::from_raw_q40(fixed.curve_input_q40()).to_ppm_f64(),
            })
        })
        .collect()
}
