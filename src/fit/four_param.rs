//! Four-parameter least-squares sine fit (IEEE Std 1241 §4.1.3.3, IEEE Std 1057): Gauss-Newton on the
//! cosine and sine amplitudes, the offset and the frequency, from the FFT-peak start.

use super::closed::{solve_step, ModelSums};
use super::start::estimate_frequency;
use super::start::START_LEN;
use super::sums::{
    accumulate_into, data_sums, reduced_product, total, Accumulator, Phasor, LANES, LANE_OFFSETS,
};
use super::three_param::solve_three;
use super::{
    centre_of, cycles_std, edge_warnings, finish, residual_of, residual_pass, Centred, Ending,
    FitMethod, FitOutput,
};
use crate::error::{Error, ErrorKind, Location, Result};
use nalgebra::{Matrix4, Vector4};
use std::f64::consts::TAU;

/// Settings of the four-parameter fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FourParamOptions {
    /// Iteration cap; the fit reports `converged = false` when it is reached.
    pub max_iterations: u32,
    /// A starting frequency in hertz (the FFT peak near it is used); `None` searches the whole band.
    pub hint_hz: Option<f64>,
    /// Whether the fit's residual is kept (default); without it a long record's fit needs 8 bytes
    /// per sample less, and the figures are the same to the bit.
    pub keep_residual: bool,
}

