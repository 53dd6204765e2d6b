//! Runs a lot: every device × condition read, analysed and judged on a local thread pool, devices taken
//! in bounded chunks so that only a few chunks' results are in memory (traces are dropped as soon as a
//! result is judged unless plots ask for them), and one chunk written by a writer thread while the next
//! is analysed. Each finished device's folder is written at once; the lot files are rewritten after a
//! chunk when the last rewrite is at least [`REWRITE_EVERY`] (and ten times its own duration) ago, and
//! at the end, so an interrupted run keeps every device it finished in its folder, and all but about
//! the last second of them in the lot files.
//!
//! Results are collected in lot order (devices, then conditions in plan order) whatever the thread
//! count, so the outputs are byte-identical for any `jobs`.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use rayon::prelude::*;

use super::bench_plan::{BenchPlan, Condition, Lot};
use super::output::{self, LotWriter, Plots, SummaryColumns};
use super::result::{ConditionResult, DeviceResult, Lines, LotCounts};
use crate::analysis::{analyze_averaged, Analysis};
use crate::error::{Error, ErrorKind, Location, Result};
use crate::ingest::read_record;
use crate::lot::limits::{LimitTable, Verdict};

/// Fewest results per chunk; a chunk also holds at least 8 per thread so that threads stay busy.
pub const CHUNK_RESULTS: usize = 64;
/// Shortest time between two rewrites of the lot files (per-device files are written at once).
pub const REWRITE_EVERY: Duration = Duration::from_secs(1);
/// Fitted frequency further than this many bins from the plan's (folded) input raises a warning.
pub const FREQUENCY_WARN_BINS: f64 = 2.0;

/// How a batch runs.
#[derive(Debug, Clone, PartialEq)]
pub struct BatchOptions {
    /// Output folder.
    pub out: PathBuf,
    /// Worker threads (≥ 1).
    pub jobs: usize,
    /// Which plots to keep traces for.
    pub plots: Plots,
}

/// What a lot run tells its caller as it goes; the command line draws its progress bar from it.
/// Every method has an empty default, and `()` observes nothing: pass `&()` for a quiet run.
/// [`LotObserver::result_done`] is called from the worker threads, in no fixed order.
pub trait LotObserver: Sync {
    /// The run starts: `results` device × condition results are to be made.
    fn started(&self, _results: usize) {}
    /// One more result has been read, analysed and judged (its files may not be written yet).
    fn result_done(&self) {}
    /// The run has ended: every file is written, or an error stopped the run.
    fn ended(&self) {}
}

impl LotObserver for () {}

/// Analyses, judges and writes a lot (see the module docs), telling `observer` how far it has got.
/// Errors: `jobs` of 0, and outputs that cannot be written; a record that cannot be read or
/// analysed is an error row, not an error.
pub fn run_lot(
    plan: &BenchPlan,
    lot: &Lot,
    limits: Option<&LimitTable>,
    options: &BatchOptions,
    observer: &dyn LotObserver,
) -> Result<LotCounts> {
    crate::resources::check_jobs(options.jobs)?;
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(options.jobs)
        .build()
        .map_err(|e| Error::setting("jobs", "a thread pool", e.to_string()))?;
    let header = SummaryColumns::new(plan.max_harmonics()).header();
    let names: Vec<String> = plan.conditions.iter().map(|c| c.name.clone()).collect();
    let title = lot_title(plan);
    let writer = LotWriter::new(&options.out, &title, header, &names, limits)?;
    // A shard manifest left by an earlier run into this folder must not vouch for this run's files;
    // a shard run writes its own when it has finished.
    output::remove_shard_manifest(&options.out)?;
    // The outputs are opened before the work: an unwritable folder fails here, not after the lot.
    writer.write(0)?;

    observer.started(lot.results());
    let counts = run_chunks(plan, lot, limits, options, observer, &pool, writer);
    observer.ended();
    counts
}

