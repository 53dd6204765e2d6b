//! Statistics for revision comparison: per-sample summaries, Welch's unequal-variance t test and the
//! paired t test, each with the confidence interval of the difference of means (B − A). Student-t
//! quantiles and tail probabilities come from statrs.

use serde::Serialize;
use statrs::distribution::{ContinuousCDF, StudentsT};

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

/// Summarises finite values; `None` when there are none.
pub fn summarize(values: &[f64]) -> Option<Summary> {
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    if v.is_empty() {
        return None;
    }
    v.sort_by(|a, b| a.total_cmp(b));
    let n = v.len();
    let mean = v.iter().sum::<f64>() / n as f64;
    let std = (n >= 2)
        .then(|| (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt());
    let median = if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    };
    Some(Summary {
        n,
        mean,
        std,
        median,
        min: v[0],
        max: v[n - 1],
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
}

fn finish(difference: f64, se: f64, df: f64, confidence: f64) -> TTest {
    let t = StudentsT::new(0.0, 1.0, df).expect("df > 0 and finite");
    let statistic = difference / se;
    let p_value = (2.0 * t.cdf(-statistic.abs())).min(1.0);
    let q = t.inverse_cdf(0.5 + confidence / 2.0);
    TTest {
        difference,
        statistic,
        df,
        p_value,
        ci_low: difference - q * se,
        ci_high: difference + q * se,
    }
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
    if se2 <= 0.0 {
        return Err(NoTest::ZeroVariance);
    }
    let df = se2 * se2 / (va * va / (sa.n - 1) as f64 + vb * vb / (sb.n - 1) as f64);
    Ok(finish(sb.mean - sa.mean, se2.sqrt(), df, confidence))
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
    if sd <= 0.0 {
        return Err(NoTest::ZeroVariance);
    }
    Ok(finish(
        s.mean,
        sd / (s.n as f64).sqrt(),
        (s.n - 1) as f64,
        confidence,
    ))
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
    }
}
