//! Sine fits (IEEE Std 1241 / IEEE Std 1057): three-parameter at a known frequency, four-parameter when
//! the frequency must be found, and the fit of several sines at once (`multi_tone`). All work on a
//! centred time index in f64.

pub(crate) mod clipping;
mod closed;
mod four_param;
pub(crate) mod multi_tone;
mod start;
mod sums;
mod three_param;
pub(crate) mod uncertainty;

pub use clipping::{Clipping, ClippingUncertainty};
pub use four_param::{fit_four, FourParamOptions};
pub use three_param::fit_three;
pub use uncertainty::FitUncertainty;

use serde::Serialize;
use std::f64::consts::{PI, TAU};

/// Which least-squares fit produced a result.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FitMethod {
    /// Three parameters (cosine, sine, offset) at a known frequency.
    ThreeParameter,
    /// Four parameters: the three above plus the frequency.
    FourParameter,
}

/// The fitted sine y(t) = A·cos(2π·f·t + φ) + C, with t = n / fs.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SineFit {
    /// The fit used.
    pub method: FitMethod,
    /// Fitted (or given) frequency in hertz.
    pub frequency_hz: f64,
    /// Peak amplitude A in codes.
    pub amplitude_codes: f64,
    /// Amplitude relative to a full-scale sine (2^(N-1) codes).
    pub amplitude_dbfs: f64,
    /// Phase φ at sample 0, in (−π, π].
    pub phase_rad: f64,
    /// Offset C in codes.
    pub offset_codes: f64,
    /// Rms of the residual (record minus fitted sine), in codes.
    pub residual_rms_codes: f64,
    /// SINAD from the fit: 20·log10((A/√2) / residual rms). `None` when the residual is zero.
    pub sinad_db: Option<f64>,
    /// ENOB in the IEEE 1241 fit form: N − log2(residual rms / (q/√12)). `None` when the residual is zero.
    pub enob_bits: Option<f64>,
    /// Cycles of the fitted sine in the record: f·N/fs.
    pub cycles: f64,
    /// One-sigma uncertainty of `cycles` from the residual (Cramér-Rao form for a sine in white noise).
    pub cycles_std: f64,
    /// Gauss-Newton iterations taken (0 for the three-parameter fit).
    pub iterations: u32,
    /// Whether the fit met its stop rule (always true for the three-parameter fit).
    pub converged: bool,
    /// One-sigma standard uncertainties of the figures above, keyed as they are.
    pub uncertainty: FitUncertainty,
}

impl SineFit {
    /// The IEEE 1057 coefficients (A0, B0) of y = A0·cos(ωt) + B0·sin(ωt) + C0, time origin at sample 0.
    pub fn cos_sin_coefficients(&self) -> (f64, f64) {
        (
            self.amplitude_codes * self.phase_rad.cos(),
            -self.amplitude_codes * self.phase_rad.sin(),
        )
    }
}

/// Samples between exact re-seeds of the rotation recurrence (its rounding grows by about 1e-16 per
/// step, so 1024 steps keep the model within 1e-12 of its exact value).
const RESEED: usize = 1024;

/// Visits (n, cos θ_n, sin θ_n) for θ_n = 2π·f·(n − centre), f in cycles per sample, by a rotation
/// recurrence re-seeded from `sin_cos` every [`RESEED`] samples.
pub(crate) fn for_each_phase(
    samples: usize,
    cycles_per_sample: f64,
    mut visit: impl FnMut(usize, f64, f64),
) {
    let centre = centre_of(samples);
    let (rs, rc) = (TAU * cycles_per_sample).sin_cos();
    let (mut c, mut s) = (0.0, 0.0);
    for n in 0..samples {
        if n % RESEED == 0 {
            // The phase in turns, reduced before it is scaled, keeps long records exact.
            let turns = (cycles_per_sample * (n as f64 - centre)).fract();
            (s, c) = (TAU * turns).sin_cos();
        }
        visit(n, c, s);
        (c, s) = (c * rc - s * rs, s * rc + c * rs);
    }
}

