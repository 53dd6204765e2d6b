//! Delimited records (CSV and kin): one column of integer codes (or values) picked by header name or
//! 0-based index, with the delimiter given or detected; an instrument's preamble of setting lines is
//! skipped, and a time column is recognised and gives the sample rate.

use std::borrow::Cow;

use super::checks::{check_bits, no_samples, parse_int, range_text, show_token, to_code, IntToken};
use super::samples::Samples;
use super::ColumnSel;
use crate::error::{Error, ErrorKind, Location, Result};

/// How fields are separated.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Separator {
    /// One byte; two in a row enclose an empty field.
    Byte(u8),
    /// Runs of spaces or tabs; there are no empty fields.
    Whitespace,
}

/// Parses one column of N-bit signed codes from a delimited record.
///
/// `column` picks the column by header name (the first row that is not a comment is then the header)
/// or by 0-based index (the first such row is a header when its field there is not an integer and
/// contains a letter). `delimiter` is one byte; a space means runs of spaces or tabs. When it is `None`
/// the delimiter is detected from the first row that is not a comment: the most frequent of ',', ';'
/// and tab outside quotes (ties in that order), else runs of spaces when the row has any, else ','.
/// Blank lines, lines starting with `#` (after any whitespace) and rows of empty fields are skipped;
/// comments after a field are not supported. Errors name the 1-based line of the file.
pub fn parse_delimited(
    bytes: &[u8],
    path: &str,
    bits: u32,
    column: &ColumnSel,
    delimiter: Option<u8>,
) -> Result<Vec<i32>> {
    parse_columns(bytes, path, bits, column, delimiter, false).map(|(codes, ..)| codes)
}

/// Parses one column of a delimited record as codes or as values: codes as [`parse_delimited`]
/// reads them (at `bits`, or the 32-bit range when `None`), and when a field of the column holds a
/// number that is not an integer (`-0.25`, `1.5e-3`) the whole column as values, finite decimal
/// numbers. Errors name the 1-based line.
pub fn parse_delimited_samples(
    bytes: &[u8],
    path: &str,
    bits: Option<u32>,
    column: &ColumnSel,
    delimiter: Option<u8>,
) -> Result<Samples> {
    parse_delimited_located(bytes, path, bits, column, delimiter).map(|(s, _)| s)
}

/// As [`parse_delimited_samples`], with the 1-based line of the first value that has a fraction.
pub(crate) fn parse_delimited_located(
    bytes: &[u8],
    path: &str,
    bits: Option<u32>,
    column: &ColumnSel,
    delimiter: Option<u8>,
) -> Result<(Samples, Option<usize>)> {
    let first = match parse_columns(bytes, path, bits.unwrap_or(32), column, delimiter, false) {
        Ok((codes, ..)) => return Ok((Samples::Codes(codes), None)),
        Err(e) => e,
    };
    let (Location::Line(at), ErrorKind::NotInteger) = (&first.location, first.kind) else {
        return Err(first);
    };
    match parse_columns(bytes, path, 32, column, delimiter, true) {
        Ok((_, values, line)) => Ok((Samples::Values(values), line)),
        // As for text: a later failure names the real problem, an earlier one is the codes reader's.
        Err(e) if matches!(e.location, Location::Line(l) if l > *at) => Err(e),
        Err(_) => Err(first),
    }
}

