//! Limit tables, verdicts and limit proposals (being split by job: see `table.rs`).

mod table;
pub use table::*;
