//! Splitting a lot across machines: `batch --shard K/M` runs shard K of M, a fixed share of the lot's
//! devices, and leaves beside its outputs a manifest, `shard.json`, that [`super::merge_shards`] checks
//! before it combines the shards into one lot report.
//!
//! # Which devices a shard takes
//! Device i of the lot (in the lot's order, see [`super::Lot`], counted from 0) belongs to shard
//! (i mod M) + 1: the devices are dealt out in turn, so the shards differ in size by at most one
//! device and a slow stretch of the lot (longer records, more averaging) is spread over all of them.
//! The share depends only on K, M and the lot, never on `--jobs` or on the machine.
//!
//! # `shard.json`
//! Written atomically once the shard's lot files are complete (and removed at the start of every
//! batch run into the folder, so a manifest always describes finished files): `format` (1), `shard`
//! (K), `shards` (M), `spurline_version`, `plan` (the path as given), `title`, `limits` (path or
//! null), `fingerprint` (of the plan file's and the limit table's bytes, see [`run_fingerprint`]),
//! `plots`, `conditions` (plan order), `lot_devices` (devices in the whole lot), `lot_fingerprint` (of
//! the whole lot's device names in order, see [`lot_fingerprint`]), `devices` (this shard's, in lot
//! order) and `counts` (this shard's [`LotCounts`]).
//!
//! # `shard-start.json`
//! The same fields with zero counts, written when the shard's run starts and removed once
//! `shard.json` is written: a folder holding it and no `shard.json` is a shard that started and has
//! not finished (still running, or stopped). `merge` names such a shard, with the command to run it
//! again, and `merge --status` counts its devices done so far.

use std::fmt;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::bench_plan::{BenchPlan, Lot};
use super::files::{read_bytes, SHARD_MANIFEST, SHARD_START_NOTE};
use super::output::{remove_shard_manifest, write_atomic};
use super::result::LotCounts;
use super::run::{lot_title, run_lot, BatchOptions, LotObserver};
use crate::error::{Error, ErrorKind, Location, Result};
use crate::lot::limits::LimitTable;

/// Version of the manifest's layout.
pub const SHARD_FORMAT: u32 = 1;

/// Shard `index` of `count` (1 ≤ index ≤ count), written `K/M`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Shard {
    /// K, counted from 1.
    pub index: usize,
    /// M, the number of shards.
    pub count: usize,
}

const SHARD_FORM: &str = "K/M with whole numbers 1 <= K <= M, e.g. 2/8";

impl Shard {
    /// Shard `index` of `count`. Errors: `count` of 0, `index` of 0 or above `count`.
    pub fn new(index: usize, count: usize) -> Result<Shard> {
        if count == 0 || index == 0 || index > count {
            return Err(Error::setting(
                "shard",
                SHARD_FORM,
                format!("'{index}/{count}'"),
            ));
        }
        Ok(Shard { index, count })
    }

    /// Whether device `device` (its 0-based place in the lot) belongs to this shard.
    pub fn owns(&self, device: usize) -> bool {
        device % self.count == self.index - 1
    }

    /// How many of a lot of `devices` devices this shard takes.
    pub fn size(&self, devices: usize) -> usize {
        (devices + self.count - self.index) / self.count
    }

    /// The part of `lot` this shard takes: its devices in lot order, with their record files.
    pub fn part(&self, lot: &Lot) -> Lot {
        lot.subset(|i| self.owns(i))
    }
}

impl std::str::FromStr for Shard {
    type Err = Error;

    /// Parses `K/M` (e.g. `2/8`). Errors name the setting `shard`, the form and what was given.
    fn from_str(s: &str) -> Result<Shard> {
        let bad = || Error::setting("shard", SHARD_FORM, format!("'{s}'"));
        let (k, m) = s.split_once('/').ok_or_else(bad)?;
        let whole = |t: &str| {
            if !t.is_empty() && t.bytes().all(|b| b.is_ascii_digit()) {
                t.parse::<usize>().ok()
            } else {
                None
            }
        };
        match (whole(k), whole(m)) {
            (Some(k), Some(m)) => Shard::new(k, m).map_err(|_| bad()),
            _ => Err(bad()),
        }
    }
}

impl fmt::Display for Shard {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}/{}", self.index, self.count)
    }
}

