//! Limit tables: reading and resolving them against a plan's conditions and the metrics of the results
//! (see the format in the [module docs](super)), and writing them back.

use std::collections::BTreeMap;
use std::path::Path;

use serde::Serialize;

use super::format_value;
use crate::error::{Error, ErrorKind, Location, Result};
use crate::figures::{self, Better, Unit};

/// A metric limits can be set on: a figure of the result record with a unit ([`figures::Figure::is_metric`]).
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Metric {
    /// The full flattened name, as a column of the results CSV.
    pub name: String,
    /// Its unit.
    pub unit: Unit,
    /// Which direction is better.
    pub direction: Better,
}

impl Metric {
    /// The metric of a results column, from the figure table; `None` for a column that is no metric
    /// (text, flags, counts) or that the table does not hold.
    pub fn of(column: &str) -> Option<Metric> {
        let c = figures::get(column).filter(|c| c.figure.is_metric())?;
        Some(Metric {
            name: column.to_string(),
            unit: c.unit(),
            direction: c.better(),
        })
    }
}

/// The metrics of one set of result columns.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Catalogue {
    metrics: Vec<Metric>,
}

impl Catalogue {
    /// The columns among `columns` that are metrics ([`Metric::of`]), in their order (duplicates
    /// dropped).
    pub fn from_columns<S: AsRef<str>>(columns: impl IntoIterator<Item = S>) -> Catalogue {
        let mut metrics: Vec<Metric> = Vec::new();
        for c in columns {
            if let Some(m) = Metric::of(c.as_ref()) {
                if metrics.iter().all(|o| o.name != m.name) {
                    metrics.push(m);
                }
            }
        }
        Catalogue { metrics }
    }

    /// The metrics of results analysed with harmonics up to `harmonics`: the metrics among the figure
    /// table's columns ([`figures::keys`]).
    pub fn for_harmonics(harmonics: u32) -> Catalogue {
        Catalogue::from_columns(figures::keys(harmonics))
    }

    /// Every metric, in column order.
    pub fn metrics(&self) -> &[Metric] {
        &self.metrics
    }

    /// The metric of exactly this full name.
    pub fn get(&self, name: &str) -> Option<&Metric> {
        self.metrics.iter().find(|m| m.name == name)
    }

    /// The metric a name means: the full name, or a tail of one cut at a dot that exactly one metric
    /// ends with. `Err` holds the candidates: none (unknown) or several (ambiguous).
    pub fn resolve(&self, name: &str) -> std::result::Result<&Metric, Vec<&Metric>> {
        if let Some(m) = self.get(name) {
            return Ok(m);
        }
        let found: Vec<&Metric> = self
            .metrics
            .iter()
            .filter(|m| figures::is_tail(&m.name, name))
            .collect();
        if found.len() == 1 {
            Ok(found[0])
        } else {
            Err(found)
        }
    }
}

/// Describes why [`Catalogue::resolve`] failed, for an error's "found" part.
fn unresolved(name: &str, candidates: &[&Metric]) -> String {
    if candidates.is_empty() {
        format!("'{name}', which is no metric of the results")
    } else {
        let names: Vec<&str> = candidates.iter().map(|m| m.name.as_str()).collect();
        format!(
            "'{name}', which could be any of {}: give the full name",
            names.join(", ")
        )
    }
}

/// One row of a limit table, resolved against the plan.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Limit {
    /// The row (line) of the table it came from.
    pub row: usize,
    /// The condition it applies to; `None` for every condition (`*`).
    pub condition: Option<String>,
    /// The metric's full name.
    pub metric: String,
    /// The metric's unit.
    pub unit: Unit,
    /// Low limit, when there is one.
    pub low: Option<f64>,
    /// High limit, when there is one.
    pub high: Option<f64>,
    /// Guardband (≥ 0) that tightens both limits, in the metric's unit.
    pub guardband: f64,
    /// Guardband (≥ 0) in standard uncertainties of the record's own measurement of the metric:
    /// `guard_sigmas · σ` is added to `guardband` record by record (σ from the result's
    /// `uncertainty` object, [`crate::figures::Figure::uncertainty_key`]).
    pub guard_sigmas: f64,
}

/// The conditions a limit table may name, each with the metrics its results carry.
pub type Scope = [(String, Catalogue)];

/// A limit table resolved against a plan: every condition and metric known, every row checked.
#[derive(Debug, Clone, PartialEq)]
pub struct LimitTable {
    /// The file it was read from.
    pub path: String,
    /// The rows, in file order.
    pub limits: Vec<Limit>,
}

