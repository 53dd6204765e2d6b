//! Merging shards: the output folders of `batch --shard K/M` for K = 1..M combined into one lot
//! report, byte for byte the report an unsharded run of the same plan and limits writes.
//!
//! The shards are checked first: each has a manifest (it finished), all have the same M, the same
//! plan and limit table ([`super::run_fingerprint`]), the same spurline version, plots option, title,
//! conditions and lot ([`super::lot_fingerprint`]); each shard 1..M is there once; no device is in two
//! shards; and each holds the devices its number gives it. Then each shard's lot files are read back
//! into finished rows, the device folders are copied (the shard folders are left as they were, so a
//! merge can be repeated) and the lot files are written from the rows in lot order by the same writer
//! a batch run uses, the yield counts being the sums of the shards' counts.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use super::bench_plan::{device_name_ok, safe_name, DEVICE_NAME, SAFE_NAME};
use super::files::{
    device_folder, plot_stems, LIMITS_CSV, PLOT_KINDS, RESULTS_JSON, SHARD_MANIFEST, SUMMARY_CSV,
    YIELD_CSV,
};
use super::output::{read_lot_rows, remove_shard_manifest, write_atomic, LotRows, LotWriter};
use super::result::LotCounts;
use super::shard::{lot_fingerprint, manifest_error, ShardManifest};
use super::status;
use crate::error::{Error, ErrorKind, Location, Result};
use crate::lot::limits::{Catalogue, LimitTable};
use crate::report::output_error;

/// Every folder's manifest. A folder without one (an unfinished shard, or no shard at all) makes an
/// error that names every shard not finished and the command to run each again, as long as some
/// folder tells the run (a manifest, or a start note); a manifest that does not parse is its own
/// error.
fn read_manifests(dirs: &[PathBuf]) -> Result<Vec<ShardManifest>> {
    let mut manifests = Vec::with_capacity(dirs.len());
    let mut finished: Vec<PathBuf> = Vec::new();
    let mut unfinished: Vec<PathBuf> = Vec::new();
    let mut first_error = None;
    for d in dirs {
        match ShardManifest::read(d) {
            Ok(m) => {
                manifests.push(m);
                finished.push(d.clone());
            }
            Err(e) if e.kind == ErrorKind::Io && !d.join(SHARD_MANIFEST).exists() => {
                unfinished.push(d.clone());
                first_error.get_or_insert(e);
            }
            Err(e) => return Err(e),
        }
    }
    let Some(e) = first_error else {
        return Ok(manifests);
    };
    if !manifests.is_empty() {
        ShardManifest::check_same_run(&finished, &manifests)?;
    }
    let note = unfinished
        .iter()
        .find_map(|d| ShardManifest::read_start_note(d).ok());
    let Some(run) = manifests.first().cloned().or(note) else {
        return Err(e);
    };
    let known: Vec<(&Path, usize)> = finished
        .iter()
        .zip(&manifests)
        .filter(|(_, m)| m.shards == run.shards)
        .map(|(d, m)| (d.as_path(), m.shard))
        .collect();
    Err(unfinished_error(&run, &known, &unfinished, dirs.len()))
}

