//! Time-interleaving spurs: for a record of an M-channel interleaved converter (sample n from channel
//! n mod M) holding one sine, name the spurs that channel mismatch causes, measure them, and estimate each
//! channel's offset, gain and timing error.
//!
//! # Model
//! Channel m sees (1 + g_m)·A·cos(2π·f·(t + τ_m) + φ) + C + o_m. Writing channel m's fitted sine as
//! Re{Z_m·e^{jωn}} + C_m (Z_m its complex amplitude, ω = 2π·f/fs) and expanding the periodic sequences
//! Z_{n mod M} and C_{n mod M} in their M-point DFTs Ẑ_k = (1/M)·Σ_m Z_m·e^{−j2πkm/M} (likewise Ĉ_k):
//! - offset mismatch puts a tone at k·fs/M of amplitude 2|Ĉ_k| for 0 < k < M/2 (power 2|Ĉ_k|²) and
//!   |Ĉ_{M/2}| at fs/2 (power |Ĉ_{M/2}|²);
//! - gain and timing mismatch put a tone at fin + k·fs/M (folded; k = 1..M−1) of amplitude |Ẑ_k|, the
//!   fundamental having |Ẑ_0|. (k·fs/M − fin folds onto fin + (M−k)·fs/M, so these M − 1 places cover
//!   both signs of k·fs/M ± fin.)
//!
//! This holds exactly for a sine input; the usual small-mismatch forms follow with
//! Z_m ≈ A·e^{jφ}·(1 + g_m + j·2π·f·τ_m). (Standard small-mismatch analysis, from memory.) Each spur is
//! reported as measured (claimed, noise-corrected and masked by the engine the other analyses use,
//! [`crate::spectrum::claim`]) and as
//! predicted from the channel estimates by these formulas.
//!
//! # Estimates
//! The whole record gets the four-parameter fit (the frequency f); each channel's sub-record n ≡ m
//! (mod M) gets a three-parameter fit at f on its true sample instants. Then, relative to the channel
//! means: offset = C_m − mean C (codes); gain error = A_m / mean A − 1; timing error =
//! (φ_m − mean φ)/(2π·f) seconds, positive when the channel samples late. Phase differences are taken in
//! (−π, π], so a timing error of half an input period or more cannot be told from a smaller one.
//! The formulas index channels m = 0..M−1; results number them m + 1, counted from 1 as `--channel
//! K/M` does, so that channel K of a result is the record `--channel K/M` reads.

use crate::analysis::RecordResult;
use crate::dft::fft::power_spectrum;
use crate::error::{Error, ErrorKind, Location, Result};
use crate::fit::multi_tone::fit_linear;
use crate::fit::{fit_four, phase_at_zero, wrap_phase, FourParamOptions, SineFit};
use crate::freq::{fold_bin, fold_to_first_zone};
use crate::record::{full_scale_power, Record};
use crate::spectrum::claim::{claim, Place, MIN_NOISE_BINS};
use crate::spectrum::coherence::{self, Unwindowed};
use crate::spectrum::metrics::db;
use crate::spectrum::rule::{window_and_powers, WindowChoice};
use realfft::num_complex::Complex64;
use serde::Serialize;
use std::f64::consts::{PI, TAU};

/// Fewest samples per channel sub-record.
pub const MIN_CHANNEL_SAMPLES: usize = 16;

/// Most interleaved channels an analysis accepts: beyond the largest interleaved converters built
/// (tens to a few hundred sub-converters), and small enough that channel arithmetic cannot overflow.
pub const MAX_CHANNELS: usize = 4096;

/// Settings of the interleaving analysis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InterleaveSettings {
    /// Number of interleaved channels M (2 or more).
    pub channels: usize,
    /// The window choice ([`WindowChoice::Auto`]: the one-tone window rule).
    pub window: WindowChoice,
    /// Guard bins on each side of every tone's and spur's bins; `None`: 0 coherent, 1 non-coherent.
    pub guard_bins: Option<usize>,
}

impl InterleaveSettings {
    /// Settings for M channels with the automatic window and default guard bins.
    pub fn new(channels: usize) -> Self {
        InterleaveSettings {
            channels,
            window: WindowChoice::Auto,
            guard_bins: None,
        }
    }
}

