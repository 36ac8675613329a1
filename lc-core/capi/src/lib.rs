//! # lc-core-capi: lc-core's firmware path for C
//!
//! The C API over lc-core's readers, for firmware written in C (and host
//! programs): validate a calibration image in place, build a reader in
//! storage the caller provides, read one input into a reading. Plain C
//! structs and enums, an error code for every failure, no allocation, no
//! global state, and no reachable panic (`lc-core/capi/proof` links the
//! entry points with `panic-never`).
//!
//! The header, `include/lc_core.h`, is generated from this file by
//! cbindgen (`lc-core/capi/tests/header.rs`; `LC_WRITE_HEADER=1` rewrites it) and
//! checked into the repository; docs/c-api.md is the C user's guide.
//!
//! Features: the entry points come in groups, each a cargo feature (all
//! on by default): `proximity`, `level`, `metal` (each reader's one-call
//! `lc_<kind>_reader_open` and its `lc_<kind>_read`) and `image` (the
//! two-step path over an `lc_image_t`, and the any-kind reader). A
//! firmware builds the library with its own group alone, so that the
//! library is optimised for the entry points it calls, as a Rust
//! firmware's whole-program build is.
//!
//! Storage: every type the caller keeps (`lc_image_t`, the readers) is an
//! array of `uint64_t` words sized from `core::mem::size_of` of the Rust
//! type it holds plus a tag word, so it follows lc-core's layout. The
//! header states the sizes for 32-bit and 64-bit targets (taken from the
//! built libraries: `lc_core_capi_layout`) and checks them with
//! `_Static_assert`; this file checks the storage against the Rust types
//! with `const` assertions.
//!
//! **Not a safety-rated component.** Where a reading protects people or
//! machines, the safety function must follow the applicable
//! functional-safety standards, local codes and a qualified engineer's
//! review.
#![cfg_attr(not(test), no_std)]
#![deny(missing_docs)]
#![deny(unsafe_op_in_unsafe_fn)]
// The C names are the API.
#![allow(non_camel_case_types)]
// A library built for one product (some of the features `proximity`,
// `level`, `metal`, `image` off) leaves some helpers unused.
#![cfg_attr(
    not(all(
        feature = "proximity",
        feature = "level",
        feature = "metal",
        feature = "image"
    )),
    allow(dead_code, unused_imports)
)]

// The proof's panic handler (lc-core/capi/proof).
#[cfg(all(target_os = "none", feature = "panic-never"))]
use panic_never as _;

// The host library links std (its panic machinery; nothing else is used).
#[cfg(all(not(test), not(target_os = "none")))]
extern crate std;

use core::mem::{align_of, size_of, MaybeUninit};
use core::ptr;

use lc_core::counting::{CountPair, FaultError, WindowError};
use lc_core::curve::CurveError;
use lc_core::drift::{CompanionError, DriftError};
use lc_core::image::{Field, Image, ImageError, OutputUnit, ReaderKind};
use lc_core::reader::{
    Input, LevelAxis, LevelReader, LevelReading, MetalClass, MetalReader, MetalReading,
    ProximityReader, ProximityReading, Reader, ReaderError, Reading, SensorFault, Status,
};
use lc_core::shift::ShiftError;
use lc_core::temperature::CentiCelsius;

// ---------------------------------------------------------------------
// Error codes.

/// The result of every function: `LC_OK` (0) or why it failed. A failed
/// call changes nothing the caller passed, except that a failed
/// `lc_image_validate`, `*_init` or `*_open` marks its storage as not
/// initialised.
///
/// Codes 1-15 are argument errors, 16-31 reader errors, 32 and above
/// image errors: the image's checks in the order they run (the first
/// failing one is reported), then one code per field that is out of
/// range, per curve or volume-table defect, per fault-window, drift and
/// gate defect.
#[repr(u32)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum lc_error_t {
    /// Success.
    LC_OK = 0,
    /// A pointer argument is NULL.
    LC_ERR_NULL_POINTER = 1,
    /// A pointer argument is not aligned for its type (storage: to
    /// `LC_STORAGE_ALIGN` bytes).
    LC_ERR_MISALIGNED_ARGUMENT = 2,
    /// The storage was not initialised by its `lc_image_validate` or
    /// `*_init` call, or that call failed.
    LC_ERR_NOT_INITIALISED = 3,
    /// `lc_input_t.flags` has a bit set that is not an `LC_INPUT_*` flag.
    LC_ERR_BAD_INPUT_FLAGS = 4,
    /// The image length is larger than `PTRDIFF_MAX`.
    LC_ERR_BAD_LENGTH = 5,
    /// The image is of another kind than this reader's (`lc_image_info`
    /// says which).
    LC_ERR_WRONG_KIND = 16,
    /// This library was built without the reader of the image's kind.
    LC_ERR_NOT_BUILT = 17,
    /// `lc_check_layout`: the header's storage sizes differ from the
    /// library's (a header from another build of the library).
    LC_ERR_LAYOUT_MISMATCH = 18,
    /// Fewer bytes than the header, or than the length the header states.
    LC_ERR_IMAGE_TRUNCATED = 32,
    /// The first four bytes are not "LCIM".
    LC_ERR_IMAGE_BAD_MAGIC = 33,
    /// A format version this library does not read.
    LC_ERR_IMAGE_UNKNOWN_VERSION = 34,
    /// An image in an older format (1 or 2): rewrite it in the current
    /// format with `lc-host inspect IMAGE --rewrite OUT`.
    LC_ERR_IMAGE_OLD_FORMAT = 35,
    /// The stated length disagrees with the table sizes.
    LC_ERR_IMAGE_LENGTH_MISMATCH = 36,
    /// The image does not start at a 4-byte aligned address.
    LC_ERR_IMAGE_MISALIGNED = 37,
    /// The CRC-32 does not match: the image is corrupt.
    LC_ERR_IMAGE_BAD_CRC = 38,
    /// The image is longer than an image buffer holds.
    LC_ERR_IMAGE_TOO_LONG = 39,
    /// Field out of range: reader kind.
    LC_ERR_IMAGE_FIELD_READER_KIND = 40,
    /// Field out of range: flags.
    LC_ERR_IMAGE_FIELD_FLAGS = 41,
    /// Field out of range: curve node count.
    LC_ERR_IMAGE_FIELD_CURVE_NODES = 42,
    /// Field out of range: volume node count.
    LC_ERR_IMAGE_FIELD_VOLUME_NODES = 43,
    /// Field out of range: unit serial.
    LC_ERR_IMAGE_FIELD_SERIAL = 44,
    /// Field out of range: reference clock.
    LC_ERR_IMAGE_FIELD_REFERENCE_HZ = 45,
    /// Field out of range: reciprocal gate.
    LC_ERR_IMAGE_FIELD_GATE_CYCLES = 46,
    /// Field out of range: fault window.
    LC_ERR_IMAGE_FIELD_WINDOW = 47,
    /// Field out of range: rest point.
    LC_ERR_IMAGE_FIELD_REST_POINT = 48,
    /// Field out of range: companion rest point.
    LC_ERR_IMAGE_FIELD_COMPANION_REST = 49,
    /// Field out of range: drift model.
    LC_ERR_IMAGE_FIELD_DRIFT = 50,
    /// Field out of range: output unit or exponent.
    LC_ERR_IMAGE_FIELD_OUTPUT = 51,
    /// Field out of range: volume unit or exponent.
    LC_ERR_IMAGE_FIELD_VOLUME_OUTPUT = 52,
    /// Field out of range: metal parameters.
    LC_ERR_IMAGE_FIELD_METAL = 53,
    /// Field out of range: a reserved byte is not zero.
    LC_ERR_IMAGE_FIELD_RESERVED = 54,
    /// Field out of range: calibration time.
    LC_ERR_IMAGE_FIELD_CALIBRATED_AT = 55,
    /// Field out of range: plan identity.
    LC_ERR_IMAGE_FIELD_PLAN_ID = 56,
    /// Field out of range: a curve's nodes or segment constants.
    LC_ERR_IMAGE_FIELD_CURVE = 57,
    /// Field out of range: magic, version or length.
    LC_ERR_IMAGE_FIELD_FRAMING = 58,
    /// Curve: too few nodes.
    LC_ERR_IMAGE_CURVE_TOO_FEW_NODES = 64,
    /// Curve: too many nodes.
    LC_ERR_IMAGE_CURVE_TOO_MANY_NODES = 65,
    /// Curve: the shifts do not increase.
    LC_ERR_IMAGE_CURVE_SHIFTS_NOT_INCREASING = 66,
    /// Curve: the values are not monotone.
    LC_ERR_IMAGE_CURVE_NOT_MONOTONE = 67,
    /// Curve: a segment is too steep for the fixed-point path.
    LC_ERR_IMAGE_CURVE_SEGMENT_TOO_STEEP = 68,
    /// Curve: the derivatives do not keep the curve monotone.
    LC_ERR_IMAGE_CURVE_BAD_DERIVATIVES = 69,
    /// Curve: a segment's stored constants are wrong.
    LC_ERR_IMAGE_CURVE_BAD_SEGMENT = 70,
    /// Volume table: too few nodes.
    LC_ERR_IMAGE_VOLUME_TOO_FEW_NODES = 80,
    /// Volume table: too many nodes.
    LC_ERR_IMAGE_VOLUME_TOO_MANY_NODES = 81,
    /// Volume table: the levels do not increase.
    LC_ERR_IMAGE_VOLUME_SHIFTS_NOT_INCREASING = 82,
    /// Volume table: the volumes do not rise.
    LC_ERR_IMAGE_VOLUME_NOT_MONOTONE = 83,
    /// Volume table: a segment is too steep for the fixed-point path.
    LC_ERR_IMAGE_VOLUME_SEGMENT_TOO_STEEP = 84,
    /// Volume table: the derivatives do not keep it monotone.
    LC_ERR_IMAGE_VOLUME_BAD_DERIVATIVES = 85,
    /// Volume table: a segment's stored constants are wrong.
    LC_ERR_IMAGE_VOLUME_BAD_SEGMENT = 86,
    /// Fault window: zero reference clock.
    LC_ERR_IMAGE_WINDOW_ZERO_REFERENCE = 96,
    /// Fault window: its frequency band is empty.
    LC_ERR_IMAGE_WINDOW_EMPTY_BAND = 97,
    /// Drift model: reference temperature out of range.
    LC_ERR_IMAGE_DRIFT_REFERENCE_OUT_OF_RANGE = 104,
    /// Drift model: the correction could overflow the fixed-point path.
    LC_ERR_IMAGE_DRIFT_CORRECTION_TOO_LARGE = 105,
    /// Rest point and gate: a zero count.
    LC_ERR_IMAGE_GATE_ZERO_COUNT = 112,
    /// Rest point and gate: out of the converter's range.
    LC_ERR_IMAGE_GATE_OUT_OF_RANGE = 113,
    /// Rest point and gate: the rest point is not usable.
    LC_ERR_IMAGE_GATE_BAD_REST_POINT = 114,
}

