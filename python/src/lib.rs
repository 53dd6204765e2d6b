//! The Python extension module `spurline._native`: the library's analysis on NumPy arrays and record
//! files, one record or many in parallel (rayon, with the GIL released), errors as `SpurlineError`.
//! The Python package (`pysrc/spurline/`) wraps it; results cross as the library's one serialised
//! result record (JSON text), so every field the library adds reaches Python without a list here.

use numpy::{IntoPyArray, PyArray1, PyReadonlyArray1, PyUntypedArrayMethods};
use pyo3::create_exception;
use pyo3::exceptions::PyValueError;
use pyo3::prelude::*;
use rayon::prelude::*;
use spurline::figures::{self, Cells, Kind};
use spurline::{
    analyze_averaged, read_record, Analysis, AnalysisSettings, Coding, Error, ErrorKind,
    IngestSettings, Location, Metadata, Record, SpectrumSettings, Traces,
};

// The allocator of the command line: a record's large buffers are reused from call to call instead of
// being mapped and faulted in afresh (with the system allocator a 2^20-sample analysis from Python
// cost a third more than the same analysis in the binary).
#[global_allocator]
static ALLOC: mimalloc::MiMalloc = mimalloc::MiMalloc;

create_exception!(
    spurline,
    SpurlineError,
    PyValueError,
    "An error of the analysis: kind, path, location, expected and found, as the command line reports them."
);

/// Lowest and highest harmonic order accepted (the command line's `--harmonics` range).
const HARMONICS: std::ops::RangeInclusive<u32> = 1..=100;

/// A voltage more than this far from the nearest code (in LSB) counts as off the code grid. Rounding
/// such a value adds at most q/√12 of noise; 0.05 LSB keeps the rounding error of values that are on
/// the grid up to an instrument's float rounding far below it (float32 resolves 2^24 codes to
/// 0.5 LSB only beyond 23 bits).
const OFF_GRID_LSB: f64 = 0.05;

/// The library's error as a Python `SpurlineError` with its parts as attributes.
fn py_error(py: Python<'_>, e: &Error) -> PyErr {
    let err = SpurlineError::new_err(e.to_string());
    let value = err.value(py);
    let kind = serde_json::to_value(e.kind)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_default();
    let (mut line, mut column, mut byte, mut row, mut key) = (None, None, None, None, None);
    match &e.location {
        Location::Whole => {}
        Location::Line(l) => line = Some(*l),
        Location::LineColumn(l, c) => {
            line = Some(*l);
            column = Some(*c);
        }
        Location::Byte(b) => byte = Some(*b),
        Location::Row(r) => row = Some(*r),
        Location::Key(k) => key = Some(k.clone()),
    }
    // Setting attributes on a fresh exception instance cannot fail short of memory exhaustion; a
    // failure would leave the message, which holds every part.
    let _ = value.setattr("kind", kind);
    let _ = value.setattr("path", &e.path);
    let _ = value.setattr("location", e.location.to_string());
    let _ = value.setattr("line", line);
    let _ = value.setattr("column", column);
    let _ = value.setattr("byte", byte);
    let _ = value.setattr("row", row);
    let _ = value.setattr("key", key);
    let _ = value.setattr("expected", &e.expected);
    let _ = value.setattr("found", &e.found);
    err
}

/// Analysis settings from the same choices as `spurline analyze` (fit, window, harmonics, guard bins).
fn analysis_settings(
    fit: &str,
    window: &str,
    harmonics: u32,
    guard_bins: Option<usize>,
) -> Result<AnalysisSettings, Error> {
    if !HARMONICS.contains(&harmonics) {
        return Err(Error::setting(
            "harmonics",
            "a highest harmonic order in 1..=100",
            harmonics.to_string(),
        ));
    }
    Ok(AnalysisSettings {
        fit: fit.parse()?,
        spectrum: SpectrumSettings {
            window: window.parse()?,
            harmonics,
            guard_bins,
        },
        min_samples: 0,
        keep_residual: true,
    })
}

/// An out-of-range value at `index` of the array named `source`.
fn out_of_range(source: &str, index: usize, bits: u32, found: String) -> Error {
    Error::new(
        ErrorKind::CodeOutOfRange,
        source,
        Location::Key(format!("[{index}]")),
        format!(
            "a code in {}..={} for {} bits",
            spurline::min_code(bits),
            spurline::max_code(bits),
            bits
        ),
        found,
    )
}

/// Integer words to signed centred codes: two's complement as they are, offset binary less
/// 2^(N−1); every code checked against the N-bit range (a u64 word beyond i64 is out of range).
fn codes_from_ints<T: Copy + TryInto<i64> + std::fmt::Display>(
    values: impl Iterator<Item = T>,
    len: usize,
    bits: u32,
    coding: Coding,
    source: &str,
) -> Result<Vec<i32>, Error> {
    let (lo, hi) = (spurline::min_code(bits), spurline::max_code(bits));
    let shift = match coding {
        Coding::TwosComplement => 0,
        Coding::OffsetBinary => 1i64 << (bits - 1),
    };
    let mut codes = Vec::with_capacity(len);
    for (i, v) in values.enumerate() {
        let c = v.try_into().ok().and_then(|w: i64| w.checked_sub(shift));
        match c {
            Some(c) if (lo..=hi).contains(&c) => codes.push(c as i32),
            _ => {
                let found = match (coding, c) {
                    (Coding::OffsetBinary, Some(c)) => format!("{v} (offset binary: {c})"),
                    _ => v.to_string(),
                };
                return Err(out_of_range(source, i, bits, found));
            }
        }
    }
    Ok(codes)
}