impl Default for FourParamOptions {
    fn default() -> Self {
        FourParamOptions {
            max_iterations: 50,
            hint_hz: None,
            keep_residual: true,
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
#[derive(Default)]
struct SumsGn<'a> {
    residual: Option<&'a mut Vec<f64>>,
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

impl Accumulator for SumsGn<'_> {
    /// Adds a full group of samples and keeps their residuals.
    #[inline(always)]
    fn add(&mut self, t0: f64, y: &[f64; LANES], c: &[f64; LANES], s: &[f64; LANES]) {
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
        if let Some(v) = self.residual.as_mut() {
            v.extend_from_slice(&out);
        }
    }

    /// Adds one sample (the record's last partial group) and keeps its residual.
    fn add_one(&mut self, t: f64, y: f64, c: f64, s: f64) {
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
        if let Some(v) = self.residual.as_mut() {
            v.push(r);
        }
    }
}

/// The starting parameters at frequency `f0` (cycles per sample). Long records take the linear part from
/// a three-parameter fit of their first stretch, moved to the whole record's centred frame: the phase
/// error this carries (2π·δf·N/2) is well inside Gauss-Newton's reach and saves a full pass.
fn linear_start(y: &[f64], f0: f64) -> Result<Centred> {
    if y.len() < 4 * START_LEN {
        return solve_three(y, f0);
    }
    Ok(to_frame(
        solve_three(&y[..START_LEN], f0)?,
        START_LEN,
        y.len(),
    ))
}

/// Moves parameters fitted on the first `from` samples to the centred frame of the first `to` samples.
fn to_frame(p: Centred, from: usize, to: usize) -> Centred {
    let shift = TAU * reduced_product(p.cycles_per_sample, centre_of(to) - centre_of(from));
    let (sd, cd) = shift.sin_cos();
    // a·cos(θ' + Δ) + b·sin(θ' + Δ) in the new phase θ'.
    Centred {
        a: p.a * cd + p.b * sd,
        b: p.b * cd - p.a * sd,
        ..p
    }
}

/// Records at least this long first refine the frequency on their first eighth: the start it hands on
/// is then within the fit's own scatter of that stretch, and the whole record needs about two passes
/// fewer.
const PREFIX_MIN: usize = 1 << 18;
/// A fit this far below one cycle is still taken as one whole cycle: strong low-order harmonics pull
/// the fitted frequency of a one-cycle record by about 1e-3 cycles (their columns are not orthogonal
/// to the frequency's over so short a span), while a record of 0.9 cycles or fewer stays refused.
const ONE_CYCLE_SLACK: f64 = 0.01;

/// Below this step (cycles in the record) a step that does not halve is taken as rounding, not as slow
/// convergence; the exact check after the residual pass decides.
const STALL_CYCLES: f64 = 1e-9;
/// A step larger than this (cycles in the record) leaves the fast iteration to the guarded one.
const FAST_REACH_CYCLES: f64 = 0.25;

/// Fast Gauss-Newton from `p`: a pass gathers only the data sums, the normal matrix is in closed form
/// (`closed.rs`) and full steps are taken. Returns the parameters at the stop rule and the passes used,
/// or `None` when a step is too large or does not shrink: those records go to the guarded iteration.
fn fast_refine(y: &[f64], mut p: Centred, max_passes: u32) -> Option<(Centred, u32)> {
    let n = y.len();
    let centre = centre_of(n);
    let mut last = f64::INFINITY;
    for pass in 1..=max_passes {
        if !(p.cycles_per_sample > 0.0 && p.cycles_per_sample < 0.5) {
            return None;
        }
        let phasor = Phasor {
            cycles_per_sample: p.cycles_per_sample,
            centre,
        };
        let data = data_sums(y, phasor);
        let m = ModelSums::new(n, p.cycles_per_sample);
        let delta = solve_step(&m.normal_matrix(&p), &m.gradient_from_data(&p, &data))?;
        let omega_step = delta[3] / TAU;
        let cycles = (omega_step * n as f64).abs();
        let stalled = cycles > 0.5 * last;
        if cycles > FAST_REACH_CYCLES || (stalled && cycles > STALL_CYCLES) {
            return None;
        }
        p = Centred {
            a: p.a + delta[0],
            b: p.b + delta[1],
            c: p.c + delta[2],
            cycles_per_sample: p.cycles_per_sample + omega_step,
        };
        if stalled || omega_step.abs() <= FREQ_ULPS * f64::EPSILON * p.cycles_per_sample {
            return Some((p, pass));
        }
        last = cycles;
    }
    None
}

/// A finished fit: parameters, residual and its rms, passes, stop rule met.
struct Fitted {
    p: Centred,
    residual: Vec<f64>,
    rms: f64,
    iterations: u32,
    converged: bool,
}

/// The fast path: refine on the first eighth of long records, then on the whole record, then one
/// residual pass whose own sums give the exact Gauss-Newton step. The fit is done when that step moves
/// the frequency by less than the f64 resolution or by less than a thousandth of its Cramér-Rao
/// scatter. Otherwise `Err` hands the best parameters so far to the guarded iteration.
fn fast_fit(
    y: &[f64],
    start: Centred,
    f0: f64,
    max_passes: u32,
    keep: bool,
) -> std::result::Result<Fitted, Centred> {
    let n = y.len();
    let mut p = start;
    let mut passes = 0;
    if n >= PREFIX_MIN {
        let len = n / 8;
        let head = &y[..len];
        if let Some((q, k)) = solve_three(&head[..START_LEN], f0)
            .ok()
            .map(|s| to_frame(s, START_LEN, len))
            .and_then(|s| fast_refine(head, s, max_passes))
        {
            p = to_frame(q, len, n);
            passes += k;
        }
    }
    let Some((q, k)) = fast_refine(y, p, max_passes) else {
        return Err(p);
    };
    p = q;
    passes += k;
    let pass = residual_pass(y, p, keep);
    let m = ModelSums::new(n, p.cycles_per_sample);
    let [r, rc, rs, rtc, rts] = pass.sums;
    let g = Vector4::new(rc, rs, r, p.b * rtc - p.a * rts);
    let Some(delta) = solve_step(&m.normal_matrix(&p), &g) else {
        return Err(p);
    };
    let mut rms = (pass.sum_sq / n as f64).sqrt();
    let omega_step = delta[3] / TAU;
    let scatter = cycles_std(p.a.hypot(p.b), rms, n);
    let at_resolution = omega_step.abs() <= FREQ_ULPS * f64::EPSILON * p.cycles_per_sample;
    if !(at_resolution || (omega_step * n as f64).abs() <= 1e-3 * scatter) {
        return Err(p);
    }
    let mut residual = pass.residual;
    // As in the guarded iteration: a correction below a millionth of the residual rms changes no sample
    // visibly and is far inside the parameters' own uncertainty; only a larger one costs another pass.
    if delta[0].abs() + delta[1].abs() + delta[2].abs() > 1e-6 * rms {
        p = Centred {
            a: p.a + delta[0],
            b: p.b + delta[1],
            c: p.c + delta[2],
            cycles_per_sample: p.cycles_per_sample + omega_step,
        };
        // The old residual goes before the new one is made: two would be alive at once.
        drop(std::mem::take(&mut residual));
        (residual, rms) = residual_of(y, p, keep);
    }
    Ok(Fitted {
        p,
        residual,
        rms,
        iterations: passes,
        converged: true,
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
        residual: Some(residual),
        a: p.a,
        b: p.b,
        c0: p.c,
        ..SumsGn::default()
    };
    accumulate_into(y, phasor, &mut sums);
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
    (rr, solve_step(&m, &g))
}

/// The guarded iteration: Gauss-Newton with every sum taken from the residual, and steps that raise the
/// residual halved until one lowers it. For records the fast path declines (rough starts, tones near
/// DC or Nyquist, very low SNR).
fn guarded_fit(y: &[f64], mut p: Centred, max_iterations: u32) -> Result<Fitted> {
    let n = y.len();
    // `residual` holds the residual at `p`; trial passes write into `scratch` and swap in on acceptance,
    // so no separate residual pass is needed at the end.
    let mut residual = Vec::with_capacity(n);
    let mut scratch = Vec::with_capacity(n);
    let (mut rss, mut step) = gauss_newton_pass(y, p, &mut residual);
    let mut final_linear = None;
    let mut iterations = 0;
    let mut converged = false;
    while iterations < max_iterations {
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
    let mut rms = (rss / n as f64).sqrt();
    if let Some(d) = final_linear {
        // A correction below a millionth of the residual rms changes no sample visibly and is far inside
        // the parameters' own uncertainty (rms·√(2/N)); only a larger one costs another pass.
        if d[0].abs() + d[1].abs() + d[2].abs() > 1e-6 * rms {
            p.a += d[0];
            p.b += d[1];
            p.c += d[2];
            drop(scratch);
            drop(std::mem::take(&mut residual));
            (residual, rms) = residual_of(y, p, true);
        }
    }
    Ok(Fitted {
        p,
        residual,
        rms,
        iterations,
        converged,
    })
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
    let start = linear_start(y, f0)?;
    let mut warnings = Vec::new();
    let Fitted {
        p,
        residual,
        rms,
        iterations,
        converged,
    } = match fast_fit(y, start, f0, options.max_iterations, options.keep_residual) {
        Ok(done) => done,
        Err(from) => guarded_fit(y, from, options.max_iterations)?,
    };
    let residual = if options.keep_residual {
        residual
    } else {
        Vec::new()
    };
    if !converged {
        warnings.push(format!(
            "four-parameter fit stopped at its cap of {} iterations without meeting its stop rule",
            options.max_iterations
        ));
    }
    if p.cycles_per_sample * (n as f64) < 1.0 - ONE_CYCLE_SLACK {
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

    // The fast path (closed-form normal matrix, data sums only) and the guarded iteration (every sum
    // from the residual, step halving) minimise the same least-squares cost: from the same start they
    // must land on the same parameters, to far inside the fit's own scatter. Slow reference: the guarded
    // iteration, itself checked against scipy in tests/reference.rs.
    #[test]
    fn fast_path_agrees_with_the_guarded_iteration() {
        for &(n, cycles, amp, noise, seed) in &[
            (4096usize, 333.37, 20_000.0, 1.0, 1u64),
            (70_001, 7_000.37, 20_000.0, 1.5, 2),
            (1 << 18, 20_011.123, 30_000.0, 2.0, 3),
            (1000, 3.3, 500.0, 0.5, 4),
        ] {
            let y = make(n, cycles, amp, 0.7, -3.0, noise, seed);
            let f0 = estimate_frequency(&y, None).unwrap();
            let start = linear_start(&y, f0).unwrap();
            let fast = fast_fit(&y, start, f0, 50, true)
                .unwrap_or_else(|_| panic!("n={n}: fast path declined"));
            let slow = guarded_fit(&y, start, 50).unwrap();
            let sigma = cycles_std(amp, noise, n);
            let (fc, sc) = (
                fast.p.cycles_per_sample * n as f64,
                slow.p.cycles_per_sample * n as f64,
            );
            assert!(
                (fc - sc).abs() < 1e-3 * sigma,
                "n={n}: {fc} vs {sc} (σ {sigma})"
            );
            assert!((fast.rms - slow.rms).abs() < 1e-9 * slow.rms, "n={n}: rms");
            assert!((fast.p.a.hypot(fast.p.b) - slow.p.a.hypot(slow.p.b)).abs() < 1e-6 * noise);
            assert!((fast.p.c - slow.p.c).abs() < 1e-6 * noise);
            assert_eq!(fast.residual.len(), n);
            let worst = fast
                .residual
                .iter()
                .zip(&slow.residual)
                .map(|(a, b)| (a - b).abs())
                .fold(0.0, f64::max);
            assert!(worst < 1e-6 * noise, "n={n}: residuals differ by {worst}");
        }
    }

    // A start too far off for full steps (0.4 of a bin) is declined by the fast path and handed to the
    // guarded iteration, which still finds the tone.
    #[test]
    fn a_rough_start_falls_back_to_the_guarded_iteration() {
        let n = 8192;
        let cycles = 1234.25;
        let y = make(n, cycles, 10_000.0, 0.3, 0.0, 1.0, 5);
        let f0 = (cycles + 0.4) / n as f64;
        let start = solve_three(&y, f0).unwrap();
        assert!(fast_fit(&y, start, f0, 50, true).is_err());
        let out = guarded_fit(&y, start, 50).unwrap();
        assert!(out.converged);
        assert!(
            (out.p.cycles_per_sample * n as f64 - cycles).abs()
                < 6.0 * cycles_std(10_000.0, 1.0, n)
        );
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
