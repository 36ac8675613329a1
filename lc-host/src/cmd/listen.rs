//! `lc-host listen`: a unit's live link, converted, shown and recorded.

use super::{count_u32, count_u64, load_image};
use anyhow::{bail, Context, Result};
use lc_host::link::listen::{
    run, status_text, Ended, Images, RecordOptions, SerialSettings, Session, Source, Summary,
};
use lc_host::store::Store;
use std::io::{IsTerminal, Write};
use std::path::PathBuf;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};

/// Listen to a unit's live link: convert, show and record its readings as they come
///
/// The unit streams link format 1 (docs/link.md: count pairs, its own readings, a hello
/// with its serial and image CRC) over a serial port, a TCP socket, or a recorded byte file
/// (replayed). Each count pair is converted through the unit's calibration image with the
/// firmware's own reader and compared with the unit's reading; the terminal shows the
/// latest per channel, the frame rate, bad and dropped frames and faults (one line a second
/// when the output is not a terminal). With --record, the raw bytes (`raw-*.lclink`, which
/// `lc-host listen FILE` replays) and field logs (`field-*.csv`, which `lc-host convert`
/// reads) are written in segments, rotated by size or time and at each new unit or unit
/// restart; a kill leaves whole rows, finished at the next start. A lost link is reopened.
/// Ctrl-C stops cleanly with a summary.
///
/// Not a safety-rated component: where a reading protects people or machines, follow the
/// applicable functional-safety standards, local codes and a qualified engineer's review.
///
/// Examples:
///
///   lc-host listen --serial /dev/ttyUSB0 --baud 115200 --db units.db --record rec/
///   lc-host listen --tcp 127.0.0.1:4000 --image DEMO-01-0001.lcim
///   lc-host listen rec/raw-1764763200-000.lclink --image DEMO-01-0001.lcim --json
///   lc-host convert rec/field-1764763200-000.csv --image DEMO-01-0001.lcim
#[derive(clap::Args)]
#[command(verbatim_doc_comment)]
#[command(group(clap::ArgGroup::new("source").required(true).args(["input", "serial", "tcp"])))]
pub struct Args {
    /// A recorded byte stream to replay (a `raw-*.lclink` of --record)
    input: Option<PathBuf>,
    /// Serial port of the unit (/dev/ttyUSB0, COM3)
    #[arg(long, value_name = "PORT")]
    serial: Option<String>,
    /// Baud rate of --serial, 50 to 4M
    #[arg(long, default_value = "115200", value_parser = count_u32::<50, 4_000_000>)]
    baud: u32,
    /// Parity of --serial
    #[arg(long, default_value = "none", value_parser = ["none", "even", "odd"])]
    parity: String,
    /// Data bits of --serial, 5 to 8
    #[arg(long, default_value = "8", value_parser = count_u32::<5, 8>)]
    data_bits: u32,
    /// Stop bits of --serial, 1 or 2
    #[arg(long, default_value = "1", value_parser = count_u32::<1, 2>)]
    stop_bits: u32,
    /// A TCP socket to connect to, HOST:PORT (a serial-to-network bridge, an emulator)
    #[arg(long, value_name = "HOST:PORT")]
    tcp: Option<String>,
    /// The calibration image to convert with, for every unit heard
    #[arg(long, value_name = "FILE", conflicts_with = "db")]
    image: Option<PathBuf>,
    /// Unit-record database (SQLite file or postgres:// URL): the image of the hello's
    /// serial whose CRC the unit reports
    #[arg(long, value_name = "DB")]
    db: Option<PathBuf>,
    /// Folder to record the raw stream and the field logs in
    #[arg(long, value_name = "DIR")]
    record: Option<PathBuf>,
    /// A recorded segment ends at this size, 4k to 1T bytes (SI prefixes)
    #[arg(long, default_value = "64M", value_parser = count_u64::<4_096, 1_000_000_000_000>)]
    rotate_size: u64,
    /// A recorded segment ends after this many seconds (1 to 1M)
    #[arg(long, value_name = "SECONDS", value_parser = count_u64::<1, 1_000_000>)]
    rotate_every: Option<u64>,
    /// End when the link closes instead of reopening it
    #[arg(long)]
    no_reconnect: bool,
    /// Stop after this many frames (1 to 1G)
    #[arg(long, value_name = "FRAMES", value_parser = count_u64::<1, 1_000_000_000>)]
    stop_after: Option<u64>,
    /// No live view; print the summary as JSON at the end
    #[arg(long)]
    json: bool,
}

