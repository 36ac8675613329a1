//! Calibration curves: line series and measured points, with an optional
//! residual panel below sharing the x axis.

use super::frame::{
    self, draw_markers, left_room, x_ticks, y_ticks, Key, LegendEntry, Page, Panel, Shape,
};
use super::palette;
use super::xml::{fmt_value, PathData, Pen};
use super::Quantity;

/// Dash patterns of line series, in order of use (solid first), so lines
/// stay apart in grey print too; with the six colours this gives 18
/// distinct lines before one repeats.
const DASHES: [Option<&str>; 3] = [None, Some("8 4"), Some("2 3")];
/// Gap between the curve panel and the residual panel, px.
const PANEL_GAP: f64 = 14.0;
/// Share of the panel height the curve panel gets when residuals are shown.
const CURVE_SHARE: f64 = 0.66;

/// A named series of (x, y) points.
#[derive(Clone, Debug, PartialEq)]
struct Series {
    name: String,
    points: Vec<(f64, f64)>,
}

/// The residual panel's content.
#[derive(Clone, Debug, PartialEq)]
struct Residuals {
    y: Quantity,
    points: Vec<(f64, f64)>,
    band: Option<f64>,
}

/// A calibration curve plot: one or more named line series (e.g. the
/// fitted curve), named sets of measured points (e.g. rig points), and an
/// optional residual panel below with a ± band.
///
/// Lines join their points in the order given; a non-finite point breaks
/// the line there. Non-finite points are counted in a note. Points in the
/// residual panel outside the band are drawn as crosses in the alert
/// colour and counted in a note.
#[derive(Clone, Debug, PartialEq)]
pub struct CurvePlot {
    title: String,
    x: Quantity,
    y: Quantity,
    lines: Vec<Series>,
    points: Vec<Series>,
    residuals: Option<Residuals>,
    width: u32,
    height: u32,
}

impl CurvePlot {
    /// An empty plot titled `title` with axes of quantities `x` and `y`;
    /// 720 × 480 px, or 720 × 600 px once residuals are added.
    pub fn new(title: impl Into<String>, x: Quantity, y: Quantity) -> Self {
        CurvePlot {
            title: title.into(),
            x,
            y,
            lines: Vec::new(),
            points: Vec::new(),
            residuals: None,
            width: 720,
            height: 480,
        }
    }

    /// Adds a line series named `name` through `points` (x, y).
    pub fn line(
        mut self,
        name: impl Into<String>,
        points: impl IntoIterator<Item = (f64, f64)>,
    ) -> Self {
        self.lines.push(Series {
            name: name.into(),
            points: points.into_iter().collect(),
        });
        self
    }

    /// Adds a set of measured points named `name`, drawn as open markers.
    pub fn points(
        mut self,
        name: impl Into<String>,
        points: impl IntoIterator<Item = (f64, f64)>,
    ) -> Self {
        self.points.push(Series {
            name: name.into(),
            points: points.into_iter().collect(),
        });
        self
    }

    /// Adds the residual panel: `points` (x, residual) on a y axis of
    /// quantity `y`, with an optional band ±`band` (its magnitude is used;
    /// a zero or non-finite band is not drawn). Replaces earlier residuals
    /// and, if the height was not set since, grows the page to 600 px.
    pub fn residuals(
        mut self,
        y: Quantity,
        points: impl IntoIterator<Item = (f64, f64)>,
        band: Option<f64>,
    ) -> Self {
        if self.residuals.is_none() && self.height == 480 {
            self.height = 600;
        }
        self.residuals = Some(Residuals {
            y,
            points: points.into_iter().collect(),
            band,
        });
        self
    }

    /// Page size in px (clamped to 240..=4000 × 180..=4000).
    pub fn size(mut self, width_px: u32, height_px: u32) -> Self {
        self.width = width_px;
        self.height = height_px;
        self
    }

