//! Small dense least squares for the calibration fits: Householder QR, and
//! non-negative least squares (Lawson & Hanson, *Solving Least Squares
//! Problems*, 1974, ch. 23). Problems here are tiny (tens of rows, at most a
//! dozen columns), so plain `Vec<f64>` matrices suffice.

/// A dense matrix, row-major.
#[derive(Clone, Debug, PartialEq)]
pub struct Matrix {
    rows: usize,
    cols: usize,
    data: Vec<f64>,
}

impl Matrix {
    /// A `rows × cols` matrix from row-major data (`None` when the length
    /// does not match).
    pub fn new(rows: usize, cols: usize, data: Vec<f64>) -> Option<Self> {
        (data.len() == rows * cols).then_some(Self { rows, cols, data })
    }

    /// Element (r, c).
    pub fn get(&self, r: usize, c: usize) -> f64 {
        self.data[r * self.cols + c]
    }

    /// Rows.
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// Columns.
    pub fn cols(&self) -> usize {
        self.cols
    }

    /// The columns listed, in that order.
    fn select(&self, cols: &[usize]) -> Matrix {
        let mut data = Vec::with_capacity(self.rows * cols.len());
        for r in 0..self.rows {
            for &c in cols {
                data.push(self.get(r, c));
            }
        }
        Matrix {
            rows: self.rows,
            cols: cols.len(),
            data,
        }
    }

    /// A·x.
    pub fn mul_vec(&self, x: &[f64]) -> Vec<f64> {
        (0..self.rows)
            .map(|r| (0..self.cols).map(|c| self.get(r, c) * x[c]).sum())
            .collect()
    }
}

/// A least-squares solution with what its uncertainty needs.
#[derive(Clone, Debug, PartialEq)]
pub struct LeastSquares {
    /// The solution x minimising |A·x − b|.
    pub x: Vec<f64>,
    /// Residual sum of squares.
    pub rss: f64,
    /// (AᵀA)⁻¹, row-major; times σ² it is the covariance of x.
    pub inv_normal: Vec<f64>,
}

impl LeastSquares {
    /// Standard errors of x: √(σ²·diag((AᵀA)⁻¹)) with σ² = RSS/(m − n);
    /// `None` without spare degrees of freedom.
    pub fn standard_errors(&self, rows: usize) -> Option<Vec<f64>> {
        let n = self.x.len();
        let dof = rows.checked_sub(n).filter(|&d| d > 0)?;
        let s2 = self.rss / dof as f64;
        Some(
            (0..n)
                .map(|i| (s2 * self.inv_normal[i * n + i]).max(0.0).sqrt())
                .collect(),
        )
    }
}

/// Least squares by Householder QR. `None` when A has fewer rows than
/// columns or is rank deficient (a column's norm after elimination below
/// 1e-12 of the largest column norm).
pub fn least_squares(a: &Matrix, b: &[f64]) -> Option<LeastSquares> {
    let Qr { x, r, y } = qr_solve(a, b)?;
    let n = a.cols;
    let rss: f64 = y[n..].iter().map(|v| v * v).sum();
    // (AᵀA)⁻¹ = R⁻¹R⁻ᵀ.
    let mut rinv = vec![0.0; n * n];
    for j in 0..n {
        rinv[j * n + j] = 1.0 / r[j * n + j];
        for i in (0..j).rev() {
            let s: f64 = (i + 1..=j).map(|k| r[i * n + k] * rinv[k * n + j]).sum();
            rinv[i * n + j] = -s / r[i * n + i];
        }
    }
    let mut inv_normal = vec![0.0; n * n];
    for i in 0..n {
        for j in 0..n {
            inv_normal[i * n + j] = (0..n).map(|k| rinv[i * n + k] * rinv[j * n + k]).sum();
        }
    }
    Some(LeastSquares { x, rss, inv_normal })
}

/// The QR solution of [`least_squares`] without what its uncertainty
/// needs: x, R (row-major, `a`'s shape) and Qᵀb.
struct Qr {
    x: Vec<f64>,
    r: Vec<f64>,
    y: Vec<f64>,
}

