//! cargo-fuzz target: the text parser on arbitrary bytes. The first byte picks the resolution (0 and 33
//! included, to reach the setting check); the rest is the record.
#![no_main]

use libfuzzer_sys::fuzz_target;

#[allow(dead_code)]
#[path = "../../tests/fuzz_props/invariants.rs"]
mod invariants;

fuzz_target!(|data: &[u8]| {
    let Some((&b, rest)) = data.split_first() else {
        return;
    };
    let bits = u32::from(b % 34);
    match spurline::parse_text(rest, "fuzz.txt", bits) {
        Ok(codes) => assert!(!codes.is_empty()),
        Err(e) => invariants::check_error(&e, "fuzz.txt", rest),
    }
});
