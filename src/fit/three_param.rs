//! Three-parameter least-squares sine fit at a known frequency (IEEE Std 1241 §4.1.3.1, IEEE Std 1057).

use super::closed::ModelSums;
use super::sums::{data_sums, Phasor};
use super::{centre_of, finish, residual_of, Centred, Ending, FitMethod, FitOutput};
use crate::error::{Error, ErrorKind, Location, Result};

/// Solves the three-parameter fit in the centred frame.
pub(crate) fn solve_three(y: &[f64], cycles_per_sample: f64) -> Result<Centred> {
    let phasor = Phasor {
        cycles_per_sample,
        centre: centre_of(y.len()),
    };
    let [y1, yc, ys, _, _] = data_sums(y, phasor);
    // In the centred frame Σcos·sin = Σsin = 0, so the sine column decouples and the rest is 2×2.
    let m = ModelSums::new(y.len(), cycles_per_sample);
    let det = m.cc * m.n - m.c * m.c;
    if !(m.ss > 1e-9 * m.n && det > 1e-9 * m.n * m.n) {
        return Err(Error::new(
            ErrorKind::DegenerateFit,
            "",
            Location::Whole,
            "a frequency away from DC and Nyquist (solvable three-parameter normal equations)",
            format!("{cycles_per_sample} cycles per sample"),
        ));
    }
    Ok(Centred {
        a: (m.n * yc - m.c * y1) / det,
        b: ys / m.ss,
        c: (m.cc * y1 - m.c * yc) / det,
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
    let (residual, rms) = residual_of(y, p, true);
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
    super::edge_warnings(&fit, y.len(), &mut warnings);
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
