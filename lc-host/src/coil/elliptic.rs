//! Complete elliptic integrals of the first and second kind, K(m) and E(m),
//! by the arithmetic–geometric mean (AGM).
//!
//! # Convention: parameter m = k²
//!
//! Every function here takes the **parameter m = k²**, as Abramowitz &
//! Stegun (1964, ch. 17), DLMF §19, SciPy's `ellipk(m)` and mpmath do:
//!
//! K(m) = ∫₀^{π/2} dθ / √(1 − m·sin²θ),  E(m) = ∫₀^{π/2} √(1 − m·sin²θ) dθ.
//!
//! Maxwell's formula, Nagaoka's coefficient, C++17 `std::comp_ellint_1(k)`
//! and many papers write K(k) with the **modulus k**: pass `k * k` here
//! (docs/references.md, Elliptic integrals and Traps, item 3: "E(k = 0.5)" is
//! E(m = 0.25) = 1.4674622093, not 1.46034).
//!
//! # Algorithm (A&S 1964 §17.6; DLMF §19.8(i))
//!
//! ```text
//! a0 = 1, b0 = √(1 − m), c0 = √m
//! a(n+1) = (a(n) + b(n))/2,  b(n+1) = √(a(n)·b(n)),  c(n+1) = (a(n) − b(n))/2
//! K = π / (2·a(N)),   E = K·(1 − Σ_{n=0..N} 2^(n−1)·c(n)²)
//! ```
//!
//! Two refinements keep full precision:
//!
//! * c(n+1) is computed as c(n)²/(4·a(n+1)), an identity (c(n)² = a(n)² −
//!   b(n)²) that avoids the cancellation in a(n) − b(n);
//! * the [`from_complement`] entry takes m₁ = 1 − m directly, so callers
//!   that know 1 − m more precisely than m (close coaxial loops, short
//!   solenoids) do not lose it to rounding near m = 1.
//!
//! The AGM converges quadratically: 5 or 6 steps reach 1e-16 for m ≤ 0.9.
//! The tests reproduce A&S Table 17.1 (docs/references.md, Elliptic integrals,
//! 10 decimals) and the closed form K(½) = Γ(¼)²/(4√π) to 2e-15, and agree with
//! periodic trapezoidal quadrature over m ∈ [0, 0.999] to 1e-13 relative and
//! with the power series over m ∈ [0, 0.5] to 1e-14.
//!
//! # Limits
//!
//! K(0) = E(0) = π/2. As m → 1, K(m) → ∞ like ln(4/√(1 − m)) (A&S 17.3.26)
//! and E(m) → 1; at m = 1 exactly, K = +∞ and E = 1. Outside 0 ≤ m ≤ 1
//! (or for NaN) every field is NaN.

use std::f64::consts::FRAC_PI_2;

/// K(m), E(m) and the two combinations that lose precision when formed
/// from K and E by subtraction.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CompleteIntegrals {
    /// K(m), first kind.
    pub k: f64,
    /// E(m), second kind.
    pub e: f64,
    /// K(m) − E(m), computed without cancellation (≈ π·m/4 for small m).
    pub k_minus_e: f64,
    /// (1 − m/2)·K(m) − E(m), the bracket of Maxwell's coaxial-loop formula
    /// divided by 2/k, computed without cancellation (≈ π·m²/32 for
    /// small m).
    pub maxwell: f64,
}

impl CompleteIntegrals {
    const NAN: CompleteIntegrals = CompleteIntegrals {
        k: f64::NAN,
        e: f64::NAN,
        k_minus_e: f64::NAN,
        maxwell: f64::NAN,
    };
}

/// The most AGM steps taken. Convergence is quadratic, so even m₁ = 1e-300
/// needs fewer than 16; the cap only guards against NaN loops.
const MAX_STEPS: usize = 64;

