//! The table of DFT windows: coefficients, periodic samples, figures of merit and leakage profiles.
//!
//! Every window is used in its periodic (DFT-even) form: a length-N window is the symmetric window of
//! length N + 1 without its last point, so that a coherent tone under a K-term cosine sum lands in exactly
//! 2K − 1 bins. Samples are not normalised: cosine sums have the scale of their coefficients (the
//! HFT flat-tops peak at Σa_k, as Heinzel et al. 2002 print them), Kaiser windows peak at 1.

use std::cell::RefCell;
use std::f64::consts::PI;
use std::sync::{Arc, Mutex};

use rustfft::num_complex::Complex64;
use rustfft::{Fft, FftPlanner};
use serde::Serialize;

use crate::error::Error;

/// Largest Kaiser β a window id may give (`kaiser(BETA)`) (its sidelobes are far below -300 dB there).
pub const KAISER_BETA_MAX: f64 = 100.0;

/// Record length at which [`Window::figures`] are computed.
pub const FIGURES_LEN: usize = 4096;

/// Reference length at which [`Window::leakage`] profiles are computed.
pub const LEAKAGE_LEN: usize = 4096;

/// Zero-padding factor of the spectrum searched for nulls and sidelobes (then refined on the DTFT).
const PAD: usize = 16;

/// Power ratios below this (-300 dB) are reported as `None`: they are at the rounding floor.
const FLOOR_POWER_RATIO: f64 = 1e-30;

// Cosine-sum coefficients, positive convention: w[n] = Σ_k (−1)^k a_k cos(2πkn/N).
const RECTANGULAR: [f64; 1] = [1.0];
const HANN: [f64; 2] = [0.5, 0.5];
/// Harris 1978, 4-term "-92 dB" Blackman-Harris (scipy `blackmanharris`).
const BLACKMAN_HARRIS_4: [f64; 4] = [0.35875, 0.48829, 0.14128, 0.01168];
/// Albrecht's minimum-sidelobe 7-term set (about -180 dB).
const BLACKMAN_HARRIS_7: [f64; 7] = [
    0.27105140069342,
    0.43329793923448,
    0.21812299954311,
    0.06592544638803,
    0.01081174209837,
    0.00077658482522,
    0.00001388721735,
];
/// Heinzel, Rüdiger, Schilling 2002 flat-tops.
const HFT90D: [f64; 5] = [1.0, 1.942604, 1.340318, 0.440811, 0.043097];
const HFT116D: [f64; 6] = [1.0, 1.9575375, 1.4780705, 0.6367431, 0.1228389, 0.0066288];
const HFT144D: [f64; 7] = [
    1.0, 1.96760033, 1.57983607, 0.81123644, 0.22583558, 0.02773848, 0.00090360,
];
/// The HFT169D set that reaches the published -169.5 dB (a widely copied set, one unit lower in the
/// last digit of five coefficients, only reaches -167.9 dB).
const HFT169D: [f64; 8] = [
    1.0, 1.97441843, 1.65409889, 0.95788187, 0.33673420, 0.06364622, 0.00521942, 0.00010599,
];
/// scipy's `flattop` (5-term, D'Antona and Ferrero).
const FLATTOP: [f64; 5] = [
    0.21557895,
    0.41663158,
    0.277263158,
    0.083578947,
    0.006947368,
];

/// A DFT window. All forms are periodic (DFT-even).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub enum Window {
    /// No window (all ones). A coherent tone stays in one bin.
    Rectangular,
    /// Hann (raised cosine), 0.5 − 0.5 cos.
    Hann,
    /// 4-term Blackman-Harris, Harris 1978 "-92 dB": 0.35875, 0.48829, 0.14128, 0.01168.
    BlackmanHarris4,
    /// Albrecht's minimum-sidelobe 7-term cosine sum (about -180 dB sidelobes).
    BlackmanHarris7,
    /// Heinzel et al. 2002 flat-top HFT90D (5 terms, -90.2 dB).
    Hft90d,
    /// Heinzel et al. 2002 flat-top HFT116D (6 terms, -116.8 dB).
    Hft116d,
    /// Heinzel et al. 2002 flat-top HFT144D (7 terms, -144.1 dB).
    Hft144d,
    /// Heinzel et al. 2002 flat-top HFT169D (8 terms, -169.5 dB), the coefficient set reaching it.
    Hft169d,
    /// scipy's 5-term `flattop`.
    FlatTop,
    /// Kaiser(-Bessel) window I0(β·√(1 − x²))/I0(β). `str::parse` accepts 0 ≤ β ≤
    /// [`KAISER_BETA_MAX`]; a value built directly outside that range is clamped into it (negative β
    /// counts as |β|, a non-finite β as 0) so that no sample is NaN.
    Kaiser {
        /// Shape parameter β (= π·α in Harris 1978).
        beta: f64,
    },
}

