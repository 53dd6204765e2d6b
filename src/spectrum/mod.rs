//! Spectral analysis of a one-tone record: the window rule ([`rule`]), the coherence decision
//! ([`coherence`]), the bin-claiming engine ([`claim`], shared with the two-tone and interleaving
//! analyses), the dynamic figures ([`metrics`]), and the leakage diagnosis that says how far a record's
//! own leakage can bias them.
//!
//! The one-tone claim: DC, the fundamental (the tone), then harmonics 2..H folded into the first Nyquist
//! zone (the derived lines, named "harmonic K"); what is left is noise.

pub mod claim;
pub mod coherence;
mod leakage;
pub mod metrics;
pub mod rule;
pub mod uncertainty;

pub use crate::dft::fft;
pub use crate::dft::window::*;
pub use coherence::Coherence;
pub use leakage::LeakageDiagnosis;
pub use metrics::{HarmonicFigure, Spur, DB_PER_BIT, SINE_CREST_DB};
pub use rule::{choose_window, ideal_snr_db, tone_halfwidth, WindowChoice, MAX_GUARD_BINS};
pub use uncertainty::{LevelUncertainty, PerHarmonic, SpectrumUncertainty};

use crate::error::{Error, ErrorKind, Location, Result};
use crate::fit::SineFit;
use crate::freq::fold_bin;
use claim::{Owner, Place};
use coherence::Unwindowed;
use serde::Serialize;

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

/// The start of the note that says a tone near DC or Nyquist was removed in time before its spectrum
/// was measured.
pub const EDGE_NOTE: &str = "note: the fundamental's bins";

/// A fit that leaves more than this share of the tone's power (−45 dBc) in its residual misses the
/// tone: the fundamental's level from the fit is then off by more than 0.05 dB (20·log10(1 + √share)).
const LEFTOVER_TONE: f64 = 3.162_277_660_168_379_5e-5;

/// Owner of the fundamental's bins in a one-tone claim.
pub const FUNDAMENTAL: Owner = Owner::Tone(0);

/// Owner of harmonic `order`'s bins (2..=H) in a one-tone claim: the harmonics are its lines, in order.
pub fn harmonic_owner(order: u32) -> Owner {
    Owner::Line(order.saturating_sub(2).min(u16::MAX as u32) as u16)
}

/// The one-tone claim: DC, the fundamental at fractional bin `tone_bin`, then harmonics 2..=`harmonics`
/// folded into 0..=N/2.
pub fn claim_one_tone(
    samples: usize,
    tone_bin: f64,
    harmonics: u32,
    tone_halfwidth: usize,
) -> std::result::Result<claim::Claims, claim::ClaimError> {
    // Owner indices are u16: orders 2..=65,537 at most (the settings allow up to 100).
    let harmonics = harmonics.min(u16::MAX as u32 + 1);
    let lines: Vec<Place> = (2..=harmonics)
        .map(|order| {
            Place::new(
                format!("harmonic {order}"),
                fold_bin(order as f64 * tone_bin, samples),
            )
        })
        .collect();
    claim::claim(
        samples,
        tone_halfwidth,
        &[Place::new("fundamental", tone_bin)],
        &lines,
    )
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
    /// One-sigma standard uncertainties of the figures above, keyed as they are.
    pub uncertainty: SpectrumUncertainty,
}

/// The spectrum with its bin powers (codes², scaled as in [`fft::power_spectrum`]), kept for plots.
#[derive(Debug, Clone, PartialEq)]
pub struct SpectrumOutput {
    /// The figures.
    pub spectrum: Spectrum,
    /// Averaged bin powers, bins 0..=N/2.
    pub powers: Vec<f64>,
    /// Owner of each bin.
    pub owner: Vec<Owner>,
    /// Warnings.
    pub warnings: Vec<String>,
}

