//! SVG text output: XML escaping, number formatting that can never print
//! `NaN` or `inf`, and a small writer for the few elements the plots use.

use std::fmt::{self, Write};

/// Escapes `text` for XML character data and attribute values.
///
/// `&`, `<`, `>`, `"` and `'` become entities; tab, line feed and carriage
/// return become a space (every text the plots write is one line); any other
/// character that XML 1.0 does not allow (the C0 controls, U+FFFE, U+FFFF)
/// becomes U+FFFD, so the document stays well-formed whatever the input.
///
/// ```
/// assert_eq!(lc_host::svg::escape("a<b & \"c\""), "a&lt;b &amp; &quot;c&quot;");
/// ```
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for ch in text.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            '\t' | '\n' | '\r' => out.push(' '),
            '\u{FFFE}' | '\u{FFFF}' => out.push('\u{FFFD}'),
            c if c < ' ' => out.push('\u{FFFD}'),
            c => out.push(c),
        }
    }
    out
}

/// A count as `f64`. Exact: every count the plots hold is far below 2^53
/// (they index in-memory vectors), where `usize` to `f64` is exact.
pub(crate) fn count_f64(n: usize) -> f64 {
    n as f64
}

/// Largest coordinate magnitude written; anything beyond is clamped.
const COORD_LIMIT: f64 = 1.0e6;

/// A coordinate or length in SVG user units, printed rounded to 0.1 with no
/// exponent, no `-0`, and `0` in place of a non-finite value (which the
/// plots never produce; this is the last guard that keeps `NaN` out of the
/// document).
#[derive(Clone, Copy)]
pub(crate) struct P(pub f64);

impl fmt::Display for P {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let v = if self.0.is_finite() {
            self.0.clamp(-COORD_LIMIT, COORD_LIMIT)
        } else {
            0.0
        };
        // Adding 0.0 turns -0.0 into 0.0; `{}` on f64 never uses an exponent.
        let r = (v * 10.0).round() / 10.0 + 0.0;
        write!(f, "{r}")
    }
}

/// Formats a data value with `sig` significant digits for notes and labels:
/// fixed notation between 1e-4 and 1e7, scientific outside, trailing zeros
/// removed; `"n/a"` for a non-finite value.
pub(crate) fn fmt_value(v: f64, sig: usize) -> String {
    if !v.is_finite() {
        return "n/a".to_string();
    }
    if v == 0.0 {
        return "0".to_string();
    }
    let sig = sig.clamp(1, 15);
    let sci = format!("{:.*e}", sig - 1, v);
    let exp: i32 = sci
        .rsplit_once('e')
        .and_then(|(_, e)| e.parse().ok())
        .unwrap_or(0);
    if (-4..7).contains(&exp) {
        // `sig` is at most 15, so both conversions succeed; fewer than zero
        // decimals means none.
        let decimals = (i32::try_from(sig).unwrap_or(15) - 1 - exp).max(0);
        let decimals = usize::try_from(decimals).unwrap_or(0);
        trim_zeros(&format!("{v:.decimals$}"))
    } else {
        match sci.split_once('e') {
            Some((m, e)) => format!("{}e{e}", trim_zeros(m)),
            None => sci,
        }
    }
}

/// Removes trailing zeros after a decimal point, and the point itself.
fn trim_zeros(s: &str) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s.to_string()
    }
}

/// Estimated advance width of `text` at `size` px in a sans-serif font: 0.6
/// em per character, a little above the average of common sans-serif faces
/// for digits and lower case, so layouts err towards room.
pub(crate) fn text_width(text: &str, size: f64) -> f64 {
    count_f64(text.chars().count()) * size * 0.6
}

/// A stroke: colour, width and optional dash pattern.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Pen {
    pub color: &'static str,
    pub width: f64,
    pub dash: Option<&'static str>,
}

impl Pen {
    /// A solid stroke.
    pub fn solid(color: &'static str, width: f64) -> Self {
        Pen {
            color,
            width,
            dash: None,
        }
    }