/// Householder QR and back substitution (see [`least_squares`]); the
/// active-set steps of [`nnls`] need only x.
fn qr_solve(a: &Matrix, b: &[f64]) -> Option<Qr> {
    let (m, n) = (a.rows, a.cols);
    if m < n || b.len() != m || n == 0 {
        return None;
    }
    let mut r = a.data.clone();
    let mut y = b.to_vec();
    let scale = (0..n)
        .map(|c| (0..m).map(|i| r[i * n + c].powi(2)).sum::<f64>().sqrt())
        .fold(0.0, f64::max);
    for k in 0..n {
        let norm = (k..m).map(|i| r[i * n + k].powi(2)).sum::<f64>().sqrt();
        if norm <= 1e-12 * scale {
            return None;
        }
        let alpha = if r[k * n + k] > 0.0 { -norm } else { norm };
        let mut v: Vec<f64> = (k..m).map(|i| r[i * n + k]).collect();
        v[0] -= alpha;
        let vnorm2: f64 = v.iter().map(|x| x * x).sum();
        if vnorm2 > 0.0 {
            for c in k..n {
                let dot: f64 = (k..m).map(|i| v[i - k] * r[i * n + c]).sum();
                let f = 2.0 * dot / vnorm2;
                for i in k..m {
                    r[i * n + c] -= f * v[i - k];
                }
            }
            let dot: f64 = (k..m).map(|i| v[i - k] * y[i]).sum();
            let f = 2.0 * dot / vnorm2;
            for i in k..m {
                y[i] -= f * v[i - k];
            }
        }
    }
    // Back substitution R·x = Qᵀb (top n rows).
    let mut x = vec![0.0; n];
    for k in (0..n).rev() {
        let s: f64 = (k + 1..n).map(|c| r[k * n + c] * x[c]).sum();
        x[k] = (y[k] - s) / r[k * n + k];
    }
    Some(Qr { x, r, y })
}

