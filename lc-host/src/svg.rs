//! SVG plots for reports, drawn with the `plotters` crate's SVG backend:
//! lot histograms, line and point plots (a unit's curve, residuals, drift
//! model), and reading-versus-time traces.
//!
//! Each plot is a builder whose `render()` returns one standalone SVG 1.1
//! document as a `String`: UTF-8, a `<title>`, a `viewBox` so it scales,
//! the viewer's sans-serif font (no font files, no network), axis labels
//! with units, and a legend wherever there is more than one series or
//! limit. Writing it to a file (atomically) is the caller's part.
//!
//! - [`Histogram`]: a lot's values with acceptance limits; bins by the
//!   Freedman–Diaconis rule held to 5 … 40 bins across the drawn range
//!   (see [`Bins`]), so no bar is a hairline.
//! - [`XyPlot`]: line and point series with horizontal limit lines.
//! - [`TracePlot`]: value versus time, decimated to a min/max envelope per
//!   pixel column (see [`MAX_COLUMNS`]) so millions of samples stay small,
//!   with fault times and an optional reference series.
//!
//! Tick labels carry only the decimals the tick step needs (no float
//! noise such as `0.30000000000000004`). No input makes a plot panic or
//! write `NaN` or `inf`: values that are not finite or beyond ±10¹⁵ are
//! left out and counted in a note, equal values get a widened axis, and a
//! plot without data says "no data". Text is cleaned of control
//! characters and escaped.
//!
//! Colours follow the Okabe–Ito colour-blind-safe palette; lines also
//! differ in dash pattern and point sets in marker shape, so a grey print
//! stays readable.
//!
//! ```
//! use lc_host::svg::{Histogram, Quantity, TracePlot, XyPlot};
//!
//! // A lot's rest frequencies against the plan's window.
//! let h = Histogram::new("Lot rest frequency", Quantity::new("rest frequency", "MHz"), [5.61, 5.62, 5.64])
//!     .limits(Some(5.3), Some(5.95))
//!     .render();
//! // A unit's residuals at two rig temperatures, with the ± limit.
//! let r = XyPlot::new("Residuals", Quantity::new("gap", "mm"), Quantity::new("residual", "µm"))
//!     .points("25 °C", [(0.5, 1.0), (1.0, -2.0)])
//!     .points("60 °C", [(0.5, 0.0), (1.0, 1.0)])
//!     .limit_lines("limit ±8 µm", [-8.0, 8.0])
//!     .render();
//! // Readings over time with the times of faulted rows.
//! let t = TracePlot::new("Field log", Quantity::new("gap", "µm"), "reading", [(0.0, 10.0), (1.0, 11.0)])
//!     .faults([0.5])
//!     .render();
//! for svg in [h, r, t] {
//!     assert!(svg.starts_with("<?xml") && svg.ends_with("</svg>\n"));
//!     assert!(svg.contains("<title>"));
//! }
//! // Empty input still gives a complete document, marked "no data".
//! let empty = XyPlot::new("c", Quantity::new("x", "mm"), Quantity::new("y", "ppm")).render();
//! assert!(empty.contains("no data"));
//! ```

#[cfg(test)]
mod check;
mod draw;
mod histogram;
mod trace;
mod xy;

pub use draw::escape;
pub use histogram::{Bins, Histogram, MAX_BINS, MIN_BINS};
pub use trace::{TracePlot, CAUTION, MAX_COLUMNS};
pub use xy::XyPlot;

/// A plotted quantity: its name and unit, shown as the axis label
/// "name (unit)", or "name" alone when the unit is empty.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Quantity {
    /// What is plotted, e.g. "shift".
    pub name: String,
    /// Its unit, e.g. "ppm"; empty for a pure number.
    pub unit: String,
}

impl Quantity {
    /// A quantity `name` in `unit`.
    pub fn new(name: impl Into<String>, unit: impl Into<String>) -> Self {
        Quantity {
            name: name.into(),
            unit: unit.into(),
        }
    }

