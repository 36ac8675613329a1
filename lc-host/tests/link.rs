//! The live link's decoder against damaged and arbitrary streams, and
//! `lc-host listen` replaying, reconnecting and recording (docs/link.md).
//!
//! - [`damaged_streams`]: 10⁴ streams with bytes flipped, lost and
//!   inserted at random: every intact frame (docs/link.md, "Intact, bad
//!   and dropped frames") is recovered, nothing else is accepted, and the
//!   bad and dropped counts are exactly those the damage implies.
//! - [`arbitrary_input_never_panics`]: 10⁶ inputs (random bytes, and valid
//!   frames cut, spliced and mutated) through the decoder. It runs in the
//!   ordinary (debug) test build too; `cargo test --release -p lc-host
//!   --test link` is the fast run.
//! - the listener: a replayed recording converted and recorded, the field
//!   log `lc-host convert` reads giving the unit's readings; a TCP link
//!   that drops and comes back.

mod support;
use lc_core::counting::CountPair;
use lc_core::image::{Calibration, ReaderKind};
use lc_core::link::{Counts, Encoder, Hello, ReadingRecord, Record, Thermal};
use lc_core::reader::{Input, Reader, Status};
use lc_core::temperature::CentiCelsius;
use lc_host::link::{Decoder, Event};
use std::path::{Path, PathBuf};
use std::process::Command;
use support::raw_units;

/// SplitMix64: the tests' own seeded source of damage (its constants are
/// common practice; any fixed seeded generator would do).
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n as u64) as usize
    }
    fn byte(&mut self) -> u8 {
        self.next() as u8
    }
}

fn random_record(rng: &mut Rng) -> Record {
    match rng.below(3) {
        0 => Record::Hello(Hello::new(b"DEMO-01-0001", rng.next() as u32)),
        1 => Record::Counts(Counts {
            channel: rng.byte(),
            pair: CountPair::new(rng.next() as u32, rng.next() as u32),
            companion: (rng.below(2) == 0)
                .then(|| CountPair::new(rng.next() as u32, rng.next() as u32)),
            thermal: match rng.below(3) {
                0 => Thermal::None,
                1 => Thermal::Celsius(CentiCelsius(rng.next() as i32)),
                _ => Thermal::NtcCode(rng.next() as u32),
            },
            ring_count: (rng.below(2) == 0).then(|| rng.next() as u16),
        }),
        _ => Record::Reading(ReadingRecord {
            channel: rng.byte(),
            kind: ReaderKind::Proximity,
            status: if rng.below(2) == 0 {
                Status::Ok
            } else {
                Status::BelowRange
            },
            of_sequence: rng.next() as u16,
            value: rng.next() as i32,
            secondary: (rng.below(2) == 0).then(|| rng.next() as i32),
            curve_input_q40: rng.next() as i64,
        }),
    }
}

/// A stream of `n` frames: its bytes and each frame's byte range (the
/// stuffed bytes, without the delimiter that follows at `end`).
/// A frame of a test stream: sequence, record, start and end of its
/// stuffed bytes.
type Sent = (u16, Record, usize, usize);

fn stream(rng: &mut Rng, n: usize) -> (Vec<u8>, Vec<Sent>) {
    let mut enc = Encoder::new();
    let mut bytes = Vec::new();
    let mut frames = Vec::new();
    for i in 0..n {
        let mut record = if i == 0 {
            Record::Hello(Hello::new(b"DEMO-01-0001", 1))
        } else {
            random_record(rng)
        };
        let seq = enc.next_sequence();
        let f = enc.encode(&record);
        if let Record::Hello(h) = &mut record {
            h.start = i == 0;
        }
        let start = bytes.len();
        bytes.extend_from_slice(f.as_bytes());
        frames.push((seq, record, start, bytes.len() - 1));
    }
    (bytes, frames)
}