/// The error for a merge whose shards are not all finished: each shard of the run not among
/// `finished` (folder, K), said to be started where one of the `unfinished` folders holds its start
/// note, with the command that runs it again; and each unfinished folder that holds no shard.
fn unfinished_error(
    run: &ShardManifest,
    finished: &[(&Path, usize)],
    unfinished: &[PathBuf],
    given: usize,
) -> Error {
    let m = run.shards;
    let notes: Vec<(PathBuf, Option<usize>)> = unfinished
        .iter()
        .map(|d| {
            let k = ShardManifest::read_start_note(d)
                .ok()
                .filter(|n| n.shards == m && n.fingerprint == run.fingerprint)
                .map(|n| n.shard);
            (d.clone(), k)
        })
        .collect();
    let mut known: Vec<(&Path, usize)> = finished.to_vec();
    known.extend(
        notes
            .iter()
            .filter_map(|(d, k)| k.map(|k| (d.as_path(), k))),
    );
    let mut parts = Vec::new();
    for k in (1..=m).filter(|k| !finished.iter().any(|(_, j)| j == k)) {
        let started = notes.iter().find(|(_, j)| *j == Some(k)).map(|(d, _)| d);
        let (what, out) = match started {
            Some(d) => (
                format!(
                    "shard {k}/{m} started in {} and not finished (no {SHARD_MANIFEST})",
                    d.display()
                ),
                Some(d.clone()),
            ),
            None => (
                format!("no folder of shard {k}/{m} among the {given} given"),
                status::folder_of(&known, k),
            ),
        };
        parts.push(format!(
            "{what}; run it again: {}",
            status::rerun_command(run, k, out.as_deref())
        ));
    }
    for (d, _) in notes.iter().filter(|(_, k)| k.is_none()) {
        parts.push(format!(
            "{} holds no {SHARD_MANIFEST} (not a finished shard of this run)",
            d.display()
        ));
    }
    Error::new(
        ErrorKind::BadSetting,
        unfinished.first().map_or(String::new(), |d| {
            d.join(SHARD_MANIFEST).display().to_string()
        }),
        Location::Key("shards".into()),
        format!(
            "the output folders of every shard 1/{m}..{m}/{m} of the run, each finished (with \
             {SHARD_MANIFEST})"
        ),
        parts.join("; "),
    )
}

/// For each shard number 1..=M, the place of its folder among `dirs`. Errors: a shard given twice,
/// a shard missing.
fn place_shards(dirs: &[PathBuf], manifests: &[ShardManifest]) -> Result<Vec<usize>> {
    let m = manifests[0].shards;
    let mut slot: Vec<Option<usize>> = vec![None; m];
    for (i, man) in manifests.iter().enumerate() {
        if let Some(j) = slot[man.shard - 1] {
            return Err(manifest_error(
                &dirs[i],
                "shard",
                format!("each shard 1/{m}..{m}/{m} of the run once"),
                format!(
                    "shard {} a second time (also in {})",
                    man.shard(),
                    dirs[j].display()
                ),
            ));
        }
        slot[man.shard - 1] = Some(i);
    }
    if slot.iter().any(Option::is_none) {
        let finished: Vec<(&Path, usize)> = dirs
            .iter()
            .zip(manifests)
            .map(|(d, man)| (d.as_path(), man.shard))
            .collect();
        return Err(unfinished_error(&manifests[0], &finished, &[], dirs.len()));
    }
    Ok(slot.into_iter().flatten().collect())
}

/// Checks that the shards' devices make up the lot: each device in one shard only, each shard the
/// size its number gives, and, dealt back in turn, the lot's devices in order. Returns the lot's
/// devices as (shard place, index in that shard).
fn lot_order(
    dirs: &[PathBuf],
    manifests: &[ShardManifest],
    by_shard: &[usize],
) -> Result<Vec<(usize, usize)>> {
    let first = &manifests[0];
    let mut seen: HashMap<&str, usize> = HashMap::new();
    for (i, man) in manifests.iter().enumerate() {
        for d in &man.devices {
            if let Some(&j) = seen.get(d.as_str()) {
                return Err(manifest_error(
                    &dirs[i],
                    "devices",
                    "each device in one shard only".into(),
                    format!(
                        "device '{d}' in shard {} and in shard {} ({})",
                        man.shard(),
                        manifests[j].shard(),
                        dirs[j].display()
                    ),
                ));
            }
            seen.insert(d, i);
        }
        let want = man.shard().size(first.lot_devices);
        if man.devices.len() != want {
            return Err(manifest_error(
                &dirs[i],
                "devices",
                format!(
                    "{want} devices (shard {} of a lot of {})",
                    man.shard(),
                    first.lot_devices
                ),
                format!("{} devices", man.devices.len()),
            ));
        }
    }
    let m = first.shards;
    let order: Vec<(usize, usize)> = (0..first.lot_devices)
        .map(|i| (by_shard[i % m], i / m))
        .collect();
    let names: Vec<&str> = order
        .iter()
        .map(|&(s, j)| manifests[s].devices[j].as_str())
        .collect();
    if lot_fingerprint(&names) != first.lot_fingerprint {
        return Err(manifest_error(
            &dirs[by_shard[0]],
            "devices",
            format!(
                "devices that, dealt back in turn, give the lot of lot_fingerprint {}",
                first.lot_fingerprint
            ),
            format!("the lot fingerprint {}", lot_fingerprint(&names)),
        ));
    }
    Ok(order)
}