/// Figures of merit of a window, computed numerically on the periodic form at 4096 points.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct WindowFigures {
    /// Σw / (N · peak): Harris's normalised coherent gain.
    pub coherent_gain: f64,
    /// Equivalent noise bandwidth N·Σw² / (Σw)², in bins.
    pub enbw_bins: f64,
    /// Loss (positive dB) of the peak-bin amplitude for a tone half a bin off centre.
    pub scalloping_loss_db: f64,
    /// Highest sidelobe relative to the main-lobe peak (negative dB), found on a zero-padded spectrum
    /// and refined on the DTFT.
    pub highest_sidelobe_db: f64,
    /// Half-width of the main lobe to its first null, in bins (found numerically).
    pub null_halfwidth_bins: f64,
    /// Full width of the main lobe at exactly -3.0 dB, in bins.
    pub bandwidth_3db_bins: f64,
    /// Worst-case processing loss: scalloping loss + 10·log10(ENBW), dB.
    pub worst_case_processing_loss_db: f64,
}

/// Where the power of a unit tone goes under a window: see [`Window::leakage`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Leakage {
    /// Offset of the tone from the centre bin of the span, in bins (as used; see [`Window::leakage`]).
    pub offset_bins: f64,
    /// The span is the centre bin ± this many bins.
    pub tone_halfwidth_bins: usize,
    /// Total tone power outside the span relative to the tone's total power (dBc); `None` when below
    /// about -300 dB (rounding floor), e.g. a coherent tone under a K-term cosine sum with span ≥ K − 1.
    pub outside_tone_bins_dbc: Option<f64>,
    /// The largest single bin outside the span, relative to the tone's total power (dBc); `None` below
    /// about -300 dB.
    pub worst_bin_outside_dbc: Option<f64>,
    /// Loss (dB) of the bin nearest the tone against a coherent tone's peak bin: the scalloping loss at
    /// this offset.
    pub peak_bin_loss_db: f64,
}

impl Window {
    /// The stable lowercase id used on the command line and in JSON, e.g. `"blackman-harris-4"` or
    /// `"kaiser(8.6)"` (β in Rust's shortest round-trip form, so `parse(name())` gives the same window).
    pub fn name(&self) -> String {
        match self {
            Window::Rectangular => "rectangular".into(),
            Window::Hann => "hann".into(),
            Window::BlackmanHarris4 => "blackman-harris-4".into(),
            Window::BlackmanHarris7 => "blackman-harris-7".into(),
            Window::Hft90d => "hft90d".into(),
            Window::Hft116d => "hft116d".into(),
            Window::Hft144d => "hft144d".into(),
            Window::Hft169d => "hft169d".into(),
            Window::FlatTop => "flattop".into(),
            Window::Kaiser { beta } => format!("kaiser({beta:?})"),
        }
    }

    /// Every offered window, with two representative Kaiser windows (β = 8.6, about -63 dB, and
    /// β = 23, about -180 dB).
    pub fn all() -> Vec<Window> {
        vec![
            Window::Rectangular,
            Window::Hann,
            Window::BlackmanHarris4,
            Window::BlackmanHarris7,
            Window::Hft90d,
            Window::Hft116d,
            Window::Hft144d,
            Window::Hft169d,
            Window::FlatTop,
            Window::Kaiser { beta: 8.6 },
            Window::Kaiser { beta: 23.0 },
        ]
    }