/// 64-bit FNV-1a over parts, each preceded by its length (so that parts cannot run into each
/// other). The fingerprints only tell runs apart that were set up differently by mistake; they are
/// no protection against deliberate forgery.
#[derive(Debug, Clone, Copy)]
struct Fnv(u64);

impl Fnv {
    const OFFSET: u64 = 0xcbf2_9ce4_8422_2325;
    const PRIME: u64 = 0x0000_0100_0000_01b3;

    fn new() -> Fnv {
        Fnv(Fnv::OFFSET)
    }

    fn bytes(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.0 = (self.0 ^ u64::from(b)).wrapping_mul(Fnv::PRIME);
        }
    }

    fn part(&mut self, bytes: &[u8]) {
        self.bytes(&(bytes.len() as u64).to_le_bytes());
        self.bytes(bytes);
    }

    fn hex(&self) -> String {
        format!("{:016x}", self.0)
    }
}

/// The fingerprint of a run's set-up: the bytes of the plan file and of the limit table (if any), as
/// 16 hex digits. Shards whose fingerprints differ were run with different plans or limits and are
/// not merged. Errors: a file that can no longer be read.
pub fn run_fingerprint(plan: &BenchPlan, limits: Option<&LimitTable>) -> Result<String> {
    let mut h = Fnv::new();
    h.part(b"spurline bench plan");
    h.part(&read_bytes(&plan.path, "a readable bench plan")?);
    match limits {
        Some(t) => {
            h.part(b"limit table");
            h.part(&read_bytes(Path::new(&t.path), "a readable limit table")?);
        }
        None => h.part(b"no limit table"),
    }
    Ok(h.hex())
}

/// The fingerprint of labelled parts (each part's label, then its bytes), as 16 hex digits: the
/// results store's fingerprints of a plan, a limit table and a recorded lot.
pub(crate) fn fingerprint_of(parts: &[(&str, &[u8])]) -> String {
    let mut h = Fnv::new();
    for (label, bytes) in parts {
        h.part(label.as_bytes());
        h.part(bytes);
    }
    h.hex()
}

/// The fingerprint of a lot's device names in lot order, as 16 hex digits: shards of one run that
/// found different devices (records added or removed between them) are not merged.
pub fn lot_fingerprint<S: AsRef<str>>(devices: &[S]) -> String {
    let mut h = Fnv::new();
    h.part(b"spurline lot");
    for d in devices {
        h.part(d.as_ref().as_bytes());
    }
    h.hex()
}

/// What a finished shard's `shard.json` says (see the module docs).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ShardManifest {
    /// Version of this layout, [`SHARD_FORMAT`].
    pub format: u32,
    /// K, counted from 1.
    pub shard: usize,
    /// M, the number of shards.
    pub shards: usize,
    /// The spurline version that ran the shard.
    pub spurline_version: String,
    /// The plan file, as given.
    pub plan: String,
    /// The lot's title (the plan's, else its file name), shown on the index page.
    pub title: String,
    /// The limit table, as given; `None` without one.
    pub limits: Option<String>,
    /// [`run_fingerprint`] of the plan and limit table.
    pub fingerprint: String,
    /// The plots option (`none`, `failures`, `all`).
    pub plots: String,
    /// The plan's conditions, in plan order.
    pub conditions: Vec<String>,
    /// Devices in the whole lot.
    pub lot_devices: usize,
    /// [`lot_fingerprint`] of the whole lot.
    pub lot_fingerprint: String,
    /// This shard's devices, in lot order.
    pub devices: Vec<String>,
    /// This shard's counts.
    pub counts: LotCounts,
}

impl ShardManifest {
    /// Reads `<dir>/shard.json`. Errors: no manifest (the folder is not a finished shard), a file
    /// that does not parse (naming line and column), a format other than [`SHARD_FORMAT`].
    pub fn read(dir: &Path) -> Result<ShardManifest> {
        ShardManifest::read_file(&dir.join(SHARD_MANIFEST))
    }

    /// Reads `<dir>/shard-start.json`, the note of a shard run that started (its counts are zero).
    /// Errors: as [`ShardManifest::read`].
    pub fn read_start_note(dir: &Path) -> Result<ShardManifest> {
        ShardManifest::read_file(&dir.join(SHARD_START_NOTE))
    }

