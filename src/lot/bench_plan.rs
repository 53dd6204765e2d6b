//! The bench plan: a TOML file written by people saying which converter, which analysis settings, which
//! test conditions and where the records are; and the lot it describes (devices × conditions × record
//! files), found by matching the record pattern against the plan's folder.
//!
//! # Format
//! ```toml
//! title = "ADC12 characterisation, lot 7"      # optional, shown in the lot's index page
//!
//! [converter]                  # how to read the records (as `analyze` reads them)
//! bits = 12                    # required
//! sample_rate_hz = "100M"      # required; a number, or a string with an SI prefix
//! full_scale_vpp = 2.0         # optional, reported only
//! format = "i16le"             # optional: text, csv, or a word layout i8 … u32be (else sidecar/extension)
//! coding = "twos"              # optional: twos | offset (binary words)
//! justify = "right"            # optional: right | left
//! skip_bytes = 0               # optional header bytes
//! channel = "1/1"              # optional: channel K of M
//! # column = 0 / delimiter = "," for CSV records
//!
//! [analysis]                   # optional; every key may be overridden per condition
//! fit = "four"                 # four | three
//! window = "auto"              # auto, or a window name as `analyze --window` takes
//! harmonics = 10               # highest harmonic order claimed, 1..=100
//! guard_bins = 1               # extra bins around every tone span
//! average = 1                  # records per condition whose spectra are averaged
//! amplitude_tolerance_db = 1.0 # warn when the fitted level is further than this from the plan's
//!
//! [records]                    # either a pattern ...
//! pattern = "records/{device}/{condition}.bin"   # relative to the plan's folder; {index} = 1..=average
//! devices = ["d01", "d02"]     # optional; otherwise discovered from the pattern
//! # ... or an explicit list:
//! # list = [ { device = "d01", condition = "fin_10M", files = ["caps/a.bin"] } ]
//!
//! [[condition]]                # one table per condition, in test order
//! name = "fin_10M"
//! fin_hz = "10.1M"             # the analog input frequency (folded into the first zone for the fit)
//! amplitude_dbfs = -1.0        # the nominal input level
//! analysis = { window = "hann", average = 2 }    # optional overrides of [analysis]
//! ```
//!
//! Errors ([`ErrorKind::BadPlan`]) name the file, the line and the key: an unknown key, a missing
//! required key, a value of the wrong type or outside its range, a duplicate condition, a pattern with an
//! unknown placeholder or without the ones it needs, or a pattern that matches no file. Keys are written
//! as TOML paths; `condition[2]` is the second `[[condition]]` table, counted from 1.
//!
//! # Devices
//! Without a `devices` list, devices are whatever `{device}` matches: every condition (and index) is
//! put into the pattern, the pattern is walked folder by folder, and a name part holding `{device}`
//! matches a directory entry when the literal text around the placeholder matches (all `{device}` of
//! the pattern take the same value; names starting with `.` are skipped). Discovered and listed devices
//! are sorted in natural order (`d2` before `d10`); a given `devices` list keeps its order.

use std::cmp::Ordering;
use std::collections::BTreeSet;
use std::ops::Range;
use std::path::{Path, PathBuf};

use serde::Deserialize;
use toml::Spanned;

use crate::analysis::AnalysisSettings;
use crate::error::{Error, ErrorKind, Location, Result};
use crate::ingest::{parse_channel, parse_delimiter, ColumnSel, Format, IngestSettings, Metadata};
use crate::lot::limits::Catalogue;
use crate::spectrum::{SpectrumSettings, WindowChoice};

/// Default warning threshold between the fitted and the planned input level, dB.
pub const DEFAULT_AMPLITUDE_TOLERANCE_DB: f64 = 1.0;

/// A number, or a string with an SI prefix ("100M", "10.1 MHz").
#[derive(Debug, Clone, Copy)]
struct Quantity(f64);