/// K, E and their stable combinations at parameter `m` (= k², see the
/// module doc), 0 ≤ m ≤ 1. NaN fields outside that range.
pub fn complete_integrals(m: f64) -> CompleteIntegrals {
    if !(0.0..=1.0).contains(&m) {
        return CompleteIntegrals::NAN;
    }
    agm(m, 1.0 - m)
}

/// The same at the complementary parameter m₁ = 1 − m, 0 ≤ m₁ ≤ 1.
///
/// Use this when 1 − m is known more precisely than m, which is always the
/// case near m = 1: for coaxial loops m₁ = ((a − b)² + d²)/((a + b)² + d²).
pub fn from_complement(m1: f64) -> CompleteIntegrals {
    if !(0.0..=1.0).contains(&m1) {
        return CompleteIntegrals::NAN;
    }
    agm(1.0 - m1, m1)
}

/// The same with both m and m₁ = 1 − m given, each as precisely as the
/// caller has it (they must sum to 1 up to rounding). Maxwell's formula
/// needs this: far apart, m is tiny and known to full relative precision
/// while 1 − m₁ would round it away; close together, the reverse.
/// NaN fields unless both lie in [0, 1].
pub fn complete_integrals_with_complement(m: f64, m1: f64) -> CompleteIntegrals {
    if !(0.0..=1.0).contains(&m) || !(0.0..=1.0).contains(&m1) {
        return CompleteIntegrals::NAN;
    }
    agm(m, m1)
}

/// K(m), parameter m = k² (0 ≤ m ≤ 1; +∞ at m = 1; NaN outside).
pub fn complete_k(m: f64) -> f64 {
    complete_integrals(m).k
}

/// E(m), parameter m = k² (0 ≤ m ≤ 1; 1 at m = 1; NaN outside).
pub fn complete_e(m: f64) -> f64 {
    complete_integrals(m).e
}

