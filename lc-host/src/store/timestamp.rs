//! RFC 3339 time stamps in UTC from [`SystemTime`], without a date crate.
//!
//! Format: `YYYY-MM-DDTHH:MM:SS.sssZ`, milliseconds truncated toward the
//! past (so a time stamp never lies in the future of the instant it names).
//! This is also the text form SQLite's own date functions read and write
//! (`strftime('%Y-%m-%dT%H:%M:%fZ', …)`), so `julianday(calibrated_at)` and
//! `date(calibrated_at)` work on it in `sqlite3`.
//!
//! Years 0000–9999 give RFC 3339 text. A clock outside that range (which
//! `SystemTime` allows in principle) still formats without panicking, with a
//! sign or more digits in the year: no longer RFC 3339, but never a wrong
//! date written as a right one.

use std::time::{SystemTime, UNIX_EPOCH};

/// Seconds in a civil day (UTC has no leap seconds in Unix time).
const SECS_PER_DAY: i64 = 86_400;

/// Splits a time into whole seconds since 1970-01-01T00:00:00Z (negative
/// before it) and the nanoseconds past that second (0…999 999 999).
fn unix_parts(t: SystemTime) -> (i64, u32) {
    match t.duration_since(UNIX_EPOCH) {
        Ok(d) => (
            i64::try_from(d.as_secs()).unwrap_or(i64::MAX),
            d.subsec_nanos(),
        ),
        Err(before) => {
            // `before` is how far t lies before the epoch: floor it.
            let d = before.duration();
            let secs = i64::try_from(d.as_secs()).unwrap_or(i64::MAX);
            match d.subsec_nanos() {
                0 => (-secs, 0),
                n => (-secs - 1, 1_000_000_000 - n),
            }
        }
    }
}

/// Civil date (year, month 1–12, day 1–31) of a day count since
/// 1970-01-01, proleptic Gregorian calendar. Algorithm `civil_from_days`
/// of H. Hinnant, "chrono-Compatible Low-Level Date Algorithms" (public
/// domain; common practice). Exact for every `i64` day count a
/// [`unix_parts`] second count can produce (|days| < 1.1e14, far from
/// overflow in the products below).
pub(crate) fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468; // days since 0000-03-01
    let era = z.div_euclid(146_097); // 400-year eras
    let doe = z.rem_euclid(146_097); // day of era, 0..=146_096
    let yoe = (doe - doe / 1_460 + doe / 36_524 - doe / 146_096) / 365; // 0..=399
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100); // day of year from March 1, 0..=365
    let mp = (5 * doy + 2) / 153; // month from March, 0..=11
    let day = doy - (153 * mp + 2) / 5 + 1; // 1..=31
    let month = if mp < 10 { mp + 3 } else { mp - 9 }; // 1..=12
    let year = yoe + era * 400 + i64::from(month <= 2);
    // Both ranges are stated above, so the conversions cannot fail.
    (
        year,
        u32::try_from(month).unwrap_or(0),
        u32::try_from(day).unwrap_or(0),
    )
}

/// Formats `t` as RFC 3339 UTC with milliseconds, e.g.
/// `2024-02-29T13:05:09.042Z`.
pub(crate) fn rfc3339_utc(t: SystemTime) -> String {
    let (secs, nanos) = unix_parts(t);
    let (year, month, day) = civil_from_days(secs.div_euclid(SECS_PER_DAY));
    let sod = secs.rem_euclid(SECS_PER_DAY);
    format!(
        "{year:04}-{month:02}-{day:02}T{:02}:{:02}:{:02}.{:03}Z",
        sod / 3_600,
        sod / 60 % 60,
        sod % 60,
        nanos / 1_000_000
    )
}
