//! `spurline imd` and `spurline interleave` end to end: records written as text (one code per line)
//! from known analog formulas, analysed through the binary, figures checked against closed forms.

use crate::tolerances::*;
use assert_cmd::Command;
use spurline::{interleaved, two_tone, InterleavedSettings, ToneSpec, TwoToneSettings};
use std::path::{Path, PathBuf};

const FS: f64 = 100e6;
const N: usize = 16384;

fn spurline() -> Command {
    Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

fn write_codes(dir: &Path, name: &str, codes: &[i32]) -> PathBuf {
    let path = dir.join(name);
    let mut text = String::with_capacity(codes.len() * 8);
    for c in codes {
        text.push_str(&c.to_string());
        text.push('\n');
    }
    std::fs::write(&path, text).unwrap();
    path
}

fn tone(cycles: f64, dbfs: f64, phase: f64) -> ToneSpec {
    ToneSpec {
        frequency_hz: cycles * FS / N as f64,
        amplitude_dbfs: dbfs,
        phase_rad: phase,
    }
}

/// Two equal tones at −7 dBFS (coherent, odd cycle counts) through y = x + a2·x² + a3·x³, 18 bits.
fn two_tone_codes(a2: f64, a3: f64) -> Vec<i32> {
    two_tone(&TwoToneSettings {
        bits: 18,
        sample_rate_hz: FS,
        samples: N,
        tones: [tone(1001.0, -7.0, 0.4), tone(1203.0, -7.0, -1.3)],
        offset_codes: 0.0,
        a2,
        a3,
        noise_rms_codes: 0.0,
        seed: 2,
    })
    .unwrap()
    .codes
}

fn json_of(out: &std::process::Output) -> serde_json::Value {
    serde_json::from_slice(&out.stdout).unwrap_or_else(|e| {
        panic!(
            "not JSON ({e}): {}\n{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        )
    })
}

// Equal tones of amplitude A (full-scale normalised) through y = x + a2·x² + a3·x³: IM2 products of
// amplitude a2·A², IM3 products of (3/4)·a3·A³, and each tone grows to A·(1 + (9/4)·a3·A²)
// (trigonometric product identities, handbook; derived in src/analyses/imd.rs). The products fold as the
// standard formulas m·f1 + n·f2 say.
#[test]
fn imd_json_matches_the_polynomial() {
    let dir = tempfile::tempdir().unwrap();
    let (a2, a3) = (1e-3, 2e-3);
    let p = write_codes(dir.path(), "two.txt", &two_tone_codes(a2, a3));
    let out = spurline()
        .arg("imd")
        .arg(&p)
        .args(["--fs", "100M", "--bits", "18", "--json"])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v = json_of(&out);
    let r = &v[0];
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
    assert!(r["error"].is_null());
    let sp = &r["spectrum"];
    let a = 10f64.powf(-7.0 / 20.0);
    let tone_amp = a * (1.0 + 2.25 * a3 * a * a);
    let im2 = 20.0 * (a2 * a * a / tone_amp).log10();
    let im3 = 20.0 * (0.75 * a3 * a.powi(3) / tone_amp).log10();
    let f1 = 1001.0 * FS / N as f64;
    let f2 = 1203.0 * FS / N as f64;
    let want = [
        ("f2-f1", f2 - f1, im2),
        ("f1+f2", f1 + f2, im2),
        ("2f1-f2", 2.0 * f1 - f2, im3),
        ("2f2-f1", 2.0 * f2 - f1, im3),
        ("2f1+f2", 2.0 * f1 + f2, im3),
        ("2f2+f1", 2.0 * f2 + f1, im3),
    ];
    let products = sp["products"].as_array().unwrap();
    for (name, freq, dbc) in want {
        let p = products.iter().find(|p| p["name"] == name).unwrap();
        // Placed from the fitted frequencies: within 1e-6 of a bin of the exact product.
        assert!(
            (p["frequency_hz"].as_f64().unwrap() - freq).abs()
                < PRODUCT_PLACEMENT_BINS * FS / N as f64,
            "{name}"
        );
        let got = p["dbc"].as_f64().unwrap();
        assert!((got - dbc).abs() < IMD_DB, "{name}: {got} vs {dbc}");
        assert_eq!(p["masked"], false);
        assert_eq!(p["at_floor"], false);
    }
    assert!((sp["im2_dbc"].as_f64().unwrap() - im2).abs() < IMD_DB);
    assert!((sp["im3_dbc"].as_f64().unwrap() - im3).abs() < IMD_DB);
    // The two-tone SFDR is set by the larger product family: IM2 here, a2·A = 4.47e-4 against
    // (3/4)·a3·A² = 2.99e-4 relative to the tone (the harmonics are half and a quarter of those).
    let worst = im2.max(im3);
    assert!((sp["sfdr_dbc"].as_f64().unwrap() + worst).abs() < IMD_DB);
    assert_eq!(sp["window"], "rectangular");
    assert_eq!(r["fit"]["tones"].as_array().unwrap().len(), 2);
}

#[test]
fn imd_prints_tables_and_goes_on_after_a_bad_file() {
    let dir = tempfile::tempdir().unwrap();
    let good = write_codes(dir.path(), "two.txt", &two_tone_codes(1e-3, 1e-3));
    // One tone only: not a two-tone record.
    let single = two_tone(&TwoToneSettings {
        bits: 18,
        sample_rate_hz: FS,
        samples: N,
        tones: [tone(1001.0, -1.0, 0.0), tone(1203.0, -400.0, 0.0)],
        offset_codes: 0.0,
        a2: 0.0,
        a3: 0.0,
        noise_rms_codes: 0.0,
        seed: 2,
    })
    .unwrap();
    let one = write_codes(dir.path(), "one.txt", &single.codes);
    let missing = dir.path().join("missing.txt");
    let out = spurline()
        .arg("imd")
        .args([&good, &one, &missing, &good])
        .args(["--fs", "100M", "--bits", "18", "--json"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(!stderr.contains("panicked"), "{stderr}");
    assert!(
        stderr.contains("one.txt") && stderr.contains("second tone"),
        "{stderr}"
    );
    let v = json_of(&out);
    let arr = v.as_array().unwrap();
    assert_eq!(arr.len(), 4);
    assert!(arr[0]["error"].is_null() && arr[3]["error"].is_null());
    assert_eq!(arr[1]["error"]["kind"], "no_tone");
    assert_eq!(arr[2]["error"]["kind"], "io");
    assert!(arr[1]["spectrum"].is_null());
    // Same record twice, same figures (determinism).
    assert_eq!(arr[0]["spectrum"], arr[3]["spectrum"]);

    let out = spurline()
        .arg("imd")
        .arg(&good)
        .args(["--fs", "100M", "--bits", "18"])
        .output()
        .unwrap();
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    for label in [
        "tone f1", "tone f2", "IM2", "IM3", "SFDR", "2f1-f2", "2f2+f1",
    ] {
        assert!(text.contains(label), "'{label}' not in:\n{text}");
    }
}

/// M = 2 channels with gains 1 ± g/2 and offsets ±o: a spur at fs/2 − fin of relative amplitude g/2
/// (standard small-mismatch analysis, from memory; exact for a pure gain error) and one at fs/2 of
/// amplitude o (the alternating offset (−1)^n·o, power o² at Nyquist).
#[test]
fn interleave_json_names_spurs_and_channel_errors() {
    let dir = tempfile::tempdir().unwrap();
    let (g, o) = (2e-3, 20.0);
    let codes = interleaved(&InterleavedSettings {
        bits: 16,
        sample_rate_hz: FS,
        samples: N,
        tone: tone(3277.0, -1.0, 0.7),
        offset_codes: 0.0,
        channel_offsets_codes: vec![o, -o],
        channel_gain_errors: vec![g / 2.0, -g / 2.0],
        channel_timing_errors_s: vec![0.0, 0.0],
        noise_rms_codes: 0.0,
        seed: 3,
    })
    .unwrap()
    .codes;
    let p = write_codes(dir.path(), "tiadc.txt", &codes);
    let out = spurline()
        .arg("interleave")
        .arg(&p)
        .args(["--channels", "2", "--fs", "100M", "--bits", "16", "--json"])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v = json_of(&out);
    let r = &v[0];
    assert_eq!(r["channels"], 2);
    let spurs = r["spectrum"]["spurs"].as_array().unwrap();
    let find = |name: &str| spurs.iter().find(|s| s["name"] == name).unwrap();
    let gain_spur = find("1*fs/2+fin");
    let fin = 3277.0 * FS / N as f64;
    assert!(
        (gain_spur["frequency_hz"].as_f64().unwrap() - (FS / 2.0 - fin)).abs() < IMAGE_PLACEMENT_HZ
    );
    let want = 20.0 * (g / 2.0).log10();
    let got = gain_spur["dbc"].as_f64().unwrap();
    assert!((got - want).abs() < INTERLEAVE_DB, "{got} vs {want}");
    let amp = 32768.0 * 10f64.powf(-1.0 / 20.0);
    let offset_spur = find("1*fs/2");
    let want = 10.0 * (o * o / (amp * amp / 2.0)).log10();
    let got = offset_spur["dbc"].as_f64().unwrap();
    assert!((got - want).abs() < INTERLEAVE_DB, "{got} vs {want}");
    // Channel estimates: the least-squares noise of a channel's offset and relative gain is under
    // 0.01 codes and 1e-6 with 8192 samples of quantisation noise (σ/√L, σ·√(2/L)/A; from memory).
    let est = r["channel_estimates"].as_array().unwrap();
    // Channels are numbered from 1, as `--channel K/M` counts them: channel 1 holds samples 0, 2, ...
    // (the +o offset above), channel 2 samples 1, 3, ...
    let numbers: Vec<u64> = est.iter().map(|e| e["channel"].as_u64().unwrap()).collect();
    assert_eq!(numbers, [1, 2]);
    for (e, sign) in est.iter().zip([1.0, -1.0]) {
        assert!((e["offset_codes"].as_f64().unwrap() - sign * o).abs() < CHANNEL_OFFSET_CODES);
        assert!((e["gain_error"].as_f64().unwrap() - sign * g / 2.0).abs() < CHANNEL_GAIN);
        assert!(e["timing_error_s"].as_f64().unwrap().abs() < CHANNEL_TIMING_S);
    }

    let out = spurline()
        .arg("interleave")
        .arg(&p)
        .args(["--channels", "2", "--fs", "100M", "--bits", "16"])
        .output()
        .unwrap();
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    for label in [
        "2 channels",
        "gain error",
        "timing error",
        "1*fs/2+fin",
        "predicted dBc",
    ] {
        assert!(text.contains(label), "'{label}' not in:\n{text}");
    }
}

#[test]
fn interleave_refuses_bad_channel_counts() {
    let dir = tempfile::tempdir().unwrap();
    let p = write_codes(dir.path(), "r.txt", &two_tone_codes(0.0, 0.0));
    // --channels is required (a usage error: clap's exit status 2).
    let out = spurline()
        .arg("interleave")
        .arg(&p)
        .args(["--fs", "100M", "--bits", "18"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--channels"));
    let out = spurline()
        .arg("interleave")
        .arg(&p)
        .args(["--channels", "1", "--fs", "100M", "--bits", "18", "--json"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("'channels'") && !stderr.contains("panicked"),
        "{stderr}"
    );
    assert_eq!(json_of(&out)[0]["error"]["kind"], "bad_setting");
}

/// Loads a page in headless chromium and returns the DOM it built, failing on any console message;
/// `None` (with a loud SKIPPED line) without chromium, a failure when CI is set (.ci/run installs it).
fn dom_in_browser(page: &Path) -> Option<String> {
    let (dom, console) = crate::pages::browser_dom(page)?;
    assert!(
        console.is_empty(),
        "{}: console {console:?}",
        page.display()
    );
    Some(dom)
}

/// `imd --out` and `interleave --out` write a page in the run page's shell with each record's
/// marked spectrum inline and as a file; a bad record is a failed row and the rest go on; the page
/// renders in a browser as our SVG with no script.
#[test]
fn imd_and_interleave_write_their_pages() {
    let dir = tempfile::tempdir().unwrap();
    let good = write_codes(dir.path(), "two.txt", &two_tone_codes(1e-3, 1e-3));
    let bad = dir.path().join("bad.txt");
    std::fs::write(&bad, "1\n2\nthree\n").unwrap();
    let out = dir.path().join("imd-report");
    let st = spurline()
        .arg("imd")
        .arg(&good)
        .arg(&bad)
        .args(["--fs", "100M", "--bits", "18", "--out"])
        .arg(&out)
        .output()
        .unwrap();
    // One bad file: exit status 2 (an error), the good record still reported.
    assert_eq!(
        st.status.code(),
        Some(2),
        "{}",
        String::from_utf8_lossy(&st.stderr)
    );
    let page = std::fs::read_to_string(out.join("index.html")).unwrap();
    assert!(page.contains("<table id=\"records\">") && page.contains("<tr class=\"fail\""));
    let svg = std::fs::read_to_string(out.join("two.txt.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
    let texts: Vec<&str> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text())
        .map(str::trim)
        .collect();
    // 2f1 − f2 and 2f2 − f1: the third-order products of the standard formulas (handbook).
    for want in ["f1", "f2", "2f1−f2", "2f2−f1", "order 3"] {
        assert!(texts.contains(&want), "{want}: {texts:?}");
    }

    let codes = interleaved(&InterleavedSettings {
        bits: 16,
        sample_rate_hz: FS,
        samples: N,
        tone: tone(3277.0, -1.0, 0.7),
        offset_codes: 0.0,
        channel_offsets_codes: vec![20.0, -20.0],
        channel_gain_errors: vec![1e-3, -1e-3],
        channel_timing_errors_s: vec![0.0, 0.0],
        noise_rms_codes: 0.5,
        seed: 3,
    })
    .unwrap()
    .codes;
    let p = write_codes(dir.path(), "tiadc.txt", &codes);
    let out2 = dir.path().join("il-report");
    let st = spurline()
        .arg("interleave")
        .arg(&p)
        .args(["--channels", "2", "--fs", "100M", "--bits", "16", "--out"])
        .arg(&out2)
        .output()
        .unwrap();
    assert!(
        st.status.success(),
        "{}",
        String::from_utf8_lossy(&st.stderr)
    );
    let svg = std::fs::read_to_string(out2.join("tiadc.txt.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
    let texts: Vec<&str> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text())
        .map(str::trim)
        .collect();
    // The offset spur at fs/2 and the gain image at fs/2 − fin (interleaving spur places, common
    // practice, no source).
    for want in ["fin", "1·fs/2", "1·fs/2+fin"] {
        assert!(texts.contains(&want), "{want}: {texts:?}");
    }

    for page in [out.join("index.html"), out2.join("index.html")] {
        let Some(dom) = dom_in_browser(&page) else {
            continue;
        };
        assert!(dom.contains("<table id=\"records\">"), "no table");
        assert!(dom.contains("<svg"), "no plot");
        assert!(dom.matches("<polyline").count() >= 1);
        assert!(!dom.to_ascii_lowercase().contains("<script"));
    }
}

/// `interleave --channel K/M` would analyse one channel's samples as if they were the whole
/// interleaved record: it is refused with a message naming the option, not answered with a
/// meaningless fit.
#[test]
fn interleave_refuses_one_channel_of_the_record() {
    let dir = tempfile::tempdir().unwrap();
    let p = write_codes(dir.path(), "r.txt", &two_tone_codes(0.0, 0.0));
    let out = spurline()
        .arg("interleave")
        .arg(&p)
        .args([
            "--channels",
            "4",
            "--channel",
            "2/4",
            "--fs",
            "100M",
            "--bits",
            "16",
        ])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("channel") && err.contains("2/4"), "{err}");
    assert!(out.stdout.is_empty());
}

/// `imd` has no --fit option, so its help does not mention one.
#[test]
fn imd_help_names_only_its_own_options() {
    let out = spurline().args(["imd", "--help"]).output().unwrap();
    let help = String::from_utf8_lossy(&out.stdout);
    assert!(out.status.success());
    assert!(!help.contains("--fit"), "{help}");
}
