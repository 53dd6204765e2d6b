//! Batch runs and limit tables: the bench plan and every plan error (file, line, key), the limit table
//! and every limit error (row), verdicts with guardbands, a small lot end to end through the binary
//! (a corrupt record becomes an error row, the rest goes on), exit codes, byte-identical outputs for any
//! thread count, yields, shards merged into the unsharded report byte for byte (and the merge's
//! refusals), a run killed midway, and limit proposals and Cpk against values stored from numpy/scipy.

use crate::tolerances::{NUMPY_REL, PROPOSAL_ROUNDING, ROUNDING};
use assert_cmd::Command;
use spurline::Format;
use spurline::WindowChoice;
use spurline::{
    propose, Catalogue, Characterisation, CheckOutcome, LimitTable, Method, Outcome,
    ProposalSettings, ResultRow,
};
use spurline::{BenchPlan, RecordSource};
use spurline::{ErrorKind, Location};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

fn spurline() -> Command {
    Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures/batch")
        .join(name)
}

/// 1-based line of the first line of `text` containing `marker`.
fn line_of(text: &str, marker: &str) -> usize {
    text.lines()
        .position(|l| l.contains(marker))
        .unwrap_or_else(|| panic!("no line with {marker:?}"))
        + 1
}

/// The fixture lot in a temporary folder: plan, limit table and the records its script writes with
/// `spurline synth`.
pub(crate) fn make_lot() -> tempfile::TempDir {
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
        "make_records.sh: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    dir
}

/// Scope of the fixture plan: its conditions with the metrics of their harmonics.
fn scope_of(plan: &BenchPlan) -> Vec<(String, Catalogue)> {
    plan.limit_scope()
}

fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_path(path).unwrap();
    let head = r.headers().unwrap().iter().map(str::to_string).collect();
    let rows = r
        .records()
        .map(|x| x.unwrap().iter().map(str::to_string).collect())
        .collect();
    (head, rows)
}

fn cell<'a>(head: &[String], row: &'a [String], name: &str) -> &'a str {
    let i = head
        .iter()
        .position(|h| h == name)
        .unwrap_or_else(|| panic!("no column {name}"));
    &row[i]
}

// ───────────────────────────── bench plan ─────────────────────────────

#[test]
fn fixture_plan_parses_into_settings() {
    let path = fixture("plan.toml");
    let text = std::fs::read_to_string(&path).unwrap();
    let plan = BenchPlan::read(&path).unwrap();
    assert_eq!(plan.ingest.meta.bits, Some(12));
    assert_eq!(plan.ingest.meta.sample_rate_hz, Some(100e6));
    assert_eq!(plan.ingest.meta.full_scale_vpp, Some(2.0));
    assert_eq!(
        plan.ingest.format,
        Some(Format::Binary(Format::parse_word("i16le").unwrap()))
    );
    let names: Vec<&str> = plan.conditions.iter().map(|c| c.name.as_str()).collect();
    assert_eq!(names, ["fin_10M", "fin_31M"]);
    let c = &plan.conditions;
    assert_eq!((c[0].fin_hz, c[1].fin_hz), (10.1e6, 31.3e6));
    assert_eq!((c[0].amplitude_dbfs, c[1].amplitude_dbfs), (-1.0, -1.0));
    // The plan-wide harmonics = 5, overridden to 7 for fin_31M; average 1, overridden to 2.
    assert_eq!(c[0].settings.spectrum.harmonics, 5);
    assert_eq!(c[1].settings.spectrum.harmonics, 7);
    assert_eq!((c[0].average, c[1].average), (1, 2));
    assert_eq!(c[0].settings.spectrum.window, WindowChoice::Auto);
    assert_eq!(c[1].line, line_of(&text, "name = \"fin_31M\"") - 1);
    assert_eq!(
        plan.records,
        RecordSource::Pattern {
            pattern: "records/{device}/{condition}_{index}.bin".into(),
            line: line_of(&text, "pattern ="),
        }
    );
    assert_eq!(plan.devices, None);
    assert_eq!(plan.max_harmonics(), 7);
    // The fit hint is the input folded into the first zone (31.3 MHz at 100 MHz stays where it is).
    assert_eq!(plan.ingest_for(&c[1]).meta.fin_hz, Some(31.3e6));
}

const BASE: &str = r#"# a plan
[converter]
bits = 12
sample_rate_hz = 100e6
format = "i16le"

[analysis]
harmonics = 5

[records]
pattern = "caps/{device}/{condition}_{index}.bin"

[[condition]]
name = "a"
fin_hz = "10.1M"
amplitude_dbfs = -1.0

[[condition]]
name = "b"
fin_hz = 31.3e6
amplitude_dbfs = -1.0
analysis = { harmonics = 7, average = 2 }
"#;

#[test]
fn plan_errors_name_file_line_and_key() {
    // (what is changed, replaced by, the marker of the line expected, the key named)
    let cases: &[(&str, &str, &str, &str)] = &[
        ("# a plan", "tittle = \"x\"", "tittle", "tittle"),
        ("bits = 12", "bits = 12\nbitz = 3", "bitz", "converter.bitz"),
        ("bits = 12\n", "", "[converter]", "converter.bits"),
        ("bits = 12", "bits = \"twelve\"", "bits =", "converter.bits"),
        ("bits = 12", "bits = 40", "bits =", "converter.bits"),
        ("bits = 12", "bits = 0", "bits =", "converter.bits"),
        (
            "sample_rate_hz = 100e6",
            "sample_rate_hz = -5",
            "sample_rate_hz",
            "converter.sample_rate_hz",
        ),
        (
            "sample_rate_hz = 100e6",
            "sample_rate_hz = \"fast\"",
            "sample_rate_hz",
            "converter.sample_rate_hz",
        ),
        (
            "format = \"i16le\"",
            "format = \"i12\"",
            "format",
            "converter.format",
        ),
        (
            "format = \"i16le\"",
            "format = \"i16le\"\ncoding = \"gray\"",
            "coding",
            "converter.coding",
        ),
        (
            "format = \"i16le\"",
            "format = \"i16le\"\nchannel = \"5/4\"",
            "channel",
            "converter.channel",
        ),
        (
            "harmonics = 5",
            "harmonics = 0",
            "harmonics = 0",
            "analysis.harmonics",
        ),
        (
            "harmonics = 5",
            "harmonics = 5\nwindow = \"hamm\"",
            "window",
            "analysis.window",
        ),
        (
            "harmonics = 5",
            "harmonics = 5\naverage = 0",
            "average",
            "analysis.average",
        ),
        (
            "harmonics = 5",
            "harmonics = 5\nfit = \"five\"",
            "fit =",
            "analysis.fit",
        ),
        (
            "harmonics = 5",
            "harmonics = 5\nspan = 1",
            "span",
            "analysis.span",
        ),
        (
            "name = \"a\"\nfin_hz = \"10.1M\"\n",
            "name = \"a\"\n",
            "[[condition]]",
            "condition[1].fin_hz",
        ),
        (
            "fin_hz = \"10.1M\"",
            "fin_hz = \"abc\"",
            "fin_hz",
            "condition[1].fin_hz",
        ),
        (
            "fin_hz = \"10.1M\"",
            "fin_hz = 0",
            "fin_hz",
            "condition[1].fin_hz",
        ),
        (
            "name = \"b\"",
            "name = \"a\"",
            "2:name = \"a\"",
            "condition[2].name",
        ),
        ("name = \"b\"", "name = \"b/c\"", "b/c", "condition[2].name"),
        ("name = \"b\"", "name = \"*\"", "\"*\"", "condition[2].name"),
        (
            "{ harmonics = 7,",
            "{ harmonics = 7, windw = \"hann\",",
            "windw",
            "condition[2].analysis.windw",
        ),
        (
            "{ harmonics = 7,",
            "{ harmonics = 700,",
            "harmonics = 700",
            "condition[2].analysis.harmonics",
        ),
        (
            "amplitude_dbfs = -1.0\n\n",
            "amplitude_dbfs = -1.0\nextra = 1\n\n",
            "extra",
            "condition[1].extra",
        ),
        (
            "{condition}_{index}",
            "{cond}_{index}",
            "pattern",
            "records.pattern",
        ),
        ("caps/{device}/", "caps/", "pattern", "records.pattern"),
        ("_{index}", "", "pattern", "records.pattern"),
        (
            "pattern = \"caps/{device}/{condition}_{index}.bin\"",
            "",
            "[records]",
            "records.pattern or records.list",
        ),
        (
            "pattern = \"caps/{device}/{condition}_{index}.bin\"",
            "list = [ { device = \"d1\", condition = \"c\", files = [\"x.bin\"] } ]",
            "list =",
            "records.list.condition",
        ),
        (
            "pattern = \"caps/{device}/{condition}_{index}.bin\"",
            "list = [ { device = \"d1\", condition = \"a\", files = [\"x.bin\", \"y.bin\"] } ]",
            "list =",
            "records.list.files",
        ),
        (
            "pattern = \"caps/{device}/{condition}_{index}.bin\"",
            "pattern = \"caps/{device}/{condition}_{index}.bin\"\ndevices = [\"d1\", \"d1\"]",
            "devices",
            "records.devices",
        ),
    ];
    for (from, to, marker, key) in cases {
        assert!(BASE.contains(from), "{from:?} is not in the base plan");
        let text = BASE.replacen(from, to, 1);
        let e = BenchPlan::parse(&text, Path::new("bench/plan.toml")).unwrap_err();
        let msg = e.to_string();
        assert_eq!(e.kind, ErrorKind::BadPlan, "{from:?} → {to:?}: {msg}");
        assert_eq!(e.path, "bench/plan.toml", "{msg}");
        // The line: of the offending key or value, or of the table missing a key.
        // "2:" asks for the second line holding the marker.
        let want = match marker.strip_prefix("2:") {
            Some(m) => {
                let first = line_of(&text, m);
                first + line_of(&text.lines().skip(first).collect::<Vec<_>>().join("\n"), m)
            }
            None => line_of(&text, marker),
        };
        assert_eq!(e.location, Location::Line(want), "{from:?} → {to:?}: {msg}");
        assert!(
            msg.contains(key),
            "{from:?} → {to:?}: {msg} does not name {key}"
        );
    }
    // A missing table of the top level is named too.
    let text = BASE.replace("[records]\n", "[recs]\n");
    let e = BenchPlan::parse(&text, Path::new("p.toml")).unwrap_err();
    assert!(e.to_string().contains("recs"), "{e}");
    let e = BenchPlan::parse("[converter]\nbits = 12\n", Path::new("p.toml")).unwrap_err();
    assert_eq!(e.kind, ErrorKind::BadPlan);
    assert!(e.to_string().contains("sample_rate_hz"), "{e}");
    // Not TOML at all.
    let e = BenchPlan::parse("[converter\n", Path::new("p.toml")).unwrap_err();
    assert_eq!(
        (e.kind, e.location),
        (ErrorKind::BadPlan, Location::Line(1))
    );
}

