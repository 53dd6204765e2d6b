//! Limit tables and verdicts: low and high bounds per condition and metric (a CSV file kept in a
//! spreadsheet), the pass/fail verdict they give one result, and limit proposals from a characterisation
//! run with the statistics behind them (mean, sample σ, percentiles, shape, Cpk).
//!
//! # Limit table
//! A CSV file with a header row naming the columns `condition`, `metric`, `low`, `high`, `unit` and,
//! optionally, `guardband` (any order, names compared without regard to case). Lines starting with `#`
//! and blank rows (also rows of empty cells, as spreadsheets export them) are skipped; a UTF-8 byte-order
//! mark is ignored; `;` is the delimiter when the header has a `;` and no `,`. Row numbers in errors are
//! the file's line numbers (the header is row 1 when it is the first line).
//! - `condition`: a condition name of the bench plan, or `*` for every condition. A row for a named
//!   condition replaces the `*` row of the same metric for that condition.
//! - `metric`: a column name of the results CSV, i.e. the flattened JSON name of a figure of the result
//!   record (`spectrum.snr_db`, `spectrum.sfdr_dbc`, `fit.enob_bits`, `spectrum.harmonics.h3.dbc`), or
//!   any tail of it cut at a dot that exactly one metric ends with (`snr_db`, `sfdr_dbc`, `h3.dbc`).
//!   `enob_bits` and `sinad_db` name both a fit and a spectral figure and are refused as ambiguous. Only
//!   columns whose last name part carries a unit (see [`unit_of`]) are metrics.
//! - `low`, `high`: numbers in the metric's unit; an empty cell is no bound; at least one bound.
//! - `unit`: the unit the metric's name carries (`_db` dB, `_dbc` dBc, `_dbfs` dBFS, `_bits` bits,
//!   `_hz` Hz, ...), compared without regard to case; an empty cell skips the check.
//! - `guardband`: a margin ≥ 0 in the metric's unit (empty: 0); the test limits are low + guardband and
//!   high − guardband, so a value between a stated limit and its tightened limit fails "only inside the
//!   guardband".
//!
//! # Verdicts
//! Each limit gives one [`Check`]: `fail` outside the stated limits, `guardband` inside them but outside
//! the tightened ones, `no_value` when the result has no value for the metric (a figure that could not
//! be computed cannot be shown to pass, so it counts as a failure), else `pass`. A result's
//! [`Verdict`] is `fail` when any check fails or has no value, `fail_guardband` when the only failures
//! are inside guardbands, `pass` when every check passes, `untested` when no limit applies and `error`
//! when the record could not be analysed. The margin of a check is the signed distance from the nearest
//! stated limit, positive inside: value − low, or high − value.

use std::collections::BTreeMap;
use std::path::Path;

use serde::Serialize;

use crate::{Error, ErrorKind, Location, Result};

/// Metric-name suffixes and the unit each stands for, longest first where one ends another.
const UNITS: [(&str, &str); 13] = [
    ("dbfs_per_hz", "dBFS/Hz"),
    ("dbfs", "dBFS"),
    ("dbc", "dBc"),
    ("db", "dB"),
    ("bits", "bits"),
    ("hz", "Hz"),
    ("codes", "codes"),
    ("lsb", "LSB"),
    ("rad", "rad"),
    ("vpp", "Vpp"),
    ("bins", "bins"),
    ("cycles", "cycles"),
    ("s", "s"),
];

/// The unit a metric's name carries: its last dotted part equals one of the suffixes or ends with
/// `_suffix` (`snr_db` → dB, `sfdr_dbc` → dBc, `nsd_dbfs_per_hz` → dBFS/Hz, `h3.dbc` → dBc,
/// `enob_bits` → bits, `frequency_hz` → Hz, also `_codes`, `_lsb`, `_rad`, `_vpp`, `_bins`, `_cycles`,
/// `_s`). `None` for a name without one, which is then not a metric.
pub fn unit_of(metric: &str) -> Option<&'static str> {
    let leaf = metric.rsplit('.').next().unwrap_or(metric);
    UNITS
        .iter()
        .find(|(suffix, _)| {
            leaf == *suffix
                || leaf
                    .strip_suffix(suffix)
                    .is_some_and(|head| head.ends_with('_'))
        })
        .map(|(_, unit)| *unit)
}

/// Which direction of a metric is bad.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Direction {
    /// Higher is better (SNR, SINAD, SFDR, ENOB): only a low limit matters.
    HigherIsBetter,
    /// Lower is better (THD, harmonic and spur levels, noise floor, noise density, fit residual):
    /// only a high limit matters.
    LowerIsBetter,
    /// Both directions are bad (frequencies, amplitudes, offsets, ...).
    TwoSided,
}