impl<'de> Deserialize<'de> for Quantity {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
        struct V;
        impl serde::de::Visitor<'_> for V {
            type Value = Quantity;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a number, or a string with an SI prefix such as \"100M\"")
            }
            fn visit_f64<E: serde::de::Error>(self, v: f64) -> std::result::Result<Quantity, E> {
                Ok(Quantity(v))
            }
            fn visit_i64<E: serde::de::Error>(self, v: i64) -> std::result::Result<Quantity, E> {
                Ok(Quantity(v as f64))
            }
            fn visit_u64<E: serde::de::Error>(self, v: u64) -> std::result::Result<Quantity, E> {
                Ok(Quantity(v as f64))
            }
            fn visit_str<E: serde::de::Error>(self, v: &str) -> std::result::Result<Quantity, E> {
                crate::si::parse_si(v).map(Quantity).ok_or_else(|| {
                    E::custom(format!(
                        "expected a number or a string with an SI prefix such as \"100M\", found \"{v}\""
                    ))
                })
            }
        }
        d.deserialize_any(V)
    }
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct PlanToml {
    title: Option<String>,
    converter: ConverterToml,
    #[serde(default)]
    analysis: AnalysisToml,
    records: Spanned<RecordsToml>,
    condition: Spanned<Vec<Spanned<ConditionToml>>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct ConverterToml {
    bits: Spanned<u32>,
    sample_rate_hz: Spanned<Quantity>,
    full_scale_vpp: Option<Spanned<f64>>,
    format: Option<Spanned<String>>,
    coding: Option<Spanned<String>>,
    justify: Option<Spanned<String>>,
    skip_bytes: Option<u64>,
    channel: Option<Spanned<String>>,
    column: Option<ColumnSel>,
    delimiter: Option<Spanned<String>>,
}

#[derive(Deserialize, Default, Clone)]
#[serde(deny_unknown_fields)]
struct AnalysisToml {
    fit: Option<Spanned<String>>,
    window: Option<Spanned<String>>,
    harmonics: Option<Spanned<u32>>,
    guard_bins: Option<usize>,
    average: Option<Spanned<usize>>,
    amplitude_tolerance_db: Option<Spanned<f64>>,
}

impl AnalysisToml {
    /// Each key of `self`, else of `base`.
    fn over(&self, base: &AnalysisToml) -> AnalysisToml {
        AnalysisToml {
            fit: self.fit.clone().or_else(|| base.fit.clone()),
            window: self.window.clone().or_else(|| base.window.clone()),
            harmonics: self.harmonics.clone().or_else(|| base.harmonics.clone()),
            guard_bins: self.guard_bins.or(base.guard_bins),
            average: self.average.clone().or_else(|| base.average.clone()),
            amplitude_tolerance_db: self
                .amplitude_tolerance_db
                .clone()
                .or_else(|| base.amplitude_tolerance_db.clone()),
        }
    }
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RecordsToml {
    pattern: Option<Spanned<String>>,
    list: Option<Vec<Spanned<ListedToml>>>,
    devices: Option<Vec<Spanned<String>>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct ListedToml {
    device: Spanned<String>,
    condition: Spanned<String>,
    files: Spanned<Vec<String>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct ConditionToml {
    name: Spanned<String>,
    fin_hz: Spanned<Quantity>,
    amplitude_dbfs: Spanned<f64>,
    analysis: Option<AnalysisToml>,
}

/// One test condition: the input and the analysis settings in force.
#[derive(Debug, Clone, PartialEq)]
pub struct Condition {
    /// Its name (unique in the plan).
    pub name: String,
    /// The analog input frequency, hertz.
    pub fin_hz: f64,
    /// The nominal input level, dBFS.
    pub amplitude_dbfs: f64,
    /// The analysis settings (plan-wide, with this condition's overrides).
    pub settings: AnalysisSettings,
    /// Records whose spectra are averaged into one result.
    pub average: usize,
    /// Fitted level further than this from `amplitude_dbfs` raises a warning, dB.
    pub amplitude_tolerance_db: f64,
    /// The line of its `[[condition]]` table.
    pub line: usize,
}

/// Where the records of the lot are.
#[derive(Debug, Clone, PartialEq)]
pub enum RecordSource {
    /// A path pattern relative to the plan's folder with `{device}`, `{condition}` and `{index}`.
    Pattern {
        /// The pattern as written.
        pattern: String,
        /// Its line in the plan.
        line: usize,
    },
    /// An explicit list.
    List(Vec<ListedRecord>),
}

/// One entry of an explicit record list.
#[derive(Debug, Clone, PartialEq)]
pub struct ListedRecord {
    /// The device.
    pub device: String,
    /// The condition.
    pub condition: String,
    /// The files, relative paths already joined to the plan's folder.
    pub files: Vec<PathBuf>,
    /// Its line in the plan.
    pub line: usize,
}

/// A parsed and checked bench plan.
#[derive(Debug, Clone, PartialEq)]
pub struct BenchPlan {
    /// The plan file.
    pub path: PathBuf,
    /// Its title, when it has one.
    pub title: Option<String>,
    /// How records are read (the condition's input frequency is added per condition).
    pub ingest: IngestSettings,
    /// The conditions, in plan order.
    pub conditions: Vec<Condition>,
    /// Where the records are.
    pub records: RecordSource,
    /// The devices, when the plan lists them.
    pub devices: Option<Vec<String>>,
}

/// The devices of a lot and the record files of each device and condition.
#[derive(Debug, Clone, PartialEq)]
pub struct Lot {
    /// The devices, in output order.
    pub devices: Vec<String>,
    /// Number of conditions.
    pub conditions: usize,
    files: Vec<Vec<PathBuf>>,
}

impl Lot {
    /// The record files of a device and condition (by index); empty when a list names none.
    pub fn files(&self, device: usize, condition: usize) -> &[PathBuf] {
        &self.files[device * self.conditions + condition]
    }

    /// Number of device × condition results the lot gives.
    pub fn results(&self) -> usize {
        self.devices.len() * self.conditions
    }

    /// The part of the lot whose devices `keep` takes (by their 0-based place): those devices in lot
    /// order, with their record files.
    pub fn subset(&self, keep: impl Fn(usize) -> bool) -> Lot {
        let keep: Vec<usize> = (0..self.devices.len()).filter(|&i| keep(i)).collect();
        Lot {
            devices: keep.iter().map(|&i| self.devices[i].clone()).collect(),
            conditions: self.conditions,
            files: keep
                .iter()
                .flat_map(|&i| (0..self.conditions).map(move |c| self.files(i, c).to_vec()))
                .collect(),
        }
    }
}

/// The line (1-based) of a byte offset. The end of a text that ends in a newline (where the TOML
/// parser puts an error about an unclosed string or table) is on its last line, not the one after.
fn line_at(text: &str, byte: usize) -> usize {
    let end = text.len() - usize::from(text.ends_with('\n'));
    1 + text.as_bytes()[..byte.min(end)]
        .iter()
        .filter(|&&b| b == b'\n')
        .count()
}

/// The TOML path of the table that holds the byte offset: the last header before it, with arrays of
/// tables numbered from 1 (`condition[2]`), plus an inline table opened earlier on the same line.
fn table_at(text: &str, byte: usize) -> String {
    let byte = byte.min(text.len());
    let mut current = String::new();
    let mut arrays: Vec<(String, usize)> = Vec::new();
    let mut offset = 0;
    for line in text.split_inclusive('\n') {
        if offset + line.len() > byte {
            // An inline table opened before the offset on this line: `key = { ... }`.
            let before = &line[..byte - offset];
            if let Some(brace) = before.rfind('{') {
                if let Some((k, _)) = before[..brace].rsplit_once('=') {
                    let k = k.rsplit([',', '{']).next().unwrap_or(k).trim();
                    if !k.is_empty() {
                        return join_key(&current, k);
                    }
                }
            }
            break;
        }
        offset += line.len();
        let t = line.trim();
        let count = |arrays: &[(String, usize)], name: &str| {
            arrays.iter().find(|(n, _)| n == name).map(|(_, c)| *c)
        };
        if let Some(name) = t.strip_prefix("[[").and_then(|r| r.split("]]").next()) {
            let name = name.trim().to_string();
            match arrays.iter_mut().find(|(n, _)| *n == name) {
                Some((_, c)) => *c += 1,
                None => arrays.push((name.clone(), 1)),
            }
            current = format!("{name}[{}]", count(&arrays, &name).unwrap_or(1));
        } else if let Some(name) = t.strip_prefix('[').and_then(|r| r.split(']').next()) {
            let name = name.trim();
            let (head, rest) = name.split_once('.').unwrap_or((name, ""));
            current = match count(&arrays, head) {
                Some(c) if !rest.is_empty() => format!("{head}[{c}].{rest}"),
                _ => name.to_string(),
            };
        }
    }
    current
}

fn join_key(table: &str, key: &str) -> String {
    if table.is_empty() {
        key.to_string()
    } else {
        format!("{table}.{key}")
    }
}

/// The first `name` between backticks after `marker` in a message.
fn backticked_after<'a>(message: &'a str, marker: &str) -> Option<&'a str> {
    let rest = &message[message.find(marker)? + marker.len()..];
    let rest = rest.strip_prefix('`')?;
    rest.split('`').next()
}

/// The key written at the start of the line holding the byte offset (`key = value`).
fn key_on_line(text: &str, byte: usize) -> Option<String> {
    let byte = byte.min(text.len());
    let start = text[..byte].rfind('\n').map_or(0, |i| i + 1);
    let line = text[start..].lines().next()?;
    let (k, _) = line.split_once('=')?;
    let k = k.trim();
    (!k.is_empty() && !k.starts_with('[')).then(|| k.to_string())
}

/// Parses and checks plans, holding the text for spans → lines and keys.
struct Reader<'a> {
    text: &'a str,
    shown: String,
}

impl Reader<'_> {
    fn error_at(&self, line: usize, expected: String, found: String) -> Error {
        Error::new(
            ErrorKind::BadPlan,
            &self.shown,
            Location::Line(line),
            expected,
            found,
        )
    }

    /// An error about the value at `span` of key `leaf` in the table that holds it.
    fn bad(&self, span: Range<usize>, leaf: &str, what: &str, found: impl Into<String>) -> Error {
        let key = join_key(&table_at(self.text, span.start), leaf);
        self.error_at(
            line_at(self.text, span.start),
            format!("{key} = {what}"),
            found.into(),
        )
    }

    fn toml_error(&self, e: &toml::de::Error) -> Error {
        let span = e.span().unwrap_or(0..0);
        let line = line_at(self.text, span.start);
        // A span that starts on a table header (a missing key) is about that table.
        let line_start = self.text[..span.start.min(self.text.len())]
            .rfind('\n')
            .map_or(0, |i| i + 1);
        let line_text = self.text[line_start..].lines().next().unwrap_or("");
        let table = if line_text.trim_start().starts_with('[') {
            table_at(
                self.text,
                (line_start + line_text.len() + 1).min(self.text.len()),
            )
        } else {
            table_at(self.text, span.start)
        };
        let message = e.message().trim();
        if let Some(k) = backticked_after(message, "unknown field ") {
            let known = message
                .split_once("expected ")
                .map_or(String::new(), |(_, rest)| rest.replace('`', ""));
            let place = if table.is_empty() {
                "the plan's top level".to_string()
            } else {
                format!("[{table}]")
            };
            return self.error_at(
                line,
                format!("a key of {place}: {known}"),
                format!("the unknown key {}", join_key(&table, k)),
            );
        }
        if let Some(k) = backticked_after(message, "missing field ") {
            let place = if table.is_empty() {
                "the plan".to_string()
            } else {
                format!("[{table}]")
            };
            return self.error_at(
                line,
                format!("the required key {}", join_key(&table, k)),
                format!("no such key in {place}"),
            );
        }
        let key = key_on_line(self.text, span.start)
            .map(|k| join_key(&table, &k))
            .unwrap_or_else(|| {
                if table.is_empty() {
                    "the plan".into()
                } else {
                    table.clone()
                }
            });
        let mut message = message.replace('\n', " ");
        if message.is_empty() {
            // The TOML parser gives some syntax errors (a lone carriage return) no message: say what
            // stands at the place instead, so that the error still shows what was found.
            message = if span.start >= self.text.len() {
                "the end of the plan".to_string()
            } else {
                self.text
                    .get(span.start..)
                    .and_then(|t| t.chars().next())
                    .map_or_else(|| "text that is not TOML".to_string(), |c| format!("{c:?}"))
            };
        }
        // serde's "invalid type: X, expected Y" and our own "expected Y, found X".
        let split = ["invalid type: ", "invalid value: "]
            .iter()
            .find_map(|p| message.strip_prefix(p))
            .and_then(|rest| rest.rsplit_once(", expected "))
            .map(|(found, expected)| (expected.to_string(), found.to_string()))
            .or_else(|| {
                message
                    .strip_prefix("expected ")
                    .and_then(|rest| rest.split_once(", found "))
                    .map(|(expected, found)| (expected.to_string(), found.to_string()))
            });
        match split {
            Some((expected, found)) => self.error_at(line, format!("{key} = {expected}"), found),
            None => self.error_at(line, format!("valid TOML for {key}"), message),
        }
    }
}

