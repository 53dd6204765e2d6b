//! `spurline sweep`: figures against input frequency and amplitude over a lot run, ERBW and a jitter
//! estimate, written as CSV and SVG.

use super::{EXIT_ERROR, EXIT_OK};
use clap::Args;
use spurline::{format_si, read_points, sweep, write_sweep, Error};
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

fn go(args: &SweepArgs) -> Result<(), Error> {
    let input = read_points(&args.run)?;
    if let Some(note) = spurline::dropped_note(&input.dropped) {
        eprintln!("warning: {note}");
    }
    let points = input.points;
    let s = sweep(&points);
    let out = args.out.clone().unwrap_or_else(|| args.run.join("sweep"));
    write_sweep(&out, &s)?;
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
                .map_or("beyond range".into(), |f| format_si(f, "Hz", 4)),
            m.jitter_rms_s.map_or("—".into(), |j| format_si(j, "s", 3)),
            m.snr_floor_db.map_or("—".into(), |v| format!("{v:.2} dB"))
        );
    }
    println!("wrote {}", out.display());
    Ok(())
}
