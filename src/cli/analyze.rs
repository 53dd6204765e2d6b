//! `spurline analyze`: read records, analyse each (or average them), print a table or JSON, and with
//! `--out DIR` write a report (page, summaries, plots) of the records analysed.

use super::{AnalysisArgs, ReadArgs, EXIT_ERROR, EXIT_OK};
use clap::Args;
use spurline::read_record;
use spurline::{analyze_averaged, analyze_record, Analysis, Traces};
use std::path::{Path, PathBuf};

/// Arguments of `analyze`.
#[derive(Debug, Args)]
pub struct AnalyzeArgs {
    /// Record files (text, CSV or raw binary; a JSON sidecar next to each is read when present).
    #[arg(required = true)]
    pub files: Vec<PathBuf>,
    #[command(flatten)]
    pub read: ReadArgs,
    #[command(flatten)]
    pub analysis: AnalysisArgs,
    /// Power-average the spectra of all FILEs (one condition) into one result.
    #[arg(long)]
    pub average: bool,
    /// Print one JSON array, one object per record in input order, instead of tables.
    #[arg(long)]
    pub json: bool,
    /// Also write a report into DIR: index.html, summary.csv, results.json, and per device (the record
    /// file's folder name) its summaries and each record's spectrum, residual and histogram plots.
    #[arg(long, value_name = "DIR", group = "report_dir")]
    pub out: Option<PathBuf>,
    /// The old name of --out (warns).
    #[arg(long = "report", value_name = "DIR", hide = true, group = "report_dir")]
    pub report_old: Option<PathBuf>,
    /// Draw the report's spectra on a log frequency axis.
    #[arg(long, requires = "report_dir")]
    pub log_frequency: bool,
    /// Record the report into this results store (a SQLite file, created when missing, or a
    /// PostgreSQL URL): each record file's folder is a device, its name a condition. One
    /// transaction; the same report recorded twice is refused (exit status at least 1).
    #[arg(long, requires = "report_dir")]
    pub store: Option<String>,
    /// The lot's name in the store [default: the report folder's name].
    #[arg(long, requires = "store")]
    pub lot: Option<String>,
}

/// Device and record names of a record file: its folder's name (or "records") and its file stem.
fn names_of(path: &Path) -> (String, String) {
    let device = path
        .parent()
        .and_then(|p| p.file_name())
        .map(|n| n.to_string_lossy().to_string())
        .filter(|n| !n.is_empty())
        .unwrap_or_else(|| "records".to_string());
    let record = path
        .file_stem()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| path.display().to_string());
    (device, record)
}

