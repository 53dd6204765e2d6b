//! Least squares of several sines at once (the three-parameter fit of IEEE Std 1241 extended to K
//! tones): y ≈ Σᵢ (aᵢ·cos θᵢ + bᵢ·sin θᵢ) + c, θᵢ = 2π·fᵢ·(n − centre), linear at known frequencies
//! ([`fit_linear`]) and by Gauss-Newton with every frequency free ([`fit_free`], as the
//! four-parameter fit does for one tone). The two-tone and interleaving analyses use it.

use super::sums::reduced_product;
use crate::error::{Error, ErrorKind, Location, Result};
use nalgebra::{DMatrix, DVector};
use std::f64::consts::TAU;

/// Linear least-squares sines at known frequencies.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct LinearSines {
    /// (a, b) of each frequency, centred frame.
    pub coeffs: Vec<(f64, f64)>,
    /// The offset c.
    pub offset: f64,
    /// Sum of squared residuals.
    pub rss: f64,
}

/// Solves a symmetric positive definite system with Jacobi scaling (the columns may differ by many
/// orders of magnitude); `None` when it is singular.
fn solve_scaled(m: &DMatrix<f64>, g: &DVector<f64>) -> Option<DVector<f64>> {
    let p = m.nrows();
    let scale = DVector::from_fn(p, |i, _| 1.0 / m[(i, i)].sqrt());
    if scale.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let ms = DMatrix::from_fn(p, p, |i, j| m[(i, j)] * scale[i] * scale[j]);
    let chol = ms.cholesky()?;
    // A nearly singular system (a tone at DC or Nyquist, two tones within a bin) has a tiny pivot.
    let l = chol.l();
    let (mut lo, mut hi) = (f64::INFINITY, 0.0f64);
    for i in 0..p {
        lo = lo.min(l[(i, i)].abs());
        hi = hi.max(l[(i, i)].abs());
    }
    if lo.is_nan() || lo <= 1e-7 * hi {
        return None;
    }
    Some(chol.solve(&g.component_mul(&scale)).component_mul(&scale))
}

/// Least squares of y[j] ≈ Σᵢ (aᵢ·cos θᵢ + bᵢ·sin θᵢ) + c, θᵢ = 2π·fᵢ·(n − centre), n = start + j·stride
/// (fᵢ in cycles per sample of the full record). `None` when the normal equations are singular.
pub(crate) fn fit_linear(
    y: &[f64],
    start: usize,
    stride: usize,
    centre: f64,
    freqs: &[f64],
) -> Option<LinearSines> {
    let k = freqs.len();
    let p = 2 * k + 1;
    let mut m = DMatrix::<f64>::zeros(p, p);
    let mut g = DVector::<f64>::zeros(p);
    let mut basis = vec![0.0; p];
    let fill = |j: usize, basis: &mut [f64]| {
        let t = (start + j * stride) as f64 - centre;
        for (i, &f) in freqs.iter().enumerate() {
            let (s, c) = (TAU * reduced_product(f, t)).sin_cos();
            basis[2 * i] = c;
            basis[2 * i + 1] = s;
        }
        basis[2 * k] = 1.0;
    };
    for (j, &v) in y.iter().enumerate() {
        fill(j, &mut basis);
        for r in 0..p {
            g[r] += basis[r] * v;
            for c in r..p {
                m[(r, c)] += basis[r] * basis[c];
            }
        }
    }
    for r in 0..p {
        for c in 0..r {
            m[(r, c)] = m[(c, r)];
        }
    }
    let x = solve_scaled(&m, &g)?;
    let mut rss = 0.0;
    for (j, &v) in y.iter().enumerate() {
        fill(j, &mut basis);
        let model: f64 = basis.iter().zip(x.iter()).map(|(b, x)| b * x).sum();
        rss += (v - model) * (v - model);
    }
    Some(LinearSines {
        coeffs: (0..k).map(|i| (x[2 * i], x[2 * i + 1])).collect(),
        offset: x[2 * k],
        rss,
    })
}

/// A fit of several sines with free frequencies.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct FreeSines {
    /// The linear part at the final frequencies.
    pub linear: LinearSines,
    /// The frequencies, cycles per sample, in the order of the start.
    pub freqs: Vec<f64>,
    /// Gauss-Newton iterations taken.
    pub iterations: u32,
    /// Whether the iteration met its stop rule.
    pub converged: bool,
}

/// A relative residual change below this counts as none: the sums carry rounding of a few ulps per
/// sample (the four-parameter fit's stop rule).
const RESIDUAL_REL_TOL: f64 = 1e-13;

/// One Gauss-Newton pass at (linear, freqs): the sum of squares and the step (coefficients, offset,
/// then ω of each tone in radians per sample).
fn gauss_newton_pass(y: &[f64], lin: &LinearSines, freqs: &[f64]) -> (f64, Option<DVector<f64>>) {
    let k = freqs.len();
    let p = 3 * k + 1;
    let centre = (y.len() as f64 - 1.0) / 2.0;
    let mut m = DMatrix::<f64>::zeros(p, p);
    let mut g = DVector::<f64>::zeros(p);
    let mut basis = vec![0.0; p];
    let mut rss = 0.0;
    for (n, &v) in y.iter().enumerate() {
        let t = n as f64 - centre;
        let mut model = lin.offset;
        for (i, &f) in freqs.iter().enumerate() {
            let (s, c) = (TAU * reduced_product(f, t)).sin_cos();
            let (a, b) = lin.coeffs[i];
            model += a * c + b * s;
            basis[2 * i] = c;
            basis[2 * i + 1] = s;
            basis[2 * k + 1 + i] = t * (b * c - a * s);
        }
        basis[2 * k] = 1.0;
        let r = v - model;
        rss += r * r;
        for a in 0..p {
            g[a] += basis[a] * r;
            for b in a..p {
                m[(a, b)] += basis[a] * basis[b];
            }
        }
    }
    for a in 0..p {
        for b in 0..a {
            m[(a, b)] = m[(b, a)];
        }
    }
    (rss, solve_scaled(&m, &g))
}