/// The work of [`run_lot`] once its outputs are open: chunks analysed on the pool while a writer
/// thread writes the previous chunk.
fn run_chunks(
    plan: &BenchPlan,
    lot: &Lot,
    limits: Option<&LimitTable>,
    options: &BatchOptions,
    observer: &dyn LotObserver,
    pool: &rayon::ThreadPool,
    mut writer: LotWriter,
) -> Result<LotCounts> {
    let columns = &SummaryColumns::new(plan.max_harmonics());
    let header = columns.header();
    let per_chunk = CHUNK_RESULTS.max(8 * options.jobs);
    let n = plan.conditions.len();
    let take = per_chunk.div_ceil(n.max(1)).max(1);
    let total = lot.devices.len();
    // The writing of one chunk overlaps the analysis of the next: a writer thread takes finished
    // chunks through a channel of one slot, so at most three chunks are in memory at a time.
    std::thread::scope(|scope| {
        let (send, receive) = std::sync::mpsc::sync_channel::<(usize, Vec<DeviceResult>)>(1);
        let header = &header;
        let written = scope.spawn(move || -> Result<LotCounts> {
            let mut counts = LotCounts {
                devices: total,
                ..LotCounts::default()
            };
            let mut last_write = Instant::now();
            let mut rewrite_gap = REWRITE_EVERY;
            for (end, devices) in receive {
                for device in &devices {
                    output::write_device_outputs(&options.out, device, header, options.plots)?;
                    counts.add(device);
                    writer.add(device);
                }
                // The lot files grow with the lot: rewrite them when the last rewrite is long enough
                // ago that rewriting costs at most a tenth of the run, and at the end.
                if end == total || last_write.elapsed() >= rewrite_gap {
                    let t = Instant::now();
                    writer.write(end)?;
                    rewrite_gap = REWRITE_EVERY.max(t.elapsed() * 10);
                    last_write = Instant::now();
                }
            }
            Ok(counts)
        });
        let mut next = 0;
        while next < total {
            let end = (next + take).min(total);
            let cells: Vec<(usize, usize)> = (next..end)
                .flat_map(|d| (0..n).map(move |c| (d, c)))
                .collect();
            let results: Vec<ConditionResult> = pool.install(|| {
                cells
                    .par_iter()
                    .map(|&(d, c)| {
                        let r = run_one(
                            plan,
                            &plan.conditions[c],
                            &lot.devices[d],
                            lot.files(d, c),
                            limits,
                            columns,
                            options.plots,
                        );
                        observer.result_done();
                        r
                    })
                    .collect()
            });
            let mut results = results.into_iter();
            let devices: Vec<DeviceResult> = (next..end)
                .map(|d| DeviceResult {
                    device: lot.devices[d].clone(),
                    conditions: results.by_ref().take(n).collect(),
                })
                .collect();
            // A writer that stopped on an error has dropped its end: its error is returned below.
            if send.send((end, devices)).is_err() {
                break;
            }
            next = end;
        }
        drop(send);
        written.join().unwrap_or_else(|_| {
            Err(Error::new(
                ErrorKind::Output,
                options.out.display().to_string(),
                Location::Whole,
                "the output writer to finish",
                "it stopped unexpectedly",
            ))
        })
    })
}

/// The lot's title: the plan's, else its file name.
pub(crate) fn lot_title(plan: &BenchPlan) -> String {
    plan.title.clone().unwrap_or_else(|| {
        plan.path.file_name().map_or("bench plan".to_string(), |n| {
            n.to_string_lossy().to_string()
        })
    })
}

