//! Rig logs: what the end-of-line rig measured, one CSV row per step.
//!
//! Format (docs/formats.md): columns `serial`, `step`, `temp_c`, `target`,
//! `target_unit`, `cycles`, `ticks`, and optionally `ring_count`,
//! `comp_cycles`, `comp_ticks`. `target` is the rig's reference value (a
//! gap or a level) in `target_unit` (`m`, `mm` or `um`), or `none` for the
//! no-target (rest) step. A unit's rows stand together; the reader hands
//! out one unit at a time, so memory follows the largest unit, not the lot.
//!
//! A bad row does not stop the lot: it is kept as an error of the unit it
//! belongs to (that unit then fails with the row's file, line and field as
//! its reason), and the next unit is read as usual.

use crate::csvin::{CsvInput, InputError, Row};
use lc_core::counting::CountPair;
use std::collections::HashSet;
use std::io::Read;
use std::path::Path;
use std::sync::{Arc, Mutex, MutexGuard};

/// One rig step.
#[derive(Clone, Debug, PartialEq)]
pub struct RigRow {
    /// Line in the file.
    pub line: u64,
    /// Step number as logged.
    pub step: u32,
    /// Temperature of the unit, °C.
    pub temp_c: f64,
    /// Reference value in metres; `None` for the no-target (rest) step.
    pub target_m: Option<f64>,
    /// The sensor channel's count pair.
    pub pair: CountPair,
    /// Ring count after the gate, if logged.
    pub ring_count: Option<u16>,
    /// The companion channel's count pair, if logged.
    pub companion: Option<CountPair>,
}

/// One unit's rows, and the errors of its bad rows.
#[derive(Debug, Default)]
pub struct UnitLog {
    /// Unit serial.
    pub serial: String,
    /// Its good rows, in file order.
    pub rows: Vec<RigRow>,
    /// Its bad rows.
    pub errors: Vec<InputError>,
}

#[derive(Clone, Copy, Debug)]
struct Columns {
    serial: usize,
    step: usize,
    temp_c: usize,
    target: usize,
    target_unit: usize,
    cycles: usize,
    ticks: usize,
    ring_count: Option<usize>,
    comp_cycles: Option<usize>,
    comp_ticks: Option<usize>,
}

const HINT: &str = "a rig log needs serial, step, temp_c, target, target_unit, cycles and ticks (see docs/formats.md)";

/// Streaming reader of a rig log, one unit at a time.
#[derive(Debug)]
pub struct RigLogReader<R: Read> {
    input: CsvInput<LineEndings<R>>,
    columns: Columns,
    pending: Option<(String, Result<RigRow, InputError>)>,
    done: HashSet<String>,
    file_error: Option<InputError>,
    lines: Arc<Mutex<LineMap>>,
}

/// Normalises line endings and takes out comment and empty lines before
/// the CSV parser sees them, keeping the map from the lines it hands on to
/// the file's own lines. `\r\n` and a lone `\r` end a line as `\n` does.
/// The CSV parser counted a `\r\n` file's lines wrongly and skipped
/// comment and empty lines without counting them, so every reason named a
/// wrong line; [`LineMap::file_line`] gives the file's line of any line
/// number the parser reports.
#[derive(Debug)]
pub struct LineEndings<R> {
    inner: R,
    raw: Vec<u8>,
    out: Vec<u8>,
    pos: usize,
    pending_cr: bool,
    /// At the start of a line; `None` inside a kept line, `Some(true)`
    /// inside a skipped (comment) line.
    state: LineState,
    /// Lines handed on so far (complete ones).
    emitted: u64,
    map: Arc<Mutex<LineMap>>,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum LineState {
    Start,
    Kept,
    Skipped,
}

/// From the line numbers of the normalised text to the file's: a list of
/// (first normalised line, lines skipped before it), one entry per run of
/// skipped lines.
#[derive(Debug, Default)]
pub struct LineMap {
    jumps: Vec<(u64, u64)>,
}

impl LineMap {
    /// The file's line (1-based) of normalised line `line`.
    pub fn file_line(&self, line: u64) -> u64 {
        let i = self.jumps.partition_point(|&(from, _)| from <= line);
        match i {
            0 => line,
            _ => line + self.jumps[i - 1].1,
        }
    }
}

/// The line map, even after a thread panicked holding it (the map is only
/// ever appended to, whole entries at a time).
fn lock(map: &Mutex<LineMap>) -> MutexGuard<'_, LineMap> {
    map.lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
}

impl<R: Read> LineEndings<R> {
    /// Wraps `inner`.
    pub fn new(inner: R) -> Self {
        LineEndings {
            inner,
            raw: vec![0; 1 << 16],
            out: Vec::with_capacity(1 << 16),
            pos: 0,
            pending_cr: false,
            state: LineState::Start,
            emitted: 0,
            map: Arc::default(),
        }
    }

