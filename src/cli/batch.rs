//! `spurline batch`: run a bench plan over a lot, judge every result against a limit table, write the
//! per-device and lot summaries; with `--shard K/M`, only shard K of M of the lot's devices.

use super::{EXIT_ERROR, EXIT_FAIL, EXIT_OK};
use clap::Args;
use spurline::LimitTable;
use spurline::{
    run_lot, run_shard, shard_from_env, BatchOptions, BenchPlan, LotCounts, LotObserver, Plots,
    Shard,
};
use std::io::IsTerminal;
use std::path::{Path, PathBuf};

/// Arguments of `batch`.
#[derive(Debug, Args)]
#[command(
    after_help = "With --shard K/M the run takes device i of the lot (in lot order, from 0) when \
                  i mod M = K - 1, writes the lot files for those devices and a manifest shard.json; \
                  `spurline merge` combines the M shard folders into the report of an unsharded run.\n\n\
                  --shard auto reads the job-array task's index from SLURM_ARRAY_TASK_ID (with \
                  SLURM_ARRAY_TASK_MIN, _MAX, _STEP and _COUNT), PBS_ARRAY_INDEX, PBS_ARRAYID, \
                  LSB_JOBINDEX (with LSB_JOBINDEX_END, _STEP) or SGE_TASK_ID (with SGE_TASK_FIRST, \
                  _LAST, _STEPSIZE), the first one set. SPURLINE_SHARDS=M, when set, is the number of \
                  shards, and shard K runs as array index SPURLINE_SHARD_FIRST + K - 1 (default 1); \
                  a job script sets it so that a single task submitted again still knows M. Only \
                  Slurm is tested on a real scheduler."
)]
pub struct BatchArgs {
    /// The bench plan (TOML): converter, analysis settings, conditions, where the records are.
    pub plan: PathBuf,
    /// Limit table (CSV with the columns condition, metric, low, high, unit and optionally guardband
    /// and guard_sigmas, a guardband in standard uncertainties of each record's own measurement).
    #[arg(long)]
    pub limits: Option<PathBuf>,
    /// Output folder [default: reports/<plan file name without extension>].
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Worker threads, 1..=256 [default: the number of cores].
    #[arg(long)]
    pub jobs: Option<usize>,
    /// Memory one record may need (read and analysed), in bytes with an SI prefix (4G = 4e9 bytes)
    /// [default: half this machine's memory]. Each worker holds one record.
    #[arg(long, value_name = "BYTES", value_parser = super::memory_value)]
    pub max_memory: Option<u64>,
    /// Plots per device: none, failures (the failing results) or all.
    #[arg(long, default_value = "none", value_parser = ["none", "failures", "all"])]
    pub plots: String,
    /// Run only shard K of M of the lot (e.g. 2/8): the devices whose place in the lot, counted from
    /// 0, is K - 1 modulo M. Same plan, limits and --plots for every shard; merge them with `merge`.
    /// `auto`: K and M of the job-array task this runs as (Slurm; PBS, LSF, Grid Engine untested),
    /// with M from SPURLINE_SHARDS when set.
    #[arg(long, value_name = "K/M|auto")]
    pub shard: Option<String>,
    /// Record the finished lot into this results store: a SQLite file (created when missing) or a
    /// PostgreSQL URL. One transaction; a lot already stored is refused (exit status at least 1).
    #[arg(long, conflicts_with = "shard")]
    pub store: Option<String>,
    /// The lot's name in the store [default: the output folder's name].
    #[arg(long, requires = "store")]
    pub lot: Option<String>,
}

/// Runs `batch`.
pub fn run(args: BatchArgs) -> i32 {
    match go(&args) {
        Ok(code) => code,
        Err(e) => super::fail(&e),
    }
}

fn go(args: &BatchArgs) -> Result<i32, spurline::Error> {
    let plots: Plots = args.plots.parse()?;
    let started_at = spurline::utc_now();
    if let Some(s) = &args.store {
        // A bad store is an error before the lot runs, not after.
        let url: spurline::StoreUrl = s.parse()?;
        spurline::Store::open(&url)?;
    }
    let shard = args.shard.as_deref().map(shard_of).transpose()?;
    let mut plan = BenchPlan::read(&args.plan)?;
    plan.ingest.max_memory_bytes = args.max_memory.unwrap_or(0);
    let lot = plan.locate()?;
    let limits = match &args.limits {
        None => None,
        Some(path) => {
            let scope = plan.limit_scope();
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
        Some(j) => spurline::check_jobs(j)?,
        None => spurline::cores(),
    };
    let options = BatchOptions {
        out: out.clone(),
        jobs,
        plots,
    };
    // The bar is drawn only on a terminal; the library tells how far the lot has got.
    let bar = std::io::stderr().is_terminal().then(Bar::new);
    let observer: &dyn LotObserver = match &bar {
        Some(b) => b,
        None => &(),
    };
    let counts = match shard {
        None => run_lot(&plan, &lot, limits.as_ref(), &options, observer)?,
        Some(s) => {
            let counts = run_shard(&plan, &lot, limits.as_ref(), &options, s, observer)?;
            println!(
                "shard {s}: {} of the lot's {} devices",
                counts.devices,
                lot.devices.len()
            );
            counts
        }
    };
    let code = report(&counts, &out);
    let Some(store) = &args.store else {
        return Ok(code);
    };
    let name = args
        .lot
        .clone()
        .unwrap_or_else(|| super::record::folder_name(&out));
    let mut info = spurline::RunInfo::now(&name);
    info.started_at = Some(started_at);
    info.title = plan.title.clone().unwrap_or_else(|| name.clone());
    info.plan_fingerprint = Some(spurline::file_fingerprint(&args.plan)?);
    if let Some(l) = &args.limits {
        info.limits_fingerprint = Some(spurline::file_fingerprint(l)?);
    }
    let stored = super::record::record(store, &out, info, limits.as_ref(), false)?;
    Ok(code.max(stored))
}

/// A progress bar on stderr, drawn from what the lot run tells.
struct Bar(indicatif::ProgressBar);

impl Bar {
    fn new() -> Bar {
        let b =
            indicatif::ProgressBar::with_draw_target(None, indicatif::ProgressDrawTarget::stderr());
        if let Ok(style) = indicatif::ProgressStyle::with_template(
            "{elapsed_precise} [{bar:40}] {pos}/{len} results ({per_sec}, {eta} left)",
        ) {
            b.set_style(style.progress_chars("=> "));
        }
        Bar(b)
    }
}

impl LotObserver for Bar {
    fn started(&self, results: usize) {
        self.0.set_length(results as u64);
    }

    fn result_done(&self) {
        self.0.inc(1);
    }

    fn ended(&self) {
        self.0.finish_and_clear();
    }
}

/// The shard `--shard` names: `K/M`, or `auto` for the job-array task this process runs as.
fn shard_of(value: &str) -> Result<Shard, spurline::Error> {
    if value == "auto" {
        let task = shard_from_env(&|k: &str| std::env::var(k).ok())?;
        eprintln!("spurline: {task}");
        return Ok(task.shard);
    }
    value.parse::<Shard>().map_err(|mut e| {
        e.location = spurline::Location::Key("--shard".into());
        e
    })
}

/// Prints a lot's counts (error rows first, on stderr) and returns the exit status they mean.
pub(crate) fn report(counts: &LotCounts, out: &Path) -> i32 {
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
    if counts.errors > 0 {
        EXIT_ERROR
    } else if counts.failed + counts.failed_guardband > 0 {
        EXIT_FAIL
    } else {
        EXIT_OK
    }
}
