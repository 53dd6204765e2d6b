//! The layout's one rule that a compiler does not check: the core stages (record, ingest, fit,
//! spectrum, analysis and the helpers under them) never reach up into the report, lot, command-line
//! or other-analysis modules, so the pipeline reads bottom-up and has no import cycles (DEVELOPERS.md,
//! "Map of src/"). A `use` that breaks it fails here with the file and line.

use std::path::{Path, PathBuf};

/// The core: files and folders of `src/` below the report and the lot work.
const CORE: &[&str] = &[
    "record.rs",
    "error.rs",
    "si.rs",
    "freq.rs",
    "stats.rs",
    "resources.rs",
    "analysis.rs",
    "dft",
    "ingest",
    "fit",
    "spectrum",
];

/// Modules above the core that it must not name.
const ABOVE: &[&str] = &[
    "crate::report",
    "crate::lot",
    "crate::cli",
    "crate::analyses",
    "crate::figures",
    "crate::verify",
    "crate::plan",
];

fn rust_files(p: &Path, out: &mut Vec<PathBuf>) {
    if p.is_dir() {
        let mut entries: Vec<_> = std::fs::read_dir(p)
            .unwrap()
            .map(|e| e.unwrap().path())
            .collect();
        entries.sort();
        for e in entries {
            rust_files(&e, out);
        }
    } else if p.extension().is_some_and(|e| e == "rs") {
        out.push(p.to_path_buf());
    }
}

#[test]
fn the_core_stages_do_not_import_upwards() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    for c in CORE {
        rust_files(&src.join(c), &mut files);
    }
    // The list names real files: a rename that empties it would make the check pass by default.
    assert!(files.len() >= 30, "{} core files found", files.len());
    let mut bad = Vec::new();
    for f in &files {
        let text = std::fs::read_to_string(f).unwrap();
        for (i, line) in text.lines().enumerate() {
            if line.trim_start().starts_with("//") {
                continue;
            }
            for above in ABOVE {
                if line.contains(above) {
                    bad.push(format!("{}:{}: {}", f.display(), i + 1, line.trim()));
                }
            }
        }
    }
    assert!(
        bad.is_empty(),
        "core files naming modules above them:\n{}",
        bad.join("\n")
    );
}
