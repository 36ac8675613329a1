//! Page layout shared by the plots: the header (title, notes, legend), the
//! plot panels with their axes, and markers.

use super::palette;
use super::ticks::{nice_ticks, Ticks};
use super::xml::{text_width, Anchor, PathData, Pen, Svg, TextStyle, P};

/// Title font size, px.
pub(crate) const TITLE_SIZE: f64 = 16.0;
/// Note font size, px.
pub(crate) const NOTE_SIZE: f64 = 11.0;
/// Tick label font size, px.
pub(crate) const TICK_SIZE: f64 = 11.0;
/// Axis label font size, px.
pub(crate) const LABEL_SIZE: f64 = 13.0;
/// Legend font size, px.
pub(crate) const LEGEND_SIZE: f64 = 12.0;
/// Footer font size, px.
pub(crate) const FOOTER_SIZE: f64 = 9.0;
/// Outer margin, px.
pub(crate) const MARGIN: f64 = 10.0;
/// Room right of the plot area, px (half a tick label overhangs).
pub(crate) const RIGHT: f64 = 28.0;
/// Room below a plot area for tick labels and the axis label, px.
pub(crate) const X_AXIS_ROOM: f64 = 44.0;
/// Smallest plot area height, px.
const MIN_PANEL: f64 = 40.0;

/// Clamps a requested page size to something a plot fits in.
pub(crate) fn page_size(width: u32, height: u32) -> (u32, u32) {
    (width.clamp(240, 4000), height.clamp(180, 4000))
}

/// The page being drawn and the height its header has used.
pub(crate) struct Page {
    pub svg: Svg,
    pub width: f64,
    pub height: f64,
    /// Bottom of what is drawn so far, px from the top.
    pub y: f64,
}

impl Page {
    /// Starts a page and draws the title, centred, shrunk (down to 10 px)
    /// and then shortened with an ellipsis if it is too wide.
    pub fn new(width: u32, height: u32, title: &str) -> Self {
        let (width, height) = page_size(width, height);
        let mut page = Page {
            svg: Svg::new(width, height, title),
            width: f64::from(width),
            height: f64::from(height),
            y: MARGIN,
        };
        let room = page.width - 2.0 * MARGIN;
        let mut size = TITLE_SIZE;
        while size > 10.0 && text_width(title, size) > room {
            size -= 1.0;
        }
        let shown = fit_text(title, size, room);
        page.y += size;
        let style = TextStyle::new(size).anchor(Anchor::Middle).bold();
        page.svg.text(page.width / 2.0, page.y, &shown, style);
        page.y += 6.0;
        page
    }

    /// A centred grey note under what is drawn, wrapped at spaces.
    pub fn note(&mut self, text: &str) {
        let room = self.width - 2.0 * MARGIN;
        for line in wrap(text, NOTE_SIZE, room) {
            self.y += NOTE_SIZE + 3.0;
            let style = TextStyle::new(NOTE_SIZE)
                .anchor(Anchor::Middle)
                .color(palette::NOTE);
            self.svg.text(self.width / 2.0, self.y, &line, style);
        }
    }

    /// A legend in centred rows under what is drawn.
    pub fn legend(&mut self, entries: &[LegendEntry]) {
        if entries.is_empty() {
            return;
        }
        let room = self.width - 2.0 * MARGIN;
        // Each entry: 30 px for the key, the name, 16 px to the next entry.
        let names: Vec<String> = entries
            .iter()
            .map(|e| fit_text(&e.name, LEGEND_SIZE, room - 46.0))
            .collect();
        let widths: Vec<f64> = names
            .iter()
            .map(|n| 30.0 + text_width(n, LEGEND_SIZE) + 16.0)
            .collect();
        let mut start = 0;
        self.y += 6.0;
        while start < entries.len() {
            let mut end = start;
            let mut row_width = 0.0;
            while end < entries.len() && (end == start || row_width + widths[end] <= room) {
                row_width += widths[end];
                end += 1;
            }
            self.y += LEGEND_SIZE + 4.0;
            // The last entry's trailing 16 px are not part of the row.
            let mut x = (self.width - row_width + 16.0) / 2.0;
            for i in start..end {
                let mid_y = self.y - LEGEND_SIZE * 0.35;
                entries[i].key.draw(&mut self.svg, x + 12.0, mid_y);
                self.svg
                    .text(x + 30.0, self.y, &names[i], TextStyle::new(LEGEND_SIZE));
                x += widths[i];
            }
            start = end;
        }
    }

