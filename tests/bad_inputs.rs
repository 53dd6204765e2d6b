//! The bad-input catalogue: malformed records of every format, sidecars and command-line settings, each
//! run through the binary. Every case must exit with status 2, name the exact place in its message (the
//! file, then "line N", "byte offset N", "line N, column M" or the key), carry the expected error kind in
//! the JSON output, and never panic.
//!
//! Sources: the places are counted by hand from the bytes written here; the error kinds and message form
//! ("FILE: PLACE: expected ..., found ...") are the project's own contract (src/error.rs, README). The
//! codes follow from two's complement and offset binary, common practice, no source.

use assert_cmd::Command;
use std::f64::consts::TAU;
use std::path::Path;

/// One malformed input and what the binary must say about it.
struct Case {
    /// What is wrong, shown when the case fails.
    name: &'static str,
    /// Files written into the case's own folder (a name ending in '/' makes a folder).
    files: Vec<(&'static str, Vec<u8>)>,
    /// The command line after `spurline`; "{dir}" stands for the case's folder.
    argv: Vec<String>,
    /// `error.kind` in the JSON output.
    kind: &'static str,
    /// The file the message names, relative to the folder; "" when the error is about an option.
    file: &'static str,
    /// The place after the file: "line 3", "byte offset 6", "line 3, column 6", "'bits'"; "" for the
    /// whole file.
    at: &'static str,
}

/// `analyze FILE --json` plus the given options, FILE in the case's folder.
fn analyze(file: &str, options: &[&str]) -> Vec<String> {
    let mut v = vec![
        "analyze".to_string(),
        format!("{{dir}}/{file}"),
        "--json".to_string(),
    ];
    v.extend(options.iter().map(|o| o.to_string()));
    v
}

const META: [&str; 4] = ["--fs", "1M", "--bits", "12"];

fn with_meta<'a>(extra: &[&'a str]) -> Vec<&'a str> {
    let mut v = META.to_vec();
    v.extend_from_slice(extra);
    v
}

/// Codes of a sine: `cycles` over `n` samples at `amplitude` × full scale of `bits` bits.
fn sine(n: usize, bits: u32, cycles: f64, amplitude: f64) -> Vec<i64> {
    let full = (1i64 << (bits - 1)) as f64;
    (0..n)
        .map(|i| {
            let x = amplitude * full * (TAU * cycles * i as f64 / n as f64).sin();
            (x + 0.5).floor().clamp(-full, full - 1.0) as i64
        })
        .collect()
}

fn text(codes: &[i64]) -> Vec<u8> {
    codes
        .iter()
        .map(|c| format!("{c}\n"))
        .collect::<String>()
        .into_bytes()
}

/// A mono 16-bit PCM WAV file at 1 MHz holding `samples`, its data chunk claiming `extra` more bytes
/// than it holds (RIFF/WAVE layout; from memory).
fn wav16(samples: &[i16], extra: u32) -> Vec<u8> {
    let data: Vec<u8> = samples.iter().flat_map(|s| s.to_le_bytes()).collect();
    let mut b = b"RIFF".to_vec();
    b.extend((36 + data.len() as u32).to_le_bytes());
    b.extend(b"WAVEfmt ");
    b.extend(16u32.to_le_bytes());
    b.extend([1, 0, 1, 0]); // PCM, one channel
    b.extend(1_000_000u32.to_le_bytes());
    b.extend(2_000_000u32.to_le_bytes());
    b.extend([2, 0, 16, 0]); // block of 2 bytes, 16 bits
    b.extend(b"data");
    b.extend((data.len() as u32 + extra).to_le_bytes());
    b.extend(data);
    b
}

fn le16(words: &[u16]) -> Vec<u8> {
    words.iter().flat_map(|w| w.to_le_bytes()).collect()
}

fn be16(words: &[u16]) -> Vec<u8> {
    words.iter().flat_map(|w| w.to_be_bytes()).collect()
}

/// A good 12-bit record: 1024 samples, 101 cycles at -1 dBFS.
fn good() -> Vec<u8> {
    text(&sine(1024, 12, 101.0, 0.89))
}

