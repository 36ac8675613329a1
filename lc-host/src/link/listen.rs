//! The listener behind `lc-host listen`: bytes from a serial port, a TCP
//! socket or a recorded file go through the [`Decoder`]; count pairs are
//! converted live through the unit's calibration image (the reader of
//! lc-core, as `lc-host convert` and the unit itself run it) and compared
//! with the unit's own readings; the raw bytes and a field log that
//! `lc-host convert` reads are recorded.
//!
//! Recording (docs/link.md, "Recording"): segments are written under a
//! `.NAME.PID.part` name and renamed to `NAME` when they end (rotation by
//! size or time, a new unit or a unit's restart, the end of the session).
//! Every write to a field-log segment is whole lines, so a killed listener
//! leaves whole rows; [`recover_segments`] (run at every start) cuts a
//! segment of a listener that is gone after its last whole line and gives
//! it its final name.
//!
//! Images: converting needs a reader per channel built from a validated
//! image; the images are kept by CRC for the whole session (about 4 KiB
//! each, [`crate::host_image`]), so a unit that restarts or comes back
//! gets fresh readers over the image already held.

use super::{Decoder, Event, LinkStats};
use crate::convert::status_name;
use crate::store::{Filter, Store};
use lc_core::image::{Calibration, Image};
use lc_core::link::{status_code, Counts, Hello, ReadingRecord, Record, Thermal};
use lc_core::reader::{Reader, Reading, Status};
use std::collections::{BTreeMap, HashMap, VecDeque};
use std::fs::File;
use std::io::{Read, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant, SystemTime};

/// The field log's header (docs/formats.md, "Field log").
pub const FIELD_HEADER: &str =
    "time_s,channel,cycles,ticks,temp_c,ring_count,comp_cycles,comp_ticks";

/// Errors of the listener: what failed and what to do.
#[derive(Debug, thiserror::Error)]
pub enum ListenError {
    /// The source could not be opened.
    #[error("{source_name}: cannot open: {message}")]
    Open {
        /// The port, address or file.
        source_name: String,
        /// Why, and what to do.
        message: String,
    },
    /// A recording file failed.
    #[error(
        "{path}: {action}: {source}; check the folder given with --record (space, permissions)"
    )]
    Record {
        /// The file.
        path: PathBuf,
        /// What was being done.
        action: &'static str,
        /// The cause.
        source: std::io::Error,
    },
    /// The unit database failed.
    #[error("unit database: {0}")]
    Store(#[from] crate::store::StoreError),
}

/// Serial-port settings.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct SerialSettings {
    /// Baud rate.
    pub baud: u32,
    /// Data bits, 5–8.
    pub data_bits: serialport::DataBits,
    /// Parity.
    pub parity: serialport::Parity,
    /// Stop bits.
    pub stop_bits: serialport::StopBits,
}

/// Where the bytes come from.
#[derive(Clone, Debug)]
pub enum Source {
    /// A serial port (`/dev/ttyUSB0`, `COM3`).
    Serial {
        /// The port.
        path: String,
        /// Its settings.
        settings: SerialSettings,
    },
    /// A TCP socket to connect to (`host:port`).
    Tcp(String),
    /// A recorded byte stream, replayed as fast as it decodes.
    Replay(PathBuf),
}

impl Source {
    /// The source's name, for messages.
    pub fn name(&self) -> String {
        match self {
            Source::Serial { path, .. } => path.clone(),
            Source::Tcp(a) => format!("tcp {a}"),
            Source::Replay(p) => p.display().to_string(),
        }
    }

    /// Whether the source is a live link (it may come back after an end).
    pub fn is_live(&self) -> bool {
        !matches!(self, Source::Replay(_))
    }

