//! The PostgreSQL back end of the unit-record store: the same tables,
//! rules and migrations as the SQLite file (docs/database.md), for a
//! factory whose stations share one database server.
//!
//! Differences that do not show through [`Store`](super::Store):
//! - the schema version is the row of `lc_schema_version` (SQLite keeps it
//!   in the file header);
//! - writers take turns on a transaction-scoped advisory lock
//!   ([`WRITE_LOCK`]) where SQLite takes its write lock, so attempt numbers
//!   are read and written under one lock on both;
//! - the tables live in the connection's first schema on its search path
//!   (`public` unless the URL sets `options=-csearch_path=NAME`).

use super::{
    Checked, RawCommon, RawRecord, RawSummary, RawTrace, Recorded, StoreError, BUSY_TIMEOUT,
    TOOL_VERSION,
};
use postgres::{Client, NoTls, Row};
use std::collections::HashMap;
use std::path::Path;

/// The advisory lock key that serialises lc-host's writers ("lchost" in
/// ASCII).
pub(crate) const WRITE_LOCK: i64 = 0x6C63_686F_7374;

const V1: &str = "
CREATE TABLE lc_schema_version (version INTEGER NOT NULL);
INSERT INTO lc_schema_version (version) VALUES (0);

CREATE TABLE lots (
    lot        TEXT NOT NULL PRIMARY KEY,
    created_at TEXT NOT NULL
);

CREATE TABLE attempts (
    id            BIGINT  GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
    serial        TEXT    NOT NULL CHECK (length(serial) > 0),
    lot           TEXT    NOT NULL REFERENCES lots (lot),
    attempt       INTEGER NOT NULL CHECK (attempt >= 1),
    calibrated_at TEXT    NOT NULL,
    result        TEXT    NOT NULL CHECK (result IN ('pass', 'fail')),
    reasons       TEXT    NOT NULL CHECK (json_typeof(reasons::json) = 'array'),
    params        TEXT    NOT NULL CHECK (json_typeof(params::json) = 'object'),
    residuals     TEXT    NOT NULL CHECK (json_typeof(residuals::json) = 'array'),
    rig_points    TEXT    NOT NULL CHECK (json_typeof(rig_points::json) = 'array'),
    image         BYTEA,
    image_crc     BIGINT  CHECK (image_crc BETWEEN 0 AND 4294967295),
    tool_version  TEXT    NOT NULL,
    UNIQUE (serial, attempt),
    CHECK ((result = 'pass') = (image IS NOT NULL)),
    CHECK ((image IS NULL) = (image_crc IS NULL)),
    CHECK (result = 'pass' OR json_array_length(reasons::json) > 0)
);

CREATE INDEX attempts_by_lot ON attempts (lot, serial, attempt);
";

const V2: &str = "
CREATE TABLE plans (
    sha256 TEXT NOT NULL PRIMARY KEY CHECK (length(sha256) = 64),
    text   TEXT NOT NULL
);

ALTER TABLE attempts ADD COLUMN plan_sha256 TEXT REFERENCES plans (sha256);
ALTER TABLE attempts ADD COLUMN rig_file    TEXT;
ALTER TABLE attempts ADD COLUMN rig_sha256  TEXT CHECK (rig_sha256 IS NULL OR length(rig_sha256) = 64);
ALTER TABLE attempts ADD COLUMN station     TEXT;
ALTER TABLE attempts ADD COLUMN operator    TEXT;

CREATE INDEX attempts_by_rig ON attempts (rig_sha256, plan_sha256, serial);
";

/// Every migration in order, as in SQLite's list.
pub(crate) const MIGRATIONS: &[&str] = &[V1, V2];

// One migration per schema version on both back ends.
const _: () = assert!(MIGRATIONS.len() == super::schema::MIGRATIONS.len());

/// Whether `db` names a PostgreSQL database rather than a file.
pub fn is_url(db: &str) -> bool {
    db.starts_with("postgres://") || db.starts_with("postgresql://")
}

/// The URL without its password, for messages.
pub(crate) fn redacted(url: &str) -> String {
    let Some((scheme, rest)) = url.split_once("://") else {
        return url.to_string();
    };
    let (auth, host) = match rest.split_once('@') {
        Some((a, h)) => (Some(a), h),
        None => (None, rest),
    };
    match auth {
        Some(a) => {
            let user = a.split_once(':').map_or(a, |(u, _)| u);
            format!("{scheme}://{user}@{host}")
        }
        None => url.to_string(),
    }
}

pub(crate) fn err<'a>(
    path: &'a Path,
    action: &'static str,
) -> impl Fn(postgres::Error) -> StoreError + 'a {
    move |source| {
        let code = source.code().map(postgres::error::SqlState::code);
        match code {
            // lock_not_available (lock_timeout), serialization failure.
            Some("55P03") => StoreError::Busy {
                path: path.to_path_buf(),
            },
            _ => StoreError::Postgres {
                path: path.to_path_buf(),
                action,
                source,
            },
        }
    }
}

