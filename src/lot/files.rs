//! The files of a lot folder (their names and columns) and the one reader of them: `summary.csv`
//! through [`LotSummary`], `failures.csv` and `yield.csv` as serde rows ([`FailureRow`],
//! [`YieldRow`]). `compare`, `sweep`, `limits` (its characterisation runs), `merge` and
//! `merge --status` all read a lot through this module.
//!
//! # Cells that are not numbers
//! One rule for every reader: in a column of a figure that the figure table gives as a number, an
//! empty cell is no value, a finite number is the value, and anything else (text, `NaN`, `inf`, a
//! hand-edited cell) is no value *and* is recorded as a [`DroppedCell`] with its line, column and
//! text ([`LotSummary::dropped`]), so that a caller can say how many it left out.

use std::cell::RefCell;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::de::DeserializeOwned;
use serde::{Deserialize, Serialize};

use crate::error::{Error, ErrorKind, Location, Result};
use crate::figures::{self, Kind};
use crate::lot::limits::{Bound, CheckOutcome};

/// The lot summary (one row per device and condition), in the lot folder and in each device folder.
pub const SUMMARY_CSV: &str = "summary.csv";
/// One row per failing check.
pub const FAILURES_CSV: &str = "failures.csv";
/// Yield per condition and limited metric, and the lot's.
pub const YIELD_CSV: &str = "yield.csv";
/// The lot's page.
pub const INDEX_HTML: &str = "index.html";
/// The limits a lot was judged by, as applied (written when a limit table was given).
pub const LIMITS_CSV: &str = "limits.csv";
/// A device's result records and verdicts, in its folder.
pub const RESULTS_JSON: &str = "results.json";
/// File name of the shard manifest in a shard's output folder.
pub const SHARD_MANIFEST: &str = "shard.json";
/// File name of the note a shard run writes when it starts (see [`crate::lot::ShardManifest`]).
pub const SHARD_START_NOTE: &str = "shard-start.json";

/// The names a lot folder keeps for its own files. A device folder never takes one of them (see
/// [`device_folder`]), and `merge` copies nothing under them from a device folder.
pub const LOT_FILE_NAMES: [&str; 8] = [
    SUMMARY_CSV,
    LIMITS_CSV,
    FAILURES_CSV,
    YIELD_CSV,
    INDEX_HTML,
    RESULTS_JSON,
    SHARD_MANIFEST,
    SHARD_START_NOTE,
];

/// What a device folder's name ends with when the device's own name cannot be the folder's: a name of
/// the lot's own files ([`LOT_FILE_NAMES`], compared without case), or a name that already ends so
/// (which keeps the rule one-to-one).
const DEVICE_FOLDER_SUFFIX: &str = "~device";

/// The folder of a device in a lot folder: its name, or its name with `~device` appended when the
/// name is one of the lot's own file names (compared without case, for case-insensitive file
/// systems) or already ends with `~device`. A discovered device whose folder name is not a safe
/// device name (surrounding spaces, a tab, `*`, `\`) gets `<file-safe name>~<16 hex digits of a
/// hash of the name>~device`. One-to-one, so two devices never share a folder, and always one safe
/// path component.
pub fn device_folder(device: &str) -> String {
    if !crate::lot::bench_plan::device_name_ok(device) {
        return format!(
            "{}~{:016x}{DEVICE_FOLDER_SUFFIX}",
            crate::report::file_safe_name(device),
            fnv1a(device.as_bytes())
        );
    }
    let reserved = LOT_FILE_NAMES
        .iter()
        .any(|f| f.eq_ignore_ascii_case(device));
    if reserved || device.ends_with(DEVICE_FOLDER_SUFFIX) {
        format!("{device}{DEVICE_FOLDER_SUFFIX}")
    } else {
        device.to_string()
    }
}

/// 64-bit FNV-1a: a stable hash (the same on every machine and release) for folder names.
fn fnv1a(bytes: &[u8]) -> u64 {
    bytes.iter().fold(0xcbf2_9ce4_8422_2325, |h, &b| {
        (h ^ u64::from(b)).wrapping_mul(0x0000_0100_0000_01b3)
    })
}

/// The kinds of plot a device folder may hold per condition, as the file name's suffix.
pub(crate) const PLOT_KINDS: [&str; 3] = ["spectrum", "residual", "histogram"];