#[test]
fn a_pattern_that_matches_nothing_is_a_plan_error() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("plan.toml");
    std::fs::write(&path, BASE).unwrap();
    let plan = BenchPlan::read(&path).unwrap();
    let e = plan.locate().unwrap_err();
    assert_eq!(e.kind, ErrorKind::BadPlan);
    assert_eq!(e.path, path.display().to_string());
    assert_eq!(e.location, Location::Line(line_of(BASE, "pattern =")));
    assert!(e.to_string().contains("records.pattern"), "{e}");
    // The same through the binary: exit 2, the message names file, line and key.
    let out = spurline()
        .arg("batch")
        .arg(&path)
        .arg("--out")
        .arg(dir.path().join("o"))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("plan.toml: line 11") && err.contains("records.pattern"),
        "{err}"
    );
}

fn touch(root: &Path, rel: &str) {
    let p = root.join(rel);
    std::fs::create_dir_all(p.parent().unwrap()).unwrap();
    std::fs::write(p, b"").unwrap();
}

#[test]
fn devices_are_discovered_in_natural_order() {
    let dir = tempfile::tempdir().unwrap();
    for f in [
        "caps/d10/a_1.bin",
        "caps/d2/a_1.bin",
        "caps/d2/b_1.bin",
        "caps/d2/b_2.bin",
        "caps/d3/b_2.bin",
        "caps/.hidden/a_1.bin",
        "caps/d4/a_1.txt",
        "caps/stray.bin",
    ] {
        touch(dir.path(), f);
    }
    let path = dir.path().join("plan.toml");
    std::fs::write(&path, BASE).unwrap();
    let lot = BenchPlan::read(&path).unwrap().locate().unwrap();
    assert_eq!(lot.devices, ["d2", "d3", "d10"]);
    assert_eq!(lot.conditions, 2);
    assert_eq!(lot.results(), 6);
    assert_eq!(
        lot.files(0, 1),
        [
            dir.path().join("caps/d2/b_1.bin"),
            dir.path().join("caps/d2/b_2.bin")
        ]
    );
    // A device that lacks a condition still gets its (missing) files, to become an error row.
    assert_eq!(lot.files(2, 0), [dir.path().join("caps/d10/a_1.bin")]);
    assert_eq!(lot.files(2, 1)[1], dir.path().join("caps/d10/b_2.bin"));
    // {device} inside a file name, twice in a pattern, and a given device list keeping its order.
    for f in [
        "flat/x1_a_1_x1.bin",
        "flat/x2_a_1_x2.bin",
        "flat/x3_a_1_x4.bin",
    ] {
        touch(dir.path(), f);
    }
    let text = BASE.replace(
        "caps/{device}/{condition}_{index}.bin",
        "flat/{device}_{condition}_{index}_{device}.bin",
    );
    std::fs::write(&path, &text).unwrap();
    let lot = BenchPlan::read(&path).unwrap().locate().unwrap();
    assert_eq!(lot.devices, ["x1", "x2"]);
    let text = text.replace(
        "_{device}.bin\"",
        "_{device}.bin\"\ndevices = [\"x9\", \"x2\"]",
    );
    std::fs::write(&path, &text).unwrap();
    let lot = BenchPlan::read(&path).unwrap().locate().unwrap();
    assert_eq!(lot.devices, ["x9", "x2"]);
}

#[test]
fn an_explicit_record_list() {
    let text = BASE.replace(
        "pattern = \"caps/{device}/{condition}_{index}.bin\"",
        "list = [\n  { device = \"u10\", condition = \"b\", files = [\"r/3.bin\", \"r/4.bin\"] },\n  \
         { device = \"u9\", condition = \"a\", files = [\"r/1.bin\"] },\n]",
    );
    let plan = BenchPlan::parse(&text, Path::new("bench/plan.toml")).unwrap();
    let lot = plan.locate().unwrap();
    assert_eq!(lot.devices, ["u9", "u10"]);
    assert_eq!(lot.files(0, 0), [PathBuf::from("bench/r/1.bin")]);
    assert!(lot.files(0, 1).is_empty());
    assert_eq!(
        lot.files(1, 1),
        [
            PathBuf::from("bench/r/3.bin"),
            PathBuf::from("bench/r/4.bin")
        ]
    );
    let dup = text.replace(
        "\"u9\", condition = \"a\", files = [\"r/1.bin\"]",
        "\"u10\", condition = \"b\", files = [\"r/1.bin\", \"r/2.bin\"]",
    );
    let e = BenchPlan::parse(&dup, Path::new("p.toml")).unwrap_err();
    assert_eq!(e.location, Location::Line(line_of(&dup, "r/1.bin")));
    assert!(e.to_string().contains("second entry"), "{e}");
}

// ───────────────────────────── limit table ─────────────────────────────

fn fixture_scope() -> Vec<(String, Catalogue)> {
    scope_of(&BenchPlan::read(&fixture("plan.toml")).unwrap())
}

#[test]
fn fixture_limits_resolve() {
    let t = LimitTable::read(&fixture("limits.csv"), &fixture_scope()).unwrap();
    let rows: Vec<_> = t
        .limits
        .iter()
        .map(|l| {
            (
                l.row,
                l.condition.as_deref(),
                l.metric.as_str(),
                l.low,
                l.high,
                l.unit.symbol(),
                l.guardband,
            )
        })
        .collect();
    assert_eq!(
        rows,
        vec![
            (3, None, "spectrum.snr_db", Some(60.0), None, "dB", 2.5),
            (4, None, "spectrum.sfdr_dbc", Some(65.0), None, "dBc", 0.0),
            (
                5,
                None,
                "spectrum.harmonics.h3.dbc",
                None,
                Some(-60.0),
                "dBc",
                0.0
            ),
            (
                6,
                Some("fin_31M"),
                "spectrum.enob_bits",
                Some(9.5),
                None,
                "bits",
                0.0
            ),
        ]
    );
    assert_eq!(t.for_condition("fin_10M").len(), 3);
    assert_eq!(t.for_condition("fin_31M").len(), 4);
}

#[test]
fn short_names_semicolons_and_a_byte_order_mark() {
    let text =
        "\u{feff}Condition;Metric;Low;High;Unit\nfin_10M;snr_db;60;;db\n;;;;\n*;h3.dbc;;-70;DBC\n";
    let t = LimitTable::parse(text, "l.csv", &fixture_scope()).unwrap();
    let got: Vec<_> = t
        .limits
        .iter()
        .map(|l| (l.row, l.metric.as_str()))
        .collect();
    assert_eq!(
        got,
        [(2, "spectrum.snr_db"), (4, "spectrum.harmonics.h3.dbc")]
    );
}

#[test]
fn limit_errors_name_the_row() {
    let head = "condition,metric,low,high,unit,guardband\n";
    // (table body after the header, row expected, text the message must hold)
    let cases: &[(&str, usize, &str)] = &[
        ("fin_10M,snr,60,,dB,\n", 2, "'snr'"),
        ("fin_10M,enob_bits,9,,bits,\n", 2, "fit.enob_bits"),
        ("fin_99M,snr_db,60,,dB,\n", 2, "'fin_99M'"),
        (",snr_db,60,,dB,\n", 2, "condition"),
        ("fin_10M,,60,,dB,\n", 2, "metric"),
        ("*,snr_db,70,60,dB,\n", 2, "low 70 above high 60"),
        ("*,sfdr_dbc,70,,dB,\n", 2, "dBc"),
        ("*,snr_db,sixty,,dB,\n", 2, "'sixty'"),
        ("*,snr_db,60,,dB,-1\n", 2, "guardband"),
        ("*,snr_db,60,64,dB,3\n", 2, "leaves a window"),
        ("*,snr_db,,,dB,\n", 2, "low or a high"),
        ("*,snr_db,60,,dB\n", 2, "6 cells"),
        (
            "*,snr_db,60,,dB,\n*,spectrum.snr_db,61,,dB,\n",
            3,
            "first is row 2",
        ),
        (
            "fin_10M,spectrum.harmonics.h7.dbc,,-70,dBc,\n",
            2,
            "fin_10M",
        ),
        ("*,h7.dbc,,-70,dBc,\n", 2, "fin_10M"),
        ("# a note\n\n*,snr_db,60,,dB,\n*,snr,1,,,\n", 5, "'snr'"),
        ("*,snr_db,inf,,dB,\n", 2, "'inf'"),
        (
            "*,snr_db,60,,dB,\n# two\n# comment lines\n*,sfdr_dbc,x,,dBc,\n",
            5,
            "'x'",
        ),
    ];
    for (body, row, needle) in cases {
        let text = format!("{head}{body}");
        let e = LimitTable::parse(&text, "lot/limits.csv", &fixture_scope()).unwrap_err();
        let msg = e.to_string();
        assert_eq!(e.kind, ErrorKind::BadLimits, "{body:?}: {msg}");
        assert_eq!(e.path, "lot/limits.csv");
        assert_eq!(e.location, Location::Row(*row), "{body:?}: {msg}");
        assert!(msg.contains(needle), "{body:?}: {msg} lacks {needle:?}");
    }
    for (text, needle) in [
        (
            "condition,metric,low,high\n*,snr_db,60,\n",
            "no column 'unit'",
        ),
        (
            "condition,metric,low,high,unit,limit\n",
            "the column 'limit'",
        ),
        ("condition,metric,low,high,unit,low\n", "twice"),
    ] {
        let e = LimitTable::parse(text, "l.csv", &fixture_scope()).unwrap_err();
        assert_eq!(
            (e.kind, e.location.clone()),
            (ErrorKind::BadLimits, Location::Row(1)),
            "{e}"
        );
        assert!(e.to_string().contains(needle), "{e}");
    }
    for text in ["", "condition,metric,low,high,unit\n"] {
        let e = LimitTable::parse(text, "l.csv", &fixture_scope()).unwrap_err();
        assert_eq!(
            (e.kind, e.location),
            (ErrorKind::BadLimits, Location::Whole)
        );
    }
}

