//! The inputs of the full-reading benchmark (`cost`) and profile
//! (`profile`): eight readings per reader, from the readout's scenario
//! (`readout.rs`).

use lc_core::counting::CountPair;
use lc_core::reader::Input;
use lc_core::temperature::CentiCelsius;

/// One reading's inputs in both forms.
pub struct Case {
    /// For the fixed readers: counts, and the temperature already
    /// converted (`CentiCelsius`).
    pub input: Input,
    /// The NTC's ADC code.
    pub code: u32,
    /// The temperature in °C as the `f32` NTC gives it.
    pub t_c: f32,
}

/// Proximity inputs (the fitted unit): ticks over the 16 384-cycle gate
/// for gaps of 7, 5, 3, 2, 1.5, 1, 0.7 and 2.5 mm, and NTC codes for −40,
/// 0, 25, 60, 85, 150, 20 and 40 °C.
pub const PROXIMITY_CASES: [(u32, u32); 8] = [
    (137_671, 3_997),
    (136_601, 3_157),
    (132_879, 2_048),
    (128_761, 816),
    (125_746, 401),
    (122_656, 80),
    (117_705, 2_278),
    (131_707, 1_419),
];

/// Level inputs: probe ticks, reference electrode ticks and NTC code, from
/// the readout's level rows (30 to 390 mm; 200 mm hot and cold; 100 mm at
/// 60 °C).
pub const LEVEL_CASES: [(u32, u32, u32); 8] = [
    (551_624, 548_016, 2_278),
    (574_844, 548_016, 2_278),
    (606_090, 548_016, 2_278),
    (635_370, 548_016, 2_278),
    (660_258, 548_016, 2_278),
    (591_718, 538_791, 462),
    (615_456, 554_062, 3_741),
    (569_923, 541_887, 816),
];

/// Metal inputs: ticks and ring count. Two background readings, steel for
/// four (present from the third), background for two (absent again): one
/// detection cycle per pass.
pub const METAL_CASES: [(u32, u16); 8] = [
    (139_544, 24),
    (139_544, 24),
    (140_238, 19),
    (140_238, 19),
    (140_238, 19),
    (140_238, 19),
    (139_544, 24),
    (139_544, 24),
];

/// Gate of every unit, sensor cycles.
pub const GATE: u32 = 16_384;

/// The proximity cases; `temperature` and `t_c` convert the NTC code for
/// the fixed and the `f32` reader.
pub fn proximity(
    temperature: impl Fn(u32) -> Option<CentiCelsius>,
    t_c: impl Fn(u32) -> f32,
) -> [Case; 8] {
    PROXIMITY_CASES.map(|(ticks, code)| Case {
        input: Input {
            temperature: temperature(code),
            ..Input::counts(CountPair::new(GATE, ticks))
        },
        code,
        t_c: t_c(code),
    })
}

/// The level cases (the reference electrode's pair as the companion).
pub fn level(
    temperature: impl Fn(u32) -> Option<CentiCelsius>,
    t_c: impl Fn(u32) -> f32,
) -> [Case; 8] {
    LEVEL_CASES.map(|(probe, reference, code)| Case {
        input: Input {
            companion: Some(CountPair::new(GATE, reference)),
            temperature: temperature(code),
            ..Input::counts(CountPair::new(GATE, probe))
        },
        code,
        t_c: t_c(code),
    })
}

/// The metal cases (no temperature: the unit has no drift model).
pub fn metal() -> [Case; 8] {
    METAL_CASES.map(|(ticks, ring)| Case {
        input: Input {
            ring_count: Some(ring),
            ..Input::counts(CountPair::new(GATE, ticks))
        },
        code: 0,
        t_c: 25.0,
    })
}
