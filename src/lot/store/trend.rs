//! Trends over the lots of a results store: per condition and metric, a control chart of the lots
//! (an individuals chart of the lot means with limits from their moving ranges, or an X̄ chart with
//! limits from the spread within lots), limits from a baseline of the first lots, the run rules each
//! lot completes, and each lot's Cpk against the limits it was judged with, with its confidence
//! interval. Written as SVG charts, CSV, JSON and an HTML page.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::path::Path;

use serde::Serialize;

use super::{Cell, LotStat, Store, StoredLimit};
use crate::error::{Error, Result};
use crate::figures;
use crate::report::svg::{control_chart_svg, ChartPoint};
use crate::report::{escape, write_atomic};
use crate::spc::{self, CpkInterval, Limits, Rule, Subgroup};

/// Which chart the lots are drawn on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ChartKind {
    /// Individuals chart of the lot means, σ from their moving ranges: it watches the lot-to-lot
    /// variation, which is what moves in production (the default).
    Lots,
    /// X̄ chart of the lots as subgroups, σ from the spread within lots (X̄ and S charts): for lots
    /// whose devices vary much more than the lots do, or small lots.
    Xbar,
}

impl std::str::FromStr for ChartKind {
    type Err = Error;
    fn from_str(s: &str) -> Result<ChartKind> {
        match s {
            "lots" => Ok(ChartKind::Lots),
            "xbar" => Ok(ChartKind::Xbar),
            other => Err(Error::setting("--chart", "lots or xbar", other)),
        }
    }
}

/// Settings of a trend.
#[derive(Debug, Clone, PartialEq)]
pub struct TrendSettings {
    /// Lots (the first, oldest) the control limits are computed from.
    pub baseline: usize,
    /// The chart.
    pub chart: ChartKind,
    /// The metrics (figure keys); empty for the headline figures and every limited metric.
    pub metrics: Vec<String>,
    /// Only this condition.
    pub condition: Option<String>,
    /// The confidence of the Cpk intervals (0.95).
    pub confidence: f64,
}

impl Default for TrendSettings {
    fn default() -> TrendSettings {
        TrendSettings {
            // Phase I limits from 20 or more subgroups (Montgomery §6.2, common practice).
            baseline: 20,
            chart: ChartKind::Lots,
            metrics: Vec::new(),
            condition: None,
            confidence: 0.95,
        }
    }
}

/// One lot on a chart.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrendPoint {
    /// The lot.
    pub lot: String,
    /// When it ended.
    pub ended_at: String,
    /// Values in the lot.
    pub n: i64,
    /// The lot mean (the charted value).
    pub mean: f64,
    /// The sample σ within the lot.
    pub std: Option<f64>,
    /// Centre line.
    pub centre: f64,
    /// Lower control limit.
    pub lcl: f64,
    /// Upper control limit.
    pub ucl: f64,
    /// (mean − centre)/σ of the charted statistic.
    pub z: f64,
    /// Run rules this lot completes.
    pub rules: Vec<Rule>,
    /// Cpk against the limits this lot was judged with, with its interval; `None` without a limit.
    pub cpk: Option<CpkInterval>,
}

/// One condition and metric over the lots.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrendChart {
    /// The condition.
    pub condition: String,
    /// The metric's key.
    pub metric: String,
    /// Its label.
    pub label: String,
    /// Its unit.
    pub unit: String,
    /// The chart kind.
    pub chart: ChartKind,
    /// Lots the limits come from.
    pub baseline: usize,
    /// The limits of the first lot (they differ per lot on an X̄ chart of unequal lots).
    pub limits: Limits,
    /// The moving-range chart's limits (individuals chart only).
    pub moving_range: Option<Limits>,
    /// The lots, oldest first.
    pub points: Vec<TrendPoint>,
}

impl TrendChart {
    /// The rules fired on any lot, each once, in rule order.
    pub fn fired(&self) -> Vec<Rule> {
        let mut r: Vec<Rule> = self.points.iter().flat_map(|p| p.rules.clone()).collect();
        r.sort();
        r.dedup();
        r
    }
}

/// A trend: the charts, and charts left out (too few lots) with why.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Trend {
    /// The settings' baseline.
    pub baseline: usize,
    /// Lots in the store.
    pub lots: usize,
    /// The charts, by condition then metric (in figure-table order).
    pub charts: Vec<TrendChart>,
    /// Condition/metric pairs not charted, with the reason.
    pub left_out: Vec<String>,
}