/// The stems of the conditions' plot files in a device folder (`<stem>-spectrum.svg`, ...), in plan
/// order: each condition's name made file-safe, and unique among them (`-2`, `-3`, ... appended), so
/// that conditions whose names differ only in characters a file name cannot hold (`a+b`, `a=b`) keep
/// their own plots.
pub fn plot_stems<S: AsRef<str>>(conditions: &[S]) -> Vec<String> {
    let mut taken: Vec<String> = Vec::new();
    conditions
        .iter()
        .map(|c| crate::report::unique_name(crate::report::file_safe_name(c.as_ref()), &mut taken))
        .collect()
}

/// Leading columns of every summary row, before the result record's columns.
pub const LEAD_COLUMNS: [&str; 4] = ["device", "condition", "verdict", "reason"];

/// Columns of `failures.csv`: the fields of [`FailureRow`], in order.
pub const FAILURE_COLUMNS: [&str; 10] = [
    "device",
    "condition",
    "metric",
    "bound",
    "limit",
    "value",
    "margin",
    "guardband",
    "unit",
    "outcome",
];

/// Columns of `yield.csv`: the fields of [`YieldRow`], in order.
pub const YIELD_COLUMNS: [&str; 8] = [
    "condition",
    "metric",
    "tested",
    "passed",
    "failed",
    "failed_guardband",
    "errors",
    "yield",
];

/// One row of `failures.csv`: a check that did not pass.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FailureRow {
    /// The device.
    pub device: String,
    /// The condition.
    pub condition: String,
    /// The metric (a summary column).
    pub metric: String,
    /// The stated limit nearest the value; empty when the result has no value.
    pub bound: Option<Bound>,
    /// That limit.
    pub limit: Option<f64>,
    /// The result's value.
    pub value: Option<f64>,
    /// Signed distance from the limit, positive inside.
    pub margin: Option<f64>,
    /// The guardband.
    pub guardband: f64,
    /// The metric's unit.
    pub unit: String,
    /// `fail`, `guardband` or `no_value`.
    pub outcome: CheckOutcome,
}

/// One row of `yield.csv`: a condition's results (metric `*`), one limited metric of a condition, or
/// the lot's devices (condition and metric `*`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct YieldRow {
    /// The condition, or `*` for the lot row.
    pub condition: String,
    /// The metric, or `*` for all of them.
    pub metric: String,
    /// Tested results (devices in the lot row).
    pub tested: usize,
    /// Of those, passing.
    pub passed: usize,
    /// Failing.
    pub failed: usize,
    /// Failing only inside guardbands.
    pub failed_guardband: usize,
    /// Error rows (counted in `tested` too where the condition has limits: tested, not passed).
    pub errors: usize,
    /// passed / tested to 4 decimals; empty when nothing was tested.
    #[serde(rename = "yield")]
    pub yield_fraction: Option<f64>,
}

/// A cell of a figure column that held something other than an empty cell or a finite number, and
/// was therefore left out (see the module docs).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DroppedCell {
    /// The file.
    pub path: String,
    /// The line of its row (the header is line 1).
    pub line: usize,
    /// Its column.
    pub column: String,
    /// What it held.
    pub found: String,
}

impl std::fmt::Display for DroppedCell {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "{}: line {}, column {}: {:?} is not a number",
            self.path, self.line, self.column, self.found
        )
    }
}

/// One line saying how many figure cells a reader left out as not numbers and which (the first five
/// named); `None` when it left out none. `compare`, `sweep` and `limits` all report it, so a
/// hand-edited cell never shrinks a statistic unseen.
pub fn dropped_note(cells: &[DroppedCell]) -> Option<String> {
    const NAMED: usize = 5;
    let (first, more) = cells.split_at(cells.len().min(NAMED));
    let first = first.first()?;
    let mut s = format!(
        "{} figure cell(s) that are not numbers left out: {first}",
        cells.len()
    );
    for c in &cells[1..cells.len().min(NAMED)] {
        s.push_str(&format!("; {c}"));
    }
    if !more.is_empty() {
        s.push_str(&format!("; and {} more", more.len()));
    }
    Some(s)
}

pub(crate) fn read_error(path: &Path, location: Location, expected: &str, found: String) -> Error {
    Error::new(
        ErrorKind::BadMetadata,
        path.display().to_string(),
        location,
        expected,
        found,
    )
}

fn csv_error(path: &Path, expected: &str, e: &::csv::Error) -> Error {
    let loc = e
        .position()
        .map_or(Location::Whole, |p| Location::Row(p.line() as usize));
    read_error(path, loc, expected, e.to_string())
}

