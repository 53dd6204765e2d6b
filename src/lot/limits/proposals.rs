//! Limit proposals from a characterisation run: per condition and metric the statistics of the lot,
//! limits at mean ± k·σ or at percentiles (one-sided where only one direction is bad), guardbands, and
//! the capability (Cpk) against an existing table.

use std::collections::{BTreeMap, HashMap};
use std::path::{Path, PathBuf};

use serde::Serialize;

use super::{Catalogue, Limit, LimitTable};
use crate::error::{Error, Location, Result};
use crate::figures::{self, Better, Unit};
use crate::lot::files::{
    read_bytes, read_error, DroppedCell, LotSummary, RESULTS_JSON, SUMMARY_CSV,
};
use crate::stats;

/// Figures of a characterisation run: one row per device and condition, metric values by full name.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Characterisation {
    /// The metrics the results carry.
    pub catalogue: Catalogue,
    /// Conditions in the order they first appear.
    pub conditions: Vec<String>,
    /// The rows that were analysed (error rows are left out).
    pub rows: Vec<ResultRow>,
    /// Cells of the summaries read that were left out as not numbers (see [`crate::lot::LotSummary`]).
    pub dropped: Vec<DroppedCell>,
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

/// The metrics limits are proposed for when none are named: the headline figures
/// ([`figures::headline`]), in their order.
pub fn default_metrics() -> Vec<&'static str> {
    figures::headline().iter().map(|f| f.key).collect()
}

/// How limits are placed around a lot's values.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Method {
    /// mean ± k·σ (sample σ).
    Sigma {
        /// Standard deviations from the mean.
        k: f64,
    },
    /// The p-th and (100 − p)-th percentiles (linear interpolation between closest ranks, numpy's default).
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

impl std::str::FromStr for GuardbandRule {
    type Err = Error;

    /// Parses `[METRIC=]VALUE` or `[METRIC=]Nsigma`: `0.5`, `1sigma`, `snr_db=0.3`.
    fn from_str(s: &str) -> Result<GuardbandRule> {
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
    /// Cpk of the lot against it: min((high − mean)/3σ, (mean − low)/3σ).
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
    pub unit: Unit,
    /// Its bad direction.
    pub direction: Better,
    /// The statistics; `None` when no device has a value.
    pub stats: Option<stats::Distribution>,
    /// Proposed low limit.
    pub low: Option<f64>,
    /// Proposed high limit.
    pub high: Option<f64>,
    /// Proposed guardband.
    pub guardband: f64,
    /// How the distribution is clearly not normal: with at least [`crate::stats::SHAPE_MIN_N`] values, a
    /// Jarque-Bera p-value below 0.01, and the skew or tails it shows.
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
            let unit = figures::unit_of(metric).unwrap_or(Unit::None);
            let direction = figures::better_of(metric);
            let mut values = data.values(condition, metric);
            values.retain(|v| v.is_finite());
            values.sort_by(f64::total_cmp);
            let distribution = stats::describe(&values);
            let summary = distribution.as_ref().map(|d| &d.summary);
            let std = summary.and_then(|s| s.std);
            let (centre_low, centre_high, note) = match (settings.method, summary) {
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
                (Better::Higher, false) => (centre_low, None),
                (Better::Lower, false) => (None, centre_high),
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
                        cpk: summary.and_then(|s| stats::cpk(s.mean, s.std?, l.low, l.high)),
                    })
            });
            out.push(Proposal {
                condition: condition.clone(),
                metric: metric.clone(),
                unit,
                direction,
                shape: distribution.as_ref().and_then(stats::shape_note),
                stats: distribution,
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
            guard_sigmas: 0.0,
        })
        .collect();
    LimitTable {
        path: path.to_string(),
        limits,
    }
}

