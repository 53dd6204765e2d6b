//! `batch --shard auto`: the shard K/M of a job-array task, from the environment its scheduler sets.
//!
//! # Where K and M come from
//! The task's array index comes from the first of these that is set (and, for LSF and Grid Engine,
//! says the job is an array task):
//!
//! | scheduler | index | the array's range |
//! |---|---|---|
//! | Slurm | `SLURM_ARRAY_TASK_ID` | `SLURM_ARRAY_TASK_MIN`, `_MAX`, `_COUNT`, `_STEP` |
//! | PBS Pro | `PBS_ARRAY_INDEX` | none |
//! | Torque | `PBS_ARRAYID` | none |
//! | LSF | `LSB_JOBINDEX` (0 outside an array) | `LSB_JOBINDEX_END`, `LSB_JOBINDEX_STEP`; the start is taken as 1 |
//! | Grid Engine | `SGE_TASK_ID` (`undefined` outside an array) | `SGE_TASK_FIRST`, `_LAST`, `_STEPSIZE` |
//!
//! When `SPURLINE_SHARDS` (ours) is set, it is M, and the task's index minus
//! `SPURLINE_SHARD_FIRST` (ours, default 1: the array index of shard 1) plus 1 is K. This is the
//! form a job script uses, because it still holds when a single task is submitted again: the
//! scheduler then describes an array of one task (Slurm's `SLURM_ARRAY_TASK_COUNT` is 1), which
//! says nothing of the lot's split. The scheduler's range, when it gives one, must then lie within
//! the shards' indices.
//!
//! Without `SPURLINE_SHARDS`, the scheduler's range is the split: K is the task's place in the
//! evenly spaced range (first, first + step, ..., last) counted from 1, M the number of tasks in it.
//! An array of a single task is refused there (it cannot tell a one-shard lot from one task of a
//! larger array submitted again), and so is a range that is not evenly spaced (a list such as
//! `1,3,4`). PBS gives no range at all, so it needs `SPURLINE_SHARDS`.
//!
//! Only the Slurm variables are tested against a real scheduler (`tests/cluster/slurm.sh`); the
//! others follow their schedulers' documentation and are tested here with explicit environments.

use std::fmt;

use super::shard::Shard;
use crate::error::{Error, Result};

/// Our variable: the number of shards M, which wins over the scheduler's count.
pub const SHARDS_VAR: &str = "SPURLINE_SHARDS";
/// Our variable: the array index of shard 1 when [`SHARDS_VAR`] is set (default 1).
pub const SHARD_FIRST_VAR: &str = "SPURLINE_SHARD_FIRST";

/// The job-array schedulers whose variables [`shard_from_env`] reads.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scheduler {
    /// Slurm (`sbatch --array`).
    Slurm,
    /// PBS Pro (`qsub -J`).
    PbsPro,
    /// Torque (`qsub -t`).
    Torque,
    /// IBM Spectrum LSF (`bsub -J "name[1-M]"`).
    Lsf,
    /// Grid Engine (`qsub -t`).
    GridEngine,
}

impl Scheduler {
    /// Its usual name.
    pub fn name(self) -> &'static str {
        match self {
            Scheduler::Slurm => "Slurm",
            Scheduler::PbsPro => "PBS Pro",
            Scheduler::Torque => "Torque",
            Scheduler::Lsf => "LSF",
            Scheduler::GridEngine => "Grid Engine",
        }
    }
}

/// The shard of a job-array task and the variables it was read from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ArrayTask {
    /// The shard K/M.
    pub shard: Shard,
    /// The scheduler whose index was read.
    pub scheduler: Scheduler,
    /// The variables read, as `NAME=value` (for the run's log).
    pub read: Vec<String>,
}

impl fmt::Display for ArrayTask {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "shard {} ({} array task: {})",
            self.shard,
            self.scheduler.name(),
            self.read.join(", ")
        )
    }
}

