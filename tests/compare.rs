//! Revision-comparison statistics against stored scipy values (tests/reference/make_ttest_refs.py).

use crate::tolerances::{SCIPY_REL, SCIPY_REL_FLOOR};
use spurline::{paired, summarize, welch};

fn refs() -> serde_json::Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/compare/ttests.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn floats(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

/// Agreement with scipy, within SCIPY_REL of the value (or of SCIPY_REL_FLOOR below it).
fn close(got: f64, want: f64, what: &str) {
    assert!(
        (got - want).abs() <= SCIPY_REL * want.abs().max(SCIPY_REL_FLOOR),
        "{what}: {got} vs {want}"
    );
}

// scipy.stats.ttest_ind(b, a, equal_var=False) and its confidence_interval(0.95), stored.
#[test]
fn welch_matches_scipy() {
    for case in refs()["cases"].as_array().unwrap() {
        let name = case["name"].as_str().unwrap();
        let (a, b) = (floats(&case["a"]), floats(&case["b"]));
        let t = welch(&a, &b, 0.95).unwrap();
        let w = &case["welch"];
        close(
            t.statistic,
            w["statistic"].as_f64().unwrap(),
            &format!("{name} t"),
        );
        close(t.df, w["df"].as_f64().unwrap(), &format!("{name} df"));
        close(
            t.p_value,
            w["p_value"].as_f64().unwrap(),
            &format!("{name} p"),
        );
        close(
            t.ci_low,
            w["ci_low"].as_f64().unwrap(),
            &format!("{name} ci_low"),
        );
        close(
            t.ci_high,
            w["ci_high"].as_f64().unwrap(),
            &format!("{name} ci_high"),
        );
        let s = summarize(&a).unwrap();
        let sa = &case["summary_a"];
        close(s.mean, sa["mean"].as_f64().unwrap(), "mean");
        close(s.std.unwrap(), sa["std"].as_f64().unwrap(), "std (ddof=1)");
        close(s.median, sa["median"].as_f64().unwrap(), "median");
    }
}

// scipy.stats.ttest_rel(b, a) and its confidence_interval(0.95), stored.
#[test]
fn paired_matches_scipy() {
    let mut seen = 0;
    for case in refs()["cases"].as_array().unwrap() {
        let Some(r) = case.get("paired") else {
            continue;
        };
        seen += 1;
        let (a, b) = (floats(&case["a"]), floats(&case["b"]));
        let t = paired(&a, &b, 0.95).unwrap();
        close(t.statistic, r["statistic"].as_f64().unwrap(), "t");
        close(t.df, r["df"].as_f64().unwrap(), "df");
        close(t.p_value, r["p_value"].as_f64().unwrap(), "p");
        close(t.ci_low, r["ci_low"].as_f64().unwrap(), "ci_low");
        close(t.ci_high, r["ci_high"].as_f64().unwrap(), "ci_high");
    }
    assert_eq!(seen, 2);
}

use spurline::{compare, read_run, Change, CompareSettings};
use std::path::Path;

/// Writes a minimal lot summary.csv (the columns `spurline batch` writes that compare reads).
fn write_run(dir: &Path, rows: &[(&str, &str, f64, f64, &str)]) {
    std::fs::create_dir_all(dir).unwrap();
    let mut s = String::from("device,condition,verdict,reason,bits,sample_rate_hz,fit.frequency_hz,spectrum.snr_db,spectrum.thd_dbc,error.message\n");
    for (dev, cond, snr, thd, err) in rows {
        let f = if *cond == "f10" { 10.1e6 } else { 40.3e6 };
        s.push_str(&format!(
            "{dev},{cond},pass,,12,100000000,{f},{snr},{thd},{err}\n"
        ));
    }
    std::fs::write(dir.join("summary.csv"), s).unwrap();
}

fn shifted(base: f64, shift: f64, i: usize) -> f64 {
    // A fixed, symmetric scatter of ±0.3 dB around the mean.
    base + shift + [-0.3, -0.1, 0.0, 0.1, 0.3, -0.2, 0.2, 0.05][i % 8]
}

#[test]
fn verdicts_directions_and_left_out_items() {
    let dir = tempfile::tempdir().unwrap();
    let (ra, rb) = (dir.path().join("revA"), dir.path().join("revB"));
    let devs = ["d1", "d2", "d3", "d4", "d5", "d6", "d7", "d8"];
    let mut a = Vec::new();
    let mut b = Vec::new();
    for (i, d) in devs.iter().enumerate() {
        // f10: SNR up by 1 dB (better), THD up (worse) by 1 dB; f40: SNR up 0.05 dB, below the 0.2 dB
        // minimum meaningful change.
        a.push((
            *d,
            "f10",
            shifted(70.0, 0.0, i),
            shifted(-80.0, 0.0, i + 3),
            "",
        ));
        b.push((
            *d,
            "f10",
            shifted(70.0, 1.0, i + 1),
            shifted(-80.0, 1.0, i + 4),
            "",
        ));
        a.push((
            *d,
            "f40",
            shifted(68.0, 0.0, i),
            -75.0 + 0.01 * i as f64,
            "",
        ));
        b.push((
            *d,
            "f40",
            shifted(68.0, 0.05, i),
            -75.0 + 0.01 * i as f64,
            "",
        ));
    }
    a.push(("d9", "f90", 60.0, -70.0, ""));
    b.push(("d9", "f10", 0.0, 0.0, "missing record"));
    write_run(&ra, &a);
    write_run(&rb, &b);
    let (run_a, run_b) = (read_run(&ra).unwrap(), read_run(&rb).unwrap());
    let c = compare(&run_a, &run_b, &CompareSettings::default());
    let find = |cond: &str, m: &str| {
        c.rows
            .iter()
            .find(|r| r.condition == cond && r.metric == m)
            .unwrap()
    };
    // Higher SNR is better; higher THD is worse (the directions of the trade, common practice).
    assert_eq!(find("f10", "spectrum.snr_db").verdict, Change::Better);
    assert_eq!(find("f10", "spectrum.thd_dbc").verdict, Change::Worse);
    assert_eq!(
        find("f40", "spectrum.thd_dbc").verdict,
        Change::NoSignificantChange
    );
    let tiny = find("f40", "spectrum.snr_db");
    assert_eq!(tiny.verdict, Change::NoSignificantChange, "{}", tiny.reason);
    // Sorted: changes first.
    assert!(matches!(c.rows[0].verdict, Change::Better | Change::Worse));
    // Nothing dropped silently: the condition only in A and B's error row are listed.
    assert!(
        c.left_out.iter().any(|l| l.contains("f90")),
        "{:?}",
        c.left_out
    );
    assert!(
        c.left_out.iter().any(|l| l.contains("missing record")),
        "{:?}",
        c.left_out
    );
    assert!(!c.warnings.is_empty());
    // Same devices in both runs: the paired analysis is there too.
    assert_eq!(find("f10", "spectrum.snr_db").pairs, 8);
    assert!(find("f10", "spectrum.snr_db").paired.is_some());
    // The verdict in plain words: which figures got better and which worse, with the test behind it.
    let summary = c.summary.join(" ");
    assert!(
        summary.contains("B is better than A in 1 figure(s): SNR at f10 (+1.")
            && summary.contains("B is worse than A in 1 figure(s): THD at f10 (+1."),
        "{summary}"
    );
    let snr = find("f10", "spectrum.snr_db");
    let welch_p = format!("p = {:.2e}", snr.welch.as_ref().unwrap().p_value);
    assert!(
        snr.statement
            .starts_with("SNR at f10 got better in B: B − A = +1.")
            && snr.statement.contains("Welch t test")
            && snr.statement.contains(&welch_p)
            && snr.statement.contains("over 8 device(s)"),
        "{}",
        snr.statement
    );
    assert!(find("f10", "spectrum.thd_dbc")
        .statement
        .starts_with("THD at f10 got worse in B"));
    assert!(
        tiny.statement.contains("did not change"),
        "{}",
        tiny.statement
    );
    // No NaN reaches an output.
    let json = serde_json::to_string(&c).unwrap();
    assert!(!json.contains("NaN") && !json.contains("null,\"ci"));
    let out = tempfile::tempdir().unwrap();
    spurline::write_comparison(out.path(), &c, &run_a, &run_b).unwrap();
    let csv = std::fs::read_to_string(out.path().join("comparison.csv")).unwrap();
    assert!(!csv.contains("NaN") && !csv.to_lowercase().contains("inf"));
}

#[test]
fn one_device_per_run_says_no_test() {
    let dir = tempfile::tempdir().unwrap();
    let (ra, rb) = (dir.path().join("a"), dir.path().join("b"));
    write_run(&ra, &[("d1", "f10", 70.0, -80.0, "")]);
    write_run(&rb, &[("d1", "f10", 71.0, -80.0, "")]);
    let c = compare(
        &read_run(&ra).unwrap(),
        &read_run(&rb).unwrap(),
        &CompareSettings::default(),
    );
    let r = c
        .rows
        .iter()
        .find(|r| r.metric == "spectrum.snr_db")
        .unwrap();
    assert_eq!(r.verdict, Change::NoTest);
    assert!(r.reason.contains("at least two"), "{}", r.reason);
}

#[test]
fn zero_variance_is_said_plainly() {
    let dir = tempfile::tempdir().unwrap();
    let (ra, rb) = (dir.path().join("a"), dir.path().join("b"));
    write_run(
        &ra,
        &[
            ("d1", "f10", 70.0, -80.0, ""),
            ("d2", "f10", 70.0, -80.0, ""),
        ],
    );
    write_run(
        &rb,
        &[
            ("d1", "f10", 70.0, -81.0, ""),
            ("d2", "f10", 70.0, -81.0, ""),
        ],
    );
    let c = compare(
        &read_run(&ra).unwrap(),
        &read_run(&rb).unwrap(),
        &CompareSettings::default(),
    );
    let snr = c
        .rows
        .iter()
        .find(|r| r.metric == "spectrum.snr_db")
        .unwrap();
    assert_eq!(snr.verdict, Change::NoSignificantChange);
    let thd = c
        .rows
        .iter()
        .find(|r| r.metric == "spectrum.thd_dbc")
        .unwrap();
    assert_eq!(thd.verdict, Change::NoTest);
    assert!(thd.reason.contains("zero spread"), "{}", thd.reason);
}

#[test]
fn compare_command_writes_its_outputs_escaped() {
    let dir = tempfile::tempdir().unwrap();
    let (ra, rb) = (dir.path().join("a"), dir.path().join("b"));
    let evil = "<script>alert(1)</script>";
    let rows_a: Vec<_> = (0..4)
        .map(|i| {
            (
                ["d1", "d2", "d3", "d4"][i],
                "f10",
                shifted(70.0, 0.0, i),
                -80.0,
                "",
            )
        })
        .collect();
    let rows_b: Vec<_> = (0..4)
        .map(|i| {
            (
                ["d1", "d2", "d3", "d4"][i],
                "f10",
                shifted(70.0, 0.5, i + 1),
                -80.0,
                "",
            )
        })
        .collect();
    write_run(&ra, &rows_a);
    write_run(&rb, &rows_b);
    // A condition name that must show as text.
    for p in [&ra, &rb] {
        let s = std::fs::read_to_string(p.join("summary.csv"))
            .unwrap()
            .replace(",f10,", &format!(",{evil},"));
        std::fs::write(p.join("summary.csv"), s).unwrap();
    }
    let out = dir.path().join("cmp");
    let st = assert_cmd::Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
        .arg("compare")
        .arg(&ra)
        .arg(&rb)
        .args(["--paired", "--out"])
        .arg(&out)
        .output()
        .unwrap();
    assert!(
        st.status.success(),
        "{}",
        String::from_utf8_lossy(&st.stderr)
    );
    for f in ["comparison.csv", "comparison.json", "comparison.html"] {
        assert!(out.join(f).exists(), "{f}");
    }
    let html = std::fs::read_to_string(out.join("comparison.html")).unwrap();
    assert!(!html.contains(evil) && html.contains("&lt;script&gt;"));
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("comparison.json")).unwrap())
            .unwrap();
    let snr = json["rows"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["metric"] == "spectrum.snr_db")
        .unwrap();
    assert_eq!(snr["decided_by"], "paired", "{snr}");
    // The terminal says the verdict in words, and the page carries the plain-words verdict.
    let stdout = String::from_utf8_lossy(&st.stdout);
    let verdict = snr["verdict"].as_str().unwrap().replace('_', " ");
    let line = stdout
        .lines()
        .find(|l| l.contains("spectrum.snr_db"))
        .unwrap();
    assert!(line.contains(&verdict), "{line}");
    assert!(html.contains("<section class=\"verdict\">"));
    let statement = snr["statement"].as_str().unwrap();
    assert!(
        statement.contains("paired t test over 4 devices"),
        "{statement}"
    );
}