/// The bad direction of a metric, from its name: a last part starting with `snr`, `sinad`, `sfdr` or
/// `enob` is higher-is-better; one starting with `thd`, `noise_floor`, `nsd` or `residual_rms`, and the
/// `dbc`/`dbfs` levels of harmonics and of the worst spur, are lower-is-better; everything else is
/// two-sided.
pub fn direction_of(metric: &str) -> Direction {
    let leaf = metric.rsplit('.').next().unwrap_or(metric);
    if ["snr", "sinad", "sfdr", "enob"]
        .iter()
        .any(|p| leaf.starts_with(p))
    {
        return Direction::HigherIsBetter;
    }
    if ["thd", "noise_floor", "nsd", "residual_rms"]
        .iter()
        .any(|p| leaf.starts_with(p))
    {
        return Direction::LowerIsBetter;
    }
    let level = leaf == "dbc" || leaf == "dbfs";
    if level && (metric.contains("harmonics.h") || metric.contains("worst_spur.")) {
        return Direction::LowerIsBetter;
    }
    Direction::TwoSided
}

/// A metric limits can be set on: a figure of the result record with a unit.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Metric {
    /// The full flattened name, as a column of the results CSV.
    pub name: String,
    /// The unit its name carries.
    pub unit: &'static str,
    /// Which direction is bad.
    pub direction: Direction,
}

/// The metrics of one set of result columns.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Catalogue {
    metrics: Vec<Metric>,
}

impl Catalogue {
    /// The columns among `columns` that carry a unit, in their order (duplicates dropped).
    pub fn from_columns<S: AsRef<str>>(columns: impl IntoIterator<Item = S>) -> Catalogue {
        let mut metrics: Vec<Metric> = Vec::new();
        for c in columns {
            let name = c.as_ref();
            if let Some(unit) = unit_of(name) {
                if metrics.iter().all(|m| m.name != name) {
                    metrics.push(Metric {
                        name: name.to_string(),
                        unit,
                        direction: direction_of(name),
                    });
                }
            }
        }
        Catalogue { metrics }
    }

    /// The metrics of results analysed with harmonics up to `harmonics`: the unit-carrying columns of
    /// [`crate::report::csv::columns`], the one source of the result's fields.
    pub fn for_harmonics(harmonics: u32) -> Catalogue {
        Catalogue::from_columns(crate::report::csv::columns(harmonics))
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
        let tail = format!(".{name}");
        let found: Vec<&Metric> = self
            .metrics
            .iter()
            .filter(|m| m.name.ends_with(&tail))
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

/// Which stated limit a check is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Bound {
    /// The low limit.
    Low,
    /// The high limit.
    High,
}

impl Bound {
    /// "low" or "high".
    pub fn as_str(&self) -> &'static str {
        match self {
            Bound::Low => "low",
            Bound::High => "high",
        }
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
    pub unit: &'static str,
    /// Low limit, when there is one.
    pub low: Option<f64>,
    /// High limit, when there is one.
    pub high: Option<f64>,
    /// Guardband (≥ 0) that tightens both limits, in the metric's unit.
    pub guardband: f64,
}

/// Outcome of one limit on one result.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum CheckOutcome {
    /// Inside the tightened limits.
    Pass,
    /// Outside a stated limit.
    Fail,
    /// Inside the stated limits but outside the tightened ones.
    Guardband,
    /// The result has no value for the metric.
    NoValue,
}

impl CheckOutcome {
    /// The outcome as written in the outputs.
    pub fn as_str(&self) -> &'static str {
        match self {
            CheckOutcome::Pass => "pass",
            CheckOutcome::Fail => "fail",
            CheckOutcome::Guardband => "guardband",
            CheckOutcome::NoValue => "no_value",
        }
    }
}

/// One limit applied to one result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Check {
    /// The limit table's row.
    pub row: usize,
    /// The metric's full name.
    pub metric: String,
    /// The metric's unit.
    pub unit: &'static str,
    /// Low limit.
    pub low: Option<f64>,
    /// High limit.
    pub high: Option<f64>,
    /// Guardband.
    pub guardband: f64,
    /// The result's value.
    pub value: Option<f64>,
    /// The stated limit nearest the value (the one violated when it fails).
    pub bound: Option<Bound>,
    /// Signed distance from that limit, positive inside: value − low or high − value.
    pub margin: Option<f64>,
    /// The outcome.
    pub outcome: CheckOutcome,
}

