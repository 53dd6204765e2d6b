//! Metadata sidecars: a JSON file beside a record (x.bin -> x.json) giving its sample rate, resolution,
//! layout and free-form provenance. Read strictly (unknown keys are errors) and written deterministically.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::{ColumnSel, Format, Justify, Metadata};
use crate::error::{Error, ErrorKind, Location, Result};
use crate::record::Coding;

/// The metadata sidecar of a record. Every key is optional; the command line wins over each one.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Sidecar {
    /// Sample rate in hertz.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sample_rate_hz: Option<f64>,
    /// Converter resolution N in bits.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub bits: Option<u32>,
    /// Expected input frequency in hertz.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub fin_hz: Option<f64>,
    /// Full-scale range in volts peak-to-peak.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub full_scale_vpp: Option<f64>,
    /// "text", "csv" or a word format as [`Format::parse_word`] reads it ("i16le", "u8", ...).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub format: Option<String>,
    /// Coding of binary words ("twos_complement" or "offset_binary").
    #[serde(skip_serializing_if = "Option::is_none")]
    pub coding: Option<Coding>,
    /// Justification of the N bits in a binary word ("right" or "left").
    #[serde(skip_serializing_if = "Option::is_none")]
    pub justify: Option<Justify>,
    /// Header bytes to skip at the start of a binary record.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub skip_bytes: Option<u64>,
    /// Interleaved channel as "K/M": channel K (1-based) of M.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub channel: Option<String>,
    /// CSV column: a header name (string) or a 0-based index (integer).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub column: Option<ColumnSel>,
    /// CSV delimiter: a one-character string (a space means runs of whitespace).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub delimiter: Option<String>,
    /// What the samples are: "codes", "volts" or "full_scale" (±1.0 is full scale).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub unit: Option<super::SampleUnit>,
    /// Free-form provenance (what made the record); kept and written back, not interpreted.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub generator: Option<serde_json::Value>,
}

impl Sidecar {
    /// The metadata fields of the sidecar.
    pub fn metadata(&self) -> Metadata {
        Metadata {
            sample_rate_hz: self.sample_rate_hz,
            bits: self.bits,
            fin_hz: self.fin_hz,
            full_scale_vpp: self.full_scale_vpp,
        }
    }

    /// The sidecar's format key as a [`Format`]; `path` is the sidecar's, for the error.
    pub(crate) fn parsed_format(&self, path: &str) -> Result<Option<Format>> {
        self.format
            .as_deref()
            .map(|s| Format::parse(s).map_err(|e| as_metadata_error(e, path)))
            .transpose()
    }

    /// The sidecar's channel key as (0-based channel, channels).
    pub(crate) fn parsed_channel(&self, path: &str) -> Result<Option<(usize, usize)>> {
        self.channel
            .as_deref()
            .map(|s| parse_channel(s).map_err(|e| as_metadata_error(e, path)))
            .transpose()
    }

    /// The sidecar's delimiter key as one byte.
    pub(crate) fn parsed_delimiter(&self, path: &str) -> Result<Option<u8>> {
        self.delimiter
            .as_deref()
            .map(|s| parse_delimiter(s).map_err(|e| as_metadata_error(e, path)))
            .transpose()
    }
}

/// A settings error found in a sidecar value: the sidecar's path, kind BadMetadata, same key.
fn as_metadata_error(e: Error, path: &str) -> Error {
    Error {
        kind: ErrorKind::BadMetadata,
        ..e.with_path(path)
    }
}

/// The sidecar of a record: the same path with the extension replaced by ".json" (x.bin -> x.json).
///
/// A record that itself ends in ".json" is an error (it would be its own sidecar).
pub fn sidecar_path(record: &Path) -> Result<PathBuf> {
    let is_json = record
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("json"));
    if is_json {
        return Err(Error::new(
            ErrorKind::BadSetting,
            record.display().to_string(),
            Location::Whole,
            "a record file (a .json file beside a record is its metadata sidecar)",
            "a .json file",
        ));
    }
    Ok(record.with_extension("json"))
}

/// Largest sidecar read: a few keys and a generator note take a few kB.
const MAX_SIDECAR_BYTES: u64 = 1 << 20;

/// Reads the sidecar of a record; `None` when there is none.
///
/// Unknown keys and values of the wrong type are [`ErrorKind::BadMetadata`] at the line and column
/// where the JSON parser stopped.
pub fn read_sidecar(record: &Path) -> Result<Option<Sidecar>> {
    let path = sidecar_path(record)?;
    let shown = path.display().to_string();
    if let Err(e) = std::fs::symlink_metadata(&path) {
        if e.kind() == std::io::ErrorKind::NotFound {
            return Ok(None);
        }
    }
    let bytes =
        crate::resources::read_small_file(&path, "a readable metadata sidecar", MAX_SIDECAR_BYTES)?;
    serde_json::from_slice(&bytes).map(Some).map_err(|e| {
        let message = e.to_string();
        let suffix = format!(" at line {} column {}", e.line(), e.column());
        let found = message.strip_suffix(&suffix).unwrap_or(&message).to_string();
        Error::new(
            ErrorKind::BadMetadata,
            shown,
            Location::LineColumn(e.line(), e.column()),
            "a JSON object with only the keys sample_rate_hz, bits, fin_hz, full_scale_vpp, format, unit, \
             coding, justify, skip_bytes, channel, column, delimiter, generator",
            found,
        )
    })
}