    /// A dashed stroke with SVG dash array `dash`.
    pub fn dashed(color: &'static str, width: f64, dash: &'static str) -> Self {
        Pen {
            color,
            width,
            dash: Some(dash),
        }
    }
}

/// Horizontal text alignment.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Anchor {
    Start,
    Middle,
    End,
}

/// How a text element looks.
#[derive(Clone, Copy, Debug)]
pub(crate) struct TextStyle {
    pub size: f64,
    pub anchor: Anchor,
    pub color: &'static str,
    pub bold: bool,
    /// Rotated -90° about its anchor point (a vertical axis label).
    pub vertical: bool,
}

impl TextStyle {
    /// Start-anchored, dark, upright text of `size` px.
    pub fn new(size: f64) -> Self {
        TextStyle {
            size,
            anchor: Anchor::Start,
            color: super::palette::TEXT,
            bold: false,
            vertical: false,
        }
    }

    /// With another anchor.
    pub fn anchor(mut self, anchor: Anchor) -> Self {
        self.anchor = anchor;
        self
    }

    /// With another colour.
    pub fn color(mut self, color: &'static str) -> Self {
        self.color = color;
        self
    }

    /// Bold.
    pub fn bold(mut self) -> Self {
        self.bold = true;
        self
    }

    /// Rotated to read bottom to top.
    pub fn vertical(mut self) -> Self {
        self.vertical = true;
        self
    }
}

/// Accumulates one standalone SVG 1.1 document.
pub(crate) struct Svg {
    out: String,
}

// Writing into a `String` cannot fail, so the `fmt::Result` of `write!` is
// discarded throughout.
impl Svg {
    /// Starts a document of `width` × `height` px with a `<title>` and a
    /// white background.
    pub fn new(width: u32, height: u32, title: &str) -> Self {
        let mut out = String::with_capacity(16 * 1024);
        let _ = write!(
            out,
            "<?xml version=\"1.0\" encoding=\"UTF-8\" standalone=\"no\"?>\n\
             <svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" \
             width=\"{width}\" height=\"{height}\" viewBox=\"0 0 {width} {height}\" \
             font-family=\"sans-serif\">\n\
             <title>{}</title>\n\
             <rect x=\"0\" y=\"0\" width=\"{width}\" height=\"{height}\" fill=\"#ffffff\"/>\n",
            escape(title)
        );
        Svg { out }
    }

    /// A straight line.
    pub fn line(&mut self, a: (f64, f64), b: (f64, f64), pen: Pen) {
        let _ = write!(
            self.out,
            "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\"",
            P(a.0),
            P(a.1),
            P(b.0),
            P(b.1)
        );
        self.stroke(pen);
        self.out.push_str("/>\n");
    }

    /// A rectangle; negative sizes are drawn as zero.
    pub fn rect(&mut self, origin: (f64, f64), size: (f64, f64), fill: &str, pen: Option<Pen>) {
        let _ = write!(
            self.out,
            "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{}\"",
            P(origin.0),
            P(origin.1),
            P(size.0.max(0.0)),
            P(size.1.max(0.0)),
            escape(fill)
        );
        if let Some(pen) = pen {
            self.stroke(pen);
        }
        self.out.push_str("/>\n");
    }

    /// A path with data `d` (built by [`PathData`]); nothing for empty data.
    pub fn path(&mut self, d: &str, pen: Option<Pen>, fill: Option<&str>) {
        if d.is_empty() {
            return;
        }
        let _ = write!(
            self.out,
            "<path d=\"{d}\" fill=\"{}\"",
            escape(fill.unwrap_or("none"))
        );
        if let Some(pen) = pen {
            self.stroke(pen);
            self.out.push_str(" stroke-linejoin=\"round\"");
        }
        self.out.push_str("/>\n");
    }

