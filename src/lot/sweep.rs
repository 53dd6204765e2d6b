//! Sweeps over a lot run whose conditions vary the input frequency or amplitude: SNR, SINAD, SFDR and
//! ENOB against frequency, the effective resolution bandwidth, SNR against amplitude (dynamic range), and
//! an aperture-jitter estimate from SNR against frequency.

use crate::error::{Error, ErrorKind, Location, Result};
use crate::figures::{self, flatten, Figure};
use crate::lot::files::{DroppedCell, LotSummary};
use crate::report::html::{escape, inline_svg, page};
use crate::report::svg::sweep::{jitter_curve, sweep_svg, BandPoint, SweepPlot};
use crate::report::units::si;
use crate::report::{output_error, write_atomic};
use serde::Serialize;
use std::collections::BTreeMap;
use std::path::Path;

/// The figures a sweep follows, in the order of [`SweepPoint`]'s fields: SNR, SINAD, SFDR (dBc) and
/// spectral ENOB.
pub const SWEPT: [&Figure; 4] = [
    &figures::SNR,
    &figures::SINAD,
    &figures::SFDR,
    &figures::ENOB,
];

/// The name the lot mean's points and summary go by.
const LOT_MEAN: &str = "lot mean";

/// One device's (or the lot mean's) figures under one condition.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepPoint {
    /// Device, or "lot mean".
    pub device: String,
    /// Condition name.
    pub condition: String,
    /// Fitted input frequency, hertz.
    pub fin_hz: f64,
    /// Fitted input amplitude, dBFS.
    pub amplitude_dbfs: f64,
    /// SNR, dB.
    pub snr_db: Option<f64>,
    /// SINAD, dB.
    pub sinad_db: Option<f64>,
    /// SFDR, dBc.
    pub sfdr_dbc: Option<f64>,
    /// Spectral ENOB, bits.
    pub enob_bits: Option<f64>,
}

/// What a sweep finds for one device (or the lot mean).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepSummary {
    /// Device, or "lot mean".
    pub device: String,
    /// Points at the reference amplitude used for the frequency sweep.
    pub frequency_points: usize,
    /// Effective resolution bandwidth: the input frequency where SINAD has fallen 3 dB below its value
    /// at the lowest frequency, linearly interpolated; `None` when it never falls that far.
    pub erbw_hz: Option<f64>,
    /// Aperture jitter from the fit 10^(−SNR/10) = a + (2π·f·σ)²; `None` with fewer than 3 frequencies
    /// or a slope that is not positive.
    pub jitter_rms_s: Option<f64>,
    /// The frequency-independent part of the same fit, as an SNR (the noise floor without jitter), dB.
    pub snr_floor_db: Option<f64>,
    /// SNR against amplitude at one frequency: (amplitude dBFS, SNR dB), when the conditions vary it.
    pub snr_vs_amplitude: Vec<(f64, f64)>,
}

/// A whole sweep.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Sweep {
    /// Every point, lot mean first then devices, each by rising frequency.
    pub points: Vec<SweepPoint>,
    /// One summary per device and one for the lot mean.
    pub summaries: Vec<SweepSummary>,
}

/// A lot run's `summary.csv` read as sweep points.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepInput {
    /// One point per row with a fitted frequency and amplitude (error rows have neither).
    pub points: Vec<SweepPoint>,
    /// Figure cells left out as not numbers, by the one rule of the lot reader; a row whose fitted
    /// frequency or amplitude is one of them gives no point.
    pub dropped: Vec<DroppedCell>,
}