const LIMIT_COLUMNS: &str =
    "condition, metric, low, high, unit and optionally guardband and guard_sigmas";

impl LimitTable {
    /// Reads and resolves a limit table file.
    pub fn read(path: &Path, scope: &Scope) -> Result<LimitTable> {
        let shown = path.display().to_string();
        let text = crate::resources::read_small_text(
            path,
            "a readable limit table (UTF-8 CSV)",
            crate::resources::MAX_SMALL_FILE_BYTES,
        )?;
        LimitTable::parse(&text, &shown, scope)
    }

    /// Parses and resolves a limit table (see the module docs for the format). Errors are
    /// [`ErrorKind::BadLimits`] at the row: unknown condition or metric, an ambiguous short metric
    /// name, a cell that is not a number, low above high, a unit that is not the metric's, a negative
    /// guardband or one that closes the window, a second row for the same condition and metric, a
    /// missing or unknown column, a row of the wrong width, or no limit row at all.
    pub fn parse(text: &str, path: &str, scope: &Scope) -> Result<LimitTable> {
        let text = text.strip_prefix('\u{feff}').unwrap_or(text);
        let header_line = text
            .lines()
            .find(|l| !l.trim().is_empty() && !l.trim_start().starts_with('#'))
            .unwrap_or("");
        let delimiter = if header_line.contains(';') && !header_line.contains(',') {
            b';'
        } else {
            b','
        };
        // Comment lines are blanked, not removed, so that byte offsets still count every line.
        let cleaned: String = text
            .split_inclusive('\n')
            .map(|l| {
                if l.trim_start().starts_with('#') {
                    if l.ends_with('\n') {
                        "\n"
                    } else {
                        ""
                    }
                } else {
                    l
                }
            })
            .collect();
        let text = cleaned.as_str();
        let mut reader = ::csv::ReaderBuilder::new()
            .delimiter(delimiter)
            .trim(::csv::Trim::All)
            .flexible(true)
            .has_headers(false)
            .from_reader(text.as_bytes());
        let at = |row: usize, expected: String, found: String| {
            Error::new(
                ErrorKind::BadLimits,
                path,
                Location::Row(row),
                expected,
                found,
            )
        };
        let mut records = reader.records();
        let mut lines = Lines {
            text: text.as_bytes(),
            byte: 0,
            line: 1,
        };
        let mut col: BTreeMap<&str, usize> = BTreeMap::new();
        let (header, header_row) = loop {
            match records.next() {
                None => {
                    return Err(Error::new(
                        ErrorKind::BadLimits,
                        path,
                        Location::Whole,
                        format!("a header row naming the columns {LIMIT_COLUMNS}"),
                        "an empty file",
                    ))
                }
                Some(Err(e)) => return Err(csv_error(path, &e)),
                Some(Ok(r)) if r.iter().all(str::is_empty) => continue,
                Some(Ok(r)) => {
                    let row = lines.of(&r);
                    break (r, row);
                }
            }
        };
        for (i, name) in header.iter().enumerate() {
            let lower = name.to_ascii_lowercase();
            let known = [
                "condition",
                "metric",
                "low",
                "high",
                "unit",
                "guardband",
                "guard_sigmas",
            ];
            let Some(k) = known.iter().find(|k| **k == lower) else {
                return Err(at(
                    header_row,
                    format!("a header row naming the columns {LIMIT_COLUMNS}"),
                    format!("the column '{name}'"),
                ));
            };
            if col.insert(k, i).is_some() {
                return Err(at(
                    header_row,
                    "each column named once".into(),
                    format!("the column '{name}' twice"),
                ));
            }
        }
        for k in ["condition", "metric", "low", "high", "unit"] {
            if !col.contains_key(k) {
                return Err(at(
                    header_row,
                    format!("a header row naming the columns {LIMIT_COLUMNS}"),
                    format!("no column '{k}'"),
                ));
            }
        }
        let width = header.len();
        let mut limits: Vec<Limit> = Vec::new();
        for rec in records {
            let rec = rec.map_err(|e| csv_error(path, &e))?;
            let row = lines.of(&rec);
            if rec.iter().all(str::is_empty) {
                continue;
            }
            if rec.len() != width {
                return Err(at(
                    row,
                    format!("{width} cells as in the header"),
                    format!("{} cells", rec.len()),
                ));
            }
            // Text cells as the tool writes them (a leading quote against formulas taken off).
            let cell = |k: &str| {
                col.get(k)
                    .and_then(|&i| rec.get(i))
                    .map_or("", crate::report::csv::read_cell)
            };
            let number = |k: &str| -> Result<Option<f64>> {
                let s = cell(k);
                if s.is_empty() {
                    return Ok(None);
                }
                match s.parse::<f64>() {
                    Ok(v) if v.is_finite() => Ok(Some(v)),
                    _ => Err(at(
                        row,
                        format!("a number in the column {k}, or an empty cell"),
                        format!("'{s}'"),
                    )),
                }
            };
            let condition = match cell("condition") {
                "*" => None,
                "" => {
                    return Err(at(
                        row,
                        "a condition name or * for every condition".into(),
                        "an empty cell".into(),
                    ))
                }
                c if scope.iter().any(|(name, _)| name == c) => Some(c.to_string()),
                c => {
                    let names: Vec<&str> = scope.iter().map(|(n, _)| n.as_str()).collect();
                    return Err(at(
                        row,
                        format!("a condition of the plan ({}) or *", short_list(&names)),
                        format!("'{c}'"),
                    ));
                }
            };
            let given = cell("metric");
            if given.is_empty() {
                return Err(at(
                    row,
                    "a metric name such as spectrum.snr_db".into(),
                    "an empty cell".into(),
                ));
            }
            let mut metric: Option<&Metric> = None;
            for (name, catalogue) in scope {
                if condition.as_ref().is_some_and(|c| c != name) {
                    continue;
                }
                let m = catalogue.resolve(given).map_err(|cands| {
                    at(
                        row,
                        format!(
                            "a metric of the results under condition '{name}' (a column name \
                             with a unit, such as spectrum.snr_db, or an unambiguous tail \
                             of one, such as snr_db)"
                        ),
                        unresolved(given, &cands),
                    )
                })?;
                if let Some(prev) = metric {
                    if prev.name != m.name {
                        return Err(at(
                            row,
                            "a metric name that means the same figure under every condition".into(),
                            format!("'{given}', which is {} or {}", prev.name, m.name),
                        ));
                    }
                }
                metric = Some(m);
            }
            let Some(metric) = metric else {
                return Err(at(
                    row,
                    "a plan with at least one condition".into(),
                    "none".into(),
                ));
            };
            let unit = cell("unit");
            if !unit.is_empty() && !unit.eq_ignore_ascii_case(metric.unit.symbol()) {
                return Err(at(
                    row,
                    format!(
                        "the unit of {}: {}, or an empty cell",
                        metric.name, metric.unit
                    ),
                    format!("'{unit}'"),
                ));
            }
            let low = number("low")?;
            let high = number("high")?;
            let guardband = number("guardband")?.unwrap_or(0.0);
            if guardband < 0.0 {
                return Err(at(
                    row,
                    "a guardband of 0 or more".into(),
                    format_value(guardband),
                ));
            }
            let guard_sigmas = number("guard_sigmas")?.unwrap_or(0.0);
            if guard_sigmas < 0.0 {
                return Err(at(
                    row,
                    "a guard_sigmas of 0 or more".into(),
                    format_value(guard_sigmas),
                ));
            }
            if guard_sigmas > 0.0 && !has_uncertainty(&metric.name) {
                return Err(at(
                    row,
                    format!(
                        "guard_sigmas only on a metric that carries an uncertainty ({} carries \
                         none; use guardband)",
                        metric.name
                    ),
                    format!("guard_sigmas {}", format_value(guard_sigmas)),
                ));
            }
            if low.is_none() && high.is_none() {
                return Err(at(
                    row,
                    "a low or a high limit (or both)".into(),
                    "two empty cells".into(),
                ));
            }
            if let (Some(l), Some(h)) = (low, high) {
                if l > h {
                    return Err(at(
                        row,
                        "low no higher than high".into(),
                        format!("low {} above high {}", format_value(l), format_value(h)),
                    ));
                }
                if l + guardband > h - guardband {
                    return Err(at(
                        row,
                        "a guardband that leaves a window: low + guardband ≤ high − guardband"
                            .into(),
                        format!(
                            "guardband {} with low {} and high {}",
                            format_value(guardband),
                            format_value(l),
                            format_value(h)
                        ),
                    ));
                }
            }
            if let Some(first) = limits
                .iter()
                .find(|l| l.condition == condition && l.metric == metric.name)
            {
                return Err(at(
                    row,
                    "one row per condition and metric".into(),
                    format!(
                        "a second row for condition {} and metric {} (the first is row {})",
                        condition.as_deref().unwrap_or("*"),
                        metric.name,
                        first.row
                    ),
                ));
            }
            limits.push(Limit {
                row,
                condition,
                metric: metric.name.clone(),
                unit: metric.unit,
                low,
                high,
                guardband,
                guard_sigmas,
            });
        }
        if limits.is_empty() {
            return Err(Error::new(
                ErrorKind::BadLimits,
                path,
                Location::Whole,
                "at least one limit row below the header",
                "none",
            ));
        }
        Ok(LimitTable {
            path: path.to_string(),
            limits,
        })
    }