pub(crate) fn read_bytes(path: &Path, what: &str) -> Result<Vec<u8>> {
    // A lot's files grow with the lot: bounded by the memory ceiling, not by a small-file size.
    crate::resources::read_small_file(path, what, crate::resources::default_memory_limit() / 4)
}

/// A lot's (or a device's) `summary.csv`, read whole and parsed row by row ([`LotSummary::rows`]).
/// Only `device` and `condition` columns are required, so that summaries put together by hand read
/// too; the batch's other lead columns are optional. The summary of an `analyze --out` folder
/// (`device`, `record`) reads as a lot whose conditions are its record names.
#[derive(Debug)]
pub struct LotSummary {
    path: PathBuf,
    bytes: Vec<u8>,
    columns: Vec<String>,
    header_len: usize,
    device: usize,
    condition: usize,
    verdict: Option<usize>,
    reason: Option<usize>,
    error: Option<usize>,
    /// Per column, whether the figure table gives it as a number.
    numeric: Vec<bool>,
    dropped: RefCell<BTreeMap<(usize, usize), String>>,
}

impl LotSummary {
    /// Reads the `summary.csv` of a lot (or device) folder.
    pub fn in_folder(dir: &Path) -> Result<LotSummary> {
        LotSummary::read(&dir.join(SUMMARY_CSV))
    }

    /// Reads a summary CSV file and its header. Errors: a file that cannot be read, a header that
    /// does not parse, no `device` column, or neither a `condition` nor a `record` column.
    pub fn read(path: &Path) -> Result<LotSummary> {
        let bytes = read_bytes(path, "a readable lot summary.csv")?;
        let mut rdr = ::csv::ReaderBuilder::new().from_reader(bytes.as_slice());
        let columns: Vec<String> = rdr
            .headers()
            .map_err(|e| csv_error(path, "a lot summary CSV written by spurline batch", &e))?
            .iter()
            .map(str::to_string)
            .collect();
        let mut header_len = rdr.position().byte() as usize;
        // The reader stops between the `\r` and `\n` of a CRLF header (a file saved by a
        // spreadsheet); the line end belongs to the header, or every row's line is one short.
        if bytes.get(header_len) == Some(&b'\n') && header_len > 0 && bytes[header_len - 1] == b'\r'
        {
            header_len += 1;
        }
        let col = |name: &str| columns.iter().position(|h| h == name);
        // An analyze report names records where a lot names conditions.
        let (Some(device), Some(condition)) =
            (col("device"), col("condition").or_else(|| col("record")))
        else {
            return Err(read_error(
                path,
                Location::Row(1),
                "columns 'device' and 'condition' (a lot summary written by spurline batch) \
                 or 'device' and 'record' (a report of spurline analyze)",
                format!("the columns {}", columns.join(", ")),
            ));
        };
        let numeric = columns
            .iter()
            .map(|c| {
                figures::get(c)
                    .is_some_and(|f| matches!(f.figure.kind, Kind::Number | Kind::Integer))
                    || figures::uncertainty_of(c).is_some()
            })
            .collect();
        Ok(LotSummary {
            path: path.to_path_buf(),
            device,
            condition,
            verdict: col("verdict"),
            reason: col("reason"),
            error: col(figures::ERROR_MESSAGE.key),
            numeric,
            columns,
            header_len,
            bytes,
            dropped: RefCell::new(BTreeMap::new()),
        })
    }

    /// The file read.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The column names, in file order.
    pub fn columns(&self) -> &[String] {
        &self.columns
    }

