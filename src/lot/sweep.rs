//! Sweeps over a lot run whose conditions vary the input frequency or amplitude: SNR, SINAD, SFDR and
//! ENOB against frequency, the effective resolution bandwidth, SNR against amplitude (dynamic range), and
//! an aperture-jitter estimate from SNR against frequency.

use crate::error::{Error, ErrorKind, Location, Result};
use crate::figures::{self, flatten, Figure};
use crate::lot::compare::plots::series_svg;
use crate::lot::files::{DroppedCell, LotSummary};
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
/// sweep), and the lot mean's plots against input frequency (`sinad-`, `snr-`, `sfdr-` and
/// `enob-vs-frequency.svg`) and, when the conditions vary the amplitude, `snr-vs-amplitude.svg`.
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
    let lot: Vec<&SweepPoint> = s.points.iter().filter(|p| p.device == "lot mean").collect();
    type Get = fn(&SweepPoint) -> Option<f64>;
    let axis = |f: &Figure| format!("{} ({})", f.label, f.unit);
    let plotted: [(&str, &Figure, Get); 4] = [
        ("sinad", &figures::SINAD, |p| p.sinad_db),
        ("snr", &figures::SNR, |p| p.snr_db),
        ("sfdr", &figures::SFDR, |p| p.sfdr_dbc),
        ("enob", &figures::ENOB, |p| p.enob_bits),
    ];
    for (name, figure, get) in plotted {
        let unit = axis(figure);
        let pts: Vec<(f64, f64)> = lot
            .iter()
            .filter_map(|p| Some((p.fin_hz, get(p)?)))
            .collect();
        let svg = series_svg(
            &format!("{unit} against input frequency"),
            "input frequency (MHz)",
            &unit,
            &[("lot mean", &pts)],
            1e6,
        )?;
        write_atomic(
            &out.join(format!("{name}-vs-frequency.svg")),
            svg.as_bytes(),
        )?;
    }
    if let Some(m) = s
        .summaries
        .first()
        .filter(|m| !m.snr_vs_amplitude.is_empty())
    {
        let svg = series_svg(
            &format!("{} against input amplitude", figures::SNR.label),
            &format!("input amplitude ({})", figures::FIT_AMPLITUDE_DBFS.unit),
            &axis(&figures::SNR),
            &[("lot mean", &m.snr_vs_amplitude)],
            1.0,
        )?;
        write_atomic(&out.join("snr-vs-amplitude.svg"), svg.as_bytes())?;
    }
    Ok(())
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