/// [`codes_from_ints`] of a contiguous array: a range pass and a conversion pass that both vectorise
/// (the element-by-element form with its early return does not); values out of range are reported
/// by the element-by-element form, which names the first.
fn codes_from_slice<T: Copy + TryInto<i64> + std::fmt::Display>(
    values: &[T],
    bits: u32,
    coding: Coding,
    source: &str,
) -> Result<Vec<i32>, Error> {
    let (lo, hi) = (spurline::min_code(bits), spurline::max_code(bits));
    let shift = match coding {
        Coding::TwosComplement => 0,
        Coding::OffsetBinary => 1i64 << (bits - 1),
    };
    // Types wider than i64 (u64) take the checked form throughout.
    if std::mem::size_of::<T>() < 8 || std::any::type_name::<T>() == "i64" {
        let wide = |v: T| v.try_into().unwrap_or(i64::MIN).wrapping_sub(shift);
        let (min, max) = values.iter().fold((i64::MAX, i64::MIN), |(a, b), &v| {
            let w = wide(v);
            (a.min(w), b.max(w))
        });
        if values.is_empty() || (lo <= min && max <= hi) {
            return Ok(values.iter().map(|&v| wide(v) as i32).collect());
        }
    }
    codes_from_ints(values.iter().copied(), values.len(), bits, coding, source)
}

/// Voltages (mid-scale at 0 V) to the nearest codes of an N-bit converter with this full-scale range,
/// with a warning when some lie off the code grid.
fn codes_from_volts(
    values: impl Iterator<Item = f64>,
    len: usize,
    bits: u32,
    full_scale_vpp: f64,
    source: &str,
) -> Result<(Vec<i32>, Vec<String>), Error> {
    if !(full_scale_vpp.is_finite() && full_scale_vpp > 0.0) {
        return Err(Error::setting(
            "full_scale_vpp",
            "a positive full-scale range in volts peak-to-peak",
            full_scale_vpp.to_string(),
        )
        .with_path(source));
    }
    let (lo, hi) = (
        spurline::min_code(bits) as f64,
        spurline::max_code(bits) as f64,
    );
    let q = full_scale_vpp / 2f64.powi(bits as i32);
    let mut codes = Vec::with_capacity(len);
    let mut off_grid = 0usize;
    for (i, v) in values.enumerate() {
        if !v.is_finite() {
            return Err(Error::new(
                ErrorKind::NotInteger,
                source,
                Location::Key(format!("[{i}]")),
                "a finite voltage",
                v.to_string(),
            ));
        }
        let x = v / q;
        let c = x.round();
        if c < lo || c > hi {
            return Err(out_of_range(
                source,
                i,
                bits,
                format!("{v} V ({c} codes at {full_scale_vpp} V full scale)"),
            ));
        }
        if (x - c).abs() > OFF_GRID_LSB {
            off_grid += 1;
        }
        codes.push(c as i32);
    }
    let mut warnings = Vec::new();
    if off_grid > 0 {
        warnings.push(format!(
            "{off_grid} of {len} voltages lie more than {OFF_GRID_LSB} LSB off the {bits}-bit code grid \
             (q = {q:e} V): rounding them to codes adds up to q/√12 of noise to the figures"
        ));
    }
    Ok((codes, warnings))
}

/// Codes and the warnings of their conversion, or the error about the values.
type Converted = Result<(Vec<i32>, Vec<String>), Error>;
/// A record and the warnings of its conversion, or the error about its values.
type Prepared = Result<(Record, Vec<String>), Error>;
/// A failed analysis: the error and the warnings so far (boxed: errors are the rare path).
type Failed = Box<(Error, Vec<String>)>;

/// Rejects a resolution outside 1..=32 bits before any shift by bits − 1 (the library's own check
/// gives the same error for a record).
fn check_bits(bits: u32, source: &str) -> Result<(), Error> {
    if spurline::BITS_RANGE.contains(&bits) {
        Ok(())
    } else {
        Err(
            Error::setting("bits", "a resolution of 1..=32 bits", bits.to_string())
                .with_path(source),
        )
    }
}