    /// The axis label: "name (unit)", or "name" without a unit.
    pub fn label(&self) -> String {
        let unit = self.unit.trim();
        if unit.is_empty() {
            self.name.clone()
        } else {
            format!("{} ({unit})", self.name)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::check::{assert_clean_svg, check_xml};
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn quantity_labels() {
        assert_eq!(Quantity::new("shift", "ppm").label(), "shift (ppm)");
        assert_eq!(Quantity::new("ratio", " ").label(), "ratio");
    }

    #[test]
    fn hostile_text_is_escaped_everywhere() {
        let nasty = "<script>\"x\" & 'y'</script>\u{0}]]>";
        let q = Quantity::new(nasty, nasty);
        let svgs = [
            Histogram::new(nasty, q.clone(), [1.0, 2.0, 3.0])
                .limits(Some(1.5), None)
                .render(),
            XyPlot::new(nasty, q.clone(), q.clone())
                .line(nasty, [(0.0, 1.0), (1.0, 2.0)])
                .points(nasty, [(0.5, 1.4)])
                .limit_lines(nasty, [0.05])
                .render(),
            TracePlot::new(nasty, q.clone(), nasty, [(0.0, 1.0), (1.0, 2.0)])
                .reference(nasty, [(0.0, 1.1)])
                .render(),
        ];
        for svg in svgs {
            check_xml(&svg).unwrap();
            assert!(!svg.contains("<script>"));
            assert!(svg.contains("&lt;script&gt;&quot;x&quot; &amp; &apos;y&apos;"));
        }
    }

    /// Every axis carries its quantity and unit; two series get a legend.
    #[test]
    fn axes_are_labelled_and_series_named() {
        let svg = XyPlot::new(
            "t",
            Quantity::new("gap", "mm"),
            Quantity::new("residual", "µm"),
        )
        .points("25 °C", [(1.0, 1.0)])
        .points("60 °C", [(1.0, 2.0)])
        .render();
        assert_clean_svg(&svg);
        for text in ["gap (mm)", "residual (µm)", "25 °C", "60 °C"] {
            assert!(svg.contains(text), "{text} missing");
        }
        let svg = TracePlot::new(
            "t",
            Quantity::new("gap", "µm"),
            "reading",
            [(0.0, 1.0), (7200.0, 2.0)],
        )
        .faults([1800.0])
        .render();
        for text in ["time (min)", "gap (µm)", "sensor fault flagged", CAUTION] {
            assert!(svg.contains(text), "{text} missing");
        }
    }

    /// Mostly ordinary numbers, often the awkward ones.
    fn value() -> impl Strategy<Value = f64> {
        prop_oneof![
            4 => -1e4..1e4_f64,
            2 => any::<f64>(),
            1 => prop_oneof![
                Just(f64::NAN),
                Just(f64::INFINITY),
                Just(f64::NEG_INFINITY),
                Just(f64::MAX),
                Just(-f64::MAX),
                Just(f64::MIN_POSITIVE),
                Just(5e-324),
                Just(0.0),
                Just(-0.0),
                Just(1e300),
            ],
        ]
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(200))]

        #[test]
        fn histogram_never_panics(
            values in prop::collection::vec(value(), 0..200),
            lower in prop::option::of(value()),
            upper in prop::option::of(value()),
            w in 0u32..5000,
            h in 0u32..5000,
        ) {
            let svg = Histogram::new("h", Quantity::new("shift", "ppm"), values)
                .limits(lower, upper)
                .size(w, h)
                .render();
            assert_clean_svg(&svg);
        }

        #[test]
        fn bins_hold_every_plottable_value(
            values in prop::collection::vec(value(), 1..200),
            marks in prop::collection::vec(value(), 0..3),
        ) {
            if let Some(b) = Bins::of(&values, &marks) {
                let n = values.iter().filter(|v| v.is_finite() && v.abs() <= 1e15).count();
                prop_assert_eq!(b.counts.iter().sum::<usize>(), n);
                prop_assert!(b.width > 0.0 && b.counts.len() <= 4 * MAX_BINS);
            }
        }

        #[test]
        fn xy_never_panics(
            line in prop::collection::vec((value(), value()), 0..100),
            points in prop::collection::vec((value(), value()), 0..50),
            band in prop::option::of(value()),
        ) {
            let plot = XyPlot::new("c", Quantity::new("x", "mm"), Quantity::new("y", "ppm"))
                .line("l", line)
                .points("p", points)
                .limit_lines("b", band);
            assert_clean_svg(&plot.render());
        }

        #[test]
        fn trace_never_panics(
            samples in prop::collection::vec((value(), value()), 0..300),
            reference in prop::option::of(prop::collection::vec((value(), value()), 0..100)),
            faults in prop::collection::vec(value(), 0..20),
            w in 0u32..5000,
        ) {
            let mut plot = TracePlot::new("t", Quantity::new("shift", "ppm"), "s", samples)
                .faults(faults)
                .size(w, 300);
            if let Some(r) = reference {
                plot = plot.reference("r", r);
            }
            assert_clean_svg(&plot.render());
        }

        #[test]
        fn any_text_gives_well_formed_svg(title in any::<String>(), name in any::<String>()) {
            let svg = Histogram::new(title.clone(), Quantity::new(name.clone(), name.clone()), [1.0, 2.0])
                .limits(Some(1.5), None)
                .render();
            prop_assert!(check_xml(&svg).is_ok(), "{:?}", check_xml(&svg));
            let svg = TracePlot::new(title, Quantity::new("v", ""), name, [(0.0, 1.0)]).render();
            prop_assert!(check_xml(&svg).is_ok(), "{:?}", check_xml(&svg));
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(16))]

        #[test]
        fn long_trace_is_decimated(
            n in 5_000u32..20_000,
            spike in 0u32..5_000,
        ) {
            let samples = (0..n).map(|i| {
                let t = f64::from(i);
                (t, if i == spike { 1e3 } else { (t * 0.01).sin() })
            });
            let svg = TracePlot::new("t", Quantity::new("shift", "ppm"), "s", samples).size(400, 300).render();
            assert_clean_svg(&svg);
            prop_assert!(svg.contains("min/max envelope"));
            prop_assert!(svg.len() < 60_000, "{} bytes", svg.len());
        }
    }
}