/// True when a name can be a folder name and a pattern part: not empty, no path separators or control
/// characters, not `.`/`..`, no surrounding spaces, not `*` (the limit table's "every condition").
pub(crate) fn safe_name(s: &str) -> bool {
    !s.is_empty()
        && s != "."
        && s != ".."
        && s != "*"
        && s.trim() == s
        && !s.chars().any(|c| c == '/' || c == '\\' || c.is_control())
}

pub(crate) const SAFE_NAME: &str =
    "a name without / \\ or control characters, not empty, not . .. or *, no surrounding spaces";

/// True when a name can be a device's: a [`safe_name`] not starting with `.` (a device's folder is
/// never hidden, and names starting with `.` are the temporary files of an interrupted write).
pub(crate) fn device_name_ok(s: &str) -> bool {
    safe_name(s) && !s.starts_with('.')
}

/// True when a discovered folder or file name can be a device of the lot: not empty, no `/`, not
/// starting with `.` (hidden entries and the temporary files of an interrupted write). Wider than
/// [`device_name_ok`]: a discovered device whose name is not also a safe name is still analysed,
/// and its output folder is a safe name made from it (see [`crate::lot::device_folder`]).
pub(crate) fn discoverable_device(s: &str) -> bool {
    !s.is_empty() && !s.starts_with('.') && !s.contains('/') && !s.contains('\0')
}