/// Whether two paths name the same existing folder.
fn same_folder(a: &Path, b: &Path) -> bool {
    match (a.canonicalize(), b.canonicalize()) {
        (Ok(x), Ok(y)) => x == y,
        _ => false,
    }
}

/// Checks the names a manifest gives before any of them becomes a path: every device a name batch
/// accepts for a device (one path component, not `.`/`..`, no separators or control characters, not
/// starting with `.`), every condition a safe plan name. A crafted `shard.json` naming `../victim`
/// is refused here, before anything is read or written.
fn check_names(dir: &Path, man: &ShardManifest) -> Result<()> {
    for d in &man.devices {
        if !device_name_ok(d) {
            return Err(manifest_error(
                dir,
                "devices",
                DEVICE_NAME.into(),
                format!("{d:?}"),
            ));
        }
    }
    for c in &man.conditions {
        if !safe_name(c) {
            return Err(manifest_error(
                dir,
                "conditions",
                SAFE_NAME.into(),
                format!("{c:?}"),
            ));
        }
    }
    Ok(())
}

/// The error for a path in a shard that is not what batch writes there.
fn not_written_by_batch(path: &Path, expected: &str, found: impl Into<String>) -> Error {
    Error::new(
        ErrorKind::BadMetadata,
        path.display().to_string(),
        Location::Whole,
        expected,
        found,
    )
}

/// What a path is, without following a link.
fn kind_of(meta: &std::fs::Metadata) -> &'static str {
    let t = meta.file_type();
    if t.is_symlink() {
        "a symbolic link"
    } else if t.is_dir() {
        "a folder"
    } else if t.is_file() {
        "a plain file"
    } else {
        "a special file (device, FIFO or socket)"
    }
}

/// The files of a device folder that merge copies: the names batch writes there, and only those
/// (`summary.csv`, `results.json`, and the plots of the run's conditions). Temporary files of an
/// interrupted write (names starting with '.') are left behind.
fn copies_of(from: &Path, conditions: &[String]) -> Result<Vec<String>> {
    let meta = std::fs::symlink_metadata(from)
        .map_err(|e| output_error(from, "a readable device folder", e))?;
    if !meta.file_type().is_dir() {
        return Err(not_written_by_batch(
            from,
            "a device folder written by batch (a plain folder, not a link)",
            kind_of(&meta),
        ));
    }
    let mut allowed: Vec<String> = vec![SUMMARY_CSV.into(), RESULTS_JSON.into()];
    for stem in plot_stems(conditions) {
        allowed.extend(PLOT_KINDS.iter().map(|k| format!("{stem}-{k}.svg")));
    }
    let mut names = Vec::new();
    for entry in
        std::fs::read_dir(from).map_err(|e| output_error(from, "a readable device folder", e))?
    {
        let entry = entry.map_err(|e| output_error(from, "a readable device folder", e))?;
        let name = entry.file_name();
        let shown = name.to_string_lossy().into_owned();
        if shown.starts_with('.') {
            continue;
        }
        let path = entry.path();
        let Some(name) = name.to_str().filter(|n| allowed.iter().any(|a| a == n)) else {
            return Err(not_written_by_batch(
                &path,
                &format!(
                    "only the files batch writes in a device folder ({SUMMARY_CSV}, {RESULTS_JSON}, \
                     the conditions' plots)"
                ),
                format!("'{shown}'"),
            ));
        };
        names.push(name.to_string());
    }
    names.sort();
    Ok(names)
}

