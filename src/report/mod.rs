//! The report stage: every output format is made from the one result record, [`crate::analysis::Analysis`]
//! (and, for the plots, its [`crate::analysis::Traces`]).
//!
//! A run's folder: `index.html` (the page), `summary.csv` (one row per record), `results.json`, and per
//! device `<device>/summary.csv`, `<device>/results.json` and per record `<record>-spectrum.svg`,
//! `<record>-residual.svg`, `<record>-histogram.svg`. Same inputs give byte-identical files.

pub mod csv;
pub mod html;
pub mod json;
pub mod pages;
pub mod svg;
pub mod text;
pub mod units;
mod write;
pub(crate) use write::{output_error, plot_kinds, unique_name, write_plots_as};

pub use html::escape;
pub use svg::PlotOptions;
pub use write::{
    file_safe_name, write_atomic, write_device_summary, write_record_plots, write_run_report,
};
