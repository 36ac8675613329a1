//! SVG plots for reports: lot histograms, calibration curves with
//! residuals, and reading-versus-time traces.
//!
//! Each plot is a builder whose `render()` returns one standalone SVG 1.1
//! document as a `String`: UTF-8, a `<title>`, a `viewBox` so it scales,
//! a sans-serif font, axis labels with units, and no external resources.
//! Writing it to a file (atomically) is the caller's part.
//!
//! - [`Histogram`]: values per bin with acceptance limits; bins by the
//!   Freedman–Diaconis rule (see [`Bins`]) or a given count.
//! - [`CurvePlot`]: line series and measured points, with an optional
//!   residual panel and ± band.
//! - [`TracePlot`]: value versus time, decimated to a min/max envelope per
//!   pixel column (see [`MAX_COLUMNS`]) so millions of samples stay small,
//!   with fault markers and an optional reference series.
//!
//! Axes use "nice" ticks (steps of 1, 2 or 5 × 10ⁿ, [`nice_ticks`]) with
//! labels that print the step's decimals only. No input makes a plot
//! panic or write `NaN` or `inf`: non-finite values are left out and
//! counted in a note, equal values get a widened axis, and a plot without
//! data says "no data". Text is escaped ([`escape`]).
//!
//! Colours follow the Okabe–Ito colour-blind-safe palette; lines also
//! differ in dash pattern and point sets in marker shape, so a grey print
//! stays readable.
//!
//! ```
//! use lc_host::svg::{CurvePlot, Histogram, Quantity, TracePlot};
//!
//! /// A lot's shifts at the rest point against its acceptance limits.
//! fn lot_histogram(shifts_ppm: &[f64], limits_ppm: (Option<f64>, Option<f64>)) -> String {
//!     Histogram::new(
//!         "Lot shift at the rest point",
//!         Quantity::new("shift", "ppm"),
//!         shifts_ppm.iter().copied(),
//!     )
//!     .limits(limits_ppm.0, limits_ppm.1)
//!     .render()
//! }
//!
//! /// A unit's fitted curve, its rig points, and their residuals in a ±band.
//! fn unit_curve(fit: &[(f64, f64)], rig: &[(f64, f64)], band_ppm: f64) -> String {
//!     let residuals: Vec<(f64, f64)> = rig
//!         .iter()
//!         .zip(fit)
//!         .map(|(&(x, measured), &(_, fitted))| (x, measured - fitted))
//!         .collect();
//!     CurvePlot::new("Unit curve", Quantity::new("distance", "mm"), Quantity::new("shift", "ppm"))
//!         .line("fitted curve", fit.iter().copied())
//!         .points("rig points", rig.iter().copied())
//!         .residuals(Quantity::new("residual", "ppm"), residuals, Some(band_ppm))
//!         .render()
//! }
//!
//! /// Readings over time (s, ppm) with the times of faulted rows.
//! fn reading_trace(readings: &[(f64, f64)], fault_times_s: &[f64]) -> String {
//!     TracePlot::new("Field log", Quantity::new("shift", "ppm"), "shift", readings.iter().copied())
//!         .faults(fault_times_s.iter().copied())
//!         .render()
//! }
//!
//! // Empty input still gives complete documents, marked "no data".
//! for svg in [
//!     lot_histogram(&[], (None, None)),
//!     unit_curve(&[], &[], 1.0),
//!     reading_trace(&[], &[]),
//! ] {
//!     assert!(svg.starts_with("<?xml") && svg.ends_with("</svg>\n"));
//!     assert!(svg.contains("no data"));
//! }
//! ```

#[cfg(test)]
mod check;
mod curve;
mod frame;
mod histogram;
mod palette;
mod ticks;
mod trace;
mod xml;

pub use curve::CurvePlot;
pub use histogram::{Bins, Histogram, AUTO_BINS_MAX, AUTO_BINS_MIN, BINS_MAX};
pub use ticks::{nice_ticks, Ticks};
pub use trace::{TracePlot, CAUTION, MAX_COLUMNS};
pub use xml::escape;

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
            CurvePlot::new(nasty, q.clone(), q.clone())
                .line(nasty, [(0.0, 1.0), (1.0, 2.0)])
                .points(nasty, [(0.5, 1.4)])
                .residuals(q.clone(), [(0.5, -0.1)], Some(0.05))
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
            bins in prop_oneof![Just(Bins::Auto), (0usize..2000).prop_map(Bins::Count)],
            w in 0u32..5000,
            h in 0u32..5000,
        ) {
            let svg = Histogram::new("h", Quantity::new("shift", "ppm"), values)
                .limits(lower, upper)
                .bins(bins)
                .size(w, h)
                .render();
            assert_clean_svg(&svg);
        }

        #[test]
        fn curve_never_panics(
            line in prop::collection::vec((value(), value()), 0..100),
            points in prop::collection::vec((value(), value()), 0..50),
            residuals in prop::option::of(prop::collection::vec((value(), value()), 0..50)),
            band in prop::option::of(value()),
        ) {
            let mut plot = CurvePlot::new("c", Quantity::new("x", "mm"), Quantity::new("y", "ppm"))
                .line("l", line)
                .points("p", points);
            if let Some(r) = residuals {
                plot = plot.residuals(Quantity::new("r", "ppm"), r, band);
            }
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
        fn long_trace_is_decimated(
            n in 5_000usize..20_000,
            spike in 0usize..5_000,
        ) {
            let samples = (0..n).map(|i| {
                let t = xml::count_f64(i);
                (t, if i == spike { 1e3 } else { (t * 0.01).sin() })
            });
            let svg = TracePlot::new("t", Quantity::new("shift", "ppm"), "s", samples).size(400, 300).render();
            assert_clean_svg(&svg);
            prop_assert!(svg.contains("min/max envelope"));
            prop_assert!(svg.len() < 40_000);
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

        #[test]
        fn ticks_cover_and_stay_finite(a in value(), b in value(), target in 0usize..40) {
            let t = nice_ticks(a, b, target);
            prop_assert!(t.lo().is_finite() && t.hi().is_finite() && t.lo() < t.hi());
            prop_assert!(!t.values().is_empty() && t.values().len() <= 22);
            prop_assert!(t.values().windows(2).all(|w| w[0] < w[1]));
            prop_assert!(t.values().iter().all(|v| v.is_finite() && *v >= t.lo() && *v <= t.hi()));
            prop_assert!(matches!(t.step_parts().0, 1 | 2 | 5));
            for v in [a, b].into_iter().filter(|v| v.is_finite()) {
                prop_assert!(t.lo() <= v && v <= t.hi(), "{v} outside {t:?}");
            }
            for l in t.labels() {
                prop_assert!(!l.contains("NaN") && !l.contains("inf") && l != "-0", "{l}");
            }
        }
    }
}