/// Connects and migrates.
pub(crate) fn open(url: &str, path: &Path, read_only: bool) -> Result<Client, StoreError> {
    let mut client = Client::connect(url, NoTls).map_err(|source| StoreError::Postgres {
        path: path.to_path_buf(),
        action: "connecting",
        source,
    })?;
    let timeout = format!(
        "SET lock_timeout = '{}s'; SET client_min_messages = warning",
        BUSY_TIMEOUT.as_secs()
    );
    client
        .batch_execute(&timeout)
        .map_err(err(path, "setting the lock timeout"))?;
    if read_only {
        client
            .batch_execute("SET default_transaction_read_only = on")
            .map_err(err(path, "switching to read-only"))?;
        let found = version(&mut client, path)?;
        let known = super::SCHEMA_VERSION;
        return match found {
            None => Err(StoreError::ForeignDatabase {
                path: path.to_path_buf(),
            }),
            Some(f) if f > i64::from(known) => Err(StoreError::NewerSchema {
                path: path.to_path_buf(),
                found: f,
                known,
            }),
            Some(f) if f < i64::from(known) => Err(StoreError::ReadOnlyOldSchema {
                path: path.to_path_buf(),
                found: f,
                known,
            }),
            Some(_) => Ok(client),
        };
    }
    migrate(&mut client, path, MIGRATIONS)?;
    Ok(client)
}

/// The schema version: `None` when the schema has tables but no version
/// table (another program's), `Some(0)` when it is empty.
fn version(c: &mut impl postgres::GenericClient, path: &Path) -> Result<Option<i64>, StoreError> {
    let has_table: bool = c
        .query_one("SELECT to_regclass('lc_schema_version') IS NOT NULL", &[])
        .map_err(err(path, "reading the schema version"))?
        .get(0);
    if has_table {
        let v: i32 = c
            .query_one("SELECT MAX(version) FROM lc_schema_version", &[])
            .map_err(err(path, "reading the schema version"))?
            .try_get::<_, Option<i32>>(0)
            .map_err(err(path, "reading the schema version"))?
            .unwrap_or(0);
        return Ok(Some(i64::from(v)));
    }
    let tables: i64 = c
        .query_one(
            "SELECT count(*) FROM information_schema.tables WHERE table_schema = current_schema()",
            &[],
        )
        .map_err(err(path, "inspecting the database"))?
        .get(0);
    Ok((tables == 0).then_some(0))
}

/// Brings the schema up to `migrations.len()`, one transaction per
/// migration under the write lock.
pub(crate) fn migrate(
    client: &mut Client,
    path: &Path,
    migrations: &[&str],
) -> Result<(), StoreError> {
    let known = u32::try_from(migrations.len()).unwrap_or(u32::MAX);
    loop {
        let mut tx = client
            .transaction()
            .map_err(err(path, "locking the database for migration"))?;
        tx.execute("SELECT pg_advisory_xact_lock($1)", &[&WRITE_LOCK])
            .map_err(err(path, "locking the database for migration"))?;
        let found = match version(&mut tx, path)? {
            None => {
                return Err(StoreError::ForeignDatabase {
                    path: path.to_path_buf(),
                })
            }
            Some(f) => f,
        };
        if found > i64::from(known) {
            return Err(StoreError::NewerSchema {
                path: path.to_path_buf(),
                found,
                known,
            });
        }
        let Some((from, sql)) = usize::try_from(found)
            .ok()
            .and_then(|i| migrations.get(i).map(|sql| (i, *sql)))
        else {
            return Ok(());
        };
        let to = u32::try_from(from + 1).unwrap_or(u32::MAX);
        let failed = |source: postgres::Error| StoreError::Migration {
            path: path.to_path_buf(),
            from: to - 1,
            to,
            source: Box::new(source),
        };
        tx.batch_execute(sql).map_err(failed)?;
        tx.execute(
            "UPDATE lc_schema_version SET version = $1",
            &[&i32::try_from(to).unwrap_or(i32::MAX)],
        )
        .map_err(failed)?;
        tx.commit().map_err(failed)?;
    }
}

/// `?N` placeholders (SQLite) as `$N` (PostgreSQL).
pub(crate) fn dollars(sql: &str) -> String {
    let mut out = String::with_capacity(sql.len());
    let mut chars = sql.chars().peekable();
    while let Some(c) = chars.next() {
        if c == '?' && chars.peek().is_some_and(char::is_ascii_digit) {
            out.push('$');
        } else {
            out.push(c);
        }
    }
    out
}