/// The reader of both modes: integer codes at `bits` (the first vector), or (`values`) finite decimal
/// numbers (the second, with the line of the first that has a fraction).
fn parse_columns(
    bytes: &[u8],
    path: &str,
    bits: u32,
    column: &ColumnSel,
    delimiter: Option<u8>,
    values: bool,
) -> Result<(Vec<i32>, Vec<f64>, Option<usize>)> {
    check_bits(bits).map_err(|e| e.with_path(path))?;
    if bytes.is_empty() {
        return Err(no_samples(path, "an empty file"));
    }
    let b = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    let sep = match delimiter {
        Some(d) => given_separator(d).map_err(|e| e.with_path(path))?,
        None => detect_separator(b),
    };
    let whitespace = sep == Separator::Whitespace;
    let start_line = survey(b, sep).start_line;
    // The reader sees only content lines, '\n'-terminated (tabs turned to spaces when fields are
    // separated by whitespace); `lines` maps them back to the file's 1-based line numbers. The csv
    // reader's own record positions count from where it started reading, before any skipped comment
    // or blank line, so they cannot name the line.
    let mut content = Vec::with_capacity(b.len() + 1);
    let mut lines = Vec::new();
    for (k, raw) in b.split(|&c| c == b'\n').enumerate() {
        let l = raw.strip_suffix(b"\r").unwrap_or(raw);
        let t = l.trim_ascii();
        if t.is_empty() || t[0] == b'#' || k + 1 < start_line {
            continue;
        }
        lines.push(k + 1);
        if whitespace {
            content.extend(l.iter().map(|&c| if c == b'\t' { b' ' } else { c }));
        } else {
            content.extend_from_slice(l);
        }
        content.push(b'\n');
    }
    let byte = match sep {
        Separator::Byte(d) => d,
        Separator::Whitespace => b' ',
    };
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .delimiter(byte)
        .trim(csv::Trim::All)
        .from_reader(&content[..]);

    let mut codes = Vec::new();
    let mut numbers: Vec<f64> = Vec::new();
    let mut fraction = None;
    // With a column name, the first row is the header that gives the index.
    let (mut pending_name, mut col) = match column {
        ColumnSel::Index(i) => (None, *i),
        ColumnSel::Name(name) => (Some(name.as_str()), 0),
    };
    let mut first = true;
    let mut header = false;
    let mut rec = csv::ByteRecord::new();
    loop {
        match reader.read_byte_record(&mut rec) {
            Ok(true) => {}
            Ok(false) => break,
            Err(e) => return Err(csv_error(&e, path, &lines)),
        }
        let line = rec
            .position()
            .and_then(|p| lines.get((p.line() as usize).wrapping_sub(1)))
            .copied()
            .unwrap_or(0);
        let row = Row {
            rec: &rec,
            whitespace,
        };
        // A row of empty fields (",,") holds nothing.
        if row.fields().all(<[u8]>::is_empty) {
            continue;
        }
        let was_first = std::mem::replace(&mut first, false);
        if let Some(name) = pending_name.take() {
            let Some(c) = row.fields().position(|f| f == name.as_bytes()) else {
                return Err(Error::new(
                    ErrorKind::BadSetting,
                    path,
                    Location::Line(line),
                    format!("a header row with a column named '{name}'"),
                    format!("header fields {}", row.list()),
                ));
            };
            col = c;
            header = true;
            continue;
        }
        let Some(field) = row.fields().nth(col) else {
            // On the first row the column choice does not fit the file at all.
            let kind = if was_first {
                ErrorKind::BadSetting
            } else {
                ErrorKind::NotInteger
            };
            let count = row.fields().count();
            return Err(Error::new(
                kind,
                path,
                Location::Line(line),
                format!("a field at column index {col} (0-based)"),
                format!(
                    "a row of {count} field{}",
                    if count == 1 { "" } else { "s" }
                ),
            ));
        };
        if values {
            if let Some(v) = super::text::parse_value(field) {
                if fraction.is_none() && v.fract() != 0.0 {
                    fraction = Some(line);
                }
                numbers.push(v);
                continue;
            }
            if was_first && field.iter().any(u8::is_ascii_alphabetic) {
                header = true;
                continue;
            }
            return Err(Error::new(
                ErrorKind::NotInteger,
                path,
                Location::Line(line),
                format!("a number (an integer code, or a value such as -0.25) in column {col} (0-based)"),
                show_token(field),
            ));
        }
        match parse_int(field) {
            IntToken::Value(v) => codes.push(to_code(v, bits, path, Location::Line(line))?),
            IntToken::TooLarge => {
                return Err(Error::new(
                    ErrorKind::CodeOutOfRange,
                    path,
                    Location::Line(line),
                    range_text(bits),
                    show_token(field),
                ))
            }
            IntToken::NotInteger => {
                if was_first && field.iter().any(u8::is_ascii_alphabetic) {
                    header = true;
                    continue;
                }
                return Err(Error::new(
                    ErrorKind::NotInteger,
                    path,
                    Location::Line(line),
                    format!("an integer code in column {col} (0-based)"),
                    show_token(field),
                ));
            }
        }
    }
    if codes.is_empty() && numbers.is_empty() {
        let found = if header {
            "a header row and no codes"
        } else {
            "no rows with codes"
        };
        return Err(no_samples(path, found));
    }
    Ok((codes, numbers, fraction))
}

/// Where the table of a delimited file starts, past an instrument's preamble.
#[derive(Debug, Clone, PartialEq)]
struct Survey {
    /// The 1-based file line of the header row, else of the first row of numbers; lines before it
    /// are skipped. 0 when the file has no row of numbers (the reader then names what it finds).
    start_line: usize,
    /// The header's fields, when the row before the first row of numbers is one.
    header: Option<Vec<String>>,
    /// Fields in the first row of numbers.
    fields: usize,
}

/// A row's fields split by the separator, trimmed and unquoted (enough to tell numbers from words;
/// the csv reader reads the table itself).
fn split_fields(line: &[u8], sep: Separator) -> Vec<&[u8]> {
    match sep {
        Separator::Byte(d) => {
            // Separators inside quotes do not split.
            let mut fields = Vec::new();
            let (mut quoted, mut from) = (false, 0);
            for (i, &c) in line.iter().enumerate() {
                if c == b'"' {
                    quoted = !quoted;
                } else if c == d && !quoted {
                    fields.push(unquote(&line[from..i]));
                    from = i + 1;
                }
            }
            fields.push(unquote(&line[from..]));
            fields
        }
        Separator::Whitespace => line
            .split(|&c| c == b' ' || c == b'\t')
            .filter(|f| !f.is_empty())
            .map(unquote)
            .collect(),
    }
}

/// A field trimmed, without its enclosing quotes.
fn unquote(f: &[u8]) -> &[u8] {
    let f = f.trim_ascii();
    f.strip_prefix(b"\"")
        .and_then(|g| g.strip_suffix(b"\""))
        .unwrap_or(f)
}