    /// Cosine-sum coefficients a_k (positive convention, `w[n] = Σ_k (−1)^k a_k cos(2πkn/N)`), or
    /// `None` for the Kaiser window.
    pub fn coefficients(&self) -> Option<&'static [f64]> {
        match self {
            Window::Rectangular => Some(&RECTANGULAR),
            Window::Hann => Some(&HANN),
            Window::BlackmanHarris4 => Some(&BLACKMAN_HARRIS_4),
            Window::BlackmanHarris7 => Some(&BLACKMAN_HARRIS_7),
            Window::Hft90d => Some(&HFT90D),
            Window::Hft116d => Some(&HFT116D),
            Window::Hft144d => Some(&HFT144D),
            Window::Hft169d => Some(&HFT169D),
            Window::FlatTop => Some(&FLATTOP),
            Window::Kaiser { .. } => None,
        }
    }

    /// The periodic (DFT-even) window of length `n`, not normalised: cosine sums give
    /// Σ_k (−1)^k a_k cos(2πkn/N) (the scale of scipy's `general_cosine`), Kaiser gives the symmetric
    /// window of length N + 1 without its last point. Lengths 0 and 1 give `[]` and `[1.0]` (as scipy).
    pub fn samples(&self, n: usize) -> Vec<f64> {
        if n <= 1 {
            return vec![1.0; n];
        }
        // The periodic form is even about n/2 (w[i] = w[n − i]): compute half, mirror the rest (into
        // the same allocation: no second buffer and copy).
        let mut w = self.half_samples_in(n, n);
        for i in w.len()..n {
            w.push(w[n - i]);
        }
        w
    }

    /// The first `n/2 + 1` samples of [`Window::samples`] (the rest mirror them: `w[i] = w[n − i]`); the
    /// same values, bit for bit. A long record's spectrum applies its window from this half, which
    /// saves half the window's memory (64 MB at 2^24 samples).
    pub fn half_samples(&self, n: usize) -> Vec<f64> {
        self.half_samples_in(n, 0)
    }

    /// [`Window::half_samples`] in a vector with room for `capacity` samples.
    fn half_samples_in(&self, n: usize, capacity: usize) -> Vec<f64> {
        if n <= 1 {
            return vec![1.0; n];
        }
        let half = n / 2;
        let mut w = Vec::with_capacity(capacity.max(half + 1));
        w.resize(half + 1, 0.0);
        match self.coefficients() {
            Some(a) => {
                let table = cos_table(n);
                // One term at a time over all samples (a strided walk through the table instead of K
                // index updates per sample); each sample still sums its terms from 0.0 in order k =
                // 0, 1, .., so the sums are the same to the bit. m tracks k·i mod n without a division.
                for (k, &ak) in a.iter().enumerate() {
                    let step = k % n;
                    let mut m = 0usize;
                    for wi in w.iter_mut() {
                        let c = table[if m <= half { m } else { n - m }];
                        *wi += if k % 2 == 0 { ak * c } else { -ak * c };
                        m += step;
                        if m >= n {
                            m -= n;
                        }
                    }
                }
            }
            None => {
                let beta = self.kaiser_beta();
                let den = bessel_i0(beta);
                let h = n as f64 / 2.0;
                // 1 − ((i − N/2)/(N/2))² = i(N − i)/(N/2)², formed without cancellation.
                for (i, wi) in w.iter_mut().enumerate() {
                    let x = (i as f64 * (n - i) as f64).sqrt() / h;
                    *wi = bessel_i0(beta * x) / den;
                }
            }
        }
        w
    }

    /// Like [`Window::samples`], shared from a small per-thread cache: a lot of records of one length
    /// computes its window once.
    pub fn samples_shared(&self, n: usize) -> Arc<[f64]> {
        type Entry = (Window, usize, Arc<[f64]>);
        thread_local! {
            static CACHE: RefCell<Vec<Entry>> = const { RefCell::new(Vec::new()) };
        }
        CACHE.with(|c| {
            let mut c = c.borrow_mut();
            if let Some(pos) = c.iter().position(|(w, len, _)| w == self && *len == n) {
                let hit = c.remove(pos);
                let out = hit.2.clone();
                c.push(hit);
                return out;
            }
            let made: Arc<[f64]> = self.samples(n).into();
            // A huge record's window is not kept: 128 MB at 2^24 samples, for one record.
            if n > 1 << 20 {
                return made;
            }
            if c.len() >= 6 {
                c.remove(0);
            }
            c.push((*self, n, made.clone()));
            made
        })
    }

    /// Figures of merit at N = 4096, computed numerically (and cached per window).
    pub fn figures(&self) -> WindowFigures {
        static CACHE: Mutex<Vec<(Window, WindowFigures)>> = Mutex::new(Vec::new());
        let lookup = |cache: &Vec<(Window, WindowFigures)>| {
            cache.iter().find(|(w, _)| w == self).map(|(_, f)| *f)
        };
        {
            let cache = CACHE.lock().unwrap_or_else(|e| e.into_inner());
            if let Some(f) = lookup(&cache) {
                return f;
            }
        }
        let f = figures_at(self, FIGURES_LEN);
        let mut cache = CACHE.lock().unwrap_or_else(|e| e.into_inner());
        if lookup(&cache).is_none() {
            if cache.len() >= 64 {
                cache.remove(0);
            }
            cache.push((*self, f));
        }
        f
    }

    /// First null of the main lobe in bins, closed form: K for a K-term cosine sum, √(1 + (β/π)²)
    /// for Kaiser. Used to size the bin span claimed for a tone.
    pub fn null_halfwidth_bins(&self) -> f64 {
        match self.coefficients() {
            Some(a) => a.len() as f64,
            None => {
                let r = self.kaiser_beta() / PI;
                (1.0 + r * r).sqrt()
            }
        }
    }

    /// How much of a unit tone at `offset_bins` from a bin centre lands outside that bin ± `span`
    /// bins.
    ///
    /// Computed at the reference length Nr = 4096: the complex tone
    /// `w[n]·exp(j2π(k0 + δ)n/Nr)`, k0 = Nr/4, is transformed (complex FFT, so there is no image tone),
    /// the tone's power is Σ|X_m|² over all bins (Parseval) and the bins at circular distance > span
    /// from k0 are summed directly, not as 1 minus the inside.
    ///
    /// Why one reference length serves every record length: the DFT of the windowed tone at bin
    /// distance x from the tone is Σ_k ±(a_k/2)·D_N(x ± k), with the Dirichlet kernel
    /// D_N(x) = sin(πx)/(N·sin(πx/N)) → sin(πx)/(πx) as N grows; the relative difference is about
    /// (πx/N)²/6, i.e. below 1e-5 for |x| ≤ 20 bins at N = 4096, and the Kaiser window's samples
    /// likewise converge to the continuous window. So the profile in bins is a property of the window
    /// and the offset, not of N, for any record longer than a few hundred samples.
    ///
    /// δ may be any finite value (in practice −0.5..=0.5); it is reduced modulo Nr. A non-finite δ is
    /// replaced by 0.5, the worst case, and the result records the value used.
    pub fn leakage(&self, offset_bins: f64, tone_halfwidth_bins: usize) -> Leakage {
        let offset = if offset_bins.is_finite() {
            offset_bins
        } else {
            0.5
        };
        // The window rule asks for the worst case (δ = 0.5) of each window and coherent records ask for
        // δ = 0: a lot repeats the same few questions, so answers are kept per thread.
        type Answer = (Window, u64, usize, Leakage);
        thread_local! {
            static ANSWERS: RefCell<Vec<Answer>> = const { RefCell::new(Vec::new()) };
        }
        let key = (*self, offset.to_bits(), tone_halfwidth_bins);
        if let Some(hit) = ANSWERS.with(|a| {
            a.borrow()
                .iter()
                .find(|(w, o, h, _)| (*w, *o, *h) == key)
                .map(|e| e.3)
        }) {
            return hit;
        }
        let answer = LEAKAGE_KIT.with(|kit| {
            let mut kit = kit.borrow_mut();
            let kit = kit.get_or_insert_with(LeakageKit::new);
            kit.leakage(self, offset, tone_halfwidth_bins)
        });
        ANSWERS.with(|a| {
            let mut a = a.borrow_mut();
            if a.len() >= 32 {
                a.remove(0);
            }
            a.push((key.0, key.1, key.2, answer));
        });
        answer
    }

    /// The Kaiser β actually used (clamped into 0..=KAISER_BETA_MAX); 0 for cosine sums.
    fn kaiser_beta(&self) -> f64 {
        match self {
            Window::Kaiser { beta } if beta.is_finite() => beta.abs().min(KAISER_BETA_MAX),
            _ => 0.0,
        }
    }
}

