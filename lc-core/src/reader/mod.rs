//! Readers: the whole per-reading pipeline of one product, composed from the
//! stages, from a count pair to a value with its status.
//!
//! ```text
//! count pair ─► fault window ─► shift (or companion ratio) ─► drift model
//!            ─► curve ─► value + status
//! ```
//!
//! - [`ProximityReader`]: shift → gap (inductive proximity);
//! - [`LevelReader`]: shift, or the ratio of probe and reference-electrode
//!   shifts, → level, and optionally → volume (capacitive level);
//! - [`MetalReader`]: baseline tracking, detection with hysteresis and
//!   debounce, and classification ferrous / non-ferrous, confirmed by the
//!   ring-down (metal detection).
//!
//! [`Reader`] builds the right one from a [`Calibration`] and runs it.
//!
//! **Not a safety-rated component.** Where a reading protects people or
//! machines, the safety function must follow the applicable
//! functional-safety standards, local codes and a qualified engineer's
//! review.
//!
//! ```
//! use lc_core::counting::CountPair;
//! use lc_core::image::tests_support::demo_proximity;
//! use lc_core::reader::{Input, Reader, Status};
//!
//! let mut reader = Reader::from_calibration(&demo_proximity().unwrap()).unwrap();
//! let r = reader.read(&Input::counts(CountPair::new(16_384, 123_700)));
//! assert_eq!(r.status, Status::Ok);
//! assert!((1_000..=2_500).contains(&r.value)); // micrometres
//! // A stalled oscillator is a sensor fault, never a reading.
//! let r = reader.read(&Input::counts(CountPair::new(0, 123_700)));
//! assert!(matches!(r.status, Status::SensorFault(_)));
//! ```

mod level;
mod metal;
mod proximity;

pub use level::LevelReader;
pub use metal::{MetalClass, MetalReader};
pub use proximity::ProximityReader;

use crate::counting::{CountPair, FaultError, FaultWindow};
use crate::curve::CurveError;
use crate::drift::{Companion, CompanionError, DriftFactor, TemperatureModel};
use crate::image::{Calibration, ReaderKind};
use crate::shift::{Shift, ShiftConverter, ShiftError};
use crate::temperature::CentiCelsius;
use core::fmt;

/// What one reading needs: the count pair, and what the unit may add.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Input {
    /// The sensor channel's count pair.
    pub pair: CountPair,
    /// The companion coil's (or reference electrode's) count pair, read
    /// with the same gate, when the unit has one.
    pub companion: Option<CountPair>,
    /// Temperature, for the drift model.
    pub temperature: Option<CentiCelsius>,
    /// Ring count of a ring-down after the gate (metal detection).
    pub ring_count: Option<u16>,
}

impl Input {
    /// Just a count pair.
    pub const fn counts(pair: CountPair) -> Self {
        Self {
            pair,
            companion: None,
            temperature: None,
            ring_count: None,
        }
    }
}

/// Why a reading has no trustworthy value.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum SensorFault {
    /// The sensor channel's count pair failed the fault window.
    Counts(FaultError),
    /// The companion channel's count pair failed the fault window, or is
    /// missing although the calibration needs it.
    Companion(Option<FaultError>),
    /// The shift could not be formed.
    Shift(ShiftError),
    /// The companion ratio could not be formed.
    Ratio(CompanionError),
    /// The level reference electrode shows no liquid (its shift is not
    /// positive), so the level ratio is undefined.
    Reference,
}

/// A reading's status.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Status {
    /// A value inside the calibrated range.
    Ok,
    /// Below the calibrated range; the value is clamped to its end.
    BelowRange,
    /// Above the calibrated range; the value is clamped to its end.
    AboveRange,
    /// Nothing in range: proximity beyond the farthest calibrated gap;
    /// metal: no target present.
    NoTarget,
    /// No trustworthy value; the value is 0.
    SensorFault(SensorFault),
}

/// One reading.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Reading {
    /// The value in the calibration's output units (raw; scale in the
    /// image): gap, level, or for metal the [`MetalClass`] code.
    pub value: i32,
    /// Level: volume in the volume table's units. Metal: the ring-count
    /// drop against the learned ring count.
    pub secondary: Option<i32>,
    /// The shift the value came from, after drift compensation (metal: the
    /// shift minus the baseline).
    pub shift: Shift,
    /// Status.
    pub status: Status,
}

