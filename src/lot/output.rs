//! What a batch run writes: per-device folders (`summary.csv`, `results.json`), and for the lot
//! `summary.csv`, `failures.csv`, `yield.csv` and `index.html`, each written atomically (a temporary file
//! in the same folder, then a rename); and a folder's lot files read back into finished rows for
//! merging shards (through the one reader, [`super::files`]).
//!
//! # Files
//! - `summary.csv` (lot and per device): `device`, `condition`, `verdict`, `reason`, then every column of
//!   the result record as the figure table names them ([`crate::figures::keys`]), one row per device and condition,
//!   devices in lot order and conditions in plan order.
//! - `<device>/results.json`: `{"device", "conditions": [{"condition", "fin_hz", "amplitude_dbfs",
//!   "verdict", "result"}]}` where `result` is the result record exactly as `analyze --json` writes it.
//! - `failures.csv`: one row per failing check: `device`, `condition`, `metric`, `bound` (low/high),
//!   `limit`, `value`, `margin` (signed distance from the stated limit, positive inside), `guardband`,
//!   `unit`, `outcome` (`fail`, `guardband`, `no_value`).
//! - `yield.csv`: per condition a row with metric `*` (results that pass every limit of the condition)
//!   and a row per limited metric, then a lot row `*,*` counting devices (a device passes when each of
//!   its tested conditions passes): `tested`, `passed`, `failed`, `failed_guardband`, `errors`, and
//!   `yield` = passed / tested to 4 decimals (empty when nothing was tested). Error rows are not tested.
//! - `limits.csv`: the limit table as applied (full metric names), when one was given; a merge of
//!   shards reads it back for the page.
//! - `index.html`: one self-contained page (every text escaped, see [`super::page`]): yield, the
//!   distribution of each limited metric with its limits, failing results, every result's row.

use std::collections::{BTreeMap, HashMap};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use serde::Serialize;

use super::files::{
    device_folder, plot_stems, read_bytes, read_error, read_failures, read_yield, LotSummary,
    FAILURE_COLUMNS, INDEX_HTML, LEAD_COLUMNS, LIMITS_CSV, SHARD_MANIFEST, SUMMARY_CSV,
    YIELD_COLUMNS, YIELD_CSV,
};
use super::result::{DeviceResult, Lines};
use crate::error::{Error, ErrorKind, Location, Result};
use crate::lot::limits::{CheckOutcome, LimitTable, Outcome, Verdict};

/// Which plots a batch run asks for per device.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Plots {
    /// No plots; traces are dropped as soon as a result is judged.
    #[default]
    None,
    /// Plots of the results that fail (traces kept for those only).
    Failures,
    /// Plots of every result (traces kept for all).
    All,
}

impl std::str::FromStr for Plots {
    type Err = Error;

    /// `none`, `failures` or `all`. Errors: [`ErrorKind::BadSetting`] on key `plots`.
    fn from_str(s: &str) -> Result<Plots> {
        match s {
            "none" => Ok(Plots::None),
            "failures" => Ok(Plots::Failures),
            "all" => Ok(Plots::All),
            other => Err(Error::setting(
                "plots",
                "none, failures or all",
                format!("'{other}'"),
            )),
        }
    }
}

impl Plots {
    /// The option's value as `--plots` takes it.
    pub fn as_str(&self) -> &'static str {
        match self {
            Plots::None => "none",
            Plots::Failures => "failures",
            Plots::All => "all",
        }
    }

    /// Whether a result with this verdict needs its traces kept for plotting.
    pub fn wants(&self, outcome: Outcome) -> bool {
        match self {
            Plots::None => false,
            Plots::Failures => matches!(outcome, Outcome::Fail | Outcome::FailGuardband),
            Plots::All => true,
        }
    }
}

/// The column set of the summaries: the lead columns and the result record's columns.
#[derive(Debug, Clone, PartialEq)]
pub struct SummaryColumns {
    figures: Vec<String>,
}

/// One CSV line, every cell through the crate's one cell rule ([`crate::report::csv::safe_cell`]).
fn csv_line<I, S>(fields: I) -> Vec<u8>
where
    I: IntoIterator<Item = S>,
    S: AsRef<str>,
{
    let mut w = crate::report::csv::CsvOut::memory();
    w.push(fields);
    w.into_text().into_bytes()
}

