//! Simulated converters for the two-tone and interleaving analyses: a two-tone input through a memoryless
//! polynomial, and a single tone through M time-interleaved channels with offset, gain and timing errors.
//! Both end in an ideal mid-tread quantiser, code = floor(y + 0.5) saturated to the N-bit range.
//!
//! Randomness (additive Gaussian noise only) comes from `ChaCha8Rng::seed_from_u64(seed)`, so the same
//! settings give the same codes.

use std::f64::consts::TAU;

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use serde::{Deserialize, Serialize};

use crate::error::{Error, Result};
use crate::record::{full_scale_amplitude_codes, max_code, min_code, Record};

/// Longest record these simulators make: 2^24 samples.
pub const MAX_SAMPLES: usize = 1 << 24;

/// One input tone: frequency, peak amplitude relative to full scale, phase at t = 0.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ToneSpec {
    /// Frequency in hertz, in (0, fs/2).
    pub frequency_hz: f64,
    /// Peak amplitude relative to 2^(N−1) codes, dBFS.
    pub amplitude_dbfs: f64,
    /// Phase at t = 0, radians (the tone is A·cos(2π·f·t + φ)).
    pub phase_rad: f64,
}

/// Settings of the two-tone simulator.
///
/// The analog input is x(t) = A1·cos(2π·f1·t + φ1) + A2·cos(2π·f2·t + φ2) + offset, in codes. With
/// u = x / 2^(N−1) the static transfer is y = 2^(N−1)·(u + a2·u² + a3·u³): the coefficients are
/// dimensionless and refer to full scale.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TwoToneSettings {
    /// Resolution N in bits (1..=32).
    pub bits: u32,
    /// Sample rate, hertz.
    pub sample_rate_hz: f64,
    /// Record length (16..=2^24).
    pub samples: usize,
    /// The two tones.
    pub tones: [ToneSpec; 2],
    /// Offset of the analog input, codes.
    pub offset_codes: f64,
    /// Second-order coefficient a2 of the transfer (full-scale normalised).
    pub a2: f64,
    /// Third-order coefficient a3 of the transfer (full-scale normalised).
    pub a3: f64,
    /// RMS of additive white Gaussian noise before quantisation, codes.
    pub noise_rms_codes: f64,
    /// Seed of the noise.
    pub seed: u64,
}

/// Settings of the time-interleaved simulator.
///
/// Sample n comes from channel m = n mod M, M the length of the three error lists. Channel m sees
/// (1 + g_m)·A·cos(2π·f·(n/fs + τ_m) + φ) + offset + o_m: τ_m > 0 means the channel samples late.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct InterleavedSettings {
    /// Resolution N in bits (1..=32).
    pub bits: u32,
    /// Aggregate sample rate, hertz.
    pub sample_rate_hz: f64,
    /// Record length (16..=2^24).
    pub samples: usize,
    /// The input tone.
    pub tone: ToneSpec,
    /// Common offset of the analog input, codes.
    pub offset_codes: f64,
    /// Offset error o_m of each channel, codes.
    pub channel_offsets_codes: Vec<f64>,
    /// Relative gain error g_m of each channel (0.001 = 0.1 % high).
    pub channel_gain_errors: Vec<f64>,
    /// Timing error τ_m of each channel, seconds.
    pub channel_timing_errors_s: Vec<f64>,
    /// RMS of additive white Gaussian noise before quantisation, codes.
    pub noise_rms_codes: f64,
    /// Seed of the noise.
    pub seed: u64,
}

fn finite_in(key: &str, v: f64, lo: f64, hi: f64, what: &str) -> Result<()> {
    if v.is_finite() && v >= lo && v <= hi {
        Ok(())
    } else {
        Err(Error::setting(key, what, v.to_string()))
    }
}

fn check_common(bits: u32, fs: f64, samples: usize, noise: f64) -> Result<()> {
    crate::record::check_bits(bits)?;
    finite_in(
        "sample_rate_hz",
        fs,
        f64::MIN_POSITIVE,
        f64::MAX,
        "a positive finite sample rate in Hz",
    )?;
    if !(16..=MAX_SAMPLES).contains(&samples) {
        return Err(Error::setting(
            "samples",
            format!("a record length in 16..={MAX_SAMPLES}"),
            samples.to_string(),
        ));
    }
    finite_in(
        "noise_rms_codes",
        noise,
        0.0,
        1e15,
        "a noise rms in 0..=1e15 codes",
    )
}

fn check_tone(key: &str, t: &ToneSpec, fs: f64) -> Result<()> {
    let f = t.frequency_hz;
    if !(f.is_finite() && f > 0.0 && f < fs / 2.0) {
        return Err(Error::setting(
            key,
            format!("a frequency in (0, fs/2) = (0, {} Hz)", fs / 2.0),
            format!("{f} Hz"),
        ));
    }
    finite_in(
        key,
        t.amplitude_dbfs,
        -400.0,
        40.0,
        "a level in -400..=40 dBFS",
    )?;
    finite_in(key, t.phase_rad, -1e6, 1e6, "a finite phase in radians")
}