/// Writes the sidecar of a record as pretty JSON with a final newline (keys in declaration order, so
/// the same sidecar always gives the same bytes).
pub fn write_sidecar(record: &Path, sidecar: &Sidecar) -> Result<()> {
    let path = sidecar_path(record)?;
    let output_error = |found: String| {
        Error::new(
            ErrorKind::Output,
            path.display().to_string(),
            Location::Whole,
            "a writable metadata sidecar",
            found,
        )
    };
    let mut text =
        serde_json::to_string_pretty(sidecar).map_err(|e| output_error(e.to_string()))?;
    text.push('\n');
    std::fs::write(&path, text).map_err(|e| output_error(e.to_string()))
}

/// Parses a CSV delimiter: one ASCII character (a space means runs of whitespace), or `tab` (also
/// written `\t`) for a tab. Errors: [`ErrorKind::BadSetting`] on key `delimiter`.
pub fn parse_delimiter(s: &str) -> Result<u8> {
    match s {
        "tab" | "\\t" => Ok(b'\t'),
        _ => match s.as_bytes() {
            [b] if b.is_ascii() => Ok(*b),
            _ => Err(Error::setting(
                "delimiter",
                "one ASCII character or \"tab\"",
                format!("{s:?}"),
            )),
        },
    }
}

/// Parses an interleaved channel "K/M" (channel K, 1-based, of M) into (K - 1, M).
pub fn parse_channel(s: &str) -> Result<(usize, usize)> {
    let bad = || {
        Error::setting(
            "channel",
            "K/M with 1 <= K <= M (channel K of M interleaved channels), e.g. 2/4",
            format!("{s:?}"),
        )
    };
    let (k, m) = s.trim().split_once('/').ok_or_else(bad)?;
    let k: usize = k.trim().parse().map_err(|_| bad())?;
    let m: usize = m.trim().parse().map_err(|_| bad())?;
    if k == 0 || k > m {
        return Err(bad());
    }
    Ok((k - 1, m))
}

#[cfg(test)]
mod tests {
    use super::*;

    // Sources: JSON as serde_json reads and writes it (line and column 1-based, as its docs say,
    // from memory); the sidecar keys and the "K/M" channel form are this module's own rules.