    fn open(&self) -> Result<Box<dyn Read + Send>, ListenError> {
        let fail = |message: String| ListenError::Open {
            source_name: self.name(),
            message,
        };
        match self {
            Source::Serial { path, settings } => serialport::new(path, settings.baud)
                .data_bits(settings.data_bits)
                .parity(settings.parity)
                .stop_bits(settings.stop_bits)
                .flow_control(serialport::FlowControl::None)
                .timeout(Duration::from_millis(100))
                .open()
                .map(|p| Box::new(p) as Box<dyn Read + Send>)
                .map_err(|e| {
                    fail(format!(
                        "{e}; check the port name (ls /dev/ttyUSB* /dev/ttyACM*) and that \
                         you may open it (the dialout group)"
                    ))
                }),
            Source::Tcp(addr) => {
                use std::net::ToSocketAddrs;
                let addrs: Vec<_> = addr
                    .to_socket_addrs()
                    .map_err(|e| fail(format!("{e}; give HOST:PORT")))?
                    .collect();
                let mut last = None;
                for a in addrs {
                    match std::net::TcpStream::connect_timeout(&a, Duration::from_secs(2)) {
                        Ok(s) => {
                            s.set_read_timeout(Some(Duration::from_millis(100)))
                                .map_err(|e| fail(e.to_string()))?;
                            return Ok(Box::new(s));
                        }
                        Err(e) => last = Some(e),
                    }
                }
                Err(fail(last.map_or_else(
                    || "the name resolves to no address".to_string(),
                    |e| format!("{e}; is the unit's bridge listening on that port?"),
                )))
            }
            Source::Replay(path) => File::open(path)
                .map(|f| Box::new(f) as Box<dyn Read + Send>)
                .map_err(|e| fail(format!("{e}; give a file recorded by `lc-host listen`"))),
        }
    }
}

/// Where the images come from.
pub enum Images {
    /// One image for every unit heard (`--image`).
    Given(Box<Calibration>),
    /// The unit database (`--db`): the image of the hello's serial whose
    /// CRC is the hello's.
    Database(Store),
    /// None: nothing is converted, the stream is still recorded.
    None,
}

/// The latest of one channel, for the live view.
#[derive(Clone, Copy, Debug, Default)]
pub struct ChannelView {
    /// Its latest count pair.
    pub counts: Option<Counts>,
    /// The unit's latest reading.
    pub unit: Option<ReadingRecord>,
    /// The host's latest conversion.
    pub host: Option<Reading>,
    /// Readings of the unit received.
    pub readings: u64,
    /// Of them, with a sensor fault.
    pub faults: u64,
}

/// The session's counts (`--json` prints them at the end).
#[derive(Clone, Debug, Default, serde::Serialize)]
pub struct Summary {
    /// What the decoder counted.
    pub link: LinkStats,
    /// Hello frames.
    pub hellos: u64,
    /// Count-pair frames.
    pub counts: u64,
    /// Reading frames (the unit's own readings).
    pub readings: u64,
    /// Of them, with a sensor fault status.
    pub faults: u64,
    /// Count pairs converted on the host.
    pub converted: u64,
    /// Unit readings equal to the host's conversion of their count pair
    /// (status, value, secondary value and curve input).
    pub agree: u64,
    /// Unit readings that differ from the host's conversion.
    pub disagree: u64,
    /// Unit readings whose count pair was not received or not converted.
    pub unmatched: u64,
    /// Count pairs with an NTC code instead of a temperature: recorded
    /// and converted without a temperature.
    pub ntc_codes: u64,
    /// Times the link was reopened.
    pub reconnects: u64,
    /// Start hellos of the unit already talking (it restarted).
    pub restarts: u64,
    /// Units heard (serials, in order of first hello).
    pub units: Vec<String>,
    /// Field-log segments finished.
    pub field_logs: Vec<PathBuf>,
    /// Raw stream segments finished.
    pub raw: Vec<PathBuf>,
    /// Seconds listened.
    pub seconds: f64,
}

/// The unit currently talking, with its readers.
struct Unit {
    hello: Hello,
    image: Option<Image<'static>>,
    readers: BTreeMap<u8, Reader<'static>>,
}

/// Recording options.
#[derive(Clone, Debug)]
pub struct RecordOptions {
    /// The folder.
    pub dir: PathBuf,
    /// A segment ends at this many bytes.
    pub rotate_bytes: u64,
    /// A segment ends after this long, if given.
    pub rotate_after: Option<Duration>,
}

struct Segment {
    part: PathBuf,
    done: PathBuf,
    file: File,
    bytes: u64,
    opened: Instant,
}