/// A 1-D NumPy array of integer codes or float voltages as codes (one conversion pass: a contiguous
/// array is read in place, a strided one through its view). The outer error is a wrong Python type,
/// the inner one the library's error about the values.
fn codes_of(
    array: &Bound<'_, PyAny>,
    bits: u32,
    coding: Option<Coding>,
    full_scale_vpp: Option<f64>,
    source: &str,
) -> PyResult<Converted> {
    if let Err(e) = check_bits(bits, source) {
        return Ok(Err(e));
    }
    macro_rules! ints {
        ($($t:ty => $signed:expr),*) => {$(
            if let Ok(a) = array.extract::<PyReadonlyArray1<'_, $t>>() {
                let coding = coding.unwrap_or(if $signed {
                    Coding::TwosComplement
                } else {
                    Coding::OffsetBinary
                });
                let len = a.len();
                let r = match a.as_slice() {
                    Ok(s) => codes_from_slice(s, bits, coding, source),
                    Err(_) => {
                        codes_from_ints(a.as_array().iter().copied(), len, bits, coding, source)
                    }
                };
                return Ok(r.map(|c| (c, Vec::new())));
            }
        )*};
    }
    ints!(i32 => true, i16 => true, i8 => true, i64 => true,
          u16 => false, u8 => false, u32 => false, u64 => false);
    macro_rules! floats {
        ($($t:ty),*) => {$(
            if let Ok(a) = array.extract::<PyReadonlyArray1<'_, $t>>() {
                let Some(fsr) = full_scale_vpp else {
                    return Ok(Err(Error::setting(
                        "full_scale_vpp",
                        "the full-scale range in volts peak-to-peak, to turn float voltages into codes",
                        "none given",
                    )
                    .with_path(source)));
                };
                let len = a.len();
                return Ok(match a.as_slice() {
                    Ok(s) => codes_from_volts(s.iter().map(|&v| v as f64), len, bits, fsr, source),
                    Err(_) => codes_from_volts(
                        a.as_array().iter().map(|&v| v as f64),
                        len,
                        bits,
                        fsr,
                        source,
                    ),
                });
            }
        )*};
    }
    floats!(f64, f32);
    let what = array
        .getattr("dtype")
        .map(|d| format!("an array of dtype {d}"))
        .unwrap_or_else(|_| format!("{}", array.get_type()));
    Err(pyo3::exceptions::PyTypeError::new_err(format!(
        "{source}: expected a 1-D NumPy array of integer codes (int8..int64, uint8..uint64) or of \
         float voltages (float32, float64), found {what}"
    )))
}

/// One result: the library's result record and, when kept, the traces behind its plots.
#[pyclass(frozen, module = "spurline._native")]
struct NativeResult {
    analysis: Analysis,
    traces: Option<Traces>,
    harmonics: u32,
}

#[pymethods]
impl NativeResult {
    /// The result record as the command line's `--json` writes each object (pretty, same keys, same
    /// numbers).
    fn to_json(&self) -> String {
        serde_json::to_string_pretty(&self.analysis).expect("plain data serialises")
    }

    /// One flat row: the CSV's columns (the figure table's keys, nested keys joined with dots, every
    /// harmonic up to the analysis's highest order) with values typed by the figure table (numbers,
    /// whole numbers, flags, text; absent values `None`), then any field of the record the table does
    /// not list yet; as JSON. Every row of one setting has the same columns, failed or not.
    fn row_json(&self) -> String {
        let value = serde_json::to_value(&self.analysis).expect("plain data serialises");
        let mut cells: std::collections::HashMap<String, String> =
            figures::flatten(&value).into_iter().collect();
        let mut row = serde_json::Map::new();
        // The CSV's rule: the harmonics asked for, or as many as the record has, whichever is more.
        let highest = self
            .analysis
            .spectrum
            .as_ref()
            .and_then(|s| s.harmonics.iter().map(|h| h.order).max())
            .map_or(self.harmonics, |h| h.max(self.harmonics));
        let columns = figures::keys(highest);
        for key in &columns {
            let text = cells.remove(key).unwrap_or_default();
            row.insert(key.clone(), typed_cell(key, text));
        }
        // A part absent as a whole (null) flattens to its own key, which the columns under it cover.
        for (key, text) in figures::flatten(&value) {
            let covered =
                row.contains_key(&key) || columns.iter().any(|c| c.starts_with(&format!("{key}.")));
            if !covered {
                row.insert(key.clone(), typed_cell(&key, text));
            }
        }
        serde_json::Value::Object(row).to_string()
    }

    /// Whether traces (bin powers, residual, code histogram) were kept.
    fn has_traces(&self) -> bool {
        self.traces.is_some()
    }

