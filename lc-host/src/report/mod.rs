//! The lot report people open in a browser: one offline `index.html` per
//! lot and a printable certificate page per unit, with SVG plots beside
//! them as files. Nothing is fetched from a network: the pages carry
//! their style sheet inline, use the system's fonts, run no script, and
//! load their plots by relative paths.
//!
//! ```text
//! report/
//!   index.html            lot summary, yield, the plan's limits, failures by
//!                         reason (Pareto), histograms, the units table,
//!                         traceability
//!   plots/*.svg           the lot's histograms (only those that apply)
//!   units/<serial>.html   one unit's certificate: verdict, every limit with
//!                         the measured value, key figures, plots, traceability
//!   units/<serial>-curve.svg, -residual.svg, -drift.svg
//!   results.jsonl         one JSON object per unit attempt for a
//!                         manufacturing execution system ([`results`])
//! ```
//!
//! [`ReportWriter`] streams: each unit's page (and plots, for at most a
//! set number of units, failed ones first) is written as the unit is
//! calibrated, and only one short table row per unit is kept for the
//! index, so a lot of any size is reported in bounded memory. Every file
//! is written whole or not at all ([`crate::atomic`]).
//!
//! The pages are made from [`rows::result_rows`], the one function that
//! turns a unit's typed acceptance results into rows of code, measured
//! value, bound and unit, and from [`rows::Traceability`]; the results file
//! from the same findings ([`results::ResultLine`]).

pub mod html;
pub mod results;
pub mod rows;

use crate::atomic::write_bytes;
use crate::calib::lot::{file_stem, LotReport, UnitOutcome};
use crate::calib::plan::{Kind, Plan};
use crate::calib::report::{lot_plots, unit_plots, verdict, LengthUnit};
use html::{badge, escape, figure, num, page, url, CAUTION};
use results::{ImageRef, ResultsWriter};
use rows::{limit_rows, result_rows, ResultRow, Traceability, OTHER};
use std::collections::{BTreeMap, HashSet};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// Why a report could not be written.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    /// A folder or file could not be written.
    #[error("{path}: cannot write the report: {source}; check that the folder is writable and the disk has room")]
    Io {
        /// The file or folder.
        path: PathBuf,
        /// Cause.
        source: std::io::Error,
    },
}

fn io(path: &Path) -> impl FnOnce(std::io::Error) -> ReportError + '_ {
    move |source| ReportError::Io {
        path: path.to_path_buf(),
        source,
    }
}

fn write(path: &Path, text: &str) -> Result<(), ReportError> {
    write_bytes(path, text.as_bytes()).map_err(|e| ReportError::Io {
        path: path.to_path_buf(),
        source: std::io::Error::other(e.to_string()),
    })
}

/// The current time, UTC, as `YYYY-MM-DD hh:mm:ss UTC`.
pub fn utc_now() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_secs());
    utc(secs)
}

/// The current time, UTC, as RFC 3339 (`YYYY-MM-DDThh:mm:ssZ`).
pub fn utc_rfc3339_now() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_secs());
    rfc3339(secs)
}

/// `secs` after the epoch as RFC 3339, UTC.
fn rfc3339(secs: u64) -> String {
    let t = utc(secs);
    format!("{}T{}Z", &t[..10], &t[11..19])
}

/// `secs` after 1970-01-01 00:00:00 UTC as `YYYY-MM-DD hh:mm:ss UTC`
/// (proleptic Gregorian calendar; days to civil date after Hinnant,
/// "chrono-Compatible Low-Level Date Algorithms", 2013).
fn utc(secs: u64) -> String {
    let days = i64::try_from(secs / 86_400).unwrap_or(0);
    let rem = secs % 86_400;
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!(
        "{y:04}-{m:02}-{d:02} {:02}:{:02}:{:02} UTC",
        rem / 3600,
        rem % 3600 / 60,
        rem % 60
    )
}

/// One unit's line in the index.
#[derive(Clone, Debug)]
struct UnitRow {
    serial: String,
    page: String,
    passed: bool,
    attempt: Option<u32>,
    rest_mhz: Option<f64>,
    q: Option<f64>,
    max_residual: Option<f64>,
    b1_ppm_per_k: Option<f64>,
    first_reason: String,
}

