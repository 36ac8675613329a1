//! Lot histograms: how many values fall in each bin, with acceptance limits.

use super::frame::{self, left_room, x_ticks, y_ticks, Page, Panel};
use super::palette;
use super::ticks::{nice_step, nice_ticks, scaled};
use super::xml::{count_f64, fmt_value, text_width, Anchor, Pen, TextStyle};
use super::Quantity;

/// Fewest bins the automatic rule chooses.
pub const AUTO_BINS_MIN: usize = 5;
/// Most bins the automatic rule chooses.
pub const AUTO_BINS_MAX: usize = 50;
/// Most bins a given count is clamped to.
pub const BINS_MAX: usize = 1000;

/// The rule name when every value is the same.
const ALL_EQUAL: &str = "all values equal";

/// How a [`Histogram`] chooses its bins.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum Bins {
    /// Freedman–Diaconis: width 2·IQR·n^(-1/3), or, where the
    /// interquartile range is zero, the square-root rule (√n bins); the
    /// count is clamped to [`AUTO_BINS_MIN`]..=[`AUTO_BINS_MAX`]. The width
    /// is then rounded to a 1-2-5 step with bin edges on multiples of it
    /// (so edges read well against the axis), taking the rounding whose bin
    /// count is nearest the rule's and still within the clamp.
    #[default]
    Auto,
    /// Exactly this many equal bins from the smallest to the largest value
    /// (clamped to 1..=[`BINS_MAX`]).
    Count(usize),
}

/// A histogram of values, e.g. one lot's rest-point shifts, with optional
/// lower and upper acceptance limits drawn as dashed vertical lines.
///
/// Non-finite values are left out and counted in a note; values outside the
/// limits are counted in a note too. The y axis is the count per bin.
#[derive(Clone, Debug, PartialEq)]
pub struct Histogram {
    title: String,
    x: Quantity,
    values: Vec<f64>,
    lower: Option<f64>,
    upper: Option<f64>,
    bins: Bins,
    width: u32,
    height: u32,
}

impl Histogram {
    /// A histogram of `values`, titled `title`, on an x axis of quantity
    /// `x`; 720 × 450 px, automatic bins, no limits.
    pub fn new(
        title: impl Into<String>,
        x: Quantity,
        values: impl IntoIterator<Item = f64>,
    ) -> Self {
        Histogram {
            title: title.into(),
            x,
            values: values.into_iter().collect(),
            lower: None,
            upper: None,
            bins: Bins::Auto,
            width: 720,
            height: 450,
        }
    }

    /// Acceptance limits in the unit of the x axis; a non-finite limit is
    /// not drawn and is reported in a note.
    pub fn limits(mut self, lower: Option<f64>, upper: Option<f64>) -> Self {
        self.lower = lower;
        self.upper = upper;
        self
    }