/// Whether a field is a number (an integer, or a decimal value).
fn is_number(f: &[u8]) -> bool {
    matches!(parse_int(f), IntToken::Value(_) | IntToken::TooLarge)
        || super::text::parse_value(f).is_some()
}

/// Finds the table: the first row whose every field is a number, and the header just before it
/// when that row has as many fields, one with a letter and none a number. Everything before the
/// header is a preamble (settings as key,value pairs or free text) and is skipped. With no header,
/// the lines before the first row of numbers are skipped only when each has a letter, and none holds
/// a number or has more fields than that row: a row with a bad field, or a header over short rows,
/// is then read and reported at its line, never dropped as a preamble.
fn survey(b: &[u8], sep: Separator) -> Survey {
    let mut previous: Option<(usize, Vec<&[u8]>)> = None;
    let mut first_content = None;
    let mut number_seen = false;
    let mut widest = 0;
    let mut worded = true;
    for (k, raw) in b.split(|&c| c == b'\n').enumerate() {
        let l = raw.strip_suffix(b"\r").unwrap_or(raw);
        let t = l.trim_ascii();
        if t.is_empty() || t[0] == b'#' {
            continue;
        }
        first_content.get_or_insert(k + 1);
        let fields = split_fields(t, sep);
        let numbers = fields.iter().filter(|f| is_number(f)).count();
        if numbers == fields.len() && !fields.is_empty() {
            let header = previous.filter(|(_, h)| {
                h.len() == fields.len()
                    && h.iter().any(|f| f.iter().any(u8::is_ascii_alphabetic))
                    && !h.iter().any(|f| is_number(f))
            });
            let fields = fields.len();
            return match header {
                Some((line, h)) => Survey {
                    start_line: line,
                    header: Some(
                        h.iter()
                            .map(|f| String::from_utf8_lossy(f).into_owned())
                            .collect(),
                    ),
                    fields,
                },
                None if !number_seen && worded && widest <= fields => Survey {
                    start_line: k + 1,
                    header: None,
                    fields,
                },
                None => Survey {
                    start_line: first_content.unwrap_or(0),
                    header: None,
                    fields,
                },
            };
        }
        number_seen |= numbers > 0;
        worded &= t.iter().any(u8::is_ascii_alphabetic);
        widest = widest.max(fields.len());
        previous = Some((k + 1, fields));
    }
    Survey {
        start_line: first_content.unwrap_or(0),
        header: None,
        fields: 0,
    }
}

/// A time axis read from a record's time column.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct TimeAxis {
    /// The column as the header names it (or its 0-based index).
    pub(crate) column: String,
    /// 1 / the mean step, in hertz; `None` when the steps are not even (see `uneven`).
    pub(crate) rate_hz: Option<f64>,
    /// The span in seconds from the first time to the last, and the number of steps in it.
    pub(crate) span_s: f64,
    /// Steps from the first sample to the last.
    pub(crate) steps: usize,
    /// Why no rate was taken: the first sample off the even grid, and by how much.
    pub(crate) uneven: Option<String>,
}

/// A sample off the even grid of a time column by more than this fraction of a step makes the
/// column uneven: instruments print time stamps rounded to a few digits, which moves each by well
/// under a tenth of a step; a dropped or repeated sample moves the rest by a whole step.
const TIME_GRID_STEPS: f64 = 0.1;

/// Seconds per unit of a time column, from the unit in its header: `(s)`, `[ms]`, `(us)`, `(µs)`,
/// `(ns)`, `(ps)`; seconds when none is given.
fn time_unit(name: &str) -> f64 {
    let lower = name.to_ascii_lowercase();
    let unit = lower
        .rsplit(['(', '['])
        .next()
        .filter(|_| lower.contains('(') || lower.contains('['))
        .map(|u| u.trim_end_matches([')', ']']).trim().to_string());
    match unit.as_deref() {
        Some("ms") => 1e-3,
        Some("us" | "µs" | "μs") => 1e-6,
        Some("ns") => 1e-9,
        Some("ps") => 1e-12,
        _ => 1.0,
    }
}

/// Whether a header names a time column: "time", "t", "seconds", "timestamp", with or without a unit.
fn is_time_name(name: &str) -> bool {
    let lower = name.to_ascii_lowercase();
    let base = lower.split(['(', '[']).next().unwrap_or("").trim();
    matches!(
        base,
        "t" | "time" | "times" | "seconds" | "timestamp" | "time stamp"
    ) || base.starts_with("time ")
}

/// Whether a header names a sample-index column.
fn is_index_name(name: &str) -> bool {
    let lower = name.to_ascii_lowercase();
    let base = lower.split(['(', '[']).next().unwrap_or("").trim();
    matches!(
        base,
        "index" | "idx" | "n" | "sample" | "samples" | "sample #" | "no." | "point" | "#"
    )
}