/// One channel's fitted sine and its mismatch relative to the channel means.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChannelEstimate {
    /// Channel number, counted from 1 as in `--channel K/M`: sample n (from 0) belongs to channel
    /// n mod M + 1.
    pub channel: usize,
    /// Samples in its sub-record.
    pub samples: usize,
    /// Fitted amplitude A_m, codes.
    pub amplitude_codes: f64,
    /// Fitted phase at sample 0 of the record, radians, in (−π, π].
    pub phase_rad: f64,
    /// Fitted offset C_m, codes.
    pub mean_codes: f64,
    /// Offset error C_m − mean C, codes.
    pub offset_codes: f64,
    /// Relative gain error A_m / mean A − 1.
    pub gain_error: f64,
    /// Timing error (φ_m − mean φ)/(2π·f), seconds; positive when the channel samples late.
    pub timing_error_s: f64,
    /// Rms residual of the channel's fit, codes.
    pub residual_rms_codes: f64,
}

/// Which mismatch causes a spur.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum InterleaveSpurKind {
    /// Offset mismatch: at k·fs/M.
    Offset,
    /// Gain and timing mismatch: at fin + k·fs/M, folded.
    GainTiming,
}

/// One interleaving spur.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InterleaveSpur {
    /// The cause.
    pub kind: InterleaveSpurKind,
    /// k in k·fs/M or fin + k·fs/M.
    pub k: usize,
    /// Its name, "k*fs/M" or "k*fs/M+fin".
    pub name: String,
    /// Folded frequency, hertz.
    pub frequency_hz: f64,
    /// Measured level relative to the fundamental; `None` when masked.
    pub dbc: Option<f64>,
    /// Measured level relative to full scale; `None` when masked.
    pub dbfs: Option<f64>,
    /// Level the channel estimates predict (module docs), relative to the fundamental.
    pub predicted_dbc: Option<f64>,
    /// True when the spur lands on DC, the fundamental or an earlier spur and is not measured.
    pub masked: bool,
    /// What masks it.
    pub masked_by: Option<String>,
    /// True when no more than the noise expected under its bins: the level is then an upper bound.
    pub at_floor: bool,
}

/// The spectral figures of an interleaved record.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InterleaveSpectrum {
    /// Window id.
    pub window: String,
    /// Why that window.
    pub window_reason: String,
    /// Whether the record was judged coherent.
    pub coherent: bool,
    /// Bin width fs/N, hertz.
    pub bin_width_hz: f64,
    /// Half-width of the bins of the fundamental and every spur (main lobe plus guard bins).
    pub tone_halfwidth_bins: usize,
    /// Fundamental level (power of its bins, noise subtracted), dBFS.
    pub fundamental_dbfs: Option<f64>,
    /// Offset spurs (k = 1..=M/2), then gain/timing spurs (k = 1..M−1).
    pub spurs: Vec<InterleaveSpur>,
    /// The largest measured offset spur (at-floor ones left out), dBc.
    pub offset_spur_dbc: Option<f64>,
    /// The largest measured gain/timing spur (at-floor ones left out), dBc.
    pub gain_timing_spur_dbc: Option<f64>,
    /// Average noise floor per bin, dBFS.
    pub noise_floor_dbfs: Option<f64>,
    /// Bins the noise mean came from.
    pub noise_bins: usize,
}

/// What the interleaving analysis finds.
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct Interleaved {
    /// Number of channels M.
    pub channels: usize,
    /// The four-parameter fit of the whole record.
    pub fit: Option<SineFit>,
    /// Per-channel estimates, channel 1 first.
    pub channel_estimates: Vec<ChannelEstimate>,
    /// The spectral figures.
    pub spectrum: Option<InterleaveSpectrum>,
}

/// The result record of one interleaving analysis (what `spurline interleave --json` prints); its
/// sample rate is the aggregate rate.
pub type InterleaveResult = RecordResult<Interleaved>;

/// The M-point DFT coefficient (1/M)·Σ_m v_m·e^{−j2πkm/M}.
fn dft_coefficient(v: &[Complex64], k: usize) -> Complex64 {
    let m = v.len();
    let mut acc = Complex64::new(0.0, 0.0);
    for (i, z) in v.iter().enumerate() {
        let th = -TAU * ((k * i) % m) as f64 / m as f64;
        acc += z * Complex64::from_polar(1.0, th);
    }
    acc / m as f64
}

