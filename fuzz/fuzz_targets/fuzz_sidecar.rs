//! cargo-fuzz target: the metadata sidecar. The input is written as the sidecar of a valid record (text,
//! CSV or binary, picked by the first byte) and read alone and with the record.
#![no_main]

use libfuzzer_sys::fuzz_target;
use spurline::{read_record, read_sidecar, IngestSettings, Metadata};
use std::sync::OnceLock;

#[allow(dead_code)]
#[path = "../../tests/fuzz_props/invariants.rs"]
mod invariants;

/// One folder for the whole run; each input overwrites the files in it.
fn folder() -> &'static tempfile::TempDir {
    static DIR: OnceLock<tempfile::TempDir> = OnceLock::new();
    DIR.get_or_init(|| tempfile::tempdir().expect("a temporary folder"))
}

/// 64 codes of 8 bits in the record's format.
fn record_bytes(ext: &str) -> Vec<u8> {
    let codes: Vec<i32> = (0..64).map(|i| (i * 37 % 256) - 128).collect();
    match ext {
        "txt" => codes
            .iter()
            .map(|c| format!("{c}\n"))
            .collect::<String>()
            .into_bytes(),
        "csv" => ("code,x\n".to_string()
            + &codes.iter().map(|c| format!("{c},1\n")).collect::<String>())
            .into_bytes(),
        _ => codes
            .iter()
            .flat_map(|&c| (c as i16).to_le_bytes())
            .collect(),
    }
}

fuzz_target!(|data: &[u8]| {
    let Some((&pick, sidecar)) = data.split_first() else {
        return;
    };
    let ext = ["txt", "csv", "bin"][usize::from(pick % 3)];
    let dir = folder().path();
    let name = format!("r.{ext}");
    let record = record_bytes(ext);
    std::fs::write(dir.join(&name), &record).expect("record written");
    std::fs::write(dir.join("r.json"), sidecar).expect("sidecar written");
    let path = dir.join(&name);
    if let Err(e) = read_sidecar(&path) {
        assert_eq!(e.kind, spurline::ErrorKind::BadMetadata, "{e:?}");
        invariants::check_error(&e, &dir.join("r.json").display().to_string(), sidecar);
    }
    let settings = IngestSettings {
        meta: Metadata {
            sample_rate_hz: (pick & 0x80 != 0).then_some(1e6),
            bits: (pick & 0x80 != 0).then_some(8),
            ..Metadata::default()
        },
        ..IngestSettings::default()
    };
    match read_record(&path, &settings) {
        Ok(r) => {
            assert!(!r.record.codes.is_empty());
            r.warnings.iter().for_each(|w| invariants::no_nan_words(w));
        }
        Err(e) => invariants::check_read_error(&e, dir, &name, &record, sidecar),
    }
});