/// Fits sines with free frequencies from `start` (cycles per sample): linear solve, Gauss-Newton with
/// step halving until the residual stops falling, then a last linear solve at the final frequencies.
pub(crate) fn fit_free(y: &[f64], start: &[f64], max_iterations: u32) -> Result<FreeSines> {
    let centre = (y.len() as f64 - 1.0) / 2.0;
    let fit_name = match start.len() {
        1 => "one-tone",
        2 => "two-tone",
        _ => "multi-tone",
    };
    let degenerate = || {
        Error::new(
            ErrorKind::DegenerateFit,
            "",
            Location::Whole,
            format!("solvable normal equations of the {fit_name} fit (tones apart from each other, DC and Nyquist)"),
            format!(
                "a singular system at {:?} cycles",
                start.iter().map(|f| f * y.len() as f64).collect::<Vec<_>>()
            ),
        )
    };
    let mut freqs = start.to_vec();
    let mut lin = fit_linear(y, 0, 1, centre, &freqs).ok_or_else(degenerate)?;
    let (mut rss, mut step) = gauss_newton_pass(y, &lin, &freqs);
    let k = freqs.len();
    let mut iterations = 0;
    let mut converged = false;
    while iterations < max_iterations {
        let Some(delta) = step else {
            return Err(degenerate());
        };
        iterations += 1;
        let df: Vec<f64> = (0..k).map(|i| delta[2 * k + 1 + i] / TAU).collect();
        if df
            .iter()
            .zip(&freqs)
            .all(|(d, f)| d.abs() <= 4.0 * f64::EPSILON * f.abs())
        {
            converged = true;
            break;
        }
        let mut lambda = 1.0;
        let mut accepted = None;
        for _ in 0..12 {
            let trial = LinearSines {
                coeffs: (0..k)
                    .map(|i| {
                        (
                            lin.coeffs[i].0 + lambda * delta[2 * i],
                            lin.coeffs[i].1 + lambda * delta[2 * i + 1],
                        )
                    })
                    .collect(),
                offset: lin.offset + lambda * delta[2 * k],
                rss: 0.0,
            };
            let tf: Vec<f64> = freqs.iter().zip(&df).map(|(f, d)| f + lambda * d).collect();
            let (rss_t, step_t) = gauss_newton_pass(y, &trial, &tf);
            if rss_t <= rss {
                accepted = Some((trial, tf, rss_t, step_t));
                break;
            }
            lambda *= 0.5;
        }
        let Some((trial, tf, rss_t, step_t)) = accepted else {
            converged = true;
            break;
        };
        let change = rss - rss_t;
        let was = rss;
        lin = trial;
        freqs = tf;
        rss = rss_t;
        step = step_t;
        if change <= RESIDUAL_REL_TOL * was {
            converged = true;
            break;
        }
    }
    let lin = fit_linear(y, 0, 1, centre, &freqs).ok_or_else(degenerate)?;
    Ok(FreeSines {
        linear: lin,
        freqs,
        iterations,
        converged,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::phase_at_zero;

    // Slow, obvious reference for the linear part of the fit: dense least squares (QR of the N×5 design
    // matrix) on noisy data with a fixed seed.
    #[test]
    fn linear_fit_agrees_with_dense_least_squares() {
        use rand::{Rng, SeedableRng};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(3);
        let n = 2001;
        let f = [0.0312, 0.0871];
        let centre = (n as f64 - 1.0) / 2.0;
        let y: Vec<f64> = (0..n)
            .map(|k| {
                let t = k as f64;
                900.0 * (TAU * f[0] * t + 0.3).cos()
                    + 400.0 * (TAU * f[1] * t - 2.0).cos()
                    + 7.0
                    + rng.gen_range(-3.0..3.0)
            })
            .collect();
        let got = fit_linear(&y, 0, 1, centre, &f).unwrap();
        let mut d = DMatrix::<f64>::zeros(n, 5);
        for k in 0..n {
            let t = k as f64 - centre;
            for i in 0..2 {
                d[(k, 2 * i)] = (TAU * f[i] * t).cos();
                d[(k, 2 * i + 1)] = (TAU * f[i] * t).sin();
            }
            d[(k, 4)] = 1.0;
        }
        let yv = DVector::from_vec(y);
        let qr = d.clone().qr();
        let x = qr
            .r()
            .solve_upper_triangular(&(qr.q().transpose() * &yv))
            .unwrap();
        for i in 0..2 {
            assert!((got.coeffs[i].0 - x[2 * i]).abs() < 1e-8 * 900.0);
            assert!((got.coeffs[i].1 - x[2 * i + 1]).abs() < 1e-8 * 900.0);
        }
        assert!((got.offset - x[4]).abs() < 1e-8);
        let rss = (&yv - &d * &x).norm_squared();
        assert!((got.rss / rss - 1.0).abs() < 1e-9);
        // The reported phase is that of the generating sine at sample 0.
        let (a, b) = got.coeffs[0];
        assert!((phase_at_zero(a, b, f[0], centre) - 0.3).abs() < 0.01);
    }
}