    /// The binning rule.
    pub fn bins(mut self, bins: Bins) -> Self {
        self.bins = bins;
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
        let mut finite: Vec<f64> = self
            .values
            .iter()
            .copied()
            .filter(|v| v.is_finite())
            .collect();
        finite.sort_by(f64::total_cmp);
        let dropped = self.values.len() - finite.len();
        let lower = self.lower.filter(|v| v.is_finite());
        let upper = self.upper.filter(|v| v.is_finite());
        let unit = self.x.unit.trim();

        let mut page = Page::new(self.width, self.height, &self.title);
        let binned = bin(&finite, self.bins);
        if let (Some(b), Some(&first)) = (&binned, finite.first()) {
            let note = if b.rule == ALL_EQUAL {
                format!(
                    "n = {} · all values equal {} {unit}",
                    finite.len(),
                    fmt_value(first, 6)
                )
            } else {
                let bin_width = (b.edges[1] * 0.5 - b.edges[0] * 0.5) * 2.0;
                format!(
                    "n = {} · {} bin{} {} {unit} wide ({})",
                    finite.len(),
                    b.counts.len(),
                    if b.counts.len() == 1 { "" } else { "s" },
                    fmt_value(bin_width, 4),
                    b.rule
                )
            };
            page.note(note.replace("  ", " ").trim_end());
        }
        let mut outside = Vec::new();
        if let Some(l) = lower {
            outside.push(format!(
                "{} below the lower limit",
                finite.iter().filter(|&&v| v < l).count()
            ));
        }
        if let Some(u) = upper {
            outside.push(format!(
                "{} above the upper limit",
                finite.iter().filter(|&&v| v > u).count()
            ));
        }
        if !outside.is_empty() && !finite.is_empty() {
            page.note(&outside.join(" · "));
        }
        let mut ignored = Vec::new();
        if dropped > 0 {
            ignored.push(format!(
                "{dropped} non-finite value{} ignored",
                if dropped == 1 { "" } else { "s" }
            ));
        }
        for (name, given, kept) in [("lower", self.lower, lower), ("upper", self.upper, upper)] {
            if given.is_some() && kept.is_none() {
                ignored.push(format!("{name} limit not finite, not drawn"));
            }
        }
        if !ignored.is_empty() {
            page.note(&ignored.join(" · "));
        }

        // x range: the bins and the limits.
        let mut ends: Vec<f64> = lower.into_iter().chain(upper).collect();
        if let Some(b) = &binned {
            ends.extend(b.edges.first());
            ends.extend(b.edges.last());
            ends.extend(b.view.iter().flat_map(|v| [v.0, v.1]));
        }
        let x_lo = ends.iter().copied().fold(f64::INFINITY, f64::min);
        let x_hi = ends.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let (mut x_lo, mut x_hi) = if ends.is_empty() {
            (0.0, 1.0)
        } else {
            (x_lo, x_hi)
        };
        // A limit at the end of the range would sit on the frame: leave 5 %
        // of the span beyond it.
        let pad = (x_hi * 0.5 - x_lo * 0.5) * 0.1;
        let first_edge = binned.as_ref().map_or(f64::INFINITY, |b| b.edges[0]);
        let last_edge = binned
            .as_ref()
            .map_or(f64::NEG_INFINITY, |b| b.edges[b.edges.len() - 1]);
        if lower
            .into_iter()
            .chain(upper)
            .any(|l| l <= first_edge && l <= x_lo)
        {
            x_lo = (x_lo - pad).max(-f64::MAX);
        }
        if lower
            .into_iter()
            .chain(upper)
            .any(|l| l >= last_edge && l >= x_hi)
        {
            x_hi = (x_hi + pad).min(f64::MAX);
        }
        let max_count = binned
            .as_ref()
            .and_then(|b| b.counts.iter().copied().max())
            .unwrap_or(0);
        // 8 % headroom over the tallest bar, and at least 10 so that the
        // count ticks are whole numbers.
        let y_hi = (count_f64(max_count) * 1.08).max(10.0);

        let labels: Vec<(f64, String)> = [("lower", lower), ("upper", upper)]
            .into_iter()
            .filter_map(|(name, v)| v.map(|v| (v, limit_label(name, v, unit))))
            .collect();
        let header = page.y;
        let mut rows: u8 = if labels.is_empty() { 0 } else { 1 };
        let (panel, placed) = loop {
            let top = header + 8.0 + 16.0 * f64::from(rows);
            let height = (page.height - top - frame::X_AXIS_ROOM - frame::MARGIN).max(40.0);
            let y = y_ticks(0.0, y_hi, height);
            let left = left_room(&[&y]);
            let width = (page.width - left - frame::RIGHT).max(40.0);
            let x = x_ticks(x_lo, x_hi, width);
            let panel = Panel {
                left,
                top,
                width,
                height,
                x,
                y,
            };
            let placed = place_labels(&panel, page.width, &labels);
            if rows == 2 || placed.iter().all(|p| p.row == 0) {
                break (panel, placed);
            }
            rows = 2;
        };

        panel.grid(&mut page.svg);
        if let Some(b) = &binned {
            let base = panel.py(0.0);
            for (i, &count) in b.counts.iter().enumerate() {
                if count == 0 {
                    continue;
                }
                let x0 = panel.px(b.edges[i]);
                let x1 = panel.px(b.edges[i + 1]);
                let top = panel.py(count_f64(count));
                page.svg.rect(
                    (x0, top),
                    (x1 - x0, base - top),
                    palette::BAR,
                    Some(Pen::solid("#ffffff", 0.6)),
                );
            }
        } else {
            panel.message(&mut page.svg, "no data");
        }
        let limit_pen = Pen::dashed(palette::ALERT, 1.6, "6 4");
        for p in &placed {
            let x = panel.px(p.value);
            page.svg
                .line((x, panel.top - 3.0), (x, panel.bottom()), limit_pen);
            let y = panel.top - 6.0 - 16.0 * f64::from(p.row);
            let style = TextStyle::new(frame::NOTE_SIZE)
                .anchor(Anchor::Middle)
                .color(palette::ALERT);
            page.svg.text(p.centre, y, &p.text, style);
        }
        panel.axes(&mut page.svg, Some(&self.x.label()), "count");
        page.finish()
    }
}