/// The time axis of values `t` (in seconds): even steps give the rate.
fn time_axis(column: String, t: &[f64]) -> TimeAxis {
    let steps = t.len().saturating_sub(1);
    let span_s = if steps > 0 { t[steps] - t[0] } else { 0.0 };
    let step = span_s / steps.max(1) as f64;
    let mut uneven = None;
    if !(step > 0.0 && step.is_finite()) {
        uneven = Some(format!(
            "its time does not increase (first {}, last {})",
            t[0], t[steps]
        ));
    } else if let Some(k) =
        (0..t.len()).find(|&k| ((t[k] - t[0]) - k as f64 * step).abs() > TIME_GRID_STEPS * step)
    {
        uneven = Some(format!(
            "sample {k} (0-based) is {:.2} steps off the even grid",
            ((t[k] - t[0]) - k as f64 * step) / step
        ));
    }
    TimeAxis {
        column,
        rate_hz: uneven.is_none().then(|| 1.0 / step),
        span_s,
        steps,
        uneven,
    }
}

/// Reads the signal column of a delimited record as [`parse_delimited_located`] does, choosing it
/// when `column` is `None`, and reads the time column if there is one.
///
/// The table starts after any preamble (see `survey`). A time column is one whose header names
/// time (`Time (s)`, `t`, `time [us]`: the unit in the header scales it), or, in a table with no
/// such header, a column of non-integer values that increases by a constant step. A column named
/// as a sample index (`index`, `n`, `sample`), or of integers stepping by exactly 1, is an index.
/// With no column given: a table of one column is that column; otherwise the columns that are
/// neither time nor index are the candidates, and exactly one must be left, else
/// [`ErrorKind::BadSetting`] on `column` listing the columns by name (or index).
pub(crate) fn parse_delimited_auto(
    bytes: &[u8],
    path: &str,
    bits: Option<u32>,
    column: Option<&ColumnSel>,
    delimiter: Option<u8>,
    values_allowed: bool,
) -> Result<(Samples, Option<usize>, Option<TimeAxis>)> {
    let b = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    let sep = match delimiter {
        Some(d) => given_separator(d).map_err(|e| e.with_path(path))?,
        None => detect_separator(b),
    };
    let sv = survey(b, sep);
    let names: Vec<String> = match &sv.header {
        Some(h) => h.clone(),
        None => (0..sv.fields).map(|i| format!("column {i}")).collect(),
    };
    // The columns this read needs: the one given (or every column when one must be chosen), and
    // any time column its header names. They are read in one pass when the table is plain; the
    // general reader (one pass a column) reads the rest and names the line of any problem.
    let given_index = match column {
        Some(ColumnSel::Index(i)) => Some(*i),
        Some(ColumnSel::Name(n)) => sv
            .header
            .as_ref()
            .and_then(|h| h.iter().position(|x| x == n)),
        None => None,
    };
    let named_time = sv
        .header
        .as_ref()
        .and_then(|h| h.iter().position(|n| is_time_name(n)));
    let mut wanted: Vec<usize> = match (column, given_index) {
        (None, _) => (0..sv.fields.max(1)).collect(),
        (Some(_), Some(i)) => vec![i],
        (Some(_), None) => Vec::new(),
    };
    wanted.extend(named_time);
    wanted.sort_unstable();
    wanted.dedup();
    let mut plain = if column.is_some() && given_index.is_none() {
        None
    } else {
        plain_table(b, sep, &sv, &wanted)
    };
    let plain_column = |i: usize| {
        let p = plain.as_ref()?;
        wanted.iter().position(|&w| w == i).map(|k| &p[k])
    };
    let values_of = |i: usize| -> Option<Cow<'_, [f64]>> {
        if plain.is_some() {
            return plain_column(i).map(|c| Cow::Borrowed(&c.numbers[..]));
        }
        parse_columns(bytes, path, 32, &ColumnSel::Index(i), delimiter, true)
            .ok()
            .map(|(_, v, _)| Cow::Owned(v))
    };
    // Time and index columns: by name when the header names them, else by their steps (only when
    // a column must be chosen among several).
    let mut time: Option<(usize, f64)> = None;
    let mut index = Vec::new();
    if sv.header.is_some() {
        for (i, n) in names.iter().enumerate() {
            if is_time_name(n) && time.is_none() {
                time = Some((i, time_unit(n)));
            } else if is_index_name(n) {
                index.push(i);
            }
        }
    }
    // Whole numbers stepping by exactly 1 count samples, whatever the header says: taking them as
    // seconds would give a rate of 1 Hz.
    let counts_samples = |v: &[f64]| {
        let axis = time_axis(String::new(), v);
        axis.rate_hz == Some(1.0) && v.iter().all(|x| x.fract() == 0.0)
    };
    let mut time_values = None;
    if let Some((i, unit)) = time {
        match values_of(i) {
            Some(v) if counts_samples(&v) => {
                time = None;
                index.push(i);
            }
            Some(v) => time_values = Some((i, v.iter().map(|x| x * unit).collect::<Vec<f64>>())),
            None => time = None,
        }
    }
    let choose = column.is_none() && sv.fields > 1;
    if choose && time.is_none() {
        for i in 0..sv.fields {
            if index.contains(&i) {
                continue;
            }
            let Some(v) = values_of(i) else { continue };
            if counts_samples(&v) {
                index.push(i);
            } else if time.is_none()
                && v.iter().any(|x| x.fract() != 0.0)
                && time_axis(String::new(), &v).rate_hz.is_some()
            {
                time = Some((i, 1.0));
                time_values = Some((i, v.into_owned()));
            }
        }
    }
    let chosen = match column {
        Some(c) => c.clone(),
        None if sv.fields <= 1 => ColumnSel::Index(0),
        None => {
            let left: Vec<usize> = (0..sv.fields)
                .filter(|i| Some(*i) != time.map(|t| t.0) && !index.contains(i))
                .collect();
            if left.len() != 1 {
                let listed = names
                    .iter()
                    .enumerate()
                    .map(|(i, n)| {
                        let role = if Some(i) == time.map(|t| t.0) {
                            " (time)"
                        } else if index.contains(&i) {
                            " (index)"
                        } else {
                            ""
                        };
                        format!("{}{role}", show_token(n.as_bytes()))
                    })
                    .collect::<Vec<_>>()
                    .join(", ");
                return Err(Error::new(
                    ErrorKind::BadSetting,
                    path,
                    Location::Line(sv.start_line),
                    format!(
                        "one signal column besides time and index columns, or --column NAME|INDEX \
                         to choose ({} left)",
                        left.len()
                    ),
                    format!("columns {listed}"),
                ));
            }
            ColumnSel::Index(left[0])
        }
    };
    let chosen_index = match &chosen {
        ColumnSel::Index(i) => Some(*i),
        ColumnSel::Name(_) => given_index,
    };
    // The chosen column is moved out of the table, not copied.
    let from_plain = chosen_index
        .and_then(|i| wanted.iter().position(|&w| w == i))
        .and_then(|k| {
            let p = plain.as_mut()?;
            let c = std::mem::replace(
                &mut p[k],
                PlainColumn {
                    numbers: Vec::new(),
                    integers: true,
                    fraction: None,
                },
            );
            plain_samples(c, bits, values_allowed)
        });
    let (samples, fraction) = if let Some(s) = from_plain {
        s
    } else if values_allowed {
        parse_delimited_located(bytes, path, bits, &chosen, delimiter)?
    } else {
        (
            Samples::Codes(parse_delimited(
                bytes,
                path,
                bits.unwrap_or(32),
                &chosen,
                delimiter,
            )?),
            None,
        )
    };
    // The time column, unless it is the signal itself.
    let signal = match &chosen {
        ColumnSel::Index(i) => Some(*i),
        ColumnSel::Name(n) => names.iter().position(|x| x == n),
    };
    let axis = match time_values {
        Some((i, t)) if Some(i) != signal => Some(time_axis(names[i].clone(), &t)),
        _ => None,
    };
    Ok((samples, fraction, axis))
}