impl Limit {
    /// Applies the limit to a value.
    pub fn check(&self, value: Option<f64>) -> Check {
        let sides = [
            self.low.map(|l| (Bound::Low, l, value.map(|v| v - l))),
            self.high.map(|h| (Bound::High, h, value.map(|v| h - v))),
        ];
        // The nearest bound is the one with the smaller margin (the violated one when failing).
        let nearest = sides
            .iter()
            .flatten()
            .min_by(|a, b| {
                let (ma, mb) = (a.2.unwrap_or(0.0), b.2.unwrap_or(0.0));
                ma.total_cmp(&mb)
            })
            .copied();
        let margin = nearest.and_then(|n| n.2);
        let outcome = match margin {
            None => CheckOutcome::NoValue,
            Some(m) if m < 0.0 => CheckOutcome::Fail,
            Some(m) if m < self.guardband => CheckOutcome::Guardband,
            Some(_) => CheckOutcome::Pass,
        };
        Check {
            row: self.row,
            metric: self.metric.clone(),
            unit: self.unit,
            low: self.low,
            high: self.high,
            guardband: self.guardband,
            value,
            bound: nearest.map(|n| n.0),
            margin,
            outcome,
        }
    }
}

/// The verdict on one result.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Outcome {
    /// Every limit passes.
    Pass,
    /// Some limit fails (or has no value).
    Fail,
    /// The only failures are inside guardbands.
    FailGuardband,
    /// No limit applies.
    Untested,
    /// The record could not be analysed.
    Error,
}

impl Outcome {
    /// The verdict as written in the outputs.
    pub fn as_str(&self) -> &'static str {
        match self {
            Outcome::Pass => "pass",
            Outcome::Fail => "fail",
            Outcome::FailGuardband => "fail_guardband",
            Outcome::Untested => "untested",
            Outcome::Error => "error",
        }
    }
}

/// Pass/fail with the reason, and every check behind it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verdict {
    /// The outcome.
    pub outcome: Outcome,
    /// One sentence saying why.
    pub reason: String,
    /// Every limit applied, in limit-table order.
    pub checks: Vec<Check>,
}

/// How many failing checks a reason names before it says "and N more".
const REASON_LISTS: usize = 3;

impl Verdict {
    /// The verdict on a record that could not be analysed.
    pub fn error(message: &str) -> Verdict {
        Verdict {
            outcome: Outcome::Error,
            reason: message.to_string(),
            checks: Vec::new(),
        }
    }

    /// The verdict when no limit applies.
    pub fn untested(reason: &str) -> Verdict {
        Verdict {
            outcome: Outcome::Untested,
            reason: reason.to_string(),
            checks: Vec::new(),
        }
    }

    /// The verdict from a set of checks.
    pub fn from_checks(checks: Vec<Check>) -> Verdict {
        if checks.is_empty() {
            return Verdict::untested("no limit for this condition");
        }
        let hard: Vec<&Check> = checks
            .iter()
            .filter(|c| matches!(c.outcome, CheckOutcome::Fail | CheckOutcome::NoValue))
            .collect();
        let soft: Vec<&Check> = checks
            .iter()
            .filter(|c| c.outcome == CheckOutcome::Guardband)
            .collect();
        let n = checks.len();
        let (outcome, reason) = if !hard.is_empty() {
            (
                Outcome::Fail,
                format!(
                    "{} of {n} limits fail: {}",
                    hard.len(),
                    describe(&hard, &soft)
                ),
            )
        } else if !soft.is_empty() {
            (
                Outcome::FailGuardband,
                format!(
                    "fails only inside the guardband, {} of {n} limits: {}",
                    soft.len(),
                    describe(&soft, &[])
                ),
            )
        } else {
            (Outcome::Pass, format!("all {n} limits pass"))
        };
        Verdict {
            outcome,
            reason,
            checks,
        }
    }
}

/// Names the first failing checks, then any guardband failures, then how many were left out.
fn describe(first: &[&Check], then: &[&Check]) -> String {
    let all: Vec<&&Check> = first.iter().chain(then).collect();
    let mut parts: Vec<String> = all.iter().take(REASON_LISTS).map(|c| say(c)).collect();
    if all.len() > REASON_LISTS {
        parts.push(format!("and {} more", all.len() - REASON_LISTS));
    }
    parts.join("; ")
}

fn say(c: &Check) -> String {
    let limit = |b: Bound| match b {
        Bound::Low => c.low,
        Bound::High => c.high,
    };
    match (c.outcome, c.value, c.bound) {
        (CheckOutcome::NoValue, _, _) => format!("{} has no value", c.metric),
        (CheckOutcome::Guardband, Some(v), Some(b)) => format!(
            "{} {} {} is within the {} {} guardband of {} {} {}",
            c.metric,
            format_value(v),
            c.unit,
            format_value(c.guardband),
            c.unit,
            b.as_str(),
            format_value(limit(b).unwrap_or(0.0)),
            c.unit
        ),
        (_, Some(v), Some(b)) => format!(
            "{} {} {} {} {} {} {}",
            c.metric,
            format_value(v),
            c.unit,
            if b == Bound::Low { "below" } else { "above" },
            b.as_str(),
            format_value(limit(b).unwrap_or(0.0)),
            c.unit
        ),
        _ => c.metric.clone(),
    }
}

