//! The results store: the fixture lot recorded through `batch --store` and `record`, read back and
//! compared with the lot's own files cell for cell; the same lot refused a second time; a lot whose
//! transaction fails midway leaves nothing behind; concurrent writers each land exactly once; the
//! queries users ask. The same checks run on SQLite (always, a temporary file) and on PostgreSQL
//! when `SPURLINE_TEST_PG` holds a connection string to a throw-away server (tests/cluster/postgres.sh
//! starts one; without it they print SKIPPED, and fail when `SPURLINE_REQUIRE_PG` is set).

use assert_cmd::Command;
use spurline::figures;
use spurline::{LotSummary, Store, StoreUrl};
use std::path::{Path, PathBuf};
use std::sync::OnceLock;

fn spurline() -> Command {
    Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures/batch")
        .join(name)
}

/// The fixture lot's records, written once for every test here.
fn records() -> &'static Path {
    static DIR: OnceLock<tempfile::TempDir> = OnceLock::new();
    DIR.get_or_init(|| {
        let dir = tempfile::tempdir().unwrap();
        for f in ["plan.toml", "limits.csv"] {
            std::fs::copy(fixture(f), dir.path().join(f)).unwrap();
        }
        let out = std::process::Command::new("sh")
            .arg(fixture("make_records.sh"))
            .arg(dir.path())
            .env("SPURLINE", assert_cmd::cargo::cargo_bin!("spurline"))
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        dir
    })
    .path()
}

/// A PostgreSQL database for one test: a fresh database on the server `SPURLINE_TEST_PG` names.
fn pg_store(name: &str) -> Option<String> {
    let Ok(base) = std::env::var("SPURLINE_TEST_PG") else {
        assert!(
            std::env::var_os("SPURLINE_REQUIRE_PG").is_none(),
            "SPURLINE_REQUIRE_PG is set but SPURLINE_TEST_PG is not"
        );
        eprintln!("SKIPPED {name} on PostgreSQL: SPURLINE_TEST_PG is not set");
        return None;
    };
    let mut admin = postgres::Client::connect(&format!("{base} dbname=postgres"), postgres::NoTls)
        .expect("the test server named by SPURLINE_TEST_PG");
    // Two statements: one query string of both would be one implicit transaction, which
    // PostgreSQL refuses for DROP/CREATE DATABASE.
    admin
        .batch_execute(&format!("DROP DATABASE IF EXISTS {name}"))
        .unwrap();
    admin
        .batch_execute(&format!("CREATE DATABASE {name}"))
        .unwrap();
    Some(format!("{base} dbname={name}"))
}

/// Runs `check` on a SQLite file and, when a server is given, on PostgreSQL.
fn on_both(name: &str, check: impl Fn(&str)) {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("store.sqlite");
    check(file.to_str().unwrap());
    if let Some(url) = pg_store(name) {
        check(&url);
    }
}

fn open(url: &str) -> Store {
    Store::open(&url.parse::<StoreUrl>().unwrap()).unwrap()
}

fn run_batch(out: &Path, store: &str, lot: &str) -> std::process::Output {
    let lot_dir = records();
    spurline()
        .arg("batch")
        .arg(lot_dir.join("plan.toml"))
        .arg("--limits")
        .arg(lot_dir.join("limits.csv"))
        .arg("--out")
        .arg(out)
        .args(["--store", store, "--lot", lot])
        .output()
        .unwrap()
}

/// A copy of a lot folder as another lot: device names given a prefix (a different lot of parts).
fn renamed_lot(from: &Path, to: &Path, prefix: &str) {
    std::fs::create_dir_all(to).unwrap();
    for f in ["summary.csv", "failures.csv", "yield.csv"] {
        let text = std::fs::read_to_string(from.join(f)).unwrap();
        let text = text.replace("\nd0", &format!("\n{prefix}d0"));
        std::fs::write(to.join(f), text).unwrap();
    }
}

