//! The status words of every command's CSV output: one vocabulary, in one
//! place. `convert` writes [`status_word`] for a reading, `counts`
//! [`fault_word`] and [`shift_word`] for what its fault window and shift
//! stage say; the same condition has the same word in both.
//! docs/formats.md ("Status words") lists them all; a test checks that the
//! list there and [`WORDS`] agree.
//!
//! A new status (a new lc-core `SensorFault` or `FaultError` variant) gets
//! its word here, in the match that names it, and in [`WORDS`].

use lc_core::counting::FaultError;
use lc_core::drift::CompanionError;
use lc_core::reader::{SensorFault, Status};
use lc_core::shift::ShiftError;

/// The word of a frozen counter, in `convert` and `counts` alike.
pub const FAULT_FROZEN: &str = "fault_counter_frozen";

/// Every word [`status_word`], [`fault_word`] and [`shift_word`] can
/// write, with its meaning (docs/formats.md).
pub const WORDS: &[(&str, &str)] = &[
    ("ok", "a value inside the calibrated range"),
    (
        "below_range",
        "below the calibrated range: the value is clamped to its end",
    ),
    (
        "above_range",
        "above the calibrated range: the value is clamped to its end",
    ),
    (
        "no_target",
        "proximity: nothing within range; metal: no target present",
    ),
    ("fault_no_oscillation", "no sensor cycle in the gate"),
    ("fault_no_reference", "no reference tick in the gate"),
    (
        "fault_too_few_cycles",
        "fewer sensor cycles than the fault window's minimum",
    ),
    (
        "fault_frequency_too_low",
        "sensor frequency below the fault window",
    ),
    (
        "fault_frequency_too_high",
        "sensor frequency above the fault window",
    ),
    (
        "fault_companion_no_oscillation",
        "companion channel: no cycle in the gate",
    ),
    (
        "fault_companion_no_reference",
        "companion channel: no reference tick in the gate",
    ),
    (
        "fault_companion_too_few_cycles",
        "companion channel: too few cycles",
    ),
    (
        "fault_companion_frequency_too_low",
        "companion channel: frequency below the fault window",
    ),
    (
        "fault_companion_frequency_too_high",
        "companion channel: frequency above the fault window",
    ),
    (
        "fault_companion_missing",
        "the image needs a companion (reference electrode) count pair and the row has none",
    ),
    (
        "fault_companion_gate_mismatch",
        "sensor and companion channels gated over different cycle counts",
    ),
    (
        "fault_companion_ratio",
        "the ratio of sensor and companion channels could not be formed",
    ),
    ("fault_shift_zero_count", "a count of the pair is zero"),
    (
        "fault_shift_out_of_range",
        "the shift does not fit the fixed-point format",
    ),
    ("fault_shift_bad_rest_point", "the rest point is unusable"),
    (
        "fault_reference_dry",
        "the level reference electrode shows no liquid",
    ),
    (
        "fault_reference_low",
        "the level reference electrode's shift is too small to divide by, or the ratio lies beyond the curve's reach: a nearly dry electrode",
    ),
    (
        FAULT_FROZEN,
        "the same count pair the frozen limit times in a row (default 255): a counter or capture that stopped updating",
    ),
    (
        "fault_temperature_out_of_domain",
        "a temperature outside the drift model's domain",
    ),
    (
        "fault_temperature_missing",
        "no temperature, the image having a drift model",
    ),
    (
        "fault_out_of_reach",
        "the shift lies beyond the curve's span by more than the span's width: not this sensor's counts (a channel swap, a wrong image)",
    ),
];

/// The word of a fault-window error on the sensor channel.
pub fn fault_word(e: FaultError) -> &'static str {
    match e {
        FaultError::NoOscillation => "fault_no_oscillation",
        FaultError::NoReference => "fault_no_reference",
        FaultError::TooFewCycles => "fault_too_few_cycles",
        FaultError::FrequencyTooLow => "fault_frequency_too_low",
        FaultError::FrequencyTooHigh => "fault_frequency_too_high",
    }
}

/// The word of a fault-window error on the companion channel.
pub fn companion_fault_word(e: FaultError) -> &'static str {
    match e {
        FaultError::NoOscillation => "fault_companion_no_oscillation",
        FaultError::NoReference => "fault_companion_no_reference",
        FaultError::TooFewCycles => "fault_companion_too_few_cycles",
        FaultError::FrequencyTooLow => "fault_companion_frequency_too_low",
        FaultError::FrequencyTooHigh => "fault_companion_frequency_too_high",
    }
}

