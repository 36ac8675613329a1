//! Line and point series over two linear axes, with optional horizontal
//! limit lines: a unit's curve, its residuals, its drift model.

use super::draw::{
    axis_range, chart, document, draw_markers, extent, no_data, plottable, series_color, Header,
    Swatch, ALERT,
};
use super::Quantity;
use plotters::prelude::*;

#[derive(Clone, Copy, Debug, PartialEq)]
enum Kind {
    Line,
    Dashed,
    Points,
}

#[derive(Clone, Debug, PartialEq)]
struct Series {
    name: String,
    kind: Kind,
    runs: Vec<Vec<(f64, f64)>>,
}

/// Line and point series of `y` against `x`, each named in the legend
/// (shown from two entries on), with optional pairs of horizontal limit
/// lines (e.g. ± the residual limit). Lines are drawn in the order given,
/// as given (sort them by x); a point that cannot be plotted (not finite,
/// beyond ±10¹⁵) breaks a line there and is counted in a note. Point
/// series differ in colour and marker shape, lines in colour and dash,
/// so a grey print stays readable.
#[derive(Clone, Debug, PartialEq)]
pub struct XyPlot {
    title: String,
    x: Quantity,
    y: Quantity,
    series: Vec<Series>,
    limits: Vec<(String, Vec<f64>)>,
    notes: Vec<String>,
    width: u32,
    height: u32,
}

impl XyPlot {
    /// A plot titled `title` of `y` against `x`; 760 × 440 px.
    pub fn new(title: impl Into<String>, x: Quantity, y: Quantity) -> Self {
        XyPlot {
            title: title.into(),
            x,
            y,
            series: Vec::new(),
            limits: Vec::new(),
            notes: Vec::new(),
            width: 760,
            height: 440,
        }
    }

    fn add(
        mut self,
        name: impl Into<String>,
        kind: Kind,
        p: impl IntoIterator<Item = (f64, f64)>,
    ) -> Self {
        self.series.push(Series {
            name: name.into(),
            kind,
            runs: vec![p.into_iter().collect()],
        });
        self
    }

    /// Two dashed lines under one legend entry (e.g. a ± band around a
    /// line).
    pub fn dashed_pair(
        mut self,
        name: impl Into<String>,
        upper: impl IntoIterator<Item = (f64, f64)>,
        lower: impl IntoIterator<Item = (f64, f64)>,
    ) -> Self {
        self.series.push(Series {
            name: name.into(),
            kind: Kind::Dashed,
            runs: vec![upper.into_iter().collect(), lower.into_iter().collect()],
        });
        self
    }

    /// A solid line through `points`.
    pub fn line(
        self,
        name: impl Into<String>,
        points: impl IntoIterator<Item = (f64, f64)>,
    ) -> Self {
        self.add(name, Kind::Line, points)
    }

    /// A dashed line through `points`.
    pub fn dashed(
        self,
        name: impl Into<String>,
        points: impl IntoIterator<Item = (f64, f64)>,
    ) -> Self {
        self.add(name, Kind::Dashed, points)
    }

    /// Markers at `points`.
    pub fn points(
        self,
        name: impl Into<String>,
        points: impl IntoIterator<Item = (f64, f64)>,
    ) -> Self {
        self.add(name, Kind::Points, points)
    }

    /// Horizontal limit lines at `values` (e.g. −8 and +8), one legend
    /// entry `name`; the y axis is widened to show them.
    pub fn limit_lines(
        mut self,
        name: impl Into<String>,
        values: impl IntoIterator<Item = f64>,
    ) -> Self {
        let v: Vec<f64> = values.into_iter().filter(|v| plottable(*v)).collect();
        if !v.is_empty() {
            self.limits.push((name.into(), v));
        }
        self
    }

    /// A note line under the title.
    pub fn note(mut self, text: impl Into<String>) -> Self {
        self.notes.push(text.into());
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
        let all = || self.series.iter().flat_map(|s| s.runs.iter().flatten());
        let left_out = all()
            .filter(|(x, y)| !(plottable(*x) && plottable(*y)))
            .count();
        let good = || all().filter(|(x, y)| plottable(*x) && plottable(*y));
        let xs = extent(good().map(|p| p.0));
        let ys = extent(
            good()
                .map(|p| p.1)
                .chain(self.limits.iter().flat_map(|l| l.1.iter().copied())),
        );
        let has_data = xs.is_some();
        let mut notes = self.notes.clone();
        if left_out > 0 {
            notes.push(format!(
                "{left_out} points not finite or too large: left out"
            ));
        }
        let mut legend = Vec::new();
        let (mut lines, mut markers) = (0, 0);
        for s in &self.series {
            let sw = match s.kind {
                Kind::Line => Swatch::Line(series_color(lines)),
                Kind::Dashed => Swatch::Dashed(series_color(lines)),
                Kind::Points => Swatch::Marker(series_color(markers + 1), markers),
            };
            match s.kind {
                Kind::Points => markers += 1,
                _ => lines += 1,
            }
            legend.push((s.name.clone(), sw));
        }
        for (name, _) in &self.limits {
            legend.push((name.clone(), Swatch::Dashed(ALERT)));
        }
        if legend.len() < 2 {
            legend.clear();
        }
        let header = Header {
            title: self.title.clone(),
            notes,
            legend,
        };
        document(self.width, self.height, &header, None, |area| {
            let xr = axis_range(xs, 0.03);
            let yr = axis_range(ys, 0.06);
            let mut c = chart(area, xr, yr, &self.x, &self.y)?;
            if !has_data {
                return no_data(&mut c, "no data");
            }
            let (mut lines, mut markers) = (0, 0);
            for s in &self.series {
                match s.kind {
                    Kind::Line | Kind::Dashed => {
                        let color = series_color(lines);
                        lines += 1;
                        for run in s.runs.iter().flat_map(|r| {
                            r.split(|(x, y)| !(plottable(*x) && plottable(*y)))
                                .filter(|r| !r.is_empty())
                        }) {
                            if s.kind == Kind::Line {
                                c.draw_series(LineSeries::new(
                                    run.iter().copied(),
                                    color.stroke_width(2),
                                ))?;
                            } else {
                                c.draw_series(DashedLineSeries::new(
                                    run.iter().copied(),
                                    7,
                                    5,
                                    color.stroke_width(2),
                                ))?;
                            }
                        }
                    }
                    Kind::Points => {
                        let (color, shape) = (series_color(markers + 1), markers);
                        markers += 1;
                        draw_markers(
                            &mut c,
                            s.runs
                                .iter()
                                .flatten()
                                .copied()
                                .filter(|(x, y)| plottable(*x) && plottable(*y)),
                            shape,
                            color,
                        )?;
                    }
                }
            }
            for (_, values) in &self.limits {
                for v in values {
                    c.draw_series(DashedLineSeries::new(
                        [(xr.0, *v), (xr.1, *v)],
                        7,
                        5,
                        ALERT.stroke_width(2),
                    ))?;
                }
            }
            Ok(())
        })
    }
}
