//! How far a lot split into shards has got (`merge --status`), read from the shard folders without
//! waiting for anything: a finished shard from its manifest `shard.json`, a started one from its
//! start note `shard-start.json` and the rows its lot summary holds so far, a shard with neither as
//! not started. Also the command that runs a shard again, which `merge` names for a missing shard.

use std::fmt;
use std::path::{Path, PathBuf};

use super::bench_plan::natural_cmp;
use super::files::{LotSummary, SHARD_MANIFEST, SHARD_START_NOTE, SUMMARY_CSV};
use super::shard::{Shard, ShardManifest};
use crate::error::{Error, ErrorKind, Location, Result};

/// Where one shard has got.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ShardState {
    /// `shard.json` is there: the shard finished.
    Finished,
    /// A start note and no `shard.json`: running, or stopped before the end. `done` devices are in
    /// its lot summary so far.
    Started {
        /// Devices in its `summary.csv`.
        done: usize,
    },
    /// No folder of the shard among those read.
    NotStarted,
}

/// One shard of a lot in progress.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ShardProgress {
    /// The shard.
    pub shard: Shard,
    /// Its devices (from the split, whether or not it started).
    pub devices: usize,
    /// Where it has got.
    pub state: ShardState,
    /// Its folder, when one was found.
    pub folder: Option<PathBuf>,
}

impl ShardProgress {
    /// Devices done: all of a finished shard's, a started one's so far.
    pub fn done(&self) -> usize {
        match self.state {
            ShardState::Finished => self.devices,
            ShardState::Started { done } => done.min(self.devices),
            ShardState::NotStarted => 0,
        }
    }
}

/// A lot in progress across its shards (see [`lot_progress`]).
#[derive(Debug, Clone, PartialEq)]
pub struct LotProgress {
    /// The lot's title.
    pub title: String,
    /// The plan file, as given to the shards' runs.
    pub plan: String,
    /// Devices in the whole lot.
    pub lot_devices: usize,
    /// Conditions per device.
    pub conditions: usize,
    /// Every shard 1..=M, in order.
    pub shards: Vec<ShardProgress>,
    /// Folders read that hold no shard (neither `shard.json` nor a start note, nor such subfolders).
    pub not_shards: Vec<PathBuf>,
}

impl LotProgress {
    /// Shards finished.
    pub fn finished(&self) -> usize {
        self.shards
            .iter()
            .filter(|s| s.state == ShardState::Finished)
            .count()
    }

    /// Devices done across the shards.
    pub fn devices_done(&self) -> usize {
        self.shards.iter().map(ShardProgress::done).sum()
    }

    /// The numbers K of the shards not finished, in order.
    pub fn unfinished(&self) -> Vec<usize> {
        self.shards
            .iter()
            .filter(|s| s.state != ShardState::Finished)
            .map(|s| s.shard.index)
            .collect()
    }
}

impl fmt::Display for LotProgress {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let m = self.shards.len();
        writeln!(
            f,
            "lot '{}' (plan {}): {} devices × {} conditions in {m} shards",
            self.title, self.plan, self.lot_devices, self.conditions
        )?;
        for s in &self.shards {
            let folder = s
                .folder
                .as_ref()
                .map_or(String::new(), |d| format!(" ({})", d.display()));
            match s.state {
                ShardState::Finished => writeln!(
                    f,
                    "shard {}: finished, {} devices{folder}",
                    s.shard, s.devices
                )?,
                ShardState::Started { .. } => writeln!(
                    f,
                    "shard {}: started, {} of {} devices so far, no {SHARD_MANIFEST} yet (running, \
                     or stopped){folder}",
                    s.shard,
                    s.done(),
                    s.devices
                )?,
                ShardState::NotStarted => writeln!(
                    f,
                    "shard {}: not started, {} devices (no folder of it among those read)",
                    s.shard, s.devices
                )?,
            }
        }
        for d in &self.not_shards {
            writeln!(f, "no shard in {}", d.display())?;
        }
        writeln!(
            f,
            "{} of {m} shards finished, {} of {} devices done",
            self.finished(),
            self.devices_done(),
            self.lot_devices
        )?;
        let rest = self.unfinished();
        if !rest.is_empty() {
            let list: Vec<String> = rest.iter().map(|k| k.to_string()).collect();
            writeln!(f, "unfinished shards: {}", list.join(","))?;
        }
        Ok(())
    }
}

