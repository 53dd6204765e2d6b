//! Statistics shared by limit proposals, revision comparison and sweeps: a sample's summary (mean,
//! sample σ, median, range), percentiles, its shape (skewness, excess kurtosis, the Jarque-Bera test),
//! process capability (Cpk), and Welch's and the paired t test of B against A, each with the confidence
//! interval of the difference of means (B − A). Each definition names the numpy or scipy function it
//! matches. Distributions (Student t, χ²) come from statrs; the percentile is written here because
//! statrs's quantile is Hyndman & Fan type 8, not numpy's default type 7.

use serde::Serialize;
use statrs::distribution::{ChiSquared, ContinuousCDF, StudentsT};

/// Summary of one sample.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Summary {
    /// Number of values.
    pub n: usize,
    /// Mean.
    pub mean: f64,
    /// Sample standard deviation (n − 1 in the denominator); `None` for n < 2.
    pub std: Option<f64>,
    /// Median (mean of the two middle values for even n).
    pub median: f64,
    /// Smallest value.
    pub min: f64,
    /// Largest value.
    pub max: f64,
}

/// The finite values of `values`, ascending.
fn finite_sorted(values: &[f64]) -> Vec<f64> {
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    v.sort_by(|a, b| a.total_cmp(b));
    v
}

/// Summarises finite values (non-finite ones are left out); `None` when there are none.
pub fn summarize(values: &[f64]) -> Option<Summary> {
    summary_of_sorted(&finite_sorted(values))
}

fn summary_of_sorted(v: &[f64]) -> Option<Summary> {
    let n = v.len();
    let mean = mean(v)?;
    let median = if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    };
    Some(Summary {
        n,
        mean,
        std: sample_std(v),
        median,
        min: v[0],
        max: v[n - 1],
    })
}

/// Arithmetic mean; `None` when empty.
pub fn mean(x: &[f64]) -> Option<f64> {
    if x.is_empty() {
        None
    } else {
        Some(x.iter().sum::<f64>() / x.len() as f64)
    }
}

/// Sample standard deviation, divisor n − 1 (numpy `std(ddof=1)`); `None` below 2 values.
pub fn sample_std(x: &[f64]) -> Option<f64> {
    let m = mean(x)?;
    if x.len() < 2 {
        return None;
    }
    let ss: f64 = x.iter().map(|v| (v - m) * (v - m)).sum();
    Some((ss / (x.len() - 1) as f64).sqrt())
}

/// The p-th percentile (0..=100) of ascending `sorted` values by linear interpolation between
/// closest ranks: h = (n − 1)·p/100, x[⌊h⌋] + (h − ⌊h⌋)(x[⌊h⌋+1] − x[⌊h⌋]) (Hyndman & Fan 1996
/// type 7, numpy's default `method="linear"`). `None` when empty or p is outside 0..=100.
pub fn percentile(sorted: &[f64], p: f64) -> Option<f64> {
    if sorted.is_empty() || !(0.0..=100.0).contains(&p) {
        return None;
    }
    let h = (sorted.len() - 1) as f64 * p / 100.0;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(sorted.len() - 1);
    Some(sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo]))
}

/// Biased central moments (n, m2, m3, m4), divisor n.
#[derive(Debug, Clone, Copy)]
struct Moments {
    n: f64,
    m2: f64,
    m3: f64,
    m4: f64,
}

impl Moments {
    fn of(x: &[f64]) -> Option<Moments> {
        let m = mean(x)?;
        let n = x.len() as f64;
        let (mut m2, mut m3, mut m4) = (0.0, 0.0, 0.0);
        for v in x {
            let d = v - m;
            let d2 = d * d;
            m2 += d2;
            m3 += d2 * d;
            m4 += d2 * d2;
        }
        Some(Moments {
            n,
            m2: m2 / n,
            m3: m3 / n,
            m4: m4 / n,
        })
    }

    /// G1 = g1·√(n(n−1))/(n−2), g1 = m3/m2^1.5.
    fn skewness(&self) -> Option<f64> {
        let Moments { n, m2, m3, .. } = *self;
        if n < 3.0 || m2 <= 0.0 {
            return None;
        }
        let g1 = m3 / m2.powf(1.5);
        Some(g1 * (n * (n - 1.0)).sqrt() / (n - 2.0))
    }

    /// G2 = ((n²−1)·m4/m2² − 3(n−1)²)/((n−2)(n−3)).
    fn excess_kurtosis(&self) -> Option<f64> {
        let Moments { n, m2, m4, .. } = *self;
        if n < 4.0 || m2 <= 0.0 {
            return None;
        }
        Some(((n * n - 1.0) * m4 / (m2 * m2) - 3.0 * (n - 1.0).powi(2)) / ((n - 2.0) * (n - 3.0)))
    }

