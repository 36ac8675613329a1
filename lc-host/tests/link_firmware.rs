//! End to end over the live link (docs/link.md): the example firmware of
//! `examples/link-firmware` runs on QEMU's `microbit` (Cortex-M0) and
//! streams its scripted gates over the emulated nRF51 UART, which QEMU
//! connects to a TCP socket; `lc-host listen` connects to it, converts
//! live and records. Then:
//!
//! - the listener's counts are what the firmware says it injected: bad
//!   frames, dropped frames and accepted frames, exactly; every unit
//!   reading whose count pair arrived agrees with the host's conversion;
//! - the recorded field log, converted by `lc-host convert`, equals the
//!   firmware's own readings (printed over semihosting) bit for bit:
//!   channel, status, value and shift, row for row, except the count
//!   pairs whose frames the firmware damaged on purpose.
//!
//! Needs `qemu-system-arm` and the `thumbv6m-none-eabi` target: skipped
//! with a note without them, a failure with `CI` set.

mod support;
use std::env;
use std::ffi::OsString;
use std::io::{BufRead, BufReader};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::mpsc;
use std::time::Duration;
use support::raw_units;

const TRIPLE: &str = "thumbv6m-none-eabi";

fn root() -> PathBuf {
    PathBuf::from(concat!(env!("CARGO_MANIFEST_DIR"), "/.."))
}

fn prerequisites() -> bool {
    let mut missing = Vec::new();
    if Command::new("qemu-system-arm")
        .arg("--version")
        .output()
        .is_err()
    {
        missing.push("qemu-system-arm is not installed (apt-get install qemu-system-arm)");
    }
    let rustc = env::var_os("RUSTC").unwrap_or_else(|| OsString::from("rustc"));
    let sysroot = Command::new(rustc)
        .args(["--print", "sysroot"])
        .output()
        .map(|o| String::from_utf8_lossy(&o.stdout).trim().to_owned())
        .unwrap_or_default();
    if !Path::new(&sysroot)
        .join("lib/rustlib")
        .join(TRIPLE)
        .is_dir()
    {
        missing.push("the thumbv6m-none-eabi target (rustup target add thumbv6m-none-eabi)");
    }
    if missing.is_empty() {
        return true;
    }
    let ci = env::var("CI").is_ok_and(|v| !v.is_empty() && v != "false" && v != "0");
    assert!(!ci, "CI is set, so the link test must run: {missing:?}");
    eprintln!("skipped: {}", missing.join("; "));
    false
}

fn build() -> PathBuf {
    let dir = root().join("examples/link-firmware");
    let tmp = Path::new(env!("CARGO_TARGET_TMPDIR"));
    let target = tmp.parent().unwrap_or(tmp).join("link-firmware");
    let cargo = env::var_os("CARGO").unwrap_or_else(|| OsString::from("cargo"));
    // Cargo reads the crate's .cargo/config.toml (`-Tlink.x`) only when
    // run from its directory; RUSTFLAGS would replace those flags.
    let out = Command::new(cargo)
        .current_dir(&dir)
        .env("CARGO_TARGET_DIR", &target)
        .env_remove("RUSTFLAGS")
        .env_remove("CARGO_ENCODED_RUSTFLAGS")
        .env_remove("CARGO_BUILD_RUSTFLAGS")
        .args(["build", "--release", "--target", TRIPLE])
        .output()
        .expect("run cargo");
    assert!(
        out.status.success(),
        "building examples/link-firmware failed:\n{}",
        String::from_utf8_lossy(&out.stderr)
    );
    target.join(TRIPLE).join("release/link-firmware")
}

/// The firmware's semihosting output: its readings (sequence, channel,
/// status code, value, curve input), the sequences of count pairs it
/// damaged, and the counts a listener must find (bad, dropped, frames).
struct FirmwareOutput {
    readings: Vec<(u16, u8, u8, i32, i64)>,
    lost: Vec<u16>,
    expect: (u64, u64, u64),
}

fn parse_firmware(text: &str) -> FirmwareOutput {
    let mut out = FirmwareOutput {
        readings: Vec::new(),
        lost: Vec::new(),
        expect: (0, 0, 0),
    };
    for line in text.lines() {
        let f: Vec<&str> = line.split_whitespace().collect();
        match f.as_slice() {
            ["reading", seq, ch, code, value, "-", q] => out.readings.push((
                seq.parse().unwrap(),
                ch.parse().unwrap(),
                code.parse().unwrap(),
                value.parse().unwrap(),
                q.parse().unwrap(),
            )),
            ["lost", seq] => out.lost.push(seq.parse().unwrap()),
            ["expect", "bad", b, "dropped", d, "frames", n] => {
                out.expect = (b.parse().unwrap(), d.parse().unwrap(), n.parse().unwrap())
            }
            _ => panic!("unexpected firmware line {line:?}"),
        }
    }
    out
}

