//! The pages of the commands that measure lines other than one tone and its harmonics: `imd` (two
//! tones, products marked by order) and `interleave` (offset and gain/timing images). Each is a
//! folder with one SVG per record and `index.html` in the run page's shell: a table of the records'
//! figures, then each record's marked spectrum inline.

use super::html::{escape, inline_svg, page};
use super::svg::marked::{interleave_svg, two_tone_svg};
use super::svg::PlotOptions;
use super::write::{file_safe_name, output_error, unique_name, write_atomic};
use crate::analyses::imd::ImdResult;
use crate::analyses::interleave::InterleaveResult;
use crate::analysis::RecordResult;
use crate::error::Result;
use std::fmt::Write;
use std::path::{Path, PathBuf};

/// One record on a line page: its result, and its bin powers when the analysis got that far.
pub type Traced<T> = (RecordResult<T>, Option<Vec<f64>>);

fn num(v: Option<f64>, unit: &str) -> String {
    v.map_or("—".to_string(), |x| format!("{x:.2} {unit}"))
}

/// Draws one record's plot from its name, result and bin powers.
type PlotOf<'a, T> = &'a dyn Fn(&str, &RecordResult<T>, &[f64]) -> Result<String>;

/// Writes the folder: `<record>.svg` per analysed record and `index.html`. Returns the page's path.
fn write_page<T>(
    dir: &Path,
    title: &str,
    what: &str,
    items: &[Traced<T>],
    columns: &[&str],
    cells: &dyn Fn(&RecordResult<T>) -> Vec<String>,
    plot: PlotOf<T>,
) -> Result<PathBuf> {
    std::fs::create_dir_all(dir)
        .map_err(|e| output_error(dir, "a folder to write the report into", e))?;
    let mut taken = vec!["index.html".to_string()];
    let mut body = String::new();
    body.push_str("<div class=\"wide\">\n<table id=\"records\">\n<thead><tr><th class=\"t\">#</th><th class=\"t\">record</th><th class=\"t\">status</th>");
    for c in columns {
        let _ = write!(body, "<th>{}</th>", escape(c));
    }
    body.push_str("<th class=\"t\">notes</th></tr></thead>\n<tbody>\n");
    let mut sections = String::new();
    let (mut failed, mut warned) = (0usize, 0usize);
    for (i, (r, powers)) in items.iter().enumerate() {
        let name = Path::new(&r.source)
            .file_name()
            .map_or(r.source.clone(), |n| n.to_string_lossy().into_owned());
        let (class, status) = if r.error.is_some() {
            failed += 1;
            ("fail", "failed".to_string())
        } else if !r.warnings.is_empty() {
            warned += 1;
            ("warn", format!("{} warning(s)", r.warnings.len()))
        } else {
            ("ok", "ok".to_string())
        };
        let _ = write!(
            body,
            "<tr class=\"{class}\"><td class=\"t\"><a href=\"#r{i}\">{}</a></td><td class=\"t\">{}</td><td class=\"t status\">{}</td>",
            i + 1,
            escape(&name),
            escape(&status)
        );
        if r.error.is_some() {
            for _ in columns {
                body.push_str("<td>—</td>");
            }
        } else {
            for c in cells(r) {
                let _ = write!(body, "<td>{}</td>", escape(&c));
            }
        }
        let notes: Vec<&str> = r
            .error
            .iter()
            .map(|e| e.message.as_str())
            .chain(r.warnings.iter().map(String::as_str))
            .collect();
        let _ = writeln!(
            body,
            "<td class=\"notes\">{}</td></tr>",
            escape(&notes.join("; "))
        );
        let _ = write!(
            sections,
            "<section class=\"record {class}\" id=\"r{i}\"><h2>{}</h2><p class=\"src\">{}</p>",
            escape(&name),
            escape(&r.source)
        );
        if !notes.is_empty() {
            sections.push_str("<ul class=\"msgs\">");
            for n in &notes {
                let _ = write!(sections, "<li>{}</li>", escape(n));
            }
            sections.push_str("</ul>");
        }
        if let (None, Some(p)) = (&r.error, powers) {
            let stem = unique_name(format!("{}.svg", file_safe_name(&name)), &mut taken);
            let svg = plot(&name, r, p)?;
            write_atomic(&dir.join(&stem), svg.as_bytes())?;
            let _ = write!(
                sections,
                "<div class=\"plots\"><figure>{}<figcaption><a href=\"{}\">{}</a></figcaption></figure></div>",
                inline_svg(&stem, &svg),
                escape(&stem),
                escape(&stem)
            );
        }
        sections.push_str("</section>\n");
    }
    body.push_str("</tbody></table>\n</div>\n");
    body.push_str(&sections);
    let sub = format!(
        "{} record{} · {what} · {warned} with warnings · {failed} failed",
        items.len(),
        if items.len() == 1 { "" } else { "s" }
    );
    let html = page(title, &escape(&sub), &body);
    let path = dir.join("index.html");
    write_atomic(&path, html.as_bytes())?;
    Ok(path)
}

/// Writes the two-tone report of `items` into `dir` (see the module docs).
pub fn write_two_tone_report(
    dir: &Path,
    items: &[Traced<crate::analyses::imd::TwoTone>],
    o: &PlotOptions,
) -> Result<PathBuf> {
    write_page(
        dir,
        "spurline two-tone report",
        "IM products marked by order",
        items,
        &[
            "f1",
            "f2",
            "IM3 dBc",
            "IM2 dBc",
            "two-tone SFDR dBc",
            "noise floor dBFS",
        ],
        &|r: &ImdResult| {
            let sp = r.spectrum.as_ref();
            let tone = |i: usize| {
                sp.and_then(|s| s.tones.get(i))
                    .map_or("—".to_string(), |t| {
                        format!(
                            "{} at {}",
                            super::units::si(t.frequency_hz, "Hz", 5),
                            num(t.dbfs, "dBFS")
                        )
                    })
            };
            vec![
                tone(0),
                tone(1),
                num(sp.and_then(|s| s.im3_dbc), ""),
                num(sp.and_then(|s| s.im2_dbc), ""),
                num(sp.and_then(|s| s.sfdr_dbc), ""),
                num(sp.and_then(|s| s.noise_floor_dbfs), ""),
            ]
            .into_iter()
            .map(|s| s.trim_end().to_string())
            .collect()
        },
        &|name: &str, r: &ImdResult, p: &[f64]| two_tone_svg(name, r, p, o),
    )
}

/// Writes the interleaving report of `items` into `dir` (see the module docs).
pub fn write_interleave_report(
    dir: &Path,
    items: &[Traced<crate::analyses::interleave::Interleaved>],
    o: &PlotOptions,
) -> Result<PathBuf> {
    write_page(
        dir,
        "spurline interleaving report",
        "offset spurs and gain/timing images marked",
        items,
        &[
            "channels",
            "fundamental dBFS",
            "offset spur dBc",
            "gain/timing spur dBc",
            "noise floor dBFS",
        ],
        &|r: &InterleaveResult| {
            let sp = r.spectrum.as_ref();
            vec![
                r.channels.to_string(),
                num(sp.and_then(|s| s.fundamental_dbfs), ""),
                num(sp.and_then(|s| s.offset_spur_dbc), ""),
                num(sp.and_then(|s| s.gain_timing_spur_dbc), ""),
                num(sp.and_then(|s| s.noise_floor_dbfs), ""),
            ]
            .into_iter()
            .map(|s| s.trim_end().to_string())
            .collect()
        },
        &|name: &str, r: &InterleaveResult, p: &[f64]| interleave_svg(name, r, p, o),
    )
}