// ───────────────────────────── verdicts ─────────────────────────────

#[test]
fn verdicts_and_guardbands() {
    let scope = fixture_scope();
    let t = LimitTable::parse(
        "condition,metric,low,high,unit,guardband\n\
         *,snr_db,60,,dB,2\n\
         *,spectrum.fundamental_dbfs,-2,0,dBFS,0.25\n\
         fin_31M,spectrum.enob_bits,9.5,,bits,\n",
        "l.csv",
        &scope,
    )
    .unwrap();
    let judge = |cond: &str, snr: Option<f64>, fund: f64, enob: f64| {
        t.judge(cond, |m| match m {
            "spectrum.snr_db" => snr,
            "spectrum.fundamental_dbfs" => Some(fund),
            "spectrum.enob_bits" => Some(enob),
            _ => None,
        })
    };
    // Inside every tightened limit.
    let v = judge("fin_10M", Some(65.0), -1.0, 11.0);
    assert_eq!(v.outcome, Outcome::Pass);
    assert_eq!(v.checks.len(), 2);
    assert_eq!(v.reason, "all 2 limits pass");
    assert_eq!(v.checks[0].margin, Some(5.0));
    // -1.0 is 1 dB from either end: the nearer bound is the first found of equal margins.
    assert_eq!(v.checks[1].margin, Some(1.0));
    // SNR 61: inside the stated limit by 1 dB, inside the 2 dB guardband.
    let v = judge("fin_10M", Some(61.0), -1.0, 11.0);
    assert_eq!(v.outcome, Outcome::FailGuardband);
    assert_eq!(v.checks[0].outcome, CheckOutcome::Guardband);
    assert_eq!(v.checks[0].margin, Some(1.0));
    assert!(
        v.reason.contains("within the 2 dB guardband of low 60 dB"),
        "{}",
        v.reason
    );
    // Exactly on the tightened limit passes; exactly on the stated limit is inside the guardband.
    assert_eq!(
        judge("fin_10M", Some(62.0), -1.0, 11.0).outcome,
        Outcome::Pass
    );
    assert_eq!(
        judge("fin_10M", Some(60.0), -1.0, 11.0).outcome,
        Outcome::FailGuardband
    );
    // A high-side guardband: -0.125 dBFS is under the high limit 0 but within 0.25 of it.
    let v = judge("fin_10M", Some(65.0), -0.125, 11.0);
    assert_eq!(v.outcome, Outcome::FailGuardband);
    assert_eq!(v.checks[1].bound, Some(spurline::Bound::High));
    assert_eq!(v.checks[1].margin, Some(0.125));
    // A hard failure beats a guardband one.
    let v = judge("fin_10M", Some(59.0), -0.125, 11.0);
    assert_eq!(v.outcome, Outcome::Fail);
    assert_eq!(v.checks[0].margin, Some(-1.0));
    assert!(
        v.reason
            .starts_with("1 of 2 limits fail: spectrum.snr_db 59 dB below low 60 dB"),
        "{}",
        v.reason
    );
    // Above the high limit.
    let v = judge("fin_10M", Some(65.0), 0.5, 11.0);
    assert_eq!((v.outcome, v.checks[1].margin), (Outcome::Fail, Some(-0.5)));
    // A figure that is absent cannot be shown to pass.
    let v = judge("fin_10M", None, -1.0, 11.0);
    assert_eq!(v.outcome, Outcome::Fail);
    assert_eq!(v.checks[0].outcome, CheckOutcome::NoValue);
    assert!(
        v.reason.contains("spectrum.snr_db has no value"),
        "{}",
        v.reason
    );
    // The condition's own row adds the ENOB limit.
    let v = judge("fin_31M", Some(65.0), -1.0, 9.0);
    assert_eq!(v.checks.len(), 3);
    assert_eq!(v.outcome, Outcome::Fail);
    assert_eq!(v.checks[2].margin, Some(-0.5));
}

#[test]
fn a_guardband_in_sigmas_of_the_records_own_uncertainty() {
    let scope = fixture_scope();
    let t = LimitTable::parse(
        "condition,metric,low,high,unit,guardband,guard_sigmas\n\
         *,snr_db,60,,dB,,2\n\
         *,spectrum.fundamental_dbfs,-2,0,dBFS,0.25,1\n",
        "l.csv",
        &scope,
    )
    .unwrap();
    assert_eq!(t.limits[0].guard_sigmas, 2.0);
    // The table writes the column back.
    let again = LimitTable::parse(&t.to_csv(), "l.csv", &scope).unwrap();
    assert_eq!(again.limits, t.limits);
    let judge = |snr: f64, snr_sigma: Option<f64>| {
        t.judge("fin_10M", |m| match m {
            "spectrum.snr_db" => Some(snr),
            "spectrum.uncertainty.snr_db" => snr_sigma,
            "spectrum.fundamental_dbfs" => Some(-1.0),
            "spectrum.uncertainty.fundamental_dbfs" => Some(0.01),
            _ => None,
        })
    };
    // SNR 60.3 ± 0.2 dB passes the plain limit 60 by 0.3 dB but not by 2σ = 0.4 dB.
    let v = judge(60.3, Some(0.2));
    assert_eq!(v.outcome, Outcome::FailGuardband, "{}", v.reason);
    let c = &v.checks[0];
    assert_eq!(c.outcome, CheckOutcome::Guardband);
    assert_eq!(c.sigma, Some(0.2));
    // The guardband applied to this record, in dB, as failures.csv writes it.
    assert!((c.guardband - 0.4).abs() < ROUNDING, "{}", c.guardband);
    assert!(
        v.reason
            .contains("spectrum.snr_db 60.3 dB is within 2σ of the low limit 60 dB"),
        "{}",
        v.reason
    );
    assert!(v.reason.contains("σ = 0.2 dB"), "{}", v.reason);
    // The same value with a smaller σ clears the guardband: 0.3 dB ≥ 2 × 0.1 dB.
    assert_eq!(judge(60.3, Some(0.1)).outcome, Outcome::Pass);
    // Outside the stated limit it fails outright, whatever σ.
    assert_eq!(judge(59.9, Some(0.01)).outcome, Outcome::Fail);
    // A record that states no σ cannot show it clears a sigma guardband.
    let v = judge(65.0, None);
    assert_eq!(v.outcome, Outcome::FailGuardband);
    assert!(v.reason.contains("states no uncertainty"), "{}", v.reason);
    // The fixed and the sigma guardbands add: -0.3 dBFS is 0.3 from the high limit 0, which is
    // more than 0.25 but less than 0.25 + 1 × 0.1.
    let v = t.judge("fin_10M", |m| match m {
        "spectrum.snr_db" => Some(70.0),
        "spectrum.uncertainty.snr_db" => Some(0.1),
        "spectrum.fundamental_dbfs" => Some(-0.3),
        "spectrum.uncertainty.fundamental_dbfs" => Some(0.1),
        _ => None,
    });
    assert_eq!(v.outcome, Outcome::FailGuardband, "{}", v.reason);
    assert!(
        v.reason
            .contains("within 1σ of the high limit 0 dBFS (with the 0.25 dBFS guardband)"),
        "{}",
        v.reason
    );
    // guard_sigmas must be ≥ 0, and only on a metric that carries an uncertainty.
    for (body, found) in [
        ("*,snr_db,60,,dB,-1\n", "-1"),
        ("*,bits,10,,bits,1\n", "guard_sigmas 1"),
    ] {
        let e = LimitTable::parse(
            &format!("condition,metric,low,high,unit,guard_sigmas\n{body}"),
            "l.csv",
            &scope,
        )
        .unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadLimits);
        assert_eq!(e.location, Location::Row(2));
        assert!(e.found.contains(found), "{e}");
    }
}

#[test]
fn a_sigma_guardband_fails_a_real_record_that_passes_the_plain_limit() {
    let lot = make_lot();
    let p = lot.path();
    // The measured SNR and its stated σ of one device, from a run without limits.
    let o = run_batch(p, &p.join("measured"), &[]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let (head, rows) = read_csv(&p.join("measured/summary.csv"));
    let d01 = rows
        .iter()
        .find(|r| r[0] == "d01" && r[1] == "fin_10M")
        .unwrap();
    let snr: f64 = cell(&head, d01, "spectrum.snr_db").parse().unwrap();
    let sigma: f64 = cell(&head, d01, "spectrum.uncertainty.snr_db")
        .parse()
        .unwrap();
    assert!(sigma > 0.0);
    // A low limit one σ under the measured value: clear of it, but not by 2σ.
    let low = snr - sigma;
    for (guard, verdict) in [("", "pass"), ("2", "fail_guardband")] {
        let limits = p.join(format!("limits{guard}.csv"));
        std::fs::write(
            &limits,
            format!(
                "condition,metric,low,high,unit,guard_sigmas\nfin_10M,snr_db,{low},,dB,{guard}\n"
            ),
        )
        .unwrap();
        let out = p.join(format!("out{guard}"));
        run_batch(p, &out, &["--limits", limits.to_str().unwrap()]);
        let (head, rows) = read_csv(&out.join("summary.csv"));
        let row = rows
            .iter()
            .find(|r| r[0] == "d01" && r[1] == "fin_10M")
            .unwrap();
        assert_eq!(
            cell(&head, row, "verdict"),
            verdict,
            "guard_sigmas {guard:?}"
        );
        if verdict == "fail_guardband" {
            assert!(
                cell(&head, row, "reason").contains("is within 2σ of the low limit"),
                "{}",
                cell(&head, row, "reason")
            );
            let (fh, fr) = read_csv(&out.join("failures.csv"));
            let f = fr
                .iter()
                .find(|r| r[0] == "d01" && r[1] == "fin_10M")
                .unwrap();
            let g: f64 = cell(&fh, f, "guardband").parse().unwrap();
            // The record's own 2σ (both files write numbers in shortest round-trip form).
            assert!(
                (g - 2.0 * sigma).abs() <= ROUNDING * sigma,
                "{g} vs {sigma}"
            );
            assert_eq!(cell(&fh, f, "outcome"), "guardband");
        }
    }
}

// ───────────────────────────── a lot end to end ─────────────────────────────

pub(crate) fn run_batch(lot: &Path, out: &Path, extra: &[&str]) -> std::process::Output {
    let o = spurline()
        .arg("batch")
        .arg(lot.join("plan.toml"))
        .arg("--out")
        .arg(out)
        .args(extra)
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!err.contains("panicked"), "{err}");
    o
}

