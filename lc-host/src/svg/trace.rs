//! Reading-versus-time traces, decimated to a min/max envelope per pixel
//! column so that millions of samples give a small file.

use super::curve::extent;
use super::frame::{
    self, draw_markers, left_room, x_ticks, y_ticks, Key, LegendEntry, Page, Panel, Shape,
};
use super::palette;
use super::xml::{count_f64, fmt_value, text_width, PathData, Pen};
use super::Quantity;

/// Most pixel columns a trace is decimated to. A series with more than
/// twice as many samples as the plot area has columns (its width in px,
/// at most this) is drawn as a min/max envelope: per column, the smallest
/// and largest value, in the order they occurred, joined column to column.
/// The path then holds at most two points per column, whatever the
/// number of samples.
pub const MAX_COLUMNS: usize = 2000;

/// The caution printed under every trace (see README: Cautions); on a
/// page too narrow for it, only its first sentence.
pub const CAUTION: &str =
    "Not a safety-rated component. Validate readings against your own acceptance limits.";

/// Room for the caution line, px.
const FOOTER_ROOM: f64 = 14.0;
/// Height of the fault-marker rail above the plot area, px.
const RAIL: f64 = 14.0;

/// A named series of (time in s, value) samples.
#[derive(Clone, Debug, PartialEq)]
struct Series {
    name: String,
    samples: Vec<(f64, f64)>,
}

/// A trace of readings over time: one series, an optional second series on
/// the same axis (e.g. the `f64` reference), and optional fault markers.
///
/// Times are in seconds. The axis shows seconds, or milliseconds below a
/// 1 s span, minutes from a 3 min span, hours from a 3 h span; if the
/// times sit far from zero (more than ten spans away, e.g. Unix time) they
/// are shown from the first one, named in the axis label.
///
/// Samples need not be sorted (they are sorted by time for drawing). A
/// sample with a non-finite time is left out and counted in a note; a
/// non-finite value breaks the line there (a gap) and is counted. Fault
/// times are drawn as downward triangles in the alert colour on a rail
/// above the plot area, at most one per pixel column. Series with many
/// samples are decimated, see [`MAX_COLUMNS`]. Every trace carries the
/// [`CAUTION`] line.
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

    /// Adds a second series `name` of `samples` (time in s, value), drawn
    /// dashed beneath the first.
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

    /// Times (s) at which a fault occurred, e.g. rows the fault window
    /// rejected; non-finite times are ignored.
    pub fn faults(mut self, times_s: impl IntoIterator<Item = f64>) -> Self {
        self.faults_s.extend(times_s);
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
        let main = Prepared::new(&self.main.samples);
        let reference = self.reference.as_ref().map(|r| Prepared::new(&r.samples));
        let faults: Vec<f64> = self
            .faults_s
            .iter()
            .copied()
            .filter(|t| t.is_finite())
            .collect();
        let all = || {
            main.samples
                .iter()
                .chain(reference.iter().flat_map(|r| &r.samples))
        };
        let time = TimeAxis::new(extent(all().map(|s| s.0).chain(faults.iter().copied())));
        let values = extent(all().map(|s| s.1));
        let (v_lo, v_hi) = values.unwrap_or((0.0, 1.0));

        let mut page = Page::new(self.width, self.height, &self.title);
        let bottom = frame::X_AXIS_ROOM + frame::MARGIN + FOOTER_ROOM;
        // The plot width decides the decimation, which the notes describe,
        // so lay out the y axis on a provisional height first (the left
        // margin depends on the tick labels only).
        let provisional = y_ticks(v_lo, v_hi, page.room_below(bottom));
        let left = left_room(&[&provisional]);
        let width = (page.width - left - frame::RIGHT).max(40.0);
        // `width` is at least 40 and clamped to MAX_COLUMNS before the
        // cast, which then truncates a positive whole number exactly.
        let columns = width.floor().clamp(1.0, count_f64(MAX_COLUMNS)) as usize;

        let mut summary = match main.samples.len() {
            0 => "no samples".to_string(),
            1 => "1 sample".to_string(),
            n => format!("{n} samples"),
        };
        if let (Some(span), false) = (time.span_text(), main.samples.is_empty()) {
            summary.push_str(&format!(" over {span}"));
        }
        let decimated = [Some(&main), reference.as_ref()]
            .into_iter()
            .flatten()
            .any(|p| p.samples.len() > 2 * columns);
        if decimated {
            summary.push_str(&format!(
                " · drawn as min/max envelope in {columns} columns"
            ));
        }
        page.note(&summary);
        let gaps = main.gaps + reference.as_ref().map_or(0, |r| r.gaps);
        let untimed = main.untimed + reference.as_ref().map_or(0, |r| r.untimed);
        let mut issues = Vec::new();
        if gaps > 0 {
            issues.push(format!(
                "{gaps} non-finite value{} drawn as gaps",
                plural(gaps)
            ));
        }
        if untimed > 0 {
            issues.push(format!(
                "{untimed} sample{} without a finite time ignored",
                plural(untimed)
            ));
        }
        if !issues.is_empty() {
            page.note(&issues.join(" · "));
        }
        page.legend(&self.legend_entries(faults.len()));
        page.space(if faults.is_empty() { 10.0 } else { 10.0 + RAIL });

        let height = page.room_below(bottom);
        let y = y_ticks(v_lo, v_hi, height);
        let x = x_ticks(time.lo, time.hi, width);
        let panel = Panel {
            left,
            top: page.y,
            width,
            height,
            x,
            y,
        };
        panel.grid(&mut page.svg);
        if let Some(prepared) = &reference {
            let d = trace_path(&prepared.samples, &panel, &time, columns);
            page.svg.path(&d, Some(reference_pen()), None);
        }
        let d = trace_path(&main.samples, &panel, &time, columns);
        page.svg.path(&d, Some(main_pen()), None);
        if values.is_none() {
            panel.message(&mut page.svg, "no data");
        }
        if !faults.is_empty() {
            let mut marks = PathData::new();
            let mut drawn = vec![false; columns];
            for &t in &faults {
                let c = column_of(panel.px(time.map(t)), &panel, columns);
                if !std::mem::replace(&mut drawn[c], true) {
                    let cx = column_centre(c, &panel, columns);
                    Shape::TriangleDown.add(&mut marks, cx, panel.top - RAIL / 2.0, 4.5);
                }
            }
            draw_markers(
                &mut page.svg,
                &marks.finish(),
                Shape::TriangleDown,
                palette::ALERT,
                false,
            );
        }
        panel.axes(&mut page.svg, Some(&time.label()), &self.y.label());
        let room = page.width - 2.0 * frame::MARGIN;
        let caution = if text_width(CAUTION, frame::FOOTER_SIZE) <= room {
            CAUTION
        } else {
            CAUTION
                .split_inclusive(". ")
                .next()
                .unwrap_or(CAUTION)
                .trim_end()
        };
        page.footer(caution);
        page.finish()
    }

    fn legend_entries(&self, faults: usize) -> Vec<LegendEntry> {
        let mut entries = vec![LegendEntry {
            name: self.main.name.clone(),
            key: Key::Line(main_pen()),
        }];
        if let Some(r) = &self.reference {
            entries.push(LegendEntry {
                name: r.name.clone(),
                key: Key::Line(reference_pen()),
            });
        }
        if faults > 0 {
            entries.push(LegendEntry {
                name: format!("fault ({faults})"),
                key: Key::Marker {
                    shape: Shape::TriangleDown,
                    color: palette::ALERT,
                    open: false,
                },
            });
        }
        entries
    }
}

fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}

fn main_pen() -> Pen {
    Pen::solid(palette::series(0), 1.4)
}

fn reference_pen() -> Pen {
    Pen::dashed(palette::series(1), 1.4, "6 3")
}

/// Samples with a finite time, sorted by time, and what was set aside.
struct Prepared {
    samples: Vec<(f64, f64)>,
    untimed: usize,
    gaps: usize,
}

impl Prepared {
    fn new(samples: &[(f64, f64)]) -> Self {
        let mut kept: Vec<(f64, f64)> = samples
            .iter()
            .copied()
            .filter(|s| s.0.is_finite())
            .collect();
        if !kept.windows(2).all(|w| w[0].0 <= w[1].0) {
            kept.sort_by(|a, b| a.0.total_cmp(&b.0));
        }
        let gaps = kept.iter().filter(|s| !s.1.is_finite()).count();
        Prepared {
            untimed: samples.len() - kept.len(),
            gaps,
            samples: kept,
        }
    }
}

/// How times are shown: unit, scale and origin.
struct TimeAxis {
    unit: &'static str,
    /// Display units per second.
    scale: f64,
    /// Time (s) shown as zero.
    origin_s: f64,
    /// Axis range in display units.
    lo: f64,
    hi: f64,
    /// Span in seconds, if there is data.
    span_s: Option<f64>,
}

