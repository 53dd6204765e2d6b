//! `spurline linearity` through the binary, on records from `spurline synth` with known code widths:
//! recovered DNL and missing codes, accumulation over records, the overdrive refusal, the sample-count
//! advice, the plots, and bad input (exit 2, no panic).

use crate::tolerances::{DNL_STANDARD_ERRORS, ROUNDING};
use assert_cmd::Command;
use spurline::{transition_levels, SynthSettings};
use std::f64::consts::PI;
use std::path::{Path, PathBuf};

fn spurline() -> Command {
    Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

/// A non-coherent input: fin/fs = (3 − √5)/2, a golden-ratio fraction, spreads the phases evenly
/// (equidistribution of n·α mod 1, Weyl).
const FIN: &str = "38.196601125M";

fn synth(dir: &Path, name: &str, extra: &[&str]) -> PathBuf {
    let path = dir.join(name);
    let out = spurline()
        .args(["synth", "--output"])
        .arg(&path)
        .args(["--fs", "100M", "--fin", FIN])
        .args(extra)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    path
}

fn linearity(files: &[&Path], extra: &[&str]) -> std::process::Output {
    let out = spurline()
        .arg("linearity")
        .args(files)
        .args(extra)
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(!stderr.contains("panicked"), "panic: {stderr}");
    out
}

const PATTERN: [f64; 5] = [0.25, -0.2, 0.1, -0.3, 0.15];

#[test]
fn recovers_known_widths_over_two_records() {
    let dir = tempfile::tempdir().unwrap();
    let pattern = "0.25,-0.2,0.1,-0.3,0.15";
    let common = [
        "--bits",
        "8",
        "--samples",
        "500000",
        "--amplitude-dbfs",
        "0.5",
        "--noise-rms",
        "0.2",
        "--dnl-pattern",
        pattern,
        "--missing-code",
        "-37",
        "--missing-code",
        "50",
    ];
    let a = synth(
        dir.path(),
        "a.txt",
        &[&common[..], &["--seed", "1"]].concat(),
    );
    let b = synth(
        dir.path(),
        "b.txt",
        &[&common[..], &["--seed", "2", "--phase", "1.3"]].concat(),
    );
    let out = linearity(&[&a, &b], &["--json"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["samples"], 1_000_000);
    assert_eq!(v["sources"].as_array().unwrap().len(), 2);
    assert_eq!(v["missing_codes"], serde_json::json!([-37, 50]));
    for key in [
        "sine", "low_end", "high_end", "advice", "terminal", "best_fit", "codes",
    ] {
        assert!(v.get(key).is_some(), "missing {key}");
    }
    // Truth: the simulator's own transition levels for the same settings.
    let truth = transition_levels(&SynthSettings {
        bits: 8,
        dnl_pattern_lsb: PATTERN.to_vec(),
        missing_codes: vec![-37, 50],
        ..SynthSettings::default()
    })
    .unwrap();
    // Four standard errors from the advisor formula β(S) = Z·√(π·2^(N−1)/S) at Z = 1.96 (IEEE Std
    // 1241, from memory): 4·β/1.96 = 4·√(π·128/10^6) ≈ 0.080 LSB.
    let tol = DNL_STANDARD_ERRORS * (PI * 128.0 / 1e6).sqrt();
    let codes = v["codes"].as_array().unwrap();
    assert_eq!(codes.len(), 256);
    let mut outside = 0;
    let mut n = 0;
    for c in codes {
        let Some(dnl) = c["dnl_terminal_lsb"].as_f64() else {
            continue;
        };
        let k = (c["code"].as_i64().unwrap() + 128) as usize;
        // Ends pinned at their ideal places, so the terminal code width is 1 LSB.
        let want = truth[k] - truth[k - 1] - 1.0;
        n += 1;
        if (dnl - want).abs() >= tol {
            outside += 1;
        }
    }
    assert_eq!(n, 254);
    assert!(outside <= 2, "{outside} of {n} codes outside ±{tol} LSB");
    // The worst DNL is the lower missing code, at −1.
    assert_eq!(v["terminal"]["dnl_worst"]["code"], -37);
    assert!((v["terminal"]["dnl_worst"]["value_lsb"].as_f64().unwrap() + 1.0).abs() < ROUNDING);
    // Deterministic: the same records give the same bytes.
    let again = linearity(&[&a, &b], &["--json"]);
    assert_eq!(again.stdout, out.stdout);
}

#[test]
fn refuses_a_sine_that_does_not_overdrive() {
    let dir = tempfile::tempdir().unwrap();
    let p = synth(
        dir.path(),
        "low.txt",
        &[
            "--bits",
            "8",
            "--samples",
            "200000",
            "--amplitude-dbfs",
            "-1",
        ],
    );
    let out = linearity(&[&p], &[]);
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("low.txt"), "{stderr}");
    assert!(stderr.contains("overdrives both ends"), "{stderr}");
    assert!(
        stderr.contains("code -128: no hits") && stderr.contains("code 127"),
        "{stderr}"
    );
    assert!(out.stdout.is_empty());
}

#[test]
fn sample_count_advice_in_the_table() {
    // S ≥ π·2^(N−1)·Z²/β² (IEEE Std 1241, from memory): 10 bits, 0.1 LSB, 95 % → 617 897
    // (Z = 1.959963984540054, scipy.stats.norm.ppf(0.975)).
    let z = 1.959963984540054f64;
    let need = (PI * 512.0 * z * z / 0.01).ceil() as u64;
    assert_eq!(need, 617_897);
    let dir = tempfile::tempdir().unwrap();
    let p = synth(
        dir.path(),
        "ten.txt",
        &[
            "--bits",
            "10",
            "--samples",
            "100000",
            "--amplitude-dbfs",
            "0.5",
        ],
    );
    let out = linearity(&[&p], &[]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(text.contains(&format!("{need} needed")), "{text}");
    assert!(text.contains("100000 given: NOT enough"), "{text}");
    // A looser request is met: β = 0.3 LSB needs ⌈617 896.9/9⌉ = 68 656.
    let out = linearity(&[&p], &["--dnl-uncertainty", "0.3"]);
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(
        text.contains("68656 needed") && text.contains(": enough"),
        "{text}"
    );
    // Bad advice settings are refused before reading.
    for args in [["--confidence", "1.5"], ["--dnl-uncertainty", "0"]] {
        let out = linearity(&[&p], &args);
        assert_eq!(out.status.code(), Some(2), "{args:?}");
    }
}

#[test]
fn plots_are_svg_with_missing_codes_marked() {
    let dir = tempfile::tempdir().unwrap();
    let p = synth(
        dir.path(),
        "m.txt",
        &[
            "--bits",
            "8",
            "--samples",
            "200000",
            "--amplitude-dbfs",
            "0.5",
            "--missing-code",
            "10",
        ],
    );
    let plots = dir.path().join("plots");
    let out = linearity(&[&p], &["--out", plots.to_str().unwrap()]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    for (name, title) in [("dnl.svg", "DNL"), ("inl.svg", "INL")] {
        let text = std::fs::read_to_string(plots.join(name)).unwrap();
        let doc = roxmltree::Document::parse(&text).unwrap();
        assert_eq!(doc.root_element().tag_name().name(), "svg");
        let texts: Vec<&str> = doc
            .descendants()
            .filter(|n| n.has_tag_name("text"))
            .filter_map(|n| n.text())
            .collect();
        assert!(texts.iter().any(|t| t.contains(title)), "{name}: {texts:?}");
        assert!(texts.iter().any(|t| t.contains("code")), "{name}");
        let lines = doc
            .descendants()
            .filter(|n| n.has_tag_name("polyline") || n.has_tag_name("path"))
            .count();
        assert!(lines >= 2, "{name}: {lines} curves");
        let circles = doc
            .descendants()
            .filter(|n| n.has_tag_name("circle"))
            .count();
        // One marker per missing code plus the legend's, on the DNL plot only.
        assert_eq!(circles, if name == "dnl.svg" { 2 } else { 0 }, "{name}");
    }
}

#[test]
fn bad_input_exits_2_naming_the_file() {
    let dir = tempfile::tempdir().unwrap();
    // A code outside the 8-bit range, given on line 3.
    let bad = dir.path().join("bad.txt");
    std::fs::write(&bad, "1\n2\n300\n").unwrap();
    let out = linearity(&[&bad], &["--bits", "8"]);
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("bad.txt") && stderr.contains("line 3"),
        "{stderr}"
    );
    // A missing file is reported with its path, and so is every other bad file.
    let missing = dir.path().join("nope.txt");
    let out = linearity(&[&missing, &bad], &["--bits", "8"]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        stderr.contains("nope.txt") && stderr.contains("bad.txt"),
        "{stderr}"
    );
    // Records of different resolutions do not share a histogram.
    let a = synth(
        dir.path(),
        "a8.txt",
        &["--bits", "8", "--amplitude-dbfs", "0.5"],
    );
    let b = synth(
        dir.path(),
        "b9.txt",
        &["--bits", "9", "--amplitude-dbfs", "0.5"],
    );
    let out = linearity(&[&a, &b], &[]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("b9.txt"));
    // Too many bits for a histogram.
    let wide = synth(
        dir.path(),
        "w.txt",
        &["--bits", "24", "--amplitude-dbfs", "0.5"],
    );
    let out = linearity(&[&wide], &[]);
    assert_eq!(out.status.code(), Some(2));
    // Without a sidecar and without --fs the record is still read (the histogram needs no rate).
    let p = synth(
        dir.path(),
        "plain.txt",
        &[
            "--bits",
            "8",
            "--amplitude-dbfs",
            "0.5",
            "--samples",
            "50000",
        ],
    );
    std::fs::remove_file(dir.path().join("plain.json")).unwrap();
    let out = linearity(&[&p], &["--bits", "8"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}