impl SummaryColumns {
    /// The columns for results analysed with harmonics up to `harmonics`.
    pub fn new(harmonics: u32) -> SummaryColumns {
        SummaryColumns {
            figures: crate::figures::keys(harmonics),
        }
    }

    /// The header line.
    pub fn header(&self) -> Vec<u8> {
        csv_line(
            LEAD_COLUMNS
                .iter()
                .copied()
                .chain(self.figures.iter().map(String::as_str)),
        )
    }

    /// One summary line from a flattened result (see [`crate::report::csv::flatten`]).
    pub fn row(
        &self,
        device: &str,
        condition: &str,
        verdict: &Verdict,
        flat: &HashMap<String, String>,
    ) -> Vec<u8> {
        let lead = [device, condition, verdict.outcome.as_str(), &verdict.reason];
        csv_line(
            lead.into_iter().chain(
                self.figures
                    .iter()
                    .map(|c| flat.get(c).map(String::as_str).unwrap_or("")),
            ),
        )
    }
}

/// The `failures.csv` lines of one result.
pub(crate) fn failure_lines(device: &str, condition: &str, verdict: &Verdict) -> Vec<u8> {
    let num = |v: Option<f64>| v.map(|x| x.to_string()).unwrap_or_default();
    let mut out = Vec::new();
    for c in verdict
        .checks
        .iter()
        .filter(|c| c.outcome != CheckOutcome::Pass)
    {
        let limit = c.bound.and_then(|b| match b {
            crate::lot::limits::Bound::Low => c.low,
            crate::lot::limits::Bound::High => c.high,
        });
        out.extend(csv_line([
            device.to_string(),
            condition.to_string(),
            c.metric.clone(),
            c.bound.map(|b| b.as_str().to_string()).unwrap_or_default(),
            num(limit),
            num(c.value),
            num(c.margin),
            num(Some(c.guardband)),
            c.unit.to_string(),
            c.outcome.as_str().to_string(),
        ]));
    }
    out
}

/// Escapes text for HTML (the report stage's escaping).
pub use crate::report::escape as escape_html;

use super::page::{self, url_segment, LotPage, YieldLine, TBODY_CLOSE, TBODY_OPEN};

/// The index page's table row of one result: the device (linked to its folder's summary), the
/// condition, the verdict and its reason, the headline figures, and links to the plots written for it
/// (`plots`: the kinds in its folder as `<stem>-<kind>.svg`). The row's id is its anchor
/// ([`page::row_anchor`]), which the failing results link to.
pub(crate) fn index_row(
    device: &str,
    condition: &str,
    stem: &str,
    verdict: &Verdict,
    flat: &HashMap<String, String>,
    plots: &[&str],
) -> String {
    let mut s = String::new();
    let folder = url_segment(&device_folder(device));
    let _ = write!(
        s,
        "<tr class=\"{}\" id=\"{}\"><td class=\"t\"><a href=\"{folder}/summary.csv\">{}</a></td>\
         <td class=\"t\">{}</td><td class=\"t status\">{}</td><td class=\"t notes\">{}</td>",
        verdict.outcome.as_str(),
        escape_html(&page::row_anchor(device, stem)),
        escape_html(device),
        escape_html(condition),
        verdict.outcome.as_str(),
        escape_html(&verdict.reason)
    );
    for f in crate::figures::headline() {
        let v = flat
            .get(f.key)
            .and_then(|v| v.parse::<f64>().ok())
            .map(|v| format!("{v:.2}"))
            .unwrap_or_default();
        let _ = write!(s, "<td>{v}</td>");
    }
    s.push_str("<td class=\"t\">");
    for (i, kind) in plots.iter().enumerate() {
        let _ = write!(
            s,
            "{}<a href=\"{folder}/{}-{kind}.svg\">{kind}</a>",
            if i > 0 { " · " } else { "" },
            url_segment(stem)
        );
    }
    s.push_str("</td></tr>\n");
    s
}

/// The column names of a summary header line.
fn header_columns(header: &[u8]) -> Vec<String> {
    ::csv::ReaderBuilder::new()
        .has_headers(false)
        .from_reader(header)
        .records()
        .next()
        .and_then(|r| r.ok())
        .map(|r| r.iter().map(str::to_string).collect())
        .unwrap_or_default()
}

