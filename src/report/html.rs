//! The run page: one self-contained HTML file (no scripts, no external styles or fonts) with a table of
//! records and their figures, warnings and failures highlighted, and each record's plots. Every name and
//! message is escaped; the plots are our own SVG (whose text plotters escapes) inlined, or linked.

use super::units::{fixed, si, sigma};
use crate::analysis::Analysis;
use crate::error::Result;
use crate::figures::{self, Cells, Figure, Unit};
use std::fmt::Write;

/// One record on the run page.
#[derive(Debug, Clone, PartialEq)]
pub struct IndexRow {
    /// Device name, shown as given (escaped).
    pub device: String,
    /// Record name, shown as given (escaped).
    pub record: String,
    /// The result record.
    pub analysis: Analysis,
    /// The record's plot files, relative to the page's folder (`/`-separated).
    pub plots: Vec<String>,
    /// Extra columns, e.g. ("verdict", "fail: SNR below 70 dB"); a value starting with "fail" is
    /// highlighted, one starting with "pass" is marked as good.
    pub extra: Vec<(String, String)>,
}

/// Escapes text for HTML element content and quoted attribute values: & < > " '.
pub fn escape(text: &str) -> String {
    let mut s = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => s.push_str("&amp;"),
            '<' => s.push_str("&lt;"),
            '>' => s.push_str("&gt;"),
            '"' => s.push_str("&quot;"),
            '\'' => s.push_str("&#39;"),
            c => s.push(c),
        }
    }
    s
}

/// Renders the run page with each plot shown through an `<img>` of its relative path (the tests
/// check the page's table and escaping through it).
#[cfg(test)]
pub(crate) fn render_index_html(title: &str, rows: &[IndexRow]) -> String {
    render_with(title, rows, &mut |path: &str| {
        Ok(format!(
            "<img src=\"{}\" alt=\"{}\" loading=\"lazy\">",
            escape(path),
            escape(path)
        ))
    })
    .expect("linking plots cannot fail")
}

/// Renders the run page with every plot's SVG read from `run_dir` and inlined (the tests check the
/// inlining through it; [`super::write_run_report`] inlines from memory).
#[cfg(test)]
pub(crate) fn render_index_html_inline(
    title: &str,
    rows: &[IndexRow],
    run_dir: &std::path::Path,
) -> Result<String> {
    use crate::error::{Error, ErrorKind, Location};
    render_with(title, rows, &mut |path: &str| {
        let full = run_dir.join(path);
        let text = std::fs::read_to_string(&full).map_err(|e| {
            Error::new(
                ErrorKind::Io,
                full.display().to_string(),
                Location::Whole,
                "a readable SVG plot to inline",
                e.to_string(),
            )
        })?;
        Ok(inline_svg(path, &text))
    })
}

/// The markup that shows one plot inline. Only SVG as our plots are made (an `<svg` root, no script,
/// no embedded HTML, no event attributes) is inlined; anything else is linked instead of trusted.
pub(crate) fn inline_svg(path: &str, svg: &str) -> String {
    let body = svg.trim_start();
    let body = match body.strip_prefix("<?xml") {
        Some(rest) => rest.split_once("?>").map_or("", |(_, r)| r).trim_start(),
        None => body,
    };
    let lower = body.to_ascii_lowercase();
    // Text and attribute values of our SVG have < and > escaped, so every '<' opens a tag.
    let tag_is_safe = |tag: &str| {
        let mut words = tag.split_whitespace();
        let name = words.next().unwrap_or("").trim_start_matches('/');
        !matches!(
            name.trim_end_matches('/'),
            "script" | "foreignobject" | "iframe" | "object" | "embed"
        ) && words.all(|w| !(w.starts_with("on") && w.contains('=')))
            && !tag.contains("javascript:")
    };
    let safe = lower.starts_with("<svg")
        && lower
            .split('<')
            .skip(1)
            .all(|rest| tag_is_safe(rest.split('>').next().unwrap_or("")));
    if safe {
        body.trim_end().to_string()
    } else {
        format!("<a href=\"{}\">{}</a>", escape(path), escape(path))
    }
}

