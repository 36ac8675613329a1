//! Writes the bundled demo field log `examples/data/demo-counts.csv`.
//!
//! Demo scenario (invented; docs/references.md, Demo scenario): a proximity
//! sensor with a 20 mm two-layer PCB spiral (about 7.25 µH) and a 100 pF
//! class-1 capacitor plus 10 pF of parasitics, counted with a 48 MHz reference
//! over reciprocal gates of 16 384 sensor cycles. An aluminium ram plate
//! travels from 8 mm to 0.5 mm and back. The eddy-current coupling is the
//! simple demo model L(d) = L∞ · (1 − 0.45 · e^(−d / 2.5 mm)); the project's
//! full physics simulator replaces it. One dropout (oscillator stalled) and one
//! reading with a stuck reference counter are included so the fault window
//! shows.
//!
//! `cargo run --example demo_counts > examples/data/demo-counts.csv`; the
//! rest point for `lc-host counts` is printed on standard error.

use lc_core::tank::resonant_frequency_with_parasitic_hz;

const L_INF_H: f64 = 7.25e-6;
const C_TANK_F: f64 = 100e-12;
const C_PARASITIC_F: f64 = 10e-12;
const F_REF_HZ: f64 = 48e6;
const GATE_CYCLES: u32 = 16_384;

fn inductance_h(gap_mm: f64) -> f64 {
    L_INF_H * (1.0 - 0.45 * (-gap_mm / 2.5).exp())
}

fn ticks(f_hz: f64, jitter: f64) -> u32 {
    (f64::from(GATE_CYCLES) * F_REF_HZ / f_hz + jitter).round() as u32
}

fn main() {
    let f_rest = resonant_frequency_with_parasitic_hz(L_INF_H, C_TANK_F, C_PARASITIC_F);
    eprintln!(
        "rest point: --rest {GATE_CYCLES}:{} (f0 = {f_rest:.1} Hz)",
        ticks(f_rest, 0.0)
    );
    println!("# Demo field log, simulated: 20 mm PCB spiral, 100 pF, 48 MHz reference, aluminium plate 8 -> 0.5 -> 8 mm");
    println!("time_s,channel,cycles,ticks,temp_c");
    // A fixed pseudo-random jitter of up to ±0.5 tick (deterministic).
    let mut state = 0x2545_F491u32;
    for i in 0..=200u32 {
        state ^= state << 13;
        state ^= state >> 17;
        state ^= state << 5;
        let jitter = f64::from(state) / f64::from(u32::MAX) - 0.5;
        let t = f64::from(i) * 0.01;
        // Triangle profile 8 mm -> 0.5 mm -> 8 mm over 2 s.
        let phase = if t <= 1.0 { t } else { 2.0 - t };
        let gap_mm = 8.0 - 7.5 * phase;
        let temp_c = 25.0 + 0.2 * t;
        let f = resonant_frequency_with_parasitic_hz(inductance_h(gap_mm), C_TANK_F, C_PARASITIC_F);
        let (cycles, ticks) = match i {
            57 => (0, ticks(f, jitter)), // oscillator stalled for one gate
            143 => (GATE_CYCLES, 0),     // reference counter stuck
            _ => (GATE_CYCLES, ticks(f, jitter)),
        };
        println!("{t:.2},0,{cycles},{ticks},{temp_c:.2}");
    }
}