#[test]
fn damaged_streams() {
    let mut rng = Rng(0x5EED_0015);
    let (mut total_intact, mut total_bad, mut total_dropped, mut total_damaged) = (0, 0, 0, 0);
    for _ in 0..10_000 {
        let n = 30 + rng.below(30);
        let (clean, frames) = stream(&mut rng, n);
        // Each byte with its origin: Some(index in the clean stream), or
        // None for an inserted or flipped byte.
        let mut bytes: Vec<(u8, Option<usize>)> = clean
            .iter()
            .enumerate()
            .map(|(i, &b)| (b, Some(i)))
            .collect();
        for _ in 0..1 + rng.below(6) {
            let at = rng.below(bytes.len() + 1);
            match rng.below(3) {
                0 if at < bytes.len() => {
                    let x = 1 + rng.below(255) as u8;
                    bytes[at] = (bytes[at].0 ^ x, None);
                }
                1 if at < bytes.len() => {
                    bytes.remove(at);
                }
                _ => bytes.insert(at, (rng.byte(), None)),
            }
        }
        let damaged: Vec<u8> = bytes.iter().map(|b| b.0).collect();
        // Expected: split at zero bytes; a chunk is an intact frame when
        // its bytes are exactly one frame's stuffed bytes, in order,
        // unchanged (docs/link.md, "Intact, bad and dropped frames").
        let mut intact = Vec::new();
        let mut bad = 0u64;
        let mut start = 0;
        let by_start: std::collections::HashMap<usize, usize> =
            frames.iter().enumerate().map(|(k, f)| (f.2, k)).collect();
        for (i, b) in bytes.iter().enumerate() {
            if b.0 != 0 {
                continue;
            }
            let chunk = &bytes[start..i];
            start = i + 1;
            if chunk.is_empty() {
                continue;
            }
            let whole = chunk[0].1.and_then(|first| {
                let k = *by_start.get(&first)?;
                let (_, _, s, e) = frames[k];
                (chunk.len() == e - s && chunk.iter().enumerate().all(|(j, c)| c.1 == Some(s + j)))
                    .then_some(k)
            });
            match whole {
                Some(k) => intact.push(k),
                None => bad += 1,
            }
        }
        if start < bytes.len() {
            bad += 1; // unfinished at the end
        }
        let dropped: u64 = intact.windows(2).map(|w| (w[1] - w[0] - 1) as u64).sum();

        let mut dec = Decoder::new();
        let mut accepted = Vec::new();
        // In pieces, as a port delivers them.
        for piece in damaged.chunks(1 + rng.below(40)) {
            dec.push(piece, |e| {
                if let Event::Frame {
                    sequence, record, ..
                } = e
                {
                    accepted.push((sequence, record));
                }
            });
        }
        dec.finish(|_| {});
        let want: Vec<(u16, Record)> = intact.iter().map(|&k| (frames[k].0, frames[k].1)).collect();
        assert_eq!(accepted, want, "accepted frames are the intact ones");
        let s = dec.stats();
        assert_eq!((s.bad, s.dropped), (bad, dropped));
        total_intact += intact.len();
        total_bad += bad;
        total_dropped += dropped;
        total_damaged += frames.len() - intact.len();
    }
    println!(
        "10 000 damaged streams: {total_intact} intact frames recovered, {total_damaged} \
         damaged or lost, {total_bad} bad chunks, {total_dropped} dropped"
    );
    assert!(total_bad > 10_000 && total_dropped > 10_000);
}

#[test]
fn arbitrary_input_never_panics() {
    let mut rng = Rng(42);
    let (clean, _) = stream(&mut rng, 64);
    let mut dec = Decoder::new();
    let mut buf = Vec::with_capacity(256);
    let mut events = 0u64;
    for i in 0..1_000_000u32 {
        buf.clear();
        match i % 4 {
            // Random bytes, zeros kept rare so that chunks are long.
            0 => buf.extend((0..rng.below(80)).map(|_| {
                let b = rng.byte();
                if b < 8 {
                    0
                } else {
                    b
                }
            })),
            // A slice of a valid stream.
            1 => {
                let a = rng.below(clean.len());
                let b = (a + rng.below(120)).min(clean.len());
                buf.extend_from_slice(&clean[a..b]);
            }
            // A valid slice with a few bytes mutated.
            _ => {
                let a = rng.below(clean.len());
                let b = (a + rng.below(120)).min(clean.len());
                buf.extend_from_slice(&clean[a..b]);
                for _ in 0..1 + rng.below(3) {
                    if !buf.is_empty() {
                        let k = rng.below(buf.len());
                        buf[k] = rng.byte();
                    }
                }
            }
        }
        dec.push(&buf, |_| events += 1);
        if i % 1000 == 0 {
            dec.finish(|_| events += 1);
        }
    }
    let s = dec.stats();
    assert_eq!(s.frames + s.bad, events);
    println!("10^6 inputs: {s:?}");
}