    /// Bin frequencies k·fs/N, k = 0..N/2, hertz.
    fn frequency_hz<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        let bins = self.traces.as_ref().map_or(0, |t| t.powers.len());
        let df = self.analysis.sample_rate_hz / self.analysis.samples.max(1) as f64;
        (0..bins)
            .map(|k| k as f64 * df)
            .collect::<Vec<_>>()
            .into_pyarray(py)
    }

    /// Bin powers relative to a full-scale sine, dBFS (−inf for an empty bin), as the spectrum plot
    /// draws them.
    fn power_dbfs<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        let pfs = spurline::full_scale_power(self.analysis.bits.max(1));
        self.traces
            .as_ref()
            .map(|t| {
                t.powers
                    .iter()
                    .map(|&p| 10.0 * (p / pfs).log10())
                    .collect::<Vec<_>>()
            })
            .unwrap_or_default()
            .into_pyarray(py)
    }

    /// Residual of the sine fit, codes.
    fn residual_codes<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<f64>> {
        self.traces
            .as_ref()
            .map(|t| t.residual.clone())
            .unwrap_or_default()
            .into_pyarray(py)
    }

    /// Count per code, lowest code −2^(N−1) first (empty above 24 bits).
    fn histogram<'py>(&self, py: Python<'py>) -> Bound<'py, PyArray1<u64>> {
        self.traces
            .as_ref()
            .map(Traces::histogram)
            .unwrap_or_default()
            .into_pyarray(py)
    }

    /// The spectrum plot of the report pages, as SVG text.
    fn spectrum_svg(&self, py: Python<'_>) -> PyResult<String> {
        let Some(t) = &self.traces else {
            return Err(py_error(
                py,
                &Error::setting(
                    "keep_traces",
                    "a result analysed with keep_traces=True (the bin powers to draw)",
                    "a result without traces",
                ),
            ));
        };
        spurline::spectrum_svg(
            &self.analysis.source,
            &self.analysis,
            t,
            &spurline::PlotOptions::default(),
        )
        .map_err(|e| py_error(py, &e))
    }

    /// The headline figures (with their uncertainties where the record has them), the warnings, the
    /// error and the spectrum plot, as an HTML fragment for notebooks.
    fn html(&self) -> String {
        let a = &self.analysis;
        let cells = Cells::of(a);
        let mut h = String::from("<div class=\"spurline-result\">");
        h.push_str(&format!(
            "<p><b>{}</b> · {} samples · {} · {} bits</p>",
            escape(&a.source),
            a.samples,
            escape(&spurline::format_si(a.sample_rate_hz, "S/s", 6)),
            a.bits
        ));
        if let Some(e) = &a.error {
            h.push_str(&format!(
                "<p style=\"color:#b00\">error ({}): {}</p>",
                escape(
                    &serde_json::to_value(e.kind)
                        .map(|v| v.to_string())
                        .unwrap_or_default()
                ),
                escape(&e.message)
            ));
        }
        h.push_str("<table><thead><tr><th>figure</th><th>value</th><th>unit</th><th>± 1σ</th></tr></thead><tbody>");
        for f in figures::headline() {
            let v = cells.text(f.key);
            let u = f
                .uncertainty_key(0)
                .map(|k| cells.text(&k).to_string())
                .unwrap_or_default();
            let value = cells.number(f.key).map_or_else(
                || {
                    if v.is_empty() {
                        "—".to_string()
                    } else {
                        v.to_string()
                    }
                },
                |x| format!("{x:.3}"),
            );
            let sigma = u
                .parse::<f64>()
                .map_or(String::new(), |x| format!("{x:.3}"));
            h.push_str(&format!(
                "<tr><td>{}</td><td style=\"text-align:right\">{}</td><td>{}</td><td style=\"text-align:right\">{}</td></tr>",
                escape(f.label),
                escape(&value),
                escape(f.unit.symbol()),
                escape(&sigma)
            ));
        }
        h.push_str("</tbody></table>");
        if !a.warnings.is_empty() {
            h.push_str("<ul>");
            for w in &a.warnings {
                h.push_str(&format!("<li>{}</li>", escape(w)));
            }
            h.push_str("</ul>");
        }
        if let Some(t) = &self.traces {
            if let Ok(svg) =
                spurline::spectrum_svg(&a.source, a, t, &spurline::PlotOptions::default())
            {
                h.push_str(&svg);
            }
        }
        h.push_str("</div>");
        h
    }

    /// The highest harmonic order the analysis counted.
    #[getter]
    fn harmonics(&self) -> u32 {
        self.harmonics
    }
}

/// A flattened cell as a typed JSON value, by the figure table's kind for its key (an uncertainty
/// takes its figure's number kind); a key the table does not hold keeps a number that parses as one.
fn typed_cell(key: &str, text: String) -> serde_json::Value {
    use serde_json::Value;
    if text.is_empty() {
        return Value::Null;
    }
    let kind = figures::get(key)
        .map(|c| c.figure.kind)
        .or_else(|| key.contains(".uncertainty.").then_some(Kind::Number));
    let number = |t: &str| {
        t.parse::<f64>()
            .ok()
            .and_then(serde_json::Number::from_f64)
            .map(Value::Number)
    };
    match kind {
        Some(Kind::Number) => number(&text).unwrap_or(Value::String(text)),
        Some(Kind::Integer) => text
            .parse::<i64>()
            .map(|i| Value::Number(i.into()))
            .unwrap_or(Value::String(text)),
        Some(Kind::Flag) => match text.as_str() {
            "true" => Value::Bool(true),
            "false" => Value::Bool(false),
            _ => Value::String(text),
        },
        Some(Kind::Text) => Value::String(text),
        None => number(&text).unwrap_or(Value::String(text)),
    }
}

fn escape(text: &str) -> String {
    let mut s = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => s.push_str("&amp;"),
            '<' => s.push_str("&lt;"),
            '>' => s.push_str("&gt;"),
            '"' => s.push_str("&quot;"),
            '\'' => s.push_str("&#39;"),
            c => s.push(c),
        }
    }
    s
}

