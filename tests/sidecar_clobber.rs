//! Regression tests of the class "an analysis output saved as a record's sidecar": the sidecars the
//! tool writes carry a tag, a JSON file beside a record that is not a sidecar (empty, an
//! `analyze --json` array, an object of other keys) is named in a warning and not read, and the
//! record is still analysed when the command line gives what the sidecar held. (The tool's own rules;
//! facts of the trade, no source: a shell empties a file before the command writing to it starts.)

use std::path::Path;

fn spurline() -> assert_cmd::Command {
    assert_cmd::Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

fn synth(dir: &Path, name: &str) {
    spurline()
        .current_dir(dir)
        .args(["synth", "--bits", "12", "--fs", "100M", "--samples", "4096"])
        .args([
            "--coherent-near",
            "10M",
            "--noise-rms",
            "0.5",
            "--output",
            name,
        ])
        .assert()
        .success();
}

#[test]
fn a_written_sidecar_is_tagged() {
    let dir = tempfile::tempdir().unwrap();
    synth(dir.path(), "r.txt");
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("r.json")).unwrap()).unwrap();
    assert_eq!(v["sidecar"], serde_json::json!(spurline::SIDECAR_TAG));
    // And it is read back: the record needs no --bits or --fs.
    spurline()
        .current_dir(dir.path())
        .args(["analyze", "r.txt"])
        .assert()
        .success();
}

#[test]
fn json_beside_a_record_that_is_no_sidecar_is_named_and_not_read() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path();
    synth(p, "r.txt");
    // What `analyze --json r.txt > r.json` leaves: first an empty file (the shell), then the array.
    let array = spurline()
        .current_dir(p)
        .args(["analyze", "--json", "r.txt"])
        .output()
        .unwrap()
        .stdout;
    let results = serde_json::json!({"device": "d01", "conditions": []}).to_string();
    for (what, content, says) in [
        ("empty", &b""[..], "an empty file"),
        ("array", &array[..], "a JSON array"),
        (
            "other keys",
            results.as_bytes(),
            "keys no sidecar has: device, conditions",
        ),
        ("not JSON", b"fs = 100M\n", "not JSON"),
    ] {
        std::fs::write(p.join("r.json"), content).unwrap();
        // The settings the sidecar held, from the command line: the record is analysed, with a
        // warning naming the file.
        let o = spurline()
            .current_dir(p)
            .args(["analyze", "--json", "--bits", "12", "--fs", "100M", "r.txt"])
            .output()
            .unwrap();
        assert_eq!(
            o.status.code(),
            Some(0),
            "{what}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        let warnings = v[0]["warnings"].to_string();
        assert!(
            warnings.contains("r.json beside the record is not a metadata sidecar")
                && warnings.contains(says),
            "{what}: {warnings}"
        );
        // Without them, the error about the missing setting says why the sidecar was not read.
        let o = spurline()
            .current_dir(p)
            .args(["analyze", "r.txt"])
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2));
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(
            err.contains("not a metadata sidecar") && err.contains(says),
            "{what}: {err}"
        );
    }
}

#[test]
fn a_tagged_or_plain_sidecar_with_a_bad_value_is_still_an_error() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path();
    synth(p, "r.txt");
    for text in [
        r#"{"sidecar": 1, "bits": 12, "sample_rate_hz": 1e8, "typo": 1}"#,
        r#"{"bits": "twelve", "sample_rate_hz": 1e8}"#,
    ] {
        std::fs::write(p.join("r.json"), text).unwrap();
        let o = spurline()
            .current_dir(p)
            .args(["analyze", "r.txt"])
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2), "{text}");
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(err.contains("r.json: line 1"), "{text}: {err}");
    }
}

#[cfg(unix)]
#[test]
fn analysing_into_the_records_own_sidecar_is_named() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path();
    synth(p, "r.txt");
    // The shell's `> r.json`: the file emptied, then given as standard output.
    let out = std::fs::File::create(p.join("r.json")).unwrap();
    let o = std::process::Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
        .current_dir(p)
        .args(["analyze", "--json", "r.txt"])
        .stdout(out)
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("standard output is r.json, the metadata sidecar of r.txt"),
        "{err}"
    );
}