/// What [`discoverable_device`] asks for, in an error.
pub(crate) const DISCOVERABLE_DEVICE: &str =
    "a device name that is one path component: not empty, no '/', not starting with '.'";

/// What [`device_name_ok`] asks for, in an error.
pub(crate) const DEVICE_NAME: &str =
    "a device name without / \\ or control characters, not empty, \
     not starting with '.', not *, no surrounding spaces";

/// The placeholders a record pattern may hold.
const PLACEHOLDERS: [&str; 3] = ["{device}", "{condition}", "{index}"];

impl BenchPlan {
    /// Reads and checks a plan file.
    pub fn read(path: &Path) -> Result<BenchPlan> {
        let text = crate::resources::read_small_text(
            path,
            "a readable bench plan (UTF-8 TOML)",
            crate::resources::MAX_SMALL_FILE_BYTES,
        )?;
        BenchPlan::parse(&text, path)
    }

    /// Parses and checks a plan's text; `path` names it in errors and anchors relative record paths.
    pub fn parse(text: &str, path: &Path) -> Result<BenchPlan> {
        let r = Reader {
            text,
            shown: path.display().to_string(),
        };
        let raw: PlanToml = toml::from_str(text).map_err(|e| r.toml_error(&e))?;
        let folder = path.parent().unwrap_or(Path::new("")).to_path_buf();
        let ingest = converter(&r, &raw.converter)?;
        if raw.condition.get_ref().is_empty() {
            return Err(r.bad(
                raw.condition.span(),
                "condition",
                "at least one [[condition]] table",
                "none",
            ));
        }
        let mut conditions: Vec<Condition> = Vec::new();
        for c in raw.condition.get_ref() {
            let line = line_at(text, c.span().start);
            let c = c.get_ref();
            let name = c.name.get_ref();
            if !safe_name(name) {
                return Err(r.bad(c.name.span(), "name", SAFE_NAME, format!("{name:?}")));
            }
            if let Some(first) = conditions.iter().find(|o| &o.name == name) {
                return Err(r.bad(
                    c.name.span(),
                    "name",
                    "a condition name not used before",
                    format!(
                        "{name:?}, already the name of the condition at line {}",
                        first.line
                    ),
                ));
            }
            let fin = c.fin_hz.get_ref().0;
            if !(fin.is_finite() && fin > 0.0) {
                return Err(r.bad(
                    c.fin_hz.span(),
                    "fin_hz",
                    "a positive input frequency in hertz",
                    fin.to_string(),
                ));
            }
            let amp = *c.amplitude_dbfs.get_ref();
            if !amp.is_finite() {
                return Err(r.bad(
                    c.amplitude_dbfs.span(),
                    "amplitude_dbfs",
                    "a finite level in dBFS",
                    amp.to_string(),
                ));
            }
            let merged = c
                .analysis
                .as_ref()
                .map_or_else(|| raw.analysis.clone(), |a| a.over(&raw.analysis));
            let (settings, average, amplitude_tolerance_db) = analysis(&r, &merged)?;
            conditions.push(Condition {
                name: name.clone(),
                fin_hz: fin,
                amplitude_dbfs: amp,
                settings,
                average,
                amplitude_tolerance_db,
                line,
            });
        }
        let rec = raw.records.get_ref();
        let devices = match &rec.devices {
            None => None,
            Some(list) => {
                let mut seen: Vec<String> = Vec::new();
                for d in list {
                    let name = d.get_ref();
                    if !device_name_ok(name) {
                        return Err(r.bad(d.span(), "devices", DEVICE_NAME, format!("{name:?}")));
                    }
                    if seen.contains(name) {
                        return Err(r.bad(
                            d.span(),
                            "devices",
                            "each device once",
                            format!("{name:?} twice"),
                        ));
                    }
                    seen.push(name.clone());
                }
                if seen.is_empty() {
                    return Err(r.bad(
                        raw.records.span(),
                        "devices",
                        "at least one device (or no devices key, to discover them)",
                        "an empty list",
                    ));
                }
                Some(seen)
            }
        };
        let records = match (&rec.pattern, &rec.list) {
            (Some(_), Some(_)) | (None, None) => {
                return Err(r.error_at(
                    line_at(text, raw.records.span().start),
                    "records.pattern or records.list (exactly one of them)".into(),
                    if rec.pattern.is_some() {
                        "both".into()
                    } else {
                        "neither".into()
                    },
                ))
            }
            (Some(p), None) => {
                check_pattern(&r, p, &conditions, devices.as_deref())?;
                RecordSource::Pattern {
                    pattern: p.get_ref().clone(),
                    line: line_at(text, p.span().start),
                }
            }
            (None, Some(list)) => {
                let mut out: Vec<ListedRecord> = Vec::new();
                for entry in list {
                    let e = entry.get_ref();
                    let line = line_at(text, entry.span().start);
                    let dev = e.device.get_ref();
                    if !device_name_ok(dev) {
                        return Err(r.bad(
                            e.device.span(),
                            "device",
                            DEVICE_NAME,
                            format!("{dev:?}"),
                        ));
                    }
                    if let Some(ds) = &devices {
                        if !ds.contains(dev) {
                            return Err(r.bad(
                                e.device.span(),
                                "device",
                                "a device of records.devices",
                                format!("{dev:?}"),
                            ));
                        }
                    }
                    let cname = e.condition.get_ref();
                    let Some(cond) = conditions.iter().find(|c| &c.name == cname) else {
                        let names: Vec<&str> = conditions.iter().map(|c| c.name.as_str()).collect();
                        return Err(r.bad(
                            e.condition.span(),
                            "condition",
                            &format!("a condition of the plan: {}", names.join(", ")),
                            format!("{cname:?}"),
                        ));
                    };
                    let files = e.files.get_ref();
                    if files.len() != cond.average {
                        return Err(r.bad(
                            e.files.span(),
                            "files",
                            &format!(
                                "{} file(s), the records condition {cname:?} averages",
                                cond.average
                            ),
                            format!("{} file(s)", files.len()),
                        ));
                    }
                    if let Some(first) = out
                        .iter()
                        .find(|o| &o.device == dev && &o.condition == cname)
                    {
                        return Err(r.bad(
                            e.device.span(),
                            "device",
                            "one entry per device and condition",
                            format!(
                                "a second entry for {dev:?} and {cname:?} (the first is at line {})",
                                first.line
                            ),
                        ));
                    }
                    out.push(ListedRecord {
                        device: dev.clone(),
                        condition: cname.clone(),
                        files: files.iter().map(|f| folder.join(f)).collect(),
                        line,
                    });
                }
                if out.is_empty() {
                    return Err(r.bad(
                        raw.records.span(),
                        "list",
                        "at least one record entry",
                        "an empty list",
                    ));
                }
                RecordSource::List(out)
            }
        };
        Ok(BenchPlan {
            path: path.to_path_buf(),
            title: raw.title,
            ingest,
            conditions,
            records,
            devices,
        })
    }