impl Segment {
    fn open(dir: &Path, stem: &str, ext: &str) -> Result<Self, ListenError> {
        let stamp = SystemTime::now()
            .duration_since(SystemTime::UNIX_EPOCH)
            .map_or(0, |d| d.as_secs());
        let mut n = 0u32;
        loop {
            let name = format!("{stem}-{stamp}-{n:03}.{ext}");
            let done = dir.join(&name);
            let part = dir.join(format!(".{name}.{}.part", std::process::id()));
            if !done.exists() && !part.exists() {
                let file = File::create(&part).map_err(|source| ListenError::Record {
                    path: part.clone(),
                    action: "cannot create",
                    source,
                })?;
                return Ok(Self {
                    part,
                    done,
                    file,
                    bytes: 0,
                    opened: Instant::now(),
                });
            }
            n += 1;
        }
    }

    fn write(&mut self, bytes: &[u8]) -> Result<(), ListenError> {
        self.file
            .write_all(bytes)
            .map_err(|source| ListenError::Record {
                path: self.part.clone(),
                action: "cannot write",
                source,
            })?;
        self.bytes += bytes.len() as u64;
        Ok(())
    }

    fn close(self) -> Result<PathBuf, ListenError> {
        let err = |action| {
            let path = self.part.clone();
            move |source| ListenError::Record {
                path,
                action,
                source,
            }
        };
        self.file.sync_all().map_err(err("cannot sync"))?;
        std::fs::rename(&self.part, &self.done).map_err(err("cannot rename into place"))?;
        Ok(self.done)
    }

    fn due(&self, opts: &RecordOptions) -> bool {
        self.bytes >= opts.rotate_bytes
            || opts
                .rotate_after
                .is_some_and(|after| self.opened.elapsed() >= after)
    }
}

/// Finishes the segments that listeners which are gone left in `dir`: a
/// field log (`.csv`) is cut after its last whole line, then each gets its
/// final name. Returns the files finished.
///
/// # Errors
/// The folder cannot be listed, or a file cannot be cut or renamed.
pub fn recover_segments(dir: &Path) -> std::io::Result<Vec<PathBuf>> {
    let mut done = Vec::new();
    for entry in std::fs::read_dir(dir)? {
        let entry = entry?;
        let file = entry.file_name();
        let Some(file) = file.to_str() else { continue };
        let Some((name, pid)) = file
            .strip_prefix('.')
            .and_then(|n| n.strip_suffix(".part"))
            .and_then(|n| n.rsplit_once('.'))
            .and_then(|(name, pid)| Some((name, pid.parse::<u32>().ok()?)))
        else {
            continue;
        };
        let alive = pid == std::process::id()
            || (Path::new("/proc/self").exists()
                && Path::new("/proc").join(pid.to_string()).exists());
        if alive {
            continue;
        }
        let path = entry.path();
        if name.ends_with(".csv") {
            let bytes = std::fs::read(&path)?;
            let whole = bytes.iter().rposition(|&b| b == b'\n').map_or(0, |k| k + 1);
            if whole < bytes.len() {
                let f = std::fs::OpenOptions::new().write(true).open(&path)?;
                f.set_len(whole as u64)?;
                f.sync_all()?;
            }
        }
        let target = dir.join(name);
        if target.exists() {
            continue;
        }
        std::fs::rename(&path, &target)?;
        done.push(target);
    }
    done.sort();
    Ok(done)
}

struct Recorder {
    opts: RecordOptions,
    field: Option<Segment>,
    raw: Option<Segment>,
    /// The comment line naming the unit, for each new field-log segment.
    unit_line: String,
}

impl Recorder {
    fn raw(&mut self, bytes: &[u8], summary: &mut Summary) -> Result<(), ListenError> {
        if self.raw.as_ref().is_some_and(|s| s.due(&self.opts)) {
            if let Some(s) = self.raw.take() {
                summary.raw.push(s.close()?);
            }
        }
        if self.raw.is_none() {
            self.raw = Some(Segment::open(&self.opts.dir, "raw", "lclink")?);
        }
        match &mut self.raw {
            Some(s) => s.write(bytes),
            None => Ok(()),
        }
    }