use lc_error_t::*;

const fn curve_error(e: CurveError, volume: bool) -> lc_error_t {
    match (e, volume) {
        (CurveError::TooFewNodes, false) => LC_ERR_IMAGE_CURVE_TOO_FEW_NODES,
        (CurveError::TooManyNodes, false) => LC_ERR_IMAGE_CURVE_TOO_MANY_NODES,
        (CurveError::ShiftsNotIncreasing, false) => LC_ERR_IMAGE_CURVE_SHIFTS_NOT_INCREASING,
        (CurveError::NotMonotone, false) => LC_ERR_IMAGE_CURVE_NOT_MONOTONE,
        (CurveError::SegmentTooSteep, false) => LC_ERR_IMAGE_CURVE_SEGMENT_TOO_STEEP,
        (CurveError::BadDerivatives, false) => LC_ERR_IMAGE_CURVE_BAD_DERIVATIVES,
        (CurveError::BadSegment, false) => LC_ERR_IMAGE_CURVE_BAD_SEGMENT,
        (CurveError::TooFewNodes, true) => LC_ERR_IMAGE_VOLUME_TOO_FEW_NODES,
        (CurveError::TooManyNodes, true) => LC_ERR_IMAGE_VOLUME_TOO_MANY_NODES,
        (CurveError::ShiftsNotIncreasing, true) => LC_ERR_IMAGE_VOLUME_SHIFTS_NOT_INCREASING,
        (CurveError::NotMonotone, true) => LC_ERR_IMAGE_VOLUME_NOT_MONOTONE,
        (CurveError::SegmentTooSteep, true) => LC_ERR_IMAGE_VOLUME_SEGMENT_TOO_STEEP,
        (CurveError::BadDerivatives, true) => LC_ERR_IMAGE_VOLUME_BAD_DERIVATIVES,
        (CurveError::BadSegment, true) => LC_ERR_IMAGE_VOLUME_BAD_SEGMENT,
    }
}

const fn field_error(f: Field) -> lc_error_t {
    match f {
        Field::Magic | Field::Version | Field::Length => LC_ERR_IMAGE_FIELD_FRAMING,
        Field::ReaderKind => LC_ERR_IMAGE_FIELD_READER_KIND,
        Field::Flags => LC_ERR_IMAGE_FIELD_FLAGS,
        Field::CurveNodes => LC_ERR_IMAGE_FIELD_CURVE_NODES,
        Field::VolumeNodes => LC_ERR_IMAGE_FIELD_VOLUME_NODES,
        Field::Serial => LC_ERR_IMAGE_FIELD_SERIAL,
        Field::ReferenceHz => LC_ERR_IMAGE_FIELD_REFERENCE_HZ,
        Field::GateCycles => LC_ERR_IMAGE_FIELD_GATE_CYCLES,
        Field::Window => LC_ERR_IMAGE_FIELD_WINDOW,
        Field::RestPoint => LC_ERR_IMAGE_FIELD_REST_POINT,
        Field::CompanionRest => LC_ERR_IMAGE_FIELD_COMPANION_REST,
        Field::Drift => LC_ERR_IMAGE_FIELD_DRIFT,
        Field::Output => LC_ERR_IMAGE_FIELD_OUTPUT,
        Field::VolumeOutput => LC_ERR_IMAGE_FIELD_VOLUME_OUTPUT,
        Field::Metal => LC_ERR_IMAGE_FIELD_METAL,
        Field::Reserved => LC_ERR_IMAGE_FIELD_RESERVED,
        Field::CalibratedAt => LC_ERR_IMAGE_FIELD_CALIBRATED_AT,
        Field::PlanId => LC_ERR_IMAGE_FIELD_PLAN_ID,
        Field::Curve => LC_ERR_IMAGE_FIELD_CURVE,
    }
}

const fn shift_gate_error(e: ShiftError) -> lc_error_t {
    match e {
        ShiftError::ZeroCount => LC_ERR_IMAGE_GATE_ZERO_COUNT,
        ShiftError::OutOfRange => LC_ERR_IMAGE_GATE_OUT_OF_RANGE,
        ShiftError::BadRestPoint => LC_ERR_IMAGE_GATE_BAD_REST_POINT,
    }
}

/// The error code of an image's refusal, named variant by variant: what
/// [`image_error`] computes (checked at compile time, [`ERROR_CODES_CHECKED`]).
const fn image_error_named(e: ImageError) -> lc_error_t {
    match e {
        ImageError::Truncated => LC_ERR_IMAGE_TRUNCATED,
        ImageError::BadMagic => LC_ERR_IMAGE_BAD_MAGIC,
        ImageError::UnknownVersion => LC_ERR_IMAGE_UNKNOWN_VERSION,
        ImageError::OldFormat => LC_ERR_IMAGE_OLD_FORMAT,
        ImageError::LengthMismatch => LC_ERR_IMAGE_LENGTH_MISMATCH,
        ImageError::Misaligned => LC_ERR_IMAGE_MISALIGNED,
        ImageError::BadCrc => LC_ERR_IMAGE_BAD_CRC,
        ImageError::OutOfRange(f) => field_error(f),
        ImageError::BadCurve(c) => curve_error(c, false),
        ImageError::BadVolume(c) => curve_error(c, true),
        ImageError::BadWindow(WindowError::ZeroReference) => LC_ERR_IMAGE_WINDOW_ZERO_REFERENCE,
        ImageError::BadWindow(WindowError::EmptyBand) => LC_ERR_IMAGE_WINDOW_EMPTY_BAND,
        ImageError::BadDrift(DriftError::ReferenceOutOfRange) => {
            LC_ERR_IMAGE_DRIFT_REFERENCE_OUT_OF_RANGE
        }
        ImageError::BadDrift(DriftError::CorrectionTooLarge) => {
            LC_ERR_IMAGE_DRIFT_CORRECTION_TOO_LARGE
        }
        ImageError::BadGate(s) => shift_gate_error(s),
        ImageError::BufferTooSmall => LC_ERR_IMAGE_TOO_LONG,
    }
}

/// A run of consecutive error codes, `.0` to `.1`: every code in it is an
/// `lc_error_t` (checked at compile time, [`ERROR_RUNS`]).
#[derive(Clone, Copy)]
struct Run(lc_error_t, lc_error_t);

const FRAMING_RUN: Run = Run(LC_ERR_IMAGE_TRUNCATED, LC_ERR_IMAGE_BAD_CRC);
const FIELD_RUN: Run = Run(LC_ERR_IMAGE_FIELD_READER_KIND, LC_ERR_IMAGE_FIELD_CURVE);
const CURVE_RUN: Run = Run(
    LC_ERR_IMAGE_CURVE_TOO_FEW_NODES,
    LC_ERR_IMAGE_CURVE_BAD_SEGMENT,
);
const VOLUME_RUN: Run = Run(
    LC_ERR_IMAGE_VOLUME_TOO_FEW_NODES,
    LC_ERR_IMAGE_VOLUME_BAD_SEGMENT,
);
const WINDOW_RUN: Run = Run(
    LC_ERR_IMAGE_WINDOW_ZERO_REFERENCE,
    LC_ERR_IMAGE_WINDOW_EMPTY_BAND,
);
const DRIFT_RUN: Run = Run(
    LC_ERR_IMAGE_DRIFT_REFERENCE_OUT_OF_RANGE,
    LC_ERR_IMAGE_DRIFT_CORRECTION_TOO_LARGE,
);
const GATE_RUN: Run = Run(
    LC_ERR_IMAGE_GATE_ZERO_COUNT,
    LC_ERR_IMAGE_GATE_BAD_REST_POINT,
);

/// Every [`Run`] this file uses.
const ERROR_RUNS: [Run; 7] = [
    FRAMING_RUN,
    FIELD_RUN,
    CURVE_RUN,
    VOLUME_RUN,
    WINDOW_RUN,
    DRIFT_RUN,
    GATE_RUN,
];

/// The code `offset` places after the run's first, at most its last.
#[inline(always)]
const fn in_run(run: Run, offset: u32) -> lc_error_t {
    let code = (run.0 as u32).saturating_add(offset);
    let code = if code > run.1 as u32 {
        run.1 as u32
    } else {
        code
    };
    // SAFETY: `code` lies in the run (from its first to its last), and
    // every code of a run in `ERROR_RUNS` is an `lc_error_t`: the const
    // block below reads each one as `lc_error_t` at compile time, where an
    // invalid discriminant fails the build.
    unsafe { core::mem::transmute::<u32, lc_error_t>(code) }
}

/// Every code of every run is an `lc_error_t` (see [`in_run`]).
const _: () = {
    let mut r = 0;
    while r < ERROR_RUNS.len() {
        let run = ERROR_RUNS[r];
        let mut code = run.0 as u32;
        while code <= run.1 as u32 {
            // SAFETY: none at run time: evaluated at compile time, where
            // an invalid discriminant is an error of the build.
            let e = unsafe { core::mem::transmute::<u32, lc_error_t>(code) };
            assert!(e as u32 == code);
            code += 1;
        }
        r += 1;
    }
};