    /// JB = n/6·(g1² + g2²/4) and its χ²(2) tail probability.
    fn jarque_bera(&self) -> Option<(f64, f64)> {
        let Moments { n, m2, m3, m4 } = *self;
        if n < 2.0 || m2 <= 0.0 {
            return None;
        }
        let g1 = m3 / m2.powf(1.5);
        let g2 = m4 / (m2 * m2) - 3.0;
        let jb = n / 6.0 * (g1 * g1 + g2 * g2 / 4.0);
        let chi2 = ChiSquared::new(2.0).expect("two degrees of freedom");
        Some((jb, chi2.sf(jb)))
    }
}

/// Process capability Cpk = min((high − mean)/3σ, (mean − low)/3σ) over the limits present
/// (Montgomery, Introduction to Statistical Quality Control, §8.3); `None` without a limit or
/// with σ ≤ 0.
pub fn cpk(mean: f64, std: f64, low: Option<f64>, high: Option<f64>) -> Option<f64> {
    if std <= 0.0 || !std.is_finite() {
        return None;
    }
    let sides = [
        low.map(|l| (mean - l) / (3.0 * std)),
        high.map(|h| (h - mean) / (3.0 * std)),
    ];
    sides.into_iter().flatten().reduce(f64::min)
}

/// A sample's summary and its shape: what a limit proposal reports for one metric.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Distribution {
    /// Count, mean, sample σ, median and range.
    #[serde(flatten)]
    pub summary: Summary,
    /// Adjusted sample skewness G1.
    pub skewness: Option<f64>,
    /// Sample excess kurtosis G2.
    pub excess_kurtosis: Option<f64>,
    /// Jarque-Bera statistic.
    pub jarque_bera: Option<f64>,
    /// Its p-value.
    pub jarque_bera_p: Option<f64>,
}

/// Describes finite values (non-finite ones are left out); `None` when there are none.
pub fn describe(values: &[f64]) -> Option<Distribution> {
    let v = finite_sorted(values);
    let summary = summary_of_sorted(&v)?;
    let m = Moments::of(&v)?;
    let jb = m.jarque_bera();
    Some(Distribution {
        summary,
        skewness: m.skewness(),
        excess_kurtosis: m.excess_kurtosis(),
        jarque_bera: jb.map(|j| j.0),
        jarque_bera_p: jb.map(|j| j.1),
    })
}

/// Fewest values for which the shape is judged.
pub const SHAPE_MIN_N: usize = 8;
/// Jarque-Bera p-value below which a distribution is called clearly not normal.
pub const SHAPE_P: f64 = 0.01;
/// |G1| from which the shape note says "skewed".
pub const SKEW_NOTE: f64 = 0.5;
/// |G2| from which the shape note says "heavy tails" or "light tails".
pub const KURTOSIS_NOTE: f64 = 1.0;

/// Says how a distribution is clearly not normal, or `None`. The rule: with at least
/// [`SHAPE_MIN_N`] values, the Jarque-Bera test rejects normality at p < [`SHAPE_P`]; the note then
/// names a skew when |G1| ≥ [`SKEW_NOTE`] and heavy (G2 ≥ [`KURTOSIS_NOTE`]) or light
/// (G2 ≤ −[`KURTOSIS_NOTE`]) tails.
pub fn shape_note(d: &Distribution) -> Option<String> {
    let p = d.jarque_bera_p?;
    if d.summary.n < SHAPE_MIN_N || p >= SHAPE_P {
        return None;
    }
    let mut parts = Vec::new();
    if let Some(g1) = d.skewness.filter(|g| g.abs() >= SKEW_NOTE) {
        let side = if g1 > 0.0 { "right" } else { "left" };
        parts.push(format!("skewed {side} (skewness {g1:+.2})"));
    }
    if let Some(g2) = d.excess_kurtosis.filter(|g| g.abs() >= KURTOSIS_NOTE) {
        let tails = if g2 > 0.0 {
            "heavy tails"
        } else {
            "light tails or several modes"
        };
        parts.push(format!("{tails} (excess kurtosis {g2:+.2})"));
    }
    let head = format!("not normal (Jarque-Bera p = {p:.2e})");
    Some(if parts.is_empty() {
        head
    } else {
        format!("{head}: {}", parts.join(", "))
    })
}

/// A t test of B against A.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TTest {
    /// Mean of B minus mean of A (or mean of the paired differences B − A).
    pub difference: f64,
    /// t statistic of the difference.
    pub statistic: f64,
    /// Degrees of freedom (Welch-Satterthwaite for the unpaired test).
    pub df: f64,
    /// Two-sided p-value.
    pub p_value: f64,
    /// Lower end of the confidence interval of the difference.
    pub ci_low: f64,
    /// Upper end of the confidence interval of the difference.
    pub ci_high: f64,
}

