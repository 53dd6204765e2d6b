//! The dynamic figures of a one-tone record from its measured claim: fundamental, SNR, SINAD, THD, SFDR,
//! ENOB, the noise floor and a table per harmonic.
//!
//! Accounting of excluded bins (see [`super::claim`]): the noise hidden under the DC, fundamental and
//! harmonic bins is the mean noise per unit bin weight times their weight, so the total noise is that
//! mean times N/2, the weight of the whole band 0..fs/2. Harmonic and fundamental powers have the noise
//! expected under their bins subtracted.

use super::claim::{Claims, Measurement, SpurAt};
use crate::record::full_scale_power;
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
    /// Level relative to the fundamental (noise under its bins subtracted); `None` when masked.
    pub dbc: Option<f64>,
    /// Level relative to full scale; `None` when masked.
    pub dbfs: Option<f64>,
    /// True when the harmonic lands on DC, the fundamental or an earlier harmonic and is not measured.
    pub masked: bool,
    /// What masks it ("dc", "fundamental", "harmonic K").
    pub masked_by: Option<String>,
    /// True when the harmonic is no more than the noise expected under its bins: its level is then an upper
    /// bound (the raw power of its bins) and it adds nothing to THD.
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
    /// Fundamental power in codes² (noise under its bins subtracted).
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
}

/// 10·log10 of a power ratio, `None` unless positive and finite.
pub(crate) fn db(x: f64) -> Option<f64> {
    (x > 0.0 && x.is_finite()).then(|| 10.0 * x.log10())
}

/// Computes the figures of a one-tone claim (see [`super::claim_one_tone`]) from its measurement.
pub fn figures(claims: &Claims, measured: &Measurement, sample_rate_hz: f64, bits: u32) -> Figures {
    let pfs = full_scale_power(bits);
    let bin_hz = sample_rate_hz / claims.samples as f64;
    let noise_per_bin = measured.noise_per_bin;
    let noise_power = measured.noise_power;
    let fundamental_power = measured.tones[0].power();
    let fundamental_dbfs = db(fundamental_power / pfs).unwrap_or(f64::NEG_INFINITY);

    let mut harmonics = Vec::with_capacity(claims.lines.len());
    let mut harmonic_power_signed = 0.0;
    let mut thd_sum = 0.0;
    for (i, (slot, m)) in claims.lines.iter().zip(&measured.lines).enumerate() {
        let order = i as u32 + 2;
        let frequency_hz = slot.bin * bin_hz;
        let Some(m) = m else {
            harmonics.push(HarmonicFigure {
                order,
                frequency_hz,
                dbc: None,
                dbfs: None,
                masked: true,
                masked_by: claims.masked_by(i).map(str::to_string),
                at_floor: false,
            });
            continue;
        };
        harmonic_power_signed += m.corrected;
        // At the floor the corrected power is not a measurement; the raw power of the harmonic's bins is
        // an upper bound (and compares like for like with the raw noise bins in the worst-spur search).
        if !m.at_floor {
            thd_sum += m.corrected;
        }
        let level = m.level();
        harmonics.push(HarmonicFigure {
            order,
            frequency_hz,
            dbc: db(level / fundamental_power),
            dbfs: db(level / pfs),
            masked: false,
            masked_by: None,
            at_floor: m.at_floor,
        });
    }

    let snr = fundamental_power / noise_power;
    // Equals the measured power outside DC and the fundamental plus the noise under their bins: never
    // negative.
    let sinad_den = noise_power + harmonic_power_signed;
    let sinad = fundamental_power / sinad_den;
    let sinad_db = db(sinad);
    let enob = sinad_db.map(|s| (s - SINE_CREST_DB) / DB_PER_BIT);
    let enob_fs = sinad_db.map(|s| (s - fundamental_dbfs - SINE_CREST_DB) / DB_PER_BIT);
    let worst_spur = measured.largest_spur().and_then(|(p, at)| {
        let (frequency_hz, harmonic) = match at {
            SpurAt::Line(i) => (claims.lines[i].bin * bin_hz, Some(i as u32 + 2)),
            SpurAt::Bin(k) => (k as f64 * bin_hz, None),
        };
        Some(Spur {
            frequency_hz,
            dbc: db(p / fundamental_power)?,
            dbfs: db(p / pfs)?,
            harmonic,
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
        noise_bins: measured.noise_bins,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::spectrum::claim_one_tone;

    // White noise of 1 code² per unit weight (so ½ in the half-weight Nyquist bin), a fundamental in
    // bin 5, H2 in bin 10 at the floor (raw 1.5 against 1.0 expected) and H3 in bin 15 well above it.
    // Conventions of the module docs and of HarmonicFigure::at_floor: an at-floor harmonic reports its
    // raw power (an upper bound) and adds nothing to THD; the others report the corrected power.
    #[test]
    fn at_floor_harmonic_reports_its_raw_power() {
        let n = 64;
        let claims = claim_one_tone(n, 5.0, 3, 0).unwrap();
        let mut p = vec![1.0; n / 2 + 1];
        p[n / 2] = 0.5;
        p[5] = 1001.0;
        p[10] = 1.5;
        p[15] = 11.0;
        let f = figures(&claims, &claims.measure(&p), 1.0, 12);
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
