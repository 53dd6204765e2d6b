//! The binary end to end: text and binary inputs, JSON contract, and every bad-input class of the ingest
//! stage (exit status 2, a message naming the file and the line or byte offset, no panic).

use crate::tolerances::NOISY_HARMONIC_DB;
use assert_cmd::Command;
use std::path::Path;

fn spurline() -> Command {
    Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

/// Writes a record with `spurline synth` and returns its path.
fn synth(dir: &Path, name: &str, extra: &[&str]) -> std::path::PathBuf {
    let path = dir.join(name);
    let mut cmd = spurline();
    cmd.args(["synth", "--output"]).arg(&path).args(extra);
    cmd.assert().success();
    path
}

fn run_err(args: &[&str], path: &Path) -> (i32, String) {
    let out = spurline()
        .arg("analyze")
        .arg(path)
        .args(args)
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr).to_string();
    assert!(!stderr.contains("panicked"), "panic: {stderr}");
    (out.status.code().unwrap_or(-1), stderr)
}

#[test]
fn analyzes_text_record_with_sidecar() {
    let dir = tempfile::tempdir().unwrap();
    let p = synth(
        dir.path(),
        "a.txt",
        &[
            "--bits",
            "12",
            "--noise-rms",
            "0.5",
            "--add-harmonic",
            "3:-75",
        ],
    );
    let out = spurline()
        .arg("analyze")
        .arg(&p)
        .arg("--json")
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let r = &v[0];
    // The JSON contract (README): these keys are always there.
    for key in [
        "source",
        "samples",
        "sample_rate_hz",
        "bits",
        "fit",
        "spectrum",
        "warnings",
        "error",
    ] {
        assert!(r.get(key).is_some(), "missing {key}");
    }
    for key in [
        "method",
        "frequency_hz",
        "amplitude_codes",
        "amplitude_dbfs",
        "phase_rad",
        "offset_codes",
        "residual_rms_codes",
        "sinad_db",
        "enob_bits",
        "iterations",
        "converged",
    ] {
        assert!(r["fit"].get(key).is_some(), "missing fit.{key}");
    }
    for key in [
        "window",
        "coherent",
        "records_averaged",
        "fundamental_hz",
        "fundamental_dbfs",
        "snr_db",
        "sinad_db",
        "thd_dbc",
        "sfdr_dbc",
        "sfdr_dbfs",
        "enob_bits",
        "enob_full_scale_bits",
        "noise_floor_dbfs",
        "nsd_dbfs_per_hz",
        "worst_spur",
        "harmonics",
        "leakage",
    ] {
        assert!(r["spectrum"].get(key).is_some(), "missing spectrum.{key}");
    }
    for key in ["frequency_hz", "dbc", "harmonic"] {
        assert!(
            r["spectrum"]["worst_spur"].get(key).is_some(),
            "missing worst_spur.{key}"
        );
    }
    let h3 = r["spectrum"]["harmonics"]
        .as_array()
        .unwrap()
        .iter()
        .find(|h| h["order"] == 3)
        .unwrap();
    assert!((h3["dbc"].as_f64().unwrap() + 75.0).abs() < NOISY_HARMONIC_DB);
    assert_eq!(r["bits"], 12);
    assert!(r["error"].is_null());
}

#[test]
fn analyzes_binary_layouts() {
    let dir = tempfile::tempdir().unwrap();
    for layout in ["i16le", "u16be", "i32le"] {
        let p = synth(
            dir.path(),
            &format!("b_{layout}.bin"),
            &["--bits", "14", "--layout", layout],
        );
        // The sidecar carries the layout; the command line can also give it.
        let out = spurline()
            .arg("analyze")
            .arg(&p)
            .args(["--format", layout, "--json"])
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{layout}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        assert!(
            v[0]["spectrum"]["sinad_db"].as_f64().unwrap() > 80.0,
            "{layout}"
        );
    }
}