    /// The SVG document.
    pub fn render(&self) -> String {
        let finite = |p: &&(f64, f64)| p.0.is_finite() && p.1.is_finite();
        let curve_points = || {
            self.lines
                .iter()
                .chain(&self.points)
                .flat_map(|s| &s.points)
        };
        let residual_points = || self.residuals.iter().flat_map(|r| &r.points);
        let band = self
            .residuals
            .as_ref()
            .and_then(|r| r.band)
            .map(f64::abs)
            .filter(|b| b.is_finite() && *b > 0.0);

        let mut page = Page::new(self.width, self.height, &self.title);
        let total = curve_points().count() + residual_points().count();
        let dropped = total
            - curve_points().filter(finite).count()
            - residual_points().filter(finite).count();
        if let Some(r) = &self.residuals {
            let shown: Vec<f64> = r.points.iter().filter(finite).map(|p| p.1).collect();
            let unit = r.y.unit.trim();
            let note = match band {
                Some(b) => format!(
                    "residuals: {} of {} outside ±{} {unit}",
                    shown.iter().filter(|v| v.abs() > b).count(),
                    shown.len(),
                    fmt_value(b, 4)
                ),
                None => {
                    let worst = shown.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
                    format!(
                        "residuals: {} points, largest magnitude {} {unit}",
                        shown.len(),
                        fmt_value(worst, 4)
                    )
                }
            };
            page.note(note.trim_end());
        }
        if dropped > 0 {
            page.note(&format!(
                "{dropped} non-finite point{} not drawn",
                if dropped == 1 { "" } else { "s" }
            ));
        }
        page.legend(&self.legend_entries(band));
        page.space(10.0);

        let xs = curve_points()
            .chain(residual_points())
            .filter(finite)
            .map(|p| p.0);
        let (x_lo, x_hi) = extent(xs).unwrap_or((0.0, 1.0));
        let (y_lo, y_hi) = extent(curve_points().filter(finite).map(|p| p.1)).unwrap_or((0.0, 1.0));
        let avail = page.room_below(frame::X_AXIS_ROOM + frame::MARGIN);
        let (curve_h, residual_h) = if self.residuals.is_some() {
            let h = (avail - PANEL_GAP).max(80.0);
            (h * CURVE_SHARE, h * (1.0 - CURVE_SHARE))
        } else {
            (avail, 0.0)
        };
        let curve_y = y_ticks(y_lo, y_hi, curve_h);
        let residual_y = self.residuals.as_ref().map(|r| {
            let rs = r.points.iter().filter(finite).map(|p| p.1);
            // The band edges a quarter band inside the axis, not on the frame.
            let b = band.unwrap_or(0.0) * 1.25;
            let (lo, hi) = extent(rs.chain([0.0, -b, b])).unwrap_or((-1.0, 1.0));
            y_ticks(lo, hi, residual_h)
        });
        let mut axes = vec![&curve_y];
        axes.extend(residual_y.as_ref());
        let left = left_room(&axes);
        let width = (page.width - left - frame::RIGHT).max(40.0);
        let x = x_ticks(x_lo, x_hi, width);

        let curve = Panel {
            left,
            top: page.y,
            width,
            height: curve_h,
            x: x.clone(),
            y: curve_y,
        };
        curve.grid(&mut page.svg);
        self.draw_series(&mut page, &curve);
        if total == 0 {
            curve.message(&mut page.svg, "no data");
        }
        let x_label = self.x.label();
        let Some((r, residual_y)) = self.residuals.as_ref().zip(residual_y) else {
            curve.axes(&mut page.svg, Some(&x_label), &self.y.label());
            return page.finish();
        };
        curve.axes(&mut page.svg, None, &self.y.label());

        let panel = Panel {
            left,
            top: curve.bottom() + PANEL_GAP,
            width,
            height: residual_h,
            x,
            y: residual_y,
        };
        panel.grid(&mut page.svg);
        if let Some(b) = band {
            let (top, bottom) = (panel.py(b), panel.py(-b));
            page.svg.rect(
                (panel.left, top),
                (panel.width, bottom - top),
                palette::BAND,
                None,
            );
            let pen = Pen::dashed(palette::ALERT, 1.0, "5 3");
            for y in [top, bottom] {
                page.svg.line((panel.left, y), (panel.right(), y), pen);
            }
        }
        let zero = panel.py(0.0);
        page.svg.line(
            (panel.left, zero),
            (panel.right(), zero),
            Pen::solid(palette::AXIS, 1.0),
        );
        let (mut inside, mut outside) = (PathData::new(), PathData::new());
        for &(px, py) in r.points.iter().filter(finite) {
            let (cx, cy) = (panel.px(px), panel.py(py));
            match band {
                Some(b) if py.abs() > b => Shape::Cross.add(&mut outside, cx, cy, 3.5),
                _ => Shape::Circle.add(&mut inside, cx, cy, 3.5),
            }
        }
        draw_markers(
            &mut page.svg,
            &inside.finish(),
            Shape::Circle,
            palette::TEXT,
            false,
        );
        draw_markers(
            &mut page.svg,
            &outside.finish(),
            Shape::Cross,
            palette::ALERT,
            false,
        );
        panel.axes(&mut page.svg, Some(&x_label), &r.y.label());
        page.finish()
    }

