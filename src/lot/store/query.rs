//! Reading the results store: the lots in time order, the per-lot statistics control charts draw,
//! the limits each lot ran with, one device's history, and the questions users ask (last N lots of a
//! metric, lots whose yield fell below a threshold, lots that failed a limit). The SQL is the same
//! for both backends.

use serde::Serialize;

use super::{Cell, Store};
use crate::error::Result;

/// One recorded lot (a `runs` row).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunRow {
    /// Its id in the store.
    pub id: i64,
    /// The lot's name.
    pub lot: String,
    /// The plan's title.
    pub title: String,
    /// The lot's fingerprint.
    pub fingerprint: String,
    /// Plan fingerprint.
    pub plan_fingerprint: Option<String>,
    /// Limit table fingerprint.
    pub limits_fingerprint: Option<String>,
    /// Start (UTC), when known.
    pub started_at: Option<String>,
    /// End (UTC).
    pub ended_at: String,
    /// spurline version.
    pub tool_version: String,
    /// Host.
    pub host: String,
    /// Devices.
    pub devices: i64,
    /// Results (device × condition).
    pub results: i64,
    /// Results passing.
    pub passed: i64,
    /// Results failing a limit.
    pub failed: i64,
    /// Results failing only inside a guardband.
    pub failed_guardband: i64,
    /// Results no limit applied to.
    pub untested: i64,
    /// Error rows (records that could not be read or analysed).
    pub errors: i64,
    /// The lot's yield, [`RunRow::yield_of`].
    #[serde(rename = "yield")]
    pub yield_fraction: Option<f64>,
}

impl RunRow {
    /// The lot's yield: passing results over tested ones, where error rows count as tested and not
    /// passing (a record that could not be measured is not a good part); `None` when nothing was
    /// tested.
    pub fn yield_of(&self) -> Option<f64> {
        let tested = self.passed + self.failed + self.failed_guardband + self.errors;
        (tested > 0).then(|| self.passed as f64 / tested as f64)
    }
}

/// The statistics of one condition and metric in one lot.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LotStat {
    /// The run's id.
    pub run_id: i64,
    /// The lot's name.
    pub lot: String,
    /// When the lot ended.
    pub ended_at: String,
    /// The condition.
    pub condition: String,
    /// The metric's key.
    pub metric: String,
    /// Its unit.
    pub unit: String,
    /// Values.
    pub n: i64,
    /// Mean.
    pub mean: f64,
    /// Sample standard deviation; `None` for one value.
    pub std: Option<f64>,
    /// Smallest value.
    pub min: f64,
    /// Largest value.
    pub max: f64,
}

/// A limit a lot was judged with.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StoredLimit {
    /// Condition, or `*` for every condition.
    pub condition: String,
    /// The metric's key.
    pub metric: String,
    /// Low limit.
    pub low: Option<f64>,
    /// High limit.
    pub high: Option<f64>,
    /// Guardband.
    pub guardband: f64,
}

/// One figure of one device in one lot.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DeviceRow {
    /// The device.
    pub device: String,
    /// The lot's name.
    pub lot: String,
    /// When the lot ended.
    pub ended_at: String,
    /// The condition.
    pub condition: String,
    /// The verdict of the result.
    pub verdict: String,
    /// The metric's key.
    pub metric: String,
    /// Its value.
    pub value: f64,
    /// Its one-sigma uncertainty, when stored.
    pub uncertainty: Option<f64>,
    /// Its unit.
    pub unit: String,
}

const RUN_COLUMNS: &str = "id, lot, title, fingerprint, plan_fingerprint, limits_fingerprint, started_at, \
    ended_at, tool_version, host, devices, results, passed, failed, failed_guardband, untested, errors";

fn run_of(r: &[Cell]) -> RunRow {
    let mut run = RunRow {
        id: r[0].int(),
        lot: r[1].text(),
        title: r[2].text(),
        fingerprint: r[3].text(),
        plan_fingerprint: r[4].opt_text(),
        limits_fingerprint: r[5].opt_text(),
        started_at: r[6].opt_text(),
        ended_at: r[7].text(),
        tool_version: r[8].text(),
        host: r[9].text(),
        devices: r[10].int(),
        results: r[11].int(),
        passed: r[12].int(),
        failed: r[13].int(),
        failed_guardband: r[14].int(),
        untested: r[15].int(),
        errors: r[16].int(),
        yield_fraction: None,
    };
    run.yield_fraction = run.yield_of();
    run
}

impl Store {
    /// Every lot, oldest first (by end time, then id).
    pub fn runs(&mut self) -> Result<Vec<RunRow>> {
        let rows = self.select(
            &format!("SELECT {RUN_COLUMNS} FROM runs ORDER BY ended_at, id"),
            &[],
        )?;
        Ok(rows.iter().map(|r| run_of(r)).collect())
    }

