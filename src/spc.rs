//! Statistical process control for the results store's trend charts: the individuals (X) chart with
//! its moving range, the X̄ and S charts of subgroups (a lot's results are a subgroup), control limits
//! from a baseline of the first points, the run rules of the Western Electric handbook and of Nelson,
//! and Cpk with its confidence interval. Every formula names its source beside it.
//!
//! Sources: Western Electric Co., *Statistical Quality Control Handbook* (1956), the four zone tests;
//! L. S. Nelson, "The Shewhart control chart — tests for special causes", *Journal of Quality
//! Technology* 16(4), 1984, tests 1–8; D. C. Montgomery, *Introduction to Statistical Quality
//! Control* (6th ed.), §6.3–6.4 (X̄ and S charts, c4) and §6.4 (individuals and moving range, d2 = 1.128,
//! D4 = 3.267 for ranges of two); A. F. Bissell, "How reliable is your capability index?", *Applied
//! Statistics* 39(3), 1990 (the normal approximation of Cpk's confidence interval).

use serde::Serialize;
use statrs::distribution::{ContinuousCDF, Normal};
use statrs::function::gamma::ln_gamma;

/// d2 for ranges of two consecutive points: the mean range of two standard normal values, 2/√π
/// (Montgomery, Appendix VI: 1.128).
pub const D2_TWO: f64 = std::f64::consts::FRAC_2_SQRT_PI;

/// D4 for ranges of two: 1 + 3·d3/d2, with d3 = √(2 − d2²) the standard deviation of the range of
/// two standard normal values (Montgomery, Appendix VI: d3 = 0.853, D4 = 3.267); the moving range
/// chart's upper limit is D4·MR̄ and its lower limit 0 (D3 = 0).
pub fn d4_two() -> f64 {
    1.0 + 3.0 * (2.0 - D2_TWO * D2_TWO).sqrt() / D2_TWO
}

/// c4(n) = √(2/(n−1))·Γ(n/2)/Γ((n−1)/2): the mean of the sample standard deviation of n normal
/// values in units of σ (Montgomery §6.3.1); `None` for n < 2.
pub fn c4(n: usize) -> Option<f64> {
    if n < 2 {
        return None;
    }
    let n = n as f64;
    Some((2.0 / (n - 1.0)).sqrt() * (ln_gamma(n / 2.0) - ln_gamma((n - 1.0) / 2.0)).exp())
}

/// Control limits: centre line and the limits at ±3 σ of the charted statistic.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Limits {
    /// Centre line.
    pub centre: f64,
    /// Lower control limit.
    pub lcl: f64,
    /// Upper control limit.
    pub ucl: f64,
    /// σ of the charted statistic (the zone width of the run rules).
    pub sigma: f64,
}

/// The individuals chart of a series from its first `baseline` points (Montgomery §6.4): centre x̄,
/// σ̂ = MR̄/d2 from the moving ranges of two, limits x̄ ± 3σ̂; and the moving-range chart's limits
/// (centre MR̄, upper D4·MR̄, lower 0). `None` with fewer than two baseline points.
pub fn individuals(x: &[f64], baseline: usize) -> Option<(Limits, Limits)> {
    let b = &x[..baseline.min(x.len())];
    if b.len() < 2 {
        return None;
    }
    let centre = b.iter().sum::<f64>() / b.len() as f64;
    let mr: Vec<f64> = b.windows(2).map(|w| (w[1] - w[0]).abs()).collect();
    let mr_bar = mr.iter().sum::<f64>() / mr.len() as f64;
    let sigma = mr_bar / D2_TWO;
    Some((
        Limits {
            centre,
            lcl: centre - 3.0 * sigma,
            ucl: centre + 3.0 * sigma,
            sigma,
        },
        Limits {
            centre: mr_bar,
            lcl: 0.0,
            ucl: d4_two() * mr_bar,
            sigma: 0.0,
        },
    ))
}

/// One subgroup: its size, mean and sample standard deviation.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Subgroup {
    /// Values in it.
    pub n: usize,
    /// Their mean.
    pub mean: f64,
    /// Their sample standard deviation (n − 1).
    pub std: f64,
}