/// Atomic writes (temporary file in the same folder, then rename), shared with the report stage.
pub use crate::report::write_atomic;

fn create_dir(dir: &Path) -> Result<()> {
    std::fs::create_dir_all(dir).map_err(|e| {
        Error::new(
            ErrorKind::Output,
            dir.display().to_string(),
            Location::Whole,
            "a folder the outputs can be written into",
            e.to_string(),
        )
    })
}

#[derive(Serialize)]
struct DeviceJson<'a> {
    device: &'a str,
    conditions: Vec<ConditionJson<'a>>,
}

#[derive(Serialize)]
struct ConditionJson<'a> {
    condition: &'a str,
    fin_hz: f64,
    amplitude_dbfs: f64,
    verdict: &'a Verdict,
    result: &'a crate::analysis::Analysis,
}

/// Writes one device's folder `<out>/<device>/`: `summary.csv` (the device's rows under `header`) and
/// `results.json`, each atomically. This is the one place where per-device files are written; the plots
/// that `plots` asks for belong here beside the tables, drawn from the traces that `device` keeps for
/// exactly the results `plots` selects ([`Plots::wants`]).
pub fn write_device_outputs(
    out: &Path,
    device: &DeviceResult,
    header: &[u8],
    plots: Plots,
) -> Result<()> {
    let dir = out.join(device_folder(&device.device));
    create_dir(&dir)?;
    let mut summary = header.to_vec();
    for c in &device.conditions {
        summary.extend_from_slice(&c.lines.summary);
    }
    write_atomic(&dir.join(SUMMARY_CSV), &summary)?;
    let doc = DeviceJson {
        device: &device.device,
        conditions: device
            .conditions
            .iter()
            .map(|c| ConditionJson {
                condition: &c.condition,
                fin_hz: c.fin_hz,
                amplitude_dbfs: c.amplitude_dbfs,
                verdict: &c.verdict,
                result: &c.analysis,
            })
            .collect(),
    };
    let mut json = serde_json::to_string_pretty(&doc).expect("plain data serialises");
    json.push('\n');
    write_atomic(&dir.join(super::files::RESULTS_JSON), json.as_bytes())?;
    debug_assert!(
        plots != Plots::None || device.conditions.iter().all(|c| c.traces.is_none()),
        "traces are kept only when plots are asked for"
    );
    // The traces were kept for exactly the results `plots` selects: draw them beside the tables.
    let names: Vec<&str> = device
        .conditions
        .iter()
        .map(|c| c.condition.as_str())
        .collect();
    for (c, stem) in device.conditions.iter().zip(plot_stems(&names)) {
        if let Some(t) = &c.traces {
            crate::report::write_plots_as(
                &dir,
                &stem,
                &c.condition,
                &c.analysis,
                t,
                &crate::report::PlotOptions::default(),
            )?;
        }
    }
    Ok(())
}

/// Counts behind one yield row.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
struct Tally {
    tested: usize,
    passed: usize,
    failed: usize,
    guardband: usize,
    errors: usize,
}

impl Tally {
    fn line(&self, condition: &str, metric: &str) -> Vec<u8> {
        let y = if self.tested == 0 {
            String::new()
        } else {
            format!("{:.4}", self.passed as f64 / self.tested as f64)
        };
        csv_line([
            condition.to_string(),
            metric.to_string(),
            self.tested.to_string(),
            self.passed.to_string(),
            self.failed.to_string(),
            self.guardband.to_string(),
            self.errors.to_string(),
            y,
        ])
    }
}

#[derive(Debug, Clone, PartialEq)]
struct ConditionTally {
    name: String,
    all: Tally,
    metrics: Vec<(String, Tally)>,
}

/// The lot files, kept as finished lines so that rewriting them costs only the write.
pub(crate) struct LotWriter {
    out: PathBuf,
    title: String,
    header: Vec<u8>,
    summary: Vec<u8>,
    failures: Vec<u8>,
    index_rows: String,
    conditions: Vec<ConditionTally>,
    devices: Tally,
    results: usize,
    outcomes: BTreeMap<&'static str, usize>,
    page: LotPage,
}

