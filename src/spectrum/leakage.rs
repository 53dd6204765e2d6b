//! Leakage diagnosis: how much the record's own spectral leakage, at its actual fractional-bin offset
//! and under the chosen window, can bias SNR and SFDR, and what would fix it.

use super::claim::Claims;
use super::coherence::Coherence;
use super::metrics::Figures;
use super::rule::{tone_halfwidth, AUTO_LADDER};
use crate::dft::fft::{power_spectrum_owned, Taper};
use crate::dft::{Leakage, Window};
use crate::fit::SineFit;
use serde::Serialize;
use std::f64::consts::TAU;

/// A bias above this (dB) in SNR or SFDR raises a leakage warning.
pub const BIAS_WARN_DB: f64 = 0.1;

/// The leakage figures of one analysis (`spectrum.leakage` in the JSON).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LeakageDiagnosis {
    /// Tone offset from its centre bin used for the diagnosis, in bins (−0.5..0.5): 0 for a record judged
    /// coherent, whose fitted offset (`coherence.offset_cycles`) is within the fit's own uncertainty.
    pub offset_bins: f64,
    /// Fundamental power that falls outside its bins, relative to the fundamental (from the window's
    /// known spectrum at this offset); `None` when below the rounding floor.
    pub outside_tone_bins_dbc: Option<f64>,
    /// The largest single leaked bin outside the fundamental's bins, dBc.
    pub worst_bin_dbc: Option<f64>,
    /// Loss of the peak bin against a bin-centred tone at this offset (scalloping), dB.
    pub scalloping_loss_db: f64,
    /// Upper bound on the SNR bias the leakage causes, dB (leaked power counted as noise).
    pub snr_bias_db: f64,
    /// Upper bound on the SFDR bias (leaked bin read as the worst spur), dB.
    pub sfdr_bias_db: f64,
    /// True when either bias exceeds 0.1 dB.
    pub significant: bool,
    /// What would fix it, when significant.
    pub advice: Option<String>,
}

/// Bias, in dB, of a measured power `measured` that contains an unwanted share `unwanted`.
fn bias_db(measured: f64, unwanted: f64) -> f64 {
    if unwanted <= 0.0 || measured <= 0.0 {
        return 0.0;
    }
    let clean = (measured - unwanted).max(measured * 1e-10);
    (10.0 * (measured / clean).log10()).min(100.0)
}

fn biases(window: Window, half: usize, offset: f64, figs: &Figures) -> (f64, f64, Leakage) {
    let leak = window.leakage(offset, half);
    let to_power =
        |dbc: Option<f64>| dbc.map_or(0.0, |d| figs.fundamental_power * 10f64.powf(d / 10.0));
    let snr_bias = bias_db(figs.noise_power, to_power(leak.outside_tone_bins_dbc));
    let spur = figs
        .worst_spur
        .as_ref()
        .map_or(0.0, |s| figs.fundamental_power * 10f64.powf(s.dbc / 10.0));
    let sfdr_bias = bias_db(spur, to_power(leak.worst_bin_outside_dbc));
    (snr_bias, sfdr_bias, leak)
}

/// Diagnoses the leakage of one analysis and appends warnings with their fix.
#[allow(clippy::too_many_arguments)]
pub(crate) fn diagnose(
    window: Window,
    half: usize,
    coherence: &Coherence,
    figs: &Figures,
    samples: usize,
    sample_rate_hz: f64,
    fit: &SineFit,
    warnings: &mut Vec<String>,
) -> LeakageDiagnosis {
    // A record judged coherent is analysed as exactly coherent; its fitted offset lies within the fit's
    // own uncertainty, and reading it as leakage warned about leakage that is not there (short records,
    // where that uncertainty is largest, got advice to use the coherent input they already had).
    let offset = if coherence.coherent {
        0.0
    } else {
        coherence.offset_cycles
    };
    let (snr_bias, sfdr_bias, leak) = biases(window, half, offset, figs);
    let significant = snr_bias > BIAS_WARN_DB || sfdr_bias > BIAS_WARN_DB;
    let mut advice = None;
    if significant {
        let mut fixes = Vec::new();
        if let Some(w) = AUTO_LADDER.iter().chain(&[Window::Hft144d]).find(|w| {
            **w != window && {
                let (s, f, _) = biases(**w, tone_halfwidth(**w, false, None), offset, figs);
                s <= BIAS_WARN_DB && f <= BIAS_WARN_DB
            }
        }) {
            fixes.push(format!("the {} window", w.name()));
        }
        if let Some(s) = (half + 1..=half + 40).find(|s| {
            let (a, b, _) = biases(window, *s, offset, figs);
            a <= BIAS_WARN_DB && b <= BIAS_WARN_DB
        }) {
            fixes.push(format!(
                "tone bins of ±{s} (--guard-bins {})",
                s.saturating_sub(tone_halfwidth(window, coherence.coherent, Some(0)))
            ));
        }
        if let Ok(c) =
            crate::freq::nearest_coherent(sample_rate_hz, samples, fit.frequency_hz, false)
        {
            fixes.push(format!(
                "a coherent input: J = {} cycles, {:.6} Hz for N = {samples} at {sample_rate_hz} Hz",
                c.cycles, c.frequency_hz
            ));
        }
        let text = fixes.join("; or ");
        warnings.push(format!(
            "leakage of the {} window at {offset:+.3} bins off-centre can bias SNR by {snr_bias:.2} dB and SFDR by {sfdr_bias:.2} dB (limit {BIAS_WARN_DB} dB); fix: {text}",
            window.name()
        ));
        advice = Some(text);
    }
    if !coherence.coherent && window == Window::Rectangular {
        warnings.push(format!(
            "non-coherent record ({:.4} cycles) analysed without a window: the tone leaks across the spectrum and the peak bin loses {:.2} dB (scalloping)",
            coherence.cycles, leak.peak_bin_loss_db
        ));
    }
    LeakageDiagnosis {
        offset_bins: offset,
        outside_tone_bins_dbc: leak.outside_tone_bins_dbc,
        worst_bin_dbc: leak.worst_bin_outside_dbc,
        scalloping_loss_db: leak.peak_bin_loss_db,
        snr_bias_db: snr_bias,
        sfdr_bias_db: sfdr_bias,
        significant,
        advice,
    }
}