/// Why no test could be made.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum NoTest {
    /// Fewer than two values on a side (or pairs).
    TooFew,
    /// Both sides (or all differences) have zero spread: the t statistic is undefined.
    ZeroVariance,
    /// The values are so large (a hand-edited cell of 1e308) that their mean or spread overflows a
    /// 64-bit float: the statistic cannot be formed.
    Overflow,
}

fn finish(difference: f64, se: f64, df: f64, confidence: f64) -> Result<TTest, NoTest> {
    if !(difference.is_finite() && se.is_finite() && se > 0.0) {
        return Err(NoTest::Overflow);
    }
    // Welch's df is a ratio of fourth powers: it overflows (or turns NaN) for huge values.
    let t = StudentsT::new(0.0, 1.0, df).map_err(|_| NoTest::Overflow)?;
    let statistic = difference / se;
    let p_value = (2.0 * t.cdf(-statistic.abs())).min(1.0);
    let q = t.inverse_cdf(0.5 + confidence / 2.0);
    Ok(TTest {
        difference,
        statistic,
        df,
        p_value,
        ci_low: difference - q * se,
        ci_high: difference + q * se,
    })
}

/// Welch's unequal-variance t test of B against A (same as scipy.stats.ttest_ind(b, a,
/// equal_var=False)).
pub fn welch(a: &[f64], b: &[f64], confidence: f64) -> Result<TTest, NoTest> {
    let (sa, sb) = match (summarize(a), summarize(b)) {
        (Some(sa), Some(sb)) if sa.n >= 2 && sb.n >= 2 => (sa, sb),
        _ => return Err(NoTest::TooFew),
    };
    let va = sa.std.unwrap_or(0.0).powi(2) / sa.n as f64;
    let vb = sb.std.unwrap_or(0.0).powi(2) / sb.n as f64;
    let se2 = va + vb;
    if !se2.is_finite() {
        return Err(NoTest::Overflow);
    }
    if se2 <= 0.0 {
        return Err(NoTest::ZeroVariance);
    }
    let df = se2 * se2 / (va * va / (sa.n - 1) as f64 + vb * vb / (sb.n - 1) as f64);
    finish(sb.mean - sa.mean, se2.sqrt(), df, confidence)
}

