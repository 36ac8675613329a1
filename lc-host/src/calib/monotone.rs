//! A smooth monotone fit of the rig's measured shift against its reference
//! value, and its inverse sampled into curve nodes.
//!
//! Method (justified in docs/calibration.md): the shift is modelled as
//!
//! s(x) = c + σ · Σ w_j · I_j(x),  w_j ≥ 0,
//!
//! where the I_j are integrated hat functions (quadratic I-splines, C¹) on
//! knots at quantiles of the rig's reference values, σ = ±1 is the
//! direction of the data, and c is free. Every non-negative combination of
//! monotone functions is monotone, so the fit is monotone by construction;
//! the weights come from non-negative least squares. With fewer basis
//! functions than rig steps the fit smooths the counts' quantisation noise,
//! and its residuals mean something.

use super::linalg::{nnls, Matrix};

/// The fitted monotone model.
#[derive(Clone, Debug, PartialEq)]
pub struct MonotoneFit {
    knots: Vec<f64>,
    /// [`support`] of each basis function, once (evaluation runs over all
    /// of them per point).
    supports: Vec<(f64, f64, f64)>,
    weights: Vec<f64>,
    intercept: f64,
    direction: f64,
}

/// (a, b, c) of basis function j: support [a, c], peak b.
fn support(knots: &[f64], j: usize) -> (f64, f64, f64) {
    let last = knots.len() - 1;
    (
        knots[j.saturating_sub(1)],
        knots[j],
        knots[(j + 1).min(last)],
    )
}

fn ispline(x: f64, (a, b, c): (f64, f64, f64)) -> f64 {
    if x <= a {
        0.0
    } else if x >= c {
        1.0
    } else if x <= b {
        (x - a).powi(2) / ((c - a) * (b - a))
    } else {
        1.0 - (c - x).powi(2) / ((c - a) * (c - b))
    }
}

fn ispline_slope(x: f64, (a, b, c): (f64, f64, f64)) -> f64 {
    if x <= a || x >= c {
        0.0
    } else if x <= b {
        2.0 * (x - a) / ((c - a) * (b - a))
    } else {
        2.0 * (c - x) / ((c - a) * (c - b))
    }
}

impl MonotoneFit {
    /// Fits s(x) to the points with `interior` knots between the ends (the
    /// number of basis functions is interior + 2). `None` with fewer than
    /// three distinct x or when the solve fails.
    pub fn fit(x: &[f64], s: &[f64], interior: usize) -> Option<Self> {
        let mut distinct: Vec<f64> = x.to_vec();
        distinct.sort_by(f64::total_cmp);
        distinct.dedup();
        if distinct.len() < 3 || x.len() != s.len() {
            return None;
        }
        let interior = interior.min(distinct.len() - 2);
        let (lo, hi) = (distinct[0], distinct[distinct.len() - 1]);
        let mut knots = vec![lo];
        for k in 1..=interior {
            // Quantiles of the distinct reference values.
            let pos = k as f64 * (distinct.len() - 1) as f64 / (interior + 1) as f64;
            let (i, f) = (pos.floor() as usize, pos.fract());
            let q = distinct[i] + f * (distinct[(i + 1).min(distinct.len() - 1)] - distinct[i]);
            if q > *knots.last()? && q < hi {
                knots.push(q);
            }
        }
        knots.push(hi);
        // Direction from the end points' mean shifts.
        let mean_at = |v: f64| {
            let (n, sum) = x
                .iter()
                .zip(s)
                .filter(|(xi, _)| **xi == v)
                .fold((0.0, 0.0), |(n, t), (_, si)| (n + 1.0, t + si));
            sum / n
        };
        let direction = if mean_at(hi) >= mean_at(lo) {
            1.0
        } else {
            -1.0
        };
        let nb = knots.len();
        let supports: Vec<(f64, f64, f64)> = (0..nb).map(|j| support(&knots, j)).collect();
        let mut data = Vec::with_capacity(x.len() * (nb + 2));
        for &xi in x {
            data.push(1.0);
            data.push(-1.0);
            for &sp in &supports {
                data.push(direction * ispline(xi, sp));
            }
        }
        let a = Matrix::new(x.len(), nb + 2, data)?;
        let w = nnls(&a, s)?;
        Some(Self {
            intercept: w[0] - w[1],
            weights: w[2..].to_vec(),
            knots,
            supports,
            direction,
        })
    }