/// The error code of an image's refusal: each group of lc-core's errors
/// maps onto a run of consecutive codes in the order of its enum, so the
/// code is a sum, not a ladder of comparisons (about 350 bytes less
/// flash on a Cortex-M0). [`image_error_named`] names every code; the
/// two agree for every error (checked at compile time below).
const fn image_error(e: ImageError) -> lc_error_t {
    match e {
        ImageError::OutOfRange(f) => match f {
            Field::Magic | Field::Version | Field::Length => LC_ERR_IMAGE_FIELD_FRAMING,
            // ReaderKind is the fourth field.
            _ => in_run(FIELD_RUN, (f as u32).saturating_sub(3)),
        },
        ImageError::BadCurve(c) => in_run(CURVE_RUN, c as u32),
        ImageError::BadVolume(c) => in_run(VOLUME_RUN, c as u32),
        ImageError::BadWindow(w) => in_run(WINDOW_RUN, w as u32),
        ImageError::BadDrift(d) => in_run(DRIFT_RUN, d as u32),
        ImageError::BadGate(g) => in_run(GATE_RUN, g as u32),
        ImageError::BufferTooSmall => LC_ERR_IMAGE_TOO_LONG,
        // Truncated to BadCrc, the variants without data before
        // OutOfRange (the enum's order).
        _ => in_run(FRAMING_RUN, image_error_rank(e)),
    }
}

/// The rank of an `ImageError` variant without data among the first
/// seven (`Truncated` 0 to `BadCrc` 6).
#[inline(always)]
const fn image_error_rank(e: ImageError) -> u32 {
    match e {
        ImageError::Truncated => 0,
        ImageError::BadMagic => 1,
        ImageError::UnknownVersion => 2,
        ImageError::OldFormat => 3,
        ImageError::LengthMismatch => 4,
        ImageError::Misaligned => 5,
        _ => 6,
    }
}

/// [`image_error`] equals [`image_error_named`] for every image error.
const ERROR_CODES_CHECKED: () = {
    use CurveError as C;
    use Field as F;
    use ImageError as E;
    const FIELDS: [Field; 21] = [
        F::Magic,
        F::Version,
        F::Length,
        F::ReaderKind,
        F::Flags,
        F::CurveNodes,
        F::VolumeNodes,
        F::Serial,
        F::ReferenceHz,
        F::GateCycles,
        F::Window,
        F::RestPoint,
        F::CompanionRest,
        F::Drift,
        F::Output,
        F::VolumeOutput,
        F::Metal,
        F::Reserved,
        F::CalibratedAt,
        F::PlanId,
        F::Curve,
    ];
    const CURVES: [CurveError; 7] = [
        C::TooFewNodes,
        C::TooManyNodes,
        C::ShiftsNotIncreasing,
        C::NotMonotone,
        C::SegmentTooSteep,
        C::BadDerivatives,
        C::BadSegment,
    ];
    const OTHERS: [ImageError; 15] = [
        E::Truncated,
        E::BadMagic,
        E::UnknownVersion,
        E::OldFormat,
        E::LengthMismatch,
        E::Misaligned,
        E::BadCrc,
        E::BufferTooSmall,
        E::BadWindow(WindowError::ZeroReference),
        E::BadWindow(WindowError::EmptyBand),
        E::BadDrift(DriftError::ReferenceOutOfRange),
        E::BadDrift(DriftError::CorrectionTooLarge),
        E::BadGate(ShiftError::ZeroCount),
        E::BadGate(ShiftError::OutOfRange),
        E::BadGate(ShiftError::BadRestPoint),
    ];
    const fn same(e: ImageError) {
        assert!(image_error(e) as u32 == image_error_named(e) as u32);
    }
    let mut i = 0;
    while i < FIELDS.len() {
        same(E::OutOfRange(FIELDS[i]));
        i += 1;
    }
    let mut i = 0;
    while i < CURVES.len() {
        same(E::BadCurve(CURVES[i]));
        same(E::BadVolume(CURVES[i]));
        i += 1;
    }
    let mut i = 0;
    while i < OTHERS.len() {
        same(OTHERS[i]);
        i += 1;
    }
};
#[allow(clippy::let_unit_value)]
const _: () = ERROR_CODES_CHECKED;

fn reader_error(e: ReaderError) -> lc_error_t {
    match e {
        ReaderError::WrongKind(_) => LC_ERR_WRONG_KIND,
        ReaderError::NotBuilt(_) => LC_ERR_NOT_BUILT,
        // The C API builds the level reader for either arrangement
        // (`LevelReader::new`), which never refuses an image this way.
        ReaderError::WrongElectrodes { .. } => LC_ERR_WRONG_KIND,
    }
}

// ---------------------------------------------------------------------
// Plain values: kinds, statuses, faults, inputs, readings.

/// What a unit measures, and so which reader it runs.
#[repr(u8)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum lc_kind_t {
    /// Inductive proximity: shift -> gap.
    LC_KIND_PROXIMITY = 1,
    /// Capacitive level: shift (or probe / reference ratio) -> level (->
    /// volume).
    LC_KIND_LEVEL = 2,
    /// Metal detection: presence and class.
    LC_KIND_METAL = 3,
}

fn kind(k: ReaderKind) -> lc_kind_t {
    match k {
        ReaderKind::Proximity => lc_kind_t::LC_KIND_PROXIMITY,
        ReaderKind::Level => lc_kind_t::LC_KIND_LEVEL,
        ReaderKind::Metal => lc_kind_t::LC_KIND_METAL,
    }
}

/// Physical unit of an output: value = raw * 10^exponent * unit.
#[repr(u8)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum lc_unit_t {
    /// Dimensionless (a count, a class).
    LC_UNIT_NONE = 0,
    /// Metre (exponent -6: micrometres).
    LC_UNIT_METRE = 1,
    /// Litre (exponent -3: millilitres).
    LC_UNIT_LITRE = 2,
    /// Percent.
    LC_UNIT_PERCENT = 3,
}

fn unit(u: OutputUnit) -> lc_unit_t {
    match u {
        OutputUnit::None => lc_unit_t::LC_UNIT_NONE,
        OutputUnit::Metre => lc_unit_t::LC_UNIT_METRE,
        OutputUnit::Litre => lc_unit_t::LC_UNIT_LITRE,
        OutputUnit::Percent => lc_unit_t::LC_UNIT_PERCENT,
    }
}

/// A reading's status. The value of a reading is trustworthy only with
/// `LC_STATUS_OK`; clamped with the two range statuses; 0 with
/// `LC_STATUS_SENSOR_FAULT` (the `fault` field says why).
#[repr(u8)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum lc_status_t {
    /// A value inside the calibrated range.
    LC_STATUS_OK = 0,
    /// Below the calibrated range; the value is clamped to its end.
    LC_STATUS_BELOW_RANGE = 1,
    /// Above the calibrated range; the value is clamped to its end.
    LC_STATUS_ABOVE_RANGE = 2,
    /// Nothing in range: proximity beyond the farthest calibrated gap
    /// (the gap is clamped to it); metal: no target present.
    LC_STATUS_NO_TARGET = 3,
    /// No trustworthy value: the value is 0, `fault` says why.
    LC_STATUS_SENSOR_FAULT = 4,
}

/// Why a reading has no trustworthy value (`LC_FAULT_NONE` unless the
/// status is `LC_STATUS_SENSOR_FAULT`). The high nibble is the group:
/// 0x0_ the sensor's count pair failed the fault window, 0x1_ the
/// companion's (or reference electrode's) pair, 0x2_ the shift, 0x3_ the
/// companion ratio, 0x40 the reference electrode.
#[repr(u8)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum lc_fault_t {
    /// No fault.
    LC_FAULT_NONE = 0x00,
    /// Counts: no sensor cycles (a stalled oscillator).
    LC_FAULT_COUNTS_NO_OSCILLATION = 0x01,
    /// Counts: no reference ticks (the reference clock stopped).
    LC_FAULT_COUNTS_NO_REFERENCE = 0x02,
    /// Counts: fewer cycles than the fault window's minimum.
    LC_FAULT_COUNTS_TOO_FEW_CYCLES = 0x03,
    /// Counts: frequency below the fault window.
    LC_FAULT_COUNTS_FREQUENCY_TOO_LOW = 0x04,
    /// Counts: frequency above the fault window.
    LC_FAULT_COUNTS_FREQUENCY_TOO_HIGH = 0x05,
    /// Companion: its count pair is missing although the calibration
    /// needs it (`LC_INPUT_COMPANION` not set).
    LC_FAULT_COMPANION_MISSING = 0x10,
    /// Companion: no sensor cycles.
    LC_FAULT_COMPANION_NO_OSCILLATION = 0x11,
    /// Companion: no reference ticks.
    LC_FAULT_COMPANION_NO_REFERENCE = 0x12,
    /// Companion: fewer cycles than the fault window's minimum.
    LC_FAULT_COMPANION_TOO_FEW_CYCLES = 0x13,
    /// Companion: frequency below the fault window.
    LC_FAULT_COMPANION_FREQUENCY_TOO_LOW = 0x14,
    /// Companion: frequency above the fault window.
    LC_FAULT_COMPANION_FREQUENCY_TOO_HIGH = 0x15,
    /// Shift: a zero count.
    LC_FAULT_SHIFT_ZERO_COUNT = 0x20,
    /// Shift: outside the fixed-point range.
    LC_FAULT_SHIFT_OUT_OF_RANGE = 0x21,
    /// Shift: the rest point is not usable.
    LC_FAULT_SHIFT_BAD_REST_POINT = 0x22,
    /// Companion ratio: the two pairs have different gates.
    LC_FAULT_RATIO_GATE_MISMATCH = 0x30,
    /// Companion ratio: a zero count.
    LC_FAULT_RATIO_ZERO_COUNT = 0x31,
    /// Companion ratio: outside the fixed-point range.
    LC_FAULT_RATIO_OUT_OF_RANGE = 0x32,
    /// Companion ratio: the rest point is not usable.
    LC_FAULT_RATIO_BAD_REST_POINT = 0x33,
    /// The level reference electrode shows no liquid (its shift is not
    /// positive): the level ratio is undefined.
    LC_FAULT_REFERENCE = 0x40,
    /// The level reference electrode's shift is positive but too small to
    /// divide by, or the ratio lies beyond the curve's reach: a nearly dry
    /// electrode.
    LC_FAULT_REFERENCE_LOW = 0x41,
    /// The same count pair the reader's frozen limit times in a row
    /// (default 255): a counter or capture that stopped updating.
    LC_FAULT_FROZEN = 0x50,
    /// A temperature outside the drift model's domain, the image having a
    /// drift model.
    LC_FAULT_TEMPERATURE_OUT_OF_DOMAIN = 0x51,
    /// No temperature, the image having a drift model.
    LC_FAULT_TEMPERATURE_MISSING = 0x52,
    /// The shift lies beyond the curve's span by more than the span's
    /// width: not this sensor's counts (a channel swap, a wrong image).
    LC_FAULT_OUT_OF_REACH = 0x53,
}

