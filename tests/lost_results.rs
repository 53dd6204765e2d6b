//! Regression tests of the class "a lot loses or hides a result": every device found appears in the
//! lot (analysed, or as an error row saying why), an error row lowers the yield, a figure cell that
//! is not a number is counted wherever it is left out, and `analyze` keeps input order. (Facts of the
//! trade, no source: a production lot report accounts for every part put on test, and a part that
//! could not be measured did not pass.)

use std::path::Path;

use crate::batch::{make_lot, merge, run_batch};

fn spurline() -> assert_cmd::Command {
    assert_cmd::Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

fn rows(path: &Path) -> Vec<Vec<String>> {
    let mut r = csv::ReaderBuilder::new()
        .has_headers(false)
        .from_path(path)
        .unwrap();
    r.records()
        .map(|x| x.unwrap().iter().map(str::to_string).collect())
        .collect()
}

/// Copies the plain files of a folder (not its subfolders).
fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        if e.path().is_file() {
            std::fs::copy(e.path(), to.join(e.file_name())).unwrap();
        }
    }
}

#[cfg(unix)]
#[test]
fn every_discovered_device_appears_even_with_an_odd_name_or_a_fifo_record() {
    let lot = make_lot();
    let p = lot.path();
    let records = p.join("records");
    // Names the tool does not take as folder names of its own, a lot file's name, and two devices
    // whose only record is a FIFO or a link to a device file.
    let odd = [" spaced ", "tab\there", "star*", "index.html"];
    for name in odd {
        copy_dir(&records.join("d01"), &records.join(name));
    }
    std::fs::create_dir(records.join("piped")).unwrap();
    let fifo = records.join("piped/fin_10M_1.bin");
    let made = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .unwrap();
    assert!(made.success());
    std::fs::create_dir(records.join("linked")).unwrap();
    std::os::unix::fs::symlink("/dev/zero", records.join("linked/fin_10M_1.bin")).unwrap();

    let out = p.join("out");
    let limits = p.join("limits.csv");
    let o = run_batch(p, &out, &["--limits", limits.to_str().unwrap()]);
    let err = String::from_utf8_lossy(&o.stderr);
    // An error row makes the exit status 2 (README: exit status).
    assert_eq!(o.status.code(), Some(2), "{err}");
    let summary = rows(&out.join("summary.csv"));
    let devices: std::collections::BTreeSet<&str> =
        summary[1..].iter().map(|r| r[0].as_str()).collect();
    for name in odd
        .iter()
        .chain(&["piped", "linked", "d01", "d02", "d03", "d04"])
    {
        assert!(devices.contains(name), "{name:?} missing from {devices:?}");
    }
    assert_eq!(devices.len(), 10, "{devices:?}");
    // The odd names are analysed like d01 (the same records); the FIFO and the link are error rows
    // that say why.
    for name in odd {
        let verdicts: Vec<&str> = summary[1..]
            .iter()
            .filter(|r| r[0] == name)
            .map(|r| r[2].as_str())
            .collect();
        assert_eq!(verdicts, ["pass", "pass"], "{name:?}");
    }
    let why = |device: &str| -> String {
        summary[1..]
            .iter()
            .find(|r| r[0] == device && r[1] == "fin_10M")
            .map(|r| format!("{} {}", r[2], r[3]))
            .unwrap()
    };
    assert!(why("piped").starts_with("error") && why("piped").contains("FIFO"));
    assert!(why("linked").starts_with("error") && why("linked").contains("character device"));
    // Every device folder is one safe path component, none shadows a lot file, and the lot files
    // are whole.
    let folders: Vec<String> = std::fs::read_dir(&out)
        .unwrap()
        .flatten()
        .filter(|e| e.path().is_dir())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(folders.len(), 10, "{folders:?}");
    for f in &folders {
        assert!(
            f.trim() == f && !f.starts_with('.') && !f.chars().any(|c| c.is_control() || c == '/'),
            "{f:?}"
        );
    }
    assert!(out.join("index.html").is_file() && out.join("index.html~device").is_dir());
    assert!(std::fs::read_to_string(out.join("index.html"))
        .unwrap()
        .contains("<table"));

    // Shards of the same lot merge into the same report, odd names included.
    let s1 = p.join("s1");
    let s2 = p.join("s2");
    for (dir, k) in [(&s1, "1/2"), (&s2, "2/2")] {
        run_batch(
            p,
            dir,
            &["--limits", limits.to_str().unwrap(), "--shard", k],
        );
    }
    let merged = p.join("merged");
    let m = merge(&merged, &[&s1, &s2]);
    assert_eq!(
        m.status.code(),
        Some(2),
        "{}",
        String::from_utf8_lossy(&m.stderr)
    );
    for f in ["summary.csv", "yield.csv", "failures.csv"] {
        assert_eq!(
            std::fs::read(out.join(f)).unwrap(),
            std::fs::read(merged.join(f)).unwrap(),
            "{f}"
        );
    }
}

