//! A simulated N-bit converter: a sine (with harmonics, a spur, offset, noise, aperture jitter and a
//! static INL bow) sampled and quantised by an ideal mid-tread quantiser, or by a quantiser with given
//! code-width errors and missing codes, for the demo and the tests.
//!
//! The signal chain per sample n (t = n/fs):
//! 1. analog input at the instant t + δ, δ ~ Gaussian(σ = `jitter_rms_s`):
//!    offset + A·sin(2π·f·t + φ) + Σ A·10^(dBc/20)·sin(h·(2π·f·t + φ)) + spur;
//! 2. static transfer: x + bow·(1 − (x/2^(N−1))²) LSB (zero at the ends of the range, `bow` at mid-scale);
//! 3. additive white Gaussian noise (`noise_rms_codes`);
//! 4. code = floor(y + 0.5), saturated to −2^(N−1) ..= 2^(N−1) − 1 (clipped samples are counted);
//!    when a DNL pattern or missing codes are set, the code is instead the one whose transition levels
//!    (see [`transition_levels`]) enclose y, with the same saturation.
//!
//! Randomness comes from `ChaCha8Rng::seed_from_u64(seed)`: stream 0 for the noise, stream 1 for the
//! jitter, so turning one on does not change the other's draws.

pub mod multi;

use std::f64::consts::TAU;
use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::Path;

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use serde::{Deserialize, Serialize};

use crate::error::{Error, ErrorKind, Location, Result};
use crate::freq;
use crate::record::{full_scale_amplitude_codes, max_code, min_code, Record};

/// Longest record the simulator makes: 2^26 samples.
pub const MAX_SAMPLES: usize = 1 << 26;
/// Highest level accepted for the amplitude (dBFS) and for harmonics and the spur (dBc).
const MAX_LEVEL_DB: f64 = 40.0;
/// Largest magnitude accepted for offset, noise and bow, in codes; keeps every sum finite.
const MAX_MAGNITUDE_CODES: f64 = 1e15;
/// Highest harmonic order accepted.
const MAX_HARMONIC_ORDER: u32 = 10_000;
/// Highest resolution for which the transition-level table is built (2^20 − 1 levels, 8 MB).
pub const MAX_TRANSITION_TABLE_BITS: u32 = 20;
/// Largest width error accepted in a DNL pattern, in LSB.
const MAX_DNL_PATTERN_LSB: f64 = 1000.0;

/// How the simulated input frequency is given.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SynthFrequency {
    /// Exactly this frequency in hertz.
    Hz(f64),
    /// The coherent frequency nearest this target in hertz (odd cycle count coprime with N,
    /// see [`freq::nearest_coherent`]).
    NearestCoherent(f64),
}

/// Settings of the simulated converter and its input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SynthSettings {
    /// Resolution N in bits (1..=32).
    pub bits: u32,
    /// Sample rate in hertz.
    pub sample_rate_hz: f64,
    /// Record length (4..=2^26).
    pub samples: usize,
    /// Peak amplitude of the fundamental relative to 2^(N−1) codes, in dBFS.
    pub amplitude_dbfs: f64,
    /// The input frequency.
    pub frequency: SynthFrequency,
    /// Phase φ of the fundamental at t = 0, in radians.
    pub phase_rad: f64,
    /// DC offset of the analog input, in codes.
    pub offset_codes: f64,
    /// RMS of the additive white Gaussian noise before quantisation, in codes.
    pub noise_rms_codes: f64,
    /// Harmonics of the analog input as (order ≥ 2, level in dBc); the h-th harmonic has phase h·φ.
    pub harmonics_dbc: Vec<(u32, f64)>,
    /// A non-harmonic tone as (frequency in Hz within (0, fs/2), level in dBc), phase 0.
    pub spur: Option<(f64, f64)>,
    /// RMS aperture jitter σ in seconds: each sample is taken at n/fs + Gaussian(σ).
    pub jitter_rms_s: f64,
    /// Static INL bow in LSB: the transfer adds bow·(1 − (x/2^(N−1))²), zero at the ends and `bow` at
    /// mid-scale (an even-order error, mostly second harmonic).
    pub inl_bow_lsb: f64,
    /// Seed of the random generator.
    pub seed: u64,
    /// Code-width errors in LSB, repeated over the codes: the inner code with offset-binary value u
    /// (code + 2^(N−1), 1 ..= 2^N − 2) gets width 1 + pattern\[u mod len\]. The widths are then
    /// rescaled so that the first and last transition levels stay at their ideal places. Each entry
    /// must be at least −1 (−1 makes a zero-width, missing code). Empty: no width errors.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub dnl_pattern_lsb: Vec<f64>,
    /// Inner codes (signed, −2^(N−1)+1 ..= 2^(N−1)−2) that never occur: their width is zero.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub missing_codes: Vec<i64>,
}

impl Default for SynthSettings {
    /// 12 bits, 100 MHz, 4096 samples, −1 dBFS at the coherent frequency nearest 10.1 MHz, no
    /// impairments, seed 1.
    fn default() -> Self {
        SynthSettings {
            bits: 12,
            sample_rate_hz: 100e6,
            samples: 4096,
            amplitude_dbfs: -1.0,
            frequency: SynthFrequency::NearestCoherent(10.1e6),
            phase_rad: 0.0,
            offset_codes: 0.0,
            noise_rms_codes: 0.0,
            harmonics_dbc: Vec::new(),
            spur: None,
            jitter_rms_s: 0.0,
            inl_bow_lsb: 0.0,
            seed: 1,
            dnl_pattern_lsb: Vec::new(),
            missing_codes: Vec::new(),
        }
    }
}

/// A simulated record and what was put into it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Synthesized {
    /// The record (source `synth:<seed>`, `fin_hint_hz` the exact input frequency).
    pub record: Record,
    /// The exact input frequency in hertz.
    pub frequency_hz: f64,
    /// Samples whose code was saturated to the end of the range.
    pub clipped_samples: usize,
}

/// Fractional cycles f·(n/fs + δ) with about 1e-16 cycle error even for n near 2^26.
///
/// f/fs is kept as hi + lo where hi has 26 significant bits, so n·hi (n < 2^26) is exact in f64 and
/// its fraction is taken before the small remaining terms are added.
#[derive(Debug, Clone, Copy)]
struct CycleCounter {
    hi: f64,
    lo: f64,
    freq_hz: f64,
}

impl CycleCounter {
    fn new(freq_hz: f64, sample_rate_hz: f64) -> Self {
        let r = freq_hz / sample_rate_hz;
        // Exact remainder of the division (fused multiply-add), as a correction to r.
        let r_rem = (-r).mul_add(sample_rate_hz, freq_hz) / sample_rate_hz;
        // Veltkamp split: hi keeps the top 26 bits of r.
        let c = r * 134_217_729.0;
        let hi = c - (c - r);
        let lo = (r - hi) + r_rem;
        CycleCounter { hi, lo, freq_hz }
    }

