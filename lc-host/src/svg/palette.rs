//! Colours. Series use the Okabe–Ito palette (Okabe and Ito, "Color
//! Universal Design", 2008; common practice for colour-blind-safe plots),
//! with vermillion kept for limits, faults and out-of-band points.

/// Text and axes.
pub(crate) const TEXT: &str = "#222222";
/// Notes and secondary text.
pub(crate) const NOTE: &str = "#555555";
/// Grid lines.
pub(crate) const GRID: &str = "#e3e3e3";
/// Plot frame and tick marks.
pub(crate) const AXIS: &str = "#444444";
/// Limits, faults, points outside a band.
pub(crate) const ALERT: &str = "#D55E00";
/// Fill of an acceptance band.
pub(crate) const BAND: &str = "#eaf2f8";
/// Histogram bars.
pub(crate) const BAR: &str = "#0072B2";

/// Series colours in order of use: blue, orange, bluish green, reddish
/// purple, sky blue, black.
pub(crate) const SERIES: [&str; 6] = [
    "#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#000000",
];

/// The colour of series number `i`.
pub(crate) fn series(i: usize) -> &'static str {
    SERIES[i % SERIES.len()]
}
