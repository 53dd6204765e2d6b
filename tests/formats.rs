//! Records in every input format, written by general-purpose reference writers (numpy; see
//! tests/reference/make_format_refs.py and its manifest tests/reference/formats/formats.json), read back
//! to the same codes, and to bit-identical figures, as the plain integer text record of the same codes.
//!
//! Sources: the files themselves (numpy's .npy writer, numpy.lib.format; Python's float repr for the
//! decimal values; Python's wave module and scipy.io.wavfile for WAV, struct-packed WAVE_FORMAT_EXTENSIBLE
//! and RF64 headers, which scipy.io.wavfile reads back; 24-bit words sliced from numpy's 32-bit
//! integers and packed samples cut from a bit stream by numpy.packbits, as the script documents; raw
//! words in hexadecimal and binary text by Python's format()); the
//! expected codes are the text record the same script wrote. Offset binary for
//! unsigned dtypes (code + 2^(N-1)) and ±1.0 as full scale for float samples are common practice, no
//! source.

use serde_json::Value;
use spurline::{
    analyze, read_record, to_json, AnalysisSettings, ColumnSel, ErrorKind, IngestSettings,
    Location, Metadata,
};
use std::path::PathBuf;

use crate::tolerances::{VALUES_ABS, VALUES_REL};

fn dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/reference/formats")
}