// Limits and compare take their directions from one table (src/figures.rs), so every metric a limit
// table judges one-sided is compared, in the same direction, and nothing else is. The residual rms of
// the fit and the dBFS levels of the worst spur and the harmonics were once judged by limits and left
// out by compare. Directions: common practice, no source (less residual and spur level is better).
#[test]
fn limits_and_compare_agree_on_every_direction() {
    use spurline::better_direction;
    use spurline::figures::{self, Better};
    use spurline::{
        propose, Catalogue, Characterisation, Method, Metric, ProposalSettings, ResultRow,
    };
    let mut one_sided = 0;
    for key in figures::keys(10) {
        match Metric::of(&key).map(|m| m.direction) {
            Some(d @ (Better::Higher | Better::Lower)) => {
                assert_eq!(better_direction(&key), Some(d), "{key}");
                one_sided += 1;
            }
            _ => assert_eq!(better_direction(&key), None, "{key}"),
        }
    }
    assert!(one_sided > 20, "{one_sided}");
    let once_apart = [
        "fit.residual_rms_codes",
        "spectrum.worst_spur.dbfs",
        "spectrum.harmonics.h3.dbfs",
    ];
    // Compare reads them from a lot summary and judges a drop as an improvement.
    let dir = tempfile::tempdir().unwrap();
    let mut text = format!("device,condition,error.message,{}\n", once_apart.join(","));
    let mut rows = Vec::new();
    for i in 0..8 {
        let d = 0.01 * i as f64;
        text.push_str(&format!(
            "d{i},f10,,{},{},{}\n",
            0.5 + d,
            -80.0 + d,
            -90.0 + d
        ));
        rows.push(ResultRow {
            device: format!("d{i}"),
            condition: "f10".into(),
            values: once_apart.iter().map(|m| (m.to_string(), d)).collect(),
        });
    }
    let lower: String = text
        .lines()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                format!("{l}\n")
            } else {
                let cells: Vec<String> = l
                    .split(',')
                    .enumerate()
                    .map(|(j, c)| match j {
                        3 => format!("{}", c.parse::<f64>().unwrap() - 0.2),
                        4 | 5 => format!("{}", c.parse::<f64>().unwrap() - 3.0),
                        _ => c.to_string(),
                    })
                    .collect();
                format!("{}\n", cells.join(","))
            }
        })
        .collect();
    let (ra, rb) = (dir.path().join("a"), dir.path().join("b"));
    std::fs::create_dir_all(&ra).unwrap();
    std::fs::create_dir_all(&rb).unwrap();
    std::fs::write(ra.join("summary.csv"), &text).unwrap();
    std::fs::write(rb.join("summary.csv"), &lower).unwrap();
    let c = compare(
        &read_run(&ra).unwrap(),
        &read_run(&rb).unwrap(),
        &CompareSettings::default(),
    );
    for m in once_apart {
        let r = c.rows.iter().find(|r| r.metric == m).unwrap();
        assert_eq!(r.better, Better::Lower, "{m}");
        assert_eq!(r.verdict, Change::Better, "{m}: {}", r.reason);
    }
    // Limits propose a high limit only for them (one-sided, lower is better).
    let data = Characterisation {
        catalogue: Catalogue::for_harmonics(10),
        conditions: vec!["f10".into()],
        rows,
        dropped: vec![],
    };
    let metrics: Vec<String> = once_apart.iter().map(|m| m.to_string()).collect();
    let settings = ProposalSettings {
        method: Method::Sigma { k: 3.0 },
        two_sided: false,
        guardband: vec![],
    };
    for p in propose(&data, &metrics, &settings, None) {
        assert_eq!(p.direction, Better::Lower, "{}", p.metric);
        assert!(p.low.is_none() && p.high.is_some(), "{}", p.metric);
    }
}