    /// The limits that apply under a condition, in table order: its own rows, and the `*` rows of
    /// metrics it has no own row for.
    pub fn for_condition(&self, condition: &str) -> Vec<&Limit> {
        let mut out: Vec<&Limit> = Vec::new();
        for l in &self.limits {
            if l.condition.as_deref().is_some_and(|c| c != condition) {
                continue;
            }
            match out.iter().position(|o| o.metric == l.metric) {
                Some(i) if l.condition.is_some() => out[i] = l,
                Some(_) => {}
                None => out.push(l),
            }
        }
        out
    }

    /// The table as CSV that [`LimitTable::parse`] reads back: the `guardband` and `guard_sigmas`
    /// columns only when some row has one; numbers in Rust's shortest round-trip form.
    pub fn to_csv(&self) -> String {
        let guard = self.limits.iter().any(|l| l.guardband != 0.0);
        let sigmas = self.limits.iter().any(|l| l.guard_sigmas != 0.0);
        let mut w = crate::report::csv::CsvOut::memory();
        let mut header = vec!["condition", "metric", "low", "high", "unit"];
        if guard {
            header.push("guardband");
        }
        if sigmas {
            header.push("guard_sigmas");
        }
        let num = |v: Option<f64>| v.map(|x| x.to_string()).unwrap_or_default();
        w.push(&header);
        for l in &self.limits {
            let mut rec = vec![
                l.condition.clone().unwrap_or_else(|| "*".to_string()),
                l.metric.clone(),
                num(l.low),
                num(l.high),
                l.unit.to_string(),
            ];
            if guard {
                rec.push(num(Some(l.guardband)));
            }
            if sigmas {
                rec.push(num(Some(l.guard_sigmas)));
            }
            w.push(&rec);
        }
        w.into_text()
    }
}

