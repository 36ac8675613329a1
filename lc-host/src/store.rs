//! Unit records: every end-of-line calibration attempt in one SQLite file.
//!
//! One row per unit and attempt (docs/database.md): the unit's serial and lot, the
//! result with its reasons, the fitted parameters, the fit residuals, the raw
//! rig points, and for a passing unit the calibration image with its CRC-32.
//! The schema, the migration policy and example `sqlite3` queries are in
//! docs/database.md.
//!
//! - [`Store::open`] creates or opens the file, switches it to write-ahead
//!   logging, enables foreign keys and runs the schema migrations; a file
//!   written by a newer lc-host is refused, never downgraded.
//! - [`Store::record`] adds one attempt in one transaction: the unit's next
//!   attempt number (1, 2, … per serial) is computed under the write lock, and
//!   an earlier attempt is never changed. A process killed mid-lot leaves
//!   only whole attempts.
//! - [`Store::attempts`], [`Store::attempt`], [`Store::image`] and
//!   [`Store::lots`] read it back.
//!
//! All values reach SQLite as bound parameters, never as SQL text, so any
//! serial or lot name is stored exactly as given.
//!
//! ```
//! use lc_host::store::{AttemptResult, Filter, NewAttempt, Store};
//! use serde_json::json;
//!
//! # let dir = std::env::temp_dir().join(format!("lc-host-store-doc-{}", std::process::id()));
//! # std::fs::create_dir_all(&dir).unwrap();
//! let mut store = Store::open(dir.join("units.sqlite"))?;
//! let failed = NewAttempt {
//!     serial: "DEMO-01-0007".into(),
//!     lot: "DEMO-01".into(),
//!     result: AttemptResult::Fail,
//!     reasons: vec!["rest point outside the acceptance window".into()],
//!     params: json!({}),
//!     residuals: json!([]),
//!     rig_points: json!([]),
//!     image: None,
//!     image_crc: None,
//!     trace: None,
//! };
//! assert_eq!(store.record(&failed)?.attempt, 1);
//! // Re-calibrating the unit adds attempt 2; attempt 1 stays as it was.
//! assert_eq!(store.record(&failed)?.attempt, 2);
//! assert_eq!(store.attempts(&Filter::default().serial("DEMO-01-0007"))?.len(), 2);
//! assert_eq!(store.lots()?[0].failed, 1);
//! # drop(store);
//! # std::fs::remove_dir_all(&dir).unwrap();
//! # Ok::<(), lc_host::store::StoreError>(())
//! ```

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::time::{Duration, SystemTime};

use rusqlite::{params, Connection, OpenFlags, OptionalExtension, Row, TransactionBehavior};
use serde::Serialize;
use serde_json::Value;
use sha2::Digest;

mod pg;
mod schema;
#[cfg(test)]
mod tests;
mod timestamp;

pub use pg::is_url as is_postgres_url;
pub use schema::SCHEMA_VERSION;

/// How long a call waits for another process's write lock before it gives
/// up with [`StoreError::Busy`]. One attempt's transaction holds the lock
/// for milliseconds; five seconds covers a slow disk, and is short enough
/// that a stuck writer is reported while the operator is still there.
pub const BUSY_TIMEOUT: Duration = Duration::from_secs(5);

/// The `tool_version` written with every attempt: this crate and version.
pub const TOOL_VERSION: &str = concat!(env!("CARGO_PKG_NAME"), " ", env!("CARGO_PKG_VERSION"));

/// Outcome of one calibration attempt.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum AttemptResult {
    /// The unit met every acceptance limit; its calibration image is stored.
    Pass,
    /// The unit failed at least one limit; the reasons say which.
    Fail,
}

impl AttemptResult {
    /// The text stored in the `result` column: `pass` or `fail`.
    pub fn as_str(self) -> &'static str {
        match self {
            AttemptResult::Pass => "pass",
            AttemptResult::Fail => "fail",
        }
    }

    fn parse(s: &str) -> Option<Self> {
        match s {
            "pass" => Some(AttemptResult::Pass),
            "fail" => Some(AttemptResult::Fail),
            _ => None,
        }
    }
}

impl std::fmt::Display for AttemptResult {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.as_str())
    }
}

/// One calibration attempt to record, as the calibration step produced it,
/// with its JSON columns (`params`, `residuals`, `rig_points`) as `J`:
/// JSON values ([`NewAttempt`], [`Store::record`]) or JSON texts
/// ([`AttemptText`], [`Store::record_texts`]).
///
/// Rules, checked by [`Store::record`] before anything is written:
/// - `serial` and `lot` are not empty, hold no control characters and no
///   leading or trailing white space (`" A1"` and `"A1"` would otherwise be
///   two units that print the same);
/// - a failed attempt has at least one reason, no image and no CRC;
/// - a passing attempt has an image and its CRC;
/// - `image_crc` is the CRC-32/ISO-HDLC of the whole `image` blob, as
///   [`lc_core::image::CRC32`] computes it;
/// - `params` is a JSON object, `residuals` and `rig_points` JSON arrays.
#[derive(Clone, Debug, PartialEq)]
pub struct Attempt<J> {
    /// The unit's serial number.
    pub serial: String,
    /// The lot the unit is calibrated in.
    pub lot: String,
    /// Pass or fail.
    pub result: AttemptResult,
    /// Why the unit failed (or remarks on a pass), one sentence each.
    pub reasons: Vec<String>,
    /// Fitted parameters, a JSON object (keys and units are the fit's).
    pub params: J,
    /// Fit residuals, a JSON array.
    pub residuals: J,
    /// The raw rig rows of this unit, a JSON array.
    pub rig_points: J,
    /// The calibration image bytes; `None` for a failed unit.
    pub image: Option<Vec<u8>>,
    /// CRC-32/ISO-HDLC of the whole `image`; `None` exactly when `image` is.
    pub image_crc: Option<u32>,
    /// Where the attempt came from: plan, rig log, station and operator.
    /// `None` only for callers that have no plan or rig file (tests, tools);
    /// `lc-host calibrate` always gives it.
    pub trace: Option<Trace>,
}

/// One calibration attempt to record with JSON values: [`Store::record`],
/// [`Store::record_batch`]. The rules of [`Attempt`] hold.
pub type NewAttempt = Attempt<Value>;

/// One calibration attempt to record whose JSON columns are JSON text
/// already: [`Store::record_texts`]. The rules of [`Attempt`] hold;
/// `params` is the text of a JSON object, `residuals` and `rig_points`
/// the texts of JSON arrays, stored as given.
pub type AttemptText = Attempt<String>;

/// The columns of an attempt other than its JSON, borrowed.
#[derive(Clone, Copy)]
struct Head<'a> {
    serial: &'a str,
    lot: &'a str,
    result: AttemptResult,
    reasons: &'a [String],
    image: Option<&'a [u8]>,
    image_crc: Option<u32>,
    trace: Option<&'a Trace>,
}

impl<'a> Head<'a> {
    fn of<J>(a: &'a Attempt<J>) -> Self {
        Head {
            serial: &a.serial,
            lot: &a.lot,
            result: a.result,
            reasons: &a.reasons,
            image: a.image.as_deref(),
            image_crc: a.image_crc,
            trace: a.trace.as_ref(),
        }
    }
}

/// An attempt that passed the checks, with the texts of its JSON columns
/// (reasons, params, residuals, rig points).
pub(crate) struct Checked<'a> {
    head: Head<'a>,
    json: [std::borrow::Cow<'a, str>; 4],
}

/// The traceability of one attempt: what it was judged against, from which
/// measurements, where and by whom. The plan's full text is kept once per
/// distinct plan ([`Store::register_plan`]); attempts name it by hash.
#[derive(Clone, Debug, Default, PartialEq, Eq, Hash, Serialize)]
pub struct Trace {
    /// SHA-256 of the plan file's bytes, 64 lower-case hex digits; a plan
    /// registered with [`Store::register_plan`].
    pub plan_sha256: String,
    /// The rig log's file name as given to the tool (`-` for standard
    /// input).
    pub rig_file: String,
    /// SHA-256 of the rig log's bytes, 64 lower-case hex digits.
    pub rig_sha256: String,
    /// The station that calibrated the unit (free text, may be empty).
    pub station: String,
    /// The operator at the station (free text, may be empty).
    pub operator: String,
}

