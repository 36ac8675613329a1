//! The inputs each example firmware reads, in place of its timer captures,
//! ADC and ring-down comparator: rows of the simulated rig logs the images
//! were calibrated from (`lc-host simulate rig` / `level-rig`, seed 1;
//! `run.sh images`), plus faults. The host test compiles this file too
//! and reads the same inputs through lc-core on the host.

use lc_core::counting::CountPair;
use lc_core::reader::Input;
use lc_core::temperature::CentiCelsius;

/// A proximity unit's count pair (16 384-cycle gate) at a temperature.
const fn prox(ticks: u32, centi_c: i32) -> Input {
    Input {
        temperature: Some(CentiCelsius(centi_c)),
        ..Input::counts(CountPair::new(16_384, ticks))
    }
}

/// Proximity (DEMO-01-0001): no target, the plate from 8 mm to 0.5 mm at
/// 25 °C, three gaps at 60 °C, one pair without a temperature, a stalled
/// oscillator and a pair far outside the fault window.
pub const PROXIMITY: [Input; 12] = [
    prox(139_506, 2_502),
    prox(134_663, 2_502),
    prox(128_656, 2_502),
    prox(118_726, 2_502),
    prox(109_246, 2_502),
    prox(92_904, 2_502),
    prox(79_492, 2_502),
    prox(131_393, 6_000),
    prox(114_580, 6_000),
    prox(79_505, 6_000),
    Input::counts(CountPair::new(16_384, 122_035)),
    prox(0, 2_502),
];

/// A level unit's probe and reference-electrode count pairs (4 096-cycle
/// gate) at a temperature.
const fn level(ticks: u32, reference_ticks: u32, centi_c: i32) -> Input {
    Input {
        companion: Some(CountPair::new(4_096, reference_ticks)),
        temperature: Some(CentiCelsius(centi_c)),
        ..Input::counts(CountPair::new(4_096, ticks))
    }
}

/// Level (TANK-01-0001, coolant tank of 400 mm): empty, 30 mm, 104 mm,
/// 202.67 mm, 301.33 mm and full at 25 °C; 54.67 mm and 252 mm at 50 °C,
/// where the coolant's permittivity has fallen; a reference electrode out
/// of the liquid; the reference pair missing.
pub const LEVEL: [Input; 10] = [
    level(185_943, 184_574, 2_497),
    level(194_063, 190_072, 2_497),
    level(212_771, 190_071, 2_497),
    level(235_413, 190_072, 2_497),
    level(256_061, 190_071, 2_497),
    level(275_164, 190_071, 2_497),
    level(198_944, 189_459, 4_994),
    level(240_151, 189_458, 4_994),
    level(212_771, 184_574, 2_497),
    Input {
        temperature: Some(CentiCelsius(2_497)),
        ..Input::counts(CountPair::new(4_096, 212_771))
    },
];

/// A metal detector's count pair (16 384-cycle gate) and ring count.
const fn metal(ticks: u32, ring_count: u16) -> Input {
    Input {
        ring_count: Some(ring_count),
        ..Input::counts(CountPair::new(16_384, ticks))
    }
}

/// Metal (DEMO-01-0001 as a detector): background, an aluminium plate at
/// 8 mm (L down, ring count 31 → 28) for six readings, background again,
/// then a stalled oscillator.
pub const METAL: [Input; 18] = [
    metal(139_506, 31),
    metal(139_507, 31),
    metal(139_506, 31),
    metal(139_505, 31),
    metal(139_506, 31),
    metal(134_663, 28),
    metal(134_663, 28),
    metal(134_664, 28),
    metal(134_663, 28),
    metal(134_662, 28),
    metal(134_663, 28),
    metal(139_506, 31),
    metal(139_506, 31),
    metal(139_507, 31),
    metal(139_506, 31),
    metal(139_506, 31),
    metal(139_506, 31),
    Input::counts(CountPair::new(0, 139_506)),
];