/// "lower limit -820 ppm".
fn limit_label(name: &str, v: f64, unit: &str) -> String {
    let mut s = format!("{name} limit {}", fmt_value(v, 6));
    if !unit.is_empty() {
        s.push(' ');
        s.push_str(unit);
    }
    s
}

/// A limit label placed above the plot area.
struct Placed {
    value: f64,
    text: String,
    /// Centre of the text, px.
    centre: f64,
    /// 0: the row next to the plot area; 1: the row above it.
    row: u8,
}

/// Centres each label over its line, kept on the page; a label that would
/// touch the one before goes one row up.
fn place_labels(panel: &Panel, page_width: f64, labels: &[(f64, String)]) -> Vec<Placed> {
    let mut placed: Vec<Placed> = Vec::new();
    for (value, text) in labels {
        let half = text_width(text, frame::NOTE_SIZE) / 2.0;
        let lo = frame::MARGIN + half;
        let hi = (page_width - frame::MARGIN - half).max(lo);
        let centre = panel.px(*value).clamp(lo, hi);
        let clash = placed.iter().any(|p| {
            let other = text_width(&p.text, frame::NOTE_SIZE) / 2.0;
            (p.centre - centre).abs() < half + other + 8.0
        });
        placed.push(Placed {
            value: *value,
            text: text.clone(),
            centre,
            row: u8::from(clash),
        });
    }
    placed
}

/// Bin edges (one more than counts) and counts.
#[derive(Debug)]
struct Binned {
    edges: Vec<f64>,
    counts: Vec<usize>,
    rule: &'static str,
    /// The x range to show at least, for a single bin.
    view: Option<(f64, f64)>,
}

/// Bins sorted finite values; `None` when there are none.
fn bin(sorted: &[f64], bins: Bins) -> Option<Binned> {
    let (&lo, &hi) = (sorted.first()?, sorted.last()?);
    let mid = lo * 0.5 + hi * 0.5;
    let half_span = hi * 0.5 - lo * 0.5;
    let mut view = None;
    // Finite inputs, so the halves are finite and comparable.
    let (edges, rule) = if half_span <= mid.abs() * 0.5e-12 {
        // One bin a fifth of a tick step wide around the common value, on
        // the axis nice_ticks widens a single value to.
        let ticks = nice_ticks(lo, hi, 5);
        view = Some((ticks.lo(), ticks.hi()));
        let w = ticks.step() / 5.0;
        let edges = vec![
            (mid - w / 2.0).max(-f64::MAX),
            (mid + w / 2.0).min(f64::MAX),
        ];
        let rule = if lo == hi {
            ALL_EQUAL
        } else {
            "values equal within 1e-12"
        };
        (edges, rule)
    } else {
        match bins {
            Bins::Count(k) => (equal_edges(lo, hi, k.clamp(1, BINS_MAX)), "count given"),
            Bins::Auto => {
                let (k, rule) = auto_count(sorted, half_span);
                let edges = aligned_edges(lo, hi, k).unwrap_or_else(|| equal_edges(lo, hi, k));
                (edges, rule)
            }
        }
    };
    let n_bins = edges.len() - 1;
    let mut counts = vec![0; n_bins];
    for &v in sorted {
        let i = edges
            .partition_point(|&e| e <= v)
            .saturating_sub(1)
            .min(n_bins - 1);
        counts[i] += 1;
    }
    Some(Binned {
        view,
        edges,
        counts,
        rule,
    })
}

