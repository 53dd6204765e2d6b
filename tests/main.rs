//! Integration tests, one binary with a module per topic. Every check names its source beside it.

mod bad_inputs;
mod batch;
mod cli;
mod compare;
mod edge_cases;
mod figures;
mod fuzz_props;
mod imd;
mod linearity;
mod pipeline;
mod plan;
mod reference;
mod report;
mod sweep;
mod tolerances;
mod uncertainty;
mod windows_ref;