impl SineFit {
    /// Subtracts the fitted sine and offset from `y` (the record it was fitted to), sample by sample,
    /// leaving the fit's residual.
    pub fn subtract_from(&self, y: &mut [f64]) {
        let n = y.len();
        if n == 0 {
            return;
        }
        let f = self.cycles / n as f64;
        // In the centred frame the phase is φ + 2π·f·centre, the turns reduced exactly.
        let psi = self.phase_rad + TAU * sums::reduced_product(f, centre_of(n));
        let (a, b) = (
            self.amplitude_codes * psi.cos(),
            -self.amplitude_codes * psi.sin(),
        );
        let c = self.offset_codes;
        for_each_phase(n, f, |i, cs, sn| y[i] -= c + a * cs + b * sn);
    }
}

/// A fit together with its residual (kept for the report stage) and its warnings.
#[derive(Debug, Clone, PartialEq)]
pub struct FitOutput {
    /// The fitted figures.
    pub fit: SineFit,
    /// Record minus fitted sine, per sample, in codes.
    pub residual: Vec<f64>,
    /// Things the user should know about the fit.
    pub warnings: Vec<String>,
}

/// Centre of the time index for n = 0..N−1; centring keeps the normal equations well conditioned.
pub(crate) fn centre_of(samples: usize) -> f64 {
    (samples as f64 - 1.0) / 2.0
}

/// Parameters of the model in the centred frame: a·cos(θ) + b·sin(θ) + c, θ = 2π·f_c·(n − centre).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Centred {
    pub a: f64,
    pub b: f64,
    pub c: f64,
    pub cycles_per_sample: f64,
}

/// How a fit ended.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Ending {
    pub method: FitMethod,
    pub iterations: u32,
    pub converged: bool,
}

/// Fills in the reported figures from centred parameters and the residual rms.
pub(crate) fn finish(
    p: Centred,
    samples: usize,
    sample_rate_hz: f64,
    bits: u32,
    residual_rms: f64,
    ending: Ending,
) -> SineFit {
    let Ending {
        method,
        iterations,
        converged,
    } = ending;
    let amplitude = p.a.hypot(p.b);
    let phase = phase_at_zero(p.a, p.b, p.cycles_per_sample, centre_of(samples));
    let fs_amp = crate::record::full_scale_amplitude_codes(bits);
    let (sinad_db, enob_bits) = if residual_rms > 0.0 && amplitude > 0.0 {
        let sinad = 20.0 * ((amplitude / 2f64.sqrt()) / residual_rms).log10();
        let enob = bits as f64 - (residual_rms / (1.0 / 12f64.sqrt())).log2();
        (Some(sinad), Some(enob))
    } else {
        (None, None)
    };
    let cycles = p.cycles_per_sample * samples as f64;
    SineFit {
        method,
        frequency_hz: p.cycles_per_sample * sample_rate_hz,
        amplitude_codes: amplitude,
        amplitude_dbfs: 20.0 * (amplitude / fs_amp).log10(),
        phase_rad: phase,
        offset_codes: p.c,
        residual_rms_codes: residual_rms,
        sinad_db,
        enob_bits,
        cycles,
        cycles_std: cycles_std(amplitude, residual_rms, samples),
        iterations,
        converged,
        uncertainty: uncertainty::of_fit(method, amplitude, residual_rms, samples, sample_rate_hz),
    }
}

/// A phase wrapped into (−π, π].
pub fn wrap_phase(phase: f64) -> f64 {
    let mut p = phase.rem_euclid(TAU);
    if p > PI {
        p -= TAU;
    }
    p
}

/// Phase at sample 0, in (−π, π], of a·cos θ + b·sin θ with θ = 2π·f·(n − centre) (f in cycles per
/// sample): in the centred frame the phase is atan2(−b, a), and the origin moves back to n = 0 by the
/// exactly reduced turns f·centre.
pub fn phase_at_zero(a: f64, b: f64, cycles_per_sample: f64, centre: f64) -> f64 {
    wrap_phase((-b).atan2(a) - TAU * sums::reduced_product(cycles_per_sample, centre))
}

