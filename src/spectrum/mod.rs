//! Spectral analysis: real FFTs, windows, bin claiming, the dynamic figures, and the leakage diagnosis
//! that says how far a record's own leakage can bias them.
//!
//! # Window rule (`--window auto`)
//! A coherent record (fitted cycle count within 4σ of an integer, σ from the fit's own residual) is
//! analysed unwindowed: each tone then sits in one bin. A non-coherent record gets the first window of
//! the ladder Hann → 4-term Blackman-Harris → 7-term Blackman-Harris whose worst-case leakage (tone half a
//! bin off, power outside the tone's span) lies 16.4 dB below the ideal quantisation noise expected at
//! the record's resolution and amplitude; 16.4 dB below is what keeps the SNR bias under 0.1 dB. So the
//! 4-term Blackman-Harris (about −87 dBc outside its span) serves up to about 11 bits, and 12- to
//! 20-bit records get the 7-term Blackman-Harris.

mod leakage;
pub mod metrics;
pub mod tones;

pub use crate::dft::fft;
pub use crate::dft::window::*;
pub use leakage::LeakageDiagnosis;
pub use metrics::{HarmonicFigure, Spur, DB_PER_BIT, SINE_CREST_DB};

use crate::fit::SineFit;
use crate::{Error, ErrorKind, Location, Result};
use serde::Serialize;

/// How the window is chosen.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum WindowChoice {
    /// By the rule in the module docs.
    Auto,
    /// Always this window.
    Fixed(Window),
}

/// Settings of the spectral stage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpectrumSettings {
    /// Window choice.
    pub window: WindowChoice,
    /// Highest harmonic counted (2..=H); default 10.
    pub harmonics: u32,
    /// Guard bins added to each side of every tone's bins beyond the window's main lobe; `None` means 0 for a
    /// coherent record and 1 for a non-coherent one.
    pub guard_bins: Option<usize>,
}

impl Default for SpectrumSettings {
    fn default() -> Self {
        SpectrumSettings {
            window: WindowChoice::Auto,
            harmonics: 10,
            guard_bins: None,
        }
    }
}

/// Margin below the expected noise that a window's leakage must keep to bias SNR by < 0.1 dB:
/// 10·log10(10^(0.1/10) − 1) = −16.33 dB, rounded out.
pub const LEAKAGE_MARGIN_DB: f64 = 16.4;
/// A bias above this (dB) in SNR or SFDR raises a leakage warning.
pub const BIAS_WARN_DB: f64 = 0.1;
/// Coherence tolerance in standard deviations of the fitted cycle count.
pub const COHERENCE_SIGMAS: f64 = 4.0;

/// The windows `auto` may pick for non-coherent records, narrowest first.
pub const AUTO_LADDER: [Window; 3] = [
    Window::Hann,
    Window::BlackmanHarris4,
    Window::BlackmanHarris7,
];

/// Whether a record is coherent, decided from the fitted cycle count.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Coherence {
    /// True when the cycle count is an integer within the tolerance.
    pub coherent: bool,
    /// Fitted cycles in the record.
    pub cycles: f64,
    /// Distance from the nearest integer, cycles.
    pub offset_cycles: f64,
    /// The tolerance used: 4σ of the fitted cycle count (at least 1e-9 cycles).
    pub tolerance_cycles: f64,
    /// How it was decided: "fit" (cycle count within tolerance, or clearly off an integer) or
    /// "spectrum" (a fit offset below 0.01 cycles that the unwindowed spectrum shows to be a fit bias).
    pub decided_by: &'static str,
}

/// Decides coherence from a fit.
pub fn coherence_of(fit: &SineFit) -> Coherence {
    let offset = fit.cycles - fit.cycles.round();
    let tol = (COHERENCE_SIGMAS * fit.cycles_std).max(1e-9);
    Coherence {
        coherent: offset.abs() <= tol,
        cycles: fit.cycles,
        offset_cycles: offset,
        tolerance_cycles: tol,
        decided_by: "fit",
    }
}

/// Fit offsets below this (cycles) are checked against the unwindowed spectrum before the record is
/// called non-coherent: strong low-order harmonics pull a sine fit's frequency by up to ~1e-4 cycles on
/// short records, because the frequency column of the fit is not orthogonal to them.
pub const SPECTRAL_CHECK_CYCLES: f64 = 0.01;

