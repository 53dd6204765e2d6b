//! The results store: finished lots recorded into one database (a SQLite file, or a PostgreSQL
//! server for a test floor where many testers write at once), behind one [`Backend`] trait and one
//! schema (`schema.rs`, versioned by migrations). A lot is read from its folder (`summary.csv`,
//! `failures.csv`) through the one reader of a lot's files, and written in one transaction: a crash
//! leaves the lot absent, never half there, and a lot whose fingerprint is already stored is refused.
//!
//! The stored figures are the summary's columns that the figure table gives as metrics (a number with
//! a unit), each with its uncertainty where the table says it has one and the summary carries it:
//! the list is derived from `figures.rs`, never kept here.

mod postgres;
mod query;
mod schema;
mod sqlite;
mod trend;

use std::collections::BTreeMap;
use std::path::Path;

use serde::Serialize;

use crate::error::{Error, ErrorKind, Location, Result};
use crate::figures;
use crate::lot::files::{read_failures, LotSummary};
use crate::lot::limits::LimitTable;
use crate::lot::shard::fingerprint_of;

pub use query::{DeviceRow, LotStat, RunRow, StoredLimit};
pub use trend::{
    trend, trend_csv, trend_html, write_trend, ChartKind, Trend, TrendChart, TrendPoint,
    TrendSettings, TREND_COLUMNS,
};

/// A value read from the store.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum Cell {
    Null,
    Int(i64),
    Real(f64),
    Text(String),
}

impl Cell {
    pub(crate) fn int(&self) -> i64 {
        match self {
            Cell::Int(i) => *i,
            Cell::Real(r) => *r as i64,
            _ => 0,
        }
    }
    pub(crate) fn real(&self) -> Option<f64> {
        match self {
            Cell::Real(r) => Some(*r),
            Cell::Int(i) => Some(*i as f64),
            _ => None,
        }
    }
    pub(crate) fn text(&self) -> String {
        match self {
            Cell::Text(t) => t.clone(),
            Cell::Int(i) => i.to_string(),
            Cell::Real(r) => r.to_string(),
            Cell::Null => String::new(),
        }
    }
    pub(crate) fn opt_text(&self) -> Option<String> {
        match self {
            Cell::Null => None,
            c => Some(c.text()),
        }
    }
}

/// What a backend does: apply the migrations, write one lot in one transaction, and answer reads.
pub(crate) trait Backend {
    /// Applies the migrations this store lacks, in one transaction, and returns the version.
    fn migrate(&mut self) -> Result<i64>;
    /// Writes a lot in one transaction and returns its run id.
    fn write_lot(&mut self, lot: &LotRecord) -> Result<i64>;
    /// Runs a read with `$1, $2, ...` parameters.
    fn select(&mut self, sql: &str, params: &[Cell]) -> Result<Vec<Vec<Cell>>>;
}

/// Where a store is: a PostgreSQL connection (`postgres://...`, `postgresql://...`, or a
/// `host=... dbname=...` string) or a SQLite file (`sqlite:PATH` or a plain path).
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum StoreUrl {
    /// A SQLite file, created when missing.
    Sqlite(std::path::PathBuf),
    /// A PostgreSQL connection string (libpq's forms).
    Postgres(String),
}

impl std::str::FromStr for StoreUrl {
    type Err = Error;
    fn from_str(s: &str) -> Result<StoreUrl> {
        let t = s.trim();
        if t.is_empty() {
            return Err(Error::setting(
                "--store",
                "a SQLite file or a postgres:// URL",
                "nothing",
            ));
        }
        if t.starts_with("postgres://")
            || t.starts_with("postgresql://")
            || (t.contains('=') && (t.contains("host=") || t.contains("dbname=")))
        {
            Ok(StoreUrl::Postgres(t.to_string()))
        } else {
            Ok(StoreUrl::Sqlite(
                t.strip_prefix("sqlite:").unwrap_or(t).into(),
            ))
        }
    }
}

