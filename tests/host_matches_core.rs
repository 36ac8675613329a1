//! Cross-crate: lc-host's conversion of the bundled demo log is lc-core's
//! firmware path, value for value (the same Q23.40 shift as an lc-core
//! converter with the same configured gate, for every row), and both that
//! and lc-core's division path are within a tenth of a count of the f64
//! reference.

use lc_core::counting::{CountPair, Gating};
use lc_core::shift::{RestPoint, ShiftConverter};
use lc_host::counts::{CountsConfig, RowStatus};
use lc_host::fieldlog::FieldLogReader;
use std::path::Path;

#[test]
fn demo_log_converts_exactly_as_lc_core() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/data/demo-counts.csv");
    let file = std::fs::File::open(&path).expect("bundled demo log");
    let rest = CountPair::new(16_384, 139_542);
    let host = CountsConfig::new(48_000_000, rest, Some(16_384), None).expect("config");
    let core = ShiftConverter::new(
        RestPoint::from_counts(rest).unwrap(),
        Gating::Reciprocal,
        None,
    )
    .unwrap();
    // The firmware's own configuration: the same configured gate.
    let firmware = ShiftConverter::new(
        RestPoint::from_counts(rest).unwrap(),
        Gating::Reciprocal,
        Some(16_384),
    )
    .unwrap();
    let mut ok = 0;
    for row in FieldLogReader::new(file, &path).expect("header") {
        let row = row.expect("demo rows parse");
        let pair = row.pair().expect("the demo log has count pairs");
        let h = host.convert(pair);
        if h.status != RowStatus::Ok {
            continue;
        }
        ok += 1;
        // The division path and the configured-gate path agree within the
        // bound, and both within a tenth of a count of f64.
        let fixed = h.shift_q40.expect("ok rows carry a shift");
        let same = firmware.shift(pair).expect("in range").raw_q40();
        assert_eq!(fixed, same, "line {}: host and lc-core differ", row.line);
        let general = core.shift(pair).expect("in range").raw_q40();
        let f64_ref = core.shift_f64(pair);
        let step = 2.0 * (1.0 + f64_ref) / f64::from(pair.ticks);
        for v in [fixed, general] {
            let err = (v as f64 / 2f64.powi(40) - f64_ref).abs();
            assert!(
                err <= 0.1 * step,
                "line {}: err {err:e} step {step:e}",
                row.line
            );
        }
    }
    assert_eq!(ok, 199);
}