/// The key of the one-sigma uncertainty a result carries for a metric (`spectrum.snr_db` →
/// `spectrum.uncertainty.snr_db`), from the figure table; `None` when the figure carries none.
pub(crate) fn uncertainty_key(metric: &str) -> Option<String> {
    let c = figures::get(metric)?;
    c.figure.uncertainty_key(c.order.unwrap_or(0))
}

fn has_uncertainty(metric: &str) -> bool {
    uncertainty_key(metric).is_some()
}

/// Line numbers of CSV records from their byte offsets, counted on from the previous record.
struct Lines<'a> {
    text: &'a [u8],
    byte: usize,
    line: usize,
}

impl Lines<'_> {
    fn of(&mut self, r: &::csv::StringRecord) -> usize {
        let at = r.position().map_or(self.byte, |p| p.byte() as usize);
        let mut at = at.clamp(self.byte, self.text.len());
        // The reader's offset is where it started reading: before any blank lines it skipped.
        while at < self.text.len() && matches!(self.text[at], b'\n' | b'\r') {
            at += 1;
        }
        self.line += self.text[self.byte..at]
            .iter()
            .filter(|&&b| b == b'\n')
            .count();
        self.byte = at;
        self.line
    }
}

fn csv_error(path: &str, e: &::csv::Error) -> Error {
    let location = e
        .position()
        .map_or(Location::Whole, |p| Location::Row(p.line() as usize));
    Error::new(
        ErrorKind::BadLimits,
        path,
        location,
        "a CSV limit table in UTF-8",
        e.to_string(),
    )
}