/// Every index variable looked for, in the order they are tried.
const INDEX_VARS: &str = "SLURM_ARRAY_TASK_ID (Slurm), PBS_ARRAY_INDEX (PBS Pro), PBS_ARRAYID \
                          (Torque), LSB_JOBINDEX (LSF) or SGE_TASK_ID (Grid Engine)";

/// A job array's range as its scheduler describes it; `None` where it says nothing.
#[derive(Debug, Default, Clone, Copy)]
struct Range {
    first: Option<u64>,
    last: Option<u64>,
    step: Option<u64>,
    count: Option<u64>,
}

/// Reads the environment through `var` (name → value, `None` when unset).
struct Env<'a> {
    var: &'a dyn Fn(&str) -> Option<String>,
    read: Vec<String>,
}

impl Env<'_> {
    /// The variable's value when it is set and not empty.
    fn text(&mut self, name: &str) -> Option<String> {
        let v = (self.var)(name).filter(|v| !v.is_empty())?;
        self.read.push(format!("{name}={v}"));
        Some(v)
    }

    /// The variable as a whole number; an error names it and its value.
    fn number(&mut self, name: &str) -> Result<Option<u64>> {
        match self.text(name) {
            None => Ok(None),
            Some(v) => whole(&v).map(Some).ok_or_else(|| {
                Error::setting(name, "a whole number (a job-array index)", quoted(&v))
            }),
        }
    }
}

fn whole(v: &str) -> Option<u64> {
    if !v.is_empty() && v.bytes().all(|b| b.is_ascii_digit()) {
        v.parse().ok()
    } else {
        None
    }
}

fn quoted(v: &str) -> String {
    format!("'{v}'")
}

/// Which scheduler's index is set, with the index and the range it describes. `None` when no job-array
/// index is set (LSF's 0 and Grid Engine's `undefined` mean the job is no array task).
fn scheduler_index(env: &mut Env) -> Result<Option<(Scheduler, &'static str, u64, Range)>> {
    if let Some(i) = env.number("SLURM_ARRAY_TASK_ID")? {
        let range = Range {
            first: env.number("SLURM_ARRAY_TASK_MIN")?,
            last: env.number("SLURM_ARRAY_TASK_MAX")?,
            step: env.number("SLURM_ARRAY_TASK_STEP")?,
            count: env.number("SLURM_ARRAY_TASK_COUNT")?,
        };
        return Ok(Some((Scheduler::Slurm, "SLURM_ARRAY_TASK_ID", i, range)));
    }
    if let Some(i) = env.number("PBS_ARRAY_INDEX")? {
        return Ok(Some((
            Scheduler::PbsPro,
            "PBS_ARRAY_INDEX",
            i,
            Range::default(),
        )));
    }
    if let Some(i) = env.number("PBS_ARRAYID")? {
        return Ok(Some((
            Scheduler::Torque,
            "PBS_ARRAYID",
            i,
            Range::default(),
        )));
    }
    if let Some(i) = env.number("LSB_JOBINDEX")? {
        if i > 0 {
            let range = Range {
                // LSF's indices start at 1 unless the array says otherwise, and no variable says.
                first: Some(1),
                last: env.number("LSB_JOBINDEX_END")?,
                step: env.number("LSB_JOBINDEX_STEP")?,
                count: None,
            };
            return Ok(Some((Scheduler::Lsf, "LSB_JOBINDEX", i, range)));
        }
    }
    if (env.var)("SGE_TASK_ID").as_deref() != Some("undefined") {
        if let Some(i) = env.number("SGE_TASK_ID")? {
            let range = Range {
                first: env.number("SGE_TASK_FIRST")?,
                last: env.number("SGE_TASK_LAST")?,
                step: env.number("SGE_TASK_STEPSIZE")?,
                count: None,
            };
            return Ok(Some((Scheduler::GridEngine, "SGE_TASK_ID", i, range)));
        }
    }
    Ok(None)
}

