//! What a lot run gives: each device's results under every condition (the result record, the
//! verdict, the finished output lines), and the lot's counts.

use serde::{Deserialize, Serialize};

use crate::analysis::{Analysis, Traces};
use crate::lot::limits::{Outcome, Verdict};

/// Error messages kept for the caller to print (the rest are counted).
pub const KEPT_ERRORS: usize = 100;

/// The output lines of one result (summary, failures, index page), made on the worker thread.
#[derive(Debug, Clone, PartialEq, Default)]
pub(crate) struct Lines {
    pub(crate) summary: Vec<u8>,
    pub(crate) failures: Vec<u8>,
    pub(crate) index: String,
}

/// One device under one condition.
#[derive(Debug, Clone, PartialEq)]
pub struct ConditionResult {
    /// The condition's name.
    pub condition: String,
    /// The plan's input frequency, hertz.
    pub fin_hz: f64,
    /// The plan's input level, dBFS.
    pub amplitude_dbfs: f64,
    /// The result record (an error record when the record could not be read or analysed).
    pub analysis: Analysis,
    /// The verdict.
    pub verdict: Verdict,
    /// The traces behind the result, kept only when the plots ask for this result.
    pub traces: Option<Traces>,
    pub(crate) lines: Lines,
}

/// One device's results, conditions in plan order.
#[derive(Debug, Clone, PartialEq)]
pub struct DeviceResult {
    /// The device.
    pub device: String,
    /// Its results.
    pub conditions: Vec<ConditionResult>,
}

/// What a lot came to.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct LotCounts {
    /// Devices.
    pub devices: usize,
    /// Device × condition results.
    pub results: usize,
    /// Results passing every limit.
    pub passed: usize,
    /// Results failing some limit.
    pub failed: usize,
    /// Results failing only inside guardbands.
    pub failed_guardband: usize,
    /// Results no limit applies to.
    pub untested: usize,
    /// Results whose record could not be read or analysed.
    pub errors: usize,
    /// The first [`KEPT_ERRORS`] error messages, "device / condition: message".
    pub error_messages: Vec<String>,
}

impl LotCounts {
    /// Counts a finished device's results.
    pub(crate) fn add(&mut self, device: &DeviceResult) {
        for c in &device.conditions {
            self.count(
                &device.device,
                &c.condition,
                c.verdict.outcome,
                &c.verdict.reason,
            );
        }
    }

    /// Counts one result (also for results read back from a shard's files).
    pub(crate) fn count(&mut self, device: &str, condition: &str, outcome: Outcome, reason: &str) {
        self.results += 1;
        match outcome {
            Outcome::Pass => self.passed += 1,
            Outcome::Fail => self.failed += 1,
            Outcome::FailGuardband => self.failed_guardband += 1,
            Outcome::Untested => self.untested += 1,
            Outcome::Error => {
                self.errors += 1;
                if self.error_messages.len() < KEPT_ERRORS {
                    self.error_messages
                        .push(format!("{device} / {condition}: {reason}"));
                }
            }
        }
    }
}