/// Phase in cycles, reduced to [0, 1), of f/fs·n + f·dt, exact enough (about 1e-16 cycles of rounding
/// per unit of f/fs·n) for records of 2^24 samples: the product's rounding error is folded back in.
fn cycles_at(ratio: f64, n: usize, extra_cycles: f64) -> f64 {
    let nf = n as f64;
    let p = ratio * nf;
    let e = ratio.mul_add(nf, -p);
    let c = (p - p.floor()) + e + extra_cycles;
    c - c.floor()
}

/// Quantises `y` (codes) with an ideal mid-tread quantiser, saturating at the ends of the N-bit range.
fn quantise(y: f64, bits: u32) -> i32 {
    let q = (y + 0.5).floor();
    q.clamp(min_code(bits) as f64, max_code(bits) as f64) as i32
}

/// Simulates a two-tone record. The record's `fin_hint_hz` is the first tone's frequency.
///
/// Errors (`BadSetting`, naming the key) for bits outside 1..=32, a sample rate that is not positive and
/// finite, a length outside 16..=2^24, a tone frequency outside (0, fs/2), and values that are not
/// finite.
pub fn two_tone(s: &TwoToneSettings) -> Result<Record> {
    check_common(s.bits, s.sample_rate_hz, s.samples, s.noise_rms_codes)?;
    for (i, t) in s.tones.iter().enumerate() {
        check_tone(&format!("tones[{i}]"), t, s.sample_rate_hz)?;
    }
    for (key, v) in [("offset_codes", s.offset_codes), ("a2", s.a2), ("a3", s.a3)] {
        finite_in(key, v, -1e15, 1e15, "a finite value")?;
    }
    let fsa = full_scale_amplitude_codes(s.bits);
    let amps: Vec<f64> = s
        .tones
        .iter()
        .map(|t| fsa * 10f64.powf(t.amplitude_dbfs / 20.0))
        .collect();
    let ratios: Vec<f64> = s
        .tones
        .iter()
        .map(|t| t.frequency_hz / s.sample_rate_hz)
        .collect();
    let mut rng = ChaCha8Rng::seed_from_u64(s.seed);
    let codes = (0..s.samples)
        .map(|n| {
            let mut x = s.offset_codes;
            for i in 0..2 {
                let th = TAU * cycles_at(ratios[i], n, 0.0) + s.tones[i].phase_rad;
                x += amps[i] * th.cos();
            }
            let u = x / fsa;
            let mut y = fsa * (u + s.a2 * u * u + s.a3 * u * u * u);
            if s.noise_rms_codes > 0.0 {
                let z: f64 = StandardNormal.sample(&mut rng);
                y += s.noise_rms_codes * z;
            }
            quantise(y, s.bits)
        })
        .collect();
    Ok(Record {
        source: format!("two-tone:{}", s.seed),
        codes,
        sample_rate_hz: s.sample_rate_hz,
        bits: s.bits,
        full_scale_vpp: None,
        values: None,
        fin_hint_hz: Some(s.tones[0].frequency_hz),
    })
}

