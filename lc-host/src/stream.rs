//! Streaming a field log through a per-row conversion into CSV, in constant
//! memory: the driver shared by `counts` and `convert`.

use crate::csvin::LineSplitter;
use crate::fieldlog::{FieldLogReader, FieldRow, LogError};
use std::io::{Read, Write};

/// What to do with a row that does not parse.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum OnBadRow {
    /// Stop at the first bad row with its error.
    Stop,
    /// Skip it, count it, and report it in the summary.
    Skip,
}

/// Totals of one conversion run.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Summary {
    /// Rows converted (any status).
    pub rows: u64,
    /// Rows with status `ok`.
    pub ok: u64,
    /// Rows with a value outside the calibrated range, or no target.
    pub out_of_range: u64,
    /// Rows without a value: sensor faults.
    pub faults: u64,
    /// Rows that did not parse and were skipped.
    pub skipped: u64,
    /// The first skipped row's message, for the summary line.
    pub first_skip: Option<String>,
}

/// Errors of a conversion run.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// A bad input row, with `--on-bad-row stop`.
    #[error(transparent)]
    Log(#[from] LogError),
    /// `counts` needs count pairs; the log has frequencies.
    #[error("line {line}: this log has frequencies, not count pairs; use `lc-host convert` with a calibration image")]
    NeedsCounts {
        /// Line.
        line: u64,
    },
    /// A row's channel has no calibration image.
    #[error("line {line}: channel {} has no calibration image: map it with `--channel-image {}=IMAGE`, or give `--image` for every channel", channel.map_or("(none)".to_string(), |c| c.to_string()), channel.map_or("N".to_string(), |c| c.to_string()))]
    NoImage {
        /// Line.
        line: u64,
        /// The row's channel (`None`: the row has none).
        channel: Option<u8>,
    },
    /// Writing the output failed.
    #[error("cannot write output: {0}")]
    Write(#[from] std::io::Error),
}

/// An optional value as a CSV field ("" for `None`).
pub fn opt<T: std::fmt::Display>(v: Option<T>) -> String {
    v.map_or_else(String::new, |v| v.to_string())
}

/// An optional decimal with a fixed number of decimals.
pub fn fixed(v: Option<f64>, decimals: usize) -> String {
    v.map_or_else(String::new, |v| format!("{v:.decimals$}"))
}

/// How a converted row came out.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum RowClass {
    /// A good value.
    Ok,
    /// A value, clamped to the calibrated range, or no target.
    OutOfRange,
    /// No value: a sensor fault.
    Fault,
}

/// The most worker threads a run may use: memory stays bounded whatever
/// the machine (see [`stream_log`]).
pub const MAX_THREADS: usize = 16;

/// Worker threads of a streaming run: 1 to [`MAX_THREADS`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Threads(usize);

/// A thread count outside 1 to [`MAX_THREADS`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, thiserror::Error)]
#[error("{0} threads: give 1 to {MAX_THREADS} (more threads than cores do not help)")]
pub struct ThreadsError(pub usize);

impl Threads {
    /// A checked thread count.
    pub fn new(n: usize) -> Result<Self, ThreadsError> {
        if (1..=MAX_THREADS).contains(&n) {
            Ok(Self(n))
        } else {
            Err(ThreadsError(n))
        }
    }

    /// One thread per core the system offers, at most [`MAX_THREADS`].
    pub fn available() -> Self {
        Self(
            std::thread::available_parallelism()
                .map_or(1, |n| n.get())
                .clamp(1, MAX_THREADS),
        )
    }

    /// The count.
    pub fn get(self) -> usize {
        self.0
    }
}

impl Default for Threads {
    fn default() -> Self {
        Self::available()
    }
}

/// Input bytes per block: 512 KiB (about 16 000 field-log rows) with few
/// threads, less with many, so that the `threads + 2` blocks alive hold at
/// most about 4 MiB of input (with parsed rows and output, under 48 MiB).
/// Large blocks mean few hand-overs between threads.
fn block_bytes(threads: Threads) -> usize {
    ((4 << 20) / (threads.get() + 2)).clamp(1 << 16, 1 << 19)
}

/// A block of input lines on its way through the stages.
struct Block<T> {
    index: u64,
    first_line: u64,
    input: Vec<u8>,
    rows: Vec<Result<FieldRow, LogError>>,
    /// What the in-order stage made of each good row, in row order.
    states: Vec<T>,
    /// Rows (of `rows`) past the in-order stage: all of them, unless the
    /// run stops at a bad row in this block.
    done: usize,
    classes: Vec<RowClass>,
    output: Vec<u8>,
    error: Option<RunError>,
    /// Where each line of `input` starts (with `raw` lines only).
    starts: Vec<usize>,
}

