//! `spurline batch`: run a bench plan over a lot, judge every result against a limit table, write the
//! per-device and lot summaries.

use super::{EXIT_ERROR, EXIT_FAIL, EXIT_OK};
use clap::Args;
use spurline::batch::{run_lot, BatchOptions, BenchPlan, Plots};
use spurline::limits::{Catalogue, LimitTable};
use std::io::IsTerminal;
use std::path::PathBuf;

/// Arguments of `batch`.
#[derive(Debug, Args)]
#[command(
    after_help = "Exit status: 0 every result analysed and every limit passed (or no limit table), \
                  1 some limit failed (guardband failures included), 2 an error: a bad plan or limit \
                  table, an output that cannot be written, or a record that could not be read or \
                  analysed (the lot still runs to the end and that result is an error row)."
)]
pub struct BatchArgs {
    /// The bench plan (TOML): converter, analysis settings, conditions, where the records are.
    pub plan: PathBuf,
    /// Limit table (CSV with the columns condition, metric, low, high, unit and optionally guardband).
    #[arg(long)]
    pub limits: Option<PathBuf>,
    /// Output folder [default: reports/<plan file name without extension>].
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Worker threads [default: the number of cores].
    #[arg(long)]
    pub jobs: Option<usize>,
    /// Plots per device: none, failures (the failing results) or all.
    #[arg(long, default_value = "none", value_parser = ["none", "failures", "all"])]
    pub plots: String,
}

/// Runs `batch`.
pub fn run(args: BatchArgs) -> i32 {
    match go(&args) {
        Ok(code) => code,
        Err(e) => super::fail(&e),
    }
}

fn go(args: &BatchArgs) -> Result<i32, spurline::Error> {
    let plots = Plots::parse(&args.plots)?;
    let plan = BenchPlan::read(&args.plan)?;
    let lot = plan.locate()?;
    let limits = match &args.limits {
        None => None,
        Some(path) => {
            let scope: Vec<(String, Catalogue)> = plan
                .conditions
                .iter()
                .map(|c| {
                    (
                        c.name.clone(),
                        Catalogue::for_harmonics(c.settings.spectrum.harmonics),
                    )
                })
                .collect();
            Some(LimitTable::read(path, &scope)?)
        }
    };
    let out = args.out.clone().unwrap_or_else(|| {
        let stem = args
            .plan
            .file_stem()
            .map_or("batch".to_string(), |s| s.to_string_lossy().to_string());
        PathBuf::from("reports").join(stem)
    });
    let jobs = match args.jobs {
        Some(j) => j,
        None => std::thread::available_parallelism().map_or(1, |n| n.get()),
    };
    let options = BatchOptions {
        out: out.clone(),
        jobs,
        plots,
        progress: std::io::stderr().is_terminal(),
    };
    let counts = run_lot(&plan, &lot, limits.as_ref(), &options)?;
    for m in &counts.error_messages {
        eprintln!("spurline: error: {m}");
    }
    if counts.errors > counts.error_messages.len() {
        eprintln!(
            "spurline: error: {} more error rows, see {}",
            counts.errors - counts.error_messages.len(),
            out.join("summary.csv").display()
        );
    }
    println!(
        "{} devices, {} results: {} pass, {} fail, {} fail only inside a guardband, {} untested, {} errors; summaries in {}",
        counts.devices,
        counts.results,
        counts.passed,
        counts.failed,
        counts.failed_guardband,
        counts.untested,
        counts.errors,
        out.display()
    );
    Ok(if counts.errors > 0 {
        EXIT_ERROR
    } else if counts.failed + counts.failed_guardband > 0 {
        EXIT_FAIL
    } else {
        EXIT_OK
    })
}