    fn rows(&mut self, rows: &[u8], summary: &mut Summary) -> Result<(), ListenError> {
        if rows.is_empty() {
            return Ok(());
        }
        if self.field.as_ref().is_some_and(|s| s.due(&self.opts)) {
            self.end_field(summary)?;
        }
        if self.field.is_none() {
            let mut s = Segment::open(&self.opts.dir, "field", "csv")?;
            let mut head = format!("# lc-host listen: {}\n{FIELD_HEADER}\n", self.unit_line);
            head.push_str(std::str::from_utf8(rows).unwrap_or_default());
            // Header and first rows in one write: a segment is never
            // without its header.
            s.write(head.as_bytes())?;
            self.field = Some(s);
            return Ok(());
        }
        match &mut self.field {
            Some(s) => s.write(rows),
            None => Ok(()),
        }
    }

    fn end_field(&mut self, summary: &mut Summary) -> Result<(), ListenError> {
        if let Some(s) = self.field.take() {
            summary.field_logs.push(s.close()?);
        }
        Ok(())
    }

    fn close(&mut self, summary: &mut Summary) -> Result<(), ListenError> {
        self.end_field(summary)?;
        if let Some(s) = self.raw.take() {
            summary.raw.push(s.close()?);
        }
        Ok(())
    }
}

/// A listening session: decoder, unit, readers, recorder and counts.
pub struct Session {
    decoder: Decoder,
    images: Images,
    /// Validated images by their CRC, kept for the session.
    cache: HashMap<u32, Image<'static>>,
    unit: Option<Unit>,
    recorder: Option<Recorder>,
    channels: BTreeMap<u8, ChannelView>,
    /// Host conversions by the sequence number of their count pair,
    /// awaiting the unit's reading (the latest 256).
    pending: VecDeque<(u16, u8, Reading)>,
    summary: Summary,
    started: Instant,
    /// Messages for the user (unit changes, image problems), taken by
    /// [`Session::take_notes`].
    notes: Vec<String>,
    last_bad: Option<lc_core::link::FrameError>,
    rows: Vec<u8>,
}

impl Session {
    /// A session converting through `images`, recording when `record` is
    /// given (segments left by killed listeners in its folder are finished
    /// first; they are listed in the notes).
    ///
    /// # Errors
    /// The recording folder cannot be made or listed.
    pub fn new(images: Images, record: Option<RecordOptions>) -> Result<Self, ListenError> {
        let mut notes = Vec::new();
        if let Some(r) = &record {
            let err = |source| ListenError::Record {
                path: r.dir.clone(),
                action: "cannot use the recording folder",
                source,
            };
            std::fs::create_dir_all(&r.dir).map_err(err)?;
            for p in recover_segments(&r.dir).map_err(err)? {
                notes.push(format!(
                    "{}: finished a segment a stopped listener left",
                    p.display()
                ));
            }
        }
        Ok(Self {
            decoder: Decoder::new(),
            images,
            cache: HashMap::new(),
            unit: None,
            recorder: record.map(|opts| Recorder {
                opts,
                field: None,
                raw: None,
                unit_line: "unit not yet identified".into(),
            }),
            channels: BTreeMap::new(),
            pending: VecDeque::new(),
            summary: Summary::default(),
            started: Instant::now(),
            notes,
            last_bad: None,
            rows: Vec::new(),
        })
    }

    /// The counts so far.
    pub fn summary(&self) -> Summary {
        let mut s = self.summary.clone();
        s.link = self.decoder.stats();
        s.seconds = self.started.elapsed().as_secs_f64();
        s
    }

    /// The latest per channel.
    pub fn channels(&self) -> &BTreeMap<u8, ChannelView> {
        &self.channels
    }

    /// The unit talking: serial and image CRC.
    pub fn unit(&self) -> Option<(String, u32, bool)> {
        self.unit.as_ref().map(|u| {
            (
                u.hello.serial_str().unwrap_or("?").to_string(),
                u.hello.image_crc,
                u.image.is_some(),
            )
        })
    }

    /// Why the latest bad frame was bad.
    pub fn last_bad(&self) -> Option<lc_core::link::FrameError> {
        self.last_bad
    }

    /// Messages since the last call.
    pub fn take_notes(&mut self) -> Vec<String> {
        std::mem::take(&mut self.notes)
    }