/// SHA-256 of `bytes` as 64 lower-case hex digits.
pub fn sha256_hex(bytes: &[u8]) -> String {
    hex(&sha2::Sha256::digest(bytes))
}

/// Lower-case hex of bytes.
pub fn hex(bytes: &[u8]) -> String {
    use std::fmt::Write;
    bytes
        .iter()
        .fold(String::with_capacity(2 * bytes.len()), |mut s, b| {
            let _ = write!(s, "{b:02x}");
            s
        })
}

fn is_sha256_hex(s: &str) -> bool {
    s.len() == 64 && s.bytes().all(|b| matches!(b, b'0'..=b'9' | b'a'..=b'f'))
}

/// Where one attempt of a group landed ([`Store::record_batch`]).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Recorded {
    /// Row id.
    pub id: i64,
    /// Attempt number of the serial.
    pub attempt: u32,
    /// When it was recorded (RFC 3339 UTC, milliseconds).
    pub calibrated_at: String,
}

/// One stored attempt, complete.
#[derive(Clone, Debug, PartialEq)]
pub struct AttemptRecord {
    /// Row id: increases with every recorded attempt in this database.
    pub id: i64,
    /// The unit's serial number.
    pub serial: String,
    /// The lot of this attempt.
    pub lot: String,
    /// Attempt number of this serial: 1, 2, … in the order recorded.
    pub attempt: u32,
    /// When it was recorded: RFC 3339 UTC with milliseconds
    /// (`2024-02-29T13:05:09.042Z`).
    pub calibrated_at: String,
    /// Pass or fail.
    pub result: AttemptResult,
    /// Reasons, as recorded.
    pub reasons: Vec<String>,
    /// Fitted parameters (JSON object).
    pub params: Value,
    /// Fit residuals (JSON array).
    pub residuals: Value,
    /// Raw rig rows (JSON array).
    pub rig_points: Value,
    /// Calibration image; `None` for a failed attempt.
    pub image: Option<Vec<u8>>,
    /// CRC-32/ISO-HDLC of the whole image; `None` when there is no image.
    pub image_crc: Option<u32>,
    /// The program that recorded it ([`TOOL_VERSION`] at the time).
    pub tool_version: String,
    /// Plan, rig log, station and operator; `None` for attempts recorded
    /// without (schema 1 rows, or callers without a plan).
    pub trace: Option<Trace>,
}

/// One attempt in a listing: everything but the bulky JSON and the image.
#[derive(Clone, Debug, PartialEq, Eq, Serialize)]
pub struct AttemptSummary {
    /// Row id.
    pub id: i64,
    /// The unit's serial number.
    pub serial: String,
    /// The lot of this attempt.
    pub lot: String,
    /// Attempt number of this serial (1, 2, …).
    pub attempt: u32,
    /// When it was recorded (RFC 3339 UTC, milliseconds).
    pub calibrated_at: String,
    /// Pass or fail.
    pub result: AttemptResult,
    /// Reasons, as recorded.
    pub reasons: Vec<String>,
    /// Image length in bytes; `None` for a failed attempt.
    pub image_len: Option<u64>,
    /// CRC-32/ISO-HDLC of the whole image; `None` when there is no image.
    pub image_crc: Option<u32>,
    /// The program that recorded it.
    pub tool_version: String,
    /// Plan, rig log, station and operator, when recorded.
    pub trace: Option<Trace>,
}

/// Order of an attempt listing.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum Order {
    /// Most recently recorded first (descending row id: the order of
    /// recording, even if the clock was set back in between).
    #[default]
    NewestFirst,
    /// By serial (byte order of the UTF-8 text), then attempt number.
    BySerial,
}

/// Which attempts [`Store::attempts`] lists. Every set condition must hold;
/// [`Filter::default`] lists every attempt, newest first.
///
/// ```
/// use lc_host::store::{AttemptResult, Filter, Order};
/// // The units of lot DEMO-01 whose latest attempt failed, by serial.
/// let f = Filter::default()
///     .lot("DEMO-01")
///     .result(AttemptResult::Fail)
///     .latest_only()
///     .order(Order::BySerial);
/// assert!(f.latest_only);
/// ```
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct Filter {
    /// Only attempts in this lot.
    pub lot: Option<String>,
    /// Only attempts of this serial.
    pub serial: Option<String>,
    /// Only attempts with this result.
    pub result: Option<AttemptResult>,
    /// Only the latest attempt of each serial (latest over all lots, then
    /// the other conditions apply), i.e. each unit's current state.
    pub latest_only: bool,
    /// Order of the listing.
    pub order: Order,
}

impl Filter {
    /// Only attempts in `lot`.
    pub fn lot(mut self, lot: impl Into<String>) -> Self {
        self.lot = Some(lot.into());
        self
    }
    /// Only attempts of `serial`.
    pub fn serial(mut self, serial: impl Into<String>) -> Self {
        self.serial = Some(serial.into());
        self
    }
    /// Only attempts with `result`.
    pub fn result(mut self, result: AttemptResult) -> Self {
        self.result = Some(result);
        self
    }
    /// Only the latest attempt of each serial.
    pub fn latest_only(mut self) -> Self {
        self.latest_only = true;
        self
    }
    /// Sets the order.
    pub fn order(mut self, order: Order) -> Self {
        self.order = order;
        self
    }
}

/// Counts of one lot. A unit is a serial with at least one attempt in the
/// lot; its outcome in the lot is that of its latest attempt in the lot.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct LotSummary {
    /// Lot name.
    pub lot: String,
    /// When the lot's first attempt was recorded (RFC 3339 UTC).
    pub created_at: String,
    /// Units (distinct serials) with an attempt in this lot.
    pub units: u64,
    /// Units whose latest attempt in this lot passed.
    pub passed: u64,
    /// Units whose latest attempt in this lot failed (`units - passed`).
    pub failed: u64,
    /// Units whose first attempt in this lot passed.
    pub first_pass: u64,
    /// Attempts recorded in this lot (re-calibrations included).
    pub attempts: u64,
    /// `passed / units` as a fraction 0…1; `None` for a lot without units.
    pub yield_fraction: Option<f64>,
}

