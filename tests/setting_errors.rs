//! Regression tests of the class "an error blames the record when a setting is the cause": a stated
//! input frequency with no tone near it names the setting, where the record's tone is, and how far
//! off the setting is. (Facts of the trade, no source: a coherent tone of cycle count J sits in bin J,
//! and fs/N is the bin width.)

fn spurline() -> assert_cmd::Command {
    assert_cmd::Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

#[test]
fn a_wrong_fin_is_named_as_the_cause() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path();
    // 4096 samples at 100 MHz: bins of 24414.0625 Hz; a coherent tone near 10 MHz.
    spurline()
        .current_dir(p)
        .args(["synth", "--bits", "12", "--fs", "100M", "--samples", "4096"])
        .args([
            "--coherent-near",
            "10M",
            "--noise-rms",
            "0.5",
            "--output",
            "r.bin",
        ])
        .args(["--layout", "i16le"])
        .assert()
        .success();
    let sidecar: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(p.join("r.json")).unwrap()).unwrap();
    let tone = sidecar["fin_hz"].as_f64().unwrap();
    let bin = 100e6 / 4096.0;
    let stated = 31e6;
    let o = spurline()
        .current_dir(p)
        .args(["analyze", "--fin", "31M", "r.bin"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("'fin_hz'") && err.contains("stated input frequency 31.0000 MHz"),
        "{err}"
    );
    let bins = format!("{:+.1} bins", (tone - stated) / bin);
    assert!(err.contains(&bins), "{bins}: {err}");
    assert!(err.contains("correct the input frequency setting"), "{err}");
    // The same stale value in the sidecar names the sidecar's key the same way.
    let mut s = sidecar.clone();
    s["fin_hz"] = serde_json::json!(stated);
    std::fs::write(p.join("r.json"), s.to_string()).unwrap();
    let o = spurline()
        .current_dir(p)
        .args(["analyze", "r.bin"])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("the sidecar's") && err.contains(&bins),
        "{err}"
    );
    // And a record with no tone at all still says so about the record.
    std::fs::write(p.join("flat.bin"), vec![0u8; 8192]).unwrap();
    let o = spurline()
        .current_dir(p)
        .args([
            "analyze", "--bits", "12", "--fs", "100M", "--format", "i16le", "--fin", "31M",
            "flat.bin",
        ])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!err.contains("stated input frequency"), "{err}");
}
