//! Tank volume at a level: from a shape (lc-core's formulas) or from a
//! strapping table, the level → volume table of a tank's calibration
//! certificate, read from CSV.
//!
//! A strapping table is interpolated with the monotone piecewise cubic of
//! Fritsch & Butland (1984), the tangents SciPy's `PchipInterpolator` uses
//! (docs/references.md, Monotone interpolation cases): it passes through
//! every row, never overshoots between rows, and never falls where the table
//! rises. The firmware's volume table (a plan's `[tank]`) uses the same
//! tangents in fixed point.
//!
//! CSV format (docs/formats.md, "Strapping table"): a header with one level
//! column (`level_m`, `level_cm` or `level_mm`) and one volume column
//! (`volume_m3`, `volume_l` or `volume_ml`); one row per level, levels
//! strictly increasing, volumes not decreasing; `#` starts a comment.

use crate::csvin::{CsvInput, InputError};
use lc_core::geometry::TankShape;
use std::path::{Path, PathBuf};

/// Why a strapping table could not be used.
#[derive(Debug, thiserror::Error)]
pub enum VolumeError {
    /// The CSV did not read.
    #[error(transparent)]
    Input(#[from] InputError),
    /// No level or no volume column.
    #[error("{file}: line 1: needs a level column (level_m, level_cm or level_mm) and a volume column (volume_m3, volume_l or volume_ml); see docs/formats.md, \"Strapping table\"")]
    Columns {
        /// File name.
        file: PathBuf,
    },
    /// Fewer than two rows.
    #[error("{file}: {rows} row(s): a strapping table needs at least two levels")]
    TooFewRows {
        /// File name.
        file: PathBuf,
        /// Rows read.
        rows: usize,
    },
    /// Levels not strictly increasing or volumes falling.
    #[error("{file}: line {line}: {problem}; sort the table by level and check the row")]
    NotMonotone {
        /// File name.
        file: PathBuf,
        /// Line of the offending row.
        line: u64,
        /// What is wrong.
        problem: &'static str,
    },
    /// A level outside the table.
    #[error("level {level_m} m is outside the strapping table ({min_m} … {max_m} m)")]
    OutsideTable {
        /// The level asked for, m.
        level_m: f64,
        /// Lowest level of the table, m.
        min_m: f64,
        /// Highest level of the table, m.
        max_m: f64,
    },
    /// A level outside a shape's 0 … height.
    #[error("level {level_m} m is outside the tank (0 … {height_m} m)")]
    OutsideTank {
        /// The level asked for, m.
        level_m: f64,
        /// The tank's height, m.
        height_m: f64,
    },
}

/// A strapping table: levels (m) and volumes (m³) with their monotone cubic
/// tangents.
#[derive(Clone, Debug, PartialEq)]
pub struct StrappingTable {
    levels_m: Vec<f64>,
    volumes_m3: Vec<f64>,
    tangents: Vec<f64>,
}

impl StrappingTable {
    /// A table from rows (level m, volume m³): levels strictly increasing,
    /// volumes not decreasing, at least two rows; the error names the row
    /// (line numbers count from 2, as in a file with a header).
    pub fn new(rows: &[(f64, f64)], file: &Path) -> Result<Self, VolumeError> {
        let lines: Vec<u64> = (2..).take(rows.len()).collect();
        Self::with_lines(rows, &lines, file)
    }

    fn with_lines(rows: &[(f64, f64)], lines: &[u64], file: &Path) -> Result<Self, VolumeError> {
        if rows.len() < 2 {
            return Err(VolumeError::TooFewRows {
                file: file.to_path_buf(),
                rows: rows.len(),
            });
        }
        for (i, w) in rows.windows(2).enumerate() {
            let problem = if w[1].0 <= w[0].0 {
                Some("level not above the previous row's")
            } else if w[1].1 < w[0].1 {
                Some("volume below the previous row's")
            } else {
                None
            };
            if let Some(problem) = problem {
                return Err(VolumeError::NotMonotone {
                    file: file.to_path_buf(),
                    line: lines.get(i + 1).copied().unwrap_or(0),
                    problem,
                });
            }
        }
        let levels_m: Vec<f64> = rows.iter().map(|r| r.0).collect();
        let volumes_m3: Vec<f64> = rows.iter().map(|r| r.1).collect();
        let tangents = pchip_tangents(&levels_m, &volumes_m3);
        Ok(Self {
            levels_m,
            volumes_m3,
            tangents,
        })
    }