/// A number for people: at most 6 significant digits, trailing zeros dropped, exponent form below
/// 1e-4 and from 1e15 in magnitude.
pub fn format_value(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return if v.is_finite() {
            "0".to_string()
        } else {
            v.to_string()
        };
    }
    let mag = v.abs();
    if !(1e-4..1e15).contains(&mag) {
        return format!("{v:.5e}");
    }
    let exp = mag.log10().floor() as i32;
    let decimals = (5 - exp).max(0) as usize;
    let s = format!("{v:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
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

const LIMIT_COLUMNS: &str = "condition, metric, low, high, unit and optionally guardband";

impl LimitTable {
    /// Reads and resolves a limit table file.
    pub fn read(path: &Path, scope: &Scope) -> Result<LimitTable> {
        let shown = path.display().to_string();
        let text = std::fs::read_to_string(path).map_err(|e| {
            Error::new(
                ErrorKind::Io,
                &shown,
                Location::Whole,
                "a readable limit table (UTF-8 CSV)",
                e.to_string(),
            )
        })?;
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
            let known = ["condition", "metric", "low", "high", "unit", "guardband"];
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
            let cell = |k: &str| col.get(k).and_then(|&i| rec.get(i)).unwrap_or("");
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
                             with a unit suffix, such as spectrum.snr_db, or an unambiguous tail \
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
            if !unit.is_empty() && !unit.eq_ignore_ascii_case(metric.unit) {
                return Err(at(
                    row,
                    format!(
                        "the unit of {}: {} (from its name's suffix), or an empty cell",
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

    /// The verdict on one result under a condition; `value` gives the result's value of a metric by
    /// its full name.
    pub fn judge(&self, condition: &str, value: impl Fn(&str) -> Option<f64>) -> Verdict {
        let checks = self
            .for_condition(condition)
            .into_iter()
            .map(|l| l.check(value(&l.metric)))
            .collect();
        Verdict::from_checks(checks)
    }

    /// The table as CSV that [`LimitTable::parse`] reads back: the `guardband` column only when some
    /// row has one; numbers in Rust's shortest round-trip form.
    pub fn to_csv(&self) -> String {
        let guard = self.limits.iter().any(|l| l.guardband != 0.0);
        let mut w = ::csv::Writer::from_writer(Vec::new());
        let mut header = vec!["condition", "metric", "low", "high", "unit"];
        if guard {
            header.push("guardband");
        }
        let num = |v: Option<f64>| v.map(|x| x.to_string()).unwrap_or_default();
        w.write_record(&header).expect("writing to memory");
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
            w.write_record(&rec).expect("writing to memory");
        }
        String::from_utf8(w.into_inner().expect("writing to memory")).expect("UTF-8 in, UTF-8 out")
    }
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

/// Statistics of one metric over a lot, with the definitions of numpy and scipy named beside each.
pub mod stats {
    use serde::Serialize;

    /// Arithmetic mean; `None` when empty.
    pub fn mean(x: &[f64]) -> Option<f64> {
        if x.is_empty() {
            None
        } else {
            Some(x.iter().sum::<f64>() / x.len() as f64)
        }
    }

    /// Sample standard deviation, divisor n − 1 (numpy `std(ddof=1)`); `None` below 2 values.
    pub fn sample_std(x: &[f64]) -> Option<f64> {
        let m = mean(x)?;
        if x.len() < 2 {
            return None;
        }
        let ss: f64 = x.iter().map(|v| (v - m) * (v - m)).sum();
        Some((ss / (x.len() - 1) as f64).sqrt())
    }

    /// The p-th percentile (0..=100) of ascending `sorted` values by linear interpolation between
    /// closest ranks: h = (n − 1)·p/100, x[⌊h⌋] + (h − ⌊h⌋)(x[⌊h⌋+1] − x[⌊h⌋]) (Hyndman & Fan 1996
    /// type 7, numpy's default `method="linear"`). `None` when empty or p is outside 0..=100.
    pub fn percentile(sorted: &[f64], p: f64) -> Option<f64> {
        if sorted.is_empty() || !(0.0..=100.0).contains(&p) {
            return None;
        }
        let h = (sorted.len() - 1) as f64 * p / 100.0;
        let lo = h.floor() as usize;
        let hi = (lo + 1).min(sorted.len() - 1);
        Some(sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo]))
    }

    /// Biased central moments m2, m3, m4 (divisor n).
    fn moments(x: &[f64]) -> Option<(f64, f64, f64)> {
        let m = mean(x)?;
        let n = x.len() as f64;
        let (mut m2, mut m3, mut m4) = (0.0, 0.0, 0.0);
        for v in x {
            let d = v - m;
            let d2 = d * d;
            m2 += d2;
            m3 += d2 * d;
            m4 += d2 * d2;
        }
        Some((m2 / n, m3 / n, m4 / n))
    }

    /// Sample skewness, the adjusted Fisher-Pearson coefficient G1 = g1·√(n(n−1))/(n−2) with
    /// g1 = m3/m2^1.5 (scipy `stats.skew(bias=False)`); `None` below 3 values or with no spread.
    pub fn skewness(x: &[f64]) -> Option<f64> {
        let n = x.len() as f64;
        let (m2, m3, _) = moments(x)?;
        if x.len() < 3 || m2 <= 0.0 {
            return None;
        }
        let g1 = m3 / m2.powf(1.5);
        Some(g1 * (n * (n - 1.0)).sqrt() / (n - 2.0))
    }

    /// Sample excess kurtosis G2 = ((n²−1)·m4/m2² − 3(n−1)²)/((n−2)(n−3)) (scipy
    /// `stats.kurtosis(fisher=True, bias=False)`); 0 for a normal distribution; `None` below 4 values
    /// or with no spread.
    pub fn excess_kurtosis(x: &[f64]) -> Option<f64> {
        let n = x.len() as f64;
        let (m2, _, m4) = moments(x)?;
        if x.len() < 4 || m2 <= 0.0 {
            return None;
        }
        Some(((n * n - 1.0) * m4 / (m2 * m2) - 3.0 * (n - 1.0).powi(2)) / ((n - 2.0) * (n - 3.0)))
    }

    /// Jarque-Bera statistic JB = n/6·(g1² + g2²/4) from the biased g1 = m3/m2^1.5 and
    /// g2 = m4/m2² − 3, and its p-value from the χ² distribution with 2 degrees of freedom,
    /// p = exp(−JB/2) (Jarque & Bera 1987; scipy `stats.jarque_bera`). `None` below 2 values or with
    /// no spread.
    pub fn jarque_bera(x: &[f64]) -> Option<(f64, f64)> {
        let n = x.len() as f64;
        let (m2, m3, m4) = moments(x)?;
        if x.len() < 2 || m2 <= 0.0 {
            return None;
        }
        let g1 = m3 / m2.powf(1.5);
        let g2 = m4 / (m2 * m2) - 3.0;
        let jb = n / 6.0 * (g1 * g1 + g2 * g2 / 4.0);
        Some((jb, (-jb / 2.0).exp()))
    }

    /// Process capability Cpk = min((high − mean)/3σ, (mean − low)/3σ) over the limits present
    /// (Montgomery, Introduction to Statistical Quality Control, §8.3); `None` without a limit or
    /// with σ ≤ 0.
    pub fn cpk(mean: f64, std: f64, low: Option<f64>, high: Option<f64>) -> Option<f64> {
        if std <= 0.0 || !std.is_finite() {
            return None;
        }
        let sides = [
            low.map(|l| (mean - l) / (3.0 * std)),
            high.map(|h| (h - mean) / (3.0 * std)),
        ];
        sides.into_iter().flatten().reduce(f64::min)
    }

    /// The statistics of one metric.
    #[derive(Debug, Clone, PartialEq, Serialize)]
    pub struct Summary {
        /// Number of values.
        pub n: usize,
        /// Mean.
        pub mean: f64,
        /// Sample standard deviation (n − 1); `None` below 2 values.
        pub std: Option<f64>,
        /// Smallest value.
        pub min: f64,
        /// Largest value.
        pub max: f64,
        /// Adjusted sample skewness G1.
        pub skewness: Option<f64>,
        /// Sample excess kurtosis G2.
        pub excess_kurtosis: Option<f64>,
        /// Jarque-Bera statistic.
        pub jarque_bera: Option<f64>,
        /// Its p-value.
        pub jarque_bera_p: Option<f64>,
    }

    /// Summarises values; `None` when there are none.
    pub fn summarize(x: &[f64]) -> Option<Summary> {
        let mean = mean(x)?;
        let jb = jarque_bera(x);
        Some(Summary {
            n: x.len(),
            mean,
            std: sample_std(x),
            min: x.iter().copied().fold(f64::INFINITY, f64::min),
            max: x.iter().copied().fold(f64::NEG_INFINITY, f64::max),
            skewness: skewness(x),
            excess_kurtosis: excess_kurtosis(x),
            jarque_bera: jb.map(|j| j.0),
            jarque_bera_p: jb.map(|j| j.1),
        })
    }

    /// Fewest values for which the shape is judged.
    pub const SHAPE_MIN_N: usize = 8;
    /// Jarque-Bera p-value below which a distribution is called clearly not normal.
    pub const SHAPE_P: f64 = 0.01;
    /// |G1| from which the shape note says "skewed".
    pub const SKEW_NOTE: f64 = 0.5;
    /// |G2| from which the shape note says "heavy tails" or "light tails".
    pub const KURTOSIS_NOTE: f64 = 1.0;

    /// Says how a distribution is clearly not normal, or `None`. The rule: with at least
    /// [`SHAPE_MIN_N`] values, the Jarque-Bera test rejects normality at p < [`SHAPE_P`]; the note then
    /// names a skew when |G1| ≥ [`SKEW_NOTE`] and heavy (G2 ≥ [`KURTOSIS_NOTE`]) or light
    /// (G2 ≤ −[`KURTOSIS_NOTE`]) tails.
    pub fn shape_note(s: &Summary) -> Option<String> {
        let p = s.jarque_bera_p?;
        if s.n < SHAPE_MIN_N || p >= SHAPE_P {
            return None;
        }
        let mut parts = Vec::new();
        if let Some(g1) = s.skewness.filter(|g| g.abs() >= SKEW_NOTE) {
            let side = if g1 > 0.0 { "right" } else { "left" };
            parts.push(format!("skewed {side} (skewness {g1:+.2})"));
        }
        if let Some(g2) = s.excess_kurtosis.filter(|g| g.abs() >= KURTOSIS_NOTE) {
            let tails = if g2 > 0.0 {
                "heavy tails"
            } else {
                "light tails or several modes"
            };
            parts.push(format!("{tails} (excess kurtosis {g2:+.2})"));
        }
        let head = format!("not normal (Jarque-Bera p = {p:.2e})");
        Some(if parts.is_empty() {
            head
        } else {
            format!("{head}: {}", parts.join(", "))
        })
    }
}

/// Figures of a characterisation run: one row per device and condition, metric values by full name.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Characterisation {
    /// The metrics the results carry.
    pub catalogue: Catalogue,
    /// Conditions in the order they first appear.
    pub conditions: Vec<String>,
    /// The rows that were analysed (error rows are left out).
    pub rows: Vec<ResultRow>,
}

/// One analysed device and condition.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ResultRow {
    /// The device.
    pub device: String,
    /// The condition.
    pub condition: String,
    /// The metric values present (absent figures are left out).
    pub values: BTreeMap<String, f64>,
}

impl Characterisation {
    /// The values of a metric under a condition, in row order.
    pub fn values(&self, condition: &str, metric: &str) -> Vec<f64> {
        self.rows
            .iter()
            .filter(|r| r.condition == condition)
            .filter_map(|r| r.values.get(metric).copied())
            .collect()
    }

    /// The scope a limit table about these results is resolved in.
    pub fn scope(&self) -> Vec<(String, Catalogue)> {
        self.conditions
            .iter()
            .map(|c| (c.clone(), self.catalogue.clone()))
            .collect()
    }
}

/// The metrics limits are proposed for when none are named: the headline figures.
pub const DEFAULT_METRICS: [&str; 7] = [
    "spectrum.snr_db",
    "spectrum.sinad_db",
    "spectrum.thd_dbc",
    "spectrum.sfdr_dbc",
    "spectrum.enob_bits",
    "spectrum.noise_floor_dbfs",
    "fit.enob_bits",
];

/// How limits are placed around a lot's values.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Method {
    /// mean ± k·σ (sample σ).
    Sigma {
        /// Standard deviations from the mean.
        k: f64,
    },
    /// The p-th and (100 − p)-th percentiles (linear interpolation, see [`stats::percentile`]).
    Percentile {
        /// Percent in each tail, 0..50.
        percent: f64,
    },
}

/// A guardband size.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Margin {
    /// In the metric's unit.
    Absolute(f64),
    /// In sample standard deviations of the metric under the condition.
    Sigmas(f64),
}