/// The X̄ and S charts of subgroups from the first `baseline` of them (Montgomery §6.3.1–6.3.2):
/// x̿ = mean of the baseline means, σ̂ = mean of s_i/c4(n_i) (s̄/c4 for equal sizes); subgroup i's X̄
/// limits are x̿ ± 3σ̂/√n_i and its S limits c4(n_i)σ̂ ± 3σ̂√(1 − c4(n_i)²) (lower clipped at 0).
/// Returns, per subgroup, its X̄ and S limits. `None` without a baseline subgroup of two or more.
pub fn xbar_s(groups: &[Subgroup], baseline: usize) -> Option<Vec<(Limits, Limits)>> {
    let b: Vec<&Subgroup> = groups[..baseline.min(groups.len())]
        .iter()
        .filter(|g| g.n >= 2)
        .collect();
    if b.is_empty() {
        return None;
    }
    let centre = b.iter().map(|g| g.mean).sum::<f64>() / b.len() as f64;
    let sigma = b
        .iter()
        .map(|g| g.std / c4(g.n).unwrap_or(1.0))
        .sum::<f64>()
        / b.len() as f64;
    Some(
        groups
            .iter()
            .map(|g| {
                let n = g.n.max(1) as f64;
                let sx = sigma / n.sqrt();
                let c = c4(g.n).unwrap_or(1.0);
                let ss = sigma * (1.0 - c * c).max(0.0).sqrt();
                (
                    Limits {
                        centre,
                        lcl: centre - 3.0 * sx,
                        ucl: centre + 3.0 * sx,
                        sigma: sx,
                    },
                    Limits {
                        centre: c * sigma,
                        lcl: (c * sigma - 3.0 * ss).max(0.0),
                        ucl: c * sigma + 3.0 * ss,
                        sigma: ss,
                    },
                )
            })
            .collect(),
    )
}

/// A run rule: a pattern of points that is unlikely while the process is in control.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
pub enum Rule {
    /// One point beyond 3σ (Western Electric rule 1; Nelson test 1).
    #[serde(rename = "WE1")]
    We1,
    /// Two of three consecutive points beyond 2σ on the same side (Western Electric rule 2; Nelson
    /// test 5).
    #[serde(rename = "WE2")]
    We2,
    /// Four of five consecutive points beyond 1σ on the same side (Western Electric rule 3; Nelson
    /// test 6).
    #[serde(rename = "WE3")]
    We3,
    /// Eight consecutive points on the same side of the centre (Western Electric rule 4).
    #[serde(rename = "WE4")]
    We4,
    /// Nine consecutive points on the same side of the centre (Nelson test 2).
    #[serde(rename = "N2")]
    Nelson2,
    /// Six points in a row steadily increasing or decreasing (Nelson test 3).
    #[serde(rename = "N3")]
    Nelson3,
    /// Fourteen points in a row alternating up and down (Nelson test 4).
    #[serde(rename = "N4")]
    Nelson4,
    /// Fifteen points in a row within 1σ of the centre, either side (Nelson test 7).
    #[serde(rename = "N7")]
    Nelson7,
    /// Eight points in a row beyond 1σ, either side, none within (Nelson test 8).
    #[serde(rename = "N8")]
    Nelson8,
}

impl Rule {
    /// Every rule, in order.
    pub const ALL: [Rule; 9] = [
        Rule::We1,
        Rule::We2,
        Rule::We3,
        Rule::We4,
        Rule::Nelson2,
        Rule::Nelson3,
        Rule::Nelson4,
        Rule::Nelson7,
        Rule::Nelson8,
    ];

    /// Its short name as outputs write it (`WE1`, `N3`).
    pub fn name(self) -> &'static str {
        match self {
            Rule::We1 => "WE1",
            Rule::We2 => "WE2",
            Rule::We3 => "WE3",
            Rule::We4 => "WE4",
            Rule::Nelson2 => "N2",
            Rule::Nelson3 => "N3",
            Rule::Nelson4 => "N4",
            Rule::Nelson7 => "N7",
            Rule::Nelson8 => "N8",
        }
    }

    /// What it tests, in a few words.
    pub fn describe(self) -> &'static str {
        match self {
            Rule::We1 => "1 point beyond 3σ",
            Rule::We2 => "2 of 3 beyond 2σ, same side",
            Rule::We3 => "4 of 5 beyond 1σ, same side",
            Rule::We4 => "8 in a row on one side",
            Rule::Nelson2 => "9 in a row on one side",
            Rule::Nelson3 => "6 in a row rising or falling",
            Rule::Nelson4 => "14 in a row alternating",
            Rule::Nelson7 => "15 in a row within 1σ",
            Rule::Nelson8 => "8 in a row beyond 1σ, either side",
        }
    }
}

