//! CSV summaries: one row per record, the columns of the figure table ([`crate::figures`]) with the
//! cells of the JSON form of the same result record, units in the header names, stable column order;
//! and the one CSV writer every CSV of the tool goes through ([`CsvOut`], [`safe_cell`]): a text
//! cell never starts a spreadsheet formula, numbers are written as numbers.

use crate::analysis::Analysis;
use crate::error::{Error, ErrorKind, Location, Result};

pub use crate::figures::flatten;

/// The characters that make a spreadsheet read a cell as a formula (or, tab and carriage return,
/// start one after the spreadsheet trims them), and the quote that marks a cell neutralised.
const FORMULA_LEAD: [char; 6] = ['=', '+', '-', '@', '\t', '\r'];

/// Whether a cell is a number written by the tool (an optional sign, then a digit or a point, and
/// the rest parses as a number): such a cell is written as it is, even with a leading `-` or `+`.
fn is_number(text: &str) -> bool {
    let body = text.strip_prefix(['-', '+']).unwrap_or(text);
    body.starts_with(|c: char| c.is_ascii_digit() || c == '.') && text.parse::<f64>().is_ok()
}

/// The one rule for a cell written to a CSV file (every CSV the tool writes goes through it): a
/// text cell starting with `=`, `+`, `-`, `@`, a tab or a carriage return, which a spreadsheet would
/// take for a formula, is written with a single quote `'` in front; so is a text cell that already
/// starts with a quote followed by one of these or by another quote, so that [`read_cell`] gives
/// back exactly the text written. Numbers (`-3.5`,
/// `+1e-3`) and every other cell are written as they are.
pub fn safe_cell(text: &str) -> std::borrow::Cow<'_, str> {
    // A text that read_cell would shorten is quoted too, so that reading gives back what was written.
    let risky = text.starts_with(FORMULA_LEAD) || read_cell(text).len() != text.len();
    if risky && !is_number(text) {
        std::borrow::Cow::Owned(format!("'{text}"))
    } else {
        std::borrow::Cow::Borrowed(text)
    }
}

/// The text of a cell [`safe_cell`] wrote: the leading quote it added taken off. The readers of the
/// tool's own CSV files (lot files, limit tables) read every text cell through it.
pub fn read_cell(cell: &str) -> &str {
    match cell.strip_prefix('\'') {
        Some(rest) if rest.starts_with(FORMULA_LEAD) || rest.starts_with('\'') => rest,
        _ => cell,
    }
}

fn output_error(e: impl std::fmt::Display) -> Error {
    Error::new(
        ErrorKind::Output,
        "",
        Location::Whole,
        "a writable CSV output",
        e.to_string(),
    )
}

/// The one CSV writer of the crate: every cell goes through [`safe_cell`].
pub struct CsvOut<W: std::io::Write> {
    w: ::csv::Writer<W>,
}

impl<W: std::io::Write> CsvOut<W> {
    /// A writer into `out`.
    pub fn new(out: W) -> CsvOut<W> {
        CsvOut {
            w: ::csv::WriterBuilder::new().from_writer(out),
        }
    }

    /// Writes one row. Errors: output that cannot be written.
    pub fn row<I, S>(&mut self, cells: I) -> Result<()>
    where
        I: IntoIterator<Item = S>,
        S: AsRef<str>,
    {
        self.w
            .write_record(
                cells
                    .into_iter()
                    .map(|c| safe_cell(c.as_ref()).into_owned()),
            )
            .map_err(output_error)
    }

    /// Flushes and gives back the output. Errors: output that cannot be written.
    pub fn finish(self) -> Result<W> {
        self.w.into_inner().map_err(|e| output_error(e.error()))
    }
}

impl CsvOut<Vec<u8>> {
    /// A writer into memory.
    pub fn memory() -> CsvOut<Vec<u8>> {
        CsvOut::new(Vec::new())
    }

    /// Writes one row into memory.
    pub fn push<I, S>(&mut self, cells: I)
    where
        I: IntoIterator<Item = S>,
        S: AsRef<str>,
    {
        self.row(cells).expect("writing to memory cannot fail");
    }

    /// The CSV text written.
    pub fn into_text(self) -> String {
        let bytes = self.finish().expect("writing to memory cannot fail");
        String::from_utf8(bytes).expect("CSV of UTF-8 strings is UTF-8")
    }
}

/// CSV text of flat rows of (column, cell): the columns of the first row as the header, each row's
/// cells in its own order. Every cell goes through [`safe_cell`].
pub fn table(rows: &[Vec<(String, String)>]) -> String {
    let mut w = CsvOut::memory();
    if let Some(first) = rows.first() {
        w.push(first.iter().map(|(k, _)| k));
    }
    for r in rows {
        w.push(r.iter().map(|(_, v)| v));
    }
    w.into_text()
}

/// Writes results as CSV rows under `columns`, with `extra` leading columns (name, value per row).
pub fn write_rows<W: std::io::Write>(
    out: W,
    columns: &[String],
    rows: &[(Vec<(String, String)>, &Analysis)],
) -> Result<()> {
    let mut w = CsvOut::new(out);
    let lead: Vec<String> = rows
        .first()
        .map(|(extra, _)| extra.iter().map(|(k, _)| k.clone()).collect())
        .unwrap_or_default();
    w.row(lead.iter().chain(columns.iter()))?;
    for (extra, a) in rows {
        let flat: std::collections::HashMap<String, String> =
            flatten(&serde_json::to_value(a).expect("plain data serialises"))
                .into_iter()
                .collect();
        let mut record: Vec<String> = extra.iter().map(|(_, v)| v.clone()).collect();
        for c in columns {
            record.push(flat.get(c).cloned().unwrap_or_default());
        }
        w.row(&record)?;
    }
    w.finish()?;
    Ok(())
}

/// The column set for these results: the figure table's columns ([`crate::figures::keys`]) for
/// harmonics up to `harmonics`, or up to the highest harmonic order one of the results has, whichever
/// is more; so no field of the JSON is ever dropped from the CSV. A part that is absent as a whole (the
/// `fit` of a failed record, null in the JSON) leaves the columns under it empty.
pub fn columns_for<'a>(
    results: impl IntoIterator<Item = &'a Analysis>,
    harmonics: u32,
) -> Vec<String> {
    let highest = results
        .into_iter()
        .filter_map(|a| a.spectrum.as_ref())
        .flat_map(|s| s.harmonics.iter().map(|h| h.order))
        .fold(harmonics, u32::max);
    crate::figures::keys(highest)
}

/// CSV text of results, one row per record, with `lead` columns (name, value per row) before the
/// fields of the result record.
pub fn to_csv_with_lead(rows: &[(Vec<(String, String)>, &Analysis)], harmonics: u32) -> String {
    let cols = columns_for(rows.iter().map(|(_, a)| *a), harmonics);
    let mut buf = Vec::new();
    write_rows(&mut buf, &cols, rows).expect("writing to memory cannot fail");
    String::from_utf8(buf).expect("CSV of UTF-8 strings is UTF-8")
}

/// CSV text of results, one row per record.
pub fn to_csv(results: &[Analysis], harmonics: u32) -> String {
    let rows: Vec<(Vec<(String, String)>, &Analysis)> =
        results.iter().map(|a| (Vec::new(), a)).collect();
    to_csv_with_lead(&rows, harmonics)
}