    fn read_file(path: &Path) -> Result<ShardManifest> {
        let shown = path.display().to_string();
        let text = crate::resources::read_small_text(
            path,
            "the manifest of a finished `batch --shard` run",
            crate::resources::MAX_SMALL_FILE_BYTES,
        )?;
        let m: ShardManifest = serde_json::from_str(&text).map_err(|e| {
            Error::new(
                ErrorKind::BadMetadata,
                &shown,
                Location::LineColumn(e.line(), e.column()),
                "a shard manifest written by spurline batch --shard",
                e.to_string(),
            )
        })?;
        if m.format != SHARD_FORMAT {
            return Err(Error::new(
                ErrorKind::BadMetadata,
                &shown,
                Location::Key("format".into()),
                format!("shard manifest format {SHARD_FORMAT}"),
                m.format.to_string(),
            ));
        }
        if Shard::new(m.shard, m.shards).is_err() {
            return Err(Error::new(
                ErrorKind::BadMetadata,
                &shown,
                Location::Key("shard".into()),
                SHARD_FORM,
                format!("{}/{}", m.shard, m.shards),
            ));
        }
        Ok(m)
    }

    /// The shard it describes.
    pub fn shard(&self) -> Shard {
        Shard {
            index: self.shard,
            count: self.shards,
        }
    }
}

/// Runs shard `shard` of a lot: the start note `shard-start.json`, [`run_lot`] over the shard's
/// devices (see the module docs), then the manifest `shard.json` in `options.out`, written last and
/// atomically, and the start note removed. The folder then holds the
/// shard's device folders and its own lot files, which are those of an ordinary run of its devices.
/// `observer` follows the run as in [`run_lot`].
/// Errors: those of [`run_lot`], and a plan or limit table that can no longer be read for the
/// fingerprint (checked before the work).
pub fn run_shard(
    plan: &BenchPlan,
    lot: &Lot,
    limits: Option<&LimitTable>,
    options: &BatchOptions,
    shard: Shard,
    observer: &dyn LotObserver,
) -> Result<LotCounts> {
    let fingerprint = run_fingerprint(plan, limits)?;
    let part = shard.part(lot);
    let mut manifest = ShardManifest {
        format: SHARD_FORMAT,
        shard: shard.index,
        shards: shard.count,
        spurline_version: env!("CARGO_PKG_VERSION").to_string(),
        plan: plan.path.display().to_string(),
        title: lot_title(plan),
        limits: limits.map(|t| t.path.clone()),
        fingerprint,
        plots: options.plots.as_str().to_string(),
        conditions: plan.conditions.iter().map(|c| c.name.clone()).collect(),
        lot_devices: lot.devices.len(),
        lot_fingerprint: lot_fingerprint(&lot.devices),
        devices: part.devices.clone(),
        counts: LotCounts::default(),
    };
    // The start note first, so that a stopped run leaves a folder that says which shard it holds.
    remove_shard_manifest(&options.out)?;
    manifest.write(&options.out.join(SHARD_START_NOTE))?;
    let counts = run_lot(plan, &part, limits, options, observer)?;
    manifest.counts = counts.clone();
    manifest.write(&options.out.join(SHARD_MANIFEST))?;
    // shard.json decides whether the shard finished; a note that cannot be removed is harmless.
    let _ = std::fs::remove_file(options.out.join(SHARD_START_NOTE));
    Ok(counts)
}