#[test]
fn prints_a_readable_table() {
    let dir = tempfile::tempdir().unwrap();
    let p = synth(dir.path(), "t.txt", &["--bits", "10"]);
    let out = spurline().arg("analyze").arg(&p).output().unwrap();
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    for label in [
        "SNR",
        "SINAD",
        "THD",
        "SFDR",
        "ENOB",
        "noise floor",
        "sine-fit ENOB",
        "full-scale ENOB",
    ] {
        assert!(text.contains(label), "missing {label} in\n{text}");
    }
}

#[test]
fn one_bad_file_does_not_stop_the_others() {
    let dir = tempfile::tempdir().unwrap();
    let good = synth(dir.path(), "good.txt", &["--bits", "12"]);
    let bad = dir.path().join("missing.txt");
    let out = spurline()
        .arg("analyze")
        .arg(&bad)
        .arg(&good)
        .args(["--fs", "100M", "--bits", "12", "--json"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v.as_array().unwrap().len(), 2);
    assert!(v[0]["error"]["message"]
        .as_str()
        .unwrap()
        .contains("missing.txt"));
    assert!(v[1]["spectrum"]["snr_db"].as_f64().is_some());
}

/// Every bad-input class of the ingest stage: exit 2, the file named, the place named, no panic.
#[test]
fn bad_inputs_are_reported_with_their_place() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let write = |name: &str, bytes: &[u8]| {
        let p = d.join(name);
        std::fs::write(&p, bytes).unwrap();
        p
    };
    let meta = ["--fs", "1M", "--bits", "12"];
    let cases: Vec<(std::path::PathBuf, Vec<&str>, Vec<&str>)> = vec![
        (d.join("nope.txt"), meta.to_vec(), vec!["nope.txt"]),
        (write("empty.txt", b""), meta.to_vec(), vec!["empty.txt"]),
        (
            write("short.txt", b"1\n2\n3\n"),
            meta.to_vec(),
            vec!["short.txt", "samples"],
        ),
        (
            write("token.txt", b"1\n2\nx7\n4\n"),
            meta.to_vec(),
            vec!["token.txt", "line 3", "x7"],
        ),
        (
            write("range.txt", b"1\n2\n5000\n"),
            meta.to_vec(),
            vec!["range.txt", "line 3", "5000"],
        ),
        (
            write("odd.bin", &[0u8; 7]),
            vec!["--fs", "1M", "--bits", "12", "--format", "i16le"],
            vec!["odd.bin", "byte offset 6"],
        ),
        (
            write("bits.txt", b"1\n"),
            vec!["--fs", "1M", "--bits", "33"],
            vec!["bits"],
        ),
        (
            write("fs.txt", b"1\n"),
            vec!["--fs=-5", "--bits", "12"],
            vec!["sample_rate"],
        ),
        (write("nofs.txt", b"1\n"), vec!["--bits", "12"], vec!["fs"]),
    ];
    for (path, args, needles) in cases {
        let (code, stderr) = run_err(&args, &path);
        assert_eq!(code, 2, "{}: {stderr}", path.display());
        for n in needles {
            assert!(
                stderr.contains(n),
                "{}: '{n}' not in: {stderr}",
                path.display()
            );
        }
    }
    // A record with no tone in it: white noise only.
    let noise = synth(
        d,
        "noise.txt",
        &[
            "--bits",
            "12",
            "--amplitude-dbfs",
            "-200",
            "--noise-rms",
            "50",
        ],
    );
    let (code, stderr) = run_err(&[], &noise);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("noise.txt") && stderr.contains("tone"),
        "{stderr}"
    );
}

#[test]
fn clipping_is_warned_with_its_count() {
    let dir = tempfile::tempdir().unwrap();
    let p = synth(
        dir.path(),
        "clip.txt",
        &["--bits", "12", "--amplitude-dbfs", "1.0"],
    );
    let out = spurline()
        .arg("analyze")
        .arg(&p)
        .arg("--json")
        .output()
        .unwrap();
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let warnings = v[0]["warnings"].as_array().unwrap();
    assert!(
        warnings
            .iter()
            .any(|w| w.as_str().unwrap().contains("end codes")),
        "{warnings:?}"
    );
}