/// Simulates a record of an M-channel time-interleaved converter. The record's `fin_hint_hz` is the
/// input frequency.
///
/// Errors (`BadSetting`) as for [`two_tone`], plus error lists that are empty, of different lengths, or
/// hold a timing error of a whole sample period or more or a gain error of −100 % or less.
pub fn interleaved(s: &InterleavedSettings) -> Result<Record> {
    check_common(s.bits, s.sample_rate_hz, s.samples, s.noise_rms_codes)?;
    check_tone("tone", &s.tone, s.sample_rate_hz)?;
    finite_in(
        "offset_codes",
        s.offset_codes,
        -1e15,
        1e15,
        "a finite offset",
    )?;
    let m = s.channel_offsets_codes.len();
    if m == 0 || s.channel_gain_errors.len() != m || s.channel_timing_errors_s.len() != m {
        return Err(Error::setting(
            "channels",
            "offset, gain and timing error lists of one equal length of at least 1",
            format!(
                "lengths {}, {}, {}",
                m,
                s.channel_gain_errors.len(),
                s.channel_timing_errors_s.len()
            ),
        ));
    }
    let period = 1.0 / s.sample_rate_hz;
    for k in 0..m {
        finite_in(
            "channel_offsets_codes",
            s.channel_offsets_codes[k],
            -1e15,
            1e15,
            "finite offsets",
        )?;
        let g = s.channel_gain_errors[k];
        if !(g.is_finite() && g > -1.0 && g < 1e6) {
            return Err(Error::setting(
                "channel_gain_errors",
                "relative gain errors above -1 (a channel with some gain)",
                g.to_string(),
            ));
        }
        let t = s.channel_timing_errors_s[k];
        if !(t.is_finite() && t.abs() < period) {
            return Err(Error::setting(
                "channel_timing_errors_s",
                format!("timing errors under one sample period ({period} s) in magnitude"),
                t.to_string(),
            ));
        }
    }
    let fsa = full_scale_amplitude_codes(s.bits);
    let amp = fsa * 10f64.powf(s.tone.amplitude_dbfs / 20.0);
    let ratio = s.tone.frequency_hz / s.sample_rate_hz;
    let mut rng = ChaCha8Rng::seed_from_u64(s.seed);
    let codes = (0..s.samples)
        .map(|n| {
            let ch = n % m;
            let extra = s.tone.frequency_hz * s.channel_timing_errors_s[ch];
            let th = TAU * cycles_at(ratio, n, extra) + s.tone.phase_rad;
            let mut y = (1.0 + s.channel_gain_errors[ch]) * amp * th.cos()
                + s.offset_codes
                + s.channel_offsets_codes[ch];
            if s.noise_rms_codes > 0.0 {
                let z: f64 = StandardNormal.sample(&mut rng);
                y += s.noise_rms_codes * z;
            }
            quantise(y, s.bits)
        })
        .collect();
    Ok(Record {
        source: format!("interleaved:{}", s.seed),
        codes,
        sample_rate_hz: s.sample_rate_hz,
        bits: s.bits,
        full_scale_vpp: None,
        values: None,
        fin_hint_hz: Some(s.tone.frequency_hz),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tone(f: f64, dbfs: f64) -> ToneSpec {
        ToneSpec {
            frequency_hz: f,
            amplitude_dbfs: dbfs,
            phase_rad: 0.3,
        }
    }

    // Without impairments a single-channel interleaved record is the quantised sine itself: every code
    // is within half an LSB of the analog value (definition of the ideal quantiser).
    #[test]
    fn ideal_paths_are_within_half_an_lsb() {
        let fs = 1.0e6;
        let n = 1000;
        let s = InterleavedSettings {
            bits: 12,
            sample_rate_hz: fs,
            samples: n,
            tone: tone(12_345.0, -1.0),
            offset_codes: 0.0,
            channel_offsets_codes: vec![0.0],
            channel_gain_errors: vec![0.0],
            channel_timing_errors_s: vec![0.0],
            noise_rms_codes: 0.0,
            seed: 1,
        };
        let r = interleaved(&s).unwrap();
        let a = 2048.0 * 10f64.powf(-1.0 / 20.0);
        for (k, &c) in r.codes.iter().enumerate() {
            let x = a * (TAU * 12_345.0 * k as f64 / fs + 0.3).cos();
            assert!((c as f64 - x).abs() <= 0.5 + 1e-9, "sample {k}");
        }
        // A polynomial with a2 = a3 = 0 is the identity on the sum of the tones.
        let t = TwoToneSettings {
            bits: 12,
            sample_rate_hz: fs,
            samples: n,
            tones: [tone(10_000.0, -7.0), tone(13_000.0, -7.0)],
            offset_codes: 0.0,
            a2: 0.0,
            a3: 0.0,
            noise_rms_codes: 0.0,
            seed: 1,
        };
        let r = two_tone(&t).unwrap();
        let a = 2048.0 * 10f64.powf(-7.0 / 20.0);
        for (k, &c) in r.codes.iter().enumerate() {
            let tt = k as f64 / fs;
            let x = a * ((TAU * 10_000.0 * tt + 0.3).cos() + (TAU * 13_000.0 * tt + 0.3).cos());
            assert!((c as f64 - x).abs() <= 0.5 + 1e-9, "sample {k}");
        }
    }

    #[test]
    fn bad_settings_are_errors() {
        let mut s = InterleavedSettings {
            bits: 12,
            sample_rate_hz: 1.0e6,
            samples: 1000,
            tone: tone(12_345.0, -1.0),
            offset_codes: 0.0,
            channel_offsets_codes: vec![0.0, 0.0],
            channel_gain_errors: vec![0.0],
            channel_timing_errors_s: vec![0.0, 0.0],
            noise_rms_codes: 0.0,
            seed: 1,
        };
        assert_eq!(
            interleaved(&s).unwrap_err().location,
            crate::error::Location::Key("channels".into())
        );
        s.channel_gain_errors = vec![0.0, 0.0];
        s.channel_timing_errors_s = vec![0.0, 2e-6];
        assert_eq!(
            interleaved(&s).unwrap_err().location,
            crate::error::Location::Key("channel_timing_errors_s".into())
        );
        s.channel_timing_errors_s = vec![0.0, 0.0];
        s.tone.frequency_hz = 600e3;
        assert_eq!(
            interleaved(&s).unwrap_err().kind,
            crate::error::ErrorKind::BadSetting
        );
    }
}
