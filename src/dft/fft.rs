//! Real FFTs through realfft (on rustfft), one planner per thread so plans are reused across records.

use realfft::num_complex::Complex;
use realfft::{RealFftPlanner, RealToComplex};
use std::cell::RefCell;
use std::sync::Arc;

/// A forward real-FFT plan of one length; plans are shared, so one made on another thread (while the
/// fit runs) serves the spectrum.
pub type Plan = Arc<dyn RealToComplex<f64>>;

thread_local! {
    static PLANNER: RefCell<RealFftPlanner<f64>> = RefCell::new(RealFftPlanner::new());
}

/// Forward real FFT of `input` (any length ≥ 1), unnormalised: X_k = Σ x_n·e^(−j2πkn/N), k = 0..=N/2.
/// `input` is used as scratch and left in an unspecified state.
pub fn real_fft(input: &mut [f64]) -> Vec<Complex<f64>> {
    let plan = PLANNER.with(|p| p.borrow_mut().plan_fft_forward(input.len()));
    let mut out = plan.make_output_vec();
    let mut scratch = plan.make_scratch_vec();
    // Lengths always match the plan, so this cannot fail.
    plan.process_with_scratch(input, &mut out, &mut scratch)
        .expect("buffer lengths come from the plan");
    out
}

/// Per-thread buffers of [`power_spectrum`]: the windowed copy, the complex output and the FFT's scratch
/// are reused across records of one length instead of allocated and zeroed each time.
#[derive(Default)]
struct Buffers {
    input: Vec<f64>,
    output: Vec<Complex<f64>>,
    scratch: Vec<Complex<f64>>,
}

thread_local! {
    static BUFFERS: RefCell<Buffers> = RefCell::new(Buffers::default());
}

/// Records longer than this give their buffers back after each spectrum: a lot of short records reuses
/// them, while one huge record should not keep hundreds of megabytes alive after its FFT.
const KEEP_BUFFERS_MAX: usize = 1 << 20;

/// One-sided power spectrum of `x` under window `w`, scaled by N·Σw² so that a tone's power summed over
/// its bins equals A²/2 and the mean noise bin is 2σ²/N (bins 0 and N/2 are not doubled). An empty or
/// all-ones `w` is the rectangular window: no window is built or multiplied.
pub fn power_spectrum(x: &[f64], w: &[f64]) -> Vec<f64> {
    if x.len() > KEEP_BUFFERS_MAX {
        return power_spectrum_in_place(&mut x.to_vec(), w);
    }
    let mut input = BUFFERS.with(|b| std::mem::take(&mut b.borrow_mut().input));
    input.clear();
    input.extend_from_slice(x);
    let out = power_spectrum_in_place(&mut input, w);
    BUFFERS.with(|b| b.borrow_mut().input = input);
    out
}

/// [`power_spectrum`] of `x`, using `x` itself as the FFT's input: it is windowed in place and left in an
/// unspecified state. Saves a copy of the record where the caller has no further use for it.
pub fn power_spectrum_in_place(x: &mut [f64], w: &[f64]) -> Vec<f64> {
    debug_assert!(w.is_empty() || x.len() == w.len());
    let (output, scale) = transform(x, Taper::Full(w));
    powers_of(output, x.len(), scale)
}