fn window_fault(e: FaultError, companion: bool) -> lc_fault_t {
    use lc_fault_t::*;
    match (e, companion) {
        (FaultError::NoOscillation, false) => LC_FAULT_COUNTS_NO_OSCILLATION,
        (FaultError::NoReference, false) => LC_FAULT_COUNTS_NO_REFERENCE,
        (FaultError::TooFewCycles, false) => LC_FAULT_COUNTS_TOO_FEW_CYCLES,
        (FaultError::FrequencyTooLow, false) => LC_FAULT_COUNTS_FREQUENCY_TOO_LOW,
        (FaultError::FrequencyTooHigh, false) => LC_FAULT_COUNTS_FREQUENCY_TOO_HIGH,
        (FaultError::NoOscillation, true) => LC_FAULT_COMPANION_NO_OSCILLATION,
        (FaultError::NoReference, true) => LC_FAULT_COMPANION_NO_REFERENCE,
        (FaultError::TooFewCycles, true) => LC_FAULT_COMPANION_TOO_FEW_CYCLES,
        (FaultError::FrequencyTooLow, true) => LC_FAULT_COMPANION_FREQUENCY_TOO_LOW,
        (FaultError::FrequencyTooHigh, true) => LC_FAULT_COMPANION_FREQUENCY_TOO_HIGH,
    }
}

/// A reading's status and fault in C terms.
fn status(s: Status) -> (lc_status_t, lc_fault_t) {
    use lc_fault_t::*;
    use lc_status_t::*;
    let fault = match s {
        Status::Ok => return (LC_STATUS_OK, LC_FAULT_NONE),
        Status::BelowRange => return (LC_STATUS_BELOW_RANGE, LC_FAULT_NONE),
        Status::AboveRange => return (LC_STATUS_ABOVE_RANGE, LC_FAULT_NONE),
        Status::NoTarget => return (LC_STATUS_NO_TARGET, LC_FAULT_NONE),
        Status::SensorFault(f) => f,
    };
    let fault = match fault {
        SensorFault::Counts(e) => window_fault(e, false),
        SensorFault::Companion(None) => LC_FAULT_COMPANION_MISSING,
        SensorFault::Companion(Some(e)) => window_fault(e, true),
        SensorFault::Shift(ShiftError::ZeroCount) => LC_FAULT_SHIFT_ZERO_COUNT,
        SensorFault::Shift(ShiftError::OutOfRange) => LC_FAULT_SHIFT_OUT_OF_RANGE,
        SensorFault::Shift(ShiftError::BadRestPoint) => LC_FAULT_SHIFT_BAD_REST_POINT,
        SensorFault::Ratio(CompanionError::GateMismatch) => LC_FAULT_RATIO_GATE_MISMATCH,
        SensorFault::Ratio(CompanionError::Shift(ShiftError::ZeroCount)) => {
            LC_FAULT_RATIO_ZERO_COUNT
        }
        SensorFault::Ratio(CompanionError::Shift(ShiftError::OutOfRange)) => {
            LC_FAULT_RATIO_OUT_OF_RANGE
        }
        SensorFault::Ratio(CompanionError::Shift(ShiftError::BadRestPoint)) => {
            LC_FAULT_RATIO_BAD_REST_POINT
        }
        SensorFault::Reference => LC_FAULT_REFERENCE,
        SensorFault::ReferenceLow => LC_FAULT_REFERENCE_LOW,
        SensorFault::Frozen => LC_FAULT_FROZEN,
        SensorFault::TemperatureOutOfDomain => LC_FAULT_TEMPERATURE_OUT_OF_DOMAIN,
        SensorFault::TemperatureMissing => LC_FAULT_TEMPERATURE_MISSING,
        SensorFault::OutOfReach => LC_FAULT_OUT_OF_REACH,
    };
    (LC_STATUS_SENSOR_FAULT, fault)
}

/// A count pair: what the timer captured over one gate.
#[repr(C)]
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct lc_count_pair_t {
    /// Whole sensor oscillator cycles inside the gate, 0 to 2^32 - 1.
    pub cycles: u32,
    /// Reference clock ticks inside the gate, 0 to 2^32 - 1.
    pub ticks: u32,
}

/// `lc_input_t.flags`: `companion` holds the companion coil's (level:
/// the reference electrode's) count pair, read with the same gate.
pub const LC_INPUT_COMPANION: u8 = 1;
/// `lc_input_t.flags`: `temperature_centi_c` holds the temperature.
pub const LC_INPUT_TEMPERATURE: u8 = 2;
/// `lc_input_t.flags`: `ring_count` holds the ring-down's ring count.
pub const LC_INPUT_RING_COUNT: u8 = 4;

/// What one reading needs: the count pair, and what the unit may add
/// (each optional part is used only when its `LC_INPUT_*` flag is set).
/// Any values are accepted: implausible counts give a sensor-fault
/// reading, never an error.
#[repr(C)]
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct lc_input_t {
    /// The sensor channel's count pair.
    pub pair: lc_count_pair_t,
    /// The companion coil's (level: reference electrode's) count pair
    /// (`LC_INPUT_COMPANION`).
    pub companion: lc_count_pair_t,
    /// Temperature for the drift model, hundredths of a degree Celsius
    /// (2500 = 25.00 degC), any int32_t (`LC_INPUT_TEMPERATURE`).
    pub temperature_centi_c: i32,
    /// Ring count of the ring-down after the gate, 0 to 65535
    /// (`LC_INPUT_RING_COUNT`; metal detection).
    pub ring_count: u16,
    /// `LC_INPUT_*` flags, or-ed; any other bit is `LC_ERR_BAD_INPUT_FLAGS`.
    pub flags: u8,
}

impl lc_input_t {
    fn to_input(self) -> Result<Input, lc_error_t> {
        const ALL: u8 = LC_INPUT_COMPANION | LC_INPUT_TEMPERATURE | LC_INPUT_RING_COUNT;
        if self.flags & !ALL != 0 {
            return Err(LC_ERR_BAD_INPUT_FLAGS);
        }
        let on = |flag: u8| self.flags & flag != 0;
        Ok(Input {
            pair: CountPair::new(self.pair.cycles, self.pair.ticks),
            companion: on(LC_INPUT_COMPANION)
                .then_some(CountPair::new(self.companion.cycles, self.companion.ticks)),
            temperature: on(LC_INPUT_TEMPERATURE).then_some(CentiCelsius(self.temperature_centi_c)),
            ring_count: on(LC_INPUT_RING_COUNT).then_some(self.ring_count),
        })
    }
}

/// A proximity reading.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct lc_proximity_reading_t {
    /// The shift the gap came from, after drift compensation: signed
    /// Q23.40 (shift = shift_q40 / 2^40, dimensionless; 0 on a fault).
    pub shift_q40: i64,
    /// The gap in the image's output units (`lc_image_info_t.output_*`;
    /// micrometres for `lc-host calibrate`'s images), clamped to the
    /// curve's ends; 0 on a sensor fault.
    pub gap: i32,
    /// Status.
    pub status: lc_status_t,
    /// Why, when the status is `LC_STATUS_SENSOR_FAULT`.
    pub fault: lc_fault_t,
}

impl From<ProximityReading> for lc_proximity_reading_t {
    fn from(r: ProximityReading) -> Self {
        let (status, fault) = status(r.status);
        Self {
            shift_q40: r.shift.raw_q40(),
            gap: r.gap,
            status,
            fault,
        }
    }
}

/// A level reading.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct lc_level_reading_t {
    /// What the level curve was evaluated at, signed Q23.40: the probe's
    /// drift-compensated shift, or with a reference electrode the
    /// probe / reference ratio (`axis_is_ratio`); 0 on a fault.
    pub axis_q40: i64,
    /// The level in the image's output units (`lc_image_info_t.output_*`),
    /// clamped to the curve's ends; 0 on a sensor fault.
    pub level: i32,
    /// The volume at that level in the volume table's units
    /// (`lc_image_info_t.volume_*`), when `has_volume` is 1.
    pub volume: i32,
    /// 1 when `volume` holds a volume (the image has a volume table and
    /// the reading no sensor fault), else 0.
    pub has_volume: u8,
    /// 1 when `axis_q40` is the probe / reference ratio, 0 when a shift.
    pub axis_is_ratio: u8,
    /// Status.
    pub status: lc_status_t,
    /// Why, when the status is `LC_STATUS_SENSOR_FAULT`.
    pub fault: lc_fault_t,
}

