//! Command-line definitions (clap) and their conversion into validated library settings.

mod analyze;
mod batch;
mod compare;
mod demo;
mod demo_lot;
mod help;
mod imd;
mod interleave;
mod limits;
mod linearity;
mod merge;
mod plan;
mod query;
mod record;
mod sweep;
mod synth;
mod trend;
mod verify;

use clap::{Args, Parser, Subcommand};
use spurline::RecordResult;

/// Exit status: all records analysed and every limit passed.
pub const EXIT_OK: i32 = 0;
/// Exit status: the run completed and something failed (a limit, or a `verify` check).
pub const EXIT_FAIL: i32 = 1;
/// Exit status: an error (bad input, bad settings, an unreadable or unanalysable record).
pub const EXIT_ERROR: i32 = 2;

/// spurline: dynamic performance of analog-to-digital converters from captured output codes,
/// by the methods of IEEE Std 1241.
#[derive(Debug, Parser)]
#[command(
    name = "spurline",
    version,
    after_help = "Exit status: 0 all records analysed (and all limits passed), 1 some limit failed, 2 an error."
)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands: verbs for what the user wants done.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Analyse captured records: sine fit and spectral figures, one table (or JSON object) per record.
    Analyze(analyze::AnalyzeArgs),
    /// Two-tone intermodulation: IM2 and IM3 products and two-tone SFDR of records holding two tones.
    Imd(imd::ImdArgs),
    /// Interleaving spurs of an M-channel time-interleaved converter, with each channel's offset, gain
    /// and timing error.
    Interleave(interleave::InterleaveArgs),
    /// Sweeps over a lot run: figures against input frequency and amplitude, ERBW, aperture jitter.
    Sweep(sweep::SweepArgs),
    /// Compare two lot runs (board revisions): per condition and metric, statistics and a verdict.
    Compare(compare::CompareArgs),
    /// Write records from a simulated N-bit converter (for demos and tests).
    Synth(synth::SynthArgs),
    /// Run the main job on built-in generated data and write a report into reports/demo/.
    Demo(demo::DemoArgs),
    /// Check this build against published and analytic reference figures; exit 0 when all pass.
    Verify(verify::VerifyArgs),
    /// Plan coherent test frequencies: cycle counts, where harmonics and two-tone products land,
    /// collisions, record length for a resolution.
    Plan(plan::PlanArgs),
    /// Code-density (histogram) linearity test on overdriven sine records: DNL, INL, missing codes.
    Linearity(linearity::LinearityArgs),
    /// Run a bench plan over a lot: analyse every device under every condition, judge the results
    /// against a limit table, write per-device and lot summaries.
    Batch(batch::BatchArgs),
    /// Merge the output folders of `batch --shard K/M` runs (K = 1..M) into one lot report, the same
    /// byte for byte as an unsharded run's.
    Merge(merge::MergeArgs),
    /// Propose limits from a characterisation run (mean ± k·σ or percentiles), with Cpk against an
    /// existing limit table.
    Limits(limits::LimitsArgs),
    /// Record a finished lot folder into a results store (SQLite file or PostgreSQL server).
    Record(record::RecordArgs),
    /// Ask a results store: the lots, the last N lots of a metric, one device's history, lots below
    /// a yield, lots that failed a limit (CSV).
    Query(query::QueryArgs),
    /// Control charts of the lots in a results store, per condition and metric: limits from a
    /// baseline, run rules, Cpk per lot; exit status 1 when a rule fires.
    Trend(trend::TrendArgs),
}

pub use help::command;