    /// Cycles in [0, 1) at sample n, taken `dt_s` seconds late.
    fn cycles(&self, n: usize, dt_s: f64) -> f64 {
        let nf = n as f64;
        let whole = nf * self.hi;
        let c = (whole - whole.floor()) + nf * self.lo + self.freq_hz * dt_s;
        let f = c - c.floor();
        if f >= 1.0 {
            0.0
        } else {
            f
        }
    }
}

/// The validated settings in the form the sample loop uses.
#[derive(Debug, Clone)]
struct Model {
    frequency_hz: f64,
    amplitude_codes: f64,
    phase_rad: f64,
    offset_codes: f64,
    fundamental: CycleCounter,
    /// (order, amplitude in codes, phase h·φ reduced to one turn).
    harmonics: Vec<(f64, f64, f64)>,
    spur: Option<(CycleCounter, f64)>,
    inl_bow_lsb: f64,
    full_scale_codes: f64,
    /// Transition levels of the non-ideal quantiser, when one is set (see [`transition_levels`]).
    transitions: Option<Vec<f64>>,
}

fn finite_in(key: &str, v: f64, lo: f64, hi: f64, what: &str) -> Result<()> {
    if v.is_finite() && v >= lo && v <= hi {
        Ok(())
    } else {
        Err(Error::setting(key, what, v.to_string()))
    }
}

fn db_to_ratio(db: f64) -> f64 {
    10f64.powf(db / 20.0)
}

impl Model {
    fn new(s: &SynthSettings) -> Result<Model> {
        crate::record::check_bits(s.bits)?;
        let fs = s.sample_rate_hz;
        if !(fs.is_finite() && fs > 0.0) {
            return Err(Error::setting(
                "sample_rate_hz",
                "a positive finite sample rate in Hz",
                fs.to_string(),
            ));
        }
        if !(4..=MAX_SAMPLES).contains(&s.samples) {
            return Err(Error::setting(
                "samples",
                format!("a record length in 4..={MAX_SAMPLES}"),
                s.samples.to_string(),
            ));
        }
        let nyquist = fs / 2.0;
        let in_band = |v: f64| v.is_finite() && v > 0.0 && v < nyquist;
        let band = format!("a frequency in (0, {nyquist}) Hz (below fs/2)");
        let frequency_hz = match s.frequency {
            SynthFrequency::Hz(f) => {
                if !in_band(f) {
                    return Err(Error::setting("frequency", band, f.to_string()));
                }
                f
            }
            SynthFrequency::NearestCoherent(target) => {
                freq::nearest_coherent(fs, s.samples, target, false)
                    .map_err(|e| Error {
                        location: Location::Key("frequency".to_string()),
                        ..e
                    })?
                    .frequency_hz
            }
        };
        finite_in(
            "amplitude_dbfs",
            s.amplitude_dbfs,
            f64::NEG_INFINITY,
            MAX_LEVEL_DB,
            &format!("a finite level in dBFS at most {MAX_LEVEL_DB}"),
        )?;
        finite_in(
            "phase_rad",
            s.phase_rad,
            f64::NEG_INFINITY,
            f64::INFINITY,
            "a finite phase in radians",
        )?;
        let magnitude = format!("a finite value of at most {MAX_MAGNITUDE_CODES:e} codes");
        finite_in(
            "offset_codes",
            s.offset_codes,
            -MAX_MAGNITUDE_CODES,
            MAX_MAGNITUDE_CODES,
            &magnitude,
        )?;
        finite_in(
            "noise_rms_codes",
            s.noise_rms_codes,
            0.0,
            MAX_MAGNITUDE_CODES,
            &format!("a non-negative finite value of at most {MAX_MAGNITUDE_CODES:e} codes"),
        )?;
        finite_in(
            "inl_bow_lsb",
            s.inl_bow_lsb,
            -MAX_MAGNITUDE_CODES,
            MAX_MAGNITUDE_CODES,
            &magnitude,
        )?;
        finite_in(
            "jitter_rms_s",
            s.jitter_rms_s,
            0.0,
            1.0 / fs,
            &format!("a jitter in 0..={} s (at most one sample period)", 1.0 / fs),
        )?;

        let full_scale_codes = full_scale_amplitude_codes(s.bits);
        let amplitude_codes = full_scale_codes * db_to_ratio(s.amplitude_dbfs);
        let level = format!("a finite level in dBc at most {MAX_LEVEL_DB}");
        let mut harmonics = Vec::with_capacity(s.harmonics_dbc.len());
        for &(order, dbc) in &s.harmonics_dbc {
            if !(2..=MAX_HARMONIC_ORDER).contains(&order) {
                return Err(Error::setting(
                    "harmonics_dbc",
                    format!("a harmonic order in 2..={MAX_HARMONIC_ORDER}"),
                    order.to_string(),
                ));
            }
            finite_in(
                "harmonics_dbc",
                dbc,
                f64::NEG_INFINITY,
                MAX_LEVEL_DB,
                &level,
            )?;
            let h = order as f64;
            harmonics.push((
                h,
                amplitude_codes * db_to_ratio(dbc),
                (h * s.phase_rad).rem_euclid(TAU),
            ));
        }
        let spur = match s.spur {
            None => None,
            Some((f, dbc)) => {
                if !in_band(f) {
                    return Err(Error::setting("spur", band, f.to_string()));
                }
                finite_in("spur", dbc, f64::NEG_INFINITY, MAX_LEVEL_DB, &level)?;
                Some((CycleCounter::new(f, fs), amplitude_codes * db_to_ratio(dbc)))
            }
        };
        Ok(Model {
            frequency_hz,
            amplitude_codes,
            phase_rad: s.phase_rad,
            offset_codes: s.offset_codes,
            fundamental: CycleCounter::new(frequency_hz, fs),
            harmonics,
            spur,
            inl_bow_lsb: s.inl_bow_lsb,
            full_scale_codes,
            transitions: if s.dnl_pattern_lsb.is_empty() && s.missing_codes.is_empty() {
                None
            } else {
                Some(transition_levels(s)?)
            },
        })
    }

    /// The analog input, in codes, at sample n taken `dt_s` seconds late.
    fn input_at(&self, n: usize, dt_s: f64) -> f64 {
        let cyc = self.fundamental.cycles(n, dt_s);
        let mut x = self.offset_codes + self.amplitude_codes * (TAU * cyc + self.phase_rad).sin();
        for &(h, a, ph) in &self.harmonics {
            let hc = h * cyc;
            x += a * (TAU * (hc - hc.floor()) + ph).sin();
        }
        if let Some((counter, a)) = &self.spur {
            x += a * (TAU * counter.cycles(n, dt_s)).sin();
        }
        x
    }