#[test]
fn a_corrupt_record_becomes_an_error_row_and_the_lot_goes_on() {
    let lot = make_lot();
    let bad = lot.path().join("records/d03/fin_10M_1.bin");
    std::fs::write(&bad, [1u8, 2, 3]).unwrap();
    std::fs::remove_file(lot.path().join("records/d01/fin_31M_2.bin")).unwrap();
    let out = lot.path().join("out");
    let limits = lot.path().join("limits.csv");
    let o = run_batch(
        lot.path(),
        &out,
        &["--limits", limits.to_str().unwrap(), "--jobs", "2"],
    );
    assert_eq!(
        o.status.code(),
        Some(2),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("d03 / fin_10M") && err.contains("byte offset 2"),
        "{err}"
    );
    assert!(
        err.contains("d01 / fin_31M") && err.contains("fin_31M_2.bin"),
        "{err}"
    );
    let (head, rows) = read_csv(&out.join("summary.csv"));
    assert_eq!(rows.len(), 8);
    let keyed: BTreeMap<(String, String), &Vec<String>> = rows
        .iter()
        .map(|r| ((r[0].clone(), r[1].clone()), r))
        .collect();
    let row = |d: &str, c: &str| keyed[&(d.to_string(), c.to_string())];
    let e = row("d03", "fin_10M");
    assert_eq!(cell(&head, e, "verdict"), "error");
    assert_eq!(cell(&head, e, "error.kind"), "partial_word");
    assert!(cell(&head, e, "reason").contains(&bad.display().to_string()));
    assert_eq!(cell(&head, e, "spectrum.snr_db"), "");
    assert_eq!(cell(&head, row("d01", "fin_31M"), "error.kind"), "io");
    // The rest were analysed and judged.
    for (d, c, v) in [
        ("d01", "fin_10M", "pass"),
        ("d02", "fin_10M", "fail"),
        ("d02", "fin_31M", "fail"),
        ("d03", "fin_31M", "fail"),
        ("d04", "fin_10M", "fail_guardband"),
        ("d04", "fin_31M", "fail_guardband"),
    ] {
        assert_eq!(cell(&head, row(d, c), "verdict"), v, "{d} {c}");
        assert!(!cell(&head, row(d, c), "spectrum.snr_db").is_empty());
    }
    // Rows in device order, then plan order of conditions.
    let order: Vec<(&str, &str)> = rows
        .iter()
        .map(|r| (r[0].as_str(), r[1].as_str()))
        .collect();
    assert_eq!(
        order[..4],
        [
            ("d01", "fin_10M"),
            ("d01", "fin_31M"),
            ("d02", "fin_10M"),
            ("d02", "fin_31M")
        ]
    );
    // Per-device folders hold the device's rows and its results.json; no temporary file is left over.
    for d in ["d01", "d02", "d03", "d04"] {
        let (h, r) = read_csv(&out.join(d).join("summary.csv"));
        assert_eq!(h, head);
        assert_eq!(r.len(), 2);
        assert!(r.iter().all(|x| x[0] == d));
        let j: serde_json::Value = serde_json::from_str(
            &std::fs::read_to_string(out.join(d).join("results.json")).unwrap(),
        )
        .unwrap();
        assert_eq!(j["device"], d);
        assert_eq!(j["conditions"][1]["condition"], "fin_31M");
        assert_eq!(j["conditions"][1]["fin_hz"], 31.3e6);
        let expect_error = d == "d01";
        assert_eq!(
            !j["conditions"][1]["result"]["error"].is_null(),
            expect_error,
            "{d}"
        );
    }
    let averaged = serde_json::from_str::<serde_json::Value>(
        &std::fs::read_to_string(out.join("d02/results.json")).unwrap(),
    )
    .unwrap();
    assert_eq!(
        averaged["conditions"][1]["result"]["spectrum"]["records_averaged"],
        2
    );
    for entry in std::fs::read_dir(&out).unwrap() {
        let name = entry.unwrap().file_name().to_string_lossy().to_string();
        assert!(!name.starts_with('.'), "left over: {name}");
    }
    let html = std::fs::read_to_string(out.join("index.html")).unwrap();
    assert!(
        html.starts_with("<!DOCTYPE html>")
            && html.contains("<td class=\"t status\">fail_guardband</td>")
    );
    assert!(!html.contains("<script"));
}

#[test]
fn exit_codes() {
    let lot = make_lot();
    let p = lot.path();
    let limits = p.join("limits.csv");
    // Some limits fail: 1.
    let o = run_batch(p, &p.join("o1"), &["--limits", limits.to_str().unwrap()]);
    assert_eq!(
        o.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let said = String::from_utf8_lossy(&o.stdout);
    assert!(
        said.contains("4 devices, 8 results: 2 pass, 4 fail, 2 fail only inside a guardband"),
        "{said}"
    );
    // Loose limits: 0. No limit table: 0 (untested).
    let loose = p.join("loose.csv");
    std::fs::write(&loose, "condition,metric,low,high,unit\n*,snr_db,40,,dB\n").unwrap();
    let o = run_batch(
        p,
        &p.join("o2"),
        &["--limits", loose.to_str().unwrap(), "--plots", "all"],
    );
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    // --plots all draws every result's spectrum, residual and histogram beside its device's tables.
    let plotted = std::fs::read_dir(p.join("o2/d01"))
        .unwrap()
        .filter(|e| {
            e.as_ref()
                .unwrap()
                .file_name()
                .to_string_lossy()
                .ends_with("-spectrum.svg")
        })
        .count();
    assert_eq!(plotted, 2, "one spectrum per condition of d01");
    let o = run_batch(p, &p.join("o3"), &[]);
    assert_eq!(o.status.code(), Some(0));
    let (head, rows) = read_csv(&p.join("o3/summary.csv"));
    assert!(rows.iter().all(|r| cell(&head, r, "verdict") == "untested"));
    // A guardband failure alone is a failure: 1.
    let guard = p.join("guard.csv");
    std::fs::write(
        &guard,
        "condition,metric,low,high,unit,guardband\n*,snr_db,60,,dB,2.5\n",
    )
    .unwrap();
    let o = run_batch(
        p,
        &p.join("o4"),
        &[
            "--limits",
            guard.to_str().unwrap(),
            "--devices-are-not-an-option",
        ],
    );
    assert_eq!(
        o.status.code(),
        Some(2),
        "an unknown option is a usage error"
    );
    let o = run_batch(p, &p.join("o4"), &["--limits", guard.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1));
    // Errors: 2, with the row named.
    std::fs::write(&guard, "condition,metric,low,high,unit\n*,snr_dbx,60,,dB\n").unwrap();
    let o = run_batch(p, &p.join("o5"), &["--limits", guard.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("guard.csv: row 2"));
    // An output folder that cannot be made fails before the work.
    let o = run_batch(p, &limits, &[]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("limits.csv"));
    let o = run_batch(p, &p.join("o6"), &["--jobs", "0"]);
    assert_eq!(o.status.code(), Some(2));
    std::fs::write(p.join("plan.toml"), "[converter]\nbits = 12\n").unwrap();
    let o = run_batch(p, &p.join("o7"), &[]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("plan.toml: line 1"));
}

pub(crate) fn files_under(root: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    let mut stack = vec![root.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else {
                out.push(p.strip_prefix(root).unwrap().to_path_buf());
            }
        }
    }
    out.sort();
    out
}

#[test]
fn outputs_are_byte_identical_for_any_thread_count() {
    // DESIGN.md: same inputs and settings give byte-identical CSV and JSON, whatever the thread count.
    let lot = make_lot();
    let p = lot.path();
    let limits = p.join("limits.csv");
    let l = limits.to_str().unwrap();
    let (a, b) = (p.join("one"), p.join("two"));
    assert_eq!(
        run_batch(p, &a, &["--limits", l, "--jobs", "1"])
            .status
            .code(),
        Some(1)
    );
    assert_eq!(
        run_batch(p, &b, &["--limits", l, "--jobs", "2"])
            .status
            .code(),
        Some(1)
    );
    let (fa, fb) = (files_under(&a), files_under(&b));
    assert_eq!(fa, fb);
    // The lot files (with the limits as applied) and each device's two files.
    assert_eq!(fa.len(), 5 + 4 * 2);
    for f in &fa {
        assert_eq!(
            std::fs::read(a.join(f)).unwrap(),
            std::fs::read(b.join(f)).unwrap(),
            "{}",
            f.display()
        );
    }
}

// ───────────────────────────── shards and merge ─────────────────────────────

pub(crate) fn merge(out: &Path, shards: &[&Path]) -> std::process::Output {
    let o = spurline()
        .arg("merge")
        .arg(out)
        .args(shards)
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!err.contains("panicked"), "{err}");
    o
}

/// The last line of a run's stdout (the counts) without the output folder it names.
fn counts_line(o: &std::process::Output) -> String {
    let text = String::from_utf8_lossy(&o.stdout).to_string();
    let last = text.lines().last().unwrap_or("").to_string();
    last.split("; summaries in").next().unwrap().to_string()
}

fn manifest(dir: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(dir.join("shard.json")).unwrap()).unwrap()
}

fn assert_same_files(a: &Path, b: &Path) {
    let (fa, fb) = (files_under(a), files_under(b));
    assert_eq!(fa, fb, "{} and {}", a.display(), b.display());
    for f in &fa {
        assert!(
            std::fs::read(a.join(f)).unwrap() == std::fs::read(b.join(f)).unwrap(),
            "{} differs",
            f.display()
        );
    }
}