/// A window as [`power_spectrum_owned`] takes it: all `n` samples, only the first `n/2 + 1` (the rest
/// mirror them, as [`crate::dft::Window::half_samples`] gives them), or none (rectangular).
#[derive(Debug, Clone, Copy)]
pub enum Taper<'a> {
    /// All `n` samples (or none: rectangular).
    Full(&'a [f64]),
    /// The first `n/2 + 1` samples of a periodic window; sample i > n/2 is sample n − i.
    Half(&'a [f64]),
}

/// [`power_spectrum_in_place`] on a record the caller gives up: the record is dropped as soon as it has
/// been transformed, so the powers are never allocated beside it (at 2^24 samples, 128 MB less at the
/// peak). The powers are the same to the bit whichever form of the window is given.
pub fn power_spectrum_owned(mut x: Vec<f64>, taper: Taper) -> Vec<f64> {
    let n = x.len();
    let (output, scale) = transform(&mut x, taper);
    drop(x);
    powers_of(output, n, scale)
}

/// [`power_spectrum_owned`] in two steps: [`apply_taper`] windows the records (then the window can be
/// given back before the transform allocates its buffers), and this transforms one of them, given the
/// Σw² that [`apply_taper`] returned. The same powers to the bit.
pub fn power_spectrum_tapered(mut x: Vec<f64>, sum_w2: f64, plan: Option<&Plan>) -> Vec<f64> {
    let n = x.len();
    let (output, scale) = fft_scaled(&mut x, sum_w2, plan);
    drop(x);
    powers_of(output, n, scale)
}

/// Windows `x` in place and returns Σw² (N for the rectangular window, which is not multiplied).
pub fn apply_taper(x: &mut [f64], taper: Taper) -> f64 {
    let n = x.len();
    let half = n / 2;
    // Both forms visit the same window values in the same order, so Σw² and the products are the same.
    match taper {
        Taper::Full(w) if w.is_empty() || w.iter().all(|&v| v == 1.0) => n as f64,
        Taper::Half(w) if w.is_empty() || w.iter().all(|&v| v == 1.0) => n as f64,
        Taper::Full(w) => {
            x.iter_mut().zip(w).for_each(|(a, b)| *a *= b);
            w.iter().map(|v| v * v).sum()
        }
        Taper::Half(w) => {
            debug_assert_eq!(w.len(), half + 1);
            let (lo, hi) = x.split_at_mut(half + 1);
            lo.iter_mut().zip(w).for_each(|(a, b)| *a *= b);
            // Sample half + 1 + j takes window sample n − (half + 1 + j), walking down from the middle.
            hi.iter_mut()
                .zip(w[..n - half].iter().rev())
                .for_each(|(a, b)| *a *= b);
            let first: f64 = w.iter().map(|v| v * v).sum();
            w[1..n - half]
                .iter()
                .rev()
                .fold(first, |acc, v| acc + v * v)
        }
    }
}

/// Windows `x` in place, runs the FFT, and returns its output with the power scale 1/(N·Σw²).
fn transform(x: &mut [f64], taper: Taper) -> (Vec<Complex<f64>>, f64) {
    let sum_w2 = apply_taper(x, taper);
    fft_scaled(x, sum_w2, None)
}

/// The plan of length `n`: from this thread's planner (which keeps it for the next record of that
/// length), or, for a huge record, made for it alone (its twiddle factors, about 12 bytes per sample,
/// are given back with it). Any thread gives the same plan for the same length.
pub fn plan(n: usize) -> Plan {
    if n <= KEEP_BUFFERS_MAX {
        PLANNER.with(|p| p.borrow_mut().plan_fft_forward(n))
    } else {
        RealFftPlanner::new().plan_fft_forward(n)
    }
}

/// Runs the FFT of `x` (already windowed) and returns its output with the power scale 1/(N·Σw²).
fn fft_scaled(x: &mut [f64], sum_w2: f64, plan: Option<&Plan>) -> (Vec<Complex<f64>>, f64) {
    let n = x.len();
    let plan = match plan {
        Some(p) if p.len() == n => p.clone(),
        _ => self::plan(n),
    };
    let (mut output, mut scratch) = BUFFERS.with(|b| {
        let mut b = b.borrow_mut();
        (
            std::mem::take(&mut b.output),
            std::mem::take(&mut b.scratch),
        )
    });
    output.resize(n / 2 + 1, Complex::new(0.0, 0.0));
    scratch.resize(plan.get_scratch_len(), Complex::new(0.0, 0.0));
    // Lengths always match the plan, so this cannot fail.
    plan.process_with_scratch(x, &mut output, &mut scratch)
        .expect("buffer lengths come from the plan");
    if n <= KEEP_BUFFERS_MAX {
        BUFFERS.with(|b| b.borrow_mut().scratch = scratch);
    }
    (output, 1.0 / (n as f64 * sum_w2))
}

/// The scaled one-sided powers of an FFT output; the output buffer is kept for the next short record.
fn powers_of(output: Vec<Complex<f64>>, n: usize, scale: f64) -> Vec<f64> {
    let mut out: Vec<f64> = output.iter().map(|z| 2.0 * scale * z.norm_sqr()).collect();
    // DC and (for even N) Nyquist are not mirrored.
    out[0] *= 0.5;
    if n.is_multiple_of(2) {
        let last = out.len() - 1;
        out[last] *= 0.5;
    }
    if n <= KEEP_BUFFERS_MAX {
        BUFFERS.with(|b| b.borrow_mut().output = output);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    // Slow, obvious reference: the naive DFT, for a length that is not a power of two.
    #[test]
    fn matches_naive_dft() {
        let n = 90;
        let x: Vec<f64> = (0..n).map(|i| ((i * 37 % 11) as f64) - 4.5).collect();
        let got = real_fft(&mut x.clone());
        for (k, g) in got.iter().enumerate() {
            let mut re = 0.0;
            let mut im = 0.0;
            for (i, v) in x.iter().enumerate() {
                let th = -std::f64::consts::TAU * (k * i) as f64 / n as f64;
                re += v * th.cos();
                im += v * th.sin();
            }
            assert!(
                (g.re - re).abs() < 1e-9 && (g.im - im).abs() < 1e-9,
                "bin {k}"
            );
        }
    }

    // The in-place form and the copying form (with the per-thread buffers kept for short records and
    // given back for long ones) must give bit-identical powers, also when one length follows another.
    #[test]
    fn in_place_and_copying_forms_agree() {
        for &n in &[1000usize, 4096, (1 << 20) + 2, 4096] {
            let x: Vec<f64> = (0..n).map(|i| ((i * 7919 % 1013) as f64) - 500.0).collect();
            let w = crate::dft::Window::Hann.samples(n);
            for win in [&[][..], &w[..]] {
                let a = power_spectrum(&x, win);
                let b = power_spectrum_in_place(&mut x.clone(), win);
                assert_eq!(a.len(), n / 2 + 1);
                assert!(a == b, "n={n}");
            }
        }
    }

    // A window given by its first half (the long-record form) gives the same powers, bit for bit, as the
    // full window, for even and odd lengths; so does the rectangular window in either form.
    #[test]
    fn half_window_gives_the_same_powers_as_the_full_one() {
        for &n in &[8usize, 9, 1000, 1001, 4096] {
            let x: Vec<f64> = (0..n).map(|i| ((i * 7919 % 1013) as f64) - 500.0).collect();
            for win in [
                crate::dft::Window::Hann,
                crate::dft::Window::BlackmanHarris7,
            ] {
                let full = win.samples(n);
                let half = win.half_samples(n);
                let a = power_spectrum_in_place(&mut x.clone(), &full);
                let b = power_spectrum_owned(x.clone(), Taper::Half(&half));
                let c = power_spectrum_owned(x.clone(), Taper::Full(&full));
                assert!(a == b && a == c, "n={n}");
            }
            let a = power_spectrum(&x, &[]);
            assert!(a == power_spectrum_owned(x.clone(), Taper::Half(&[])));
        }
    }

    // The scaling convention: a coherent tone of amplitude A sums to A²/2; an offset C gives C² in bin 0
    // (Parseval; convention stated in the crate docs).
    #[test]
    fn tone_power_is_half_amplitude_squared() {
        let n = 1000;
        let a = 3.0;
        let x: Vec<f64> = (0..n)
            .map(|i| 2.0 + a * (std::f64::consts::TAU * 37.0 * i as f64 / n as f64 + 0.4).cos())
            .collect();
        let w = vec![1.0; n];
        let p = power_spectrum(&x, &w);
        assert!((p[37] - a * a / 2.0).abs() < 1e-9);
        assert!((p[0] - 4.0).abs() < 1e-9);
    }
}