/// Runs a parsed command line and returns the exit status.
pub fn run(cli: Cli) -> i32 {
    match cli.command {
        Command::Analyze(a) => analyze::run(a),
        Command::Imd(a) => imd::run(a),
        Command::Interleave(a) => interleave::run(a),
        Command::Synth(a) => synth::run(a),
        Command::Compare(a) => compare::run(a),
        Command::Sweep(a) => sweep::run(a),
        Command::Demo(a) => demo::run(a),
        Command::Verify(a) => verify::run(a),
        Command::Plan(a) => plan::run(a),
        Command::Linearity(a) => linearity::run(a),
        Command::Batch(a) => batch::run(a),
        Command::Merge(a) => merge::run(a),
        Command::Limits(a) => limits::run(a),
        Command::Record(a) => record::run(a),
        Command::Query(a) => query::run(a),
        Command::Trend(a) => trend::run(a),
    }
}

/// Reads and analyses each file in order (one bad file is a failed result, the rest go on), prints
/// one JSON array or the text blocks, repeats the errors on stderr, and gives the exit status.
/// Writes a command's report folder from its traced results; returns the page's path.
pub(crate) type ReportWriter<'a, T> =
    &'a dyn Fn(&std::path::Path, &[spurline::Traced<T>]) -> spurline::Result<std::path::PathBuf>;

pub(crate) fn run_files<T: Default + serde::Serialize>(
    files: &[std::path::PathBuf],
    ingest: &spurline::IngestSettings,
    json: bool,
    analyse: impl Fn(&spurline::Record) -> spurline::Result<(RecordResult<T>, Vec<f64>)>,
    render: impl Fn(&RecordResult<T>) -> String,
    report: Option<(&std::path::Path, ReportWriter<T>)>,
) -> i32 {
    let mut traced: Vec<spurline::Traced<T>> = Vec::new();
    for path in files {
        let shown = path.display().to_string();
        let (r, powers) = match spurline::read_record(path, ingest) {
            Err(e) => (RecordResult::failed(&shown, &e, Vec::new()), None),
            Ok(ing) => match analyse(&ing.record) {
                Ok((mut r, powers)) => {
                    // The reader's warnings come before the analysis's.
                    let mut w = ing.warnings;
                    w.append(&mut r.warnings);
                    r.warnings = w;
                    (r, Some(powers))
                }
                Err(e) => (RecordResult::failed(&shown, &e, ing.warnings), None),
            },
        };
        // Only the page needs the bin powers; without one they are dropped at once.
        traced.push((r, powers.filter(|_| report.is_some())));
    }
    if let Some((dir, write)) = report {
        match write(dir, &traced) {
            Ok(page) => eprintln!("wrote {}", page.display()),
            Err(e) => return fail(&e),
        }
    }
    let results: Vec<&RecordResult<T>> = traced.iter().map(|t| &t.0).collect();
    if json {
        // Plain data with Option<f64> figures and finite floats: this cannot fail.
        let mut s = serde_json::to_string_pretty(&results).expect("plain data serialises");
        s.push('\n');
        print!("{s}");
    } else {
        for r in &results {
            print!("{}", render(r));
        }
    }
    let mut any_error = false;
    for m in results
        .iter()
        .filter_map(|r| r.error.as_ref().map(|e| e.message.as_str()))
    {
        any_error = true;
        eprintln!("spurline: error: {m}");
    }
    if any_error {
        EXIT_ERROR
    } else {
        EXIT_OK
    }
}

/// Prints an error the same way everywhere and returns the error exit status.
/// True when standard output is the file `path` (the same file, however named).
pub(crate) fn is_stdout(path: &std::path::Path) -> bool {
    #[cfg(unix)]
    {
        use std::os::fd::AsFd;
        use std::os::unix::fs::MetadataExt;
        let Ok(target) = std::fs::metadata(path) else {
            return false;
        };
        let Ok(fd) = std::io::stdout().as_fd().try_clone_to_owned() else {
            return false;
        };
        std::fs::File::from(fd)
            .metadata()
            .is_ok_and(|m| m.is_file() && m.dev() == target.dev() && m.ino() == target.ino())
    }
    #[cfg(not(unix))]
    {
        let _ = path;
        false
    }
}

