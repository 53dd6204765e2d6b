//! Regression tests of the class "merge writes outside its output folder": a crafted `shard.json`
//! whose device is `../victim`, and links inside a shard's device folder. Merge accepts only plain
//! files with the names batch writes, one safe path component per name, and never follows a link.
//! (Facts of the trade, no source: a name becoming a path must be one component; copying must not
//! follow links.)

use std::path::{Path, PathBuf};

use crate::batch::{make_lot, merge, run_batch};

/// Shards 1/2 and 2/2 of the fixture lot (d01..d04; shard 1 holds d01 and d03), under `root`.
fn two_shards(lot: &Path, root: &Path) -> (PathBuf, PathBuf) {
    let s1 = root.join("s1");
    let s2 = root.join("s2");
    for (dir, k) in [(&s1, "1/2"), (&s2, "2/2")] {
        let o = run_batch(lot, dir, &["--shard", k]);
        assert_eq!(
            o.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&o.stderr)
        );
    }
    (s1, s2)
}

fn replace_in(path: &Path, from: &str, to: &str) {
    let text = std::fs::read_to_string(path).unwrap();
    std::fs::write(path, text.replace(from, to)).unwrap();
}

#[test]
fn a_device_named_dot_dot_in_a_manifest_writes_nothing_outside() {
    let lot = make_lot();
    let p = lot.path();
    let deep = p.join("deep");
    let (s1, s2) = two_shards(p, &deep);
    // The crafted shard: device d01 renamed `../victim` everywhere it is named, its folder moved to
    // where `s1/../victim` points, and the lot fingerprint recomputed (anyone can).
    let evil = "../victim";
    for f in ["shard.json", "summary.csv", "failures.csv", "index.html"] {
        replace_in(&s1.join(f), "\"d01\"", &format!("\"{evil}\""));
        replace_in(&s1.join(f), "d01,", &format!("{evil},"));
        replace_in(&s1.join(f), ">d01<", &format!(">{evil}<"));
    }
    std::fs::rename(s1.join("d01"), deep.join("victim")).unwrap();
    let fp = spurline::lot_fingerprint(&[evil, "d02", "d03", "d04"]);
    let manifest = std::fs::read_to_string(s1.join("shard.json")).unwrap();
    let m: serde_json::Value = serde_json::from_str(&manifest).unwrap();
    let old = m["lot_fingerprint"].as_str().unwrap().to_string();
    replace_in(&s1.join("shard.json"), &old, &fp);
    replace_in(&s2.join("shard.json"), &old, &fp);

    let out = p.join("out").join("merged");
    let o = merge(&out, &[&s1, &s2]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "merge must refuse: {err}");
    assert!(
        err.contains("devices") && err.contains("../victim"),
        "{err}"
    );
    // Nothing was written beside the output folder.
    assert!(!p.join("out").join("victim").exists());
    let beside: Vec<_> = std::fs::read_dir(p.join("out"))
        .map(|d| d.flatten().map(|e| e.file_name()).collect())
        .unwrap_or_default();
    assert!(beside.iter().all(|n| n == "merged"), "{beside:?}");
}

#[cfg(unix)]
#[test]
fn merge_never_follows_a_link_in_a_device_folder() {
    use std::os::unix::fs::symlink;
    let lot = make_lot();
    let p = lot.path();
    let (s1, s2) = two_shards(p, &p.join("shards"));
    // A secret outside the shards that a followed link would copy into the report.
    let secret = p.join("secret");
    std::fs::create_dir(&secret).unwrap();
    std::fs::write(secret.join("key.txt"), "do not copy").unwrap();

    // A link to a folder, under a name batch never writes.
    symlink(&secret, s1.join("d01").join("system")).unwrap();
    let out = p.join("merged-a");
    let o = merge(&out, &[&s1, &s2]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("system"), "{err}");
    assert!(!out.join("d01").join("system").exists());
    std::fs::remove_file(s1.join("d01").join("system")).unwrap();

    // A link in place of a file batch writes, pointing at a file with the right content: refused
    // for being a link, not for what it holds.
    let results = s1.join("d03").join("results.json");
    std::fs::rename(&results, secret.join("results.json")).unwrap();
    symlink(secret.join("results.json"), &results).unwrap();
    let out = p.join("merged-b");
    let o = merge(&out, &[&s1, &s2]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("results.json") && err.contains("link"),
        "{err}"
    );

    // A device folder that is itself a link.
    std::fs::remove_file(&results).unwrap();
    std::fs::rename(secret.join("results.json"), &results).unwrap();
    std::fs::rename(s1.join("d01"), p.join("d01-real")).unwrap();
    symlink(p.join("d01-real"), s1.join("d01")).unwrap();
    let out = p.join("merged-c");
    let o = merge(&out, &[&s1, &s2]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("d01") && err.contains("link"), "{err}");

    // Put back as batch wrote it, the same shards merge.
    std::fs::remove_file(s1.join("d01")).unwrap();
    std::fs::rename(p.join("d01-real"), s1.join("d01")).unwrap();
    let out = p.join("merged-d");
    let o = merge(&out, &[&s1, &s2]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(out.join("d01").join("results.json").is_file());
}
