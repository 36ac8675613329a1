//! The inputs each example firmware reads, in place of its timer captures,
//! ADC and ring-down comparator: rows of the simulated rig logs the images
//! were calibrated from (`lc-host simulate rig` / `level-rig`, seed 1;
//! `run.sh images`), plus faults. The host tests compile this file too
//! and read the same inputs through lc-core on the host.
//!
//! Each row holds what a unit's registers give after one gate, as a real
//! firmware gets it: the sensor cycles counted ([`ProximityGate::cycles`]:
//! the gate length, or fewer when the oscillator stalled), the reference
//! ticks captured, the NTC's temperature, the ring count. The firmware
//! turns one row into an [`Input`] per reading ([`ProximityGate::input`],
//! [`LevelGate::input`], [`MetalGate::input`]): 8 to 12 bytes a row in
//! flash instead of the 32 of an `Input`. [`PROXIMITY`], [`LEVEL`] and
//! [`METAL`] are the same rows as `Input`s, for the host tests.

use lc_core::counting::CountPair;
use lc_core::reader::Input;
use lc_core::temperature::CentiCelsius;

/// [`ProximityGate::centi_c`] or [`LevelGate::centi_c`]: no temperature
/// this gate (the NTC's conversion did not complete).
pub const NO_TEMPERATURE: i16 = i16::MIN;

/// [`LevelGate::reference_ticks`]: no capture of the reference electrode
/// this gate (its capture register still clear).
pub const NO_CAPTURE: u32 = 0;

/// [`MetalGate::ring_count`]: no ring-down counted this gate.
pub const NO_RING_COUNT: u16 = u16::MAX;

/// Sensor cycles per gate of the proximity unit and the metal detector.
const GATE: u16 = 16_384;

/// Sensor cycles per gate of the level unit (both electrodes).
const LEVEL_GATE: u16 = 4_096;

/// The temperature of a row (`None` for [`NO_TEMPERATURE`]).
const fn temperature(centi_c: i16) -> Option<CentiCelsius> {
    if centi_c == NO_TEMPERATURE {
        None
    } else {
        Some(CentiCelsius(centi_c as i32))
    }
}

/// One gate of a proximity unit: sensor cycles, reference ticks and the
/// temperature (0.01 °C).
#[derive(Clone, Copy)]
pub struct ProximityGate {
    /// Reference clock ticks captured over the gate.
    pub ticks: u32,
    /// Sensor cycles counted over the gate.
    pub cycles: u16,
    /// Temperature in 0.01 °C, or [`NO_TEMPERATURE`].
    pub centi_c: i16,
}

impl ProximityGate {
    /// The reader's input for this gate.
    pub const fn input(&self) -> Input {
        Input {
            temperature: temperature(self.centi_c),
            ..Input::counts(CountPair::new(self.cycles as u32, self.ticks))
        }
    }
}

/// A proximity gate of full length at `centi_c`.
const fn prox(ticks: u32, centi_c: i16) -> ProximityGate {
    ProximityGate {
        ticks,
        cycles: GATE,
        centi_c,
    }
}

/// Proximity (DEMO-01-0001): no target, the plate from 8 mm to 0.5 mm at
/// 25 °C, three gaps at 60 °C, a gate cut short at half its cycles (the
/// timer's time-out: the shift's general path, with its division), one
/// pair without a temperature, a stalled oscillator and a pair far outside
/// the fault window.
pub const PROXIMITY_GATES: [ProximityGate; 13] = [
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
    ProximityGate {
        ticks: 59_330,
        cycles: GATE / 2,
        centi_c: 2_502,
    },
    prox(122_035, NO_TEMPERATURE),
    prox(0, 2_502),
];

/// One gate of a level unit: the probe's and the reference electrode's
/// reference ticks over the same number of sensor cycles, and the
/// temperature (0.01 °C).
#[derive(Clone, Copy)]
pub struct LevelGate {
    /// The probe's reference clock ticks.
    pub ticks: u32,
    /// The reference electrode's reference clock ticks, or [`NO_CAPTURE`].
    pub reference_ticks: u32,
    /// Sensor cycles counted over the gate (each electrode).
    pub cycles: u16,
    /// Temperature in 0.01 °C, or [`NO_TEMPERATURE`].
    pub centi_c: i16,
}

impl LevelGate {
    /// The reader's input for this gate.
    pub const fn input(&self) -> Input {
        let companion = if self.reference_ticks == NO_CAPTURE {
            None
        } else {
            Some(CountPair::new(self.cycles as u32, self.reference_ticks))
        };
        Input {
            companion,
            temperature: temperature(self.centi_c),
            ..Input::counts(CountPair::new(self.cycles as u32, self.ticks))
        }
    }
}