impl LotWriter {
    /// Creates the output folder; nothing is written until [`LotWriter::write`].
    pub(crate) fn new(
        out: &Path,
        title: &str,
        header: Vec<u8>,
        conditions: &[String],
        limits: Option<&LimitTable>,
    ) -> Result<LotWriter> {
        let counts = YieldCounts {
            conditions: conditions
                .iter()
                .map(|c| ConditionTally {
                    name: c.clone(),
                    all: Tally::default(),
                    metrics: limits
                        .map(|t| {
                            t.for_condition(c)
                                .iter()
                                .map(|l| (l.metric.clone(), Tally::default()))
                                .collect()
                        })
                        .unwrap_or_default(),
                })
                .collect(),
            devices: Tally::default(),
        };
        LotWriter::with_counts(out, title, header, counts, limits)
    }

    /// A writer for lot files put together from finished rows (a merge of shards): the yield counts
    /// are given whole, the rows are added with [`LotWriter::add_rows`]; `limits` are the limits the
    /// rows were judged by (the lot's `limits.csv`).
    pub(crate) fn with_counts(
        out: &Path,
        title: &str,
        header: Vec<u8>,
        counts: YieldCounts,
        limits: Option<&LimitTable>,
    ) -> Result<LotWriter> {
        create_dir(out)?;
        let names: Vec<String> = counts.conditions.iter().map(|c| c.name.clone()).collect();
        let columns = header_columns(&header);
        let page = LotPage::new(&names, &columns, limits);
        Ok(LotWriter {
            page,
            out: out.to_path_buf(),
            title: title.to_string(),
            header,
            summary: Vec::new(),
            failures: Vec::new(),
            index_rows: String::new(),
            conditions: counts.conditions,
            devices: counts.devices,
            results: 0,
            outcomes: BTreeMap::new(),
        })
    }

    /// One result's finished lines.
    fn add_lines(
        &mut self,
        device: &str,
        condition: usize,
        lines: &Lines,
        outcome: Outcome,
        reason: &str,
    ) {
        self.page
            .add(condition, device, &lines.summary, outcome, reason);
        self.summary.extend_from_slice(&lines.summary);
        self.failures.extend_from_slice(&lines.failures);
        self.index_rows.push_str(&lines.index);
        self.results += 1;
        *self.outcomes.entry(outcome.as_str()).or_default() += 1;
    }