/// What went wrong with the unit-record database, naming the file and
/// saying what to do.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum StoreError {
    /// The file cannot be opened or created.
    #[error("cannot open database {path}: {source}; check that the folder exists and that you may write to it")]
    Open {
        /// Database file.
        path: PathBuf,
        /// SQLite's error.
        source: rusqlite::Error,
    },
    /// The file exists but is not an SQLite database.
    #[error("{path} is not an SQLite database (or it is damaged): give the path of an lc-host unit-record database, or a new file name to start one")]
    NotADatabase {
        /// Database file.
        path: PathBuf,
    },
    /// An SQLite database that some other program made.
    #[error("{path} is an SQLite database but not an lc-host unit-record database (it has tables and no schema version): choose another file name")]
    ForeignDatabase {
        /// Database file.
        path: PathBuf,
    },
    /// Written by a newer lc-host: this build does not know its schema.
    #[error("database {path} was written by a newer lc-host (schema {found}, this build knows {known}): upgrade lc-host")]
    NewerSchema {
        /// Database file.
        path: PathBuf,
        /// Schema version found in the file.
        found: i64,
        /// Newest schema version this build knows.
        known: u32,
    },
    /// A migration failed; its transaction was rolled back.
    #[error("database {path}: migration from schema {from} to {to} failed: {source}; the file was left at schema {from}: keep it, and report this error with a copy of the file")]
    Migration {
        /// Database file.
        path: PathBuf,
        /// Version before the failed migration (the file's version now).
        from: u32,
        /// Version the migration was to produce.
        to: u32,
        /// The database's error.
        source: Box<dyn std::error::Error + Send + Sync>,
    },
    /// Write-ahead logging could not be switched on.
    #[error("database {path}: cannot switch on write-ahead logging (journal mode is {mode:?}): keep the database on a local disk, not on a network share")]
    NoWal {
        /// Database file.
        path: PathBuf,
        /// The journal mode SQLite kept.
        mode: String,
    },
    /// Another process held the write lock longer than [`BUSY_TIMEOUT`].
    #[error("database {path} is locked by another process (waited {} s): close other programs writing to it (another lc-host, sqlite3) and retry", BUSY_TIMEOUT.as_secs())]
    Busy {
        /// Database file.
        path: PathBuf,
    },
    /// The attempt breaks a rule of [`NewAttempt`]; nothing was written.
    #[error("database {path}: attempt of serial {serial:?} not recorded: {problem}")]
    InvalidAttempt {
        /// Database file.
        path: PathBuf,
        /// The serial of the refused attempt.
        serial: String,
        /// The broken rule and what to fix.
        problem: String,
    },
    /// A stored row does not decode: the file was edited or damaged.
    #[error("database {path}: attempt row {id}, column `{column}`: {problem}; the file was changed outside lc-host or is damaged: run `sqlite3 {path} 'PRAGMA integrity_check'` and restore it from a backup")]
    Corrupt {
        /// Database file.
        path: PathBuf,
        /// Row id in `attempts`.
        id: i64,
        /// Column name.
        column: &'static str,
        /// What is wrong with the value.
        problem: String,
    },
    /// A read-only open found a schema this build does not read directly.
    #[error("database {path} is at schema {found}, this build reads schema {known}: open it once for writing (e.g. `lc-host calibrate`) to migrate it, or use the lc-host that wrote it")]
    ReadOnlyOldSchema {
        /// Database file.
        path: PathBuf,
        /// Schema version found in the file.
        found: i64,
        /// Schema version this build reads.
        known: u32,
    },
    /// A PostgreSQL failure (connection, statement).
    #[error("database {path}: {action} failed: {source}; check that the server runs, that the URL (user, password, host, database) is right, and that the user may create tables in the database")]
    Postgres {
        /// Database URL, without its password.
        path: PathBuf,
        /// What the store was doing.
        action: &'static str,
        /// The client's error.
        source: postgres::Error,
    },
    /// Any other SQLite failure.
    #[error("database {path}: {action} failed: {source}")]
    Sqlite {
        /// Database file.
        path: PathBuf,
        /// What the store was doing.
        action: &'static str,
        /// SQLite's error.
        source: rusqlite::Error,
    },
}

impl StoreError {
    /// Classifies an SQLite error: busy, not a database, or other.
    fn from_sqlite(path: &Path, action: &'static str, source: rusqlite::Error) -> Self {
        use rusqlite::ErrorCode::{DatabaseBusy, DatabaseLocked, NotADatabase};
        let path = path.to_path_buf();
        match source.sqlite_error_code() {
            Some(DatabaseBusy | DatabaseLocked) => StoreError::Busy { path },
            Some(NotADatabase) => StoreError::NotADatabase { path },
            _ => StoreError::Sqlite {
                path,
                action,
                source,
            },
        }
    }
}

/// The unit-record database: one open SQLite connection.
///
/// Several `Store`s (threads or processes) may use one file: reads never
/// block, and writers take turns, each waiting up to [`BUSY_TIMEOUT`].
#[derive(Debug)]
pub struct Store {
    conn: Conn,
    path: PathBuf,
}

/// The connection of one back end.
enum Conn {
    Sqlite(Connection),
    Postgres(std::cell::RefCell<Box<postgres::Client>>),
}

impl std::fmt::Debug for Conn {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            Conn::Sqlite(_) => "Sqlite",
            Conn::Postgres(_) => "Postgres",
        })
    }
}

/// SQLite's page cache per connection, negative: KiB (SQLite's default is
/// 2 000 KiB).
const CACHE_KIB: i64 = -16_384;

const INSERT_LOT: &str =
    "INSERT INTO lots (lot, created_at) VALUES (?1, ?2) ON CONFLICT (lot) DO NOTHING";
const NEXT_ATTEMPT: &str = "SELECT COALESCE(MAX(attempt), 0) + 1 FROM attempts WHERE serial = ?1";
const INSERT_ATTEMPT: &str = "INSERT INTO attempts
    (serial, lot, attempt, calibrated_at, result, reasons, params, residuals,
     rig_points, image, image_crc, tool_version,
     plan_sha256, rig_file, rig_sha256, station, operator)
    VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16, ?17)";
const RECORDED_FROM: &str = "SELECT serial, MAX(attempt) FROM attempts \
     WHERE rig_sha256 = ?1 AND plan_sha256 = ?2 GROUP BY serial";
const INSERT_PLAN: &str =
    "INSERT INTO plans (sha256, text) VALUES (?1, ?2) ON CONFLICT (sha256) DO NOTHING";
const RECORD_COLUMNS: &str = "id, serial, lot, attempt, calibrated_at, result, reasons, \
     params, residuals, rig_points, image, image_crc, tool_version, \
     plan_sha256, rig_file, rig_sha256, station, operator";
const SUMMARY_COLUMNS: &str =
    "id, serial, lot, attempt, calibrated_at, result, reasons, length(image), image_crc, tool_version, \
     plan_sha256, rig_file, rig_sha256, station, operator";
const SUMMARY_COLUMNS_PG: &str =
    "id, serial, lot, attempt, calibrated_at, result, reasons, octet_length(image)::BIGINT, image_crc, \
     tool_version, plan_sha256, rig_file, rig_sha256, station, operator";
/// Selects one attempt of a serial: the given number, or the latest (NULL).
const WHERE_ONE: &str = "WHERE serial = ?1 AND attempt = COALESCE(?2, \
     (SELECT MAX(attempt) FROM attempts WHERE serial = ?1))";
const LOTS: &str = "
WITH units AS (
    SELECT lot, serial, count(*) AS n, MIN(attempt) AS first, MAX(attempt) AS last
    FROM attempts GROUP BY lot, serial
), outcomes AS (
    SELECT u.lot, u.n,
           CASE WHEN (SELECT result FROM attempts a WHERE a.serial = u.serial AND a.attempt = u.last) = 'pass'
                THEN 1 ELSE 0 END AS passed,
           CASE WHEN (SELECT result FROM attempts a WHERE a.serial = u.serial AND a.attempt = u.first) = 'pass'
                THEN 1 ELSE 0 END AS first_pass
    FROM units u
)
SELECT l.lot, l.created_at, CAST(count(o.lot) AS BIGINT), CAST(COALESCE(SUM(o.passed), 0) AS BIGINT),
       CAST(COALESCE(SUM(o.first_pass), 0) AS BIGINT), CAST(COALESCE(SUM(o.n), 0) AS BIGINT),
       CASE WHEN count(o.lot) > 0 THEN CAST(SUM(o.passed) AS DOUBLE PRECISION) / count(o.lot) END
FROM lots l LEFT JOIN outcomes o ON o.lot = l.lot
GROUP BY l.lot
ORDER BY l.created_at, l.lot";

