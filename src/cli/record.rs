//! `spurline record`: import a finished lot folder into a results store; also the step `batch
//! --store` takes after its run.

use super::EXIT_OK;
use clap::Args;
use spurline::{file_fingerprint, LimitTable, LotRecord, RunInfo, Store, StoreUrl};
use std::path::{Path, PathBuf};

/// Arguments of `record`.
#[derive(Debug, Args)]
pub struct RecordArgs {
    /// The lot folder written by `batch` (or `merge`).
    pub lot_dir: PathBuf,
    /// The store: a SQLite file (created when missing), or a PostgreSQL URL
    /// (postgresql://user@host/db, or with ?host=/socket/dir).
    #[arg(long)]
    pub store: String,
    /// The lot's name [default: the folder's name].
    #[arg(long)]
    pub lot: Option<String>,
    /// The bench plan the lot ran (its title and fingerprint are stored).
    #[arg(long)]
    pub plan: Option<PathBuf>,
    /// The limit table the lot was judged with (stored for Cpk in `trend`; needs --plan).
    #[arg(long, requires = "plan")]
    pub limits: Option<PathBuf>,
}

/// Runs `record`.
pub fn run(args: RecordArgs) -> i32 {
    let go = || -> Result<i32, spurline::Error> {
        let name = args
            .lot
            .clone()
            .unwrap_or_else(|| folder_name(&args.lot_dir));
        let mut info = RunInfo::now(&name);
        // The lot ended when its summary was written.
        if let Ok(t) =
            std::fs::metadata(args.lot_dir.join("summary.csv")).and_then(|m| m.modified())
        {
            if let Ok(d) = t.duration_since(std::time::UNIX_EPOCH) {
                info.ended_at = spurline::rfc3339(d.as_secs());
            }
        }
        let mut limits = None;
        if let Some(plan_path) = &args.plan {
            let plan = spurline::BenchPlan::read(plan_path)?;
            info.title = plan.title.clone().unwrap_or_else(|| name.clone());
            info.plan_fingerprint = Some(file_fingerprint(plan_path)?);
            if let Some(l) = &args.limits {
                limits = Some(LimitTable::read(l, &plan.limit_scope())?);
                info.limits_fingerprint = Some(file_fingerprint(l)?);
            }
        }
        record(&args.store, &args.lot_dir, info, limits.as_ref(), false)
    };
    match go() {
        Ok(code) => code,
        Err(e) => super::fail(&e),
    }
}

/// The last part of a folder's path (`lot` when it has none).
pub(crate) fn folder_name(dir: &Path) -> String {
    let dir = std::fs::canonicalize(dir).unwrap_or_else(|_| dir.to_path_buf());
    dir.file_name()
        .map_or("lot".to_string(), |n| n.to_string_lossy().to_string())
}

/// Records a finished lot folder into the store and says so (on stderr when `stdout_taken`: stdout
/// holds a document such as `analyze --json`'s); a lot already stored is exit status 1 (reported,
/// nothing written).
pub(crate) fn record(
    store: &str,
    dir: &Path,
    info: RunInfo,
    limits: Option<&LimitTable>,
    stdout_taken: bool,
) -> Result<i32, spurline::Error> {
    let url: StoreUrl = store.parse()?;
    let lot = LotRecord::from_folder(dir, info, limits)?;
    let mut store = Store::open(&url)?;
    let start = std::time::Instant::now();
    match store.record(&lot) {
        Ok(r) => {
            let said = format!(
                "recorded lot '{}' into {url}: run {}, {} results, {} figures, fingerprint {} ({:.2} s)",
                lot.info().lot,
                r.run_id,
                r.results,
                r.figures,
                r.fingerprint,
                start.elapsed().as_secs_f64()
            );
            if stdout_taken {
                eprintln!("spurline: {said}");
            } else {
                println!("{said}");
            }
            Ok(EXIT_OK)
        }
        Err(e) if e.kind == spurline::ErrorKind::AlreadyRecorded => {
            eprintln!("spurline: {e}");
            Ok(super::EXIT_FAIL)
        }
        Err(e) => Err(e),
    }
}
