//! Writes a comparison: `comparison.csv` and `comparison.json` (both from the one comparison record) and
//! `comparison.html` (self-contained, every name escaped, plots inline).

use super::plots::{distributions_svg, overlay_svg, versus_frequency_svg, OverlayTrace};
use super::{Better, Change, Comparison, MetricComparison, Run};
use crate::error::Result;
use crate::figures;
use crate::report::{escape, write_atomic};
use crate::stats::{Summary, TTest};
use std::fmt::Write;
use std::path::Path;

fn exemplar() -> MetricComparison {
    let s = Summary {
        n: 0,
        mean: 0.0,
        std: Some(0.0),
        median: 0.0,
        min: 0.0,
        max: 0.0,
    };
    let t = TTest {
        difference: 0.0,
        statistic: 0.0,
        df: 0.0,
        p_value: 0.0,
        ci_low: 0.0,
        ci_high: 0.0,
    };
    MetricComparison {
        condition: String::new(),
        metric: String::new(),
        better: Better::Higher,
        a: Some(s.clone()),
        b: Some(s),
        welch: Some(t.clone()),
        pairs: 0,
        paired: Some(t),
        min_change: 0.0,
        decided_by: Some(String::new()),
        verdict: Change::NoTest,
        reason: String::new(),
        a_record_uncertainty: Some(0.0),
        b_record_uncertainty: Some(0.0),
        by_uncertainty: Some(super::UncertaintyTest {
            difference: 0.0,
            sigma: 0.0,
            z: 0.0,
            p_value: 0.0,
            ci_low: 0.0,
            ci_high: 0.0,
        }),
        statement: String::new(),
    }
}

/// CSV text: one row per condition and metric; the columns are the flattened JSON keys of a row.
pub fn to_csv(c: &Comparison) -> String {
    let flat = |r: &MetricComparison| {
        crate::report::csv::flatten(&serde_json::to_value(r).expect("plain data serialises"))
    };
    let columns: Vec<String> = flat(&exemplar()).into_iter().map(|(k, _)| k).collect();
    let mut w = crate::report::csv::CsvOut::memory();
    w.push(&columns);
    for r in &c.rows {
        let map: std::collections::HashMap<String, String> = flat(r).into_iter().collect();
        let rec: Vec<String> = columns
            .iter()
            .map(|k| map.get(k).cloned().unwrap_or_default())
            .collect();
        w.push(&rec);
    }
    w.into_text()
}

fn values(run: &Run, condition: &str, metric: &str) -> Vec<f64> {
    run.values
        .iter()
        .filter(|((_, c), _)| c == condition)
        .filter_map(|(_, m)| m.get(metric).copied())
        .collect()
}

fn num(v: Option<f64>, d: usize) -> String {
    v.filter(|x| x.is_finite())
        .map_or("—".to_string(), |x| format!("{x:.d$}"))
}