    /// Leaves `gap` px of space.
    pub fn space(&mut self, gap: f64) {
        self.y += gap;
    }

    /// Height left for panels above `bottom_room` px, at least 40 px.
    pub fn room_below(&self, bottom_room: f64) -> f64 {
        (self.height - self.y - bottom_room).max(MIN_PANEL)
    }

    /// A small grey line at the bottom right of the page.
    pub fn footer(&mut self, text: &str) {
        let style = TextStyle::new(FOOTER_SIZE)
            .anchor(Anchor::End)
            .color(palette::NOTE);
        let shown = fit_text(text, FOOTER_SIZE, self.width - 2.0 * MARGIN);
        self.svg
            .text(self.width - MARGIN, self.height - 4.0, &shown, style);
    }

    /// Closes the document.
    pub fn finish(self) -> String {
        self.svg.finish()
    }
}

/// `text`, cut with an ellipsis to fit `room` px at `size` px.
pub(crate) fn fit_text(text: &str, size: f64, room: f64) -> String {
    if text_width(text, size) <= room {
        return text.to_string();
    }
    let mut out = String::new();
    for ch in text.chars() {
        out.push(ch);
        if text_width(&out, size) + size > room {
            out.pop();
            break;
        }
    }
    out.push('…');
    out
}

/// Splits `text` at spaces into lines of at most `room` px.
fn wrap(text: &str, size: f64, room: f64) -> Vec<String> {
    let mut lines = Vec::new();
    let mut line = String::new();
    for word in text.split(' ').filter(|w| !w.is_empty()) {
        let candidate = if line.is_empty() {
            word.to_string()
        } else {
            format!("{line} {word}")
        };
        if text_width(&candidate, size) <= room || line.is_empty() {
            line = candidate;
        } else {
            lines.push(std::mem::take(&mut line));
            line = word.to_string();
        }
    }
    if !line.is_empty() {
        lines.push(line);
    }
    lines
        .into_iter()
        .map(|l| fit_text(&l, size, room))
        .collect()
}

/// Marker shapes for scatter points.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Shape {
    Circle,
    Square,
    Diamond,
    TriangleUp,
    TriangleDown,
    Cross,
}

impl Shape {
    /// Shapes for scatter series, in order of use.
    pub const SERIES: [Shape; 4] = [
        Shape::Circle,
        Shape::Square,
        Shape::Diamond,
        Shape::TriangleUp,
    ];

    /// Appends this marker of radius `r` centred at `(x, y)` to `path`.
    pub fn add(self, path: &mut PathData, x: f64, y: f64, r: f64) {
        match self {
            Shape::Circle => path.push_shape(format_args!(
                "M{} {} a{r} {r} 0 1 0 {} 0 a{r} {r} 0 1 0 {} 0",
                P(x - r),
                P(y),
                P(2.0 * r),
                P(-2.0 * r),
                r = P(r)
            )),
            Shape::Square => {
                let s = r * 0.85;
                path.push_shape(format_args!(
                    "M{} {} h{} v{} h{} Z",
                    P(x - s),
                    P(y - s),
                    P(2.0 * s),
                    P(2.0 * s),
                    P(-2.0 * s)
                ))
            }
            Shape::Diamond => path.push_shape(format_args!(
                "M{} {} L{} {} L{} {} L{} {} Z",
                P(x),
                P(y - r),
                P(x + r),
                P(y),
                P(x),
                P(y + r),
                P(x - r),
                P(y)
            )),
            Shape::TriangleUp => path.push_shape(format_args!(
                "M{} {} L{} {} L{} {} Z",
                P(x),
                P(y - r),
                P(x + r),
                P(y + r * 0.8),
                P(x - r),
                P(y + r * 0.8)
            )),
            Shape::TriangleDown => path.push_shape(format_args!(
                "M{} {} L{} {} L{} {} Z",
                P(x),
                P(y + r),
                P(x + r),
                P(y - r * 0.8),
                P(x - r),
                P(y - r * 0.8)
            )),
            Shape::Cross => path.push_shape(format_args!(
                "M{} {} L{} {} M{} {} L{} {}",
                P(x - r),
                P(y - r),
                P(x + r),
                P(y + r),
                P(x - r),
                P(y + r),
                P(x + r),
                P(y - r)
            )),
        }
    }