/// The accepted names, for error messages.
const ACCEPTED: &str = "one of rectangular, hann, blackman-harris-4, blackman-harris-7, hft90d, \
hft116d, hft144d, hft169d, flattop, kaiser(BETA) (aliases: rect, none, hanning, bh4, bh7, flat-top, \
kaiser:BETA), with 0 <= BETA <= 100";

impl std::str::FromStr for Window {
    type Err = Error;

    /// Parses a window id (case-insensitive, surrounding blanks ignored). Accepts the ids of
    /// [`Window::name`] and the aliases `rect`, `none`, `hanning`, `bh4`, `bh7`, `flat-top`,
    /// `kaiser:BETA` and `kaiser(BETA)` with 0 ≤ BETA ≤ [`KAISER_BETA_MAX`].
    ///
    /// An unknown name or a bad β gives a [`crate::error::ErrorKind::BadSetting`] error on key `window` that
    /// lists the accepted names.
    fn from_str(s: &str) -> Result<Window, Error> {
        let t = s.trim().to_ascii_lowercase();
        let w = match t.as_str() {
            "rectangular" | "rect" | "none" => Window::Rectangular,
            "hann" | "hanning" => Window::Hann,
            "blackman-harris-4" | "bh4" => Window::BlackmanHarris4,
            "blackman-harris-7" | "bh7" => Window::BlackmanHarris7,
            "hft90d" => Window::Hft90d,
            "hft116d" => Window::Hft116d,
            "hft144d" => Window::Hft144d,
            "hft169d" => Window::Hft169d,
            "flattop" | "flat-top" => Window::FlatTop,
            _ => return parse_kaiser(s, &t),
        };
        Ok(w)
    }
}

fn parse_kaiser(original: &str, lower: &str) -> Result<Window, Error> {
    let bad = || Error::setting("window", ACCEPTED, format!("'{}'", original.trim()));
    let rest = lower.strip_prefix("kaiser").ok_or_else(bad)?.trim();
    let inner = if let Some(r) = rest.strip_prefix(':') {
        r
    } else if let Some(r) = rest.strip_prefix('(').and_then(|r| r.strip_suffix(')')) {
        r
    } else {
        return Err(bad());
    };
    let beta: f64 = inner.trim().parse().map_err(|_| bad())?;
    if !(beta.is_finite() && (0.0..=KAISER_BETA_MAX).contains(&beta)) {
        return Err(bad());
    }
    // `+ 0.0` turns −0 into +0 so that the name reads "kaiser(0.0)".
    Ok(Window::Kaiser { beta: beta + 0.0 })
}