    /// One line of text with its baseline at `y`.
    pub fn text(&mut self, x: f64, y: f64, text: &str, style: TextStyle) {
        let anchor = match style.anchor {
            Anchor::Start => "start",
            Anchor::Middle => "middle",
            Anchor::End => "end",
        };
        let _ = write!(
            self.out,
            "<text x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"{anchor}\" fill=\"{}\"",
            P(x),
            P(y),
            P(style.size),
            style.color
        );
        if style.bold {
            self.out.push_str(" font-weight=\"bold\"");
        }
        if style.vertical {
            let _ = write!(self.out, " transform=\"rotate(-90 {} {})\"", P(x), P(y));
        }
        let _ = writeln!(self.out, ">{}</text>", escape(text));
    }

    /// Closes the document.
    pub fn finish(mut self) -> String {
        self.out.push_str("</svg>\n");
        self.out
    }

    fn stroke(&mut self, pen: Pen) {
        let _ = write!(
            self.out,
            " stroke=\"{}\" stroke-width=\"{}\"",
            pen.color,
            P(pen.width)
        );
        if let Some(dash) = pen.dash {
            let _ = write!(self.out, " stroke-dasharray=\"{dash}\"");
        }
    }
}

/// Path data (`d` attribute) built point by point, with breaks.
#[derive(Default)]
pub(crate) struct PathData {
    d: String,
    pen_down: bool,
}

impl PathData {
    /// An empty path.
    pub fn new() -> Self {
        Self::default()
    }

    /// Continues the current line to `(x, y)`, or starts a new one after a
    /// break.
    pub fn line_to(&mut self, x: f64, y: f64) {
        let cmd = if self.pen_down { 'L' } else { 'M' };
        if !self.d.is_empty() {
            self.d.push(' ');
        }
        let _ = write!(self.d, "{cmd}{} {}", P(x), P(y));
        self.pen_down = true;
    }

    /// Breaks the line: the next point starts a new one.
    pub fn lift(&mut self) {
        self.pen_down = false;
    }

    /// Appends raw, already formatted path commands as a closed sub-path.
    pub fn push_shape(&mut self, commands: fmt::Arguments<'_>) {
        if !self.d.is_empty() {
            self.d.push(' ');
        }
        let _ = self.d.write_fmt(commands);
        self.pen_down = false;
    }

    /// The `d` attribute text.
    pub fn finish(self) -> String {
        self.d
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escape_replaces_markup_quotes_and_controls() {
        assert_eq!(
            escape(r#"<a href="x">Tom & Jerry's</a>"#),
            "&lt;a href=&quot;x&quot;&gt;Tom &amp; Jerry&apos;s&lt;/a&gt;"
        );
        assert_eq!(escape("a\nb\tc\u{0}d\u{1b}"), "a b c\u{FFFD}d\u{FFFD}");
        assert_eq!(escape("µm · Ω"), "µm · Ω");
    }

    #[test]
    fn coordinates_never_print_nan_inf_or_exponents() {
        assert_eq!(P(f64::NAN).to_string(), "0");
        assert_eq!(P(f64::INFINITY).to_string(), "0");
        assert_eq!(P(-0.0).to_string(), "0");
        assert_eq!(P(-0.04).to_string(), "0");
        assert_eq!(P(12.345).to_string(), "12.3");
        assert_eq!(P(1e300).to_string(), "1000000");
        assert_eq!(P(1e-300).to_string(), "0");
    }

    #[test]
    fn values_format_with_significant_digits() {
        assert_eq!(fmt_value(0.1 + 0.2, 6), "0.3");
        assert_eq!(fmt_value(-812.25, 6), "-812.25");
        assert_eq!(fmt_value(1_234_567.0, 4), "1234567");
        assert_eq!(fmt_value(12_345_678.0, 4), "1.235e7");
        assert_eq!(fmt_value(0.000_012_5, 3), "1.25e-5");
        assert_eq!(fmt_value(0.0005, 3), "0.0005");
        assert_eq!(fmt_value(f64::NAN, 3), "n/a");
        assert_eq!(fmt_value(f64::MAX, 3), "1.8e308");
    }
}
