//! The calibration images the firmware example reads, and their generator.
//!
//! `examples/firmware/data/*.lcim` are committed binary calibration images
//! (docs/image-format.md) that the firmware's readout
//! (`examples/firmware/src/readout.rs`) embeds with `include_bytes!`. They
//! are generated here, on the host, from calibrations built in Rust code,
//! and [`committed_images_match_the_generator`] fails when a committed file
//! differs from what the generator produces, so they never go stale. To
//! write them after a deliberate change:
//!
//! ```sh
//! LC_WRITE_IMAGES=1 cargo test --test firmware_images
//! ```
//!
//! The units belong to the demo scenario (invented; docs/references.md, Demo
//! scenario):
//!
//! - `demo-proximity`: [`demo_proximity`], the 20 mm PCB coil with 100 pF
//!   at a 48 MHz reference and a 16 384-cycle gate (rest 16384:139542),
//!   an aluminium plate from 0.5 to 8 mm;
//! - `demo-proximity-tc`: the same unit after a temperature fit at the end
//!   of the line (its L·C drifts by +40 ppm/K);
//! - `demo-level`: a capacitive level probe in a horizontal cylindrical
//!   coolant tank of 400 mm diameter and 1 m length, with a reference
//!   electrode at the bottom (the companion channel) and a cubic volume
//!   table (level → millilitres);
//! - `demo-metal`: the demo coil as a metal detector with ring-down;
//! - `demo-proximity-32`: a unit of lot DEMO-01 as `lc-host calibrate`
//!   wrote it (32-node monotone cubic curve, fitted drift model): the
//!   format-1 image `tests/data/demo-01-0007.format1.lcim` rewritten in
//!   format 3 ([`old_formats_rewrite_to_the_committed_image`]), with the
//!   demo plan's identity and a fixed calibration time (its format-2
//!   rewrite, `tests/data/demo-01-0007.format2.lcim`, reads as the same
//!   calibration).
//!
//! The readout's count pairs are computed from the same scenario; the tests
//! below check that the host run of the readout lands where the scenario
//! says (gap, level, volume, detection), so a wrong count in the table is
//! caught here and not only as an emulator/host mismatch.

#[path = "../examples/firmware/src/readout.rs"]
#[allow(dead_code)]
mod readout;

use std::path::{Path, PathBuf};

use lc_core::counting::{CountPair, FaultWindow};
use lc_core::curve::{pchip_derivatives, Interpolation, Node};
use lc_core::drift::TemperatureModel;
use lc_core::geometry::{TankShape, VolumeTable};
use lc_core::image::{
    Calibration, ImageBuf, MetalParams, OutputScale, OutputUnit, PlanId, ReaderKind, Serial, Table,
    MAX_IMAGE_LEN,
};
use lc_core::reader::{Input, Reader, Reading, Status};
use lc_core::shift::{RestPoint, Shift};
use lc_core::tank::resonant_frequency_hz;

/// The calibration time recorded in the generated images (2025-12-01
/// 00:00 UTC): fixed, so that the images are byte-stable.
const CALIBRATED_AT: i64 = 1_764_547_200;

/// The demo plan's identity (examples/data/demo-plan.toml).
fn demo_plan_id() -> PlanId {
    lc_host::calib::plan::plan_id(include_str!("../examples/data/demo-plan.toml"))
}

/// The demo proximity unit: 16 384-cycle gate at 48 MHz, a linear curve
/// from 0.5 mm to 8 mm.
fn demo_proximity() -> Option<Calibration> {
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
        reference_hz: REFERENCE_HZ,
        gate_cycles: GATE_CYCLES,
        window: FaultWindow::new(REFERENCE_HZ, 1_000_000, 20_000_000, 64).ok()?,
        rest: RestPoint::from_counts(CountPair::new(GATE_CYCLES, 139_542)).ok()?,
        companion_rest: None,
        drift: TemperatureModel::NONE,
        output: OutputScale {
            unit: OutputUnit::Metre,
            decimal_exponent: -6,
        },
        curve: Some(Table::linear(&nodes).ok()?),
        volume: None,
        metal: None,
        calibrated_at: CALIBRATED_AT,
        plan_id: demo_plan_id(),
    })
}

/// A unit of lot DEMO-01 as `lc-host calibrate` wrote it in format 1 (the
/// committed fixture), rewritten in format 3 with the demo plan's identity
/// and [`CALIBRATED_AT`].
fn demo_proximity_32() -> Calibration {
    let v1 = fixture(OLD_IMAGES[0].1);
    let cal = Calibration::parse(&v1).expect("the host reads format 1");
    Calibration {
        calibrated_at: CALIBRATED_AT,
        plan_id: demo_plan_id(),
        ..cal
    }
}