#[test]
fn an_error_row_is_a_tested_part_that_did_not_pass() {
    let lot = make_lot();
    let p = lot.path();
    // d01 passes every limit in the fixture (make_records.sh); its 10 MHz record is cut to 3 bytes.
    std::fs::write(p.join("records/d01/fin_10M_1.bin"), [1u8, 2, 3]).unwrap();
    let out = p.join("out");
    let limits = p.join("limits.csv");
    run_batch(p, &out, &["--limits", limits.to_str().unwrap()]);
    let y = rows(&out.join("yield.csv"));
    let row = |c: &str, m: &str| -> Vec<String> {
        y.iter()
            .find(|r| r[0] == c && r[1] == m)
            .unwrap_or_else(|| panic!("no yield row {c},{m}"))[2..]
            .to_vec()
    };
    // fin_10M: d01 error, d02 and d03 fail, d04 fails inside the guardband: 4 tested, none passed
    // (before, the error was left out of `tested`).
    assert_eq!(row("fin_10M", "*"), ["4", "0", "2", "1", "1", "0.0000"]);
    // The per-metric rows count it too: tested = passed + failed + guardband + errors.
    for r in y.iter().skip(1) {
        let n: Vec<usize> = r[2..7].iter().map(|s| s.parse().unwrap()).collect();
        assert_eq!(n[0], n[1] + n[2] + n[3] + n[4], "{r:?}");
    }
    // The lot's device row: d01 was tested and did not pass; no device passes.
    assert_eq!(row("*", "*"), ["4", "0", "2", "1", "1", "0.0000"]);
}

#[test]
fn cells_that_are_not_numbers_are_counted_by_compare_sweep_and_limits() {
    let lot = make_lot();
    let p = lot.path();
    let a = p.join("a");
    run_batch(p, &a, &[]);
    let b = p.join("b");
    copy_dir(&a, &b);
    // Hand-edit two SNR cells of run B: NaN and text.
    let mut s = rows(&b.join("summary.csv"));
    let k = s[0].iter().position(|h| h == "spectrum.snr_db").unwrap();
    s[1][k] = "NaN".into();
    s[3][k] = "n/a".into();
    let mut w = csv::Writer::from_path(b.join("summary.csv")).unwrap();
    for r in &s {
        w.write_record(r).unwrap();
    }
    w.flush().unwrap();
    let want = [
        "2 figure cell(s) that are not numbers left out",
        "line 2, column spectrum.snr_db: \"NaN\"",
        "line 4, column spectrum.snr_db: \"n/a\"",
    ];
    let compared = spurline()
        .arg("compare")
        .arg(&a)
        .arg(&b)
        .arg("--out")
        .arg(p.join("cmp"))
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&compared.stdout);
    for w in want {
        assert!(text.contains(w), "compare: {w}\n{text}");
    }
    let json = std::fs::read_to_string(p.join("cmp/comparison.json")).unwrap();
    assert!(json.contains("\\\"NaN\\\" is not a number"), "{json}");
    for args in [vec!["sweep".to_string()], vec!["limits".to_string()]] {
        let o = spurline()
            .args(&args)
            .arg(&b)
            .arg("--out")
            .arg(p.join(format!("o-{}", args[0])))
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&o.stderr);
        for w in want {
            assert!(err.contains(w), "{}: {w}\n{err}", args[0]);
        }
    }
}

#[test]
fn analyze_keeps_input_order_when_a_file_is_named_twice() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path();
    for (name, fin) in [("a.txt", "10M"), ("b.txt", "20M")] {
        spurline()
            .args(["synth", "--bits", "12", "--fs", "100M", "--samples", "4096"])
            .args(["--coherent-near", fin, "--output"])
            .arg(p.join(name))
            .assert()
            .success();
    }
    let o = spurline()
        .current_dir(p)
        .args([
            "analyze",
            "--json",
            "a.txt",
            "b.txt",
            "missing.txt",
            "a.txt",
        ])
        .output()
        .unwrap();
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let sources: Vec<&str> = v
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["source"].as_str().unwrap())
        .collect();
    assert_eq!(sources, ["a.txt", "b.txt", "missing.txt", "a.txt"]);
}