impl Reading {
    pub(crate) const fn fault(f: SensorFault) -> Self {
        Self {
            value: 0,
            secondary: None,
            shift: Shift::ZERO,
            status: Status::SensorFault(f),
        }
    }
}

/// Why a reader could not be built from a calibration.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ReaderError {
    /// The calibration lacks what this reader needs (a curve, metal
    /// parameters).
    Incomplete,
    /// A table does not form a curve.
    Curve(CurveError),
    /// The rest points do not form a converter or a companion ratio.
    Shift(ShiftError),
    /// The metal parameters are inconsistent.
    Metal,
}

impl fmt::Display for ReaderError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ReaderError::Incomplete => f.write_str("calibration lacks a part this reader needs"),
            ReaderError::Curve(e) => write!(f, "curve: {e}"),
            ReaderError::Shift(e) => write!(f, "rest point: {e}"),
            ReaderError::Metal => f.write_str("metal parameters inconsistent"),
        }
    }
}

impl core::error::Error for ReaderError {}

/// The front of every reader: fault window, shift or companion ratio, and
/// the temperature model.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub(crate) struct Front {
    window: FaultWindow,
    converter: ShiftConverter,
    companion: Option<Companion>,
    drift: TemperatureModel,
    /// The gate and its accepted tick band, for the two-comparison check.
    gate_band: Option<(u32, (u32, u32))>,
    /// The drift correction at the last temperature seen: temperature
    /// moves far more slowly than readings come.
    drift_cache: Option<(CentiCelsius, DriftFactor)>,
}

impl Front {
    pub(crate) fn new(cal: &Calibration, companion_is_ratio: bool) -> Result<Self, ReaderError> {
        let gate = cal.gate();
        let converter = ShiftConverter::new(cal.rest, crate::counting::Gating::Reciprocal, gate)
            .map_err(ReaderError::Shift)?;
        let companion = match (cal.companion_rest, companion_is_ratio) {
            (Some(c), true) => Some(Companion::new(cal.rest, c).map_err(ReaderError::Shift)?),
            _ => None,
        };
        let gate_band = gate.and_then(|g| cal.window.ticks_band(g).map(|b| (g, b)));
        Ok(Self {
            window: cal.window,
            converter,
            companion,
            drift: cal.drift,
            gate_band,
            drift_cache: None,
        })
    }

    /// The fault window's check, through the precomputed band when the
    /// pair has the gate's cycle count.
    #[inline(always)]
    fn check(&self, pair: CountPair) -> Result<(), FaultError> {
        match self.gate_band {
            Some((gate, band)) => self.window.check_ticks(pair, gate, band),
            None => self.window.check(pair).map(|_| ()),
        }
    }

    /// The shift of `pair` by `conv` (a converter of this front's gate)
    /// through the fault window, `window` naming a window fault: a pair of
    /// the gate's cycles inside its tick band takes two comparisons and
    /// the converter's gate path with nothing checked twice; any other
    /// pair the full check and the general path. Same results as the
    /// check and [`ShiftConverter::shift`].
    #[inline(always)]
    pub(crate) fn checked_shift(
        &self,
        conv: &ShiftConverter,
        pair: CountPair,
        window: impl FnOnce(FaultError) -> SensorFault,
    ) -> Result<Shift, SensorFault> {
        if let Some((gate, band)) = self.gate_band {
            if FaultWindow::in_band(pair, gate, band) {
                return conv.shift_at_gate(pair.ticks).map_err(SensorFault::Shift);
            }
        }
        self.window.check(pair).map_err(window)?;
        conv.shift_inline(pair).map_err(SensorFault::Shift)
    }

    /// The sensor channel's shift, through the fault window, without the
    /// drift model (for a reader without a companion coil).
    #[inline(always)]
    pub(crate) fn raw_shift(&self, pair: CountPair) -> Result<Shift, SensorFault> {
        self.checked_shift(&self.converter, pair, SensorFault::Counts)
    }

    /// The drift correction at `t`, from the cache when `t` is unchanged.
    pub(crate) fn factor(&mut self, t: CentiCelsius) -> DriftFactor {
        match self.drift_cache {
            Some((last, f)) if last == t => f,
            _ => {
                let f = self.drift.factor(t);
                self.drift_cache = Some((t, f));
                f
            }
        }
    }

