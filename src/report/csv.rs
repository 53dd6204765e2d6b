//! CSV summaries: one row per record, columns derived from the JSON form of the same result record (never
//! from a second list of fields), units in the header names, stable column order.

use crate::analysis::{Analysis, ErrorReport};
use crate::{Error, ErrorKind, Location, Result};
use serde_json::Value;

/// Flattens a JSON value into dotted keys. Lists of objects that carry an `order` (the harmonics) are
/// keyed `h<order>`; other lists are joined with " | ".
pub fn flatten(value: &Value) -> Vec<(String, String)> {
    let mut out = Vec::new();
    walk("", value, &mut out);
    out
}

fn walk(prefix: &str, value: &Value, out: &mut Vec<(String, String)>) {
    let key = |k: &str| {
        if prefix.is_empty() {
            k.to_string()
        } else {
            format!("{prefix}.{k}")
        }
    };
    match value {
        Value::Object(map) => {
            for (k, v) in map {
                walk(&key(k), v, out);
            }
        }
        Value::Array(items)
            if items.iter().all(|i| i.get("order").is_some()) && !items.is_empty() =>
        {
            for item in items {
                let order = item.get("order").map(scalar).unwrap_or_default();
                walk(&key(&format!("h{order}")), item, out);
            }
        }
        Value::Array(items) => {
            let joined: Vec<String> = items.iter().map(scalar).collect();
            out.push((prefix.to_string(), joined.join(" | ")));
        }
        v => out.push((prefix.to_string(), scalar(v))),
    }
}

fn scalar(v: &Value) -> String {
    match v {
        Value::Null => String::new(),
        Value::String(s) => s.clone(),
        Value::Number(n) => n.to_string(),
        Value::Bool(b) => b.to_string(),
        other => other.to_string(),
    }
}

/// The column set for results analysed with `harmonics` harmonics: the keys of an exemplar result in
/// which every optional part is present, made by running the real analysis on a small synthetic record.
pub fn columns(harmonics: u32) -> Vec<String> {
    let mut exemplar = exemplar(harmonics);
    exemplar.error = Some(ErrorReport {
        kind: ErrorKind::Io,
        message: String::new(),
    });
    let value = serde_json::to_value(&exemplar).expect("plain data serialises");
    flatten(&value).into_iter().map(|(k, _)| k).collect()
}

fn exemplar(harmonics: u32) -> Analysis {
    use crate::synth::{synthesize, SynthFrequency, SynthSettings};
    let s = SynthSettings {
        bits: 10,
        sample_rate_hz: 1.0e6,
        samples: 1024,
        amplitude_dbfs: -1.0,
        frequency: SynthFrequency::Hz(101_234.5),
        noise_rms_codes: 0.5,
        harmonics_dbc: vec![(2, -60.0), (3, -65.0)],
        seed: 1,
        ..SynthSettings::default()
    };
    let rec = synthesize(&s).expect("exemplar settings are valid").record;
    let settings = crate::analysis::AnalysisSettings {
        spectrum: crate::spectrum::SpectrumSettings {
            harmonics,
            ..Default::default()
        },
        ..Default::default()
    };
    let mut a = crate::analysis::analyze(&rec, &settings)
        .expect("exemplar record analyses")
        .analysis;
    if let Some(sp) = a.spectrum.as_mut() {
        sp.leakage.advice.get_or_insert_with(String::new);
    }
    a
}

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

/// The column set for these results: [`columns`] of the exemplar first, then any key that one of the
/// results has beyond it (more harmonics than `harmonics`, say), in order of first appearance, so that no
/// field of the JSON is ever dropped from the CSV. A part that is absent as a whole (the `fit` of a failed
/// record, null in the JSON) is covered by the columns under it, which stay empty.
pub fn columns_for<'a>(
    results: impl IntoIterator<Item = &'a Analysis>,
    harmonics: u32,
) -> Vec<String> {
    let mut cols = columns(harmonics);
    let mut seen: std::collections::HashSet<String> = cols.iter().cloned().collect();
    for a in results {
        let value = serde_json::to_value(a).expect("plain data serialises");
        for (k, v) in flatten(&value) {
            if seen.contains(&k) {
                continue;
            }
            let dotted = format!("{k}.");
            if v.is_empty() && cols.iter().any(|c| c.starts_with(&dotted)) {
                continue;
            }
            seen.insert(k.clone());
            cols.push(k);
        }
    }
    cols
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