    /// The static transfer (INL bow) applied to the analog input.
    fn transfer(&self, x: f64) -> f64 {
        if self.inl_bow_lsb == 0.0 {
            return x;
        }
        let u = x / self.full_scale_codes;
        x + self.inl_bow_lsb * (1.0 - u * u)
    }
}

/// Simulates one record. Deterministic: the same settings (seed included) give the same codes.
///
/// Errors (`BadSetting`, naming the key) for bits outside 1..=32, a sample rate that is not positive
/// and finite, a length outside 4..=2^26, a frequency (or spur frequency) outside (0, fs/2), a
/// harmonic order outside 2..=10000, a level above +40 dB, a negative noise or jitter, a jitter above
/// one sample period, or any value that is not finite.
pub fn synthesize(s: &SynthSettings) -> Result<Synthesized> {
    let model = Model::new(s)?;
    let mut noise_rng = ChaCha8Rng::seed_from_u64(s.seed);
    let mut jitter_rng = ChaCha8Rng::seed_from_u64(s.seed);
    jitter_rng.set_stream(1);

    let lo = min_code(s.bits) as f64;
    let hi = max_code(s.bits) as f64;
    let mut codes = Vec::with_capacity(s.samples);
    let mut clipped_samples = 0;
    for n in 0..s.samples {
        let dt_s = if s.jitter_rms_s > 0.0 {
            let z: f64 = StandardNormal.sample(&mut jitter_rng);
            s.jitter_rms_s * z
        } else {
            0.0
        };
        let mut y = model.transfer(model.input_at(n, dt_s));
        if s.noise_rms_codes > 0.0 {
            let z: f64 = StandardNormal.sample(&mut noise_rng);
            y += s.noise_rms_codes * z;
        }
        let q = (y + 0.5).floor();
        // The end transitions of the non-ideal quantiser stay at their ideal places, so clipping
        // (beyond the outer edge of a 1-LSB end code) is counted the same way for both.
        let clipped = q > hi || q < lo;
        if clipped {
            clipped_samples += 1;
        }
        let code = match &model.transitions {
            // Code = lowest code + the number of transition levels at or below y.
            Some(t) => lo + t.partition_point(|&level| level <= y) as f64,
            None => q.clamp(lo, hi),
        };
        codes.push(code as i32);
    }
    Ok(Synthesized {
        record: Record {
            source: format!("synth:{}", s.seed),
            codes,
            sample_rate_hz: s.sample_rate_hz,
            bits: s.bits,
            full_scale_vpp: None,
            values: None,
            fin_hint_hz: Some(model.frequency_hz),
        },
        frequency_hz: model.frequency_hz,
        clipped_samples,
    })
}

/// The transition levels of the simulated quantiser, in codes on the input scale: entry i is the
/// level T at which the output changes from code c − 1 to code c = −2^(N−1) + 1 + i, so there are
/// 2^N − 1 levels. The ideal quantiser has T = c − 0.5.
///
/// With a DNL pattern or missing codes (see [`SynthSettings::dnl_pattern_lsb`]) the inner code widths
/// are 1 + pattern (0 for a missing code), rescaled so that they sum to 2^N − 2; the first level stays
/// at −2^(N−1) + 0.5 and the last at 2^(N−1) − 1.5. The INL bow acts on the input before the
/// quantiser and is not part of these levels.
///
/// Errors (`BadSetting`): bits outside 1..=[`MAX_TRANSITION_TABLE_BITS`], a pattern entry below −1,
/// above 1000 or not finite, a missing code that is not an inner code, or every inner code missing.
pub fn transition_levels(s: &SynthSettings) -> Result<Vec<f64>> {
    if !(1..=MAX_TRANSITION_TABLE_BITS).contains(&s.bits) {
        let key = if s.missing_codes.is_empty() && s.dnl_pattern_lsb.is_empty() {
            "bits"
        } else if s.dnl_pattern_lsb.is_empty() {
            "missing_codes"
        } else {
            "dnl_pattern_lsb"
        };
        return Err(Error::setting(
            key,
            format!(
                "a resolution in 1..={MAX_TRANSITION_TABLE_BITS} bits for a transition-level table"
            ),
            format!("{} bits", s.bits),
        ));
    }
    for &p in &s.dnl_pattern_lsb {
        finite_in(
            "dnl_pattern_lsb",
            p,
            -1.0,
            MAX_DNL_PATTERN_LSB,
            &format!("width errors in −1..={MAX_DNL_PATTERN_LSB} LSB"),
        )?;
    }
    let lo = min_code(s.bits);
    let hi = max_code(s.bits);
    for &c in &s.missing_codes {
        if c <= lo || c >= hi {
            return Err(Error::setting(
                "missing_codes",
                format!(
                    "inner codes in {}..={} (the end codes cannot be missing)",
                    lo + 1,
                    hi - 1
                ),
                c.to_string(),
            ));
        }
    }
    let mut missing = s.missing_codes.clone();
    missing.sort_unstable();
    // Widths of the inner codes lo+1 ..= hi−1, in that order.
    let widths: Vec<f64> = (lo + 1..hi)
        .map(|c| {
            if missing.binary_search(&c).is_ok() {
                0.0
            } else if s.dnl_pattern_lsb.is_empty() {
                1.0
            } else {
                let u = (c - lo) as usize;
                1.0 + s.dnl_pattern_lsb[u % s.dnl_pattern_lsb.len()]
            }
        })
        .collect();
    let inner = widths.len() as f64;
    let total: f64 = widths.iter().sum();
    if inner > 0.0 && total <= 0.0 {
        return Err(Error::setting(
            "missing_codes",
            "at least one inner code of non-zero width",
            "every inner code has zero width",
        ));
    }
    let first = lo as f64 + 0.5;
    let scale = if inner > 0.0 { inner / total } else { 1.0 };
    let mut levels = Vec::with_capacity(widths.len() + 1);
    let mut t = first;
    levels.push(t);
    for w in &widths {
        t += w * scale;
        levels.push(t);
    }
    // Pin the last level exactly (the running sum rounds).
    if let Some(last) = levels.last_mut() {
        *last = hi as f64 - 0.5;
    }
    Ok(levels)
}