/// The committed fixtures of that unit in the formats before 3: (format,
/// file below the repository's root, whether it holds its calibration time
/// and plan). Format 1 holds neither, format 2 (written before the
/// reciprocals' exponents) both.
const OLD_IMAGES: [(u16, &str, bool); 2] = [
    (1, "tests/data/demo-01-0007.format1.lcim", false),
    (2, "tests/data/demo-01-0007.format2.lcim", true),
];

/// The bytes of a committed fixture, `path` below the repository's root.
fn fixture(path: &str) -> Vec<u8> {
    std::fs::read(Path::new(env!("CARGO_MANIFEST_DIR")).join(path))
        .unwrap_or_else(|e| panic!("fixture {path}: {e}"))
}

/// Reference clock and reciprocal gate of every demo unit.
const REFERENCE_HZ: u32 = 48_000_000;
const GATE_CYCLES: u32 = 16_384;

/// 2^40: Q23.40 raw units per unit of shift.
const Q40: f64 = 1_099_511_627_776.0;

/// Level unit: probe channel, 100 µH with 100 pF and 20 pF of dry probe.
const LEVEL_L_H: f64 = 100e-6;
const PROBE_C_F: f64 = 120e-12;
/// Reference electrode channel: 100 µH with 100 pF and 5 pF dry electrode.
const REFERENCE_C_F: f64 = 105e-12;
/// Shift of the probe channel when the tank is full, at calibration
/// (60 pF of coolant on 120 pF).
const PROBE_FULL_SHIFT: f64 = 0.5;
/// Shift of the submerged reference electrode at calibration (18 pF on
/// 105 pF).
const REFERENCE_SHIFT: f64 = 18.0 / 105.0;
/// Tank: horizontal cylinder, 400 mm diameter, 1 m long.
const TANK_DIAMETER_M: f64 = 0.4;
const TANK_LENGTH_M: f64 = 1.0;

/// The probe's fraction of its full-scale capacitance change at a level
/// fraction x: linear plus a small fringe-field bow (demo model).
fn probe_shape(x: f64) -> f64 {
    x * (1.0 + 0.03 * (1.0 - x))
}

/// Reference ticks over the gate at rest for a tank of L and C.
fn rest_ticks(l_h: f64, c_f: f64) -> u32 {
    let f = resonant_frequency_hz(l_h, c_f);
    (f64::from(GATE_CYCLES) * f64::from(REFERENCE_HZ) / f).round() as u32
}

/// The coolant tank.
const TANK: TankShape = TankShape::HorizontalCylinder {
    radius_m: TANK_DIAMETER_M / 2.0,
    length_m: TANK_LENGTH_M,
};

/// Volume of the tank filled to `h_m`, in millilitres.
fn tank_volume_ml(h_m: f64) -> f64 {
    TANK.volume_m3(h_m) * 1e6
}

/// The demo proximity unit after its temperature fit: its L·C rises by
/// 40 ppm/K, so g(ΔT) = −40e-6·ΔT + 1.6e-9·ΔT² (second order of
/// 1/(1 + 40e-6·ΔT)) around 25 °C.
fn demo_proximity_tc() -> Calibration {
    let mut cal = demo_proximity().expect("demo calibration");
    cal.serial = Serial::new("DEMO-01-0008").expect("serial");
    cal.drift = TemperatureModel::from_f64(25.0, -40e-6, 1.6e-9).expect("drift model");
    cal
}