/// Reads, analyses and judges one device under one condition; every failure becomes an error row.
fn run_one(
    plan: &BenchPlan,
    cond: &Condition,
    device: &str,
    files: &[PathBuf],
    limits: Option<&LimitTable>,
    columns: &SummaryColumns,
    plots: Plots,
) -> ConditionResult {
    let source = files
        .first()
        .map(|f| f.display().to_string())
        .unwrap_or_default();
    let mut warnings = Vec::new();
    let measured = read_and_analyze(plan, cond, device, files, plots, &mut warnings);
    let (analysis, traces) = match measured {
        Ok(m) => {
            let mut a = m.analysis;
            warnings.append(&mut a.warnings);
            warnings.extend(plan_checks(cond, &a));
            a.warnings = warnings;
            (a, Some(m.traces))
        }
        Err(e) => (Analysis::failed(&source, &e, warnings), None),
    };
    let value = serde_json::to_value(&analysis).expect("plain data serialises");
    let flat: HashMap<String, String> = crate::report::csv::flatten(&value).into_iter().collect();
    let verdict = match (&analysis.error, limits) {
        (Some(e), _) => Verdict::error(&e.message),
        (None, None) => Verdict::untested("no limit table given"),
        (None, Some(t)) => t.judge(&cond.name, |m| {
            flat.get(m).and_then(|v| v.parse::<f64>().ok())
        }),
    };
    // The condition's plot stem in the device folder, as `write_device_outputs` names the files.
    let names: Vec<&str> = plan.conditions.iter().map(|c| c.name.as_str()).collect();
    let stems = super::files::plot_stems(&names);
    let at = plan.conditions.iter().position(|c| std::ptr::eq(c, cond));
    let stem = at.map_or(cond.name.as_str(), |i| stems[i].as_str());
    // The plots the device folder gets for this result (see `write_device_outputs`), for the row's links.
    let plotted = match &traces {
        Some(t) if plots.wants(verdict.outcome) => crate::report::plot_kinds(&analysis, t),
        _ => Vec::new(),
    };
    let lines = Lines {
        summary: columns.row(device, &cond.name, &verdict, &flat),
        failures: output::failure_lines(device, &cond.name, &verdict),
        index: output::index_row(device, &cond.name, stem, &verdict, &flat, &plotted),
    };
    ConditionResult {
        condition: cond.name.clone(),
        fin_hz: cond.fin_hz,
        amplitude_dbfs: cond.amplitude_dbfs,
        traces: traces.filter(|_| plots.wants(verdict.outcome)),
        analysis,
        verdict,
        lines,
    }
}

fn read_and_analyze(
    plan: &BenchPlan,
    cond: &Condition,
    device: &str,
    files: &[PathBuf],
    plots: Plots,
    warnings: &mut Vec<String>,
) -> Result<crate::analysis::Measured> {
    if files.is_empty() {
        return Err(Error::new(
            ErrorKind::Io,
            plan.path.display().to_string(),
            Location::Whole,
            format!(
                "a record of device '{device}' under condition '{}' in records.list",
                cond.name
            ),
            "none listed",
        ));
    }
    let ingest = plan.ingest_for(cond);
    let mut records = Vec::with_capacity(files.len());
    for f in files {
        let got = read_record(f, &ingest)?;
        if files.len() > 1 {
            warnings.extend(
                got.warnings
                    .into_iter()
                    .map(|w| format!("{}: {w}", short_name(f))),
            );
        } else {
            warnings.extend(got.warnings);
        }
        records.push(got.record);
    }
    // The residual is made only when a plot may draw it.
    let settings = crate::analysis::AnalysisSettings {
        keep_residual: cond.settings.keep_residual && plots != Plots::None,
        ..cond.settings
    };
    analyze_averaged(&records, &settings)
}

fn short_name(p: &Path) -> String {
    p.file_name().map_or_else(
        || p.display().to_string(),
        |n| n.to_string_lossy().to_string(),
    )
}

/// Warnings when the record does not look like the plan's condition: the fitted level off the planned
/// one by more than the tolerance, or the fitted frequency more than [`FREQUENCY_WARN_BINS`] bins from
/// the planned input folded into the first Nyquist zone.
fn plan_checks(cond: &Condition, a: &Analysis) -> Vec<String> {
    let mut out = Vec::new();
    let Some(fit) = &a.fit else { return out };
    let d = fit.amplitude_dbfs - cond.amplitude_dbfs;
    if d.abs() > cond.amplitude_tolerance_db {
        out.push(format!(
            "fitted level {:.2} dBFS is {d:+.2} dB from the plan's {} dBFS (tolerance {} dB)",
            fit.amplitude_dbfs, cond.amplitude_dbfs, cond.amplitude_tolerance_db
        ));
    }
    if a.samples > 0 && a.sample_rate_hz > 0.0 {
        let bin = a.sample_rate_hz / a.samples as f64;
        let expected = crate::freq::fold_to_first_zone(cond.fin_hz, a.sample_rate_hz);
        let off = (fit.frequency_hz - expected) / bin;
        if off.abs() > FREQUENCY_WARN_BINS {
            out.push(format!(
                "fitted frequency {} Hz is {off:+.1} bins from the plan's input {} Hz (folded: {} Hz)",
                fit.frequency_hz, cond.fin_hz, expected
            ));
        }
    }
    out
}