/// The automatic bin count and the rule that gave it.
fn auto_count(sorted: &[f64], half_span: f64) -> (usize, &'static str) {
    let n = count_f64(sorted.len());
    let iqr_half = quantile(sorted, 0.75) * 0.5 - quantile(sorted, 0.25) * 0.5;
    let (k, rule) = if iqr_half > 0.0 {
        // width / 2 = IQR / cbrt(n), on halves to stay finite.
        let k = (half_span / (2.0 * iqr_half / n.cbrt())).ceil();
        (k, "Freedman–Diaconis rule")
    } else {
        (n.sqrt().ceil(), "square-root rule")
    };
    let k = if k.is_finite() { k } else { n.sqrt().ceil() };
    // Clamped to 5..=50 first, so the cast is exact on a small whole number.
    let k = k.clamp(count_f64(AUTO_BINS_MIN), count_f64(AUTO_BINS_MAX)) as usize;
    (k, rule)
}

/// Linear-interpolation quantile of sorted, non-empty values.
fn quantile(sorted: &[f64], p: f64) -> f64 {
    let pos = p.clamp(0.0, 1.0) * count_f64(sorted.len() - 1);
    // 0 <= pos <= len - 1, so the truncating cast is exact after floor.
    let i = pos.floor() as usize;
    let f = pos - pos.floor();
    let a = sorted[i];
    let b = sorted[(i + 1).min(sorted.len() - 1)];
    a * (1.0 - f) + b * f
}

/// `k` equal bins from `lo` to `hi`.
fn equal_edges(lo: f64, hi: f64, k: usize) -> Vec<f64> {
    let kf = count_f64(k);
    let mut edges: Vec<f64> = (0..=k)
        .map(|i| {
            let t = count_f64(i) / kf;
            lo * (1.0 - t) + hi * t
        })
        .collect();
    edges[0] = lo;
    edges[k] = hi;
    edges
}

