//! Integration tests, one binary with a module per topic. Every check names its source beside it.

mod bad_inputs;
mod cli;
mod compare;
mod edge_cases;
mod fuzz_props;
mod pipeline;
mod reference;
mod report;
mod tolerances;
mod windows_ref;