impl Store {
    /// Opens the unit-record database at `path`, creating it if missing:
    /// write-ahead logging with `synchronous = NORMAL`, foreign keys on,
    /// and the schema migrated to [`SCHEMA_VERSION`].
    ///
    /// # Errors
    /// [`StoreError::Open`] when the file cannot be opened or created,
    /// [`StoreError::NotADatabase`] / [`StoreError::ForeignDatabase`] for a
    /// file that is not ours, [`StoreError::NewerSchema`] for a file written
    /// by a newer lc-host, [`StoreError::NoWal`], [`StoreError::Migration`]
    /// and [`StoreError::Busy`].
    pub fn open(path: impl AsRef<Path>) -> Result<Store, StoreError> {
        if let Some(url) = path.as_ref().to_str().filter(|p| pg::is_url(p)) {
            let shown = PathBuf::from(pg::redacted(url));
            let client = pg::open(url, &shown, false)?;
            return Ok(Store {
                conn: Conn::Postgres(std::cell::RefCell::new(Box::new(client))),
                path: shown,
            });
        }
        let path = path.as_ref().to_path_buf();
        // No URI interpretation: a path is a path.
        let flags = OpenFlags::SQLITE_OPEN_READ_WRITE
            | OpenFlags::SQLITE_OPEN_CREATE
            | OpenFlags::SQLITE_OPEN_NO_MUTEX;
        let mut conn =
            Connection::open_with_flags(&path, flags).map_err(|source| StoreError::Open {
                path: path.clone(),
                source,
            })?;
        let err = |action| {
            let path = &path;
            move |e| StoreError::from_sqlite(path, action, e)
        };
        conn.busy_timeout(BUSY_TIMEOUT)
            .map_err(err("setting the busy timeout"))?;
        let mode: String = conn
            .pragma_update_and_check(None, "journal_mode", "WAL", |r| r.get(0))
            .map_err(err("switching on write-ahead logging"))?;
        if !mode.eq_ignore_ascii_case("wal") {
            return Err(StoreError::NoWal { path, mode });
        }
        // With WAL, NORMAL never corrupts the file; a power cut (not a
        // process crash) may lose the last commits (docs/database.md).
        conn.pragma_update(None, "synchronous", "NORMAL")
            .map_err(err("setting synchronous = NORMAL"))?;
        conn.pragma_update(None, "foreign_keys", true)
            .map_err(err("switching on foreign keys"))?;
        // Room for a whole group commit's pages (a unit's record takes
        // three to four 4 KiB pages): a transaction larger than the cache
        // spills pages into the write-ahead log before its commit, and
        // writes them again when it changes them after.
        conn.pragma_update(None, "cache_size", CACHE_KIB)
            .map_err(err("setting the page cache size"))?;
        schema::migrate(&mut conn, &path, schema::MIGRATIONS)?;
        Ok(Store {
            conn: Conn::Sqlite(conn),
            path,
        })
    }

    /// Opens an existing database for reading only: no journal-mode
    /// switch, no migration, nothing written, so a database on a read-only
    /// medium, in a read-only folder or without write permission can be
    /// listed and exported. Where SQLite cannot make its shared-memory file
    /// beside a write-ahead-logged database (a read-only folder), the file
    /// is opened as immutable: correct as long as no one writes to it then,
    /// which a read-only folder guarantees for everyone but its owner.
    ///
    /// # Errors
    /// [`StoreError::Open`] for a missing or unreadable file,
    /// [`StoreError::NotADatabase`] / [`StoreError::ForeignDatabase`],
    /// [`StoreError::NewerSchema`], and [`StoreError::ReadOnlyOldSchema`] for
    /// a database of an older schema (it needs a writable open to migrate).
    pub fn open_read_only(path: impl AsRef<Path>) -> Result<Store, StoreError> {
        if let Some(url) = path.as_ref().to_str().filter(|p| pg::is_url(p)) {
            let shown = PathBuf::from(pg::redacted(url));
            let client = pg::open(url, &shown, true)?;
            return Ok(Store {
                conn: Conn::Postgres(std::cell::RefCell::new(Box::new(client))),
                path: shown,
            });
        }
        let path = path.as_ref().to_path_buf();
        let plain = OpenFlags::SQLITE_OPEN_READ_ONLY | OpenFlags::SQLITE_OPEN_NO_MUTEX;
        let open_err = |source| StoreError::Open {
            path: path.clone(),
            source,
        };
        let try_plain = Connection::open_with_flags(&path, plain).and_then(|c| {
            // The first read is where a missing -shm file shows.
            c.pragma_query_value(None, "user_version", |r| r.get::<_, i64>(0))
                .map(|_| c)
        });
        let conn = match try_plain {
            Ok(c) => c,
            Err(e) if e.sqlite_error_code() == Some(rusqlite::ErrorCode::NotADatabase) => {
                return Err(StoreError::NotADatabase { path });
            }
            Err(first) => {
                if !path.is_file() {
                    return Err(open_err(first));
                }
                let mut uri = String::from("file:");
                for b in path.to_string_lossy().bytes() {
                    if b.is_ascii_alphanumeric() || b"/-_.~".contains(&b) {
                        uri.push(char::from(b));
                    } else {
                        uri.push_str(&format!("%{b:02X}"));
                    }
                }
                uri.push_str("?immutable=1");
                Connection::open_with_flags(&uri, plain | OpenFlags::SQLITE_OPEN_URI)
                    .map_err(open_err)?
            }
        };
        conn.busy_timeout(BUSY_TIMEOUT)
            .map_err(|e| StoreError::from_sqlite(&path, "setting the busy timeout", e))?;
        let found: i64 = conn
            .pragma_query_value(None, "user_version", |r| r.get(0))
            .map_err(|e| StoreError::from_sqlite(&path, "reading the schema version", e))?;
        let known = SCHEMA_VERSION;
        if found > i64::from(known) {
            return Err(StoreError::NewerSchema { path, found, known });
        }
        if found == 0 {
            return Err(StoreError::ForeignDatabase { path });
        }
        if found < i64::from(known) {
            return Err(StoreError::ReadOnlyOldSchema { path, found, known });
        }
        Ok(Store {
            conn: Conn::Sqlite(conn),
            path,
        })
    }

    /// The database file this store was opened on (for PostgreSQL, its
    /// URL without the password).
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Whether this store is on a PostgreSQL server.
    pub fn is_postgres(&self) -> bool {
        matches!(self.conn, Conn::Postgres(_))
    }

    /// The SQLite connection (tests of SQLite's own settings).
    #[cfg(test)]
    fn sqlite(&self) -> &Connection {
        match &self.conn {
            Conn::Sqlite(c) => c,
            Conn::Postgres(_) => panic!("not an SQLite store"),
        }
    }

    fn invalid(&self, serial: &str, problem: impl Into<String>) -> StoreError {
        StoreError::InvalidAttempt {
            path: self.path.clone(),
            serial: serial.to_owned(),
            problem: problem.into(),
        }
    }

    /// Checks the rules of [`Attempt`] on the columns other than the
    /// JSON ones.
    fn check_head(&self, a: Head<'_>) -> Result<(), StoreError> {
        let invalid = |p: String| self.invalid(a.serial, p);
        check_name("serial", a.serial).map_err(invalid)?;
        check_name("lot", a.lot).map_err(invalid)?;
        match (a.result, a.image, a.image_crc) {
            (AttemptResult::Fail, None, None) if a.reasons.is_empty() => {
                return Err(invalid(
                    "a failed attempt needs at least one reason: say which limit it broke".into(),
                ));
            }
            (AttemptResult::Fail, None, None) => {}
            (AttemptResult::Fail, _, _) => {
                return Err(invalid(
                    "a failed attempt has no calibration image: pass image and image_crc as None"
                        .into(),
                ));
            }
            (AttemptResult::Pass, Some(image), Some(crc)) => {
                let actual = lc_core::image::CRC32.checksum(image);
                if actual != crc {
                    return Err(invalid(format!(
                        "image_crc is 0x{crc:08X} but the CRC-32/ISO-HDLC of the {}-byte image is 0x{actual:08X}: pass lc_core::image::CRC32.checksum(&image), the CRC over every byte of the image (not the image's own CRC field)",
                        image.len()
                    )));
                }
            }
            (AttemptResult::Pass, _, _) => {
                return Err(invalid(
                    "a passing attempt needs its calibration image and the image's CRC-32".into(),
                ));
            }
        }
        if let Some(t) = a.trace {
            for (name, v) in [
                ("plan_sha256", &t.plan_sha256),
                ("rig_sha256", &t.rig_sha256),
            ] {
                if !is_sha256_hex(v) {
                    return Err(invalid(format!(
                        "trace.{name} {v:?} is not 64 lower-case hex digits: pass sha256_hex of the file's bytes"
                    )));
                }
            }
            for (name, v) in [
                ("rig_file", &t.rig_file),
                ("station", &t.station),
                ("operator", &t.operator),
            ] {
                if v.chars().any(char::is_control) {
                    return Err(invalid(format!(
                        "trace.{name} {v:?} contains a control character: remove it"
                    )));
                }
            }
        }
        Ok(())
    }