#[test]
fn shards_merge_into_the_unsharded_report_byte_for_byte() {
    // The design goal of issue 8 (no outside source: the unsharded run is the reference): the merge of
    // the shards of a run equals the unsharded run in every file, whatever --jobs each shard used.
    let lot = make_lot();
    let p = lot.path();
    let limits = p.join("limits.csv");
    let l = limits.to_str().unwrap();
    // First the lot as it is (exit 1: some limits fail), then with a corrupt record (an error row,
    // exit 2), so error counts and messages go through the merge too.
    for (round, want_code) in [("clean", 1), ("corrupt", 2)] {
        if round == "corrupt" {
            std::fs::write(p.join("records/d03/fin_10M_1.bin"), [1u8, 2, 3]).unwrap();
        }
        let full = p.join(format!("{round}-full"));
        let whole = run_batch(p, &full, &["--limits", l, "--plots", "failures"]);
        assert_eq!(whole.status.code(), Some(want_code), "{round}");
        let mut dirs = Vec::new();
        for k in 1..=3 {
            let dir = p.join(format!("{round}-shard{k}"));
            let jobs = if k == 2 { "2" } else { "1" };
            let shard = format!("{k}/3");
            let o = run_batch(
                p,
                &dir,
                &[
                    "--limits", l, "--plots", "failures", "--jobs", jobs, "--shard", &shard,
                ],
            );
            assert!(
                matches!(o.status.code(), Some(0..=2)),
                "{}",
                String::from_utf8_lossy(&o.stderr)
            );
            dirs.push(dir);
        }
        // Round-robin in lot order d01..d04: shard 1 takes d01 and d04, 2 takes d02, 3 takes d03.
        let names = |d: &Path| -> Vec<String> {
            manifest(d)["devices"]
                .as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_str().unwrap().to_string())
                .collect()
        };
        assert_eq!(names(&dirs[0]), ["d01", "d04"]);
        assert_eq!(names(&dirs[1]), ["d02"]);
        assert_eq!(names(&dirs[2]), ["d03"]);
        let m = manifest(&dirs[0]);
        assert_eq!(
            (m["shard"].as_u64(), m["shards"].as_u64()),
            (Some(1), Some(3))
        );
        assert_eq!(m["lot_devices"], 4);
        // A shard holds only its own devices' folders beside its lot files and manifest.
        assert!(dirs[0].join("d04/results.json").is_file());
        assert!(!dirs[0].join("d02").exists());
        let merged = p.join(format!("{round}-merged"));
        // The shard folders in any order.
        let o = merge(&merged, &[&dirs[2], &dirs[0], &dirs[1]]);
        assert_eq!(
            o.status.code(),
            Some(want_code),
            "{round}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        assert_eq!(counts_line(&o), counts_line(&whole), "{round}");
        if round == "corrupt" {
            assert!(String::from_utf8_lossy(&o.stderr).contains("d03 / fin_10M"));
        }
        assert!(!merged.join("shard.json").exists());
        assert_same_files(&full, &merged);
        // Plots of the failing results were copied too.
        assert!(files_under(&merged)
            .iter()
            .any(|f| f.to_string_lossy().ends_with("-spectrum.svg")));
        // The shard folders are left as they were: merging again gives the same report.
        let again = p.join(format!("{round}-again"));
        assert_eq!(
            merge(&again, &[&dirs[0], &dirs[1], &dirs[2]]).status.code(),
            Some(want_code)
        );
        assert_same_files(&full, &again);
    }
}

#[test]
fn more_shards_than_devices_and_one_shard() {
    // Shards 5..8 of 8 get no device (a lot of 4): their files are header-only and still merge. One
    // shard of one is the whole lot.
    let lot = make_lot();
    let p = lot.path();
    let full = p.join("full");
    assert_eq!(run_batch(p, &full, &[]).status.code(), Some(0));
    let dirs: Vec<PathBuf> = (1..=8).map(|k| p.join(format!("s{k}"))).collect();
    for (k, d) in dirs.iter().enumerate() {
        let shard = format!("{}/8", k + 1);
        assert_eq!(run_batch(p, d, &["--shard", &shard]).status.code(), Some(0));
    }
    assert_eq!(manifest(&dirs[6])["devices"], serde_json::json!([]));
    let refs: Vec<&Path> = dirs.iter().map(PathBuf::as_path).collect();
    let merged = p.join("merged");
    assert_eq!(merge(&merged, &refs).status.code(), Some(0));
    assert_same_files(&full, &merged);
    let one = p.join("one");
    assert_eq!(
        run_batch(p, &one, &["--shard", "1/1"]).status.code(),
        Some(0)
    );
    let merged1 = p.join("merged1");
    assert_eq!(merge(&merged1, &[&one]).status.code(), Some(0));
    assert_same_files(&full, &merged1);
}

#[test]
fn merge_refuses_missing_duplicated_and_foreign_shards() {
    let lot = make_lot();
    let p = lot.path();
    let limits = p.join("limits.csv");
    let l = limits.to_str().unwrap();
    let shard = |name: &str, k: &str, extra: &[&str]| -> PathBuf {
        let dir = p.join(name);
        let mut args = vec!["--shard", k];
        args.extend_from_slice(extra);
        let o = run_batch(p, &dir, &args);
        assert!(
            matches!(o.status.code(), Some(0 | 1)),
            "{}",
            String::from_utf8_lossy(&o.stderr)
        );
        dir
    };
    let s1 = shard("s1", "1/3", &["--limits", l]);
    let s2 = shard("s2", "2/3", &["--limits", l]);
    let s3 = shard("s3", "3/3", &["--limits", l]);
    let out = p.join("merged");
    let refused = |dirs: &[&Path], needles: &[&str]| {
        let o = merge(&out, dirs);
        let err = String::from_utf8_lossy(&o.stderr).to_string();
        assert_eq!(o.status.code(), Some(2), "{err}");
        for n in needles {
            assert!(err.contains(n), "{n:?} not in {err}");
        }
        // Refused before anything is written.
        assert!(!out.exists(), "{err}");
    };
    // A missing shard is named.
    refused(&[&s1, &s3], &["shard 2/3", "'shards'"]);
    // A shard given twice (here the same folder twice) names the shard and both folders.
    refused(&[&s1, &s2, &s2, &s3], &["shard 2/3 a second time", "s2"]);
    // A shard of the same plan run with another limit table: another fingerprint.
    let loose = p.join("loose.csv");
    std::fs::write(&loose, "condition,metric,low,high,unit\n*,snr_db,40,,dB\n").unwrap();
    let s2x = shard("s2x", "2/3", &["--limits", loose.to_str().unwrap()]);
    refused(&[&s1, &s2x, &s3], &["s2x/shard.json", "'fingerprint'"]);
    // ... and one of a changed plan (one comment more is another plan file).
    let plan = p.join("plan.toml");
    let text = std::fs::read_to_string(&plan).unwrap();
    std::fs::write(&plan, format!("{text}\n# changed\n")).unwrap();
    let s2p = shard("s2p", "2/3", &["--limits", l]);
    std::fs::write(&plan, &text).unwrap();
    refused(&[&s1, &s2p, &s3], &["s2p/shard.json", "'fingerprint'"]);
    // A shard of another split (M = 4), and one run with other plots.
    let s2m = shard("s2m", "2/4", &["--limits", l]);
    refused(&[&s1, &s2m, &s3], &["'shards'", "expected shards 3"]);
    let s2q = shard("s2q", "2/3", &["--limits", l, "--plots", "all"]);
    refused(&[&s1, &s2q, &s3], &["'plots'"]);
    // A device in two shards (a manifest edited by hand).
    let s3d = p.join("s3d");
    std::fs::create_dir_all(&s3d).unwrap();
    for f in files_under(&s3) {
        std::fs::create_dir_all(s3d.join(&f).parent().unwrap()).unwrap();
        std::fs::copy(s3.join(&f), s3d.join(&f)).unwrap();
    }
    let mut m = manifest(&s3d);
    m["devices"] = serde_json::json!(["d01"]);
    std::fs::write(s3d.join("shard.json"), m.to_string()).unwrap();
    refused(
        &[&s1, &s2, &s3d],
        &["device 'd01' in shard 3/3 and in shard 1/3"],
    );
    // A folder that is no finished shard (an unsharded run: no manifest).
    let whole = p.join("whole");
    run_batch(p, &whole, &["--limits", l]);
    assert!(!whole.join("shard.json").exists());
    refused(&[&s1, &s2, &whole], &["whole/shard.json"]);
    // A manifest left by an earlier shard run is removed by the next run into the folder.
    let reused = shard("reused", "1/3", &["--limits", l]);
    assert!(reused.join("shard.json").is_file());
    run_batch(p, &reused, &["--limits", l]);
    assert!(!reused.join("shard.json").exists());
    // The merged report may not go into a shard folder.
    let o = merge(&s1, &[&s1, &s2, &s3]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("'out'"));
    // The good set merges.
    assert_eq!(merge(&out, &[&s1, &s2, &s3]).status.code(), Some(1));
}

#[test]
fn bad_shard_values_are_errors_naming_the_option() {
    let lot = make_lot();
    let p = lot.path();
    for bad in ["0/3", "4/3", "x", "3", "1/0", "2/", "-1/3", "1.5/3"] {
        let out = p.join("out");
        let o = run_batch(p, &out, &[&format!("--shard={bad}")]);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{bad}: {err}");
        assert!(
            err.contains("'--shard'") && err.contains("K/M") && err.contains(&format!("'{bad}'")),
            "{bad}: {err}"
        );
        // Refused before the work: no output folder.
        assert!(!out.exists(), "{bad}");
    }
}

// ───────────────────────────── an interrupted run ─────────────────────────────