/// Up to ten names, then "…".
fn short_list(names: &[&str]) -> String {
    let mut s = names
        .iter()
        .take(10)
        .copied()
        .collect::<Vec<_>>()
        .join(", ");
    if names.len() > 10 {
        s.push_str(", …");
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scope() -> Vec<(String, Catalogue)> {
        let cat = Catalogue::from_columns([
            "source",
            "bits",
            "fit.enob_bits",
            "fit.sinad_db",
            "spectrum.snr_db",
            "spectrum.sinad_db",
            "spectrum.enob_bits",
            "spectrum.sfdr_dbc",
            "spectrum.harmonics.h3.dbc",
            "spectrum.nsd_dbfs_per_hz",
            "spectrum.coherent",
        ]);
        vec![("f1".into(), cat.clone()), ("f2".into(), cat)]
    }

    #[test]
    fn metrics_are_the_figures_with_a_unit() {
        let m = |c: &str| Metric::of(c).map(|m| (m.unit.symbol(), m.direction));
        assert_eq!(m("spectrum.snr_db"), Some(("dB", Better::Higher)));
        assert_eq!(m("spectrum.sfdr_dbfs"), Some(("dBFS", Better::Higher)));
        assert_eq!(
            m("spectrum.nsd_dbfs_per_hz"),
            Some(("dBFS/Hz", Better::Lower))
        );
        assert_eq!(m("spectrum.harmonics.h3.dbc"), Some(("dBc", Better::Lower)));
        assert_eq!(m("fit.residual_rms_codes"), Some(("codes", Better::Lower)));
        assert_eq!(m("fit.frequency_hz"), Some(("Hz", Better::Neither)));
        assert_eq!(m("fit.cycles_std"), Some(("cycles", Better::Neither)));
        assert_eq!(m("bits"), Some(("bits", Better::Neither)));
        for not_one in [
            "spectrum.coherent",
            "samples",
            "spectrum.window",
            "fit.iterations",
            "spectrum.harmonics.h3.order",
            "device",
        ] {
            assert_eq!(m(not_one), None, "{not_one}");
        }
    }

    #[test]
    fn short_names_resolve_only_when_unambiguous() {
        let (_, cat) = &scope()[0];
        assert_eq!(cat.resolve("snr_db").unwrap().name, "spectrum.snr_db");
        assert_eq!(
            cat.resolve("h3.dbc").unwrap().name,
            "spectrum.harmonics.h3.dbc"
        );
        assert_eq!(cat.resolve("enob_bits").unwrap_err().len(), 2);
        assert!(cat.resolve("snr").unwrap_err().is_empty());
        // A name cut inside a part is no tail.
        assert!(cat.resolve("nr_db").is_err());
        // The full name of a top-level metric.
        assert_eq!(cat.resolve("bits").unwrap().name, "bits");
    }

    #[test]
    fn condition_rows_replace_star_rows() {
        let t = LimitTable::parse(
            "condition,metric,low,high,unit\n*,snr_db,60,,dB\n*,sfdr_dbc,70,,dBc\nf2,snr_db,55,,dB\n",
            "l.csv",
            &scope(),
        )
        .unwrap();
        let f1: Vec<_> = t
            .for_condition("f1")
            .iter()
            .map(|l| (l.metric.as_str(), l.low))
            .collect();
        assert_eq!(
            f1,
            vec![
                ("spectrum.snr_db", Some(60.0)),
                ("spectrum.sfdr_dbc", Some(70.0))
            ]
        );
        let f2: Vec<_> = t
            .for_condition("f2")
            .iter()
            .map(|l| (l.metric.as_str(), l.low, l.row))
            .collect();
        assert_eq!(
            f2,
            vec![
                ("spectrum.snr_db", Some(55.0), 4),
                ("spectrum.sfdr_dbc", Some(70.0), 3)
            ]
        );
    }

    #[test]
    fn to_csv_reads_back() {
        let t = LimitTable::parse(
            "metric,condition,high,low,unit,guardband\n\u{23} note\nh3.dbc,f1,-70,,dBc,0.5\nsnr_db,*,,60.25,db,\n",
            "l.csv",
            &scope(),
        )
        .unwrap();
        assert_eq!(t.limits[0].row, 3);
        assert_eq!(t.limits[1].row, 4);
        let again = LimitTable::parse(&t.to_csv(), "l.csv", &scope()).unwrap();
        let strip = |t: &LimitTable| {
            t.limits
                .iter()
                .map(|l| {
                    (
                        l.condition.clone(),
                        l.metric.clone(),
                        l.low,
                        l.high,
                        l.guardband,
                    )
                })
                .collect::<Vec<_>>()
        };
        assert_eq!(strip(&t), strip(&again));
    }
}