/// A guardband for one metric (or for every metric).
#[derive(Debug, Clone, PartialEq)]
pub struct GuardbandRule {
    /// The metric (as given; resolved against the results), or `None` for every metric.
    pub metric: Option<String>,
    /// The size.
    pub margin: Margin,
}

impl GuardbandRule {
    /// Parses `[METRIC=]VALUE` or `[METRIC=]Nsigma`: `0.5`, `1sigma`, `snr_db=0.3`.
    pub fn parse(s: &str) -> Result<GuardbandRule> {
        let (metric, value) = match s.split_once('=') {
            Some((m, v)) => (Some(m.trim().to_string()), v.trim()),
            None => (None, s.trim()),
        };
        let bad = || {
            Error::setting(
                "guardband",
                "[METRIC=]VALUE in the metric's unit or [METRIC=]Nsigma, VALUE and N ≥ 0 (0.5, 1sigma, snr_db=0.3)",
                format!("'{s}'"),
            )
        };
        let (num, sigmas) = match value.strip_suffix("sigma") {
            Some(n) => (n.trim(), true),
            None => (value, false),
        };
        let v: f64 = num.parse().map_err(|_| bad())?;
        if !v.is_finite() || v < 0.0 || metric.as_deref() == Some("") {
            return Err(bad());
        }
        Ok(GuardbandRule {
            metric,
            margin: if sigmas {
                Margin::Sigmas(v)
            } else {
                Margin::Absolute(v)
            },
        })
    }
}