/// The shard of the job-array task whose environment `var` reads (see the module docs); pass
/// `|k| std::env::var(k).ok()` for the process's own.
///
/// Errors (kind `BadSetting`, the key naming the variable): no job-array index set (naming every
/// variable looked for); a value that is no whole number; without `SPURLINE_SHARDS`, a scheduler
/// that gives no range, an array of one task, or a range that is not evenly spaced; an index outside
/// the shards' indices or a range that does not fit them.
pub fn shard_from_env(var: &dyn Fn(&str) -> Option<String>) -> Result<ArrayTask> {
    let mut env = Env {
        var,
        read: Vec::new(),
    };
    let shards = env.number(SHARDS_VAR)?;
    let first_var = env.number(SHARD_FIRST_VAR)?;
    let Some((scheduler, index_var, index, range)) = scheduler_index(&mut env)? else {
        return Err(Error::setting(
            "--shard auto",
            format!("a job-array task: one of {INDEX_VARS} set in the environment"),
            "none of them set (outside a job array, give --shard K/M)",
        ));
    };
    let shard = match shards {
        Some(m) => with_our_count(m, first_var.unwrap_or(1), index_var, index, &range)?,
        None => {
            if first_var.is_some() {
                return Err(Error::setting(
                    SHARD_FIRST_VAR,
                    format!(
                        "{SHARD_FIRST_VAR} only together with {SHARDS_VAR} (the number of shards)"
                    ),
                    format!("{SHARD_FIRST_VAR} without {SHARDS_VAR}"),
                ));
            }
            from_range(scheduler, index_var, index, &range)?
        }
    };
    Ok(ArrayTask {
        shard,
        scheduler,
        read: env.read,
    })
}

/// K and M with `SPURLINE_SHARDS` = `m`: shard K runs as array index `first` + K − 1.
fn with_our_count(m: u64, first: u64, index_var: &str, index: u64, range: &Range) -> Result<Shard> {
    let last = first.saturating_add(m.saturating_sub(1));
    let indices = format!(
        "array indices {first}..{last} for {SHARDS_VAR}={m} shards ({SHARD_FIRST_VAR}={first} is shard 1)"
    );
    if m == 0 {
        return Err(Error::setting(
            SHARDS_VAR,
            "the number of shards, at least 1",
            "'0'",
        ));
    }
    if index < first || index > last {
        return Err(Error::setting(index_var, indices, format!("index {index}")));
    }
    // The scheduler's range, where it gives one, must fit too: an array 0-7 run with the default
    // first index 1 fails in every task, not only in task 0.
    if let (Some(lo), Some(hi)) = (range.first, range.last) {
        if lo < first || hi > last {
            return Err(Error::setting(
                index_var,
                indices,
                format!("an array running indices {lo}..{hi}"),
            ));
        }
    }
    to_shard(index - first + 1, m, index_var)
}

/// K and M from the scheduler's own description of the array.
fn from_range(scheduler: Scheduler, index_var: &str, index: u64, range: &Range) -> Result<Shard> {
    let ask = format!("set {SHARDS_VAR} to the number of shards");
    let (Some(first), Some(last)) = (range.first, range.last) else {
        let what = match scheduler {
            Scheduler::PbsPro | Scheduler::Torque => "gives the index but not the array's size",
            Scheduler::Lsf => "gives no LSB_JOBINDEX_END",
            _ => "gives no first and last index of the array",
        };
        return Err(Error::setting(
            SHARDS_VAR,
            format!("the number of shards: {} {what}; {ask}", scheduler.name()),
            format!("{index_var}={index} and no {SHARDS_VAR}"),
        ));
    };
    let step = range.step.unwrap_or(1).max(1);
    let bad_range = |found: String| {
        Error::setting(
            index_var,
            format!(
                "an evenly spaced {} array first..last:step holding the index, or {ask} \
                 (and {SHARD_FIRST_VAR})",
                scheduler.name()
            ),
            found,
        )
    };
    if last < first || (last - first) % step != 0 || index < first || index > last {
        return Err(bad_range(format!(
            "index {index} of an array {first}..{last} step {step}"
        )));
    }
    if !(index - first).is_multiple_of(step) {
        return Err(bad_range(format!(
            "index {index} off the steps of {first}..{last}:{step}"
        )));
    }
    let m = (last - first) / step + 1;
    if let Some(count) = range.count {
        if count != m {
            return Err(bad_range(format!(
                "{count} tasks in an array {first}..{last}:{step} (a list of indices, not a range)"
            )));
        }
    }
    if m == 1 {
        return Err(Error::setting(
            SHARDS_VAR,
            format!(
                "the number of shards: an array of one task cannot tell a lot in one shard from \
                 one task of a larger array submitted again; {ask} ({SHARDS_VAR}=1 for one shard)"
            ),
            format!("{index_var}={index} in an array of one task and no {SHARDS_VAR}"),
        ));
    }
    to_shard((index - first) / step + 1, m, index_var)
}

