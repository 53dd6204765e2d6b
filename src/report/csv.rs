//! CSV summaries: one row per record, the columns of the figure table ([`crate::figures`]) with the
//! cells of the JSON form of the same result record, units in the header names, stable column order.

use crate::analysis::Analysis;
use crate::error::{Error, ErrorKind, Location, Result};

pub use crate::figures::flatten;

/// Writes results as CSV rows under `columns`, with `extra` leading columns (name, value per row).
pub fn write_rows<W: std::io::Write>(
    out: W,
    columns: &[String],
    rows: &[(Vec<(String, String)>, &Analysis)],
) -> Result<()> {
    let mut w = ::csv::WriterBuilder::new().from_writer(out);
    let io = |e: ::csv::Error| {
        Error::new(
            ErrorKind::Output,
            "",
            Location::Whole,
            "a writable CSV output",
            e.to_string(),
        )
    };
    let lead: Vec<String> = rows
        .first()
        .map(|(extra, _)| extra.iter().map(|(k, _)| k.clone()).collect())
        .unwrap_or_default();
    let header: Vec<&str> = lead
        .iter()
        .map(|s| s.as_str())
        .chain(columns.iter().map(|s| s.as_str()))
        .collect();
    w.write_record(&header).map_err(io)?;
    for (extra, a) in rows {
        let flat: std::collections::HashMap<String, String> =
            flatten(&serde_json::to_value(a).expect("plain data serialises"))
                .into_iter()
                .collect();
        let mut record: Vec<String> = extra.iter().map(|(_, v)| v.clone()).collect();
        for c in columns {
            record.push(flat.get(c).cloned().unwrap_or_default());
        }
        w.write_record(&record).map_err(io)?;
    }
    w.flush().map_err(|e| {
        Error::new(
            ErrorKind::Output,
            "",
            Location::Whole,
            "a writable CSV output",
            e.to_string(),
        )
    })?;
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