/// Reads a lot run's `summary.csv` into points (error rows are skipped). Errors: the summary cannot
/// be read, lacks a column a sweep needs, or has a row that does not parse.
pub fn read_points(run: &Path) -> Result<SweepInput> {
    let summary = LotSummary::in_folder(run)?;
    let need = |n: &str| {
        summary.column(n).ok_or_else(|| {
            Error::new(
                ErrorKind::BadMetadata,
                summary.path().display().to_string(),
                Location::Row(1),
                format!("a column '{n}'"),
                summary.columns().join(","),
            )
        })
    };
    let (fin, amp) = (
        need(figures::FIN.key)?,
        need(figures::FIT_AMPLITUDE_DBFS.key)?,
    );
    let figs = SWEPT.map(|f| summary.column(f.key));
    let mut points = Vec::new();
    for row in summary.rows() {
        let row = row?;
        let num = |k: Option<usize>| k.and_then(|k| row.number(k));
        let (Some(f), Some(a)) = (num(Some(fin)), num(Some(amp))) else {
            continue;
        };
        points.push(SweepPoint {
            device: row.device().to_string(),
            condition: row.condition().to_string(),
            fin_hz: f,
            amplitude_dbfs: a,
            snr_db: num(figs[0]),
            sinad_db: num(figs[1]),
            sfdr_dbc: num(figs[2]),
            enob_bits: num(figs[3]),
        });
    }
    Ok(SweepInput {
        points,
        dropped: summary.dropped(),
    })
}

/// ERBW: the first frequency where SINAD is 3 dB below its value at the lowest frequency, linearly
/// interpolated between the two points that straddle it.
pub fn erbw(points: &[(f64, f64)]) -> Option<f64> {
    let mut p: Vec<(f64, f64)> = points.to_vec();
    p.sort_by(|a, b| a.0.total_cmp(&b.0));
    let target = p.first()?.1 - 3.0;
    p.windows(2).find_map(|w| {
        let ((f0, s0), (f1, s1)) = (w[0], w[1]);
        (s0 > target && s1 <= target).then(|| f0 + (f1 - f0) * (s0 - target) / (s0 - s1))
    })
}

/// Fits 10^(−SNR/10) = a + (2π·f·σ)² by least squares, linear in (a, σ²); returns (σ seconds, a).
pub fn jitter_fit(points: &[(f64, f64)]) -> Option<(f64, f64)> {
    if points.len() < 3 {
        return None;
    }
    let xy: Vec<(f64, f64)> = points
        .iter()
        .map(|&(f, snr)| ((std::f64::consts::TAU * f).powi(2), 10f64.powf(-snr / 10.0)))
        .collect();
    let n = xy.len() as f64;
    let (sx, sy) = xy.iter().fold((0.0, 0.0), |(a, b), &(x, y)| (a + x, b + y));
    let (mx, my) = (sx / n, sy / n);
    let sxx: f64 = xy.iter().map(|&(x, _)| (x - mx).powi(2)).sum();
    let sxy: f64 = xy.iter().map(|&(x, y)| (x - mx) * (y - my)).sum();
    if sxx <= 0.0 {
        return None;
    }
    let slope = sxy / sxx;
    let intercept = my - slope * mx;
    (slope > 0.0).then(|| (slope.sqrt(), intercept))
}