#[test]
fn a_lot_is_stored_as_its_files_say() {
    on_both("spurline_stored", |url| {
        let work = tempfile::tempdir().unwrap();
        let out = work.path().join("lot1");
        let o = run_batch(&out, url, "L001");
        let stdout = String::from_utf8_lossy(&o.stdout);
        // The fixture lot has failing devices (fixtures/batch/make_records.sh): exit 1.
        assert_eq!(
            o.status.code(),
            Some(1),
            "{stdout}{}",
            String::from_utf8_lossy(&o.stderr)
        );
        assert!(stdout.contains("recorded lot 'L001'"), "{stdout}");

        let mut store = open(url);
        let runs = store.runs().unwrap();
        assert_eq!(runs.len(), 1);
        let run = &runs[0];
        assert_eq!(run.lot, "L001");
        assert_eq!(
            run.title,
            "Fixture lot: simulated 12-bit converter, two inputs"
        );
        assert!(run.plan_fingerprint.is_some() && run.limits_fingerprint.is_some());
        assert!(run.started_at.as_deref().unwrap() <= run.ended_at.as_str());

        // Counts against the summary's verdict column.
        let summary = LotSummary::in_folder(&out).unwrap();
        let rows = summary.all_rows().unwrap();
        assert_eq!(run.results as usize, rows.len());
        assert_eq!(run.devices, 4);
        let count = |v: &str| rows.iter().filter(|r| r.verdict() == Some(v)).count() as i64;
        assert_eq!(
            (run.passed, run.failed, run.failed_guardband, run.errors),
            (
                count("pass"),
                count("fail"),
                count("fail_guardband"),
                count("error")
            )
        );

        // Every metric cell of every device, read back through the device's history, equals the
        // summary's cell; the stored list is the figure table's metrics.
        let metric_cols: Vec<String> = summary
            .columns()
            .iter()
            .filter(|c| figures::get(c).is_some_and(|f| f.figure.is_metric()))
            .cloned()
            .collect();
        assert!(metric_cols.iter().any(|c| c == "spectrum.snr_db"));
        assert!(!metric_cols.iter().any(|c| c == "spectrum.window"));
        let mut compared = 0;
        for device in ["d01", "d02", "d03", "d04"] {
            let history = store.device_history(device, None).unwrap();
            for row in rows.iter().filter(|r| r.device() == device) {
                for key in &metric_cols {
                    let want = row.value(key);
                    let got = history
                        .iter()
                        .find(|h| h.condition == row.condition() && &h.metric == key)
                        .map(|h| h.value);
                    assert_eq!(got, want, "{device} {} {key}", row.condition());
                    compared += usize::from(want.is_some());
                }
            }
        }
        assert!(compared > 100, "only {compared} values compared");

        // The lot statistics of SNR at 10 MHz are numpy-style mean and sample σ of those cells.
        let snr: Vec<f64> = rows
            .iter()
            .filter(|r| r.condition() == "fin_10M")
            .filter_map(|r| r.value("spectrum.snr_db"))
            .collect();
        let stat = &store
            .lot_stats(Some("fin_10M"), Some("spectrum.snr_db"))
            .unwrap()[0];
        let mean = snr.iter().sum::<f64>() / snr.len() as f64;
        let var = snr.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (snr.len() - 1) as f64;
        assert_eq!(stat.n as usize, snr.len());
        assert!((stat.mean - mean).abs() < 1e-12 * mean.abs());
        assert!((stat.std.unwrap() - var.sqrt()).abs() < 1e-12 * var.sqrt());

        // The limit table the lot ran with is stored for Cpk.
        let limits = store.limits(run.id).unwrap();
        assert!(limits
            .iter()
            .any(|l| l.condition == "*" && l.metric == "spectrum.snr_db" && l.low == Some(60.0)));
    });
}

#[test]
fn the_same_lot_is_refused_and_nothing_is_written_twice() {
    on_both("spurline_refused", |url| {
        let work = tempfile::tempdir().unwrap();
        let out = work.path().join("lot1");
        assert_eq!(run_batch(&out, url, "L001").status.code(), Some(1));
        // Same results, same plan and limits: the same fingerprint.
        let lot = records();
        let o = spurline()
            .arg("record")
            .arg(&out)
            .args(["--store", url, "--plan"])
            .arg(lot.join("plan.toml"))
            .arg("--limits")
            .arg(lot.join("limits.csv"))
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(1), "{err}");
        assert!(err.contains("already recorded as 'L001'"), "{err}");
        let mut store = open(url);
        assert_eq!(store.runs().unwrap().len(), 1);
        assert_eq!(
            store
                .device_history("d01", Some("spectrum.snr_db"))
                .unwrap()
                .len(),
            2
        );
        // Another lot of parts goes in.
        renamed_lot(&out, &work.path().join("lot2"), "b");
        let o = spurline()
            .arg("record")
            .arg(work.path().join("lot2"))
            .args(["--store", url])
            .output()
            .unwrap();
        assert_eq!(
            o.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&o.stderr)
        );
        let runs = open(url).runs().unwrap();
        assert_eq!(runs.len(), 2);
        assert_eq!(runs[1].lot, "lot2");
    });
}

