//! Host benchmarks of each lc-core stage, fixed point against its f64 twin.
//!
//! `cargo bench --bench stages`. Figures and how to read them:
//! docs/performance.md. Instruction counts on Cortex-M come from the
//! emulator (examples/firmware), not from here.

use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use lc_core::counting::{CountPair, FaultWindow, Gating};
use lc_core::ratio::{frequency, frequency_hz_f64, period_ratio, period_ratio_f64};
use lc_core::shift::{shift_f64, RestPoint, ShiftConverter};
use std::hint::black_box;

/// A sweep of count pairs around the demo unit's rest point (4096-cycle
/// reciprocal gate, 16 MHz reference, about 3.4 MHz sensor).
fn pairs() -> Vec<CountPair> {
    (0..1024u32)
        .map(|i| CountPair::new(4096, 19_000 + i * 13))
        .collect()
}

fn stages(c: &mut Criterion) {
    let pairs = pairs();
    let rest = RestPoint::from_counts(CountPair::new(4096, 19_275)).expect("rest point in range");
    let gated = ShiftConverter::new(rest, Gating::Reciprocal, Some(4096)).expect("converter");
    let general = ShiftConverter::new(rest, Gating::Reciprocal, None).expect("converter");
    let window = FaultWindow::new(16_000_000, 1_000_000, 8_000_000, 64).expect("window");
    let rest_f64 = rest.to_f64();

    let mut g = c.benchmark_group("per_reading");
    g.throughput(Throughput::Elements(pairs.len() as u64));
    g.bench_function("fault_window", |b| {
        b.iter(|| {
            pairs
                .iter()
                .filter(|p| window.check(black_box(**p)).is_ok())
                .count()
        })
    });
    g.bench_function("frequency_fixed", |b| {
        b.iter(|| {
            pairs
                .iter()
                .map(|p| frequency(black_box(*p), 16_000_000).map_or(0, |f| f.raw_q32()))
                .fold(0u64, u64::wrapping_add)
        })
    });
    g.bench_function("frequency_f64", |b| {
        b.iter(|| {
            pairs
                .iter()
                .map(|p| frequency_hz_f64(black_box(*p), 16e6))
                .sum::<f64>()
        })
    });
    g.bench_function("period_ratio_fixed", |b| {
        b.iter(|| {
            pairs
                .iter()
                .map(|p| period_ratio(black_box(*p)).map_or(0, |r| r.raw_q44()))
                .fold(0u64, u64::wrapping_add)
        })
    });
    g.bench_function("period_ratio_f64", |b| {
        b.iter(|| {
            pairs
                .iter()
                .map(|p| period_ratio_f64(black_box(*p)))
                .sum::<f64>()
        })
    });
    g.bench_function("shift_fixed_gated", |b| {
        b.iter(|| {
            pairs
                .iter()
                .map(|p| gated.shift(black_box(*p)).map_or(0, |s| s.raw_q40()))
                .fold(0i64, i64::wrapping_add)
        })
    });
    g.bench_function("shift_fixed_division", |b| {
        b.iter(|| {
            pairs
                .iter()
                .map(|p| general.shift(black_box(*p)).map_or(0, |s| s.raw_q40()))
                .fold(0i64, i64::wrapping_add)
        })
    });
    g.bench_function("shift_f64", |b| {
        b.iter(|| {
            pairs
                .iter()
                .map(|p| shift_f64(black_box(*p), rest_f64))
                .sum::<f64>()
        })
    });
    g.finish();
}

criterion_group!(benches, stages);
criterion_main!(benches);
