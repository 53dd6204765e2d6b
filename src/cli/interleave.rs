//! `spurline interleave`: interleaving spurs of each record of an M-channel time-interleaved converter,
//! with each channel's offset, gain and timing error, as readable tables or one JSON array.

use super::ReadArgs;
use clap::Args;
use spurline::{analyze_interleaved_traced, InterleaveSettings};
use std::path::PathBuf;

/// Arguments of `interleave`.
#[derive(Debug, Args)]
pub struct InterleaveArgs {
    /// Record files holding one sine, sample n taken by channel n mod M (text, CSV or raw binary; a
    /// JSON sidecar next to each is read when present).
    #[arg(required = true)]
    pub files: Vec<PathBuf>,
    /// Number of interleaved channels M (2 or more).
    #[arg(long, required = true)]
    pub channels: usize,
    #[command(flatten)]
    pub read: ReadArgs,
    /// Window: auto, or one of rectangular, hann, blackman-harris-4, blackman-harris-7, hft90d,
    /// hft116d, hft144d, hft169d, flattop, kaiser(BETA).
    #[arg(long, default_value = "auto")]
    pub window: String,
    /// Guard bins added on each side of every tone's bins beyond the window's main lobe (default: 0 coherent,
    /// 1 non-coherent).
    #[arg(long)]
    pub guard_bins: Option<usize>,
    /// Print one JSON array, one object per record in input order, instead of tables.
    #[arg(long)]
    pub json: bool,
    /// Folder for the report: index.html and one spectrum per record, the offset spurs and the
    /// gain/timing images marked.
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// The old name of --out (warns).
    #[arg(
        long = "report",
        value_name = "DIR",
        hide = true,
        conflicts_with = "out"
    )]
    pub report_old: Option<PathBuf>,
}

/// Runs `interleave`.
pub fn run(mut args: InterleaveArgs) -> i32 {
    args.out = super::renamed(args.out.take(), args.report_old.take(), "--report", "--out");
    let ingest = match args.read.settings() {
        Ok(s) => s,
        Err(e) => return super::fail(&e),
    };
    // One channel of the record holds none of the mismatch between channels: its fit would be of a
    // different record (sample n of channel k) and its figures meaningless.
    if let Some(c) = &args.read.channel {
        return super::fail(&spurline::Error::setting(
            "channel",
            format!(
                "no --channel: interleave reads every channel's samples (n mod {} + 1 is the \
                 channel), and --channels gives their count",
                args.channels
            ),
            c.clone(),
        ));
    }
    let window = match args.window.parse() {
        Ok(w) => w,
        Err(e) => return super::fail(&e),
    };
    let settings = InterleaveSettings {
        window,
        guard_bins: args.guard_bins,
        ..InterleaveSettings::new(args.channels)
    };
    super::run_files(
        &args.files,
        &ingest,
        args.json,
        |record| analyze_interleaved_traced(record, &settings),
        spurline::render_interleaved,
        args.out.as_deref().map(|dir| {
            let write: super::ReportWriter<spurline::Interleaved> = &|d, items| {
                spurline::write_interleave_report(d, items, &spurline::PlotOptions::default())
            };
            (dir, write)
        }),
    )
}