/// What describes the records of one call: rate, resolution, coding, full scale, input frequency.
struct Described {
    sample_rate_hz: f64,
    bits: u32,
    coding: Option<Coding>,
    full_scale_vpp: Option<f64>,
    fin_hz: Option<f64>,
}

/// Arrays (their values read now, under the GIL) as records with the warnings of their conversion;
/// the code checks ([`spurline::check_codes`]) are made later, with the GIL released.
fn records_of(
    arrays: &[Bound<'_, PyAny>],
    sources: &[String],
    d: &Described,
) -> PyResult<Vec<Prepared>> {
    let mut out = Vec::with_capacity(arrays.len());
    for (array, source) in arrays.iter().zip(sources) {
        let r = codes_of(array, d.bits, d.coding, d.full_scale_vpp, source)?.map(
            |(codes, warnings)| {
                (
                    Record {
                        source: source.clone(),
                        codes,
                        sample_rate_hz: d.sample_rate_hz,
                        bits: d.bits,
                        full_scale_vpp: d.full_scale_vpp,
                        values: None,
                        fin_hint_hz: d.fin_hz,
                    },
                    warnings,
                )
            },
        );
        out.push(r);
    }
    Ok(out)
}

/// Analyses records (averaged when several), the earlier warnings first, as the command line does;
/// on failure the error and the warnings so far.
fn analyse_checked(
    records: &[Record],
    mut warnings: Vec<String>,
    settings: &AnalysisSettings,
    keep_traces: bool,
) -> Result<(Analysis, Option<Traces>), Failed> {
    // The residual is made only for the traces.
    let settings = &AnalysisSettings {
        keep_residual: keep_traces && settings.keep_residual,
        ..*settings
    };
    match analyze_averaged(records, settings) {
        Ok(m) => {
            let mut a = m.analysis;
            warnings.extend(a.warnings);
            a.warnings = warnings;
            Ok((a, keep_traces.then_some(m.traces)))
        }
        Err(e) => Err(Box::new((e, warnings))),
    }
}

/// As [`analyse_checked`], a failure being a failed result record.
fn analyse(
    records: &[Record],
    warnings: Vec<String>,
    settings: &AnalysisSettings,
    keep_traces: bool,
) -> (Analysis, Option<Traces>) {
    analyse_checked(records, warnings, settings, keep_traces).unwrap_or_else(|failed| {
        let (e, warnings) = *failed;
        let source = records.first().map_or("", |r| r.source.as_str());
        (Analysis::failed(source, &e, warnings), None)
    })
}

fn coding_of(coding: Option<&str>) -> Result<Option<Coding>, Error> {
    coding.map(str::parse).transpose()
}

fn pool(jobs: Option<usize>) -> Result<Option<rayon::ThreadPool>, Error> {
    match jobs {
        None => Ok(None),
        Some(0) => Err(Error::setting("jobs", "at least 1 worker thread", "0")),
        Some(n) => rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build()
            .map(Some)
            .map_err(|e| Error::setting("jobs", "a thread pool that can start", e.to_string())),
    }
}

/// Analyses one record, or several averaged (one condition), from arrays. Raises on any error.
#[pyfunction]
#[pyo3(signature = (arrays, sources, sample_rate_hz, bits, *, fit="four", window="auto",
    harmonics=10, guard_bins=None, coding=None, full_scale_vpp=None, fin_hz=None,
    warnings=Vec::new(), keep_traces=true))]
#[allow(clippy::too_many_arguments)]
fn analyze_arrays(
    py: Python<'_>,
    arrays: Vec<Bound<'_, PyAny>>,
    sources: Vec<String>,
    sample_rate_hz: f64,
    bits: u32,
    fit: &str,
    window: &str,
    harmonics: u32,
    guard_bins: Option<usize>,
    coding: Option<&str>,
    full_scale_vpp: Option<f64>,
    fin_hz: Option<f64>,
    warnings: Vec<String>,
    keep_traces: bool,
) -> PyResult<NativeResult> {
    let err = |e: Error| py_error(py, &e);
    let settings = analysis_settings(fit, window, harmonics, guard_bins).map_err(err)?;
    let d = Described {
        sample_rate_hz,
        bits,
        coding: coding_of(coding).map_err(err)?,
        full_scale_vpp,
        fin_hz,
    };
    let mut records = Vec::with_capacity(arrays.len());
    let mut converted = Vec::with_capacity(arrays.len());
    for r in records_of(&arrays, &sources, &d)? {
        let (record, w) = r.map_err(err)?;
        converted.push(w);
        records.push(record);
    }
    // The code checks run on the second core while the first analyses (an analysis of one record
    // uses one); their warnings still come in the command line's order: each record's reading
    // warnings, then its code checks, then the analysis's.
    let (analysis, traces) = py
        .detach(|| {
            let (checks, measured) = rayon::join(
                || {
                    records
                        .iter()
                        .map(|r| spurline::check_codes(&r.codes, r.bits))
                        .collect::<Vec<_>>()
                },
                || analyse_checked(&records, Vec::new(), &settings, keep_traces),
            );
            let mut all = warnings;
            for (w, c) in converted.into_iter().zip(checks) {
                all.extend(w);
                all.extend(c);
            }
            measured.map(|(mut a, t)| {
                all.append(&mut a.warnings);
                a.warnings = all;
                (a, t)
            })
        })
        .map_err(|failed| err(failed.0))?;
    Ok(NativeResult {
        analysis,
        traces,
        harmonics,
    })
}

