//! Three-parameter least-squares sine fit at a known frequency (IEEE Std 1241 §4.1.3.1, IEEE Std 1057).

use super::sums::{accumulate, total, Accumulator, Phasor, LANES};
use super::{centre_of, finish, residual_of, Centred, Ending, FitMethod, FitOutput};
use crate::{Error, ErrorKind, Location, Result};
use nalgebra::{Matrix3, Vector3};

/// Sums of the three-parameter normal equations (columns cos, sin, 1), per lane.
#[derive(Clone, Default)]
struct Sums3 {
    cc: [f64; LANES],
    ss: [f64; LANES],
    cs: [f64; LANES],
    c: [f64; LANES],
    s: [f64; LANES],
    y: [f64; LANES],
    yc: [f64; LANES],
    ys: [f64; LANES],
}

impl Accumulator for Sums3 {
    #[inline(always)]
    fn add(&mut self, _t0: f64, y: &[f64; LANES], c: &[f64; LANES], s: &[f64; LANES]) {
        for j in 0..LANES {
            self.cc[j] += c[j] * c[j];
            self.ss[j] += s[j] * s[j];
            self.cs[j] += c[j] * s[j];
            self.c[j] += c[j];
            self.s[j] += s[j];
            self.y[j] += y[j];
            self.yc[j] += y[j] * c[j];
            self.ys[j] += y[j] * s[j];
        }
    }
    fn add_one(&mut self, _t: f64, y: f64, c: f64, s: f64) {
        self.cc[0] += c * c;
        self.ss[0] += s * s;
        self.cs[0] += c * s;
        self.c[0] += c;
        self.s[0] += s;
        self.y[0] += y;
        self.yc[0] += y * c;
        self.ys[0] += y * s;
    }
}

/// Solves the three-parameter fit in the centred frame.
pub(crate) fn solve_three(y: &[f64], cycles_per_sample: f64) -> Result<Centred> {
    let phasor = Phasor {
        cycles_per_sample,
        centre: centre_of(y.len()),
    };
    let m = accumulate(y, phasor, &Sums3::default());
    let n = y.len() as f64;
    let (cc, ss, cs, c, s) = (
        total(&m.cc),
        total(&m.ss),
        total(&m.cs),
        total(&m.c),
        total(&m.s),
    );
    let a = Matrix3::new(cc, cs, c, cs, ss, s, c, s, n);
    let rhs = Vector3::new(total(&m.yc), total(&m.ys), total(&m.y));
    let chol = a.cholesky().ok_or_else(|| {
        Error::new(
            ErrorKind::DegenerateFit,
            "",
            Location::Whole,
            "a frequency away from DC and Nyquist (solvable three-parameter normal equations)",
            format!("{cycles_per_sample} cycles per sample"),
        )
    })?;
    let x = chol.solve(&rhs);
    Ok(Centred {
        a: x[0],
        b: x[1],
        c: x[2],
        cycles_per_sample,
    })
}

/// Three-parameter fit of `y` at the known frequency `frequency_hz`.
pub fn fit_three(
    y: &[f64],
    sample_rate_hz: f64,
    frequency_hz: f64,
    bits: u32,
) -> Result<FitOutput> {
    if y.len() < 4 {
        return Err(Error::new(
            ErrorKind::TooFewSamples,
            "",
            Location::Whole,
            "at least 4 samples for a three-parameter fit",
            format!("{}", y.len()),
        ));
    }
    if !(frequency_hz.is_finite() && frequency_hz > 0.0 && frequency_hz < sample_rate_hz / 2.0) {
        return Err(Error::setting(
            "fin",
            format!(
                "a frequency in (0, fs/2) = (0, {} Hz)",
                sample_rate_hz / 2.0
            ),
            format!("{frequency_hz} Hz"),
        ));
    }
    let p = solve_three(y, frequency_hz / sample_rate_hz)?;
    let (residual, rms) = residual_of(y, p);
    let fit = finish(
        p,
        y.len(),
        sample_rate_hz,
        bits,
        rms,
        Ending {
            method: FitMethod::ThreeParameter,
            iterations: 0,
            converged: true,
        },
    );
    let mut warnings = Vec::new();
    super::four_param::edge_warnings(&fit, y.len(), &mut warnings);
    Ok(FitOutput {
        fit,
        residual,
        warnings,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use nalgebra::DMatrix;

    // IEEE Std 1057 three-parameter example form: 1000 samples at 1 kHz of 5 + 3·cos(2π·4t + 0.3)
    // give A0 = 3·cos 0.3 = 2.866009, B0 = −3·sin 0.3 = −0.886561, C0 = 5 (closed form, exact data).
    #[test]
    fn closed_form_case() {
        let fs = 1000.0;
        let y: Vec<f64> = (0..1000)
            .map(|n| 5.0 + 3.0 * (std::f64::consts::TAU * 4.0 * n as f64 / fs + 0.3).cos())
            .collect();
        let out = fit_three(&y, fs, 4.0, 12).unwrap();
        let (a0, b0) = out.fit.cos_sin_coefficients();
        assert!((a0 - 2.866009).abs() < 1e-6, "{a0}");
        assert!((b0 + 0.886561).abs() < 1e-6, "{b0}");
        assert!((out.fit.offset_codes - 5.0).abs() < 1e-9);
        assert!(out.fit.residual_rms_codes < 1e-9);
    }

    // Slow, obvious reference: dense least squares (QR of the N×3 design matrix with sin_cos per
    // sample). Fixed seed, non-coherent frequency, noisy data.
    #[test]
    fn agrees_with_dense_least_squares() {
        use rand::{Rng, SeedableRng};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        let n = 3001;
        let fs = 1.0e6;
        let f = 12345.678;
        let y: Vec<f64> = (0..n)
            .map(|k| {
                let t = k as f64 / fs;
                700.0 * (std::f64::consts::TAU * f * t + 1.1).cos() - 3.0 + rng.gen_range(-5.0..5.0)
            })
            .collect();
        let out = fit_three(&y, fs, f, 12).unwrap();
        let mut d = DMatrix::<f64>::zeros(n, 3);
        for k in 0..n {
            let th = std::f64::consts::TAU * f * k as f64 / fs;
            d[(k, 0)] = th.cos();
            d[(k, 1)] = th.sin();
            d[(k, 2)] = 1.0;
        }
        let yv = nalgebra::DVector::from_vec(y.clone());
        let qr = d.clone().qr();
        let x = qr
            .r()
            .solve_upper_triangular(&(qr.q().transpose() * &yv))
            .unwrap();
        let (a0, b0) = out.fit.cos_sin_coefficients();
        assert!((a0 - x[0]).abs() < 1e-8 * 700.0, "{a0} vs {}", x[0]);
        assert!((b0 - x[1]).abs() < 1e-8 * 700.0, "{b0} vs {}", x[1]);
        assert!((out.fit.offset_codes - x[2]).abs() < 1e-8);
        let r = &yv - &d * &x;
        let rms = (r.norm_squared() / n as f64).sqrt();
        assert!((out.fit.residual_rms_codes - rms).abs() < 1e-9 * rms);
    }
}