/// The AGM with both m and m₁ = 1 − m given (each as precise as the caller
/// has it).
fn agm(m: f64, m1: f64) -> CompleteIntegrals {
    if m1 == 0.0 {
        return CompleteIntegrals {
            k: f64::INFINITY,
            e: 1.0,
            k_minus_e: f64::INFINITY,
            maxwell: f64::INFINITY,
        };
    }
    let mut a = 1.0_f64;
    let mut b = m1.sqrt();
    // c(n)² and 2^(n−1): the n = 0 term is m/2; `tail` sums n ≥ 1.
    let mut c_sq = m;
    let mut weight = 1.0_f64; // 2^(n−1) for n = 1
    let mut tail = 0.0_f64;
    for _ in 0..MAX_STEPS {
        let a_next = 0.5 * (a + b);
        let b_next = (a * b).sqrt();
        let c_next = c_sq / (4.0 * a_next);
        let term = weight * c_next * c_next;
        tail += term;
        a = a_next;
        b = b_next;
        c_sq = c_next * c_next;
        weight *= 2.0;
        if c_next <= 1e-17 * a || term <= 1e-17 * tail {
            break;
        }
    }
    let k = FRAC_PI_2 / a;
    let sum = 0.5 * m + tail;
    CompleteIntegrals {
        k,
        e: k * (1.0 - sum),
        k_minus_e: k * sum,
        maxwell: k * tail,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::coil::quadrature::gauss_legendre;
    use proptest::prelude::*;
    use std::f64::consts::PI;

    /// K and E by the periodic trapezoidal rule over a full period (the
    /// integrands are analytic and π-periodic, so it converges
    /// geometrically): an independent method.
    fn trapezoid_ke(m: f64) -> (f64, f64) {
        let n = 4096;
        let (mut k, mut e) = (0.0, 0.0);
        for j in 0..n {
            let theta = PI * f64::from(j) / f64::from(n);
            let s = theta.sin();
            let r = (1.0 - m * s * s).sqrt();
            k += 1.0 / r;
            e += r;
        }
        // ∫₀^π = 2·∫₀^{π/2}; the trapezoid on [0, π) with n points.
        let h = PI / f64::from(n);
        (0.5 * k * h, 0.5 * e * h)
    }

    /// Power series (A&S 17.3.11, 17.3.12): K = π/2·Σ c_n²·mⁿ,
    /// E = π/2·Σ c_n²·mⁿ/(1 − 2n), c_n = (2n)!/(2^(2n)·(n!)²).
    fn series_ke(m: f64) -> (f64, f64) {
        let (mut k, mut e) = (0.0, 0.0);
        let mut c = 1.0_f64;
        let mut mn = 1.0_f64;
        for n in 0..400 {
            let nf = f64::from(n);
            if n > 0 {
                c *= (2.0 * nf - 1.0) / (2.0 * nf);
            }
            k += c * c * mn;
            e += c * c * mn / (1.0 - 2.0 * nf);
            mn *= m;
        }
        (FRAC_PI_2 * k, FRAC_PI_2 * e)
    }

    /// A&S 1964 Table 17.1 (pp. 608–611), values as listed in
    /// docs/references.md, Elliptic integrals (layout published, quoted; values
    /// computed with mpmath at 30 digits), tolerance 1e-10.
    #[test]
    #[allow(clippy::approx_constant)] // the table's printed π/2, deliberately
    fn abramowitz_stegun_table_17_1() {
        let table = [
            (0.0, 1.5707963268, 1.5707963268),
            (0.1, 1.6124413487, 1.5307576369),
            (0.25, 1.6857503548, 1.4674622093),
            (0.5, 1.8540746773, 1.3506438810),
            (0.8, 2.2572053268, 1.1784899243),
            (0.9, 2.5780921134, 1.1047747327),
            (0.99, 3.6956373630, 1.0159935450),
        ];
        for (m, k, e) in table {
            let r = complete_integrals(m);
            assert!((r.k - k).abs() < 1e-10, "K({m}) = {} vs {k}", r.k);
            assert!((r.e - e).abs() < 1e-10, "E({m}) = {} vs {e}", r.e);
            assert!((r.k - r.e - r.k_minus_e).abs() < 1e-14);
        }
        // docs/references.md, Traps, item 3: E at modulus k = 0.5 is E(m =
        // 0.25).
        assert!((complete_e(0.5 * 0.5) - 1.4674622093).abs() < 1e-10);
        assert!((complete_e(0.5) - 1.46034).abs() > 0.1);
    }

    /// K(1/2) = Γ(1/4)²/(4√π) = 1.854074677301372 (docs/references.md,
    /// Elliptic integrals; computed); Γ(1/4) = 4·∫₀^∞ e^(−u⁴) du by
    /// Gauss–Legendre as an independent check of the closed form.
    #[test]
    fn closed_form_at_one_half() {
        assert!((complete_k(0.5) - 1.854074677301372).abs() < 2e-15);
        // Γ(1/4) = ∫₀^∞ t^(−3/4) e^(−t) dt = 4·∫₀^∞ e^(−u⁴) du; e^(−6⁴) is 0.
        let gl = gauss_legendre(20);
        let panels = 60;
        let h = 6.0 / f64::from(panels);
        let mut integral = 0.0;
        for p in 0..panels {
            let mid = (f64::from(p) + 0.5) * h;
            for &(x, w) in &gl {
                let u = mid + 0.5 * h * x;
                integral += 0.5 * h * w * (-(u * u * u * u)).exp();
            }
        }
        let gamma_quarter = 4.0 * integral;
        let closed = gamma_quarter * gamma_quarter / (4.0 * PI.sqrt());
        assert!((complete_k(0.5) - closed).abs() < 1e-13, "{closed}");
        // Legendre's relation at m = ½: 2·E·K − K² = π/2, so
        // E(½) = 1.350643881047676 (docs/references.md, Elliptic integrals;
        // computed).
        let r = complete_integrals(0.5);
        assert!((2.0 * r.e * r.k - r.k * r.k - FRAC_PI_2).abs() < 1e-14);
        assert!((r.e - 1.350643881047676).abs() < 2e-15);
    }

    /// The limits m → 1 (A&S 17.3.26: K ≈ ln(4/√(1−m)); E → 1) and m = 1,
    /// m = 0, and outside the domain.
    #[test]
    fn limits() {
        let z = complete_integrals(0.0);
        assert_eq!(
            (z.k, z.e, z.k_minus_e, z.maxwell),
            (FRAC_PI_2, FRAC_PI_2, 0.0, 0.0)
        );
        let one = complete_integrals(1.0);
        assert!(one.k.is_infinite() && one.e == 1.0);
        for m1 in [1e-8, 1e-12, 1e-16, 1e-100, 1e-300] {
            let r = from_complement(m1);
            let asym = (4.0 / m1.sqrt()).ln();
            // Next term of the expansion: (m1/4)·(ln(4/k') − 1).
            assert!((r.k - asym).abs() <= m1 * asym + 1e-14 * asym, "m1={m1}");
            assert!(
                (r.e - 1.0).abs() <= m1 * asym + 1e-14 * asym,
                "m1={m1}: E={}",
                r.e
            );
        }
        for bad in [-0.1, 1.0 + 1e-15, f64::NAN, f64::INFINITY] {
            assert!(complete_k(bad).is_nan() && complete_e(bad).is_nan());
            assert!(from_complement(bad).k.is_nan());
        }
    }

    #[test]
    fn small_m_combinations_have_no_cancellation() {
        // (1 − m/2)K − E = π·m²/32·(1 + 3m/4 + …), K − E = π·m/4·(1 + 3m/8 + …)
        // (from the series A&S 17.3.11–12).
        for m in [1e-3, 1e-6, 1e-9, 1e-12] {
            let r = complete_integrals(m);
            let maxwell = PI * m * m / 32.0 * (1.0 + 0.75 * m);
            let kme = PI * m / 4.0 * (1.0 + 0.375 * m);
            assert!(
                ((r.maxwell - maxwell) / maxwell).abs() < 2.0 * m * m + 1e-15,
                "{m}"
            );
            assert!(
                ((r.k_minus_e - kme) / kme).abs() < 2.0 * m * m + 1e-15,
                "{m}"
            );
        }
    }

    proptest! {
        /// AGM against the trapezoidal quadrature over m ∈ [0, 0.999].
        #[test]
        fn agm_matches_quadrature(m in 0.0f64..0.999) {
            let r = complete_integrals(m);
            let (k, e) = trapezoid_ke(m);
            prop_assert!(((r.k - k) / k).abs() < 1e-13, "K({m}): {} vs {k}", r.k);
            prop_assert!(((r.e - e) / e).abs() < 1e-13, "E({m}): {} vs {e}", r.e);
        }

        /// AGM against the power series where it converges fast.
        #[test]
        fn agm_matches_series(m in 0.0f64..0.5) {
            let r = complete_integrals(m);
            let (k, e) = series_ke(m);
            prop_assert!(((r.k - k) / k).abs() < 1e-14);
            prop_assert!(((r.e - e) / e).abs() < 1e-14);
        }

        /// Legendre's relation (DLMF 19.7.1):
        /// E(m)K(1−m) + E(1−m)K(m) − K(m)K(1−m) = π/2.
        #[test]
        fn legendre_relation(m in 1e-6f64..1.0) {
            let a = complete_integrals(m);
            let b = from_complement(m);
            let lhs = a.e * b.k + b.e * a.k - a.k * b.k;
            prop_assert!((lhs - FRAC_PI_2).abs() < 1e-13 * a.k.max(b.k), "{lhs}");
        }

        /// m and m₁ entries agree; K rises and E falls with m.
        #[test]
        fn entries_agree_and_monotone(m in 0.0f64..0.999, dm in 1e-6f64..1e-3) {
            let a = complete_integrals(m);
            let b = from_complement(1.0 - m);
            prop_assert!(((a.k - b.k) / a.k).abs() < 1e-12);
            let c = complete_integrals(m + dm);
            prop_assert!(c.k > a.k && c.e < a.e);
        }
    }
}