    /// The place of a column.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.columns.iter().position(|h| h == name)
    }

    /// The header line as written, with its line end.
    pub fn header_bytes(&self) -> &[u8] {
        &self.bytes[..self.header_len]
    }

    /// The rows in file order. Errors (one per bad row, naming its line): a row that does not parse
    /// or has another number of cells than the header.
    pub fn rows(&self) -> impl Iterator<Item = Result<SummaryRow<'_>>> + '_ {
        let mut rdr = ::csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(false)
            .from_reader(&self.bytes[self.header_len..]);
        let mut record = ::csv::StringRecord::new();
        // Lines and bytes of the rest are counted from the header's end.
        let header_lines = self.bytes[..self.header_len]
            .iter()
            .filter(|&&b| b == b'\n')
            .count();
        std::iter::from_fn(move || {
            let start = rdr.position().byte() as usize;
            match rdr.read_record(&mut record) {
                Ok(false) => None,
                Ok(true) => {
                    let pos = record.position().map_or(0, |p| p.line() as usize);
                    let end = rdr.position().byte() as usize;
                    let start = record.position().map_or(start, |p| p.byte() as usize);
                    if record.len() != self.columns.len() {
                        return Some(Err(read_error(
                            &self.path,
                            Location::Row(header_lines + pos),
                            &format!("a row of {} cells, as the header", self.columns.len()),
                            format!("{} cells", record.len()),
                        )));
                    }
                    Some(Ok(SummaryRow {
                        summary: self,
                        cells: record.clone(),
                        line: header_lines + pos,
                        raw: &self.bytes[self.header_len + start..self.header_len + end],
                    }))
                }
                Err(e) => {
                    let line = e.position().map_or(0, |p| header_lines + p.line() as usize);
                    Some(Err(read_error(
                        &self.path,
                        Location::Row(line),
                        "a lot summary row",
                        e.to_string(),
                    )))
                }
            }
        })
    }

    /// Every row, or the first error.
    pub fn all_rows(&self) -> Result<Vec<SummaryRow<'_>>> {
        self.rows().collect()
    }

    /// The figure cells left out so far as not numbers (see the module docs), in file order: those
    /// asked for through [`SummaryRow::number`].
    pub fn dropped(&self) -> Vec<DroppedCell> {
        self.dropped
            .borrow()
            .iter()
            .map(|(&(line, col), found)| DroppedCell {
                path: self.path.display().to_string(),
                line,
                column: self.columns[col].clone(),
                found: found.clone(),
            })
            .collect()
    }
}

/// One row of a [`LotSummary`].
#[derive(Debug, Clone)]
pub struct SummaryRow<'a> {
    summary: &'a LotSummary,
    cells: ::csv::StringRecord,
    line: usize,
    raw: &'a [u8],
}

impl<'a> SummaryRow<'a> {
    /// The row's line in the file (the header is line 1).
    pub fn line(&self) -> usize {
        self.line
    }

    /// The row as written, with its line end.
    pub fn raw(&self) -> &'a [u8] {
        self.raw
    }

    /// The text of a column's cell by place (the leading quote the writer puts against spreadsheet
    /// formulas taken off, see [`crate::report::csv::safe_cell`]); empty when there is none.
    pub fn cell(&self, col: usize) -> &str {
        self.cells
            .get(col)
            .map_or("", crate::report::csv::read_cell)
    }

    /// The cell of a column by name; `None` when the summary has no such column.
    pub fn text(&self, name: &str) -> Option<&str> {
        self.summary.column(name).map(|c| self.cell(c))
    }

    /// The device.
    pub fn device(&self) -> &str {
        self.cell(self.summary.device)
    }

    /// The condition.
    pub fn condition(&self) -> &str {
        self.cell(self.summary.condition)
    }

    /// The verdict cell, when the summary has a `verdict` column.
    pub fn verdict(&self) -> Option<&str> {
        self.summary.verdict.map(|c| self.cell(c))
    }

    /// The reason cell (empty without a `reason` column).
    pub fn reason(&self) -> &str {
        self.summary.reason.map_or("", |c| self.cell(c))
    }

    /// Why the record gave no result: the `error.message` cell when it is not empty, else the
    /// reason of a row whose verdict is `error`; `None` for a result.
    pub fn error(&self) -> Option<&str> {
        let message = self.summary.error.map_or("", |c| self.cell(c));
        if !message.is_empty() {
            Some(message)
        } else if self.verdict() == Some("error") {
            Some(self.reason())
        } else {
            None
        }
    }

    /// The value of a column by place, by the one rule of the module docs: an empty cell is `None`,
    /// a finite number is its value, anything else in a figure column given as a number is `None` and
    /// recorded as dropped (a column the figure table does not know is read as numbers the same way,
    /// without the record).
    pub fn number(&self, col: usize) -> Option<f64> {
        let text = self.cell(col).trim();
        if text.is_empty() {
            return None;
        }
        match text.parse::<f64>() {
            Ok(v) if v.is_finite() => Some(v),
            _ => {
                if self.summary.numeric.get(col).copied().unwrap_or(false) {
                    self.summary
                        .dropped
                        .borrow_mut()
                        .insert((self.line, col), text.to_string());
                }
                None
            }
        }
    }

    /// The value of a column by name (see [`SummaryRow::number`]); `None` without such a column.
    pub fn value(&self, name: &str) -> Option<f64> {
        self.summary.column(name).and_then(|c| self.number(c))
    }
}