/// The level unit: level curve from the probe / reference ratio q, in
/// 0.1 mm over the tank's 400 mm; cubic volume table in millilitres.
fn demo_level() -> Calibration {
    // End-of-line calibration at 0, 100, 200, 300 and 400 mm (20 °C):
    // q = s_probe/s_reference.
    let q_at = |x: f64| PROBE_FULL_SHIFT * probe_shape(x) / REFERENCE_SHIFT;
    let level_nodes: Vec<Node> = (0..=4)
        .map(|i| {
            let x = f64::from(i) / 4.0;
            Node::new(
                Shift::from_raw_q40((q_at(x) * Q40).round() as i64),
                1_000 * i,
            )
        })
        .collect();
    // Volume table: 17 levels in 0.1 mm, denser near the bottom and top
    // where the cylinder's cross-section changes fastest (lc-core's cosine
    // spacing), volumes in mL, monotone cubic. The table's x axis is the
    // level as `geometry::level_to_shift` (docs/image-format.md).
    let volume = VolumeTable::sample(&TANK, 1e4, 1e6, 17, Interpolation::MonotoneCubic)
        .expect("volume table");
    let volume_nodes: Vec<Node> = (0..volume.len())
        .map(|i| volume.curve().node(i).expect("node"))
        .collect();
    let xs: Vec<f64> = volume_nodes.iter().map(|n| n.shift.to_f64()).collect();
    let ys: Vec<f64> = volume_nodes.iter().map(|n| f64::from(n.value)).collect();
    let d = pchip_derivatives(&xs, &ys).expect("pchip derivatives");
    let dq: Vec<i64> = d[..volume_nodes.len()]
        .iter()
        .map(|v| (v * 65_536.0).round() as i64)
        .collect();
    Calibration {
        kind: ReaderKind::Level,
        serial: Serial::new("TANK-02-0031").expect("serial"),
        reference_hz: REFERENCE_HZ,
        gate_cycles: GATE_CYCLES,
        window: FaultWindow::new(REFERENCE_HZ, 500_000, 5_000_000, 64).expect("window"),
        rest: RestPoint::from_counts(CountPair::new(
            GATE_CYCLES,
            rest_ticks(LEVEL_L_H, PROBE_C_F),
        ))
        .expect("probe rest point"),
        companion_rest: Some(
            RestPoint::from_counts(CountPair::new(
                GATE_CYCLES,
                rest_ticks(LEVEL_L_H, REFERENCE_C_F),
            ))
            .expect("reference rest point"),
        ),
        // The tank capacitors' L·C rises by 30 ppm/K; the model takes it
        // out of both channels.
        drift: TemperatureModel::from_f64(20.0, -30e-6, 0.0).expect("drift model"),
        output: OutputScale {
            unit: OutputUnit::Metre,
            decimal_exponent: -4,
        },
        curve: Some(Table::linear(&level_nodes).expect("level curve")),
        volume: Some((
            Table::cubic(&volume_nodes, &dq).expect("volume table"),
            OutputScale {
                unit: OutputUnit::Litre,
                decimal_exponent: -3,
            },
        )),
        metal: None,
        calibrated_at: CALIBRATED_AT,
        plan_id: demo_plan_id(),
    }
}

/// The demo coil as a metal detector: enter at 0.2 % of shift, leave at
/// 0.1 %, three readings to enter and two to leave, baseline weight 2^-4,
/// a ring-count drop of 3 confirms a lossy target, and a target present
/// for 12 readings becomes the background.
fn demo_metal() -> Calibration {
    let mut cal = demo_proximity().expect("demo calibration");
    cal.kind = ReaderKind::Metal;
    cal.serial = Serial::new("DEMO-03-0002").expect("serial");
    cal.curve = None;
    cal.output = OutputScale {
        unit: OutputUnit::None,
        decimal_exponent: 0,
    };
    cal.metal = Some(MetalParams {
        enter_ppb: 2_000_000,
        leave_ppb: 1_000_000,
        enter_samples: 3,
        leave_samples: 2,
        baseline_k: 4,
        ring_drop: 3,
        relearn_readings: 12,
    });
    cal
}

/// The generator: file name and calibration, in the readout's order.
fn images() -> Vec<(&'static str, Calibration)> {
    vec![
        (
            "demo-proximity.lcim",
            demo_proximity().expect("demo calibration"),
        ),
        ("demo-proximity-tc.lcim", demo_proximity_tc()),
        ("demo-level.lcim", demo_level()),
        ("demo-metal.lcim", demo_metal()),
        ("demo-proximity-32.lcim", demo_proximity_32()),
    ]
}

fn data_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/firmware/data")
}

fn encode(cal: &Calibration) -> Vec<u8> {
    let mut buf = [0u8; MAX_IMAGE_LEN];
    let n = cal
        .encode(&mut buf)
        .expect("the generator's calibrations encode");
    buf[..n].to_vec()
}

