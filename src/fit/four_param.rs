//! Four-parameter least-squares sine fit (IEEE Std 1241 §4.1.3.3, IEEE Std 1057): Gauss-Newton on the
//! cosine and sine amplitudes, the offset and the frequency, from the FFT-peak start.

use super::start::estimate_frequency;
use super::start::START_LEN;
use super::sums::{for_each_group, reduced_product, total, Phasor, LANES, LANE_OFFSETS};
use super::three_param::solve_three;
use super::{centre_of, finish, residual_of, Centred, Ending, FitMethod, FitOutput, SineFit};
use crate::{Error, ErrorKind, Location, Result};
use nalgebra::{Matrix4, Vector4};
use std::f64::consts::TAU;

/// Settings of the four-parameter fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FourParamOptions {
    /// Iteration cap; the fit reports `converged = false` when it is reached.
    pub max_iterations: u32,
    /// A starting frequency in hertz (the FFT peak near it is used); `None` searches the whole band.
    pub hint_hz: Option<f64>,
}

impl Default for FourParamOptions {
    fn default() -> Self {
        FourParamOptions {
            max_iterations: 50,
            hint_hz: None,
        }
    }
}

/// A relative residual change below this counts as no change: the sums carry rounding of a few ulps per
/// sample, so smaller changes are not information. Stop rule of the fit.
const RESIDUAL_REL_TOL: f64 = 1e-13;
/// A frequency step within this many ulps of the frequency no longer changes it in f64.
const FREQ_ULPS: f64 = 4.0;

/// Gauss-Newton sums at the current parameters (a, b, c0 are the model, not sums): JᵀJ and Jᵀr for
/// columns (cos, sin, 1, ∂/∂ω), and Σr², per lane.
#[derive(Clone, Default)]
struct SumsGn {
    a: f64,
    b: f64,
    c0: f64,
    cc: [f64; LANES],
    ss: [f64; LANES],
    cs: [f64; LANES],
    c: [f64; LANES],
    s: [f64; LANES],
    cd: [f64; LANES],
    sd: [f64; LANES],
    d: [f64; LANES],
    dd: [f64; LANES],
    rc: [f64; LANES],
    rs: [f64; LANES],
    r: [f64; LANES],
    rd: [f64; LANES],
    rr: [f64; LANES],
}

impl SumsGn {
    /// Adds a full group of samples and returns their residuals.
    #[inline(always)]
    fn add(
        &mut self,
        t0: f64,
        y: &[f64; LANES],
        c: &[f64; LANES],
        s: &[f64; LANES],
    ) -> [f64; LANES] {
        let mut out = [0.0; LANES];
        for j in 0..LANES {
            let t = t0 + LANE_OFFSETS[j];
            let (cj, sj) = (c[j], s[j]);
            let r = y[j] - (self.a * cj + self.b * sj + self.c0);
            let d = t * (self.b * cj - self.a * sj);
            self.cc[j] += cj * cj;
            self.ss[j] += sj * sj;
            self.cs[j] += cj * sj;
            self.c[j] += cj;
            self.s[j] += sj;
            self.cd[j] += cj * d;
            self.sd[j] += sj * d;
            self.d[j] += d;
            self.dd[j] += d * d;
            self.rc[j] += r * cj;
            self.rs[j] += r * sj;
            self.r[j] += r;
            self.rd[j] += r * d;
            self.rr[j] += r * r;
            out[j] = r;
        }
        out
    }

    /// Adds one sample (the record's last partial group) and returns its residual.
    fn add_one(&mut self, t: f64, y: f64, c: f64, s: f64) -> f64 {
        let r = y - (self.a * c + self.b * s + self.c0);
        let d = t * (self.b * c - self.a * s);
        self.cc[0] += c * c;
        self.ss[0] += s * s;
        self.cs[0] += c * s;
        self.c[0] += c;
        self.s[0] += s;
        self.cd[0] += c * d;
        self.sd[0] += s * d;
        self.d[0] += d;
        self.dd[0] += d * d;
        self.rc[0] += r * c;
        self.rs[0] += r * s;
        self.r[0] += r;
        self.rd[0] += r * d;
        self.rr[0] += r * r;
        r
    }
}