    /// Whether the shape is drawn filled (a cross is strokes only).
    pub fn filled(self) -> bool {
        self != Shape::Cross
    }
}

/// How a series is drawn, for both the plot and its legend key.
#[derive(Clone, Copy, Debug)]
pub(crate) enum Key {
    /// A line with this pen.
    Line(Pen),
    /// A marker in this colour; `open` draws it unfilled.
    Marker {
        shape: Shape,
        color: &'static str,
        open: bool,
    },
}

impl Key {
    /// Draws the legend key centred at `(x, y)`.
    pub fn draw(&self, svg: &mut Svg, x: f64, y: f64) {
        match *self {
            Key::Line(pen) => svg.line((x - 11.0, y), (x + 11.0, y), pen),
            Key::Marker { shape, color, open } => {
                let mut path = PathData::new();
                shape.add(&mut path, x, y, 4.0);
                draw_markers(svg, &path.finish(), shape, color, open);
            }
        }
    }
}

/// Draws marker path data in `color`: open or crosses as 1.4 px strokes,
/// filled shapes with a thin white edge so overlapping points stay
/// distinct.
pub(crate) fn draw_markers(svg: &mut Svg, d: &str, shape: Shape, color: &'static str, open: bool) {
    if !shape.filled() || open {
        let fill = if open { Some("#ffffff") } else { None };
        svg.path(d, Some(Pen::solid(color, 1.4)), fill);
    } else {
        svg.path(d, Some(Pen::solid("#ffffff", 0.6)), Some(color));
    }
}

/// One legend entry.
pub(crate) struct LegendEntry {
    pub name: String,
    pub key: Key,
}

/// Ticks for a horizontal axis of `width` px: as many as fit without their
/// labels touching (about one per 80 px, at least 2 intervals).
pub(crate) fn x_ticks(lo: f64, hi: f64, width: f64) -> Ticks {
    let mut target = clamp_target(width / 80.0, 12);
    loop {
        let ticks = nice_ticks(lo, hi, target);
        let widest = ticks
            .labels()
            .iter()
            .map(|l| text_width(l, TICK_SIZE))
            .fold(0.0, f64::max);
        let n = ticks.values().len().max(2);
        let spacing = width / super::xml::count_f64(n - 1);
        if spacing >= widest + 12.0 || target <= 2 {
            return ticks;
        }
        target -= 1;
    }
}

/// Ticks for a vertical axis of `height` px (about one per 45 px).
pub(crate) fn y_ticks(lo: f64, hi: f64, height: f64) -> Ticks {
    nice_ticks(lo, hi, clamp_target(height / 45.0, 10))
}

/// A tick target from a px ratio, 2..=max.
fn clamp_target(ratio: f64, max: usize) -> usize {
    // The ratio is clamped to 2..=max first, so the truncating cast is
    // exact on a small whole number.
    let r = if ratio.is_finite() {
        ratio.floor()
    } else {
        2.0
    };
    r.clamp(2.0, super::xml::count_f64(max)) as usize
}

/// Left margin that fits the y tick labels of all `axes` and a vertical
/// axis label.
pub(crate) fn left_room(axes: &[&Ticks]) -> f64 {
    let widest = axes
        .iter()
        .flat_map(|t| t.labels())
        .map(|l| text_width(&l, TICK_SIZE))
        .fold(0.0, f64::max);
    MARGIN + LABEL_SIZE + 10.0 + widest + 6.0
}