/// Writes a lot's report as its units are calibrated; see the module
/// documentation for the files.
pub struct ReportWriter<'p> {
    dir: PathBuf,
    lot: String,
    plan: &'p Plan,
    trace: Traceability,
    max_unit_plots: usize,
    plotted: usize,
    plotted_failed: usize,
    stems: HashSet<String>,
    units: Vec<UnitRow>,
    reasons: BTreeMap<&'static str, (String, usize)>,
    figures: Vec<(String, String)>,
    results: ResultsWriter,
}

impl<'p> ReportWriter<'p> {
    /// A report of lot `lot` under `plan` into `dir` (created with
    /// `plots/` and `units/` if missing). Plots are drawn for at most
    /// `max_unit_plots` units, half of that room kept for failed units.
    pub fn new(
        dir: &Path,
        lot: &str,
        plan: &'p Plan,
        trace: Traceability,
        max_unit_plots: usize,
    ) -> Result<Self, ReportError> {
        for d in [dir.to_path_buf(), dir.join("plots"), dir.join("units")] {
            std::fs::create_dir_all(&d).map_err(io(&d))?;
        }
        let results = ResultsWriter::new(&dir.join("results.jsonl"), lot, trace.clone());
        Ok(ReportWriter {
            results,
            dir: dir.to_path_buf(),
            lot: lot.to_string(),
            plan,
            trace,
            max_unit_plots,
            plotted: 0,
            plotted_failed: 0,
            stems: HashSet::new(),
            units: Vec::new(),
            reasons: BTreeMap::new(),
            figures: Vec::new(),
        })
    }

    /// The report's folder.
    pub fn dir(&self) -> &Path {
        &self.dir
    }

    /// A page name for `serial` not used before in this report.
    fn unique_stem(&mut self, serial: &str) -> String {
        let base = file_stem(serial);
        let mut stem = base.clone();
        let mut n = 2;
        while !self.stems.insert(stem.clone()) {
            stem = format!("{base}-{n}");
            n += 1;
        }
        stem
    }