impl<T> Block<T> {
    fn new() -> Self {
        Self {
            index: 0,
            first_line: 0,
            input: Vec::new(),
            rows: Vec::new(),
            states: Vec::new(),
            done: 0,
            classes: Vec::new(),
            output: Vec::new(),
            error: None,
            starts: Vec::new(),
        }
    }
}

/// The in-order stage: whose turn it is, and the stage's state.
struct Turn<F> {
    next: u64,
    stopped: bool,
    stage: F,
}

/// Streams `reader` into `out` on `threads` worker threads, in constant
/// memory: writes `header`, then cuts the input into blocks of lines.
/// Workers parse a block, pass its rows through `in_order` (one block at a
/// time, in input order, so a stateful reader sees every row in the order
/// logged), then `format` each row's fields (without the newline) into the
/// block's output, in parallel. The calling thread reads the input, writes
/// the blocks in input order, and calls `observe` for every row in order and
/// `progress` with the input line every 65 536 rows. Bad rows stop the run
/// (rows before them are written) or are skipped, as `on_bad_row` says.
/// With `raw`, `format` also gets each row's line as logged (without its
/// line end), to pass input fields through; otherwise an empty slice.
///
/// At most `threads + 2` blocks are alive at any time, together about
/// 4 MiB of input with their parsed rows and output: under 48 MiB.
#[allow(clippy::too_many_arguments)]
pub fn stream_log<R, W, T, S, F>(
    mut reader: FieldLogReader<R>,
    mut out: W,
    header: &str,
    on_bad_row: OnBadRow,
    threads: Threads,
    raw: bool,
    in_order: S,
    format: F,
    mut progress: impl FnMut(u64),
    mut observe: impl FnMut(&FieldRow, &T),
) -> Result<Summary, RunError>
where
    R: Read,
    W: Write,
    T: Send,
    S: FnMut(&FieldRow) -> T + Send,
    F: Fn(&FieldRow, &mut T, &[u8], &mut Vec<u8>) -> Result<RowClass, RunError> + Sync,
{
    use std::collections::BTreeMap;
    use std::sync::mpsc;
    use std::sync::{Condvar, Mutex};

    let mut summary = Summary::default();
    writeln!(out, "{header}")?;
    let columns = reader.columns();
    let file = reader.file().to_path_buf();
    let turn = Mutex::new(Turn {
        next: 0,
        stopped: false,
        stage: in_order,
    });
    let turn_changed = Condvar::new();
    let (job_tx, job_rx) = mpsc::channel::<Block<T>>();
    let job_rx = Mutex::new(job_rx);
    let (done_tx, done_rx) = mpsc::channel::<Block<T>>();

    let worker = |done_tx: mpsc::Sender<Block<T>>| {
        let mut splitter = LineSplitter::default();
        loop {
            let Ok(mut block) = job_rx
                .lock()
                .map_or_else(|p| p.into_inner().recv(), |rx| rx.recv())
            else {
                return;
            };
            block.rows.clear();
            block.states.clear();
            block.classes.clear();
            block.output.clear();
            block.error = None;
            columns.parse_block(
                &file,
                &block.input,
                block.first_line,
                &mut splitter,
                &mut block.rows,
            );
            // The in-order stage.
            {
                let mut t = turn.lock().unwrap_or_else(|p| p.into_inner());
                while t.next != block.index {
                    t = turn_changed.wait(t).unwrap_or_else(|p| p.into_inner());
                }
                block.done = 0;
                if !t.stopped {
                    for row in &block.rows {
                        match row {
                            Ok(row) => {
                                let state = (t.stage)(row);
                                block.states.push(state);
                            }
                            Err(_) if on_bad_row == OnBadRow::Skip => {}
                            Err(_) => {
                                t.stopped = true;
                                break;
                            }
                        }
                        block.done += 1;
                    }
                }
                t.next += 1;
                turn_changed.notify_all();
            }
            // Formatting, in parallel.
            block.starts.clear();
            if raw {
                block.starts.push(0);
                block
                    .starts
                    .extend(memchr::memchr_iter(b'\n', &block.input).map(|k| k + 1));
            }
            let mut states = block.states.iter_mut();
            for row in block.rows[..block.done].iter() {
                let Ok(row) = row else { continue };
                let Some(state) = states.next() else { break };
                let start = block.output.len();
                let text = if raw {
                    raw_line(&block.input, &block.starts, row.line - block.first_line)
                } else {
                    &[]
                };
                match format(row, state, text, &mut block.output) {
                    Ok(class) => {
                        block.output.push(b'\n');
                        block.classes.push(class);
                    }
                    Err(e) => {
                        block.output.truncate(start);
                        block.error = Some(e);
                        break;
                    }
                }
            }
            if done_tx.send(block).is_err() {
                return;
            }
        }
    };

    std::thread::scope(|scope| {
        for _ in 0..threads.get() {
            let tx = done_tx.clone();
            scope.spawn(move || worker(tx));
        }
        drop(done_tx);
        let result = (|| {
            let mut free: Vec<Block<T>> = (0..threads.get() + 2).map(|_| Block::new()).collect();
            let mut waiting: BTreeMap<u64, Block<T>> = BTreeMap::new();
            let (mut sent, mut written) = (0u64, 0u64);
            let mut input_done = false;
            loop {
                while !input_done {
                    let Some(mut block) = free.pop() else { break };
                    match reader.next_block(&mut block.input, block_bytes(threads)) {
                        Ok(Some(first_line)) => {
                            block.index = sent;
                            block.first_line = first_line;
                            sent += 1;
                            // Workers only leave when this sender is dropped.
                            let _ = job_tx.send(block);
                        }
                        Ok(None) => {
                            input_done = true;
                            free.push(block);
                        }
                        Err(e) => return Err(RunError::from(e)),
                    }
                }
                if input_done && written == sent {
                    return Ok(());
                }
                let block = done_rx.recv().map_err(|_| {
                    RunError::Write(std::io::Error::other("a conversion thread stopped"))
                })?;
                waiting.insert(block.index, block);
                while let Some(mut block) = waiting.remove(&written) {
                    written += 1;
                    let stop = write_block(
                        &mut block,
                        &mut out,
                        &mut summary,
                        on_bad_row,
                        &mut progress,
                        &mut observe,
                    )?;
                    if let Some(e) = stop {
                        return Err(e);
                    }
                    free.push(block);
                }
            }
        })();
        // Let the workers go: no more jobs, and nobody waits for a turn
        // that will not come.
        drop(job_tx);
        if result.is_err() {
            let mut t = turn.lock().unwrap_or_else(|p| p.into_inner());
            t.stopped = true;
        }
        result
    })?;
    out.flush()?;
    Ok(summary)
}