    /// Line series, then point sets on top.
    fn draw_series(&self, page: &mut Page, panel: &Panel) {
        for (i, s) in self.lines.iter().enumerate() {
            let mut path = PathData::new();
            for &(x, y) in &s.points {
                if x.is_finite() && y.is_finite() {
                    path.line_to(panel.px(x), panel.py(y));
                } else {
                    path.lift();
                }
            }
            page.svg.path(&path.finish(), Some(line_pen(i)), None);
        }
        for (i, s) in self.points.iter().enumerate() {
            let (shape, color) = self.point_style(i);
            let mut path = PathData::new();
            for &(x, y) in s
                .points
                .iter()
                .filter(|p| p.0.is_finite() && p.1.is_finite())
            {
                shape.add(&mut path, panel.px(x), panel.py(y), 4.0);
            }
            draw_markers(&mut page.svg, &path.finish(), shape, color, true);
        }
    }

    /// Marker shape and colour of point set `i` (colours continue after
    /// the lines').
    fn point_style(&self, i: usize) -> (Shape, &'static str) {
        (
            Shape::SERIES[i % Shape::SERIES.len()],
            palette::series(self.lines.len() + i),
        )
    }

    fn legend_entries(&self, band: Option<f64>) -> Vec<LegendEntry> {
        let mut entries: Vec<LegendEntry> = self
            .lines
            .iter()
            .enumerate()
            .map(|(i, s)| LegendEntry {
                name: s.name.clone(),
                key: Key::Line(line_pen(i)),
            })
            .collect();
        for (i, s) in self.points.iter().enumerate() {
            let (shape, color) = self.point_style(i);
            entries.push(LegendEntry {
                name: s.name.clone(),
                key: Key::Marker {
                    shape,
                    color,
                    open: true,
                },
            });
        }
        let outside = |r: &Residuals, b: f64| {
            r.points
                .iter()
                .any(|p| p.0.is_finite() && p.1.is_finite() && p.1.abs() > b)
        };
        if let Some((r, b)) = self
            .residuals
            .as_ref()
            .zip(band)
            .filter(|(r, b)| outside(r, *b))
        {
            let unit = r.y.unit.trim();
            entries.push(LegendEntry {
                name: format!("residual outside ±{} {unit}", fmt_value(b, 4))
                    .trim_end()
                    .to_string(),
                key: Key::Marker {
                    shape: Shape::Cross,
                    color: palette::ALERT,
                    open: false,
                },
            });
        }
        entries
    }
}

/// The pen of line series `i`.
fn line_pen(i: usize) -> Pen {
    Pen {
        color: palette::series(i),
        width: 2.0,
        dash: DASHES[(i + i / palette::SERIES.len()) % DASHES.len()],
    }
}

