//! End-of-line calibration: from a lot's rig log to one calibration image
//! per passing unit, a unit record per attempt, and a lot report.
//!
//! - [`plan`]: the TOML calibration plan (product and acceptance limits);
//! - [`unit`](mod@unit): one unit's fit (rest point, drift model, monotone curve,
//!   quality factor) and its residuals through lc-core's own reader;
//! - [`accept`]: the limits, each failure a reason with value and limit;
//! - [`monotone`] and [`linalg`]: the fitting machinery.

pub mod accept;
pub mod linalg;
pub mod lot;
pub mod monotone;
pub mod plan;
pub mod report;
pub mod unit;

#[cfg(test)]
mod tests {
    use super::accept::judge;
    use super::plan::Plan;
    use super::unit::fit_unit;
    use crate::riglog::RigLogReader;
    use crate::sim::rig::{units, write_rig_log, LotSpec};
    use std::path::Path;

    fn demo_plan() -> Plan {
        let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/data/demo-plan.toml");
        Plan::load(&path).unwrap()
    }

    /// A simulated lot calibrates: good units pass, and the fit recovers
    /// the simulated physics.
    #[test]
    fn simulated_lot_calibrates() {
        let mut spec = LotSpec::demo("T", 6, 11);
        spec.bad_capacitor_every = 5;
        spec.corrupt_row_every = 6;
        let mut log = Vec::new();
        write_rig_log(&spec, &mut log).unwrap();
        let plan = demo_plan();
        let models = units(&spec);
        let mut passed = 0;
        for (unit, model) in RigLogReader::new(log.as_slice(), Path::new("rig.csv"))
            .unwrap()
            .zip(&models)
        {
            let (fit, mut reasons) = fit_unit(&unit, &plan).unwrap();
            reasons.extend(judge(&fit, &unit, &plan).iter().map(ToString::to_string));
            reasons.extend(unit.errors.iter().map(ToString::to_string));
            let c = model.capacitance_f;
            let expected_b1 =
                -(model.inductance_tempco + model.capacitor_tempco * c / (c + model.parasitic_f));
            match unit.serial.as_str() {
                "T-0005" => assert!(
                    reasons.iter().any(|r| r.contains("rest frequency")),
                    "{reasons:?}"
                ),
                "T-0006" => assert!(
                    reasons
                        .iter()
                        .any(|r| r.contains("line") && r.contains("ticks")),
                    "{reasons:?}"
                ),
                _ => {
                    assert!(reasons.is_empty(), "{}: {reasons:?}", unit.serial);
                    passed += 1;
                    // First-order drift of L·C: −(αL + αC·C/(C + Cp)), to
                    // within the second-order term over 35 K.
                    assert!(
                        (fit.drift.b1_per_k - expected_b1).abs() < 1.5e-6,
                        "{} vs {expected_b1}",
                        fit.drift.b1_per_k
                    );
                    assert!(fit.max_residual().unwrap() <= 8.0);
                    let f0 = model.frequency_hz(None, fit.drift.reference_c);
                    assert!(
                        (fit.rest_frequency_hz - f0).abs() / f0 < 2e-5,
                        "{} vs {f0}",
                        fit.rest_frequency_hz
                    );
                    let (q, lo, hi) = fit.q.unwrap();
                    assert!(
                        lo <= model.quality + 1.0 && hi >= model.quality - 1.0,
                        "Q {q} [{lo}, {hi}] vs {}",
                        model.quality
                    );
                }
            }
        }
        assert_eq!(passed, 4);
    }

    /// The coolant-tank level lot: the reference electrode cancels the
    /// water's permittivity drift (78.3 at 25 °C, 69.9 at 50 °C), so the
    /// level reads within a millimetre at both rig temperatures, and the
    /// image carries the tank's volume table.
    #[test]
    fn simulated_level_lot_calibrates() {
        let path =
            Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/data/demo-level-plan.toml");
        let plan = Plan::load(&path).unwrap();
        let mut log = Vec::new();
        crate::sim::level::write_level_rig_log("L", 4, 3, &mut log).unwrap();
        for unit in RigLogReader::new(log.as_slice(), Path::new("rig.csv")).unwrap() {
            let (fit, mut reasons) = fit_unit(&unit, &plan).unwrap();
            reasons.extend(judge(&fit, &unit, &plan).iter().map(ToString::to_string));
            assert!(reasons.is_empty(), "{}: {reasons:?}", unit.serial);
            assert!(fit.max_residual().unwrap() <= 10.0);
            assert!(fit.residuals.iter().any(|r| r.temp_c > 45.0));
            let cal = fit.calibration.unwrap();
            let (table, scale) = cal.volume.unwrap();
            assert_eq!((table.nodes().len(), scale.decimal_exponent), (32, -3));
        }
    }
}