/// A CSV file of serde rows, each with its line and its bytes as written.
#[derive(Debug, Clone, PartialEq)]
pub struct CsvRows<T> {
    /// The header line as written.
    pub header: Vec<u8>,
    /// The rows: (row, line, bytes as written).
    pub rows: Vec<(T, usize, Vec<u8>)>,
}

fn read_rows<T: DeserializeOwned>(path: &Path, columns: &[&str]) -> Result<CsvRows<T>> {
    let bytes = read_bytes(path, "a readable lot file")?;
    let expected = format!("a {} written by spurline batch", columns.join(","));
    let mut rdr = ::csv::ReaderBuilder::new()
        .flexible(false)
        .from_reader(bytes.as_slice());
    let names: Vec<String> = rdr
        .headers()
        .map_err(|e| csv_error(path, &expected, &e))?
        .iter()
        .map(str::to_string)
        .collect();
    if names.len() < columns.len() || names[..columns.len()] != *columns {
        return Err(read_error(
            path,
            Location::Row(1),
            &format!("the columns {}", columns.join(", ")),
            format!("the columns {}", names.join(", ")),
        ));
    }
    let header_end = rdr.position().byte() as usize;
    let mut rows = Vec::new();
    let mut record = ::csv::StringRecord::new();
    loop {
        let start = rdr.position().byte() as usize;
        match rdr.read_record(&mut record) {
            Ok(false) => break,
            Ok(true) => {
                let line = record.position().map_or(0, |p| p.line() as usize);
                let start = record.position().map_or(start, |p| p.byte() as usize);
                // Text cells as written, the quote against spreadsheet formulas taken off.
                let text: ::csv::StringRecord =
                    record.iter().map(crate::report::csv::read_cell).collect();
                let row: T = text
                    .deserialize(Some(rdr.headers().expect("read above")))
                    .map_err(|e| read_error(path, Location::Row(line), &expected, e.to_string()))?;
                let end = rdr.position().byte() as usize;
                rows.push((row, line, bytes[start..end].to_vec()));
            }
            Err(e) => return Err(csv_error(path, &expected, &e)),
        }
    }
    Ok(CsvRows {
        header: bytes[..header_end].to_vec(),
        rows,
    })
}

/// Reads a lot folder's `failures.csv`. Errors name the file and row: columns that are not
/// [`FAILURE_COLUMNS`], a row that does not parse into a [`FailureRow`].
pub fn read_failures(dir: &Path) -> Result<CsvRows<FailureRow>> {
    read_rows(&dir.join(FAILURES_CSV), &FAILURE_COLUMNS)
}