/// The starting parameters at frequency `f0` (cycles per sample). Long records take the linear part from
/// a three-parameter fit of their first stretch, moved to the whole record's centred frame: the phase
/// error this carries (2π·δf·N/2) is well inside Gauss-Newton's reach and saves a full pass.
fn linear_start(y: &[f64], f0: f64) -> Result<Centred> {
    if y.len() < 4 * START_LEN {
        return solve_three(y, f0);
    }
    let seg = solve_three(&y[..START_LEN], f0)?;
    let shift = TAU * reduced_product(f0, centre_of(y.len()) - centre_of(START_LEN));
    let (sd, cd) = shift.sin_cos();
    // a·cos(θ' + Δ) + b·sin(θ' + Δ) in the whole record's phase θ'.
    Ok(Centred {
        a: seg.a * cd + seg.b * sd,
        b: seg.b * cd - seg.a * sd,
        c: seg.c,
        cycles_per_sample: f0,
    })
}

/// One pass: the residual at `p` (pushed into `residual`, which is cleared first), its sum of squares,
/// and the Gauss-Newton step from `p`.
fn gauss_newton_pass(
    y: &[f64],
    p: Centred,
    residual: &mut Vec<f64>,
) -> (f64, Option<Vector4<f64>>) {
    residual.clear();
    let phasor = Phasor {
        cycles_per_sample: p.cycles_per_sample,
        centre: centre_of(y.len()),
    };
    let mut sums = SumsGn {
        a: p.a,
        b: p.b,
        c0: p.c,
        ..SumsGn::default()
    };
    for_each_group(y.len(), phasor, |n0, len, c, s| {
        let t0 = n0 as f64 - phasor.centre;
        if len == LANES {
            let yy: &[f64; LANES] = y[n0..n0 + LANES].try_into().expect("group of LANES");
            residual.extend_from_slice(&sums.add(t0, yy, c, s));
        } else {
            for j in 0..len {
                residual.push(sums.add_one(t0 + j as f64, y[n0 + j], c[j], s[j]));
            }
        }
    });
    let n = y.len() as f64;
    let [cc, ss, cs, c, s, cd, sd, d, dd] = [
        &sums.cc, &sums.ss, &sums.cs, &sums.c, &sums.s, &sums.cd, &sums.sd, &sums.d, &sums.dd,
    ]
    .map(total);
    let m = Matrix4::new(
        cc, cs, c, cd, //
        cs, ss, s, sd, //
        c, s, n, d, //
        cd, sd, d, dd,
    );
    let g = Vector4::new(
        total(&sums.rc),
        total(&sums.rs),
        total(&sums.r),
        total(&sums.rd),
    );
    let rr = total(&sums.rr);
    // Jacobi scaling keeps Cholesky accurate although the ω column is ~N·A larger than the others.
    let scale = Vector4::from_fn(|i, _| 1.0 / m[(i, i)].sqrt());
    if scale.iter().any(|v| !v.is_finite()) {
        return (rr, None);
    }
    let ms = Matrix4::from_fn(|i, j| m[(i, j)] * scale[i] * scale[j]);
    let gs = g.component_mul(&scale);
    let step = ms.cholesky().map(|ch| ch.solve(&gs).component_mul(&scale));
    (rr, step)
}