/// Settings of a limit proposal.
#[derive(Debug, Clone, PartialEq)]
pub struct ProposalSettings {
    /// Where the limits go.
    pub method: Method,
    /// Both limits even for metrics with one bad direction.
    pub two_sided: bool,
    /// Guardbands; a rule naming the metric wins over one for every metric.
    pub guardband: Vec<GuardbandRule>,
}

/// An existing limit and the capability of the lot against it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Existing {
    /// Its row in the existing table.
    pub row: usize,
    /// Low limit.
    pub low: Option<f64>,
    /// High limit.
    pub high: Option<f64>,
    /// Cpk of the lot against it ([`stats::cpk`]).
    pub cpk: Option<f64>,
}

/// A proposed limit for one condition and metric, with the statistics it came from.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Proposal {
    /// The condition.
    pub condition: String,
    /// The metric's full name.
    pub metric: String,
    /// Its unit.
    pub unit: &'static str,
    /// Its bad direction.
    pub direction: Direction,
    /// The statistics; `None` when no device has a value.
    pub stats: Option<stats::Summary>,
    /// Proposed low limit.
    pub low: Option<f64>,
    /// Proposed high limit.
    pub high: Option<f64>,
    /// Proposed guardband.
    pub guardband: f64,
    /// How the distribution is clearly not normal ([`stats::shape_note`]).
    pub shape: Option<String>,
    /// The existing limit, when a table was given and has one.
    pub existing: Option<Existing>,
    /// Why no limit is proposed, when none is.
    pub note: Option<String>,
}

