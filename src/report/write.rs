//! Writing reports to disk: atomic file writes, a record's plots, a device's summaries, and a whole run
//! (`<run>/index.html`, `<run>/summary.csv`, `<run>/results.json`, `<run>/<device>/...`).
//!
//! The pieces are separate so that a long batch can write each record's plots and each device's
//! summaries as they finish (memory stays bounded, a crash keeps the finished part), then the page.

use super::html::{render_with, IndexRow};
use super::svg::{histogram_svg, residual_svg, spectrum_svg, PlotOptions};
use crate::analysis::{Analysis, Traces};
use crate::error::{Error, ErrorKind, Location, Result};
use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

/// An [`ErrorKind::Output`] error for `path`.
pub(crate) fn output_error(path: &Path, expected: &str, e: impl std::fmt::Display) -> Error {
    Error::new(
        ErrorKind::Output,
        path.display().to_string(),
        Location::Whole,
        expected,
        e.to_string(),
    )
}

/// Writes `bytes` to `path` atomically: into a temporary file in the same folder (created when
/// missing), then renamed over `path`, so a reader never sees a half-written file and a crash of the
/// program leaves the old file or the new one. Errors are of kind `Output` and name the path.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    static COUNTER: AtomicU64 = AtomicU64::new(0);
    let name = path
        .file_name()
        .ok_or_else(|| output_error(path, "a file path to write", "no file name"))?;
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    std::fs::create_dir_all(&dir).map_err(|e| output_error(&dir, "a folder to write into", e))?;
    let tmp = dir.join(format!(
        ".{}.{}-{}.tmp",
        name.to_string_lossy(),
        std::process::id(),
        COUNTER.fetch_add(1, Ordering::Relaxed)
    ));
    let result = std::fs::write(&tmp, bytes)
        .map_err(|e| output_error(path, "a writable file", e))
        .and_then(|()| {
            std::fs::rename(&tmp, path)
                .map_err(|e| output_error(path, "a file that can be replaced", e))
        });
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

/// A name that is safe as one path component everywhere: ASCII letters, digits, '-', '_' and '.'
/// kept, every other character replaced by '_', no leading dot, at most 80 bytes, never empty.
pub fn file_safe_name(name: &str) -> String {
    let mut s: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.') {
                c
            } else {
                '_'
            }
        })
        .collect();
    while s.starts_with('.') {
        s.replace_range(0..1, "_");
    }
    s.truncate(80);
    if s.is_empty() {
        s.push('_');
    }
    s
}

/// Makes `name` unique among `taken` (compared without case, for case-insensitive file systems) by
/// appending -2, -3, ...; records the result in `taken`.
pub(crate) fn unique_name(name: String, taken: &mut Vec<String>) -> String {
    let clash = |n: &str, taken: &Vec<String>| taken.iter().any(|t| t.eq_ignore_ascii_case(n));
    let mut candidate = name.clone();
    let mut k = 2;
    while clash(&candidate, taken) {
        candidate = format!("{name}-{k}");
        k += 1;
    }
    taken.push(candidate.clone());
    candidate
}

/// The plots a record has data for, as (file name suffix, SVG text). A failed record has none.
fn render_plots(
    record_name: &str,
    a: &Analysis,
    t: &Traces,
    o: &PlotOptions,
) -> Result<Vec<(&'static str, String)>> {
    let mut out = Vec::new();
    for kind in plot_kinds(a, t) {
        let svg = match kind {
            "spectrum" => spectrum_svg(record_name, a, t, o)?,
            "residual" => residual_svg(record_name, a, t, o)?,
            _ => histogram_svg(record_name, a, t, o)?,
        };
        out.push((kind, svg));
    }
    Ok(out)
}

/// The plots a record with these traces gets (`spectrum`, `residual`, `histogram`, in that order):
/// those whose data it has; none for a failed record. The file of each is `<stem>-<kind>.svg`.
pub(crate) fn plot_kinds(a: &Analysis, t: &Traces) -> Vec<&'static str> {
    let mut out = Vec::new();
    if a.error.is_some() {
        return out;
    }
    if a.spectrum.is_some() && !t.powers.is_empty() {
        out.push("spectrum");
    }
    if a.fit.is_some() && !t.residual.is_empty() {
        out.push("residual");
    }
    if a.fit.is_some() && t.has_histogram() {
        out.push("histogram");
    }
    out
}

/// Writes `<record>-spectrum.svg`, `<record>-residual.svg` and `<record>-histogram.svg` into
/// `device_dir` (each when the record has its data; none for a failed record), the record name made
/// file-safe, and returns the paths written. Plot titles show the name as given.
pub fn write_record_plots(
    device_dir: &Path,
    record_name: &str,
    a: &Analysis,
    t: &Traces,
    o: &PlotOptions,
) -> Result<Vec<PathBuf>> {
    write_plots_as(
        device_dir,
        &file_safe_name(record_name),
        record_name,
        a,
        t,
        o,
    )
}

