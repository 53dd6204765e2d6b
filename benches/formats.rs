//! Reading one record of 2^20 samples in each input format, per sample, beside the 16-bit binary
//! reader and the text reader: `read_record` on a file in a temporary folder (the file read, the
//! format decided, the samples decoded and the code checks run), as a user's command does.

use std::path::{Path, PathBuf};

use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use spurline::{read_record, Format, IngestSettings, Metadata};

const N: usize = 1 << 20;
const BITS: u32 = 12;

/// 12-bit codes of a sine with a little deterministic dither.
fn codes() -> Vec<i64> {
    (0..N)
        .map(|k| {
            let x = 2000.0 * (2.0 * std::f64::consts::PI * 1237.0 * k as f64 / N as f64).sin();
            (x + ((k * 7919) % 5) as f64 - 2.0).round() as i64
        })
        .collect()
}

/// A minimal PCM WAV file of 16-bit samples (RIFF, fmt, data), the codes left-justified.
fn wav16(c: &[i64]) -> Vec<u8> {
    let data: Vec<u8> = c
        .iter()
        .flat_map(|&v| ((v << 4) as i16).to_le_bytes())
        .collect();
    let mut out = b"RIFF".to_vec();
    out.extend((36 + data.len() as u32).to_le_bytes());
    out.extend(b"WAVEfmt ");
    out.extend(16u32.to_le_bytes());
    out.extend(1u16.to_le_bytes()); // PCM
    out.extend(1u16.to_le_bytes()); // mono
    out.extend(1_000_000u32.to_le_bytes());
    out.extend(2_000_000u32.to_le_bytes());
    out.extend(2u16.to_le_bytes());
    out.extend(16u16.to_le_bytes());
    out.extend(b"data");
    out.extend((data.len() as u32).to_le_bytes());
    out.extend(data);
    out
}

/// A version 1.0 .npy file of little-endian i16 (header padded to 64 bytes).
fn npy16(c: &[i64]) -> Vec<u8> {
    let mut header = format!(
        "{{'descr': '<i2', 'fortran_order': False, 'shape': ({},), }}",
        c.len()
    );
    while (10 + header.len() + 1) % 64 != 0 {
        header.push(' ');
    }
    header.push('\n');
    let mut out = b"\x93NUMPY\x01\x00".to_vec();
    out.extend((header.len() as u16).to_le_bytes());
    out.extend(header.as_bytes());
    out.extend(c.iter().flat_map(|&v| (v as i16).to_le_bytes()));
    out
}

/// Two 12-bit samples in 3 bytes, the first in the low bits (p12le).
fn p12le(c: &[i64]) -> Vec<u8> {
    c.chunks(2)
        .flat_map(|p| {
            let w = (p[0] as u32 & 0xFFF) | ((p[1] as u32 & 0xFFF) << 12);
            w.to_le_bytes()[..3].to_vec()
        })
        .collect()
}

fn files(dir: &Path) -> Vec<(&'static str, PathBuf, IngestSettings)> {
    let c = codes();
    let settings = |format: Option<&str>, fs: Option<f64>, bits: Option<u32>| IngestSettings {
        format: format.map(|f| f.parse::<Format>().unwrap()),
        meta: Metadata {
            sample_rate_hz: fs,
            bits,
            ..Metadata::default()
        },
        ..IngestSettings::default()
    };
    let write = |name: &str, bytes: Vec<u8>| {
        let p = dir.join(name);
        std::fs::write(&p, bytes).unwrap();
        p
    };
    let text: String = c.iter().map(|v| format!("{v}\n")).collect();
    let scope: String = "Model,Bench scope\nSample interval,1e-06\n\nTime (s),CH1 (V)\n"
        .to_string()
        + &c.iter()
            .enumerate()
            .map(|(k, &v)| format!("{:?},{:?}\n", k as f64 * 1e-6, v as f64 * 2.0 / 4096.0))
            .collect::<String>();
    let mut scope_settings = settings(None, None, Some(BITS));
    scope_settings.meta.full_scale_vpp = Some(2.0);
    vec![
        (
            "i16le (the 16-bit binary reader)",
            write(
                "r.bin",
                c.iter().flat_map(|&v| (v as i16).to_le_bytes()).collect(),
            ),
            settings(Some("i16le"), Some(1e6), Some(BITS)),
        ),
        (
            "npy <i2",
            write("r.npy", npy16(&c)),
            settings(None, Some(1e6), Some(BITS)),
        ),
        (
            "wav pcm16",
            write("r.wav", wav16(&c)),
            settings(None, None, Some(BITS)),
        ),
        (
            "i24le",
            write(
                "r24.bin",
                c.iter()
                    .flat_map(|&v| (v as i32).to_le_bytes()[..3].to_vec())
                    .collect(),
            ),
            settings(Some("i24le"), Some(1e6), Some(BITS)),
        ),
        (
            "p12le",
            write("p12.bin", p12le(&c)),
            settings(Some("p12le"), Some(1e6), None),
        ),
        (
            "text (the text reader)",
            write("r.txt", text.into_bytes()),
            settings(None, Some(1e6), Some(BITS)),
        ),
        (
            "instrument csv (time, volts)",
            write("scope.csv", scope.into_bytes()),
            scope_settings,
        ),
    ]
}

fn bench(c: &mut Criterion) {
    let dir = tempfile::tempdir().unwrap();
    let mut g = c.benchmark_group("read 2^20 samples");
    g.throughput(Throughput::Elements(N as u64));
    g.sample_size(20);
    for (name, path, s) in files(dir.path()) {
        // Every file reads back to the same number of samples.
        assert_eq!(read_record(&path, &s).unwrap().record.len(), N, "{name}");
        g.bench_function(name, |b| b.iter(|| read_record(&path, &s).unwrap()));
    }
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
