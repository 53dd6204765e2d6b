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
    /// (device, condition) → metric → the record's own one-sigma uncertainty of that figure, where the
    /// summary carries it (`spectrum.uncertainty.snr_db` for `spectrum.snr_db`).
    pub uncertainty: BTreeMap<(String, String), BTreeMap<String, f64>>,
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
    // The uncertainty columns of those metrics: (column, the metric's key).
    let uncertain: Vec<(usize, String)> = summary
        .columns()
        .iter()
        .enumerate()
        .filter_map(|(k, h)| {
            let of = figures::uncertainty_of(h)?.key();
            better_direction(&of).is_some().then_some((k, of))
        })
        .collect();
    let mut run = Run {
        name: dir.display().to_string(),
        values: BTreeMap::new(),
        setup: BTreeMap::new(),
        frequency_hz: BTreeMap::new(),
        error_rows: Vec::new(),
        sources: BTreeMap::new(),
        dropped: Vec::new(),
        uncertainty: BTreeMap::new(),
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
        let sigmas: BTreeMap<String, f64> = uncertain
            .iter()
            .filter_map(|(k, name)| {
                row.number(*k)
                    .filter(|u| *u >= 0.0)
                    .map(|u| (name.clone(), u))
            })
            .collect();
        if !sigmas.is_empty() {
            run.uncertainty.insert((d.clone(), c.clone()), sigmas);
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

impl Change {
    /// The verdict in words: "better", "worse", "no significant change", "no test".
    pub fn words(self) -> &'static str {
        match self {
            Change::Better => "better",
            Change::Worse => "worse",
            Change::NoSignificantChange => "no significant change",
            Change::NoTest => "no test",
        }
    }
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
    /// The verdict in words (short: the test's figures).
    pub reason: String,
    /// Run A's records' own one-sigma uncertainty of the figure, root mean square over its devices
    /// (`None` where the summary does not carry it).
    pub a_record_uncertainty: Option<f64>,
    /// Run B's, the same way.
    pub b_record_uncertainty: Option<f64>,
    /// The test on the records' own uncertainty, made where no t test can be (one device a side, or
    /// no spread on either side) and both runs carry the figure's uncertainty.
    pub by_uncertainty: Option<UncertaintyTest>,
    /// The verdict in plain words, with the statistics behind it.
    pub statement: String,
}

/// A difference of means judged against the records' own uncertainty (a normal z test): used where the
/// devices give no spread to test against. It says whether the measurement could resolve the change,
/// not whether devices vary.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct UncertaintyTest {
    /// Mean of B minus mean of A.
    pub difference: f64,
    /// One-sigma uncertainty of that difference from the records' own uncertainties:
    /// sqrt(Σu_A²/n_A² + Σu_B²/n_B²).
    pub sigma: f64,
    /// difference / sigma.
    pub z: f64,
    /// Two-sided p-value of z under the normal distribution.
    pub p_value: f64,
    /// Lower end of the confidence interval of the difference.
    pub ci_low: f64,
    /// Upper end of the confidence interval of the difference.
    pub ci_high: f64,
}

impl UncertaintyTest {
    /// The z test of mean(b) − mean(a), with each side's records' one-sigma uncertainties `ua`, `ub`
    /// (one per value). `None` without values or with zero total uncertainty.
    pub fn of(a: &[f64], b: &[f64], ua: &[f64], ub: &[f64], confidence: f64) -> Option<Self> {
        use statrs::distribution::{ContinuousCDF, Normal};
        if a.is_empty() || b.is_empty() || ua.len() != a.len() || ub.len() != b.len() {
            return None;
        }
        let var_of_mean =
            |u: &[f64]| u.iter().map(|x| x * x).sum::<f64>() / (u.len() as f64).powi(2);
        let sigma = (var_of_mean(ua) + var_of_mean(ub)).sqrt();
        if !(sigma > 0.0 && sigma.is_finite()) {
            return None;
        }
        let difference = mean(b) - mean(a);
        let z = difference / sigma;
        let n = Normal::standard();
        let q = n.inverse_cdf(0.5 + confidence / 2.0);
        Some(UncertaintyTest {
            difference,
            sigma,
            z,
            p_value: (2.0 * n.cdf(-z.abs())).min(1.0),
            ci_low: difference - q * sigma,
            ci_high: difference + q * sigma,
        })
    }
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
    /// The outcome in plain words: what got better, what got worse, what did not change, what could
    /// not be tested.
    pub summary: Vec<String>,
}

const ALPHA: f64 = 0.05;

