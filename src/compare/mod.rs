//! Board-revision comparison: per condition and metric, the statistics of two lot runs and a verdict.

pub mod stats;