fn summarize(device: &str, pts: &[&SweepPoint]) -> SweepSummary {
    // The frequency sweep is taken at the most common amplitude (rounded to 0.1 dB). Keys come from
    // hand-editable cells: the casts saturate and ties go to the lowest key without negating it, so
    // an absurd cell (-1e308) cannot overflow.
    let mut by_amp: BTreeMap<i64, usize> = BTreeMap::new();
    for p in pts {
        *by_amp
            .entry((p.amplitude_dbfs * 10.0).round() as i64)
            .or_default() += 1;
    }
    let ref_amp = by_amp
        .iter()
        .max_by_key(|(k, c)| (**c, std::cmp::Reverse(**k)))
        .map(|(k, _)| *k)
        .unwrap_or(0);
    let at_ref: Vec<&&SweepPoint> = pts
        .iter()
        .filter(|p| (p.amplitude_dbfs * 10.0).round() as i64 == ref_amp)
        .collect();
    let sinad: Vec<(f64, f64)> = at_ref
        .iter()
        .filter_map(|p| Some((p.fin_hz, p.sinad_db?)))
        .collect();
    let snr: Vec<(f64, f64)> = at_ref
        .iter()
        .filter_map(|p| Some((p.fin_hz, p.snr_db?)))
        .collect();
    let jitter = jitter_fit(&snr);
    // SNR against amplitude at the most common frequency (rounded to 1 kHz).
    let mut by_f: BTreeMap<i64, usize> = BTreeMap::new();
    for p in pts {
        *by_f.entry((p.fin_hz / 1e3).round() as i64).or_default() += 1;
    }
    let ref_f = by_f
        .iter()
        .max_by_key(|(k, c)| (**c, std::cmp::Reverse(**k)))
        .map(|(k, _)| *k)
        .unwrap_or(0);
    let mut amp: Vec<(f64, f64)> = pts
        .iter()
        .filter(|p| (p.fin_hz / 1e3).round() as i64 == ref_f)
        .filter_map(|p| Some((p.amplitude_dbfs, p.snr_db?)))
        .collect();
    amp.sort_by(|a, b| a.0.total_cmp(&b.0));
    SweepSummary {
        device: device.to_string(),
        frequency_points: at_ref.len(),
        erbw_hz: erbw(&sinad),
        jitter_rms_s: jitter.map(|j| j.0),
        snr_floor_db: jitter.and_then(|j| (j.1 > 0.0).then(|| -10.0 * j.1.log10())),
        snr_vs_amplitude: if amp.len() >= 2 { amp } else { Vec::new() },
    }
}

/// Builds the sweep of a lot: per device, and for the lot mean per condition.
pub fn sweep(points: &[SweepPoint]) -> Sweep {
    let mut by_cond: BTreeMap<&str, Vec<&SweepPoint>> = BTreeMap::new();
    for p in points {
        by_cond.entry(p.condition.as_str()).or_default().push(p);
    }
    let mean = |v: &[Option<f64>]| {
        let f: Vec<f64> = v.iter().flatten().copied().collect();
        (!f.is_empty()).then(|| f.iter().sum::<f64>() / f.len() as f64)
    };
    let mut lot: Vec<SweepPoint> = by_cond
        .iter()
        .map(|(c, ps)| SweepPoint {
            device: "lot mean".to_string(),
            condition: c.to_string(),
            fin_hz: ps.iter().map(|p| p.fin_hz).sum::<f64>() / ps.len() as f64,
            amplitude_dbfs: ps.iter().map(|p| p.amplitude_dbfs).sum::<f64>() / ps.len() as f64,
            snr_db: mean(&ps.iter().map(|p| p.snr_db).collect::<Vec<_>>()),
            sinad_db: mean(&ps.iter().map(|p| p.sinad_db).collect::<Vec<_>>()),
            sfdr_dbc: mean(&ps.iter().map(|p| p.sfdr_dbc).collect::<Vec<_>>()),
            enob_bits: mean(&ps.iter().map(|p| p.enob_bits).collect::<Vec<_>>()),
        })
        .collect();
    lot.sort_by(|a, b| {
        a.fin_hz
            .total_cmp(&b.fin_hz)
            .then(a.amplitude_dbfs.total_cmp(&b.amplitude_dbfs))
    });
    let mut summaries = vec![summarize("lot mean", &lot.iter().collect::<Vec<_>>())];
    let mut devices: BTreeMap<&str, Vec<&SweepPoint>> = BTreeMap::new();
    for p in points {
        devices.entry(p.device.as_str()).or_default().push(p);
    }
    let mut all = lot.clone();
    for (d, ps) in &devices {
        summaries.push(summarize(d, ps));
        let mut sorted: Vec<SweepPoint> = ps.iter().map(|p| (*p).clone()).collect();
        sorted.sort_by(|a, b| {
            a.fin_hz
                .total_cmp(&b.fin_hz)
                .then(a.amplitude_dbfs.total_cmp(&b.amplitude_dbfs))
        });
        all.extend(sorted);
    }
    Sweep {
        points: all,
        summaries,
    }
}

