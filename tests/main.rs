//! Integration tests, one binary with a module per topic. Every check names its source beside it.

mod cli;
mod linearity;
mod pipeline;
mod plan;
mod tolerances;
mod windows_ref;
