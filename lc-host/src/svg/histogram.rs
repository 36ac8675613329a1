//! A lot's distribution of one quantity, with its acceptance limits.

use super::draw::{
    axis_range, chart, document, extent, nice_step, no_data, plottable, tick_decimals, tick_label,
    Header, Swatch, ALERT, BAR,
};
use super::Quantity;
use plotters::prelude::*;

/// Fewest bins across the drawn range (so one bar is never a hairline).
pub const MIN_BINS: usize = 5;
/// Most bins across the drawn range.
pub const MAX_BINS: usize = 40;

/// The bins of a histogram: `counts[i]` values fall in
/// `[start + i·width, start + (i + 1)·width)`.
#[derive(Clone, Debug, PartialEq)]
pub struct Bins {
    /// Lower edge of the first bin.
    pub start: f64,
    /// Width of every bin, a step of 1, 2 or 5 × 10ⁿ.
    pub width: f64,
    /// Values per bin.
    pub counts: Vec<usize>,
}

impl Bins {
    /// Bins for `values` (plottable ones only) on an axis that also shows
    /// `marks` (limits). The bin width is the Freedman–Diaconis width
    /// (2·IQR·n^(−1/3); Freedman and Diaconis, 1981), held between 1/40
    /// and 1/5 of the drawn range and rounded up to 1, 2 or 5 × 10ⁿ; when
    /// every value is a whole number and that width is at most 1, bins are
    /// one wide and centred on the whole numbers (quantised data such as
    /// residuals in output units). Bins are aligned to multiples of the
    /// width. `None` without a plottable value.
    pub fn of(values: &[f64], marks: &[f64]) -> Option<Bins> {
        let mut v: Vec<f64> = values.iter().copied().filter(|x| plottable(*x)).collect();
        if v.is_empty() {
            return None;
        }
        v.sort_by(f64::total_cmp);
        let (lo, hi) = extent(v.iter().copied().chain(marks.iter().copied()))?;
        let (lo, hi) = axis_range(Some((lo, hi)), 0.0);
        let full = hi - lo;
        let n = v.len() as f64;
        let q = |p: f64| {
            // An index into a non-empty sorted vector, rounded down: exact.
            v[((n - 1.0) * p) as usize]
        };
        let fd = 2.0 * (q(0.75) - q(0.25)) / n.cbrt();
        let raw = fd.clamp(full / MAX_BINS as f64, full / MIN_BINS as f64);
        let mut width = nice_step(raw);
        let integers = v.iter().all(|x| x.fract() == 0.0);
        let offset = if integers && width <= 1.0 && full <= MAX_BINS as f64 {
            width = 1.0;
            0.5
        } else {
            0.0
        };
        let start = ((lo + offset) / width).floor() * width - offset;
        let end = ((hi + offset) / width).floor() * width - offset + width;
        let count = ((end - start) / width).round();
        if !(count.is_finite() && count >= 1.0 && count <= 4.0 * MAX_BINS as f64) {
            return None;
        }
        // 1 ≤ count ≤ 160: exact.
        let mut counts = vec![0usize; count as usize];
        let last = counts.len() - 1;
        for x in &v {
            // Saturating cast of a non-negative value, then clamped.
            let i = ((x - start) / width).floor().max(0.0) as usize;
            if let Some(c) = counts.get_mut(i.min(last)) {
                *c += 1;
            }
        }
        Some(Bins {
            start,
            width,
            counts,
        })
    }

    /// Upper edge of the last bin.
    pub fn end(&self) -> f64 {
        self.start + self.width * self.counts.len() as f64
    }
}

/// A histogram of a lot's values of one quantity, with optional lower and
/// upper acceptance limits drawn as vertical lines. See [`Bins::of`] for
/// the binning. The note line gives the count, the bin width and how many
/// values lie beyond each limit; values that cannot be plotted (not
/// finite, beyond ±10¹⁵) are left out and counted.
#[derive(Clone, Debug, PartialEq)]
pub struct Histogram {
    title: String,
    quantity: Quantity,
    values: Vec<f64>,
    lower: Option<f64>,
    upper: Option<f64>,
    width: u32,
    height: u32,
}

impl Histogram {
    /// A histogram titled `title` of `values` of `quantity`; 760 × 420 px.
    pub fn new(
        title: impl Into<String>,
        quantity: Quantity,
        values: impl IntoIterator<Item = f64>,
    ) -> Self {
        Histogram {
            title: title.into(),
            quantity,
            values: values.into_iter().collect(),
            lower: None,
            upper: None,
            width: 760,
            height: 420,
        }
    }