    /// Reads a strapping table from CSV (format in the module docs).
    pub fn read(input: impl std::io::Read, file: &Path) -> Result<Self, VolumeError> {
        let mut csv = CsvInput::new(input, file)?;
        let pick = |csv: &CsvInput<_>, cols: [(&'static str, f64); 3]| {
            cols.into_iter()
                .find_map(|(name, k)| csv.column(name).map(|i| (i, name, k)))
        };
        let level = pick(
            &csv,
            [("level_m", 1.0), ("level_cm", 1e-2), ("level_mm", 1e-3)],
        );
        let volume = pick(
            &csv,
            [("volume_m3", 1.0), ("volume_l", 1e-3), ("volume_ml", 1e-6)],
        );
        let (Some((li, lname, lk)), Some((vi, vname, vk))) = (level, volume) else {
            return Err(VolumeError::Columns {
                file: file.to_path_buf(),
            });
        };
        let mut rows = Vec::new();
        let mut lines = Vec::new();
        while let Some(row) = csv.next_row() {
            let row = row?;
            let l = row.real(li, lname)?;
            let v = row.real(vi, vname)?;
            rows.push((l * lk, v * vk));
            lines.push(row.line());
        }
        Self::with_lines(&rows, &lines, file)
    }

    /// Reads a strapping table file.
    pub fn load(path: &Path) -> Result<Self, VolumeError> {
        let f = std::fs::File::open(path).map_err(|source| InputError::Io {
            file: path.to_path_buf(),
            source,
        })?;
        Self::read(std::io::BufReader::new(f), path)
    }

    /// Rows as (level m, volume m³).
    pub fn rows(&self) -> impl Iterator<Item = (f64, f64)> + '_ {
        self.levels_m
            .iter()
            .copied()
            .zip(self.volumes_m3.iter().copied())
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        self.levels_m.len()
    }

    /// `true` for no rows (never, for a table that was built).
    pub fn is_empty(&self) -> bool {
        self.levels_m.is_empty()
    }

    /// The level span, m.
    pub fn span_m(&self) -> (f64, f64) {
        (
            self.levels_m.first().copied().unwrap_or(0.0),
            self.levels_m.last().copied().unwrap_or(0.0),
        )
    }

    /// Volume at `level_m`, m³, by the monotone cubic through the rows.
    /// A level outside the table is an error, not an extrapolation.
    pub fn volume_m3(&self, level_m: f64) -> Result<f64, VolumeError> {
        let (min_m, max_m) = self.span_m();
        if !(level_m >= min_m && level_m <= max_m) {
            return Err(VolumeError::OutsideTable {
                level_m,
                min_m,
                max_m,
            });
        }
        let k = self
            .levels_m
            .partition_point(|&x| x <= level_m)
            .clamp(1, self.levels_m.len() - 1)
            - 1;
        let (x0, x1) = (self.levels_m[k], self.levels_m[k + 1]);
        let (y0, y1) = (self.volumes_m3[k], self.volumes_m3[k + 1]);
        let (d0, d1) = (self.tangents[k], self.tangents[k + 1]);
        let h = x1 - x0;
        let t = (level_m - x0) / h;
        let (t2, t3) = (t * t, t * t * t);
        Ok((2.0 * t3 - 3.0 * t2 + 1.0) * y0
            + (t3 - 2.0 * t2 + t) * h * d0
            + (-2.0 * t3 + 3.0 * t2) * y1
            + (t3 - t2) * h * d1)
    }
}

/// Fritsch–Butland tangents with SciPy's three-point end formula (the
/// `PchipInterpolator` variant): interior d_k is the weighted harmonic mean
/// of the neighbouring secants (w1 = 2h_k + h_{k−1}, w2 = h_k + 2h_{k−1}),
/// zero where they differ in sign or either is zero.
pub fn pchip_tangents(x: &[f64], y: &[f64]) -> Vec<f64> {
    let n = x.len().min(y.len());
    if n < 2 {
        return vec![0.0; n];
    }
    let h: Vec<f64> = (0..n - 1).map(|k| x[k + 1] - x[k]).collect();
    let m: Vec<f64> = (0..n - 1).map(|k| (y[k + 1] - y[k]) / h[k]).collect();
    if n == 2 {
        return vec![m[0], m[0]];
    }
    let mut d = vec![0.0; n];
    for k in 1..n - 1 {
        let (m0, m1) = (m[k - 1], m[k]);
        if m0 * m1 > 0.0 {
            let w1 = 2.0 * h[k] + h[k - 1];
            let w2 = h[k] + 2.0 * h[k - 1];
            d[k] = (w1 + w2) / (w1 / m0 + w2 / m1);
        }
    }
    let end = |h0: f64, h1: f64, m0: f64, m1: f64| {
        let d = ((2.0 * h0 + h1) * m0 - h0 * m1) / (h0 + h1);
        if d.signum() != m0.signum() || m0 == 0.0 {
            0.0
        } else if m0.signum() != m1.signum() && d.abs() > 3.0 * m0.abs() {
            3.0 * m0
        } else {
            d
        }
    };
    d[0] = end(h[0], h[1], m[0], m[1]);
    d[n - 1] = end(h[n - 2], h[n - 3], m[n - 2], m[n - 3]);
    d
}

/// A tank: a shape, or a strapping table.
#[derive(Clone, Debug, PartialEq)]
pub enum Tank {
    /// A shape with lc-core's closed-form volume.
    Shape(TankShape),
    /// A strapping table.
    Strapping(StrappingTable),
}

impl Tank {
    /// Volume at `level_m`, m³; a level outside the tank or the table is an
    /// error.
    pub fn volume_m3(&self, level_m: f64) -> Result<f64, VolumeError> {
        match self {
            Tank::Shape(s) => {
                let height_m = s.height_m();
                if !(0.0..=height_m).contains(&level_m) {
                    return Err(VolumeError::OutsideTank { level_m, height_m });
                }
                Ok(s.volume_m3(level_m))
            }
            Tank::Strapping(t) => t.volume_m3(level_m),
        }
    }

