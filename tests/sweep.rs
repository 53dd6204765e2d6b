//! Sweeps over the demo's production lots: the jitter estimate recovers the aperture jitter that the
//! simulated boards were given (jitter-limited SNR, −20·log10(2π·f·σ), handbook formula).

use crate::tolerances::{JITTER_REL_REV_A, JITTER_REL_REV_B};
use assert_cmd::Command;

#[test]
fn sweep_recovers_the_simulated_jitter() {
    let dir = tempfile::tempdir().unwrap();
    let bin = || Command::new(assert_cmd::cargo::cargo_bin!("spurline"));
    let demo = bin()
        .args(["demo", "--out"])
        .arg(dir.path())
        .output()
        .unwrap();
    assert!(
        demo.status.success(),
        "{}",
        String::from_utf8_lossy(&demo.stderr)
    );
    // rev-a was simulated with 900 fs, rev-b with 250 fs (src/cli/demo_lot.rs). Three frequencies,
    // twelve devices: the lot mean's estimate is good to ~10 % (rev-b's jitter sits nearer the noise
    // floor, so its estimate is looser).
    for (rev, sigma, tol) in [
        ("rev-a", 900e-15, JITTER_REL_REV_A),
        ("rev-b", 250e-15, JITTER_REL_REV_B),
    ] {
        let run = dir.path().join(format!("lot-{rev}/results"));
        let out = dir.path().join(format!("sweep-{rev}"));
        let o = bin()
            .arg("sweep")
            .arg(&run)
            .arg("--out")
            .arg(&out)
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let v: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(out.join("sweep.json")).unwrap())
                .unwrap();
        let lot = &v["summaries"][0];
        assert_eq!(lot["device"], "lot mean");
        let j = lot["jitter_rms_s"].as_f64().unwrap();
        assert!((j / sigma - 1.0).abs() < tol, "{rev}: {j}");
        for f in [
            "sweep.csv",
            "sweep_summary.csv",
            "sinad-vs-frequency.svg",
            "snr-vs-frequency.svg",
        ] {
            assert!(out.join(f).exists(), "{f}");
        }
        roxmltree::Document::parse(
            &std::fs::read_to_string(out.join("snr-vs-frequency.svg")).unwrap(),
        )
        .unwrap();
    }
}

/// The demo's revision comparison overlays one representative spectrum per condition and revision.
#[test]
fn demo_comparison_overlays_representative_spectra() {
    let dir = tempfile::tempdir().unwrap();
    let demo = Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
        .args(["demo", "--out"])
        .arg(dir.path())
        .output()
        .unwrap();
    assert!(demo.status.success());
    let html = std::fs::read_to_string(dir.path().join("compare/comparison.html")).unwrap();
    assert!(html.contains("Representative spectra"));
    assert!(!html.contains("no overlay"), "an overlay is missing");
    for cond in ["fin_05M", "fin_21M", "fin_47M"] {
        assert!(html.contains(&format!("{cond}: A d")), "{cond}");
    }
}