/// Analyses each array as its own record, in parallel; a failed record is a result with its error
/// and the rest go on. A bad setting raises before any record is analysed. `warnings`: earlier
/// warnings of each record (its reader's), put first.
#[pyfunction]
#[pyo3(signature = (arrays, sources, sample_rate_hz, bits, *, fit="four", window="auto",
    harmonics=10, guard_bins=None, coding=None, full_scale_vpp=None, fin_hz=None,
    warnings=None, keep_traces=false, jobs=None))]
#[allow(clippy::too_many_arguments)]
fn analyze_many_arrays(
    py: Python<'_>,
    arrays: Vec<Bound<'_, PyAny>>,
    sources: Vec<String>,
    sample_rate_hz: f64,
    bits: u32,
    fit: &str,
    window: &str,
    harmonics: u32,
    guard_bins: Option<usize>,
    coding: Option<&str>,
    full_scale_vpp: Option<f64>,
    fin_hz: Option<f64>,
    warnings: Option<Vec<Vec<String>>>,
    keep_traces: bool,
    jobs: Option<usize>,
) -> PyResult<Vec<NativeResult>> {
    let err = |e: Error| py_error(py, &e);
    let settings = analysis_settings(fit, window, harmonics, guard_bins).map_err(err)?;
    let d = Described {
        sample_rate_hz,
        bits,
        coding: coding_of(coding).map_err(err)?,
        full_scale_vpp,
        fin_hz,
    };
    let pool = pool(jobs).map_err(err)?;
    let mut records = records_of(&arrays, &sources, &d)?;
    // Earlier warnings (a file reader's) come first, as the command line puts them.
    for (r, mut prior) in records.iter_mut().zip(warnings.unwrap_or_default()) {
        if let Ok((_, w)) = r {
            prior.append(w);
            *w = prior;
        }
    }
    let run = || {
        records
            .par_iter()
            .zip(sources.par_iter())
            .map(|(r, source)| match r {
                Ok((record, w)) => {
                    let mut w = w.clone();
                    w.extend(spurline::check_codes(&record.codes, record.bits));
                    analyse(std::slice::from_ref(record), w, &settings, keep_traces)
                }
                Err(e) => (Analysis::failed(source, e, Vec::new()), None),
            })
            .collect::<Vec<_>>()
    };
    let results = py.detach(|| match &pool {
        Some(p) => p.install(run),
        None => run(),
    });
    Ok(results
        .into_iter()
        .map(|(analysis, traces)| NativeResult {
            analysis,
            traces,
            harmonics,
        })
        .collect())
}

/// Ingest settings from the same options as the command line's reading options.
#[allow(clippy::too_many_arguments)]
fn ingest_settings(
    fs: Option<f64>,
    bits: Option<u32>,
    fin: Option<f64>,
    full_scale_vpp: Option<f64>,
    format: Option<&str>,
    coding: Option<&str>,
    justify: Option<&str>,
    skip_bytes: Option<u64>,
    channel: Option<&str>,
    column: Option<&Bound<'_, PyAny>>,
    delimiter: Option<&str>,
) -> PyResult<Result<IngestSettings, Error>> {
    use spurline::{ColumnSel, Format};
    let column = match column {
        None => None,
        Some(c) => Some(if let Ok(i) = c.extract::<usize>() {
            ColumnSel::Index(i)
        } else {
            ColumnSel::Name(c.extract::<String>()?)
        }),
    };
    let settings = || -> Result<IngestSettings, Error> {
        let format = match format {
            None => None,
            Some("txt") => Some(Format::Text),
            Some(f) => Some(f.parse::<Format>()?),
        };
        Ok(IngestSettings {
            format,
            meta: Metadata {
                sample_rate_hz: fs,
                bits,
                fin_hz: fin,
                full_scale_vpp,
            },
            coding: coding_of(coding)?,
            justify: justify.map(str::parse).transpose()?,
            skip_bytes,
            channel: channel.map(spurline::parse_channel).transpose()?,
            column,
            delimiter: delimiter.map(spurline::parse_delimiter).transpose()?,
            ..IngestSettings::default()
        })
    };
    Ok(settings())
}

/// A record read for Python: its codes (int32; empty for a record of values), its values (float64 on
/// the codes' scale, for a record of values only) and its metadata as JSON.
type ReadRecord<'py> = (
    Bound<'py, PyArray1<i32>>,
    Option<Bound<'py, PyArray1<f64>>>,
    String,
);

/// Reads a record file (and its sidecar) with the command line's reading options: the codes as an
/// int32 array (or the values as float64, for a record of voltages or floats), and the metadata and
/// warnings as a dict.
#[pyfunction]
#[pyo3(signature = (path, *, fs=None, bits=None, fin=None, full_scale_vpp=None, format=None,
    coding=None, justify=None, skip_bytes=None, channel=None, column=None, delimiter=None))]