/// How [`write_record`] lays out the codes in a file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum OutputLayout {
    /// One signed code per line after one `# ` comment line naming the generator.
    Text,
    /// Raw words, right-justified: two's complement sign-extended to the word, or offset binary
    /// (code + 2^(N−1)) with the upper bits zero.
    Binary {
        /// Bytes per word: 2 or 4.
        word_bytes: usize,
        /// Most significant byte first.
        big_endian: bool,
        /// Offset binary instead of two's complement.
        offset_binary: bool,
    },
}

/// Writes a record's codes to a file in the given layout.
///
/// Errors: `Output` (with the path) when the file cannot be written; `BadSetting` for bits outside
/// 1..=32, a word size other than 2 or 4 bytes, or a word too narrow for the resolution;
/// `CodeOutOfRange` for a code outside the N-bit range.
pub fn write_record(path: &Path, record: &Record, layout: &OutputLayout) -> Result<()> {
    let shown = path.display().to_string();
    let setting = |key: &str, expected: String, found: String| {
        Error::new(
            ErrorKind::BadSetting,
            shown.clone(),
            Location::Key(key.to_string()),
            expected,
            found,
        )
    };
    crate::record::check_bits(record.bits).map_err(|e| e.with_path(&shown))?;
    if let OutputLayout::Binary { word_bytes, .. } = *layout {
        if word_bytes != 2 && word_bytes != 4 {
            return Err(setting(
                "word_bytes",
                "2 or 4 bytes per word".into(),
                word_bytes.to_string(),
            ));
        }
        if record.bits as usize > 8 * word_bytes {
            return Err(setting(
                "word_bytes",
                format!("a word of at least {} bits", record.bits),
                format!("{} bits", 8 * word_bytes),
            ));
        }
    }
    let (lo, hi) = (record.min_code(), record.max_code());
    if let Some((i, c)) = record
        .codes
        .iter()
        .enumerate()
        .find(|&(_, &c)| (c as i64) < lo || (c as i64) > hi)
    {
        return Err(Error::new(
            ErrorKind::CodeOutOfRange,
            shown,
            Location::Whole,
            format!("codes in {lo}..={hi} for {} bits", record.bits),
            format!("code {c} at sample {i}"),
        ));
    }

    let io_error = |e: std::io::Error| {
        Error::new(
            ErrorKind::Output,
            shown.clone(),
            Location::Whole,
            "a writable file",
            e.to_string(),
        )
    };
    let mut w = BufWriter::new(File::create(path).map_err(io_error)?);
    match *layout {
        OutputLayout::Text => {
            let fin = match record.fin_hint_hz {
                Some(f) => format!(", input {f} Hz"),
                None => String::new(),
            };
            writeln!(
                w,
                "# spurline synth: {}, {} bits, sample rate {} Hz{fin}",
                record.source, record.bits, record.sample_rate_hz
            )
            .map_err(io_error)?;
            for &c in &record.codes {
                writeln!(w, "{c}").map_err(io_error)?;
            }
        }
        OutputLayout::Binary {
            word_bytes,
            big_endian,
            offset_binary,
        } => {
            // word_bytes is 2 or 4 here, so the shift cannot overflow.
            let mask = (1u64 << (8 * word_bytes)) - 1;
            let half = 1i64 << (record.bits - 1);
            let mut buf = [0u8; 4];
            for &c in &record.codes {
                let word = if offset_binary {
                    (c as i64 + half) as u64
                } else {
                    (c as i64 as u64) & mask
                };
                let bytes = word.to_le_bytes();
                buf[..word_bytes].copy_from_slice(&bytes[..word_bytes]);
                if big_endian {
                    buf[..word_bytes].reverse();
                }
                w.write_all(&buf[..word_bytes]).map_err(io_error)?;
            }
        }
    }
    w.flush().map_err(io_error)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Slow, obviously correct single-bin DFT: amplitude 2|X_k|/N of the tone at bin k (DFT
    /// definition; a sine of amplitude A at bin k gives |X_k| = A·N/2, common practice).
    fn tone_amplitude(codes: &[i32], k: u64) -> f64 {
        let n = codes.len() as u64;
        let (mut re, mut im) = (0.0, 0.0);
        for (i, &c) in codes.iter().enumerate() {
            // Exact integer reduction of k·i mod N keeps the angle accurate.
            let ph = TAU * ((k * i as u64) % n) as f64 / n as f64;
            re += c as f64 * ph.cos();
            im -= c as f64 * ph.sin();
        }
        2.0 * (re * re + im * im).sqrt() / n as f64
    }

    fn rms(v: impl Iterator<Item = f64>) -> f64 {
        let (mut s, mut n) = (0.0, 0usize);
        for x in v {
            s += x * x;
            n += 1;
        }
        (s / n as f64).sqrt()
    }

    fn key_of(e: &Error) -> String {
        match &e.location {
            Location::Key(k) => k.clone(),
            other => panic!("expected a key location, found {other:?}"),
        }
    }

    #[test]
    fn default_settings_make_the_documented_record() {
        let out = synthesize(&SynthSettings::default()).unwrap();
        // 10.1e6·4096/100e6 = 413.696 → J = 413 (odd, coprime with 4096); 413·100e6/4096 Hz.
        assert_eq!(out.frequency_hz, 413.0 * 100e6 / 4096.0);
        assert_eq!(out.record.fin_hint_hz, Some(out.frequency_hz));
        assert_eq!(out.record.source, "synth:1");
        assert_eq!(out.record.bits, 12);
        assert_eq!(out.record.len(), 4096);
        assert_eq!(out.record.full_scale_vpp, None);
        assert_eq!(out.clipped_samples, 0);
    }

    #[test]
    fn ideal_quantiser_residual_is_q_over_root_12() {
        // Ideal quantisation noise q/√12 for a busy input (Bennett 1948; IEEE Std 1241 ideal ENOB).
        let s = SynthSettings {
            amplitude_dbfs: -0.5,
            ..SynthSettings::default()
        };
        let out = synthesize(&s).unwrap();
        let n = s.samples as u64;
        let j = (out.frequency_hz * s.samples as f64 / s.sample_rate_hz).round() as u64;
        assert_eq!(j, 413);
        let a = 2048.0 * 10f64.powf(-0.5 / 20.0);
        // The exact analog input, computed here from the definition with integer phase reduction.
        let residual = out
            .record
            .codes
            .iter()
            .enumerate()
            .map(|(i, &c)| c as f64 - a * (TAU * ((j * i as u64) % n) as f64 / n as f64).sin());
        let r = rms(residual);
        let ideal = 1.0 / 12f64.sqrt();
        assert!(
            (r / ideal - 1.0).abs() < 0.02,
            "residual rms {r}, ideal {ideal}"
        );
    }

    #[test]
    fn gaussian_noise_adds_in_power() {
        // Independent errors add in variance: σ² + q²/12 (common practice, no source).
        let s = SynthSettings {
            bits: 16,
            samples: 1 << 16,
            noise_rms_codes: 3.0,
            ..SynthSettings::default()
        };
        let out = synthesize(&s).unwrap();
        let quiet = synthesize(&SynthSettings {
            noise_rms_codes: 0.0,
            ..s.clone()
        })
        .unwrap();
        let diff = out
            .record
            .codes
            .iter()
            .zip(&quiet.record.codes)
            .map(|(&a, &b)| (a - b) as f64);
        // Difference of two quantised records: σ² + 2·q²/12 when the quantisation errors are independent.
        let want = (9.0 + 2.0 / 12.0f64).sqrt();
        let got = rms(diff);
        assert!((got / want - 1.0).abs() < 0.03, "rms {got}, want {want}");
    }

    #[test]
    fn determinism_and_seed_dependence() {
        let s = SynthSettings {
            noise_rms_codes: 0.7,
            jitter_rms_s: 2e-12,
            ..SynthSettings::default()
        };
        let a = synthesize(&s).unwrap();
        let b = synthesize(&s).unwrap();
        assert_eq!(a, b);
        let c = synthesize(&SynthSettings {
            seed: 2,
            ..s.clone()
        })
        .unwrap();
        assert_eq!(c.record.source, "synth:2");
        let differing = a
            .record
            .codes
            .iter()
            .zip(&c.record.codes)
            .filter(|(x, y)| x != y)
            .count();
        // With 0.7 codes of noise most samples change; well over a quarter must.
        assert!(differing > s.samples / 4, "only {differing} codes differ");
        // Without noise or jitter the seed changes nothing but the name.
        let d = synthesize(&SynthSettings::default()).unwrap();
        let e = synthesize(&SynthSettings {
            seed: 99,
            ..SynthSettings::default()
        })
        .unwrap();
        assert_eq!(d.record.codes, e.record.codes);
    }

    #[test]
    fn clipping_is_counted_for_an_overdriven_input() {
        // Fraction of a sine's phases with A·sin θ ≥ c is 1/2 − asin(c/A)/π (sine geometry). With J
        // coprime to N the samples hit N equally spaced phases, so the count is within ±1 per edge.
        let s = SynthSettings {
            amplitude_dbfs: 1.0,
            phase_rad: 0.1,
            ..SynthSettings::default()
        };
        let out = synthesize(&s).unwrap();
        let a = 2048.0 * 10f64.powf(1.0 / 20.0);
        let n = s.samples as f64;
        // Above: floor(x + 0.5) > 2047 ⇔ x ≥ 2047.5; below: floor(x + 0.5) < −2048 ⇔ x < −2048.5.
        let expected = n * (0.5 - (2047.5 / a).asin() / std::f64::consts::PI)
            + n * (0.5 - (2048.5 / a).asin() / std::f64::consts::PI);
        let got = out.clipped_samples as f64;
        assert!(
            (got - expected).abs() <= 4.0,
            "clipped {got}, expected {expected}"
        );
        let codes = &out.record.codes;
        assert_eq!(*codes.iter().max().unwrap(), 2047);
        assert_eq!(*codes.iter().min().unwrap(), -2048);
        let at_ends = codes.iter().filter(|&&c| c == 2047 || c == -2048).count();
        assert!(at_ends >= out.clipped_samples);
        // Just inside full scale nothing clips.
        let fine = synthesize(&SynthSettings {
            amplitude_dbfs: -0.1,
            ..s
        })
        .unwrap();
        assert_eq!(fine.clipped_samples, 0);
    }

    #[test]
    fn harmonic_and_spur_levels_match_the_request() {
        // Tone levels measured by a direct DFT sum at coherent bins (DFT definition). At 16 bits the
        // quantisation noise per bin is near 0.006 codes, negligible against the tones below.
        let fs = 100e6;
        let n = 16_384usize;
        let spur_bin = 5_001u64;
        let s = SynthSettings {
            bits: 16,
            samples: n,
            phase_rad: 0.4,
            harmonics_dbc: vec![(2, -60.0), (3, -70.0), (5, -72.0)],
            spur: Some((spur_bin as f64 * fs / n as f64, -65.0)),
            ..SynthSettings::default()
        };
        let out = synthesize(&s).unwrap();
        let j = (out.frequency_hz * n as f64 / fs).round() as u64;
        // 10.1e6·16384/100e6 = 1654.78 → J = 1655.
        assert_eq!(j, 1655);
        let a1 = tone_amplitude(&out.record.codes, j);
        let want_a1 = 32_768.0 * 10f64.powf(-1.0 / 20.0);
        assert!(
            (20.0 * (a1 / want_a1).log10()).abs() < 0.01,
            "fundamental {a1}"
        );
        for &(h, dbc) in &s.harmonics_dbc {
            // H5 at bin 8275 aliases to 16384 − 8275 = 8109; the DFT at 8275 has the same magnitude.
            let ah = tone_amplitude(&out.record.codes, (h as u64 * j) % n as u64);
            let got = 20.0 * (ah / a1).log10();
            assert!((got - dbc).abs() < 0.05, "H{h}: {got} dBc, asked {dbc}");
        }
        let a_spur = tone_amplitude(&out.record.codes, spur_bin);
        let got = 20.0 * (a_spur / a1).log10();
        assert!((got + 65.0).abs() < 0.05, "spur: {got} dBc");
    }

    #[test]
    fn jitter_noise_matches_the_aperture_formula() {
        // Aperture jitter: the error rms is A·2π·f·σ/√2, i.e. SNR = −20·log10(2π·f·σ) (Kester (ed.),
        // Data Conversion Handbook, 2005, aperture jitter; from memory). At 32 bits the codes equal
        // the analog values to ±0.5 code, far below the ≈ 85 codes of jitter error here.
        let s = SynthSettings {
            bits: 32,
            samples: 1 << 16,
            frequency: SynthFrequency::Hz(10e6),
            jitter_rms_s: 1e-12,
            seed: 7,
            ..SynthSettings::default()
        };
        let jittered = synthesize(&s).unwrap();
        let clean = synthesize(&SynthSettings {
            jitter_rms_s: 0.0,
            ..s.clone()
        })
        .unwrap();
        let got = rms(jittered
            .record
            .codes
            .iter()
            .zip(&clean.record.codes)
            .map(|(&a, &b)| a as f64 - b as f64));
        let a = 2f64.powi(31) * 10f64.powf(-1.0 / 20.0);
        let want = a * TAU * 10e6 * 1e-12 / 2f64.sqrt();
        assert!((got / want - 1.0).abs() < 0.05, "rms {got}, want {want}");
        let snr_db = 20.0 * (a / 2f64.sqrt() / got).log10();
        let formula_db = -20.0 * (TAU * 10e6 * 1e-12).log10();
        assert!(
            (snr_db - formula_db).abs() < 0.45,
            "{snr_db} vs {formula_db}"
        );
    }

    #[test]
    fn inl_bow_shifts_mid_scale_and_vanishes_at_the_ends() {
        // With a negligible input (−300 dBFS) every code sits at the transfer's mid-scale value.
        for bow in [5.0, -3.0] {
            let s = SynthSettings {
                amplitude_dbfs: -300.0,
                inl_bow_lsb: bow,
                ..SynthSettings::default()
            };
            let out = synthesize(&s).unwrap();
            assert!(
                out.record.codes.iter().all(|&c| c == bow as i32),
                "bow {bow}"
            );
        }
        // Near the top of the range the bow is 5·(1 − (2047/2048)²) ≈ 0.005 LSB: no shift.
        let top = synthesize(&SynthSettings {
            amplitude_dbfs: -300.0,
            offset_codes: 2047.0,
            inl_bow_lsb: 5.0,
            ..SynthSettings::default()
        })
        .unwrap();
        assert!(top.record.codes.iter().all(|&c| c == 2047));
    }

    #[test]
    fn inl_bow_makes_a_second_harmonic() {
        // sin²θ = (1 − cos 2θ)/2 (trig identity): a bow b on a sine of relative amplitude a adds a
        // second harmonic of b·a²/2 codes and a DC shift of b·(1 − a²/2).
        let bow = 4.0;
        let s = SynthSettings {
            bits: 16,
            samples: 16_384,
            inl_bow_lsb: bow,
            ..SynthSettings::default()
        };
        let out = synthesize(&s).unwrap();
        let j = (out.frequency_hz * s.samples as f64 / s.sample_rate_hz).round() as u64;
        let a = 10f64.powf(-1.0 / 20.0);
        let h2 = tone_amplitude(&out.record.codes, 2 * j);
        let want = bow * a * a / 2.0;
        assert!((h2 / want - 1.0).abs() < 0.03, "H2 {h2}, want {want}");
        let h3 = tone_amplitude(&out.record.codes, 3 * j);
        assert!(h3 < 0.05, "odd harmonic {h3} from an even-order bow");
        let mean = out.record.codes.iter().map(|&c| c as f64).sum::<f64>() / s.samples as f64;
        let want_dc = bow * (1.0 - a * a / 2.0);
        assert!((mean - want_dc).abs() < 0.02, "DC {mean}, want {want_dc}");
    }

    #[test]
    fn cycle_counter_keeps_precision_over_long_records() {
        // Exact reference from rational arithmetic: f/fs = 101/1000 for 10.1 MHz at 100 MHz, so the
        // fractional cycles at sample n are ((101·n) mod 1000)/1000.
        let c = CycleCounter::new(10.1e6, 100e6);
        for n in [
            0usize,
            1,
            999,
            1 << 20,
            (1 << 24) - 1,
            (1 << 26) - 3,
            (1 << 26) - 1,
        ] {
            let exact = ((101 * n as u64) % 1000) as f64 / 1000.0;
            let got = c.cycles(n, 0.0);
            let err = (got - exact).abs().min(1.0 - (got - exact).abs());
            assert!(err < 1e-15, "n {n}: {got} vs {exact}");
        }
        // A coherent frequency at 2^24 samples: J·n/N exactly.
        let n_rec = 1u64 << 24;
        let j = 1_234_567u64;
        let c = CycleCounter::new(j as f64 * 3e8 / n_rec as f64, 3e8);
        for n in [12_345usize, (1 << 24) - 1] {
            let exact = ((j * n as u64) % n_rec) as f64 / n_rec as f64;
            assert!((c.cycles(n, 0.0) - exact).abs() < 1e-15);
        }
    }

    #[test]
    fn bad_settings_name_their_key() {
        let d = SynthSettings::default;
        let cases: Vec<(SynthSettings, &str)> = vec![
            (SynthSettings { bits: 0, ..d() }, "bits"),
            (SynthSettings { bits: 33, ..d() }, "bits"),
            (
                SynthSettings {
                    sample_rate_hz: 0.0,
                    ..d()
                },
                "sample_rate_hz",
            ),
            (
                SynthSettings {
                    sample_rate_hz: f64::NAN,
                    ..d()
                },
                "sample_rate_hz",
            ),
            (SynthSettings { samples: 3, ..d() }, "samples"),
            (
                SynthSettings {
                    samples: MAX_SAMPLES + 1,
                    ..d()
                },
                "samples",
            ),
            (
                SynthSettings {
                    frequency: SynthFrequency::Hz(0.0),
                    ..d()
                },
                "frequency",
            ),
            (
                SynthSettings {
                    frequency: SynthFrequency::Hz(50e6),
                    ..d()
                },
                "frequency",
            ),
            (
                SynthSettings {
                    frequency: SynthFrequency::Hz(f64::NAN),
                    ..d()
                },
                "frequency",
            ),
            (
                SynthSettings {
                    frequency: SynthFrequency::NearestCoherent(-1.0),
                    ..d()
                },
                "frequency",
            ),
            (
                SynthSettings {
                    amplitude_dbfs: f64::NAN,
                    ..d()
                },
                "amplitude_dbfs",
            ),
            (
                SynthSettings {
                    amplitude_dbfs: 41.0,
                    ..d()
                },
                "amplitude_dbfs",
            ),
            (
                SynthSettings {
                    phase_rad: f64::INFINITY,
                    ..d()
                },
                "phase_rad",
            ),
            (
                SynthSettings {
                    offset_codes: f64::NAN,
                    ..d()
                },
                "offset_codes",
            ),
            (
                SynthSettings {
                    noise_rms_codes: -1.0,
                    ..d()
                },
                "noise_rms_codes",
            ),
            (
                SynthSettings {
                    harmonics_dbc: vec![(1, -60.0)],
                    ..d()
                },
                "harmonics_dbc",
            ),
            (
                SynthSettings {
                    harmonics_dbc: vec![(3, f64::NAN)],
                    ..d()
                },
                "harmonics_dbc",
            ),
            (
                SynthSettings {
                    spur: Some((60e6, -70.0)),
                    ..d()
                },
                "spur",
            ),
            (
                SynthSettings {
                    spur: Some((1e6, f64::INFINITY)),
                    ..d()
                },
                "spur",
            ),
            (
                SynthSettings {
                    jitter_rms_s: -1e-12,
                    ..d()
                },
                "jitter_rms_s",
            ),
            (
                SynthSettings {
                    jitter_rms_s: 1e-6,
                    ..d()
                },
                "jitter_rms_s",
            ),
            (
                SynthSettings {
                    inl_bow_lsb: f64::NAN,
                    ..d()
                },
                "inl_bow_lsb",
            ),
        ];
        for (s, key) in cases {
            let e = synthesize(&s).unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting, "{key}");
            assert_eq!(key_of(&e), key);
            assert!(!e.expected.is_empty() && !e.found.is_empty());
        }
    }

    #[test]
    fn settings_round_trip_through_json_and_fill_defaults() {
        let s = SynthSettings {
            harmonics_dbc: vec![(2, -70.0)],
            spur: Some((1e6, -80.0)),
            frequency: SynthFrequency::Hz(3e6),
            ..SynthSettings::default()
        };
        let text = serde_json::to_string(&s).unwrap();
        let back: SynthSettings = serde_json::from_str(&text).unwrap();
        assert_eq!(back, s);
        let partial: SynthSettings =
            serde_json::from_str(r#"{"bits": 16, "frequency": {"nearest_coherent": 1e6}}"#)
                .unwrap();
        assert_eq!(partial.bits, 16);
        assert_eq!(partial.frequency, SynthFrequency::NearestCoherent(1e6));
        assert_eq!(partial.samples, 4096);
        assert!(serde_json::from_str::<SynthSettings>(r#"{"bitz": 16}"#).is_err());
    }

    /// Local reader for the text layout: skip `#` lines, one integer per line.
    fn read_text(path: &Path) -> (String, Vec<i32>) {
        let text = std::fs::read_to_string(path).unwrap();
        let mut lines = text.lines();
        let head = lines.next().unwrap().to_string();
        (head, lines.map(|l| l.trim().parse().unwrap()).collect())
    }

    /// Local reader for the binary layout.
    fn read_binary(
        path: &Path,
        bits: u32,
        word_bytes: usize,
        big_endian: bool,
        ob: bool,
    ) -> Vec<i32> {
        let bytes = std::fs::read(path).unwrap();
        assert_eq!(bytes.len() % word_bytes, 0);
        bytes
            .chunks(word_bytes)
            .map(|w| {
                let mut v: u64 = 0;
                let ordered: Vec<u8> = if big_endian {
                    w.to_vec()
                } else {
                    w.iter().rev().copied().collect()
                };
                for b in ordered {
                    v = (v << 8) | b as u64;
                }
                if ob {
                    (v as i64 - (1i64 << (bits - 1))) as i32
                } else {
                    let width = 8 * word_bytes as u32;
                    // Sign-extend from the word width.
                    ((v << (64 - width)) as i64 >> (64 - width)) as i32
                }
            })
            .collect()
    }

    #[test]
    fn text_layout_round_trips() {
        let dir = tempfile::tempdir().unwrap();
        let out = synthesize(&SynthSettings {
            amplitude_dbfs: 0.5,
            noise_rms_codes: 2.0,
            ..SynthSettings::default()
        })
        .unwrap();
        let path = dir.path().join("record.txt");
        write_record(&path, &out.record, &OutputLayout::Text).unwrap();
        let (head, codes) = read_text(&path);
        assert!(head.starts_with("# spurline synth"), "{head}");
        assert_eq!(codes, out.record.codes);
    }

    #[test]
    fn binary_layouts_round_trip() {
        let dir = tempfile::tempdir().unwrap();
        for bits in [12u32, 16, 32] {
            let out = synthesize(&SynthSettings {
                bits,
                amplitude_dbfs: 0.5,
                noise_rms_codes: 2.0,
                ..SynthSettings::default()
            })
            .unwrap();
            assert!(out.clipped_samples > 0, "both range ends should appear");
            for word_bytes in [2usize, 4] {
                if bits as usize > 8 * word_bytes {
                    continue;
                }
                for big_endian in [false, true] {
                    for offset_binary in [false, true] {
                        let path = dir.path().join("record.bin");
                        let layout = OutputLayout::Binary {
                            word_bytes,
                            big_endian,
                            offset_binary,
                        };
                        write_record(&path, &out.record, &layout).unwrap();
                        let back = read_binary(&path, bits, word_bytes, big_endian, offset_binary);
                        assert_eq!(back, out.record.codes, "{layout:?} at {bits} bits");
                    }
                }
            }
        }
    }

    #[test]
    fn binary_words_have_the_documented_bytes() {
        // Two's complement and offset binary encodings (common practice, no source):
        // −2 at 12 bits is 0xFFFE sign-extended, or 2046 = 0x07FE in offset binary.
        let dir = tempfile::tempdir().unwrap();
        let record = Record {
            source: "test".into(),
            codes: vec![-2, 2047, -2048],
            sample_rate_hz: 1.0,
            bits: 12,
            full_scale_vpp: None,
            values: None,
            fin_hint_hz: None,
        };
        let path = dir.path().join("w.bin");
        let cases: [(usize, bool, bool, Vec<u8>); 4] = [
            (2, true, false, vec![0xFF, 0xFE, 0x07, 0xFF, 0xF8, 0x00]),
            (2, false, false, vec![0xFE, 0xFF, 0xFF, 0x07, 0x00, 0xF8]),
            (2, true, true, vec![0x07, 0xFE, 0x0F, 0xFF, 0x00, 0x00]),
            (
                4,
                false,
                true,
                vec![0xFE, 0x07, 0, 0, 0xFF, 0x0F, 0, 0, 0, 0, 0, 0],
            ),
        ];
        for (word_bytes, big_endian, offset_binary, want) in cases {
            let layout = OutputLayout::Binary {
                word_bytes,
                big_endian,
                offset_binary,
            };
            write_record(&path, &record, &layout).unwrap();
            assert_eq!(std::fs::read(&path).unwrap(), want, "{layout:?}");
        }
    }

    #[test]
    fn write_errors_carry_the_path() {
        let dir = tempfile::tempdir().unwrap();
        let out = synthesize(&SynthSettings::default()).unwrap();
        let missing = dir.path().join("no-such-folder").join("r.txt");
        let e = write_record(&missing, &out.record, &OutputLayout::Text).unwrap_err();
        assert_eq!(e.kind, ErrorKind::Output);
        assert_eq!(e.path, missing.display().to_string());

        let path = dir.path().join("r.bin");
        let odd = OutputLayout::Binary {
            word_bytes: 3,
            big_endian: false,
            offset_binary: false,
        };
        let e = write_record(&path, &out.record, &odd).unwrap_err();
        assert_eq!(
            (e.kind, key_of(&e)),
            (ErrorKind::BadSetting, "word_bytes".to_string())
        );

        let wide = synthesize(&SynthSettings {
            bits: 17,
            ..SynthSettings::default()
        })
        .unwrap();
        let narrow = OutputLayout::Binary {
            word_bytes: 2,
            big_endian: false,
            offset_binary: true,
        };
        let e = write_record(&path, &wide.record, &narrow).unwrap_err();
        assert_eq!(key_of(&e), "word_bytes");

        let mut bad = out.record.clone();
        bad.codes[10] = 4096;
        let e = write_record(&path, &bad, &OutputLayout::Text).unwrap_err();
        assert_eq!(e.kind, ErrorKind::CodeOutOfRange);
        assert!(
            e.found.contains("4096") && e.found.contains("sample 10"),
            "{}",
            e.found
        );

        bad.bits = 0;
        let e = write_record(&path, &bad, &OutputLayout::Text).unwrap_err();
        assert_eq!(key_of(&e), "bits");
    }

    #[test]
    fn transition_levels_of_the_ideal_and_patterned_quantisers() {
        // Ideal mid-tread quantiser: floor(y + 0.5) = c for c − 0.5 ≤ y < c + 0.5 (definition above).
        let ideal = transition_levels(&SynthSettings {
            bits: 4,
            ..SynthSettings::default()
        })
        .unwrap();
        let want: Vec<f64> = (-7..=7).map(|c| c as f64 - 0.5).collect();
        assert_eq!(ideal, want);
        // 4 bits, pattern [0.2, −0.2], code 3 missing. Inner codes −7..=6 have offset-binary values
        // u = 1..=14: odd u (c = −7, −5, ..., 5) get 0.8, even u get 1.2, code 3 (u = 11) gets 0.
        // Sum = 7·1.2 + 6·0.8 = 13.2, rescaled to the 14 LSB between the end levels.
        let s = SynthSettings {
            bits: 4,
            dnl_pattern_lsb: vec![0.2, -0.2],
            missing_codes: vec![3],
            ..SynthSettings::default()
        };
        let t = transition_levels(&s).unwrap();
        assert_eq!(t.len(), 15);
        assert_eq!(t[0], -7.5);
        assert_eq!(t[14], 6.5);
        let scale = 14.0 / 13.2;
        for c in -7i64..=6 {
            let i = (c + 7) as usize; // level below code c is t[i]
            let width = t[i + 1] - t[i];
            let u = c + 8;
            let want = if c == 3 {
                0.0
            } else if u % 2 == 1 {
                0.8 * scale
            } else {
                1.2 * scale
            };
            assert!((width - want).abs() < 1e-12, "code {c}: {width} vs {want}");
        }
    }

    #[test]
    fn patterned_quantiser_puts_each_sample_between_its_levels() {
        // Every output code c must satisfy T(c) ≤ x < T(c+1) for the exact analog input x, computed
        // here from the definition with integer phase reduction (J coprime with N).
        let s = SynthSettings {
            bits: 6,
            amplitude_dbfs: 1.0,
            dnl_pattern_lsb: vec![0.3, -0.25, 0.1],
            missing_codes: vec![-20, 7],
            ..SynthSettings::default()
        };
        let out = synthesize(&s).unwrap();
        let t = transition_levels(&s).unwrap();
        let n = s.samples as u64;
        let j = (out.frequency_hz * s.samples as f64 / s.sample_rate_hz).round() as u64;
        let a = 32.0 * 10f64.powf(1.0 / 20.0);
        for (i, &c) in out.record.codes.iter().enumerate() {
            let x = a * (TAU * ((j * i as u64) % n) as f64 / n as f64).sin();
            let k = (c + 32) as usize; // offset-binary value
            if k > 0 {
                assert!(t[k - 1] <= x, "sample {i}: code {c} below its level");
            }
            if k < t.len() {
                assert!(x < t[k], "sample {i}: code {c} above its level");
            }
        }
        assert!(!out.record.codes.contains(&-20) && !out.record.codes.contains(&7));
        assert!(out.clipped_samples > 0);
        // With nothing set the quantiser is the ideal one: same codes as the default path.
        let plain = synthesize(&SynthSettings {
            bits: 6,
            amplitude_dbfs: 1.0,
            ..SynthSettings::default()
        })
        .unwrap();
        let via_table = synthesize(&SynthSettings {
            bits: 6,
            amplitude_dbfs: 1.0,
            dnl_pattern_lsb: vec![0.0],
            ..SynthSettings::default()
        })
        .unwrap();
        assert_eq!(plain.record.codes, via_table.record.codes);
        assert_eq!(plain.clipped_samples, via_table.clipped_samples);
    }

    #[test]
    fn static_nonlinearity_settings_are_checked_and_stay_out_of_old_sidecars() {
        let d = SynthSettings::default;
        let cases: Vec<(SynthSettings, &str)> = vec![
            (
                SynthSettings {
                    dnl_pattern_lsb: vec![0.1, -1.5],
                    ..d()
                },
                "dnl_pattern_lsb",
            ),
            (
                SynthSettings {
                    dnl_pattern_lsb: vec![f64::NAN],
                    ..d()
                },
                "dnl_pattern_lsb",
            ),
            (
                SynthSettings {
                    missing_codes: vec![-2048],
                    ..d()
                },
                "missing_codes",
            ),
            (
                SynthSettings {
                    missing_codes: vec![2047],
                    ..d()
                },
                "missing_codes",
            ),
            (
                SynthSettings {
                    bits: 24,
                    dnl_pattern_lsb: vec![0.1],
                    ..d()
                },
                "dnl_pattern_lsb",
            ),
            (
                SynthSettings {
                    bits: 2,
                    missing_codes: vec![-1, 0],
                    ..d()
                },
                "missing_codes",
            ),
        ];
        for (s, key) in cases {
            let e = synthesize(&s).unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting, "{key}");
            assert_eq!(key_of(&e), key);
        }
        // A −1 entry is a zero-width code, like a missing one.
        let t = transition_levels(&SynthSettings {
            bits: 3,
            dnl_pattern_lsb: vec![-1.0, 0.0],
            ..d()
        })
        .unwrap();
        // Inner codes u = 1..=6: even u have width 0; three codes of width 1 rescaled to 6 LSB.
        assert_eq!(t[1] - t[0], 2.0);
        assert_eq!(t[2] - t[1], 0.0);
        // Default settings serialise without the new keys, as before they existed.
        let text = serde_json::to_string(&d()).unwrap();
        assert!(!text.contains("dnl_pattern_lsb") && !text.contains("missing_codes"));
        let back: SynthSettings = serde_json::from_str(
            r#"{"bits": 8, "dnl_pattern_lsb": [0.1, -0.1], "missing_codes": [5]}"#,
        )
        .unwrap();
        assert_eq!(back.dnl_pattern_lsb, vec![0.1, -0.1]);
        assert_eq!(back.missing_codes, vec![5]);
    }
}
