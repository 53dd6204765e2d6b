//! Integration tests, one binary with a module per topic. Every check names its source beside it.

mod batch;
mod cli;
mod compare;
mod imd;
mod linearity;
mod pipeline;
mod plan;
mod reference;
mod report;
mod sweep;
mod tolerances;
mod windows_ref;
