//! Regression test of the class "spreadsheet formula injection": text cells that start with `=`,
//! `+`, `-`, `@`, a tab or a carriage return (from device, condition and record names, titles, error
//! text) are written with a leading single quote to every CSV the tool writes; numbers stay numbers;
//! the tool reads its own files back to the names as given. (The rule is common practice for CSV
//! meant for spreadsheets, no source: a cell whose first character is one of these is evaluated.)

use std::path::Path;

use crate::batch::{files_under, make_lot, run_batch};

fn spurline() -> assert_cmd::Command {
    assert_cmd::Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

/// Every cell of every CSV file under `root` that would start a formula, as (file, cell).
fn formula_cells(root: &Path) -> Vec<(String, String)> {
    let mut bad = Vec::new();
    let mut csvs = 0;
    for f in files_under(root) {
        if f.extension().is_none_or(|e| e != "csv") {
            continue;
        }
        csvs += 1;
        let mut rdr = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .from_path(root.join(&f))
            .unwrap();
        for rec in rdr.records() {
            for cell in rec.unwrap().iter() {
                let risky = cell.starts_with(['=', '+', '-', '@', '\t', '\r']);
                if risky && cell.parse::<f64>().is_err() {
                    bad.push((f.display().to_string(), cell.to_string()));
                }
            }
        }
    }
    assert!(csvs > 0, "no CSV under {}", root.display());
    bad
}

#[test]
fn no_csv_cell_starts_a_formula_and_names_read_back() {
    let lot = make_lot();
    let p = lot.path();
    // Devices and a condition whose names start formulas; a limit on that condition so that
    // failures.csv and yield.csv carry it too.
    let records = p.join("records");
    std::fs::rename(records.join("d01"), records.join("=HYPERLINK(1)")).unwrap();
    std::fs::rename(records.join("d02"), records.join("+d02")).unwrap();
    std::fs::rename(records.join("d03"), records.join("-d03")).unwrap();
    std::fs::rename(records.join("d04"), records.join("@d04")).unwrap();
    for d in std::fs::read_dir(&records).unwrap() {
        let d = d.unwrap().path();
        let from = d.join("fin_10M_1.bin");
        std::fs::rename(&from, d.join("@SUM(1)_1.bin")).unwrap();
        let side = d.join("fin_10M_1.json");
        if side.exists() {
            std::fs::rename(&side, d.join("@SUM(1)_1.json")).unwrap();
        }
    }
    let plan = std::fs::read_to_string(p.join("plan.toml")).unwrap();
    let plan = plan
        .replace("name = \"fin_10M\"", "name = \"@SUM(1)\"")
        .replace("title = \"", "title = \"=1+1 ");
    std::fs::write(p.join("plan.toml"), plan).unwrap();
    std::fs::write(
        p.join("limits.csv"),
        "condition,metric,low,high,unit\n@SUM(1),spectrum.snr_db,200,,dB\n",
    )
    .unwrap();

    let out = p.join("out");
    let limits = p.join("limits.csv");
    let o = run_batch(p, &out, &["--limits", limits.to_str().unwrap()]);
    assert_eq!(
        o.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let bad = formula_cells(&out);
    assert!(bad.is_empty(), "cells that start a formula: {bad:?}");
    // The quote is there, and numbers (negative margins, THD in dBc) are written bare.
    let summary = std::fs::read_to_string(out.join("summary.csv")).unwrap();
    assert!(summary.contains("'=HYPERLINK(1),'@SUM(1),"), "{summary}");
    assert!(
        summary.contains(",-"),
        "negative numbers stay numbers: {summary}"
    );

    // The tool reads its own files back to the names as given: a comparison of the lot with
    // itself names the condition without the quote, in its JSON, and quotes it in its CSV.
    let cmp = p.join("cmp");
    spurline()
        .arg("compare")
        .arg(&out)
        .arg(&out)
        .arg("--out")
        .arg(&cmp)
        .assert()
        .code(0);
    let json = std::fs::read_to_string(cmp.join("comparison.json")).unwrap();
    assert!(json.contains("\"@SUM(1)\""), "{json}");
    assert!(!json.contains("'@SUM(1)"), "{json}");
    let bad = formula_cells(&cmp);
    assert!(bad.is_empty(), "cells that start a formula: {bad:?}");

    // A limit table the tool writes reads back to the same conditions.
    let proposed = p.join("proposed.csv");
    spurline()
        .arg("limits")
        .arg(&out)
        .arg("--out")
        .arg(&proposed)
        .assert()
        .code(0);
    let text = std::fs::read_to_string(&proposed).unwrap();
    assert!(text.contains("'@SUM(1),"), "{text}");
    let again = run_batch(
        p,
        &p.join("again"),
        &["--limits", proposed.to_str().unwrap()],
    );
    assert!(
        matches!(again.status.code(), Some(0 | 1)),
        "{}",
        String::from_utf8_lossy(&again.stderr)
    );
}

#[test]
fn the_cell_rule() {
    // Common practice for CSV opened in spreadsheets, no source.
    for (text, written) in [
        ("=1+1", "'=1+1"),
        ("+d02", "'+d02"),
        ("-d03", "'-d03"),
        ("@SUM(1)", "'@SUM(1)"),
        ("\tx", "'\tx"),
        ("\rx", "'\rx"),
        ("'=x", "''=x"),
        ("'plain", "'plain"),
        ("''=x", "'''=x"),
        ("-3.5", "-3.5"),
        ("+1e-3", "+1e-3"),
        ("-inf", "'-inf"),
        ("plain", "plain"),
        ("", ""),
    ] {
        assert_eq!(spurline::safe_csv_cell(text), written, "{text:?}");
        assert_eq!(spurline::read_csv_cell(written), text, "{written:?}");
    }
}