    /// The acceptance limits (either may be absent).
    pub fn limits(mut self, lower: Option<f64>, upper: Option<f64>) -> Self {
        self.lower = lower.filter(|v| plottable(*v));
        self.upper = upper.filter(|v| plottable(*v));
        self
    }

    /// The document's size in px (clamped to 200 … 4000 × 150 … 4000).
    pub fn size(mut self, width_px: u32, height_px: u32) -> Self {
        self.width = width_px;
        self.height = height_px;
        self
    }

    /// The standalone SVG document.
    pub fn render(&self) -> String {
        let marks: Vec<f64> = self.lower.into_iter().chain(self.upper).collect();
        let bins = Bins::of(&self.values, &marks);
        let shown = self.values.iter().filter(|v| plottable(**v)).count();
        let left_out = self.values.len() - shown;
        let unit = self.quantity.unit.trim();
        let mut notes = Vec::new();
        if let Some(b) = &bins {
            let w = tick_label(b.width, tick_decimals(0.0, b.width * 10.0));
            let mut n = if unit.is_empty() || unit == "1" {
                format!("n = {shown} · bins {w} wide")
            } else {
                format!("n = {shown} · bins {w} {unit} wide")
            };
            if let Some(l) = self.lower {
                let below = self.values.iter().filter(|v| plottable(**v) && **v < l);
                n.push_str(&format!(" · {} below the lower limit", below.count()));
            }
            if let Some(u) = self.upper {
                let above = self.values.iter().filter(|v| plottable(**v) && **v > u);
                n.push_str(&format!(" · {} above the upper limit", above.count()));
            }
            notes.push(n);
        }
        if left_out > 0 {
            notes.push(format!(
                "{left_out} values not finite or too large: left out"
            ));
        }
        let mut legend = vec![("units per bin".to_string(), Swatch::Bar(BAR))];
        if !marks.is_empty() {
            legend.push(("acceptance limit".to_string(), Swatch::Dashed(ALERT)));
        }
        let header = Header {
            title: self.title.clone(),
            notes,
            legend,
        };
        let count = Quantity::new("units", "count");
        document(self.width, self.height, &header, None, |area| {
            let Some(b) = &bins else {
                let mut c = chart(area, (0.0, 1.0), (0.0, 1.0), &self.quantity, &count)?;
                return no_data(&mut c, "no data");
            };
            let top = b.counts.iter().copied().max().unwrap_or(1).max(1) as f64 * 1.12;
            let (x0, x1) = (b.start - b.width, b.end() + b.width);
            let mut c = chart(area, (x0, x1), (0.0, top), &self.quantity, &count)?;
            c.draw_series(
                b.counts
                    .iter()
                    .enumerate()
                    .filter(|(_, n)| **n > 0)
                    .map(|(i, n)| {
                        let l = b.start + b.width * i as f64;
                        Rectangle::new([(l, 0.0), (l + b.width, *n as f64)], BAR.filled())
                    }),
            )?;
            c.draw_series(
                b.counts
                    .iter()
                    .enumerate()
                    .filter(|(_, n)| **n > 0)
                    .map(|(i, n)| {
                        let l = b.start + b.width * i as f64;
                        Rectangle::new([(l, 0.0), (l + b.width, *n as f64)], WHITE.stroke_width(1))
                    }),
            )?;
            for m in &marks {
                c.draw_series(DashedLineSeries::new(
                    [(*m, 0.0), (*m, top)],
                    6,
                    4,
                    ALERT.stroke_width(2),
                ))?;
            }
            Ok(())
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Regression: 24 units with the same largest residual (2 µm) drew one
    /// bar 0.01 µm wide on an axis to the 8 µm limit, which no one saw.
    #[test]
    fn equal_whole_values_get_a_visible_bar() {
        let b = Bins::of(&[2.0; 24], &[8.0]).unwrap();
        assert_eq!(b.width, 1.0);
        assert!((b.end() - b.start) / b.width <= MAX_BINS as f64);
        let i = ((2.0 - b.start) / b.width).floor() as usize;
        assert_eq!(b.counts[i], 24);
        assert_eq!(b.counts.iter().sum::<usize>(), 24);
    }

    #[test]
    fn bins_hold_every_value_and_stay_in_count() {
        let v: Vec<f64> = (0..1000).map(|i| 5.5e6 + f64::from(i) * 37.0).collect();
        let b = Bins::of(&v, &[5.3e6, 5.95e6]).unwrap();
        assert_eq!(b.counts.iter().sum::<usize>(), 1000);
        let bins_over_range = (5.95e6 - 5.3e6) / b.width;
        assert!(bins_over_range >= MIN_BINS as f64 && bins_over_range <= MAX_BINS as f64);
        assert!(Bins::of(&[f64::NAN], &[]).is_none());
    }
}