    /// Checks the rules of [`NewAttempt`]; returns the attempt with the
    /// JSON texts of reasons, params, residuals and rig points.
    fn check<'a>(&self, a: &'a NewAttempt) -> Result<Checked<'a>, StoreError> {
        let head = Head::of(a);
        self.check_head(head)?;
        if !a.params.is_object() {
            return Err(self.invalid(
                &a.serial,
                "params must be a JSON object (name → fitted value)",
            ));
        }
        for (name, v) in [("residuals", &a.residuals), ("rig_points", &a.rig_points)] {
            if !v.is_array() {
                return Err(self.invalid(&a.serial, format!("{name} must be a JSON array")));
            }
        }
        // Each text written once into a buffer about its final size (a
        // unit's rig points run to kilobytes).
        let json = |v: &dyn erased::Json, capacity: usize| {
            let mut buf = Vec::with_capacity(capacity);
            v.write(&mut buf)
                .map_err(|e| self.invalid(&a.serial, format!("cannot write JSON: {e}")))?;
            String::from_utf8(buf)
                .map(std::borrow::Cow::Owned)
                .map_err(|e| self.invalid(&a.serial, format!("cannot write JSON: {e}")))
        };
        Ok(Checked {
            head,
            json: [
                json(&a.reasons, 256)?,
                json(&a.params, 1024)?,
                json(
                    &a.residuals,
                    64 * (a.residuals.as_array().map_or(0, Vec::len) + 1),
                )?,
                json(
                    &a.rig_points,
                    192 * (a.rig_points.as_array().map_or(0, Vec::len) + 1),
                )?,
            ],
        })
    }

    /// Checks the rules of [`AttemptText`]: those of [`NewAttempt`], with
    /// the JSON texts checked by their first character only (the
    /// database's own constraints check the rest).
    fn check_text<'a>(&self, a: &'a AttemptText) -> Result<Checked<'a>, StoreError> {
        let head = Head::of(a);
        self.check_head(head)?;
        let starts = |t: &str, c: u8| t.trim_start().as_bytes().first() == Some(&c);
        if !starts(&a.params, b'{') {
            return Err(self.invalid(
                &a.serial,
                "params must be the text of a JSON object (name → fitted value)",
            ));
        }
        for (name, v) in [("residuals", &a.residuals), ("rig_points", &a.rig_points)] {
            if !starts(v, b'[') {
                return Err(self.invalid(
                    &a.serial,
                    format!("{name} must be the text of a JSON array"),
                ));
            }
        }
        let reasons = serde_json::to_string(&a.reasons)
            .map_err(|e| self.invalid(&a.serial, format!("cannot write JSON: {e}")))?;
        Ok(Checked {
            head,
            json: [
                reasons.into(),
                a.params.as_str().into(),
                a.residuals.as_str().into(),
                a.rig_points.as_str().into(),
            ],
        })
    }

    /// Records one calibration attempt in one transaction: creates the lot
    /// if it is new, numbers the attempt (the serial's highest attempt + 1,
    /// read under the write lock) and inserts it. Earlier attempts are never
    /// changed. Returns the stored record.
    ///
    /// # Errors
    /// [`StoreError::InvalidAttempt`] when `a` breaks a rule of
    /// [`NewAttempt`] (nothing is written), [`StoreError::Busy`] when
    /// another writer holds the lock longer than [`BUSY_TIMEOUT`], other
    /// variants for SQLite failures; after any error nothing was written.
    pub fn record(&mut self, a: &NewAttempt) -> Result<AttemptRecord, StoreError> {
        let mut out = self.record_batch(std::slice::from_ref(a))?;
        let r = out.pop().unwrap_or_else(|| {
            Err(self.invalid(&a.serial, "no result for the attempt (a bug: report it)"))
        })?;
        Ok(AttemptRecord {
            id: r.id,
            serial: a.serial.clone(),
            lot: a.lot.clone(),
            attempt: r.attempt,
            calibrated_at: r.calibrated_at,
            result: a.result,
            reasons: a.reasons.clone(),
            params: a.params.clone(),
            residuals: a.residuals.clone(),
            rig_points: a.rig_points.clone(),
            image: a.image.clone(),
            image_crc: a.image_crc,
            tool_version: TOOL_VERSION.to_owned(),
            trace: a.trace.clone(),
        })
    }

    /// Records a group of attempts in one transaction (a group commit): all
    /// of them or, after an error of the transaction, none. Each attempt is
    /// checked first; one that breaks a rule of [`NewAttempt`] is not
    /// written and its place in the returned list holds its
    /// [`StoreError::InvalidAttempt`], while the others are recorded. The
    /// returned list has one entry per attempt, in order. A serial may
    /// appear more than once in a group: its attempts are numbered in
    /// order. Each entry says where the attempt landed ([`Recorded`]).
    ///
    /// One commit per group instead of per unit is what makes a station
    /// fast; a process killed mid-group loses exactly the group's attempts,
    /// never part of one (docs/database.md, "Crash safety").
    ///
    /// # Errors
    /// [`StoreError::Busy`] and SQLite failures, after which nothing of the
    /// group was written.
    pub fn record_batch(
        &mut self,
        batch: &[NewAttempt],
    ) -> Result<Vec<Result<Recorded, StoreError>>, StoreError> {
        let checked: Vec<Result<Checked<'_>, StoreError>> =
            batch.iter().map(|a| self.check(a)).collect();
        self.insert_checked(checked)
    }

    /// [`Store::record_batch`] for attempts whose JSON columns are text
    /// already (a station writes them straight from its fits, without
    /// building JSON values). The texts must be JSON: a text that is not
    /// fails the database's constraints, and with it the whole group.
    ///
    /// # Errors
    /// As [`Store::record_batch`].
    pub fn record_texts(
        &mut self,
        batch: &[AttemptText],
    ) -> Result<Vec<Result<Recorded, StoreError>>, StoreError> {
        let checked: Vec<Result<Checked<'_>, StoreError>> =
            batch.iter().map(|a| self.check_text(a)).collect();
        self.insert_checked(checked)
    }

    /// One transaction for a group of checked attempts (see
    /// [`Store::record_batch`]).
    fn insert_checked(
        &mut self,
        checked: Vec<Result<Checked<'_>, StoreError>>,
    ) -> Result<Vec<Result<Recorded, StoreError>>, StoreError> {
        let path = &self.path;
        let conn = match &mut self.conn {
            Conn::Sqlite(c) => c,
            Conn::Postgres(c) => {
                return pg::record_batch(c.get_mut(), path, checked, || {
                    timestamp::rfc3339_utc(SystemTime::now())
                })
            }
        };
        let err = |action| move |e| StoreError::from_sqlite(path, action, e);
        let tx = conn
            .transaction_with_behavior(TransactionBehavior::Immediate)
            .map_err(err("locking the database"))?;
        // Under the write lock, so time stamps follow the attempt order.
        let calibrated_at = timestamp::rfc3339_utc(SystemTime::now());
        let mut out = Vec::with_capacity(checked.len());
        let mut lots_added: Vec<&str> = Vec::new();
        {
            let mut insert_lot = tx
                .prepare_cached(INSERT_LOT)
                .map_err(err("adding the lot"))?;
            let mut next_attempt = tx
                .prepare_cached(NEXT_ATTEMPT)
                .map_err(err("numbering the attempt"))?;
            let mut insert = tx
                .prepare_cached(INSERT_ATTEMPT)
                .map_err(err("inserting the attempt"))?;
            for c in checked {
                let Checked {
                    head: a,
                    json: [reasons, params, residuals, rig_points],
                } = match c {
                    Ok(c) => c,
                    Err(e) => {
                        out.push(Err(e));
                        continue;
                    }
                };
                if !lots_added.contains(&a.lot) {
                    insert_lot
                        .execute(params![a.lot, calibrated_at])
                        .map_err(err("adding the lot"))?;
                    lots_added.push(a.lot);
                }
                let next: i64 = next_attempt
                    .query_row([a.serial], |r| r.get(0))
                    .map_err(err("numbering the attempt"))?;
                let Ok(attempt) = u32::try_from(next) else {
                    out.push(Err(StoreError::InvalidAttempt {
                        path: path.clone(),
                        serial: a.serial.to_owned(),
                        problem: format!(
                            "attempt number {next} is out of range: this serial has too many attempts"
                        ),
                    }));
                    continue;
                };
                let t = a.trace;
                insert
                    .execute(params![
                        a.serial,
                        a.lot,
                        attempt,
                        calibrated_at,
                        a.result.as_str(),
                        &*reasons,
                        &*params,
                        &*residuals,
                        &*rig_points,
                        a.image,
                        a.image_crc,
                        TOOL_VERSION,
                        t.map(|t| &t.plan_sha256),
                        t.map(|t| &t.rig_file),
                        t.map(|t| &t.rig_sha256),
                        t.map(|t| &t.station),
                        t.map(|t| &t.operator),
                    ])
                    .map_err(err("inserting the attempt"))?;
                out.push(Ok(Recorded {
                    id: tx.last_insert_rowid(),
                    attempt,
                    calibrated_at: calibrated_at.clone(),
                }));
            }
        }
        tx.commit().map_err(err("committing the attempts"))?;
        Ok(out)
    }

    /// Takes write-ahead-log checkpoints off the commits of this
    /// connection (SQLite; nothing on PostgreSQL): a caller that commits
    /// often and has idle moments calls [`Store::checkpoint`] in
    /// them instead. [`Store::resume_checkpoints`] undoes it.
    ///
    /// # Errors
    /// SQLite failures.
    pub fn defer_checkpoints(&self) -> Result<(), StoreError> {
        self.autocheckpoint(0)
    }

    /// Commits checkpoint the write-ahead log again (SQLite's default of
    /// 1000 pages).
    ///
    /// # Errors
    /// SQLite failures.
    pub fn resume_checkpoints(&self) -> Result<(), StoreError> {
        self.autocheckpoint(1000)
    }

    fn autocheckpoint(&self, pages: i64) -> Result<(), StoreError> {
        match &self.conn {
            Conn::Sqlite(c) => c
                .pragma_update(None, "wal_autocheckpoint", pages)
                .map_err(self.sqlite_err("setting wal_autocheckpoint")),
            Conn::Postgres(_) => Ok(()),
        }
    }

    /// A passive checkpoint of the write-ahead log (SQLite; nothing on
    /// PostgreSQL): copies committed pages into the database file as far as
    /// no reader needs them, without waiting for anyone.
    ///
    /// # Errors
    /// SQLite failures.
    pub fn checkpoint(&self) -> Result<(), StoreError> {
        match &self.conn {
            Conn::Sqlite(c) => c
                .query_row("PRAGMA wal_checkpoint(PASSIVE)", [], |_| Ok(()))
                .map_err(self.sqlite_err("checkpointing the write-ahead log")),
            Conn::Postgres(_) => Ok(()),
        }
    }

    /// The serials of the attempts recorded after row `id` (by any
    /// writer), each once: a station that recorded a group up to `id`
    /// asks, under [`Store::exclusive`], which of its units another
    /// station has recorded since (usually none).
    ///
    /// # Errors
    /// Database failures.
    pub fn serials_recorded_after(&self, id: i64) -> Result<Vec<String>, StoreError> {
        let sql = "SELECT DISTINCT serial FROM attempts WHERE id > ?1";
        match &self.conn {
            Conn::Sqlite(c) => c
                .prepare_cached(sql)
                .and_then(|mut s| {
                    s.query_map([id], |r| r.get(0))?
                        .collect::<rusqlite::Result<Vec<String>>>()
                })
                .map_err(self.sqlite_err("reading the latest attempts")),
            Conn::Postgres(c) => Ok(c
                .borrow_mut()
                .query(&pg::dollars(sql), &[&id])
                .map_err(pg::err(&self.path, "reading the latest attempts"))?
                .iter()
                .map(|r| r.get(0))
                .collect()),
        }
    }

    /// Runs `f` while holding the database's write lock, so that no other
    /// writer commits meanwhile: the station brings image files to the
    /// latest records under it, and since every writer does so after each
    /// commit, the last one to do it for a unit sees that unit's latest
    /// record (stations sharing one images folder end equal to the latest
    /// verdicts). SQLite: an immediate transaction, rolled back; PostgreSQL:
    /// the writers' advisory lock, held for the session and released.
    ///
    /// # Errors
    /// [`StoreError::Busy`] and database failures taking the lock.
    pub fn exclusive<T>(&mut self, f: impl FnOnce(&Store) -> T) -> Result<T, StoreError> {
        match &self.conn {
            Conn::Sqlite(c) => {
                c.execute_batch("BEGIN IMMEDIATE")
                    .map_err(self.sqlite_err("locking the database"))?;
                let out = f(self);
                c.execute_batch("ROLLBACK")
                    .map_err(self.sqlite_err("releasing the lock"))?;
                Ok(out)
            }
            Conn::Postgres(c) => {
                c.borrow_mut()
                    .execute("SELECT pg_advisory_lock($1)", &[&pg::WRITE_LOCK])
                    .map_err(pg::err(&self.path, "locking the database"))?;
                let out = f(self);
                c.borrow_mut()
                    .execute("SELECT pg_advisory_unlock($1)", &[&pg::WRITE_LOCK])
                    .map_err(pg::err(&self.path, "releasing the lock"))?;
                Ok(out)
            }
        }
    }

    /// Keeps a plan's full text (once per distinct text) and returns its
    /// SHA-256 (64 lower-case hex digits), the `plan_sha256` of the
    /// attempts judged against it. Attempts may name only a registered
    /// plan (a foreign key).
    ///
    /// # Errors
    /// [`StoreError::Busy`] and SQLite failures.
    pub fn register_plan(&mut self, text: &str) -> Result<String, StoreError> {
        let sha = sha256_hex(text.as_bytes());
        match &mut self.conn {
            Conn::Sqlite(c) => {
                c.prepare_cached(INSERT_PLAN)
                    .and_then(|mut s| s.execute(params![sha, text]))
                    .map_err(|e| StoreError::from_sqlite(&self.path, "keeping the plan", e))?;
            }
            Conn::Postgres(c) => pg::register_plan(c.get_mut(), &self.path, &sha, text)?,
        }
        Ok(sha)
    }

    fn sqlite_err(&self, action: &'static str) -> impl Fn(rusqlite::Error) -> StoreError + '_ {
        move |e| StoreError::from_sqlite(&self.path, action, e)
    }

    /// The full text of a registered plan, `None` when no plan has that
    /// hash.
    ///
    /// # Errors
    /// Database failures.
    pub fn plan_text(&self, sha256: &str) -> Result<Option<String>, StoreError> {
        match &self.conn {
            Conn::Sqlite(c) => c
                .prepare_cached("SELECT text FROM plans WHERE sha256 = ?1")
                .and_then(|mut s| s.query_row([sha256], |r| r.get(0)).optional())
                .map_err(self.sqlite_err("reading a plan")),
            Conn::Postgres(c) => pg::plan_text(&mut c.borrow_mut(), &self.path, sha256),
        }
    }

    /// The serials that already have an attempt from the rig log with hash
    /// `rig_sha256` judged against the plan with hash `plan_sha256`, each
    /// with its latest such attempt number: a station re-run skips them.
    ///
    /// # Errors
    /// Database failures.
    pub fn recorded_from(
        &self,
        rig_sha256: &str,
        plan_sha256: &str,
    ) -> Result<HashMap<String, u32>, StoreError> {
        let c = match &self.conn {
            Conn::Sqlite(c) => c,
            Conn::Postgres(c) => {
                return pg::recorded_from(&mut c.borrow_mut(), &self.path, rig_sha256, plan_sha256)
            }
        };
        let mut stmt = c
            .prepare_cached(RECORDED_FROM)
            .map_err(self.sqlite_err("finding recorded units"))?;
        let rows = stmt
            .query_map([rig_sha256, plan_sha256], |r| {
                Ok((r.get::<_, String>(0)?, r.get::<_, i64>(1)?))
            })
            .map_err(self.sqlite_err("finding recorded units"))?;
        let mut out = HashMap::new();
        for row in rows {
            let (serial, n) = row.map_err(self.sqlite_err("finding recorded units"))?;
            out.insert(serial, u32::try_from(n).unwrap_or(0));
        }
        Ok(out)
    }

    /// Lists attempts matching `filter`, in `filter.order`, without their
    /// JSON payloads and images (see [`Store::attempt`] for those).
    ///
    /// # Errors
    /// Database failures, and [`StoreError::Corrupt`] for a row that does
    /// not decode.
    pub fn attempts(&self, filter: &Filter) -> Result<Vec<AttemptSummary>, StoreError> {
        let columns = match self.conn {
            Conn::Sqlite(_) => SUMMARY_COLUMNS,
            Conn::Postgres(_) => SUMMARY_COLUMNS_PG,
        };
        let mut sql = format!("SELECT {columns} FROM attempts WHERE TRUE");
        let mut args: Vec<&str> = Vec::new();
        // Only fixed SQL fragments are appended; values go in `args`.
        if let Some(lot) = &filter.lot {
            args.push(lot);
            sql.push_str(&format!(" AND lot = ?{}", args.len()));
        }
        if let Some(serial) = &filter.serial {
            args.push(serial);
            sql.push_str(&format!(" AND serial = ?{}", args.len()));
        }
        if let Some(result) = filter.result {
            args.push(result.as_str());
            sql.push_str(&format!(" AND result = ?{}", args.len()));
        }
        if filter.latest_only {
            sql.push_str(
                " AND attempt = (SELECT MAX(attempt) FROM attempts AS later WHERE later.serial = attempts.serial)",
            );
        }
        sql.push_str(match filter.order {
            Order::NewestFirst => " ORDER BY id DESC",
            Order::BySerial => " ORDER BY serial, attempt",
        });
        let mut out = Vec::new();
        match &self.conn {
            Conn::Sqlite(c) => {
                let mut stmt = c
                    .prepare_cached(&sql)
                    .map_err(self.sqlite_err("listing attempts"))?;
                let rows = stmt
                    .query_map(rusqlite::params_from_iter(args), RawSummary::from_row)
                    .map_err(self.sqlite_err("listing attempts"))?;
                for raw in rows {
                    out.push(
                        raw.map_err(self.sqlite_err("reading an attempt"))?
                            .decode(&self.path)?,
                    );
                }
            }
            Conn::Postgres(c) => {
                let params: Vec<&(dyn postgres::types::ToSql + Sync)> = args
                    .iter()
                    .map(|a| a as &(dyn postgres::types::ToSql + Sync))
                    .collect();
                let rows = c
                    .borrow_mut()
                    .query(&pg::dollars(&sql), &params)
                    .map_err(pg::err(&self.path, "listing attempts"))?;
                for r in &rows {
                    out.push(
                        pg::summary(r)
                            .map_err(pg::err(&self.path, "reading an attempt"))?
                            .decode(&self.path)?,
                    );
                }
            }
        }
        Ok(out)
    }

    /// One attempt of `serial`, complete: number `attempt`, or the latest
    /// when `attempt` is `None`. `Ok(None)` when there is no such attempt.
    ///
    /// # Errors
    /// Database failures, and [`StoreError::Corrupt`] for a row that does
    /// not decode or whose image does not match its CRC.
    pub fn attempt(
        &self,
        serial: &str,
        attempt: Option<u32>,
    ) -> Result<Option<AttemptRecord>, StoreError> {
        let sql = format!("SELECT {RECORD_COLUMNS} FROM attempts {WHERE_ONE}");
        let raw = match &self.conn {
            Conn::Sqlite(c) => c
                .prepare_cached(&sql)
                .and_then(|mut s| {
                    s.query_row(params![serial, attempt], RawRecord::from_row)
                        .optional()
                })
                .map_err(self.sqlite_err("reading an attempt"))?,
            Conn::Postgres(c) => {
                let n = attempt.map(|n| i32::try_from(n).unwrap_or(i32::MAX));
                c.borrow_mut()
                    .query_opt(&pg::dollars(&sql), &[&serial, &n])
                    .map_err(pg::err(&self.path, "reading an attempt"))?
                    .map(|r| pg::record(&r))
                    .transpose()
                    .map_err(pg::err(&self.path, "reading an attempt"))?
            }
        };
        raw.map(|r| r.decode(&self.path)).transpose()
    }

    /// The calibration image of one attempt of `serial` (number `attempt`,
    /// or the latest when `None`), checked against its stored CRC.
    /// `Ok(None)` when there is no such attempt or it failed (a failed
    /// attempt has no image: the latest attempt of a unit that failed its
    /// re-calibration has none, even if an earlier one passed).
    ///
    /// # Errors
    /// Database failures, and [`StoreError::Corrupt`] when the image does
    /// not match its CRC.
    pub fn image(&self, serial: &str, attempt: Option<u32>) -> Result<Option<Vec<u8>>, StoreError> {
        let sql = format!("SELECT id, image, image_crc FROM attempts {WHERE_ONE}");
        let row: Option<(i64, Option<Vec<u8>>, Option<i64>)> = match &self.conn {
            Conn::Sqlite(c) => c
                .prepare_cached(&sql)
                .and_then(|mut s| {
                    s.query_row(params![serial, attempt], |r| {
                        Ok((r.get(0)?, r.get(1)?, r.get(2)?))
                    })
                    .optional()
                })
                .map_err(self.sqlite_err("reading an image"))?,
            Conn::Postgres(c) => {
                let n = attempt.map(|n| i32::try_from(n).unwrap_or(i32::MAX));
                c.borrow_mut()
                    .query_opt(&pg::dollars(&sql), &[&serial, &n])
                    .map_err(pg::err(&self.path, "reading an image"))?
                    .map(|r| Ok((r.try_get(0)?, r.try_get(1)?, r.try_get(2)?)))
                    .transpose()
                    .map_err(pg::err(&self.path, "reading an image"))?
            }
        };
        let Some((id, image, crc)) = row else {
            return Ok(None);
        };
        let crc = decode_crc(&self.path, id, crc)?;
        check_image(&self.path, id, image.as_deref(), crc)?;
        Ok(image)
    }

    /// Every lot with its counts, oldest lot first (by `created_at`, then
    /// name).
    ///
    /// # Errors
    /// Database failures, and [`StoreError::Corrupt`] for counts that do
    /// not decode.
    pub fn lots(&self) -> Result<Vec<LotSummary>, StoreError> {
        type Raw = (String, String, [i64; 4], Option<f64>);
        let raw: Vec<Raw> = match &self.conn {
            Conn::Sqlite(c) => {
                let mut stmt = c
                    .prepare_cached(LOTS)
                    .map_err(self.sqlite_err("counting lots"))?;
                let rows = stmt
                    .query_map([], |r| {
                        Ok((
                            r.get::<_, String>(0)?,
                            r.get::<_, String>(1)?,
                            [r.get::<_, i64>(2)?, r.get(3)?, r.get(4)?, r.get(5)?],
                            r.get::<_, Option<f64>>(6)?,
                        ))
                    })
                    .map_err(self.sqlite_err("counting lots"))?;
                rows.collect::<Result<_, _>>()
                    .map_err(self.sqlite_err("counting lots"))?
            }
            Conn::Postgres(c) => c
                .borrow_mut()
                .query(LOTS, &[])
                .map_err(pg::err(&self.path, "counting lots"))?
                .iter()
                .map(|r| {
                    Ok((
                        r.try_get(0)?,
                        r.try_get(1)?,
                        [r.try_get(2)?, r.try_get(3)?, r.try_get(4)?, r.try_get(5)?],
                        r.try_get(6)?,
                    ))
                })
                .collect::<Result<_, postgres::Error>>()
                .map_err(pg::err(&self.path, "counting lots"))?,
        };
        Ok(raw
            .into_iter()
            .map(|(lot, created_at, counts, yield_fraction)| {
                let [units, passed, first_pass, attempts] =
                    counts.map(|n| u64::try_from(n).unwrap_or(0));
                LotSummary {
                    lot,
                    created_at,
                    units,
                    passed,
                    failed: units.saturating_sub(passed),
                    first_pass,
                    attempts,
                    yield_fraction,
                }
            })
            .collect())
    }
}