#[test]
fn committed_images_match_the_generator() {
    let write = std::env::var_os("LC_WRITE_IMAGES").is_some_and(|v| v == "1");
    let mut stale = Vec::new();
    for (name, cal) in images() {
        let bytes = encode(&cal);
        assert_eq!(Calibration::parse(&bytes), Ok(cal), "{name} round trip");
        let path = data_dir().join(name);
        if write {
            std::fs::create_dir_all(data_dir()).expect("create the data directory");
            std::fs::write(&path, &bytes)
                .unwrap_or_else(|e| panic!("write {}: {e}", path.display()));
            continue;
        }
        match std::fs::read(&path) {
            Ok(committed) if committed == bytes => {}
            Ok(_) => stale.push(format!("{} differs from the generator", path.display())),
            Err(e) => stale.push(format!("{}: {e}", path.display())),
        }
    }
    assert!(
        stale.is_empty(),
        "{}\nregenerate with: LC_WRITE_IMAGES=1 cargo test --test firmware_images",
        stale.join("\n")
    );
}

#[test]
fn readout_embeds_the_generated_images_in_order() {
    let generated = images();
    assert_eq!(readout::IMAGES.len(), generated.len());
    for (image, (name, cal)) in readout::IMAGES.iter().zip(&generated) {
        assert_eq!(format!("{}.lcim", image.name), *name);
        assert_eq!(image.bytes, &encode(cal)[..], "{name}");
    }
}

/// The scenario's rest points are the ones the level image holds, and the
/// demo coil's rest is the documented 16384:139542.
#[test]
fn rest_points_follow_the_scenario() {
    assert_eq!(rest_ticks(LEVEL_L_H, PROBE_C_F), 541_292);
    assert_eq!(rest_ticks(LEVEL_L_H, REFERENCE_C_F), 506_332);
    let demo = demo_proximity().unwrap();
    assert_eq!(
        demo.rest,
        RestPoint::from_counts(CountPair::new(16_384, 139_542)).unwrap()
    );
}

/// Runs the readout's rows of one unit on the host; (tag, reading).
fn host_readings(unit: usize) -> Vec<(&'static str, HostReading)> {
    let buf = ImageBuf::from_bytes(readout::IMAGES[unit].bytes).expect("image");
    let image = buf.image().expect("committed image validates");
    let mut reader = Reader::new(&image).expect("reader");
    let ntc = readout::BOARD.ntc().expect("board NTC");
    readout::ROWS
        .iter()
        .filter(|r| r.unit == unit)
        .map(|r| {
            let temperature = r.ntc_code.and_then(|c| ntc.convert(c).ok());
            let input = Input {
                pair: r.pair,
                companion: r.companion,
                temperature,
                ring_count: r.ring,
            };
            (r.tag, HostReading::of(reader.read(&input)))
        })
        .collect()
}

/// A reading's status, primary and secondary output.
#[derive(Clone, Copy, Debug)]
struct HostReading {
    status: Status,
    value: i32,
    secondary: Option<i32>,
}

impl HostReading {
    fn of(r: Reading) -> Self {
        Self {
            status: r.status(),
            value: r.output(),
            secondary: r.secondary(),
        }
    }
}

