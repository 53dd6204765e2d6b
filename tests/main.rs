//! Integration tests, one binary with a module per topic. Every check names its source beside it.

mod bad_inputs;
mod batch;
mod cli;
mod compare;
mod edge_cases;
mod figures;
mod formats;
mod formula_injection;
mod fuzz_props;
mod imd;
mod layout;
mod linearity;
mod path_traversal;
mod pipeline;
mod plan;
mod reference;
mod report;
mod resource_limits;
mod spc;
mod store;
mod sweep;
mod tolerances;
mod trust;
mod truth;
mod uncertainty;
mod windows_ref;