/// Compares run B against run A.
pub fn compare(a: &Run, b: &Run, settings: &CompareSettings) -> Comparison {
    let mut warnings = Vec::new();
    let mut left_out: Vec<String> = Vec::new();
    left_out.extend(a.error_rows.iter().map(|e| format!("run A error row {e}")));
    left_out.extend(b.error_rows.iter().map(|e| format!("run B error row {e}")));
    for (run, r) in [("A", a), ("B", b)] {
        if let Some(note) = crate::lot::dropped_note(&r.dropped) {
            warnings.push(format!("run {run}: {note}"));
        }
        left_out.extend(r.dropped.iter().map(|c| format!("run {run} cell {c}")));
    }
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
            // The records' own uncertainties, where every value of a side has one.
            let sigmas = |r: &Run, d: &BTreeMap<String, BTreeMap<String, f64>>| -> Vec<f64> {
                d.iter()
                    .filter(|(_, m)| m.contains_key(metric.as_str()))
                    .filter_map(|(dev, _)| {
                        r.uncertainty
                            .get(&(dev.clone(), (*cond).clone()))?
                            .get(metric.as_str())
                            .copied()
                    })
                    .collect()
            };
            let (ua, ub) = (sigmas(a, &da), sigmas(b, &db));
            let rms = |u: &[f64], n: usize| {
                (!u.is_empty() && u.len() == n)
                    .then(|| (u.iter().map(|x| x * x).sum::<f64>() / u.len() as f64).sqrt())
            };
            let by_uncertainty = if chosen.is_err() {
                UncertaintyTest::of(&va, &vb, &ua, &ub, confidence)
            } else {
                None
            };
            let (verdict, reason, decided_by) = match &by_uncertainty {
                Some(u) => judge_by_uncertainty(u, better, min_change),
                None => {
                    let (v, r, d) = judge(chosen, better, min_change, &va, &vb);
                    (
                        v,
                        r,
                        d.then_some(if use_paired { "paired" } else { "welch" }),
                    )
                }
            };
            let mut row = MetricComparison {
                condition: (*cond).clone(),
                metric: metric.clone(),
                better,
                a: stats::summarize(&va),
                b: stats::summarize(&vb),
                welch: welch.ok(),
                pairs: pa.len(),
                paired: paired.ok(),
                min_change,
                decided_by: decided_by.map(str::to_string),
                verdict,
                reason,
                a_record_uncertainty: rms(&ua, va.len()),
                b_record_uncertainty: rms(&ub, vb.len()),
                by_uncertainty,
                statement: String::new(),
            };
            row.statement = statement(&row, confidence);
            rows.push(row);
        }
    }
    rows.sort_by(|x, y| {
        let key = |r: &MetricComparison| {
            let t = r
                .paired
                .as_ref()
                .filter(|_| r.decided_by.as_deref() == Some("paired"))
                .or(r.welch.as_ref());
            let u = r
                .by_uncertainty
                .as_ref()
                .filter(|_| r.decided_by.as_deref() == Some("record uncertainty"));
            let (p, d) = match (u, t) {
                (Some(u), _) => (u.p_value, u.difference),
                (None, Some(t)) => (t.p_value, t.difference),
                (None, None) => (2.0, 0.0),
            };
            (r.verdict, p, -d.abs())
        };
        let (kx, ky) = (key(x), key(y));
        kx.0.cmp(&ky.0)
            .then(kx.1.total_cmp(&ky.1))
            .then(kx.2.total_cmp(&ky.2))
            .then(x.condition.cmp(&y.condition))
            .then(x.metric.cmp(&y.metric))
    });
    let summary = summary(&rows);
    Comparison {
        run_a: a.name.clone(),
        run_b: b.name.clone(),
        confidence,
        rows,
        left_out,
        warnings,
        summary,
    }
}

/// The verdict from the records' own uncertainty (see [`UncertaintyTest`]).
fn judge_by_uncertainty(
    u: &UncertaintyTest,
    better: Better,
    min_change: f64,
) -> (Change, String, Option<&'static str>) {
    let improves = match better {
        Better::Higher => u.difference > 0.0,
        Better::Lower => u.difference < 0.0,
        Better::Neither => false,
    };
    let words = format!(
        "{:+.3} ± {:.3} from the records' own uncertainty (p = {:.2e})",
        u.difference, u.sigma, u.p_value
    );
    let verdict = if u.p_value >= ALPHA || u.difference.abs() < min_change {
        Change::NoSignificantChange
    } else if improves {
        Change::Better
    } else {
        Change::Worse
    };
    (verdict, words, Some("record uncertainty"))
}

/// A figure's name for the plain-words verdict: its label and the condition ("SNR at f10"), and its
/// unit's symbol.
fn name_and_unit(r: &MetricComparison) -> (String, &'static str) {
    match figures::get(&r.metric) {
        Some(c) => (
            format!("{} at {}", c.label(), r.condition),
            c.unit().symbol(),
        ),
        None => (format!("{} at {}", r.metric, r.condition), ""),
    }
}

fn amount(v: f64, unit: &str) -> String {
    if unit.is_empty() {
        format!("{v:.3}")
    } else {
        format!("{v:.3} {unit}")
    }
}