impl TimeAxis {
    fn new(extent_s: Option<(f64, f64)>) -> Self {
        let Some((lo, hi)) = extent_s else {
            return TimeAxis {
                unit: "s",
                scale: 1.0,
                origin_s: 0.0,
                lo: 0.0,
                hi: 1.0,
                span_s: None,
            };
        };
        let span = (hi * 0.5 - lo * 0.5) * 2.0;
        let (unit, scale) = if span >= 3.0 * 3600.0 {
            ("h", 1.0 / 3600.0)
        } else if span >= 180.0 {
            ("min", 1.0 / 60.0)
        } else if span > 0.0 && span < 1.0 {
            ("ms", 1000.0)
        } else {
            ("s", 1.0)
        };
        let origin_s = if span > 0.0 && span.is_finite() && lo.abs() > 10.0 * span {
            lo
        } else {
            0.0
        };
        let mut axis = TimeAxis {
            unit,
            scale,
            origin_s,
            lo: 0.0,
            hi: 0.0,
            span_s: Some(span),
        };
        axis.lo = axis.map(lo);
        axis.hi = axis.map(hi);
        axis
    }

    /// A time in seconds in display units.
    fn map(&self, t_s: f64) -> f64 {
        let v = (t_s - self.origin_s) * self.scale;
        if v.is_finite() {
            v
        } else {
            // Only at the ends of the f64 range: keep the sign, stay finite.
            f64::MAX.copysign(t_s)
        }
    }

    fn label(&self) -> String {
        if self.origin_s == 0.0 {
            format!("time ({})", self.unit)
        } else {
            format!(
                "time ({}) from {} s",
                self.unit,
                fmt_value(self.origin_s, 12)
            )
        }
    }

    /// "2.5 h" etc.
    fn span_text(&self) -> Option<String> {
        let span = self.span_s?;
        Some(format!("{} {}", fmt_value(span * self.scale, 4), self.unit))
    }
}

/// Pixel column of a horizontal position.
fn column_of(px: f64, panel: &Panel, columns: usize) -> usize {
    let f = ((px - panel.left) / panel.width).clamp(0.0, 1.0) * count_f64(columns);
    // Clamped to 0..=columns first, so the truncating cast is exact after
    // floor; the last edge joins the last column.
    (f.floor() as usize).min(columns - 1)
}

/// Horizontal centre of column `c`, px.
fn column_centre(c: usize, panel: &Panel, columns: usize) -> f64 {
    panel.left + (count_f64(c) + 0.5) * panel.width / count_f64(columns)
}

/// Path data of one series: every sample when there are at most two per
/// column, else the min/max envelope per column.
fn trace_path(samples: &[(f64, f64)], panel: &Panel, time: &TimeAxis, columns: usize) -> String {
    let mut path = PathData::new();
    if samples.len() <= 2 * columns {
        for &(t, v) in samples {
            if v.is_finite() {
                path.line_to(panel.px(time.map(t)), panel.py(v));
            } else {
                path.lift();
            }
        }
        return path.finish();
    }
    let mut current: Option<Column> = None;
    for (i, &(t, v)) in samples.iter().enumerate() {
        if !v.is_finite() {
            if let Some(c) = current.take() {
                c.emit(&mut path, panel, columns);
            }
            path.lift();
            continue;
        }
        let col = column_of(panel.px(time.map(t)), panel, columns);
        match current.as_mut() {
            Some(c) if c.index == col => c.add(i, v),
            _ => {
                if let Some(c) = current.take() {
                    c.emit(&mut path, panel, columns);
                }
                current = Some(Column::new(col, i, v));
            }
        }
    }
    if let Some(c) = current {
        c.emit(&mut path, panel, columns);
    }
    path.finish()
}

/// The extremes of one pixel column: (sample index, value).
struct Column {
    index: usize,
    min: (usize, f64),
    max: (usize, f64),
}

impl Column {
    fn new(index: usize, i: usize, v: f64) -> Self {
        Column {
            index,
            min: (i, v),
            max: (i, v),
        }
    }

    fn add(&mut self, i: usize, v: f64) {
        if v < self.min.1 {
            self.min = (i, v);
        }
        if v > self.max.1 {
            self.max = (i, v);
        }
    }