    /// The folder relative record paths start from.
    pub fn folder(&self) -> &Path {
        self.path.parent().unwrap_or(Path::new(""))
    }

    /// The ingest settings for a condition: the plan's, with the condition's input frequency (folded
    /// into the first Nyquist zone) as the fit's frequency hint.
    pub fn ingest_for(&self, condition: &Condition) -> IngestSettings {
        let mut s = self.ingest.clone();
        let fs = s.meta.sample_rate_hz.unwrap_or(f64::NAN);
        let folded = crate::freq::fold_to_first_zone(condition.fin_hz, fs);
        // A tone folded onto DC or Nyquist gives no usable hint; the fit then searches the band.
        s.meta.fin_hz = (folded > 0.0 && folded < fs / 2.0).then_some(folded);
        s
    }

    /// The highest harmonic order of any condition (the results' column set covers them all).
    pub fn max_harmonics(&self) -> u32 {
        self.conditions
            .iter()
            .map(|c| c.settings.spectrum.harmonics)
            .max()
            .unwrap_or(10)
    }

    /// What a limit table for this plan may name: each condition, with the metrics its results carry
    /// (those of its highest harmonic order). Give it to [`crate::lot::limits::LimitTable::read`].
    pub fn limit_scope(&self) -> Vec<(String, Catalogue)> {
        self.conditions
            .iter()
            .map(|c| {
                (
                    c.name.clone(),
                    Catalogue::for_harmonics(c.settings.spectrum.harmonics),
                )
            })
            .collect()
    }