/// Reads a file of a shard without following a link: the path must be a plain file when looked at,
/// and the file opened must be that same file (not one swapped in between).
fn read_plain_file(path: &Path) -> Result<Vec<u8>> {
    use std::io::Read;
    let before =
        std::fs::symlink_metadata(path).map_err(|e| output_error(path, "a readable file", e))?;
    if !before.file_type().is_file() {
        return Err(not_written_by_batch(
            path,
            "a plain file written by batch (links are never followed)",
            kind_of(&before),
        ));
    }
    let mut open = std::fs::OpenOptions::new();
    open.read(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        open.custom_flags(libc::O_NOFOLLOW | libc::O_NONBLOCK);
    }
    let mut file = open
        .open(path)
        .map_err(|e| output_error(path, "a readable plain file", e))?;
    let after = file
        .metadata()
        .map_err(|e| output_error(path, "a readable plain file", e))?;
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        if !after.is_file() || (after.dev(), after.ino()) != (before.dev(), before.ino()) {
            return Err(not_written_by_batch(
                path,
                "the plain file that was there when the folder was listed",
                "another file (replaced while merging)",
            ));
        }
    }
    let mut bytes = Vec::with_capacity(after.len() as usize);
    file.read_to_end(&mut bytes)
        .map_err(|e| output_error(path, "a readable file", e))?;
    Ok(bytes)
}

/// Makes `dir` (one component under `out`, which exists) a plain folder to write into: created when
/// missing, refused when it is a link or not a folder, so that nothing is written through it.
fn plain_folder_under(out: &Path, name: &str) -> Result<PathBuf> {
    let dir = out.join(name);
    match std::fs::symlink_metadata(&dir) {
        Ok(m) if m.file_type().is_dir() => Ok(dir),
        Ok(m) => Err(output_error(
            &dir,
            "a plain folder for the device (links are never written through)",
            kind_of(&m),
        )),
        Err(_) => {
            std::fs::create_dir(&dir)
                .map_err(|e| output_error(&dir, "a folder to copy into", e))?;
            Ok(dir)
        }
    }
}

/// Copies a device folder: only the plain files batch writes there (see [`copies_of`]), each
/// written atomically into a plain folder under `out`. Links, subfolders, special files and any
/// other name are refused with an error naming the path.
fn copy_device(from: &Path, out: &Path, folder: &str, conditions: &[String]) -> Result<()> {
    let names = copies_of(from, conditions)?;
    let to = plain_folder_under(out, folder)?;
    for name in names {
        let bytes = read_plain_file(&from.join(&name))?;
        write_atomic(&to.join(&name), &bytes)?;
    }
    Ok(())
}

