//! cargo-fuzz target: the limit-table CSV parser on arbitrary text. The first byte picks the scope the
//! table is resolved against (the fixture lot's two conditions, one condition, three with 1, 10 and
//! 100 harmonics, or none); the rest is the table (bytes that are not UTF-8 are replaced, as the file
//! reader refuses them before the parser).
#![no_main]

use libfuzzer_sys::fuzz_target;
use spurline::{Catalogue, LimitTable};
use std::sync::OnceLock;

#[allow(dead_code)]
#[path = "../../tests/fuzz_props/invariants.rs"]
mod invariants;

const PATH: &str = "bench/limits.csv";

type Scope = Vec<(String, Catalogue)>;

/// The scopes, built once: catalogues are lists of a few hundred metric names.
fn scopes() -> &'static [Scope; 4] {
    static S: OnceLock<[Scope; 4]> = OnceLock::new();
    S.get_or_init(|| {
        let of = |list: &[(&str, u32)]| -> Scope {
            list.iter()
                .map(|&(n, h)| (n.to_string(), Catalogue::for_harmonics(h)))
                .collect()
        };
        [
            of(&[("fin_10M", 5), ("fin_31M", 7)]),
            of(&[("a", 10)]),
            of(&[("f1", 1), ("f2", 10), ("f3", 100)]),
            Vec::new(),
        ]
    })
}

fuzz_target!(|data: &[u8]| {
    let Some((&pick, rest)) = data.split_first() else {
        return;
    };
    let scope = &scopes()[usize::from(pick % 4)];
    let text = String::from_utf8_lossy(rest);
    match LimitTable::parse(&text, PATH, scope) {
        Ok(t) => invariants::check_limits(&t, PATH, &text, scope),
        Err(e) => invariants::check_limits_error(&e, PATH, &text),
    }
});
