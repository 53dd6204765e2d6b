//! Integration tests, one binary with a module per topic. Every check names its source beside it.

mod cli;
mod compare;
mod imd;
mod pipeline;
mod reference;
mod report;
mod tolerances;
mod windows_ref;