/// Reads a characterisation run's results back: a batch output folder (its `summary.csv`, else every
/// `<device>/results.json` in it), a summary CSV, or `results.json` files. Error rows are left out;
/// cells that are not numbers are left out by the one rule (see the module docs) and listed in
/// [`Characterisation::dropped`]. Errors: a file that cannot be read, a CSV without `device` and
/// `condition` columns, a JSON file not in the `results.json` shape.
pub fn read_results(paths: &[PathBuf]) -> Result<Characterisation> {
    let mut files: Vec<PathBuf> = Vec::new();
    for p in paths {
        if p.is_dir() {
            let summary = p.join(SUMMARY_CSV);
            if summary.is_file() {
                files.push(summary);
                continue;
            }
            let mut found: Vec<PathBuf> = std::fs::read_dir(p)
                .map_err(|e| {
                    read_error(
                        p,
                        Location::Whole,
                        "a readable results folder",
                        e.to_string(),
                    )
                })?
                .flatten()
                .map(|e| e.path().join(RESULTS_JSON))
                .filter(|r| r.is_file())
                .collect();
            if found.is_empty() {
                return Err(read_error(
                    p,
                    Location::Whole,
                    "a batch output folder with summary.csv or <device>/results.json",
                    "neither".into(),
                ));
            }
            found.sort();
            files.extend(found);
        } else {
            files.push(p.clone());
        }
    }
    enum Table {
        Csv(LotSummary),
        Json(JsonRows),
    }
    let mut tables = Vec::with_capacity(files.len());
    for f in &files {
        let is_json = f
            .extension()
            .is_some_and(|e| e.eq_ignore_ascii_case("json"));
        tables.push(if is_json {
            Table::Json(json_rows(f)?)
        } else {
            Table::Csv(LotSummary::read(f)?)
        });
    }
    let catalogue = Catalogue::from_columns(tables.iter().flat_map(|t| match t {
        Table::Csv(s) => s.columns().to_vec(),
        Table::Json(j) => j.columns.clone(),
    }));
    let mut data = Characterisation {
        catalogue,
        ..Characterisation::default()
    };
    let add = |data: &mut Characterisation, row: ResultRow| {
        if !data.conditions.contains(&row.condition) {
            data.conditions.push(row.condition.clone());
        }
        data.rows.push(row);
    };
    for t in &tables {
        match t {
            Table::Csv(summary) => {
                let cols: Vec<(String, Option<usize>)> = data
                    .catalogue
                    .metrics()
                    .iter()
                    .map(|m| (m.name.clone(), summary.column(&m.name)))
                    .collect();
                for row in summary.rows() {
                    let row = row?;
                    if row.error().is_some() {
                        continue;
                    }
                    let values = cols
                        .iter()
                        .filter_map(|(name, c)| {
                            c.and_then(|c| row.number(c)).map(|v| (name.clone(), v))
                        })
                        .collect();
                    add(
                        &mut data,
                        ResultRow {
                            device: row.device().to_string(),
                            condition: row.condition().to_string(),
                            values,
                        },
                    );
                }
                data.dropped.extend(summary.dropped());
            }
            Table::Json(j) => {
                for (device, condition, cells) in &j.rows {
                    let values = data
                        .catalogue
                        .metrics()
                        .iter()
                        .filter_map(|m| {
                            cells
                                .get(&m.name)
                                .and_then(|v| v.parse::<f64>().ok())
                                .filter(|v| v.is_finite())
                                .map(|v| (m.name.clone(), v))
                        })
                        .collect();
                    add(
                        &mut data,
                        ResultRow {
                            device: device.clone(),
                            condition: condition.clone(),
                            values,
                        },
                    );
                }
            }
        }
    }
    Ok(data)
}

/// The rows of one `results.json`: its flattened columns, and per condition without an error the
/// device, the condition and its flattened figures.
struct JsonRows {
    columns: Vec<String>,
    rows: Vec<(String, String, HashMap<String, String>)>,
}

fn json_rows(path: &Path) -> Result<JsonRows> {
    let text = String::from_utf8(read_bytes(path, "a readable results file")?)
        .map_err(|e| read_error(path, Location::Whole, "a UTF-8 results.json", e.to_string()))?;
    let v: serde_json::Value = serde_json::from_str(&text).map_err(|e| {
        read_error(
            path,
            Location::LineColumn(e.line(), e.column()),
            "a results.json file of a batch run",
            e.to_string(),
        )
    })?;
    let shape = |found: &str| {
        read_error(
            path,
            Location::Whole,
            "a results.json object {\"device\", \"conditions\": [{\"condition\", \"result\"}]}",
            found.to_string(),
        )
    };
    let device = v
        .get("device")
        .and_then(|d| d.as_str())
        .ok_or_else(|| shape("no \"device\" string"))?;
    let conditions = v
        .get("conditions")
        .and_then(|c| c.as_array())
        .ok_or_else(|| shape("no \"conditions\" array"))?;
    let mut columns: Vec<String> = Vec::new();
    let mut rows = Vec::new();
    for (i, c) in conditions.iter().enumerate() {
        let name = c
            .get("condition")
            .and_then(|n| n.as_str())
            .ok_or_else(|| shape(&format!("conditions[{i}] without a \"condition\" string")))?;
        let result = c
            .get("result")
            .ok_or_else(|| shape(&format!("conditions[{i}] without a \"result\"")))?;
        if result.get("error").is_some_and(|e| !e.is_null()) {
            continue;
        }
        let flat = crate::figures::flatten(result);
        for (k, _) in &flat {
            if !columns.contains(k) {
                columns.push(k.clone());
            }
        }
        rows.push((
            device.to_string(),
            name.to_string(),
            flat.into_iter().collect(),
        ));
    }
    Ok(JsonRows { columns, rows })
}

#[cfg(test)]
mod tests {
    use super::*;

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