/// The value of an option given under its new name or its old one (a hidden alias kept so that
/// scripts keep working); the old name is warned about on stderr.
pub(crate) fn renamed<T>(
    new: Option<T>,
    old: Option<T>,
    old_flag: &str,
    new_flag: &str,
) -> Option<T> {
    if old.is_some() {
        eprintln!(
            "spurline: warning: {old_flag} is now {new_flag}; the old name still works but will be \
             removed"
        );
    }
    new.or(old)
}

pub(crate) fn fail(e: &spurline::Error) -> i32 {
    eprintln!("spurline: error: {e}");
    EXIT_ERROR
}

/// Parses a frequency or other quantity with an optional SI prefix ("100M", "1.5 kHz", "1e6").
pub(crate) fn si_value(s: &str) -> Result<f64, String> {
    spurline::parse_si(s).ok_or_else(|| {
        format!("expected a number with an optional SI prefix (100e6, 100M, 1.5k), found '{s}'")
    })
}

/// Options that say how to read records, shared by the commands that read them.
#[derive(Debug, Clone, Args)]
pub struct ReadArgs {
    /// Sample rate in hertz (SI prefixes allowed: 100M). Overrides the sidecar.
    #[arg(long, value_parser = si_value)]
    pub fs: Option<f64>,
    /// Converter resolution N in bits (1..=32). Overrides the sidecar.
    #[arg(long)]
    pub bits: Option<u32>,
    /// Expected input frequency in hertz: where the fit starts looking for the tone.
    #[arg(long, value_parser = si_value)]
    pub fin: Option<f64>,
    /// Full-scale range in volts peak-to-peak: scales a record of volts to full scale (dBFS); for a
    /// record of codes it is reported only.
    #[arg(long)]
    pub full_scale_vpp: Option<f64>,
    /// What the samples are: codes, volts (needs --full-scale-vpp) or full-scale (±1.0 is full
    /// scale). Decided from the data when absent: integers are codes, decimal fractions volts.
    #[arg(long, value_parser = ["codes", "volts", "full-scale"])]
    pub unit: Option<String>,
    /// Record format: text, csv, npy, wav, a binary word layout i8, u8, i16le, i16be, u16le, u16be,
    /// i24le, i24be, u24le, u24be, i32le, i32be, u32le, u32be (signed words hold two's complement,
    /// unsigned offset binary, unless --coding), or packed samples p10le, p10be, p12le, p12be, p14le,
    /// p14be (two's complement unless --coding; --bits defaults to the packing's width). Detected
    /// from the file's first bytes (npy, wav) or extension when absent.
    #[arg(long)]
    pub format: Option<String>,
    /// Code format in binary words: twos or offset.
    #[arg(long, value_parser = ["twos", "offset"])]
    pub coding: Option<String>,
    /// Where the N significant bits sit in a binary word: right (LSB-aligned) or left (MSB-aligned).
    #[arg(long, value_parser = ["right", "left"])]
    pub justify: Option<String>,
    /// Header bytes to skip at the start of a binary file.
    #[arg(long)]
    pub skip_bytes: Option<u64>,
    /// Interleaved channels: take channel K of M (1-based), e.g. 2/4 (for WAV, M is the file's count).
    #[arg(long)]
    pub channel: Option<String>,
    /// CSV column: a header name or a 0-based index.
    #[arg(long)]
    pub column: Option<String>,
    /// CSV delimiter (one character; "tab" for a tab). Detected when absent.
    #[arg(long)]
    pub delimiter: Option<String>,
    #[command(flatten)]
    pub limits: LimitArgs,
}

/// The memory ceiling of a record and streams, shared by the commands that read records.
#[derive(Debug, Clone, Args)]
pub struct LimitArgs {
    /// Memory one record may need (read and analysed), in bytes with an SI prefix (4G = 4e9 bytes)
    /// [default: half this machine's memory]. A larger record is refused before it is read.
    #[arg(long, value_name = "BYTES", value_parser = memory_value)]
    pub max_memory: Option<u64>,
    /// Read a record path that is not a regular file (a FIFO, a device) as a stream, up to a quarter
    /// of --max-memory; without it such a path is refused.
    #[arg(long)]
    pub stream: bool,
}