    /// The line map, filled as the text is read (shared, so that a reader
    /// may move to another thread).
    pub fn map(&self) -> Arc<Mutex<LineMap>> {
        Arc::clone(&self.map)
    }

    fn skip_line(&mut self) {
        let next = self.emitted + 1;
        let mut map = lock(&self.map);
        match map.jumps.last_mut() {
            Some((from, skipped)) if *from == next => *skipped += 1,
            last => {
                let skipped = last.map_or(0, |l| l.1) + 1;
                map.jumps.push((next, skipped));
            }
        }
    }

    fn push(&mut self, b: u8) {
        match (self.state, b) {
            (LineState::Start, b'\n') => self.skip_line(),
            (LineState::Start, b'#') => self.state = LineState::Skipped,
            (LineState::Skipped, b'\n') => {
                self.skip_line();
                self.state = LineState::Start;
            }
            (LineState::Skipped, _) => {}
            (_, b'\n') => {
                self.out.push(b'\n');
                self.emitted += 1;
                self.state = LineState::Start;
            }
            (_, _) => {
                self.out.push(b);
                self.state = LineState::Kept;
            }
        }
    }
}

impl<R: Read> Read for LineEndings<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        while self.pos == self.out.len() {
            self.out.clear();
            self.pos = 0;
            let n = self.inner.read(&mut self.raw)?;
            if n == 0 {
                if std::mem::take(&mut self.pending_cr) {
                    self.push(b'\n');
                    continue;
                }
                return Ok(0);
            }
            for i in 0..n {
                let b = self.raw[i];
                if std::mem::take(&mut self.pending_cr) {
                    // `\r\n` or a lone `\r`: one line end either way.
                    self.push(b'\n');
                    if b == b'\n' {
                        continue;
                    }
                }
                if b == b'\r' {
                    self.pending_cr = true;
                } else {
                    self.push(b);
                }
            }
        }
        let n = buf.len().min(self.out.len() - self.pos);
        buf[..n].copy_from_slice(&self.out[self.pos..self.pos + n]);
        self.pos += n;
        Ok(n)
    }
}

impl RigRow {
    /// The row as a JSON object (for unit records).
    pub fn to_json(&self) -> serde_json::Value {
        serde_json::json!({
            "line": self.line,
            "step": self.step,
            "temp_c": self.temp_c,
            "target_m": self.target_m,
            "cycles": self.pair.cycles,
            "ticks": self.pair.ticks,
            "ring_count": self.ring_count,
            "comp_cycles": self.companion.map(|c| c.cycles),
            "comp_ticks": self.companion.map(|c| c.ticks),
        })
    }
}

impl<R: Read> RigLogReader<R> {
    /// Reads the header; `file` names the input in messages.
    pub fn new(input: R, file: &Path) -> Result<Self, InputError> {
        let input = LineEndings::new(input);
        let lines = input.map();
        let input = CsvInput::new(input, file).map_err(|e| file_line(&lines, e))?;
        let columns = Columns {
            serial: input.require("serial", HINT)?,
            step: input.require("step", HINT)?,
            temp_c: input.require("temp_c", HINT)?,
            target: input.require("target", HINT)?,
            target_unit: input.require("target_unit", HINT)?,
            cycles: input.require("cycles", HINT)?,
            ticks: input.require("ticks", HINT)?,
            ring_count: input.column("ring_count"),
            comp_cycles: input.column("comp_cycles"),
            comp_ticks: input.column("comp_ticks"),
        };
        Ok(Self {
            input,
            columns,
            pending: None,
            done: HashSet::new(),
            file_error: None,
            lines,
        })
    }

    /// An error that ended the file early (I/O), if any; check after the
    /// iterator is exhausted.
    pub fn take_file_error(&mut self) -> Option<InputError> {
        self.file_error.take()
    }

    /// The next row as (serial, parsed row or error), `None` at the end.
    fn next_row(&mut self) -> Option<(String, Result<RigRow, InputError>)> {
        if let Some(p) = self.pending.take() {
            return Some(p);
        }
        let c = self.columns;
        let lines = &self.lines;
        match self.input.next_row()? {
            Ok(row) => {
                let serial = row.text(c.serial).to_string();
                let parsed = parse(&row, c)
                    .map(|mut r| {
                        r.line = lock(lines).file_line(r.line);
                        r
                    })
                    .map_err(|e| file_line(lines, e));
                Some((serial, parsed))
            }
            Err(e @ InputError::Io { .. }) => {
                self.file_error = Some(e);
                None
            }
            // A structurally broken line: no trustworthy serial.
            Err(e) => Some((String::new(), Err(file_line(lines, e)))),
        }
    }
}