    /// The level span, m.
    pub fn span_m(&self) -> (f64, f64) {
        match self {
            Tank::Shape(s) => (0.0, s.height_m()),
            Tank::Strapping(t) => t.span_m(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn table(rows: &[(f64, f64)]) -> StrappingTable {
        StrappingTable::new(rows, Path::new("t.csv")).unwrap()
    }

    /// docs/references.md, Monotone interpolation cases: SciPy 1.17.1's
    /// `PchipInterpolator` tangents and values on data sets B and D
    /// (computed), 1e-9 absolute. (A and C are not rising tables.)
    #[test]
    fn matches_scipy_pchip() {
        let b = table(&[(0.0, 0.0), (1.0, 1.0), (2.0, 4.0), (3.0, 9.0), (4.0, 16.0)]);
        let want = [0.0, 1.5, 3.75, 5.833_333_333_3, 8.0];
        for (d, w) in b.tangents.iter().zip(want) {
            assert!((d - w).abs() < 1e-9, "{d} vs {w}");
        }
        for (x, v) in [
            (0.5, 0.3125),
            (1.5, 2.21875),
            (2.5, 6.239_583_333_3),
            (3.5, 12.229_166_666_7),
        ] {
            assert!((b.volume_m3(x).unwrap() - v).abs() < 1e-9, "B({x})");
        }
        let d = table(&[(1.0, 1.0), (2.0, 3.0), (4.0, 4.0), (5.0, 8.0)]);
        let want = [2.5, 0.857_142_857_1, 0.972_972_973_0, 5.166_666_666_7];
        for (g, w) in d.tangents.iter().zip(want) {
            assert!((g - w).abs() < 1e-9, "{g} vs {w}");
        }
        for (x, v) in [
            (1.5, 2.205_357_142_9),
            (3.0, 3.471_042_471_0),
            (4.5, 5.475_788_288_3),
        ] {
            assert!((d.volume_m3(x).unwrap() - v).abs() < 1e-9, "D({x})");
        }
    }

    /// The same tangents as lc-core's `pchip_derivatives` (what the
    /// firmware table stores).
    #[test]
    fn same_tangents_as_lc_core() {
        let x = [0.0, 0.1, 0.25, 0.3, 0.5, 0.9, 1.0];
        let y = [0.0, 0.02, 0.1, 0.1, 0.3, 0.8, 0.81];
        let ours = pchip_tangents(&x, &y);
        let core = lc_core::curve::pchip_derivatives(&x, &y).unwrap();
        for (a, b) in ours.iter().zip(core.iter()) {
            assert!((a - b).abs() < 1e-12, "{a} vs {b}");
        }
    }

    /// docs/references.md, Horizontal tank cases, 12c: a strapping table
    /// sampled from the R = 1 m, L = 4 m cylinder every 0.1 m reproduces
    /// the published-check levels to 0.2 % of the full volume between rows
    /// and exactly at them.
    #[test]
    fn strapped_cylinder_reproduces_case_12c() {
        let shape = TankShape::HorizontalCylinder {
            radius_m: 1.0,
            length_m: 4.0,
        };
        let rows: Vec<(f64, f64)> = (0..=20)
            .map(|i| {
                let h = f64::from(i) * 0.1;
                (h, shape.volume_m3(h))
            })
            .collect();
        let t = Tank::Strapping(table(&rows));
        assert!((t.volume_m3(0.5).unwrap() - 2.456_739).abs() < 1e-6);
        assert!((t.volume_m3(1.5).unwrap() - 10.109_631).abs() < 1e-6);
        assert!((t.volume_m3(2.0).unwrap() - 4.0 * std::f64::consts::PI).abs() < 1e-9);
        for i in 0..200 {
            let h = f64::from(i) * 0.01 + 0.005;
            let err = (t.volume_m3(h).unwrap() - shape.volume_m3(h)).abs();
            assert!(err < 2e-3 * 4.0 * std::f64::consts::PI, "h = {h}: {err}");
        }
        assert!(matches!(
            t.volume_m3(2.1),
            Err(VolumeError::OutsideTable { .. })
        ));
        let s = Tank::Shape(shape);
        assert!((s.volume_m3(0.5).unwrap() - 2.456_739).abs() < 1e-6);
        assert!(matches!(
            s.volume_m3(-0.1),
            Err(VolumeError::OutsideTank { .. })
        ));
    }

    #[test]
    fn csv_units_and_errors() {
        let text = "# certificate 42\nlevel_mm,volume_l\n0,0\n100,50\n200,180\n";
        let t = StrappingTable::read(text.as_bytes(), Path::new("s.csv")).unwrap();
        assert_eq!(t.len(), 3);
        assert_eq!(t.span_m(), (0.0, 0.2));
        assert!((t.volume_m3(0.1).unwrap() - 0.05).abs() < 1e-15);
        let bad = "level_mm,volume_l\n0,0\n100,50\n100,60\n";
        let e = StrappingTable::read(bad.as_bytes(), Path::new("s.csv"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("s.csv: line 4: level not above"), "{e}");
        let e = StrappingTable::read(
            "level_mm,volume_l\n0,0\n1,x\n".as_bytes(),
            Path::new("s.csv"),
        )
        .unwrap_err()
        .to_string();
        assert!(e.contains("line 3") && e.contains("volume_l"), "{e}");
        let e = StrappingTable::read("height,litres\n0,0\n".as_bytes(), Path::new("s.csv"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("needs a level column"), "{e}");
        let e = StrappingTable::read("level_m,volume_m3\n0,0\n".as_bytes(), Path::new("s.csv"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("at least two"), "{e}");
    }

    proptest! {
        /// On any rising table: through every row, monotone between rows,
        /// never outside the neighbouring rows' volumes; no panic for any
        /// level.
        #[test]
        fn monotone_and_through_the_rows(
            steps in proptest::collection::vec((1e-3f64..1.0, 0.0f64..10.0), 1..40),
            qs in proptest::collection::vec(-0.1f64..1.1, 1..30),
        ) {
            let mut rows = vec![(0.0, 0.0)];
            for (dx, dy) in steps {
                let (x, y) = *rows.last().unwrap();
                rows.push((x + dx, y + dy));
            }
            let t = table(&rows);
            for &(x, y) in &rows {
                prop_assert!((t.volume_m3(x).unwrap() - y).abs() <= 1e-9 * (1.0 + y));
            }
            let (lo, hi) = t.span_m();
            let mut levels: Vec<f64> = qs.iter().map(|q| lo + (hi - lo) * q).collect();
            levels.sort_by(f64::total_cmp);
            let mut prev = f64::NEG_INFINITY;
            for h in levels {
                match t.volume_m3(h) {
                    Ok(v) => {
                        prop_assert!(v >= prev - 1e-9 * (1.0 + v.abs()), "{h}: {v} < {prev}");
                        prev = v;
                    }
                    Err(_) => prop_assert!(h < lo || h > hi),
                }
            }
        }
    }
}