fn demo_image() -> (PathBuf, Calibration) {
    let path =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/firmware/data/demo-proximity.lcim");
    let cal = Calibration::parse(&std::fs::read(&path).unwrap()).unwrap();
    (path, cal)
}

/// What a proximity unit on two channels streams: hello, then per gate the
/// count pair and its reading, one count pair in 40 a dead oscillator.
fn unit_stream(n: u32) -> (Vec<u8>, Vec<ReadingRecord>) {
    unit_stream_of(&demo_image().1, n)
}

fn unit_stream_of(cal: &Calibration, n: u32) -> (Vec<u8>, Vec<ReadingRecord>) {
    let buf = cal.to_image_buf().unwrap();
    let image = buf.image().unwrap();
    let mut readers = [Reader::new(&image).unwrap(), Reader::new(&image).unwrap()];
    let mut enc = Encoder::new();
    let mut wire = Vec::new();
    let hello = Hello::new(cal.serial.as_str().as_bytes(), image.crc());
    let mut readings = Vec::new();
    for i in 0..n {
        if i % 64 == 0 {
            wire.extend_from_slice(enc.encode(&Record::Hello(hello)).as_bytes());
        }
        let ch = (i % 2) as u8;
        let ticks = if i % 40 == 39 {
            0
        } else {
            124_000 + (i * 37) % 15_000
        };
        let input = Input {
            temperature: Some(CentiCelsius(2_500 + (i % 300) as i32 - 150)),
            ..Input::counts(CountPair::new(16_384, ticks))
        };
        let c = Counts::of_input(ch, &input);
        let seq = enc.next_sequence();
        wire.extend_from_slice(enc.encode(&Record::Counts(c)).as_bytes());
        let r = readers[usize::from(ch)].read(&input);
        let rec = ReadingRecord::of_reading(ch, seq, &r);
        readings.push(rec);
        wire.extend_from_slice(enc.encode(&Record::Reading(rec)).as_bytes());
    }
    (wire, readings)
}

fn lc_host() -> Command {
    Command::new(env!("CARGO_BIN_EXE_lc-host"))
}

fn temp_dir(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("lc-link-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Every (channel, status, value) row of `lc-host convert`'s output.
fn converted(field_log: &Path, image: &Path) -> Vec<(u8, String, String)> {
    let out = lc_host()
        .args(["convert"])
        .arg(field_log)
        .arg("--image")
        .arg(image)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout)
        .unwrap()
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("line,"))
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            (f[2].parse().unwrap(), f[3].to_string(), raw_units(f[4]))
        })
        .collect()
}

fn expected_rows(readings: &[ReadingRecord]) -> Vec<(u8, String, String)> {
    readings
        .iter()
        .map(|r| {
            let fault = matches!(r.status, Status::SensorFault(_));
            (
                r.channel,
                lc_host::link::listen::status_text(r.status).to_string(),
                if fault {
                    String::new()
                } else {
                    r.value.to_string()
                },
            )
        })
        .collect()
}