fn find<'a>(readings: &'a [(&'static str, HostReading)], tag: &str) -> &'a HostReading {
    &readings
        .iter()
        .find(|(t, _)| *t == tag)
        .unwrap_or_else(|| panic!("no row tagged {tag}"))
        .1
}

/// The proximity rows were computed from the demo curve: each gap row
/// reads its gap to within a micrometre or two (count rounding).
#[test]
fn proximity_rows_read_their_gaps() {
    let r = host_readings(readout::PROXIMITY);
    for (tag, gap_um) in [
        ("7mm", 7_000),
        ("5mm", 5_000),
        ("3mm", 3_000),
        ("2mm", 2_000),
        ("1.5mm", 1_500),
        ("1mm", 1_000),
        ("0.7mm", 700),
        ("back-2mm", 2_000),
    ] {
        let x = find(&r, tag);
        assert_eq!(x.status, Status::Ok, "{tag}: {x:?}");
        assert!((x.value - gap_um).abs() <= 2, "{tag}: {x:?}");
    }
    assert_eq!(find(&r, "rest").status, Status::NoTarget);
    assert_eq!(find(&r, "0.3mm").status, Status::BelowRange);
}

/// At 2.5 mm across −40…150 °C the fitted unit reads 2.5 mm to within a
/// few micrometres; without a temperature (NTC open) it reads no value.
#[test]
fn temperature_model_holds_the_gap() {
    let r = host_readings(readout::PROXIMITY_TC);
    for tag in [
        "2.5mm-40C",
        "2.5mm0C",
        "2.5mm25C",
        "2.5mm60C",
        "2.5mm85C",
        "2.5mm150C",
    ] {
        let x = find(&r, tag);
        assert_eq!(x.status, Status::Ok, "{tag}: {x:?}");
        assert!((x.value - 2_500).abs() <= 3, "{tag}: {x:?}");
    }
    // With the NTC open there is no temperature, and the unit has a drift
    // model: a sensor fault, not an uncompensated gap (issue 19, item 4).
    let open = find(&r, "2.5mm150C-ntc-open");
    assert_eq!(
        open.status,
        Status::SensorFault(lc_core::reader::SensorFault::TemperatureMissing),
        "{open:?}"
    );
}

/// Level rows: the level to within 0.3 mm of the scenario (the level
/// curve is linear between five calibration points on a slightly bowed
/// probe) and the volume to within 0.2 % of the cylinder's.
#[test]
fn level_rows_read_level_and_volume() {
    let r = host_readings(readout::LEVEL);
    for (tag, level_mm) in [
        ("30mm", 30.0),
        ("100mm", 100.0),
        ("200mm", 200.0),
        ("300mm", 300.0),
        ("390mm", 390.0),
        ("200mm-hot", 200.0),
        ("200mm-cold", 200.0),
        ("100mm-60C", 99.9),
    ] {
        let x = find(&r, tag);
        assert_eq!(x.status, Status::Ok, "{tag}: {x:?}");
        let level = f64::from(x.value) / 10.0;
        assert!((level - level_mm).abs() <= 0.3, "{tag}: {x:?}");
        let volume = f64::from(x.secondary.expect("volume")) / 1_000.0;
        let expect = tank_volume_ml(level * 1e-3) / 1_000.0;
        assert!(
            (volume - expect).abs() <= 0.002 * expect.max(1.0),
            "{tag}: {volume} L vs {expect} L"
        );
    }
    assert!(matches!(
        find(&r, "drained").status,
        Status::SensorFault(lc_core::reader::SensorFault::Reference)
    ));
    assert_eq!(find(&r, "coated-probe").status, Status::AboveRange);
    assert_eq!(find(&r, "probe-below-rest").status, Status::BelowRange);
}

/// Metal rows: steel (L up, lossy) is ferrous, aluminium (L down, lossy)
/// non-ferrous, a hand (shift without loss) nothing, and a target that
/// stays is learned into the background.
#[test]
fn metal_rows_detect_and_classify() {
    let r = host_readings(readout::METAL);
    let class = |tag: &str| find(&r, tag).value;
    assert_eq!(class("steel-3"), 1);
    assert_eq!(find(&r, "steel-3").status, Status::Ok);
    assert_eq!(class("aluminium-3"), 2);
    assert!(r
        .iter()
        .filter(|(t, _)| t.starts_with("hand"))
        .all(|(_, x)| x.status == Status::NoTarget));
    assert_eq!(find(&r, "steel-stays-12").status, Status::Ok);
    assert_eq!(find(&r, "steel-stays-14").status, Status::NoTarget);
}

/// The committed format-1 and format-2 images of the DEMO-01 unit: the
/// host reads each (format 2 as the same calibration, time and plan
/// included; format 1 without them), the firmware refuses each, and each
/// rewritten in format 3 (format 1 given the time and plan) is the
/// committed `demo-proximity-32` image.
#[test]
fn old_formats_rewrite_to_the_committed_image() {
    for (format, path, holds_time_and_plan) in OLD_IMAGES {
        let bytes = fixture(path);
        assert_eq!(Calibration::format_version(&bytes), Ok(format), "{path}");
        assert_eq!(
            ImageBuf::from_bytes(&bytes).unwrap().image().map(|_| ()),
            Err(lc_core::image::ImageError::OldFormat),
            "{path}: the firmware refuses it"
        );
        let cal = Calibration::parse(&bytes)
            .unwrap_or_else(|e| panic!("{path}: the host reads format {format}: {e:?}"));
        let curve = cal.curve.as_ref().expect("curve");
        assert_eq!(
            (curve.nodes().len(), curve.is_cubic()),
            (32, true),
            "{path}: curve"
        );
        let rewrite = if holds_time_and_plan {
            cal
        } else {
            assert_eq!(
                (cal.calibrated_at, cal.plan_id),
                (0, PlanId::UNKNOWN),
                "{path}: time and plan"
            );
            Calibration {
                calibrated_at: CALIBRATED_AT,
                plan_id: demo_plan_id(),
                ..cal
            }
        };
        assert_eq!(rewrite, demo_proximity_32(), "{path}: the calibration");
        assert!(
            readout::IMAGES[readout::PROXIMITY_32].bytes == &encode(&rewrite)[..],
            "{path}: its rewrite is not the committed image"
        );
    }
}