/// Whether the `len` points ending at `i` exist and all satisfy `f`.
fn run_of(i: usize, len: usize, f: impl Fn(usize) -> bool) -> bool {
    i + 1 >= len && (i + 1 - len..=i).all(f)
}

/// Whether at least `k` of the `len` points ending at `i` satisfy `f` (and the window exists).
fn k_of(i: usize, len: usize, k: usize, f: impl Fn(usize) -> bool) -> bool {
    i + 1 >= len && (i + 1 - len..=i).filter(|&j| f(j)).count() >= k
}

/// The rules each point completes, from the points' standardised distances z_i = (x_i − centre)/σ_i
/// (σ_i the charted statistic's σ at that point). A rule is flagged at the last point of a pattern
/// (as Nelson 1984 marks them), and at every later point the pattern goes on. A point exactly on the
/// centre is on neither side; equal neighbours neither rise nor fall.
pub fn run_rules(z: &[f64]) -> Vec<Vec<Rule>> {
    let above = |j: usize| z[j] > 0.0;
    let below = |j: usize| z[j] < 0.0;
    let up = |j: usize| j > 0 && z[j] > z[j - 1];
    let down = |j: usize| j > 0 && z[j] < z[j - 1];
    (0..z.len())
        .map(|i| {
            let mut r = Vec::new();
            // Western Electric Handbook (1956), zone tests 1-4.
            if z[i].abs() > 3.0 {
                r.push(Rule::We1);
            }
            if (z[i] > 2.0 && k_of(i, 3, 2, |j| z[j] > 2.0))
                || (z[i] < -2.0 && k_of(i, 3, 2, |j| z[j] < -2.0))
            {
                r.push(Rule::We2);
            }
            if (z[i] > 1.0 && k_of(i, 5, 4, |j| z[j] > 1.0))
                || (z[i] < -1.0 && k_of(i, 5, 4, |j| z[j] < -1.0))
            {
                r.push(Rule::We3);
            }
            if run_of(i, 8, above) || run_of(i, 8, below) {
                r.push(Rule::We4);
            }
            // Nelson (1984), tests 2, 3, 4, 7, 8 (1, 5, 6 are the handbook's 1, 2, 3).
            if run_of(i, 9, above) || run_of(i, 9, below) {
                r.push(Rule::Nelson2);
            }
            // Six points steadily rising: five rises in a row ending at i.
            if i >= 5 && (run_of(i, 5, up) || run_of(i, 5, down)) {
                r.push(Rule::Nelson3);
            }
            // Fourteen points alternating: thirteen changes (at points i-12..=i), each the
            // opposite of the one before it.
            if i >= 13 && (i - 11..=i).all(|j| (up(j) && down(j - 1)) || (down(j) && up(j - 1))) {
                r.push(Rule::Nelson4);
            }
            if run_of(i, 15, |j| z[j].abs() < 1.0) {
                r.push(Rule::Nelson7);
            }
            if run_of(i, 8, |j| z[j].abs() > 1.0) {
                r.push(Rule::Nelson8);
            }
            r
        })
        .collect()
}

/// Cpk with its two-sided confidence interval.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CpkInterval {
    /// Cpk = min(USL − x̄, x̄ − LSL)/(3s) (Montgomery §8.3).
    pub cpk: f64,
    /// Lower end of the interval.
    pub low: f64,
    /// Upper end.
    pub high: f64,
    /// The confidence (0.95).
    pub confidence: f64,
}