#[test]
fn a_replayed_recording_converts_to_the_units_readings() {
    let dir = temp_dir("replay");
    let (mut wire, readings) = unit_stream(500);
    // A corrupted frame (a count pair's byte) and a lost one.
    let k = (2_000..)
        .find(|&k| wire[k] != 0 && wire[k] != 0x40)
        .unwrap();
    wire[k] ^= 0x40;
    let (image, _) = demo_image();
    let rec = dir.join("rec.lclink");
    std::fs::write(&rec, &wire).unwrap();
    let out = lc_host()
        .arg("listen")
        .arg(&rec)
        .arg("--image")
        .arg(&image)
        .arg("--record")
        .arg(dir.join("out"))
        .arg("--json")
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let summary: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(summary["link"]["bad"], 1);
    assert_eq!(summary["link"]["dropped"], 1);
    assert_eq!(
        summary["readings"].as_u64().unwrap() + summary["counts"].as_u64().unwrap(),
        999
    );
    assert_eq!(summary["disagree"], 0);
    let fields = summary["field_logs"].as_array().unwrap();
    assert_eq!(fields.len(), 1);
    let rows = converted(Path::new(fields[0].as_str().unwrap()), &image);
    // The lost frame's reading is not in the field log: compare the rest.
    let lost: Vec<_> = summary["unmatched"].as_u64().into_iter().collect();
    let want = expected_rows(&readings);
    if lost == [1] {
        assert_eq!(rows.len(), want.len() - 1);
        let k = rows.iter().zip(&want).position(|(a, b)| a != b).unwrap();
        assert_eq!(rows[..k], want[..k]);
        assert_eq!(rows[k..], want[k + 1..]);
    } else {
        // The damaged frame was a reading: every count pair is there.
        assert_eq!(rows, want);
    }
    // The raw recording is the stream, byte for byte.
    let raw = summary["raw"].as_array().unwrap();
    assert_eq!(std::fs::read(raw[0].as_str().unwrap()).unwrap(), wire);
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn a_tcp_link_that_drops_is_reopened() {
    use std::io::Write;
    let (wire, readings) = unit_stream(200);
    let server = std::net::TcpListener::bind("127.0.0.1:0").unwrap();
    let addr = server.local_addr().unwrap();
    let half = wire.len() / 2;
    let cut = half + wire[half..].iter().position(|&b| b == 0).unwrap() + 1;
    let (a, b) = (wire[..cut].to_vec(), wire[cut..].to_vec());
    let t = std::thread::spawn(move || {
        for part in [a, b] {
            let (mut s, _) = server.accept().unwrap();
            s.write_all(&part).unwrap();
            // Closing the socket: the listener sees the link end.
        }
    });
    let (image, _) = demo_image();
    let out = lc_host()
        .arg("listen")
        .arg("--tcp")
        .arg(addr.to_string())
        .arg("--image")
        .arg(&image)
        .arg("--stop-after")
        .arg((readings.len() * 2 + 4).to_string())
        .arg("--json")
        .output()
        .unwrap();
    t.join().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let s: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(s["reconnects"], 1);
    assert_eq!(s["readings"].as_u64().unwrap(), readings.len() as u64);
    assert_eq!(s["agree"].as_u64().unwrap(), readings.len() as u64);
    assert_eq!(
        (s["link"]["bad"].as_u64(), s["link"]["dropped"].as_u64()),
        (Some(0), Some(0))
    );
}

#[test]
fn the_image_comes_from_the_unit_database_by_serial_and_crc() {
    let dir = temp_dir("db");
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    let run = |args: &[&std::ffi::OsStr]| {
        let out = lc_host().current_dir(&root).args(args).output().unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        out.stdout
    };
    let (rig, db, images) = (
        dir.join("rig.csv"),
        dir.join("units.db"),
        dir.join("images"),
    );
    run(&[
        "simulate".as_ref(),
        "rig".as_ref(),
        "--lot".as_ref(),
        "DEMO-01".as_ref(),
        "--units".as_ref(),
        "1".as_ref(),
        "--seed".as_ref(),
        "1".as_ref(),
        "-o".as_ref(),
        rig.as_os_str(),
    ]);
    // calibrate's exit status says whether every unit passed; the image is
    // what matters here.
    let _ = lc_host()
        .current_dir(&root)
        .arg("calibrate")
        .arg(&rig)
        .args([
            "--plan",
            "examples/data/demo-plan.toml",
            "--lot",
            "DEMO-01",
            "--db",
        ])
        .arg(&db)
        .arg("--images")
        .arg(&images)
        .output()
        .unwrap();
    let cal =
        Calibration::parse(&std::fs::read(images.join("DEMO-01-0001.lcim")).unwrap()).unwrap();
    let (wire, readings) = unit_stream_of(&cal, 100);
    let rec = dir.join("rec.lclink");
    std::fs::write(&rec, &wire).unwrap();
    let s: serde_json::Value = serde_json::from_slice(&run(&[
        "listen".as_ref(),
        rec.as_os_str(),
        "--db".as_ref(),
        db.as_os_str(),
        "--json".as_ref(),
    ]))
    .unwrap();
    assert_eq!(s["units"][0], "DEMO-01-0001");
    assert_eq!(s["agree"].as_u64(), Some(readings.len() as u64));
    // A stream whose hello names an image the database does not hold is
    // recorded, not converted.
    let mut other = cal;
    other.serial = demo_image().1.serial;
    let (wire, _) = unit_stream_of(&other, 10);
    std::fs::write(&rec, &wire).unwrap();
    let s: serde_json::Value = serde_json::from_slice(&run(&[
        "listen".as_ref(),
        rec.as_os_str(),
        "--db".as_ref(),
        db.as_os_str(),
        "--json".as_ref(),
    ]))
    .unwrap();
    assert_eq!(
        (s["converted"].as_u64(), s["unmatched"].as_u64()),
        (Some(0), Some(10))
    );
    std::fs::remove_dir_all(&dir).unwrap();
}