/// Line `k` (from 0) of a block whose line starts are `starts`, without
/// its line end.
fn raw_line<'a>(input: &'a [u8], starts: &[usize], k: u64) -> &'a [u8] {
    let Ok(k) = usize::try_from(k) else {
        return &[];
    };
    let (Some(&a), b) = (starts.get(k), starts.get(k + 1)) else {
        return &[];
    };
    let line = &input[a..b.map_or(input.len(), |&b| b - 1)];
    line.strip_suffix(b"\r").unwrap_or(line)
}

/// Writes a finished block and counts it; returns the error that stops the
/// run, if the block holds one.
fn write_block<T, W: Write>(
    block: &mut Block<T>,
    out: &mut W,
    summary: &mut Summary,
    on_bad_row: OnBadRow,
    progress: &mut impl FnMut(u64),
    observe: &mut impl FnMut(&FieldRow, &T),
) -> Result<Option<RunError>, RunError> {
    out.write_all(&block.output)?;
    let mut classes = block.classes.iter();
    let mut states = block.states.iter();
    for (i, row) in block.rows.iter_mut().enumerate() {
        match row {
            Ok(row) => {
                let (Some(class), Some(state)) = (classes.next(), states.next()) else {
                    break;
                };
                summary.rows += 1;
                match class {
                    RowClass::Ok => summary.ok += 1,
                    RowClass::OutOfRange => summary.out_of_range += 1,
                    RowClass::Fault => summary.faults += 1,
                }
                observe(row, state);
                if summary.rows % 65_536 == 0 {
                    progress(row.line);
                }
            }
            Err(e) if on_bad_row == OnBadRow::Skip => {
                if i < block.done {
                    summary.skipped += 1;
                    summary.first_skip.get_or_insert_with(|| e.to_string());
                }
            }
            Err(_) => {
                let placeholder = Err(crate::fieldlog::LogError::Csv {
                    file: std::path::PathBuf::new(),
                    line: 0,
                    message: String::new(),
                });
                if let Err(e) = std::mem::replace(row, placeholder) {
                    return Ok(Some(e.into()));
                }
            }
        }
    }
    Ok(block.error.take())
}