/// Rows as CSV: the flattened keys of the first row as the header.
fn to_csv<T: serde::Serialize>(rows: &[T]) -> String {
    let flat: Vec<Vec<(String, String)>> = rows
        .iter()
        .map(|r| flatten(&serde_json::to_value(r).expect("plain data serialises")))
        .collect();
    crate::report::csv::table(&flat)
}

/// Writes a sweep into `out` (created when missing): `sweep.csv` (every point), `sweep_summary.csv`
/// (per device: ERBW, jitter, SNR floor and the number of amplitude points), `sweep.json` (the whole
/// sweep), the plots against input frequency at the most common amplitude (`sinad-`, `snr-`, `sfdr-`
/// and `enob-vs-frequency.svg`: each device a thin line, the lot mean ± one standard deviation as a
/// band, the ERBW marked on SINAD and ENOB, the fitted jitter curve over SNR) and, when the conditions
/// vary the amplitude, `snr-vs-amplitude.svg`; and `index.html`, the page that shows them.
/// Errors: outputs that cannot be written.
pub fn write_sweep(out: &Path, s: &Sweep) -> Result<()> {
    std::fs::create_dir_all(out).map_err(|e| output_error(out, "a writable folder", e))?;
    write_atomic(&out.join("sweep.csv"), to_csv(&s.points).as_bytes())?;
    // The amplitude sweep is a list of pairs: keep it in the JSON, count it in the CSV.
    let rows: Vec<serde_json::Value> = s
        .summaries
        .iter()
        .map(|m| {
            serde_json::json!({
                "device": m.device, "frequency_points": m.frequency_points, "erbw_hz": m.erbw_hz,
                "jitter_rms_s": m.jitter_rms_s, "snr_floor_db": m.snr_floor_db,
                "amplitude_points": m.snr_vs_amplitude.len(),
            })
        })
        .collect();
    write_atomic(&out.join("sweep_summary.csv"), to_csv(&rows).as_bytes())?;
    let mut json = serde_json::to_string_pretty(&s).expect("plain data serialises");
    json.push('\n');
    write_atomic(&out.join("sweep.json"), json.as_bytes())?;
    let plots = sweep_plots(s)?;
    for (name, _, svg) in &plots {
        write_atomic(&out.join(format!("{name}.svg")), svg.as_bytes())?;
    }
    write_atomic(&out.join("index.html"), sweep_page(s, &plots).as_bytes())?;
    Ok(())
}

/// The key a value is grouped by: rounded to `step`.
fn key(v: f64, step: f64) -> i64 {
    (v / step).round() as i64
}

/// The most common key (the lowest on a tie; keys from hand-editable cells may be i64::MIN, so the
/// tie-break reverses the order rather than negating).
fn most_common(keys: impl Iterator<Item = i64>) -> Option<i64> {
    let mut count: BTreeMap<i64, usize> = BTreeMap::new();
    for k in keys {
        *count.entry(k).or_default() += 1;
    }
    count
        .iter()
        .max_by_key(|(k, c)| (**c, std::cmp::Reverse(**k)))
        .map(|(k, _)| *k)
}

