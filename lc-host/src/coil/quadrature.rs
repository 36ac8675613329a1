//! Gauss–Legendre quadrature: nodes and weights, and a composite rule.
//!
//! The n-point rule integrates polynomials of degree ≤ 2n − 1 exactly on
//! [−1, 1] (standard; A&S 1964 §25.4.29). Nodes are the roots of the
//! Legendre polynomial Pₙ, found by Newton's method from the asymptotic
//! first guess cos(π(i − ¼)/(n + ½)); weights are 2/((1 − x²)·Pₙ′(x)²).
//! The target model ([`crate::coil::target`]) integrates over spatial
//! frequency with it, and the tests use it for independent checks
//! (Neumann's integral, Γ(¼)).

/// The `n`-point Gauss–Legendre rule on [−1, 1] as (node, weight) pairs,
/// nodes in ascending order. Empty for n = 0.
pub fn gauss_legendre(n: u32) -> Vec<(f64, f64)> {
    let nf = f64::from(n);
    let mut rule = Vec::new();
    for i in 1..=n {
        // Root i of Pₙ, counted from x = 1 downwards.
        let mut x = (std::f64::consts::PI * (f64::from(i) - 0.25) / (nf + 0.5)).cos();
        let mut dp = 1.0;
        for _ in 0..100 {
            let (p, d) = legendre_and_derivative(n, x);
            dp = d;
            let dx = p / d;
            x -= dx;
            if dx.abs() <= 1e-16 {
                break;
            }
        }
        let (_, d) = legendre_and_derivative(n, x);
        if d.is_finite() {
            dp = d;
        }
        rule.push((x, 2.0 / ((1.0 - x * x) * dp * dp)));
    }
    rule.reverse();
    rule
}

/// Pₙ(x) and Pₙ′(x) by the three-term recurrence.
fn legendre_and_derivative(n: u32, x: f64) -> (f64, f64) {
    let (mut p0, mut p1) = (1.0_f64, x);
    if n == 0 {
        return (1.0, 0.0);
    }
    for k in 2..=n {
        let kf = f64::from(k);
        let p2 = ((2.0 * kf - 1.0) * x * p1 - (kf - 1.0) * p0) / kf;
        p0 = p1;
        p1 = p2;
    }
    let nf = f64::from(n);
    (p1, nf * (x * p1 - p0) / (x * x - 1.0))
}

/// ∫ f over [a, b] by `rule` (from [`gauss_legendre`]) on `panels` equal
/// panels.
pub fn composite(
    rule: &[(f64, f64)],
    a: f64,
    b: f64,
    panels: u32,
    mut f: impl FnMut(f64) -> f64,
) -> f64 {
    let h = (b - a) / f64::from(panels.max(1));
    let mut sum = 0.0;
    for p in 0..panels.max(1) {
        let mid = a + (f64::from(p) + 0.5) * h;
        for &(x, w) in rule {
            sum += w * f(mid + 0.5 * h * x);
        }
    }
    0.5 * h * sum
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn integrates_polynomials_exactly() {
        for n in [1u32, 2, 5, 8, 16, 20, 32] {
            let rule = gauss_legendre(n);
            assert_eq!(u32::try_from(rule.len()), Ok(n));
            let wsum: f64 = rule.iter().map(|r| r.1).sum();
            assert!((wsum - 2.0).abs() < 1e-14, "n={n}");
            // ∫ x^k over [−1, 1] = 2/(k + 1) for even k, 0 for odd, k ≤ 2n − 1.
            for k in 0..(2 * n) {
                let exact = if k % 2 == 0 {
                    2.0 / f64::from(k + 1)
                } else {
                    0.0
                };
                let kk = i32::try_from(k).unwrap();
                let got: f64 = rule.iter().map(|&(x, w)| w * x.powi(kk)).sum();
                assert!((got - exact).abs() < 1e-14, "n={n} k={k}: {got}");
            }
            assert!(rule.windows(2).all(|p| p[0].0 < p[1].0));
        }
        // A 5-point node: √(5 − 2√(10/7))/3 (standard closed form).
        let r5 = gauss_legendre(5);
        let x = (5.0 - 2.0 * (10.0f64 / 7.0).sqrt()).sqrt() / 3.0;
        assert!((r5[3].0 - x).abs() < 1e-15);
        assert!(gauss_legendre(0).is_empty());
    }

    #[test]
    fn composite_rule() {
        let rule = gauss_legendre(8);
        let v = composite(&rule, 0.0, std::f64::consts::PI, 4, f64::sin);
        assert!((v - 2.0).abs() < 1e-14);
        let v = composite(&rule, 1.0, 3.0, 3, |x| 1.0 / x);
        assert!((v - 3f64.ln()).abs() < 1e-14);
    }
}