    /// Feeds received bytes: records them, decodes, converts, records the
    /// field-log rows.
    ///
    /// # Errors
    /// A recording file failed.
    pub fn feed(&mut self, bytes: &[u8]) -> Result<(), ListenError> {
        if let Some(r) = &mut self.recorder {
            r.raw(bytes, &mut self.summary)?;
        }
        let mut events = Vec::new();
        self.decoder.push(bytes, |e| events.push(e));
        self.handle(events)
    }

    fn handle(&mut self, events: Vec<Event>) -> Result<(), ListenError> {
        for e in events {
            match e {
                Event::Bad(why) => self.last_bad = Some(why),
                Event::Frame {
                    sequence, record, ..
                } => match record {
                    Record::Hello(h) => self.hello(h)?,
                    Record::Counts(c) => self.counts(sequence, c),
                    Record::Reading(r) => self.reading(r),
                },
            }
        }
        let rows = std::mem::take(&mut self.rows);
        if let Some(r) = &mut self.recorder {
            r.rows(&rows, &mut self.summary)?;
        }
        self.rows = rows;
        self.rows.clear();
        Ok(())
    }

    /// The link was lost and is open again.
    pub fn reconnected(&mut self) {
        self.decoder.reconnected();
        self.summary.reconnects += 1;
    }

    /// Ends the session: an unfinished chunk counts as bad, recordings
    /// get their final names.
    ///
    /// # Errors
    /// A recording file failed.
    pub fn finish(&mut self) -> Result<Summary, ListenError> {
        self.decoder.finish(|_| {});
        if let Some(r) = &mut self.recorder {
            r.close(&mut self.summary)?;
        }
        Ok(self.summary())
    }

    fn hello(&mut self, h: Hello) -> Result<(), ListenError> {
        self.summary.hellos += 1;
        let same = self
            .unit
            .as_ref()
            .is_some_and(|u| u.hello.serial == h.serial && u.hello.image_crc == h.image_crc);
        if same && !h.start {
            return Ok(());
        }
        let serial = h.serial_str().unwrap_or("?").to_string();
        if !self.summary.units.contains(&serial) {
            self.summary.units.push(serial.clone());
        }
        let image = self.image_for(&serial, h.image_crc)?;
        if same {
            // The same unit, restarted: counted, not noted each time.
            self.summary.restarts += 1;
        } else {
            self.notes.push(format!(
                "unit {serial} (image CRC {:08x}){}{}",
                h.image_crc,
                if h.start { ", started" } else { "" },
                if image.is_some() {
                    ""
                } else {
                    ": no image, count pairs are recorded but not converted"
                }
            ));
        }
        // A new unit or a restarted one: new readers, a new field-log
        // segment (a segment is one run of one unit, as `convert` reads it).
        self.unit = Some(Unit {
            hello: h,
            image,
            readers: BTreeMap::new(),
        });
        self.pending.clear();
        // Rows already decoded in this batch belong to the previous run.
        let rows = std::mem::take(&mut self.rows);
        if let Some(r) = &mut self.recorder {
            r.rows(&rows, &mut self.summary)?;
            r.end_field(&mut self.summary)?;
            r.unit_line = format!(
                "unit {serial}, image CRC {:08x}, link format {}",
                h.image_crc,
                lc_core::link::FORMAT_VERSION
            );
        }
        Ok(())
    }