    /// Finds the lot: the devices and each device's record files per condition. Errors: a pattern that
    /// matches no file (naming the plan, the pattern's line and `records.pattern`).
    pub fn locate(&self) -> Result<Lot> {
        let n = self.conditions.len();
        match &self.records {
            RecordSource::Pattern { pattern, line } => {
                let folder = self.folder();
                let fill = |device: Option<&str>, c: &Condition, index: usize| {
                    let mut s = pattern
                        .replace("{condition}", &c.name)
                        .replace("{index}", &index.to_string());
                    if let Some(d) = device {
                        s = s.replace("{device}", d);
                    }
                    s
                };
                let devices = match &self.devices {
                    Some(d) => d.clone(),
                    None => {
                        let mut found = BTreeSet::new();
                        for c in &self.conditions {
                            for i in 1..=c.average {
                                discover(folder, &fill(None, c, i), &mut found);
                            }
                        }
                        let mut v: Vec<String> = found.into_iter().collect();
                        v.sort_by(|a, b| natural_cmp(a, b));
                        v
                    }
                };
                let mut files = Vec::with_capacity(devices.len() * n);
                let mut any = false;
                for d in &devices {
                    for c in &self.conditions {
                        let paths: Vec<PathBuf> = (1..=c.average)
                            .map(|i| folder.join(fill(Some(d), c, i)))
                            .collect();
                        any = any || paths.iter().any(|p| record_entry(p));
                        files.push(paths);
                    }
                }
                if !any {
                    return Err(Error::new(
                        ErrorKind::BadPlan,
                        self.path.display().to_string(),
                        Location::Line(*line),
                        format!(
                            "records.pattern = a pattern that matches record files under '{}'",
                            if folder.as_os_str().is_empty() {
                                Path::new(".").display()
                            } else {
                                folder.display()
                            }
                        ),
                        format!("no file matches {pattern:?}"),
                    ));
                }
                Ok(Lot {
                    devices,
                    conditions: n,
                    files,
                })
            }
            RecordSource::List(list) => {
                let devices = match &self.devices {
                    Some(d) => d.clone(),
                    None => {
                        let mut v: Vec<String> = Vec::new();
                        for e in list {
                            if !v.contains(&e.device) {
                                v.push(e.device.clone());
                            }
                        }
                        v.sort_by(|a, b| natural_cmp(a, b));
                        v
                    }
                };
                let mut files = vec![Vec::new(); devices.len() * n];
                for e in list {
                    let d = devices.iter().position(|x| x == &e.device);
                    let c = self.conditions.iter().position(|x| x.name == e.condition);
                    if let (Some(d), Some(c)) = (d, c) {
                        files[d * n + c] = e.files.clone();
                    }
                }
                Ok(Lot {
                    devices,
                    conditions: n,
                    files,
                })
            }
        }
    }
}

/// A key's value parsed by its type's `FromStr`, an error pointing at the value in the plan.
fn parsed<T>(r: &Reader, v: &Option<Spanned<String>>, key: &str) -> Result<Option<T>>
where
    T: std::str::FromStr<Err = Error>,
{
    v.as_ref()
        .map(|s| {
            s.get_ref()
                .parse()
                .map_err(|e: Error| r.bad(s.span(), key, &e.expected, format!("{:?}", s.get_ref())))
        })
        .transpose()
}

/// Converts and checks `[converter]`.
fn converter(r: &Reader, c: &ConverterToml) -> Result<IngestSettings> {
    let bits = *c.bits.get_ref();
    crate::record::check_bits(bits)
        .map_err(|e| r.bad(c.bits.span(), "bits", &e.expected, e.found))?;
    let fs = c.sample_rate_hz.get_ref().0;
    if !(fs.is_finite() && fs > 0.0) {
        return Err(r.bad(
            c.sample_rate_hz.span(),
            "sample_rate_hz",
            "a positive sample rate in hertz",
            fs.to_string(),
        ));
    }
    let full_scale_vpp = match &c.full_scale_vpp {
        Some(v) if !(v.get_ref().is_finite() && *v.get_ref() > 0.0) => {
            return Err(r.bad(
                v.span(),
                "full_scale_vpp",
                "a positive range in volts peak-to-peak",
                v.get_ref().to_string(),
            ))
        }
        v => v.as_ref().map(|v| *v.get_ref()),
    };
    let format = match &c.format {
        None => None,
        Some(f) => Some(Format::parse(f.get_ref()).map_err(|e| {
            r.bad(
                f.span(),
                "format",
                &e.expected,
                format!("{:?}", f.get_ref()),
            )
        })?),
    };
    let coding = parsed(r, &c.coding, "coding")?;
    let justify = parsed(r, &c.justify, "justify")?;
    let channel = match &c.channel {
        None => None,
        Some(ch) => Some(parse_channel(ch.get_ref()).map_err(|e| {
            r.bad(
                ch.span(),
                "channel",
                &e.expected,
                format!("{:?}", ch.get_ref()),
            )
        })?),
    };
    let delimiter = match &c.delimiter {
        None => None,
        Some(d) => Some(
            parse_delimiter(d.get_ref())
                .map_err(|e| r.bad(d.span(), "delimiter", &e.expected, e.found))?,
        ),
    };
    Ok(IngestSettings {
        format,
        meta: Metadata {
            sample_rate_hz: Some(fs),
            bits: Some(bits),
            fin_hz: None,
            full_scale_vpp,
        },
        coding,
        justify,
        skip_bytes: c.skip_bytes,
        channel,
        column: c.column.clone(),
        delimiter,
        unit: None,
        min_samples: 0,
        ..IngestSettings::default()
    })
}