    /// The drift-compensated shift of the sensor channel (ratiometric when
    /// a companion coil is configured). Inlined into each reader's `read`,
    /// so the result stays in registers on the per-reading path.
    #[inline(always)]
    pub(crate) fn shift(&mut self, input: &Input) -> Result<Shift, SensorFault> {
        let pair = input.pair;
        let s = match self.companion {
            Some(c) => {
                self.check(pair).map_err(SensorFault::Counts)?;
                let comp = input.companion.ok_or(SensorFault::Companion(None))?;
                self.check(comp)
                    .map_err(|e| SensorFault::Companion(Some(e)))?;
                c.shift(pair, comp).map_err(SensorFault::Ratio)?
            }
            None => self.raw_shift(pair)?,
        };
        Ok(match input.temperature {
            Some(t) => self.factor(t).apply(s),
            None => s,
        })
    }

    /// `f64` twin of [`Front::shift`] (assumes the fault window passes).
    pub(crate) fn shift_f64(&self, input: &Input) -> f64 {
        let s = match (self.companion, input.companion) {
            (Some(c), Some(comp)) => c.shift_f64(input.pair, comp),
            _ => self.converter.shift_f64(input.pair),
        };
        match input.temperature {
            Some(t) => self.drift.compensate_f64(s, t.to_f64()),
            None => s,
        }
    }
}

/// Any reader, built from a calibration.
///
/// The variants differ in size (a level reader holds two curves); firmware
/// keeps one reader in a static, and there is no heap to box into.
#[allow(clippy::large_enum_variant)]
#[derive(Clone, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
// An explicit tag: `read`'s dispatch is one byte compare, whatever niche
// the readers' fields would offer (measured: 4 instructions per reading on
// a Cortex-M0 against the niche of the level reader's caches).
#[repr(u8)]
pub enum Reader {
    /// Proximity.
    Proximity(ProximityReader),
    /// Level.
    Level(LevelReader),
    /// Metal.
    Metal(MetalReader),
}

impl Reader {
    /// The reader a calibration describes.
    ///
    /// The reader is built inside the enum from small parts, and its
    /// curves are then filled in place: a level reader is 4 KB, and the
    /// firmware's stack should hold one of it, not several temporaries.
    pub fn from_calibration(cal: &Calibration) -> Result<Self, ReaderError> {
        let mut reader = match cal.kind {
            ReaderKind::Proximity => {
                Reader::Proximity(ProximityReader::from_parts(ProximityReader::parts(cal)?))
            }
            ReaderKind::Level => {
                let (front, reference) = LevelReader::parts(cal)?;
                Reader::Level(LevelReader::from_parts(front, reference))
            }
            ReaderKind::Metal => Reader::Metal(MetalReader::new(cal)?),
        };
        match &mut reader {
            Reader::Proximity(r) => r.fill(cal)?,
            Reader::Level(r) => r.fill(cal)?,
            Reader::Metal(_) => {}
        }
        Ok(reader)
    }

    /// One reading.
    pub fn read(&mut self, input: &Input) -> Reading {
        match self {
            Reader::Proximity(r) => r.read(input),
            Reader::Level(r) => r.read(input),
            Reader::Metal(r) => r.read(input),
        }
    }
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::curve::{pchip_derivatives, Node};
    use crate::image::tests_support::demo_proximity;
    use crate::image::{MetalParams, OutputScale, OutputUnit, Serial, Table};
    use crate::shift::RestPoint;
    use proptest::prelude::*;

    /// Ticks over the demo gate (16 384 cycles, p_rest = 139 542/16 384)
    /// for a shift s: p = p_rest·√(1 + s).
    pub(crate) fn ticks_for(s: f64) -> u32 {
        (139_542.0 * libm::sqrt(1.0 + s)).round() as u32
    }

    pub(crate) fn pair_for(s: f64) -> CountPair {
        CountPair::new(16_384, ticks_for(s))
    }

    #[test]
    fn proximity_statuses() {
        let mut r = Reader::from_calibration(&demo_proximity().unwrap()).unwrap();
        // Demo nodes: shift −0.329 → 500 µm … −0.019 → 8 000 µm.
        let mid = r.read(&Input::counts(pair_for(-0.185)));
        assert_eq!(mid.status, Status::Ok);
        assert!((1_000..2_500).contains(&mid.value), "{mid:?}");
        let far = r.read(&Input::counts(pair_for(-0.001)));
        assert_eq!((far.status, far.value), (Status::NoTarget, 8_000));
        let near = r.read(&Input::counts(pair_for(-0.5)));
        assert_eq!((near.status, near.value), (Status::BelowRange, 500));
        let dead = r.read(&Input::counts(CountPair::new(0, 1)));
        assert_eq!(
            dead.status,
            Status::SensorFault(SensorFault::Counts(FaultError::NoOscillation))
        );
        let wild = r.read(&Input::counts(CountPair::new(16_384, 10)));
        assert_eq!(
            wild.status,
            Status::SensorFault(SensorFault::Counts(FaultError::FrequencyTooHigh))
        );
    }

