//! Verdicts: one limit applied to one value gives a check (pass, fail, inside the guardband, no value),
//! a result's checks give its verdict with a one-sentence reason.

use std::str::FromStr;

use serde::{Deserialize, Serialize};

use super::{format_value, Limit, LimitTable};
use crate::figures::Unit;

/// Which stated limit a check is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
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

/// Outcome of one limit on one result.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
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
    pub unit: Unit,
    /// Low limit.
    pub low: Option<f64>,
    /// High limit.
    pub high: Option<f64>,
    /// The guardband applied to this result, in the metric's unit: the limit's fixed guardband plus
    /// `guard_sigmas · sigma` (the fixed one alone when the record states no σ).
    pub guardband: f64,
    /// The limit's guardband in standard uncertainties of the record's own measurement (0: none).
    pub guard_sigmas: f64,
    /// The record's one-sigma standard uncertainty of the value, when it states one (read only for a
    /// limit with `guard_sigmas`).
    pub sigma: Option<f64>,
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
    /// Applies the limit to a value whose one-sigma standard uncertainty is `sigma` (used only when
    /// the limit has `guard_sigmas`). With a sigma guardband the value passes only when it clears the
    /// limit by `guardband + guard_sigmas · sigma`; a value inside the stated limits whose record
    /// states no σ cannot be shown to clear it and falls inside the guardband.
    pub fn check(&self, value: Option<f64>, sigma: Option<f64>) -> Check {
        let sigma = sigma.filter(|s| self.guard_sigmas > 0.0 && s.is_finite() && *s >= 0.0);
        let guardband = self.guardband + sigma.map_or(0.0, |s| self.guard_sigmas * s);
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
            Some(m) if m < guardband => CheckOutcome::Guardband,
            Some(_) if self.guard_sigmas > 0.0 && sigma.is_none() => CheckOutcome::Guardband,
            Some(_) => CheckOutcome::Pass,
        };
        Check {
            row: self.row,
            metric: self.metric.clone(),
            unit: self.unit,
            low: self.low,
            high: self.high,
            guardband,
            guard_sigmas: self.guard_sigmas,
            sigma,
            value,
            bound: nearest.map(|n| n.0),
            margin,
            outcome,
        }
    }
}

/// The verdict on one result.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
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

    /// Every outcome, in the order of the docs.
    pub const ALL: [Outcome; 5] = [
        Outcome::Pass,
        Outcome::Fail,
        Outcome::FailGuardband,
        Outcome::Untested,
        Outcome::Error,
    ];
}

impl FromStr for Outcome {
    type Err = crate::error::Error;

    /// Parses a verdict as the outputs write it ([`Outcome::as_str`]).
    fn from_str(s: &str) -> crate::error::Result<Outcome> {
        Outcome::ALL
            .into_iter()
            .find(|o| o.as_str() == s)
            .ok_or_else(|| {
                crate::error::Error::setting(
                    "verdict",
                    "pass, fail, fail_guardband, untested or error",
                    format!("'{s}'"),
                )
            })
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
        (CheckOutcome::Guardband, Some(v), Some(b)) if c.guard_sigmas > 0.0 => {
            let fixed = c.guardband - c.sigma.map_or(0.0, |s| c.guard_sigmas * s);
            let plus = if fixed > 0.0 {
                format!(" (with the {} {} guardband)", format_value(fixed), c.unit)
            } else {
                String::new()
            };
            match c.sigma {
                Some(s) => format!(
                    "{} {} {} is within {}σ of the {} limit {} {}{plus}: σ = {} {} from the \
                     record, margin {} {} < {} {}",
                    c.metric,
                    format_value(v),
                    c.unit,
                    format_value(c.guard_sigmas),
                    b.as_str(),
                    format_value(limit(b).unwrap_or(0.0)),
                    c.unit,
                    format_value(s),
                    c.unit,
                    format_value(c.margin.unwrap_or(0.0)),
                    c.unit,
                    format_value(c.guardband),
                    c.unit
                ),
                None => format!(
                    "{} {} {} passes the {} limit {} {} but the record states no uncertainty \
                     to clear its {}σ guardband{plus}",
                    c.metric,
                    format_value(v),
                    c.unit,
                    b.as_str(),
                    format_value(limit(b).unwrap_or(0.0)),
                    c.unit,
                    format_value(c.guard_sigmas),
                ),
            }
        }
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

impl LimitTable {
    /// The verdict on one result under a condition; `value` gives the result's value of a flattened
    /// key by its full name: a metric, and for a limit with `guard_sigmas` the metric's uncertainty
    /// (`spectrum.uncertainty.snr_db` for `spectrum.snr_db`).
    pub fn judge(&self, condition: &str, value: impl Fn(&str) -> Option<f64>) -> Verdict {
        let checks = self
            .for_condition(condition)
            .into_iter()
            .map(|l| {
                let sigma = if l.guard_sigmas > 0.0 {
                    super::table::uncertainty_key(&l.metric).and_then(|k| value(&k))
                } else {
                    None
                };
                l.check(value(&l.metric), sigma)
            })
            .collect();
        Verdict::from_checks(checks)
    }
}