/// One row's verdict in plain words, with the statistics that decided it.
fn statement(r: &MetricComparison, confidence: f64) -> String {
    let (name, unit) = name_and_unit(r);
    let side = |s: &Option<Summary>, u: Option<f64>| -> String {
        let Some(s) = s else {
            return "no values".to_string();
        };
        let mut t = format!("{} over {} device(s)", amount(s.mean, unit), s.n);
        if let Some(sd) = s.std.filter(|_| s.n >= 2) {
            t.push_str(&format!(", spread σ {}", amount(sd, unit)));
        }
        if let Some(u) = u {
            t.push_str(&format!(", each record ± {}", amount(u, unit)));
        }
        t
    };
    let runs = format!(
        "A {}; B {}",
        side(&r.a, r.a_record_uncertainty),
        side(&r.b, r.b_record_uncertainty)
    );
    let pct = confidence * 100.0;
    let (diff, lo, hi, p, how) = match (&r.decided_by, &r.by_uncertainty) {
        (Some(d), Some(u)) if d == "record uncertainty" => (
            u.difference,
            u.ci_low,
            u.ci_high,
            u.p_value,
            "judged by the records' own uncertainty, as the devices give no spread to test against"
                .to_string(),
        ),
        (Some(d), _) => {
            let t = if d == "paired" {
                r.paired.as_ref()
            } else {
                r.welch.as_ref()
            };
            match t {
                Some(t) => (
                    t.difference,
                    t.ci_low,
                    t.ci_high,
                    t.p_value,
                    if d == "paired" {
                        format!("paired t test over {} devices", r.pairs)
                    } else {
                        "Welch t test".to_string()
                    },
                ),
                None => return format!("{name}: {}. {runs}.", r.reason),
            }
        }
        (None, _) => return format!("{name} could not be tested: {}. {runs}.", r.reason),
    };
    // Whether one record could resolve the change on its own.
    let record_u = r
        .a_record_uncertainty
        .into_iter()
        .chain(r.b_record_uncertainty)
        .fold(None, |m: Option<f64>, u| Some(m.map_or(u, |m| m.max(u))));
    let resolve = match record_u {
        Some(u) if diff.abs() < u => format!(
            "; the change is smaller than one record's own uncertainty (± {}), so only the average over devices shows it",
            amount(u, unit)
        ),
        _ => String::new(),
    };
    let stats = format!(
        "B − A = {:+.3}{}{} ({pct:.0}% interval {:+.3} to {:+.3}; {how}, p = {:.2e}{resolve})",
        diff,
        if unit.is_empty() { "" } else { " " },
        unit,
        lo,
        hi,
        p
    );
    match r.verdict {
        Change::Better => format!("{name} got better in B: {stats}. {runs}."),
        Change::Worse => format!("{name} got worse in B: {stats}. {runs}."),
        Change::NoSignificantChange if p < ALPHA => format!(
            "{name} did not change meaningfully: {stats}, smaller than the {} that counts as a change. {runs}.",
            amount(r.min_change, unit)
        ),
        Change::NoSignificantChange => {
            format!("{name} did not change significantly: {stats}. {runs}.")
        }
        Change::NoTest => format!("{name} could not be tested: {}. {runs}.", r.reason),
    }
}

/// The whole comparison in a few plain sentences.
fn summary(rows: &[MetricComparison]) -> Vec<String> {
    let list = |v: Change| -> Vec<String> {
        rows.iter()
            .filter(|r| r.verdict == v)
            .map(|r| {
                let (name, unit) = name_and_unit(r);
                let d = r
                    .by_uncertainty
                    .as_ref()
                    .filter(|_| r.decided_by.as_deref() == Some("record uncertainty"))
                    .map(|u| u.difference)
                    .or_else(|| {
                        let t = if r.decided_by.as_deref() == Some("paired") {
                            r.paired.as_ref()
                        } else {
                            r.welch.as_ref()
                        };
                        t.map(|t| t.difference)
                    });
                match d {
                    Some(d) if unit.is_empty() => format!("{name} ({d:+.2})"),
                    Some(d) => format!("{name} ({d:+.2} {unit})"),
                    None => name,
                }
            })
            .collect()
    };
    let (better, worse) = (list(Change::Better), list(Change::Worse));
    let same = rows
        .iter()
        .filter(|r| r.verdict == Change::NoSignificantChange)
        .count();
    let untested = rows.iter().filter(|r| r.verdict == Change::NoTest).count();
    let mut out = Vec::new();
    if rows.is_empty() {
        out.push("Nothing could be compared: the runs share no condition with figures.".into());
        return out;
    }
    if better.is_empty() && worse.is_empty() {
        out.push("No figure changed meaningfully between A and B.".to_string());
    }
    if !better.is_empty() {
        out.push(format!(
            "B is better than A in {} figure(s): {}.",
            better.len(),
            better.join(", ")
        ));
    }
    if !worse.is_empty() {
        out.push(format!(
            "B is worse than A in {} figure(s): {}.",
            worse.len(),
            worse.join(", ")
        ));
    }
    if same > 0 && !(better.is_empty() && worse.is_empty()) {
        out.push(format!(
            "{same} other figure(s) did not change meaningfully."
        ));
    }
    if untested > 0 {
        out.push(format!(
            "{untested} figure(s) could not be tested (too few devices and no record uncertainty to judge by); see each row's reason."
        ));
    }
    out
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
        Err(NoTest::Overflow) => (
            Change::NoTest,
            "no test: the values are too large for the statistics (their mean or spread overflows \
             a 64-bit float); check the summaries for hand-edited cells"
                .to_string(),
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
