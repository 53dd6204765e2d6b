//! cargo-fuzz target: the delimited-record parser on arbitrary bytes. The first three bytes pick the
//! resolution, the column (by index or by one of a few names) and the delimiter (given or detected).
#![no_main]

use libfuzzer_sys::fuzz_target;
use spurline::ColumnSel;

#[allow(dead_code)]
#[path = "../../tests/fuzz_props/invariants.rs"]
mod invariants;

const NAMES: [&str; 4] = ["code", "a", "", "h1"];
const DELIMITERS: [u8; 7] = [b',', b';', b'\t', b' ', b'|', b'x', b'"'];

fuzz_target!(|data: &[u8]| {
    let [b, c, d, rest @ ..] = data else {
        return;
    };
    let bits = u32::from(b % 34);
    let column = if c & 0x80 == 0 {
        ColumnSel::Index(usize::from(c % 8))
    } else {
        ColumnSel::Name(NAMES[usize::from(c % 4)].to_string())
    };
    let delimiter = (d & 0x80 != 0).then(|| DELIMITERS[usize::from(d % 7)]);
    match spurline::parse_delimited(rest, "fuzz.csv", bits, &column, delimiter) {
        Ok(codes) => assert!(!codes.is_empty()),
        Err(e) => invariants::check_error(&e, "fuzz.csv", rest),
    }
});
