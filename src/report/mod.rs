//! The report stage: every output format is made from the one result record, [`crate::analysis::Analysis`].

pub mod csv;
pub mod json;
pub mod text;
pub mod units;