    #[test]
    fn sidecar_path_replaces_the_extension() {
        assert_eq!(
            sidecar_path(Path::new("d/x.bin")).unwrap(),
            PathBuf::from("d/x.json")
        );
        assert_eq!(
            sidecar_path(Path::new("x.tar.csv")).unwrap(),
            PathBuf::from("x.tar.json")
        );
        assert_eq!(
            sidecar_path(Path::new("x")).unwrap(),
            PathBuf::from("x.json")
        );
        let e = sidecar_path(Path::new("d/x.JSON")).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadSetting);
        assert_eq!(e.path, "d/x.JSON");
        assert!(e.expected.contains("sidecar"), "{}", e.expected);
    }

    fn full() -> Sidecar {
        Sidecar {
            sample_rate_hz: Some(125e6),
            bits: Some(14),
            fin_hz: Some(10.1e6),
            full_scale_vpp: Some(2.0),
            format: Some("u16be".into()),
            coding: Some(Coding::OffsetBinary),
            justify: Some(Justify::Left),
            skip_bytes: Some(512),
            channel: Some("2/4".into()),
            column: Some(ColumnSel::Name("code".into())),
            delimiter: Some(";".into()),
            unit: Some(super::super::SampleUnit::Volts),
            generator: Some(serde_json::json!({"tool": "synth", "seed": 7, "notes": ["a", "b"]})),
        }
    }

    #[test]
    fn round_trip_is_exact_and_deterministic() {
        let dir = tempfile::tempdir().unwrap();
        let rec = dir.path().join("r.bin");
        let sc = full();
        write_sidecar(&rec, &sc).unwrap();
        let first = std::fs::read(dir.path().join("r.json")).unwrap();
        assert_eq!(read_sidecar(&rec).unwrap(), Some(sc.clone()));
        write_sidecar(&rec, &sc).unwrap();
        assert_eq!(std::fs::read(dir.path().join("r.json")).unwrap(), first);
        let text = String::from_utf8(first).unwrap();
        assert!(text.ends_with("}\n"));
        assert!(text.contains("\"coding\": \"offset_binary\""), "{text}");
        assert!(text.contains("\"justify\": \"left\""), "{text}");
        assert!(text.contains("\"column\": \"code\""), "{text}");
        // Keys keep declaration order.
        let pos = |k: &str| text.find(&format!("\"{k}\"")).unwrap();
        assert!(pos("sample_rate_hz") < pos("bits") && pos("bits") < pos("generator"));
    }

    #[test]
    fn unset_keys_are_not_written() {
        let dir = tempfile::tempdir().unwrap();
        let rec = dir.path().join("r.txt");
        let sc = Sidecar {
            sample_rate_hz: Some(1e6),
            bits: Some(12),
            column: Some(ColumnSel::Index(2)),
            ..Sidecar::default()
        };
        write_sidecar(&rec, &sc).unwrap();
        let text = std::fs::read_to_string(dir.path().join("r.json")).unwrap();
        assert_eq!(
            text,
            "{\n  \"sample_rate_hz\": 1000000.0,\n  \"bits\": 12,\n  \"column\": 2\n}\n"
        );
        assert_eq!(read_sidecar(&rec).unwrap(), Some(sc));
    }

    #[test]
    fn no_sidecar_is_none() {
        let dir = tempfile::tempdir().unwrap();
        assert_eq!(read_sidecar(&dir.path().join("none.bin")).unwrap(), None);
    }

    fn read_text(json: &str) -> Result<Option<Sidecar>> {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("r.json"), json).unwrap();
        read_sidecar(&dir.path().join("r.bin"))
    }

    #[test]
    fn unknown_key_is_bad_metadata_at_line_and_column() {
        let e = read_text("{\n  \"bits\": 12,\n  \"sample_rate\": 1e6\n}\n").unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadMetadata);
        assert!(e.path.ends_with("r.json"), "{}", e.path);
        // serde_json stops after the key: line 3, column 15 (1-based, at the closing quote).
        assert_eq!(e.location, Location::LineColumn(3, 15));
        assert!(
            e.found.starts_with("unknown field `sample_rate`"),
            "{}",
            e.found
        );
        assert!(!e.found.contains("at line"), "{}", e.found);
        assert!(e.expected.contains("sample_rate_hz"), "{}", e.expected);
    }

    #[test]
    fn bad_types_are_bad_metadata() {
        let e = read_text("{\"bits\": \"twelve\"}").unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadMetadata);
        assert_eq!(e.location, Location::LineColumn(1, 17));
        assert!(
            e.found.starts_with("invalid type: string \"twelve\""),
            "{}",
            e.found
        );
        let e = read_text("{\n\"skip_bytes\": -4}").unwrap_err();
        assert!(matches!(e.location, Location::LineColumn(2, _)), "{e:?}");
        let e = read_text("{\"coding\": \"gray\"}").unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadMetadata);
        assert!(e.found.contains("unknown variant `gray`"), "{}", e.found);
        let e = read_text("{\"column\": 1.5}").unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadMetadata);
        // serde_json stops at the 'o' of "not", reading it as a misspelt null.
        let e = read_text("not json").unwrap_err();
        assert_eq!(e.location, Location::LineColumn(1, 2));
        let e = read_text("").unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadMetadata);
    }

    #[test]
    fn generator_is_free_form() {
        let sc = read_text("{\"generator\": {\"anything\": [1, {\"x\": null}]}, \"bits\": 8}")
            .unwrap()
            .unwrap();
        assert_eq!(sc.bits, Some(8));
        assert!(sc.generator.is_some());
    }

    #[test]
    fn column_int_or_string() {
        let sc = read_text("{\"column\": 3}").unwrap().unwrap();
        assert_eq!(sc.column, Some(ColumnSel::Index(3)));
        let sc = read_text("{\"column\": \"adc\"}").unwrap().unwrap();
        assert_eq!(sc.column, Some(ColumnSel::Name("adc".into())));
    }

    #[test]
    fn parsed_values_and_their_errors() {
        let sc = full();
        assert_eq!(
            sc.parsed_format("s.json").unwrap(),
            Some(Format::Binary(Format::parse_word("u16be").unwrap()))
        );
        assert_eq!(sc.parsed_channel("s.json").unwrap(), Some((1, 4)));
        assert_eq!(sc.parsed_delimiter("s.json").unwrap(), Some(b';'));
        let bad = Sidecar {
            format: Some("i20le".into()),
            channel: Some("5/4".into()),
            delimiter: Some(";;".into()),
            ..Sidecar::default()
        };
        for e in [
            bad.parsed_format("s.json").unwrap_err(),
            bad.parsed_channel("s.json").unwrap_err(),
            bad.parsed_delimiter("s.json").unwrap_err(),
        ] {
            assert_eq!(e.kind, ErrorKind::BadMetadata);
            assert_eq!(e.path, "s.json");
            assert!(matches!(e.location, Location::Key(_)));
        }
        assert_eq!(
            bad.parsed_format("s.json").unwrap_err().location,
            Location::Key("format".into())
        );
    }

    #[test]
    fn channels_parse_one_based() {
        assert_eq!(parse_channel("2/4").unwrap(), (1, 4));
        assert_eq!(parse_channel("1/1").unwrap(), (0, 1));
        assert_eq!(parse_channel(" 4 / 4 ").unwrap(), (3, 4));
        for bad in ["0/4", "5/4", "2", "a/b", "2/", "/4", "-1/4", "2/4/6", ""] {
            let e = parse_channel(bad).unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting, "{bad}");
            assert_eq!(e.location, Location::Key("channel".into()));
            assert_eq!(e.found, format!("{bad:?}"));
        }
    }
}