/// Where `v` lies between `lo` and `hi` as a fraction (0 at `lo`, 1 at
/// `hi`), computed on halves so that no intermediate overflows; 0.5 when
/// undefined.
pub(crate) fn frac(v: f64, lo: f64, hi: f64) -> f64 {
    let d = hi * 0.5 - lo * 0.5;
    if d <= 0.0 || !d.is_finite() {
        return 0.5;
    }
    let f = (v * 0.5 - lo * 0.5) / d;
    if f.is_finite() {
        f
    } else if f > 0.0 {
        1.0
    } else if f < 0.0 {
        0.0
    } else {
        0.5
    }
}

/// One plot area with its two axes.
pub(crate) struct Panel {
    pub left: f64,
    pub top: f64,
    pub width: f64,
    pub height: f64,
    pub x: Ticks,
    pub y: Ticks,
}

impl Panel {
    /// Horizontal position of `x`, px (kept within 2 % outside the area).
    pub fn px(&self, x: f64) -> f64 {
        self.left + frac(x, self.x.lo(), self.x.hi()).clamp(-0.02, 1.02) * self.width
    }

    /// Vertical position of `y`, px (kept within 2 % outside the area).
    pub fn py(&self, y: f64) -> f64 {
        self.top + self.height - frac(y, self.y.lo(), self.y.hi()).clamp(-0.02, 1.02) * self.height
    }

    /// Bottom edge, px.
    pub fn bottom(&self) -> f64 {
        self.top + self.height
    }

    /// Right edge, px.
    pub fn right(&self) -> f64 {
        self.left + self.width
    }

    /// Grid lines at the ticks (draw before the data).
    pub fn grid(&self, svg: &mut Svg) {
        let pen = Pen::solid(palette::GRID, 1.0);
        for &v in self.x.values() {
            let x = self.px(v);
            svg.line((x, self.top), (x, self.bottom()), pen);
        }
        for &v in self.y.values() {
            let y = self.py(v);
            svg.line((self.left, y), (self.right(), y), pen);
        }
    }

    /// Frame, tick marks, tick labels and axis labels (draw after the
    /// data). `x_label: None` leaves the x tick labels and label off, for a
    /// panel stacked above another that shares its x axis.
    pub fn axes(&self, svg: &mut Svg, x_label: Option<&str>, y_label: &str) {
        let pen = Pen::solid(palette::AXIS, 1.0);
        svg.rect(
            (self.left, self.top),
            (self.width, self.height),
            "none",
            Some(pen),
        );
        let tick = TextStyle::new(TICK_SIZE);
        let x_labels = self.x.labels();
        for (&v, label) in self.x.values().iter().zip(&x_labels) {
            let x = self.px(v);
            svg.line((x, self.bottom()), (x, self.bottom() + 4.0), pen);
            if x_label.is_some() {
                svg.text(
                    x,
                    self.bottom() + 6.0 + TICK_SIZE,
                    label,
                    tick.anchor(Anchor::Middle),
                );
            }
        }
        for (&v, label) in self.y.values().iter().zip(self.y.labels()) {
            let y = self.py(v);
            svg.line((self.left - 4.0, y), (self.left, y), pen);
            svg.text(
                self.left - 6.0,
                y + TICK_SIZE * 0.35,
                &label,
                tick.anchor(Anchor::End),
            );
        }
        if let Some(label) = x_label {
            let shown = fit_text(label, LABEL_SIZE, self.width);
            svg.text(
                self.left + self.width / 2.0,
                self.bottom() + 10.0 + TICK_SIZE + 4.0 + LABEL_SIZE,
                &shown,
                TextStyle::new(LABEL_SIZE).anchor(Anchor::Middle),
            );
        }
        let shown = fit_text(y_label, LABEL_SIZE, self.height);
        svg.text(
            MARGIN + LABEL_SIZE,
            self.top + self.height / 2.0,
            &shown,
            TextStyle::new(LABEL_SIZE).anchor(Anchor::Middle).vertical(),
        );
    }

    /// A message centred in the plot area, e.g. "no data".
    pub fn message(&self, svg: &mut Svg, text: &str) {
        let shown = fit_text(text, 14.0, self.width - 8.0);
        svg.text(
            self.left + self.width / 2.0,
            self.top + self.height / 2.0,
            &shown,
            TextStyle::new(14.0)
                .anchor(Anchor::Middle)
                .color(palette::NOTE),
        );
    }
}