fn manifest() -> Value {
    let text = std::fs::read_to_string(dir().join("formats.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn settings(bits: u32, fs: f64) -> IngestSettings {
    IngestSettings {
        meta: Metadata {
            sample_rate_hz: Some(fs),
            bits: Some(bits),
            ..Metadata::default()
        },
        ..IngestSettings::default()
    }
}

/// The figures of a record as JSON, without its source (which names the file), the full-scale range
/// given and the warnings (a record of values carries notes of its own; they are checked apart).
fn figures(path: &std::path::Path, s: &IngestSettings) -> Value {
    let r = read_record(path, s).unwrap().record;
    let a = analyze(&r, &AnalysisSettings::default()).unwrap().analysis;
    let mut all: Value = serde_json::from_str(&to_json(std::slice::from_ref(&a))).unwrap();
    let mut v = all[0].take();
    for key in ["source", "full_scale_vpp", "warnings"] {
        v.as_object_mut().unwrap().remove(key);
    }
    v
}

/// Compares two figure trees: numbers within [`VALUES_REL`] relative (plus [`VALUES_ABS`]),
/// everything else equal. `keep` picks which numeric keys count; the rest are skipped.
fn close(got: &Value, want: &Value, at: &str, keep: &dyn Fn(&str) -> bool, name: &str) {
    match (got, want) {
        (Value::Object(g), Value::Object(w)) => {
            assert_eq!(
                g.keys().collect::<Vec<_>>(),
                w.keys().collect::<Vec<_>>(),
                "{name}: keys at {at}"
            );
            for (k, gv) in g {
                close(gv, &w[k], &format!("{at}.{k}"), keep, name);
            }
        }
        (Value::Array(g), Value::Array(w)) => {
            assert_eq!(g.len(), w.len(), "{name}: length at {at}");
            for (i, (gv, wv)) in g.iter().zip(w).enumerate() {
                close(gv, wv, &format!("{at}[{i}]"), keep, name);
            }
        }
        (Value::Number(g), Value::Number(w)) => {
            let key = at.rsplit('.').next().unwrap_or(at);
            let key = key.split('[').next().unwrap_or(key);
            if keep(key) {
                let (g, w) = (g.as_f64().unwrap(), w.as_f64().unwrap());
                let allowed = VALUES_REL * g.abs().max(w.abs()) + VALUES_ABS;
                assert!((g - w).abs() <= allowed, "{name}: {at} = {g}, want {w}");
            }
        }
        _ => assert_eq!(got, want, "{name}: at {at}"),
    }
}

/// Keys whose value does not depend on the scale a record is analysed on: decibels, frequencies,
/// cycles, phases and the spectral ENOB forms (not the codes, nor the fit ENOB).
fn scale_free(key: &str) -> bool {
    !(key.ends_with("_codes") || key == "residual" || key.ends_with("_lsb"))
}

#[test]
fn every_reference_file_gives_the_text_record_codes_and_figures() {
    let m = manifest();
    let bits = m["bits"].as_u64().unwrap() as u32;
    let fs = m["sample_rate_hz"].as_f64().unwrap();
    let text_path = dir().join(m["text"].as_str().unwrap());
    let text = read_record(&text_path, &settings(bits, fs)).unwrap().record;
    assert_eq!(text.len(), m["samples"].as_u64().unwrap() as usize);
    let text_figures = figures(&text_path, &settings(bits, fs));
    let files = m["files"].as_array().unwrap();
    assert!(
        files.len() >= 30,
        "the manifest lists {} files",
        files.len()
    );
    let mut compared = [0usize; 3];
    for f in files {
        let name = f["file"].as_str().unwrap();
        let file_bits = f["bits"].as_u64().map(|b| b as u32);
        let shift = f["shift"].as_u64().unwrap_or(0) as u32;
        let mut s = settings(file_bits.unwrap_or(0), fs);
        s.meta.bits = file_bits;
        s.meta.full_scale_vpp = f["full_scale_vpp"].as_f64();
        s.unit = f["unit"].as_str().map(|u| u.parse().unwrap());
        if let Some(c) = f["column"].as_u64() {
            s.column = Some(ColumnSel::Index(c as usize));
        }
        if let Some(c) = f["column"].as_str() {
            s.column = Some(ColumnSel::Name(c.to_string()));
        }
        if let Some(c) = f["channel"].as_str() {
            s.channel = Some(spurline::parse_channel(c).unwrap());
        }
        // Raw words and packed samples name their layout (a .bin file is never guessed).
        let format = f["format"].as_str().unwrap();
        if !["npy", "wav", "text", "csv"].contains(&format) {
            s.format = Some(format.parse().unwrap());
            s.justify = f["justify"].as_str().map(|j| j.parse().unwrap());
        }
        // Of raw words and packed samples, and of words in hexadecimal text.
        s.coding = f["coding"].as_str().map(|c| c.parse().unwrap());
        // A WAV file states its sample rate: none is given.
        if f["fs_from_file"].as_bool() == Some(true) {
            s.meta.sample_rate_hz = None;
        }
        // No --format: the content (magic bytes) or the extension decides.
        let got = read_record(&dir().join(name), &s)
            .unwrap_or_else(|e| panic!("{name}: {e}"))
            .record;
        let got_figures = figures(&dir().join(name), &s);
        // A record of values has no end codes, so no clipping figures; the rest as for the codes.
        let mut text_figures = text_figures.clone();
        if !got.has_codes() {
            assert!(got_figures["clipping"].is_null(), "{name}");
            text_figures["clipping"] = Value::Null;
        }
        match f["compare"].as_str().unwrap_or("exact") {
            "exact" => {
                if got.has_codes() {
                    let want: Vec<i32> = text.codes.iter().map(|&c| c >> shift).collect();
                    assert_eq!(got.codes, want, "{name}");
                } else {
                    let want: Vec<f64> = text.codes.iter().map(|&c| f64::from(c)).collect();
                    assert_eq!(got.samples_f64(), want, "{name}");
                }
                if shift == 0 {
                    assert_eq!(got_figures, text_figures, "{name}");
                }
                compared[0] += 1;
            }
            "relative" => {
                assert!(!got.has_codes(), "{name}");
                close(&got_figures, &text_figures, "", &|_| true, name);
                compared[1] += 1;
            }
            "analogue" => {
                // No resolution: reported as 0 bits, no fit ENOB, the dB figures and the spectral
                // ENOB forms as for the 12-bit codes.
                assert_eq!(got_figures["bits"], 0, "{name}");
                assert!(got_figures["fit"]["enob_bits"].is_null(), "{name}");
                assert!(
                    got_figures["fit"]["uncertainty"]["enob_bits"].is_null(),
                    "{name}"
                );
                let mut g = got_figures.clone();
                let mut w = text_figures.clone();
                for v in [&mut g, &mut w] {
                    v.as_object_mut().unwrap().remove("bits");
                    v["fit"].as_object_mut().unwrap().remove("enob_bits");
                    v["fit"]["uncertainty"]
                        .as_object_mut()
                        .unwrap()
                        .remove("enob_bits");
                }
                close(&g, &w, "", &scale_free, name);
                compared[2] += 1;
            }
            other => panic!("{name}: compare {other:?}"),
        }
    }
    // Every kind of comparison ran.
    assert!(compared.iter().all(|&c| c > 0), "{compared:?}");
}

/// The notes of a record of values say what was skipped and what ENOB is referred to.
#[test]
fn a_record_of_values_says_what_it_skips() {
    let mut s = settings(12, 1e6);
    s.meta.full_scale_vpp = Some(1.5);
    let w = read_record(&dir().join("volts_f8_le.npy"), &s)
        .unwrap()
        .warnings;
    assert!(
        w[0].contains("no code grid") && w[0].contains("1.5 Vpp"),
        "{w:?}"
    );
    assert!(w[1].contains("12-bit"), "{w:?}");
    s.meta.bits = None;
    let w = read_record(&dir().join("volts_f8_le.npy"), &s)
        .unwrap()
        .warnings;
    assert!(w[1].contains("ENOB from SINAD alone"), "{w:?}");
}

/// Values with no full-scale range, and whole floats with one, are refused with the options to give.
#[test]
fn ambiguous_values_are_refused() {
    // The refusal names the line of the first value with a fraction (line 1 is the header).
    let text = std::fs::read_to_string(dir().join("volts.txt")).unwrap();
    let first_fraction = 2 + text
        .lines()
        .skip(1)
        .position(|l| l.parse::<f64>().unwrap().fract() != 0.0)
        .unwrap();
    let e = read_record(&dir().join("volts.txt"), &settings(12, 1e6)).unwrap_err();
    assert_eq!(e.kind, ErrorKind::BadSetting);
    assert_eq!(e.location, Location::Line(first_fraction));
    assert!(e.expected.contains("--full-scale-vpp"), "{}", e.expected);
    // A float array: the byte offset of the first such value.
    let e = read_record(&dir().join("volts_f8_le.npy"), &settings(12, 1e6)).unwrap_err();
    assert!(matches!(e.location, Location::Byte(_)), "{e}");
    let mut s = settings(12, 1e6);
    s.meta.full_scale_vpp = Some(2.0);
    let e = read_record(&dir().join("codes_f8_le.npy"), &s).unwrap_err();
    assert_eq!(e.location, Location::Key("unit".into()));
    // Told they are codes, the decimal text is refused at its first value's line (line 1 is the header).
    s.unit = Some(spurline::SampleUnit::Codes);
    let e = read_record(&dir().join("volts.txt"), &s).unwrap_err();
    assert_eq!(e.kind, ErrorKind::NotInteger);
    let first_decimal = 2 + text.lines().skip(1).position(|l| l.contains('.')).unwrap();
    assert_eq!(e.location, Location::Line(first_decimal));
    // A float array told to be codes: the first fraction at its byte offset.
    let e = read_record(&dir().join("volts_f8_le.npy"), &s).unwrap_err();
    assert_eq!(e.kind, ErrorKind::NotInteger);
    let Location::Byte(at) = e.location else {
        panic!("{e}")
    };
    // 128 header bytes (numpy pads version 1.0 headers to a multiple of 64), 8 bytes per value.
    assert_eq!((at - 128) % 8, 0, "{e}");
}

#[test]
fn a_two_channel_array_without_a_column_lists_the_columns() {
    let path = dir().join("two_channels_c.npy");
    let e = read_record(&path, &settings(12, 1e6)).unwrap_err();
    assert_eq!(e.kind, ErrorKind::BadSetting);
    assert_eq!(e.location, Location::Key("column".into()));
    assert!(
        e.expected.contains("0..=1") && e.expected.contains("--column"),
        "{}",
        e.expected
    );
    let mut s = settings(12, 1e6);
    s.column = Some(ColumnSel::Index(2));
    assert_eq!(read_record(&path, &s).unwrap_err().found, "column 2");
}

#[test]
fn codes_beyond_the_stated_resolution_name_their_byte_offset() {
    // The 12-bit codes read as 10-bit: the first code outside -512..=511 is refused at its offset,
    // 128 header bytes + 2 bytes per sample (numpy pads the version 1.0 header to 128 bytes).
    let m = manifest();
    let text = read_record(&dir().join("codes.txt"), &settings(12, 1e6))
        .unwrap()
        .record;
    let first = text
        .codes
        .iter()
        .position(|c| !(-512..=511).contains(c))
        .unwrap();
    let e = read_record(&dir().join("codes_i2_le.npy"), &settings(10, 1e6)).unwrap_err();
    assert_eq!(e.kind, ErrorKind::CodeOutOfRange);
    assert_eq!(e.location, Location::Byte(128 + 2 * first as u64));
    assert_eq!(e.found, text.codes[first].to_string());
    assert!(m["files"].as_array().is_some());
}

#[test]
fn a_npy_file_given_as_text_is_refused_in_one_sentence() {
    let mut s = settings(12, 1e6);
    s.format = Some(spurline::Format::Text);
    let e = read_record(&dir().join("codes_i2_le.npy"), &s).unwrap_err();
    assert_eq!(e.kind, ErrorKind::NotInteger);
    assert_eq!(e.location, Location::Byte(0));
    assert!(e.found.contains("--format npy"), "{}", e.found);
    assert!(e.to_string().len() < 200, "{e}");
}