    fn image_for(&mut self, serial: &str, crc: u32) -> Result<Option<Image<'static>>, ListenError> {
        if let Some(image) = self.cache.get(&crc) {
            return Ok(Some(*image));
        }
        let cal = match &self.images {
            Images::None => return Ok(None),
            Images::Given(cal) => {
                let cal = **cal;
                let image = crate::host_image(&cal).ok();
                if let Some(image) = image {
                    self.cache.insert(crc, image);
                }
                if let Some(image) = image {
                    if image.crc() != crc {
                        self.notes.push(format!(
                            "unit {serial} reports image CRC {crc:08x}, --image has {:08x}: \
                             converting with --image as asked; readings may differ from the unit's",
                            image.crc()
                        ));
                    }
                }
                return Ok(image);
            }
            Images::Database(store) => {
                let attempts = store.attempts(&Filter::default().serial(serial))?;
                let mut found = None;
                for a in attempts.iter().rev() {
                    let Some(bytes) = store.image(serial, Some(a.attempt))? else {
                        continue;
                    };
                    let stored = bytes
                        .len()
                        .checked_sub(4)
                        .and_then(|at| bytes.get(at..))
                        .and_then(|b| <[u8; 4]>::try_from(b).ok())
                        .map(u32::from_le_bytes);
                    if stored == Some(crc) {
                        found = Calibration::parse(&bytes).ok();
                        break;
                    }
                }
                match found {
                    Some(cal) => cal,
                    None => {
                        self.notes.push(format!(
                            "unit {serial}: the database has no image with CRC {crc:08x}; \
                             give the unit's image with --image, or record it with `lc-host calibrate`"
                        ));
                        return Ok(None);
                    }
                }
            }
        };
        let image = crate::host_image(&cal).ok();
        if let Some(image) = image {
            self.cache.insert(crc, image);
        }
        Ok(image)
    }

    fn counts(&mut self, sequence: u16, c: Counts) {
        self.summary.counts += 1;
        if matches!(c.thermal, Thermal::NtcCode(_)) {
            self.summary.ntc_codes += 1;
        }
        let view = self.channels.entry(c.channel).or_default();
        view.counts = Some(c);
        if let Some(unit) = &mut self.unit {
            if let Some(image) = &unit.image {
                let reader = match unit.readers.entry(c.channel) {
                    std::collections::btree_map::Entry::Occupied(o) => Some(o.into_mut()),
                    std::collections::btree_map::Entry::Vacant(v) => {
                        Reader::new(image).ok().map(|r| v.insert(r))
                    }
                };
                if let Some(reader) = reader {
                    let reading = reader.read(&c.input());
                    view.host = Some(reading);
                    self.summary.converted += 1;
                    if self.pending.len() == 256 {
                        self.pending.pop_front();
                    }
                    self.pending.push_back((sequence, c.channel, reading));
                }
            }
        }
        // The field-log row: the time received, then the record's fields.
        let t = self.started.elapsed().as_secs_f64();
        let mut row = format!("{t:.3},{},{},{},", c.channel, c.pair.cycles, c.pair.ticks);
        if let Thermal::Celsius(t) = c.thermal {
            // Hundredths written exactly: `convert` reads them back to the
            // same integer.
            let sign = if t.0 < 0 { "-" } else { "" };
            let a = t.0.unsigned_abs();
            row.push_str(&format!("{sign}{}.{:02}", a / 100, a % 100));
        }
        row.push(',');
        if let Some(r) = c.ring_count {
            row.push_str(&r.to_string());
        }
        row.push(',');
        if let Some(p) = c.companion {
            row.push_str(&format!("{},{}", p.cycles, p.ticks));
        } else {
            row.push(',');
        }
        row.push('\n');
        self.rows.extend_from_slice(row.as_bytes());
    }

    fn reading(&mut self, r: ReadingRecord) {
        self.summary.readings += 1;
        let fault = matches!(r.status, Status::SensorFault(_));
        if fault {
            self.summary.faults += 1;
        }
        let view = self.channels.entry(r.channel).or_default();
        view.unit = Some(r);
        view.readings += 1;
        view.faults += u64::from(fault);
        let host = self
            .pending
            .iter()
            .rev()
            .find(|(s, ch, _)| *s == r.of_sequence && *ch == r.channel)
            .map(|&(_, _, reading)| reading);
        match host {
            Some(h) if same_reading(&r, &h) => self.summary.agree += 1,
            Some(_) => self.summary.disagree += 1,
            None => self.summary.unmatched += 1,
        }
    }
}

/// Whether the unit's reading is the host's: status, value, secondary
/// value and curve input.
pub fn same_reading(unit: &ReadingRecord, host: &Reading) -> bool {
    status_code(unit.status) == status_code(host.status())
        && unit.value == host.output()
        && unit.secondary == host.secondary()
        && unit.curve_input_q40 == host.curve_input_q40()
}

/// A reading's status as `lc-host convert` names it.
pub fn status_text(s: Status) -> &'static str {
    status_name(s)
}

/// How the link ended.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Ended {
    /// The replayed file, or a live link without reconnection, ended.
    EndOfStream,
    /// Stopped (Ctrl-C, or the frame limit).
    Stopped,
}

