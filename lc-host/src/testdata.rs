//! Calibrations for this crate's tests: the demo scenario's proximity unit.

use lc_core::counting::{CountPair, FaultWindow};
use lc_core::curve::Node;
use lc_core::drift::TemperatureModel;
use lc_core::image::{Calibration, OutputScale, OutputUnit, PlanId, ReaderKind, Serial, Table};
use lc_core::shift::{RestPoint, Shift};

/// The demo proximity unit: 16 384-cycle gate at 48 MHz, a linear curve
/// from 0.5 mm to 8 mm.
pub(crate) fn demo_proximity() -> Option<Calibration> {
    let nodes = [
        Node::new(Shift::from_raw_q40(-362_000_000_000), 500),
        Node::new(Shift::from_raw_q40(-250_000_000_000), 1_000),
        Node::new(Shift::from_raw_q40(-120_000_000_000), 2_500),
        Node::new(Shift::from_raw_q40(-50_000_000_000), 4_500),
        Node::new(Shift::from_raw_q40(-21_000_000_000), 8_000),
    ];
    Some(Calibration {
        kind: ReaderKind::Proximity,
        serial: Serial::new("DEMO-01-0007")?,
        reference_hz: 48_000_000,
        gate_cycles: 16_384,
        window: FaultWindow::new(48_000_000, 1_000_000, 20_000_000, 64).ok()?,
        rest: RestPoint::from_counts(CountPair::new(16_384, 139_542)).ok()?,
        companion_rest: None,
        drift: TemperatureModel::NONE,
        output: OutputScale {
            unit: OutputUnit::Metre,
            decimal_exponent: -6,
        },
        curve: Some(Table::linear(&nodes).ok()?),
        volume: None,
        metal: None,
        calibrated_at: 0,
        plan_id: PlanId::UNKNOWN,
    })
}