    /// Adds finished rows read back from lot files; their yield counts are not touched (they come
    /// whole with [`LotWriter::with_counts`]).
    pub(crate) fn add_rows<'a>(&mut self, rows: impl IntoIterator<Item = &'a ReadResult>) {
        for r in rows {
            let condition = self
                .page
                .condition_index(&r.condition)
                .unwrap_or(usize::MAX);
            self.add_lines(&r.device, condition, &r.lines, r.outcome, &r.reason);
        }
    }

    /// Adds a finished device's rows and counts.
    pub(crate) fn add(&mut self, device: &DeviceResult) {
        let mut any_error = false;
        let mut any_fail = false;
        let mut any_guard = false;
        let mut any_tested = false;
        for (i, c) in device.conditions.iter().enumerate() {
            self.add_lines(
                &device.device,
                i,
                &c.lines,
                c.verdict.outcome,
                &c.verdict.reason,
            );
            let t = &mut self.conditions[i];
            match c.verdict.outcome {
                Outcome::Error => {
                    any_error = true;
                    t.all.errors += 1;
                    t.metrics.iter_mut().for_each(|(_, m)| m.errors += 1);
                    continue;
                }
                Outcome::Untested => continue,
                Outcome::Pass => t.all.passed += 1,
                Outcome::Fail => {
                    any_fail = true;
                    t.all.failed += 1
                }
                Outcome::FailGuardband => {
                    any_guard = true;
                    t.all.guardband += 1
                }
            }
            any_tested = true;
            t.all.tested += 1;
            for check in &c.verdict.checks {
                if let Some((_, m)) = t.metrics.iter_mut().find(|(n, _)| *n == check.metric) {
                    m.tested += 1;
                    match check.outcome {
                        CheckOutcome::Pass => m.passed += 1,
                        CheckOutcome::Guardband => m.guardband += 1,
                        CheckOutcome::Fail | CheckOutcome::NoValue => m.failed += 1,
                    }
                }
            }
        }
        let d = &mut self.devices;
        if any_error {
            d.errors += 1;
        } else if any_tested {
            d.tested += 1;
            if any_fail {
                d.failed += 1;
            } else if any_guard {
                d.guardband += 1;
            } else {
                d.passed += 1;
            }
        }
    }

    fn yield_csv(&self) -> Vec<u8> {
        let mut out = csv_line(YIELD_COLUMNS);
        for c in &self.conditions {
            out.extend(c.all.line(&c.name, "*"));
            for (m, t) in &c.metrics {
                out.extend(t.line(&c.name, m));
            }
        }
        out.extend(self.devices.line("*", "*"));
        out
    }

    fn index_html(&self, devices: usize) -> String {
        let mut counts = format!(
            "{devices} device{} · {} result{}",
            if devices == 1 { "" } else { "s" },
            self.results,
            if self.results == 1 { "" } else { "s" }
        );
        for (k, v) in &self.outcomes {
            let _ = write!(counts, " · {v} {}", k.replace('_', " "));
        }
        let d = &self.devices;
        if d.tested > 0 {
            let _ = write!(
                counts,
                " · device yield {:.1} % ({} of {})",
                100.0 * d.passed as f64 / d.tested as f64,
                d.passed,
                d.tested
            );
        }
        let mut yields = Vec::new();
        let line = |condition: &str, metric: Option<&str>, t: &Tally| YieldLine {
            condition: condition.to_string(),
            metric: metric.map(str::to_string),
            tested: t.tested,
            passed: t.passed,
            failed: t.failed,
            guardband: t.guardband,
            errors: t.errors,
        };
        for c in &self.conditions {
            yields.push(line(&c.name, None, &c.all));
            for (m, t) in &c.metrics {
                yields.push(line(&c.name, Some(m), t));
            }
        }
        if self.conditions.iter().any(|c| !c.metrics.is_empty()) {
            yields.push(line("every condition", Some("devices"), &self.devices));
        } else {
            yields.clear();
        }
        self.page.render(
            &self.title,
            &escape_html(&counts),
            &yields,
            &self.index_rows,
        )
    }

    /// Rewrites the lot files with every device added so far.
    pub(crate) fn write(&self, devices: usize) -> Result<()> {
        let mut summary = self.header.clone();
        summary.extend_from_slice(&self.summary);
        write_atomic(&self.out.join(SUMMARY_CSV), &summary)?;
        let mut failures = csv_line(FAILURE_COLUMNS);
        failures.extend_from_slice(&self.failures);
        write_atomic(&self.out.join(super::files::FAILURES_CSV), &failures)?;
        write_atomic(&self.out.join(YIELD_CSV), &self.yield_csv())?;
        if let Some(limits) = self.page.limits_csv() {
            write_atomic(&self.out.join(LIMITS_CSV), limits.as_bytes())?;
        }
        write_atomic(
            &self.out.join(INDEX_HTML),
            self.index_html(devices).as_bytes(),
        )
    }
}

impl Tally {
    fn add(&mut self, other: &Tally) {
        self.tested += other.tested;
        self.passed += other.passed;
        self.failed += other.failed;
        self.guardband += other.guardband;
        self.errors += other.errors;
    }
}

/// Every count behind a lot's `yield.csv`: per condition the whole results and each limited metric,
/// then the devices. The counts of disjoint parts of a lot add up to the lot's.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct YieldCounts {
    conditions: Vec<ConditionTally>,
    devices: Tally,
}

impl YieldCounts {
    /// The (condition, metrics) rows, to check that two parts come from the same plan and limits.
    fn keys(&self) -> Vec<(&str, Vec<&str>)> {
        self.conditions
            .iter()
            .map(|c| {
                (
                    c.name.as_str(),
                    c.metrics.iter().map(|(m, _)| m.as_str()).collect(),
                )
            })
            .collect()
    }

