//! The `f32` versions of the readers, for the instruction-count comparison:
//! the same pipelines as lc-core's fixed-point readers, written the way an
//! `f32` firmware would write them, with the same calibration (converted to
//! `f32` once, at start-up).
//!
//! Per reading, as in the fixed readers: p = t/c, s = (p·(1/p_rest))² − 1,
//! the drift model (1 + s)(1 + g(ΔT)) − 1 with g = b1·ΔT + b2·ΔT², the
//! curve by binary search and interpolation between `f32` nodes (slopes, and
//! for the cubic the Hermite coefficients, precomputed), the value rounded
//! to an integer. The NTC: R/R_s = c/(N − c), 1/T = 1/T25 + ln(R/R25)/B
//! with `libm::logf`, T = 1/(1/T).
//!
//! What they leave out, and the fixed readers do: the fault window (zero,
//! implausible or too few counts), and every range and overflow check. Only
//! the curve's clamping at its ends is kept (a binary search needs it).

use lc_core::counting::CountPair;
use lc_core::curve::{CurveRef, Interpolation};
use lc_core::image::{Image, MetalParams};

/// The curve's status, as a small code (0 in range, 1 below, 2 above).
pub type Status = u8;

/// A monotone table of `N` nodes: linear segments, or cubic Hermite with
/// precomputed coefficients, in `f32`.
#[derive(Clone, Copy, Debug)]
pub struct FloatCurve<const N: usize> {
    x: [f32; N],
    y: [f32; N],
    /// Per segment: slope (linear) or 1/w (cubic).
    k: [f32; N],
    /// Cubic: y − y0 = t·(c1 + t·(c2 + t·c3)), t = (x − x0)/w.
    c: [[f32; 3]; N],
    cubic: bool,
}

impl<const N: usize> FloatCurve<N> {
    /// From an image's curve of exactly `N` nodes; `x_scale` turns the
    /// node's shift into the curve's x unit (1 for a shift; 256 for a
    /// volume table, whose axis is level · 2^32 in Q23.40).
    pub fn new(table: &CurveRef<'_>, x_scale: f64) -> Option<Self> {
        if table.len() != N || N < 2 {
            return None;
        }
        let mut c = Self {
            x: [0.0; N],
            y: [0.0; N],
            k: [0.0; N],
            c: [[0.0; 3]; N],
            cubic: table.interpolation() == Interpolation::MonotoneCubic,
        };
        let xs = |i: usize| table.node(i).map_or(0.0, |n| n.shift.to_f64() * x_scale);
        let ys = |i: usize| table.node(i).map_or(0.0, |n| f64::from(n.value));
        // The segment's tangent terms w·dy/dx, as the image stores them
        // (Q8 output units): independent of the x unit.
        let terms = |i: usize| {
            table.tangent_terms_q8(i).map_or((0.0, 0.0), |(a, b)| {
                (f64::from(a) / 256.0, f64::from(b) / 256.0)
            })
        };
        for i in 0..N {
            // f64 → f32: rounds to nearest, as an f32 calibration would.
            c.x[i] = xs(i) as f32;
            c.y[i] = ys(i) as f32;
            if i + 1 < N {
                let w = xs(i + 1) - xs(i);
                let dy = ys(i + 1) - ys(i);
                if c.cubic {
                    let (d0, d1) = terms(i);
                    c.k[i] = (1.0 / w) as f32;
                    c.c[i] = [
                        d0 as f32,
                        (3.0 * dy - 2.0 * d0 - d1) as f32,
                        (d0 + d1 - 2.0 * dy) as f32,
                    ];
                } else {
                    c.k[i] = (dy / w) as f32;
                }
            }
        }
        Some(c)
    }