/// Writes a summary.csv whose rows carry the record's own SNR uncertainty.
fn write_run_with_sigma(dir: &Path, rows: &[(&str, f64, f64)]) {
    std::fs::create_dir_all(dir).unwrap();
    let mut s = String::from(
        "device,condition,bits,sample_rate_hz,spectrum.snr_db,spectrum.uncertainty.snr_db\n",
    );
    for (dev, snr, u) in rows {
        s.push_str(&format!("{dev},f10,12,100000000,{snr},{u}\n"));
    }
    std::fs::write(dir.join("summary.csv"), s).unwrap();
}

/// One device a side: no t test is possible, but each record states its own uncertainty, so the
/// difference is judged against it (a normal z test). A 1 dB change with ±0.1 dB per record is
/// z = 1/√0.02 = 7.07, p = erfc(5) = 1.53746e-12; a 0.1 dB change is z = 0.707, p = erfc(0.5) =
/// 0.479500 (Abramowitz & Stegun table 7.1; checked with Python's math.erfc).
#[test]
fn one_device_a_side_is_judged_by_the_records_own_uncertainty() {
    use crate::tolerances::NORMAL_P_REL;
    let dir = tempfile::tempdir().unwrap();
    for (shift, p_want, verdict) in [
        (1.0, 1.5374597944280351e-12, Change::Better),
        (0.1, 0.4795001221869535, Change::NoSignificantChange),
    ] {
        let (ra, rb) = (
            dir.path().join(format!("a{shift}")),
            dir.path().join(format!("b{shift}")),
        );
        write_run_with_sigma(&ra, &[("d1", 70.0, 0.1)]);
        write_run_with_sigma(&rb, &[("d1", 70.0 + shift, 0.1)]);
        let c = compare(
            &read_run(&ra).unwrap(),
            &read_run(&rb).unwrap(),
            &CompareSettings::default(),
        );
        let r = &c.rows[0];
        assert_eq!(r.metric, "spectrum.snr_db");
        assert_eq!(r.verdict, verdict, "{}", r.statement);
        assert_eq!(r.decided_by.as_deref(), Some("record uncertainty"));
        let u = r.by_uncertainty.as_ref().unwrap();
        assert!(
            (u.p_value - p_want).abs() <= NORMAL_P_REL * p_want,
            "p {} vs {p_want}",
            u.p_value
        );
        assert_eq!(r.a_record_uncertainty, Some(0.1));
        assert!(
            r.statement
                .contains("judged by the records' own uncertainty")
                && r.statement.contains("each record ± 0.100 dB"),
            "{}",
            r.statement
        );
        if verdict == Change::NoSignificantChange {
            assert!(
                c.summary[0].contains("No figure changed"),
                "{:?}",
                c.summary
            );
        } else {
            assert!(
                c.summary[0].contains("B is better than A"),
                "{:?}",
                c.summary
            );
        }
    }
}