    #[test]
    fn proximity_with_a_companion_coil_ignores_common_drift() {
        let mut cal = demo_proximity().unwrap();
        cal.companion_rest = Some(RestPoint::from_counts(CountPair::new(16_384, 150_000)).unwrap());
        let mut r = Reader::from_calibration(&cal).unwrap();
        let target = -0.12;
        for drift in [0.0, 0.002, -0.003] {
            // Temperature scales both L·C products by 1 + drift.
            let main = pair_for((1.0 + target) * (1.0 + drift) - 1.0);
            let comp = CountPair::new(16_384, (150_000.0 * libm::sqrt(1.0 + drift)).round() as u32);
            let read = r.read(&Input {
                companion: Some(comp),
                ..Input::counts(main)
            });
            assert_eq!(read.status, Status::Ok);
            // Within the counts' own rounding (2/139 542 of shift ≈ 0.02 mm here).
            assert!(
                (read.shift.to_f64() - target).abs() < 3e-5,
                "drift {drift}: {read:?}"
            );
        }
        let missing = r.read(&Input::counts(pair_for(target)));
        assert_eq!(
            missing.status,
            Status::SensorFault(SensorFault::Companion(None))
        );
    }

    fn level_cal(reference: bool, volume: bool) -> Calibration {
        let mut cal = demo_proximity().unwrap();
        cal.kind = ReaderKind::Level;
        cal.serial = Serial::new("TANK-1").unwrap();
        // Two-point: empty at s = 0 (the rest point), full (1000.0 mm, in
        // 0.1 mm) at s = 0.8 without a reference; at q = 2.5 with one.
        let full_x = if reference { 2.5 } else { 0.8 };
        let nodes = [
            Node::new(Shift::ZERO, 0),
            Node::new(Shift::from_f64(full_x).unwrap(), 10_000),
        ];
        cal.curve = Some(Table::linear(&nodes).unwrap());
        cal.output = OutputScale {
            unit: OutputUnit::Metre,
            decimal_exponent: -4,
        };
        cal.window = FaultWindow::new(48_000_000, 100_000, 20_000_000, 64).unwrap();
        if reference {
            cal.companion_rest =
                Some(RestPoint::from_counts(CountPair::new(16_384, 150_000)).unwrap());
        }
        if volume {
            // The coolant tank of the demo scenario: a horizontal cylinder
            // of 400 mm diameter, 1 m long; level in 0.1 mm, volume in mL.
            let shape = crate::geometry::TankShape::HorizontalCylinder {
                radius_m: 0.2,
                length_m: 1.0,
            };
            let table = crate::geometry::VolumeTable::sample(
                &shape,
                1e4,
                1e6,
                32,
                crate::curve::Interpolation::MonotoneCubic,
            )
            .unwrap();
            let nodes: Vec<Node> = (0..table.len())
                .map(|i| table.curve().node(i).unwrap())
                .collect();
            let xs: Vec<f64> = nodes.iter().map(|n| n.shift.to_f64()).collect();
            let ys: Vec<f64> = nodes.iter().map(|n| f64::from(n.value)).collect();
            let d = pchip_derivatives(&xs, &ys).unwrap();
            let dq: Vec<i64> = d[..nodes.len()]
                .iter()
                .map(|v| (v * 65_536.0).round() as i64)
                .collect();
            cal.volume = Some((
                Table::cubic(&nodes, &dq).unwrap(),
                OutputScale {
                    unit: OutputUnit::Litre,
                    decimal_exponent: -3,
                },
            ));
        }
        cal
    }

