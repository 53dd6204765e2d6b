//! Regression tests of the class "a user's number meets an index or a float's range": every numeric
//! setting is bounded and refused with the setting, the value and the allowed range, never printed as
//! garbage, never a panic or an arithmetic overflow (the test binary is built with overflow checks).
//! (Facts of the trade, no source: an f64 holds whole numbers exactly only up to 2^53, so a cycle
//! count J of a 2^60-sample plan cannot be printed exactly; a hand-edited summary cell may hold any
//! number a float can.)

use std::path::Path;

use crate::batch::{make_lot, run_batch};

fn spurline() -> assert_cmd::Command {
    assert_cmd::Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

/// Runs the binary in `dir`; asserts it did not panic and returns (exit code, stdout, stderr).
fn run(dir: &Path, args: &[&str]) -> (Option<i32>, String, String) {
    let o = spurline().current_dir(dir).args(args).output().unwrap();
    let (out, err) = (
        String::from_utf8_lossy(&o.stdout).to_string(),
        String::from_utf8_lossy(&o.stderr).to_string(),
    );
    assert!(
        !err.contains("panicked") && !err.contains("overflow"),
        "{args:?}: {err}"
    );
    (o.status.code(), out, err)
}

/// Asserts a refusal with exit status 2 whose message names the setting, the value and the range.
fn refused(dir: &Path, args: &[&str], key: &str, value: &str, range: &str) {
    let (code, _, err) = run(dir, args);
    assert_eq!(code, Some(2), "{args:?}: {err}");
    for want in [format!("'{key}'"), value.to_string(), range.to_string()] {
        assert!(err.contains(&want), "{args:?}: wants {want}: {err}");
    }
}

#[test]
fn huge_settings_are_refused_with_their_range() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path();
    let max = u64::MAX.to_string();
    // 2^60 samples: J and the frequencies would round (above 2^53).
    refused(
        p,
        &[
            "plan",
            "--fs",
            "100M",
            "--samples",
            "1152921504606846976",
            "--fin",
            "10M",
        ],
        "samples",
        "1152921504606846976",
        "4..=1099511627776",
    );
    refused(
        p,
        &[
            "plan",
            "--fs",
            "1e308",
            "--samples",
            "4096",
            "--fin",
            "1e307",
        ],
        "sample_rate_hz",
        "1e308",
        "1e15",
    );
    refused(
        p,
        &[
            "plan",
            "--fs",
            "100M",
            "--samples",
            "4096",
            "--fin",
            "10M",
            "--histogram-bits",
            "12",
            "--dnl-uncertainty",
            "1e-300",
        ],
        "dnl_uncertainty_lsb",
        "0.0000",
        "0.001..=10",
    );
    spurline()
        .current_dir(p)
        .args(["synth", "--bits", "12", "--fs", "100M", "--samples", "4096"])
        .args(["--coherent-near", "10M", "--noise-rms", "0.5"])
        .args(["--output", "r.bin", "--layout", "i16le"])
        .assert()
        .success();
    refused(
        p,
        &["analyze", "r.bin", "--guard-bins", &max],
        "guard_bins",
        &max,
        "0..=1000",
    );
    refused(
        p,
        &["imd", "r.bin", "--guard-bins", &max],
        "guard_bins",
        &max,
        "0..=1000",
    );
    refused(
        p,
        &["interleave", "r.bin", "--channels", &max],
        "channels",
        &max,
        "2..=4096",
    );
    refused(
        p,
        &["synth", "--bits", "12", "--fs", "100M", "--samples", &max]
            .into_iter()
            .chain(["--fin", "10M", "--output", "s.bin"])
            .collect::<Vec<_>>(),
        "samples",
        &max,
        "4..=67108864",
    );
    // A frequency below zero is a setting outside its range, not a record problem.
    refused(
        p,
        &[
            "synth",
            "--bits",
            "12",
            "--fs",
            "100M",
            "--samples",
            "4096",
            "--fin=-10M",
            "--output",
            "s.bin",
        ],
        "frequency",
        "-10000000",
        "(0, 50000000)",
    );
    // The largest accepted values still work.
    let (code, _, err) = run(p, &["analyze", "r.bin", "--guard-bins", "1000"]);
    assert!(code == Some(2) || code == Some(0), "{err}");
    let (code, out, err) = run(
        p,
        &[
            "plan",
            "--fs",
            "100M",
            "--samples",
            "1099511627776",
            "--fin",
            "10M",
        ],
    );
    assert_eq!(code, Some(0), "{err}");
    // J = 109951162777 or a neighbour: odd and coprime with 2^40, printed exactly (below 2^53).
    assert!(out.contains("J = 10995116277"), "{out}");
}

/// Rewrites the numeric cells of `columns` (every figure column when empty) in every other row of a
/// run's `summary.csv`.
fn poison(run: &Path, columns: &[&str], value: &str) {
    let path = run.join("summary.csv");
    let mut r = csv::ReaderBuilder::new()
        .has_headers(false)
        .from_path(&path)
        .unwrap();
    let mut rows: Vec<Vec<String>> = r
        .records()
        .map(|x| x.unwrap().iter().map(str::to_string).collect())
        .collect();
    let head = rows[0].clone();
    for (k, row) in rows.iter_mut().enumerate().skip(1) {
        if k % 2 == 1 {
            for (i, cell) in row.iter_mut().enumerate() {
                let all = columns.is_empty() && i >= 10;
                if (all || columns.contains(&head[i].as_str())) && cell.parse::<f64>().is_ok() {
                    *cell = value.to_string();
                }
            }
        }
    }
    let mut w = csv::Writer::from_path(&path).unwrap();
    for row in &rows {
        w.write_record(row).unwrap();
    }
    w.flush().unwrap();
}

fn copy_files(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        if e.path().is_file() {
            std::fs::copy(e.path(), to.join(e.file_name())).unwrap();
        }
    }
}

#[test]
fn extreme_summary_cells_never_panic_compare_sweep_or_limits() {
    let lot = make_lot();
    let p = lot.path();
    let a = p.join("a");
    run_batch(p, &a, &[]);
    let out = |name: &str| p.join(name).to_str().unwrap().to_string();
    let sa = a.to_str().unwrap();
    for (i, (value, columns)) in [
        ("1e308", vec![]),
        ("-1e308", vec![]),
        ("-1e308", vec!["fit.frequency_hz"]),
        ("-1e308", vec!["fit.amplitude_dbfs"]),
        ("-1e19", vec!["fit.amplitude_dbfs"]),
    ]
    .into_iter()
    .enumerate()
    {
        let b = p.join(format!("b{i}"));
        copy_files(&a, &b);
        poison(&b, &columns, value);
        let sb = b.to_str().unwrap();
        let (code, stdout, err) = run(p, &["compare", sa, sb, "--out", &out(&format!("c{i}"))]);
        assert!(matches!(code, Some(0 | 1)), "{value}: {err}");
        if columns.is_empty() {
            // Cells of 1e308 overflow the mean: said, not a statistic of infinities.
            assert!(
                stdout.contains("too large for the statistics"),
                "{value}: {stdout}"
            );
        }
        let (code, _, err) = run(p, &["sweep", sb, "--out", &out(&format!("s{i}"))]);
        assert_eq!(code, Some(0), "{value} {columns:?}: {err}");
        let (code, _, err) = run(p, &["limits", sb]);
        assert!(matches!(code, Some(0..=2)), "{value}: {err}");
    }
}