#[test]
fn a_transaction_that_fails_midway_leaves_no_trace() {
    let dir = tempfile::tempdir().unwrap();
    let work = tempfile::tempdir().unwrap();
    let out = work.path().join("lot1");
    let sqlite = dir.path().join("store.sqlite");
    // A lot folder to record (no store yet).
    let o = spurline()
        .arg("batch")
        .arg(records().join("plan.toml"))
        .arg("--out")
        .arg(&out)
        .output()
        .unwrap();
    assert!(o.status.code().unwrap() <= 1);
    let mut urls = vec![sqlite.to_str().unwrap().to_string()];
    urls.extend(pg_store("spurline_atomic"));
    for url in urls {
        drop(open(&url));
        // The last table a lot writes refuses its rows: the whole lot must vanish.
        if url.contains("dbname=") {
            let mut c = postgres::Client::connect(&url, postgres::NoTls).unwrap();
            c.batch_execute("ALTER TABLE lot_stats ADD CONSTRAINT refuse CHECK (n < 0)")
                .unwrap();
        } else {
            let c = rusqlite::Connection::open(&url).unwrap();
            c.execute_batch(
                "CREATE TRIGGER refuse BEFORE INSERT ON lot_stats BEGIN SELECT RAISE(ABORT, 'refused'); END;",
            )
            .unwrap();
        }
        let o = spurline()
            .arg("record")
            .arg(&out)
            .args(["--store", &url])
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2));
        let mut store = open(&url);
        assert!(store.runs().unwrap().is_empty());
        assert!(store.device_history("d01", None).unwrap().is_empty());
    }
}

/// A copy of a lot folder as a larger lot: every device of `from` `copies` times, named
/// `{prefix}{k}` + its name, so that a writer's transaction lasts long enough to overlap another's.
fn widened_lot(from: &Path, to: &Path, prefix: &str, copies: usize) {
    std::fs::create_dir_all(to).unwrap();
    for f in ["summary.csv", "failures.csv"] {
        let text = std::fs::read_to_string(from.join(f)).unwrap();
        let mut lines = text.lines();
        let mut out = format!("{}\n", lines.next().unwrap());
        let body: Vec<&str> = lines.collect();
        for k in 0..copies {
            for line in &body {
                assert!(line.starts_with("d0"), "{f}: {line}");
                out.push_str(&format!("{prefix}{k:03}{line}\n"));
            }
        }
        std::fs::write(to.join(f), out).unwrap();
    }
}

/// Per lot in the store: (lot, runs of that name, results, figures, warnings), read with plain SQL
/// beside the store's own reader.
fn rows_per_lot(url: &str) -> Vec<(String, i64, i64, i64, i64)> {
    let sql = "SELECT r.lot, \
               (SELECT count(*) FROM runs x WHERE x.lot = r.lot), \
               (SELECT count(*) FROM results x WHERE x.run_id = r.id), \
               (SELECT count(*) FROM figures x WHERE x.run_id = r.id), \
               (SELECT count(*) FROM warnings x WHERE x.run_id = r.id) \
               FROM runs r ORDER BY r.lot";
    if url.contains("dbname=") {
        let mut c = postgres::Client::connect(url, postgres::NoTls).unwrap();
        c.query(sql, &[])
            .unwrap()
            .iter()
            .map(|r| (r.get(0), r.get(1), r.get(2), r.get(3), r.get(4)))
            .collect()
    } else {
        let c = rusqlite::Connection::open(url).unwrap();
        // The file is whole after the writers' race (SQLite's own check).
        let ok: String = c
            .query_row("PRAGMA integrity_check", [], |r| r.get(0))
            .unwrap();
        assert_eq!(ok, "ok");
        let mut st = c.prepare(sql).unwrap();
        st.query_map([], |r| {
            Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?, r.get(4)?))
        })
        .unwrap()
        .map(Result::unwrap)
        .collect()
    }
}