/// A lot of `devices` × 2 conditions whose records are four 2^15-sample binary files shared by every
/// device through an explicit record list (many results, few files to write).
fn make_big_lot(devices: usize) -> tempfile::TempDir {
    use spurline::{synthesize, write_record, OutputLayout, SynthFrequency, SynthSettings};
    use std::fmt::Write as _;
    let dir = tempfile::tempdir().unwrap();
    let mut plan = String::from(
        "title = \"big lot\"\n[converter]\nbits = 12\nsample_rate_hz = 100e6\nformat = \"i16le\"\n\
         [analysis]\nharmonics = 5\n",
    );
    let mut fins = Vec::new();
    for (c, target) in [10.1e6, 31.3e6].into_iter().enumerate() {
        for v in 0..2 {
            let s = synthesize(&SynthSettings {
                bits: 12,
                samples: 1 << 15,
                frequency: SynthFrequency::NearestCoherent(target),
                noise_rms_codes: 0.5 + v as f64,
                seed: (10 * c + v) as u64,
                ..SynthSettings::default()
            })
            .unwrap();
            let layout = OutputLayout::Binary {
                word_bytes: 2,
                big_endian: false,
                offset_binary: false,
            };
            write_record(&dir.path().join(format!("r{c}{v}.bin")), &s.record, &layout).unwrap();
            if v == 0 {
                fins.push(s.frequency_hz);
            }
        }
    }
    plan.push_str("[records]\nlist = [\n");
    for d in 0..devices {
        for c in 0..2 {
            let _ = writeln!(
                plan,
                "  {{ device = \"d{d:05}\", condition = \"c{c}\", files = [\"r{c}{}.bin\"] }},",
                d % 2
            );
        }
    }
    plan.push_str("]\n");
    for (c, f) in fins.iter().enumerate() {
        let _ = write!(
            plan,
            "\n[[condition]]\nname = \"c{c}\"\nfin_hz = {f}\namplitude_dbfs = -1.0\n"
        );
    }
    std::fs::write(dir.path().join("plan.toml"), plan).unwrap();
    std::fs::write(
        dir.path().join("limits.csv"),
        "condition,metric,low,high,unit\n*,spectrum.snr_db,67,,dB\n",
    )
    .unwrap();
    dir
}

#[test]
fn a_killed_run_keeps_complete_summaries_and_device_folders() {
    // What an interruption may leave (src/lot/run.rs, src/report/write.rs): lot files that are whole
    // (each written to a temporary file, then renamed), every device they list in a complete folder,
    // and temporary files only under hidden names that no reader takes for an output.
    let lot = make_big_lot(3000);
    let p = lot.path();
    let out = p.join("out");
    let mut child = std::process::Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
        .arg("batch")
        .arg(p.join("plan.toml"))
        .arg("--limits")
        .arg(p.join("limits.csv"))
        .arg("--out")
        .arg(&out)
        .args(["--jobs", "2"])
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    let pid = child.id();
    let summary = out.join("summary.csv");
    let start = std::time::Instant::now();
    loop {
        let rows =
            std::fs::read_to_string(&summary).map_or(0, |t| t.lines().count().saturating_sub(1));
        if rows >= 6 {
            break;
        }
        if start.elapsed() > std::time::Duration::from_secs(30) {
            let _ = child.kill();
            panic!("no summary rows after 30 s");
        }
        std::thread::sleep(std::time::Duration::from_millis(10));
    }
    child.kill().unwrap();
    let status = child.wait().unwrap();
    assert_eq!(status.code(), None, "the run was to be killed, not finish");

    // The lot summary is whole CSV: every row complete, the file ends at a row's end.
    let bytes = std::fs::read(&summary).unwrap();
    assert_eq!(bytes.last(), Some(&b'\n'));
    let mut rdr = csv::ReaderBuilder::new()
        .flexible(false)
        .from_reader(&bytes[..]);
    let head: Vec<String> = rdr.headers().unwrap().iter().map(str::to_string).collect();
    let rows: Vec<csv::StringRecord> = rdr.records().map(|r| r.unwrap()).collect();
    assert!(rows.len() >= 6 && rows.len() < 6000, "{} rows", rows.len());
    assert!(rows.iter().all(|r| r.len() == head.len()));
    // Whole devices in lot order, both conditions each.
    assert_eq!(rows.len() % 2, 0);
    // Byte offsets where each row starts, and the end of the file.
    let mut starts: Vec<usize> = rows
        .iter()
        .map(|r| r.position().unwrap().byte() as usize)
        .collect();
    starts.push(bytes.len());
    for (i, pair) in rows.chunks(2).enumerate() {
        let device = format!("d{i:05}");
        assert_eq!((&pair[0][0], &pair[0][1]), (device.as_str(), "c0"));
        assert_eq!((&pair[1][0], &pair[1][1]), (device.as_str(), "c1"));
        // Its folder is complete: the device summary is the header and exactly its two lot rows.
        let own = std::fs::read(out.join(&device).join("summary.csv")).unwrap();
        let mut want = bytes[..starts[0]].to_vec();
        want.extend_from_slice(&bytes[starts[2 * i]..starts[2 * i + 2]]);
        assert!(own == want, "{device}/summary.csv");
        let json: serde_json::Value = serde_json::from_str(
            &std::fs::read_to_string(out.join(&device).join("results.json")).unwrap(),
        )
        .unwrap();
        assert_eq!(json["device"], device.as_str());
        assert_eq!(json["conditions"].as_array().unwrap().len(), 2);
    }
    // The other lot files are whole too (possibly from the rewrite before: never ahead of summary.csv).
    let (yh, _) = read_csv(&out.join("yield.csv"));
    assert_eq!(yh[0], "condition");
    read_csv(&out.join("failures.csv"));
    let html = std::fs::read_to_string(out.join("index.html")).unwrap();
    assert!(html.ends_with("</html>\n"));
    // The table of every result lists no result the summary does not have yet.
    let table = html
        .split("<tbody id=\"all\">")
        .nth(1)
        .unwrap()
        .split("</tbody>")
        .next()
        .unwrap();
    assert!(table.matches("<tr class=").count() <= rows.len());
    // Nothing else at the top but device folders and, if the kill came mid-write, temporary files
    // under hidden names of the form .<output>.<pid>-<n>.tmp.
    let outputs = [
        "summary.csv",
        "failures.csv",
        "yield.csv",
        "index.html",
        "limits.csv",
    ];
    for e in std::fs::read_dir(&out).unwrap() {
        let e = e.unwrap();
        let name = e.file_name().to_string_lossy().to_string();
        if e.path().is_dir() {
            assert!(name.starts_with('d') && name.len() == 6, "{name}");
        } else if !outputs.contains(&name.as_str()) {
            let temp = outputs.iter().any(|o| {
                name.strip_prefix(&format!(".{o}.{pid}-"))
                    .and_then(|rest| rest.strip_suffix(".tmp"))
                    .is_some_and(|n| n.parse::<u64>().is_ok())
            });
            assert!(temp, "left over: {name}");
        }
    }
    // The readers take the summary, never a temporary file: the run reads back with its rows.
    let back = spurline::read_results(std::slice::from_ref(&out)).unwrap();
    assert_eq!(back.rows.len(), rows.len());
}

#[test]
fn yields_and_failures_match_an_independent_count() {
    let lot = make_lot();
    let p = lot.path();
    let out = p.join("out");
    let limits = p.join("limits.csv");
    run_batch(p, &out, &["--limits", limits.to_str().unwrap()]);
    let (head, rows) = read_csv(&out.join("summary.csv"));
    // The fixture's limits, written out again by hand: (condition or *, metric, low, high, guardband).
    type Row<'a> = (&'a str, &'a str, Option<f64>, Option<f64>, f64);
    let table: [Row; 4] = [
        ("*", "spectrum.snr_db", Some(60.0), None, 2.5),
        ("*", "spectrum.sfdr_dbc", Some(65.0), None, 0.0),
        ("*", "spectrum.harmonics.h3.dbc", None, Some(-60.0), 0.0),
        ("fin_31M", "spectrum.enob_bits", Some(9.5), None, 0.0),
    ];
    // (condition, metric) → (tested, passed, failed, guardband); metric "*" for whole results.
    let mut tally: BTreeMap<(String, String), [usize; 4]> = BTreeMap::new();
    let mut failures = 0;
    let mut device_state: BTreeMap<String, usize> = BTreeMap::new(); // 0 pass, 1 guardband, 2 fail
    for r in &rows {
        let cond = cell(&head, r, "condition").to_string();
        let mut worst = 0;
        for (c, m, lo, hi, g) in table {
            if c != "*" && c != cond {
                continue;
            }
            let v: f64 = cell(&head, r, m).parse().unwrap();
            let hard = lo.is_some_and(|l| v < l) || hi.is_some_and(|h| v > h);
            let soft = !hard && (lo.is_some_and(|l| v < l + g) || hi.is_some_and(|h| v > h - g));
            let k = if hard {
                2
            } else if soft {
                3
            } else {
                1
            };
            let t = tally.entry((cond.clone(), m.to_string())).or_default();
            t[0] += 1;
            t[k] += 1;
            failures += usize::from(k != 1);
            worst = worst.max(match k {
                2 => 2,
                3 => 1,
                _ => 0,
            });
        }
        let want = ["pass", "fail_guardband", "fail"][worst];
        assert_eq!(cell(&head, r, "verdict"), want, "{r:?}");
        let t = tally.entry((cond.clone(), "*".into())).or_default();
        t[0] += 1;
        t[[1, 3, 2][worst]] += 1;
        let d = device_state.entry(r[0].clone()).or_default();
        *d = (*d).max(worst);
    }
    // The design of the fixture (make_records.sh): SNR from 10·log10((A²/2)/(1/12 + σ²)) with
    // A = 2048·10^(-1/20) is 69.8 dB for d01 (σ 0.3), 61.9 dB for d04 (σ 1: inside the 2.5 dB
    // guardband of 60) and 52.6 dB for d03 (σ 3: fails); d02's -62 dBc third harmonic fails SFDR 65.
    assert_eq!(
        device_state
            .iter()
            .map(|(d, s)| (d.as_str(), *s))
            .collect::<Vec<_>>(),
        [("d01", 0), ("d02", 2), ("d03", 2), ("d04", 1)]
    );
    let (yh, yrows) = read_csv(&out.join("yield.csv"));
    assert_eq!(
        yh,
        [
            "condition",
            "metric",
            "tested",
            "passed",
            "failed",
            "failed_guardband",
            "errors",
            "yield"
        ]
    );
    let mut seen = 0;
    for y in &yrows {
        let key = (y[0].clone(), y[1].clone());
        let n: Vec<usize> = y[2..7].iter().map(|s| s.parse().unwrap()).collect();
        if key.0 == "*" {
            // Devices: d01 passes, d04 fails only inside a guardband, d02 and d03 fail.
            assert_eq!(n, [4, 1, 2, 1, 0]);
            assert_eq!(y[7], "0.2500");
            continue;
        }
        let t = tally[&key];
        assert_eq!(n, [t[0], t[1], t[2], t[3], 0], "{key:?}");
        assert_eq!(y[7], format!("{:.4}", t[1] as f64 / t[0] as f64), "{key:?}");
        seen += 1;
    }
    assert_eq!(seen, tally.len());
    let (fh, frows) = read_csv(&out.join("failures.csv"));
    assert_eq!(fh[..3], ["device", "condition", "metric"]);
    assert_eq!(frows.len(), failures);
    for f in &frows {
        let value: f64 = cell(&fh, f, "value").parse().unwrap();
        let limit: f64 = cell(&fh, f, "limit").parse().unwrap();
        let margin: f64 = cell(&fh, f, "margin").parse().unwrap();
        let want = if cell(&fh, f, "bound") == "low" {
            value - limit
        } else {
            limit - value
        };
        assert_eq!(margin, want);
        assert_eq!(cell(&fh, f, "outcome") == "fail", margin < 0.0, "{f:?}");
    }
}

