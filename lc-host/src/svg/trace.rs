//! Reading-versus-time traces, decimated to a min/max envelope per pixel
//! column so that millions of samples give a small file.

use super::draw::{
    axis_range, chart, document, extent, no_data, plottable, series_color, Header, Swatch, ALERT,
};
use super::Quantity;
use plotters::prelude::*;

/// Most pixel columns a trace is decimated to. A series with more than
/// twice as many samples as the plot has columns (its width in px, at
/// most this) is drawn as a min/max envelope: per column, the smallest
/// and largest value, in the order they occurred, joined column to
/// column. The line then holds at most two points per column, whatever
/// the number of samples.
pub const MAX_COLUMNS: usize = 2000;

/// The caution printed under every trace (see README: Cautions).
pub const CAUTION: &str =
    "Not a safety-rated component. Validate readings against your own acceptance limits.";

#[derive(Clone, Debug, PartialEq)]
struct Series {
    name: String,
    samples: Vec<(f64, f64)>,
}

/// A trace of readings over time: one series, an optional second series
/// on the same axis (e.g. the `f64` reference), and optional fault times
/// drawn as vertical lines in the alert colour.
///
/// Times are in seconds. The axis shows milliseconds below a 1 s span,
/// seconds up to 3 min, minutes up to 3 h, hours beyond; times far from
/// zero (more than ten spans, e.g. Unix time) are shown from the first
/// one, named in the axis label. Samples need not be sorted. A sample with
/// a non-finite time is left out and counted; a non-finite value breaks
/// the line (a gap). Every trace carries the [`CAUTION`] line.
#[derive(Clone, Debug, PartialEq)]
pub struct TracePlot {
    title: String,
    y: Quantity,
    main: Series,
    reference: Option<Series>,
    faults_s: Vec<f64>,
    width: u32,
    height: u32,
}

impl TracePlot {
    /// A trace titled `title` of readings of quantity `y`: the series
    /// `name` of `samples` (time in s, value); 900 × 420 px.
    pub fn new(
        title: impl Into<String>,
        y: Quantity,
        name: impl Into<String>,
        samples: impl IntoIterator<Item = (f64, f64)>,
    ) -> Self {
        TracePlot {
            title: title.into(),
            y,
            main: Series {
                name: name.into(),
                samples: samples.into_iter().collect(),
            },
            reference: None,
            faults_s: Vec::new(),
            width: 900,
            height: 420,
        }
    }

    /// A second series on the same axis (drawn dashed, under the first).
    pub fn reference(
        mut self,
        name: impl Into<String>,
        samples: impl IntoIterator<Item = (f64, f64)>,
    ) -> Self {
        self.reference = Some(Series {
            name: name.into(),
            samples: samples.into_iter().collect(),
        });
        self
    }

    /// Times (s) at which a fault was flagged.
    pub fn faults(mut self, times_s: impl IntoIterator<Item = f64>) -> Self {
        self.faults_s = times_s.into_iter().collect();
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
        let series: Vec<&Series> = self.reference.iter().chain([&self.main]).collect();
        let times = || {
            series
                .iter()
                .flat_map(|s| s.samples.iter().map(|p| p.0))
                .chain(self.faults_s.iter().copied())
        };
        let left_out = times().filter(|t| !plottable(*t)).count();
        let gaps = series
            .iter()
            .flat_map(|s| s.samples.iter())
            .filter(|(t, v)| plottable(*t) && !plottable(*v))
            .count();
        let span = extent(times());
        let (scale, unit, origin) = time_axis(span);
        let columns = usize::try_from(self.width)
            .unwrap_or(MAX_COLUMNS)
            .clamp(1, MAX_COLUMNS);
        let drawn: Vec<Vec<Vec<(f64, f64)>>> = series
            .iter()
            .map(|s| runs(&s.samples, columns, span, origin, scale))
            .collect();
        let decimated = series.iter().any(|s| s.samples.len() > 2 * columns);
        let ys = extent(drawn.iter().flatten().flatten().map(|p| p.1));
        let faults: Vec<f64> = self
            .faults_s
            .iter()
            .filter(|t| plottable(**t))
            .map(|t| (t - origin) / scale)
            .collect();
        let mut notes = Vec::new();
        let n = self.main.samples.len();
        let mut first = format!("{n} readings");
        if decimated {
            first.push_str(&format!(
                " · drawn as a min/max envelope over {columns} columns"
            ));
        }
        if !faults.is_empty() {
            first.push_str(&format!(" · {} faults flagged", faults.len()));
        }
        notes.push(first);
        if left_out + gaps > 0 {
            notes.push(format!(
                "{left_out} samples without a usable time left out · {gaps} values not finite (gaps)"
            ));
        }
        let mut legend = Vec::new();
        if let Some(r) = &self.reference {
            legend.push((r.name.clone(), Swatch::Dashed(series_color(1))));
        }
        legend.push((self.main.name.clone(), Swatch::Line(series_color(0))));
        if !faults.is_empty() {
            legend.push(("sensor fault flagged".to_string(), Swatch::Line(ALERT)));
        }
        if legend.len() < 2 {
            legend.clear();
        }
        let header = Header {
            title: self.title.clone(),
            notes,
            legend,
        };
        let x = if origin == 0.0 {
            Quantity::new("time", unit)
        } else {
            Quantity::new(format!("time since {origin} s"), unit)
        };
        document(self.width, self.height, &header, Some(CAUTION), |area| {
            let xr = axis_range(
                span.map(|(a, b)| ((a - origin) / scale, (b - origin) / scale)),
                0.0,
            );
            let yr = axis_range(ys, 0.06);
            let mut c = chart(area, xr, yr, &x, &self.y)?;
            if ys.is_none() {
                return no_data(&mut c, "no data");
            }
            for t in &faults {
                c.draw_series(LineSeries::new(
                    [(*t, yr.0), (*t, yr.1)],
                    ALERT.mix(0.7).stroke_width(1),
                ))?;
            }
            let n = drawn.len();
            for (i, runs) in drawn.iter().enumerate() {
                let reference = self.reference.is_some() && i + 1 < n;
                for run in runs {
                    if reference {
                        c.draw_series(DashedLineSeries::new(
                            run.iter().copied(),
                            7,
                            5,
                            series_color(1).stroke_width(2),
                        ))?;
                    } else {
                        c.draw_series(LineSeries::new(
                            run.iter().copied(),
                            series_color(0).stroke_width(1),
                        ))?;
                    }
                }
            }
            Ok(())
        })
    }
}