/// The samples of a column read by [`plain_table`], as the general reader reads them: codes when
/// every field was an integer within the range of `bits` (the 32-bit range when `None`), else values
/// (when allowed) with the line of the first fraction. `None` when the general reader must read the
/// column to name a problem (a code out of range, values where codes are required).
fn plain_samples(
    c: PlainColumn,
    bits: Option<u32>,
    values_allowed: bool,
) -> Option<(Samples, Option<usize>)> {
    if c.integers {
        let bits = bits.unwrap_or(32);
        check_bits(bits).ok()?;
        let (lo, hi) = (crate::record::min_code(bits), crate::record::max_code(bits));
        let (lo, hi) = (lo as f64, hi as f64);
        if c.numbers.iter().any(|&v| v < lo || v > hi) {
            return None;
        }
        return Some((
            Samples::Codes(c.numbers.iter().map(|&v| v as i32).collect()),
            None,
        ));
    }
    values_allowed.then_some((Samples::Values(c.numbers), c.fraction))
}

/// One row's fields, with the empty fields of whitespace separation dropped.
struct Row<'a> {
    rec: &'a csv::ByteRecord,
    whitespace: bool,
}

impl<'a> Row<'a> {
    fn fields(&self) -> impl Iterator<Item = &'a [u8]> + '_ {
        self.rec
            .iter()
            .filter(move |f| !self.whitespace || !f.is_empty())
    }

    /// The fields as shown in an error, cut after a few.
    fn list(&self) -> String {
        const SHOWN: usize = 8;
        let mut s = self
            .fields()
            .take(SHOWN)
            .map(show_token)
            .collect::<Vec<_>>()
            .join(", ");
        let count = self.fields().count();
        if count > SHOWN {
            s.push_str(&format!(", ... ({count} in all)"));
        }
        s
    }
}

/// Checks a delimiter given by the user.
fn given_separator(d: u8) -> Result<Separator> {
    let bad = matches!(d, b'"' | b'#' | b'\n' | b'\r' | b'+' | b'-')
        || d.is_ascii_alphanumeric()
        || !d.is_ascii();
    if bad {
        return Err(Error::setting(
            "delimiter",
            "one ASCII punctuation, tab or space character other than '\"', '#', '+' and '-'",
            show_token(&[d]),
        ));
    }
    Ok(if d == b' ' {
        Separator::Whitespace
    } else {
        Separator::Byte(d)
    })
}

/// Detects the separator from the first line that starts like a row of numbers (a digit, sign or
/// point), else the first line that is neither blank nor a comment (an instrument's preamble of
/// settings may be free text or use another separator than its data).
fn detect_separator(b: &[u8]) -> Separator {
    let content = || {
        b.split(|&c| c == b'\n')
            .map(|l| l.trim_ascii())
            .filter(|l| !l.is_empty() && l[0] != b'#')
    };
    let data = content().find(|l| l[0].is_ascii_digit() || matches!(l[0], b'-' | b'+' | b'.'));
    // A row of one number has no separator to see: then the first line decides.
    data.and_then(separator_in)
        .or_else(|| content().next().and_then(separator_in))
        .unwrap_or(Separator::Byte(b','))
}

