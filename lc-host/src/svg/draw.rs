//! What every plot shares: the document (title, notes, legend, footer),
//! colours, text cleaning, axis ranges and tick labels, and the chart
//! frame, all on `plotters`' SVG backend.

use super::Quantity;
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// The drawing area of a plot document.
pub(crate) type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;
/// What a drawing step can fail with (the SVG backend writes to a
/// `String`, so in practice nothing).
pub(crate) type DrawError = DrawingAreaErrorKind<std::io::Error>;
/// A 2-D chart with linear axes.
pub(crate) type Chart<'a, 'b> =
    ChartContext<'a, SVGBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

/// The one font family: the viewer's own sans-serif (no font files).
pub(crate) const FONT: &str = "sans-serif";
/// Text and axes.
pub(crate) const TEXT: RGBColor = RGBColor(0x22, 0x22, 0x22);
/// Notes and secondary text.
pub(crate) const NOTE: RGBColor = RGBColor(0x55, 0x55, 0x55);
/// Grid lines.
pub(crate) const GRID: RGBColor = RGBColor(0xe3, 0xe3, 0xe3);
/// Limits, faults, values outside a band.
pub(crate) const ALERT: RGBColor = RGBColor(0xD5, 0x5E, 0x00);
/// Histogram bars.
pub(crate) const BAR: RGBColor = RGBColor(0x00, 0x72, 0xB2);

/// Series colours in order of use, the Okabe–Ito palette (Okabe and Ito,
/// "Color Universal Design", 2008; common practice for colour-blind-safe
/// plots): blue, orange, bluish green, reddish purple, sky blue, black.
/// Vermillion is kept for limits and faults.
const SERIES: [RGBColor; 6] = [
    RGBColor(0x00, 0x72, 0xB2),
    RGBColor(0xE6, 0x9F, 0x00),
    RGBColor(0x00, 0x9E, 0x73),
    RGBColor(0xCC, 0x79, 0xA7),
    RGBColor(0x56, 0xB4, 0xE9),
    RGBColor(0x00, 0x00, 0x00),
];

/// The colour of series number `i`.
pub(crate) fn series_color(i: usize) -> RGBColor {
    SERIES[i % SERIES.len()]
}

/// Largest magnitude a plot draws; values beyond are left out and
/// counted like non-finite ones (nothing measured here is that large, and
/// it keeps every pixel computation finite).
pub(crate) const PLOTTABLE: f64 = 1e15;

/// Whether `v` can be drawn.
pub(crate) fn plottable(v: f64) -> bool {
    v.is_finite() && v.abs() <= PLOTTABLE
}

/// Text as the plot shows it: control characters become spaces (XML
/// forbids most of them; `plotters` escapes the five markup characters).
pub(crate) fn clean(text: &str) -> String {
    text.chars()
        .map(|c| {
            if c.is_control() || c == '\u{FFFE}' || c == '\u{FFFF}' {
                ' '
            } else {
                c
            }
        })
        .collect()
}

/// Approximate width of `text` at `size` px in a sans-serif font.
pub(crate) fn text_width(text: &str, size: f64) -> f64 {
    // usize → f64 is exact below 2^53 characters.
    text.chars().count() as f64 * size * 0.58
}

/// How a legend entry is drawn.
#[derive(Clone, Copy, Debug)]
pub(crate) enum Swatch {
    /// A solid line.
    Line(RGBColor),
    /// A dashed line.
    Dashed(RGBColor),
    /// A point marker of shape number `n` (see [`draw_markers`]).
    Marker(RGBColor, usize),
    /// A filled box.
    Bar(RGBColor),
}

/// The text above a plot: title, note lines and a legend row.
#[derive(Clone, Debug, Default)]
pub(crate) struct Header {
    pub title: String,
    pub notes: Vec<String>,
    pub legend: Vec<(String, Swatch)>,
}

const TITLE_PX: f64 = 18.0;
const NOTE_PX: f64 = 13.0;
const LINE_GAP: f64 = 5.0;

/// Lays the legend out in rows no wider than `width`; returns the rows of
/// entry indices.
fn legend_rows(legend: &[(String, Swatch)], width: f64) -> Vec<Vec<usize>> {
    let mut rows: Vec<Vec<usize>> = Vec::new();
    let mut used = f64::INFINITY;
    for (i, (name, _)) in legend.iter().enumerate() {
        let w = entry_width(name);
        if used + w > width {
            rows.push(Vec::new());
            used = 0.0;
        }
        if let Some(r) = rows.last_mut() {
            r.push(i);
        }
        used += w;
    }
    rows
}