/// As [`write_record_plots`], the files named `<stem>-<kind>.svg` with a stem the caller made
/// file-safe and unique (a lot's conditions, see `crate::lot::plot_stems`).
pub(crate) fn write_plots_as(
    device_dir: &Path,
    stem: &str,
    record_name: &str,
    a: &Analysis,
    t: &Traces,
    o: &PlotOptions,
) -> Result<Vec<PathBuf>> {
    let mut written = Vec::new();
    for (kind, svg) in render_plots(record_name, a, t, o)? {
        let path = device_dir.join(format!("{stem}-{kind}.svg"));
        write_atomic(&path, svg.as_bytes())?;
        written.push(path);
    }
    Ok(written)
}

/// Writes a device's `summary.csv` (one row per record, the figure table's columns, widened to the highest harmonic a
/// record has)
/// and `results.json` (the same records as one array) into `device_dir`.
pub fn write_device_summary(device_dir: &Path, rows: &[Analysis], harmonics: u32) -> Result<()> {
    write_atomic(
        &device_dir.join("summary.csv"),
        super::csv::to_csv(rows, harmonics).as_bytes(),
    )?;
    write_atomic(
        &device_dir.join("results.json"),
        super::json::to_json(rows).as_bytes(),
    )
}

/// Writes a whole run into `run_dir`: per device (in order of first appearance) a folder with its
/// records' plots, `summary.csv` and `results.json`; at the top `summary.csv` (leading `device` and
/// `record` columns, one row per item), `results.json` (every record, in item order) and `index.html`
/// (the page, every plot inlined). Items are (device, record, result, traces); records without traces
/// get no plots. Names are made file-safe (and unique) for paths and shown as given on the page.
pub fn write_run_report(
    run_dir: &Path,
    title: &str,
    items: &[(String, String, &Analysis, Option<&Traces>)],
    harmonics: u32,
    o: &PlotOptions,
) -> Result<()> {
    std::fs::create_dir_all(run_dir)
        .map_err(|e| output_error(run_dir, "a folder to write the report into", e))?;
    // Reserved names at the top of the run folder, so no device folder can shadow them.
    let mut device_dirs: Vec<String> = ["index.html", "summary.csv", "results.json"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    let mut dir_of: Vec<(String, String, Vec<String>)> = Vec::new(); // device, folder, record names taken
    let mut svgs: HashMap<String, String> = HashMap::new();
    let mut rows: Vec<IndexRow> = Vec::with_capacity(items.len());
    for (device, record, a, traces) in items {
        let slot = match dir_of.iter().position(|(d, _, _)| d == device) {
            Some(i) => i,
            None => {
                let folder = unique_name(file_safe_name(device), &mut device_dirs);
                dir_of.push((
                    device.clone(),
                    folder,
                    vec!["summary.csv".to_string(), "results.json".to_string()],
                ));
                dir_of.len() - 1
            }
        };
        let folder = dir_of[slot].1.clone();
        let device_dir = run_dir.join(&folder);
        std::fs::create_dir_all(&device_dir)
            .map_err(|e| output_error(&device_dir, "a device folder to write into", e))?;
        let mut plots = Vec::new();
        if let Some(t) = traces {
            let rendered = render_plots(record, a, t, o)?;
            if !rendered.is_empty() {
                // One file-safe stem per record, unique within the device folder.
                let stem = unique_name(file_safe_name(record), &mut dir_of[slot].2);
                for (kind, svg) in rendered {
                    let file = format!("{stem}-{kind}.svg");
                    write_atomic(&device_dir.join(&file), svg.as_bytes())?;
                    let rel = format!("{folder}/{file}");
                    svgs.insert(rel.clone(), svg);
                    plots.push(rel);
                }
            }
        }
        rows.push(IndexRow {
            device: device.clone(),
            record: record.clone(),
            analysis: (*a).clone(),
            plots,
            extra: Vec::new(),
        });
    }
    for (device, folder, _) in &dir_of {
        let of_device: Vec<Analysis> = rows
            .iter()
            .filter(|r| &r.device == device)
            .map(|r| r.analysis.clone())
            .collect();
        write_device_summary(&run_dir.join(folder), &of_device, harmonics)?;
    }
    let lead: Vec<(Vec<(String, String)>, &Analysis)> = rows
        .iter()
        .map(|r| {
            (
                vec![
                    ("device".to_string(), r.device.clone()),
                    ("record".to_string(), r.record.clone()),
                ],
                &r.analysis,
            )
        })
        .collect();
    write_atomic(
        &run_dir.join("summary.csv"),
        super::csv::to_csv_with_lead(&lead, harmonics).as_bytes(),
    )?;
    let all: Vec<Analysis> = rows.iter().map(|r| r.analysis.clone()).collect();
    write_atomic(
        &run_dir.join("results.json"),
        super::json::to_json(&all).as_bytes(),
    )?;
    let page = render_with(title, &rows, &mut |p: &str| {
        Ok(match svgs.get(p) {
            Some(svg) => super::html::inline_svg(p, svg),
            None => format!(
                "<a href=\"{}\">{}</a>",
                super::html::escape(p),
                super::html::escape(p)
            ),
        })
    })?;
    write_atomic(&run_dir.join("index.html"), page.as_bytes())
}