pub(crate) fn record_batch(
    client: &mut Client,
    path: &Path,
    checked: Vec<Result<Checked<'_>, StoreError>>,
    calibrated_at: impl FnOnce() -> String,
) -> Result<Vec<Result<Recorded, StoreError>>, StoreError> {
    let mut tx = client
        .transaction()
        .map_err(err(path, "starting a transaction"))?;
    tx.execute("SELECT pg_advisory_xact_lock($1)", &[&WRITE_LOCK])
        .map_err(err(path, "locking the database"))?;
    let calibrated_at = calibrated_at();
    let insert_lot = tx
        .prepare(&dollars(super::INSERT_LOT))
        .map_err(err(path, "adding the lot"))?;
    let next_attempt = tx
        .prepare(&dollars(super::NEXT_ATTEMPT))
        .map_err(err(path, "numbering the attempt"))?;
    let insert = tx
        .prepare(&format!("{} RETURNING id", dollars(super::INSERT_ATTEMPT)))
        .map_err(err(path, "inserting the attempt"))?;
    let mut out = Vec::with_capacity(checked.len());
    let mut lots_added: Vec<&str> = Vec::new();
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
        let (reasons, params, residuals, rig_points) =
            (&*reasons, &*params, &*residuals, &*rig_points);
        if !lots_added.contains(&a.lot) {
            tx.execute(&insert_lot, &[&a.lot, &calibrated_at])
                .map_err(err(path, "adding the lot"))?;
            lots_added.push(a.lot);
        }
        let next: i32 = tx
            .query_one(&next_attempt, &[&a.serial])
            .map_err(err(path, "numbering the attempt"))?
            .get(0);
        let Ok(attempt) = u32::try_from(next) else {
            out.push(Err(StoreError::InvalidAttempt {
                path: path.to_path_buf(),
                serial: a.serial.to_owned(),
                problem: format!("attempt number {next} is out of range"),
            }));
            continue;
        };
        let t = a.trace;
        let crc = a.image_crc.map(i64::from);
        let row = tx
            .query_one(
                &insert,
                &[
                    &a.serial,
                    &a.lot,
                    &next,
                    &calibrated_at,
                    &a.result.as_str(),
                    &reasons,
                    &params,
                    &residuals,
                    &rig_points,
                    &a.image,
                    &crc,
                    &TOOL_VERSION,
                    &t.map(|t| t.plan_sha256.as_str()),
                    &t.map(|t| t.rig_file.as_str()),
                    &t.map(|t| t.rig_sha256.as_str()),
                    &t.map(|t| t.station.as_str()),
                    &t.map(|t| t.operator.as_str()),
                ],
            )
            .map_err(err(path, "inserting the attempt"))?;
        out.push(Ok(Recorded {
            id: row.get(0),
            attempt,
            calibrated_at: calibrated_at.clone(),
        }));
    }
    tx.commit().map_err(err(path, "committing the attempts"))?;
    Ok(out)
}

pub(crate) fn register_plan(
    client: &mut Client,
    path: &Path,
    sha: &str,
    text: &str,
) -> Result<(), StoreError> {
    client
        .execute(&dollars(super::INSERT_PLAN), &[&sha, &text])
        .map_err(err(path, "keeping the plan"))?;
    Ok(())
}

pub(crate) fn plan_text(
    client: &mut Client,
    path: &Path,
    sha: &str,
) -> Result<Option<String>, StoreError> {
    Ok(client
        .query_opt("SELECT text FROM plans WHERE sha256 = $1", &[&sha])
        .map_err(err(path, "reading a plan"))?
        .map(|r| r.get(0)))
}

pub(crate) fn recorded_from(
    client: &mut Client,
    path: &Path,
    rig: &str,
    plan: &str,
) -> Result<HashMap<String, u32>, StoreError> {
    let rows = client
        .query(&dollars(super::RECORDED_FROM), &[&rig, &plan])
        .map_err(err(path, "finding recorded units"))?;
    Ok(rows
        .iter()
        .map(|r| {
            let n: Option<i32> = r.get(1);
            (r.get(0), n.and_then(|n| u32::try_from(n).ok()).unwrap_or(0))
        })
        .collect())
}

fn common(r: &Row) -> Result<RawCommon, postgres::Error> {
    Ok(RawCommon {
        id: r.try_get(0)?,
        serial: r.try_get(1)?,
        lot: r.try_get(2)?,
        attempt: i64::from(r.try_get::<_, i32>(3)?),
        calibrated_at: r.try_get(4)?,
        result: r.try_get(5)?,
        reasons: r.try_get(6)?,
    })
}

fn trace(r: &Row, first: usize) -> Result<RawTrace, postgres::Error> {
    Ok(RawTrace([
        r.try_get(first)?,
        r.try_get(first + 1)?,
        r.try_get(first + 2)?,
        r.try_get(first + 3)?,
        r.try_get(first + 4)?,
    ]))
}

pub(crate) fn summary(r: &Row) -> Result<RawSummary, postgres::Error> {
    Ok(RawSummary {
        common: common(r)?,
        image_len: r.try_get(7)?,
        image_crc: r.try_get(8)?,
        tool_version: r.try_get(9)?,
        trace: trace(r, 10)?,
    })
}

pub(crate) fn record(r: &Row) -> Result<RawRecord, postgres::Error> {
    Ok(RawRecord {
        common: common(r)?,
        params: r.try_get(7)?,
        residuals: r.try_get(8)?,
        rig_points: r.try_get(9)?,
        image: r.try_get(10)?,
        image_crc: r.try_get(11)?,
        tool_version: r.try_get(12)?,
        trace: trace(r, 13)?,
    })
}