impl std::fmt::Display for StoreUrl {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            StoreUrl::Sqlite(p) => write!(f, "{}", p.display()),
            // A connection string may hold a password: show only its kind.
            StoreUrl::Postgres(_) => f.write_str("the PostgreSQL store"),
        }
    }
}

pub(crate) fn store_error(url: &str, expected: &str, e: impl std::fmt::Display) -> Error {
    Error::new(
        ErrorKind::Store,
        url,
        Location::Whole,
        expected,
        e.to_string(),
    )
}

/// Who recorded a lot, when and with what (the `runs` row beside the lot's counts).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunInfo {
    /// The lot's name (a production lot number, a board revision); charts are ordered by end time.
    pub lot: String,
    /// The plan's title (or the lot's name when there is none).
    pub title: String,
    /// The fingerprint of the bench plan file, when known.
    pub plan_fingerprint: Option<String>,
    /// The fingerprint of the limit table file, when there was one.
    pub limits_fingerprint: Option<String>,
    /// When the run started (UTC, RFC 3339), when known.
    pub started_at: Option<String>,
    /// When the run ended (UTC, RFC 3339).
    pub ended_at: String,
    /// The spurline version that ran it.
    pub tool_version: String,
    /// The host that ran it.
    pub host: String,
}

impl RunInfo {
    /// A run ending now on this host with this build, with no fingerprints yet.
    pub fn now(lot: &str) -> RunInfo {
        RunInfo {
            lot: lot.to_string(),
            title: lot.to_string(),
            plan_fingerprint: None,
            limits_fingerprint: None,
            started_at: None,
            ended_at: utc_now(),
            tool_version: env!("CARGO_PKG_VERSION").to_string(),
            host: host_name(),
        }
    }
}

/// The fingerprint of a file's bytes (a plan or a limit table), as 16 hex digits.
pub fn file_fingerprint(path: &Path) -> Result<String> {
    let bytes = crate::resources::read_small_file(
        path,
        "a readable file",
        crate::resources::MAX_SMALL_FILE_BYTES,
    )?;
    Ok(fingerprint_of(&[("file", &bytes)]))
}

/// The current time, UTC, RFC 3339 to the second.
pub fn utc_now() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_secs());
    rfc3339(secs)
}

/// Seconds since 1970 as `YYYY-MM-DDTHH:MM:SSZ` (days to civil date by H. Hinnant's public
/// algorithm "chrono-compatible low-level date algorithms", `civil_from_days`).
pub fn rfc3339(secs: u64) -> String {
    let days = (secs / 86_400) as i64;
    let rem = secs % 86_400;
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        rem / 3600,
        rem % 3600 / 60,
        rem % 60
    )
}

/// This machine's host name (`unknown` when the system will not say).
pub fn host_name() -> String {
    #[cfg(unix)]
    {
        let mut buf = [0u8; 256];
        // SAFETY: the buffer is valid for its length; gethostname writes at most that many bytes.
        let rc = unsafe { libc::gethostname(buf.as_mut_ptr().cast(), buf.len()) };
        if rc == 0 {
            let end = buf.iter().position(|&b| b == 0).unwrap_or(buf.len());
            let name = String::from_utf8_lossy(&buf[..end]).to_string();
            if !name.is_empty() {
                return name;
            }
        }
    }
    std::env::var("HOSTNAME").unwrap_or_else(|_| "unknown".to_string())
}

/// One result (device × condition) of a lot to record.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct ResultRow {
    pub(crate) device: usize,
    pub(crate) condition: usize,
    pub(crate) verdict: String,
    pub(crate) reason: String,
    pub(crate) error: Option<String>,
}

/// A stored metric: a column of the figure table.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct MetricRow {
    pub(crate) key: String,
    pub(crate) label: String,
    pub(crate) unit: String,
    pub(crate) better: String,
}

