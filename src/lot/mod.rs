//! Batch runs: a bench plan (converter, analysis settings, conditions, where the records are) gives a
//! lot of devices × conditions; each is read, analysed and judged against a limit table on a local
//! thread pool, and per-device and lot summaries are written as the lot goes. A lot can be split into
//! shards run on separate machines ([`run_shard`]) and the shards merged into the report an unsharded
//! run writes ([`merge_shards`]); a task of a scheduler's job array finds its shard with
//! [`shard_from_env`], and [`lot_progress`] says how far the shards have got.
//!
//! ```no_run
//! use spurline::lot::{run_lot, BatchOptions, BenchPlan, Plots};
//! use spurline::lot::limits::LimitTable;
//!
//! let plan = BenchPlan::read("bench/plan.toml".as_ref())?;
//! let lot = plan.locate()?;
//! let limits = LimitTable::read("bench/limits.csv".as_ref(), &plan.limit_scope())?;
//! let options = BatchOptions { out: "reports/lot7".into(), jobs: 2, plots: Plots::None };
//! let counts = run_lot(&plan, &lot, Some(&limits), &options, &())?;
//! println!("{} of {} results pass", counts.passed, counts.results);
//!
//! // The same lot over eight machines: each runs its shard, then one merges the eight folders.
//! use spurline::lot::{merge_shards, run_shard, Shard};
//! let shard: Shard = "2/8".parse()?;
//! let mine = BatchOptions { out: "reports/lot7-2".into(), ..options.clone() };
//! run_shard(&plan, &lot, Some(&limits), &mine, shard, &())?;
//! let folders: Vec<std::path::PathBuf> =
//!     (1..=8).map(|k| format!("reports/lot7-{k}").into()).collect();
//! let merged = merge_shards("reports/lot7".as_ref(), &folders)?;
//! assert_eq!(merged.results, counts.results);
//! # Ok::<(), spurline::Error>(())
//! ```

mod array_task;
mod bench_plan;
pub mod compare;
mod files;
pub mod limits;
mod merge;
mod output;
mod result;
mod run;
mod shard;
mod status;
pub mod sweep;

pub use array_task::{shard_from_env, ArrayTask, Scheduler, SHARDS_VAR, SHARD_FIRST_VAR};
pub use bench_plan::{
    natural_cmp, BenchPlan, Condition, ListedRecord, Lot, RecordSource,
    DEFAULT_AMPLITUDE_TOLERANCE_DB,
};
pub use files::{
    read_failures, read_yield, CsvRows, DroppedCell, FailureRow, LotSummary, SummaryRow, YieldRow,
    FAILURE_COLUMNS, LEAD_COLUMNS, SHARD_MANIFEST, SHARD_START_NOTE, YIELD_COLUMNS,
};
pub use limits::read_results;
pub use merge::merge_shards;
pub use output::{escape_html, write_atomic, write_device_outputs, Plots, SummaryColumns};
pub use result::{ConditionResult, DeviceResult, LotCounts, KEPT_ERRORS};
pub use run::{
    run_lot, BatchOptions, LotObserver, CHUNK_RESULTS, FREQUENCY_WARN_BINS, REWRITE_EVERY,
};
pub use shard::{lot_fingerprint, run_fingerprint, run_shard, Shard, ShardManifest, SHARD_FORMAT};
pub use status::{lot_progress, LotProgress, ShardProgress, ShardState};