/// Proposes limits for each condition of `data` and each metric (full names) with the statistics
/// behind them; when `existing` is given, reports Cpk against its limits.
pub fn propose(
    data: &Characterisation,
    metrics: &[String],
    settings: &ProposalSettings,
    existing: Option<&LimitTable>,
) -> Vec<Proposal> {
    let mut out = Vec::new();
    for condition in &data.conditions {
        for metric in metrics {
            let unit = unit_of(metric).unwrap_or("");
            let direction = direction_of(metric);
            let mut values = data.values(condition, metric);
            values.sort_by(f64::total_cmp);
            let summary = stats::summarize(&values);
            let std = summary.as_ref().and_then(|s| s.std);
            let (centre_low, centre_high, note) = match (settings.method, &summary) {
                (_, None) => (None, None, Some("no device has a value".to_string())),
                (Method::Sigma { k }, Some(s)) => match s.std {
                    Some(sd) => (Some(s.mean - k * sd), Some(s.mean + k * sd), None),
                    None => (None, None, Some("σ needs at least 2 values".to_string())),
                },
                (Method::Percentile { percent }, Some(_)) => (
                    stats::percentile(&values, percent),
                    stats::percentile(&values, 100.0 - percent),
                    None,
                ),
            };
            let (low, high) = match (direction, settings.two_sided) {
                (Direction::HigherIsBetter, false) => (centre_low, None),
                (Direction::LowerIsBetter, false) => (None, centre_high),
                _ => (centre_low, centre_high),
            };
            let rule = settings
                .guardband
                .iter()
                .find(|r| r.metric.as_deref() == Some(metric.as_str()))
                .or_else(|| settings.guardband.iter().find(|r| r.metric.is_none()));
            let guardband = match rule.map(|r| r.margin) {
                Some(Margin::Absolute(g)) => g,
                Some(Margin::Sigmas(n)) => std.map_or(0.0, |s| n * s),
                None => 0.0,
            };
            let existing = existing.and_then(|t| {
                t.for_condition(condition)
                    .into_iter()
                    .find(|l| &l.metric == metric)
                    .map(|l| Existing {
                        row: l.row,
                        low: l.low,
                        high: l.high,
                        cpk: summary
                            .as_ref()
                            .and_then(|s| stats::cpk(s.mean, s.std?, l.low, l.high)),
                    })
            });
            out.push(Proposal {
                condition: condition.clone(),
                metric: metric.clone(),
                unit,
                direction,
                shape: summary.as_ref().and_then(stats::shape_note),
                stats: summary,
                low,
                high,
                guardband,
                existing,
                note,
            });
        }
    }
    out
}

