//! The dynamic figures from a claimed power spectrum: fundamental, SNR, SINAD, THD, SFDR, ENOB, the
//! noise floor and a table per harmonic.
//!
//! Accounting of excluded bins: every bin carries a weight u_k (½ for bin 0 and, for even N, bin N/2;
//! 1 otherwise), so that white noise has the same expected power per unit of weight everywhere. The mean
//! noise power per unit weight comes from the noise bins alone; the noise hidden under the DC, fundamental
//! and harmonic spans is that mean times their weight. Total noise is the mean times N/2, the weight of the
//! whole band 0..fs/2. Harmonic and fundamental powers have their span's share of noise subtracted.

use super::tones::{Claims, Owner};
use crate::full_scale_power;
use serde::Serialize;

/// 20·log10(√(3/2)): the exact form of the 1.76 dB in 6.02N + 1.76 (handbook formula).
pub const SINE_CREST_DB: f64 = 1.760_912_590_556_812_4;
/// 20·log10(2): the exact form of the 6.02 dB per bit.
pub const DB_PER_BIT: f64 = 6.020_599_913_279_624;

/// One harmonic's figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicFigure {
    /// Harmonic order.
    pub order: u32,
    /// Folded frequency in hertz.
    pub frequency_hz: f64,
    /// Level relative to the fundamental (noise in its span subtracted); `None` when masked.
    pub dbc: Option<f64>,
    /// Level relative to full scale; `None` when masked.
    pub dbfs: Option<f64>,
    /// True when the harmonic lands on DC, the fundamental or an earlier harmonic and is not measured.
    pub masked: bool,
    /// What masks it ("dc", "fundamental", "harmonic K").
    pub masked_by: Option<String>,
    /// True when the harmonic is no more than the noise expected in its span: its level is then an upper
    /// bound (the raw span power) and it adds nothing to THD.
    pub at_floor: bool,
}

/// The largest spectral component other than DC and the fundamental.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Spur {
    /// Frequency of the spur's peak bin, in hertz.
    pub frequency_hz: f64,
    /// Level relative to the fundamental.
    pub dbc: f64,
    /// Level relative to full scale.
    pub dbfs: f64,
    /// The harmonic order when the spur is a harmonic, else `None`.
    pub harmonic: Option<u32>,
}

/// Figures computed from one claimed spectrum (before the window and coherence information is added).
#[derive(Debug, Clone, PartialEq)]
pub struct Figures {
    /// Fundamental power in codes² (noise in its span subtracted).
    pub fundamental_power: f64,
    /// Fundamental level in dBFS.
    pub fundamental_dbfs: f64,
    /// Mean noise power per unit bin weight, codes².
    pub noise_per_bin: f64,
    /// Total noise power over 0..fs/2, codes².
    pub noise_power: f64,
    /// Sum of the harmonics' noise-corrected powers (negative corrections included), codes².
    pub harmonic_power_signed: f64,
    /// SNR, dB.
    pub snr_db: Option<f64>,
    /// SINAD, dB.
    pub sinad_db: Option<f64>,
    /// THD, dBc (negative); `None` when every harmonic is masked or at the floor.
    pub thd_dbc: Option<f64>,
    /// SFDR against the fundamental.
    pub sfdr_dbc: Option<f64>,
    /// SFDR against full scale.
    pub sfdr_dbfs: Option<f64>,
    /// Spectral ENOB: (SINAD − 1.76)/6.02.
    pub enob_bits: Option<f64>,
    /// Full-scale-referred ENOB: SINAD referred to a 0 dBFS input.
    pub enob_full_scale_bits: Option<f64>,
    /// Average noise floor per bin, dBFS.
    pub noise_floor_dbfs: Option<f64>,
    /// Noise spectral density, dBFS/Hz.
    pub nsd_dbfs_per_hz: Option<f64>,
    /// The worst spur.
    pub worst_spur: Option<Spur>,
    /// One entry per harmonic 2..=H.
    pub harmonics: Vec<HarmonicFigure>,
    /// Number of noise bins the noise mean came from.
    pub noise_bins: usize,
    /// Power of the largest single noise bin outside every claimed span, codes² (for the leakage check).
    pub largest_noise_bin: f64,
}