    /// The per-lot statistics, oldest lot first, for one condition and metric when given (else
    /// all), in (condition, metric, lot time) order.
    pub fn lot_stats(
        &mut self,
        condition: Option<&str>,
        metric: Option<&str>,
    ) -> Result<Vec<LotStat>> {
        let mut sql = "SELECT r.id, r.lot, r.ended_at, c.name, m.key, m.unit, s.n, s.mean, s.std, s.min, s.max \
             FROM lot_stats s JOIN runs r ON r.id = s.run_id JOIN conditions c ON c.id = s.condition_id \
             JOIN metrics m ON m.id = s.metric_id WHERE 1 = 1"
            .to_string();
        let mut params = Vec::new();
        if let Some(c) = condition {
            params.push(Cell::Text(c.to_string()));
            sql.push_str(&format!(" AND c.name = ${}", params.len()));
        }
        if let Some(m) = metric {
            params.push(Cell::Text(m.to_string()));
            sql.push_str(&format!(" AND m.key = ${}", params.len()));
        }
        sql.push_str(" ORDER BY c.name, m.key, r.ended_at, r.id");
        let rows = self.select(&sql, &params)?;
        Ok(rows
            .iter()
            .map(|r| LotStat {
                run_id: r[0].int(),
                lot: r[1].text(),
                ended_at: r[2].text(),
                condition: r[3].text(),
                metric: r[4].text(),
                unit: r[5].text(),
                n: r[6].int(),
                mean: r[7].real().unwrap_or(f64::NAN),
                std: r[8].real(),
                min: r[9].real().unwrap_or(f64::NAN),
                max: r[10].real().unwrap_or(f64::NAN),
            })
            .collect())
    }

    /// The limits a lot was judged with.
    pub fn limits(&mut self, run_id: i64) -> Result<Vec<StoredLimit>> {
        let rows = self.select(
            "SELECT condition, metric, low, high, guardband FROM limits WHERE run_id = $1 ORDER BY condition, metric",
            &[Cell::Int(run_id)],
        )?;
        Ok(rows
            .iter()
            .map(|r| StoredLimit {
                condition: r[0].text(),
                metric: r[1].text(),
                low: r[2].real(),
                high: r[3].real(),
                guardband: r[4].real().unwrap_or(0.0),
            })
            .collect())
    }

    /// The last `n` lots of one metric (under one condition, or every condition), oldest first.
    pub fn last_lots(
        &mut self,
        metric: &str,
        condition: Option<&str>,
        n: usize,
    ) -> Result<Vec<LotStat>> {
        let all = self.lot_stats(condition, Some(metric))?;
        let mut runs: Vec<(String, i64)> =
            all.iter().map(|s| (s.ended_at.clone(), s.run_id)).collect();
        runs.sort();
        runs.dedup();
        let keep: std::collections::HashSet<i64> = runs.iter().rev().take(n).map(|r| r.1).collect();
        let mut out: Vec<LotStat> = all
            .into_iter()
            .filter(|s| keep.contains(&s.run_id))
            .collect();
        out.sort_by(|a, b| {
            (&a.ended_at, a.run_id, &a.condition).cmp(&(&b.ended_at, b.run_id, &b.condition))
        });
        Ok(out)
    }

    /// One device's figures across lots and conditions (one metric when given), oldest lot first.
    pub fn device_history(&mut self, device: &str, metric: Option<&str>) -> Result<Vec<DeviceRow>> {
        let mut sql = "SELECT r.lot, r.ended_at, c.name, x.verdict, m.key, f.value, f.uncertainty, m.unit \
             FROM results x JOIN devices d ON d.id = x.device_id JOIN runs r ON r.id = x.run_id \
             JOIN conditions c ON c.id = x.condition_id \
             JOIN figures f ON f.run_id = x.run_id AND f.seq = x.seq JOIN metrics m ON m.id = f.metric_id \
             WHERE d.name = $1"
            .to_string();
        let mut params = vec![Cell::Text(device.to_string())];
        if let Some(m) = metric {
            params.push(Cell::Text(m.to_string()));
            sql.push_str(" AND m.key = $2");
        }
        sql.push_str(" ORDER BY r.ended_at, r.id, x.seq, m.id");
        let rows = self.select(&sql, &params)?;
        Ok(rows
            .iter()
            .map(|r| DeviceRow {
                device: device.to_string(),
                lot: r[0].text(),
                ended_at: r[1].text(),
                condition: r[2].text(),
                verdict: r[3].text(),
                metric: r[4].text(),
                value: r[5].real().unwrap_or(f64::NAN),
                uncertainty: r[6].real(),
                unit: r[7].text(),
            })
            .collect())
    }

    /// Lots whose yield ([`RunRow::yield_of`], error rows counted) is below `threshold`.
    pub fn lots_below_yield(&mut self, threshold: f64) -> Result<Vec<RunRow>> {
        Ok(self
            .runs()?
            .into_iter()
            .filter(|r| r.yield_fraction.is_some_and(|y| y < threshold))
            .collect())
    }

    /// Lots with at least one failing limit (guardband failures included).
    pub fn failed_lots(&mut self) -> Result<Vec<RunRow>> {
        Ok(self
            .runs()?
            .into_iter()
            .filter(|r| r.failed + r.failed_guardband > 0)
            .collect())
    }
}