impl Trend {
    /// Whether any run rule fired on any chart.
    pub fn any_rule(&self) -> bool {
        self.charts.iter().any(|c| !c.fired().is_empty())
    }
}

impl Store {
    /// Every lot's limits, by run id.
    pub fn all_limits(&mut self) -> Result<BTreeMap<i64, Vec<StoredLimit>>> {
        let rows = self.select(
            "SELECT run_id, condition, metric, low, high, guardband FROM limits ORDER BY run_id, condition, metric",
            &[],
        )?;
        let mut out: BTreeMap<i64, Vec<StoredLimit>> = BTreeMap::new();
        for r in rows {
            out.entry(r[0].int()).or_default().push(StoredLimit {
                condition: r[1].text(),
                metric: r[2].text(),
                low: r[3].real(),
                high: r[4].real(),
                guardband: r[5].real().unwrap_or(0.0),
            });
        }
        Ok(out)
    }

    /// The metrics that some stored lot has a limit on.
    fn limited_metrics(&mut self) -> Result<Vec<String>> {
        let rows = self.select("SELECT DISTINCT metric FROM limits", &[])?;
        Ok(rows.iter().map(|r: &Vec<Cell>| r[0].text()).collect())
    }
}

/// The place of a metric key in the figure table (for a stable, familiar order).
fn table_place(key: &str) -> usize {
    let Some(col) = figures::get(key) else {
        return usize::MAX;
    };
    figures::table()
        .iter()
        .position(|f| std::ptr::eq(*f, col.figure))
        .unwrap_or(usize::MAX)
        * 100
        + col.order.unwrap_or(0) as usize
}

/// Builds the trend of a store.
pub fn trend(store: &mut Store, settings: &TrendSettings) -> Result<Trend> {
    let mut metrics = settings.metrics.clone();
    if metrics.is_empty() {
        metrics = figures::headline()
            .iter()
            .filter(|f| f.is_metric())
            .map(|f| f.key.to_string())
            .collect();
        metrics.extend(store.limited_metrics()?);
    }
    metrics.sort_by_key(|m| (table_place(m), m.clone()));
    metrics.dedup();
    let lots = store.runs()?.len();
    let limits = store.all_limits()?;
    let mut charts = Vec::new();
    let mut left_out = Vec::new();
    for metric in &metrics {
        let stats = store.lot_stats(settings.condition.as_deref(), Some(metric))?;
        let mut by_condition: BTreeMap<String, Vec<LotStat>> = BTreeMap::new();
        for s in stats {
            by_condition.entry(s.condition.clone()).or_default().push(s);
        }
        for (condition, series) in by_condition {
            match chart_of(&condition, metric, &series, &limits, settings) {
                Some(c) => charts.push(c),
                None => left_out.push(format!(
                    "{condition} / {metric}: {} lot(s), too few for control limits",
                    series.len()
                )),
            }
        }
    }
    charts.sort_by(|a, b| {
        (&a.condition, table_place(&a.metric), &a.metric).cmp(&(
            &b.condition,
            table_place(&b.metric),
            &b.metric,
        ))
    });
    Ok(Trend {
        baseline: settings.baseline,
        lots,
        charts,
        left_out,
    })
}

