//! Panic-freedom proof of lc-core's firmware path.
//!
//! Built with `--features panic-never`, whose panic handler refers to a
//! symbol that does not exist: the link fails if any panic path survives
//! optimisation. This program reaches every firmware-path function of
//! lc-core with inputs the optimiser cannot see (each table passes through
//! `core::hint::black_box`, so nothing is folded at compile time):
//!
//! - `FaultWindow::new` / `check`, `Gate::reciprocal` / `direct` / `pair`,
//!   `capture::elapsed`, `Widener::new` / `on_overflow` / `timestamp` /
//!   `span`;
//! - `frequency`, `period_ratio`;
//! - `RestPoint::from_counts`, `ShiftConverter::new` / `for_gate` /
//!   `convert` / `shift`, `ShiftReading::quantisation_step`;
//! - the whole readout (`readout::digest`): `Calibration::parse` on image
//!   bytes and on edited copies (truncated, bad magic, bad CRC, field
//!   errors, a flash page), `Reader::from_calibration` and `Reader::read`
//!   for the proximity, level and metal readers (fault window, shift,
//!   companion and reference electrode, drift model, curve and volume
//!   table, baseline, detector, ring-down), `Divider::new`, `NtcBeta::new` /
//!   `convert`, `Median::push`, `Ema::new` / `update`, `Detector::new` /
//!   `update`, and the CRC-32;
//! - the scanner, both multiplexers and both NTC conversions (`scan::digest`:
//!   `Scanner`, `BinaryMux`, `EnabledMux`, `SingleInput`, `ReplaySource`,
//!   `Divider::new`, `NtcBeta`, `NtcSteinhartHart::new` / `convert`,
//!   `steinhart_hart_fit`).
//! - the live link's encoder (`link_proof`): `Encoder::send` of hello,
//!   count-pair and reading records into a byte sink that fills up,
//!   `Counts::of_input`, `ReadingRecord::of_reading`; its result goes to
//!   `black_box` only, so the printed digests stay as they were;
//! - the level readers built for one arrangement of electrodes
//!   (`level_variants_proof`): `LevelReader::with_electrodes` with
//!   `WithReference` and `ProbeOnly` on every committed image, and their
//!   `read` (the readout's digest builds the default reader); also to
//!   `black_box` only.
//!
//! It links with overflow checks on as well (`--profile release-checked`,
//! `run.sh panic-check`): no addition, subtraction, multiplication or
//! shift on these paths can wrap or panic unseen.
//!
//! Every result feeds `pipeline::digest`, `readout::digest` and
//! `scan::digest`, which are
//! printed as hex over semihosting without `core::fmt` (its formatting
//! machinery has panic paths of its own); `tests/emulator.rs` compares them
//! with the host's.
#![no_std]
#![no_main]

use core::hint::black_box;
use cortex_m_rt::entry;
use lc_firmware::pipeline::{self, CAPTURES, ROWS, UNITS, WIDENERS};
use lc_firmware::readout::{self, BOARD, IMAGES, MALFORMED};
use lc_firmware::scan::{self, LOG, NTC_CODES, PIN_BUDGETS};
use lc_firmware::{exit, stdout};
use panic_never as _;

#[entry]
fn main() -> ! {
    let digest = pipeline::digest(
        black_box(&UNITS),
        black_box(&ROWS[..]),
        black_box(&CAPTURES[..]),
        black_box(&WIDENERS[..]),
    );
    let readout = readout::digest(
        black_box(&BOARD),
        black_box(&IMAGES[..]),
        black_box(&MALFORMED[..]),
        black_box(readout::ROWS),
    );
    let scan = scan::digest(
        black_box(&LOG[..]),
        black_box(&PIN_BUDGETS[..]),
        black_box(&NTC_CODES[..]),
    );
    black_box(link_proof(
        black_box(readout::ROWS),
        black_box(readout::ROWS),
    ));
    black_box(level_variants_proof(
        black_box(&IMAGES[..]),
        black_box(readout::ROWS),
    ));
    let ok = match stdout() {
        Some(mut out) => {
            out.write_all(&hex_line(*b"digest 00000000\n", digest))
                .is_ok()
                && out
                    .write_all(&hex_line(*b"readout 00000000\n", readout))
                    .is_ok()
                && out.write_all(&hex_line(*b"scan 00000000\n", scan)).is_ok()
        }
        None => false,
    };
    exit(ok)
}