fn entry_width(name: &str) -> f64 {
    34.0 + text_width(name, NOTE_PX) + 18.0
}

fn header_height(h: &Header, width: f64) -> f64 {
    let notes = h.notes.len() as f64;
    let legend = legend_rows(&h.legend, width - 20.0).len() as f64;
    10.0 + TITLE_PX + LINE_GAP + (notes + legend) * (NOTE_PX + LINE_GAP) + 6.0
}

fn to_i32(v: f64) -> i32 {
    // Pixel positions of a plot of at most a few thousand px: the cast
    // saturates and cannot wrap.
    v.round() as i32
}

/// Draws point markers of shape `n` (circle, triangle, square, diamond)
/// at `points` on `chart`.
pub(crate) fn draw_markers(
    chart: &mut Chart<'_, '_>,
    points: impl Iterator<Item = (f64, f64)>,
    n: usize,
    color: RGBColor,
) -> Result<(), DrawError> {
    let style = color.filled();
    match n % 4 {
        0 => chart.draw_series(points.map(|p| Circle::new(p, 4, style)))?,
        1 => chart.draw_series(points.map(|p| TriangleMarker::new(p, 5, style)))?,
        2 => chart.draw_series(
            points.map(|p| EmptyElement::at(p) + Rectangle::new([(-4, -4), (4, 4)], style)),
        )?,
        _ => chart.draw_series(points.map(|p| {
            EmptyElement::at(p) + Polygon::new(vec![(0, -5), (5, 0), (0, 5), (-5, 0)], style)
        }))?,
    };
    Ok(())
}

/// One marker of shape `n` at pixel `at` (for the legend).
fn legend_marker(
    area: &Area<'_>,
    at: (i32, i32),
    n: usize,
    color: RGBColor,
) -> Result<(), DrawError> {
    let style = color.filled();
    match n % 4 {
        0 => area.draw(&Circle::new(at, 4, style)),
        1 => area.draw(&TriangleMarker::new(at, 5, style)),
        2 => area.draw(&(EmptyElement::at(at) + Rectangle::new([(-4, -4), (4, 4)], style))),
        _ => area.draw(
            &(EmptyElement::at(at) + Polygon::new(vec![(0, -5), (5, 0), (0, 5), (-5, 0)], style)),
        ),
    }
}

fn draw_header(area: &Area<'_>, h: &Header) -> Result<(), DrawError> {
    let (w, _) = area.dim_in_pixel();
    let w = f64::from(w);
    let centre = to_i32(w / 2.0);
    let mut y = 10.0;
    let title = TextStyle::from((FONT, TITLE_PX).into_font().style(FontStyle::Bold))
        .color(&TEXT)
        .pos(Pos::new(HPos::Center, VPos::Top));
    area.draw(&Text::new(clean(&h.title), (centre, to_i32(y)), title))?;
    y += TITLE_PX + LINE_GAP;
    let note = TextStyle::from((FONT, NOTE_PX).into_font())
        .color(&NOTE)
        .pos(Pos::new(HPos::Center, VPos::Top));
    for n in &h.notes {
        area.draw(&Text::new(clean(n), (centre, to_i32(y)), note.clone()))?;
        y += NOTE_PX + LINE_GAP;
    }
    let label = TextStyle::from((FONT, NOTE_PX).into_font())
        .color(&TEXT)
        .pos(Pos::new(HPos::Left, VPos::Center));
    for row in legend_rows(&h.legend, w - 20.0) {
        let total: f64 = row.iter().map(|&i| entry_width(&h.legend[i].0)).sum();
        let mut x = (w - total) / 2.0;
        let cy = to_i32(y + NOTE_PX / 2.0);
        for &i in &row {
            let (name, swatch) = &h.legend[i];
            let (x0, x1) = (to_i32(x), to_i32(x + 26.0));
            match *swatch {
                Swatch::Line(c) => area.draw(&PathElement::new(
                    vec![(x0, cy), (x1, cy)],
                    c.stroke_width(2),
                ))?,
                Swatch::Dashed(c) => {
                    for k in 0..3 {
                        let a = x0 + 10 * k;
                        area.draw(&PathElement::new(
                            vec![(a, cy), (a + 6, cy)],
                            c.stroke_width(2),
                        ))?;
                    }
                }
                Swatch::Marker(c, n) => legend_marker(area, ((x0 + x1) / 2, cy), n, c)?,
                Swatch::Bar(c) => {
                    area.draw(&Rectangle::new([(x0, cy - 6), (x1, cy + 6)], c.filled()))?
                }
            }
            area.draw(&Text::new(clean(name), (x1 + 6, cy), label.clone()))?;
            x += entry_width(name);
        }
        y += NOTE_PX + LINE_GAP;
    }
    Ok(())
}