/// The HTML page.
pub fn to_html(c: &Comparison, a: &Run, b: &Run) -> Result<String> {
    let mut h = String::new();
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>spurline comparison</title><style>\
body{{font-family:sans-serif;margin:0;background:#F6F3EC;color:#3A3F47}}header{{background:#23395B;color:#FCFBF8;padding:14px 24px}}\
main{{padding:16px 24px}}table{{border-collapse:collapse;font-size:13px}}td,th{{padding:3px 8px;border-bottom:1px solid #DCD8CF;text-align:right}}\
th{{background:#E8E2D4}}td.l,th.l{{text-align:left}}tr.better td.v{{color:#1D6A72;font-weight:bold}}tr.worse td.v{{color:#A4243B;font-weight:bold}}\
.warn{{background:#FBE9D9;padding:6px 10px;border-left:4px solid #C8642A}}section.verdict{{background:#FCFBF8;padding:10px 16px;margin-bottom:14px;border-left:4px solid #23395B}}\
p.summary{{margin:4px 0;font-size:15px}}li.better{{color:#1D6A72}}li.worse{{color:#A4243B}}ul.all{{font-size:13px}}.plots{{display:flex;flex-wrap:wrap;gap:10px}}</style></head><body>\n\
<header><h1>Revision comparison</h1><p>A = {} · B = {} · {:.0}% intervals · B − A</p></header><main>\n",
        escape(&c.run_a),
        escape(&c.run_b),
        c.confidence * 100.0
    );
    let _ = writeln!(h, "<section class=\"verdict\"><h2>Verdict</h2>");
    for line in &c.summary {
        let _ = writeln!(h, "<p class=\"summary\">{}</p>", escape(line));
    }
    let changed: Vec<&MetricComparison> = c
        .rows
        .iter()
        .filter(|r| matches!(r.verdict, Change::Better | Change::Worse))
        .collect();
    if !changed.is_empty() {
        let _ = writeln!(h, "<ul class=\"changes\">");
        for r in changed {
            let cls = if r.verdict == Change::Better {
                "better"
            } else {
                "worse"
            };
            let _ = writeln!(h, "<li class=\"{cls}\">{}</li>", escape(&r.statement));
        }
        let _ = writeln!(h, "</ul>");
    }
    let _ = writeln!(
        h,
        "<details><summary>Every figure in plain words</summary><ul class=\"all\">"
    );
    for r in &c.rows {
        let _ = writeln!(h, "<li>{}</li>", escape(&r.statement));
    }
    let _ = writeln!(h, "</ul></details></section>");
    for w in &c.warnings {
        let _ = writeln!(h, "<p class=\"warn\">{}</p>", escape(w));
    }
    if !c.left_out.is_empty() {
        let _ = writeln!(
            h,
            "<details><summary>{} item(s) left out</summary><ul>",
            c.left_out.len()
        );
        for l in &c.left_out {
            let _ = writeln!(h, "<li>{}</li>", escape(l));
        }
        let _ = writeln!(h, "</ul></details>");
    }
    let _ = writeln!(
        h,
        "<table><tr><th class=\"l\">condition</th><th class=\"l\">metric</th><th>better</th><th>n A</th><th>mean A</th><th>σ A</th>\
<th>n B</th><th>mean B</th><th>σ B</th><th>B − A</th><th>CI</th><th>p (Welch)</th><th>pairs</th><th>p (paired)</th><th class=\"l\">verdict</th><th class=\"l\">reason</th></tr>"
    );
    for r in &c.rows {
        let cls = match r.verdict {
            Change::Better => "better",
            Change::Worse => "worse",
            _ => "",
        };
        let t = if r.decided_by.as_deref() == Some("paired") {
            r.paired.as_ref()
        } else {
            r.welch.as_ref()
        };
        let _ = writeln!(
            h,
            "<tr class=\"{cls}\"><td class=\"l\">{}</td><td class=\"l\">{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td class=\"l v\">{}</td><td class=\"l\">{}</td></tr>",
            escape(&r.condition),
            escape(&r.metric),
            r.better.as_str(),
            r.a.as_ref().map_or(0, |s| s.n),
            num(r.a.as_ref().map(|s| s.mean), 3),
            num(r.a.as_ref().and_then(|s| s.std), 3),
            r.b.as_ref().map_or(0, |s| s.n),
            num(r.b.as_ref().map(|s| s.mean), 3),
            num(r.b.as_ref().and_then(|s| s.std), 3),
            num(t.map(|t| t.difference), 3),
            t.map_or("—".to_string(), |t| format!("[{:.3}, {:.3}]", t.ci_low, t.ci_high)),
            num(r.welch.as_ref().map(|t| t.p_value), 4),
            r.pairs,
            num(r.paired.as_ref().map(|t| t.p_value), 4),
            r.verdict.words(),
            escape(&r.reason)
        );
    }
    let _ = writeln!(h, "</table>");
    let conditions: std::collections::BTreeSet<&String> =
        c.rows.iter().map(|r| &r.condition).collect();
    let _ = writeln!(h, "<h2>Distributions</h2>");
    for cond in &conditions {
        let _ = writeln!(h, "<h3>{}</h3><div class=\"plots\">", escape(cond));
        for f in figures::headline() {
            let (va, vb) = (values(a, cond, f.key), values(b, cond, f.key));
            if va.is_empty() && vb.is_empty() {
                continue;
            }
            h.push_str(&distributions_svg(f.key, f.unit.symbol(), &va, &vb)?);
        }
        let _ = writeln!(h, "</div>");
    }
    let _ = writeln!(h, "<h2>Against input frequency</h2><div class=\"plots\">");
    for f in figures::headline() {
        let m = f.key;
        let pts = |run: &Run| -> Vec<(f64, f64)> {
            conditions
                .iter()
                .filter_map(|cond| {
                    let f = run.frequency_hz.get(*cond)?;
                    let v = values(run, cond, m);
                    (!f.is_empty() && !v.is_empty()).then(|| {
                        (
                            f.iter().sum::<f64>() / f.len() as f64,
                            v.iter().sum::<f64>() / v.len() as f64,
                        )
                    })
                })
                .collect()
        };
        let (pa, pb) = (pts(a), pts(b));
        if pa.len() + pb.len() > 0 {
            h.push_str(&versus_frequency_svg(m, f.unit.symbol(), &pa, &pb)?);
        }
    }
    let _ = writeln!(h, "</div>");
    let _ = writeln!(h, "<h2>Representative spectra</h2><p>Per condition, the device whose SNR is the median of its run, A and B overlaid (each pixel column keeps its largest bin). Bins are scaled by each record's window ENBW, so a tone's peak reads its level in dBFS; rings mark each fundamental's measured level.</p><div class=\"plots\">");
    for cond in &conditions {
        match overlay(cond, a, b) {
            Ok(svg) => h.push_str(&svg),
            Err(why) => {
                let _ = writeln!(
                    h,
                    "<p class=\"warn\">{}: no overlay: {}</p>",
                    escape(cond),
                    escape(&why)
                );
            }
        }
    }
    let _ = writeln!(h, "</div></main></body></html>");
    Ok(h)
}

/// The device of `run` under `condition` whose SNR is nearest the run's median, and its record file.
fn representative(run: &Run, condition: &str) -> Option<(String, String)> {
    let mut v: Vec<(f64, &String)> = run
        .values
        .iter()
        .filter(|((_, c), _)| c == condition)
        .filter_map(|((d, _), m)| Some((*m.get(figures::SNR.key)?, d)))
        .collect();
    v.sort_by(|x, y| x.0.total_cmp(&y.0).then(x.1.cmp(y.1)));
    let (_, d) = v.get(v.len() / 2)?;
    let src = run.sources.get(&((*d).clone(), condition.to_string()))?;
    Some(((*d).clone(), src.clone()))
}

/// One run's representative record, analysed again for its bins: the trace amplitude-normalised by
/// the window's ENBW (as the spectrum plot draws it), each pixel column's largest bin kept.
fn spectrum_trace(
    run: &Run,
    condition: &str,
    name: String,
    source: &str,
    columns: usize,
) -> std::result::Result<OverlayTrace, String> {
    let (bits, fs) = run
        .setup
        .get(condition)
        .and_then(|s| s.iter().next())
        .cloned()
        .ok_or("no resolution or sample rate in the run")?;
    let settings = crate::ingest::IngestSettings {
        meta: crate::ingest::Metadata {
            bits: bits.parse().ok(),
            sample_rate_hz: fs.parse().ok(),
            ..Default::default()
        },
        ..Default::default()
    };
    let rec =
        crate::ingest::read_record(Path::new(source), &settings).map_err(|e| e.to_string())?;
    let m = crate::analysis::analyze(&rec.record, &crate::analysis::AnalysisSettings::default())
        .map_err(|e| e.to_string())?;
    OverlayTrace::of(name, &m.analysis, &m.traces, columns).map_err(|e| e.to_string())
}

/// Height of the overlay plots on the page, pixels.
const OVERLAY_HEIGHT_PX: u32 = 380;

fn overlay(condition: &str, a: &Run, b: &Run) -> std::result::Result<String, String> {
    let (da, sa) = representative(a, condition).ok_or("run A has no record with an SNR")?;
    let (db, sb) = representative(b, condition).ok_or("run B has no record with an SNR")?;
    let ta = spectrum_trace(a, condition, format!("A {da}"), &sa, 600)
        .map_err(|e| format!("run A, {da}: {e}"))?;
    let tb = spectrum_trace(b, condition, format!("B {db}"), &sb, 600)
        .map_err(|e| format!("run B, {db}: {e}"))?;
    overlay_svg(
        &format!("{condition}: A {da} · B {db}"),
        &[ta, tb],
        OVERLAY_HEIGHT_PX,
    )
    .map_err(|e| e.to_string())
}

/// Writes `comparison.csv`, `comparison.json` and `comparison.html` into `out` (atomically).
pub fn write_all(out: &Path, c: &Comparison, a: &Run, b: &Run) -> Result<()> {
    write_atomic(&out.join("comparison.csv"), to_csv(c).as_bytes())?;
    let mut json = serde_json::to_string_pretty(c).expect("plain data serialises");
    json.push('\n');
    write_atomic(&out.join("comparison.json"), json.as_bytes())?;
    write_atomic(&out.join("comparison.html"), to_html(c, a, b)?.as_bytes())?;
    Ok(())
}
