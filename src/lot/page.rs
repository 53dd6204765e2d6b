//! The lot's page (`index.html` of a batch run or a merge), in the page shell every page shares: the
//! yield per condition and per limited metric, the distribution of each limited metric under each
//! condition with its limits and guardbands drawn, the failing results linked to their rows, and the
//! table of every result, whose failing rows link to the device's plots.
//!
//! Everything on the page comes from what a merge of shards can read back from the lot files (the
//! summary rows, the limits as applied, the yield counts, the finished table rows), so a merged lot's
//! page is byte for byte an unsharded run's. Every text is escaped.

use std::fmt::Write as _;

use super::files::{device_folder, plot_stems};
use crate::figures;
use crate::lot::limits::{CheckOutcome, Limit, LimitTable, Outcome};
use crate::report::escape;
use crate::report::svg::{distribution_svg, Band, LimitLines};

/// Where the page's table of every result starts and ends (the merge of shards reads its rows back).
pub(crate) const TBODY_OPEN: &str = "<tbody id=\"all\">\n";
/// The end of that table's body.
pub(crate) const TBODY_CLOSE: &str = "</tbody>\n";

/// Percent-encodes a path segment for a link.
pub(crate) fn url_segment(s: &str) -> String {
    let mut out = String::new();
    for b in s.bytes() {
        if b.is_ascii_alphanumeric() || b"-_.~".contains(&b) {
            out.push(b as char);
        } else {
            let _ = write!(out, "%{b:02X}");
        }
    }
    out
}

/// The anchor of one result's row: its device folder and condition stem, both link-safe, so that it
/// is the same whichever shard wrote the row.
pub(crate) fn row_anchor(device: &str, stem: &str) -> String {
    format!(
        "{}/{}",
        url_segment(&device_folder(device)),
        url_segment(stem)
    )
}

/// One limited metric under one condition, and the values the lot gave it.
#[derive(Debug, Clone, PartialEq)]
struct Limited {
    limit: Limit,
    /// The metric's column in the summary rows.
    column: Option<usize>,
    /// The column of its one-sigma uncertainty, when the limit has a guardband in sigmas.
    sigma_column: Option<usize>,
    values: Vec<(f64, Band)>,
    /// Results judged under the condition that had no value for the metric.
    no_value: usize,
}

#[derive(Debug, Clone, PartialEq)]
struct PageCondition {
    name: String,
    stem: String,
    limited: Vec<Limited>,
}

/// A failing result, for the list that links to its row.
#[derive(Debug, Clone, PartialEq)]
struct Failing {
    device: String,
    condition: usize,
    outcome: Outcome,
    reason: String,
}

/// One row of the yield table.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct YieldLine {
    pub(crate) condition: String,
    /// `None` for the condition's whole results.
    pub(crate) metric: Option<String>,
    pub(crate) tested: usize,
    pub(crate) passed: usize,
    pub(crate) failed: usize,
    pub(crate) guardband: usize,
    pub(crate) errors: usize,
}

/// What the page shows beside the finished table rows, gathered result by result.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct LotPage {
    conditions: Vec<PageCondition>,
    failing: Vec<Failing>,
    limits_csv: Option<String>,
}

/// How many failing results the page lists by name (the table below has every one).
const FAILING_LISTED: usize = 500;

impl LotPage {
    /// A page for the conditions (plan order) of a lot whose summary rows have `columns`, judged by
    /// `limits` (if any).
    pub(crate) fn new(
        conditions: &[String],
        columns: &[String],
        limits: Option<&LimitTable>,
    ) -> LotPage {
        let stems = plot_stems(conditions);
        LotPage {
            conditions: conditions
                .iter()
                .zip(stems)
                .map(|(c, stem)| PageCondition {
                    name: c.clone(),
                    stem,
                    limited: limits
                        .map(|t| {
                            t.for_condition(c)
                                .into_iter()
                                .map(|l| Limited {
                                    limit: l.clone(),
                                    column: columns.iter().position(|k| *k == l.metric),
                                    sigma_column: figures::get(&l.metric)
                                        .filter(|_| l.guard_sigmas > 0.0)
                                        .and_then(|c| {
                                            c.figure.uncertainty_key(c.order.unwrap_or(0))
                                        })
                                        .and_then(|u| columns.iter().position(|k| *k == u)),
                                    values: Vec::new(),
                                    no_value: 0,
                                })
                                .collect()
                        })
                        .unwrap_or_default(),
                })
                .collect(),
            failing: Vec::new(),
            limits_csv: limits.map(LimitTable::to_csv),
        }
    }

