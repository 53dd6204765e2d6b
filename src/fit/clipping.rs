//! Clipped samples: how many samples went beyond the converter's range, estimated from a sine fitted
//! to the samples that are not at the end codes. A count of samples at the end codes overstates
//! clipping: a sine whose peaks come within one LSB of full scale puts a share of every period into
//! the end codes without exceeding them (about √(2/A)/π of the samples at each end for a full-scale
//! sine of A codes, 1 % at 12 bits).

use super::{for_each_phase, SineFit};
use crate::record::{max_code, min_code};
use serde::Serialize;
use statrs::function::erf::erfc;
use std::f64::consts::PI;

/// The clipping figures of one record (`clipping` in the JSON).
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct Clipping {
    /// Samples at the lowest or the highest code of the N-bit range (counted).
    pub end_code_samples: usize,
    /// Samples whose input went beyond the outer edge of an end code, taking the end codes as one LSB
    /// wide like every other code (estimated from a sine fitted to the samples off the end codes).
    /// `None` when too few samples are off the end codes to fit the sine.
    pub clipped_samples: Option<f64>,
    /// One-sigma standard uncertainty of the figures above, keyed as they are.
    pub uncertainty: ClippingUncertainty,
}

/// One-sigma uncertainties of the clipping figures.
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct ClippingUncertainty {
    /// Of the clipped-sample estimate, samples.
    pub clipped_samples: Option<f64>,
}

/// Below this many samples off the end codes the censored fit is not attempted.
const MIN_FREE_SAMPLES: usize = 16;

/// Φ(z), the standard normal distribution function (by erfc, which keeps the tails exact).
fn normal_cdf(z: f64) -> f64 {
    0.5 * erfc(-z / std::f64::consts::SQRT_2)
}

/// The clipping figures of `codes` (as f64, N = `bits`) under the record's fitted sine `fit`.
///
/// End-code samples are counted. Clipped samples are estimated in three steps:
/// 1. the sine is fitted again, at the fit's frequency (a three-parameter least-squares fit, IEEE Std
///    1241's sine-fit model), to the samples that are not at an end code: a clipped sample carries no
///    information on where the input was, only that it was beyond the range (a censored sample);
/// 2. the noise σ is the residual rms of that fit with the quantisation noise q²/12 taken out (the
///    residual of an ideal converter holds q²/12, handbook formula);
/// 3. each sample n is clipped with probability Φ((ŝ_n − T_hi)/σ) + Φ((T_lo − ŝ_n)/σ), where ŝ_n is the
///    refitted sine and T_hi = 2^(N−1) − 1/2, T_lo = −2^(N−1) − 1/2 are the outer edges of the end codes
///    taken as one LSB wide; the estimate is the sum of these probabilities (a step when σ = 0).
///
/// Its uncertainty combines the spread of a sum of independent Bernoulli draws, Σ p(1 − p), with the
/// fit's: a shift δ of the sine against an edge changes the count of a sine of amplitude A over N samples
/// by (N/π)·(acos((x − δ)/A) − acos((x + δ)/A))/2 at distance x from its centre (sine geometry), with δ
/// the amplitude's and the offset's uncertainties in quadrature.
pub fn clipping(codes: &[f64], bits: u32, fit: &SineFit) -> Clipping {
    // Codes are whole numbers well inside f64's exact range: the comparisons are exact.
    let (lo, hi) = (min_code(bits) as f64, max_code(bits) as f64);
    let at_end = |c: f64| c <= lo || c >= hi;
    let end_code_samples = codes.iter().filter(|&&c| at_end(c)).count();
    if end_code_samples == 0 {
        // No sample at an end code: none can have been clipped.
        return Clipping {
            end_code_samples,
            clipped_samples: Some(0.0),
            uncertainty: ClippingUncertainty {
                clipped_samples: Some(0.0),
            },
        };
    }
    let none = Clipping {
        end_code_samples,
        ..Clipping::default()
    };
    let n = codes.len();
    let free = n - end_code_samples;
    if free < MIN_FREE_SAMPLES || !fit.cycles.is_finite() || n == 0 {
        return none;
    }
    let f = fit.cycles / n as f64;
    // Normal equations over the free samples of y = a·cos θ + b·sin θ + c.
    let mut g = [[0.0f64; 3]; 3];
    let mut r = [0.0f64; 3];
    let mut yy = 0.0;
    for_each_phase(n, f, |i, c, s| {
        let code = codes[i];
        if at_end(code) {
            return;
        }
        let y = code;
        let x = [c, s, 1.0];
        for (row, xr) in g.iter_mut().zip(x) {
            for (cell, xc) in row.iter_mut().zip(x) {
                *cell += xr * xc;
            }
        }
        for (acc, xr) in r.iter_mut().zip(x) {
            *acc += xr * y;
        }
        yy += y * y;
    });
    let gm = nalgebra::Matrix3::from_fn(|i, j| g[i][j]);
    let rv = nalgebra::Vector3::from_column_slice(&r);
    let Some(p) = gm.cholesky().map(|ch| ch.solve(&rv)) else {
        return none;
    };
    let (a, b, c0) = (p[0], p[1], p[2]);
    // Σ(y − ŝ)² = Σy² − pᵀ·Xᵀy at the least-squares solution.
    let rss = (yy - p.dot(&rv)).max(0.0);
    let var = rss / (free - 3) as f64;
    let sigma = (var - 1.0 / 12.0).max(0.0).sqrt();
    let amplitude = a.hypot(b);
    let (t_hi, t_lo) = (hi + 0.5, lo - 0.5);
    let (mut expected, mut spread) = (0.0, 0.0);
    // Far from both edges (8σ) no sample can be clipped; the pass is skipped.
    if c0 + amplitude + 8.0 * sigma >= t_hi || c0 - amplitude - 8.0 * sigma <= t_lo {
        for_each_phase(n, f, |_, cs, sn| {
            let s = c0 + a * cs + b * sn;
            let p = if sigma > 0.0 {
                normal_cdf((s - t_hi) / sigma) + normal_cdf((t_lo - s) / sigma)
            } else {
                f64::from(u8::from(s >= t_hi || s < t_lo))
            };
            expected += p;
            spread += p * (1.0 - p);
        });
    }
    let u = &fit.uncertainty;
    let delta = u
        .amplitude_codes
        .unwrap_or(0.0)
        .hypot(u.offset_codes.unwrap_or(0.0));
    let count_beyond = |x: f64| n as f64 / PI * (x / amplitude).clamp(-1.0, 1.0).acos();
    let side = |x: f64| {
        if amplitude > 0.0 {
            0.5 * (count_beyond(x - delta) - count_beyond(x + delta)).abs()
        } else {
            0.0
        }
    };
    let from_fit = side(t_hi - c0).hypot(side(c0 - t_lo));
    Clipping {
        end_code_samples,
        clipped_samples: Some(expected),
        uncertainty: ClippingUncertainty {
            clipped_samples: Some(spread.sqrt().hypot(from_fit)),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Φ at published points: Φ(0) = 0.5, Φ(1.96) = 0.975 (standard normal table, to 3 decimals).
    #[test]
    fn normal_cdf_at_table_points() {
        const PRINTED_3DP: f64 = 5e-4;
        assert!((normal_cdf(0.0) - 0.5).abs() < 1e-15);
        assert!((normal_cdf(1.96) - 0.975).abs() < PRINTED_3DP);
        assert!((normal_cdf(-1.96) - 0.025).abs() < PRINTED_3DP);
    }
}
