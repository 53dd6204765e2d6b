//! `spurline imd`: two-tone intermodulation of each record (IM2, IM3, two-tone SFDR), as readable tables
//! or one JSON array.

use super::ReadArgs;
use clap::Args;
use spurline::{analyze_two_tone_traced, ImdSettings};
use std::path::PathBuf;

/// Arguments of `imd`.
#[derive(Debug, Args)]
pub struct ImdArgs {
    /// Record files holding two tones (text, CSV or raw binary; a JSON sidecar next to each is read
    /// when present).
    #[arg(required = true)]
    pub files: Vec<PathBuf>,
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
    /// Keep the frequencies where the tones were located (no Gauss-Newton refinement of the fit).
    #[arg(long)]
    pub no_refine: bool,
    /// Print one JSON array, one object per record in input order, instead of tables.
    #[arg(long)]
    pub json: bool,
    /// Folder for the report: index.html and one two-tone spectrum per record, the IM products
    /// marked by order.
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

/// Runs `imd`.
pub fn run(mut args: ImdArgs) -> i32 {
    args.out = super::renamed(args.out.take(), args.report_old.take(), "--report", "--out");
    let ingest = match args.read.settings() {
        Ok(s) => s,
        Err(e) => return super::fail(&e),
    };
    let window = match args.window.parse() {
        Ok(w) => w,
        Err(e) => return super::fail(&e),
    };
    let settings = ImdSettings {
        window,
        guard_bins: args.guard_bins,
        refine_frequencies: !args.no_refine,
        ..ImdSettings::default()
    };
    super::run_files(
        &args.files,
        &ingest,
        args.json,
        |record| analyze_two_tone_traced(record, &settings),
        spurline::render_two_tone,
        args.out.as_deref().map(|dir| {
            let write: super::ReportWriter<spurline::TwoTone> = &|d, items| {
                spurline::write_two_tone_report(d, items, &spurline::PlotOptions::default())
            };
            (dir, write)
        }),
    )
}