    /// Adds one unit: writes its certificate page (and its plots, while
    /// there is room) and keeps its line for the index.
    pub fn add(&mut self, out: &UnitOutcome) -> Result<(), ReportError> {
        let stem = self.unique_stem(&out.serial);
        let rows = result_rows(out, self.plan);
        let image = out.image_path.as_deref().and_then(ImageRef::of);
        self.results.add_with_image(out, image.clone());
        if !out.passed {
            // Each limit the unit fails once, by its code; a unit no
            // finding explains counts under `other`.
            let mut codes: Vec<(&'static str, String)> = Vec::new();
            for r in rows
                .iter()
                .filter(|r| r.passed == Some(false) && r.code != OTHER)
            {
                if !codes.iter().any(|c| c.0 == r.code) {
                    codes.push((r.code, format!("{} ({})", r.text, r.plan_key)));
                }
            }
            if codes.is_empty() {
                codes.push((
                    OTHER,
                    "rig data, fit or record problem (see the units' reasons)".into(),
                ));
            }
            for (code, text) in codes {
                self.reasons.entry(code).or_insert((text, 0)).1 += 1;
            }
        }
        let room_for_passes = self.max_unit_plots - self.max_unit_plots / 2;
        let take = self.plotted < self.max_unit_plots
            && (!out.passed || self.plotted - self.plotted_failed < room_for_passes);
        let mut plots = Vec::new();
        if take {
            for (kind, caption, svg) in unit_plots(out, self.plan) {
                let file = format!("{stem}-{kind}.svg");
                write(&self.dir.join("units").join(&file), &svg)?;
                plots.push((file, caption));
            }
            if !plots.is_empty() {
                self.plotted += 1;
                self.plotted_failed += usize::from(!out.passed);
            }
        }
        let page_name = format!("{stem}.html");
        let html = self.unit_page(out, &rows, &plots, take, image.as_ref());
        write(&self.dir.join("units").join(&page_name), &html)?;
        let len = LengthUnit::of(self.plan);
        let fit = out.fit.as_ref();
        self.units.push(UnitRow {
            serial: out.serial.clone(),
            page: format!("units/{page_name}"),
            passed: out.passed,
            attempt: out.recorded.as_ref().ok().copied(),
            rest_mhz: fit.map(|f| f.rest_frequency_hz * 1e-6),
            q: fit.and_then(|f| f.q.map(|q| q.0)),
            max_residual: fit
                .and_then(|f| f.max_residual())
                .map(|v| v * len.per_output),
            b1_ppm_per_k: fit.map(|f| f.drift.b1_per_k * 1e6),
            first_reason: out.reasons.first().cloned().unwrap_or_default(),
        });
        Ok(())
    }

    /// Adds a figure to the lot page (e.g. a field trace): `svg` is written
    /// to `plots/<file>`.
    pub fn figure(&mut self, file: &str, caption: &str, svg: &str) -> Result<(), ReportError> {
        let file = file_stem(file);
        write(&self.dir.join("plots").join(&file), svg)?;
        self.figures
            .push((format!("plots/{file}"), caption.to_string()));
        Ok(())
    }

    fn unit_page(
        &self,
        out: &UnitOutcome,
        rows: &[ResultRow],
        plots: &[(String, String)],
        plotted: bool,
        image: Option<&ImageRef>,
    ) -> String {
        let mut b = String::new();
        let lot = escape(&self.lot);
        let serial = escape(&out.serial);
        let _ = write!(
            b,
            "<nav><a href=\"../index.html\">← lot {lot}</a></nav>\n\
             <h1>Calibration certificate: {serial} {}</h1>\n\
             <p class=\"sub\">lot {lot} · {} reader · report of {}</p>\n",
            badge(Some(out.passed)),
            kind_name(self.plan.product.kind),
            escape(&self.trace.generated_utc)
        );
        b.push_str("<h2>Unit</h2>\n<dl class=\"kv\">\n");
        let mut kv = |k: &str, v: String| {
            let _ = writeln!(b, "<dt>{}</dt><dd>{}</dd>", escape(k), v);
        };
        kv("serial", serial.clone());
        kv("lot", lot.clone());
        kv("verdict", verdict(out.passed).to_string());
        kv(
            "attempt",
            match &out.recorded {
                Ok(n) => n.to_string(),
                Err(e) => format!("not recorded: {}", escape(e)),
            },
        );
        let image = match (&out.image_path, image) {
            (Some(p), Some(i)) => format!(
                "{} ({} bytes, CRC-32 {} over the whole file)",
                escape(&p.display().to_string()),
                i.bytes,
                i.crc32
            ),
            (Some(p), None) => format!("{} (could not be read)", escape(&p.display().to_string())),
            (None, _) => "none (a failed unit gets no image)".to_string(),
        };
        kv("calibration image", image);
        b.push_str("</dl>\n");

        b.push_str(
            "<h2>Acceptance</h2>\n<table class=\"limits\">\n<thead><tr><th>code</th><th>limit</th>\
             <th class=\"num\">bound</th><th class=\"num\">measured</th><th>unit</th><th>result</th></tr></thead>\n<tbody>\n",
        );
        for r in rows {
            let mut what = escape(&r.text);
            if !r.plan_key.is_empty() {
                let _ = write!(what, " <span class=\"key\">{}</span>", escape(r.plan_key));
            }
            if let Some(f) = &r.finding {
                let _ = write!(what, "<div class=\"finding\">{}</div>", escape(f));
            }
            let _ = writeln!(
                b,
                "<tr><td><code>{}</code></td><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td>{}</td><td>{}</td></tr>",
                r.code,
                what,
                escape(&r.bound),
                num(r.measured, decimals(r.code)),
                escape(&r.unit),
                badge(r.passed)
            );
        }
        b.push_str("</tbody>\n</table>\n");
        if !out.reasons.is_empty() {
            b.push_str("<h2>Reasons recorded</h2>\n<ul>\n");
            for r in &out.reasons {
                let _ = writeln!(b, "<li>{}</li>", escape(r));
            }
            b.push_str("</ul>\n");
        }
        if let Some(f) = &out.fit {
            b.push_str("<h2>Key figures</h2>\n<dl class=\"kv\">\n");
            let mut kv = |k: &str, v: String| {
                let _ = writeln!(b, "<dt>{}</dt><dd>{}</dd>", escape(k), escape(&v));
            };
            kv(
                "rest frequency",
                format!(
                    "{} MHz at {:.1} °C",
                    num(Some(f.rest_frequency_hz * 1e-6), 6),
                    f.drift.reference_c
                ),
            );
            if let Some((q, lo, hi)) = f.q {
                kv(
                    "quality factor at rest",
                    format!("{q:.1} ({lo:.1} … {hi:.1})"),
                );
            }
            let sigma = f
                .drift
                .sigma_b1_per_k
                .map_or(String::new(), |s| format!(" ± {:.2}", s * 1e6));
            kv(
                "drift model",
                format!(
                    "b1 {:+.2}{sigma} ppm/K, b2 {:+.4} ppm/K², from {} {}",
                    f.drift.b1_per_k * 1e6,
                    f.drift.b2_per_k2 * 1e6,
                    f.drift.points,
                    if f.drift.points == 1 {
                        "point"
                    } else {
                        "points"
                    }
                ),
            );
            if let Some(s) = f.sensitivity_per_mm {
                kv("sensitivity", format!("{:.1} ppm/mm", s * 1e6));
            }
            kv(
                "curve",
                format!("{} nodes, {} rig steps used", f.nodes.len(), f.steps),
            );
            b.push_str("</dl>\n");
        }
        b.push_str("<h2>Plots</h2>\n");
        if plots.is_empty() {
            let why = if plotted || out.fit.is_none() {
                "No plots: nothing could be fitted for this unit."
            } else {
                "Plots are drawn for a limited number of units per report (failed units first); \
                 this unit's were left out. Raise the limit (`lc-host calibrate --max-unit-plots`) to draw them."
            };
            let _ = writeln!(b, "<p class=\"note\">{why}</p>");
        } else {
            b.push_str("<div class=\"grid\">\n");
            for (file, caption) in plots {
                b.push_str(&figure(file, caption));
            }
            b.push_str("</div>\n");
        }
        b.push_str("<h2>Traceability</h2>\n");
        b.push_str(&self.trace_block());
        b.push_str(
            "<p class=\"note noprint\">Print this page for a paper certificate; \
             <code>chromium --headless --print-to-pdf=unit.pdf unit.html</code> makes a PDF of it.</p>\n",
        );
        b.push_str(CAUTION);
        page(
            &format!(
                "{} · calibration certificate · lot {}",
                out.serial, self.lot
            ),
            &b,
        )
    }

    fn trace_block(&self) -> String {
        let mut b = String::from("<dl class=\"kv\">\n");
        for (k, v) in self.trace.rows() {
            let _ = writeln!(b, "<dt>{}</dt><dd>{}</dd>", escape(k), escape(&v));
        }
        b.push_str("</dl>\n");
        b
    }

    /// Writes the lot's histograms, `results.jsonl` and `index.html`;
    /// returns the index's path.
    pub fn finish(self, report: &LotReport) -> Result<PathBuf, ReportError> {
        let (plots, omitted) = lot_plots(report, self.plan);
        for p in &plots {
            write(&self.dir.join("plots").join(&p.file), &p.svg)?;
        }
        let lot = escape(&self.lot);
        let len = LengthUnit::of(self.plan);
        let mut b = String::new();
        let _ = write!(
            b,
            "<h1>Lot {lot}: calibration report</h1>\n<p class=\"sub\">{} reader · {} units · report of {}</p>\n",
            kind_name(self.plan.product.kind),
            report.units,
            escape(&self.trace.generated_utc)
        );
        b.push_str("<h2 id=\"summary\">Summary</h2>\n<div class=\"cards\">\n");
        let cards = [
            ("units", report.units.to_string()),
            ("passed", report.passed.to_string()),
            ("failed", report.failed.to_string()),
            ("yield", format!("{:.1} %", report.yield_fraction * 100.0)),
            ("not recorded", report.unrecorded.to_string()),
        ];
        for (k, v) in cards {
            let _ = writeln!(
                b,
                "<div class=\"card\"><div class=\"v\">{}</div><div class=\"k\">{k}</div></div>",
                escape(&v)
            );
        }
        b.push_str("</div>\n");

        b.push_str("<h2 id=\"limits\">Acceptance limits of the plan</h2>\n<table>\n<thead><tr><th>code</th><th>limit</th><th>plan key</th><th class=\"num\">bound</th><th>unit</th></tr></thead>\n<tbody>\n");
        for r in limit_rows(self.plan) {
            let _ = writeln!(
                b,
                "<tr><td><code>{}</code></td><td>{}</td><td><code>{}</code></td><td class=\"num\">{}</td><td>{}</td></tr>",
                r.code,
                escape(&r.text),
                escape(r.plan_key),
                escape(&r.bound),
                escape(&r.unit)
            );
        }
        b.push_str("</tbody>\n</table>\n");

        b.push_str("<h2 id=\"failures\">Failures by reason</h2>\n");
        if self.reasons.is_empty() {
            b.push_str("<p class=\"note\">No unit failed.</p>\n");
        } else {
            let mut pareto: Vec<(&str, &String, usize)> = self
                .reasons
                .iter()
                .map(|(code, (text, n))| (*code, text, *n))
                .collect();
            pareto.sort_by(|a, b| b.2.cmp(&a.2).then(a.0.cmp(b.0)));
            let total: usize = pareto.iter().map(|p| p.2).sum();
            let top = pareto.first().map_or(1, |p| p.2).max(1);
            b.push_str("<p class=\"note\">A failed unit counts once under each limit it fails; largest first, with the cumulative share of all failures.</p>\n");
            b.push_str("<table class=\"pareto\">\n<thead><tr><th>code</th><th>limit</th><th class=\"num\">units</th><th style=\"width:35%\"></th><th class=\"num\">cumulative</th></tr></thead>\n<tbody>\n");
            let mut cum = 0;
            for (code, text, n) in pareto {
                cum += n;
                let _ = writeln!(
                    b,
                    "<tr><td><code>{code}</code></td><td>{}</td><td class=\"num\">{n}</td><td><div class=\"bar\" style=\"width:{:.1}%\"></div></td><td class=\"num\">{:.0} %</td></tr>",
                    escape(text),
                    n as f64 * 100.0 / top as f64,
                    cum as f64 * 100.0 / total as f64
                );
            }
            b.push_str("</tbody>\n</table>\n");
        }

        b.push_str("<h2 id=\"distributions\">Distributions</h2>\n<div class=\"grid\">\n");
        for p in &plots {
            b.push_str(&figure(&format!("plots/{}", p.file), &p.caption));
        }
        b.push_str("</div>\n");
        if !omitted.is_empty() {
            b.push_str("<p class=\"note\">Not measured in this lot, so not drawn: ");
            b.push_str(&escape(&omitted.join("; ")));
            b.push_str(".</p>\n");
        }
        if !self.figures.is_empty() {
            b.push_str("<h2 id=\"figures\">Field logs</h2>\n");
            for (file, caption) in &self.figures {
                b.push_str(&figure(file, caption));
            }
        }

        let _ = write!(
            b,
            "<h2 id=\"units\">Units</h2>\n<p class=\"note\">{} units; each serial links to its certificate page.</p>\n\
             <table id=\"units-table\">\n<thead><tr><th>serial</th><th>verdict</th><th class=\"num\">attempt</th>\
             <th class=\"num\">rest frequency (MHz)</th><th class=\"num\">Q</th><th class=\"num\">largest |residual| ({})</th>\
             <th class=\"num\">b1 (ppm/K)</th><th>first reason</th></tr></thead>\n<tbody>\n",
            self.units.len(),
            len.symbol
        );
        for u in &self.units {
            let _ = writeln!(
                b,
                "<tr><td><a href=\"{}\">{}</a></td><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td>{}</td></tr>",
                escape(&url(&u.page)),
                escape(&u.serial),
                badge(Some(u.passed)),
                u.attempt.map_or("–".to_string(), |a| a.to_string()),
                num(u.rest_mhz, 4),
                num(u.q, 1),
                num(u.max_residual, 2),
                num(u.b1_ppm_per_k, 2),
                escape(&u.first_reason)
            );
        }
        b.push_str("</tbody>\n</table>\n");
        b.push_str("<h2 id=\"traceability\">Traceability</h2>\n");
        b.push_str(&self.trace_block());
        b.push_str(CAUTION);
        let html = page(&format!("Lot {} · calibration report", self.lot), &b);
        let index = self.dir.join("index.html");
        self.results.finish()?;
        write(&index, &html)?;
        Ok(index)
    }
}

/// The reader kind in words.
fn kind_name(k: Kind) -> &'static str {
    match k {
        Kind::Proximity => "proximity",
        Kind::Level => "level",
        Kind::Metal => "metal",
    }
}