/// The word of a shift that could not be formed.
pub fn shift_word(e: ShiftError) -> &'static str {
    match e {
        ShiftError::ZeroCount => "fault_shift_zero_count",
        ShiftError::OutOfRange => "fault_shift_out_of_range",
        ShiftError::BadRestPoint => "fault_shift_bad_rest_point",
    }
}

/// The word of a reading's status.
pub fn status_word(s: Status) -> &'static str {
    match s {
        Status::Ok => "ok",
        Status::BelowRange => "below_range",
        Status::AboveRange => "above_range",
        Status::NoTarget => "no_target",
        Status::SensorFault(f) => match f {
            SensorFault::Counts(e) => fault_word(e),
            SensorFault::Companion(Some(e)) => companion_fault_word(e),
            SensorFault::Companion(None) => "fault_companion_missing",
            SensorFault::Shift(e) => shift_word(e),
            SensorFault::Ratio(CompanionError::GateMismatch) => "fault_companion_gate_mismatch",
            SensorFault::Ratio(CompanionError::Shift(_)) => "fault_companion_ratio",
            SensorFault::Reference => "fault_reference_dry",
            SensorFault::ReferenceLow => "fault_reference_low",
            SensorFault::Frozen => FAULT_FROZEN,
            SensorFault::TemperatureOutOfDomain => "fault_temperature_out_of_domain",
            SensorFault::TemperatureMissing => "fault_temperature_missing",
            SensorFault::OutOfReach => "fault_out_of_reach",
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every word written is in [`WORDS`], and docs/formats.md lists
    /// every word of [`WORDS`].
    #[test]
    fn the_vocabulary_is_listed_and_documented() {
        let faults = [
            FaultError::NoOscillation,
            FaultError::NoReference,
            FaultError::TooFewCycles,
            FaultError::FrequencyTooLow,
            FaultError::FrequencyTooHigh,
        ];
        let shifts = [
            ShiftError::ZeroCount,
            ShiftError::OutOfRange,
            ShiftError::BadRestPoint,
        ];
        let mut written: Vec<&str> = vec![
            status_word(Status::Ok),
            status_word(Status::BelowRange),
            status_word(Status::AboveRange),
            status_word(Status::NoTarget),
            status_word(Status::SensorFault(SensorFault::Companion(None))),
            status_word(Status::SensorFault(SensorFault::Reference)),
            status_word(Status::SensorFault(SensorFault::ReferenceLow)),
            status_word(Status::SensorFault(SensorFault::Frozen)),
            status_word(Status::SensorFault(SensorFault::TemperatureOutOfDomain)),
            status_word(Status::SensorFault(SensorFault::TemperatureMissing)),
            status_word(Status::SensorFault(SensorFault::OutOfReach)),
            status_word(Status::SensorFault(SensorFault::Ratio(
                CompanionError::GateMismatch,
            ))),
            status_word(Status::SensorFault(SensorFault::Ratio(
                CompanionError::Shift(ShiftError::ZeroCount),
            ))),
        ];
        for e in faults {
            written.push(status_word(Status::SensorFault(SensorFault::Counts(e))));
            written.push(status_word(Status::SensorFault(SensorFault::Companion(
                Some(e),
            ))));
            assert_eq!(fault_word(e), written[written.len() - 2]);
        }
        for e in shifts {
            written.push(status_word(Status::SensorFault(SensorFault::Shift(e))));
            assert_eq!(shift_word(e), written[written.len() - 1]);
        }
        let listed: Vec<&str> = WORDS.iter().map(|(w, _)| *w).collect();
        for w in &written {
            assert!(listed.contains(w), "{w} is not in WORDS");
        }
        assert_eq!(
            written.len(),
            listed.len(),
            "WORDS lists a word never written"
        );
        let doc = std::fs::read_to_string(
            std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
                .parent()
                .unwrap()
                .join("docs/formats.md"),
        )
        .unwrap();
        for (w, _) in WORDS {
            assert!(
                doc.contains(&format!("`{w}`")),
                "docs/formats.md lacks `{w}`"
            );
        }
    }
}