/// Cpk of a sample of `n` values with mean and sample σ against the limits present, with Bissell's
/// (1990) interval Cpk ± z·√(1/(9n) + Cpk²/(2(n−1))); `None` without a limit, with σ ≤ 0, or n < 2.
pub fn cpk_interval(
    n: usize,
    mean: f64,
    std: f64,
    low: Option<f64>,
    high: Option<f64>,
    confidence: f64,
) -> Option<CpkInterval> {
    if n < 2 {
        return None;
    }
    let cpk = crate::stats::cpk(mean, std, low, high)?;
    let z = Normal::new(0.0, 1.0)
        .ok()?
        .inverse_cdf(0.5 + confidence / 2.0);
    let nf = n as f64;
    let half = z * (1.0 / (9.0 * nf) + cpk * cpk / (2.0 * (nf - 1.0))).sqrt();
    Some(CpkInterval {
        cpk,
        low: cpk - half,
        high: cpk + half,
        confidence,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Agreement with constants printed to three or four decimals: half a unit of the last one.
    const PRINTED_4DP: f64 = 5e-5;

    #[test]
    fn chart_constants_match_the_printed_tables() {
        // Montgomery, Appendix VI (from memory): c4(2) = 0.7979, c4(5) = 0.9400, c4(10) = 0.9727,
        // c4(25) = 0.9896; d2(2) = 1.128.
        for (n, want) in [(2, 0.7979), (5, 0.9400), (10, 0.9727), (25, 0.9896)] {
            assert!((c4(n).unwrap() - want).abs() < PRINTED_4DP, "c4({n})");
        }
        assert!((D2_TWO - 1.128).abs() < 5e-4);
        assert!((d4_two() - 3.267).abs() < 5e-4);
        assert_eq!(c4(1), None);
    }

    #[test]
    fn each_rule_fires_on_its_pattern_and_not_before() {
        // Patterns built by hand from the rules' wording (Western Electric 1956; Nelson 1984).
        let flagged = |z: &[f64], rule: Rule| -> Vec<usize> {
            run_rules(z)
                .iter()
                .enumerate()
                .filter(|(_, r)| r.contains(&rule))
                .map(|(i, _)| i)
                .collect()
        };
        assert_eq!(flagged(&[0.5, 3.2, -0.1, -3.01], Rule::We1), [1, 3]);
        assert_eq!(flagged(&[2.5, 0.0, 2.1, -2.5, 1.0], Rule::We2), [2]);
        assert_eq!(flagged(&[2.5, -2.1, 0.0, -2.5], Rule::We2), [3]);
        assert_eq!(flagged(&[1.5, 1.2, 0.3, 1.1, 1.9], Rule::We3), [4]);
        assert!(flagged(&[1.5, 1.2, 0.3, 0.1, 1.9], Rule::We3).is_empty());
        let side = [0.2, 0.4, 0.1, 0.3, 0.2, 0.5, 0.1, 0.2, 0.3];
        assert_eq!(flagged(&side, Rule::We4), [7, 8]);
        assert_eq!(flagged(&side, Rule::Nelson2), [8]);
        assert!(flagged(&[0.2, 0.4, 0.0, 0.3, 0.2, 0.5, 0.1, 0.2, 0.3], Rule::We4).is_empty());
        let rise = [-1.0, -0.8, -0.5, -0.2, 0.1, 0.4, 0.3];
        assert_eq!(flagged(&rise, Rule::Nelson3), [5]);
        let zigzag: Vec<f64> = (0..14)
            .map(|i| if i % 2 == 0 { 0.5 } else { -0.5 })
            .collect();
        assert_eq!(flagged(&zigzag, Rule::Nelson4), [13]);
        assert!(flagged(&zigzag[..13], Rule::Nelson4).is_empty());
        let hug = [0.1; 15];
        assert_eq!(flagged(&hug, Rule::Nelson7), [14]);
        let wide = [1.5, -1.5, 1.2, -1.1, 2.0, -2.0, 1.1, -1.3];
        assert_eq!(flagged(&wide, Rule::Nelson8), [7]);
    }

    #[test]
    fn cpk_interval_is_bissells() {
        // Bissell (1990): for Cpk = 1.0 from n = 50, the half-width at 95 % is
        // 1.96·√(1/450 + 1/98) = 0.2184 (worked by hand from the formula).
        let c = cpk_interval(50, 3.0, 1.0, Some(0.0), None, 0.95).unwrap();
        assert!((c.cpk - 1.0).abs() < 1e-12);
        assert!((c.high - c.cpk - 0.2184).abs() < 1e-4);
        assert!(cpk_interval(1, 3.0, 1.0, Some(0.0), None, 0.95).is_none());
    }
}