/// Runs `session` on `source` until the stream ends (a replay; a live link
/// with `reconnect` false), `stop` is set, or `max_frames` frames were
/// accepted. A live link that ends or fails is reopened every half
/// second when `reconnect` is set. `tick` runs about four times a second
/// (the live view) and sees the link's state (`None`: connected).
///
/// # Errors
/// The source cannot be opened the first time (without `reconnect`), or
/// recording failed.
pub fn run(
    source: &Source,
    session: &mut Session,
    stop: &AtomicBool,
    reconnect: bool,
    max_frames: Option<u64>,
    mut tick: impl FnMut(&mut Session, Option<&str>),
) -> Result<Ended, ListenError> {
    let mut buf = vec![0u8; 1 << 14];
    let mut last_tick = Instant::now();
    let mut opened_once = false;
    let enough = |s: &Session| max_frames.is_some_and(|m| s.decoder.stats().frames >= m);
    loop {
        if stop.load(Ordering::Relaxed) {
            return Ok(Ended::Stopped);
        }
        let mut input = match source.open() {
            Ok(i) => i,
            Err(e) if reconnect && source.is_live() => {
                tick(session, Some(&e.to_string()));
                sleep_unless(stop, Duration::from_millis(500));
                continue;
            }
            Err(e) => return Err(e),
        };
        if opened_once {
            session.reconnected();
        }
        opened_once = true;
        let why = loop {
            if stop.load(Ordering::Relaxed) {
                return Ok(Ended::Stopped);
            }
            if last_tick.elapsed() >= Duration::from_millis(250) {
                tick(session, None);
                last_tick = Instant::now();
            }
            match input.read(&mut buf) {
                Ok(0) => break "the link closed".to_string(),
                Ok(n) => {
                    session.feed(&buf[..n])?;
                    if enough(session) {
                        return Ok(Ended::Stopped);
                    }
                }
                Err(e)
                    if matches!(
                        e.kind(),
                        std::io::ErrorKind::TimedOut
                            | std::io::ErrorKind::WouldBlock
                            | std::io::ErrorKind::Interrupted
                    ) => {}
                Err(e) => break e.to_string(),
            }
        };
        if !(reconnect && source.is_live()) {
            return Ok(Ended::EndOfStream);
        }
        tick(
            session,
            Some(&format!("{}: {why}; reconnecting", source.name())),
        );
        sleep_unless(stop, Duration::from_millis(500));
    }
}

fn sleep_unless(stop: &AtomicBool, d: Duration) {
    let until = Instant::now() + d;
    while Instant::now() < until && !stop.load(Ordering::Relaxed) {
        std::thread::sleep(Duration::from_millis(20));
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use lc_core::counting::CountPair;
    use lc_core::link::Encoder;
    use lc_core::temperature::CentiCelsius;

    #[test]
    fn a_killed_segment_is_finished_with_whole_lines() {
        let dir = std::env::temp_dir().join(format!("lc-listen-rec-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        // A pid that is not running: a listener that was killed.
        let dead = dir.join(".field-1-000.csv.4000000.part");
        std::fs::write(&dead, "# x\ntime_s,channel,cycles,ticks\n1,0,5,6\n2,0,7").unwrap();
        let done = recover_segments(&dir).unwrap();
        assert_eq!(done, vec![dir.join("field-1-000.csv")]);
        assert_eq!(
            std::fs::read_to_string(&done[0]).unwrap(),
            "# x\ntime_s,channel,cycles,ticks\n1,0,5,6\n"
        );
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn temperatures_are_written_exactly() {
        let mut s = Session::new(Images::None, None).unwrap();
        let mut enc = Encoder::new();
        for t in [2502, -5, 0, -12_345, 7] {
            let c = Counts {
                channel: 1,
                pair: CountPair::new(1, 2),
                companion: None,
                thermal: Thermal::Celsius(CentiCelsius(t)),
                ring_count: Some(3),
            };
            let f = enc.encode(&Record::Counts(c));
            s.decoder.push(f.as_bytes(), |_| {});
            s.counts(0, c);
            let row = String::from_utf8(std::mem::take(&mut s.rows)).unwrap();
            let temp = row.split(',').nth(4).unwrap();
            assert_eq!(
                CentiCelsius::from_f64(temp.parse().unwrap()),
                Some(CentiCelsius(t)),
                "{row}"
            );
        }
    }
}