/// `line` with its eight digits before the newline replaced by `value` in
/// hex.
fn hex_line<const N: usize>(mut line: [u8; N], value: u32) -> [u8; N] {
    let hex = b"0123456789abcdef";
    let digits = N.saturating_sub(9)..N.saturating_sub(1);
    if let Some(slots) = line.get_mut(digits) {
        for (i, slot) in slots.iter_mut().enumerate() {
            // A nibble (< 16) indexes the 16 digits: the cast is exact and
            // the index in bounds, so no panic path.
            let nibble = (value >> (28 - 4 * (i & 7))) & 0xF;
            *slot = hex[nibble as usize];
        }
    }
    line
}

/// Every encoding path of `lc_core::link`: a hello, then each readout row
/// as a count-pair record (NTC code, or a temperature, companion and ring
/// count as the row has them) and a reading record of the row's values,
/// into a 256-byte sink that runs full part-way, so the sink's error path
/// is reached too. Returns the bytes' sum.
#[inline(never)]
fn link_proof(rows: &[readout::Row], more: &[readout::Row]) -> u32 {
    use lc_core::image::ReaderKind;
    use lc_core::link::{Counts, Encoder, Hello, ReadingRecord, Record, Thermal};
    use lc_core::reader::{Input, Status};
    use lc_core::temperature::CentiCelsius;
    let mut wire = [0u8; 256];
    let mut sink: &mut [u8] = &mut wire;
    let mut enc = Encoder::new();
    let mut failed = 0u32;
    let hello = Record::Hello(Hello::new(black_box(b"DEMO-01-0001"), 0x1234_5678));
    failed = failed.wrapping_add(u32::from(enc.send(&mut sink, &hello).is_err()));
    // Channels wrap at 256 (a `0u8..` range or `enumerate` would count
    // with a checked addition under overflow checks).
    let mut ch = 0u8;
    for row in rows.iter().chain(more) {
        ch = ch.wrapping_add(1);
        let input = Input {
            pair: row.pair,
            companion: row.companion,
            temperature: Some(CentiCelsius(i32::from(ch))),
            ring_count: row.ring,
        };
        let mut counts = Counts::of_input(ch, &input);
        if let Some(code) = row.ntc_code {
            counts.thermal = Thermal::NtcCode(code);
        }
        let seq = match enc.send(&mut sink, &Record::Counts(counts)) {
            Ok(seq) => seq,
            Err(_) => {
                failed = failed.wrapping_add(1);
                enc.next_sequence()
            }
        };
        let reading = ReadingRecord {
            channel: ch,
            kind: ReaderKind::Proximity,
            status: Status::Ok,
            of_sequence: seq,
            value: i32::from(row.ring.unwrap_or(0)),
            secondary: row.ntc_code.map(|c| i32::from(c as u16)),
            curve_input_q40: i64::from(row.pair.ticks),
        };
        failed = failed.wrapping_add(u32::from(
            enc.send(&mut sink, &Record::Reading(black_box(reading)))
                .is_err(),
        ));
    }
    wire.iter()
        .fold(failed, |acc, &b| acc.wrapping_add(u32::from(b)))
}

/// The level readers for one arrangement of electrodes: `with_electrodes`
/// with `WithReference` and with `ProbeOnly` on every image (each refuses
/// the other arrangement's image and every other kind), then `read` of
/// every row with a temperature, so the drift paths are reached. Returns
/// the readings' sum.
#[inline(never)]
fn level_variants_proof(images: &[readout::Image], rows: &[readout::Row]) -> u32 {
    use lc_core::image::Image;
    use lc_core::reader::{Electrodes, Input, LevelReader, ProbeOnly, WithReference};
    use lc_core::temperature::CentiCelsius;
    fn sum<E: Electrodes>(image: &Image<'_>, electrodes: E, rows: &[readout::Row]) -> u32 {
        let Ok(mut reader) = LevelReader::with_electrodes(image, electrodes) else {
            return 1;
        };
        let mut t = 0i32;
        rows.iter().fold(0u32, |acc, row| {
            t = t.wrapping_add(7) & 0xFFF;
            let r = reader.read(&Input {
                pair: row.pair,
                companion: row.companion,
                temperature: Some(CentiCelsius(t)),
                ring_count: row.ring,
            });
            acc.wrapping_add(r.level as u32)
                .wrapping_add(r.volume.unwrap_or(0) as u32)
        })
    }
    images
        .iter()
        .fold(0u32, |acc, image| match Image::new(image.bytes) {
            Ok(image) => acc
                .wrapping_add(sum(&image, WithReference, rows))
                .wrapping_add(sum(&image, ProbeOnly, rows)),
            Err(_) => acc.wrapping_add(2),
        })
}