/// Decimals a measured value of a limit is shown with.
fn decimals(code: &str) -> usize {
    match code {
        "rest_frequency" => 4,
        "monotonic" | "min_steps" | "bad_rows" | "range_steps" => 0,
        "q" | "sensitivity" => 1,
        _ => 2,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn outcome(serial: &str, passed: bool, reasons: &[&str]) -> UnitOutcome {
        UnitOutcome {
            serial: serial.to_string(),
            passed,
            reasons: reasons.iter().map(|r| r.to_string()).collect(),
            findings: Vec::new(),
            fit: None,
            recorded: Ok(1),
            disposition: crate::calib::lot::Disposition::Judged,
            image_path: None,
            image_error: None,
        }
    }

    /// Serials and reasons are text from a rig log: escaped on every page,
    /// turned into safe file names, and a repeated serial gets its own
    /// page; the index has one row per unit and counts the failures.
    #[test]
    fn hostile_serials_are_escaped_and_pages_unique() {
        let dir = std::env::temp_dir().join(format!("lc-report-unit-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        let plan = Plan::parse(crate::demo::PLAN, Path::new("demo-plan.toml")).unwrap();
        let mut w = ReportWriter::new(&dir, "L<1>", &plan, Traceability::now(), 10).unwrap();
        let nasty = "<script>alert('x')</script>";
        w.add(&outcome(
            nasty,
            false,
            &["line 3: field `ticks`: <b>bad</b>"],
        ))
        .unwrap();
        w.add(&outcome(nasty, false, &["no usable rig step"]))
            .unwrap();
        w.add(&outcome("U-1", true, &[])).unwrap();
        let report = LotReport {
            lot: "L<1>".into(),
            units: 3,
            passed: 1,
            failed: 2,
            ..LotReport::default()
        };
        let index = std::fs::read_to_string(w.finish(&report).unwrap()).unwrap();
        assert!(!index.contains("<script>") && index.contains("&lt;script&gt;"));
        assert_eq!(index.matches("<tr><td><a href=").count(), 3);
        let pages: Vec<String> = std::fs::read_dir(dir.join("units"))
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        assert_eq!(pages.len(), 3, "{pages:?}");
        for p in &pages {
            assert!(
                p.chars()
                    .all(|c| c.is_ascii_alphanumeric() || "-_.%".contains(c)),
                "{p}"
            );
            let html = std::fs::read_to_string(dir.join("units").join(p)).unwrap();
            assert!(!html.contains("<script>") && !html.contains("<b>"), "{p}");
        }
        // Both failures are "other" (no finding).
        assert!(index.contains("<td><code>other</code></td>"));
        let results = std::fs::read_to_string(dir.join("results.jsonl")).unwrap();
        assert_eq!(results.lines().count(), 3);
        for l in results.lines() {
            let v: serde_json::Value = serde_json::from_str(l).unwrap();
            assert_eq!(v["lot"], "L<1>");
            assert_eq!(v["findings"], serde_json::json!([]));
        }
        assert!(index.contains("<td class=\"num\">2</td>"));
        std::fs::remove_dir_all(&dir).ok();
    }

    /// A unit failing a limit: its row carries the finding's value, bound
    /// and text in the display units, the bad rows' messages are `other`
    /// rows, the Pareto counts it under the limit's code (not `other`), and
    /// its results line carries the finding in physical units.
    #[test]
    fn findings_make_the_rows_pareto_and_results() {
        use crate::calib::accept::{Finding, Limit, PhysicalUnit, RigPoint};
        let dir = std::env::temp_dir().join(format!("lc-report-find-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        let plan = Plan::parse(crate::demo::PLAN, Path::new("demo-plan.toml")).unwrap();
        let f = Finding {
            limit: Limit::RestFrequency,
            measured: Some(6.1e6),
            min: Some(5.3e6),
            max: Some(5.95e6),
            unit: PhysicalUnit::Hertz,
            at: None,
        };
        let r = Finding {
            limit: Limit::MaxResidual,
            measured: Some(12.5),
            min: None,
            max: Some(8.0),
            unit: PhysicalUnit::Micrometre,
            at: Some(RigPoint {
                line: 40,
                target_mm: 2.5,
                temp_c: 60.0,
            }),
        };
        let mut out = outcome("U-7", false, &[]);
        out.reasons = vec![f.to_string(), r.to_string(), "line 9: bad row".into()];
        out.findings = vec![f.clone(), r.clone()];
        let rows = result_rows(&out, &plan);
        let rest = rows.iter().find(|x| x.code == "rest_frequency").unwrap();
        assert_eq!(rest.passed, Some(false));
        assert_eq!(rest.measured, Some(6.1));
        assert_eq!(
            (rest.bound.as_str(), rest.unit.as_str()),
            ("5.3 … 5.95", "MHz")
        );
        assert_eq!(rest.finding.as_deref(), Some(f.to_string().as_str()));
        let other: Vec<&ResultRow> = rows.iter().filter(|x| x.code == OTHER).collect();
        assert_eq!(other.len(), 1);
        assert_eq!(other[0].text, "line 9: bad row");
        // Not judged in this run (no fit): the other limits are unknown.
        let q = rows.iter().find(|x| x.code == "q").unwrap();
        assert_eq!(q.passed, None);

        let mut w = ReportWriter::new(&dir, "L1", &plan, Traceability::now(), 4).unwrap();
        w.add(&out).unwrap();
        w.add(&outcome("U-8", true, &[])).unwrap();
        let index = std::fs::read_to_string(
            w.finish(&LotReport {
                units: 2,
                passed: 1,
                failed: 1,
                ..LotReport::default()
            })
            .unwrap(),
        )
        .unwrap();
        let pareto = &index
            [index.find("id=\"failures\"").unwrap()..index.find("id=\"distributions\"").unwrap()];
        assert!(pareto.contains("<code>rest_frequency</code>"), "{pareto}");
        assert!(pareto.contains("<code>max_residual</code>"), "{pareto}");
        assert!(!pareto.contains("<code>other</code>"), "{pareto}");
        let text = std::fs::read_to_string(dir.join("results.jsonl")).unwrap();
        let lines: Vec<serde_json::Value> = text
            .lines()
            .map(|l| serde_json::from_str(l).unwrap())
            .collect();
        assert_eq!(lines.len(), 2);
        assert_eq!(lines[0]["verdict"], "fail");
        assert_eq!(lines[1]["verdict"], "pass");
        let fl = &lines[0]["findings"];
        assert_eq!(fl[0]["code"], "rest_frequency");
        assert_eq!(fl[0]["plan_key"], "limits.rest_frequency_hz");
        assert_eq!(fl[0]["measured"], 6.1e6);
        assert_eq!(fl[0]["unit"], "Hz");
        assert_eq!(fl[1]["unit"], "µm");
        assert_eq!(fl[1]["max"], 8.0);
        assert_eq!(fl[1]["at"]["line"], 40);
        assert_eq!(fl[1]["text"], r.to_string());
        assert_eq!(
            lines[0]["other_reasons"],
            serde_json::json!(["line 9: bad row"])
        );
        std::fs::remove_dir_all(&dir).ok();
    }

    #[test]
    fn utc_dates() {
        assert_eq!(rfc3339(1_700_000_000), "2023-11-14T22:13:20Z");
        assert_eq!(utc(0), "1970-01-01 00:00:00 UTC");
        assert_eq!(utc(951_782_400), "2000-02-29 00:00:00 UTC");
        assert_eq!(utc(1_700_000_000), "2023-11-14 22:13:20 UTC");
    }
}
