//! Measures each fixed-point stage of lc-core against its exact or f64
//! reference over the declared domain and prints the worst error relative to
//! the counter's quantisation step.
//!
//! `cargo run --release --example error_sweep [-- POINTS]` (default 2 000 000
//! random points; seeded, so the output is reproducible).
//!
//! Domain (lc_core::shift docs): reference 1–200 MHz, sensor 10 kHz–30 MHz,
//! larger count up to 2^27, shift −0.9…7. The step is one count of the larger
//! count, the stricter of the two gatings.

use lc_core::counting::{CountPair, Gating};
use lc_core::ratio::{frequency, period_ratio, PeriodRatio};
use lc_core::shift::{shift_f64, RestPoint, ShiftConverter};

/// SplitMix64: a small, well-known generator (Steele, Lea & Flood 2014).
struct SplitMix(u64);

impl SplitMix {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [lo, hi).
    fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * ((self.next() >> 11) as f64 / (1u64 << 53) as f64)
    }
    /// Log-uniform in [lo, hi).
    fn log_uniform(&mut self, lo: f64, hi: f64) -> f64 {
        self.uniform(lo.ln(), hi.ln()).exp()
    }
}

#[derive(Default)]
struct Worst {
    ratio: f64,
    err: f64,
    at: String,
}

impl Worst {
    fn add(&mut self, err: f64, step: f64, at: impl FnOnce() -> String) {
        let r = err / step;
        if r > self.ratio {
            *self = Worst {
                ratio: r,
                err,
                at: at(),
            };
        }
    }
}

fn main() {
    let points: u64 = std::env::args()
        .nth(1)
        .and_then(|a| a.parse().ok())
        .unwrap_or(2_000_000);
    let max_count = f64::from(1u32 << 27);
    let mut rng = SplitMix(0x1C5E_4502);
    let (mut wf, mut wp, mut wg, mut wd) = (
        Worst::default(),
        Worst::default(),
        Worst::default(),
        Worst::default(),
    );
    let mut used = 0u64;
    while used < points {
        let f_ref = rng.uniform(1e6, 200e6).round();
        let f_rest = rng.log_uniform(1e4, 30e6);
        let s = rng.uniform(-0.9, 7.0);
        let n = rng.log_uniform(1.0, max_count).round();
        let Some(rest_ratio) = PeriodRatio::from_f64(f_ref / f_rest) else {
            continue;
        };
        let Ok(rest) = RestPoint::from_ratio(rest_ratio) else {
            continue;
        };
        let p = rest.to_f64() * (1.0 + s).sqrt();
        let (cycles, ticks) = if rng.next() & 1 == 0 {
            ((n / p).round(), n)
        } else {
            (n, (n * p).round())
        };
        if !(1.0..=max_count).contains(&cycles) || !(1.0..=max_count).contains(&ticks) {
            continue;
        }
        let pair = CountPair::new(cycles as u32, ticks as u32);
        let exact_s = shift_f64(pair, rest.to_f64());
        if !(-0.9..=7.0).contains(&exact_s) {
            continue;
        }
        used += 1;
        let n_max = f64::from(pair.max_count());
        let f_ref_u = f_ref as u32;
        let at = || {
            format!(
                "f_ref {f_ref_u} Hz, cycles {}, ticks {}, p_rest {:.6}",
                pair.cycles,
                pair.ticks,
                rest.to_f64()
            )
        };

        // Frequency and period ratio against exact rationals (f64 would be
        // the less accurate side here).
        let f = frequency(pair, f_ref_u).expect("in domain");
        let exact_num = (u128::from(f_ref_u) * u128::from(pair.cycles)) << 32;
        let err_lsb = (u128::from(f.raw_q32()) * u128::from(pair.ticks)).abs_diff(exact_num) as f64
            / f64::from(pair.ticks);
        let f_hz = f.to_hz_f64();
        wf.add(err_lsb * 2f64.powi(-32), f_hz / n_max, at);
        let pr = period_ratio(pair).expect("in domain");
        let exact_num = u128::from(pair.ticks) << 44;
        let err_lsb = (u128::from(pr.raw_q44()) * u128::from(pair.cycles)).abs_diff(exact_num)
            as f64
            / f64::from(pair.cycles);
        wp.add(err_lsb * 2f64.powi(-44), pr.to_f64() / n_max, at);

        // Shift, on the division-free path (configured gate) and the division path.
        let step = 2.0 * (1.0 + exact_s) / n_max;
        let gated =
            ShiftConverter::new(rest, Gating::Reciprocal, Some(pair.cycles)).expect("converter");
        let general = ShiftConverter::new(rest, Gating::Reciprocal, None).expect("converter");
        let sg = gated.shift(pair).expect("in domain").to_f64();
        let sd = general.shift(pair).expect("in domain").to_f64();
        wg.add((sg - exact_s).abs(), step, at);
        wd.add((sd - exact_s).abs(), step, at);
    }
    println!("{points} random points over the declared domain (seeded)");
    println!(
        "{:<28} {:>14} {:>12}  worst case",
        "stage", "max |error|", "/ step"
    );
    for (name, w, unit) in [
        ("frequency (Q32.32 Hz)", &wf, "Hz"),
        ("period ratio (Q20.44)", &wp, ""),
        ("shift, configured gate", &wg, ""),
        ("shift, one division", &wd, ""),
    ] {
        println!(
            "{name:<28} {:>11.3e} {unit:<2} {:>12.2e}  {}",
            w.err, w.ratio, w.at
        );
    }
}