/// Analyses a record of an M-channel time-interleaved converter (see the module docs).
pub fn analyze_interleaved(
    record: &Record,
    settings: &InterleaveSettings,
) -> Result<InterleaveResult> {
    analyze_interleaved_traced(record, settings).map(|(r, _)| r)
}

/// [`analyze_interleaved`], also giving the bin powers it measured (0..=N/2, codes², under its
/// window) for the interleaving plot.
pub fn analyze_interleaved_traced(
    record: &Record,
    settings: &InterleaveSettings,
) -> Result<(InterleaveResult, Vec<f64>)> {
    let n = record.len();
    let m = settings.channels;
    let path = record.source.as_str();
    if !(2..=MAX_CHANNELS).contains(&m) {
        return Err(Error::setting(
            "channels",
            format!("a count of interleaved channels in 2..={MAX_CHANNELS}"),
            m.to_string(),
        ));
    }
    crate::spectrum::rule::check_guard_bins(settings.guard_bins)?;
    if n / m < MIN_CHANNEL_SAMPLES {
        return Err(Error::new(
            ErrorKind::TooFewSamples,
            path,
            Location::Whole,
            format!(
                "at least {MIN_CHANNEL_SAMPLES} samples per channel ({} for {m} channels)",
                MIN_CHANNEL_SAMPLES * m
            ),
            format!("{n} samples"),
        ));
    }
    let fs = record.sample_rate_hz;
    let bits = record.bits;
    let y: Vec<f64> = record.samples_f64();
    let out = fit_four(
        &y,
        fs,
        bits,
        FourParamOptions {
            hint_hz: record.fin_hint_hz,
            ..FourParamOptions::default()
        },
    )
    .map_err(|e| e.with_path(path))?;
    let fit = out.fit;
    let mut warnings = out.warnings;
    let f = fit.frequency_hz / fs;

    // Each sub-record sees the input at fs/M: at (a multiple of) its DC or Nyquist the channel's sine
    // cannot be fitted, and the images land on the fundamental or on each other.
    let per_channel = n / m;
    let f_sub = fold_to_first_zone(f * m as f64, 1.0);
    if f_sub * (per_channel as f64) < 1.0 || (0.5 - f_sub) * (per_channel as f64) < 1.0 {
        return Err(Error::new(
            ErrorKind::DegenerateFit,
            path,
            Location::Whole,
            format!(
                "an input frequency at least one channel bin ({} Hz) away from every multiple of fs/(2M) = {} Hz",
                fs / n as f64,
                fs / (2.0 * m as f64)
            ),
            format!("{} Hz", fit.frequency_hz),
        ));
    }

    let centre = (n as f64 - 1.0) / 2.0;
    let mut z = Vec::with_capacity(m);
    let mut offsets = Vec::with_capacity(m);
    let mut raw = Vec::with_capacity(m);
    for ch in 0..m {
        let sub: Vec<f64> = y.iter().skip(ch).step_by(m).copied().collect();
        let lin = fit_linear(&sub, ch, m, centre, &[f]).ok_or_else(|| {
            Error::new(
                ErrorKind::DegenerateFit,
                path,
                Location::Whole,
                format!("a solvable three-parameter fit of channel {}", ch + 1),
                "a singular system",
            )
        })?;
        let (a, b) = lin.coeffs[0];
        // Re{Z·e^{jθ}} = a·cos θ + b·sin θ.
        z.push(Complex64::new(a, -b));
        offsets.push(Complex64::new(lin.offset, 0.0));
        raw.push((
            sub.len(),
            a,
            b,
            lin.offset,
            (lin.rss / sub.len() as f64).sqrt(),
        ));
    }
    let mean_amp = z.iter().map(|v| v.norm()).sum::<f64>() / m as f64;
    if mean_amp.is_nan() || mean_amp <= 0.0 {
        return Err(Error::new(
            ErrorKind::NoTone,
            path,
            Location::Whole,
            "a sine in the channels' sub-records",
            "channel amplitudes of zero",
        ));
    }
    let mean_c = offsets.iter().map(|v| v.re).sum::<f64>() / m as f64;
    let dphi: Vec<f64> = z.iter().map(|v| wrap_phase(v.arg() - z[0].arg())).collect();
    let mean_dphi = dphi.iter().sum::<f64>() / m as f64;
    let estimates: Vec<ChannelEstimate> = raw
        .iter()
        .enumerate()
        .map(|(ch, &(len, a, b, c, rms))| ChannelEstimate {
            channel: ch + 1,
            samples: len,
            amplitude_codes: z[ch].norm(),
            phase_rad: phase_at_zero(a, b, f, centre),
            mean_codes: c,
            offset_codes: c - mean_c,
            gain_error: z[ch].norm() / mean_amp - 1.0,
            timing_error_s: (dphi[ch] - mean_dphi) / (TAU * f) / fs,
            residual_rms_codes: rms,
        })
        .collect();
    if dphi.iter().any(|d| d.abs() > PI / 2.0) {
        warnings.push(
            "a channel's phase differs from channel 1 by more than a quarter turn: its timing error may be ambiguous by whole input periods"
                .to_string(),
        );
    }

    // Spectrum: coherence, window and claims as in the single-tone analysis.
    let rect = power_spectrum(&y, &[]);
    let coherent =
        coherence::decide(fit.cycles, fit.cycles_std, Unwindowed::Spectrum(&rect)).coherent;
    let (window, window_reason, half, powers) = window_and_powers(
        &y,
        rect,
        settings.window,
        coherent,
        bits,
        fit.amplitude_dbfs,
        settings.guard_bins,
    );
    let bins_per_channel_rate = n as f64 / m as f64;
    let mut spots: Vec<(InterleaveSpurKind, usize, Place)> = Vec::new();
    for k in 1..=m / 2 {
        spots.push((
            InterleaveSpurKind::Offset,
            k,
            Place::new(
                format!("{k}*fs/{m}"),
                fold_bin(k as f64 * bins_per_channel_rate, n),
            ),
        ));
    }
    for k in 1..m {
        spots.push((
            InterleaveSpurKind::GainTiming,
            k,
            Place::new(
                format!("{k}*fs/{m}+fin"),
                fold_bin(fit.cycles + k as f64 * bins_per_channel_rate, n),
            ),
        ));
    }
    let lines: Vec<Place> = spots.iter().map(|s| s.2.clone()).collect();
    let claims = claim(n, half, &[Place::new("fundamental", fit.cycles)], &lines)
        .map_err(|e| e.to_error(&window.name()).with_path(path))?;
    let meas = claims.measure(&powers);
    let p1 = meas.tones[0].power();
    let pfs = full_scale_power(bits);
    let noise_total = meas.noise_power;
    if p1.is_nan() || p1 <= 10.0 * noise_total {
        return Err(Error::new(
            ErrorKind::NoTone,
            path,
            Location::Whole,
            "a tone at least 10 dB above the noise at the fitted frequency",
            format!(
                "{} dB",
                db(p1 / noise_total).map_or("—".to_string(), |v| format!("{v:.1}"))
            ),
        ));
    }
    let z0 = dft_coefficient(&z, 0).norm();
    let p_pred_fund = z0 * z0 / 2.0;
    let bin_hz = fs / n as f64;
    let mut spurs = Vec::with_capacity(spots.len());
    let mut masked = Vec::new();
    for (i, ((kind, k, place), level)) in spots.iter().zip(&meas.lines).enumerate() {
        let predicted_power = match kind {
            InterleaveSpurKind::Offset => {
                let c = dft_coefficient(&offsets, *k).norm();
                if 2 * k == m {
                    c * c
                } else {
                    2.0 * c * c
                }
            }
            InterleaveSpurKind::GainTiming => {
                let c = dft_coefficient(&z, *k).norm();
                c * c / 2.0
            }
        };
        let masked_by = claims.masked_by(i).map(str::to_string);
        if let Some(by) = &masked_by {
            masked.push(format!("{} on {by}", place.name));
        }
        spurs.push(InterleaveSpur {
            kind: *kind,
            k: *k,
            name: place.name.clone(),
            frequency_hz: place.bin * bin_hz,
            dbc: level.and_then(|l| db(l.level() / p1)),
            dbfs: level.and_then(|l| db(l.level() / pfs)),
            predicted_dbc: db(predicted_power / p_pred_fund),
            masked: level.is_none(),
            masked_by,
            at_floor: level.is_some_and(|l| l.at_floor),
        });
    }
    if !masked.is_empty() {
        warnings.push(format!(
            "interleaving spurs masked (not measured): {}",
            masked.join(", ")
        ));
    }
    if meas.noise_bins < MIN_NOISE_BINS {
        warnings.push(format!(
            "only {} noise bins are left after claiming: the noise floor is poorly determined (use a longer record)",
            meas.noise_bins
        ));
    }
    let largest = |kind: InterleaveSpurKind| {
        spots
            .iter()
            .zip(&meas.lines)
            .filter(|(s, _)| s.0 == kind)
            .filter_map(|(_, l)| l.filter(|l| !l.at_floor).map(|l| l.level()))
            .reduce(f64::max)
            .and_then(|p| db(p / p1))
    };
    let found = Interleaved {
        channels: m,
        fit: Some(fit),
        channel_estimates: estimates,
        spectrum: Some(InterleaveSpectrum {
            window: window.name(),
            window_reason,
            coherent,
            bin_width_hz: bin_hz,
            tone_halfwidth_bins: half,
            fundamental_dbfs: db(p1 / pfs),
            spurs,
            offset_spur_dbc: largest(InterleaveSpurKind::Offset),
            gain_timing_spur_dbc: largest(InterleaveSpurKind::GainTiming),
            noise_floor_dbfs: db(meas.noise_per_bin / pfs),
            noise_bins: meas.noise_bins,
        }),
    };
    Ok((InterleaveResult::of(record, found, warnings), powers))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::synth::multi::{interleaved, InterleavedSettings, ToneSpec};

    const FS: f64 = 100e6;
    const N: usize = 16384;
    /// Odd and coprime with N, near 20 MHz: every interleaving spur of M = 2 and M = 4 lands on its own
    /// bin (module docs: images at J + k·N/M folded, offsets at k·N/M).
    const J: f64 = 3277.0;
    const NOISE: f64 = 0.5;

    fn record(offsets: &[f64], gains: &[f64], skews: &[f64]) -> Record {
        interleaved(&InterleavedSettings {
            bits: 16,
            sample_rate_hz: FS,
            samples: N,
            tone: ToneSpec {
                frequency_hz: J * FS / N as f64,
                amplitude_dbfs: -1.0,
                phase_rad: 0.7,
            },
            offset_codes: 2.0,
            channel_offsets_codes: offsets.to_vec(),
            channel_gain_errors: gains.to_vec(),
            channel_timing_errors_s: skews.to_vec(),
            noise_rms_codes: NOISE,
            seed: 9,
        })
        .unwrap()
    }

    fn spur<'a>(r: &'a InterleaveResult, name: &str) -> &'a InterleaveSpur {
        let sp = r.spectrum.as_ref().unwrap();
        sp.spurs.iter().find(|s| s.name == name).unwrap()
    }

    /// Noise of power `pn` per bin on a one-bin spur of power `p` moves its measured power by
    /// √(2·pn/p) relative (one σ, complex Gaussian noise against a fixed phasor); six of those in dB.
    fn noise_tol_db(p: f64, pn: f64) -> f64 {
        10.0 * (1.0 + 6.0 * (2.0 * pn / p).sqrt()).log10()
    }

    /// Power per bin of the quantised, noisy record: 2σ²/N with σ² = NOISE² + q²/12 (the crate's
    /// scaling convention, a white error of variance σ²).
    fn noise_per_bin() -> f64 {
        2.0 * (NOISE * NOISE + 1.0 / 12.0) / N as f64
    }

    fn amplitude() -> f64 {
        32768.0 * 10f64.powf(-1.0 / 20.0)
    }

    // M = 2, gains 1 ± g/2: y = A·cos(ωn)·(1 ± g/2 alternately) = A·cos(ωn) + (g/2)·A·(−1)^n·cos(ωn),
    // and (−1)^n·cos(ωn) = cos((π − ω)n): a spur at fs/2 − fin of relative amplitude g/2 exactly
    // (standard small-mismatch analysis, from memory; exact for a pure gain error).
    #[test]
    fn gain_mismatch_spur_at_half_rate_minus_fin() {
        let g = 2e-3;
        let r = analyze_interleaved(
            &record(&[0.0, 0.0], &[g / 2.0, -g / 2.0], &[0.0, 0.0]),
            &InterleaveSettings::new(2),
        )
        .unwrap();
        let s = spur(&r, "1*fs/2+fin");
        // Placed from the fitted frequency: within 1e-4 bin of fs/2 − fin (the fit's cycle count has a
        // Cramér-Rao σ near 1e-7 cycles here).
        assert!((s.frequency_hz - (FS / 2.0 - J * FS / N as f64)).abs() < 1e-4 * FS / N as f64);
        let want = 20.0 * (g / 2.0).log10();
        let p = (g / 2.0 * amplitude()).powi(2) / 2.0;
        let tol = noise_tol_db(p, noise_per_bin());
        assert!(
            (s.dbc.unwrap() - want).abs() < tol,
            "{:?} vs {want} ± {tol}",
            s.dbc
        );
        assert!((s.predicted_dbc.unwrap() - want).abs() < tol);
        // Estimates: amplitude of each channel's three-parameter fit has σ·√(2/L) of noise, L = N/2
        // samples (least-squares variance of a sine's coefficients in white noise, from memory); 6σ.
        let sigma = (NOISE * NOISE + 1.0 / 12.0).sqrt();
        let tol_gain = 6.0 * sigma * (2.0 / (N / 2) as f64).sqrt() / amplitude();
        for (e, want) in r.channel_estimates.iter().zip([g / 2.0, -g / 2.0]) {
            assert!(
                (e.gain_error - want).abs() < tol_gain,
                "{} vs {want}",
                e.gain_error
            );
            assert!(e.timing_error_s.abs() < 1e-13);
        }
        assert_eq!(r.spectrum.as_ref().unwrap().window, "rectangular");
    }

    // M = 2, timing errors ±Δt/2: A·cos(ωn + φ ± πf·Δt) ≈ A·cos(ωn + φ) ∓ A·πfΔt·sin(ωn + φ), so the
    // alternating part gives a spur at fs/2 − fin of relative amplitude π·fin·Δt (standard
    // small-mismatch analysis, from memory; exactly tan(π·fin·Δt), 5e-7 relative away here).
    #[test]
    fn timing_skew_spur_is_pi_fin_dt() {
        let dt = 20e-12;
        let fin = J * FS / N as f64;
        let r = analyze_interleaved(
            &record(&[0.0, 0.0], &[0.0, 0.0], &[dt / 2.0, -dt / 2.0]),
            &InterleaveSettings::new(2),
        )
        .unwrap();
        let rel = PI * fin * dt;
        let s = spur(&r, "1*fs/2+fin");
        let p = (rel * amplitude()).powi(2) / 2.0;
        let tol = noise_tol_db(p, noise_per_bin());
        assert!(
            (s.dbc.unwrap() - 20.0 * rel.log10()).abs() < tol,
            "{:?}",
            s.dbc
        );
        // Phase of a channel's fit has σ·√(2/L)/A of noise (from memory), i.e. that over 2π·fin in
        // seconds; 6σ.
        let sigma = (NOISE * NOISE + 1.0 / 12.0).sqrt();
        let tol_t = 6.0 * sigma * (2.0 / (N / 2) as f64).sqrt() / amplitude() / (TAU * fin);
        for (e, want) in r.channel_estimates.iter().zip([dt / 2.0, -dt / 2.0]) {
            assert!(
                (e.timing_error_s - want).abs() < tol_t,
                "{} vs {want}",
                e.timing_error_s
            );
            assert!(e.gain_error.abs() < 1e-5);
        }
    }

    // M = 4 with offset, gain and timing errors at once (each list sums to zero, so the errors relative
    // to the channel means are the ones put in).
    #[test]
    fn four_channels_estimates_and_spurs() {
        let offsets = [12.0, -6.0, -2.0, -4.0];
        let gains = [1e-3, -5e-4, -1.5e-3, 1e-3];
        let skews = [5e-12, -3e-12, 2e-12, -4e-12];
        let rec = record(&offsets, &gains, &skews);
        let r = analyze_interleaved(&rec, &InterleaveSettings::new(4)).unwrap();
        let fin = J * FS / N as f64;
        let sigma = (NOISE * NOISE + 1.0 / 12.0).sqrt();
        let l = (N / 4) as f64;
        // Least-squares noise of a channel's offset σ/√L and of its amplitude σ·√(2/L) (from memory); the
        // phase's is the amplitude's over A. 6σ each.
        let tol_c = 6.0 * sigma / l.sqrt();
        let tol_g = 6.0 * sigma * (2.0 / l).sqrt() / amplitude();
        let tol_t = tol_g / (TAU * fin);
        assert_eq!(r.channel_estimates.len(), 4);
        for (e, m) in r.channel_estimates.iter().zip(0..4) {
            assert_eq!(e.samples, N / 4);
            assert!((e.offset_codes - offsets[m]).abs() < tol_c, "ch {m}: {e:?}");
            assert!((e.mean_codes - 2.0 - offsets[m]).abs() < tol_c, "ch {m}");
            assert!((e.gain_error - gains[m]).abs() < tol_g, "ch {m}: {e:?}");
            assert!((e.timing_error_s - skews[m]).abs() < tol_t, "ch {m}: {e:?}");
        }
        let dft = |v: &[Complex64], k: usize| dft_coefficient(v, k);
        let pn = noise_per_bin();
        let a = amplitude();
        // Offset spurs: 2|Ĉ_k| at k·fs/4 (k = 1), |Ĉ_2| at fs/2 (module docs).
        let c: Vec<Complex64> = offsets.iter().map(|&o| Complex64::new(o, 0.0)).collect();
        for (k, name) in [(1usize, "1*fs/4"), (2, "2*fs/4")] {
            let ck = dft(&c, k).norm();
            let p = if k == 2 { ck * ck } else { 2.0 * ck * ck };
            let s = spur(&r, name);
            let want = 10.0 * (p / (a * a / 2.0)).log10();
            let tol = noise_tol_db(p, pn);
            assert!(
                (s.dbc.unwrap() - want).abs() < tol,
                "{name}: {:?} vs {want} ± {tol}",
                s.dbc
            );
            assert!((s.frequency_hz - k as f64 * FS / 4.0).abs() < 1e-6);
        }
        // Gain/timing spurs at fin + k·fs/4: relative amplitude |E_k|, E the DFT of e_m = g_m + j·2πf·τ_m
        // (small-mismatch form). Its neglected second-order terms (g·x + x²/2, x = 2πfτ) are bounded by
        // their largest value over the channels, added to the noise tolerance.
        let x: Vec<f64> = skews.iter().map(|t| TAU * fin * t).collect();
        let e: Vec<Complex64> = gains
            .iter()
            .zip(&x)
            .map(|(&g, &x)| Complex64::new(g, x))
            .collect();
        let second = gains
            .iter()
            .zip(&x)
            .map(|(g, x)| (g * x).abs() + x * x / 2.0)
            .fold(0.0, f64::max);
        for k in 1..4 {
            let ek = dft(&e, k).norm();
            let s = spur(&r, &format!("{k}*fs/4+fin"));
            let p = (ek * a).powi(2) / 2.0;
            let tol = noise_tol_db(p, pn) + 20.0 * (1.0 + second / ek).log10();
            let want = 20.0 * ek.log10();
            assert!(
                (s.dbc.unwrap() - want).abs() < tol,
                "k {k}: {:?} vs {want} ± {tol}",
                s.dbc
            );
            // The exact prediction from the channel estimates agrees with the measurement to the noise.
            assert!((s.predicted_dbc.unwrap() - s.dbc.unwrap()).abs() < noise_tol_db(p, pn));
            assert!(!s.masked && !s.at_floor);
        }
        let sp = r.spectrum.as_ref().unwrap();
        let largest_gt = (1..4)
            .map(|k| spur(&r, &format!("{k}*fs/4+fin")).dbc.unwrap())
            .fold(f64::NEG_INFINITY, f64::max);
        assert_eq!(sp.gain_timing_spur_dbc, Some(largest_gt));
        assert!(serde_json::to_string(&r)
            .unwrap()
            .contains("\"gain_timing\""));
    }

    // A matched converter has no interleaving spurs: all at the noise floor (flagged, not reported as
    // a measured level in the summaries).
    #[test]
    fn matched_channels_leave_spurs_at_the_floor() {
        let r = analyze_interleaved(
            &record(&[0.0; 4], &[0.0; 4], &[0.0; 4]),
            &InterleaveSettings::new(4),
        )
        .unwrap();
        let sp = r.spectrum.as_ref().unwrap();
        let floor_count = sp.spurs.iter().filter(|s| s.at_floor).count();
        // Noise alone exceeds twice its expected power in one bin with probability e^−2 (exponential
        // power of a complex Gaussian bin): of 5 spurs, at least 2 at the floor is a safe expectation.
        assert!(floor_count >= 2, "{:?}", sp.spurs);
        for s in &sp.spurs {
            assert!(s.dbc.unwrap() < -100.0, "{s:?}");
        }
    }

    // A non-coherent record (7-term Blackman-Harris, tone bins of ±8) with fin 3.3 bins below fs/4:
    // with M = 2 the image fs/2 − fin lies 6.6 bins from the fundamental, inside its bins, so it is
    // flagged masked and not measured (claiming rule of the module docs).
    #[test]
    fn an_image_inside_the_fundamental_bins_is_masked() {
        let rec = interleaved(&InterleavedSettings {
            bits: 16,
            sample_rate_hz: FS,
            samples: N,
            tone: ToneSpec {
                frequency_hz: (N as f64 / 4.0 - 3.3) * FS / N as f64,
                amplitude_dbfs: -1.0,
                phase_rad: 0.2,
            },
            offset_codes: 0.0,
            channel_offsets_codes: vec![1.0, -1.0],
            channel_gain_errors: vec![1e-3, -1e-3],
            channel_timing_errors_s: vec![0.0, 0.0],
            noise_rms_codes: NOISE,
            seed: 4,
        })
        .unwrap();
        let r = analyze_interleaved(&rec, &InterleaveSettings::new(2)).unwrap();
        let sp = r.spectrum.as_ref().unwrap();
        assert_eq!(sp.window, "blackman-harris-7");
        let s = spur(&r, "1*fs/2+fin");
        assert!(s.masked && s.dbc.is_none());
        assert_eq!(s.masked_by.as_deref(), Some("fundamental"));
        // Still predicted from the channel estimates: relative amplitude g/2 = 1e-3 (−60 dBc). The
        // estimates' noise (σ·√(2/L)/A ≈ 3e-7 per channel, from memory) moves it by about 0.002 dB;
        // 0.02 dB is over 6σ.
        assert!((s.predicted_dbc.unwrap() + 60.0).abs() < 0.02);
        assert!(r.warnings.iter().any(|w| w.contains("masked")));
        assert_eq!(sp.gain_timing_spur_dbc, None);
    }

    #[test]
    fn bad_settings_and_degenerate_frequencies_are_errors() {
        let rec = record(&[0.0, 0.0], &[0.0, 0.0], &[0.0, 0.0]);
        let e = analyze_interleaved(&rec, &InterleaveSettings::new(1)).unwrap_err();
        assert_eq!(e.location, Location::Key("channels".into()));
        let mut short = rec.clone();
        short.codes.truncate(100);
        let e = analyze_interleaved(&short, &InterleaveSettings::new(8)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::TooFewSamples);
        // fin = fs/4 with two channels: each channel sees its own Nyquist frequency.
        let quarter = interleaved(&InterleavedSettings {
            bits: 12,
            sample_rate_hz: FS,
            samples: 4096,
            tone: ToneSpec {
                frequency_hz: FS / 4.0,
                amplitude_dbfs: -1.0,
                phase_rad: 0.3,
            },
            offset_codes: 0.0,
            channel_offsets_codes: vec![0.0, 0.0],
            channel_gain_errors: vec![0.0, 0.0],
            channel_timing_errors_s: vec![0.0, 0.0],
            noise_rms_codes: 0.5,
            seed: 1,
        })
        .unwrap();
        let e = analyze_interleaved(&quarter, &InterleaveSettings::new(2)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::DegenerateFit, "{e}");
        assert_eq!(e.path, "interleaved:1");
    }
}