/// Weight of bin k in units of one full interior bin (see the module docs).
pub fn bin_weight(k: usize, samples: usize) -> f64 {
    if k == 0 || (samples % 2 == 0 && k == samples / 2) {
        0.5
    } else {
        1.0
    }
}

fn db(x: f64) -> Option<f64> {
    (x > 0.0 && x.is_finite()).then(|| 10.0 * x.log10())
}

/// Computes the figures from bin powers (scaled as in [`crate::spectrum::fft::power_spectrum`]).
pub fn figures(
    powers: &[f64],
    claims: &Claims,
    samples: usize,
    sample_rate_hz: f64,
    bits: u32,
) -> Figures {
    let pfs = full_scale_power(bits);
    let bin_hz = sample_rate_hz / samples as f64;
    let weight = |k: usize| bin_weight(k, samples);

    // One pass over the bins gathers the noise, the fundamental's span and the largest noise bin.
    let (mut noise_sum, mut noise_w, mut noise_bins) = (0.0, 0.0, 0usize);
    let (mut f_raw, mut f_w) = (0.0, 0.0);
    let mut largest_noise_bin = 0.0;
    let mut peak_k = None;
    for (k, (&p, &o)) in powers.iter().zip(&claims.owner).enumerate() {
        match o {
            Owner::Noise => {
                noise_sum += p;
                noise_w += weight(k);
                noise_bins += 1;
                if p > largest_noise_bin {
                    largest_noise_bin = p;
                    peak_k = Some(k);
                }
            }
            Owner::Fundamental => {
                f_raw += p;
                f_w += weight(k);
            }
            _ => {}
        }
    }
    let noise_per_bin = if noise_w > 0.0 {
        noise_sum / noise_w
    } else {
        0.0
    };
    let noise_power = noise_per_bin * samples as f64 / 2.0;

    let span_power = |set: &mut dyn Iterator<Item = usize>| -> (f64, f64) {
        set.fold((0.0, 0.0), |(p, w), k| (p + powers[k], w + weight(k)))
    };
    let fundamental_power = (f_raw - noise_per_bin * f_w).max(0.0);
    let fundamental_dbfs = db(fundamental_power / pfs).unwrap_or(f64::NEG_INFINITY);

    let mut harmonics = Vec::new();
    let mut harmonic_power_signed = 0.0;
    let mut thd_sum = 0.0;
    let mut worst: Option<(f64, usize, Option<u32>)> = None;
    for slot in &claims.harmonics {
        let frequency_hz = slot.bin * bin_hz;
        if let Some(by) = &slot.masked_by {
            harmonics.push(HarmonicFigure {
                order: slot.order,
                frequency_hz,
                dbc: None,
                dbfs: None,
                masked: true,
                masked_by: Some(by.clone()),
                at_floor: false,
            });
            continue;
        }
        let (raw, w) = span_power(&mut slot.bins.iter().copied());
        let expected_noise = noise_per_bin * w;
        let corrected = raw - expected_noise;
        harmonic_power_signed += corrected;
        let at_floor = corrected <= expected_noise;
        // At the floor the corrected power is not a measurement; the raw span power is an upper bound
        // (and compares like for like with the raw noise bins in the worst-spur search).
        let level = if at_floor { raw } else { corrected };
        if !at_floor {
            thd_sum += corrected;
        }
        let peak = slot
            .bins
            .iter()
            .copied()
            .max_by(|a, b| powers[*a].total_cmp(&powers[*b]))
            .unwrap_or(0);
        if worst.is_none_or(|(p, _, _)| level > p) {
            worst = Some((level, peak, Some(slot.order)));
        }
        harmonics.push(HarmonicFigure {
            order: slot.order,
            frequency_hz,
            dbc: db(level / fundamental_power),
            dbfs: db(level / pfs),
            masked: false,
            masked_by: None,
            at_floor,
        });
    }

    // Non-harmonic spurs: the largest noise bin, with the noise bins of its lobe.
    if let Some(k) = peak_k {
        let lo = k.saturating_sub(claims.tone_halfwidth);
        let hi = (k + claims.tone_halfwidth).min(powers.len() - 1);
        let lobe: f64 = (lo..=hi)
            .filter(|&j| claims.owner[j] == Owner::Noise)
            .map(|j| powers[j])
            .sum();
        if worst.is_none_or(|(p, _, _)| lobe > p) {
            worst = Some((lobe, k, None));
        }
    }

    let snr = fundamental_power / noise_power;
    // Equals the measured power outside DC and the fundamental plus the noise under their spans: never negative.
    let sinad_den = noise_power + harmonic_power_signed;
    let sinad = fundamental_power / sinad_den;
    let sinad_db = db(sinad);
    let enob = sinad_db.map(|s| (s - SINE_CREST_DB) / DB_PER_BIT);
    let enob_fs = sinad_db.map(|s| (s - fundamental_dbfs - SINE_CREST_DB) / DB_PER_BIT);
    let worst_spur = worst.and_then(|(p, k, h)| {
        Some(Spur {
            frequency_hz: match h {
                Some(order) => claims
                    .harmonics
                    .iter()
                    .find(|s| s.order == order)
                    .map(|s| s.bin * bin_hz)
                    .unwrap_or(k as f64 * bin_hz),
                None => k as f64 * bin_hz,
            },
            dbc: db(p / fundamental_power)?,
            dbfs: db(p / pfs)?,
            harmonic: h,
        })
    });
    Figures {
        fundamental_power,
        fundamental_dbfs,
        noise_per_bin,
        noise_power,
        harmonic_power_signed,
        snr_db: db(snr),
        sinad_db,
        thd_dbc: db(thd_sum / fundamental_power),
        sfdr_dbc: worst_spur.as_ref().map(|s| -s.dbc),
        sfdr_dbfs: worst_spur.as_ref().map(|s| -s.dbfs),
        enob_bits: enob,
        enob_full_scale_bits: enob_fs,
        noise_floor_dbfs: db(noise_per_bin / pfs),
        nsd_dbfs_per_hz: db(noise_power / pfs / (sample_rate_hz / 2.0)),
        worst_spur,
        harmonics,
        noise_bins,
        largest_noise_bin,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::spectrum::tones::claim_bins;

    // White noise of 1 code² per unit weight (so ½ in the half-weight Nyquist bin), a fundamental in
    // bin 5, H2 in bin 10 at the floor (raw 1.5 against 1.0 expected) and H3 in bin 15 well above it.
    // Conventions of the module docs and of HarmonicFigure::at_floor: an at-floor harmonic reports its
    // raw span power (an upper bound) and adds nothing to THD; the others report the corrected power.
    #[test]
    fn at_floor_harmonic_reports_its_raw_span_power() {
        let n = 64;
        let claims = claim_bins(n, 5.0, 3, 0);
        let mut p = vec![1.0; n / 2 + 1];
        p[n / 2] = 0.5;
        p[5] = 1001.0;
        p[10] = 1.5;
        p[15] = 11.0;
        let f = figures(&p, &claims, n, 1.0, 12);
        assert!((f.noise_per_bin - 1.0).abs() < 1e-12);
        let p1 = 1000.0;
        assert!((f.fundamental_power - p1).abs() < 1e-9);
        let h2 = &f.harmonics[0];
        assert!(h2.at_floor);
        assert!((h2.dbc.unwrap() - 10.0 * (1.5 / p1).log10()).abs() < 1e-9);
        let h3 = &f.harmonics[1];
        assert!(!h3.at_floor);
        assert!((h3.dbc.unwrap() - 10.0 * (10.0 / p1).log10()).abs() < 1e-9);
        assert!((f.thd_dbc.unwrap() - 10.0 * (10.0 / p1).log10()).abs() < 1e-9);
        // SINAD counts every corrected harmonic power, the at-floor one included.
        let sinad = 10.0 * (p1 / (32.0 + 0.5 + 10.0)).log10();
        assert!((f.sinad_db.unwrap() - sinad).abs() < 1e-9);
    }
}