/// Reads a lot folder's `yield.csv`. Errors name the file and row: columns that are not
/// [`YIELD_COLUMNS`], a row that does not parse into a [`YieldRow`] (a count that is not a whole
/// number, say).
pub fn read_yield(dir: &Path) -> Result<CsvRows<YieldRow>> {
    read_rows(&dir.join(YIELD_CSV), &YIELD_COLUMNS)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn header_of<T: Serialize>(row: &T) -> String {
        let mut w = ::csv::Writer::from_writer(Vec::new());
        w.serialize(row).unwrap();
        let text = String::from_utf8(w.into_inner().unwrap()).unwrap();
        text.lines().next().unwrap().to_string()
    }

    #[test]
    fn the_row_types_carry_the_columns_in_order() {
        let f = FailureRow {
            device: "d".into(),
            condition: "c".into(),
            metric: "m".into(),
            bound: Some(Bound::Low),
            limit: Some(1.0),
            value: Some(0.5),
            margin: Some(-0.5),
            guardband: 0.0,
            unit: "dB".into(),
            outcome: CheckOutcome::Fail,
        };
        assert_eq!(header_of(&f), FAILURE_COLUMNS.join(","));
        let y = YieldRow {
            condition: "c".into(),
            metric: "*".into(),
            tested: 1,
            passed: 1,
            failed: 0,
            failed_guardband: 0,
            errors: 0,
            yield_fraction: Some(1.0),
        };
        assert_eq!(header_of(&y), YIELD_COLUMNS.join(","));
    }

    fn summary(text: &str) -> (tempfile::TempDir, LotSummary) {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join(SUMMARY_CSV), text).unwrap();
        let s = LotSummary::in_folder(dir.path()).unwrap();
        (dir, s)
    }

    #[test]
    fn rows_keep_their_bytes_and_lines() {
        let text = "device,condition,verdict,reason,spectrum.snr_db\n\
                    d1,c1,pass,,60.5\n\"d,2\",c1,error,\"bad, file\",\n";
        let (_d, s) = summary(text);
        assert_eq!(
            s.header_bytes(),
            b"device,condition,verdict,reason,spectrum.snr_db\n"
        );
        let rows = s.all_rows().unwrap();
        assert_eq!(rows.len(), 2);
        assert_eq!(rows[0].raw(), b"d1,c1,pass,,60.5\n");
        assert_eq!(rows[1].raw(), b"\"d,2\",c1,error,\"bad, file\",\n");
        assert_eq!((rows[0].line(), rows[1].line()), (2, 3));
        assert_eq!(rows[1].device(), "d,2");
        assert_eq!(rows[1].error(), Some("bad, file"));
        assert_eq!(rows[0].error(), None);
        assert_eq!(rows[0].value("spectrum.snr_db"), Some(60.5));
        let all: Vec<u8> = [s.header_bytes(), rows[0].raw(), rows[1].raw()].concat();
        assert_eq!(all, text.as_bytes());
    }

    #[test]
    fn cells_that_are_not_numbers_are_left_out_and_counted() {
        // The one rule: empty is no value; text, NaN and infinity are no value and recorded.
        let (_d, s) = summary(
            "device,condition,spectrum.snr_db,spectrum.sfdr_dbc\n\
             d1,c,60,NaN\nd2,c,n/a,70\nd3,c,,inf\nd4,c,61,71\n",
        );
        let rows = s.all_rows().unwrap();
        let snr: Vec<Option<f64>> = rows.iter().map(|r| r.value("spectrum.snr_db")).collect();
        let sfdr: Vec<Option<f64>> = rows.iter().map(|r| r.value("spectrum.sfdr_dbc")).collect();
        assert_eq!(snr, [Some(60.0), None, None, Some(61.0)]);
        assert_eq!(sfdr, [None, Some(70.0), None, Some(71.0)]);
        // Asking twice counts once.
        let _ = rows[0].value("spectrum.sfdr_dbc");
        let dropped = s.dropped();
        let seen: Vec<(usize, &str, &str)> = dropped
            .iter()
            .map(|d| (d.line, d.column.as_str(), d.found.as_str()))
            .collect();
        assert_eq!(
            seen,
            [
                (2, "spectrum.sfdr_dbc", "NaN"),
                (3, "spectrum.snr_db", "n/a"),
                (4, "spectrum.sfdr_dbc", "inf"),
            ]
        );
    }

    #[test]
    fn a_summary_without_device_and_condition_is_refused() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join(SUMMARY_CSV), "a,b\n1,2\n").unwrap();
        let e = LotSummary::in_folder(dir.path()).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadMetadata);
        assert_eq!(e.location, Location::Row(1));
        // A row of the wrong width names its line.
        for (text, line) in [
            ("device,condition\nd,c\nd,c,extra\n", 3),
            ("device,condition\nd,c,extra\nd,c\n", 2),
        ] {
            std::fs::write(dir.path().join(SUMMARY_CSV), text).unwrap();
            let s = LotSummary::in_folder(dir.path()).unwrap();
            let e = s.all_rows().unwrap_err();
            assert_eq!(e.location, Location::Row(line), "{text:?}");
        }
    }

    #[test]
    fn yield_rows_read_back() {
        let dir = tempfile::tempdir().unwrap();
        let text = "condition,metric,tested,passed,failed,failed_guardband,errors,yield\n\
                    c,*,2,1,1,0,0,0.5000\n*,*,0,0,0,0,1,\n";
        std::fs::write(dir.path().join(YIELD_CSV), text).unwrap();
        let y = read_yield(dir.path()).unwrap();
        assert_eq!(y.rows.len(), 2);
        assert_eq!(y.rows[0].0.yield_fraction, Some(0.5));
        assert_eq!(y.rows[1].0.yield_fraction, None);
        assert_eq!((y.rows[0].1, y.rows[1].1), (2, 3));
        std::fs::write(dir.path().join(YIELD_CSV), text.replace("2,1,1", "2,x,1")).unwrap();
        let e = read_yield(dir.path()).unwrap_err();
        assert_eq!(e.location, Location::Row(2));
    }
}