/// Checks a small fit offset against the unwindowed spectrum of `record`. A tone really δ cycles off an
/// integer leaks about δ²·P into each neighbour of its bin (rectangular window, |sinc(1 ∓ δ)|²); when the
/// neighbours hold less than a tenth of that, the offset is a fit bias and the record is coherent.
fn spectral_coherence(record: &[f64], mut c: Coherence) -> Coherence {
    let n = record.len();
    let k0 = c.cycles.round() as usize;
    if c.coherent || c.offset_cycles.abs() > SPECTRAL_CHECK_CYCLES || k0 < 2 || k0 + 2 > n / 2 {
        return c;
    }
    let p = fft::power_spectrum(record, &[]);
    let d = c.offset_cycles.abs();
    let predicted = p[k0] * ((d / (1.0 - d)).powi(2) + (d / (1.0 + d)).powi(2));
    let measured = p[k0 - 1] + p[k0 + 1];
    if measured < 0.1 * predicted {
        c.coherent = true;
        c.decided_by = "spectrum";
    }
    c
}

/// Half-width of the bins given to each tone (main lobe plus guard bins) for a window.
pub fn tone_halfwidth(window: Window, coherent: bool, guard: Option<usize>) -> usize {
    let null = window.null_halfwidth_bins();
    let guard = guard.unwrap_or(if coherent { 0 } else { 1 });
    // A coherent tone under a K-term cosine sum occupies exactly k0 ± (K−1).
    let lobe = match (coherent, window.coefficients()) {
        (true, Some(a)) => a.len() - 1,
        _ => null.ceil() as usize,
    };
    lobe + guard
}

/// Ideal quantisation SNR of an N-bit converter for a sine at `amplitude_dbfs`: 6.02N + 1.76 dB + level.
pub fn ideal_snr_db(bits: u32, amplitude_dbfs: f64) -> f64 {
    DB_PER_BIT * bits as f64 + SINE_CREST_DB + amplitude_dbfs
}

/// Picks the window, and says why.
pub fn choose_window(
    choice: WindowChoice,
    coherent: bool,
    bits: u32,
    amplitude_dbfs: f64,
    guard: Option<usize>,
) -> (Window, String) {
    match choice {
        WindowChoice::Fixed(w) => (w, "given".to_string()),
        WindowChoice::Auto if coherent => (
            Window::Rectangular,
            "auto: coherent record, no window needed".to_string(),
        ),
        WindowChoice::Auto => {
            let need = -(ideal_snr_db(bits, amplitude_dbfs.min(0.0)) + LEAKAGE_MARGIN_DB);
            for w in AUTO_LADDER {
                let leak = w.leakage(0.5, tone_halfwidth(w, false, guard));
                if leak.outside_tone_bins_dbc.is_none_or(|l| l <= need) {
                    return (
                        w,
                        format!(
                            "auto: non-coherent record; worst-case leakage {} dBc is below the {need:.1} dBc that {bits}-bit quantisation noise allows",
                            leak.outside_tone_bins_dbc.map_or("< -300".to_string(), |l| format!("{l:.1}"))
                        ),
                    );
                }
            }
            let w = *AUTO_LADDER.last().expect("ladder is not empty");
            (
                w,
                format!("auto: non-coherent record; no offered window leaks less than the {need:.1} dBc that {bits}-bit noise allows, so leakage may bias the figures: use a coherent record"),
            )
        }
    }
}

