//! Delimited records (CSV and kin): one column of integer codes (or values) picked by header name or
//! 0-based index, with the delimiter given or detected; an instrument's preamble of setting lines is
//! skipped, and a time column is recognised and gives the sample rate.

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
    let values_of = |i: usize| -> Option<Vec<f64>> {
        parse_columns(bytes, path, 32, &ColumnSel::Index(i), delimiter, true)
            .ok()
            .map(|(_, v, _)| v)
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
                time_values = Some((i, v));
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
    let (samples, fraction) = if values_allowed {
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
}