/// An input error with the file's own line number.
fn file_line(lines: &Mutex<LineMap>, mut e: InputError) -> InputError {
    if let InputError::BadField { line, .. } | InputError::Csv { line, .. } = &mut e {
        *line = lock(lines).file_line(*line);
    }
    e
}

fn parse(row: &Row<'_>, c: Columns) -> Result<RigRow, InputError> {
    let serial = row.text(c.serial);
    if serial.is_empty() || serial.len() > 16 || !serial.bytes().all(|b| (0x21..=0x7E).contains(&b))
    {
        return Err(row.error(
            "serial",
            serial,
            "expected 1 to 16 printable characters without spaces",
        ));
    }
    let step = row.count(c.step, "step")?;
    let temp_c = row.real(c.temp_c, "temp_c")?;
    if !(-100.0..=300.0).contains(&temp_c) {
        return Err(row.error(
            "temp_c",
            row.text(c.temp_c),
            "expected a temperature from -100 to 300 °C",
        ));
    }
    let unit = row.text(c.target_unit);
    let scale = match unit {
        "m" => 1.0,
        "mm" => 1e-3,
        "um" | "µm" => 1e-6,
        _ => return Err(row.error("target_unit", unit, "expected m, mm or um")),
    };
    let target_m = match row.text(c.target) {
        t if t.eq_ignore_ascii_case("none") => None,
        _ => {
            let v = row.real(c.target, "target")?;
            if v < 0.0 {
                return Err(row.error(
                    "target",
                    row.text(c.target),
                    "expected a distance or level of 0 or more, or none",
                ));
            }
            Some(v * scale)
        }
    };
    let pair = CountPair::new(row.count(c.cycles, "cycles")?, row.count(c.ticks, "ticks")?);
    let ring_count = row.ring_count_opt(c.ring_count)?;
    let companion = row.companion_opt(c.comp_cycles, c.comp_ticks)?;
    Ok(RigRow {
        line: row.line(),
        step,
        temp_c,
        target_m,
        pair,
        ring_count,
        companion,
    })
}

impl<R: Read> Iterator for RigLogReader<R> {
    type Item = UnitLog;