/// A level gate of full length at `centi_c`.
const fn level(ticks: u32, reference_ticks: u32, centi_c: i16) -> LevelGate {
    LevelGate {
        ticks,
        reference_ticks,
        cycles: LEVEL_GATE,
        centi_c,
    }
}

/// Level (TANK-01-0001, coolant tank of 400 mm): empty, 30 mm, 104 mm,
/// 202.67 mm, 301.33 mm and full at 25 °C; 54.67 mm and 252 mm at 50 °C,
/// where the coolant's permittivity has fallen; 104 mm over a gate cut
/// short at half its cycles (the shifts' general path, with its division);
/// a reference electrode out of the liquid; the reference pair missing.
pub const LEVEL_GATES: [LevelGate; 11] = [
    level(185_943, 184_574, 2_497),
    level(194_063, 190_072, 2_497),
    level(212_771, 190_071, 2_497),
    level(235_413, 190_072, 2_497),
    level(256_061, 190_071, 2_497),
    level(275_164, 190_071, 2_497),
    level(198_944, 189_459, 4_994),
    level(240_151, 189_458, 4_994),
    LevelGate {
        ticks: 106_386,
        reference_ticks: 95_036,
        cycles: LEVEL_GATE / 2,
        centi_c: 2_497,
    },
    level(212_771, 184_574, 2_497),
    level(212_771, NO_CAPTURE, 2_497),
];

/// One gate of a metal detector: sensor cycles, reference ticks, the
/// temperature (0.01 °C) for the drift model and the ring count of the
/// ring-down after the gate.
#[derive(Clone, Copy)]
pub struct MetalGate {
    /// Reference clock ticks captured over the gate.
    pub ticks: u32,
    /// Sensor cycles counted over the gate.
    pub cycles: u16,
    /// Temperature in 0.01 °C, or [`NO_TEMPERATURE`].
    pub centi_c: i16,
    /// Swings above the comparator's threshold, or [`NO_RING_COUNT`].
    pub ring_count: u16,
}

impl MetalGate {
    /// The reader's input for this gate. Kept out of line: the metal
    /// firmware's read loop then keeps fewer values in its frame (see
    /// `metal.rs`).
    #[inline(never)]
    pub const fn input(&self) -> Input {
        let ring_count = if self.ring_count == NO_RING_COUNT {
            None
        } else {
            Some(self.ring_count)
        };
        Input {
            ring_count,
            temperature: temperature(self.centi_c),
            ..Input::counts(CountPair::new(self.cycles as u32, self.ticks))
        }
    }
}

/// A metal gate of full length at 25.02 °C (the rig's temperature) with
/// its ring count.
const fn metal(ticks: u32, ring_count: u16) -> MetalGate {
    MetalGate {
        ticks,
        cycles: GATE,
        centi_c: 2_502,
        ring_count,
    }
}

/// Metal (DEMO-01-0001 as a detector): background, an aluminium plate at
/// 8 mm (L down, ring count 31 → 28) for six readings, background again,
/// the background over a gate cut short at half its cycles (the shift's
/// general path, with its division), then a stalled oscillator (no
/// cycles, no ring-down).
pub const METAL_GATES: [MetalGate; 19] = [
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
    MetalGate {
        ticks: 69_753,
        cycles: GATE / 2,
        centi_c: 2_502,
        ring_count: 31,
    },
    MetalGate {
        ticks: 139_506,
        cycles: 0,
        centi_c: 2_502,
        ring_count: NO_RING_COUNT,
    },
];

/// `$gates` as an array of `Input`s (evaluated at compile time).
macro_rules! inputs {
    ($gates:expr, $n:expr) => {{
        let gates = $gates;
        let mut out = [Input::counts(CountPair::new(0, 0)); $n];
        let mut i = 0;
        while i < $n {
            out[i] = gates[i].input();
            i += 1;
        }
        out
    }};
}

/// [`PROXIMITY_GATES`] as the reader's inputs.
pub const PROXIMITY: [Input; 13] = inputs!(PROXIMITY_GATES, 13);

/// [`LEVEL_GATES`] as the reader's inputs.
pub const LEVEL: [Input; 11] = inputs!(LEVEL_GATES, 11);

/// [`METAL_GATES`] as the reader's inputs.
pub const METAL: [Input; 19] = inputs!(METAL_GATES, 19);