/// cos(2π·m/n) for 0 ≤ m < n, reduced to an argument in [0, π/2] so that quarter and half turns are
/// exact (0, ±1) and the rest is as accurate as `cos` near zero allows.
fn cos_2pi_ratio(m: usize, n: usize) -> f64 {
    let m = m.min(n - m); // cos is even: fold into [0, n/2]
    let four_m = 4 * m;
    if four_m == n {
        0.0
    } else if four_m < n {
        (2.0 * PI * m as f64 / n as f64).cos()
    } else {
        // cos(x) = −cos(π − x), π − x = π(n − 2m)/n.
        -(PI * (n - 2 * m) as f64 / n as f64).cos()
    }
}

/// cos(2πm/n) for m = 0..=n/2: exact seeds every 32 entries and a rotation between them, so the error
/// stays near 1e-15 while costing one `sin_cos` per 32 entries.
fn cos_table(n: usize) -> Vec<f64> {
    let half = n / 2;
    let mut t = vec![0.0; half + 1];
    let (sd, cd) = (2.0 * PI / n as f64).sin_cos();
    let mut m = 0;
    while m <= half {
        let end = (m + 32).min(half + 1);
        let mut c = cos_2pi_ratio(m, n);
        let mut s = (2.0 * PI * m as f64 / n as f64).sin();
        for slot in &mut t[m..end] {
            *slot = c;
            let c2 = c * cd - s * sd;
            s = s * cd + c * sd;
            c = c2;
        }
        m = end;
    }
    t
}

/// Modified Bessel function I0 by its power series Σ ((x/2)^k / k!)²: all terms are positive, so the
/// sum converges to full precision for the β range used (|x| ≤ 100 needs about 150 terms).
fn bessel_i0(x: f64) -> f64 {
    let q = 0.25 * x * x;
    let mut term = 1.0;
    let mut sum = 1.0;
    let mut k = 1.0;
    while k < 1000.0 {
        term *= q / (k * k);
        sum += term;
        if term <= sum * 1e-17 {
            break;
        }
        k += 1.0;
    }
    sum
}

/// |W(f)| = |Σ w\[n\] e^{−j2πfn/N}| at `f` bins, summed directly.
fn dtft_magnitude(w: &[f64], f: f64) -> f64 {
    let n = w.len() as f64;
    let (mut re, mut im) = (0.0, 0.0);
    for (i, &v) in w.iter().enumerate() {
        // Reduce f·i modulo N before scaling so the phase stays accurate for long windows.
        let t = (f * i as f64) % n;
        let (s, c) = (2.0 * PI * t / n).sin_cos();
        re += v * c;
        im -= v * s;
    }
    re.hypot(im)
}

/// Golden-section search for the extremum of a unimodal `g` on [a, b] (minimum, or maximum if
/// `maximise`); returns the abscissa.
fn golden(g: impl Fn(f64) -> f64, mut a: f64, mut b: f64, maximise: bool) -> f64 {
    let sign = if maximise { -1.0 } else { 1.0 };
    let h = |x: f64| sign * g(x);
    let r = (5f64.sqrt() - 1.0) / 2.0;
    let mut c = b - r * (b - a);
    let mut d = a + r * (b - a);
    let (mut hc, mut hd) = (h(c), h(d));
    for _ in 0..60 {
        if (b - a).abs() < 1e-9 {
            break;
        }
        if hc < hd {
            b = d;
            d = c;
            hd = hc;
            c = b - r * (b - a);
            hc = h(c);
        } else {
            a = c;
            c = d;
            hc = hd;
            d = a + r * (b - a);
            hd = h(d);
        }
    }
    0.5 * (a + b)
}

thread_local! {
    static PLANNER: RefCell<FftPlanner<f64>> = RefCell::new(FftPlanner::new());
    static LEAKAGE_KIT: RefCell<Option<LeakageKit>> = const { RefCell::new(None) };
}

