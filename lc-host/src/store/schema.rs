//! The unit-record schema and its versioned migrations.
//!
//! The schema version lives in the database header (`PRAGMA user_version`):
//! 0 for a new, empty file, then the number of migrations applied.
//! [`MIGRATIONS`]`[i]` takes a database from version `i` to `i + 1`. Each
//! runs in its own `BEGIN IMMEDIATE` transaction together with the version
//! bump, so a failed or interrupted migration leaves the file at the version
//! before it. Published migrations are never edited: a change to the schema
//! is a new entry at the end (docs/database.md, "Migration policy").

use std::path::Path;

use rusqlite::{Connection, TransactionBehavior};

use super::StoreError;

/// Schema version 1: lots and calibration attempts.
const V1: &str = "
CREATE TABLE lots (
    lot        TEXT NOT NULL PRIMARY KEY,
    created_at TEXT NOT NULL
) STRICT;

CREATE TABLE attempts (
    id            INTEGER PRIMARY KEY,
    serial        TEXT    NOT NULL CHECK (length(serial) > 0),
    lot           TEXT    NOT NULL REFERENCES lots (lot),
    attempt       INTEGER NOT NULL CHECK (attempt >= 1),
    calibrated_at TEXT    NOT NULL,
    result        TEXT    NOT NULL CHECK (result IN ('pass', 'fail')),
    reasons       TEXT    NOT NULL CHECK (CASE WHEN json_valid(reasons)
                                          THEN json_type(reasons) = 'array' ELSE 0 END),
    params        TEXT    NOT NULL CHECK (CASE WHEN json_valid(params)
                                          THEN json_type(params) = 'object' ELSE 0 END),
    residuals     TEXT    NOT NULL CHECK (CASE WHEN json_valid(residuals)
                                          THEN json_type(residuals) = 'array' ELSE 0 END),
    rig_points    TEXT    NOT NULL CHECK (CASE WHEN json_valid(rig_points)
                                          THEN json_type(rig_points) = 'array' ELSE 0 END),
    image         BLOB,
    image_crc     INTEGER CHECK (image_crc BETWEEN 0 AND 4294967295),
    tool_version  TEXT    NOT NULL,
    UNIQUE (serial, attempt),
    CHECK ((result = 'pass') = (image IS NOT NULL)),
    CHECK ((image IS NULL) = (image_crc IS NULL)),
    CHECK (CASE WHEN result = 'pass' THEN 1
                WHEN json_valid(reasons) THEN json_array_length(reasons) > 0
                ELSE 0 END)
) STRICT;

-- Lot filters and lot statistics; lookups by serial use the index that
-- UNIQUE (serial, attempt) creates.
CREATE INDEX attempts_by_lot ON attempts (lot, serial, attempt);
";

/// Schema version 2: traceability. The plans a lot was judged against
/// (full text, keyed by its SHA-256), and per attempt the plan's hash, the
/// rig log's file name and SHA-256, the station and the operator. Attempts
/// recorded under version 1 keep NULL in the new columns.
const V2: &str = "
CREATE TABLE plans (
    sha256 TEXT NOT NULL PRIMARY KEY CHECK (length(sha256) = 64),
    text   TEXT NOT NULL
) STRICT;

ALTER TABLE attempts ADD COLUMN plan_sha256 TEXT REFERENCES plans (sha256);
ALTER TABLE attempts ADD COLUMN rig_file    TEXT;
ALTER TABLE attempts ADD COLUMN rig_sha256  TEXT CHECK (rig_sha256 IS NULL OR length(rig_sha256) = 64);
ALTER TABLE attempts ADD COLUMN station     TEXT;
ALTER TABLE attempts ADD COLUMN operator    TEXT;

-- Which units of a rig log were already judged against a plan (station
-- re-runs skip them).
CREATE INDEX attempts_by_rig ON attempts (rig_sha256, plan_sha256, serial);
";

/// Every migration in order: `MIGRATIONS[i]` takes version `i` to `i + 1`.
pub(crate) const MIGRATIONS: &[&str] = &[V1, V2];

/// The schema version this build writes and understands.
pub const SCHEMA_VERSION: u32 = 2;

// `as usize` of a u32 is exact on every target Rust's std supports (≥ 32 bit).
const _: () = assert!(MIGRATIONS.len() == SCHEMA_VERSION as usize);

fn user_version(conn: &Connection) -> rusqlite::Result<i64> {
    conn.pragma_query_value(None, "user_version", |r| r.get(0))
}

/// Brings the database at `path` up to `migrations.len()`, one transaction
/// per migration; refuses a newer database and a foreign one (tables but
/// version 0). Takes the list as a parameter so tests can run a failing one.
pub(crate) fn migrate(
    conn: &mut Connection,
    path: &Path,
    migrations: &[&str],
) -> Result<(), StoreError> {
    let known = u32::try_from(migrations.len()).unwrap_or(u32::MAX);
    let sql_err = |action: &'static str| move |e| StoreError::from_sqlite(path, action, e);
    let newer = |found: i64| StoreError::NewerSchema {
        path: path.to_path_buf(),
        found,
        known,
    };

    // Fast path, no write lock: already current (or newer).
    let found = user_version(conn).map_err(sql_err("reading the schema version"))?;
    if found > i64::from(known) {
        return Err(newer(found));
    }
    if found == i64::from(known) {
        return Ok(());
    }

    loop {
        let tx = conn
            .transaction_with_behavior(TransactionBehavior::Immediate)
            .map_err(sql_err("locking the database for migration"))?;
        // Re-read under the write lock: another process may have migrated.
        let found = user_version(&tx).map_err(sql_err("reading the schema version"))?;
        if found > i64::from(known) {
            return Err(newer(found));
        }
        let Some((from, sql)) = usize::try_from(found)
            .ok()
            .and_then(|i| migrations.get(i).map(|sql| (i, *sql)))
        else {
            // found == known (or negative, which only a hand-edited header
            // can hold: treat it as newer than anything we know).
            if found < 0 {
                return Err(newer(found));
            }
            return Ok(());
        };
        if from == 0 {
            let tables: i64 = tx
                .query_row(
                    "SELECT count(*) FROM sqlite_schema WHERE type = 'table'",
                    [],
                    |r| r.get(0),
                )
                .map_err(sql_err("inspecting the database"))?;
            if tables > 0 {
                return Err(StoreError::ForeignDatabase {
                    path: path.to_path_buf(),
                });
            }
        }
        let to = u32::try_from(from + 1).unwrap_or(u32::MAX);
        let failed = |source: rusqlite::Error| StoreError::Migration {
            path: path.to_path_buf(),
            from: to - 1,
            to,
            source: Box::new(source),
        };
        tx.execute_batch(sql).map_err(failed)?;
        tx.pragma_update(None, "user_version", i64::from(to))
            .map_err(failed)?;
        tx.commit().map_err(failed)?;
    }
}