/// The most frequent of ',', ';' and tab outside quotes (ties in that order), else runs of spaces
/// when the line has any; `None` when it has none of them.
fn separator_in(line: &[u8]) -> Option<Separator> {
    let mut counts = [0usize; 3];
    let mut quoted = false;
    for &c in line {
        match c {
            b'"' => quoted = !quoted,
            b',' if !quoted => counts[0] += 1,
            b';' if !quoted => counts[1] += 1,
            b'\t' if !quoted => counts[2] += 1,
            _ => {}
        }
    }
    let mut best = 0;
    for k in 1..3 {
        if counts[k] > counts[best] {
            best = k;
        }
    }
    if counts[best] > 0 {
        Some(Separator::Byte([b',', b';', b'\t'][best]))
    } else if line.contains(&b' ') {
        Some(Separator::Whitespace)
    } else {
        None
    }
}

/// Maps a reader error (rare with byte records read from memory) to a typed error with its line.
fn csv_error(e: &csv::Error, path: &str, lines: &[usize]) -> Error {
    let location = e
        .position()
        .and_then(|p| lines.get((p.line() as usize).wrapping_sub(1)))
        .map_or(Location::Whole, |&l| Location::Line(l));
    Error::new(
        ErrorKind::NotInteger,
        path,
        location,
        "a readable delimited row",
        e.to_string(),
    )
}

/// Tables at least this long are read in two halves at once (on two threads when the pool has them).
const PARALLEL_MIN_BYTES: usize = 1 << 20;

/// Columns of a table read in one pass by [`plain_table`]: each column's numbers, whether every one
/// was written as an integer, and the 1-based line of the first with a fraction.
struct PlainColumn {
    numbers: Vec<f64>,
    integers: bool,
    fraction: Option<usize>,
}

/// The columns `wanted` (0-based, ascending) of the table that starts at `sv.start_line`, in one pass
/// over the bytes with no copy of them: the fast path for the plain tables instruments write (every
/// row a full row of numbers, no quotes). `None` when anything else is met (a quote, a short row,
/// an empty field, a word, a number too large): the caller then reads the file with the general
/// reader, which gives the same numbers or names the line and what is wrong with it.
fn plain_table(
    b: &[u8],
    sep: Separator,
    sv: &Survey,
    wanted: &[usize],
) -> Option<Vec<PlainColumn>> {
    if sv.start_line == 0 || wanted.is_empty() {
        return None;
    }
    // The byte offset of the table's first line (after the header when there is one).
    let skip = sv.start_line - 1 + usize::from(sv.header.is_some());
    let mut from = 0;
    for _ in 0..skip {
        from += b[from..].iter().position(|&c| c == b'\n')? + 1;
    }
    let body = &b[from..];
    let first_line = skip + 1;
    if body.len() < PARALLEL_MIN_BYTES {
        return plain_rows(body, sep, wanted, first_line).map(|(c, _)| c);
    }
    let mid = body.len() / 2;
    let cut = mid + body[mid..].iter().position(|&c| c == b'\n')? + 1;
    let (lo, hi) = body.split_at(cut);
    let lines_lo = lo.iter().filter(|&&c| c == b'\n').count();
    let (first, second) = rayon::join(
        || plain_rows(lo, sep, wanted, first_line),
        || plain_rows(hi, sep, wanted, first_line + lines_lo),
    );
    let (mut cols, _) = first?;
    let (more, _) = second?;
    for (c, m) in cols.iter_mut().zip(more) {
        c.numbers.extend_from_slice(&m.numbers);
        c.integers &= m.integers;
        c.fraction = c.fraction.or(m.fraction);
    }
    Some(cols)
}

/// The rows of `body` (its first line is file line `first_line`) as [`plain_table`] reads them, and
/// the number of lines.
fn plain_rows(
    body: &[u8],
    sep: Separator,
    wanted: &[usize],
    first_line: usize,
) -> Option<(Vec<PlainColumn>, usize)> {
    // The shortest row of numbers is a digit and a separator a column.
    let room = body.len() / (2 * wanted.last()? + 2) + 1;
    let mut cols: Vec<PlainColumn> = wanted
        .iter()
        .map(|_| PlainColumn {
            numbers: Vec::with_capacity(room),
            integers: true,
            fraction: None,
        })
        .collect();
    let mut lines = 0;
    for (k, raw) in body.split(|&c| c == b'\n').enumerate() {
        lines = k + 1;
        let t = raw.trim_ascii();
        if t.is_empty() || t[0] == b'#' {
            continue;
        }
        if t.contains(&b'"') {
            return None;
        }
        let mut next = 0;
        let mut field_at = |i: usize, f: &[u8]| -> Option<()> {
            if next < wanted.len() && wanted[next] == i {
                let c = &mut cols[next];
                next += 1;
                let v = match parse_int(f) {
                    IntToken::Value(v) => v as f64,
                    IntToken::TooLarge => return None,
                    IntToken::NotInteger => {
                        let v = super::text::parse_value(f)?;
                        c.integers = false;
                        if c.fraction.is_none() && v.fract() != 0.0 {
                            c.fraction = Some(first_line + k);
                        }
                        v
                    }
                };
                c.numbers.push(v);
            }
            Some(())
        };
        match sep {
            Separator::Byte(d) => {
                for (i, f) in t.split(|&c| c == d).enumerate() {
                    let f = f.trim_ascii();
                    if f.is_empty() {
                        return None;
                    }
                    field_at(i, f)?;
                }
            }
            Separator::Whitespace => {
                for (i, f) in t
                    .split(|&c| c == b' ' || c == b'\t')
                    .filter(|f| !f.is_empty())
                    .enumerate()
                {
                    field_at(i, f)?;
                }
            }
        }
        // A row without every wanted column is the general reader's to report.
        if next < wanted.len() {
            return None;
        }
    }
    Some((cols, lines))
}

