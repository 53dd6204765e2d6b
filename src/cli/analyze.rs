//! `spurline analyze`: read records, analyse each (or average them), print a table or JSON.

use super::{AnalysisArgs, ReadArgs, EXIT_ERROR, EXIT_OK};
use clap::Args;
use spurline::analysis::{analyze, analyze_averaged, Analysis};
use spurline::ingest::read_record;
use std::path::PathBuf;

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
}

/// Runs `analyze`.
pub fn run(args: AnalyzeArgs) -> i32 {
    let ingest = match args.read.settings() {
        Ok(s) => s,
        Err(e) => return super::fail(&e),
    };
    let settings = match args.analysis.settings() {
        Ok(s) => s,
        Err(e) => return super::fail(&e),
    };
    let mut results: Vec<Analysis> = Vec::new();
    let mut any_error = false;
    let mut loaded = Vec::new();
    for path in &args.files {
        match read_record(path, &ingest) {
            Ok(ing) => loaded.push(ing),
            Err(e) => {
                any_error = true;
                results.push(Analysis::failed(
                    &path.display().to_string(),
                    &e,
                    Vec::new(),
                ));
            }
        }
    }
    if args.average && !loaded.is_empty() {
        let records: Vec<_> = loaded.iter().map(|i| i.record.clone()).collect();
        let mut warnings: Vec<String> = loaded.iter().flat_map(|i| i.warnings.clone()).collect();
        match analyze_averaged(&records, &settings) {
            Ok(m) => {
                let mut a = m.analysis;
                warnings.extend(a.warnings);
                a.warnings = warnings;
                results.push(a);
            }
            Err(e) => {
                any_error = true;
                results.push(Analysis::failed(&records[0].source, &e, warnings));
            }
        }
    } else {
        for ing in loaded {
            match analyze(&ing.record, &settings) {
                Ok(m) => {
                    let mut a = m.analysis;
                    let mut w = ing.warnings;
                    w.extend(a.warnings);
                    a.warnings = w;
                    results.push(a);
                }
                Err(e) => {
                    any_error = true;
                    results.push(Analysis::failed(&ing.record.source, &e, ing.warnings));
                }
            }
        }
    }
    // Keep input order: failed reads were pushed first, so restore the files' order.
    let order = |a: &Analysis| {
        args.files
            .iter()
            .position(|p| p.display().to_string() == a.source)
            .unwrap_or(usize::MAX)
    };
    results.sort_by_key(order);
    if args.json {
        print!("{}", spurline::report::json::to_json(&results));
    } else {
        for a in &results {
            print!("{}", spurline::report::text::render(a));
        }
    }
    for a in &results {
        if let Some(e) = &a.error {
            eprintln!("spurline: error: {}", e.message);
        }
    }
    if any_error {
        EXIT_ERROR
    } else {
        EXIT_OK
    }
}