/// One-sigma uncertainty of the cycle count of a real sine of amplitude A in real white noise of rms σ
/// over N samples: the Cramér-Rao bound var(ω) = 12 / (SNR·N·(N²−1)) rad²/sample² with SNR = A²/(2σ²),
/// i.e. 24σ² / (A²·N·(N²−1)), times N/(2π). (Rife & Boorstyn 1974 write 12σ²/(b²N(N²−1)) for a complex
/// tone b·e^{jωn} with noise variance σ² in each of its real and imaginary parts; a real sine carries half
/// that information. The real form is Kay 1993, Example 3.14, from memory; tests/reference.rs checks it
/// against the inverse Fisher information and a Monte-Carlo run of the fit.)
pub fn cycles_std(amplitude: f64, noise_rms: f64, samples: usize) -> f64 {
    let n = samples as f64;
    if amplitude <= 0.0 || n < 2.0 {
        return f64::INFINITY;
    }
    let var_omega = 24.0 * noise_rms * noise_rms / (amplitude * amplitude * n * (n * n - 1.0));
    var_omega.sqrt() * n / TAU
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

/// The residual of the centred model with its sums: Σr², and [Σr, Σr·cos, Σr·sin, Σt·r·cos, Σt·r·sin]
/// (the Gauss-Newton gradient taken from the residual itself, free of the cancellation in data sums).
pub(crate) struct ResidualPass {
    pub residual: Vec<f64>,
    pub sum_sq: f64,
    pub sums: [f64; 5],
}

/// One pass computing the residual of `p` over `y` and its sums. With `keep` false the residual is not
/// kept (`residual` is empty): the sums are the same to the bit, and a long record saves 8 bytes per
/// sample.
pub(crate) fn residual_pass(y: &[f64], p: Centred, keep: bool) -> ResidualPass {
    sums::wide_vectors!(residual_pass_in [] (y: &[f64], p: Centred, keep: bool) -> ResidualPass)
}

#[inline(always)]
fn residual_pass_in(y: &[f64], p: Centred, keep: bool) -> ResidualPass {
    use sums::{BLOCK, WIDE};
    let samples = y.len();
    let phasor = sums::Phasor {
        cycles_per_sample: p.cycles_per_sample,
        centre: centre_of(samples),
    };
    let (ss, cs) = (TAU * sums::reduced_product(p.cycles_per_sample, WIDE as f64)).sin_cos();
    // The residual is written into the spare capacity (no zero-fill of a buffer first, and no growth
    // check in the loop, which would keep the accumulators out of registers).
    // A residual not kept is written block by block into one small buffer instead: the loop is the same.
    let mut out: Vec<f64> = Vec::with_capacity(if keep { samples } else { 0 });
    let mut discard = if keep {
        Vec::new()
    } else {
        Vec::with_capacity(BLOCK.max(WIDE))
    };
    let mut acc = [[0.0; WIDE]; 6];
    let full = samples - samples % WIDE;
    let mut block_start = 0;
    while block_start < full {
        let block_end = (block_start + BLOCK).min(full);
        let (mut c, mut s) = sums::seed_wide(phasor, block_start);
        let mut t: [f64; WIDE] = std::array::from_fn(|j| (block_start + j) as f64 - phasor.centre);
        let dst_block = if keep {
            &mut out.spare_capacity_mut()[block_start..block_end]
        } else {
            &mut discard.spare_capacity_mut()[..block_end - block_start]
        };
        let outs = dst_block.chunks_exact_mut(WIDE);
        for (chunk, dst) in y[block_start..block_end].chunks_exact(WIDE).zip(outs) {
            for j in 0..WIDE {
                let r = chunk[j] - (p.a * c[j] + p.b * s[j] + p.c);
                dst[j].write(r);
                let tr = t[j] * r;
                acc[0][j] += r * r;
                acc[1][j] += r;
                acc[2][j] += r * c[j];
                acc[3][j] += r * s[j];
                acc[4][j] += tr * c[j];
                acc[5][j] += tr * s[j];
                let c2 = c[j] * cs - s[j] * ss;
                s[j] = s[j] * cs + c[j] * ss;
                c[j] = c2;
                t[j] += WIDE as f64;
            }
        }
        block_start = block_end;
    }
    for (n, &yn) in y.iter().enumerate().skip(full) {
        let (c, s) = phasor.cos_sin_at(n);
        let r = yn - (p.a * c + p.b * s + p.c);
        if keep {
            out.spare_capacity_mut()[n].write(r);
        }
        let tr = (n as f64 - phasor.centre) * r;
        acc[0][0] += r * r;
        acc[1][0] += r;
        acc[2][0] += r * c;
        acc[3][0] += r * s;
        acc[4][0] += tr * c;
        acc[5][0] += tr * s;
    }
    if keep {
        // SAFETY: the loops above wrote every one of the first `samples` slots.
        unsafe { out.set_len(samples) };
    }
    let t = acc.map(|a| sums::total(&sums::fold_wide(&a)));
    ResidualPass {
        residual: out,
        sum_sq: t[0],
        sums: [t[1], t[2], t[3], t[4], t[5]],
    }
}

/// Computes the residual of the centred model (empty unless `keep`), and its rms.
pub(crate) fn residual_of(y: &[f64], p: Centred, keep: bool) -> (Vec<f64>, f64) {
    let pass = residual_pass(y, p, keep);
    let rms = (pass.sum_sq / y.len() as f64).sqrt();
    (pass.residual, rms)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Subtracting the fitted sine from the record it was fitted to gives the fit's own residual (computed
    // by the fit's passes, a different path): a 1000-code sine evaluated two ways over 2^16 samples
    // agrees to about 1e-10 codes; 1e-8 leaves a hundredfold margin.
    #[test]
    fn subtract_from_gives_the_fits_residual() {
        const AGREE_CODES: f64 = 1e-8;
        let n = 1 << 16;
        let y: Vec<f64> = (0..n)
            .map(|i| {
                1000.0 * (TAU * 0.123_456_7 * i as f64 + 0.4).cos()
                    + 3.0
                    + ((i * 7919) % 13) as f64 * 0.01
            })
            .collect();
        let out = fit_four(&y, 1e6, 12, FourParamOptions::default()).unwrap();
        let mut r = y.clone();
        out.fit.subtract_from(&mut r);
        for (i, (a, b)) in r.iter().zip(&out.residual).enumerate() {
            assert!((a - b).abs() < AGREE_CODES, "{i}: {a} vs {b}");
        }
    }

    // The recurrence against sin_cos per sample (slow, obviously correct reference): within 1e-12 over
    // several re-seeds (see RESEED).
    #[test]
    fn rotation_recurrence_matches_sin_cos() {
        const AGREE: f64 = 1e-12;
        let (n, f) = (5000, 0.123_456_789);
        let centre = crate::fit::centre_of(n);
        for_each_phase(n, f, |i, c, s| {
            let (ws, wc) = (TAU * f * (i as f64 - centre)).sin_cos();
            assert!((c - wc).abs() < AGREE && (s - ws).abs() < AGREE, "{i}");
        });
    }

    use nalgebra::{Matrix4, Vector4};

    // Slow, obvious reference: the Cramér-Rao bound of the frequency of A·cos(ωn + φ) + C in real white
    // noise of variance σ² is the (ω, ω) element of the inverse Fisher information (1/σ²)·JᵀJ, J the
    // N×4 derivative matrix of the model in (A, φ, ω, C). cycles_std must be its square root in cycles.
    #[test]
    fn cycles_std_is_the_inverse_fisher_information() {
        for &(n, cycles, phase) in &[
            (1024usize, 100.37, 0.4),
            (4096, 1000.9, -2.0),
            (300, 17.2, 1.0),
        ] {
            let (a, sigma) = (1000.0, 2.5);
            let w = TAU * cycles / n as f64;
            let mut fim = Matrix4::<f64>::zeros();
            for k in 0..n {
                let t = k as f64;
                let (s, c) = (w * t + phase).sin_cos();
                let d = Vector4::new(c, -a * s, -a * t * s, 1.0);
                fim += d * d.transpose() / (sigma * sigma);
            }
            let var_omega = fim.try_inverse().unwrap()[(2, 2)];
            let want = var_omega.sqrt() * n as f64 / TAU;
            let got = cycles_std(a, sigma, n);
            // The closed form is the large-N limit: 0.3 % off at 1024 samples, 1.3 % at 300 and 17 cycles.
            assert!((got / want - 1.0).abs() < 0.02, "N {n}: {got} vs {want}");
        }
    }
}