    /// The limits as applied, as the lot folder's `limits.csv` holds them (`None` without a table).
    pub(crate) fn limits_csv(&self) -> Option<&str> {
        self.limits_csv.as_deref()
    }

    /// The index of a condition by name.
    pub(crate) fn condition_index(&self, name: &str) -> Option<usize> {
        self.conditions.iter().position(|c| c.name == name)
    }

    /// Adds one result: its summary row (one CSV line under the lot's header), verdict and reason.
    pub(crate) fn add(
        &mut self,
        condition: usize,
        device: &str,
        summary_row: &[u8],
        outcome: Outcome,
        reason: &str,
    ) {
        if matches!(
            outcome,
            Outcome::Fail | Outcome::FailGuardband | Outcome::Error
        ) {
            self.failing.push(Failing {
                device: device.to_string(),
                condition,
                outcome,
                reason: reason.to_string(),
            });
        }
        let Some(c) = self.conditions.get_mut(condition) else {
            return;
        };
        if matches!(outcome, Outcome::Error | Outcome::Untested) || c.limited.is_empty() {
            return;
        }
        let mut reader = ::csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .from_reader(summary_row);
        let record = reader.records().next().and_then(|r| r.ok());
        for l in &mut c.limited {
            let number = |column: Option<usize>| {
                column
                    .and_then(|k| record.as_ref().and_then(|r| r.get(k)))
                    .and_then(|cell| cell.parse::<f64>().ok())
                    .filter(|v| v.is_finite())
            };
            let value = number(l.column);
            let sigma = number(l.sigma_column);
            match value {
                Some(v) => {
                    let band = match l.limit.check(Some(v), sigma).outcome {
                        CheckOutcome::Pass => Band::Inside,
                        CheckOutcome::Guardband => Band::Guardband,
                        CheckOutcome::Fail | CheckOutcome::NoValue => Band::Outside,
                    };
                    l.values.push((v, band));
                }
                None => l.no_value += 1,
            }
        }
    }

    /// The whole page: `counts_line` (already escaped) under the title, the yield table, the
    /// distributions, the failing results, then the table of every result (`rows`, finished rows).
    pub(crate) fn render(
        &self,
        title: &str,
        counts_line: &str,
        yields: &[YieldLine],
        rows: &str,
    ) -> String {
        let mut b = String::new();
        let limits_link = if self.limits_csv.is_some() {
            " · <a href=\"limits.csv\">limits.csv</a>"
        } else {
            ""
        };
        let _ = writeln!(
            b,
            "<p class=\"files\"><a href=\"summary.csv\">summary.csv</a> · <a href=\"failures.csv\">\
             failures.csv</a> · <a href=\"yield.csv\">yield.csv</a>{limits_link}</p>"
        );
        self.yield_table(&mut b, yields);
        self.distributions(&mut b);
        self.failing_list(&mut b);
        let mut heads = String::new();
        for f in figures::headline() {
            let _ = write!(
                heads,
                "<th>{}<span class=\"u\">{}</span></th>",
                escape(f.label),
                escape(f.unit.symbol())
            );
        }
        let _ = write!(
            b,
            "<h2 id=\"results\">Every result</h2>\n<div class=\"wide\">\n<table id=\"lot\">\n\
             <thead><tr><th class=\"t\">device</th><th class=\"t\">condition</th>\
             <th class=\"t\">verdict</th><th class=\"t\">reason</th>{heads}<th class=\"t\">plots</th>\
             </tr></thead>\n{TBODY_OPEN}{rows}{TBODY_CLOSE}</table>\n</div>\n"
        );
        crate::report::html::page(title, counts_line, &b)
    }

