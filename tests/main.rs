//! Integration tests, one binary with a module per topic. Every check names its source beside it.

mod batch;
mod cli;
mod pipeline;
mod tolerances;
mod windows_ref;