    /// The value at `x`, clamped to the end nodes outside the table.
    #[inline]
    pub fn eval(&self, x: f32) -> (f32, Status) {
        if x < self.x[0] {
            return (self.y[0], 1);
        }
        if x >= self.x[N - 1] {
            return (self.y[N - 1], if x > self.x[N - 1] { 2 } else { 0 });
        }
        let (mut lo, mut hi) = (0, N - 1);
        while hi - lo > 1 {
            let mid = (lo + hi) / 2;
            if self.x[mid] <= x {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let d = x - self.x[lo];
        let y = if self.cubic {
            let t = d * self.k[lo];
            let [c1, c2, c3] = self.c[lo];
            self.y[lo] + t * (c1 + t * (c2 + t * c3))
        } else {
            self.y[lo] + d * self.k[lo]
        };
        (y, 0)
    }
}

/// Rounds to the nearest integer (ties away from zero).
#[inline]
fn round(v: f32) -> i32 {
    // roundf gives an integral value; `as` saturates outside i32 (the
    // values here are far inside).
    libm::roundf(v) as i32
}

/// The drift model: (1 + s)(1 + g(ΔT)) − 1.
#[derive(Clone, Copy, Debug)]
pub struct FloatDrift {
    reference_c: f32,
    b1_per_k: f32,
    b2_per_k2: f32,
}

impl FloatDrift {
    /// From the image's model.
    pub fn new(image: &Image<'_>) -> Self {
        let drift = image.drift();
        let (b1, b2) = drift.coefficients_f64();
        Self {
            reference_c: drift.reference().to_f64() as f32,
            b1_per_k: b1 as f32,
            b2_per_k2: b2 as f32,
        }
    }

    #[inline]
    fn compensate(&self, s: f32, t_c: f32) -> f32 {
        let dt = t_c - self.reference_c;
        let g = dt * (self.b1_per_k + dt * self.b2_per_k2);
        (1.0 + s) * (1.0 + g) - 1.0
    }
}

/// s = (t/c · 1/p_rest)² − 1.
#[inline]
fn shift(pair: CountPair, inv_rest: f32) -> f32 {
    // u32 → f32 rounds to nearest (exact below 2^24).
    let r = pair.ticks as f32 / pair.cycles as f32 * inv_rest;
    r * r - 1.0
}

/// The NTC on its divider: code → °C.
#[derive(Clone, Copy, Debug)]
pub struct FloatNtc {
    full_scale: f32,
    /// ln(R_s/R25).
    ln_offset: f32,
    inv_beta: f32,
    inv_t25: f32,
}

impl FloatNtc {
    /// For an NTC of R25 and B behind a series resistor on an ADC of `bits`.
    pub fn new(r25_ohm: u32, beta_k: u32, series_ohm: u32, bits: u32) -> Self {
        Self {
            full_scale: (1u32 << bits.min(24)) as f32,
            ln_offset: libm::log(f64::from(series_ohm) / f64::from(r25_ohm)) as f32,
            inv_beta: (1.0 / f64::from(beta_k)) as f32,
            inv_t25: (1.0 / 298.15) as f32,
        }
    }

    /// Degrees Celsius for one ADC code.
    #[inline]
    pub fn convert(&self, code: u32) -> f32 {
        let c = code as f32;
        let ratio = c / (self.full_scale - c);
        let inv_t = self.inv_t25 + (libm::logf(ratio) + self.ln_offset) * self.inv_beta;
        1.0 / inv_t - 273.15
    }
}

/// Proximity: shift → drift model → curve → gap.
#[derive(Clone, Copy, Debug)]
pub struct FloatProximity<const N: usize = 5> {
    inv_rest: f32,
    drift: FloatDrift,
    curve: FloatCurve<N>,
}

impl<const N: usize> FloatProximity<N> {
    /// From a proximity image with an `N`-node curve.
    pub fn new(image: &Image<'_>) -> Option<Self> {
        Some(Self {
            inv_rest: (1.0 / image.rest().to_f64()) as f32,
            drift: FloatDrift::new(image),
            curve: FloatCurve::new(&image.curve()?, 1.0)?,
        })
    }

    /// Gap and status at temperature `t_c`.
    #[inline]
    pub fn read(&self, pair: CountPair, t_c: f32) -> (i32, Status) {
        let s = self.drift.compensate(shift(pair, self.inv_rest), t_c);
        let (y, status) = self.curve.eval(s);
        (round(y), status)
    }
}

/// Level: probe and reference shifts, each drift-compensated, their ratio
/// → level curve → volume table.
#[derive(Clone, Copy, Debug)]
pub struct FloatLevel {
    inv_rest: f32,
    inv_reference_rest: f32,
    drift: FloatDrift,
    curve: FloatCurve<5>,
    volume: FloatCurve<17>,
}

impl FloatLevel {
    /// From a level calibration with a reference electrode, a five-node
    /// curve and a 17-node volume table.
    pub fn new(image: &Image<'_>) -> Option<Self> {
        Some(Self {
            inv_rest: (1.0 / image.rest().to_f64()) as f32,
            inv_reference_rest: (1.0 / image.companion_rest()?.to_f64()) as f32,
            drift: FloatDrift::new(image),
            curve: FloatCurve::new(&image.curve()?, 1.0)?,
            volume: FloatCurve::new(&image.volume()?.0, 256.0)?,
        })
    }

    /// Level, volume and the level's status at temperature `t_c`.
    #[inline]
    pub fn read(&self, probe: CountPair, reference: CountPair, t_c: f32) -> (i32, i32, Status) {
        let s = self.drift.compensate(shift(probe, self.inv_rest), t_c);
        let r = self
            .drift
            .compensate(shift(reference, self.inv_reference_rest), t_c);
        let (level, status) = self.curve.eval(s / r);
        let (volume, _) = self.volume.eval(level);
        (round(level), round(volume), status)
    }
}

/// Metal: baseline EMA, |shift − baseline| with hysteresis and debounce,
/// confirmed by the ring-count drop, classified by the sign.
#[derive(Clone, Copy, Debug)]
pub struct FloatMetal {
    inv_rest: f32,
    enter: f32,
    leave: f32,
    enter_samples: u16,
    leave_samples: u16,
    alpha: f32,
    ring_drop: f32,
    relearn: u32,
    learned: bool,
    baseline: f32,
    ring_baseline: f32,
    present: bool,
    run: u16,
    class: i32,
    present_for: u32,
}

impl FloatMetal {
    /// From a metal calibration.
    pub fn new(image: &Image<'_>) -> Option<Self> {
        let m: MetalParams = image.metal()?;
        Some(Self {
            inv_rest: (1.0 / image.rest().to_f64()) as f32,
            enter: (f64::from(m.enter_ppb) * 1e-9) as f32,
            leave: (f64::from(m.leave_ppb) * 1e-9) as f32,
            enter_samples: m.enter_samples,
            leave_samples: m.leave_samples,
            alpha: 1.0 / (1u32 << m.baseline_k.min(16)) as f32,
            ring_drop: f32::from(m.ring_drop),
            relearn: m.relearn_readings,
            learned: false,
            baseline: 0.0,
            ring_baseline: 0.0,
            present: false,
            run: 0,
            class: 0,
            present_for: 0,
        })
    }

    fn learn(&mut self, s: f32, ring: f32) {
        self.baseline += (s - self.baseline) * self.alpha;
        self.ring_baseline += (ring - self.ring_baseline) * self.alpha;
    }

    /// Class (0 none, 1 ferrous, 2 non-ferrous) and ring drop.
    #[inline]
    pub fn read(&mut self, pair: CountPair, ring_count: u16) -> (i32, f32) {
        let s = shift(pair, self.inv_rest);
        let ring = f32::from(ring_count);
        if !self.learned {
            self.baseline = s;
            self.ring_baseline = ring;
            self.learned = true;
        }
        let delta = s - self.baseline;
        let drop = self.ring_baseline - ring;
        let signal = if drop >= self.ring_drop {
            libm::fabsf(delta)
        } else {
            0.0
        };
        let (beyond, needed) = if self.present {
            (signal <= self.leave, self.leave_samples)
        } else {
            (signal >= self.enter, self.enter_samples)
        };
        let mut entered = false;
        if beyond {
            self.run += 1;
            if self.run >= needed {
                self.run = 0;
                self.present = !self.present;
                entered = self.present;
            }
        } else {
            self.run = 0;
        }
        if entered {
            self.class = if delta > 0.0 { 1 } else { 2 };
        }
        if self.present {
            self.present_for += 1;
            if self.relearn > 0 && self.present_for >= self.relearn {
                self.learned = false;
                self.present = false;
                self.run = 0;
                self.present_for = 0;
                self.class = 0;
            }
        } else {
            self.present_for = 0;
            self.class = 0;
            self.learn(s, ring);
        }
        (self.class, drop)
    }
}