/// Whether a folder is a shard's: it holds a manifest or a start note.
fn is_shard_folder(dir: &Path) -> bool {
    dir.join(SHARD_MANIFEST).is_file() || dir.join(SHARD_START_NOTE).is_file()
}

/// The shard folders among `folders`: each one that is a shard folder, else its subfolders that are
/// (in natural order). Returns them and the folders that held none. Errors: a folder that cannot
/// be listed.
fn shard_folders(folders: &[PathBuf]) -> Result<(Vec<PathBuf>, Vec<PathBuf>)> {
    let mut found = Vec::new();
    let mut none = Vec::new();
    for dir in folders {
        if is_shard_folder(dir) {
            found.push(dir.clone());
            continue;
        }
        let listing = std::fs::read_dir(dir)
            .map_err(|e| Error::io(dir, "a shard folder, or a folder holding shard folders", e))?;
        let mut subs: Vec<PathBuf> = listing
            .filter_map(|e| e.ok().map(|e| e.path()))
            .filter(|p| p.is_dir() && is_shard_folder(p))
            .collect();
        subs.sort_by(|a, b| natural_cmp(&a.to_string_lossy(), &b.to_string_lossy()));
        if subs.is_empty() {
            none.push(dir.clone());
        }
        found.extend(subs);
    }
    Ok((found, none))
}

/// Devices in a started shard's lot summary so far: its rows over its conditions (the lot files
/// list whole devices only). No summary yet is none. Errors: a summary that does not parse.
fn devices_so_far(dir: &Path, conditions: usize) -> Result<usize> {
    if !dir.join(SUMMARY_CSV).is_file() {
        return Ok(0);
    }
    let summary = LotSummary::in_folder(dir)?;
    let mut rows = 0usize;
    for row in summary.rows() {
        row?;
        rows += 1;
    }
    Ok(rows / conditions.max(1))
}

/// Where a lot split into shards has got, from `folders`: shard folders, or folders holding shard
/// folders (such as the `shards` folder of `deploy/slurm/submit.sh`). Nothing is written.
///
/// Errors: a folder that cannot be listed; a manifest or start note that does not parse; shards of
/// different runs (naming the field, as `merge` does); a shard found twice; no shard at all.
pub fn lot_progress(folders: &[PathBuf]) -> Result<LotProgress> {
    let (dirs, not_shards) = shard_folders(folders)?;
    let mut finished: Vec<(PathBuf, ShardManifest)> = Vec::new();
    let mut started: Vec<(PathBuf, ShardManifest)> = Vec::new();
    for d in dirs {
        if d.join(SHARD_MANIFEST).is_file() {
            let m = ShardManifest::read(&d)?;
            finished.push((d, m));
        } else {
            let m = ShardManifest::read_start_note(&d)?;
            started.push((d, m));
        }
    }
    let all: Vec<&(PathBuf, ShardManifest)> = finished.iter().chain(&started).collect();
    let Some((_, run)) = all.first().copied() else {
        return Err(Error::new(
            ErrorKind::Io,
            folders
                .iter()
                .map(|d| d.display().to_string())
                .collect::<Vec<_>>()
                .join(", "),
            Location::Whole,
            format!(
                "a shard folder ({SHARD_MANIFEST} or {SHARD_START_NOTE}), or a folder holding them"
            ),
            "none: no shard has started yet",
        ));
    };
    let dirs: Vec<PathBuf> = all.iter().map(|(d, _)| d.clone()).collect();
    let manifests: Vec<ShardManifest> = all.iter().map(|(_, m)| m.clone()).collect();
    ShardManifest::check_same_run(&dirs, &manifests)?;

    let m = run.shards;
    let mut shards: Vec<ShardProgress> = (1..=m)
        .map(|k| {
            let shard = Shard { index: k, count: m };
            ShardProgress {
                shard,
                devices: shard.size(run.lot_devices),
                state: ShardState::NotStarted,
                folder: None,
            }
        })
        .collect();
    for (dir, man) in &all {
        let slot = &mut shards[man.shard - 1];
        if let Some(other) = &slot.folder {
            return Err(Error::new(
                ErrorKind::BadSetting,
                dir.join(SHARD_MANIFEST).display().to_string(),
                Location::Key("shard".into()),
                format!("each shard 1/{m}..{m}/{m} of the run in one folder"),
                format!(
                    "shard {} a second time (also in {})",
                    man.shard(),
                    other.display()
                ),
            ));
        }
        slot.folder = Some(dir.clone());
        slot.state = if dir.join(SHARD_MANIFEST).is_file() {
            ShardState::Finished
        } else {
            ShardState::Started {
                done: devices_so_far(dir, man.conditions.len())?,
            }
        };
    }
    Ok(LotProgress {
        title: run.title.clone(),
        plan: run.plan.clone(),
        lot_devices: run.lot_devices,
        conditions: run.conditions.len(),
        shards,
        not_shards,
    })
}