pub fn run_cmd(a: Args) -> Result<()> {
    let source = if let Some(path) = a.serial {
        Source::Serial {
            path,
            settings: SerialSettings {
                baud: a.baud,
                data_bits: match a.data_bits {
                    5 => serialport::DataBits::Five,
                    6 => serialport::DataBits::Six,
                    7 => serialport::DataBits::Seven,
                    _ => serialport::DataBits::Eight,
                },
                parity: match a.parity.as_str() {
                    "even" => serialport::Parity::Even,
                    "odd" => serialport::Parity::Odd,
                    _ => serialport::Parity::None,
                },
                stop_bits: if a.stop_bits == 2 {
                    serialport::StopBits::Two
                } else {
                    serialport::StopBits::One
                },
            },
        }
    } else if let Some(addr) = a.tcp {
        Source::Tcp(addr)
    } else if let Some(path) = a.input {
        Source::Replay(path)
    } else {
        bail!("give a recorded file, --serial PORT or --tcp HOST:PORT");
    };
    let images = match (&a.image, &a.db) {
        (Some(path), _) => Images::Given(Box::new(load_image(path)?)),
        (None, Some(db)) => Images::Database(
            Store::open_read_only(db)
                .with_context(|| format!("cannot open the unit database {}", db.display()))?,
        ),
        (None, None) => Images::None,
    };
    if matches!(images, Images::None) {
        eprintln!("note: no --image or --db: count pairs are shown and recorded, not converted");
    }
    let record = a.record.map(|dir| RecordOptions {
        dir,
        rotate_bytes: a.rotate_size,
        rotate_after: a.rotate_every.map(Duration::from_secs),
    });
    let mut session = Session::new(images, record)?;
    let stop = Arc::new(AtomicBool::new(false));
    {
        let stop = Arc::clone(&stop);
        ctrlc::set_handler(move || stop.store(true, Ordering::Relaxed))
            .context("cannot catch Ctrl-C")?;
    }
    let live = !a.json && std::io::stdout().is_terminal();
    let lines = !a.json && !live;
    let mut view = View::new(live);
    let ended = run(
        &source,
        &mut session,
        &stop,
        !a.no_reconnect,
        a.stop_after,
        |s, link| {
            for n in s.take_notes() {
                eprintln!("note: {n}");
            }
            if live || lines {
                view.draw(s, link);
            }
        },
    );
    let summary = session.finish();
    if live {
        view.draw(&mut session, None);
    }
    for n in session.take_notes() {
        eprintln!("note: {n}");
    }
    let ended = ended?;
    let summary = summary?;
    let text = if a.json {
        format!("{}\n", serde_json::to_string_pretty(&summary)?)
    } else {
        summary_text(&summary, ended, &source)
    };
    // A reader that went away (a closed pipe) is no error of the session.
    match std::io::stdout().lock().write_all(text.as_bytes()) {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => {
            Err(e).context("cannot write the summary")
        }
        _ => Ok(()),
    }
}

fn summary_text(s: &Summary, ended: Ended, source: &Source) -> String {
    use std::fmt::Write as _;
    let mut out = String::new();
    let l = s.link;
    let rate = if s.seconds > 0.0 {
        l.frames as f64 / s.seconds
    } else {
        0.0
    };
    let _ = writeln!(
        out,
        "{} {}: {:.1} s, {} bytes, {} frames ({rate:.0}/s), {} bad, {} dropped, {} reconnects, {} restarts",
        source.name(),
        if ended == Ended::Stopped {
            "stopped"
        } else {
            "ended"
        },
        s.seconds,
        l.bytes,
        l.frames,
        l.bad,
        l.dropped,
        s.reconnects,
        s.restarts
    );
    let _ = writeln!(
        out,
        "units {}; {} count pairs, {} converted; {} unit readings ({} sensor faults): \
         host agrees on {}, differs on {}, {} without their count pair",
        if s.units.is_empty() {
            "none heard".to_string()
        } else {
            s.units.join(", ")
        },
        s.counts,
        s.converted,
        s.readings,
        s.faults,
        s.agree,
        s.disagree,
        s.unmatched
    );
    if s.ntc_codes > 0 {
        let _ = writeln!(
            out,
            "{} count pairs carried an NTC code: recorded without a temperature",
            s.ntc_codes
        );
    }
    for p in &s.field_logs {
        let _ = writeln!(out, "field log: {}", p.display());
    }
    for p in &s.raw {
        let _ = writeln!(out, "raw stream: {}", p.display());
    }
    let _ = writeln!(out, "Not a safety-rated component (see README, Cautions).");
    out
}