#[test]
fn demo_runs_and_writes_summaries() {
    let dir = tempfile::tempdir().unwrap();
    let out = spurline()
        .args(["demo", "--out"])
        .arg(dir.path())
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(dir.path().join("summary.csv").exists());
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("results.json")).unwrap())
            .unwrap();
    assert_eq!(json.as_array().unwrap().len(), 6);
}

#[test]
fn analyzes_a_csv_column_by_name() {
    let dir = tempfile::tempdir().unwrap();
    let p = synth(dir.path(), "c.txt", &["--bits", "12", "--noise-rms", "0.4"]);
    let codes: Vec<String> = std::fs::read_to_string(&p)
        .unwrap()
        .lines()
        .filter(|l| !l.starts_with('#'))
        .map(|l| l.to_string())
        .collect();
    let mut csv = String::from("time_s;adc_out;flag\n");
    for (i, c) in codes.iter().enumerate() {
        csv.push_str(&format!("{};{c};0\n", i as f64 * 1e-8));
    }
    let path = dir.path().join("capture.csv");
    std::fs::write(&path, csv).unwrap();
    let text = spurline()
        .arg("analyze")
        .arg(&p)
        .arg("--json")
        .output()
        .unwrap();
    let by_text: serde_json::Value = serde_json::from_slice(&text.stdout).unwrap();
    let out = spurline()
        .arg("analyze")
        .arg(&path)
        .args([
            "--fs", "100M", "--bits", "12", "--column", "adc_out", "--json",
        ])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let by_csv: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    // Same codes, same figures, whatever the container (detected ';' delimiter, column by name).
    assert_eq!(
        by_csv[0]["spectrum"]["sinad_db"],
        by_text[0]["spectrum"]["sinad_db"]
    );
    assert_eq!(by_csv[0]["samples"], 4096);
}

/// The binary's help of every subcommand ends with worked examples and then its exit status
/// (common practice for command-line tools, no source).
#[test]
fn every_subcommand_help_ends_with_examples_and_exit_status() {
    let top = spurline().arg("--help").output().unwrap();
    let top = String::from_utf8_lossy(&top.stdout).to_string();
    let commands: Vec<String> = top
        .split("Commands:\n")
        .nth(1)
        .expect("a commands list")
        .lines()
        .take_while(|l| l.starts_with("  "))
        .filter_map(|l| l.split_whitespace().next().map(str::to_string))
        .filter(|n| n != "help")
        .collect();
    assert!(commands.len() >= 16, "{commands:?}");
    for c in &commands {
        let out = spurline().args([c.as_str(), "--help"]).output().unwrap();
        assert!(out.status.success(), "{c}");
        let help = String::from_utf8_lossy(&out.stdout).to_string();
        let last = help
            .trim_end()
            .lines()
            .last()
            .unwrap_or_default()
            .to_string();
        assert!(last.starts_with("Exit status: 0 "), "{c}: {last}");
        let examples = help.split("\nExamples:\n").nth(1).unwrap_or_default();
        let n = examples
            .lines()
            .filter(|l| l.starts_with("  spurline "))
            .count();
        assert!((2..=3).contains(&n), "{c}: {n} examples");
    }
}

/// The renamed options of `synth` and `analyze` (`--harmonic` → `--add-harmonic`, `--report` →
/// `--out`) still work under their old names, give the same output, and warn.
#[test]
fn old_option_names_still_work_and_warn() {
    let dir = tempfile::tempdir().unwrap();
    let new = synth(dir.path(), "new.txt", &["--add-harmonic", "3:-70"]);
    let old = dir.path().join("old.txt");
    let out = spurline()
        .args(["synth", "--output"])
        .arg(&old)
        .args(["--harmonic", "3:-70"])
        .output()
        .unwrap();
    assert!(out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("--harmonic is now --add-harmonic"), "{err}");
    assert_eq!(std::fs::read(&new).unwrap(), std::fs::read(&old).unwrap());
    let report = dir.path().join("rep");
    let out = spurline()
        .arg("analyze")
        .arg(&new)
        .arg("--report")
        .arg(&report)
        .output()
        .unwrap();
    assert!(out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("--report is now --out"), "{err}");
    assert!(report.join("index.html").is_file());
}