/// One standalone SVG document of `width` × `height` px: the header on
/// top, `footer` (a line of small print) at the bottom, and `body` drawn in
/// the rest. Adds the XML declaration and a `<title>`. If drawing fails
/// the document says so instead of the plot.
pub(crate) fn document(
    width: u32,
    height: u32,
    header: &Header,
    footer: Option<&str>,
    body: impl FnOnce(&Area<'_>) -> Result<(), DrawError>,
) -> String {
    let width = width.clamp(200, 4000);
    let height = height.clamp(150, 4000);
    let mut buf = String::new();
    let result = {
        let root = SVGBackend::with_string(&mut buf, (width, height)).into_drawing_area();
        let drawn = (|| {
            root.fill(&WHITE)?;
            let head = header_height(header, f64::from(width));
            let (top, rest) = root.split_vertically(to_i32(head));
            draw_header(&top, header)?;
            let rest = match footer {
                Some(text) => {
                    let (_, h) = rest.dim_in_pixel();
                    let (main, foot) = rest.split_vertically(h.saturating_sub(20));
                    let style = TextStyle::from((FONT, 11.0).into_font())
                        .color(&NOTE)
                        .pos(Pos::new(HPos::Center, VPos::Top));
                    foot.draw(&Text::new(
                        clean(text),
                        (to_i32(f64::from(width) / 2.0), 2),
                        style,
                    ))?;
                    main
                }
                None => rest,
            };
            body(&rest)?;
            root.present()
        })();
        drawn.map_err(|e| e.to_string())
    };
    if let Err(e) = result {
        buf.clear();
        let root = SVGBackend::with_string(&mut buf, (width, height)).into_drawing_area();
        let message = Header {
            title: header.title.clone(),
            notes: vec![format!("the plot could not be drawn: {e}")],
            legend: Vec::new(),
        };
        // A failure here leaves a document with whatever was drawn.
        let _ = root
            .fill(&WHITE)
            .and_then(|()| draw_header(&root, &message))
            .and_then(|()| root.present());
    }
    finish(buf, &header.title)
}

/// Adds the XML declaration and the `<title>` to the backend's output.
fn finish(body: String, title: &str) -> String {
    let mut out = String::with_capacity(body.len() + 200);
    out.push_str("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    let title = escape(&clean(title));
    match body.find(">\n") {
        Some(i) if body.starts_with("<svg") => {
            out.push_str(&body[..i + 2]);
            out.push_str(&format!("<title>{title}</title>\n"));
            out.push_str(&body[i + 2..]);
        }
        _ => out.push_str(&body),
    }
    if !out.ends_with('\n') {
        out.push('\n');
    }
    out
}

/// `text` with the five XML special characters escaped.
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '&' => out.push_str("&amp;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            c => out.push(c),
        }
    }
    out
}

/// The smallest and largest plottable value, if any.
pub(crate) fn extent(values: impl IntoIterator<Item = f64>) -> Option<(f64, f64)> {
    values
        .into_iter()
        .filter(|v| plottable(*v))
        .fold(None, |acc, v| match acc {
            None => Some((v, v)),
            Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
        })
}

/// An axis range around `(lo, hi)`: padded by `pad` of the span on each
/// side, widened around a single value, `[0, 1]` without data.
pub(crate) fn axis_range(span: Option<(f64, f64)>, pad: f64) -> (f64, f64) {
    let Some((lo, hi)) = span else {
        return (0.0, 1.0);
    };
    let width = hi - lo;
    if width > (lo.abs().max(hi.abs())) * 1e-9 && width > 1e-300 {
        (lo - width * pad, hi + width * pad)
    } else {
        let half = (lo.abs() * 0.05).max(0.5);
        (lo - half, hi + half)
    }
}

/// Decimals that tell the ticks of an axis over `(lo, hi)` apart (about
/// ten ticks, steps of 1, 2 or 5 × 10ⁿ).
pub(crate) fn tick_decimals(lo: f64, hi: f64) -> usize {
    let step = nice_step((hi - lo) / 10.0);
    let d = -step.log10().floor();
    if d.is_finite() && d > 0.0 {
        // 0 < d ≤ 400 for any positive finite step: exact in usize.
        (d as usize).min(12)
    } else {
        0
    }
}