/// The migrations each applied once, whoever of the racing writers created the store.
fn migrations_applied(url: &str) -> (i64, i64) {
    let sql = "SELECT count(*), count(DISTINCT version) FROM schema_version";
    if url.contains("dbname=") {
        let mut c = postgres::Client::connect(url, postgres::NoTls).unwrap();
        let r = c.query_one(sql, &[]).unwrap();
        (r.get(0), r.get(1))
    } else {
        let c = rusqlite::Connection::open(url).unwrap();
        c.query_row(sql, [], |r| Ok((r.get(0)?, r.get(1)?)))
            .unwrap()
    }
}

#[test]
fn concurrent_writers_each_land_once() {
    let work = tempfile::tempdir().unwrap();
    let base = work.path().join("lot");
    let o = spurline()
        .arg("batch")
        .arg(records().join("plan.toml"))
        .arg("--out")
        .arg(&base)
        .output()
        .unwrap();
    assert!(o.status.code().unwrap() <= 1);
    // Four lots of 200 devices each (the fixture's 4 devices, 50 times over): 400 results and some
    // 20,000 figures per lot, so that the writers' transactions overlap.
    let lots: Vec<PathBuf> = ["p", "q", "r", "s"]
        .iter()
        .map(|p| {
            let d = work.path().join(format!("lot_{p}"));
            widened_lot(&base, &d, p, 50);
            d
        })
        .collect();
    let expected: Vec<(String, i64, i64, i64, i64)> = lots
        .iter()
        .map(|d| {
            let name = d.file_name().unwrap().to_string_lossy().to_string();
            let rec =
                spurline::LotRecord::from_folder(d, spurline::RunInfo::now(&name), None).unwrap();
            let warnings = LotSummary::in_folder(d)
                .unwrap()
                .all_rows()
                .unwrap()
                .iter()
                .map(|r| {
                    // The summary joins a result's warnings with " | " (`figures::flatten`).
                    r.text(figures::WARNINGS.key).map_or(0, |t| {
                        t.split(" | ").filter(|w| !w.trim().is_empty()).count() as i64
                    })
                })
                .sum();
            (
                name,
                1,
                rec.results() as i64,
                rec.figures() as i64,
                warnings,
            )
        })
        .collect();
    assert!(
        expected.iter().all(|e| e.2 == 400 && e.3 > 10_000),
        "{expected:?}"
    );
    let sqlite = work.path().join("store.sqlite");
    // The issue's numbers: 2 writers into one SQLite file, 4 into one PostgreSQL store; each writer
    // here also races a second copy of the same lot, which must be refused (exit status 1). The
    // store does not exist before the race: the writers also race to create it and migrate it.
    let mut cases = vec![(sqlite.to_str().unwrap().to_string(), 2usize)];
    cases.extend(pg_store("spurline_concurrent").map(|u| (u, 4)));
    for (url, writers) in cases {
        let children: Vec<_> = lots[..writers]
            .iter()
            .chain(lots[..writers].iter())
            .map(|d| {
                std::process::Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
                    .arg("record")
                    .arg(d)
                    .args(["--store", &url])
                    .stdout(std::process::Stdio::piped())
                    .stderr(std::process::Stdio::piped())
                    .spawn()
                    .unwrap()
            })
            .collect();
        let outs: Vec<_> = children
            .into_iter()
            .map(|c| c.wait_with_output().unwrap())
            .collect();
        let codes: Vec<i32> = outs.iter().map(|o| o.status.code().unwrap()).collect();
        let errs: Vec<String> = outs
            .iter()
            .map(|o| String::from_utf8_lossy(&o.stderr).to_string())
            .collect();
        assert_eq!(
            codes.iter().filter(|&&c| c == 0).count(),
            writers,
            "{codes:?} {errs:?}"
        );
        assert_eq!(
            codes.iter().filter(|&&c| c == 1).count(),
            writers,
            "{codes:?} {errs:?}"
        );
        // The refused ones say why.
        for (c, e) in codes.iter().zip(&errs) {
            assert!(*c == 0 || e.contains("already recorded as 'lot_"), "{e}");
        }
        // Every lot once, each with all its rows: none lost, none doubled.
        assert_eq!(rows_per_lot(&url), expected[..writers].to_vec(), "{url}");
        let (applied, distinct) = migrations_applied(&url);
        assert_eq!(applied, distinct);
        let mut store = open(&url);
        assert_eq!(applied, store.schema_version());
        for p in &["p", "q", "r", "s"][..writers] {
            // The fixture's two conditions, once each.
            assert_eq!(
                store
                    .device_history(&format!("{p}049d01"), Some("spectrum.snr_db"))
                    .unwrap()
                    .len(),
                2
            );
        }
    }
}

