//! Batch runs: a bench plan (converter, analysis settings, conditions, where the records are) gives a
//! lot of devices × conditions; each is read, analysed and judged against a limit table on a local
//! thread pool, and per-device and lot summaries are written as the lot goes. A lot can be split into
//! shards run on separate machines ([`run_shard`]) and the shards merged into the report an unsharded
//! run writes ([`merge_shards`]); a task of a scheduler's job array finds its shard with
//! [`shard_from_env`], and [`lot_progress`] says how far the shards have got.
//!
//! The crate docs show a lot run, sharded and merged, as a user writes it.

mod array_task;
mod bench_plan;
pub mod compare;
mod files;
pub mod limits;
mod merge;
mod output;
mod page;
mod result;
mod run;
mod shard;
mod status;
pub mod store;
pub mod sweep;

pub use array_task::{shard_from_env, ArrayTask, Scheduler};
pub use bench_plan::{BenchPlan, Condition, ListedRecord, Lot, RecordSource};
pub use files::{
    read_failures, read_yield, CsvRows, DroppedCell, FailureRow, LotSummary, SummaryRow, YieldRow,
    FAILURE_COLUMNS, LEAD_COLUMNS, YIELD_COLUMNS,
};
pub use merge::merge_shards;
pub use output::Plots;
pub use result::{ConditionResult, DeviceResult, LotCounts, KEPT_ERRORS};
pub use run::{run_lot, BatchOptions, LotObserver};
pub use shard::{lot_fingerprint, run_fingerprint, run_shard, Shard, ShardManifest, SHARD_FORMAT};
pub use status::{lot_progress, LotProgress, ShardProgress, ShardState};