/// The step of 1, 2 or 5 × 10ⁿ at or above `raw` (1 for a non-positive or
/// non-finite `raw`).
pub(crate) fn nice_step(raw: f64) -> f64 {
    if !(raw.is_finite() && raw > 0.0) {
        return 1.0;
    }
    let p = 10f64.powf(raw.log10().floor());
    [1.0, 2.0, 5.0, 10.0]
        .into_iter()
        .map(|m| m * p)
        .find(|s| *s >= raw * (1.0 - 1e-12))
        .unwrap_or(10.0 * p)
}

/// A tick label with `decimals` decimals, trailing zeros trimmed, never
/// "-0".
pub(crate) fn tick_label(v: f64, decimals: usize) -> String {
    let mut s = format!("{v:.decimals$}");
    if s.contains('.') {
        while s.ends_with('0') {
            s.pop();
        }
        if s.ends_with('.') {
            s.pop();
        }
    }
    if s == "-0" {
        s = "0".into();
    }
    s
}

/// Width of the y label area for tick labels of an axis over `(lo, hi)`.
pub(crate) fn y_label_room(lo: f64, hi: f64) -> u32 {
    let d = tick_decimals(lo, hi);
    let longest = [lo, hi, (lo + hi) / 2.0]
        .iter()
        .map(|v| tick_label(*v, d).chars().count())
        .max()
        .unwrap_or(1);
    // At most a few dozen characters: exact.
    (longest as f64 * 13.0 * 0.6 + 34.0) as u32
}

/// A chart over `x` × `y` in `area`, with grid, ticks and both axis labels
/// (name and unit).
pub(crate) fn chart<'a, 'b>(
    area: &'a Area<'b>,
    x: (f64, f64),
    y: (f64, f64),
    x_label: &Quantity,
    y_label: &Quantity,
) -> Result<Chart<'a, 'b>, DrawError> {
    let mut c = ChartBuilder::on(area)
        .margin_left(8)
        .margin_right(24)
        .margin_top(6)
        .margin_bottom(4)
        .x_label_area_size(44)
        .y_label_area_size(y_label_room(y.0, y.1))
        .build_cartesian_2d(x.0..x.1, y.0..y.1)?;
    let (xd, yd) = (tick_decimals(x.0, x.1), tick_decimals(y.0, y.1));
    let fx = move |v: &f64| tick_label(*v, xd);
    let fy = move |v: &f64| tick_label(*v, yd);
    let (xl, yl) = (clean(&x_label.label()), clean(&y_label.label()));
    c.configure_mesh()
        .x_labels(10)
        .y_labels(8)
        .x_label_formatter(&fx)
        .y_label_formatter(&fy)
        .x_desc(xl)
        .y_desc(yl)
        .label_style((FONT, 13).into_font().color(&TEXT))
        .axis_desc_style((FONT, 14).into_font().color(&TEXT))
        .bold_line_style(GRID)
        .light_line_style(WHITE)
        .axis_style(NOTE)
        .draw()?;
    Ok(c)
}

/// "no data" in the middle of a chart's plotting area.
pub(crate) fn no_data(c: &mut Chart<'_, '_>, text: &str) -> Result<(), DrawError> {
    let (x, y) = (c.x_range(), c.y_range());
    let style = TextStyle::from((FONT, 16).into_font())
        .color(&NOTE)
        .pos(Pos::new(HPos::Center, VPos::Center));
    c.draw_series(std::iter::once(Text::new(
        clean(text),
        ((x.start + x.end) / 2.0, (y.start + y.end) / 2.0),
        style,
    )))?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tick_labels_have_no_float_noise() {
        let d = tick_decimals(0.0, 1.0);
        assert_eq!(tick_label(0.1 + 0.2, d), "0.3");
        assert_eq!(tick_label(-0.000_01, d), "0");
        assert_eq!(tick_label(100.000_000_000_000_01, 0), "100");
        assert_eq!(tick_decimals(0.0, 1e7), 0);
        assert_eq!(tick_decimals(0.0, 0.01), 3);
    }

    #[test]
    fn steps_are_nice() {
        assert_eq!(nice_step(0.13), 0.2);
        assert_eq!(nice_step(3.0), 5.0);
        assert_eq!(nice_step(7.0), 10.0);
        assert_eq!(nice_step(1.0), 1.0);
        assert_eq!(nice_step(f64::NAN), 1.0);
    }

    #[test]
    fn ranges_are_finite_and_wide() {
        assert_eq!(axis_range(None, 0.05), (0.0, 1.0));
        let (lo, hi) = axis_range(Some((2.0, 2.0)), 0.05);
        assert!(lo < 2.0 && hi > 2.0);
        let (lo, hi) = axis_range(Some((-PLOTTABLE, PLOTTABLE)), 0.05);
        assert!(lo.is_finite() && hi.is_finite());
    }
}