#[test]
fn queries_answer_what_users_ask() {
    on_both("spurline_queries", |url| {
        let work = tempfile::tempdir().unwrap();
        let first = work.path().join("lot1");
        assert_eq!(run_batch(&first, url, "L001").status.code(), Some(1));
        renamed_lot(&first, &work.path().join("lot2"), "x");
        let o = spurline()
            .arg("record")
            .arg(work.path().join("lot2"))
            .args(["--store", url, "--lot", "L002"])
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(0));
        let mut store = open(url);
        let runs = store.runs().unwrap();
        // Yield counts error rows as tested and failing (none here): passed / tested.
        let y = runs[0].yield_fraction.unwrap();
        let tested = runs[0].passed + runs[0].failed + runs[0].failed_guardband + runs[0].errors;
        assert_eq!(y, runs[0].passed as f64 / tested as f64);
        assert!(y < 1.0);
        assert_eq!(store.lots_below_yield(y + 1e-9).unwrap().len(), 2);
        assert!(store.lots_below_yield(y - 1e-9).unwrap().is_empty());
        assert_eq!(store.failed_lots().unwrap().len(), 2);
        let last = store
            .last_lots("spectrum.snr_db", Some("fin_10M"), 1)
            .unwrap();
        assert_eq!(last.len(), 1);
        assert_eq!(last[0].lot, runs.last().unwrap().lot);
        assert_eq!(
            store.last_lots("spectrum.snr_db", None, 5).unwrap().len(),
            4
        );

        // The command line: CSV of each question.
        let q = |args: &[&str]| {
            let o = spurline()
                .arg("query")
                .arg(url)
                .args(args)
                .output()
                .unwrap();
            assert_eq!(
                o.status.code(),
                Some(0),
                "{}",
                String::from_utf8_lossy(&o.stderr)
            );
            String::from_utf8(o.stdout).unwrap()
        };
        let text = q(&["lots"]);
        assert_eq!(text.lines().count(), 3, "{text}");
        assert!(text.starts_with("id,lot,"));
        let text = q(&["last", "snr_db", "--condition", "fin_31M", "-n", "1"]);
        assert_eq!(text.lines().count(), 2, "{text}");
        let text = q(&["device", "xd03", "--metric", "spectrum.enob_bits"]);
        assert_eq!(text.lines().count(), 3, "{text}");
        assert!(text.lines().skip(1).all(|l| l.contains("L002")), "{text}");
        let text = q(&["yield", "--below", "0.99"]);
        assert_eq!(text.lines().count(), 3, "{text}");
    });
}

/// Writes a lot folder by hand: one condition `c`, `devices` devices, SNR values around `level`.
fn handmade_lot(dir: &Path, level: f64, devices: usize, seed: u64) {
    std::fs::create_dir_all(dir).unwrap();
    let mut text = String::from("device,condition,verdict,reason,spectrum.snr_db\n");
    let mut s = seed;
    for d in 0..devices {
        // A small linear congruential generator (Knuth's MMIX constants): spread of ±0.1 dB.
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        let u = (s >> 11) as f64 / (1u64 << 53) as f64;
        text.push_str(&format!("dev{d},c,untested,,{}\n", level + 0.2 * (u - 0.5)));
    }
    std::fs::write(dir.join("summary.csv"), text).unwrap();
}