/// Converts and checks analysis keys (after a condition's overrides are merged in).
fn analysis(r: &Reader, a: &AnalysisToml) -> Result<(AnalysisSettings, usize, f64)> {
    let fit = parsed(r, &a.fit, "fit")?.unwrap_or_default();
    let window = parsed(r, &a.window, "window")?.unwrap_or(WindowChoice::Auto);
    let harmonics = match &a.harmonics {
        None => 10,
        Some(h) if (1..=100).contains(h.get_ref()) => *h.get_ref(),
        Some(h) => {
            return Err(r.bad(
                h.span(),
                "harmonics",
                "a highest harmonic order in 1..=100",
                h.get_ref().to_string(),
            ))
        }
    };
    let average = match &a.average {
        None => 1,
        Some(n) if (1..=10_000).contains(n.get_ref()) => *n.get_ref(),
        Some(n) => {
            return Err(r.bad(
                n.span(),
                "average",
                "a number of records in 1..=10000",
                n.get_ref().to_string(),
            ))
        }
    };
    let tolerance = match &a.amplitude_tolerance_db {
        None => DEFAULT_AMPLITUDE_TOLERANCE_DB,
        Some(t) if t.get_ref().is_finite() && *t.get_ref() > 0.0 => *t.get_ref(),
        Some(t) => {
            return Err(r.bad(
                t.span(),
                "amplitude_tolerance_db",
                "a positive number of dB",
                t.get_ref().to_string(),
            ))
        }
    };
    Ok((
        AnalysisSettings {
            fit,
            spectrum: SpectrumSettings {
                window,
                harmonics,
                guard_bins: a.guard_bins,
            },
            min_samples: 0,
            keep_residual: true,
        },
        average,
        tolerance,
    ))
}

/// Checks a record pattern's placeholders against the plan.
fn check_pattern(
    r: &Reader,
    p: &Spanned<String>,
    conditions: &[Condition],
    devices: Option<&[String]>,
) -> Result<()> {
    let pattern = p.get_ref();
    let bad = |what: &str, found: String| r.bad(p.span(), "pattern", what, found);
    if pattern.trim().is_empty() {
        return Err(bad(
            "a path pattern such as \"records/{device}/{condition}.bin\"",
            "an empty string".into(),
        ));
    }
    let mut rest = pattern.as_str();
    while let Some(open) = rest.find('{') {
        let tail = &rest[open..];
        match PLACEHOLDERS.iter().find(|ph| tail.starts_with(**ph)) {
            Some(ph) => rest = &tail[ph.len()..],
            None => {
                let shown: String = tail.chars().take_while(|&c| c != '}').collect();
                return Err(bad(
                    "a pattern whose placeholders are {device}, {condition} and {index}",
                    format!("{shown}}} in {pattern:?}"),
                ));
            }
        }
    }
    if !pattern.contains("{device}") && devices.is_none_or(|d| d.len() != 1) {
        return Err(bad(
            "a pattern with {device} (or a records.devices list of one device)",
            format!("{pattern:?}"),
        ));
    }
    if !pattern.contains("{condition}") && conditions.len() > 1 {
        return Err(bad(
            "a pattern with {condition}, since the plan has several conditions",
            format!("{pattern:?}"),
        ));
    }
    if let Some(c) = conditions.iter().find(|c| c.average > 1) {
        if !pattern.contains("{index}") {
            return Err(bad(
                &format!(
                    "a pattern with {{index}}, since condition {:?} averages {} records",
                    c.name, c.average
                ),
                format!("{pattern:?}"),
            ));
        }
    }
    Ok(())
}

/// Adds to `found` every device value for which `pattern` (condition and index filled in, `{device}`
/// left) names an existing file under `folder`.
fn discover(folder: &Path, pattern: &str, found: &mut BTreeSet<String>) {
    let (base, rest) = match pattern.strip_prefix('/') {
        Some(r) => (PathBuf::from("/"), r),
        None => (folder.to_path_buf(), pattern),
    };
    let parts: Vec<&str> = rest.split('/').filter(|p| !p.is_empty()).collect();
    walk(&base, &parts, None, found);
}

fn walk(base: &Path, parts: &[&str], device: Option<&str>, found: &mut BTreeSet<String>) {
    let Some((part, rest)) = parts.split_first() else {
        if let Some(d) = device {
            // Anything but a folder counts (a FIFO, a link to a device file): such a record is then
            // refused when read, as that device's error row, instead of the device vanishing.
            if record_entry(base) {
                found.insert(d.to_string());
            }
        }
        return;
    };
    if !part.contains("{device}") {
        return walk(&base.join(part), rest, device, found);
    }
    if let Some(d) = device {
        return walk(&base.join(part.replace("{device}", d)), rest, device, found);
    }
    let listing = if base.as_os_str().is_empty() {
        Path::new(".")
    } else {
        base
    };
    let Ok(entries) = std::fs::read_dir(listing) else {
        return;
    };
    for entry in entries.flatten() {
        let name = entry.file_name();
        let Some(name) = name.to_str() else { continue };
        if let Some(d) = match_part(part, name) {
            walk(&base.join(name), rest, Some(&d), found);
        }
    }
}