impl From<LevelReading> for lc_level_reading_t {
    fn from(r: LevelReading) -> Self {
        let (status, fault) = status(r.status);
        Self {
            axis_q40: r.axis.raw_q40(),
            level: r.level,
            volume: r.volume.unwrap_or(0),
            has_volume: u8::from(r.volume.is_some()),
            axis_is_ratio: u8::from(matches!(r.axis, LevelAxis::Ratio(_))),
            status,
            fault,
        }
    }
}

/// What kind of metal a detection is.
#[repr(u8)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum lc_metal_class_t {
    /// No target.
    LC_METAL_NONE = 0,
    /// L rose: a ferromagnetic target.
    LC_METAL_FERROUS = 1,
    /// L fell: a non-ferrous conductor (eddy currents).
    LC_METAL_NON_FERROUS = 2,
}

fn metal_class(c: MetalClass) -> lc_metal_class_t {
    match c {
        MetalClass::None => lc_metal_class_t::LC_METAL_NONE,
        MetalClass::Ferrous => lc_metal_class_t::LC_METAL_FERROUS,
        MetalClass::NonFerrous => lc_metal_class_t::LC_METAL_NON_FERROUS,
    }
}

/// A metal reading.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct lc_metal_reading_t {
    /// The shift minus the learned baseline, signed Q23.40; 0 on a fault.
    pub delta_q40: i64,
    /// The ring-count drop against the learned ring count (may be
    /// negative), when `has_ring_drop` is 1.
    pub ring_drop: i32,
    /// 1 when `ring_drop` holds a value (the input had a ring count and
    /// one has been learned), else 0.
    pub has_ring_drop: u8,
    /// The class of the target present (`LC_METAL_NONE` when none).
    pub metal_class: lc_metal_class_t,
    /// Status: `LC_STATUS_NO_TARGET` while nothing is present.
    pub status: lc_status_t,
    /// Why, when the status is `LC_STATUS_SENSOR_FAULT`.
    pub fault: lc_fault_t,
}

impl From<MetalReading> for lc_metal_reading_t {
    fn from(r: MetalReading) -> Self {
        let (status, fault) = status(r.status);
        Self {
            delta_q40: r.delta.raw_q40(),
            ring_drop: r.ring_drop.unwrap_or(0),
            has_ring_drop: u8::from(r.ring_drop.is_some()),
            metal_class: metal_class(r.class),
            status,
            fault,
        }
    }
}

/// Any reader's reading (`lc_reader_read`), in the terms of a log whose
/// one value column holds any kind.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct lc_reading_t {
    /// The Q23.40 value the curve was evaluated at: shift (proximity),
    /// shift or probe / reference ratio (level), shift minus baseline
    /// (metal).
    pub q40: i64,
    /// The primary output: gap, level, or the metal class's code
    /// (`lc_metal_class_t`).
    pub value: i32,
    /// The second output when `has_secondary` is 1: the level's volume,
    /// the metal reading's ring-count drop.
    pub secondary: i32,
    /// 1 when `secondary` holds a value, else 0.
    pub has_secondary: u8,
    /// The reader's kind.
    pub kind: lc_kind_t,
    /// Status.
    pub status: lc_status_t,
    /// Why, when the status is `LC_STATUS_SENSOR_FAULT`.
    pub fault: lc_fault_t,
}

impl From<Reading> for lc_reading_t {
    fn from(r: Reading) -> Self {
        let (status, fault) = status(r.status());
        let k = match r {
            Reading::Proximity(_) => lc_kind_t::LC_KIND_PROXIMITY,
            Reading::Level(_) => lc_kind_t::LC_KIND_LEVEL,
            Reading::Metal(_) => lc_kind_t::LC_KIND_METAL,
        };
        Self {
            q40: r.curve_input_q40(),
            value: r.output(),
            secondary: r.secondary().unwrap_or(0),
            has_secondary: u8::from(r.secondary().is_some()),
            kind: k,
            status,
            fault,
        }
    }
}

/// What `lc_image_info` reports about a validated image.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct lc_image_info_t {
    /// The image's length in bytes (the header's length field).
    pub length: u32,
    /// The image's stored CRC-32.
    pub crc: u32,
    /// The counter's reference clock, hertz.
    pub reference_hz: u32,
    /// The configured gate in sensor cycles; 0 when the image has none.
    pub gate_cycles: u32,
    /// The unit serial: 1 to 16 printable ASCII characters, NUL-terminated.
    pub serial: [u8; 17],
    /// Which reader the unit runs.
    pub kind: lc_kind_t,
    /// Unit of the primary output (gap, level).
    pub output_unit: lc_unit_t,
    /// Decimal exponent of the primary output, -18 to 18: value = raw *
    /// 10^exponent * unit.
    pub output_exponent: i8,
    /// 1 when the image has a volume table (level), else 0.
    pub has_volume: u8,
    /// Unit of the volume (when `has_volume`).
    pub volume_unit: lc_unit_t,
    /// Decimal exponent of the volume, -18 to 18 (when `has_volume`).
    pub volume_exponent: i8,
}

// ---------------------------------------------------------------------
// Storage.

/// What `lc_image_t` holds: the view of an image that validated (12
/// bytes on a 32-bit target: where the bytes are, and the kind).
#[derive(Clone, Copy)]
struct ImageRef {
    image: Image<'static>,
}

/// A value in caller-provided storage: a tag word that says the storage
/// holds an initialised value, then the value (a reader is built in it in
/// place, by lc-core's `init` constructors).
#[repr(C)]
struct Slot<T> {
    tag: u32,
    value: T,
}

/// Words of storage for a `Slot<T>`.
const fn words<T>() -> usize {
    size_of::<Slot<T>>().div_ceil(8)
}

/// The alignment of every storage type, bytes: that of `uint64_t` on the
/// targets (8 on Cortex-M and the 64-bit hosts).
pub const LC_STORAGE_ALIGN: usize = 8;

const TAG_IMAGE: u32 = 0x4D49_434C; // "LCIM"
const TAG_PROXIMITY: u32 = 0x5250_434C; // "LCPR"
const TAG_LEVEL: u32 = 0x564C_434C; // "LCLV"
const TAG_METAL: u32 = 0x544D_434C; // "LCMT"
const TAG_READER: u32 = 0x4452_434C; // "LCRD"

/// cbindgen:ignore
pub const LC_IMAGE_WORDS: usize = words::<ImageRef>();
/// cbindgen:ignore
pub const LC_PROXIMITY_READER_WORDS: usize = words::<ProximityReader<'static>>();
/// cbindgen:ignore
pub const LC_LEVEL_READER_WORDS: usize = words::<LevelReader<'static>>();
/// cbindgen:ignore
pub const LC_METAL_READER_WORDS: usize = words::<MetalReader>();
/// cbindgen:ignore
pub const LC_READER_WORDS: usize = words::<Reader<'static>>();

/// A validated calibration image (`lc_image_validate` or a one-kind
/// `lc_image_validate_*`): a view of its bytes read in place, no more
/// (`LC_IMAGE_SIZE` bytes, aligned to `LC_STORAGE_ALIGN`; opaque). Each
/// `*_init` builds its reader from it without validating again. Needed
/// only while the readers are built; the readers borrow the image's
/// bytes, not this.
#[repr(C)]
pub struct lc_image_t {
    opaque: [u64; LC_IMAGE_WORDS],
}

/// A proximity reader (`lc_proximity_reader_init`):
/// `LC_PROXIMITY_READER_SIZE` bytes, aligned to `LC_STORAGE_ALIGN`;
/// opaque. Holds run-time state; keep it for the unit's life.
#[repr(C)]
pub struct lc_proximity_reader_t {
    opaque: [u64; LC_PROXIMITY_READER_WORDS],
}

/// A level reader (`lc_level_reader_init`): `LC_LEVEL_READER_SIZE`
/// bytes, aligned to `LC_STORAGE_ALIGN`; opaque.
#[repr(C)]
pub struct lc_level_reader_t {
    opaque: [u64; LC_LEVEL_READER_WORDS],
}

/// A metal reader (`lc_metal_reader_init`): `LC_METAL_READER_SIZE`
/// bytes, aligned to `LC_STORAGE_ALIGN`; opaque. Holds the learned
/// baselines and the detector.
#[repr(C)]
pub struct lc_metal_reader_t {
    opaque: [u64; LC_METAL_READER_WORDS],
}

/// Any reader, of the kind the image names (`lc_reader_init`):
/// `LC_READER_SIZE` bytes (the largest reader's), aligned to
/// `LC_STORAGE_ALIGN`; opaque.
#[repr(C)]
pub struct lc_reader_t {
    opaque: [u64; LC_READER_WORDS],
}