    fn yield_table(&self, b: &mut String, yields: &[YieldLine]) {
        if yields.is_empty() {
            return;
        }
        b.push_str(
            "<h2 id=\"yield\">Yield</h2>\n<div class=\"wide\">\n<table id=\"yields\">\n<thead><tr>\
             <th class=\"t\">condition</th><th class=\"t\">metric</th><th>tested</th><th>passed</th>\
             <th>failed</th><th>in guardband</th><th>errors</th><th>yield</th><th class=\"t\"></th>\
             </tr></thead>\n<tbody>\n",
        );
        for y in yields {
            // A metric by its label, with the column name it has in the CSV files beneath.
            let (class, metric) = match &y.metric {
                None => ("whole", "every limit".to_string()),
                Some(m) => match figures::get(m) {
                    Some(f) => (
                        "metric",
                        format!(
                            "{} <span class=\"u\">{}</span>",
                            escape(&f.label()),
                            escape(m)
                        ),
                    ),
                    None => ("metric", escape(m)),
                },
            };
            let (pct, bar) = if y.tested == 0 {
                ("—".to_string(), String::new())
            } else {
                let p = 100.0 * y.passed as f64 / y.tested as f64;
                (
                    format!("{p:.1} %"),
                    format!("<span class=\"bar\"><span style=\"width:{p:.1}%\"></span></span>"),
                )
            };
            let _ = writeln!(
                b,
                "<tr class=\"{class}\"><td class=\"t\">{}</td><td class=\"t\">{}</td><td>{}</td>\
                 <td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td class=\"t\">{bar}</td></tr>",
                escape(&y.condition),
                metric,
                y.tested,
                y.passed,
                y.failed,
                y.guardband,
                y.errors,
                escape(&pct),
            );
        }
        b.push_str("</tbody>\n</table>\n</div>\n");
    }

    fn distributions(&self, b: &mut String) {
        if self.conditions.iter().all(|c| c.limited.is_empty()) {
            return;
        }
        b.push_str(
            "<h2 id=\"distributions\">Distributions against the limits</h2>\n<p class=\"note\">\
             Bars: results inside the guarded limits (teal), inside a guardband (amber), outside the \
             limits (red). Solid lines: the stated limits; dashed: the limits tightened by the \
             guardband.</p>\n",
        );
        for c in &self.conditions {
            if c.limited.is_empty() {
                continue;
            }
            let _ = writeln!(b, "<h3>{}</h3>\n<div class=\"dists\">", escape(&c.name));
            for l in &c.limited {
                let label = figures::get(&l.limit.metric)
                    .map(|f| f.label())
                    .unwrap_or_else(|| l.limit.metric.clone());
                let unit = l.limit.unit.symbol();
                let axis = if unit.is_empty() {
                    label.clone()
                } else {
                    format!("{label} ({unit})")
                };
                let marks = LimitLines {
                    low: l.limit.low,
                    high: l.limit.high,
                    guardband: l.limit.guardband,
                };
                let title = format!("{label} · {}", c.name);
                let body = match distribution_svg(&title, &axis, &l.values, &marks) {
                    Ok(svg) => crate::report::html::inline_svg("", &svg),
                    Err(e) => format!("<p>{}</p>", escape(&e.to_string())),
                };
                let (inside, guard, outside) = l.values.iter().fold((0, 0, 0), |n, v| match v.1 {
                    Band::Inside => (n.0 + 1, n.1, n.2),
                    Band::Guardband => (n.0, n.1 + 1, n.2),
                    Band::Outside => (n.0, n.1, n.2 + 1),
                });
                let sigmas = if l.limit.guard_sigmas > 0.0 {
                    format!(
                        "; each result's guardband also holds {} σ of its own uncertainty \
                         (dashed: the fixed part)",
                        crate::report::svg::trim_number(l.limit.guard_sigmas, 3)
                    )
                } else {
                    String::new()
                };
                let missing = if l.no_value > 0 {
                    format!(", {} without a value", l.no_value)
                } else {
                    String::new()
                };
                let _ = writeln!(
                    b,
                    "<figure class=\"dist\" data-metric=\"{}\">\n{body}\n<figcaption>{} results: {inside} \
                     inside, {guard} in a guardband, {outside} outside{}{}</figcaption>\n</figure>",
                    escape(&l.limit.metric),
                    l.values.len(),
                    escape(&missing),
                    escape(&sigmas)
                );
            }
            b.push_str("</div>\n");
        }
    }

    fn failing_list(&self, b: &mut String) {
        if self.failing.is_empty() {
            return;
        }
        let _ = writeln!(
            b,
            "<h2 id=\"failing\">Failing results ({})</h2>\n<ul class=\"failing\">",
            self.failing.len()
        );
        for f in self.failing.iter().take(FAILING_LISTED) {
            let c = &self.conditions[f.condition];
            let _ = writeln!(
                b,
                "<li class=\"{}\"><a href=\"#{}\">{} / {}</a> · {}: {}</li>",
                f.outcome.as_str(),
                escape(&row_anchor(&f.device, &c.stem)),
                escape(&f.device),
                escape(&c.name),
                f.outcome.as_str(),
                escape(&f.reason)
            );
        }
        if self.failing.len() > FAILING_LISTED {
            let _ = writeln!(
                b,
                "<li>… and {} more in the table below and in failures.csv</li>",
                self.failing.len() - FAILING_LISTED
            );
        }
        b.push_str("</ul>\n");
    }
}