// ───────────────────────────── statistics and limit proposals ─────────────────────────────

fn refs() -> serde_json::Value {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/stats/stats_refs.json");
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn values_of(set: &serde_json::Value) -> Vec<f64> {
    set["values"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect()
}

/// Relative agreement with a numpy/scipy value: the sums differ only in summation order (numpy sums
/// pairwise), a few ulps per value.
fn close(got: f64, want: f64, what: &str) {
    let tol = NUMPY_REL * want.abs().max(1.0);
    assert!(
        (got - want).abs() <= tol,
        "{what}: {got} vs numpy/scipy {want}"
    );
}

#[test]
fn proposals_in_the_library() {
    let r = refs();
    let set = &r["sets"]["normal_30"];
    let x = values_of(set);
    let data = Characterisation {
        catalogue: Catalogue::from_columns([
            "spectrum.snr_db",
            "spectrum.thd_dbc",
            "fit.frequency_hz",
        ]),
        conditions: vec!["c1".into()],
        rows: x
            .iter()
            .enumerate()
            .map(|(i, v)| ResultRow {
                device: format!("d{i}"),
                condition: "c1".into(),
                values: [
                    ("spectrum.snr_db".to_string(), *v),
                    ("spectrum.thd_dbc".to_string(), -*v),
                    ("fit.frequency_hz".to_string(), *v),
                ]
                .into(),
            })
            .collect(),
        dropped: vec![],
    };
    let metrics = [
        "spectrum.snr_db".to_string(),
        "spectrum.thd_dbc".into(),
        "fit.frequency_hz".into(),
    ];
    let settings = ProposalSettings {
        method: Method::Sigma { k: 6.0 },
        two_sided: false,
        guardband: vec![],
    };
    let p = propose(&data, &metrics, &settings, None);
    let (lo, hi) = (
        set["sigma_limits_k6"][0].as_f64().unwrap(),
        set["sigma_limits_k6"][1].as_f64().unwrap(),
    );
    // Higher is better: low only. Lower is better (the negated values): high only. Two-sided: both.
    close(p[0].low.unwrap(), lo, "snr low");
    assert_eq!(p[0].high, None);
    assert_eq!(p[1].low, None);
    close(p[1].high.unwrap(), -lo, "thd high");
    close(p[2].low.unwrap(), lo, "two-sided low");
    close(p[2].high.unwrap(), hi, "two-sided high");
    let settings = ProposalSettings {
        method: Method::Percentile { percent: 1.0 },
        two_sided: true,
        guardband: vec!["0.5sigma".parse::<spurline::GuardbandRule>().unwrap()],
    };
    let p = propose(&data, &metrics[..1], &settings, None);
    let pct = &set["percentiles"];
    let p1 = pct
        .as_array()
        .unwrap()
        .iter()
        .find(|q| q[0] == 1.0)
        .unwrap()[1]
        .as_f64()
        .unwrap();
    let p99 = pct
        .as_array()
        .unwrap()
        .iter()
        .find(|q| q[0] == 99.0)
        .unwrap()[1]
        .as_f64()
        .unwrap();
    close(p[0].low.unwrap(), p1, "P1");
    close(p[0].high.unwrap(), p99, "P99");
    close(
        p[0].guardband,
        0.5 * set["std"].as_f64().unwrap(),
        "guardband 0.5σ",
    );
    // The proposal as a table reads back in the batch's limit-table parser.
    let table = spurline::proposal_table(&p, "p.csv");
    let back = LimitTable::parse(&table.to_csv(), "p.csv", &data.scope()).unwrap();
    assert_eq!(back.limits.len(), 1);
    let l = &back.limits[0];
    assert!(
        l.low.unwrap() <= p1 && p1 - l.low.unwrap() < PROPOSAL_ROUNDING,
        "{:?} vs {p1}",
        l.low
    );
    assert!(l.high.unwrap() >= p99 && l.high.unwrap() - p99 < PROPOSAL_ROUNDING);
}

#[test]
fn limits_command_proposes_and_reports_cpk() {
    let r = refs();
    let normal = &r["sets"]["normal_30"];
    let skewed = &r["sets"]["skewed_40"];
    let dir = tempfile::tempdir().unwrap();
    // A batch summary as `batch` writes it (lead columns, then result columns), plus an error row.
    let mut w = csv::Writer::from_path(dir.path().join("summary.csv")).unwrap();
    w.write_record([
        "device",
        "condition",
        "verdict",
        "reason",
        "spectrum.snr_db",
        "spectrum.coherent",
        "error.kind",
    ])
    .unwrap();
    for (cond, set) in [("c1", normal), ("c2", skewed)] {
        for (i, v) in values_of(set).iter().enumerate() {
            w.write_record([
                format!("d{i:02}"),
                cond.into(),
                "pass".into(),
                String::new(),
                v.to_string(),
                "true".into(),
                String::new(),
            ])
            .unwrap();
        }
    }
    w.write_record(["d99", "c1", "error", "unreadable", "", "", "io"])
        .unwrap();
    w.flush().unwrap();
    drop(w);
    let c1 = &normal["cpk"][0];
    let c2 = &skewed["cpk"][1];
    let existing = dir.path().join("existing.csv");
    std::fs::write(
        &existing,
        format!(
            "condition,metric,low,high,unit\nc1,snr_db,{},{},dB\nc2,spectrum.snr_db,{},,dB\n",
            c1["low"].as_f64().unwrap(),
            c1["high"].as_f64().unwrap(),
            c2["low"].as_f64().unwrap()
        ),
    )
    .unwrap();
    let proposed = dir.path().join("proposed.csv");
    let o = spurline()
        .arg("limits")
        .arg(dir.path())
        .args(["--metric", "snr_db", "--existing"])
        .arg(&existing)
        .arg("--out")
        .arg(&proposed)
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&o.stdout).to_string();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(
        text.contains("limits from 70 results of 40 devices under 2 conditions"),
        "{text}"
    );
    let line = |cond: &str| {
        text.lines()
            .find(|l| l.starts_with(cond))
            .unwrap()
            .to_string()
    };
    let (l1, l2) = (line("c1 "), line("c2 "));
    // n, Cpk to 3 decimals and the shape note, against the stored numpy/scipy values.
    assert!(l1.contains(" 30 "), "{l1}");
    assert!(
        l1.contains(&format!("{:.3}", c1["cpk"].as_f64().unwrap())),
        "{l1}"
    );
    assert!(
        l2.contains(&format!("{:.3}", c2["cpk"].as_f64().unwrap())),
        "{l2}"
    );
    assert!(l1.contains("no clear departure from normal"), "{l1}");
    assert!(
        l2.contains("not normal") && l2.contains("skewed left"),
        "{l2}"
    );
    // The table: a low limit only (SNR: higher is better), mean − 6σ rounded down to 6 digits.
    let data = spurline::read_results(&[dir.path().join("summary.csv")]).unwrap();
    assert_eq!(data.rows.len(), 70);
    let t = LimitTable::read(&proposed, &data.scope()).unwrap();
    assert_eq!(t.limits.len(), 2);
    for (l, set) in t.limits.iter().zip([normal, skewed]) {
        let want = set["sigma_limits_k6"][0].as_f64().unwrap();
        let got = l.low.unwrap();
        assert!(
            got <= want && want - got < PROPOSAL_ROUNDING,
            "{got} vs {want}"
        );
        assert_eq!(l.high, None);
        assert_eq!(l.unit.symbol(), "dB");
    }
    // Percentile method with a guardband and the table accepted by `batch`'s parser.
    let o = spurline()
        .arg("limits")
        .arg(dir.path().join("summary.csv"))
        .args([
            "--metric",
            "snr_db",
            "--method",
            "percentile",
            "--percentile",
            "5",
            "--guardband",
            "snr_db=0.1",
            "--two-sided",
            "--out",
        ])
        .arg(&proposed)
        .output()
        .unwrap();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let t = LimitTable::read(&proposed, &data.scope()).unwrap();
    let p5 = normal["percentiles"]
        .as_array()
        .unwrap()
        .iter()
        .find(|q| q[0] == 5.0)
        .unwrap()[1]
        .as_f64()
        .unwrap();
    assert!(t.limits[0].low.unwrap() <= p5 && p5 - t.limits[0].low.unwrap() < PROPOSAL_ROUNDING);
    assert!(t.limits[0].high.is_some());
    assert_eq!(t.limits[0].guardband, 0.1);
    // Bad input: exit 2 with a message.
    for args in [
        vec!["--metric", "enob"],
        vec!["--k=-1"],
        vec!["--guardband", "x=1"],
        vec!["--method", "percentile", "--percentile", "60"],
    ] {
        let o = spurline()
            .arg("limits")
            .arg(dir.path())
            .args(&args)
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2), "{args:?}");
        assert!(
            String::from_utf8_lossy(&o.stderr).contains("spurline: error"),
            "{args:?}"
        );
    }
}

#[test]
fn limits_reads_a_batch_run_back() {
    // The batch output folder itself, and its results.json files, are accepted as results.
    let lot = make_lot();
    let p = lot.path();
    let out = p.join("out");
    run_batch(p, &out, &[]);
    let from_csv = spurline::read_results(std::slice::from_ref(&out)).unwrap();
    let jsons: Vec<PathBuf> = ["d01", "d02", "d03", "d04"]
        .iter()
        .map(|d| out.join(d).join("results.json"))
        .collect();
    let from_json = spurline::read_results(&jsons).unwrap();
    assert_eq!(from_csv.conditions, ["fin_10M", "fin_31M"]);
    assert_eq!(from_csv.rows.len(), 8);
    assert_eq!(from_json.rows.len(), 8);
    for (a, b) in from_csv.rows.iter().zip(&from_json.rows) {
        assert_eq!((&a.device, &a.condition), (&b.device, &b.condition));
        assert_eq!(
            a.values.get("spectrum.snr_db"),
            b.values.get("spectrum.snr_db")
        );
        assert!(a.values.contains_key("spectrum.snr_db"));
    }
    let o = spurline().arg("limits").arg(&out).output().unwrap();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let text = String::from_utf8_lossy(&o.stdout);
    // The default metrics; with 4 devices the shape is not judged.
    assert!(
        text.contains("fin_31M")
            && text.contains("spectrum.sfdr_dbc")
            && text.contains("fit.enob_bits"),
        "{text}"
    );
    assert!(text.contains("too few values to judge"), "{text}");
}