/// Mean and sample standard deviation (0 for one value).
fn mean_sd(v: &[f64]) -> (f64, f64) {
    let n = v.len() as f64;
    let mean = v.iter().sum::<f64>() / n;
    let sd = if v.len() > 1 {
        (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt()
    } else {
        0.0
    };
    (mean, sd)
}

/// The lot's band over (group, x, y) triples: per group, the mean x, the mean y and the spread of y
/// across the devices; by rising x.
fn band_of(points: &[(String, f64, f64)]) -> Vec<BandPoint> {
    let mut groups: BTreeMap<&str, (Vec<f64>, Vec<f64>)> = BTreeMap::new();
    for (g, x, y) in points {
        let e = groups.entry(g.as_str()).or_default();
        e.0.push(*x);
        e.1.push(*y);
    }
    let mut band: Vec<BandPoint> = groups
        .values()
        .map(|(xs, ys)| {
            let (mean, spread) = mean_sd(ys);
            BandPoint {
                x: mean_sd(xs).0,
                mean,
                spread,
                devices: ys.len(),
            }
        })
        .collect();
    band.sort_by(|a, b| a.x.total_cmp(&b.x));
    band
}

/// Each device's (x, y) points by rising x.
fn device_lines(points: &[(String, f64, f64)]) -> Vec<Vec<(f64, f64)>> {
    let mut lines: BTreeMap<&str, Vec<(f64, f64)>> = BTreeMap::new();
    for (d, x, y) in points {
        lines.entry(d.as_str()).or_default().push((*x, *y));
    }
    lines
        .into_values()
        .map(|mut l| {
            l.sort_by(|a, b| a.0.total_cmp(&b.0));
            l
        })
        .collect()
}

/// The least vertical span of a sweep plot: 12 dB for a figure in decibels and 2 bits for ENOB
/// (6.02 dB per bit, handbook formula), so 0.2 bit (1.2 dB) of scatter fills at most a tenth of the
/// frame instead of reading as a trend.
fn min_span(f: &Figure) -> f64 {
    if std::ptr::eq(f, &figures::ENOB) {
        2.0
    } else {
        12.0
    }
}

/// A sweep's plots: (file stem, caption, SVG), the figures against input frequency at the reference
/// amplitude, then SNR against amplitude when the conditions vary it. The lot's ERBW and jitter are
/// fitted to the band's means, the points drawn.
fn sweep_plots(s: &Sweep) -> Result<Vec<(String, String, String)>> {
    let devices: Vec<&SweepPoint> = s.points.iter().filter(|p| p.device != LOT_MEAN).collect();
    let ref_amp = most_common(devices.iter().map(|p| key(p.amplitude_dbfs, 0.1)));
    let at_ref: Vec<&&SweepPoint> = devices
        .iter()
        .filter(|p| Some(key(p.amplitude_dbfs, 0.1)) == ref_amp)
        .collect();
    type Get = fn(&SweepPoint) -> Option<f64>;
    let plotted: [(&str, &Figure, Get); 4] = [
        ("sinad", &figures::SINAD, |p| p.sinad_db),
        ("snr", &figures::SNR, |p| p.snr_db),
        ("sfdr", &figures::SFDR, |p| p.sfdr_dbc),
        ("enob", &figures::ENOB, |p| p.enob_bits),
    ];
    let amp_text = ref_amp.map_or(String::new(), |k| {
        format!(" at {:.1} dBFS", k as f64 / 10.0)
    });
    let mut out = Vec::new();
    let mut erbw_hz = None;
    for (name, figure, get) in plotted {
        let triples = |group: fn(&SweepPoint) -> String| -> Vec<(String, f64, f64)> {
            at_ref
                .iter()
                .filter_map(|p| Some((group(p), p.fin_hz, get(p)?)))
                .collect()
        };
        let band = band_of(&triples(|p| p.condition.clone()));
        let lines = device_lines(&triples(|p| p.device.clone()));
        let means: Vec<(f64, f64)> = band.iter().map(|b| (b.x, b.mean)).collect();
        let mut plot = SweepPlot {
            title: format!("{} against input frequency{amp_text}", figure.label),
            y_desc: format!("{} ({})", figure.label, figure.unit),
            frequency_axis: true,
            min_span: min_span(figure),
            devices: lines,
            band,
            curve: None,
            marker: None,
        };
        let mut caption = format!(
            "{}: thin lines, each device; band, the lot mean ± one standard deviation across \
             devices at each condition; dark line, the lot mean.",
            figure.label
        );
        if name == "sinad" {
            erbw_hz = erbw(&means);
        }
        if name == "sinad" || name == "enob" {
            if let Some(f) = erbw_hz {
                plot.marker = Some((format!("ERBW {}", si(f, "Hz", 4)), f));
                caption.push_str(
                    " Dashed vertical: the ERBW, where the lot mean SINAD is 3 dB below its value \
                     at the lowest frequency.",
                );
            }
        }
        if name == "snr" {
            if let Some((sigma, a)) = jitter_fit(&means) {
                let hi = means.iter().map(|m| m.0).fold(0.0, f64::max) * 1.06;
                plot.curve = Some((
                    format!("jitter fit, σ = {}", si(sigma, "s", 3)),
                    jitter_curve(sigma, a, hi / 200.0, hi),
                ));
                caption.push_str(
                    " Dashed curve: the jitter-limited SNR −10·log10(a + (2π·f·σ)²) fitted to the \
                     lot mean.",
                );
            }
        }
        out.push((format!("{name}-vs-frequency"), caption, sweep_svg(&plot)?));
    }
    // SNR against amplitude, at the most common input frequency (rounded to 1 kHz).
    let ref_f = most_common(devices.iter().map(|p| key(p.fin_hz, 1e3)));
    let amp: Vec<(String, f64, f64)> = devices
        .iter()
        .filter(|p| Some(key(p.fin_hz, 1e3)) == ref_f)
        .filter_map(|p| Some((p.device.clone(), p.amplitude_dbfs, p.snr_db?)))
        .collect();
    let by_amp: Vec<(String, f64, f64)> = amp
        .iter()
        .map(|(_, x, y)| (format!("{:08}", key(*x, 0.1) + 100_000), *x, *y))
        .collect();
    let band = band_of(&by_amp);
    if band.len() >= 2 {
        let plot = SweepPlot {
            title: format!(
                "{} against input amplitude at {}",
                figures::SNR.label,
                si(ref_f.unwrap_or(0) as f64 * 1e3, "Hz", 4)
            ),
            y_desc: format!("{} ({})", figures::SNR.label, figures::SNR.unit),
            frequency_axis: false,
            min_span: min_span(&figures::SNR),
            devices: device_lines(&amp),
            band,
            curve: None,
            marker: None,
        };
        out.push((
            "snr-vs-amplitude".to_string(),
            "SNR against input amplitude (dynamic range): thin lines, each device; band, the lot \
             mean ± one standard deviation."
                .to_string(),
            sweep_svg(&plot)?,
        ));
    }
    Ok(out)
}

/// The sweep's page in the shared page shell: the summary per device (the lot mean first), then
/// each plot inline with its caption.
fn sweep_page(s: &Sweep, plots: &[(String, String, String)]) -> String {
    use std::fmt::Write as _;
    let devices = s.summaries.len().saturating_sub(1);
    let conditions: std::collections::BTreeSet<&str> =
        s.points.iter().map(|p| p.condition.as_str()).collect();
    let mut body = String::from(
        "<h2>Summary</h2>\n<p class=\"note\">ERBW: the input frequency where SINAD is 3 dB below its \
         value at the lowest frequency. Jitter: σ of the fit 10^(−SNR/10) = a + (2π·f·σ)²; SNR floor: \
         −10·log10(a). A dash: fewer than three frequencies, a fit whose slope is not positive, or \
         SINAD that never falls 3 dB.</p>\n<div class=\"wide\">\n<table id=\"sweep\">\n<thead><tr>\
         <th class=\"t\">device</th><th>points</th><th>ERBW</th><th>jitter rms</th><th>SNR floor</th>\
         <th>amplitude points</th></tr></thead>\n<tbody>\n",
    );
    for (i, m) in s.summaries.iter().enumerate() {
        let class = if i == 0 { " class=\"whole\"" } else { "" };
        let _ = writeln!(
            body,
            "<tr{class}><td class=\"t\">{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>",
            escape(&m.device),
            m.frequency_points,
            m.erbw_hz.map_or("beyond range".into(), |f| si(f, "Hz", 4)),
            m.jitter_rms_s.map_or("—".into(), |j| si(j, "s", 3)),
            m.snr_floor_db.map_or("—".into(), |v| format!("{v:.2} dB")),
            m.snr_vs_amplitude.len(),
        );
    }
    body.push_str("</tbody>\n</table>\n</div>\n<h2>Plots</h2>\n<div class=\"plots\">\n");
    for (name, caption, svg) in plots {
        let file = format!("{name}.svg");
        let _ = writeln!(
            body,
            "<figure id=\"{name}\">{}<figcaption>{} <a href=\"{file}\">{file}</a></figcaption></figure>",
            inline_svg(&file, svg),
            escape(caption),
        );
    }
    body.push_str(
        "</div>\n<p class=\"files\">Files: <a href=\"sweep.csv\">sweep.csv</a> (every point), \
         <a href=\"sweep_summary.csv\">sweep_summary.csv</a>, <a href=\"sweep.json\">sweep.json</a>.</p>\n",
    );
    page(
        "Sweep",
        &format!(
            "{devices} device{} · {} condition{}",
            if devices == 1 { "" } else { "s" },
            conditions.len(),
            if conditions.len() == 1 { "" } else { "s" }
        ),
        &body,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    // Jitter-limited SNR (handbook): SNR = −10·log10(a + (2π·f·σ)²); the fit must give σ and a back
    // exactly from noiseless points.
    #[test]
    fn jitter_fit_recovers_sigma() {
        let (sigma, a) = (500e-15, 10f64.powf(-7.4));
        let pts: Vec<(f64, f64)> = [5e6, 20e6, 50e6, 120e6]
            .iter()
            .map(|&f| {
                (
                    f,
                    -10.0 * (a + (std::f64::consts::TAU * f * sigma).powi(2)).log10(),
                )
            })
            .collect();
        let (s, aa) = jitter_fit(&pts).unwrap();
        assert!(
            (s / sigma - 1.0).abs() < 1e-9 && (aa / a - 1.0).abs() < 1e-9,
            "{s} {aa}"
        );
        assert!(jitter_fit(&pts[..2]).is_none());
    }

    // SNR against amplitude (dynamic range): conditions at one frequency and several levels give a
    // rising list; the frequency sweep uses the most common level (common practice, no source).
    #[test]
    fn amplitude_sweep_is_collected_at_one_frequency() {
        let p = |c: &str, f: f64, a: f64, snr: f64| SweepPoint {
            device: "d1".into(),
            condition: c.into(),
            fin_hz: f,
            amplitude_dbfs: a,
            snr_db: Some(snr),
            sinad_db: Some(snr - 0.5),
            sfdr_dbc: None,
            enob_bits: None,
        };
        let pts = vec![
            p("a1", 10e6, -1.0, 70.0),
            p("a20", 10e6, -20.0, 51.0),
            p("a10", 10e6, -10.0, 61.0),
            p("f30", 30e6, -1.0, 69.0),
            p("f60", 60e6, -1.0, 66.0),
        ];
        let s = sweep(&pts);
        let d = s.summaries.iter().find(|m| m.device == "d1").unwrap();
        assert_eq!(
            d.snr_vs_amplitude,
            vec![(-20.0, 51.0), (-10.0, 61.0), (-1.0, 70.0)]
        );
        assert_eq!(d.frequency_points, 3);
        assert_eq!(s.summaries[0].device, "lot mean");
    }

    // ERBW by linear interpolation between straddling points (common practice, no source).
    #[test]
    fn erbw_interpolates_the_3_db_point() {
        let pts = [(1e6, 70.0), (10e6, 69.0), (20e6, 66.0), (40e6, 60.0)];
        let f = erbw(&pts).unwrap();
        // 67 dB lies between 10 MHz (69) and 20 MHz (66): 10 + 10·(2/3) MHz.
        assert!((f - (10e6 + 10e6 * 2.0 / 3.0)).abs() < 1e-3, "{f}");
        assert!(erbw(&[(1e6, 70.0), (2e6, 69.5)]).is_none());
    }
}