/// Paired t test of B against A, pair by pair (same as scipy.stats.ttest_rel(b, a)).
pub fn paired(a: &[f64], b: &[f64], confidence: f64) -> Result<TTest, NoTest> {
    let d: Vec<f64> = a
        .iter()
        .zip(b)
        .filter(|(x, y)| x.is_finite() && y.is_finite())
        .map(|(x, y)| y - x)
        .collect();
    let s = match summarize(&d) {
        Some(s) if s.n >= 2 => s,
        _ => return Err(NoTest::TooFew),
    };
    let sd = s.std.unwrap_or(0.0);
    if !(sd.is_finite() && s.mean.is_finite()) {
        return Err(NoTest::Overflow);
    }
    if sd <= 0.0 {
        return Err(NoTest::ZeroVariance);
    }
    finish(
        s.mean,
        sd / (s.n as f64).sqrt(),
        (s.n - 1) as f64,
        confidence,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    // Student-t quantiles against printed tables (any statistics handbook, from memory): t(0.975, 10)
    // = 2.228, t(0.975, 30) = 2.042, t(0.995, 5) = 4.032.
    #[test]
    fn student_t_quantiles_match_tables() {
        for (df, p, q) in [
            (10.0, 0.975, 2.228),
            (30.0, 0.975, 2.042),
            (5.0, 0.995, 4.032),
        ] {
            let t = StudentsT::new(0.0, 1.0, df).unwrap();
            assert!((t.inverse_cdf(p) - q).abs() < 5e-4, "df {df}");
        }
    }

    #[test]
    fn edge_cases_say_why() {
        assert_eq!(welch(&[1.0], &[2.0, 3.0], 0.95), Err(NoTest::TooFew));
        assert_eq!(
            welch(&[1.0, 1.0], &[2.0, 2.0], 0.95),
            Err(NoTest::ZeroVariance)
        );
        assert_eq!(
            paired(&[1.0, 2.0], &[1.5, 2.5], 0.95),
            Err(NoTest::ZeroVariance)
        );
        assert!(summarize(&[f64::NAN]).is_none());
        assert!(describe(&[f64::NAN, f64::INFINITY]).is_none());
        assert_eq!(describe(&[1.0, f64::NAN, 3.0]).unwrap().summary.n, 2);
    }

    // The χ² distribution with 2 degrees of freedom has the survival function exp(−x/2) (handbook
    // formula: it is the exponential distribution of mean 2), so the Jarque-Bera p-value from statrs
    // must agree with it to rounding over the range of p-values a lot can give.
    #[test]
    fn jarque_bera_p_is_the_chi2_2_tail() {
        let x = [1.0, 2.0, 2.5, 7.0, 3.0, 2.0, 1.5, 9.5, 2.0, 2.2];
        let (jb, p) = Moments::of(&x).unwrap().jarque_bera().unwrap();
        assert!(jb > 0.0);
        assert!((p - (-jb / 2.0).exp()).abs() <= 1e-13 * p, "{p}");
        for jb in [0.0, 0.5, 5.0, 50.0, 500.0] {
            let chi2 = ChiSquared::new(2.0).unwrap();
            let want = (-jb / 2.0f64).exp();
            assert!((chi2.sf(jb) - want).abs() <= 1e-13 * want, "{jb}");
        }
    }

    /// The stored numpy/scipy values (tests/reference/make_stats_refs.py).
    fn refs() -> serde_json::Value {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("tests/reference/stats/stats_refs.json");
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

    /// Relative agreement with numpy/scipy: the sums differ only in summation order (numpy sums
    /// pairwise), a few ulps per value; 1e-11 leaves room for thousands of ulps.
    const REFERENCE_REL: f64 = 1e-11;

    fn close(got: f64, want: f64, what: &str) {
        let tol = REFERENCE_REL * want.abs().max(1.0);
        assert!(
            (got - want).abs() <= tol,
            "{what}: {got} vs numpy/scipy {want}"
        );
    }

    #[test]
    fn statistics_match_numpy_and_scipy() {
        // Reference: tests/reference/make_stats_refs.py (numpy mean, std(ddof=1), percentile(linear);
        // scipy.stats skew(bias=False), kurtosis(bias=False), jarque_bera; Cpk by the textbook formula).
        let r = refs();
        for (name, set) in r["sets"].as_object().unwrap() {
            let x = values_of(set);
            let mut sorted = x.clone();
            sorted.sort_by(f64::total_cmp);
            let d = describe(&x).unwrap();
            let s = &d.summary;
            close(
                s.mean,
                set["mean"].as_f64().unwrap(),
                &format!("{name} mean"),
            );
            close(
                s.std.unwrap(),
                set["std"].as_f64().unwrap(),
                &format!("{name} std"),
            );
            assert_eq!(s.min, set["min"].as_f64().unwrap());
            assert_eq!(s.max, set["max"].as_f64().unwrap());
            for p in set["percentiles"].as_array().unwrap() {
                let (pc, want) = (p[0].as_f64().unwrap(), p[1].as_f64().unwrap());
                close(
                    percentile(&sorted, pc).unwrap(),
                    want,
                    &format!("{name} P{pc}"),
                );
                // numpy's median is its 50th percentile (linear interpolation of the two middle values).
                if pc == 50.0 {
                    close(s.median, want, &format!("{name} median"));
                }
            }
            match set["skewness"].as_f64() {
                Some(w) => close(d.skewness.unwrap(), w, &format!("{name} skewness")),
                None => assert!(d.skewness.is_none()),
            }
            match set["excess_kurtosis"].as_f64() {
                Some(w) => close(d.excess_kurtosis.unwrap(), w, &format!("{name} kurtosis")),
                None => assert!(d.excess_kurtosis.is_none()),
            }
            let jb = &set["jarque_bera"];
            close(
                d.jarque_bera.unwrap(),
                jb[0].as_f64().unwrap(),
                &format!("{name} JB"),
            );
            let p_want = jb[1].as_f64().unwrap();
            assert!(
                (d.jarque_bera_p.unwrap() - p_want).abs() <= 1e-11 * p_want.max(1e-300) + 1e-300,
                "{name} JB p"
            );
            // The shape rule: n ≥ 8 and p < 0.01.
            let flagged = x.len() >= SHAPE_MIN_N && p_want < SHAPE_P;
            assert_eq!(shape_note(&d).is_some(), flagged, "{name}");
            for c in set["cpk"].as_array().unwrap() {
                let got = cpk(
                    s.mean,
                    s.std.unwrap(),
                    c["low"].as_f64(),
                    c["high"].as_f64(),
                )
                .unwrap();
                close(got, c["cpk"].as_f64().unwrap(), &format!("{name} Cpk {c}"));
            }
        }
        assert_eq!(sample_std(&[1.0]), None);
        assert_eq!(describe(&[1.0, 1.0, 1.0]).unwrap().skewness, None);
        assert_eq!(cpk(1.0, 0.0, Some(0.0), None), None);
        assert_eq!(cpk(1.0, 1.0, None, None), None);
    }
}
