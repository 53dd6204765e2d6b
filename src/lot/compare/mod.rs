//! Board-revision comparison: reads two lot runs (their `summary.csv`), and per condition and metric
//! gives each run's statistics, the difference of means with its confidence interval and Welch's t test,
//! the paired test when the same devices appear in both, and a verdict: better, worse, or no significant
//! change. A minimum meaningful change keeps a tiny but significant shift from being reported as news.

pub mod output;
pub mod plots;

use crate::error::Result;
use crate::figures;
use crate::lot::files::{DroppedCell, LotSummary};
use crate::stats::{self, NoTest, Summary, TTest};
use serde::Serialize;
use std::collections::{BTreeMap, BTreeSet};
use std::path::Path;

pub use crate::figures::Better;

/// The better direction of a metric column, from the figure table, or `None` when it is not a figure
/// of merit (no better direction, or no unit). Limit tables take their directions from the same rows,
/// so a metric one side judges the other compares.
pub fn better_direction(metric: &str) -> Option<Better> {
    crate::figures::get(metric)
        .filter(|c| c.figure.is_metric() && c.better() != Better::Neither)
        .map(|c| c.better())
}

/// One lot run, as read from its `summary.csv`.
#[derive(Debug, Clone, PartialEq)]
pub struct Run {
    /// The run's folder.
    pub name: String,
    /// (device, condition) → metric → value, for rows without an error.
    pub values: BTreeMap<(String, String), BTreeMap<String, f64>>,
    /// Condition → (bits, sample rate) seen in the run.
    pub setup: BTreeMap<String, BTreeSet<(String, String)>>,
    /// Condition → input frequencies seen (fit.frequency_hz), for plots against frequency.
    pub frequency_hz: BTreeMap<String, Vec<f64>>,
    /// Rows that were errors in the run, left out: "device / condition: reason".
    pub error_rows: Vec<String>,
    /// (device, condition) → the record file the row was analysed from (`source`).
    pub sources: BTreeMap<(String, String), String>,
    /// Figure cells left out as not numbers (text, NaN, infinity), by the one rule of the lot reader.
    pub dropped: Vec<DroppedCell>,
}

/// Reads a lot run folder (its `summary.csv`, as `spurline batch` writes it) through the one reader
/// of lot files: cells that are not numbers are left out and listed in [`Run::dropped`].
pub fn read_run(dir: &Path) -> Result<Run> {
    let summary = LotSummary::in_folder(dir)?;
    let col = |name: &str| summary.column(name);
    let (bits, fs, fin, source) = (
        col(figures::BITS.key),
        col(figures::SAMPLE_RATE.key),
        col(figures::FIN.key),
        col(figures::SOURCE.key),
    );
    let metrics: Vec<(usize, &String)> = summary
        .columns()
        .iter()
        .enumerate()
        .filter(|(_, h)| better_direction(h).is_some())
        .collect();
    let mut run = Run {
        name: dir.display().to_string(),
        values: BTreeMap::new(),
        setup: BTreeMap::new(),
        frequency_hz: BTreeMap::new(),
        error_rows: Vec::new(),
        sources: BTreeMap::new(),
        dropped: Vec::new(),
    };
    for row in summary.rows() {
        let row = row?;
        let get = |k: Option<usize>| k.map_or("", |k| row.cell(k)).to_string();
        let (d, c) = (row.device().to_string(), row.condition().to_string());
        if let Some(err) = row.error() {
            run.error_rows.push(format!("{d} / {c}: {err}"));
            continue;
        }
        let vals = metrics
            .iter()
            .filter_map(|&(k, name)| row.number(k).map(|v| (name.clone(), v)))
            .collect();
        run.setup
            .entry(c.clone())
            .or_default()
            .insert((get(bits), get(fs)));
        if let Some(f) = fin.and_then(|k| row.number(k)) {
            run.frequency_hz.entry(c.clone()).or_default().push(f);
        }
        let src = get(source);
        if !src.is_empty() {
            run.sources.insert((d.clone(), c.clone()), src);
        }
        run.values.insert((d, c), vals);
    }
    run.dropped = summary.dropped();
    Ok(run)
}