/// The value of `{device}` for which the pattern part `template` spells `name`; every `{device}` in it
/// takes the same value, which must be a [`discoverable_device`] name.
fn match_part(template: &str, name: &str) -> Option<String> {
    let pieces: Vec<&str> = template.split("{device}").collect();
    let k = pieces.len() - 1;
    let fixed: usize = pieces.iter().map(|p| p.len()).sum();
    if k == 0 || name.len() < fixed + k || !(name.len() - fixed).is_multiple_of(k) {
        return None;
    }
    let len = (name.len() - fixed) / k;
    let start = pieces[0].len();
    let value = name.get(start..start + len)?;
    (name.starts_with(pieces[0]) && pieces.join(value) == name && discoverable_device(value))
        .then(|| value.to_string())
}

/// True when `path` names something a record could be read from: it exists (a link counts, even
/// a dangling one) and is not a folder.
fn record_entry(path: &Path) -> bool {
    std::fs::symlink_metadata(path).is_ok_and(|m| !m.is_dir())
}

/// Natural order: digit runs compare by value, the rest by character; ties by the plain strings.
pub fn natural_cmp(a: &str, b: &str) -> Ordering {
    fn runs(s: &str) -> Vec<(bool, &str)> {
        let mut out = Vec::new();
        let mut start = 0;
        let bytes = s.as_bytes();
        for i in 1..=bytes.len() {
            if i == bytes.len() || bytes[i].is_ascii_digit() != bytes[start].is_ascii_digit() {
                out.push((bytes[start].is_ascii_digit(), &s[start..i]));
                start = i;
            }
        }
        out
    }
    let (ra, rb) = (runs(a), runs(b));
    for (x, y) in ra.iter().zip(&rb) {
        let o = match (x.0, y.0) {
            (true, true) => {
                let (tx, ty) = (x.1.trim_start_matches('0'), y.1.trim_start_matches('0'));
                tx.len().cmp(&ty.len()).then_with(|| tx.cmp(ty))
            }
            _ => x.1.cmp(y.1),
        };
        if o != Ordering::Equal {
            return o;
        }
    }
    ra.len().cmp(&rb.len()).then_with(|| a.cmp(b))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn part_matching() {
        assert_eq!(match_part("{device}", "d01"), Some("d01".into()));
        assert_eq!(
            match_part("{device}_f1.bin", "d01_f1.bin"),
            Some("d01".into())
        );
        assert_eq!(match_part("{device}_f1.bin", "d01_f2.bin"), None);
        assert_eq!(
            match_part("x{device}y{device}", "xabyab"),
            Some("ab".into())
        );
        assert_eq!(match_part("x{device}y{device}", "xabyac"), None);
        assert_eq!(match_part("{device}.bin", ".bin"), None);
        assert_eq!(match_part("{device}.bin", ".hidden.bin"), None);
    }

    #[test]
    fn natural_order() {
        let mut v = vec!["d10", "d2", "d1", "a", "d02", "b3x"];
        v.sort_by(|a, b| natural_cmp(a, b));
        assert_eq!(v, vec!["a", "b3x", "d1", "d02", "d2", "d10"]);
    }

    #[test]
    fn lone_carriage_return_is_named() {
        // Found by fuzz_plan: a TOML syntax error without a message gave an empty "found".
        let e = BenchPlan::parse("\r", Path::new("p.toml")).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadPlan);
        assert_eq!(e.found, "'\\r'", "{e:?}");
        assert_eq!(e.location, Location::Line(1), "{e:?}");
        // Inside a line the parser says what it expected; that stays as it was.
        let e = BenchPlan::parse("[converter]\rbits = 12\n", Path::new("p.toml")).unwrap_err();
        assert!(e.found.starts_with("invalid table header"), "{e:?}");
        assert_eq!(e.location, Location::Line(1), "{e:?}");
    }

    #[test]
    fn error_at_the_end_is_on_the_last_line() {
        // Found by fuzz_plan: an unclosed multi-line string at the end gave the line after the last.
        let text = "[converter]\nbits = 12\ntitle = '''open\n";
        let e = BenchPlan::parse(text, Path::new("p.toml")).unwrap_err();
        assert_eq!(e.location, Location::Line(3), "{e:?}");
        assert_eq!(line_at("a\n", 2), 1);
        assert_eq!(line_at("a\nb", 3), 2);
        assert_eq!(line_at("", 0), 1);
    }

    #[test]
    fn table_paths() {
        let t = "a = 1\n[converter]\nbits = 3\n[[condition]]\nname = \"x\"\n[[condition]]\nname = \"y\"\n[condition.analysis]\nfit = 1\n[[condition]]\nanalysis = { window = 2 }\n";
        assert_eq!(table_at(t, 0), "");
        assert_eq!(table_at(t, t.find("bits").unwrap()), "converter");
        assert_eq!(table_at(t, t.find("\"y\"").unwrap()), "condition[2]");
        assert_eq!(table_at(t, t.find("fit").unwrap()), "condition[2].analysis");
        assert_eq!(
            table_at(t, t.find("window").unwrap()),
            "condition[3].analysis"
        );
        assert_eq!(line_at(t, t.find("fit").unwrap()), 9);
    }
}