struct View {
    live: bool,
    last: Instant,
    last_frames: u64,
    rate: f64,
}

impl View {
    fn new(live: bool) -> Self {
        Self {
            live,
            last: Instant::now(),
            last_frames: 0,
            rate: 0.0,
        }
    }

    fn draw(&mut self, s: &mut Session, link: Option<&str>) {
        let sum = s.summary();
        let dt = self.last.elapsed().as_secs_f64();
        if !self.live && dt < 1.0 && link.is_none() {
            return;
        }
        if dt > 0.0 {
            self.rate = (sum.link.frames - self.last_frames) as f64 / dt;
        }
        self.last = Instant::now();
        self.last_frames = sum.link.frames;
        let unit = s
            .unit()
            .map_or("unit: not identified yet".into(), |(serial, crc, conv)| {
                format!(
                    "unit {serial}, image CRC {crc:08x}{}",
                    if conv {
                        ""
                    } else {
                        " (no image: not converted)"
                    }
                )
            });
        let head = format!(
            "{unit} | {:.0} frames/s | {} frames, {} bad, {} dropped | readings {}, faults {}, host differs {} | {}",
            self.rate,
            sum.link.frames,
            sum.link.bad,
            sum.link.dropped,
            sum.readings,
            sum.faults,
            sum.disagree,
            link.unwrap_or("connected")
        );
        let mut out = std::io::stdout().lock();
        if !self.live {
            let _ = writeln!(out, "{:.1} s: {head}", sum.seconds);
            return;
        }
        let mut text = String::from("\x1b[H\x1b[2J");
        text.push_str(&head);
        text.push_str("\n\n  ch       cycles        ticks    temp_c  ring | unit: status            value   secondary | host\n");
        for (ch, v) in s.channels() {
            let (cycles, ticks, temp, ring) = v.counts.map_or(
                (String::new(), String::new(), String::new(), String::new()),
                |c| {
                    (
                        c.pair.cycles.to_string(),
                        c.pair.ticks.to_string(),
                        match c.thermal {
                            lc_core::link::Thermal::Celsius(t) => format!("{:.2}", t.to_f64()),
                            lc_core::link::Thermal::NtcCode(k) => format!("ntc {k}"),
                            lc_core::link::Thermal::None => String::new(),
                        },
                        c.ring_count.map_or(String::new(), |r| r.to_string()),
                    )
                },
            );
            let (status, value, secondary) =
                v.unit
                    .map_or((String::new(), String::new(), String::new()), |r| {
                        (
                            status_text(r.status).to_string(),
                            r.value.to_string(),
                            r.secondary.map_or(String::new(), |x| x.to_string()),
                        )
                    });
            let host = match (v.unit, v.host) {
                (Some(u), Some(h)) if lc_host::link::listen::same_reading(&u, &h) => "same".into(),
                (_, Some(h)) => format!("{} {}", status_text(h.status()), h.output()),
                _ => String::new(),
            };
            text.push_str(&format!(
                "  {ch:>2} {cycles:>12} {ticks:>12} {temp:>9} {ring:>5} | {status:<23} {value:>11} {secondary:>11} | {host}\n"
            ));
        }
        if let Some(why) = s.last_bad() {
            text.push_str(&format!("\nlatest bad frame: {why}\n"));
        }
        text.push_str("\nCtrl-C stops. Not a safety-rated component.\n");
        let _ = out.write_all(text.as_bytes());
        let _ = out.flush();
    }
}
