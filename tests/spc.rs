//! Control charts against reference values computed by a general-purpose library: the individuals
//! and moving-range limits, the X̄ and S limits of subgroups of unequal size, the run-rule flags of
//! every point, and Cpk with Bissell's interval, all from tests/reference/make_spc_refs.py (numpy and
//! scipy, written from the published definitions: Western Electric 1956, Nelson 1984, Montgomery's
//! Introduction to Statistical Quality Control, Bissell 1990), never from spurline's own output.

use crate::tolerances::SPC_REL;
use serde_json::Value;
use spurline::{cpk_interval, d4_two, individuals, run_rules, xbar_s, Rule, Subgroup, D2_TWO};

fn refs() -> Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/spc/spc_refs.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn close(got: f64, want: &Value, what: &str) {
    let want = want.as_f64().unwrap_or_else(|| panic!("{what}: no value"));
    let scale = want.abs().max(1e-300);
    assert!(
        (got - want).abs() <= SPC_REL * scale.max(1.0),
        "{what}: {got} against {want}"
    );
}

#[test]
fn chart_constants_match_numerical_integration() {
    // d2 and D4 for ranges of two, which the script integrates with scipy.integrate.quad.
    let r = refs();
    close(D2_TWO, &r["d2"], "d2");
    close(d4_two(), &r["D4"], "D4");
}

#[test]
fn individuals_limits_and_rule_flags_match_numpy() {
    let r = refs();
    let baseline = r["baseline"].as_u64().unwrap() as usize;
    let mut fired = std::collections::BTreeSet::new();
    for (name, s) in r["individuals"].as_object().unwrap() {
        let x: Vec<f64> = s["x"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let (i, mr) = individuals(&x, baseline).unwrap();
        close(i.centre, &s["centre"], &format!("{name} centre"));
        close(i.sigma, &s["sigma"], &format!("{name} sigma"));
        close(i.lcl, &s["lcl"], &format!("{name} LCL"));
        close(i.ucl, &s["ucl"], &format!("{name} UCL"));
        close(mr.centre, &s["mr_centre"], &format!("{name} MR centre"));
        close(mr.ucl, &s["mr_ucl"], &format!("{name} MR UCL"));
        let z: Vec<f64> = x.iter().map(|v| (v - i.centre) / i.sigma).collect();
        let got = run_rules(&z);
        for (k, want) in s["rules"].as_array().unwrap().iter().enumerate() {
            let want: Vec<&str> = want
                .as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_str().unwrap())
                .collect();
            let names: Vec<&str> = got[k].iter().map(|r| r.name()).collect();
            assert_eq!(names, want, "{name} point {k}");
            fired.extend(got[k].iter().copied());
        }
    }
    // The stored series exercise every rule (so a rule that never fires would be noticed).
    assert_eq!(fired.into_iter().collect::<Vec<_>>(), Rule::ALL.to_vec());
}

#[test]
fn xbar_and_s_limits_match_numpy() {
    let r = refs();
    let baseline = r["baseline"].as_u64().unwrap() as usize;
    let x = &r["xbar_s"];
    let groups: Vec<Subgroup> = x["groups"]
        .as_array()
        .unwrap()
        .iter()
        .map(|g| Subgroup {
            n: g["n"].as_u64().unwrap() as usize,
            mean: g["mean"].as_f64().unwrap(),
            std: g["std"].as_f64().unwrap(),
        })
        .collect();
    let limits = xbar_s(&groups, baseline).unwrap();
    for (k, (l, want)) in limits
        .iter()
        .zip(x["limits"].as_array().unwrap())
        .enumerate()
    {
        close(l.0.centre, &x["centre"], &format!("group {k} centre"));
        close(l.0.lcl, &want["xbar_lcl"], &format!("group {k} X̄ LCL"));
        close(l.0.ucl, &want["xbar_ucl"], &format!("group {k} X̄ UCL"));
        close(
            l.1.centre,
            &want["s_centre"],
            &format!("group {k} S centre"),
        );
        close(l.1.lcl, &want["s_lcl"], &format!("group {k} S LCL"));
        close(l.1.ucl, &want["s_ucl"], &format!("group {k} S UCL"));
    }
}

#[test]
fn cpk_and_its_interval_match_numpy() {
    for c in refs()["cpk"].as_array().unwrap() {
        let got = cpk_interval(
            c["n"].as_u64().unwrap() as usize,
            c["mean"].as_f64().unwrap(),
            c["std"].as_f64().unwrap(),
            c["low"].as_f64(),
            c["high"].as_f64(),
            0.95,
        )
        .unwrap();
        close(got.cpk, &c["cpk"], "Cpk");
        close(got.low, &c["ci_low"], "Cpk interval low");
        close(got.high, &c["ci_high"], "Cpk interval high");
    }
}