#[cfg(test)]
mod tests {
    use super::*;

    // Sources: delimited rows, quoting and header rows as in RFC 4180 (from memory); the ',', ';',
    // tab and whitespace conventions and the N-bit range are common practice, no source. Line numbers
    // are counted by hand from the test strings.

    fn by_index(s: &str, i: usize, d: Option<u8>) -> Result<Vec<i32>> {
        parse_delimited(s.as_bytes(), "r.csv", 12, &ColumnSel::Index(i), d)
    }

    fn by_name(s: &str, name: &str, d: Option<u8>) -> Result<Vec<i32>> {
        parse_delimited(s.as_bytes(), "r.csv", 12, &ColumnSel::Name(name.into()), d)
    }

    #[test]
    fn column_by_index_without_header() {
        let s = "0,10,-5\n1,11,-6\n2,12,-7\n";
        assert_eq!(by_index(s, 1, None).unwrap(), vec![10, 11, 12]);
        assert_eq!(by_index(s, 2, Some(b',')).unwrap(), vec![-5, -6, -7]);
        assert_eq!(by_index(s, 0, None).unwrap(), vec![0, 1, 2]);
    }

    #[test]
    fn column_by_index_skips_a_header() {
        let s = "n,code\n0,100\n1,-100\n";
        assert_eq!(by_index(s, 1, None).unwrap(), vec![100, -100]);
    }