/// Statistics of one condition and metric in a lot: (condition index, metric index, n, mean,
/// sample σ, min, max).
pub(crate) type StatRow = (usize, usize, usize, f64, Option<f64>, f64, f64);

/// One figure of one result: (result index, metric index, value, uncertainty).
pub(crate) type FigureRow = (usize, usize, f64, Option<f64>);

/// A failing check: (result index, metric, bound, limit, value, margin, guardband, outcome).
pub(crate) type FailureCells = (
    usize,
    String,
    Option<String>,
    Option<f64>,
    Option<f64>,
    Option<f64>,
    f64,
    String,
);

/// A lot ready to record: its run row, names, results, figures, warnings, failures, limits and the
/// per-lot statistics of every condition and metric. Build it with [`LotRecord::from_folder`].
#[derive(Debug, Clone, PartialEq)]
pub struct LotRecord {
    pub(crate) info: RunInfo,
    pub(crate) fingerprint: String,
    pub(crate) devices: Vec<String>,
    pub(crate) conditions: Vec<String>,
    pub(crate) metrics: Vec<MetricRow>,
    pub(crate) results: Vec<ResultRow>,
    pub(crate) figures: Vec<FigureRow>,
    pub(crate) warnings: Vec<(usize, String)>,
    pub(crate) failures: Vec<FailureCells>,
    pub(crate) limits: Vec<StoredLimit>,
    pub(crate) stats: Vec<StatRow>,
    pub(crate) counts: [usize; 6],
}