/// Checks a serial or lot name; returns the problem and its fix.
fn check_name(what: &str, s: &str) -> Result<(), String> {
    if s.is_empty() {
        return Err(format!(
            "the {what} is empty: give the {what} as printed on the unit or traveller"
        ));
    }
    if s.chars().any(char::is_control) {
        return Err(format!(
            "the {what} {s:?} contains a control character: remove it"
        ));
    }
    if s.trim() != s {
        return Err(format!(
            "the {what} {s:?} starts or ends with white space: trim it"
        ));
    }
    Ok(())
}

fn decode_crc(path: &Path, id: i64, crc: Option<i64>) -> Result<Option<u32>, StoreError> {
    crc.map(|c| {
        u32::try_from(c).map_err(|_| StoreError::Corrupt {
            path: path.to_path_buf(),
            id,
            column: "image_crc",
            problem: format!("{c} is not a CRC-32"),
        })
    })
    .transpose()
}

fn check_image(
    path: &Path,
    id: i64,
    image: Option<&[u8]>,
    crc: Option<u32>,
) -> Result<(), StoreError> {
    let corrupt = |problem: String| StoreError::Corrupt {
        path: path.to_path_buf(),
        id,
        column: "image",
        problem,
    };
    match (image, crc) {
        (Some(image), Some(crc)) => {
            let actual = lc_core::image::CRC32.checksum(image);
            if actual == crc {
                Ok(())
            } else {
                Err(corrupt(format!(
                    "the image's CRC-32 is 0x{actual:08X}, the stored image_crc 0x{crc:08X}"
                )))
            }
        }
        (None, None) => Ok(()),
        _ => Err(corrupt(
            "image and image_crc are not both present or both absent".into(),
        )),
    }
}