fn to_shard(k: u64, m: u64, index_var: &str) -> Result<Shard> {
    let (Ok(k), Ok(m)) = (usize::try_from(k), usize::try_from(m)) else {
        return Err(Error::setting(
            index_var,
            "a shard number that fits this machine",
            format!("{k}/{m}"),
        ));
    };
    Shard::new(k, m)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::error::{ErrorKind, Location};
    use std::collections::HashMap;

    /// The shard an explicit environment gives (never the process's own: tests run in parallel).
    fn from(vars: &[(&str, &str)]) -> Result<ArrayTask> {
        let map: HashMap<String, String> = vars
            .iter()
            .map(|(k, v)| (k.to_string(), v.to_string()))
            .collect();
        shard_from_env(&|k: &str| map.get(k).cloned())
    }

    fn shard(vars: &[(&str, &str)]) -> (usize, usize) {
        let t = from(vars).unwrap_or_else(|e| panic!("{vars:?}: {e}"));
        (t.shard.index, t.shard.count)
    }

    /// The error's key and message, for the checks below.
    fn refused(vars: &[(&str, &str)]) -> (String, String) {
        let e = from(vars).expect_err(&format!("{vars:?} accepted"));
        assert_eq!(e.kind, ErrorKind::BadSetting, "{vars:?}");
        let Location::Key(k) = &e.location else {
            panic!("{vars:?}: {:?}", e.location)
        };
        (k.clone(), e.to_string())
    }

    // The Slurm variables as `sbatch --array` sets them (Slurm's job array documentation and the
    // sbatch manual). Observed on Slurm 22.05.8 (Debian 12): --array=0-6:3 gives MIN 0, MAX 6,
    // STEP 3, COUNT 3; the list --array=1,2,4 gives MIN 1, MAX 4, STEP 1, COUNT 3; a single index
    // submitted again, --array=3, gives MIN = MAX = 3, COUNT 1 (tests/cluster/slurm.sh runs it).
    type Vars = Vec<(&'static str, &'static str)>;

    fn slurm(id: &'static str, min: &'static str, max: &'static str, count: &'static str) -> Vars {
        vec![
            ("SLURM_ARRAY_TASK_ID", id),
            ("SLURM_ARRAY_TASK_MIN", min),
            ("SLURM_ARRAY_TASK_MAX", max),
            ("SLURM_ARRAY_TASK_COUNT", count),
            ("SLURM_ARRAY_TASK_STEP", "1"),
        ]
    }

    fn with(mut base: Vars, more: &[(&'static str, &'static str)]) -> Vars {
        base.extend_from_slice(more);
        base
    }

    #[test]
    fn slurm_arrays_from_one_and_from_elsewhere() {
        // --array=1-4: index 3 is shard 3/4.
        assert_eq!(shard(&with(slurm("3", "1", "4", "4"), &[])), (3, 4));
        // --array=0-7: index 0 is shard 1/8, index 7 shard 8/8.
        assert_eq!(shard(&with(slurm("0", "0", "7", "8"), &[])), (1, 8));
        assert_eq!(shard(&with(slurm("7", "0", "7", "8"), &[])), (8, 8));
        // --array=10-40:10: index 30 is the third of four.
        let mut stepped = slurm("30", "10", "40", "4");
        stepped[4].1 = "10";
        assert_eq!(shard(&with(stepped, &[])), (3, 4));
        let t = from(&with(slurm("2", "1", "4", "4"), &[])).unwrap();
        assert_eq!(t.scheduler, Scheduler::Slurm);
        assert!(t.to_string().contains("SLURM_ARRAY_TASK_ID=2"), "{t}");
    }

    #[test]
    fn a_resubmitted_slurm_task_needs_and_uses_our_count() {
        // `sbatch --array=3` after a 4-task array: Slurm says MIN = MAX = 3, COUNT = 1.
        let again = slurm("3", "3", "3", "1");
        let (key, msg) = refused(&with(again.clone(), &[]));
        assert_eq!(key, SHARDS_VAR);
        assert!(msg.contains("array of one task"), "{msg}");
        assert_eq!(shard(&with(again.clone(), &[(SHARDS_VAR, "4")])), (3, 4));
        // Ours wins over the scheduler's count in a whole array too.
        assert_eq!(
            shard(&with(slurm("2", "1", "4", "4"), &[(SHARDS_VAR, "4")])),
            (2, 4)
        );
        // Two tasks submitted again (--array=2,4): the range 2..4 lies within the shards.
        assert_eq!(
            shard(&with(slurm("4", "2", "4", "2"), &[(SHARDS_VAR, "4")])),
            (4, 4)
        );
        // An array counted from 0 says so with SPURLINE_SHARD_FIRST.
        let zero = with(
            slurm("0", "0", "7", "8"),
            &[(SHARDS_VAR, "8"), (SHARD_FIRST_VAR, "0")],
        );
        assert_eq!(shard(&zero), (1, 8));
        let resubmitted = with(
            slurm("5", "5", "5", "1"),
            &[(SHARDS_VAR, "8"), (SHARD_FIRST_VAR, "0")],
        );
        assert_eq!(shard(&resubmitted), (6, 8));
    }

    #[test]
    fn inconsistent_slurm_values_are_refused() {
        // An array 0-7 with SPURLINE_SHARDS=8 and the default first index 1: every task fails, the
        // in-range index 3 too, because the array does not fit indices 1..8.
        let (key, msg) = refused(&with(slurm("3", "0", "7", "8"), &[(SHARDS_VAR, "8")]));
        assert_eq!(key, "SLURM_ARRAY_TASK_ID");
        assert!(msg.contains("1..8") && msg.contains("0..7"), "{msg}");
        // An index beyond the shards.
        let (key, msg) = refused(&with(slurm("5", "5", "5", "1"), &[(SHARDS_VAR, "4")]));
        assert_eq!(key, "SLURM_ARRAY_TASK_ID");
        assert!(msg.contains("index 5"), "{msg}");
        // A list of indices (--array=1,2,4: MIN 1, MAX 4, STEP 1, COUNT 3) is no evenly spaced range.
        let (key, msg) = refused(&with(slurm("4", "1", "4", "3"), &[]));
        assert_eq!(key, "SLURM_ARRAY_TASK_ID");
        assert!(msg.contains(SHARDS_VAR), "{msg}");
        // Values that are no whole numbers name the variable and the value.
        let (key, msg) = refused(&with(slurm("x3", "1", "4", "4"), &[]));
        assert_eq!(key, "SLURM_ARRAY_TASK_ID");
        assert!(msg.contains("'x3'"), "{msg}");
        let (key, _) = refused(&with(slurm("3", "1", "4", "4"), &[(SHARDS_VAR, "-4")]));
        assert_eq!(key, SHARDS_VAR);
        let (key, _) = refused(&with(slurm("1", "1", "1", "1"), &[(SHARDS_VAR, "0")]));
        assert_eq!(key, SHARDS_VAR);
        // Our first index alone means nothing.
        let (key, _) = refused(&with(slurm("3", "1", "4", "4"), &[(SHARD_FIRST_VAR, "1")]));
        assert_eq!(key, SHARD_FIRST_VAR);
    }

    #[test]
    fn no_array_variable_names_every_one_looked_for() {
        // Outside any array, and with LSF's 0 and Grid Engine's "undefined" (their non-array jobs).
        for vars in [
            vec![],
            vec![("LSB_JOBINDEX", "0"), ("SGE_TASK_ID", "undefined")],
            vec![(SHARDS_VAR, "4")],
        ] {
            let (key, msg) = refused(&vars);
            assert_eq!(key, "--shard auto");
            for v in [
                "SLURM_ARRAY_TASK_ID",
                "PBS_ARRAY_INDEX",
                "PBS_ARRAYID",
                "LSB_JOBINDEX",
                "SGE_TASK_ID",
            ] {
                assert!(msg.contains(v), "{msg}");
            }
        }
    }

    #[test]
    fn pbs_needs_our_count() {
        // PBS Pro (qsub -J 1-8) and Torque (qsub -t 1-8) give the index only (from their manuals,
        // from memory).
        let (key, msg) = refused(&[("PBS_ARRAY_INDEX", "2")]);
        assert_eq!(key, SHARDS_VAR);
        assert!(msg.contains("PBS Pro"), "{msg}");
        assert_eq!(
            shard(&[("PBS_ARRAY_INDEX", "2"), (SHARDS_VAR, "8")]),
            (2, 8)
        );
        let t = from(&[
            ("PBS_ARRAYID", "0"),
            (SHARDS_VAR, "8"),
            (SHARD_FIRST_VAR, "0"),
        ])
        .unwrap();
        assert_eq!((t.shard.index, t.scheduler), (1, Scheduler::Torque));
    }

    #[test]
    fn lsf_counts_from_one_to_the_end() {
        // bsub -J "lot[1-8]": LSB_JOBINDEX 1..8, LSB_JOBINDEX_END 8 (LSF's job-execution variables).
        assert_eq!(
            shard(&[("LSB_JOBINDEX", "5"), ("LSB_JOBINDEX_END", "8")]),
            (5, 8)
        );
        // "lot[1-15:2]": eight tasks 1, 3, ..., 15.
        let stepped = [
            ("LSB_JOBINDEX", "7"),
            ("LSB_JOBINDEX_END", "15"),
            ("LSB_JOBINDEX_STEP", "2"),
        ];
        assert_eq!(shard(&stepped), (4, 8));
        let (key, _) = refused(&[("LSB_JOBINDEX", "5")]);
        assert_eq!(key, SHARDS_VAR);
        assert_eq!(shard(&[("LSB_JOBINDEX", "5"), (SHARDS_VAR, "6")]), (5, 6));
    }

    #[test]
    fn grid_engine_ranges_with_steps() {
        // qsub -t 2-10:2: tasks 2, 4, 6, 8, 10 (Grid Engine's qsub manual, from memory).
        let ge = |id: &'static str| {
            [
                ("SGE_TASK_ID", id),
                ("SGE_TASK_FIRST", "2"),
                ("SGE_TASK_LAST", "10"),
                ("SGE_TASK_STEPSIZE", "2"),
            ]
        };
        assert_eq!(shard(&ge("2")), (1, 5));
        assert_eq!(shard(&ge("10")), (5, 5));
        let (key, msg) = refused(&ge("5"));
        assert_eq!(key, "SGE_TASK_ID");
        assert!(msg.contains("off the steps"), "{msg}");
        // A single task submitted again (qsub -t 6) needs our count, as with Slurm.
        let single = [
            ("SGE_TASK_ID", "6"),
            ("SGE_TASK_FIRST", "6"),
            ("SGE_TASK_LAST", "6"),
            ("SGE_TASK_STEPSIZE", "1"),
        ];
        assert_eq!(refused(&single).0, SHARDS_VAR);
    }

    #[test]
    fn slurm_comes_first_when_several_are_set() {
        let mut vars = with(slurm("2", "1", "4", "4"), &[]);
        vars.push(("PBS_ARRAYID", "3"));
        let t = from(&vars).unwrap();
        assert_eq!((t.shard.index, t.scheduler), (2, Scheduler::Slurm));
    }
}