#[test]
fn firmware_streams_and_the_listener_records_its_readings() {
    if !prerequisites() {
        return;
    }
    let elf = build();
    let image = root().join("examples/firmware/data/demo-proximity.lcim");
    let record = Path::new(env!("CARGO_TARGET_TMPDIR")).join("link-firmware-record");
    let _ = std::fs::remove_dir_all(&record);
    let port = std::net::TcpListener::bind("127.0.0.1:0")
        .unwrap()
        .local_addr()
        .unwrap()
        .port();
    // QEMU listens on the port and starts the core once a client is there.
    let mut qemu = Command::new("qemu-system-arm")
        .args(["-machine", "microbit", "-cpu", "cortex-m0"])
        .args(["-display", "none", "-monitor", "none"])
        .arg("-serial")
        .arg(format!("tcp:127.0.0.1:{port},server=on,wait=on"))
        .args(["-semihosting-config", "enable=on,target=native"])
        .arg("-kernel")
        .arg(&elf)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start qemu-system-arm");
    let stderr = qemu.stderr.take().unwrap();
    let (tx, rx) = mpsc::channel();
    std::thread::spawn(move || {
        let mut lines = BufReader::new(stderr).lines();
        let mut sent = false;
        let mut rest = String::new();
        while let Some(Ok(l)) = lines.next() {
            if !sent && l.contains("waiting for connection") {
                let _ = tx.send(());
                sent = true;
            } else {
                rest.push_str(&l);
                rest.push('\n');
            }
        }
        rest
    });
    rx.recv_timeout(Duration::from_secs(30))
        .expect("QEMU did not open its serial socket");
    let listen = Command::new(env!("CARGO_BIN_EXE_lc-host"))
        .args(["listen", "--tcp"])
        .arg(format!("127.0.0.1:{port}"))
        .arg("--no-reconnect")
        .arg("--image")
        .arg(&image)
        .arg("--record")
        .arg(&record)
        .arg("--json")
        .output()
        .expect("run lc-host listen");
    let fw = qemu.wait_with_output().expect("wait for qemu");
    assert!(
        fw.status.success(),
        "the firmware failed: {}",
        String::from_utf8_lossy(&fw.stdout)
    );
    assert!(
        listen.status.success(),
        "listen failed: {}",
        String::from_utf8_lossy(&listen.stderr)
    );
    let fw = parse_firmware(&String::from_utf8(fw.stdout).unwrap());
    let s: serde_json::Value = serde_json::from_slice(&listen.stdout).unwrap();

    // The live summary's counts are the injected ones.
    let (bad, dropped, frames) = fw.expect;
    assert!(bad > 0 && dropped > 0);
    assert_eq!(s["link"]["bad"].as_u64(), Some(bad));
    assert_eq!(s["link"]["dropped"].as_u64(), Some(dropped));
    assert_eq!(s["link"]["frames"].as_u64(), Some(frames));
    let arrived: Vec<_> = fw
        .readings
        .iter()
        .filter(|r| !fw.lost.contains(&r.0))
        .collect();
    assert_eq!(s["counts"].as_u64(), Some(arrived.len() as u64));
    assert_eq!(s["disagree"].as_u64(), Some(0));
    assert!(
        s["faults"].as_u64().unwrap() > 0,
        "sensor faults in the script"
    );

    // The recorded field log, converted, is the firmware's readings.
    let logs = s["field_logs"].as_array().unwrap();
    assert_eq!(logs.len(), 1, "{s}");
    let out = Command::new(env!("CARGO_BIN_EXE_lc-host"))
        .arg("convert")
        .arg(logs[0].as_str().unwrap())
        .arg("--image")
        .arg(&image)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    let rows: Vec<Vec<&str>> = text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("line,"))
        .map(|l| l.split(',').collect())
        .collect();
    assert_eq!(rows.len(), arrived.len());
    for (row, &&(seq, ch, code, value, q)) in rows.iter().zip(&arrived) {
        let status = lc_core::link::status_of_code(code).unwrap();
        let fault = matches!(status, lc_core::reader::Status::SensorFault(_));
        let want = [
            ch.to_string(),
            lc_host::convert::status_name(status).to_string(),
            if fault {
                String::new()
            } else {
                value.to_string()
            },
            if fault {
                String::new()
            } else {
                format!("{:.6}", lc_core::shift::Shift::from_raw_q40(q).to_ppm_f64())
            },
        ];
        let got = [
            row[2].to_string(),
            row[3].to_string(),
            raw_units(row[4]),
            row[5].to_string(),
        ];
        assert_eq!(got, want, "count pair of frame {seq}");
    }
    println!(
        "link end to end: {} readings streamed, {} recorded and converted bit for bit; \
         {bad} bad and {dropped} dropped frames counted as injected",
        fw.readings.len(),
        rows.len()
    );
    std::fs::remove_dir_all(&record).unwrap();
}