const STYLE: &str = r#"
:root { --ink:#2b2f36; --paper:#fcfbf8; --sand:#efe9dc; --line:#d9d1c0; --head:#17384a;
        --teal:#1d6a72; --warn:#fff0c2; --warn-edge:#d9a400; --fail:#f8d7dc; --fail-edge:#a4243b; }
* { box-sizing: border-box; }
body { margin: 0; font: 14px/1.45 system-ui, "Segoe UI", Helvetica, Arial, sans-serif;
       color: var(--ink); background: var(--sand); }
header { background: var(--head); color: #f6f3ea; padding: 18px 28px 14px; }
header h1 { margin: 0 0 4px; font-size: 22px; font-weight: 600; letter-spacing: .01em; }
header p { margin: 0; opacity: .85; }
header a { color: #bfe3e6; }
main { padding: 18px 28px 40px; }
table { border-collapse: collapse; background: var(--paper); width: 100%;
        box-shadow: 0 1px 2px rgba(0,0,0,.08); }
div.wide { overflow-x: auto; }
th, td { padding: 5px 7px; border-bottom: 1px solid var(--line); text-align: right;
         font-variant-numeric: tabular-nums; vertical-align: top; white-space: nowrap; }
th { background: #e3dccb; font-weight: 600; vertical-align: bottom; }
th span.u { display: block; font-weight: 400; font-size: 11.5px; color: #5d636b; }
td span.u { font-size: 11.5px; color: #5d636b; margin-left: 6px; }
th.t, td.t { text-align: left; }
td.notes { text-align: left; min-width: 18ch; max-width: 44ch; font-size: 12.5px;
           white-space: normal; }
tr.warn td { background: var(--warn); }
tr.warn td:first-child { box-shadow: inset 4px 0 0 var(--warn-edge); }
tr.fail td { background: var(--fail); }
tr.fail td:first-child { box-shadow: inset 4px 0 0 var(--fail-edge); }
td.bad { color: var(--fail-edge); font-weight: 600; }
td.good { color: var(--teal); font-weight: 600; }
.status { font-weight: 600; }
section.record { margin-top: 26px; background: var(--paper); padding: 12px 16px 16px;
                 border-left: 4px solid var(--teal); }
section.record.warn { border-left-color: var(--warn-edge); }
section.record.fail { border-left-color: var(--fail-edge); }
section.record h2 { margin: 0 0 4px; font-size: 17px; }
section.record p.src { margin: 0 0 8px; color: #5d636b; font-size: 12.5px; word-break: break-all; }
section.record ul.msgs { margin: 4px 0 10px; padding-left: 18px; }
.plots { display: flex; flex-direction: column; gap: 14px; }
.plots figure { margin: 0; }
.plots svg, .plots img { display: block; width: 100%; max-width: 1000px; height: auto; }
.plots figcaption { font-size: 12px; color: #5d636b; }
footer { padding: 0 28px 24px; color: #5d636b; font-size: 12px; }
main h2 { margin: 26px 0 8px; font-size: 18px; color: var(--head); }
main h3 { margin: 16px 0 6px; font-size: 15px; }
p.note, p.files { margin: 4px 0 10px; color: #5d636b; font-size: 12.5px; }
tr.fail_guardband td, tr.untested td { background: var(--warn); }
tr.fail_guardband td:first-child { box-shadow: inset 4px 0 0 var(--warn-edge); }
tr.error td { background: var(--fail); }
tr.error td:first-child { box-shadow: inset 4px 0 0 var(--fail-edge); }
tr.whole td { font-weight: 600; border-top: 2px solid var(--line); }
span.bar { display: inline-block; width: 120px; height: 10px; background: var(--fail);
           vertical-align: middle; }
span.bar span { display: block; height: 100%; background: var(--teal); }
.dists { display: flex; flex-wrap: wrap; gap: 14px; }
.dists figure { margin: 0; background: var(--paper); padding: 6px; }
.dists svg { display: block; width: 520px; max-width: 100%; height: auto; }
.dists figcaption { font-size: 12px; color: #5d636b; }
ul.failing { background: var(--paper); padding: 8px 8px 8px 28px; columns: 2 36em; }
ul.failing li { margin: 2px 0; break-inside: avoid; }
"#;

/// The page shell every page of the tool shares: the run page's style, a header with the title and
/// one line under it (`subtitle_html`, already escaped), then `body_html` in `<main>`.
pub(crate) fn page(title: &str, subtitle_html: &str, body_html: &str) -> String {
    let t = escape(title);
    format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
         <title>{t}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n<header>\n<h1>{t}</h1>\n\
         <p>{subtitle_html}</p>\n</header>\n<main>\n{body_html}</main>\n</body>\n</html>\n"
    )
}

/// The figures of the page's table: the input's frequency and level, then the headline figures.
fn table_figures() -> Vec<&'static Figure> {
    let mut f = vec![&figures::FIN, &figures::FUNDAMENTAL];
    f.extend(figures::headline());
    f
}

fn status(a: &Analysis) -> (&'static str, String) {
    if a.error.is_some() {
        ("fail", "failed".to_string())
    } else if !a.warnings.is_empty() {
        let n = a.warnings.len();
        (
            "warn",
            format!("{n} warning{}", if n == 1 { "" } else { "s" }),
        )
    } else {
        ("ok", "ok".to_string())
    }
}

fn extra_class(value: &str) -> &'static str {
    let v = value.trim_start().to_ascii_lowercase();
    if v.starts_with("fail") {
        " bad"
    } else if v.starts_with("pass") {
        " good"
    } else {
        ""
    }
}

/// Renders the page; `plot` turns one relative plot path into its markup.
pub(crate) fn render_with(
    title: &str,
    rows: &[IndexRow],
    plot: &mut dyn FnMut(&str) -> Result<String>,
) -> Result<String> {
    // Extra column names in order of first appearance.
    let mut extra_keys: Vec<&str> = Vec::new();
    for r in rows {
        for (k, _) in &r.extra {
            if !extra_keys.contains(&k.as_str()) {
                extra_keys.push(k);
            }
        }
    }
    let failed = rows.iter().filter(|r| r.analysis.error.is_some()).count();
    let warned = rows
        .iter()
        .filter(|r| r.analysis.error.is_none() && !r.analysis.warnings.is_empty())
        .count();
    let mut devices: Vec<&str> = Vec::new();
    for r in rows {
        if !devices.contains(&r.device.as_str()) {
            devices.push(&r.device);
        }
    }

    let mut h = String::new();
    let t = escape(title);
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
         <title>{t}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n<header>\n<h1>{t}</h1>\n\
         <p>{} record{} on {} device{} · {} with warnings · {} failed · \
         <a href=\"summary.csv\">summary.csv</a></p>\n</header>\n<main>\n",
        rows.len(),
        if rows.len() == 1 { "" } else { "s" },
        devices.len(),
        if devices.len() == 1 { "" } else { "s" },
        warned,
        failed
    );

    h.push_str("<div class=\"wide\">\n<table id=\"records\">\n<thead><tr><th class=\"t\">#</th><th class=\"t\">device</th><th class=\"t\">record</th><th class=\"t\">status</th>");
    let shown = table_figures();
    for f in &shown {
        // A frequency's cell carries its unit with an SI prefix; the heading leaves it out.
        let unit = if f.unit == Unit::Hz {
            ""
        } else {
            f.unit.symbol()
        };
        let _ = write!(
            h,
            "<th>{}<span class=\"u\">{}</span></th>",
            escape(f.label),
            escape(unit)
        );
    }
    let _ = write!(
        h,
        "<th class=\"t\">{}</th><th>{}</th>",
        escape(figures::WINDOW.label),
        escape(figures::SAMPLES.label)
    );
    for k in &extra_keys {
        let _ = write!(h, "<th class=\"t\">{}</th>", escape(k));
    }
    h.push_str("<th class=\"t\">notes</th></tr></thead>\n<tbody>\n");
    for (i, r) in rows.iter().enumerate() {
        let a = &r.analysis;
        let (class, label) = status(a);
        let cells = Cells::of(a);
        let _ = write!(
            h,
            "<tr class=\"{class}\" id=\"row{i}\"><td class=\"t\"><a href=\"#r{i}\">{}</a></td><td class=\"t\">{}</td><td class=\"t\">{}</td><td class=\"t status\">{}</td>",
            i + 1,
            escape(&r.device),
            escape(&r.record),
            label
        );
        for f in &shown {
            let v = cells.number(f.key);
            let c = if f.unit == Unit::Hz {
                v.map_or("—".to_string(), |v| si(v, f.unit.symbol(), 6))
            } else {
                // The figure with its one-sigma uncertainty when the record states one: "70.41 ± 0.05".
                let u = f.uncertainty_key(0).and_then(|k| cells.number(&k));
                match (v, u) {
                    (Some(_), Some(u)) => format!("{} ± {}", fixed(v, 2), sigma(u, 2)),
                    _ => fixed(v, 2),
                }
            };
            let _ = write!(h, "<td>{}</td>", escape(&c));
        }
        let _ = write!(
            h,
            "<td class=\"t\">{}</td><td>{}</td>",
            escape(match cells.text(figures::WINDOW.key) {
                "" => "—",
                w => w,
            }),
            if a.samples > 0 {
                a.samples.to_string()
            } else {
                "—".to_string()
            }
        );
        for k in &extra_keys {
            let v = r
                .extra
                .iter()
                .find(|(key, _)| key == k)
                .map_or("", |(_, v)| v.as_str());
            let _ = write!(h, "<td class=\"t{}\">{}</td>", extra_class(v), escape(v));
        }
        h.push_str("<td class=\"notes\">");
        notes(&mut h, a, i);
        h.push_str("</td></tr>\n");
    }
    h.push_str("</tbody>\n</table>\n</div>\n");

    for (i, r) in rows.iter().enumerate() {
        let a = &r.analysis;
        let (class, label) = status(a);
        let _ = write!(
            h,
            "<section class=\"record {class}\" id=\"r{i}\">\n<h2>{} / {} <span class=\"status\">· {label}</span></h2>\n<p class=\"src\">source: {}</p>\n",
            escape(&r.device),
            escape(&r.record),
            escape(&a.source)
        );
        if a.error.is_some() || !a.warnings.is_empty() {
            h.push_str("<ul class=\"msgs\">");
            if let Some(e) = &a.error {
                let _ = write!(h, "<li><strong>error:</strong> {}</li>", escape(&e.message));
            }
            for w in &a.warnings {
                let _ = write!(h, "<li>{}</li>", escape(w));
            }
            h.push_str("</ul>\n");
        }
        if !r.plots.is_empty() {
            h.push_str("<div class=\"plots\">\n");
            for p in &r.plots {
                let body = plot(p)?;
                let _ = write!(
                    h,
                    "<figure>\n{body}\n<figcaption><a href=\"{}\">{}</a></figcaption>\n</figure>\n",
                    escape(p),
                    escape(p)
                );
            }
            h.push_str("</div>\n");
        }
        h.push_str("</section>\n");
    }
    let _ = write!(
        h,
        "</main>\n<footer>Made by spurline from the records' codes alone. {} = (SINAD − 1.76)/6.02; {} = N − log2(residual rms / (1/√12)).</footer>\n</body>\n</html>\n",
        escape(figures::ENOB.label),
        escape(figures::FIT_ENOB.label)
    );
    Ok(h)
}

/// The table's note: the error, else the first warning, cut to a line; the record's section has all.
fn notes(h: &mut String, a: &Analysis, index: usize) {
    const KEEP: usize = 110;
    let (first, rest) = match (&a.error, a.warnings.as_slice()) {
        (Some(e), w) => (format!("error: {}", e.message), w.len()),
        (None, [w, more @ ..]) => (w.clone(), more.len()),
        (None, []) => return,
    };
    let short: String = if first.chars().count() > KEEP {
        let cut: String = first.chars().take(KEEP).collect();
        format!("{cut}…")
    } else {
        first
    };
    h.push_str(&escape(&short));
    if rest > 0 {
        let _ = write!(h, " <a href=\"#r{index}\">(+{rest} more)</a>");
    }
}

#[cfg(test)]
mod tests {
    use super::IndexRow;
    use crate::error::ErrorKind;
    use crate::report::svg::plot_tests::{measure, rich};
    use crate::report::svg::{spectrum_svg, PlotOptions};

    #[test]
    fn escaping_covers_the_five_characters() {
        assert_eq!(
            super::escape("<a href='x'>&\"</a>"),
            "&lt;a href=&#39;x&#39;&gt;&amp;&quot;&lt;/a&gt;"
        );
    }

    #[test]
    fn linked_and_inlined_pages_trust_only_our_svg() {
        let dir = tempfile::tempdir().unwrap();
        let m = measure(&rich());
        let good = spectrum_svg("r", &m.analysis, &m.traces, &PlotOptions::default()).unwrap();
        std::fs::create_dir_all(dir.path().join("d")).unwrap();
        std::fs::write(dir.path().join("d/good.svg"), &good).unwrap();
        std::fs::write(
            dir.path().join("d/bad.svg"),
            "<svg xmlns=\"http://www.w3.org/2000/svg\"><script>alert(1)</script></svg>",
        )
        .unwrap();
        std::fs::write(
            dir.path().join("d/handler.svg"),
            "<svg xmlns=\"http://www.w3.org/2000/svg\"><rect onload=\"alert(1)\"/></svg>",
        )
        .unwrap();
        let rows = vec![IndexRow {
            device: "d".into(),
            record: "r".into(),
            analysis: m.analysis.clone(),
            plots: vec![
                "d/good.svg".into(),
                "d/bad.svg".into(),
                "d/handler.svg".into(),
            ],
            extra: vec![("verdict".into(), "fail: SNR below 80 dB".into())],
        }];
        let inline = super::render_index_html_inline("t", &rows, dir.path()).unwrap();
        assert!(inline.contains(good.trim_end()));
        assert!(!inline.contains("<script") && !inline.contains("onload"));
        assert!(inline.contains("<a href=\"d/bad.svg\">"));
        assert!(inline.contains("<a href=\"d/handler.svg\">"));
        assert!(inline.contains("<td class=\"t bad\">fail: SNR below 80 dB</td>"));
        let linked = super::render_index_html("t", &rows);
        assert!(linked.contains("<img src=\"d/good.svg\""));
        assert!(!linked.contains("<svg"));
        let missing = super::render_index_html_inline("t", &rows, &dir.path().join("nowhere"));
        assert_eq!(missing.unwrap_err().kind, ErrorKind::Io);
    }
}