    /// Adds the counts of another part of the lot (read from `path`); both must have the same rows.
    pub(crate) fn add(&mut self, other: &YieldCounts, path: &Path) -> Result<()> {
        if self.keys() != other.keys() {
            return Err(read_error(
                path,
                Location::Whole,
                "the same yield rows (conditions and limited metrics) as the other shards",
                format!("{:?}", other.keys()),
            ));
        }
        for (a, b) in self.conditions.iter_mut().zip(&other.conditions) {
            a.all.add(&b.all);
            for ((_, x), (_, y)) in a.metrics.iter_mut().zip(&b.metrics) {
                x.add(y);
            }
        }
        self.devices.add(&other.devices);
        Ok(())
    }
}

/// One result read back from a lot folder's files: its finished lines and its verdict.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct ReadResult {
    pub(crate) device: String,
    pub(crate) condition: String,
    pub(crate) outcome: Outcome,
    pub(crate) reason: String,
    pub(crate) lines: Lines,
}

/// A lot folder's files read back: the summary header, every result in the folder's order, and the
/// yield counts.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct LotRows {
    pub(crate) header: Vec<u8>,
    pub(crate) results: Vec<ReadResult>,
    pub(crate) counts: YieldCounts,
}

/// Reads back the lot files of an output folder that holds `devices` (in that order), each under
/// `conditions` (in plan order): `summary.csv`, `failures.csv`, the rows of `index.html` and
/// `yield.csv`. Errors name the file and row: a file that cannot be read or does not parse, columns
/// that are not batch columns, a row of another device or condition than the order says, an index
/// page whose rows do not match the summary.
pub(crate) fn read_lot_rows(
    dir: &Path,
    devices: &[String],
    conditions: &[String],
) -> Result<LotRows> {
    let n = conditions.len();
    let summary = LotSummary::in_folder(dir)?;
    let path = summary.path();
    if summary.columns().len() < LEAD_COLUMNS.len()
        || summary.columns()[..LEAD_COLUMNS.len()] != LEAD_COLUMNS
    {
        return Err(read_error(
            path,
            Location::Row(1),
            &format!("the columns {}", LEAD_COLUMNS.join(", ")),
            format!("the columns {}", summary.columns().join(", ")),
        ));
    }
    let want = devices.len() * n;
    let wrong_count = |found: usize| {
        read_error(
            path,
            Location::Whole,
            &format!("{want} rows ({} devices × {n} conditions)", devices.len()),
            format!("{found} rows"),
        )
    };
    let mut results = Vec::with_capacity(want);
    for (k, row) in summary.rows().enumerate() {
        let row = row?;
        if k >= want {
            return Err(wrong_count(k + 1 + summary.rows().skip(k + 1).count()));
        }
        let (device, condition) = (&devices[k / n.max(1)], &conditions[k % n.max(1)]);
        if row.device() != device || row.condition() != condition {
            return Err(read_error(
                path,
                Location::Row(row.line()),
                &format!("the row of device '{device}' under condition '{condition}'"),
                format!("device '{}', condition '{}'", row.device(), row.condition()),
            ));
        }
        let verdict = row.verdict().unwrap_or("");
        let outcome: Outcome = verdict.parse().map_err(|_| {
            read_error(
                path,
                Location::Row(row.line()),
                "a verdict pass, fail, fail_guardband, untested or error",
                format!("'{verdict}'"),
            )
        })?;
        results.push(ReadResult {
            device: device.clone(),
            condition: condition.clone(),
            outcome,
            reason: row.reason().to_string(),
            lines: Lines {
                summary: row.raw().to_vec(),
                failures: Vec::new(),
                index: String::new(),
            },
        });
    }
    if results.len() != want {
        return Err(wrong_count(results.len()));
    }
    let header = summary.header_bytes().to_vec();

    let failures = read_failures(dir)?;
    let path = dir.join(super::files::FAILURES_CSV);
    // Failure rows come in result order, several to a result: walk the results alongside.
    let mut at = 0;
    for (row, line, raw) in failures.rows {
        while at < results.len()
            && (results[at].device != row.device || results[at].condition != row.condition)
        {
            at += 1;
        }
        let Some(r) = results.get_mut(at) else {
            return Err(read_error(
                &path,
                Location::Row(line),
                "a row of a result of this folder, in summary order",
                format!("device '{}', condition '{}'", row.device, row.condition),
            ));
        };
        r.lines.failures.extend_from_slice(&raw);
    }

    let path = dir.join(INDEX_HTML);
    let page = String::from_utf8(read_bytes(&path, "a readable lot file")?)
        .map_err(|e| read_error(&path, Location::Whole, "a UTF-8 page", e.to_string()))?;
    let body = page
        .find(TBODY_OPEN)
        .map(|i| i + TBODY_OPEN.len())
        .and_then(|start| {
            page[start..]
                .find(TBODY_CLOSE)
                .map(|end| &page[start..start + end])
        })
        .ok_or_else(|| {
            read_error(
                &path,
                Location::Whole,
                "the lot page of spurline batch with its table body",
                "no <tbody> … </tbody>".into(),
            )
        })?;
    // Every text in a row is escaped, so a row ends at the first "</tr>\n".
    let rows: Vec<&str> = body.split_inclusive("</tr>\n").collect();
    if rows.len() != results.len() || rows.iter().any(|r| !r.starts_with("<tr")) {
        return Err(read_error(
            &path,
            Location::Whole,
            &format!("{} table rows, one per summary row", results.len()),
            format!("{} rows", rows.len()),
        ));
    }
    for (r, row) in results.iter_mut().zip(rows) {
        r.lines.index = row.to_string();
    }

    let counts = yield_counts(dir, conditions)?;
    Ok(LotRows {
        header,
        results,
        counts,
    })
}