/// A path as one shell word: as it is when it holds only characters no shell treats specially,
/// else in single quotes.
fn shell_word(s: &str) -> String {
    let plain = !s.is_empty()
        && s.bytes()
            .all(|b| b.is_ascii_alphanumeric() || b"/._-+,=:@%".contains(&b));
    if plain {
        s.to_string()
    } else {
        format!("'{}'", s.replace('\'', r"'\''"))
    }
}

/// The folder of shard `k` when the known shard folders are all named alike, `<prefix><K>` (such
/// as `lot/shards/3` or `lot7-3`); `None` otherwise.
pub(crate) fn folder_of(known: &[(&Path, usize)], k: usize) -> Option<PathBuf> {
    let mut prefix: Option<&str> = None;
    for (dir, j) in known {
        let text = dir.to_str()?;
        let p = text.strip_suffix(&j.to_string())?;
        if p.ends_with(|c: char| c.is_ascii_digit()) || prefix.is_some_and(|q| q != p) {
            return None;
        }
        prefix = Some(p);
    }
    prefix.map(|p| PathBuf::from(format!("{p}{k}")))
}

/// The command that runs shard `k` of the run `run` describes again, into `out` (a placeholder when
/// unknown): the same plan, limit table and plots, as the manifest gives them (paths as given to the
/// first run, so from the folder it was run in).
pub(crate) fn rerun_command(run: &ShardManifest, k: usize, out: Option<&Path>) -> String {
    let mut c = format!("spurline batch {}", shell_word(&run.plan));
    if let Some(l) = &run.limits {
        c.push_str(&format!(" --limits {}", shell_word(l)));
    }
    let out = out.map_or(format!("<folder of shard {k}>"), |d| {
        shell_word(&d.display().to_string())
    });
    c.push_str(&format!(
        " --plots {} --shard {k}/{} --out {out}",
        run.plots, run.shards
    ));
    c
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shard_folders_named_alike_give_the_missing_ones() {
        let a = PathBuf::from("out/shards/1");
        let b = PathBuf::from("out/shards/4");
        assert_eq!(
            folder_of(&[(&a, 1), (&b, 4)], 3),
            Some(PathBuf::from("out/shards/3"))
        );
        let c = PathBuf::from("lot7-2");
        assert_eq!(folder_of(&[(&c, 2)], 12), Some(PathBuf::from("lot7-12")));
        // Named otherwise: no guess.
        let d = PathBuf::from("x/s13");
        assert_eq!(folder_of(&[(&d, 3)], 2), None);
        let e = PathBuf::from("other/2");
        assert_eq!(folder_of(&[(&a, 1), (&e, 2)], 3), None);
        let f = PathBuf::from("first");
        assert_eq!(folder_of(&[(&f, 1)], 3), None);
        assert_eq!(folder_of(&[], 3), None);
    }

    #[test]
    fn shell_words_are_quoted_when_needed() {
        assert_eq!(shell_word("plans/lot 7.toml"), "'plans/lot 7.toml'");
        assert_eq!(shell_word("it's"), r"'it'\''s'");
        assert_eq!(shell_word("a/b-c_d.toml"), "a/b-c_d.toml");
        assert_eq!(shell_word("$HOME"), "'$HOME'");
    }
}