impl LotRecord {
    /// Reads a finished lot folder (`summary.csv`, and `failures.csv` when present) with the run's
    /// facts and, when the run had one, its limit table (stored so that Cpk can be drawn against it).
    /// The lot's fingerprint covers the plan's and the limit table's fingerprints and the summary's
    /// bytes: the same results recorded again are refused. Errors: the folder's files, as their
    /// reader gives them (file and row).
    pub fn from_folder(
        dir: &Path,
        info: RunInfo,
        limits: Option<&LimitTable>,
    ) -> Result<LotRecord> {
        let summary = LotSummary::in_folder(dir)?;
        let summary_bytes = std::fs::read(summary.path())
            .map_err(|e| Error::io(summary.path(), "a readable lot summary.csv", e))?;
        // Metric columns as the figure table gives them, with their uncertainty columns.
        let mut metrics = Vec::new();
        let mut metric_cols = Vec::new();
        for (i, name) in summary.columns().iter().enumerate() {
            let Some(col) = figures::get(name) else {
                continue;
            };
            if !col.figure.is_metric() {
                continue;
            }
            let unc = col
                .figure
                .uncertainty_key(col.order.unwrap_or(0))
                .and_then(|k| summary.column(&k));
            metric_cols.push((metrics.len(), i, unc));
            metrics.push(MetricRow {
                key: col.key(),
                label: col.label(),
                unit: col.unit().symbol().to_string(),
                better: col.better().as_str().to_string(),
            });
        }
        let mut devices: Vec<String> = Vec::new();
        let mut device_of: BTreeMap<String, usize> = BTreeMap::new();
        let mut conditions: Vec<String> = Vec::new();
        let mut condition_of: BTreeMap<String, usize> = BTreeMap::new();
        let mut results = Vec::new();
        let mut figure_rows = Vec::new();
        let mut warnings = Vec::new();
        let mut counts = [0usize; 6];
        let warn_col = summary.column(figures::WARNINGS.key);
        let mut seq_of: BTreeMap<(String, String), usize> = BTreeMap::new();
        for row in summary.rows() {
            let row = row?;
            let seq = results.len();
            let d = *device_of
                .entry(row.device().to_string())
                .or_insert_with(|| {
                    devices.push(row.device().to_string());
                    devices.len() - 1
                });
            let c = *condition_of
                .entry(row.condition().to_string())
                .or_insert_with(|| {
                    conditions.push(row.condition().to_string());
                    conditions.len() - 1
                });
            let error = row.error().map(str::to_string);
            let verdict = match row.verdict() {
                Some(v) => v.to_string(),
                None if error.is_some() => "error".to_string(),
                None => "untested".to_string(),
            };
            let slot = match verdict.as_str() {
                "pass" => 0,
                "fail" => 1,
                "fail_guardband" => 2,
                "error" => 4,
                _ => 3,
            };
            counts[slot] += 1;
            for &(m, col, unc) in &metric_cols {
                if let Some(v) = row.number(col) {
                    figure_rows.push((seq, m, v, unc.and_then(|u| row.number(u))));
                }
            }
            if let Some(w) = warn_col {
                for text in row.cell(w).split(" | ").filter(|t| !t.trim().is_empty()) {
                    warnings.push((seq, text.to_string()));
                }
            }
            seq_of.insert((row.device().to_string(), row.condition().to_string()), seq);
            results.push(ResultRow {
                device: d,
                condition: c,
                verdict,
                reason: row.reason().to_string(),
                error,
            });
        }
        counts[5] = devices.len();
        let mut failures = Vec::new();
        if dir.join(crate::lot::files::FAILURES_CSV).exists() {
            for (f, line, _) in read_failures(dir)?.rows {
                let Some(&seq) = seq_of.get(&(f.device.clone(), f.condition.clone())) else {
                    return Err(Error::new(
                        ErrorKind::BadMetadata,
                        dir.join(crate::lot::files::FAILURES_CSV)
                            .display()
                            .to_string(),
                        Location::Row(line),
                        "a device and condition of the lot's summary.csv",
                        format!("{} / {}", f.device, f.condition),
                    ));
                };
                failures.push((
                    seq,
                    f.metric,
                    f.bound.map(|b| b.as_str().to_string()),
                    f.limit,
                    f.value,
                    f.margin,
                    f.guardband,
                    f.outcome.as_str().to_string(),
                ));
            }
        }
        let stored_limits: Vec<StoredLimit> = limits.map_or_else(Vec::new, |t| {
            t.limits
                .iter()
                .map(|l| StoredLimit {
                    condition: l.condition.clone().unwrap_or_else(|| "*".to_string()),
                    metric: l.metric.clone(),
                    low: l.low,
                    high: l.high,
                    guardband: l.guardband,
                })
                .collect()
        });
        let stats = lot_statistics(&results, &figure_rows);
        let fingerprint = fingerprint_of(&[
            (
                "plan",
                info.plan_fingerprint.as_deref().unwrap_or("").as_bytes(),
            ),
            (
                "limits",
                info.limits_fingerprint.as_deref().unwrap_or("").as_bytes(),
            ),
            ("summary", &summary_bytes),
        ]);
        Ok(LotRecord {
            info,
            fingerprint,
            devices,
            conditions,
            metrics,
            results,
            figures: figure_rows,
            warnings,
            failures,
            limits: stored_limits,
            stats,
            counts,
        })
    }

    /// The lot's fingerprint (16 hex digits).
    pub fn fingerprint(&self) -> &str {
        &self.fingerprint
    }

    /// Results (device × condition rows) in the lot.
    pub fn results(&self) -> usize {
        self.results.len()
    }

    /// Figures (values) the lot stores.
    pub fn figures(&self) -> usize {
        self.figures.len()
    }

    /// The run's facts.
    pub fn info(&self) -> &RunInfo {
        &self.info
    }
}

/// Per condition and metric: n, mean, sample σ (n − 1), min and max of the stored values, in a
/// fixed order (condition, metric), summed in result order so that they are deterministic.
fn lot_statistics(results: &[ResultRow], figures: &[FigureRow]) -> Vec<StatRow> {
    let mut groups: BTreeMap<(usize, usize), Vec<f64>> = BTreeMap::new();
    for &(seq, m, v, _) in figures {
        groups
            .entry((results[seq].condition, m))
            .or_default()
            .push(v);
    }
    groups
        .into_iter()
        .filter_map(|((c, m), values)| {
            let s = crate::stats::summarize(&values)?;
            Some((c, m, s.n, s.mean, s.std, s.min, s.max))
        })
        .collect()
}