/// Merges the output folders of the shards of one run into `out` (see the module docs): the device
/// folders are copied, and `summary.csv`, `failures.csv`, `yield.csv` and `index.html` written, equal
/// byte for byte to those of an unsharded run. Returns the lot's counts, as [`super::run_lot`] does.
///
/// Errors: no folder given; a folder without `shard.json` (not a finished shard) or whose manifest
/// does not parse; shards of another run (M, plan and limits, version, plots, title, conditions or
/// lot differ: the error names the field); a shard given twice; a shard missing or not finished (the
/// error names each, with the command that runs it again); a device in two shards;
/// a shard whose lot files do not match its manifest (naming file and row); a device folder missing;
/// `out` being one of the shard folders; outputs that cannot be written.
pub fn merge_shards(out: &Path, shards: &[PathBuf]) -> Result<LotCounts> {
    if shards.is_empty() {
        return Err(Error::setting(
            "shards",
            "the output folders of the shards to merge",
            "none",
        ));
    }
    let manifests = read_manifests(shards)?;
    for (dir, man) in shards.iter().zip(&manifests) {
        check_names(dir, man)?;
    }
    ShardManifest::check_same_run(shards, &manifests)?;
    let by_shard = place_shards(shards, &manifests)?;
    let order = lot_order(shards, &manifests, &by_shard)?;
    if let Some(d) = shards.iter().find(|d| same_folder(out, d)) {
        return Err(Error::setting(
            "out",
            "an output folder other than the shard folders",
            format!("'{}'", d.display()),
        ));
    }
    for (dir, man) in shards.iter().zip(&manifests) {
        for d in &man.devices {
            for f in [SUMMARY_CSV, RESULTS_JSON] {
                let p = dir.join(device_folder(d)).join(f);
                let found = match std::fs::symlink_metadata(&p) {
                    Ok(m) if m.file_type().is_file() => continue,
                    Ok(m) => kind_of(&m),
                    Err(_) => "no such file",
                };
                return Err(Error::new(
                    ErrorKind::Io,
                    p.display().to_string(),
                    Location::Whole,
                    format!("the device folder of '{d}' with {f}, a plain file (links are never followed)"),
                    found,
                ));
            }
        }
    }

    // Every shard's rows, in shard order 1..=M.
    let mut rows: Vec<LotRows> = Vec::with_capacity(by_shard.len());
    for &i in &by_shard {
        let (dir, man) = (&shards[i], &manifests[i]);
        let r = read_lot_rows(dir, &man.devices, &man.conditions)?;
        if let Some(first) = rows.first() {
            if r.header != first.header {
                return Err(Error::new(
                    ErrorKind::BadMetadata,
                    dir.join(SUMMARY_CSV).display().to_string(),
                    Location::Row(1),
                    "the summary columns of the other shards",
                    "other columns",
                ));
            }
        }
        rows.push(r);
    }
    let mut counts = rows[0].counts.clone();
    for (r, &i) in rows.iter().zip(&by_shard).skip(1) {
        counts.add(&r.counts, &shards[i].join(YIELD_CSV))?;
    }

    let first = &manifests[0];
    // The limits the shards were judged by (one table: the fingerprints agree), for the page.
    let limits = match &first.limits {
        Some(_) => Some(read_lot_limits(
            &shards[by_shard[0]],
            &first.conditions,
            &rows[0].header,
        )?),
        None => None,
    };
    let mut writer = LotWriter::with_counts(
        out,
        &first.title,
        rows[0].header.clone(),
        counts,
        limits.as_ref(),
    )?;
    remove_shard_manifest(out)?;
    // The lot files list no device before its folder is complete, as in a batch run.
    writer.write(0)?;
    // Shard place → position in `rows`.
    let mut row_of = vec![0; shards.len()];
    for (r, &i) in by_shard.iter().enumerate() {
        row_of[i] = r;
    }
    let n = first.conditions.len();
    let mut lot = LotCounts {
        devices: order.len(),
        ..LotCounts::default()
    };
    for &(s, j) in &order {
        let device = &manifests[s].devices[j];
        let folder = device_folder(device);
        copy_device(&shards[s].join(&folder), out, &folder, &first.conditions)?;
        let results = &rows[row_of[s]].results[j * n..(j + 1) * n];
        for r in results {
            lot.count(&r.device, &r.condition, r.outcome, &r.reason);
        }
        writer.add_rows(results);
    }
    writer.write(order.len())?;
    Ok(lot)
}

/// Reads the limits a shard was judged by (its `limits.csv`), resolved against the conditions and the
/// metrics of its summary header.
fn read_lot_limits(dir: &Path, conditions: &[String], header: &[u8]) -> Result<LimitTable> {
    let columns: Vec<String> = String::from_utf8_lossy(header)
        .trim_end()
        .split(',')
        .map(str::to_string)
        .collect();
    let catalogue = Catalogue::from_columns(&columns);
    let scope: Vec<(String, Catalogue)> = conditions
        .iter()
        .map(|c| (c.clone(), catalogue.clone()))
        .collect();
    LimitTable::read(&dir.join(LIMITS_CSV), &scope)
}
