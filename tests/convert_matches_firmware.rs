//! `lc-host convert` reads exactly what the firmware reads.
//!
//! The firmware's readout (examples/firmware/src/readout.rs) feeds fixed
//! rows through four calibration images on the unit; tests/emulator.rs
//! requires the emulated Cortex-M0 and M4F to print its lines byte for byte
//! as the host does. Here the same rows, written as field logs, go through
//! `lc-host convert`'s converter, and every reading — value, secondary,
//! raw Q23.40 shift and status — must equal the firmware's line.

#[allow(dead_code)]
#[path = "../examples/firmware/src/readout.rs"]
mod readout;

use lc_core::image::Calibration;
use lc_host::convert::Converter;
use lc_host::fieldlog::FieldLogReader;
use std::collections::BTreeMap;
use std::path::Path;

/// The fields of one `read` line of the readout.
#[derive(Debug, Default)]
struct FirmwareLine {
    pair: (u32, u32),
    comp: Option<(u32, u32)>,
    centi_c: Option<i32>,
    ring: Option<u16>,
    value: i32,
    secondary: Option<i32>,
    shift_q40: i64,
    status: String,
}

fn field<'a>(line: &'a str, key: &str) -> &'a str {
    let at = line
        .find(&format!(" {key}="))
        .unwrap_or_else(|| panic!("no {key} in {line}"))
        + key.len()
        + 2;
    line[at..].split(' ').next().unwrap()
}

fn pair(s: &str) -> Option<(u32, u32)> {
    let (c, t) = s.split_once('/')?;
    Some((c.parse().ok()?, t.parse().ok()?))
}

fn firmware_lines() -> BTreeMap<usize, Vec<FirmwareLine>> {
    let mut text = String::new();
    readout::run(&mut text).unwrap();
    let mut units: BTreeMap<usize, Vec<FirmwareLine>> = BTreeMap::new();
    for line in text
        .lines()
        .filter(|l| l.starts_with("read ") && l.contains(" -> value="))
    {
        let name = line.split(' ').nth(1).unwrap();
        let Some(unit) = readout::IMAGES.iter().position(|im| im.name == name) else {
            continue;
        };
        let status_text = line
            .split(" status=")
            .nth(1)
            .unwrap()
            .split(" |")
            .next()
            .unwrap()
            .to_string();
        units.entry(unit).or_default().push(FirmwareLine {
            pair: pair(field(line, "pair")).unwrap(),
            comp: pair(field(line, "comp")),
            centi_c: field(line, "t").parse().ok(),
            ring: field(line, "ring").parse().ok(),
            value: field(line, "value").parse().unwrap(),
            secondary: field(line, "secondary").parse().ok(),
            shift_q40: field(line, "x_q40").parse().unwrap(),
            status: status_text,
        });
    }
    units
}

#[test]
fn convert_equals_the_firmware_readout() {
    let units = firmware_lines();
    assert_eq!(
        units.len(),
        readout::IMAGES.len(),
        "every unit has readings"
    );
    let mut compared = 0;
    for (u, lines) in &units {
        // The same rows as a field log.
        let mut log =
            String::from("time_s,cycles,ticks,temp_c,ring_count,comp_cycles,comp_ticks\n");
        for (i, l) in lines.iter().enumerate() {
            let temp = l.centi_c.map_or(String::new(), |c| {
                format!(
                    "{}{}.{:02}",
                    if c < 0 { "-" } else { "" },
                    c.abs() / 100,
                    c.abs() % 100
                )
            });
            let ring = l.ring.map_or(String::new(), |r| r.to_string());
            let (cc, ct) = l.comp.map_or((String::new(), String::new()), |(c, t)| {
                (c.to_string(), t.to_string())
            });
            log.push_str(&format!(
                "{i},{},{},{temp},{ring},{cc},{ct}\n",
                l.pair.0, l.pair.1
            ));
        }
        let cal = Calibration::parse(readout::IMAGES[*u].bytes).unwrap();
        let mut conv = Converter::new(cal).unwrap();
        let reader = FieldLogReader::new(log.as_bytes(), Path::new("readout.csv")).unwrap();
        for (row, fw) in reader.zip(lines) {
            let c = conv.convert(&row.unwrap());
            let r = c.reading;
            let what = format!("unit {u} row {}: firmware {fw:?}, convert {r:?}", c.line);
            assert_eq!(format!("{:?}", r.status()), fw.status, "{what}");
            assert_eq!(r.curve_input_q40(), fw.shift_q40, "{what}");
            assert_eq!(r.output(), fw.value, "{what}");
            assert_eq!(r.secondary(), fw.secondary, "{what}");
            compared += 1;
        }
    }
    assert!(compared >= 60, "{compared} readings compared");
}