    #[test]
    fn column_by_name() {
        let s = "# bench capture\ntime_s, code ,flag\n0.0, 5, x\n1e-6, -6, y\n";
        assert_eq!(by_name(s, "code", None).unwrap(), vec![5, -6]);
        let e = by_name(s, "codes", None).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadSetting);
        assert_eq!(e.location, Location::Line(2));
        assert_eq!(e.expected, "a header row with a column named 'codes'");
        assert_eq!(e.found, "header fields 'time_s', 'code', 'flag'");
    }

    #[test]
    fn quoted_header_and_fields() {
        let s = "\"t, s\",\"code\"\n\"0\",\"7\"\n\"1\",\"-8\"\n";
        assert_eq!(by_name(s, "code", None).unwrap(), vec![7, -8]);
    }

    #[test]
    fn detected_delimiters() {
        assert_eq!(by_index("a;b\n1;2\n3;4\n", 1, None).unwrap(), vec![2, 4]);
        assert_eq!(by_index("a\tb\n1\t2\n3\t4\n", 1, None).unwrap(), vec![2, 4]);
        assert_eq!(
            by_index("  a   b\n  1    2\n3 \t 4\n", 1, None).unwrap(),
            vec![2, 4]
        );
        // Most frequent wins: two semicolons beat one comma in a quoted-free row.
        assert_eq!(by_index("x;y,z;w\n1;2;3\n", 2, None).unwrap(), vec![3]);
        // Commas inside quotes do not count.
        assert_eq!(by_index("\"a,b,c\";d\n1;2\n", 1, None).unwrap(), vec![2]);
        // A single column needs no delimiter.
        assert_eq!(by_index("code\n1\n2\n", 0, None).unwrap(), vec![1, 2]);
    }

    #[test]
    fn detection_skips_comments_and_blank_lines() {
        let s = "# a, b, c, d, e\n\n1;2\n3;4\n";
        assert_eq!(by_index(s, 1, None).unwrap(), vec![2, 4]);
    }

    #[test]
    fn given_delimiter_overrides_detection() {
        // Detection would pick ','; the given ';' keeps "1,5" as one (non-integer) field.
        let s = "a;b\n1,5;2\n";
        assert_eq!(by_index(s, 1, Some(b';')).unwrap(), vec![2]);
        let e = by_index(s, 0, Some(b';')).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.location, Location::Line(2));
        assert_eq!(e.found, "'1,5'");
    }

    #[test]
    fn bad_given_delimiters() {
        for d in [b'"', b'#', b'\n', b'7', b'x', b'-', 0xC3] {
            let e = by_index("1\n", 0, Some(d)).unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting);
            assert_eq!(e.location, Location::Key("delimiter".into()));
            assert_eq!(e.path, "r.csv");
        }
    }

    #[test]
    fn comments_blank_rows_and_crlf() {
        let s = "# head\r\ncode\r\n\r\n  # indented\r\n1\r\n#2\r\n3\r\n";
        assert_eq!(by_index(s, 0, None).unwrap(), vec![1, 3]);
        // Line numbers still count the skipped lines.
        let e = by_index("# c\r\ncode\r\n\r\n1\r\nbad\r\n", 0, None).unwrap_err();
        assert_eq!(e.location, Location::Line(5));
    }

    #[test]
    fn errors_name_the_line() {
        let e = by_index("code\n1\n2\nx1\n", 0, None).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.location, Location::Line(4));
        assert_eq!(e.found, "'x1'");
        assert!(e.expected.contains("column 0"), "{}", e.expected);

        let e = by_index("1,2\n3\n", 1, None).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.location, Location::Line(2));
        assert_eq!(e.found, "a row of 1 field");

        let e = by_index("1,2\n3,4\n", 5, None).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadSetting);
        assert_eq!(e.location, Location::Line(1));
        assert_eq!(e.expected, "a field at column index 5 (0-based)");
        assert_eq!(e.found, "a row of 2 fields");

        let e = by_index("1,\n", 1, None).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.found, "'' (empty)");
    }

    #[test]
    fn out_of_range_names_the_line() {
        let e = by_index("a,b\n1,2047\n2,2048\n", 1, None).unwrap_err();
        assert_eq!(e.kind, ErrorKind::CodeOutOfRange);
        assert_eq!(e.location, Location::Line(3));
        assert_eq!(e.expected, "-2048..=2047 (12-bit two's complement)");
        assert_eq!(e.found, "2048");
    }

    #[test]
    fn empty_and_header_only() {
        let e = by_index("", 0, None).unwrap_err();
        assert_eq!(
            (e.kind, e.location.clone()),
            (ErrorKind::Empty, Location::Whole)
        );
        let e = by_name("t,code\n", "code", None).unwrap_err();
        assert_eq!(e.kind, ErrorKind::Empty);
        assert_eq!(e.found, "a header row and no codes");
        let e = by_index("# nothing\n\n", 0, None).unwrap_err();
        assert_eq!(e.kind, ErrorKind::Empty);
    }

    #[test]
    fn first_row_non_integer_without_letter_is_an_error() {
        let e = by_index("1.5,2\n", 0, None).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.location, Location::Line(1));
    }
    /// The one-pass reader of plain tables gives what the general reader gives, column by column,
    /// including the line of the first fraction, on small tables and on tables long enough to be read
    /// in two halves; tables it does not take (quotes, short rows) go to the general reader.
    #[test]
    fn plain_tables_read_as_the_general_reader_reads_them() {
        let mut long = String::from("Model,Bench\nSample interval,1e-6\n\nTime (s),CH1 (V),CH2\n");
        let rows = 120_000;
        for k in 0..rows {
            // The second column has its first fraction far into the second half.
            let v = if k < 100_000 {
                format!("{}", k % 7)
            } else {
                format!("{}.5", k % 7)
            };
            long.push_str(&format!("{:?},{v},{}\n", k as f64 * 1e-6, (k % 11) - 5));
        }
        assert!(
            long.len() >= PARALLEL_MIN_BYTES,
            "long enough for two halves"
        );
        let tables = [
            "Time (s),CH1 (V)\n0.0,0.25\n1e-6,-0.5\n2e-6,0.125\n".to_string(),
            "# comment\nn,code\n0,12\n1,-7\n\n2,3\n".to_string(),
            "1 2\n3\t4\n5   6\n".to_string(),
            long,
        ];
        for t in &tables {
            let b = t.as_bytes();
            let sep = detect_separator(b);
            let sv = survey(b, sep);
            let wanted: Vec<usize> = (0..sv.fields).collect();
            let plain = plain_table(b, sep, &sv, &wanted).expect("a plain table");
            for (i, col) in plain.iter().enumerate() {
                let (_, general, fraction) =
                    parse_columns(b, "r.csv", 32, &ColumnSel::Index(i), None, true).unwrap();
                assert_eq!(col.numbers, general, "column {i} of {:?}", &t[..20]);
                assert_eq!(col.fraction, fraction, "column {i}");
                let ints = parse_columns(b, "r.csv", 32, &ColumnSel::Index(i), None, false).is_ok();
                assert_eq!(col.integers, ints, "column {i}");
            }
        }
        // The long table's second column: its first fraction is on file line 4 + 100_000 + 1.
        let b = tables[3].as_bytes();
        let sv = survey(b, Separator::Byte(b','));
        let p = plain_table(b, Separator::Byte(b','), &sv, &[1]).unwrap();
        assert_eq!(p[0].fraction, Some(4 + 100_000 + 1));
        for odd in [
            "a,b\n\"1\",2\n3,4\n",
            "a,b\n1,2\n3\n",
            "a,b\n1,2\n3,\n",
            "a,b\n1,2\n3,x\n",
        ] {
            let b = odd.as_bytes();
            let sv = survey(b, Separator::Byte(b','));
            assert!(
                plain_table(b, Separator::Byte(b','), &sv, &[0, 1]).is_none(),
                "{odd:?}"
            );
        }
    }
}