/// A results store: open it, record lots, read them back.
pub struct Store {
    backend: Box<dyn Backend>,
    shown: String,
    version: i64,
}

impl std::fmt::Debug for Store {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "Store({}, schema {})", self.shown, self.version)
    }
}

/// What recording a lot did.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Recorded {
    /// The run's id in the store.
    pub run_id: i64,
    /// The lot's fingerprint.
    pub fingerprint: String,
    /// Results written.
    pub results: usize,
    /// Figures written.
    pub figures: usize,
}

impl Store {
    /// Opens (and creates, and migrates to this build's schema) the store at `url`. Errors
    /// ([`ErrorKind::Store`]): a database that cannot be opened or reached, a store written by a newer
    /// spurline (its schema version above this build's).
    pub fn open(url: &StoreUrl) -> Result<Store> {
        let shown = url.to_string();
        let mut backend: Box<dyn Backend> = match url {
            StoreUrl::Sqlite(path) => Box::new(sqlite::SqliteStore::open(path)?),
            StoreUrl::Postgres(conn) => Box::new(postgres::PgStore::connect(conn)?),
        };
        let version = backend.migrate()?;
        Ok(Store {
            backend,
            shown,
            version,
        })
    }

    /// The schema version of the store.
    pub fn schema_version(&self) -> i64 {
        self.version
    }

    /// Records a lot in one transaction. Errors: [`ErrorKind::AlreadyRecorded`] when a lot with the
    /// same fingerprint is stored (nothing is written), [`ErrorKind::Store`] when the database
    /// refuses (nothing is written).
    pub fn record(&mut self, lot: &LotRecord) -> Result<Recorded> {
        let run_id = self.backend.write_lot(lot)?;
        Ok(Recorded {
            run_id,
            fingerprint: lot.fingerprint.clone(),
            results: lot.results.len(),
            figures: lot.figures.len(),
        })
    }

    pub(crate) fn select(&mut self, sql: &str, params: &[Cell]) -> Result<Vec<Vec<Cell>>> {
        self.backend.select(sql, params)
    }
}

/// The error for a lot already stored.
pub(crate) fn already_recorded(shown: &str, lot: &LotRecord, existing: &str) -> Error {
    Error::new(
        ErrorKind::AlreadyRecorded,
        shown,
        Location::Key(lot.fingerprint.clone()),
        "a lot not yet in the store (each lot is recorded once, by fingerprint)",
        format!("the same lot already recorded as '{existing}'"),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_follow_the_civil_calendar() {
        // Known instants (from memory, checkable with `date -u -d @SECONDS`).
        assert_eq!(rfc3339(0), "1970-01-01T00:00:00Z");
        assert_eq!(rfc3339(951_782_400), "2000-02-29T00:00:00Z");
        assert_eq!(rfc3339(1_700_000_000), "2023-11-14T22:13:20Z");
    }

    #[test]
    fn store_urls_pick_the_backend() {
        let u: StoreUrl = "postgresql:///lots?host=/tmp/s&user=postgres"
            .parse()
            .unwrap();
        assert!(matches!(u, StoreUrl::Postgres(_)));
        let u: StoreUrl = "host=/tmp/s dbname=lots".parse().unwrap();
        assert!(matches!(u, StoreUrl::Postgres(_)));
        let u: StoreUrl = "sqlite:lots.db".parse().unwrap();
        assert_eq!(u, StoreUrl::Sqlite("lots.db".into()));
        let u: StoreUrl = "reports/lots.sqlite".parse().unwrap();
        assert_eq!(u, StoreUrl::Sqlite("reports/lots.sqlite".into()));
        assert!("  ".parse::<StoreUrl>().is_err());
    }
}