fn chart_of(
    condition: &str,
    metric: &str,
    series: &[LotStat],
    limits: &BTreeMap<i64, Vec<StoredLimit>>,
    settings: &TrendSettings,
) -> Option<TrendChart> {
    let means: Vec<f64> = series.iter().map(|s| s.mean).collect();
    let (per_point, moving_range): (Vec<Limits>, Option<Limits>) = match settings.chart {
        ChartKind::Lots => {
            let (i, mr) = spc::individuals(&means, settings.baseline)?;
            (vec![i; series.len()], Some(mr))
        }
        ChartKind::Xbar => {
            let groups: Vec<Subgroup> = series
                .iter()
                .map(|s| Subgroup {
                    n: s.n.max(0) as usize,
                    mean: s.mean,
                    std: s.std.unwrap_or(0.0),
                })
                .collect();
            let l = spc::xbar_s(&groups, settings.baseline)?;
            (l.into_iter().map(|(x, _)| x).collect(), None)
        }
    };
    if per_point.iter().any(|l| l.sigma.is_nan() || l.sigma <= 0.0) {
        return None;
    }
    let z: Vec<f64> = means
        .iter()
        .zip(&per_point)
        .map(|(m, l)| (m - l.centre) / l.sigma)
        .collect();
    let rules = spc::run_rules(&z);
    let col = figures::get(metric);
    let points = series
        .iter()
        .zip(per_point.iter().zip(z.iter().zip(rules)))
        .map(|(s, (l, (&z, rules)))| {
            let limit = limits.get(&s.run_id).and_then(|ls| {
                ls.iter()
                    .find(|l| l.metric == metric && l.condition == condition)
                    .or_else(|| ls.iter().find(|l| l.metric == metric && l.condition == "*"))
            });
            let cpk = limit.and_then(|lim| {
                spc::cpk_interval(
                    s.n.max(0) as usize,
                    s.mean,
                    s.std?,
                    lim.low,
                    lim.high,
                    settings.confidence,
                )
            });
            TrendPoint {
                lot: s.lot.clone(),
                ended_at: s.ended_at.clone(),
                n: s.n,
                mean: s.mean,
                std: s.std,
                centre: l.centre,
                lcl: l.lcl,
                ucl: l.ucl,
                z,
                rules,
                cpk,
            }
        })
        .collect();
    Some(TrendChart {
        condition: condition.to_string(),
        metric: metric.to_string(),
        label: col.map_or(metric.to_string(), |c| c.label()),
        unit: series[0].unit.clone(),
        chart: settings.chart,
        baseline: settings.baseline.min(series.len()),
        limits: per_point[0],
        moving_range,
        points,
    })
}

/// Columns of `trend.csv`, one row per chart and lot.
pub const TREND_COLUMNS: [&str; 18] = [
    "condition",
    "metric",
    "unit",
    "chart",
    "lot",
    "ended_at",
    "n",
    "mean",
    "std",
    "centre",
    "lcl",
    "ucl",
    "z",
    "rules",
    "cpk",
    "cpk_low",
    "cpk_high",
    "baseline",
];

fn num(v: Option<f64>) -> String {
    v.filter(|x| x.is_finite())
        .map_or(String::new(), |x| format!("{x}"))
}

/// The trend as CSV ([`TREND_COLUMNS`]).
pub fn trend_csv(t: &Trend) -> String {
    // Text cells by the one CSV-cell rule of every file the tool writes (src/report/csv.rs).
    use crate::report::csv::safe_cell;
    let mut w = ::csv::Writer::from_writer(Vec::new());
    let _ = w.write_record(TREND_COLUMNS);
    for c in &t.charts {
        let chart = match c.chart {
            ChartKind::Lots => "lots",
            ChartKind::Xbar => "xbar",
        };
        for p in &c.points {
            let rules: Vec<&str> = p.rules.iter().map(|r| r.name()).collect();
            let _ = w.write_record([
                safe_cell(&c.condition).into_owned(),
                c.metric.clone(),
                c.unit.clone(),
                chart.to_string(),
                safe_cell(&p.lot).into_owned(),
                p.ended_at.clone(),
                p.n.to_string(),
                num(Some(p.mean)),
                num(p.std),
                num(Some(p.centre)),
                num(Some(p.lcl)),
                num(Some(p.ucl)),
                num(Some(p.z)),
                rules.join(" "),
                num(p.cpk.map(|c| c.cpk)),
                num(p.cpk.map(|c| c.low)),
                num(p.cpk.map(|c| c.high)),
                c.baseline.to_string(),
            ]);
        }
    }
    String::from_utf8(w.into_inner().unwrap_or_default()).unwrap_or_default()
}

/// The SVG file name of a chart.
fn svg_name(c: &TrendChart) -> String {
    crate::report::file_safe_name(&format!("{}__{}.svg", c.condition, c.metric))
}

fn f3(v: Option<f64>) -> String {
    v.filter(|x| x.is_finite())
        .map_or("–".to_string(), |x| format!("{x:.3}"))
}