/// Four-parameter fit of `y`: finds the frequency, amplitude, phase and offset.
pub fn fit_four(
    y: &[f64],
    sample_rate_hz: f64,
    bits: u32,
    options: FourParamOptions,
) -> Result<FitOutput> {
    let n = y.len();
    let hint = options.hint_hz.map(|h| h / sample_rate_hz);
    let f0 = estimate_frequency(y, hint)?;
    // The start may be rough for tones within a bin or two of DC; the cycle count is judged after the
    // fit.
    let mut p = linear_start(y, f0)?;
    // `residual` holds the residual at `p`; trial passes write into `scratch` and swap in on acceptance,
    // so no separate residual pass is needed at the end.
    let mut residual = Vec::with_capacity(n);
    let mut scratch = Vec::with_capacity(n);
    let (mut rss, mut step) = gauss_newton_pass(y, p, &mut residual);
    let mut final_linear = None;
    let mut iterations = 0;
    let mut converged = false;
    let mut warnings = Vec::new();
    while iterations < options.max_iterations {
        let Some(delta) = step else {
            return Err(Error::new(
                ErrorKind::DegenerateFit,
                "",
                Location::Whole,
                "solvable four-parameter normal equations",
                "a singular system (tone at DC or Nyquist, or a constant record)",
            ));
        };
        iterations += 1;
        let omega_step = delta[3] / std::f64::consts::TAU;
        if omega_step.abs() <= FREQ_ULPS * f64::EPSILON * p.cycles_per_sample {
            // The frequency no longer moves: stop; the last linear correction is dealt with below.
            final_linear = Some(delta);
            converged = true;
            break;
        }
        // Refuse steps that raise the residual: halve until one lowers it.
        let mut lambda = 1.0;
        let mut accepted = None;
        for _ in 0..12 {
            let trial = Centred {
                a: p.a + lambda * delta[0],
                b: p.b + lambda * delta[1],
                c: p.c + lambda * delta[2],
                cycles_per_sample: p.cycles_per_sample + lambda * omega_step,
            };
            let (rss_t, step_t) = gauss_newton_pass(y, trial, &mut scratch);
            if rss_t <= rss {
                accepted = Some((trial, rss_t, step_t));
                break;
            }
            lambda *= 0.5;
        }
        let Some((trial, rss_t, step_t)) = accepted else {
            // No step lowers the residual: we sit at the minimum to rounding.
            converged = true;
            break;
        };
        let change = rss - rss_t;
        std::mem::swap(&mut residual, &mut scratch);
        p = trial;
        step = step_t;
        let was = rss;
        rss = rss_t;
        if change <= RESIDUAL_REL_TOL * was {
            converged = true;
            break;
        }
    }
    if !converged {
        warnings.push(format!(
            "four-parameter fit stopped at its cap of {} iterations without meeting its stop rule",
            options.max_iterations
        ));
    }
    if p.cycles_per_sample * (n as f64) < 1.0 {
        return Err(Error::new(
            ErrorKind::DegenerateFit,
            "",
            Location::Whole,
            "at least one full cycle of the input in the record",
            format!("{:.3} cycles", p.cycles_per_sample * n as f64),
        ));
    }
    if !(p.cycles_per_sample > 0.0 && p.cycles_per_sample < 0.5) {
        return Err(Error::new(
            ErrorKind::DegenerateFit,
            "",
            Location::Whole,
            "a fitted frequency inside (0, fs/2)",
            format!("{} Hz", p.cycles_per_sample * sample_rate_hz),
        ));
    }
    let mut rms = (rss / n as f64).sqrt();
    if let Some(d) = final_linear {
        // A correction below a millionth of the residual rms changes no sample visibly and is far inside
        // the parameters' own uncertainty (rms·√(2/N)); only a larger one costs another pass.
        if d[0].abs() + d[1].abs() + d[2].abs() > 1e-6 * rms {
            p.a += d[0];
            p.b += d[1];
            p.c += d[2];
            (residual, rms) = residual_of(y, p);
        }
    }
    let fit = finish(
        p,
        n,
        sample_rate_hz,
        bits,
        rms,
        Ending {
            method: FitMethod::FourParameter,
            iterations,
            converged,
        },
    );
    edge_warnings(&fit, n, &mut warnings);
    Ok(FitOutput {
        fit,
        residual,
        warnings,
    })
}