/// Non-negative least squares: x ≥ 0 minimising |A·x − b| (Lawson &
/// Hanson's active-set algorithm, at most 3·n outer iterations).
pub fn nnls(a: &Matrix, b: &[f64]) -> Option<Vec<f64>> {
    let n = a.cols;
    if b.len() != a.rows {
        return None;
    }
    let mut x = vec![0.0; n];
    let mut passive: Vec<bool> = vec![false; n];
    let gradient = |x: &[f64]| {
        let ax = a.mul_vec(x);
        let res: Vec<f64> = b.iter().zip(&ax).map(|(bi, ai)| bi - ai).collect();
        (0..n)
            .map(|c| (0..a.rows).map(|r| a.get(r, c) * res[r]).sum::<f64>())
            .collect::<Vec<f64>>()
    };
    let scale = b.iter().map(|v| v.abs()).fold(0.0, f64::max).max(1e-300);
    let tol = 1e-12 * scale * (a.rows as f64);
    for _ in 0..3 * n.max(1) {
        let w = gradient(&x);
        let Some((t, &wt)) = w
            .iter()
            .enumerate()
            .filter(|(i, _)| !passive[*i])
            .max_by(|p, q| p.1.total_cmp(q.1))
        else {
            break;
        };
        if wt <= tol {
            break;
        }
        passive[t] = true;
        // Inner loop: keep the passive set feasible.
        for _ in 0..3 * n.max(1) {
            let cols: Vec<usize> = (0..n).filter(|&i| passive[i]).collect();
            let z_p = qr_solve(&a.select(&cols), b)?.x;
            let mut z = vec![0.0; n];
            for (&c, &v) in cols.iter().zip(&z_p) {
                z[c] = v;
            }
            if cols.iter().all(|&c| z[c] > 0.0) {
                x = z;
                break;
            }
            let alpha = cols
                .iter()
                .filter(|&&c| z[c] <= 0.0)
                .map(|&c| x[c] / (x[c] - z[c]))
                .fold(f64::INFINITY, f64::min);
            for i in 0..n {
                x[i] += alpha * (z[i] - x[i]);
            }
            for &c in &cols {
                if x[c] <= 1e-15 {
                    x[c] = 0.0;
                    passive[c] = false;
                }
            }
        }
    }
    Some(x)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// Cross-check against nalgebra's SVD least-squares solve, an
    /// independent general-purpose implementation.
    fn nalgebra_solve(a: &Matrix, b: &[f64]) -> Vec<f64> {
        let m = nalgebra::DMatrix::from_row_slice(a.rows(), a.cols(), &a.data);
        let v = nalgebra::DVector::from_column_slice(b);
        let svd = m.svd(true, true);
        svd.solve(&v, 1e-14).unwrap().iter().copied().collect()
    }

    #[test]
    fn exact_line_and_standard_errors() {
        // y = 2 + 3x exactly: zero residual, zero standard errors.
        let xs = [0.0, 1.0, 2.0, 3.0, 4.0];
        let a = Matrix::new(5, 2, xs.iter().flat_map(|&x| [1.0, x]).collect()).unwrap();
        let b: Vec<f64> = xs.iter().map(|x| 2.0 + 3.0 * x).collect();
        let ls = least_squares(&a, &b).unwrap();
        assert!((ls.x[0] - 2.0).abs() < 1e-12 && (ls.x[1] - 3.0).abs() < 1e-12);
        assert!(ls.rss < 1e-20);
        // Textbook slope standard error: σ/√Σ(x − x̄)², here with one
        // perturbed point.
        let mut b2 = b.clone();
        b2[2] += 1.0;
        let ls = least_squares(&a, &b2).unwrap();
        let se = ls.standard_errors(5).unwrap();
        let sxx: f64 = xs.iter().map(|x| (x - 2.0f64).powi(2)).sum();
        let sigma = (ls.rss / 3.0).sqrt();
        assert!((se[1] - sigma / sxx.sqrt()).abs() < 1e-12);
        assert!(least_squares(
            &Matrix::new(2, 2, vec![1.0, 2.0, 2.0, 4.0]).unwrap(),
            &[1.0, 2.0]
        )
        .is_none());
    }

    #[test]
    fn nnls_clamps_what_least_squares_would_make_negative() {
        // b lies in the direction of column 0 minus a bit of column 1.
        let a = Matrix::new(3, 2, vec![1.0, 0.0, 0.0, 1.0, 1.0, 1.0]).unwrap();
        let b = [1.0, -0.5, 0.5];
        let free = least_squares(&a, &b).unwrap().x;
        assert!(free[1] < 0.0);
        let x = nnls(&a, &b).unwrap();
        assert!(x[1] == 0.0 && (x[0] - 0.75).abs() < 1e-12, "{x:?}");
    }

    proptest! {
        /// Householder QR agrees with nalgebra's SVD solve.
        #[test]
        fn qr_matches_nalgebra(rows in 4usize..30, cols in 1usize..5, seed: u64) {
            prop_assume!(rows > cols);
            let mut st = seed | 1;
            let mut next = || { st ^= st << 13; st ^= st >> 7; st ^= st << 17; (st >> 11) as f64 / (1u64 << 53) as f64 - 0.5 };
            let data: Vec<f64> = (0..rows * cols).map(|_| next()).collect();
            let b: Vec<f64> = (0..rows).map(|_| next()).collect();
            let a = Matrix::new(rows, cols, data).unwrap();
            if let Some(ls) = least_squares(&a, &b) {
                let reference = nalgebra_solve(&a, &b);
                for (x, r) in ls.x.iter().zip(&reference) {
                    prop_assert!((x - r).abs() <= 1e-8 * (1.0 + r.abs()), "{} vs {}", x, r);
                }
            }
        }

        /// NNLS: feasible, and no better non-negative point along each axis
        /// (the KKT conditions: gradient ≤ 0 where x = 0, ≈ 0 where x > 0).
        #[test]
        fn nnls_satisfies_kkt(rows in 4usize..25, cols in 1usize..6, seed: u64) {
            let mut st = seed | 1;
            let mut next = || { st ^= st << 13; st ^= st >> 7; st ^= st << 17; (st >> 11) as f64 / (1u64 << 53) as f64 - 0.5 };
            let a = Matrix::new(rows, cols, (0..rows * cols).map(|_| next()).collect()).unwrap();
            let b: Vec<f64> = (0..rows).map(|_| next()).collect();
            let x = nnls(&a, &b).unwrap();
            let ax = a.mul_vec(&x);
            let res: Vec<f64> = b.iter().zip(&ax).map(|(p, q)| p - q).collect();
            for (c, &xc) in x.iter().enumerate() {
                prop_assert!(xc >= 0.0);
                let g: f64 = (0..rows).map(|r| a.get(r, c) * res[r]).sum();
                if xc > 0.0 { prop_assert!(g.abs() < 1e-9, "g {}", g); } else { prop_assert!(g < 1e-9, "g {}", g); }
            }
        }
    }
}