impl ShardManifest {
    /// Checks that every manifest describes a shard of the same run as the first one.
    pub(crate) fn check_same_run(dirs: &[PathBuf], manifests: &[ShardManifest]) -> Result<()> {
        let (first_dir, first) = (&dirs[0], &manifests[0]);
        for (dir, m) in dirs.iter().zip(manifests).skip(1) {
            let fields: [(&str, String, String); 8] = [
                ("shards", first.shards.to_string(), m.shards.to_string()),
                (
                    "fingerprint",
                    first.fingerprint.clone(),
                    m.fingerprint.clone(),
                ),
                (
                    "spurline_version",
                    first.spurline_version.clone(),
                    m.spurline_version.clone(),
                ),
                ("plots", first.plots.clone(), m.plots.clone()),
                ("title", first.title.clone(), m.title.clone()),
                (
                    "conditions",
                    first.conditions.join(", "),
                    m.conditions.join(", "),
                ),
                (
                    "lot_devices",
                    first.lot_devices.to_string(),
                    m.lot_devices.to_string(),
                ),
                (
                    "lot_fingerprint",
                    first.lot_fingerprint.clone(),
                    m.lot_fingerprint.clone(),
                ),
            ];
            for (key, want, got) in fields {
                if want != got {
                    let what = match key {
                        "fingerprint" => " (the plan file and limit table)",
                        "lot_fingerprint" => " (the lot's devices)",
                        _ => "",
                    };
                    return Err(manifest_error(
                        dir,
                        key,
                        format!(
                            "{key} {want}{what} as in {}, shard {}",
                            first_dir.join(SHARD_MANIFEST).display(),
                            first.shard()
                        ),
                        format!("{got}: shard {} is not of the same run", m.shard()),
                    ));
                }
            }
        }
        Ok(())
    }

    fn write(&self, path: &Path) -> Result<()> {
        let mut json = serde_json::to_string_pretty(self).expect("plain data serialises");
        json.push('\n');
        write_atomic(path, json.as_bytes())
    }
}

pub(crate) fn manifest_error(dir: &Path, key: &str, expected: String, found: String) -> Error {
    Error::new(
        ErrorKind::BadMetadata,
        dir.join(SHARD_MANIFEST).display().to_string(),
        Location::Key(key.to_string()),
        expected,
        found,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fnv1a_64_matches_the_published_test_vectors() {
        // FNV-1a 64-bit test vectors of the FNV reference (Fowler, Noll, Vo; the offset basis for
        // the empty string), from memory, and checked with a few lines of Python.
        for (text, want) in [
            ("", 0xcbf2_9ce4_8422_2325u64),
            ("a", 0xaf63_dc4c_8601_ec8c),
            ("foobar", 0x8594_4171_f739_67e8),
        ] {
            let mut h = Fnv::new();
            h.bytes(text.as_bytes());
            assert_eq!(h.0, want, "{text:?}");
        }
    }

    #[test]
    fn shard_values_parse_or_name_the_setting() {
        assert_eq!("2/8".parse::<Shard>(), Ok(Shard { index: 2, count: 8 }));
        assert_eq!("1/1".parse::<Shard>(), Ok(Shard { index: 1, count: 1 }));
        for bad in [
            "0/3", "4/3", "x", "3", "1/0", "/3", "2/", "-1/3", "+1/3", "1/3/4", " 1/3",
        ] {
            let e = bad.parse::<Shard>().unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting, "{bad}");
            assert_eq!(e.location, Location::Key("shard".into()), "{bad}");
            assert_eq!(e.found, format!("'{bad}'"));
            assert!(e.expected.contains("K/M"), "{bad}");
        }
    }

    #[test]
    fn every_device_is_in_exactly_one_shard_and_the_sizes_add_up() {
        // Round-robin: device i in shard (i mod M) + 1 (the module docs).
        for m in 1..=7 {
            for devices in 0..=20 {
                let mut owner = vec![0; devices];
                let mut total = 0;
                for k in 1..=m {
                    let s = Shard::new(k, m).unwrap();
                    let mine: Vec<usize> = (0..devices).filter(|&i| s.owns(i)).collect();
                    assert_eq!(mine.len(), s.size(devices), "{s} of {devices}");
                    for i in mine {
                        assert_eq!(i % m + 1, k);
                        owner[i] += 1;
                    }
                    total += s.size(devices);
                }
                assert_eq!(total, devices);
                assert!(owner.iter().all(|&o| o == 1));
            }
        }
    }

    #[test]
    fn the_lot_fingerprint_tells_orders_and_boundaries_apart() {
        let a = lot_fingerprint(&["d1", "d2"]);
        assert_eq!(a, lot_fingerprint(&["d1".to_string(), "d2".to_string()]));
        assert_ne!(a, lot_fingerprint(&["d2", "d1"]));
        // Length prefixes: the same bytes split differently give another fingerprint.
        assert_ne!(a, lot_fingerprint(&["d1d", "2"]));
        assert_eq!(a.len(), 16);
    }
}