/// Parses a memory size: bytes with an optional SI prefix and "B" ("4G", "512MB", "1e9"), at least
/// 1 MB.
pub(crate) fn memory_value(s: &str) -> Result<u64, String> {
    let t = s.trim();
    let t = t.strip_suffix('B').unwrap_or(t);
    match spurline::parse_si(t) {
        Some(v) if (1e6..=1.8e19).contains(&v) => Ok(v as u64),
        _ => Err(format!(
            "expected a memory size in bytes from 1M to 18E (4G, 512MB, 1e9), found '{s}'"
        )),
    }
}

impl ReadArgs {
    /// Converts into ingest settings, validating what can be validated before any file is read.
    pub fn settings(&self) -> Result<spurline::IngestSettings, spurline::Error> {
        use spurline::{parse_delimiter, ColumnSel, Format, IngestSettings, Metadata};
        // `txt` is the command line's own alias of `text`.
        let format = match self.format.as_deref() {
            None => None,
            Some("txt") => Some(Format::Text),
            Some(f) => Some(f.parse::<Format>()?),
        };
        let column = self.column.as_ref().map(|c| match c.parse::<usize>() {
            Ok(i) => ColumnSel::Index(i),
            Err(_) => ColumnSel::Name(c.clone()),
        });
        let delimiter = self.delimiter.as_deref().map(parse_delimiter).transpose()?;
        Ok(IngestSettings {
            format,
            meta: Metadata {
                sample_rate_hz: self.fs,
                bits: self.bits,
                fin_hz: self.fin,
                full_scale_vpp: self.full_scale_vpp,
            },
            coding: self.coding.as_deref().map(str::parse).transpose()?,
            justify: self.justify.as_deref().map(str::parse).transpose()?,
            skip_bytes: self.skip_bytes,
            channel: self
                .channel
                .as_deref()
                .map(spurline::parse_channel)
                .transpose()?,
            column,
            delimiter,
            unit: self.unit.as_deref().map(str::parse).transpose()?,
            min_samples: 0,
            max_memory_bytes: self.limits.max_memory.unwrap_or(0),
            stream: self.limits.stream,
        })
    }
}

/// Options of the analysis itself.
#[derive(Debug, Clone, Args)]
pub struct AnalysisArgs {
    /// Sine fit: four (the frequency is found) or three (at --fin, which it then needs).
    #[arg(long, default_value = "four", value_parser = ["four", "three"])]
    pub fit: String,
    /// Window: auto, or one of rectangular, hann, blackman-harris-4, blackman-harris-7, hft90d,
    /// hft116d, hft144d, hft169d, flattop, kaiser(BETA).
    #[arg(long, default_value = "auto")]
    pub window: String,
    /// Highest harmonic counted (2..=H).
    #[arg(long, default_value_t = 10)]
    pub harmonics: u32,
    /// Guard bins added on each side of every tone's bins beyond the window's main lobe (default: 0 coherent,
    /// 1 non-coherent).
    #[arg(long)]
    pub guard_bins: Option<usize>,
}

impl AnalysisArgs {
    /// Converts into analysis settings.
    pub fn settings(&self) -> Result<spurline::AnalysisSettings, spurline::Error> {
        use spurline::AnalysisSettings;
        use spurline::SpectrumSettings;
        if !(1..=100).contains(&self.harmonics) {
            return Err(spurline::Error::setting(
                "harmonics",
                "a highest harmonic order in 1..=100",
                self.harmonics.to_string(),
            ));
        }
        Ok(AnalysisSettings {
            fit: self.fit.parse()?,
            spectrum: SpectrumSettings {
                window: self.window.parse()?,
                harmonics: self.harmonics,
                guard_bins: self.guard_bins,
            },
            min_samples: 0,
            keep_residual: true,
        })
    }
}