/// Scale (seconds per axis unit), unit name and origin of the time axis.
fn time_axis(span: Option<(f64, f64)>) -> (f64, &'static str, f64) {
    let Some((lo, hi)) = span else {
        return (1.0, "s", 0.0);
    };
    let width = hi - lo;
    let origin = if lo.abs() > 10.0 * width.max(1.0) {
        lo
    } else {
        0.0
    };
    let (scale, unit) = match width {
        w if w < 1.0 => (1e-3, "ms"),
        w if w <= 180.0 => (1.0, "s"),
        w if w <= 3.0 * 3600.0 => (60.0, "min"),
        _ => (3600.0, "h"),
    };
    (scale, unit, origin)
}

/// The lines to draw of one series, in axis units: sorted by time, split
/// at non-finite values, and decimated to a min/max envelope when it has
/// more than twice `columns` samples.
fn runs(
    samples: &[(f64, f64)],
    columns: usize,
    span: Option<(f64, f64)>,
    origin: f64,
    scale: f64,
) -> Vec<Vec<(f64, f64)>> {
    let mut s: Vec<(f64, f64)> = samples.iter().copied().filter(|p| plottable(p.0)).collect();
    s.sort_by(|a, b| a.0.total_cmp(&b.0));
    let to_axis = |(t, v): (f64, f64)| ((t - origin) / scale, v);
    let mut out: Vec<Vec<(f64, f64)>> = vec![Vec::new()];
    let mut push = |p: Option<(f64, f64)>| match (p, out.last_mut()) {
        (Some(p), Some(run)) => run.push(to_axis(p)),
        (None, Some(run)) if !run.is_empty() => out.push(Vec::new()),
        _ => {}
    };
    if s.len() <= 2 * columns {
        for p in s {
            push(plottable(p.1).then_some(p));
        }
    } else {
        let (lo, hi) = span.unwrap_or((0.0, 1.0));
        let width = (hi - lo).max(f64::MIN_POSITIVE);
        let column = |t: f64| {
            // In 0 … columns − 1 by the clamp: exact.
            (((t - lo) / width) * columns as f64)
                .floor()
                .clamp(0.0, (columns - 1) as f64) as usize
        };
        let mut i = 0;
        while i < s.len() {
            let col = column(s[i].0);
            let mut lo_p: Option<(f64, f64)> = None;
            let mut hi_p: Option<(f64, f64)> = None;
            let mut gap = false;
            while i < s.len() && column(s[i].0) == col {
                let p = s[i];
                if plottable(p.1) {
                    if lo_p.is_none_or(|q| p.1 < q.1) {
                        lo_p = Some(p);
                    }
                    if hi_p.is_none_or(|q| p.1 > q.1) {
                        hi_p = Some(p);
                    }
                } else {
                    gap = true;
                }
                i += 1;
            }
            match (lo_p, hi_p) {
                (Some(a), Some(b)) if a.0 <= b.0 => {
                    push(Some(a));
                    push(Some(b));
                }
                (Some(a), Some(b)) => {
                    push(Some(b));
                    push(Some(a));
                }
                _ => {}
            }
            if gap {
                push(None);
            }
        }
    }
    out.retain(|r| !r.is_empty());
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A one-sample spike survives decimation, and the envelope holds at
    /// most two points per column.
    #[test]
    fn envelope_keeps_extremes() {
        let samples: Vec<(f64, f64)> = (0..100_000)
            .map(|i| (f64::from(i) * 0.1, if i == 77_777 { 1e3 } else { 1.0 }))
            .collect();
        let span = Some((0.0, 9_999.9));
        let points: Vec<(f64, f64)> = runs(&samples, 500, span, 0.0, 1.0)
            .into_iter()
            .flatten()
            .collect();
        assert!(points.len() <= 1000);
        assert!(points
            .iter()
            .any(|p| p.1 == 1e3 && (p.0 - 7_777.7).abs() < 1e-6));
        let gap = [(0.0, 1.0), (1.0, f64::NAN), (2.0, 1.0)];
        assert_eq!(runs(&gap, 500, Some((0.0, 2.0)), 0.0, 1.0).len(), 2);
    }
}