/// The spectral figures of one record (or several power-averaged records of one condition).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Spectrum {
    /// Window id (see [`Window::name`]).
    pub window: String,
    /// Why that window.
    pub window_reason: String,
    /// Whether the record was judged coherent.
    pub coherent: bool,
    /// The coherence decision in detail.
    pub coherence: Coherence,
    /// Number of records whose power spectra were averaged.
    pub records_averaged: usize,
    /// Bin width fs/N in hertz.
    pub bin_width_hz: f64,
    /// Half-width of the bins given to DC, the fundamental and each harmonic (main lobe plus guard bins).
    pub tone_halfwidth_bins: usize,
    /// Fundamental frequency (from the fit), hertz.
    pub fundamental_hz: f64,
    /// Fundamental level, dBFS.
    pub fundamental_dbfs: Option<f64>,
    /// Signal to noise ratio (harmonics excluded), dB.
    pub snr_db: Option<f64>,
    /// Signal to noise and distortion, dB.
    pub sinad_db: Option<f64>,
    /// Total harmonic distortion over harmonics 2..H, dBc.
    pub thd_dbc: Option<f64>,
    /// Spurious-free dynamic range against the fundamental, dB.
    pub sfdr_dbc: Option<f64>,
    /// Spurious-free dynamic range against full scale, dB.
    pub sfdr_dbfs: Option<f64>,
    /// Spectral ENOB: (SINAD − 1.76)/6.02, bits.
    pub enob_bits: Option<f64>,
    /// Full-scale-referred ENOB: (SINAD − fundamental dBFS − 1.76)/6.02, bits.
    pub enob_full_scale_bits: Option<f64>,
    /// Average noise floor per bin, dBFS.
    pub noise_floor_dbfs: Option<f64>,
    /// Noise spectral density, dBFS/Hz.
    pub nsd_dbfs_per_hz: Option<f64>,
    /// The largest component other than DC and the fundamental.
    pub worst_spur: Option<Spur>,
    /// Harmonics 2..H.
    pub harmonics: Vec<HarmonicFigure>,
    /// Bins the noise mean came from.
    pub noise_bins: usize,
    /// How far the record's own leakage can bias the figures.
    pub leakage: LeakageDiagnosis,
}

/// The spectrum with its bin powers (codes², scaled as in [`fft::power_spectrum`]), kept for plots.
#[derive(Debug, Clone, PartialEq)]
pub struct SpectrumOutput {
    /// The figures.
    pub spectrum: Spectrum,
    /// Averaged bin powers, bins 0..=N/2.
    pub powers: Vec<f64>,
    /// Owner of each bin.
    pub owner: Vec<tones::Owner>,
    /// Warnings.
    pub warnings: Vec<String>,
}

/// Measures the spectrum of one or more records of one condition (equal lengths), around the tone of
/// `fit` (fitted on the first record).
pub fn measure(
    records: &[&[f64]],
    fit: &SineFit,
    sample_rate_hz: f64,
    bits: u32,
    settings: &SpectrumSettings,
) -> Result<SpectrumOutput> {
    let owned: Vec<Vec<f64>> = records.iter().map(|r| r.to_vec()).collect();
    measure_consuming(owned, fit, sample_rate_hz, bits, settings)
}