/// A warning for a fundamental whose bins meet the DC bins or reach Nyquist, where the window's main
/// lobe shares bins with DC or with the tone's own mirror image (the one-sided spectrum folds the lobe
/// beyond fs/2, or below 0, back onto itself, and in shared bins the two add as complex values). The
/// level error is computed, not bounded: the fitted sine alone goes through the same window and bin
/// claims, and its claimed power is compared with A²/2. Warns when the error exceeds [`BIAS_WARN_DB`].
/// When the tone was removed in time before the spectrum was taken (`removed`), the figures do not
/// carry that error and the warning becomes a note saying so (starting with [`super::EDGE_NOTE`]).
/// The window is made again from `window` and the record length `n` (the spectrum gave its own back
/// before the transform). Returns the fitted sine's
/// bin powers when the fundamental is at an edge (they were computed for the check).
#[allow(clippy::too_many_arguments)]
pub(crate) fn edge_warning(
    window: Window,
    n: usize,
    fit: &SineFit,
    claims: &Claims,
    removed: bool,
    warnings: &mut Vec<String>,
) -> Option<Vec<f64>> {
    let (k, half, last) = (claims.tones[0].centre, claims.tone_halfwidth, n / 2);
    let near_dc = k <= 2 * half;
    let near_nyquist = k + half >= last;
    if !(near_dc || near_nyquist) || fit.amplitude_codes <= 0.0 {
        return None;
    }
    let cycles_per_sample = fit.cycles / n as f64;
    let model: Vec<f64> = (0..n)
        .map(|i| {
            let turns = (cycles_per_sample * i as f64).fract();
            fit.amplitude_codes * (TAU * turns + fit.phase_rad).cos()
        })
        .collect();
    // The window is made again here (the spectrum gave it back before its transform), in the form
    // the spectrum used: the same values, so the same powers to the bit.
    let powers = if window == Window::Rectangular {
        power_spectrum_owned(model, Taper::Full(&[]))
    } else if n > 1 << 20 {
        power_spectrum_owned(model, Taper::Half(&window.half_samples(n)))
    } else {
        power_spectrum_owned(model, Taper::Full(&window.samples_shared(n)))
    };
    let claimed: f64 = claims.tones[0].bins.iter().map(|&k| powers[k]).sum();
    let expected = 0.5 * fit.amplitude_codes * fit.amplitude_codes;
    let bias = 10.0 * (claimed / expected).log10();
    if claimed <= 0.0 || bias.abs() <= BIAS_WARN_DB || !bias.is_finite() {
        return Some(powers);
    }
    let (lo, hi) = (k.saturating_sub(half), (k + half).min(last));
    let (meets, fix) = if near_dc {
        (
            format!("meets the DC bins (0..={half}): part of the tone is counted as DC"),
            "a higher input frequency or a longer record",
        )
    } else {
        (
            format!("reaches Nyquist (bin {last}): the tone shares bins with its mirror image"),
            "a lower input frequency or a longer record",
        )
    };
    if removed {
        let meets = meets.split(':').next().unwrap_or_default();
        warnings.push(format!(
            "{} ({lo}..={hi} under the {} window) {meets}, where its level would read {bias:+.2} dB off: the fitted sine (offset and mirror image included) was removed in time, the tone's level is the fit's, and noise and distortion come from the spectrum of the residual",
            super::EDGE_NOTE,
            window.name()
        ));
    } else {
        warnings.push(format!(
            "the fundamental's bins ({lo}..={hi} under the {} window) {meets}, so its level reads {bias:+.2} dB off (computed from the fitted sine); use {fix}",
            window.name()
        ));
    }
    Some(powers)
}