    /// The next unit: consecutive rows with one serial. A row with an
    /// unreadable serial stays with the unit it sits in; a serial that
    /// returns after other units is an error of its second block.
    fn next(&mut self) -> Option<UnitLog> {
        let (first_serial, first) = self.next_row()?;
        let mut unit = UnitLog {
            serial: first_serial,
            ..UnitLog::default()
        };
        let push = |unit: &mut UnitLog, r: Result<RigRow, InputError>| match r {
            Ok(row) => unit.rows.push(row),
            Err(e) => unit.errors.push(e),
        };
        push(&mut unit, first);
        while let Some((serial, r)) = self.next_row() {
            if unit.serial.is_empty() && !serial.is_empty() {
                unit.serial = serial.clone();
            }
            if serial.is_empty() || serial == unit.serial {
                push(&mut unit, r);
            } else {
                self.pending = Some((serial, r));
                break;
            }
        }
        if !self.done.insert(unit.serial.clone()) {
            let at = unit
                .rows
                .first()
                .map(|r| r.line)
                .or_else(|| unit.errors.first().and_then(InputError::line));
            unit.errors.push(InputError::BadField {
                file: self.input.file().to_path_buf(),
                line: at.unwrap_or(0),
                field: "serial",
                found: unit.serial.clone(),
                problem: "this serial's steps appeared earlier in the file; a rig log lists each unit's steps together",
            });
        }
        Some(unit)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    const HEAD: &str = "serial,step,temp_c,target,target_unit,cycles,ticks,ring_count\n";

    fn units(text: &str) -> Vec<UnitLog> {
        RigLogReader::new(text.as_bytes(), Path::new("rig.csv"))
            .unwrap()
            .collect()
    }

    #[test]
    fn groups_units_and_converts_units() {
        let text = format!(
            "{HEAD}A1,1,25,none,mm,16384,139542,20\nA1,2,25,0.5,mm,16384,120000,12\nA2,1,25.5,500,um,16384,120001,\nA2,2,60,0.0005,m,16384,120050,\n"
        );
        let u = units(&text);
        assert_eq!(u.len(), 2);
        assert_eq!(
            (u[0].serial.as_str(), u[0].rows.len(), u[0].errors.len()),
            ("A1", 2, 0)
        );
        assert_eq!(u[0].rows[0].target_m, None);
        assert_eq!(u[0].rows[0].ring_count, Some(20));
        assert!((u[0].rows[1].target_m.unwrap() - 5e-4).abs() < 1e-15);
        assert!((u[1].rows[0].target_m.unwrap() - 5e-4).abs() < 1e-15);
        assert!((u[1].rows[1].target_m.unwrap() - 5e-4).abs() < 1e-15);
        assert_eq!(u[1].rows[1].line, 5);
    }

    #[test]
    fn bad_rows_belong_to_their_unit_and_the_lot_goes_on() {
        let text = format!(
            "{HEAD}A1,1,25,none,mm,16384,139542,\nA1,2,25,0.5,inch,16384,120000,\nA1,3,25,x,mm,16384,120000,\nA2,1,25,none,mm,16384,139000,\nA2,2,999,1,mm,16384,1,\nA3,1,25,none,mm,16384,13x,\nA1,4,25,1,mm,16384,1,\n"
        );
        let u = units(&text);
        assert_eq!(u.len(), 4);
        let msgs: Vec<String> = u[0].errors.iter().map(ToString::to_string).collect();
        assert_eq!(msgs.len(), 2);
        assert!(
            msgs[0].contains("rig.csv: line 3: field `target_unit`"),
            "{msgs:?}"
        );
        assert!(msgs[1].contains("line 4: field `target`"), "{msgs:?}");
        assert!(u[1].errors[0]
            .to_string()
            .contains("line 6: field `temp_c`"));
        assert!(u[2].errors[0].to_string().contains("line 7: field `ticks`"));
        // A1 again after other units: an error of its second block.
        assert_eq!(u[3].serial, "A1");
        assert!(
            u[3].errors
                .iter()
                .any(|e| e.to_string().contains("appeared earlier")),
            "{:?}",
            u[3].errors
        );
    }

    #[test]
    fn companion_columns_go_together() {
        let text = "serial,step,temp_c,target,target_unit,cycles,ticks,comp_cycles,comp_ticks\nB,1,25,none,mm,16384,139542,16384,150000\nB,2,25,1,mm,16384,139000,16384,\n";
        let u = units(text);
        assert_eq!(
            u[0].rows[0].companion,
            Some(CountPair::new(16_384, 150_000))
        );
        assert!(u[0].errors[0].to_string().contains("comp_ticks"));
        let e = RigLogReader::new("serial,step\n".as_bytes(), Path::new("r.csv")).unwrap_err();
        assert!(e.to_string().contains("no `temp_c` column"), "{e}");
    }

    /// Issue 14, defect 10: Windows line endings shifted every reported
    /// line number by one (and the wrong number was stored in the unit's
    /// record). CRLF, LF and mixed files report the same lines.
    #[test]
    fn crlf_and_mixed_line_endings_keep_line_numbers() {
        let lines = [
            HEAD.trim_end(),
            "# a comment line",
            "A1,1,25,none,mm,16384,139542,20",
            "A1,2,25,x,mm,16384,120000,12",
            "A2,1,25,none,mm,16384,139000,",
            "A2,2,25,1,inch,16384,120000,",
        ];
        let joined = |sep: &dyn Fn(usize) -> &'static str| {
            lines
                .iter()
                .enumerate()
                .map(|(i, l)| format!("{l}{}", sep(i)))
                .collect::<String>()
        };
        for text in [
            joined(&|_| "\n"),
            joined(&|_| "\r\n"),
            joined(&|i| if i % 2 == 0 { "\r\n" } else { "\n" }),
            joined(&|i| if i % 2 == 1 { "\r\n" } else { "\n" }),
            joined(&|i| if i % 3 == 0 { "\r" } else { "\r\n" }),
        ] {
            let u = units(&text);
            assert_eq!(u.len(), 2, "{text:?}");
            assert_eq!(u[0].rows[0].line, 3, "{text:?}");
            assert!(
                u[0].errors[0]
                    .to_string()
                    .contains("line 4: field `target`"),
                "{text:?}: {}",
                u[0].errors[0]
            );
            assert_eq!(u[1].rows[0].line, 5, "{text:?}");
            assert!(
                u[1].errors[0]
                    .to_string()
                    .contains("line 6: field `target_unit`"),
                "{text:?}: {}",
                u[1].errors[0]
            );
        }
    }

    proptest! {
        /// Arbitrary text never panics; every row ends up as a row or an
        /// error of some unit.
        #[test]
        fn arbitrary_rows_are_accounted_for(body in "([A-C],[0-9],[0-9]{2},(none|[0-9]\\.[0-9]|x),(mm|um|m|in),[0-9]{5},[0-9]{6},[0-9]?\n){0,30}") {
            let text = format!("{HEAD}{body}");
            let lines = body.lines().count();
            let u = units(&text);
            let total: usize = u.iter().map(|x| x.rows.len() + x.errors.iter().filter(|e| !e.to_string().contains("appeared earlier")).count()).sum();
            prop_assert_eq!(total, lines);
        }
    }
}
