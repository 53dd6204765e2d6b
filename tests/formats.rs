//! Records in every input format, written by general-purpose reference writers (numpy; see
//! tests/reference/make_format_refs.py and its manifest tests/reference/formats/formats.json), read back
//! to the same codes, and to bit-identical figures, as the plain integer text record of the same codes.
//!
//! Sources: the files themselves (numpy's .npy writer, numpy.lib.format); the expected codes are the
//! text record the same script wrote. Offset binary for unsigned dtypes (code + 2^(N-1)) is common
//! practice, no source.

use serde_json::Value;
use spurline::{
    analyze, read_record, to_json, AnalysisSettings, ColumnSel, ErrorKind, IngestSettings,
    Location, Metadata,
};
use std::path::PathBuf;

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

/// The figures of a record as JSON, without its source (which names the file).
fn figures(path: &std::path::Path, s: &IngestSettings) -> Value {
    let r = read_record(path, s).unwrap().record;
    let a = analyze(&r, &AnalysisSettings::default()).unwrap().analysis;
    let mut all: Value = serde_json::from_str(&to_json(std::slice::from_ref(&a))).unwrap();
    let mut v = all[0].take();
    v.as_object_mut().unwrap().remove("source");
    v
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
        files.len() >= 10,
        "the manifest lists {} files",
        files.len()
    );
    for f in files {
        let name = f["file"].as_str().unwrap();
        let file_bits = f["bits"].as_u64().unwrap() as u32;
        let shift = f["shift"].as_u64().unwrap_or(0) as u32;
        let mut s = settings(file_bits, fs);
        if let Some(c) = f["column"].as_u64() {
            s.column = Some(ColumnSel::Index(c as usize));
        }
        // No --format: the content (magic bytes) decides.
        let got = read_record(&dir().join(name), &s)
            .unwrap_or_else(|e| panic!("{name}: {e}"))
            .record;
        let want: Vec<i32> = text.codes.iter().map(|&c| c >> shift).collect();
        assert_eq!(got.codes, want, "{name}");
        if shift == 0 {
            assert_eq!(figures(&dir().join(name), &s), text_figures, "{name}");
        }
    }
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