/// Smallest and largest of finite values; `None` if there are none.
pub(crate) fn extent(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    values
        .filter(|v| v.is_finite())
        .fold(None, |acc, v| match acc {
            None => Some((v, v)),
            Some((lo, hi)) => Some((f64::min(lo, v), f64::max(hi, v))),
        })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::svg::check::assert_clean_svg;

    fn q(name: &str, unit: &str) -> Quantity {
        Quantity::new(name, unit)
    }

    type Points = Vec<(f64, f64)>;

    /// A smooth test curve, points slightly off it, and their residuals.
    fn curve() -> (Points, Points, Points) {
        let line: Vec<(f64, f64)> = (0..=50)
            .map(|i| {
                let x = f64::from(i) * 0.2;
                (x, 1000.0 / (1.0 + x))
            })
            .collect();
        let pts: Vec<(f64, f64)> = (0..=10)
            .map(|i| {
                let x = f64::from(i);
                let r = f64::from(i % 3) - 1.0;
                (x, 1000.0 / (1.0 + x) + r)
            })
            .collect();
        let res = pts
            .iter()
            .map(|&(x, y)| (x, y - 1000.0 / (1.0 + x)))
            .collect();
        (line, pts, res)
    }

    #[test]
    fn renders_lines_points_and_residuals() {
        let (line, pts, res) = curve();
        let svg = CurvePlot::new("Unit 3 & curve", q("distance", "mm"), q("shift", "ppm"))
            .line("fit", line)
            .points("rig points", pts)
            .residuals(q("residual", "ppm"), res, Some(0.5))
            .render();
        assert_clean_svg(&svg);
        assert!(svg.contains("Unit 3 &amp; curve"));
        assert!(svg.contains("distance (mm)"));
        assert!(svg.contains("residual (ppm)"));
        assert!(svg.contains("residuals: 7 of 11 outside ±0.5 ppm"));
        assert!(svg.contains("rig points"));
        assert!(svg.contains("height=\"600\""));
    }

    #[test]
    fn breaks_lines_at_non_finite_points() {
        let pts = [
            (0.0, 0.0),
            (1.0, 1.0),
            (f64::NAN, 2.0),
            (3.0, 3.0),
            (4.0, 4.0),
        ];
        let svg = CurvePlot::new("t", q("x", ""), q("y", ""))
            .line("l", pts)
            .render();
        assert_clean_svg(&svg);
        let d = svg.split("<path d=\"").nth(1).unwrap();
        let d = &d[..d.find('"').unwrap()];
        assert_eq!(d.matches('M').count(), 2, "{d}");
        assert!(svg.contains("1 non-finite point not drawn"));
    }

    #[test]
    fn degenerate_inputs_render() {
        let empty = CurvePlot::new("empty", q("x", "mm"), q("y", "ppm")).render();
        assert_clean_svg(&empty);
        assert!(empty.contains("no data"));
        let one = CurvePlot::new("one", q("x", "mm"), q("y", "ppm"))
            .points("p", [(1.0, 1.0)])
            .residuals(q("r", "ppm"), [(1.0, 0.0)], Some(f64::NAN))
            .render();
        assert_clean_svg(&one);
        let flat = CurvePlot::new("flat", q("x", "mm"), q("y", "ppm"))
            .line("l", [(2.0, 5.0), (2.0, 5.0)])
            .residuals(q("r", "ppm"), [], Some(-0.1))
            .size(240, 180)
            .render();
        assert_clean_svg(&flat);
        let huge = CurvePlot::new("huge", q("x", "mm"), q("y", "ppm"))
            .line(
                "l",
                [
                    (-f64::MAX, f64::MAX),
                    (f64::MAX, -f64::MAX),
                    (f64::INFINITY, 0.0),
                ],
            )
            .render();
        assert_clean_svg(&huge);
    }

    #[test]
    fn extent_skips_non_finite() {
        assert_eq!(
            extent([f64::NAN, 3.0, -1.0, f64::INFINITY].into_iter()),
            Some((-1.0, 3.0))
        );
        assert_eq!(extent([f64::NAN].into_iter()), None);
    }
}