#[test]
fn trend_charts_the_lots_and_flags_a_shift() {
    on_both("spurline_trend", |url| {
        let work = tempfile::tempdir().unwrap();
        let mut store = open(url);
        // 24 lots in control around 70 dB, then one lot 1 dB low.
        let mut means = Vec::new();
        for k in 0..25u64 {
            let dir = work.path().join(format!("lot{k:02}"));
            let level = if k == 24 {
                69.0
            } else {
                70.0 + 0.02 * ((k % 3) as f64 - 1.0)
            };
            handmade_lot(&dir, level, 8, k + 1);
            let mut info = spurline::RunInfo::now(&format!("L{k:02}"));
            info.ended_at = format!("2026-01-{:02}T00:00:00Z", k + 1);
            let lot = spurline::LotRecord::from_folder(&dir, info, None).unwrap();
            store.record(&lot).unwrap();
            let s = LotSummary::in_folder(&dir).unwrap();
            let v: Vec<f64> = s
                .all_rows()
                .unwrap()
                .iter()
                .map(|r| r.value("spectrum.snr_db").unwrap())
                .collect();
            means.push(v.iter().sum::<f64>() / v.len() as f64);
        }
        let out = work.path().join("trend");
        let o = spurline()
            .args(["trend", url, "--metric", "snr_db", "--out"])
            .arg(&out)
            .output()
            .unwrap();
        let text = String::from_utf8_lossy(&o.stdout);
        // A rule fired: exit status 1 (the command's documented alert).
        assert_eq!(
            o.status.code(),
            Some(1),
            "{text}{}",
            String::from_utf8_lossy(&o.stderr)
        );
        assert!(text.contains("c / spectrum.snr_db: WE1"), "{text}");

        // The limits by the individuals-chart formulas (Montgomery §6.4), computed here from the
        // lot means: centre = mean of the first 20, σ = MR̄/1.128 (d2 of ranges of two, 2/√π).
        let b = &means[..20];
        let centre = b.iter().sum::<f64>() / 20.0;
        let mr = b.windows(2).map(|w| (w[1] - w[0]).abs()).sum::<f64>() / 19.0;
        let sigma = mr / (2.0 / std::f64::consts::PI.sqrt());
        let json: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(out.join("trend.json")).unwrap())
                .unwrap();
        let chart = &json["charts"][0];
        assert_eq!(chart["points"].as_array().unwrap().len(), 25);
        let got = |k: &str| chart["limits"][k].as_f64().unwrap();
        assert!((got("centre") - centre).abs() < 1e-9);
        assert!((got("ucl") - (centre + 3.0 * sigma)).abs() < 1e-9);
        assert!((got("lcl") - (centre - 3.0 * sigma)).abs() < 1e-9);
        // The last lot is beyond 3σ (WE1); no lot of the baseline is.
        let last = &chart["points"][24];
        assert!(last["rules"].as_array().unwrap().iter().any(|r| r == "WE1"));
        assert!((0..20).all(|k| !chart["points"][k]["rules"]
            .as_array()
            .unwrap()
            .iter()
            .any(|r| r == "WE1")));

        // CSV: a header and one row per lot; the SVG is well-formed XML; the page inlines it.
        let csv = std::fs::read_to_string(out.join("trend.csv")).unwrap();
        assert_eq!(csv.lines().count(), 26);
        assert!(csv.starts_with(&spurline::TREND_COLUMNS.join(",")));
        let svg = std::fs::read_to_string(out.join("charts/c__spectrum.snr_db.svg")).unwrap();
        roxmltree::Document::parse(&svg).unwrap();
        let page = std::fs::read_to_string(out.join("index.html")).unwrap();
        assert!(page.contains("<svg") && page.contains("WE1"));
    });
}