/// [`measure`] on records the caller no longer needs: each one is windowed and transformed in place,
/// which saves a copy of the record (128 MB at 2^24 samples).
pub fn measure_consuming(
    records: Vec<Vec<f64>>,
    fit: &SineFit,
    sample_rate_hz: f64,
    bits: u32,
    settings: &SpectrumSettings,
) -> Result<SpectrumOutput> {
    let n = records.first().map_or(0, |r| r.len());
    if n < 8 || records.iter().any(|r| r.len() != n) {
        return Err(Error::new(
            ErrorKind::TooFewSamples,
            "",
            Location::Whole,
            "records of one equal length of at least 8 samples",
            format!(
                "lengths {:?}",
                records.iter().map(|r| r.len()).collect::<Vec<_>>()
            ),
        ));
    }
    let coherence = match settings.window {
        WindowChoice::Auto => spectral_coherence(&records[0], coherence_of(fit)),
        WindowChoice::Fixed(_) => coherence_of(fit),
    };
    let (window, window_reason) = choose_window(
        settings.window,
        coherence.coherent,
        bits,
        fit.amplitude_dbfs,
        settings.guard_bins,
    );
    let half = tone_halfwidth(window, coherence.coherent, settings.guard_bins);
    // The rectangular window is never materialised: a 2^24-sample record saves 128 MB.
    let w: std::sync::Arc<[f64]> = if window == Window::Rectangular {
        Vec::new().into()
    } else {
        window.samples_shared(n)
    };
    let count = records.len();
    let mut powers: Vec<f64> = Vec::new();
    // Each record is transformed in place and dropped before the next one.
    for mut r in records {
        let p = fft::power_spectrum_in_place(&mut r, &w);
        if powers.is_empty() {
            powers = p;
        } else {
            powers.iter_mut().zip(p).for_each(|(acc, v)| *acc += v);
        }
    }
    if count > 1 {
        let m = count as f64;
        powers.iter_mut().for_each(|p| *p /= m);
    }
    let claims = tones::claim_bins(n, fit.cycles, settings.harmonics.max(1), half);
    if claims.owner[claims.fundamental_bin] == tones::Owner::Dc {
        return Err(Error::new(
            ErrorKind::ToneAtEdge,
            "",
            Location::Whole,
            format!(
                "a tone outside the DC bins (0..={half} under the {} window)",
                window.name()
            ),
            format!(
                "the fundamental at bin {:.2} ({:.1} cycles): use a longer record, a higher input frequency, or a coherent input analysed unwindowed",
                fit.cycles, fit.cycles
            ),
        ));
    }
    let figs = metrics::figures(&powers, &claims, n, sample_rate_hz, bits);
    let mut warnings = Vec::new();
    leakage::edge_warning(window, &w, n, fit, &claims, &mut warnings);
    if figs.noise_bins < 8 {
        warnings.push(format!(
            "only {} noise bins are left after claiming: the noise figures are poorly determined (use a longer record or fewer harmonics)",
            figs.noise_bins
        ));
    }
    if figs.snr_db.is_none_or(|s| s < 10.0) {
        return Err(Error::new(
            ErrorKind::NoTone,
            "",
            Location::Whole,
            "a tone at least 10 dB above the noise at the fitted frequency",
            format!(
                "SNR {}",
                figs.snr_db
                    .map_or("undefined".to_string(), |s| format!("{s:.1} dB"))
            ),
        ));
    }
    if figs.thd_dbc.is_none() && figs.harmonics.iter().any(|h| !h.masked) {
        warnings.push("every harmonic is at the noise floor: THD is not reported".to_string());
    }
    let masked: Vec<String> = figs
        .harmonics
        .iter()
        .filter_map(|h| {
            h.masked_by
                .as_ref()
                .map(|by| format!("H{} on {by}", h.order))
        })
        .collect();
    if !masked.is_empty() {
        warnings.push(format!(
            "harmonics masked (not measured): {}",
            masked.join(", ")
        ));
    }
    if coherence.coherent {
        let j = coherence.cycles.round() as u64;
        let g = crate::freq::gcd(j, n as u64);
        if g != 1 || j % 2 == 0 {
            warnings.push(format!(
                "coherent with J = {j} cycles, which {}: the record samples only {} distinct phases, so quantisation error piles into harmonics; prefer an odd J coprime with N",
                if g != 1 { format!("shares the factor {g} with N = {n}") } else { "is even".to_string() },
                n as u64 / g
            ));
        }
    }
    let leakage = leakage::diagnose(
        window,
        half,
        &coherence,
        &figs,
        n,
        sample_rate_hz,
        fit,
        &mut warnings,
    );
    let spectrum = Spectrum {
        window: window.name(),
        window_reason,
        coherent: coherence.coherent,
        coherence,
        records_averaged: count,
        bin_width_hz: sample_rate_hz / n as f64,
        tone_halfwidth_bins: half,
        fundamental_hz: fit.frequency_hz,
        fundamental_dbfs: figs
            .fundamental_dbfs
            .is_finite()
            .then_some(figs.fundamental_dbfs),
        snr_db: figs.snr_db,
        sinad_db: figs.sinad_db,
        thd_dbc: figs.thd_dbc,
        sfdr_dbc: figs.sfdr_dbc,
        sfdr_dbfs: figs.sfdr_dbfs,
        enob_bits: figs.enob_bits,
        enob_full_scale_bits: figs.enob_full_scale_bits,
        noise_floor_dbfs: figs.noise_floor_dbfs,
        nsd_dbfs_per_hz: figs.nsd_dbfs_per_hz,
        worst_spur: figs.worst_spur.clone(),
        harmonics: figs.harmonics.clone(),
        noise_bins: figs.noise_bins,
        leakage,
    };
    Ok(SpectrumOutput {
        spectrum,
        powers,
        owner: claims.owner,
        warnings,
    })
}
