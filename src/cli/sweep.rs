//! `spurline sweep`: figures against input frequency and amplitude over a lot run, ERBW and a jitter
//! estimate, written as CSV and SVG.

use super::{EXIT_ERROR, EXIT_OK};
use clap::Args;
use spurline::figures::{self, Figure};
use spurline::lot::compare::plots::series_svg;
use spurline::lot::sweep::{read_points, sweep, SweepPoint};
use spurline::report::{csv::flatten, write_atomic};
use spurline::Error;
use std::path::PathBuf;

/// Arguments of `sweep`.
#[derive(Debug, Args)]
pub struct SweepArgs {
    /// A `spurline batch` output folder whose conditions vary the input frequency or amplitude.
    pub run: PathBuf,
    /// Output folder (default: RUN/sweep).
    #[arg(long)]
    pub out: Option<PathBuf>,
}

/// Runs `sweep`.
pub fn run(args: SweepArgs) -> i32 {
    match go(&args) {
        Ok(()) => EXIT_OK,
        Err(e) => {
            super::fail(&e);
            EXIT_ERROR
        }
    }
}

fn to_csv<T: serde::Serialize>(rows: &[T]) -> String {
    let flat: Vec<Vec<(String, String)>> = rows
        .iter()
        .map(|r| flatten(&serde_json::to_value(r).expect("plain data serialises")))
        .collect();
    let mut w = ::csv::Writer::from_writer(Vec::new());
    if let Some(first) = flat.first() {
        w.write_record(first.iter().map(|(k, _)| k))
            .expect("memory");
    }
    for r in &flat {
        w.write_record(r.iter().map(|(_, v)| v)).expect("memory");
    }
    String::from_utf8(w.into_inner().expect("memory")).expect("UTF-8")
}

fn go(args: &SweepArgs) -> Result<(), Error> {
    let points = read_points(&args.run)?.points;
    let s = sweep(&points);
    let out = args.out.clone().unwrap_or_else(|| args.run.join("sweep"));
    std::fs::create_dir_all(&out).map_err(|e| {
        Error::new(
            spurline::ErrorKind::Output,
            out.display().to_string(),
            spurline::Location::Whole,
            "a writable folder",
            e.to_string(),
        )
    })?;
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
    println!(
        "{:<12} {:>8} {:>14} {:>14} {:>12}",
        "device", "points", "ERBW", "jitter rms", "SNR floor"
    );
    for m in &s.summaries {
        println!(
            "{:<12} {:>8} {:>14} {:>14} {:>12}",
            m.device,
            m.frequency_points,
            m.erbw_hz
                .map_or("beyond range".into(), |f| spurline::report::units::si(
                    f, "Hz", 4
                )),
            m.jitter_rms_s
                .map_or("—".into(), |j| spurline::report::units::si(j, "s", 3)),
            m.snr_floor_db.map_or("—".into(), |v| format!("{v:.2} dB"))
        );
    }
    println!("wrote {}", out.display());
    Ok(())
}