    #[test]
    fn level_two_point_and_volume() {
        let mut r = Reader::from_calibration(&level_cal(false, true)).unwrap();
        let half = r.read(&Input::counts(pair_for(0.4)));
        assert_eq!(half.status, Status::Ok);
        assert!((half.value - 5_000).abs() <= 1, "{half:?}");
        // 500.0 mm is above the 400 mm cylinder: full, 125.66 L.
        let full_l = core::f64::consts::PI * 0.04 * 1e6;
        assert!(
            (f64::from(half.secondary.unwrap()) - full_l).abs() < 2.0,
            "{half:?}"
        );
        let quarter = r.read(&Input::counts(pair_for(0.8 * 0.05)));
        // 50.0 mm in a 400 mm cylinder (h/D = 0.125): docs/references.md, Horizontal tank cases,
        // gives the fraction of volume from the circular segment.
        let h = 0.05f64;
        let a = 0.04 * libm::acos((0.2 - h) / 0.2) - (0.2 - h) * libm::sqrt(0.4 * h - h * h);
        assert!(
            (f64::from(quarter.secondary.unwrap()) - a * 1e6).abs() < 0.01 * a * 1e6,
            "{quarter:?}"
        );
        assert_eq!(
            r.read(&Input::counts(pair_for(-0.1))).status,
            Status::BelowRange
        );
        assert_eq!(
            r.read(&Input::counts(pair_for(0.9))).status,
            Status::AboveRange
        );
    }

    #[test]
    fn level_reference_electrode_cancels_permittivity() {
        let mut r = Reader::from_calibration(&level_cal(true, false)).unwrap();
        // Probe and reference shifts both scale with εr − 1; the level
        // fraction sets the probe's share: q = s_p/s_r = 2.5 · fraction.
        for eps_scale in [1.0, 0.9, 1.15] {
            let s_ref = 0.3 * eps_scale;
            let s_probe = 0.3 * eps_scale * 2.5 * 0.4;
            let comp = CountPair::new(16_384, (150_000.0 * libm::sqrt(1.0 + s_ref)).round() as u32);
            let read = r.read(&Input {
                companion: Some(comp),
                ..Input::counts(pair_for(s_probe))
            });
            assert_eq!(read.status, Status::Ok);
            assert!(
                (read.value - 4_000).abs() <= 2,
                "εr scale {eps_scale}: {read:?}"
            );
        }
        let dry = CountPair::new(16_384, 149_990);
        let read = r.read(&Input {
            companion: Some(dry),
            ..Input::counts(pair_for(0.1))
        });
        assert_eq!(read.status, Status::SensorFault(SensorFault::Reference));
    }

    fn metal_cal(ring_drop: u16, relearn: u32) -> Calibration {
        let mut cal = demo_proximity().unwrap();
        cal.kind = ReaderKind::Metal;
        cal.curve = None;
        cal.metal = Some(MetalParams {
            enter_ppb: 2_000_000, // 0.2 %
            leave_ppb: 1_000_000,
            enter_samples: 3,
            leave_samples: 2,
            baseline_k: 6,
            ring_drop,
            relearn_readings: relearn,
        });
        cal
    }

    #[test]
    fn metal_detects_classifies_and_relearns() {
        let mut r = Reader::from_calibration(&metal_cal(2, 50)).unwrap();
        let read = |r: &mut Reader, s: f64, ring: u16| {
            r.read(&Input {
                ring_count: Some(ring),
                ..Input::counts(pair_for(s))
            })
        };
        // Learn the background; a slow drift of 1e-4 over 100 readings is
        // tracked, not detected.
        for i in 0..100 {
            let x = read(&mut r, 1e-6 * f64::from(i), 20);
            assert_eq!(x.status, Status::NoTarget);
        }
        // A ferrous object: L up by 1 %, and loss (ring count 20 → 15).
        let mut seen = Vec::new();
        for _ in 0..4 {
            seen.push(read(&mut r, 0.0101, 15));
        }
        assert_eq!(seen[1].status, Status::NoTarget, "debounce: not yet");
        assert_eq!(
            (seen[2].status, seen[2].value),
            (Status::Ok, MetalClass::Ferrous as i32)
        );
        assert_eq!(seen[2].secondary, Some(5));
        // Gone: back to the background, two readings to leave.
        assert_eq!(
            read(&mut r, 1e-4, 20).status,
            Status::Ok,
            "debounce on leaving"
        );
        assert_eq!(read(&mut r, 1e-4, 20).status, Status::NoTarget);
        // A non-ferrous object: L down, with loss.
        for _ in 0..2 {
            read(&mut r, -0.01, 16);
        }
        let x = read(&mut r, -0.01, 16);
        assert_eq!(
            (x.status, x.value),
            (Status::Ok, MetalClass::NonFerrous as i32)
        );
        for _ in 0..3 {
            read(&mut r, 1e-4, 20);
        }
        // A shift without loss (no ring drop) is not metal.
        for _ in 0..10 {
            assert_eq!(read(&mut r, 0.0101, 20).status, Status::NoTarget);
        }
        // A target that stays becomes the background after 50 readings.
        for _ in 0..3 {
            read(&mut r, 1e-4, 20);
        }
        let statuses: Vec<Status> = (0..60).map(|_| read(&mut r, 0.0101, 15).status).collect();
        assert_eq!(statuses[2], Status::Ok);
        assert_eq!(statuses[59], Status::NoTarget);
    }