/// Settings of a comparison.
#[derive(Debug, Clone, PartialEq)]
pub struct CompareSettings {
    /// Base the verdict on the paired test when the same devices appear in both runs.
    pub paired: bool,
    /// Minimum meaningful change per metric (in the metric's unit); metrics not listed use `default_min_change`.
    pub min_change: BTreeMap<String, f64>,
    /// Minimum meaningful change for metrics not listed.
    pub default_min_change: f64,
    /// Confidence of the intervals (0.95).
    pub confidence: f64,
}

impl Default for CompareSettings {
    fn default() -> Self {
        CompareSettings {
            paired: false,
            min_change: BTreeMap::new(),
            default_min_change: 0.2,
            confidence: 0.95,
        }
    }
}

/// The verdict on one metric.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, PartialOrd, Ord)]
#[serde(rename_all = "snake_case")]
pub enum Change {
    /// B is significantly and meaningfully better.
    Better,
    /// B is significantly and meaningfully worse.
    Worse,
    /// No significant change, or one smaller than the minimum meaningful change.
    NoSignificantChange,
    /// Not enough data to test.
    NoTest,
}

/// One condition and metric, compared.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MetricComparison {
    /// Condition name.
    pub condition: String,
    /// Metric (the result record's column name).
    pub metric: String,
    /// Which way is better.
    pub better: Better,
    /// Run A's statistics.
    pub a: Option<Summary>,
    /// Run B's statistics.
    pub b: Option<Summary>,
    /// Welch's unequal-variance t test of B against A.
    pub welch: Option<TTest>,
    /// Devices present in both runs for this condition.
    pub pairs: usize,
    /// Paired t test over those devices.
    pub paired: Option<TTest>,
    /// The minimum meaningful change used.
    pub min_change: f64,
    /// Which test decided ("welch" or "paired").
    pub decided_by: Option<String>,
    /// The verdict.
    pub verdict: Change,
    /// The verdict in words.
    pub reason: String,
}

/// A whole comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Comparison {
    /// Run A (the reference).
    pub run_a: String,
    /// Run B.
    pub run_b: String,
    /// Confidence of the intervals.
    pub confidence: f64,
    /// Rows, sorted: changes first, then by p-value and size of change.
    pub rows: Vec<MetricComparison>,
    /// Everything left out of the comparison, with why.
    pub left_out: Vec<String>,
    /// Mismatches between the runs.
    pub warnings: Vec<String>,
}

const ALPHA: f64 = 0.05;

