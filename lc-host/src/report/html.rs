//! HTML building blocks: escaping, the page shell with its inline style
//! sheet (screen and print), numbers and verdict badges.

use std::fmt::Write;

/// `text` with `&`, `<`, `>`, `"` and `'` escaped (safe in text and in
/// quoted attributes).
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c if c.is_control() && c != '\n' && c != '\t' => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

/// A file name as a relative URL: every byte outside `A–Z a–z 0–9 - _ . /`
/// percent-encoded.
pub fn url(path: &str) -> String {
    let mut out = String::with_capacity(path.len());
    for b in path.bytes() {
        if b.is_ascii_alphanumeric() || b"-_./".contains(&b) {
            out.push(char::from(b));
        } else {
            let _ = write!(out, "%{b:02X}");
        }
    }
    out
}

/// The style sheet of every page: system fonts only (nothing fetched),
/// a readable table style, and print rules (A4, no navigation, figures
/// kept whole).
const STYLE: &str = r#"
:root { --pass: #007a4d; --fail: #b34100; --ink: #1f2328; --muted: #59636e; --line: #d1d9e0; --band: #f6f8fa; }
* { box-sizing: border-box; }
body { font-family: system-ui, -apple-system, "Segoe UI", "DejaVu Sans", sans-serif; color: var(--ink); margin: 0 auto; max-width: 1180px; padding: 1.2rem 1.5rem 3rem; line-height: 1.45; }
h1 { font-size: 1.6rem; margin: .2rem 0 .2rem; }
h2 { font-size: 1.2rem; margin: 2rem 0 .6rem; padding-bottom: .2rem; border-bottom: 1px solid var(--line); }
.sub { color: var(--muted); margin: 0 0 1rem; }
nav { font-size: .9rem; margin-bottom: .6rem; }
a { color: #0969da; }
table { border-collapse: collapse; width: 100%; font-size: .92rem; }
th, td { text-align: left; padding: .3rem .55rem; border-bottom: 1px solid var(--line); vertical-align: top; }
th { background: var(--band); font-weight: 600; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
.badge { display: inline-block; white-space: nowrap; padding: .05rem .5rem; border-radius: .3rem; font-weight: 700; font-size: .85rem; color: #fff; }
.badge.pass { background: var(--pass); } .badge.fail { background: var(--fail); } .badge.none { background: var(--muted); }
.cards { display: flex; flex-wrap: wrap; gap: .8rem; }
.card { border: 1px solid var(--line); border-radius: .4rem; padding: .5rem .9rem; min-width: 8.5rem; }
.card .v { font-size: 1.5rem; font-weight: 700; } .card .k { color: var(--muted); font-size: .85rem; }
.bar { background: var(--fail); height: .8rem; border-radius: .15rem; min-width: 2px; }
figure { margin: 0 0 1.2rem; break-inside: avoid; page-break-inside: avoid; }
figure img { max-width: 100%; height: auto; border: 1px solid var(--line); }
figcaption { color: var(--muted); font-size: .88rem; }
.grid { display: grid; grid-template-columns: repeat(auto-fill, minmax(520px, 1fr)); gap: 1rem; }
.note { color: var(--muted); font-size: .9rem; }
.key { color: var(--muted); font-family: ui-monospace, "DejaVu Sans Mono", monospace; font-size: .8rem; }
.finding { color: var(--fail); font-size: .88rem; margin-top: .15rem; }
.caution { margin-top: 2.5rem; padding: .6rem .9rem; border-left: 4px solid var(--fail); background: #fff8f3; font-size: .9rem; }
dl.kv { display: grid; grid-template-columns: max-content 1fr; gap: .25rem 1.2rem; margin: 0; }
dl.kv dt { color: var(--muted); } dl.kv dd { margin: 0; }
@media print {
  @page { size: A4; margin: 14mm 12mm; }
  body { max-width: none; padding: 0; font-size: 10.5pt; }
  nav, .noprint { display: none; }
  h2 { break-after: avoid; page-break-after: avoid; }
  tr { break-inside: avoid; }
  .grid { display: block; }
  a { color: inherit; text-decoration: none; }
  .badge { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
"#;

/// A whole page: `title` in the head, `body` as given.
pub fn page(title: &str, body: &str) -> String {
    format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
         <title>{}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n{body}\n</body>\n</html>\n",
        escape(title)
    )
}

/// A verdict badge: PASS, FAIL, or "not measured".
pub fn badge(passed: Option<bool>) -> &'static str {
    match passed {
        Some(true) => "<span class=\"badge pass\">PASS</span>",
        Some(false) => "<span class=\"badge fail\">FAIL</span>",
        None => "<span class=\"badge none\">not measured</span>",
    }
}

/// A number with `decimals` decimals, or "–" without one.
pub fn num(v: Option<f64>, decimals: usize) -> String {
    match v.filter(|v| v.is_finite()) {
        Some(v) => {
            let s = format!("{v:.decimals$}");
            if s.trim_start_matches('-')
                .chars()
                .all(|c| c == '0' || c == '.')
            {
                s.trim_start_matches('-').to_string()
            } else {
                s
            }
        }
        None => "–".to_string(),
    }
}

/// A figure: the image at `src` (relative URL), its caption.
pub fn figure(src: &str, caption: &str) -> String {
    format!(
        "<figure><img src=\"{}\" alt=\"{}\" loading=\"eager\"><figcaption>{}</figcaption></figure>\n",
        escape(&url(src)),
        escape(caption),
        escape(caption)
    )
}

/// The caution every page ends with (see README: Cautions).
pub const CAUTION: &str = "<p class=\"caution\"><strong>Not a safety-rated component.</strong> \
    Where a reading protects people or machines, the safety function must follow the applicable \
    functional-safety standards, local codes and a qualified engineer's review. Validate every \
    unit against your own acceptance limits.</p>";

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn text_and_urls_are_escaped() {
        assert_eq!(
            escape("<a href='x'>&\"</a>"),
            "&lt;a href=&#39;x&#39;&gt;&amp;&quot;&lt;/a&gt;"
        );
        assert_eq!(url("units/A B#1?.html"), "units/A%20B%231%3F.html");
        assert_eq!(num(Some(-0.0001), 2), "0.00");
        assert_eq!(num(None, 2), "–");
    }
}