#[allow(clippy::too_many_arguments)]
fn read<'py>(
    py: Python<'py>,
    path: std::path::PathBuf,
    fs: Option<f64>,
    bits: Option<u32>,
    fin: Option<f64>,
    full_scale_vpp: Option<f64>,
    format: Option<&str>,
    coding: Option<&str>,
    justify: Option<&str>,
    skip_bytes: Option<u64>,
    channel: Option<&str>,
    column: Option<Bound<'py, PyAny>>,
    delimiter: Option<&str>,
) -> PyResult<ReadRecord<'py>> {
    let settings = ingest_settings(
        fs,
        bits,
        fin,
        full_scale_vpp,
        format,
        coding,
        justify,
        skip_bytes,
        channel,
        column.as_ref(),
        delimiter,
    )?
    .map_err(|e| py_error(py, &e))?;
    let ing = py
        .detach(|| read_record(&path, &settings))
        .map_err(|e| py_error(py, &e))?;
    let r = ing.record;
    let meta = serde_json::json!({
        "source": r.source,
        "sample_rate_hz": r.sample_rate_hz,
        "bits": r.bits,
        "full_scale_vpp": r.full_scale_vpp,
        "fin_hz": r.fin_hint_hz,
        "warnings": ing.warnings,
    });
    // A record of values (volts, floats) has no codes: its samples go back as float64 on the codes'
    // scale, never as an empty code array.
    let values = r.values.map(|v| v.scaled.into_pyarray(py));
    Ok((r.codes.into_pyarray(py), values, meta.to_string()))
}

/// Reads and analyses record files in parallel, as `spurline analyze FILES --json` does each (or
/// averaged into one result with `average`); a failed file is a result with its error.
#[pyfunction]
#[pyo3(signature = (paths, *, fs=None, bits=None, fin=None, full_scale_vpp=None, format=None,
    coding=None, justify=None, skip_bytes=None, channel=None, column=None, delimiter=None,
    fit="four", window="auto", harmonics=10, guard_bins=None, average=false, keep_traces=false,
    jobs=None))]
#[allow(clippy::too_many_arguments)]
fn analyze_paths(
    py: Python<'_>,
    paths: Vec<std::path::PathBuf>,
    fs: Option<f64>,
    bits: Option<u32>,
    fin: Option<f64>,
    full_scale_vpp: Option<f64>,
    format: Option<&str>,
    coding: Option<&str>,
    justify: Option<&str>,
    skip_bytes: Option<u64>,
    channel: Option<&str>,
    column: Option<Bound<'_, PyAny>>,
    delimiter: Option<&str>,
    fit: &str,
    window: &str,
    harmonics: u32,
    guard_bins: Option<usize>,
    average: bool,
    keep_traces: bool,
    jobs: Option<usize>,
) -> PyResult<Vec<NativeResult>> {
    let err = |e: Error| py_error(py, &e);
    let ingest = ingest_settings(
        fs,
        bits,
        fin,
        full_scale_vpp,
        format,
        coding,
        justify,
        skip_bytes,
        channel,
        column.as_ref(),
        delimiter,
    )?
    .map_err(err)?;
    let settings = analysis_settings(fit, window, harmonics, guard_bins).map_err(err)?;
    let pool = pool(jobs).map_err(err)?;
    let run = || -> Vec<(Analysis, Option<Traces>)> {
        let read: Vec<_> = paths
            .par_iter()
            .map(|p| (p, read_record(p, &ingest)))
            .collect();
        if average {
            // One result of every file that was read; a file that failed is its own failed result,
            // in the files' order (as the command line reports them).
            let mut out = Vec::new();
            let mut records = Vec::new();
            let mut warnings = Vec::new();
            let mut first_ok = None;
            for (i, (path, r)) in read.into_iter().enumerate() {
                match r {
                    Ok(ing) => {
                        first_ok.get_or_insert(i);
                        warnings.extend(ing.warnings);
                        records.push(ing.record);
                    }
                    Err(e) => {
                        let shown = path.display().to_string();
                        out.push((i, (Analysis::failed(&shown, &e, Vec::new()), None)))
                    }
                }
            }
            if let Some(i) = first_ok {
                out.push((i, analyse(&records, warnings, &settings, keep_traces)));
            }
            out.sort_by_key(|(i, _)| *i);
            out.into_iter().map(|(_, r)| r).collect()
        } else {
            read.into_par_iter()
                .map(|(path, r)| match r {
                    Ok(ing) => analyse(
                        std::slice::from_ref(&ing.record),
                        ing.warnings,
                        &settings,
                        keep_traces,
                    ),
                    Err(e) => (
                        Analysis::failed(&path.display().to_string(), &e, Vec::new()),
                        None,
                    ),
                })
                .collect()
        }
    };
    let results = py.detach(|| match &pool {
        Some(p) => p.install(run),
        None => run(),
    });
    Ok(results
        .into_iter()
        .map(|(analysis, traces)| NativeResult {
            analysis,
            traces,
            harmonics,
        })
        .collect())
}