/// The columns of one row as SQLite returns them, decoded afterwards so a
/// bad value becomes [`StoreError::Corrupt`] with the row and column.
struct RawCommon {
    id: i64,
    serial: String,
    lot: String,
    attempt: i64,
    calibrated_at: String,
    result: String,
    reasons: String,
}

impl RawCommon {
    fn from_row(r: &Row<'_>) -> rusqlite::Result<Self> {
        Ok(RawCommon {
            id: r.get(0)?,
            serial: r.get(1)?,
            lot: r.get(2)?,
            attempt: r.get(3)?,
            calibrated_at: r.get(4)?,
            result: r.get(5)?,
            reasons: r.get(6)?,
        })
    }

    fn corrupt(&self, path: &Path, column: &'static str, problem: impl Into<String>) -> StoreError {
        StoreError::Corrupt {
            path: path.to_path_buf(),
            id: self.id,
            column,
            problem: problem.into(),
        }
    }

    fn attempt(&self, path: &Path) -> Result<u32, StoreError> {
        u32::try_from(self.attempt)
            .ok()
            .filter(|&n| n >= 1)
            .ok_or_else(|| {
                self.corrupt(
                    path,
                    "attempt",
                    format!("{} is not an attempt number", self.attempt),
                )
            })
    }

    fn result(&self, path: &Path) -> Result<AttemptResult, StoreError> {
        AttemptResult::parse(&self.result).ok_or_else(|| {
            self.corrupt(
                path,
                "result",
                format!("{:?} is neither pass nor fail", self.result),
            )
        })
    }