/// The compile-time checks of the Rust side: each storage type holds its
/// slot, at its alignment (the C side's `_Static_assert`s check the
/// header's constants against the C types).
const _: () = {
    macro_rules! holds {
        ($storage:ty, $t:ty) => {
            assert!(size_of::<$storage>() >= size_of::<Slot<$t>>());
            assert!(size_of::<$storage>() % LC_STORAGE_ALIGN == 0);
            assert!(align_of::<$storage>() == LC_STORAGE_ALIGN);
            assert!(align_of::<Slot<$t>>() <= LC_STORAGE_ALIGN);
        };
    }
    holds!(lc_image_t, ImageRef);
    holds!(lc_proximity_reader_t, ProximityReader<'static>);
    holds!(lc_level_reader_t, LevelReader<'static>);
    holds!(lc_metal_reader_t, MetalReader);
    holds!(lc_reader_t, Reader<'static>);
};

/// The storage sizes and alignment of this build, bytes: what the
/// header's `LC_*_SIZE` constants must equal on this target
/// (`lc_check_layout` compares them).
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct lc_layout_t {
    /// "LCLAYOUT" as two little-endian words: 0x414C434C, 0x54554F59.
    pub magic: [u32; 2],
    /// `LC_STORAGE_ALIGN`.
    pub storage_align: u32,
    /// `LC_IMAGE_SIZE`.
    pub image_size: u32,
    /// `LC_PROXIMITY_READER_SIZE`.
    pub proximity_reader_size: u32,
    /// `LC_LEVEL_READER_SIZE`.
    pub level_reader_size: u32,
    /// `LC_METAL_READER_SIZE`.
    pub metal_reader_size: u32,
    /// `LC_READER_SIZE`.
    pub reader_size: u32,
}

/// The layout of this build (the header generator reads it from the
/// built Cortex-M library; `lc_check_layout` from C). Exported, not
/// `#[used]`: a firmware that never reads it leaves it out of its flash.
#[no_mangle]
pub static lc_core_capi_layout: lc_layout_t = lc_layout_t {
    magic: [0x414C_434C, 0x5455_4F59],
    storage_align: LC_STORAGE_ALIGN as u32,
    image_size: size_of::<lc_image_t>() as u32,
    proximity_reader_size: size_of::<lc_proximity_reader_t>() as u32,
    level_reader_size: size_of::<lc_level_reader_t>() as u32,
    metal_reader_size: size_of::<lc_metal_reader_t>() as u32,
    reader_size: size_of::<lc_reader_t>() as u32,
};

/// Whether `p` is not aligned for `T` (its low address bits; 0 when
/// aligned), for [`args!`].
#[inline(always)]
fn misaligned<T>(p: *const T) -> usize {
    p as usize & (align_of::<T>() - 1)
}

/// Checks pointer arguments together: `LC_ERR_NULL_POINTER` when one is
/// NULL, else `LC_ERR_MISALIGNED_ARGUMENT` when one is not aligned for
/// its type. One test for each error, whatever the number of arguments.
macro_rules! args {
    ($($p:expr),+) => {
        if false $(| $p.is_null())+ {
            Err(LC_ERR_NULL_POINTER)
        } else if 0 $(| misaligned($p))+ != 0 {
            Err(LC_ERR_MISALIGNED_ARGUMENT)
        } else {
            Ok(())
        }
    };
}

/// Checks a pointer argument: not NULL, aligned for `T`.
fn arg<T>(p: *const T) -> Result<(), lc_error_t> {
    if p.is_null() {
        Err(LC_ERR_NULL_POINTER)
    } else if !p.is_aligned() {
        Err(LC_ERR_MISALIGNED_ARGUMENT)
    } else {
        Ok(())
    }
}

/// The value slot of the storage at `p` (checked by [`arg`]), to be
/// written.
///
/// # Safety
/// `p` is valid for writes of `S`, which holds a `Slot<T>` (the `const`
/// checks above), and not used elsewhere during the borrow.
unsafe fn slot<'a, S, T>(p: *mut S) -> &'a mut MaybeUninit<T> {
    let slot = p.cast::<Slot<T>>();
    // SAFETY: the caller's contract: the slot's fields are in bounds and
    // aligned; `MaybeUninit` makes no claim on the bytes.
    unsafe { &mut *ptr::addr_of_mut!((*slot).value).cast::<MaybeUninit<T>>() }
}

/// Marks the storage at `p` as holding an initialised value (written
/// into [`slot`]).
///
/// # Safety
/// `p` as for [`slot`]; the value has been written.
unsafe fn set_tag<S, T>(p: *mut S, tag: u32) {
    // SAFETY: the caller's contract: the tag is the slot's first field.
    unsafe { ptr::addr_of_mut!((*p.cast::<Slot<T>>()).tag).write(tag) }
}

/// Marks the storage at `p` as not initialised.
///
/// # Safety
/// `p` is valid for writes of at least 4 bytes, aligned.
unsafe fn clear<S>(p: *mut S) {
    // SAFETY: the tag is the storage's first word.
    unsafe { ptr::write(p.cast::<u32>(), 0) }
}

/// The value in the storage at `p`, if its tag says it holds one.
///
/// # Safety
/// `p` (checked by [`arg`]) is valid for reads and writes of `S` and not
/// used elsewhere during the borrow; storage whose tag is `tag` holds an
/// initialised `T` (written through [`slot`], then [`set_tag`]).
unsafe fn load<'a, S, T>(p: *mut S, tag: u32) -> Result<&'a mut T, lc_error_t> {
    let slot = p.cast::<Slot<T>>();
    // SAFETY: the tag word is plain bytes, readable whatever the storage
    // holds; with the right tag the slot holds a `T` (the caller's
    // contract).
    unsafe {
        if ptr::read(ptr::addr_of!((*slot).tag)) != tag {
            return Err(LC_ERR_NOT_INITIALISED);
        }
        Ok(&mut *ptr::addr_of_mut!((*slot).value))
    }
}

/// Runs `f`, returning its error or `LC_OK`.
fn code(f: impl FnOnce() -> Result<(), lc_error_t>) -> lc_error_t {
    match f() {
        Ok(()) => LC_OK,
        Err(e) => e,
    }
}

// ---------------------------------------------------------------------
// Entry points.

/// Validates a calibration image in place and keeps where it is in
/// `image`. Nothing is copied out of the image's bytes: they must stay
/// where they are, unchanged, for as long as `image` or a reader built
/// from it is used (in flash, for the unit's life).
///
/// `bytes`: the image, at a 4-byte aligned address; `len` may be longer
/// than the image (a flash page): the header's length field decides.
/// Checks, the first failing one reported: framing and magic
/// (`LC_ERR_IMAGE_TRUNCATED`, `LC_ERR_IMAGE_BAD_MAGIC`), version
/// (`LC_ERR_IMAGE_UNKNOWN_VERSION`, `LC_ERR_IMAGE_OLD_FORMAT`), length
/// (`LC_ERR_IMAGE_LENGTH_MISMATCH`), alignment
/// (`LC_ERR_IMAGE_MISALIGNED`), CRC-32 (`LC_ERR_IMAGE_BAD_CRC`), then
/// every field (`LC_ERR_IMAGE_FIELD_*`), the curve and volume table
/// (`LC_ERR_IMAGE_CURVE_*`, `LC_ERR_IMAGE_VOLUME_*`) and what the readers
/// derive (`LC_ERR_IMAGE_WINDOW_*`, `LC_ERR_IMAGE_DRIFT_*`,
/// `LC_ERR_IMAGE_GATE_*`). Argument errors: `LC_ERR_NULL_POINTER`,
/// `LC_ERR_MISALIGNED_ARGUMENT` (`image`), `LC_ERR_BAD_LENGTH`.
///
/// Cost on a Cortex-M0: about 6 instructions per image byte (the CRC)
/// plus a few hundred per curve segment; start-up only.
///
/// Library feature: `image` (docs/c-api.md).
///
/// # Safety
/// `image` points to writable `lc_image_t` storage; `bytes` to `len`
/// readable bytes that stay unchanged while `image` or its readers are
/// used.
#[cfg(feature = "image")]
#[no_mangle]
pub unsafe extern "C" fn lc_image_validate(
    image: *mut lc_image_t,
    bytes: *const u8,
    len: usize,
) -> lc_error_t {
    // SAFETY: the caller's contract, as this function's.
    unsafe { validate_with(image, bytes, len, Image::new) }
}

/// [`lc_image_validate`] for a proximity unit's firmware: the same checks,
/// an image of another kind refused (`LC_ERR_IMAGE_FIELD_OUT_OF_RANGE`,
/// the reader kind), and only the proximity checks linked in (the other
/// kinds' code stays out of the firmware's flash).
///
/// Library features: `image` and `proximity` (docs/c-api.md).
///
/// # Safety
/// As [`lc_image_validate`].
#[cfg(all(feature = "image", feature = "proximity"))]
#[no_mangle]
pub unsafe extern "C" fn lc_image_validate_proximity(
    image: *mut lc_image_t,
    bytes: *const u8,
    len: usize,
) -> lc_error_t {
    // SAFETY: the caller's contract, as this function's.
    unsafe { validate_with(image, bytes, len, Image::new_proximity) }
}

/// [`lc_image_validate`] for a level unit's firmware (as
/// [`lc_image_validate_proximity`]).
///
/// Library features: `image` and `level` (docs/c-api.md).
///
/// # Safety
/// As [`lc_image_validate`].
#[cfg(all(feature = "image", feature = "level"))]
#[no_mangle]
pub unsafe extern "C" fn lc_image_validate_level(
    image: *mut lc_image_t,
    bytes: *const u8,
    len: usize,
) -> lc_error_t {
    // SAFETY: the caller's contract, as this function's.
    unsafe { validate_with(image, bytes, len, Image::new_level) }
}

/// [`lc_image_validate`] for a metal detector's firmware (as
/// [`lc_image_validate_proximity`]).
///
/// Library features: `image` and `metal` (docs/c-api.md).
///
/// # Safety
/// As [`lc_image_validate`].
#[cfg(all(feature = "image", feature = "metal"))]
#[no_mangle]
pub unsafe extern "C" fn lc_image_validate_metal(
    image: *mut lc_image_t,
    bytes: *const u8,
    len: usize,
) -> lc_error_t {
    // SAFETY: the caller's contract, as this function's.
    unsafe { validate_with(image, bytes, len, Image::new_metal) }
}

/// The validation entry points' body, `check` the lc-core validation.
///
/// # Safety
/// As [`lc_image_validate`].
unsafe fn validate_with(
    image: *mut lc_image_t,
    bytes: *const u8,
    len: usize,
    check: impl FnOnce(&'static [u8]) -> Result<Image<'static>, ImageError>,
) -> lc_error_t {
    code(|| {
        arg(image)?;
        // SAFETY: `image` checked; its first word is the tag.
        unsafe { clear(image) };
        // SAFETY: the caller's contract.
        let bytes = unsafe { image_bytes(bytes, len)? };
        let value = check(bytes)
            .map(|image| ImageRef { image })
            .map_err(image_error)?;
        // SAFETY: `image` checked; `lc_image_t` holds the slot; the value
        // written, then the tag.
        unsafe {
            slot(image).write(value);
            set_tag::<_, ImageRef>(image, TAG_IMAGE);
        }
        Ok(())
    })
}

/// The image's bytes as a slice, after the argument checks
/// (`LC_ERR_NULL_POINTER`, `LC_ERR_BAD_LENGTH`).
///
/// # Safety
/// `bytes` points to `len` readable bytes that stay unchanged while the
/// image or a reader built from it is used (the `'static` stands for that
/// promise).
#[inline(always)]
unsafe fn image_bytes(bytes: *const u8, len: usize) -> Result<&'static [u8], lc_error_t> {
    arg(bytes)?;
    if len > isize::MAX as usize {
        return Err(LC_ERR_BAD_LENGTH);
    }
    // SAFETY: checked; the caller's contract.
    Ok(unsafe { core::slice::from_raw_parts(bytes, len) })
}

/// The `lc_*_reader_open` entry points' body: `reader` checked and
/// marked not initialised, the image's bytes validated with `check` (a
/// one-kind validation), the reader built in place with `init`, then
/// marked initialised with `tag`.
///
/// # Safety
/// `reader` is valid for writes of `S`, which holds a `Slot<T>`; `bytes`
/// as [`image_bytes`].
#[inline(always)]
unsafe fn open<S, T>(
    reader: *mut S,
    tag: u32,
    bytes: *const u8,
    len: usize,
    check: impl FnOnce(&'static [u8]) -> Result<Image<'static>, ImageError>,
    init: impl FnOnce(&mut MaybeUninit<T>, &Image<'static>) -> Result<(), ReaderError>,
) -> lc_error_t {
    code(|| {
        arg(reader)?;
        // SAFETY: `reader` checked; its first word is the tag.
        unsafe { clear(reader) };
        // SAFETY: the caller's contract.
        let image = check(unsafe { image_bytes(bytes, len)? }).map_err(image_error)?;
        // SAFETY: the caller's contract: `reader` holds a `Slot<T>`, and
        // its tag is set only once `init` has written the reader.
        unsafe {
            initialise(slot(reader), &image, init)?;
            set_tag::<_, T>(reader, tag);
        }
        Ok(())
    })
}

/// `init` of the reader in `slot`: a function of its own, so that its
/// frame (the reader's parts as they are built) and the validation's are
/// never on the stack together.
#[inline(never)]
fn initialise<T>(
    slot: &mut MaybeUninit<T>,
    image: &Image<'static>,
    init: impl FnOnce(&mut MaybeUninit<T>, &Image<'static>) -> Result<(), ReaderError>,
) -> Result<(), lc_error_t> {
    init(slot, image).map_err(reader_error)
}

/// The validated image in `image`.
///
/// # Safety
/// As [`load`].
unsafe fn image_of(image: *const lc_image_t) -> Result<Image<'static>, lc_error_t> {
    arg(image)?;
    // SAFETY: `image` checked; only read.
    unsafe { load::<_, ImageRef>(image.cast_mut(), TAG_IMAGE).map(|i| i.image) }
}

/// Builds a reader from the validated image in `image` into `reader`
/// with `init`, after checking the image's kind against `kind` (`None`:
/// any kind). `init` writes the reader straight into the storage (an
/// lc-core `init` constructor): no `Result` holding a reader is made, and
/// no copy of the reader.
///
/// # Safety
/// `reader` is valid for writes of `S`, which holds a `Slot<T>`; `image`
/// as [`load`].
#[inline(never)]
unsafe fn build<S, T>(
    reader: *mut S,
    tag: u32,
    image: *const lc_image_t,
    kind: Option<ReaderKind>,
    init: impl FnOnce(&mut MaybeUninit<T>, &Image<'static>) -> Result<(), ReaderError>,
) -> Result<(), lc_error_t> {
    arg(reader)?;
    // SAFETY: `reader` checked.
    unsafe { clear(reader) };
    // SAFETY: the caller's contract.
    let image = unsafe { image_of(image)? };
    if kind.is_some_and(|k| k != image.kind()) {
        return Err(LC_ERR_WRONG_KIND);
    }
    // SAFETY: the caller's contract: `reader` holds a `Slot<T>`, and its
    // tag is set only once `init` has written the reader.
    unsafe {
        init(slot(reader), &image).map_err(reader_error)?;
        set_tag::<_, T>(reader, tag);
    }
    Ok(())
}

/// What a validated image holds: kind, serial, output scales, length,
/// CRC, reference clock, gate, read from the image's bytes. Errors:
/// `LC_ERR_NULL_POINTER`, `LC_ERR_MISALIGNED_ARGUMENT`,
/// `LC_ERR_NOT_INITIALISED` (`image` not validated).
///
/// Library feature: `image` (docs/c-api.md).
///
/// # Safety
/// `image` points to `lc_image_t` storage, `info` to a writable
/// `lc_image_info_t`.
#[cfg(feature = "image")]
#[no_mangle]
pub unsafe extern "C" fn lc_image_info(
    image: *const lc_image_t,
    info: *mut lc_image_info_t,
) -> lc_error_t {
    code(|| {
        // SAFETY: the caller's contract.
        let image = unsafe { image_of(image)? };
        arg(info)?;
        let mut serial = [0u8; 17];
        for (d, s) in serial.iter_mut().zip(image.serial().bytes().take(16)) {
            *d = s;
        }
        let volume = image.volume().map(|(_, scale)| scale);
        let value = lc_image_info_t {
            length: u32::try_from(image.bytes().len()).unwrap_or(u32::MAX),
            crc: image.crc(),
            reference_hz: image.reference_hz(),
            gate_cycles: image.gate().unwrap_or(0),
            serial,
            kind: kind(image.kind()),
            output_unit: unit(image.output().unit),
            output_exponent: image.output().decimal_exponent,
            has_volume: u8::from(volume.is_some()),
            volume_unit: volume.map_or(lc_unit_t::LC_UNIT_NONE, |v| unit(v.unit)),
            volume_exponent: volume.map_or(0, |v| v.decimal_exponent),
        };
        // SAFETY: `info` checked.
        unsafe { ptr::write(info, value) };
        Ok(())
    })
}

/// Builds a proximity reader from a validated image into `reader`.
/// Errors: `LC_ERR_NULL_POINTER`, `LC_ERR_MISALIGNED_ARGUMENT`,
/// `LC_ERR_NOT_INITIALISED` (`image` not validated), `LC_ERR_WRONG_KIND`.
/// Cost: the reader's front built from the image's fields (no
/// validation; start-up only); the reader borrows the curve from the
/// image's bytes.
///
/// Library features: `image` and `proximity` (docs/c-api.md).
///
/// # Safety
/// `reader` points to writable `lc_proximity_reader_t` storage, `image`
/// to `lc_image_t` storage; the image's bytes stay unchanged while the
/// reader is used.
#[cfg(all(feature = "image", feature = "proximity"))]
#[no_mangle]
pub unsafe extern "C" fn lc_proximity_reader_init(
    reader: *mut lc_proximity_reader_t,
    image: *const lc_image_t,
) -> lc_error_t {
    code(|| {
        // SAFETY: the caller's contract; the storage holds the slot.
        unsafe {
            build(
                reader,
                TAG_PROXIMITY,
                image,
                Some(ReaderKind::Proximity),
                |s, i| ProximityReader::init(s, i).map(|_| ()),
            )
        }
    })
}

/// Validates a proximity image in place and builds the proximity reader from
/// it, in one call: [`lc_image_validate_proximity`] then
/// [`lc_proximity_reader_init`], without an `lc_image_t`. For a firmware
/// that needs nothing else from the image (no `lc_image_info`); it links
/// less code than the two calls. `bytes` and `len` as for
/// `lc_image_validate`: the bytes stay where they are, unchanged, for as
/// long as the reader is used. Errors: those of the two calls (`reader`
/// checked first, then `bytes`); an image of another kind is
/// `LC_ERR_IMAGE_FIELD_READER_KIND`. A failed call leaves `reader` not
/// initialised.
///
/// Library feature: `proximity` (docs/c-api.md).
///
/// # Safety
/// `reader` points to writable `lc_proximity_reader_t` storage; `bytes` to
/// `len` readable bytes that stay unchanged while the reader is used.
#[cfg(feature = "proximity")]
#[no_mangle]
pub unsafe extern "C" fn lc_proximity_reader_open(
    reader: *mut lc_proximity_reader_t,
    bytes: *const u8,
    len: usize,
) -> lc_error_t {
    // SAFETY: the caller's contract, as this function's.
    unsafe {
        open(
            reader,
            TAG_PROXIMITY,
            bytes,
            len,
            Image::new_proximity,
            |s, i| ProximityReader::init(s, i).map(|_| ()),
        )
    }
}

/// One proximity reading: `input` in, `reading` out (written only on
/// `LC_OK`). A sensor fault is a reading's status, not an error. Errors:
/// `LC_ERR_NULL_POINTER`, `LC_ERR_MISALIGNED_ARGUMENT`,
/// `LC_ERR_NOT_INITIALISED`, `LC_ERR_BAD_INPUT_FLAGS`.
///
/// Library feature: `proximity` (docs/c-api.md).
///
/// # Safety
/// `reader` points to `lc_proximity_reader_t` storage not used by
/// another call at the same time, `input` to an `lc_input_t`, `reading`
/// to a writable `lc_proximity_reading_t`.
#[cfg(feature = "proximity")]
#[no_mangle]
pub unsafe extern "C" fn lc_proximity_read(
    reader: *mut lc_proximity_reader_t,
    input: *const lc_input_t,
    reading: *mut lc_proximity_reading_t,
) -> lc_error_t {
    code(|| {
        args!(reader, input, reading)?;
        // SAFETY: checked; the caller's contract.
        let r = unsafe { load::<_, ProximityReader<'static>>(reader, TAG_PROXIMITY)? };
        // SAFETY: `input` checked.
        let input = unsafe { ptr::read(input) }.to_input()?;
        // SAFETY: `reading` checked.
        unsafe { ptr::write(reading, r.read(&input).into()) };
        Ok(())
    })
}

/// Builds a level reader from a validated image into `reader`. Errors:
/// as `lc_proximity_reader_init`.
///
/// Library features: `image` and `level` (docs/c-api.md).
///
/// # Safety
/// As `lc_proximity_reader_init`, with `lc_level_reader_t` storage.
#[cfg(all(feature = "image", feature = "level"))]
#[no_mangle]
pub unsafe extern "C" fn lc_level_reader_init(
    reader: *mut lc_level_reader_t,
    image: *const lc_image_t,
) -> lc_error_t {
    code(|| {
        // SAFETY: the caller's contract; the storage holds the slot.
        unsafe {
            build(reader, TAG_LEVEL, image, Some(ReaderKind::Level), |s, i| {
                LevelReader::init(s, i).map(|_| ())
            })
        }
    })
}

/// Validates a level image in place and builds the level reader from
/// it, in one call: [`lc_image_validate_level`] then
/// [`lc_level_reader_init`], without an `lc_image_t`. For a firmware
/// that needs nothing else from the image (no `lc_image_info`); it links
/// less code than the two calls. `bytes` and `len` as for
/// `lc_image_validate`: the bytes stay where they are, unchanged, for as
/// long as the reader is used. Errors: those of the two calls (`reader`
/// checked first, then `bytes`); an image of another kind is
/// `LC_ERR_IMAGE_FIELD_READER_KIND`. A failed call leaves `reader` not
/// initialised.
///
/// Library feature: `level` (docs/c-api.md).
///
/// # Safety
/// `reader` points to writable `lc_level_reader_t` storage; `bytes` to
/// `len` readable bytes that stay unchanged while the reader is used.
#[cfg(feature = "level")]
#[no_mangle]
pub unsafe extern "C" fn lc_level_reader_open(
    reader: *mut lc_level_reader_t,
    bytes: *const u8,
    len: usize,
) -> lc_error_t {
    // SAFETY: the caller's contract, as this function's.
    unsafe {
        open(reader, TAG_LEVEL, bytes, len, Image::new_level, |s, i| {
            LevelReader::init(s, i).map(|_| ())
        })
    }
}

/// One level reading (the level, and the volume when the image has a
/// volume table). Errors: as `lc_proximity_read`.
///
/// Library feature: `level` (docs/c-api.md).
///
/// # Safety
/// As `lc_proximity_read`, with `lc_level_reader_t` storage and an
/// `lc_level_reading_t`.
#[cfg(feature = "level")]
#[no_mangle]
pub unsafe extern "C" fn lc_level_read(
    reader: *mut lc_level_reader_t,
    input: *const lc_input_t,
    reading: *mut lc_level_reading_t,
) -> lc_error_t {
    code(|| {
        args!(reader, input, reading)?;
        // SAFETY: checked; the caller's contract.
        let r = unsafe { load::<_, LevelReader<'static>>(reader, TAG_LEVEL)? };
        // SAFETY: `input` checked.
        let input = unsafe { ptr::read(input) }.to_input()?;
        // SAFETY: `reading` checked.
        unsafe { ptr::write(reading, r.read(&input).into()) };
        Ok(())
    })
}

/// Builds a metal reader from a validated image into `reader`. Errors:
/// as `lc_proximity_reader_init`. Cost: the thresholds to Q23.40 (a few
/// multiplies, no division); the reader needs nothing from the image
/// afterwards.
///
/// Library features: `image` and `metal` (docs/c-api.md).
///
/// # Safety
/// As `lc_proximity_reader_init`, with `lc_metal_reader_t` storage.
#[cfg(all(feature = "image", feature = "metal"))]
#[no_mangle]
pub unsafe extern "C" fn lc_metal_reader_init(
    reader: *mut lc_metal_reader_t,
    image: *const lc_image_t,
) -> lc_error_t {
    code(|| {
        // SAFETY: the caller's contract; the storage holds the slot.
        unsafe {
            build(reader, TAG_METAL, image, Some(ReaderKind::Metal), |s, i| {
                MetalReader::init(s, i).map(|_| ())
            })
        }
    })
}

/// Validates a metal image in place and builds the metal reader from
/// it, in one call: [`lc_image_validate_metal`] then
/// [`lc_metal_reader_init`], without an `lc_image_t`. For a firmware
/// that needs nothing else from the image (no `lc_image_info`); it links
/// less code than the two calls. `bytes` and `len` as for
/// `lc_image_validate`: the bytes stay where they are, unchanged, for as
/// long as the reader is used. Errors: those of the two calls (`reader`
/// checked first, then `bytes`); an image of another kind is
/// `LC_ERR_IMAGE_FIELD_READER_KIND`. A failed call leaves `reader` not
/// initialised.
///
/// Library feature: `metal` (docs/c-api.md).
///
/// # Safety
/// `reader` points to writable `lc_metal_reader_t` storage; `bytes` to
/// `len` readable bytes that stay unchanged while the reader is used.
#[cfg(feature = "metal")]
#[no_mangle]
pub unsafe extern "C" fn lc_metal_reader_open(
    reader: *mut lc_metal_reader_t,
    bytes: *const u8,
    len: usize,
) -> lc_error_t {
    // SAFETY: the caller's contract, as this function's.
    unsafe {
        open(reader, TAG_METAL, bytes, len, Image::new_metal, |s, i| {
            MetalReader::init(s, i).map(|_| ())
        })
    }
}

/// One metal reading; updates the baseline and the detector. Errors: as
/// `lc_proximity_read`.
///
/// Library feature: `metal` (docs/c-api.md).
///
/// # Safety
/// As `lc_proximity_read`, with `lc_metal_reader_t` storage and an
/// `lc_metal_reading_t`.
#[cfg(feature = "metal")]
#[no_mangle]
pub unsafe extern "C" fn lc_metal_read(
    reader: *mut lc_metal_reader_t,
    input: *const lc_input_t,
    reading: *mut lc_metal_reading_t,
) -> lc_error_t {
    code(|| {
        args!(reader, input, reading)?;
        // SAFETY: checked; the caller's contract.
        let r = unsafe { load::<_, MetalReader>(reader, TAG_METAL)? };
        // SAFETY: `input` checked.
        let input = unsafe { ptr::read(input) }.to_input()?;
        // SAFETY: `reading` checked.
        unsafe { ptr::write(reading, r.read(&input).into()) };
        Ok(())
    })
}

/// Builds the reader the image's kind names into `reader`, for a
/// firmware that learns the kind from the image (it costs the largest
/// reader's RAM, and every reader's flash). Errors: `LC_ERR_NULL_POINTER`,
/// `LC_ERR_MISALIGNED_ARGUMENT`, `LC_ERR_NOT_INITIALISED`,
/// `LC_ERR_NOT_BUILT`.
///
/// Library feature: `image` (docs/c-api.md).
///
/// # Safety
/// As `lc_proximity_reader_init`, with `lc_reader_t` storage.
#[cfg(feature = "image")]
#[no_mangle]
pub unsafe extern "C" fn lc_reader_init(
    reader: *mut lc_reader_t,
    image: *const lc_image_t,
) -> lc_error_t {
    code(|| {
        // SAFETY: the caller's contract; the storage holds the slot.
        unsafe {
            build(reader, TAG_READER, image, None, |s, i| {
                s.write(Reader::new(i)?);
                Ok(())
            })
        }
    })
}

/// One reading of any reader. Errors: as `lc_proximity_read`.
///
/// Library feature: `image` (docs/c-api.md).
///
/// # Safety
/// As `lc_proximity_read`, with `lc_reader_t` storage and an
/// `lc_reading_t`.
#[cfg(feature = "image")]
#[no_mangle]
pub unsafe extern "C" fn lc_reader_read(
    reader: *mut lc_reader_t,
    input: *const lc_input_t,
    reading: *mut lc_reading_t,
) -> lc_error_t {
    code(|| {
        args!(reader, input, reading)?;
        // SAFETY: checked; the caller's contract.
        let r = unsafe { load::<_, Reader<'static>>(reader, TAG_READER)? };
        // SAFETY: `input` checked.
        let input = unsafe { ptr::read(input) }.to_input()?;
        // SAFETY: `reading` checked.
        unsafe { ptr::write(reading, r.read(&input).into()) };
        Ok(())
    })
}

/// The storage sizes and alignment this library was built with
/// (`lc_core_capi_layout`), for a run-time check against the header's
/// constants (the header's `LC_CHECK_LAYOUT()` passes them): `LC_OK`, or
/// `LC_ERR_LAYOUT_MISMATCH` when they differ (the header does not match
/// the library). `layout` may be NULL.
///
/// # Safety
/// `layout` is NULL or points to a writable `lc_layout_t`.
#[no_mangle]
pub unsafe extern "C" fn lc_check_layout(
    layout: *mut lc_layout_t,
    image_size: usize,
    proximity_reader_size: usize,
    level_reader_size: usize,
    metal_reader_size: usize,
    reader_size: usize,
) -> lc_error_t {
    let l = lc_core_capi_layout;
    if !layout.is_null() {
        if !layout.is_aligned() {
            return LC_ERR_MISALIGNED_ARGUMENT;
        }
        // SAFETY: not NULL and aligned: the caller's contract.
        unsafe { ptr::write(layout, l) };
    }
    let same = |a: u32, b: usize| usize::try_from(a).is_ok_and(|a| a == b);
    if same(l.image_size, image_size)
        && same(l.proximity_reader_size, proximity_reader_size)
        && same(l.level_reader_size, level_reader_size)
        && same(l.metal_reader_size, metal_reader_size)
        && same(l.reader_size, reader_size)
    {
        LC_OK
    } else {
        LC_ERR_LAYOUT_MISMATCH
    }
}

/// The library's panic handler on bare-metal targets: never reached (no
/// entry point has a reachable panic path: lc-core/capi/proof), it stops
/// in an endless loop.
#[cfg(all(
    target_os = "none",
    feature = "panic-handler",
    not(feature = "panic-never")
))]
#[panic_handler]
fn panic(_: &core::panic::PanicInfo) -> ! {
    loop {
        core::hint::spin_loop();
    }
}