/// Edges on multiples of a 1-2-5 step whose bin count is nearest `k`
/// within the automatic clamp; `None` if no such step gives finite,
/// increasing edges.
fn aligned_edges(lo: f64, hi: f64, k: usize) -> Option<Vec<f64>> {
    let raw = (hi * 0.5 - lo * 0.5) / count_f64(k) * 2.0;
    if !(raw > 0.0 && raw.is_finite()) {
        return None;
    }
    let (_, e0) = nice_step(raw);
    let mut best: Option<(f64, f64, f64, u8, i32)> = None;
    for e in e0 - 1..=e0 + 1 {
        for m in [1, 2, 5] {
            let step = scaled(1.0, m, e);
            let mut j0 = (lo / step).floor();
            if scaled(j0, m, e) > lo {
                j0 -= 1.0;
            }
            let mut j1 = (hi / step).ceil().max(j0 + 1.0);
            if scaled(j1, m, e) < hi {
                j1 += 1.0;
            }
            let count = j1 - j0;
            let in_clamp = count >= count_f64(AUTO_BINS_MIN) && count <= count_f64(AUTO_BINS_MAX);
            let finite = scaled(j0, m, e).is_finite() && scaled(j1, m, e).is_finite();
            if !(in_clamp && finite) {
                continue;
            }
            let cost = (count / count_f64(k)).ln().abs();
            if best.is_none_or(|b| cost < b.0) {
                best = Some((cost, j0, j1, m, e));
            }
        }
    }
    let (_, j0, j1, m, e) = best?;
    let mut edges = Vec::new();
    let mut j = j0;
    while j <= j1 {
        edges.push(scaled(j, m, e) + 0.0);
        j += 1.0;
    }
    let increasing = edges.windows(2).all(|w| w[0] < w[1]);
    (increasing && edges.len() >= 2).then_some(edges)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::svg::check::assert_clean_svg;

    fn spread(n: usize) -> Vec<f64> {
        // A deterministic bell-ish spread: sum of three uniform sequences.
        (0..n)
            .map(|i| {
                let a = count_f64(i * 7919 % 1000) / 1000.0;
                let b = count_f64(i * 104_729 % 997) / 997.0;
                let c = count_f64(i * 1_299_709 % 991) / 991.0;
                (a + b + c - 1.5) * 10.0 - 800.0
            })
            .collect()
    }

    fn sorted(mut v: Vec<f64>) -> Vec<f64> {
        v.sort_by(f64::total_cmp);
        v
    }

    #[test]
    fn auto_bins_are_clamped_aligned_and_count_everything() {
        for n in [2, 3, 10, 100, 1000, 20_000] {
            let values = sorted(spread(n));
            let b = bin(&values, Bins::Auto).unwrap();
            let k = b.counts.len();
            assert!(
                (AUTO_BINS_MIN..=AUTO_BINS_MAX).contains(&k),
                "n {n}: {k} bins"
            );
            assert_eq!(b.counts.iter().sum::<usize>(), n);
            assert!(b.edges[0] <= values[0] && *b.edges.last().unwrap() >= values[n - 1]);
            let step = b.edges[1] - b.edges[0];
            for w in b.edges.windows(2) {
                assert!(((w[1] - w[0]) - step).abs() <= step * 1e-9);
            }
        }
    }

    #[test]
    fn freedman_diaconis_and_sqrt_fallback() {
        let values = sorted(spread(1000));
        assert_eq!(
            bin(&values, Bins::Auto).unwrap().rule,
            "Freedman–Diaconis rule"
        );
        // Most values equal: IQR zero, square-root rule.
        let mut v = vec![5.0; 100];
        v.push(6.0);
        v.push(4.0);
        let b = bin(&sorted(v), Bins::Auto).unwrap();
        assert_eq!(b.rule, "square-root rule");
        assert_eq!(b.counts.iter().sum::<usize>(), 102);
    }

    #[test]
    fn given_count_is_exact_and_clamped() {
        let values = sorted(spread(500));
        let b = bin(&values, Bins::Count(7)).unwrap();
        assert_eq!(b.counts.len(), 7);
        assert_eq!(b.edges[0], values[0]);
        assert_eq!(b.edges[7], values[499]);
        assert_eq!(b.counts.iter().sum::<usize>(), 500);
        assert_eq!(bin(&values, Bins::Count(0)).unwrap().counts.len(), 1);
        assert_eq!(
            bin(&values, Bins::Count(1 << 40)).unwrap().counts.len(),
            BINS_MAX
        );
    }

    #[test]
    fn equal_values_make_one_bin() {
        let b = bin(&[2.5; 9], Bins::Auto).unwrap();
        assert_eq!(b.counts, vec![9]);
        assert!(b.edges[0] < 2.5 && b.edges[1] > 2.5);
        assert!(bin(&[], Bins::Auto).is_none());
    }

    #[test]
    fn extreme_values_stay_finite() {
        let v = sorted(vec![-f64::MAX, 0.0, f64::MAX, 1.0, -1.0]);
        let b = bin(&v, Bins::Auto).unwrap();
        assert!(b.edges.iter().all(|e| e.is_finite()));
        assert_eq!(b.counts.iter().sum::<usize>(), 5);
    }

    #[test]
    fn renders_limits_notes_and_escaped_title() {
        let svg = Histogram::new("Lot <A&B>", Quantity::new("shift", "ppm"), spread(400))
            .limits(Some(-812.0), Some(-790.0))
            .render();
        assert_clean_svg(&svg);
        assert!(svg.contains("<title>Lot &lt;A&amp;B&gt;</title>"));
        assert!(svg.contains("lower limit -812 ppm"));
        assert!(svg.contains("upper limit -790 ppm"));
        assert!(svg.contains("below the lower limit"));
        assert!(svg.contains("shift (ppm)"));
        assert!(svg.contains("stroke-dasharray"));
    }

    #[test]
    fn degenerate_inputs_render() {
        let q = Quantity::new("shift", "ppm");
        let empty = Histogram::new("empty", q.clone(), []).render();
        assert_clean_svg(&empty);
        assert!(empty.contains("no data"));
        let junk = Histogram::new("junk", q.clone(), [f64::NAN, f64::INFINITY])
            .limits(Some(f64::NAN), Some(3.0))
            .render();
        assert_clean_svg(&junk);
        assert!(junk.contains("2 non-finite values ignored"));
        assert!(junk.contains("lower limit not finite"));
        for values in [
            vec![4.0],
            vec![4.0; 50],
            vec![0.0, 0.0],
            vec![-f64::MAX, f64::MAX],
        ] {
            assert_clean_svg(&Histogram::new("d", q.clone(), values).render());
        }
        let close = Histogram::new("close limits", q, spread(100))
            .limits(Some(-800.01), Some(-800.0))
            .size(300, 200)
            .render();
        assert_clean_svg(&close);
    }
}