/// [`measure`] on records the caller no longer needs: each one is windowed and transformed in place,
/// which saves a copy of the record (128 MB at 2^24 samples). `plan`: the transform's plan when the
/// caller has made it already (see [`fft::plan`]).
///
/// `fits` holds each record's sine fit, the first one's deciding coherence, window and claims. When the
/// fundamental's bins meet DC or reach Nyquist under the window (its lobe then shares bins with DC or
/// with its own mirror image, and its level reads off), each record's fitted sine (offset and image
/// included) is removed in time first: noise, harmonics and spurs are measured on the spectrum of the
/// residual and the fundamental's power is the fits' A²/2 (see [`EDGE_NOTE`]).
pub fn measure_consuming(
    mut records: Vec<Vec<f64>>,
    fits: &[SineFit],
    sample_rate_hz: f64,
    bits: u32,
    settings: &SpectrumSettings,
    plan: Option<&fft::Plan>,
) -> Result<SpectrumOutput> {
    rule::check_guard_bins(settings.guard_bins)?;
    let n = records.first().map_or(0, |r| r.len());
    let Some(fit) = fits.first().filter(|_| fits.len() == records.len()) else {
        return Err(Error::new(
            ErrorKind::BadSetting,
            "",
            Location::Whole,
            "one sine fit per record",
            format!("{} fits for {} records", fits.len(), records.len()),
        ));
    };
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
    let coherence = coherence::decide_with(
        fit.cycles,
        fit.cycles_std,
        Unwindowed::Record(&records[0]),
        settings.harmonics,
    );
    let (window, window_reason) = choose_window(
        settings.window,
        coherence.coherent,
        bits,
        fit.amplitude_dbfs,
        settings.guard_bins,
    );
    let half = tone_halfwidth(window, coherence.coherent, settings.guard_bins);
    // The fundamental's centre bin and whether its bins meet DC's (0..=half) or reach Nyquist.
    let centre = (fit.cycles.round().max(0.0) as usize).min(n / 2);
    let tone_removed = (centre <= 2 * half || centre + half >= n / 2)
        && fits.iter().all(|f| f.amplitude_codes > 0.0);
    if tone_removed {
        for (r, f) in records.iter_mut().zip(fits) {
            f.subtract_from(r);
        }
    }
    // The rectangular window is never materialised: a 2^24-sample record saves 128 MB. A long record's
    // window is built once for it and not cached, so only its first half is made (the same values).
    let (w, long): (std::sync::Arc<[f64]>, bool) = if window == Window::Rectangular {
        (Vec::new().into(), false)
    } else if n > 1 << 20 {
        (window.half_samples(n).into(), true)
    } else {
        (window.samples_shared(n), false)
    };
    let taper = if long {
        fft::Taper::Half(&w)
    } else {
        fft::Taper::Full(&w)
    };
    let count = records.len();
    let mut records = records;
    // Every record is windowed first (Σw² is the window's, the same for each), and the window is given
    // back before the transforms allocate their output and plan.
    let mut sum_w2 = 0.0;
    for r in records.iter_mut() {
        sum_w2 = fft::apply_taper(r, taper);
    }
    drop(w);
    let mut powers: Vec<f64> = Vec::new();
    // Each record is transformed in place and dropped before its powers are made.
    for r in records {
        let p = fft::power_spectrum_tapered(r, sum_w2, plan);
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
    // Claimed after the transforms, so that the owners (32 MB at 2^24 samples) are not held beside the
    // FFT's buffers at their peak.
    let claims = claim_one_tone(n, fit.cycles, settings.harmonics.max(1), half)
        .map_err(|e| e.to_error(&window.name()))?;
    let mut measured = claims.measure(&powers);
    // With the tone removed, its bins hold what the fit left: the noise under them, and the tone itself
    // where the fit missed it. The fundamental is the fits' power, the noise expected under its bins
    // kept as it is everywhere else.
    let leftover = tone_removed.then(|| measured.tones[0]);
    if let Some(left) = leftover {
        let tone: f64 = fits
            .iter()
            .map(|f| 0.5 * f.amplitude_codes * f.amplitude_codes)
            .sum::<f64>()
            / count as f64;
        measured.tones[0] = claim::Measured::of(
            tone + left.expected_noise,
            left.weight,
            measured.noise_per_bin,
        );
    }
    let figs = metrics::figures(&claims, &measured, sample_rate_hz, bits);
    let uncertainty = uncertainty::of_spectrum(&claims, &measured, &figs, window, count);
    let mut warnings = Vec::new();
    let model = leakage::edge_warning(window, n, fit, &claims, tone_removed, &mut warnings);
    if let (Some(left), Some(model)) = (leftover, &model) {
        // The plots show the record's spectrum: the fitted tone's own is added back (the two are
        // nearly disjoint, so their powers add).
        powers.iter_mut().zip(model).for_each(|(p, m)| *p += m);
        if !left.at_floor && left.corrected > LEFTOVER_TONE * figs.fundamental_power {
            // Every figure in dBc is taken against the fit's tone, so it is named with the rest.
            let orders: Vec<String> = figs
                .harmonics
                .iter()
                .map(|h| format!("H{}", h.order))
                .collect();
            warnings.push(format!(
                "the fit leaves {:.1} dBc of the tone in the residual: it does not follow the tone, so the fundamental level, SNR, SINAD, ENOB, THD, SFDR, the worst spur and the harmonics ({}) in dBc, taken against the fit's tone or from the residual, are not reliable; check --fin and --fs, or use the four-parameter fit (--fit four)",
                10.0 * (left.corrected / figs.fundamental_power).log10(),
                orders.join(", ")
            ));
        }
    }
    if figs.noise_bins < claim::MIN_NOISE_BINS {
        warnings.push(format!(
            "only {} noise bins are left after claiming: the noise figures are poorly determined (use a longer record or fewer harmonics)",
            figs.noise_bins
        ));
    }
    if figs.noise_bins == 0 {
        return Err(no_noise_bins(
            n,
            window,
            coherence.coherent,
            half,
            settings.harmonics.max(1),
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
    lobe_warnings(&claims, &measured, &mut warnings);
    if coherence.coherent {
        let j = coherence.cycles.round() as u64;
        let g = crate::freq::gcd(j, n as u64);
        if g != 1 || j.is_multiple_of(2) {
            warnings.push(format!(
                "coherent with J = {j} cycles, which {}: the record samples only {} distinct phases, so quantisation error piles into harmonics; prefer an odd J coprime with N",
                if g != 1 { format!("shares the factor {g} with N = {n}") } else { "is even".to_string() },
                n as u64 / g
            ));
        }
    }
    // With the tone removed in time, its window leakage is not in the residual's spectrum: the
    // diagnosis is kept as a description of the window, with no bias and no warning.
    let mut leakage_warnings = Vec::new();
    let mut leakage = leakage::diagnose(
        window,
        half,
        &coherence,
        &figs,
        n,
        sample_rate_hz,
        fit,
        &mut leakage_warnings,
    );
    if tone_removed {
        leakage.snr_bias_db = 0.0;
        leakage.sfdr_bias_db = 0.0;
        leakage.significant = false;
        leakage.advice = None;
    } else {
        warnings.extend(leakage_warnings);
    }
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
        uncertainty,
    };
    Ok(SpectrumOutput {
        spectrum,
        powers,
        owner: claims.owner,
        warnings,
    })
}

/// Lines closer than this (bins) are one line: an exact fold (a coherent record's harmonic on DC,
/// on the fundamental or on another harmonic), whose powers add and are measured as one.
const SAME_LINE_BINS: f64 = 1e-6;

/// Warnings for harmonics that share bins with another line without landing exactly on it (a
/// window's lobe, or a non-coherent fold within a bin). A masked harmonic is not measured, and its
/// power sits in the bins of the line that masks it (whose level then includes it) and, where its
/// lobe reaches past that line's bins, in the noise; two unmasked lines whose lobes meet each lose
/// part of their lobe to the other. Exact folds are one line by definition and are only listed as
/// masked. Every figure such a line can move is named, with the cause and the fix.
fn lobe_warnings(
    claims: &claim::Claims,
    measured: &claim::Measurement,
    warnings: &mut Vec<String>,
) {
    let half = claims.tone_halfwidth;
    let last = claims.owner.len() - 1;
    let label = |o: Owner| match o {
        Owner::Dc => "DC".to_string(),
        Owner::Tone(_) => "the fundamental".to_string(),
        Owner::Line(j) => format!("H{}", j as u32 + 2),
        Owner::Noise => "noise".to_string(),
    };
    let bin_of = |o: Owner| match o {
        Owner::Dc => 0.0,
        Owner::Tone(t) => claims.tones[t as usize].bin,
        Owner::Line(j) => claims.lines[j as usize].bin,
        Owner::Noise => f64::NAN,
    };
    let at_floor = |j: usize| measured.lines[j].is_none_or(|m| m.at_floor);
    let mut named: Vec<String> = Vec::new();
    let mut causes: Vec<String> = Vec::new();
    let (mut fundamental, mut noise) = (false, false);
    let name = |s: String, named: &mut Vec<String>| {
        if !named.contains(&s) {
            named.push(s);
        }
    };
    for (i, l) in claims.lines.iter().enumerate() {
        let me = Owner::Line(i as u16);
        if let Some(by) = l.masked_by {
            if by == Owner::Noise || (l.bin - bin_of(by)).abs() < SAME_LINE_BINS {
                continue;
            }
            let span = l.centre.saturating_sub(half)..=(l.centre + half).min(last);
            let spills = span.clone().any(|k| claims.owner[k] == Owner::Noise);
            causes.push(format!(
                "H{} at bin {:.1} under the {}'s lobe",
                i + 2,
                l.bin,
                claims.name_of(by)
            ));
            name(format!("H{}", i + 2), &mut named);
            match by {
                Owner::Line(_) => name(label(by), &mut named),
                Owner::Tone(_) => fundamental = true,
                _ => {}
            }
            noise |= spills;
            continue;
        }
        // An unmasked line whose lobe meets an earlier claim's bins: each holds part of the other.
        let span = l.centre.saturating_sub(half)..=(l.centre + half).min(last);
        let mut met: Option<Owner> = None;
        for k in span {
            let o = claims.owner[k];
            if o != me && o != Owner::Noise {
                met = Some(o);
                break;
            }
        }
        let Some(other) = met else { continue };
        let other_floor = match other {
            Owner::Line(j) => at_floor(j as usize),
            _ => false,
        };
        if at_floor(i) && other_floor {
            continue;
        }
        causes.push(format!(
            "H{} at bin {:.1} shares bins with {} (bin {:.1})",
            i + 2,
            l.bin,
            label(other),
            bin_of(other)
        ));
        name(format!("H{}", i + 2), &mut named);
        match other {
            Owner::Line(_) => name(label(other), &mut named),
            Owner::Tone(_) => fundamental = true,
            _ => {}
        }
    }
    if causes.is_empty() {
        return;
    }
    let mut figures = named.join(", ");
    if fundamental {
        figures.push_str(", the fundamental level and the fit figures");
    }
    figures.push_str(", THD, SFDR, the worst spur, SINAD and ENOB");
    if noise {
        figures.push_str(", SNR, the noise floor and NSD");
    }
    warnings.push(format!(
        "{}: these lines are not told apart by the window, so {figures} are bounds or mix the lines (better or worse than the converter); analyse a coherent record unwindowed, or use a window with a narrower main lobe (--window hann)",
        causes.join(", ")
    ));
}

/// The error for a spectrum whose lines claim every bin: DC's bins, the tone's and each harmonic's
/// (±`half` bins each under `window`) cover all N/2 + 1 bins, so no noise is left to measure. It says
/// why and what to change: a record long enough that the lines take at most half the bins,
/// an unwindowed coherent record (one bin per line), fewer harmonics or guard bins.
fn no_noise_bins(n: usize, window: Window, coherent: bool, half: usize, harmonics: u32) -> Error {
    let lines = harmonics as usize;
    let claimed = (half + 1) + lines * (2 * half + 1);
    let longer = (4 * claimed).next_power_of_two();
    let coherent_fix = if coherent {
        "no window (--window rectangular) for this coherent record"
    } else {
        "a coherent input analysed unwindowed (one bin per line)"
    };
    let orders = if harmonics >= 2 {
        format!(", the tone and H2..H{harmonics}")
    } else {
        " and the tone".to_string()
    };
    Error::new(
        ErrorKind::NoNoiseBins,
        "",
        Location::Whole,
        "noise bins left after DC, the tone and its harmonics are claimed (the spectral figures are measured against them)",
        format!(
            "none: under the {} window each line claims ±{half} bins, and DC{orders} cover all {} bins of this {n}-sample record; use a record of {longer} samples or more, {coherent_fix}, fewer harmonics (--harmonics) or fewer guard bins (--guard-bins)",
            window.name(),
            n / 2 + 1,
        ),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    // fin = fs/4: H2 lands on Nyquist, H3 folds onto the fundamental, H4 onto DC (common practice).
    #[test]
    fn quarter_rate_masks_harmonics() {
        let c = claim_one_tone(1024, 256.0, 5, 0).unwrap();
        let h = |order: u32| (order - 2) as usize;
        assert_eq!(c.lines[h(2)].bin, 512.0);
        assert!(c.masked_by(h(2)).is_none());
        assert_eq!(c.masked_by(h(3)), Some("fundamental"));
        assert_eq!(c.masked_by(h(4)), Some("dc"));
        assert_eq!(c.masked_by(h(5)), Some("fundamental"));
        // A bin is never counted twice.
        let owned: usize = c.lines.iter().map(|s| s.bins.len()).sum();
        assert_eq!(owned, 1);
    }

    #[test]
    fn harmonic_bins_do_not_overlap() {
        let c = claim_one_tone(4096, 100.3, 10, 5).unwrap();
        let mut seen = std::collections::HashSet::new();
        for (i, s) in c.lines.iter().enumerate() {
            for b in &s.bins {
                assert!(seen.insert(*b));
                assert_eq!(c.owner[*b], harmonic_owner(i as u32 + 2));
            }
        }
        assert_eq!(c.owner[100], FUNDAMENTAL);
        assert_eq!(c.owner[5], Owner::Dc);
        assert_eq!(c.owner[6], Owner::Noise);
    }

    // Eighth-rate input: H7 folds onto the fundamental's mirror (7/8 − 1 = −1/8) and H9 onto the
    // fundamental itself; H8 lands on DC (first-zone folding, common practice, no source). A masked
    // harmonic names what masks it, and an earlier harmonic masks a later one: with fin = fs/6, H4
    // folds onto H2 (4/6 → 2/6).
    #[test]
    fn harmonics_masked_by_earlier_harmonics_name_them() {
        let c = claim_one_tone(1200, 150.0, 9, 0).unwrap();
        assert_eq!(c.masked_by(7 - 2), Some("fundamental"));
        assert_eq!(c.masked_by(8 - 2), Some("dc"));
        assert_eq!(c.masked_by(9 - 2), Some("fundamental"));
        let c = claim_one_tone(1200, 200.0, 4, 0).unwrap();
        assert_eq!(c.masked_by(4 - 2), Some("harmonic 2"));
        assert_eq!(c.lines[4 - 2].masked_by, Some(harmonic_owner(2)));
    }
}