#[test]
fn an_analyze_report_is_recorded_with_records_as_conditions() {
    on_both("spurline_analyze", |url| {
        let work = tempfile::tempdir().unwrap();
        let report = work.path().join("bench-7");
        let files: Vec<PathBuf> = ["d01", "d02"]
            .iter()
            .flat_map(|d| {
                ["fin_10M_1", "fin_31M_1"].map(|r| records().join(format!("records/{d}/{r}.bin")))
            })
            .collect();
        let run = || {
            spurline()
                .arg("analyze")
                .args(&files)
                .arg("--out")
                .arg(&report)
                .args(["--store", url, "--json"])
                .output()
                .unwrap()
        };
        let o = run();
        assert_eq!(
            o.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&o.stderr)
        );
        let json: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        let mut store = open(url);
        let runs = store.runs().unwrap();
        assert_eq!(runs.len(), 1);
        // The report folder's name; a report has no verdicts: every result untested.
        assert_eq!(runs[0].lot, "bench-7");
        assert_eq!((runs[0].devices, runs[0].results), (2, 4));
        assert_eq!(runs[0].untested, 4);
        // Each record's SNR as analyze printed it, under its device and its name as the condition.
        for (k, f) in files.iter().enumerate() {
            let device = f.parent().unwrap().file_name().unwrap().to_str().unwrap();
            let record = f.file_stem().unwrap().to_str().unwrap();
            let history = store
                .device_history(device, Some("spectrum.snr_db"))
                .unwrap();
            let got = history.iter().find(|h| h.condition == record).unwrap();
            assert_eq!(
                Some(got.value),
                json[k]["spectrum"]["snr_db"].as_f64(),
                "{device} {record}"
            );
        }
        // The same report again: refused, exit status 1, nothing added.
        let o = run();
        assert_eq!(o.status.code(), Some(1));
        assert!(String::from_utf8_lossy(&o.stderr).contains("already recorded as 'bench-7'"));
        assert_eq!(open(url).runs().unwrap().len(), 1);
    });
}

#[test]
fn the_demo_records_both_revisions_and_charts_them() {
    let work = tempfile::tempdir().unwrap();
    let out = work.path().join("demo");
    let o = spurline()
        .args(["demo", "--out"])
        .arg(&out)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let mut store = open(out.join("store.sqlite").to_str().unwrap());
    let runs = store.runs().unwrap();
    let names: Vec<&str> = runs.iter().map(|r| r.lot.as_str()).collect();
    assert_eq!(names, ["rev-a", "rev-b"]);
    for r in &runs {
        // 12 devices × 3 conditions (src/cli/demo_lot.rs); counts as the lot's own yield file says.
        assert_eq!((r.devices, r.results), (12, 36));
        let summary = LotSummary::in_folder(&out.join(format!("lot-{}/results", r.lot))).unwrap();
        let rows = summary.all_rows().unwrap();
        let passed = rows.iter().filter(|x| x.verdict() == Some("pass")).count();
        assert_eq!(r.passed as usize, passed);
        assert!(r.limits_fingerprint.is_some());
    }
    // The trend page: one X̄ chart per condition and metric, both lots on each; rev-b's cleaner
    // clock moves SNR at 47.3 MHz (aperture jitter: SNR = −20·log10(2π·fin·σt), the handbook
    // jitter limit) far beyond the spread within the lots, so that chart flags it.
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("trend/trend.json")).unwrap())
            .unwrap();
    let charts = json["charts"].as_array().unwrap();
    assert!(charts.len() >= 9, "{}", charts.len());
    assert!(charts
        .iter()
        .all(|c| c["chart"] == "xbar" && c["points"].as_array().unwrap().len() == 2));
    let snr = charts
        .iter()
        .find(|c| c["condition"] == "fin_47M" && c["metric"] == "spectrum.snr_db")
        .unwrap();
    let (a, b) = (&snr["points"][0], &snr["points"][1]);
    assert!(b["mean"].as_f64().unwrap() > a["mean"].as_f64().unwrap());
    assert!(b["rules"].as_array().unwrap().iter().any(|r| r == "WE1"));
    let page = std::fs::read_to_string(out.join("trend/index.html")).unwrap();
    assert!(page.contains("<svg") && page.contains("rev-b"));
    // The trend page wears the run page's shell (one style for every page: the same <style> block),
    // and the chart whose rule fired is the row marked as failing.
    let style = |html: &str| {
        let a = html.find("<style>").unwrap();
        let b = html.find("</style>").unwrap();
        html[a..b].to_string()
    };
    let run_page = std::fs::read_to_string(out.join("index.html")).unwrap();
    assert_eq!(style(&page), style(&run_page));
    assert!(page.contains("<tr class=\"fail\"><td class=\"t\">fin_47M</td>"));
}
