//! Control charts against reference values computed by a general-purpose library: the individuals
//! and moving-range limits, the X̄ and S limits of subgroups of unequal size, the run-rule flags of
//! every point, and Cpk with Bissell's interval, all from tests/reference/make_spc_refs.py (numpy and
//! scipy, written from the published definitions: Western Electric 1956, Nelson 1984, Montgomery's
//! Introduction to Statistical Quality Control, Bissell 1990), never from spurline's own output; and
//! the worked examples of Montgomery's text (individuals and moving range, X̄ and S, Cpk's interval)
//! with run-rule flags worked by hand on its data.

use crate::tolerances::{printed, BOOK_IMR_LIMIT_ABS, SPC_REL};
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

// ---- worked examples of a published SPC text ----
// D. C. Montgomery, *Introduction to Statistical Quality Control* (6th ed., Wiley 2009), from
// memory: the figures printed there were worked from rounded intermediates (MR̄ to 0.01, d2 = 1.128,
// D4 = 3.267, the A3 and B4 tables), so each check allows the rounding the book did
// (tests/tolerances.rs).

/// The book's individuals-chart example (weekly mortgage loan processing costs, 20 weeks).
const MORTGAGE_COSTS: [f64; 20] = [
    310.0, 288.0, 297.0, 298.0, 307.0, 303.0, 294.0, 297.0, 308.0, 306.0, 294.0, 299.0, 297.0,
    299.0, 314.0, 295.0, 293.0, 306.0, 301.0, 304.0,
];

#[test]
fn individuals_chart_matches_montgomerys_worked_example() {
    let (i, mr) = individuals(&MORTGAGE_COSTS, 20).unwrap();
    // Printed: x̄ = 300.5, MR̄ = 7.79, UCL = 321.22, LCL = 279.78, MR chart UCL = 25.45, LCL = 0.
    assert!((i.centre - 300.5).abs() <= printed(1));
    assert!((mr.centre - 7.79).abs() <= printed(2));
    assert!((i.ucl - 321.22).abs() <= BOOK_IMR_LIMIT_ABS, "{}", i.ucl);
    assert!((i.lcl - 279.78).abs() <= BOOK_IMR_LIMIT_ABS, "{}", i.lcl);
    assert!((mr.ucl - 25.45).abs() <= BOOK_IMR_LIMIT_ABS, "{}", mr.ucl);
    assert_eq!(mr.lcl, 0.0);
    // The book finds the 20 weeks in control: no point beyond the limits. Worked by hand from the
    // rules' wording (Western Electric 1956; Nelson 1984) on these z values (largest |z| 1.96 at
    // week 15; longest run on one side 4; longest steady rise 4, weeks 2–5): no rule fires.
    let z: Vec<f64> = MORTGAGE_COSTS
        .iter()
        .map(|x| (x - i.centre) / i.sigma)
        .collect();
    assert!(run_rules(&z).iter().all(|r| r.is_empty()), "{z:?}");
}

#[test]
fn run_rules_flag_a_shift_after_montgomerys_baseline_as_worked_by_hand() {
    // Phase II: the book's 20 weeks as the baseline (centre 300.5, σ̂ = MR̄/d2 = 6.903: zone
    // edges 307.40/293.60, 314.31/286.69, 321.21/279.79), then six weeks of our own after a rise in
    // cost. Worked by hand from the rules' wording (Western Electric handbook 1956, rules 1–4;
    // Nelson 1984, tests 2–4, 7, 8), flagging the week that completes each pattern:
    //   week 21  305  z 0.65
    //   week 22  316  z 2.25  (zone A)
    //   week 23  309  z 1.23  (zone B)
    //   week 24  317  z 2.39  WE2: weeks 22 and 24 of 22–24 beyond 2σ, same side
    //   week 25  310  z 1.38  WE3: weeks 22–25 of 21–25 beyond 1σ; WE4: weeks 18–25 above centre
    //   week 26  323  z 3.26  WE1; WE2 (24, 26 of 24–26); WE3 (22–26); WE4 (19–26); N2 (18–26, 9)
    // Nothing else: no 6-point steady rise (309 < 316), no alternation of 14, no 15 within 1σ,
    // no 8 beyond 1σ in a row.
    let mut x = MORTGAGE_COSTS.to_vec();
    x.extend([305.0, 316.0, 309.0, 317.0, 310.0, 323.0]);
    let (i, _) = individuals(&x, 20).unwrap();
    let z: Vec<f64> = x.iter().map(|v| (v - i.centre) / i.sigma).collect();
    let got: Vec<Vec<&str>> = run_rules(&z)
        .iter()
        .map(|r| r.iter().map(|r| r.name()).collect())
        .collect();
    let mut want: Vec<Vec<&str>> = vec![Vec::new(); 26];
    want[23] = vec!["WE2"];
    want[24] = vec!["WE3", "WE4"];
    want[25] = vec!["WE1", "WE2", "WE3", "WE4", "N2"];
    assert_eq!(got, want, "{z:?}");
}

#[test]
fn xbar_and_s_limits_match_montgomerys_worked_example() {
    // The book's X̄ and S chart of piston-ring diameters: 25 samples of 5, x̿ = 74.001 mm,
    // s̄ = 0.0094 mm; printed X̄ limits 74.014 and 73.988 (x̿ ± A3·s̄, A3 = 1.427), S limits 0.0196
    // and 0 (B4·s̄, B4 = 2.089; B3 = 0). The limits depend on the samples only through x̿ and s̄:
    // samples spread around those (pairs k, 24 − k balance) give the same ones.
    let groups: Vec<Subgroup> = (0..25)
        .map(|k| {
            let d = (k as f64 - 12.0) / 12.0;
            Subgroup {
                n: 5,
                mean: 74.001 + 0.004 * d,
                std: 0.0094 + 0.002 * d,
            }
        })
        .collect();
    let limits = xbar_s(&groups, 25).unwrap();
    let (x, s) = limits[0];
    assert!((x.centre - 74.001).abs() <= 1e-12);
    assert!((x.ucl - 74.014).abs() <= printed(3), "{}", x.ucl);
    assert!((x.lcl - 73.988).abs() <= printed(3), "{}", x.lcl);
    assert!((s.ucl - 0.0196).abs() <= printed(4), "{}", s.ucl);
    assert_eq!(s.lcl, 0.0);
    // The tables' constants themselves: A3 = 3/(c4·√5), B4 = 1 + 3·√(1 − c4²)/c4 at n = 5.
    let c = spurline::c4(5).unwrap();
    assert!((3.0 / (c * 5f64.sqrt()) - 1.427).abs() <= printed(3));
    assert!((1.0 + 3.0 * (1.0 - c * c).sqrt() / c - 2.089).abs() <= printed(3));
}

#[test]
fn cpk_interval_matches_montgomerys_worked_example() {
    // The book's example of Bissell's interval: Ĉpk = 1.33 from n = 20, 95 % interval printed as
    // 0.88 ≤ Cpk ≤ 1.78. Ĉpk = 1.33 exactly: the mean 3.99 σ below the upper limit.
    let c = cpk_interval(20, 10.0, 1.0, None, Some(13.99), 0.95).unwrap();
    assert!((c.cpk - 1.33).abs() <= 1e-12);
    assert!((c.low - 0.88).abs() <= printed(2), "{}", c.low);
    assert!((c.high - 1.78).abs() <= printed(2), "{}", c.high);
}