    #[test]
    fn readers_need_their_parts() {
        let mut cal = demo_proximity().unwrap();
        cal.curve = None;
        assert_eq!(Reader::from_calibration(&cal), Err(ReaderError::Incomplete));
        cal.kind = ReaderKind::Metal;
        assert_eq!(Reader::from_calibration(&cal), Err(ReaderError::Incomplete));
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(5_000))]

        /// End to end, count pair → gap, against the f64 twin over the
        /// calibrated range and temperatures: within 0.5 µm (the output's
        /// own rounding) plus the slope times the shift and drift bounds.
        #[test]
        fn proximity_end_to_end_bound(s in -0.32f64..-0.03, t in -4_000i32..12_000, with_t: bool) {
            let mut cal = demo_proximity().unwrap();
            cal.drift = crate::drift::TemperatureModel::from_f64(25.0, -3e-5, 2e-8).unwrap();
            let mut r = ProximityReader::new(&cal).unwrap();
            let input = Input {
                temperature: with_t.then_some(CentiCelsius(t)),
                ..Input::counts(pair_for(s))
            };
            let fixed = r.read(&input);
            prop_assert_eq!(fixed.status, Status::Ok);
            let float = r.read_f64(&input);
            // Largest slope of the demo curve (its last segment).
            let nodes = cal.curve.unwrap();
            let slope = nodes.nodes().windows(2).map(|w| f64::from(w[1].value - w[0].value) / (w[1].shift.to_f64() - w[0].shift.to_f64())).fold(0.0, f64::max);
            let shift_bound = 2.0 * 1.04 * 2f64.powi(-30) + 2f64.powi(-32) + 2f64.powi(-30) * 0.02 + 2f64.powi(-40);
            let bound = 0.5 + slope * shift_bound + 2f64.powi(-28) * 3_500.0;
            prop_assert!((f64::from(fixed.value) - float).abs() <= bound, "{} vs {} (bound {})", fixed.value, float, bound);
        }

        /// The fault window and the shift through the tick band's shortcut
        /// equal the full check followed by the general shift, errors
        /// included: pairs at the gate in and around the band, any pair.
        #[test]
        fn checked_shift_equals_check_then_shift(ticks: u32, near in 0u32..400_000, cycles: u32, level: bool) {
            let cal = if level { level_cal(true, false) } else { demo_proximity().unwrap() };
            let front = Front::new(&cal, false).unwrap();
            let gate = cal.gate().unwrap();
            let (lo, hi) = front.gate_band.unwrap().1;
            let pairs = [
                CountPair::new(gate, ticks),
                CountPair::new(gate, lo.saturating_sub(200_000).saturating_add(near)),
                CountPair::new(gate, hi.saturating_sub(200_000).saturating_add(near)),
                CountPair::new(cycles, ticks),
            ];
            for pair in pairs {
                let fast = front.checked_shift(&front.converter, pair, SensorFault::Counts);
                let slow = front
                    .window
                    .check(pair)
                    .map_err(SensorFault::Counts)
                    .and_then(|_| front.converter.shift(pair).map_err(SensorFault::Shift));
                prop_assert_eq!(fast, slow, "{:?}", pair);
            }
        }

        /// Arbitrary inputs never panic any reader.
        #[test]
        fn readers_never_panic(cycles: u32, ticks: u32, comp: Option<(u32, u32)>, t: Option<i32>, ring: Option<u16>, which in 0usize..4) {
            let cal = match which {
                0 => demo_proximity().unwrap(),
                1 => level_cal(true, true),
                2 => level_cal(false, true),
                _ => metal_cal(2, 10),
            };
            let mut r = Reader::from_calibration(&cal).unwrap();
            let input = Input {
                pair: CountPair::new(cycles, ticks),
                companion: comp.map(|(c, t)| CountPair::new(c, t)),
                temperature: t.map(CentiCelsius),
                ring_count: ring,
            };
            for _ in 0..3 {
                let _ = r.read(&input);
            }
        }
    }
}