/// The periodic (DFT-even) window of this name and length, as the analysis applies it.
#[pyfunction]
fn window<'py>(py: Python<'py>, name: &str, n: usize) -> PyResult<Bound<'py, PyArray1<f64>>> {
    let w: spurline::Window = name.parse().map_err(|e| py_error(py, &e))?;
    Ok(w.samples(n).into_pyarray(py))
}

/// The figure table: key, label, unit, better direction, headline place, kind, whether it carries an
/// uncertainty, as JSON (one object per row, in the record's field order).
#[pyfunction]
fn figure_table() -> String {
    let rows: Vec<serde_json::Value> = figures::table()
        .iter()
        .map(|f| {
            serde_json::json!({
                "key": f.key,
                "label": f.label,
                "unit": f.unit.symbol(),
                "better": format!("{:?}", f.better).to_lowercase(),
                "headline": f.headline,
                "kind": format!("{:?}", f.kind).to_lowercase(),
                "uncertainty": f.uncertainty,
            })
        })
        .collect();
    serde_json::Value::Array(rows).to_string()
}

/// Runs a bench plan over its lot, as `spurline batch PLAN [--limits TABLE] --out OUT` does (the same
/// files in OUT), and gives the lot's counts and its summary rows (as JSON): the lead columns
/// (device, condition, verdict, reason) as text, the figures typed by the figure table.
#[pyfunction]
#[pyo3(signature = (plan, limits=None, *, out, jobs=None, plots="none"))]
fn run_plan(
    py: Python<'_>,
    plan: std::path::PathBuf,
    limits: Option<std::path::PathBuf>,
    out: std::path::PathBuf,
    jobs: Option<usize>,
    plots: &str,
) -> PyResult<(String, String)> {
    let go = || -> Result<(String, String), Error> {
        let bench = spurline::BenchPlan::read(&plan)?;
        let lot = bench.locate()?;
        let table = limits
            .as_deref()
            .map(|p| spurline::LimitTable::read(p, &bench.limit_scope()))
            .transpose()?;
        let jobs = match jobs {
            Some(0) => return Err(Error::setting("jobs", "at least 1 worker thread", "0")),
            Some(n) => n,
            None => std::thread::available_parallelism().map_or(1, |n| n.get()),
        };
        let options = spurline::BatchOptions {
            out: out.clone(),
            jobs,
            plots: plots.parse()?,
        };
        let counts = spurline::run_lot(&bench, &lot, table.as_ref(), &options, &())?;
        let summary = spurline::LotSummary::in_folder(&out)?;
        let columns = summary.columns().to_vec();
        let mut rows = Vec::new();
        for row in summary.all_rows()? {
            let mut obj = serde_json::Map::new();
            for (i, key) in columns.iter().enumerate() {
                let text = row.cell(i).to_string();
                let value = if spurline::LEAD_COLUMNS.contains(&key.as_str()) {
                    serde_json::Value::String(text)
                } else {
                    typed_cell(key, text)
                };
                obj.insert(key.clone(), value);
            }
            rows.push(serde_json::Value::Object(obj));
        }
        let counts = serde_json::to_string(&counts).expect("plain data serialises");
        Ok((counts, serde_json::Value::Array(rows).to_string()))
    };
    py.detach(go).map_err(|e| py_error(py, &e))
}

/// For the benchmark (python/bench.py): the wall time of each of `repeats` calls of the library's
/// `analyze` on this array's record, timed in Rust after one conversion, so that the Python call's
/// cost can be compared with the same analysis called from Rust in the same process.
#[pyfunction]
fn _bench_rust_analyze(
    py: Python<'_>,
    array: Bound<'_, PyAny>,
    sample_rate_hz: f64,
    bits: u32,
    repeats: usize,
) -> PyResult<Vec<f64>> {
    let (codes, _) = codes_of(&array, bits, None, None, "bench")?.map_err(|e| py_error(py, &e))?;
    let record = Record {
        source: "bench".into(),
        codes,
        sample_rate_hz,
        bits,
        full_scale_vpp: None,
        values: None,
        fin_hint_hz: None,
    };
    let settings = AnalysisSettings::default();
    py.detach(|| {
        (0..repeats)
            .map(|_| {
                let t = std::time::Instant::now();
                let m = spurline::analyze(&record, &settings);
                let dt = t.elapsed().as_secs_f64();
                drop(std::hint::black_box(m));
                Ok(dt)
            })
            .collect()
    })
}

#[pymodule]
fn _native(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add("SpurlineError", m.py().get_type::<SpurlineError>())?;
    m.add_class::<NativeResult>()?;
    m.add_function(wrap_pyfunction!(analyze_arrays, m)?)?;
    m.add_function(wrap_pyfunction!(analyze_many_arrays, m)?)?;
    m.add_function(wrap_pyfunction!(analyze_paths, m)?)?;
    m.add_function(wrap_pyfunction!(read, m)?)?;
    m.add_function(wrap_pyfunction!(window, m)?)?;
    m.add_function(wrap_pyfunction!(figure_table, m)?)?;
    m.add_function(wrap_pyfunction!(run_plan, m)?)?;
    m.add_function(wrap_pyfunction!(_bench_rust_analyze, m)?)?;
    m.add("__version__", env!("CARGO_PKG_VERSION"))?;
    Ok(())
}