/// Warnings for fits near the edges where the sine model is poorly determined.
pub(crate) fn edge_warnings(fit: &SineFit, samples: usize, warnings: &mut Vec<String>) {
    let half = samples as f64 / 2.0;
    if fit.cycles < 2.0 {
        warnings.push(format!(
            "only {:.2} cycles in the record (within 2 bins of DC): fit and spectrum are poorly determined",
            fit.cycles
        ));
    } else if half - fit.cycles < 2.0 {
        warnings.push(format!(
            "tone within 2 bins of Nyquist ({:.2} bins away): fit and spectrum are poorly determined",
            half - fit.cycles
        ));
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};

    fn make(
        n: usize,
        cycles: f64,
        amp: f64,
        phase: f64,
        offset: f64,
        noise: f64,
        seed: u64,
    ) -> Vec<f64> {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
        let g = Normal::new(0.0, noise.max(1e-300)).unwrap();
        (0..n)
            .map(|i| {
                let th = std::f64::consts::TAU * cycles * i as f64 / n as f64 + phase;
                amp * th.cos() + offset + if noise > 0.0 { g.sample(&mut rng) } else { 0.0 }
            })
            .collect()
    }

    // Noiseless data: the four-parameter fit must recover the parameters to near machine precision
    // (slow reference: the exact generating values).
    #[test]
    fn recovers_exact_parameters() {
        let y = make(5000, 123.4567, 1500.0, -2.0, 12.5, 0.0, 1);
        let out = fit_four(&y, 1.0e6, 12, FourParamOptions::default()).unwrap();
        assert!(out.fit.converged);
        assert!(
            (out.fit.cycles - 123.4567).abs() < 1e-9,
            "{}",
            out.fit.cycles
        );
        assert!((out.fit.amplitude_codes - 1500.0).abs() < 1e-7);
        assert!((out.fit.phase_rad + 2.0).abs() < 1e-9);
        assert!((out.fit.offset_codes - 12.5).abs() < 1e-8);
        assert!(out.fit.residual_rms_codes < 1e-7);
    }

    // The stop rule must end at long records where a fixed tolerance below f64 resolution never would.
    #[test]
    fn stops_at_float_precision_for_long_records() {
        let n = 1 << 22;
        let y = make(n, 100_003.3, 30000.0, 0.4, 0.0, 1.0, 3);
        let out = fit_four(&y, 1.0e8, 16, FourParamOptions::default()).unwrap();
        assert!(out.fit.converged);
        assert!(out.fit.iterations <= 10, "{}", out.fit.iterations);
        assert!((out.fit.cycles - 100_003.3).abs() < 5.0 * out.fit.cycles_std + 1e-9);
    }

    // The residual kept from the Gauss-Newton passes must be the record minus the reported sine, checked
    // against a slow direct evaluation (sin_cos per sample) on a record long enough to take the
    // short-stretch start.
    #[test]
    fn kept_residual_matches_the_reported_sine() {
        let n = 70_001;
        let y = make(n, 7_000.37, 20_000.0, 1.2, -3.0, 1.5, 9);
        let out = fit_four(&y, 1.0, 16, FourParamOptions::default()).unwrap();
        let f = &out.fit;
        let mut worst: f64 = 0.0;
        for (i, (yi, ri)) in y.iter().zip(&out.residual).enumerate() {
            let model = f.amplitude_codes
                * (std::f64::consts::TAU * f.frequency_hz * i as f64 + f.phase_rad).cos()
                + f.offset_codes;
            worst = worst.max((yi - model - ri).abs());
        }
        assert_eq!(out.residual.len(), n);
        assert!(
            worst < 1e-6 * f.residual_rms_codes.max(1.0) + 1e-7,
            "{worst}"
        );
        assert!((f.residual_rms_codes - 1.5).abs() < 0.05);
    }

    #[test]
    fn fewer_than_one_cycle_is_an_error() {
        let y = make(1000, 0.6, 1000.0, 0.0, 0.0, 0.0, 1);
        let err = fit_four(&y, 1.0e3, 12, FourParamOptions::default()).unwrap_err();
        assert!(
            matches!(err.kind, ErrorKind::DegenerateFit | ErrorKind::NoTone),
            "{err}"
        );
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 48, rng_algorithm: proptest::test_runner::RngAlgorithm::ChaCha, ..ProptestConfig::default() })]
        // Property with fixed seeds: random parameters in noise are recovered within 6 σ of the
        // Cramér-Rao bound for frequency (Rife & Boorstyn 1974) and within 6 σ for amplitude (σ/√(N/2)).
        #[test]
        fn recovers_random_parameters(cycles in 3.0f64..900.0, amp in 50.0f64..30000.0,
                                      phase in -3.1f64..3.1, offset in -100.0f64..100.0, seed in 0u64..1000) {
            let n = 2048;
            let noise = 2.0;
            let y = make(n, cycles, amp, phase, offset, noise, seed);
            let out = fit_four(&y, 1.0, 16, FourParamOptions::default()).unwrap();
            let sig_c = crate::fit::cycles_std(amp, noise, n);
            prop_assert!(out.fit.converged);
            prop_assert!((out.fit.cycles - cycles).abs() < 6.0 * sig_c, "cycles {} vs {}", out.fit.cycles, cycles);
            prop_assert!((out.fit.amplitude_codes - amp).abs() < 6.0 * noise * (2.0 / n as f64).sqrt());
            prop_assert!((out.fit.offset_codes - offset).abs() < 6.0 * noise / (n as f64).sqrt());
        }
    }
}
