//! What the live-link tests share.

/// A value column of `lc-host convert` (physical units, the image's exact
/// decimal digits) as the reading's raw integer: the digits without the
/// decimal point ("0.001216" m is 1216 µm). Empty stays empty.
pub fn raw_units(s: &str) -> String {
    if s.is_empty() {
        return String::new();
    }
    s.replace('.', "")
        .parse::<i64>()
        .expect("a decimal value")
        .to_string()
}