    /// s at x (clamped to the fitted range's end values outside it).
    pub fn eval(&self, x: f64) -> f64 {
        self.intercept
            + self.direction
                * self
                    .weights
                    .iter()
                    .zip(&self.supports)
                    .map(|(w, &sp)| w * ispline(x, sp))
                    .sum::<f64>()
    }

    /// ds/dx at x.
    pub fn slope(&self, x: f64) -> f64 {
        self.direction
            * self
                .weights
                .iter()
                .zip(&self.supports)
                .map(|(w, &sp)| w * ispline_slope(x, sp))
                .sum::<f64>()
    }

    /// The fitted range of x.
    pub fn range(&self) -> (f64, f64) {
        (self.knots[0], self.knots[self.knots.len() - 1])
    }

    /// +1 when s rises with x, −1 when it falls.
    pub fn direction(&self) -> f64 {
        self.direction
    }

    /// Number of basis functions.
    pub fn basis_len(&self) -> usize {
        self.knots.len()
    }

    /// x where the model reaches s (bisection on the monotone model,
    /// clamped to the range).
    pub fn inverse(&self, s: f64) -> f64 {
        let (mut lo, mut hi) = self.range();
        let rising = self.direction > 0.0;
        for _ in 0..100 {
            let mid = 0.5 * (lo + hi);
            if (self.eval(mid) < s) == rising {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        0.5 * (lo + hi)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn basis_is_monotone_and_spans_zero_to_one() {
        for sup in [(0.0, 0.0, 1.0), (0.0, 1.0, 2.0), (1.0, 2.0, 2.0)] {
            let mut prev = -1.0;
            for i in 0..=200 {
                let x = -0.5 + 3.0 * f64::from(i) / 200.0;
                let v = ispline(x, sup);
                assert!((0.0..=1.0).contains(&v) && v >= prev);
                prev = v;
            }
            assert_eq!(ispline(-1.0, sup), 0.0);
            assert_eq!(ispline(3.0, sup), 1.0);
        }
    }

    /// An exponential proximity law, s = −0.4·e^(−x/2.5 mm), sampled at 16
    /// rig steps: the fit follows it closely and its inverse recovers x.
    #[test]
    fn fits_a_proximity_law() {
        let xs: Vec<f64> = (0..16).map(|i| 0.5 + 7.5 * f64::from(i) / 15.0).collect();
        let law = |x: f64| -0.4 * (-x / 2.5).exp();
        let ss: Vec<f64> = xs.iter().map(|&x| law(x)).collect();
        let f = MonotoneFit::fit(&xs, &ss, 8).unwrap();
        for i in 0..=300 {
            let x = 0.5 + 7.5 * f64::from(i) / 300.0;
            assert!(
                (f.eval(x) - law(x)).abs() < 2e-3 * law(x).abs() + 1e-5,
                "x {x}"
            );
        }
        for &x in &xs[1..15] {
            assert!((f.inverse(law(x)) - x).abs() < 0.02, "x {x}");
        }
        assert_eq!(f.direction(), 1.0);
    }

    proptest! {
        /// Any data: the fit is monotone in the data's direction.
        #[test]
        fn always_monotone(ys in proptest::collection::vec(-1.0f64..1.0, 5..30), k in 1usize..10) {
            let xs: Vec<f64> = (0..ys.len()).map(|i| i as f64).collect();
            if let Some(f) = MonotoneFit::fit(&xs, &ys, k) {
                let (lo, hi) = f.range();
                let mut prev = f.eval(lo);
                for i in 1..=100 {
                    let v = f.eval(lo + (hi - lo) * f64::from(i) / 100.0);
                    prop_assert!((v - prev) * f.direction() >= -1e-12);
                    prev = v;
                }
            }
        }
    }
}
