//! `spurline query`: the questions users ask of a results store, answered as CSV (stdout, or a
//! file with --out): the lots, the last N lots of a metric, one device's history, lots whose yield
//! fell below a threshold, lots that failed a limit.

use super::EXIT_OK;
use clap::{Args, Subcommand};
use spurline::{figures, Store, StoreUrl};
use std::path::PathBuf;

/// Arguments of `query`.
#[derive(Debug, Args)]
pub struct QueryArgs {
    /// The store: a SQLite file or a PostgreSQL URL.
    pub store: String,
    /// What to ask.
    #[command(subcommand)]
    pub question: Question,
    /// Write the CSV to this file instead of stdout.
    #[arg(long, global = true)]
    pub out: Option<PathBuf>,
}

/// The questions.
#[derive(Debug, Subcommand)]
pub enum Question {
    /// Every lot, oldest first: its run facts, counts and yield.
    Lots,
    /// The last N lots of a metric: per lot and condition, n, mean, σ, min, max.
    Last {
        /// The metric (a figure key, or its unique tail: snr_db, h3.dbc).
        metric: String,
        /// Only this condition.
        #[arg(long)]
        condition: Option<String>,
        /// How many lots.
        #[arg(short = 'n', long, default_value_t = 10)]
        n: usize,
    },
    /// One device's figures across lots and conditions.
    Device {
        /// The device.
        device: String,
        /// Only this metric.
        #[arg(long)]
        metric: Option<String>,
    },
    /// Lots whose yield (passed over tested, error rows counted as tested) is below a threshold.
    Yield {
        /// The threshold, a fraction (0.95).
        #[arg(long)]
        below: f64,
    },
    /// Lots in which some result failed a limit (guardband failures included).
    Failed,
}

/// Runs `query`.
pub fn run(args: QueryArgs) -> i32 {
    match go(&args) {
        Ok(code) => code,
        Err(e) => super::fail(&e),
    }
}

fn metric_key(name: &str) -> Result<String, spurline::Error> {
    figures::find(name).map(|c| c.key()).map_err(|found| {
        spurline::Error::setting(
            "metric",
            "a figure key or a unique tail of one (snr_db, h3.dbc)",
            if found.is_empty() {
                format!("'{name}', which names no figure")
            } else {
                format!("'{name}', which names several figures")
            },
        )
    })
}

fn go(args: &QueryArgs) -> Result<i32, spurline::Error> {
    let url: StoreUrl = args.store.parse()?;
    let mut store = Store::open(&url)?;
    let mut w = csv::WriterBuilder::new()
        .has_headers(true)
        .from_writer(Vec::new());
    let e = |e: csv::Error| spurline::Error::setting("--out", "CSV rows", e.to_string());
    match &args.question {
        Question::Lots | Question::Failed | Question::Yield { .. } => {
            let runs = match &args.question {
                Question::Failed => store.failed_lots()?,
                Question::Yield { below } => store.lots_below_yield(*below)?,
                _ => store.runs()?,
            };
            for r in &runs {
                w.serialize(guard_run(r)).map_err(e)?;
            }
            if runs.is_empty() {
                header_only(&mut w, &["id", "lot"])?;
            }
        }
        Question::Last {
            metric,
            condition,
            n,
        } => {
            let rows = store.last_lots(&metric_key(metric)?, condition.as_deref(), *n)?;
            for r in &rows {
                let mut r = r.clone();
                r.lot = guard(&r.lot);
                r.condition = guard(&r.condition);
                w.serialize(r).map_err(e)?;
            }
            if rows.is_empty() {
                header_only(&mut w, &["run_id", "lot"])?;
            }
        }
        Question::Device { device, metric } => {
            let key = metric.as_deref().map(metric_key).transpose()?;
            let rows = store.device_history(device, key.as_deref())?;
            for r in &rows {
                let mut r = r.clone();
                r.lot = guard(&r.lot);
                r.condition = guard(&r.condition);
                r.device = guard(&r.device);
                w.serialize(r).map_err(e)?;
            }
            if rows.is_empty() {
                header_only(&mut w, &["device", "lot"])?;
            }
        }
    }
    let bytes = w
        .into_inner()
        .map_err(|x| spurline::Error::setting("--out", "CSV rows", x.to_string()))?;
    match &args.out {
        Some(path) => spurline::write_atomic(path, &bytes)?,
        None => {
            use std::io::Write;
            let _ = std::io::stdout().write_all(&bytes);
        }
    }
    Ok(EXIT_OK)
}

fn header_only(w: &mut csv::Writer<Vec<u8>>, cols: &[&str]) -> Result<(), spurline::Error> {
    w.write_record(cols)
        .map_err(|x| spurline::Error::setting("--out", "CSV rows", x.to_string()))
}

/// A text cell that a spreadsheet would read as a formula is written with a leading apostrophe
/// (the design's rule: text cells never start a formula).
fn guard(text: &str) -> String {
    if text.starts_with(['=', '+', '-', '@', '\t', '\r']) {
        format!("'{text}")
    } else {
        text.to_string()
    }
}

fn guard_run(r: &spurline::RunRow) -> spurline::RunRow {
    let mut r = r.clone();
    r.lot = guard(&r.lot);
    r.title = guard(&r.title);
    r.host = guard(&r.host);
    r
}