/// Figures of merit of `window` at length `n` (periodic form).
fn figures_at(window: &Window, n: usize) -> WindowFigures {
    let w = window.samples(n);
    let sum: f64 = w.iter().sum();
    let sum_sq: f64 = w.iter().map(|v| v * v).sum();
    let peak = w.iter().copied().fold(f64::MIN, f64::max);
    let coherent_gain = sum / (n as f64 * peak);
    let enbw_bins = n as f64 * sum_sq / (sum * sum);
    let w0 = sum.abs();
    let level_db = |f: f64| 20.0 * (dtft_magnitude(&w, f) / w0).log10();
    let scalloping_loss_db = -level_db(0.5);

    // Zero-padded spectrum: index i is f = i/PAD bins; |W| is even in f, so 0..=Nyquist suffices.
    let m = n * PAD;
    let mut buf: Vec<Complex64> = w.iter().map(|&v| Complex64::new(v, 0.0)).collect();
    buf.resize(m, Complex64::new(0.0, 0.0));
    let fft = PLANNER.with(|p| p.borrow_mut().plan_fft_forward(m));
    fft.process(&mut buf);
    let half = m / 2;
    let mag: Vec<f64> = buf[..=half].iter().map(|c| c.norm()).collect();
    let pad = PAD as f64;
    let nyquist = n as f64 / 2.0;

    // First null: the first local minimum of |W|, refined on the DTFT.
    let null_idx = (1..half)
        .find(|&i| mag[i] <= mag[i - 1] && mag[i] < mag[i + 1])
        .unwrap_or(half);
    let null_halfwidth_bins = if null_idx < half {
        golden(
            |f| dtft_magnitude(&w, f),
            (null_idx - 1) as f64 / pad,
            (null_idx + 1) as f64 / pad,
            false,
        )
    } else {
        nyquist
    };

    // -3.0 dB point: first grid point below it, then bisection on the DTFT.
    let target = w0 * 10f64.powf(-3.0 / 20.0);
    let bandwidth_3db_bins = match (1..=null_idx).find(|&i| mag[i] < target) {
        Some(i) => {
            let (mut lo, mut hi) = ((i - 1) as f64 / pad, i as f64 / pad);
            while hi - lo > 1e-10 {
                let mid = 0.5 * (lo + hi);
                if dtft_magnitude(&w, mid) < target {
                    hi = mid;
                } else {
                    lo = mid;
                }
            }
            lo + hi
        }
        None => 2.0 * null_halfwidth_bins,
    };

    // Highest sidelobe: grid local maxima beyond the null within 0.5 dB of the grid maximum (the grid
    // can miss a peak by ~0.04 dB), each refined on the DTFT.
    let mut candidates: Vec<usize> = (null_idx.max(1)..=half)
        .filter(|&i| mag[i] >= mag[i - 1] && (i == half || mag[i] >= mag[i + 1]))
        .collect();
    let grid_max = candidates.iter().map(|&i| mag[i]).fold(0.0, f64::max);
    candidates.retain(|&i| mag[i] >= grid_max * 10f64.powf(-0.5 / 20.0));
    candidates.sort_by(|&a, &b| mag[b].total_cmp(&mag[a]));
    candidates.truncate(32);
    let side = candidates
        .iter()
        .map(|&i| {
            let lo = (i - 1) as f64 / pad;
            let hi = ((i + 1) as f64 / pad).min(nyquist);
            let f = golden(|f| dtft_magnitude(&w, f), lo, hi, true);
            dtft_magnitude(&w, f).max(mag[i])
        })
        .fold(grid_max, f64::max);
    let highest_sidelobe_db = 20.0 * (side.max(w0 * 1e-20) / w0).log10();

    WindowFigures {
        coherent_gain,
        enbw_bins,
        scalloping_loss_db,
        highest_sidelobe_db,
        null_halfwidth_bins,
        bandwidth_3db_bins,
        worst_case_processing_loss_db: scalloping_loss_db + 10.0 * enbw_bins.log10(),
    }
}

/// Per-thread state of [`Window::leakage`]: the FFT plan, exact unit phasors, buffers and the samples
/// of the last windows used.
struct LeakageKit {
    fft: Arc<dyn Fft<f64>>,
    /// e^{j2πm/Nr}, exact at quarter turns.
    phasor: Vec<Complex64>,
    buf: Vec<Complex64>,
    scratch: Vec<Complex64>,
    windows: Vec<(Window, Vec<f64>)>,
}

impl LeakageKit {
    fn new() -> Self {
        let nr = LEAKAGE_LEN;
        let fft = PLANNER.with(|p| p.borrow_mut().plan_fft_forward(nr));
        let phasor = (0..nr)
            .map(|m| {
                // sin(2πm/N) = cos(2π(m − N/4)/N).
                let s = cos_2pi_ratio((m + 3 * nr / 4) % nr, nr);
                Complex64::new(cos_2pi_ratio(m, nr), s)
            })
            .collect();
        let scratch = vec![Complex64::new(0.0, 0.0); fft.get_inplace_scratch_len()];
        LeakageKit {
            fft,
            phasor,
            buf: vec![Complex64::new(0.0, 0.0); nr],
            scratch,
            windows: Vec::new(),
        }
    }

    fn window_samples(&mut self, window: &Window) -> usize {
        if let Some(i) = self.windows.iter().position(|(w, _)| w == window) {
            return i;
        }
        if self.windows.len() >= 16 {
            self.windows.remove(0);
        }
        self.windows.push((*window, window.samples(LEAKAGE_LEN)));
        self.windows.len() - 1
    }

