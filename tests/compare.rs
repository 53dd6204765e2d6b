//! Revision-comparison statistics against stored scipy values (tests/reference/make_ttest_refs.py).

use spurline::compare::stats::{paired, summarize, welch};

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

/// Agreement with scipy: both evaluate the same closed forms in f64; the t distribution's tail and
/// quantile functions differ by rounding only (statrs vs scipy's cephes), well under 1e-8 relative.
const SCIPY_REL: f64 = 1e-8;

fn close(got: f64, want: f64, what: &str) {
    assert!(
        (got - want).abs() <= SCIPY_REL * want.abs().max(1e-3),
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
