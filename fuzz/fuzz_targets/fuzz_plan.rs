//! cargo-fuzz target: the bench-plan TOML parser on arbitrary text (bytes that are not UTF-8 are
//! replaced, as the file reader refuses them before the parser).
#![no_main]

use libfuzzer_sys::fuzz_target;
use std::path::Path;

#[allow(dead_code)]
#[path = "../../tests/fuzz_props/invariants.rs"]
mod invariants;

/// A path with a folder, so that listed record files are joined to it.
const PATH: &str = "bench/plan.toml";

fuzz_target!(|data: &[u8]| {
    let text = String::from_utf8_lossy(data);
    match spurline::BenchPlan::parse(&text, Path::new(PATH)) {
        Ok(plan) => invariants::check_plan(&plan, &text),
        Err(e) => invariants::check_plan_error(&e, PATH, &text),
    }
});