// ─────────────────── shards on a scheduler: --shard auto, status, resume ───────────────────

/// Every variable `--shard auto` reads (src/lot/array_task.rs), so that a test run inside a job
/// array of its own is not steered by it.
const ARRAY_VARS: [&str; 16] = [
    "SPURLINE_SHARDS",
    "SPURLINE_SHARD_FIRST",
    "SLURM_ARRAY_TASK_ID",
    "SLURM_ARRAY_TASK_MIN",
    "SLURM_ARRAY_TASK_MAX",
    "SLURM_ARRAY_TASK_STEP",
    "SLURM_ARRAY_TASK_COUNT",
    "PBS_ARRAY_INDEX",
    "PBS_ARRAYID",
    "LSB_JOBINDEX",
    "LSB_JOBINDEX_END",
    "LSB_JOBINDEX_STEP",
    "SGE_TASK_ID",
    "SGE_TASK_FIRST",
    "SGE_TASK_LAST",
    "SGE_TASK_STEPSIZE",
];

/// `spurline batch PLAN --limits LIMITS --out OUT --shard auto` as a job-array task with `vars` (the
/// test process's own environment is left alone).
fn array_task(lot: &Path, out: &Path, jobs: &str, vars: &[(&str, &str)]) -> std::process::Command {
    let mut c = std::process::Command::new(assert_cmd::cargo::cargo_bin!("spurline"));
    c.arg("batch")
        .arg(lot.join("plan.toml"))
        .arg("--limits")
        .arg(lot.join("limits.csv"))
        .arg("--out")
        .arg(out)
        .args(["--jobs", jobs, "--shard", "auto"]);
    for v in ARRAY_VARS {
        c.env_remove(v);
    }
    for (k, v) in vars {
        c.env(k, v);
    }
    c
}

fn status(folders: &[&Path]) -> std::process::Output {
    let o = spurline()
        .args(["merge", "--status"])
        .args(folders)
        .output()
        .unwrap();
    assert!(!String::from_utf8_lossy(&o.stderr).contains("panicked"));
    o
}

#[test]
fn shard_auto_outside_an_array_names_the_variables() {
    // Outside a job array there is nothing to read: exit 2, naming each scheduler's variable.
    let lot = make_lot();
    let p = lot.path();
    let o = array_task(p, &p.join("out"), "1", &[]).output().unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    for v in [
        "SLURM_ARRAY_TASK_ID",
        "PBS_ARRAY_INDEX",
        "LSB_JOBINDEX",
        "SGE_TASK_ID",
    ] {
        assert!(err.contains(v), "{err}");
    }
    assert!(!p.join("out").exists(), "nothing is written");
    // A single Slurm task submitted again, without our count: refused, naming SPURLINE_SHARDS.
    let again = [
        ("SLURM_ARRAY_TASK_ID", "3"),
        ("SLURM_ARRAY_TASK_MIN", "3"),
        ("SLURM_ARRAY_TASK_MAX", "3"),
        ("SLURM_ARRAY_TASK_COUNT", "1"),
    ];
    let o = array_task(p, &p.join("out"), "1", &again).output().unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("SPURLINE_SHARDS"));
}

#[test]
fn a_killed_shard_is_named_with_its_command_and_resumes_to_the_same_report() {
    // Issue 17's resume (no outside source: the unsharded run is the reference). Shard 2 of 3 runs as
    // a Slurm array task and is killed midway; status and merge say what is missing; the command the
    // merge names runs it again, shard 3 runs as a single task submitted again, and the merge equals
    // the unsharded report byte for byte.
    let lot = make_big_lot(3000);
    let p = lot.path();
    let full = p.join("full");
    let l = p.join("limits.csv");
    let o = run_batch(p, &full, &["--limits", l.to_str().unwrap(), "--jobs", "2"]);
    assert!(o.status.code() == Some(0) || o.status.code() == Some(1));
    let shards = p.join("shards");
    let dir = |k: usize| shards.join(k.to_string());
    let task = |k: &'static str| {
        [
            ("SLURM_ARRAY_TASK_ID", k),
            ("SLURM_ARRAY_TASK_MIN", "1"),
            ("SLURM_ARRAY_TASK_MAX", "3"),
            ("SLURM_ARRAY_TASK_STEP", "1"),
            ("SLURM_ARRAY_TASK_COUNT", "3"),
        ]
    };
    let o = array_task(p, &dir(1), "2", &task("1")).output().unwrap();
    assert!(o.status.code().is_some_and(|c| c < 2), "{o:?}");
    assert!(String::from_utf8_lossy(&o.stderr).contains("shard 1/3 (Slurm array task"));

    // Shard 2, on one thread, killed once its summary lists a few devices.
    let mut child = array_task(p, &dir(2), "1", &task("2"))
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    let start = std::time::Instant::now();
    loop {
        let rows = std::fs::read_to_string(dir(2).join("summary.csv"))
            .map_or(0, |t| t.lines().count().saturating_sub(1));
        if rows >= 4 {
            break;
        }
        if start.elapsed() > std::time::Duration::from_secs(60) {
            let _ = child.kill();
            panic!("no summary rows after 60 s");
        }
        std::thread::sleep(std::time::Duration::from_millis(10));
    }
    child.kill().unwrap();
    assert_eq!(child.wait().unwrap().code(), None, "killed, not finished");
    assert!(!dir(2).join("shard.json").exists());
    assert!(dir(2).join("shard-start.json").is_file());

    // Status from the folder holding the shard folders: exit 1, each shard's state, the devices.
    let o = status(&[&shards]);
    assert_eq!(o.status.code(), Some(1));
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(
        text.contains("3000 devices × 2 conditions in 3 shards"),
        "{text}"
    );
    assert!(text.contains("shard 1/3: finished, 1000 devices"), "{text}");
    assert!(text.contains("shard 2/3: started, "), "{text}");
    assert!(
        text.contains("shard 3/3: not started, 1000 devices"),
        "{text}"
    );
    assert!(
        text.lines().last() == Some("unfinished shards: 2,3"),
        "{text}"
    );
    // The devices done: shard 1's 1000 and shard 2's rows so far over its two conditions.
    let rows2 = read_csv(&dir(2).join("summary.csv")).1.len();
    assert!(
        text.contains(&format!("{} of 3000 devices done", 1000 + rows2 / 2)),
        "{text}"
    );

    // The merge refuses, naming both shards and the command that runs each again.
    let merged = p.join("merged");
    let o = merge(&merged, &[&dir(1), &dir(2)]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr).to_string();
    assert!(err.contains("shard 2/3 started in"), "{err}");
    assert!(
        err.contains("no folder of shard 3/3 among the 2 given"),
        "{err}"
    );
    let commands: Vec<String> = err
        .split("run it again: ")
        .skip(1)
        .map(|s| s.split(';').next().unwrap().trim().to_string())
        .collect();
    assert_eq!(commands.len(), 2, "{err}");
    for (k, c) in [(2, &commands[0]), (3, &commands[1])] {
        let want = format!("--shard {k}/3 --out {}", dir(k).display());
        assert!(c.ends_with(&want), "{c}");
    }

    // Shard 3 as a single task submitted again (Slurm then describes an array of one task; the
    // job script's SPURLINE_SHARDS gives the split), shard 2 by the command the merge named.
    let again = [
        ("SLURM_ARRAY_TASK_ID", "3"),
        ("SLURM_ARRAY_TASK_MIN", "3"),
        ("SLURM_ARRAY_TASK_MAX", "3"),
        ("SLURM_ARRAY_TASK_COUNT", "1"),
        ("SPURLINE_SHARDS", "3"),
    ];
    let o = array_task(p, &dir(3), "2", &again).output().unwrap();
    assert!(o.status.code().is_some_and(|c| c < 2), "{o:?}");
    let bin = assert_cmd::cargo::cargo_bin!("spurline");
    let rerun = commands[0].replacen("spurline", bin.to_str().unwrap(), 1);
    let o = std::process::Command::new("sh")
        .args(["-c", &rerun])
        .output()
        .unwrap();
    assert!(o.status.code().is_some_and(|c| c < 2), "{rerun}: {o:?}");
    assert!(!dir(2).join("shard-start.json").exists());

    let o = status(&[&shards]);
    assert_eq!(o.status.code(), Some(0));
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(
        text.contains("3 of 3 shards finished, 3000 of 3000 devices done"),
        "{text}"
    );
    assert!(!text.contains("unfinished"), "{text}");
    let o = merge(&merged, &[&dir(3), &dir(1), &dir(2)]);
    assert!(o.status.code().is_some_and(|c| c < 2), "{o:?}");
    assert_same_files(&full, &merged);
}

#[test]
fn status_refuses_what_is_no_lot_in_progress() {
    let lot = make_lot();
    let p = lot.path();
    // A folder with no shard in it: exit 2, naming it.
    std::fs::create_dir_all(p.join("empty")).unwrap();
    let o = status(&[&p.join("empty")]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("no shard has started yet"));
    // Shards of two different splits.
    let l = p.join("limits.csv");
    let l = l.to_str().unwrap();
    run_batch(p, &p.join("a"), &["--limits", l, "--shard", "1/2"]);
    run_batch(p, &p.join("b"), &["--limits", l, "--shard", "2/3"]);
    let o = status(&[&p.join("a"), &p.join("b")]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("'shards'"));
    // One finished shard of two and an unrelated folder: the folder is listed, exit 1.
    let o = status(&[&p.join("a"), &p.join("empty")]);
    assert_eq!(o.status.code(), Some(1));
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(text.contains("no shard in "), "{text}");
    assert!(text.contains("shard 2/2: not started, 2 devices"), "{text}");
}