/// Rounds outward to 6 significant digits: down for a low limit, up for a high one.
fn round_outward(v: f64, up: bool) -> f64 {
    if v == 0.0 || !v.is_finite() {
        return v;
    }
    let exp = v.abs().log10().floor() as i32 - 5;
    // Multiply or divide by an exact power of ten so that decimal results come out as printed.
    let to_grid = |x: f64| {
        if exp < 0 {
            x * 10f64.powi(-exp)
        } else {
            x / 10f64.powi(exp)
        }
    };
    let from_grid = |x: f64| {
        if exp < 0 {
            x / 10f64.powi(-exp)
        } else {
            x * 10f64.powi(exp)
        }
    };
    let g = to_grid(v);
    // A value already on the grid stays put (60.0 · 1e4 may land a hair off the integer).
    let r = if (g - g.round()).abs() < 1e-9 {
        g.round()
    } else if up {
        g.ceil()
    } else {
        g.floor()
    };
    from_grid(r)
}

/// The proposals as a limit table that `batch` accepts: one row per condition and metric with a
/// limit, limits rounded outward (low down, high up) to 6 significant digits and the guardband up.
pub fn proposal_table(proposals: &[Proposal], path: &str) -> LimitTable {
    let limits = proposals
        .iter()
        .filter(|p| p.low.is_some() || p.high.is_some())
        .enumerate()
        .map(|(i, p)| Limit {
            row: i + 2,
            condition: Some(p.condition.clone()),
            metric: p.metric.clone(),
            unit: p.unit,
            low: p.low.map(|v| round_outward(v, false)),
            high: p.high.map(|v| round_outward(v, true)),
            guardband: round_outward(p.guardband, true),
        })
        .collect();
    LimitTable {
        path: path.to_string(),
        limits,
    }
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
    fn units_follow_the_name_suffix() {
        // The convention of the crate docs: units in names.
        assert_eq!(unit_of("spectrum.snr_db"), Some("dB"));
        assert_eq!(unit_of("spectrum.sfdr_dbc"), Some("dBc"));
        assert_eq!(unit_of("spectrum.sfdr_dbfs"), Some("dBFS"));
        assert_eq!(unit_of("spectrum.nsd_dbfs_per_hz"), Some("dBFS/Hz"));
        assert_eq!(unit_of("spectrum.harmonics.h3.dbc"), Some("dBc"));
        assert_eq!(unit_of("fit.enob_bits"), Some("bits"));
        assert_eq!(unit_of("fit.frequency_hz"), Some("Hz"));
        assert_eq!(unit_of("fit.cycles_std"), None);
        assert_eq!(unit_of("spectrum.coherent"), None);
        assert_eq!(unit_of("samples"), None);
        assert_eq!(unit_of("spectrum.window"), None);
    }

    #[test]
    fn directions() {
        // Common practice, no source: more SNR/SFDR/ENOB is better, less distortion and noise is better.
        assert_eq!(direction_of("spectrum.snr_db"), Direction::HigherIsBetter);
        assert_eq!(direction_of("fit.enob_bits"), Direction::HigherIsBetter);
        assert_eq!(direction_of("spectrum.thd_dbc"), Direction::LowerIsBetter);
        assert_eq!(
            direction_of("spectrum.harmonics.h2.dbc"),
            Direction::LowerIsBetter
        );
        assert_eq!(
            direction_of("spectrum.noise_floor_dbfs"),
            Direction::LowerIsBetter
        );
        assert_eq!(direction_of("fit.frequency_hz"), Direction::TwoSided);
        assert_eq!(
            direction_of("spectrum.fundamental_dbfs"),
            Direction::TwoSided
        );
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

    #[test]
    fn format_value_is_short() {
        assert_eq!(format_value(60.0), "60");
        assert_eq!(format_value(52.612345678), "52.6123");
        assert_eq!(format_value(-0.25), "-0.25");
        assert_eq!(format_value(100e6), "100000000");
        assert_eq!(format_value(2e-6), "2.00000e-6");
    }

    #[test]
    fn outward_rounding() {
        assert_eq!(round_outward(60.1234567, false), 60.1234);
        assert_eq!(round_outward(60.1234567, true), 60.1235);
        assert_eq!(round_outward(-70.1234567, true), -70.1234);
        assert_eq!(round_outward(-70.1234567, false), -70.1235);
        assert_eq!(round_outward(60.0, true), 60.0);
        assert_eq!(round_outward(123_456_789.0, true), 123_457_000.0);
    }
}