    /// The extremes in the order they occurred.
    fn emit(&self, path: &mut PathData, panel: &Panel, columns: usize) {
        let x = column_centre(self.index, panel, columns);
        let (first, second) = if self.min.0 <= self.max.0 {
            (self.min, self.max)
        } else {
            (self.max, self.min)
        };
        path.line_to(x, panel.py(first.1));
        if second.0 != first.0 {
            path.line_to(x, panel.py(second.1));
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::svg::check::assert_clean_svg;

    fn q() -> Quantity {
        Quantity::new("shift", "ppm")
    }

    /// A slow drift with a fast ripple, n samples at `dt` s.
    fn drift(n: usize, dt: f64) -> impl Iterator<Item = (f64, f64)> {
        (0..n).map(move |i| {
            let t = count_f64(i) * dt;
            (t, -800.0 + 0.002 * t + (t * 7.0).sin() * 0.3)
        })
    }

    #[test]
    fn million_points_stay_small() {
        let svg = TracePlot::new("drift", q(), "shift", drift(1_000_000, 0.01))
            .reference(
                "f64 reference",
                drift(1_000_000, 0.01).map(|(t, v)| (t, v + 0.05)),
            )
            .faults((0..1000).map(|i| f64::from(i) * 9.7))
            .render();
        assert_clean_svg(&svg);
        assert!(svg.len() < 300_000, "{} bytes", svg.len());
        assert!(svg.contains("min/max envelope"));
        assert!(svg.contains("fault (1000)"));
        assert!(svg.contains("time (min)"));
        assert!(svg.contains("Not a safety-rated component"));
    }

    #[test]
    fn envelope_keeps_extremes() {
        // One spike in a flat trace must survive decimation.
        let mut samples: Vec<(f64, f64)> =
            (0..100_000).map(|i| (count_f64(i) * 1e-3, 1.0)).collect();
        samples[54_321].1 = 50.0;
        samples[12_345].1 = -50.0;
        let panel = Panel {
            left: 0.0,
            top: 0.0,
            width: 500.0,
            height: 100.0,
            x: crate::svg::nice_ticks(0.0, 100.0, 5),
            y: crate::svg::nice_ticks(-50.0, 50.0, 5),
        };
        let time = TimeAxis::new(Some((0.0, 100.0)));
        assert_eq!(time.unit, "s");
        let d = trace_path(&samples, &panel, &time, 500);
        let numbers: Vec<f64> = d
            .split(['M', 'L', ' '])
            .filter(|s| !s.is_empty())
            .map(|s| s.parse().unwrap())
            .collect();
        assert!(numbers.len() <= 2 * 2 * 500, "path too long");
        let ys: Vec<f64> = numbers.iter().skip(1).step_by(2).copied().collect();
        let top = (panel.py(50.0) * 10.0).round() / 10.0;
        let bottom = (panel.py(-50.0) * 10.0).round() / 10.0;
        assert_eq!(
            ys.iter().copied().fold(f64::MAX, f64::min),
            top,
            "spike up lost"
        );
        assert_eq!(
            ys.iter().copied().fold(f64::MIN, f64::max),
            bottom,
            "spike down lost"
        );
    }

    #[test]
    fn unsorted_gaps_and_untimed_samples() {
        let samples = [
            (3.0, 1.0),
            (1.0, 2.0),
            (f64::NAN, 5.0),
            (2.0, f64::NAN),
            (0.0, 1.5),
        ];
        let svg = TracePlot::new("t", q(), "shift", samples)
            .faults([f64::INFINITY, 1.5])
            .render();
        assert_clean_svg(&svg);
        assert!(svg.contains("1 non-finite value drawn as gaps"));
        assert!(svg.contains("1 sample without a finite time ignored"));
        assert!(svg.contains("fault (1)"));
    }

    #[test]
    fn time_units_and_origin() {
        let t = TimeAxis::new(Some((0.0, 0.25)));
        assert_eq!((t.unit, t.hi), ("ms", 250.0));
        let t = TimeAxis::new(Some((0.0, 600.0)));
        assert_eq!((t.unit, t.hi), ("min", 10.0));
        let t = TimeAxis::new(Some((1.7e9, 1.7e9 + 7200.0)));
        assert_eq!(t.unit, "min");
        assert_eq!((t.lo, t.hi), (0.0, 120.0));
        assert_eq!(t.label(), "time (min) from 1.7e9 s");
    }

    #[test]
    fn degenerate_inputs_render() {
        let empty = TracePlot::new("empty", q(), "shift", []).render();
        assert_clean_svg(&empty);
        assert!(empty.contains("no data"));
        for samples in [
            vec![(5.0, 1.0)],
            vec![(5.0, 1.0), (5.0, 1.0)],
            vec![(f64::NAN, f64::NAN)],
            vec![(-f64::MAX, f64::MAX), (f64::MAX, -f64::MAX)],
            vec![(0.0, f64::NAN); 10_000],
        ] {
            let svg = TracePlot::new("d", q(), "s", samples).size(0, 0).render();
            assert_clean_svg(&svg);
        }
        let only_faults = TracePlot::new("f", q(), "s", [])
            .faults([1.0, 2.0])
            .render();
        assert_clean_svg(&only_faults);
    }
}