/// Pseudo-random codes from a fixed linear congruential generator (no tone in them).
fn noise(n: usize) -> Vec<i64> {
    let mut x: u64 = 12345;
    (0..n)
        .map(|_| {
            x = x
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            ((x >> 33) % 4096) as i64 - 2048
        })
        .collect()
}

/// The catalogue. Cases for `spurline batch` (bench plans and limit tables) are appended to this table
/// when that command exists: their `argv` starts with "batch", their `files` hold the plan and limit
/// table, and `file`/`at` name the plan or table line ("line N") or row ("row N") at fault.
fn cases() -> Vec<Case> {
    vec![
        // ---- text records ----
        Case {
            name: "missing file",
            files: vec![],
            argv: analyze("nope.txt", &META),
            kind: "io",
            file: "nope.txt",
            at: "",
        },
        Case {
            name: "record is a folder",
            files: vec![("folder.txt/", vec![])],
            argv: analyze("folder.txt", &META),
            kind: "io",
            file: "folder.txt",
            at: "",
        },
        Case {
            name: "empty text file",
            files: vec![("empty.txt", vec![])],
            argv: analyze("empty.txt", &META),
            kind: "empty",
            file: "empty.txt",
            at: "",
        },
        Case {
            name: "comments and blank lines only",
            files: vec![("c.txt", b"# capture\n\n   \n# end\n".to_vec())],
            argv: analyze("c.txt", &META),
            kind: "empty",
            file: "c.txt",
            at: "",
        },
        Case {
            name: "header line only",
            files: vec![("h.txt", b"code\n".to_vec())],
            argv: analyze("h.txt", &META),
            kind: "empty",
            file: "h.txt",
            at: "",
        },
        Case {
            name: "fewer samples than ingest accepts (16)",
            files: vec![("s.txt", text(&[1; 15]))],
            argv: analyze("s.txt", &META),
            kind: "too_few_samples",
            file: "s.txt",
            at: "",
        },
        Case {
            name: "fewer samples than the analysis needs (64)",
            files: vec![("s40.txt", text(&sine(40, 12, 3.0, 0.9)))],
            argv: analyze("s40.txt", &META),
            kind: "too_few_samples",
            file: "s40.txt",
            at: "",
        },
        Case {
            name: "a token that is not a code",
            files: vec![("t.txt", b"1\n2\nx7\n4\n".to_vec())],
            argv: analyze("t.txt", &META),
            kind: "not_integer",
            file: "t.txt",
            at: "line 3",
        },
        Case {
            // A decimal fraction makes the record values, which need a full-scale range.
            name: "a decimal number on the first line and no full-scale range",
            files: vec![("d.txt", b"2\n1.5\n".to_vec())],
            argv: analyze("d.txt", &META),
            kind: "bad_setting",
            file: "d.txt",
            at: "line 2",
        },
        Case {
            name: "two codes on one line",
            files: vec![("two.txt", b"1\n2 3\n4\n".to_vec())],
            argv: analyze("two.txt", &META),
            kind: "not_integer",
            file: "two.txt",
            at: "line 2",
        },
        Case {
            name: "CRLF, comments and blank lines still count as lines",
            files: vec![("crlf.txt", b"# head\r\n1\r\n\r\nbad\r\n".to_vec())],
            argv: analyze("crlf.txt", &META),
            kind: "not_integer",
            file: "crlf.txt",
            at: "line 4",
        },
        Case {
            name: "a code above the 12-bit range",
            files: vec![("r.txt", b"1\n2\n5000\n".to_vec())],
            argv: analyze("r.txt", &META),
            kind: "code_out_of_range",
            file: "r.txt",
            at: "line 3",
        },
        Case {
            name: "a code below the 12-bit range",
            files: vec![("neg.txt", b"-2049\n".to_vec())],
            argv: analyze("neg.txt", &META),
            kind: "code_out_of_range",
            file: "neg.txt",
            at: "line 1",
        },
        Case {
            name: "a run of digits too long for any integer",
            files: vec![("huge.txt", b"0\n123456789012345678901234567890\n".to_vec())],
            argv: analyze("huge.txt", &META),
            kind: "code_out_of_range",
            file: "huge.txt",
            at: "line 2",
        },
        // ---- delimited records ----
        Case {
            name: "CSV column name not in the header",
            files: vec![("n.csv", b"t,code\n0,1\n".to_vec())],
            argv: analyze("n.csv", &with_meta(&["--column", "adc"])),
            kind: "bad_setting",
            file: "n.csv",
            at: "line 1",
        },
        Case {
            name: "CSV column index beyond the first row",
            files: vec![("i.csv", b"1,2\n3,4\n".to_vec())],
            argv: analyze("i.csv", &with_meta(&["--column", "5"])),
            kind: "bad_setting",
            file: "i.csv",
            at: "line 1",
        },
        Case {
            name: "CSV row without the column",
            files: vec![("short.csv", b"a,b\n1,2\n3\n".to_vec())],
            argv: analyze("short.csv", &with_meta(&["--column", "1"])),
            kind: "not_integer",
            file: "short.csv",
            at: "line 3",
        },
        Case {
            name: "CSV field that is not a code (';' detected)",
            files: vec![("j.csv", b"a;b\n1;2\n3;x\n".to_vec())],
            argv: analyze("j.csv", &with_meta(&["--column", "b"])),
            kind: "not_integer",
            file: "j.csv",
            at: "line 3",
        },
        Case {
            name: "CSV code out of range",
            files: vec![("o.csv", b"a,b\n1,2047\n2,2048\n".to_vec())],
            argv: analyze("o.csv", &with_meta(&["--column", "1"])),
            kind: "code_out_of_range",
            file: "o.csv",
            at: "line 3",
        },
        Case {
            name: "CSV delimiter that cannot separate fields",
            files: vec![("x.csv", b"1\n2\n".to_vec())],
            argv: analyze("x.csv", &with_meta(&["--delimiter", "x"])),
            kind: "bad_setting",
            file: "x.csv",
            at: "'delimiter'",
        },
        Case {
            name: "--delimiter of two characters",
            files: vec![("y.csv", b"1\n2\n".to_vec())],
            argv: analyze("y.csv", &with_meta(&["--delimiter", "ab"])),
            kind: "bad_setting",
            file: "",
            at: "'delimiter'",
        },
        // ---- WAV records (RIFF layout: 12-byte header, 24-byte fmt chunk, 8-byte data header) ----
        Case {
            name: "WAV whose data chunk says more bytes than the file holds",
            files: vec![("cut.wav", wav16(&[0, 1, 2, 3], 2))],
            argv: analyze("cut.wav", &META),
            kind: "partial_word",
            file: "cut.wav",
            at: "byte offset 52",
        },
        Case {
            name: "WAV of a compressed format (tag 2)",
            files: vec![("adpcm.wav", {
                let mut b = wav16(&[0; 32], 0);
                b[20] = 2;
                b
            })],
            argv: analyze("adpcm.wav", &META),
            kind: "bad_metadata",
            file: "adpcm.wav",
            at: "byte offset 20",
        },
        Case {
            name: "WAV of 16-bit samples read as 20 bits",
            files: vec![("w.wav", wav16(&[0; 32], 0))],
            argv: analyze("w.wav", &["--bits", "20"]),
            kind: "bad_setting",
            file: "w.wav",
            at: "'bits'",
        },
        // ---- raw binary records ----
        Case {
            name: "i16le record of an odd byte count",
            files: vec![("odd.bin", vec![0; 7])],
            argv: analyze("odd.bin", &with_meta(&["--format", "i16le"])),
            kind: "partial_word",
            file: "odd.bin",
            at: "byte offset 6",
        },
        Case {
            name: "i16le, two channels, a partial frame",
            files: vec![("f.bin", vec![0; 6])],
            argv: analyze(
                "f.bin",
                &with_meta(&["--format", "i16le", "--channel", "1/2"]),
            ),
            kind: "partial_word",
            file: "f.bin",
            at: "byte offset 4",
        },
        Case {
            name: "i32be after a 3-byte header, a partial word",
            files: vec![("h.bin", vec![0; 9])],
            argv: analyze(
                "h.bin",
                &with_meta(&["--format", "i32be", "--skip-bytes", "3"]),
            ),
            kind: "partial_word",
            file: "h.bin",
            at: "byte offset 7",
        },
        Case {
            name: "u16le offset-binary word 4096 (above 12 bits)",
            files: vec![("u.bin", le16(&[0, 1, 2, 3, 4, 4096, 6]))],
            argv: analyze("u.bin", &with_meta(&["--format", "u16le"])),
            kind: "code_out_of_range",
            file: "u.bin",
            at: "byte offset 10",
        },
        Case {
            name: "i16be word 0x1800: neither sign extension nor zero above 12 bits",
            files: vec![("s.bin", be16(&[1, 2, 3, 0x1800]))],
            argv: analyze("s.bin", &with_meta(&["--format", "i16be"])),
            kind: "code_out_of_range",
            file: "s.bin",
            at: "byte offset 6",
        },
        Case {
            name: "i32le 24-bit codes after a 4-byte header, one word badly padded",
            files: vec![("w.bin", {
                let mut b = vec![0xAA; 4];
                for w in [5i32, -5, 0x0100_0000, 7] {
                    b.extend(w.to_le_bytes());
                }
                b
            })],
            argv: analyze(
                "w.bin",
                &[
                    "--fs",
                    "1M",
                    "--bits",
                    "24",
                    "--format",
                    "i32le",
                    "--skip-bytes",
                    "4",
                ],
            ),
            kind: "code_out_of_range",
            file: "w.bin",
            at: "byte offset 12",
        },
        Case {
            name: "left-justified u16be, 20 bits do not fit",
            files: vec![("l.bin", be16(&[0; 32]))],
            argv: analyze(
                "l.bin",
                &[
                    "--fs",
                    "1M",
                    "--bits",
                    "20",
                    "--format",
                    "u16be",
                    "--justify",
                    "left",
                ],
            ),
            kind: "bad_setting",
            file: "l.bin",
            at: "'bits'",
        },
        Case {
            name: "u8 words cannot hold 12 bits",
            files: vec![("b.bin", vec![0x80; 64])],
            argv: analyze("b.bin", &with_meta(&["--format", "u8"])),
            kind: "bad_setting",
            file: "b.bin",
            at: "'bits'",
        },
        Case {
            name: ".bin record without a word format",
            files: vec![("nofmt.bin", le16(&[0; 32]))],
            argv: analyze("nofmt.bin", &META),
            kind: "bad_setting",
            file: "nofmt.bin",
            at: "'format'",
        },
        Case {
            name: "--format of a word size that does not exist",
            files: vec![("x.bin", le16(&[0; 32]))],
            argv: analyze("x.bin", &with_meta(&["--format", "i20le"])),
            kind: "bad_setting",
            file: "",
            at: "'format'",
        },
        Case {
            name: "a hexadecimal word wider than the resolution",
            files: vec![("x.txt", b"0x001\n0x7FF\n0x1000\n".to_vec())],
            argv: analyze("x.txt", &with_meta(&[])),
            kind: "code_out_of_range",
            file: "x.txt",
            at: "line 3",
        },
        Case {
            name: "24-bit words with a partial word at the end",
            files: vec![("x.bin", le16(&[0; 32]))],
            argv: analyze("x.bin", &with_meta(&["--format", "i24le"])),
            kind: "partial_word",
            file: "x.bin",
            at: "byte offset 63",
        },
        Case {
            name: "packed 12-bit samples with a partial group at the end",
            files: vec![("x.bin", le16(&[0; 32]))],
            argv: analyze("x.bin", &with_meta(&["--format", "p12be"])),
            kind: "partial_word",
            file: "x.bin",
            at: "byte offset 63",
        },
        Case {
            name: "--channel beyond the channel count",
            files: vec![("c.bin", le16(&[0; 32]))],
            argv: analyze(
                "c.bin",
                &with_meta(&["--format", "i16le", "--channel", "3/2"]),
            ),
            kind: "bad_setting",
            file: "",
            at: "'channel'",
        },
        Case {
            name: "header longer than the file",
            files: vec![("k.bin", le16(&[0; 32]))],
            argv: analyze(
                "k.bin",
                &with_meta(&["--format", "i16le", "--skip-bytes", "100"]),
            ),
            kind: "empty",
            file: "k.bin",
            at: "",
        },
        Case {
            name: "sidecar channel count near usize::MAX",
            files: vec![
                ("m.bin", le16(&[0; 32])),
                (
                    "m.json",
                    br#"{"format": "i16le", "channel": "1/18446744073709551615"}"#.to_vec(),
                ),
            ],
            argv: analyze("m.bin", &META),
            kind: "bad_setting",
            file: "m.bin",
            at: "'channel'",
        },
        // ---- sidecar JSON ----
        Case {
            name: "sidecar with an unknown key",
            files: vec![
                ("r.txt", good()),
                ("r.json", b"{\n  \"bits\": 12,\n  \"fs\": 1\n}\n".to_vec()),
            ],
            argv: analyze("r.txt", &META),
            kind: "bad_metadata",
            file: "r.json",
            at: "line 3, column 6",
        },
        Case {
            name: "sidecar that is not JSON",
            files: vec![("p.txt", good()), ("p.json", b"not json".to_vec())],
            argv: analyze("p.txt", &META),
            kind: "bad_metadata",
            file: "p.json",
            at: "line 1, column 2",
        },
        Case {
            name: "sidecar value of the wrong type",
            files: vec![
                ("q.txt", good()),
                ("q.json", br#"{"bits": "twelve"}"#.to_vec()),
            ],
            argv: analyze("q.txt", &META),
            kind: "bad_metadata",
            file: "q.json",
            at: "line 1, column 17",
        },
        Case {
            name: "sidecar cut short",
            files: vec![
                ("cut.txt", good()),
                ("cut.json", b"{\"bits\": 12,".to_vec()),
            ],
            argv: analyze("cut.txt", &META),
            kind: "bad_metadata",
            file: "cut.json",
            at: "line 1, column 12",
        },
        Case {
            name: "sidecar format that does not exist",
            files: vec![
                ("g.dat", good()),
                ("g.json", br#"{"format": "i12"}"#.to_vec()),
            ],
            argv: analyze("g.dat", &META),
            kind: "bad_metadata",
            file: "g.json",
            at: "'format'",
        },
        Case {
            name: "sidecar channel beyond the channel count",
            files: vec![
                ("ch.bin", le16(&[0; 32])),
                (
                    "ch.json",
                    br#"{"format": "i16le", "channel": "5/4"}"#.to_vec(),
                ),
            ],
            argv: analyze("ch.bin", &META),
            kind: "bad_metadata",
            file: "ch.json",
            at: "'channel'",
        },
        Case {
            name: "sidecar delimiter of two characters",
            files: vec![
                ("dl.csv", b"a;b\n1;2\n".to_vec()),
                ("dl.json", br#"{"delimiter": ";;"}"#.to_vec()),
            ],
            argv: analyze("dl.csv", &META),
            kind: "bad_metadata",
            file: "dl.json",
            at: "'delimiter'",
        },
        Case {
            name: "sidecar resolution of 0 bits",
            files: vec![
                ("z.txt", good()),
                ("z.json", br#"{"bits": 0, "sample_rate_hz": 1e6}"#.to_vec()),
            ],
            argv: analyze("z.txt", &[]),
            kind: "bad_setting",
            file: "z.json",
            at: "'bits'",
        },
        Case {
            name: "sidecar negative sample rate",
            files: vec![
                ("v.txt", good()),
                ("v.json", br#"{"bits": 12, "sample_rate_hz": -5}"#.to_vec()),
            ],
            argv: analyze("v.txt", &[]),
            kind: "bad_setting",
            file: "v.json",
            at: "'sample_rate_hz'",
        },
        Case {
            name: "a .json file given as the record",
            files: vec![("rec.json", b"{}".to_vec())],
            argv: analyze("rec.json", &META),
            kind: "bad_setting",
            file: "rec.json",
            at: "",
        },
        // ---- command-line settings ----
        Case {
            name: "--bits above 32",
            files: vec![("b33.txt", good())],
            argv: analyze("b33.txt", &["--fs", "1M", "--bits", "33"]),
            kind: "bad_setting",
            file: "b33.txt",
            at: "'bits'",
        },
        Case {
            name: "negative --fs",
            files: vec![("fs.txt", good())],
            argv: analyze("fs.txt", &["--fs=-5", "--bits", "12"]),
            kind: "bad_setting",
            file: "fs.txt",
            at: "'sample_rate_hz'",
        },
        Case {
            name: "--fs beyond any converter (1e300 Hz)",
            files: vec![("big.txt", good())],
            argv: analyze("big.txt", &["--fs", "1e300", "--bits", "12"]),
            kind: "bad_setting",
            file: "big.txt",
            at: "'sample_rate_hz'",
        },
        Case {
            name: "no sample rate anywhere",
            files: vec![("nofs.txt", good())],
            argv: analyze("nofs.txt", &["--bits", "12"]),
            kind: "bad_setting",
            file: "nofs.txt",
            at: "'sample_rate_hz'",
        },
        Case {
            name: "no resolution anywhere",
            files: vec![("nobits.txt", good())],
            argv: analyze("nobits.txt", &["--fs", "1M"]),
            kind: "bad_setting",
            file: "nobits.txt",
            at: "'bits'",
        },
        Case {
            name: "negative --fin",
            files: vec![("fin.txt", good())],
            argv: analyze("fin.txt", &with_meta(&["--fin=-3"])),
            kind: "bad_setting",
            file: "fin.txt",
            at: "'fin_hz'",
        },
        Case {
            name: "zero --full-scale-vpp",
            files: vec![("vpp.txt", good())],
            argv: analyze("vpp.txt", &with_meta(&["--full-scale-vpp", "0"])),
            kind: "bad_setting",
            file: "vpp.txt",
            at: "'full_scale_vpp'",
        },
        Case {
            name: "--window that does not exist",
            files: vec![("win.txt", good())],
            argv: analyze("win.txt", &with_meta(&["--window", "triangle"])),
            kind: "bad_setting",
            file: "",
            at: "'window'",
        },
        Case {
            name: "--harmonics 0",
            files: vec![("h0.txt", good())],
            argv: analyze("h0.txt", &with_meta(&["--harmonics", "0"])),
            kind: "bad_setting",
            file: "",
            at: "'harmonics'",
        },
        Case {
            name: "--fit three without --fin",
            files: vec![("f3.txt", good())],
            argv: analyze("f3.txt", &with_meta(&["--fit", "three"])),
            kind: "bad_setting",
            file: "f3.txt",
            at: "'fin'",
        },
        Case {
            name: "--fit three at a --fin above fs/2",
            files: vec![("f3n.txt", good())],
            argv: analyze("f3n.txt", &with_meta(&["--fit", "three", "--fin", "600k"])),
            kind: "bad_setting",
            file: "f3n.txt",
            at: "'fin'",
        },
        // ---- records that parse but cannot be analysed ----
        Case {
            name: "white noise, no tone",
            files: vec![("noise.txt", text(&noise(1024)))],
            argv: analyze("noise.txt", &META),
            kind: "no_tone",
            file: "noise.txt",
            at: "",
        },
        Case {
            name: "a constant record",
            files: vec![("const.txt", text(&[5; 1024]))],
            argv: analyze("const.txt", &META),
            kind: "no_tone",
            file: "const.txt",
            at: "",
        },
        Case {
            name: "a tone at Nyquist (alternating codes)",
            files: vec![(
                "nyq.txt",
                text(
                    &(0..1024)
                        .map(|i| if i % 2 == 0 { 1000 } else { -1000 })
                        .collect::<Vec<_>>(),
                ),
            )],
            argv: analyze("nyq.txt", &META),
            kind: "degenerate_fit",
            file: "nyq.txt",
            at: "",
        },
    ]
}

/// The first error object (`{"kind", "message"}`) anywhere in a JSON output.
fn first_error(v: &serde_json::Value) -> Option<(String, String)> {
    match v {
        serde_json::Value::Object(m) => {
            if let Some(serde_json::Value::Object(e)) = m.get("error") {
                if let (Some(k), Some(msg)) = (e.get("kind"), e.get("message")) {
                    return Some((k.as_str()?.to_string(), msg.as_str()?.to_string()));
                }
            }
            m.values().find_map(first_error)
        }
        serde_json::Value::Array(a) => a.iter().find_map(first_error),
        _ => None,
    }
}

/// Runs one case; returns what went wrong, if anything.
fn run(case: &Case, root: &Path, index: usize) -> Vec<String> {
    let dir = root.join(format!("case{index:02}"));
    std::fs::create_dir_all(&dir).unwrap();
    for (name, bytes) in &case.files {
        if let Some(folder) = name.strip_suffix('/') {
            std::fs::create_dir_all(dir.join(folder)).unwrap();
        } else {
            std::fs::write(dir.join(name), bytes).unwrap();
        }
    }
    let shown_dir = dir.display().to_string();
    let argv: Vec<String> = case
        .argv
        .iter()
        .map(|a| a.replace("{dir}", &shown_dir))
        .collect();
    let out = Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
        .args(&argv)
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr).to_string();
    let mut problems = Vec::new();
    if stderr.contains("panicked") {
        problems.push(format!("panicked: {stderr}"));
    }
    if out.status.code() != Some(2) {
        problems.push(format!("exit status {:?}, not 2", out.status.code()));
    }
    // The message starts with the file and the place, exactly.
    let mut head: Vec<String> = Vec::new();
    if !case.file.is_empty() {
        head.push(dir.join(case.file).display().to_string());
    }
    if !case.at.is_empty() {
        head.push(case.at.to_string());
    }
    head.push("expected ".to_string());
    let prefix = head.join(": ");
    if !stderr.contains(&format!("spurline: error: {prefix}")) {
        problems.push(format!(
            "stderr lacks 'spurline: error: {prefix}': {stderr}"
        ));
    }
    match serde_json::from_slice::<serde_json::Value>(&out.stdout) {
        Err(e) => problems.push(format!(
            "stdout is not JSON ({e}): {}",
            String::from_utf8_lossy(&out.stdout)
        )),
        Ok(v) => match first_error(&v) {
            None => problems.push(format!("no error object in the JSON: {v}")),
            Some((kind, message)) => {
                if kind != case.kind {
                    problems.push(format!("kind {kind}, not {}", case.kind));
                }
                if !message.starts_with(&prefix) {
                    problems.push(format!(
                        "JSON message does not start with '{prefix}': {message}"
                    ));
                }
            }
        },
    }
    problems
}

#[test]
fn every_bad_input_is_an_error_at_its_place() {
    let root = tempfile::tempdir().unwrap();
    let cases = cases();
    assert!(
        cases.len() >= 30,
        "the catalogue holds {} cases",
        cases.len()
    );
    let mut failures = Vec::new();
    for (i, case) in cases.iter().enumerate() {
        for p in run(case, root.path(), i) {
            failures.push(format!("case {i} ({}): {p}", case.name));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

#[test]
fn every_error_kind_of_a_record_is_in_the_catalogue() {
    // Kinds a record, its sidecar or the command line can cause (src/error.rs); bad_plan, bad_limits
    // and output belong to `batch` and the report stage.
    let all = [
        "io",
        "empty",
        "too_few_samples",
        "not_integer",
        "code_out_of_range",
        "partial_word",
        "bad_setting",
        "bad_metadata",
        "no_tone",
        "degenerate_fit",
        // tone_at_edge is no longer an analyze error: a tone among the DC bins keeps its fit figures
        // and has its spectrum withheld with a warning (tests/pipeline.rs).
    ];
    let cases = cases();
    for kind in all {
        assert!(cases.iter().any(|c| c.kind == kind), "no case of {kind}");
    }
}