/// The trend's HTML page: a table of the charts (latest lot, rules fired, latest Cpk) and each
/// chart inlined.
pub fn trend_html(t: &Trend, svgs: &[String]) -> String {
    let mut h = String::new();
    let _ = writeln!(
        h,
        "<div class=\"wide\"><table><tr><th class=\"t\">condition</th><th class=\"t\">metric</th><th>unit</th><th>lots</th><th>centre</th><th>LCL</th><th>UCL</th>\
<th>latest mean</th><th>latest Cpk</th><th>Cpk interval</th><th class=\"t\">rules fired</th></tr>"
    );
    for c in &t.charts {
        let last = c.points.last();
        let fired: Vec<String> = c
            .fired()
            .iter()
            .map(|r| format!("{} ({})", r.name(), r.describe()))
            .collect();
        let cpk = last.and_then(|p| p.cpk);
        let _ = writeln!(
            h,
            "<tr{}><td class=\"t\">{}</td><td class=\"t\">{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td class=\"notes{}\">{}</td></tr>",
            if fired.is_empty() { "" } else { " class=\"fail\"" },
            escape(&c.condition),
            escape(&c.label),
            escape(&c.unit),
            c.points.len(),
            f3(Some(c.limits.centre)),
            f3(Some(c.limits.lcl)),
            f3(Some(c.limits.ucl)),
            f3(last.map(|p| p.mean)),
            f3(cpk.map(|c| c.cpk)),
            cpk.map_or("–".to_string(), |c| format!("{:.3} – {:.3}", c.low, c.high)),
            if fired.is_empty() { "" } else { " bad" },
            escape(&fired.join(", "))
        );
    }
    let _ = writeln!(h, "</table></div>");
    // The charts number their lots 1..N, oldest first: which lot is which, from the chart with the
    // most lots (every chart, when every lot measured every metric).
    let lots: Vec<(&str, &str)> =
        t.charts
            .iter()
            .max_by_key(|c| c.points.len())
            .map_or_else(Vec::new, |c| {
                c.points
                    .iter()
                    .map(|p| (p.ended_at.as_str(), p.lot.as_str()))
                    .collect()
            });
    let _ = write!(h, "<p>Lots, oldest first:");
    for (k, (ended, lot)) in lots.iter().enumerate() {
        let _ = write!(
            h,
            " {}&nbsp;{}&nbsp;({}){}",
            k + 1,
            escape(lot),
            escape(ended),
            if k + 1 < lots.len() { "," } else { "" }
        );
    }
    let _ = writeln!(h, "</p>");
    for l in &t.left_out {
        let _ = writeln!(h, "<p>{}</p>", escape(l));
    }
    let _ = writeln!(h, "<div class=\"plots\">");
    for svg in svgs {
        // Our own SVG (plotters escapes its text), inlined.
        let _ = writeln!(h, "<figure>{svg}</figure>");
    }
    let _ = writeln!(h, "</div>");
    // The run page's shell: one style for every page of the tool.
    crate::report::html::page(
        &format!("Trend over {} lots", t.lots),
        &format!(
            "control limits from the first {} lots · rules: Western Electric 1–4, Nelson 2, 3, 4, 7, 8",
            t.baseline
        ),
        &h,
    )
}

/// Writes `trend.csv`, `trend.json`, `index.html` and one SVG per chart under `charts/` into `out`.
pub fn write_trend(out: &Path, t: &Trend) -> Result<()> {
    let charts_dir = out.join("charts");
    std::fs::create_dir_all(&charts_dir)
        .map_err(|e| Error::io(&charts_dir, "a folder for the trend's charts", e))?;
    let mut svgs = Vec::with_capacity(t.charts.len());
    for c in &t.charts {
        let points: Vec<ChartPoint> = c
            .points
            .iter()
            .map(|p| ChartPoint {
                value: p.mean,
                centre: p.centre,
                lcl: p.lcl,
                ucl: p.ucl,
                rules: p.rules.iter().map(|r| r.name().to_string()).collect(),
            })
            .collect();
        let title = format!("{} · {}", c.condition, c.label);
        let svg = control_chart_svg(&title, &c.unit, &points)?;
        write_atomic(&charts_dir.join(svg_name(c)), svg.as_bytes())?;
        svgs.push(svg);
    }
    write_atomic(&out.join("trend.csv"), trend_csv(t).as_bytes())?;
    let json = serde_json::to_string_pretty(t).unwrap_or_default();
    write_atomic(&out.join("trend.json"), json.as_bytes())?;
    write_atomic(&out.join("index.html"), trend_html(t, &svgs).as_bytes())?;
    Ok(())
}