    fn json<T: serde::de::DeserializeOwned>(
        &self,
        path: &Path,
        column: &'static str,
        text: &str,
    ) -> Result<T, StoreError> {
        serde_json::from_str(text)
            .map_err(|e| self.corrupt(path, column, format!("not the expected JSON: {e}")))
    }
}

/// The five traceability columns, all NULL or none.
struct RawTrace([Option<String>; 5]);

impl RawTrace {
    fn from_row(r: &Row<'_>, first: usize) -> rusqlite::Result<Self> {
        Ok(RawTrace([
            r.get(first)?,
            r.get(first + 1)?,
            r.get(first + 2)?,
            r.get(first + 3)?,
            r.get(first + 4)?,
        ]))
    }

    fn decode(self, path: &Path, id: i64) -> Result<Option<Trace>, StoreError> {
        match self.0 {
            [None, None, None, None, None] => Ok(None),
            [Some(plan_sha256), Some(rig_file), Some(rig_sha256), Some(station), Some(operator)] => {
                Ok(Some(Trace {
                    plan_sha256,
                    rig_file,
                    rig_sha256,
                    station,
                    operator,
                }))
            }
            _ => Err(StoreError::Corrupt {
                path: path.to_path_buf(),
                id,
                column: "plan_sha256",
                problem: "the traceability columns are neither all set nor all NULL".into(),
            }),
        }
    }
}

struct RawSummary {
    common: RawCommon,
    image_len: Option<i64>,
    image_crc: Option<i64>,
    tool_version: String,
    trace: RawTrace,
}

impl RawSummary {
    fn from_row(r: &Row<'_>) -> rusqlite::Result<Self> {
        Ok(RawSummary {
            common: RawCommon::from_row(r)?,
            image_len: r.get(7)?,
            image_crc: r.get(8)?,
            tool_version: r.get(9)?,
            trace: RawTrace::from_row(r, 10)?,
        })
    }

    fn decode(self, path: &Path) -> Result<AttemptSummary, StoreError> {
        let c = &self.common;
        Ok(AttemptSummary {
            attempt: c.attempt(path)?,
            result: c.result(path)?,
            reasons: c.json(path, "reasons", &c.reasons)?,
            image_len: self.image_len.and_then(|n| u64::try_from(n).ok()),
            image_crc: decode_crc(path, c.id, self.image_crc)?,
            tool_version: self.tool_version,
            trace: self.trace.decode(path, c.id)?,
            id: c.id,
            serial: self.common.serial,
            lot: self.common.lot,
            calibrated_at: self.common.calibrated_at,
        })
    }
}

struct RawRecord {
    common: RawCommon,
    params: String,
    residuals: String,
    rig_points: String,
    image: Option<Vec<u8>>,
    image_crc: Option<i64>,
    tool_version: String,
    trace: RawTrace,
}

impl RawRecord {
    fn from_row(r: &Row<'_>) -> rusqlite::Result<Self> {
        Ok(RawRecord {
            common: RawCommon::from_row(r)?,
            params: r.get(7)?,
            residuals: r.get(8)?,
            rig_points: r.get(9)?,
            image: r.get(10)?,
            image_crc: r.get(11)?,
            tool_version: r.get(12)?,
            trace: RawTrace::from_row(r, 13)?,
        })
    }

    fn decode(self, path: &Path) -> Result<AttemptRecord, StoreError> {
        let c = &self.common;
        let image_crc = decode_crc(path, c.id, self.image_crc)?;
        check_image(path, c.id, self.image.as_deref(), image_crc)?;
        Ok(AttemptRecord {
            attempt: c.attempt(path)?,
            result: c.result(path)?,
            reasons: c.json(path, "reasons", &c.reasons)?,
            params: c.json(path, "params", &self.params)?,
            residuals: c.json(path, "residuals", &self.residuals)?,
            rig_points: c.json(path, "rig_points", &self.rig_points)?,
            image: self.image,
            image_crc,
            tool_version: self.tool_version,
            trace: self.trace.decode(path, c.id)?,
            id: c.id,
            serial: self.common.serial,
            lot: self.common.lot,
            calibrated_at: self.common.calibrated_at,
        })
    }
}

/// JSON writing for the columns' two kinds of value.
mod erased {
    /// A value written as JSON text.
    pub(super) trait Json {
        fn write(&self, out: &mut Vec<u8>) -> serde_json::Result<()>;
    }
    impl<T: serde::Serialize> Json for T {
        fn write(&self, out: &mut Vec<u8>) -> serde_json::Result<()> {
            serde_json::to_writer(out, self)
        }
    }
}
