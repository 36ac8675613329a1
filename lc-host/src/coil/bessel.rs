//! The Bessel function of the first kind of order one, J1(x).
//!
//! The layered-conductor target model ([`crate::coil::target`]) writes a
//! coaxial loop's field as a Hankel transform with kernel J1(α·r). The
//! standard library has no Bessel functions and the project takes no new
//! dependency for one, so J1 is computed here two ways:
//!
//! * |x| < 4: the power series Σ (−1)^k·(x/2)^(2k+1)/(k!·(k+1)!)
//!   (A&S 9.1.10), full relative precision near 0;
//! * 4 ≤ |x| < 30: Bessel's integral J1(x) = (1/π)·∫₀^π cos(τ − x·sin τ) dτ
//!   (A&S 1964 9.1.21; DLMF 10.9.1) by the trapezoidal rule over the full
//!   period with 96 points. The integrand is periodic and entire, so the
//!   error is the aliasing term ≈ 2·J₉₅(x), below 1e-30 for |x| < 30; what
//!   remains is rounding, about 1e-15 absolute.
//! * |x| ≥ 30: Hankel's asymptotic expansion (A&S 9.2.5, 9.2.9, 9.2.10)
//!   J1(x) = √(2/(πx))·(P·cos χ − Q·sin χ), χ = x − 3π/4, summed until
//!   the terms stop falling; the truncation error is about e^(−2x) < 1e-26.
//!
//! J1 is odd: J1(−x) = −J1(x). NaN in, NaN out; ±∞ gives 0.

use std::f64::consts::PI;

/// Trapezoid points over the period for |x| < [`ASYMPTOTIC_FROM`].
const TRAPEZOID_POINTS: u32 = 96;
/// Below this the power series is used.
const SERIES_BELOW: f64 = 4.0;
/// Where the asymptotic expansion takes over.
const ASYMPTOTIC_FROM: f64 = 30.0;

/// J1(x), the Bessel function of the first kind of order one.
pub fn bessel_j1(x: f64) -> f64 {
    if x.is_nan() {
        return f64::NAN;
    }
    if x.is_infinite() {
        return 0.0;
    }
    let ax = x.abs();
    let v = if ax < SERIES_BELOW {
        series(ax)
    } else if ax < ASYMPTOTIC_FROM {
        integral_form(ax)
    } else {
        asymptotic(ax)
    };
    if x < 0.0 {
        -v
    } else {
        v
    }
}

/// Σ (−1)^k·(x/2)^(2k+1)/(k!·(k+1)!) for 0 ≤ x < 4: the terms peak
/// below 4 and fall under 1e-17 of the sum by k = 20.
fn series(x: f64) -> f64 {
    let h = 0.5 * x;
    let h_sq = h * h;
    let mut term = h;
    let mut sum = h;
    for k in 1..30u32 {
        let kf = f64::from(k);
        term *= -h_sq / (kf * (kf + 1.0));
        sum += term;
        if term.abs() < 1e-17 * sum.abs() {
            break;
        }
    }
    sum
}

/// (1/2π)·∫₀^{2π} cos(τ − x sin τ) dτ by the trapezoid; the integrand is
/// even about τ = π, so half the points suffice.
fn integral_form(x: f64) -> f64 {
    let n = TRAPEZOID_POINTS;
    let half = n / 2;
    let g = |j: u32| {
        let tau = 2.0 * PI * f64::from(j) / f64::from(n);
        (tau - x * tau.sin()).cos()
    };
    let mut sum = 0.5 * (g(0) + g(half));
    for j in 1..half {
        sum += g(j);
    }
    sum / f64::from(half)
}

/// Hankel's expansion for order one (µ = 4ν² = 4).
fn asymptotic(x: f64) -> f64 {
    let mu = 4.0;
    let eight_x = 8.0 * x;
    let (mut p, mut q) = (1.0_f64, 0.0_f64);
    let mut term = 1.0_f64; // t_k = Π_{j≤k}(µ − (2j−1)²) / (k!·(8x)^k)
    let mut last = f64::INFINITY;
    for k in 1..80u32 {
        let kf = f64::from(k);
        let odd = 2.0 * kf - 1.0;
        term *= (mu - odd * odd) / (kf * eight_x);
        let mag = term.abs();
        if mag >= last || mag < 1e-18 {
            break;
        }
        last = mag;
        // P takes the even k with signs +, −, +, … from k = 0;
        // Q the odd k with signs +, −, … from k = 1.
        match k % 4 {
            1 => q += term,
            2 => p -= term,
            3 => q -= term,
            _ => p += term,
        }
    }
    let chi = x - 0.75 * PI;
    (2.0 / (PI * x)).sqrt() * (p * chi.cos() - q * chi.sin())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Values computed with mpmath `besselj(1, x)` at 25 digits; the
    /// first four agree with A&S 1964 Table 9.1 to its 10 printed digits
    /// (0.4400505857, 0.5767248078, −0.3275791376, 0.0434727462) (from memory
    /// for the table; docs/references.md, Bessel J1).
    #[test]
    fn reference_values() {
        let cases = [
            (1.0, 0.4400505857449335),
            (2.0, 0.5767248077568734),
            (3.999, -0.06566261055732493),
            (4.0, -0.06604332802354913),
            (5.0, -0.32757913759146523),
            (10.0, 0.04347274616886144),
            (29.999, -0.11866859233178038),
            (30.0, -0.11875106261662294),
            (30.001, -0.11883341153537164),
            (50.0, -0.09751182812517514),
            (100.0, -0.07714535201411216),
            (1000.0, 0.004728311907089524),
        ];
        for (x, j) in cases {
            // Also either side of the series/integral switch at 4.
            assert!(
                (bessel_j1(x) - j).abs() < 2e-15,
                "J1({x}) = {} vs {j}",
                bessel_j1(x)
            );
            assert_eq!(bessel_j1(-x), -bessel_j1(x));
        }
        // First zero j1,1 = 3.8317059702075123 (A&S Table 9.5; mpmath
        // besseljzero; computed).
        assert!(bessel_j1(3.8317059702075125).abs() < 1e-15);
        assert_eq!(bessel_j1(0.0), 0.0);
        assert!(bessel_j1(f64::NAN).is_nan());
        assert_eq!(bessel_j1(f64::INFINITY), 0.0);
    }

    #[test]
    fn small_argument_series() {
        // J1(x) = x/2 − x³/16 + x⁵/384 − x⁷/18432 + x⁹/1474560 − … (A&S 9.1.10).
        for x in [1e-8f64, 1e-4, 1e-2, 0.1] {
            let s = x / 2.0 - x * x * x / 16.0 + x.powi(5) / 384.0 - x.powi(7) / 18432.0
                + x.powi(9) / 1_474_560.0;
            assert!((bessel_j1(x) - s).abs() <= 1e-15 * s.abs(), "{x}");
        }
    }

    #[test]
    fn derivative_of_j0_across_the_crossover() {
        // J0′ = −J1 (A&S 9.1.28): J0 from its own integral (A&S 9.1.18)
        // differentiated numerically, on both sides of x = 30.
        let j0 = |x: f64| {
            let n = 200;
            let mut s = 0.0;
            for j in 0..n {
                let tau = 2.0 * PI * f64::from(j) / f64::from(n);
                s += (x * tau.sin()).cos();
            }
            s / f64::from(n)
        };
        for x in [3.0, 17.5, 29.9, 30.1, 45.0] {
            let h = 1e-4;
            let d = (j0(x + h) - j0(x - h)) / (2.0 * h);
            assert!((d + bessel_j1(x)).abs() < 1e-8, "{x}");
        }
    }
}