/// Reads a folder's `yield.csv` back into its counts; the conditions must be `conditions`, in order.
fn yield_counts(dir: &Path, conditions: &[String]) -> Result<YieldCounts> {
    let path = dir.join(YIELD_CSV);
    let mut tallies: Vec<ConditionTally> = Vec::new();
    let mut devices = None;
    for (row, line, _) in read_yield(dir)?.rows {
        let bad =
            |expected: &str, found: String| read_error(&path, Location::Row(line), expected, found);
        if devices.is_some() {
            return Err(bad(
                "no row after the lot row *,*",
                format!("'{}'", row.condition),
            ));
        }
        let t = Tally {
            tested: row.tested,
            passed: row.passed,
            failed: row.failed,
            guardband: row.failed_guardband,
            errors: row.errors,
        };
        match (row.condition.as_str(), row.metric.as_str()) {
            ("*", "*") => devices = Some(t),
            (c, "*") => tallies.push(ConditionTally {
                name: c.to_string(),
                all: t,
                metrics: Vec::new(),
            }),
            (c, m) => match tallies.last_mut() {
                Some(last) if last.name == c => last.metrics.push((m.to_string(), t)),
                _ => {
                    return Err(bad(
                        "a metric row after its condition's row with metric *",
                        format!("condition '{c}', metric '{m}'"),
                    ))
                }
            },
        }
    }
    let Some(devices) = devices else {
        return Err(read_error(
            &path,
            Location::Whole,
            "the lot row *,* at the end",
            "none".into(),
        ));
    };
    let found: Vec<&str> = tallies.iter().map(|t| t.name.as_str()).collect();
    if found != conditions {
        return Err(read_error(
            &path,
            Location::Whole,
            &format!("rows of the conditions {}", conditions.join(", ")),
            format!("rows of {}", found.join(", ")),
        ));
    }
    Ok(YieldCounts {
        conditions: tallies,
        devices,
    })
}

/// Removes a shard manifest from an output folder (nothing to do when there is none): a run into
/// the folder makes new files, which an old manifest must not vouch for.
pub(crate) fn remove_shard_manifest(out: &Path) -> Result<()> {
    let path = out.join(SHARD_MANIFEST);
    match std::fs::remove_file(&path) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(()),
        Err(e) => Err(Error::new(
            ErrorKind::Output,
            path.display().to_string(),
            Location::Whole,
            "a stale shard manifest that can be removed",
            e.to_string(),
        )),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_lot_summary_has_the_lead_columns_then_the_figure_table() {
        let header = String::from_utf8(SummaryColumns::new(7).header()).unwrap();
        let mut want: Vec<String> = LEAD_COLUMNS.iter().map(|s| s.to_string()).collect();
        want.extend(crate::figures::keys(7));
        assert_eq!(header.trim_end(), want.join(","));
    }
}