/// Compares run B against run A.
pub fn compare(a: &Run, b: &Run, settings: &CompareSettings) -> Comparison {
    let mut warnings = Vec::new();
    let mut left_out: Vec<String> = Vec::new();
    left_out.extend(a.error_rows.iter().map(|e| format!("run A error row {e}")));
    left_out.extend(b.error_rows.iter().map(|e| format!("run B error row {e}")));
    let conds_a: BTreeSet<&String> = a.values.keys().map(|(_, c)| c).collect();
    let conds_b: BTreeSet<&String> = b.values.keys().map(|(_, c)| c).collect();
    for c in conds_a.difference(&conds_b) {
        left_out.push(format!("condition '{c}' is only in run A"));
    }
    for c in conds_b.difference(&conds_a) {
        left_out.push(format!("condition '{c}' is only in run B"));
    }
    if conds_a != conds_b {
        warnings.push(
            "the runs have different conditions: only the ones in both are compared".to_string(),
        );
    }
    let mut rows = Vec::new();
    let confidence = settings.confidence;
    for cond in conds_a.intersection(&conds_b) {
        let (sa, sb) = (a.setup.get(*cond), b.setup.get(*cond));
        if sa != sb {
            warnings.push(format!(
                "condition '{cond}': resolution or sample rate differ ({:?} vs {:?}); left out",
                sa, sb
            ));
            left_out.push(format!(
                "condition '{cond}': different resolution or sample rate"
            ));
            continue;
        }
        let devs = |r: &Run| -> BTreeMap<String, BTreeMap<String, f64>> {
            r.values
                .iter()
                .filter(|((_, c), _)| c == *cond)
                .map(|((d, _), v)| (d.clone(), v.clone()))
                .collect()
        };
        let (da, db) = (devs(a), devs(b));
        let metrics: BTreeSet<&String> = da
            .values()
            .chain(db.values())
            .flat_map(|m| m.keys())
            .collect();
        for metric in metrics {
            let better = better_direction(metric).expect("only figures of merit are read");
            let va: Vec<f64> = da.values().filter_map(|m| m.get(metric).copied()).collect();
            let vb: Vec<f64> = db.values().filter_map(|m| m.get(metric).copied()).collect();
            let (pa, pb): (Vec<f64>, Vec<f64>) = da
                .iter()
                .filter_map(|(d, m)| Some((*m.get(metric)?, *db.get(d)?.get(metric)?)))
                .unzip();
            let min_change = settings
                .min_change
                .get(metric.as_str())
                .copied()
                .unwrap_or(settings.default_min_change);
            let welch = stats::welch(&va, &vb, confidence);
            let paired = stats::paired(&pa, &pb, confidence);
            let use_paired = settings.paired && pa.len() >= 2;
            let chosen = if use_paired { &paired } else { &welch };
            let (verdict, reason, decided_by) = judge(chosen, better, min_change, &va, &vb);
            rows.push(MetricComparison {
                condition: (*cond).clone(),
                metric: metric.clone(),
                better,
                a: stats::summarize(&va),
                b: stats::summarize(&vb),
                welch: welch.ok(),
                pairs: pa.len(),
                paired: paired.ok(),
                min_change,
                decided_by: decided_by
                    .then(|| if use_paired { "paired" } else { "welch" }.to_string()),
                verdict,
                reason,
            });
        }
    }
    rows.sort_by(|x, y| {
        let key = |r: &MetricComparison| {
            let t = r
                .paired
                .as_ref()
                .filter(|_| r.decided_by.as_deref() == Some("paired"))
                .or(r.welch.as_ref());
            (
                r.verdict,
                t.map_or(2.0, |t| t.p_value),
                -t.map_or(0.0, |t| t.difference.abs()),
            )
        };
        let (kx, ky) = (key(x), key(y));
        kx.0.cmp(&ky.0)
            .then(kx.1.total_cmp(&ky.1))
            .then(kx.2.total_cmp(&ky.2))
            .then(x.condition.cmp(&y.condition))
            .then(x.metric.cmp(&y.metric))
    });
    Comparison {
        run_a: a.name.clone(),
        run_b: b.name.clone(),
        confidence,
        rows,
        left_out,
        warnings,
    }
}

fn judge(
    test: &std::result::Result<TTest, NoTest>,
    better: Better,
    min_change: f64,
    a: &[f64],
    b: &[f64],
) -> (Change, String, bool) {
    match test {
        Err(NoTest::TooFew) => (
            Change::NoTest,
            format!(
                "no test: {} value(s) in A and {} in B; at least two on each side are needed",
                a.len(),
                b.len()
            ),
            false,
        ),
        Err(NoTest::ZeroVariance) => {
            let (ma, mb) = (mean(a), mean(b));
            if ma == mb {
                (
                    Change::NoSignificantChange,
                    "identical values on both sides".to_string(),
                    false,
                )
            } else {
                (
                    Change::NoTest,
                    format!(
                        "no test: zero spread on both sides, means differ by {:+.4}",
                        mb - ma
                    ),
                    false,
                )
            }
        }
        Ok(t) => {
            let improves = match better {
                Better::Higher => t.difference > 0.0,
                Better::Lower => t.difference < 0.0,
                Better::Neither => false,
            };
            if t.p_value >= ALPHA {
                (
                    Change::NoSignificantChange,
                    format!("p = {:.3} ≥ {ALPHA}", t.p_value),
                    true,
                )
            } else if t.difference.abs() < min_change {
                (
                    Change::NoSignificantChange,
                    format!(
                        "significant (p = {:.2e}) but {:+.3} is below the minimum meaningful change {min_change}",
                        t.p_value, t.difference
                    ),
                    true,
                )
            } else if improves {
                (
                    Change::Better,
                    format!("{:+.3} (p = {:.2e})", t.difference, t.p_value),
                    true,
                )
            } else {
                (
                    Change::Worse,
                    format!("{:+.3} (p = {:.2e})", t.difference, t.p_value),
                    true,
                )
            }
        }
    }
}

fn mean(v: &[f64]) -> f64 {
    v.iter().sum::<f64>() / v.len().max(1) as f64
}