    fn leakage(&mut self, window: &Window, offset: f64, span: usize) -> Leakage {
        let nr = LEAKAGE_LEN;
        let nf = nr as f64;
        let k0 = nr / 4;
        // Reduce δ into [−Nr/2, Nr/2] so the fractional phase below stays accurate.
        let delta = offset - nf * (offset / nf).round();
        let idx = self.window_samples(window);
        let w = &self.windows[idx].1;
        let sum_w: f64 = w.iter().sum();
        for (i, (b, &v)) in self.buf.iter_mut().zip(w.iter()).enumerate() {
            let p = self.phasor[(k0 * i) % nr];
            let frac = if delta == 0.0 {
                Complex64::new(1.0, 0.0)
            } else {
                let t = (delta * i as f64) % nf;
                let (s, c) = (2.0 * PI * t / nf).sin_cos();
                Complex64::new(c, s)
            };
            *b = p * frac * v;
        }
        self.fft
            .process_with_scratch(&mut self.buf, &mut self.scratch);

        let mut total = 0.0;
        let mut outside = 0.0;
        let mut worst: f64 = 0.0;
        for (m, x) in self.buf.iter().enumerate() {
            let p = x.norm_sqr();
            total += p;
            let d = m.abs_diff(k0);
            if d.min(nr - d) > span {
                outside += p;
                worst = worst.max(p);
            }
        }
        let nearest = (k0 as f64 + delta.round()).rem_euclid(nf) as usize % nr;
        let p_peak = self.buf[nearest].norm_sqr();
        let dbc = |p: f64| {
            (total > 0.0 && p > total * FLOOR_POWER_RATIO).then(|| 10.0 * (p / total).log10())
        };
        let coherent_peak = sum_w * sum_w;
        let peak_bin_loss_db = if coherent_peak > 0.0 {
            10.0 * (coherent_peak / p_peak.max(coherent_peak * FLOOR_POWER_RATIO)).log10()
        } else {
            0.0
        };
        Leakage {
            offset_bins: offset,
            tone_halfwidth_bins: span,
            outside_tone_bins_dbc: dbc(outside),
            worst_bin_outside_dbc: dbc(worst),
            peak_bin_loss_db,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // The cosine sums as first written: every sample sums its K terms in order, each looked up in the
    // same table with its own index walk. The term-at-a-time form must give the same bits (results of
    // the analysis stay byte-identical), and the mirrored full window must agree with the half.
    fn per_sample_reference(a: &[f64], n: usize) -> Vec<f64> {
        let half = n / 2;
        let table = cos_table(n);
        let fold = |m: usize| if m <= half { m } else { n - m };
        let mut idx = vec![0usize; a.len()];
        let mut w = vec![0.0; n];
        for wi in w.iter_mut().take(half + 1) {
            let mut acc = 0.0;
            for (k, &ak) in a.iter().enumerate() {
                let c = table[fold(idx[k])];
                acc += if k % 2 == 0 { ak * c } else { -ak * c };
                idx[k] += k % n;
                if idx[k] >= n {
                    idx[k] -= n;
                }
            }
            *wi = acc;
        }
        for i in half + 1..n {
            w[i] = w[n - i];
        }
        w
    }

    #[test]
    fn term_at_a_time_window_is_bit_identical_to_per_sample_sums() {
        for win in Window::all() {
            let Some(a) = win.coefficients() else {
                continue;
            };
            for n in [2usize, 3, 5, 7, 8, 1000, 1001, 4096, 65537] {
                let want = per_sample_reference(a, n);
                let got = win.samples(n);
                assert!(
                    got.iter()
                        .zip(&want)
                        .all(|(g, w)| g.to_bits() == w.to_bits()),
                    "{} n={n}",
                    win.name()
                );
                assert_eq!(got.len(), n);
                assert_eq!(win.half_samples(n)[..], got[..n / 2 + 1]);
            }
        }
        let k = Window::Kaiser { beta: 8.6 };
        assert_eq!(k.half_samples(1001)[..], k.samples(1001)[..501]);
    }

    #[test]
    fn names_round_trip_through_parse() {
        // Every offered window's id parses back to the same window (common practice, no source).
        for w in Window::all() {
            assert_eq!(w.name().parse::<Window>().unwrap(), w, "{}", w.name());
            assert_eq!(w.name().to_uppercase().parse::<Window>().unwrap(), w);
        }
        assert_eq!(Window::Kaiser { beta: 8.6 }.name(), "kaiser(8.6)");
        assert_eq!(Window::Kaiser { beta: 23.0 }.name(), "kaiser(23.0)");
    }

    #[test]
    fn aliases_parse() {
        let cases = [
            ("rect", Window::Rectangular),
            (" None ", Window::Rectangular),
            ("hanning", Window::Hann),
            ("BH4", Window::BlackmanHarris4),
            ("bh7", Window::BlackmanHarris7),
            ("flat-top", Window::FlatTop),
            ("kaiser:12", Window::Kaiser { beta: 12.0 }),
            ("Kaiser( 3.5 )", Window::Kaiser { beta: 3.5 }),
            ("kaiser(-0)", Window::Kaiser { beta: 0.0 }),
        ];
        for (s, w) in cases {
            assert_eq!(s.parse::<Window>().unwrap(), w, "{s}");
        }
    }

    #[test]
    fn bad_names_are_typed_errors() {
        for s in [
            "",
            "hamming",
            "kaiser",
            "kaiser()",
            "kaiser(x)",
            "kaiser(-1)",
            "kaiser(101)",
            "kaiser(nan)",
            "kaiser(inf)",
            "kaiser(3",
        ] {
            let e = s.parse::<Window>().unwrap_err();
            assert_eq!(e.kind, crate::error::ErrorKind::BadSetting, "{s}");
            assert_eq!(e.location, crate::error::Location::Key("window".into()));
            assert!(
                e.expected.contains("blackman-harris-7") && e.expected.contains("kaiser(BETA)")
            );
            assert!(e.found.contains(s.trim()), "{s}: {}", e.found);
        }
    }

    #[test]
    fn bessel_i0_matches_tabulated_values() {
        // Abramowitz & Stegun Table 9.8 (from memory; scipy.special.i0/i0e agree): I0(1) = 1.266065878,
        // e^-10·I0(10) = 0.1278333372.
        assert!((bessel_i0(1.0) - 1.266_065_877_752_008).abs() < 1e-14);
        assert!((bessel_i0(10.0) * (-10f64).exp() - 0.127_833_337_2).abs() < 1e-10);
        assert_eq!(bessel_i0(0.0), 1.0);
    }

    #[test]
    fn unit_cosines_are_exact_at_quarter_turns() {
        // cos(0) = 1, cos(π/2) = 0, cos(π) = −1 exactly (facts of trigonometry).
        assert_eq!(cos_2pi_ratio(0, 8), 1.0);
        assert_eq!(cos_2pi_ratio(2, 8), 0.0);
        assert_eq!(cos_2pi_ratio(4, 8), -1.0);
        assert_eq!(cos_2pi_ratio(6, 8), 0.0);
        for m in 0..1000 {
            let x = (2.0 * PI * m as f64 / 1000.0).cos();
            assert!((cos_2pi_ratio(m, 1000) - x).abs() < 1e-15);
        }
    }

    #[test]
    fn short_and_odd_lengths_do_not_panic() {
        for w in Window::all() {
            assert!(w.samples(0).is_empty());
            assert_eq!(w.samples(1), vec![1.0]);
            for n in [2, 3, 5, 7] {
                assert!(w.samples(n).iter().all(|v| v.is_finite()));
            }
        }
        // Out-of-range betas built directly are clamped, never NaN.
        for beta in [f64::NAN, f64::INFINITY, -5.0, 1e6] {
            let w = Window::Kaiser { beta };
            assert!(w.samples(64).iter().all(|v| v.is_finite()));
            let l = w.leakage(0.5, 3);
            assert!(l.peak_bin_loss_db.is_finite());
        }
        let l = Window::Hann.leakage(f64::NAN, 2);
        assert_eq!(l.offset_bins, 0.5);
    }

    #[test]
    fn figures_barely_depend_on_length() {
        // The doc of `leakage` argues the bin-domain profile converges with N; the figures must agree
        // between N = 1024 and N = 4096 to well within Heinzel's printed 4 decimals.
        for w in [
            Window::Hann,
            Window::BlackmanHarris4,
            Window::Kaiser { beta: 8.6 },
        ] {
            let a = figures_at(&w, 1024);
            let b = figures_at(&w, 4096);
            assert!((a.enbw_bins - b.enbw_bins).abs() < 2e-3, "{}", w.name());
            assert!((a.scalloping_loss_db - b.scalloping_loss_db).abs() < 1e-4);
            assert!((a.bandwidth_3db_bins - b.bandwidth_3db_bins).abs() < 1e-4);
        }
    }

    #[test]
    fn leakage_matches_slow_dft() {
        // The FFT path against a naive DFT of the same windowed complex tone (common practice, no
        // source): outside-span power and worst bin to 1e-9 relative.
        let w = Window::Hann;
        let (delta, span) = (0.3, 3);
        let l = w.leakage(delta, span);
        let nr = LEAKAGE_LEN;
        let k0 = (nr / 4) as f64;
        let s = w.samples(nr);
        let x: Vec<Complex64> = s
            .iter()
            .enumerate()
            .map(|(i, &v)| Complex64::from_polar(v, 2.0 * PI * (k0 + delta) * i as f64 / nr as f64))
            .collect();
        let twiddle: Vec<Complex64> = (0..nr)
            .map(|m| Complex64::from_polar(1.0, -2.0 * PI * m as f64 / nr as f64))
            .collect();
        let (mut total, mut outside, mut worst) = (0.0, 0.0, 0.0f64);
        for m in 0..nr {
            let mut acc = Complex64::new(0.0, 0.0);
            for (i, xi) in x.iter().enumerate() {
                acc += xi * twiddle[(m * i) % nr];
            }
            let p = acc.norm_sqr();
            total += p;
            let d = m.abs_diff(nr / 4);
            if d.min(nr - d) > span {
                outside += p;
                worst = worst.max(p);
            }
        }
        let want = 10.0 * (outside / total).log10();
        let got = l.outside_tone_bins_dbc.unwrap();
        assert!((got - want).abs() < 1e-8, "{got} vs {want}");
        let want_worst = 10.0 * (worst / total).log10();
        assert!((l.worst_bin_outside_dbc.unwrap() - want_worst).abs() < 1e-8);
    }
}