/// Runs `analyze`.
pub fn run(mut args: AnalyzeArgs) -> i32 {
    args.out = super::renamed(args.out.take(), args.report_old.take(), "--report", "--out");
    let args = args;
    // A bad option fails every record; with --json the array still has one object per record.
    let fail_all = |e: &spurline::Error| {
        if args.json {
            let failed: Vec<Analysis> = args
                .files
                .iter()
                .map(|p| Analysis::failed(&p.display().to_string(), e, Vec::new()))
                .collect();
            print!("{}", spurline::to_json(&failed));
        }
        super::fail(e)
    };
    let ingest = match args.read.settings() {
        Ok(s) => s,
        Err(e) => return fail_all(&e),
    };
    let settings = match args.analysis.settings() {
        // The residual is kept only for a report's plot.
        Ok(s) => spurline::AnalysisSettings {
            keep_residual: args.out.is_some(),
            ..s
        },
        Err(e) => return fail_all(&e),
    };
    // `analyze --json x.txt > x.json`: the shell emptied the sidecar before this run began. Say so
    // plainly (the record is still read, without it) rather than leave it to a puzzling error.
    for path in &args.files {
        if let Ok(sidecar) = spurline::sidecar_path(path) {
            if super::is_stdout(&sidecar) {
                eprintln!(
                    "spurline: warning: standard output is {}, the metadata sidecar of {}: the \
                     shell emptied it before this run began; write the output to another name \
                     (e.g. {}) and restore the sidecar",
                    sidecar.display(),
                    path.display(),
                    path.with_extension("analysis.json").display()
                );
            }
        }
    }
    let started_at = spurline::utc_now();
    if let Some(s) = &args.store {
        // A bad store is an error before the records are read, not after.
        if let Err(e) = s
            .parse::<spurline::StoreUrl>()
            .and_then(|u| spurline::Store::open(&u))
        {
            return super::fail(&e);
        }
    }
    // Traces are kept only when a report will draw them.
    let keep = args.out.is_some();
    // Each result with the place of its file in the input (the first averaged file's for an
    // averaged result), so that the output keeps input order even when a file is named twice.
    let mut results: Vec<(usize, Analysis, Option<Traces>)> = Vec::new();
    let mut any_error = false;
    // Without --average each record is read, analysed and given up before the next is read, so a
    // list of long records needs the memory of one.
    let mut loaded = Vec::new();
    let mut first_loaded = None;
    for (place, path) in args.files.iter().enumerate() {
        let ing = match read_record(path, &ingest) {
            Ok(ing) => ing,
            Err(e) => {
                any_error = true;
                results.push((
                    place,
                    Analysis::failed(&path.display().to_string(), &e, Vec::new()),
                    None,
                ));
                continue;
            }
        };
        if args.average {
            first_loaded.get_or_insert(place);
            loaded.push(ing);
            continue;
        }
        let source = ing.record.source.clone();
        match analyze_record(ing.record, &settings) {
            Ok(m) => {
                let mut a = m.analysis;
                let mut w = ing.warnings;
                w.extend(a.warnings);
                a.warnings = w;
                results.push((place, a, keep.then_some(m.traces)));
            }
            Err(e) => {
                any_error = true;
                results.push((place, Analysis::failed(&source, &e, ing.warnings), None));
            }
        }
    }
    if !loaded.is_empty() {
        let place = first_loaded.unwrap_or(0);
        let mut warnings = Vec::new();
        let mut records = Vec::with_capacity(loaded.len());
        for ing in loaded {
            warnings.extend(ing.warnings);
            records.push(ing.record);
        }
        match analyze_averaged(&records, &settings) {
            Ok(m) => {
                let mut a = m.analysis;
                warnings.extend(a.warnings);
                a.warnings = warnings;
                results.push((place, a, keep.then_some(m.traces)));
            }
            Err(e) => {
                any_error = true;
                results.push((
                    place,
                    Analysis::failed(&records[0].source, &e, warnings),
                    None,
                ));
            }
        }
    }
    // Input order: an averaged result (pushed last) goes where its first file was.
    results.sort_by_key(|(place, _, _)| *place);
    let analyses: Vec<Analysis> = results.iter().map(|(_, a, _)| a.clone()).collect();
    if args.json {
        print!("{}", spurline::to_json(&analyses));
    } else {
        for a in &analyses {
            print!("{}", spurline::render_text(a));
        }
    }
    for a in &analyses {
        if let Some(e) = &a.error {
            eprintln!("spurline: error: {}", e.message);
        }
    }
    if let Some(dir) = &args.out {
        let items: Vec<(String, String, &Analysis, Option<&Traces>)> = results
            .iter()
            .map(|(_, a, t)| {
                let path = args
                    .files
                    .iter()
                    .find(|p| p.display().to_string() == a.source)
                    .cloned()
                    .unwrap_or_else(|| PathBuf::from(&a.source));
                let (device, record) = names_of(&path);
                (device, record, a, t.as_ref())
            })
            .collect();
        let options = spurline::PlotOptions {
            log_frequency: args.log_frequency,
            ..Default::default()
        };
        let title = format!(
            "spurline analyze · {} record{}",
            items.len(),
            if items.len() == 1 { "" } else { "s" }
        );
        if let Err(e) =
            spurline::write_run_report(dir, &title, &items, args.analysis.harmonics, &options)
        {
            return super::fail(&e);
        }
        eprintln!(
            "spurline: wrote report {}",
            dir.join("index.html").display()
        );
        if let Some(store) = &args.store {
            let name = args
                .lot
                .clone()
                .unwrap_or_else(|| super::record::folder_name(dir));
            let mut info = spurline::RunInfo::now(&name);
            info.started_at = Some(started_at);
            info.title = title;
            let stored = match super::record::record(store, dir, info, None, args.json) {
                Ok(code) => code,
                Err(e) => return super::fail(&e),
            };
            if !any_error {
                return stored;
            }
        }
    }
    if any_error {
        EXIT_ERROR
    } else {
        EXIT_OK
    }
}
