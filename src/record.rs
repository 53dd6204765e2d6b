//! The record: signed output codes centred on mid-scale (or values with no code grid, scaled to the same
//! full scale), plus what is known about how they were taken.

use serde::Serialize;

use crate::error::{Error, Result};

/// Lowest sample rate accepted, hertz (one sample in about 12 days).
pub const MIN_SAMPLE_RATE_HZ: f64 = 1e-6;
/// Highest sample rate accepted, hertz: far above any converter (tens of GS/s), and low enough that every
/// product of a frequency with a record length or cycle count stays finite (f64::MAX overflowed them).
pub const MAX_SAMPLE_RATE_HZ: f64 = 1e15;

/// Rejects a sample rate outside [`MIN_SAMPLE_RATE_HZ`]..=[`MAX_SAMPLE_RATE_HZ`] (NaN included);
/// `hint` is appended to what was expected.
pub(crate) fn check_sample_rate(sample_rate_hz: f64, hint: &str) -> Result<()> {
    if (MIN_SAMPLE_RATE_HZ..=MAX_SAMPLE_RATE_HZ).contains(&sample_rate_hz) {
        Ok(())
    } else {
        // Far outside the range, plain notation would print hundreds of digits.
        let v = sample_rate_hz;
        let found = if v.is_finite() && v != 0.0 && !(1e-6..1e16).contains(&v.abs()) {
            format!("{v:e}")
        } else {
            v.to_string()
        };
        Err(Error::setting(
            "sample_rate_hz",
            format!("a sample rate in {MIN_SAMPLE_RATE_HZ:e}..={MAX_SAMPLE_RATE_HZ:e} Hz{hint}"),
            found,
        ))
    }
}

/// Fewest and most bits of a converter's resolution.
pub const BITS_RANGE: std::ops::RangeInclusive<u32> = 1..=32;

/// Rejects a resolution outside [`BITS_RANGE`] (1..=32 bits): the one check every reader, the
/// simulators and the analysis share, so that a record built in code cannot reach a shift by
/// `bits − 1` that panics.
pub(crate) fn check_bits(bits: u32) -> Result<()> {
    if BITS_RANGE.contains(&bits) {
        Ok(())
    } else {
        Err(Error::setting(
            "bits",
            "a resolution of 1..=32 bits",
            bits.to_string(),
        ))
    }
}

/// How the converter encodes codes in its output words.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Coding {
    /// Two's complement: mid-scale is 0.
    TwosComplement,
    /// Offset binary: mid-scale is 2^(N-1); converted to signed at ingest.
    OffsetBinary,
}

impl std::str::FromStr for Coding {
    type Err = Error;

    /// `twos` or `twos_complement`, `offset` or `offset_binary` (the sidecar's spelling is the long
    /// one). Errors: [`crate::error::ErrorKind::BadSetting`] on key `coding`.
    fn from_str(s: &str) -> Result<Coding> {
        match s {
            "twos" | "twos_complement" => Ok(Coding::TwosComplement),
            "offset" | "offset_binary" => Ok(Coding::OffsetBinary),
            other => Err(Error::setting(
                "coding",
                "one of twos, twos_complement, offset, offset_binary",
                format!("{other:?}"),
            )),
        }
    }
}

/// Resolution on which a record of values given without `--bits` is analysed: figures in codes are
/// then in units of 2^-16 of the full-scale range. Every figure in dB and the spectral ENOB do not
/// depend on it; the fit ENOB, which would, is left out.
pub const NOMINAL_BITS: u32 = 16;

/// Samples with no code grid (voltages, floats), held instead of codes.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Values {
    /// The samples in codes of the record's `bits`: the full-scale range spans 2^N codes and 0 (volts
    /// or units) is mid-scale, so a full-scale sine has peak amplitude 2^(N-1), as for codes.
    #[serde(skip)]
    pub scaled: Vec<f64>,
    /// Whether the record's `bits` is the converter's resolution as given; false: the nominal
    /// [`NOMINAL_BITS`] of an analogue view (no fit ENOB, `bits` reported as 0).
    pub bits_given: bool,
}

/// One captured record of converter output codes.
///
/// Codes are signed and centred on mid-scale: an N-bit record holds codes in
/// `-2^(N-1) ..= 2^(N-1) - 1`. A full-scale sine has peak amplitude 2^(N-1) codes (0 dBFS).
/// A record of values (voltages, floats) has no codes: `values` holds its samples on the same scale.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Record {
    /// Where the record came from (file path or a generated name).
    pub source: String,
    /// The codes, signed, centred on mid-scale; empty for a record of values.
    #[serde(skip)]
    pub codes: Vec<i32>,
    /// The samples of a record of values (no code grid); `None` for a record of codes.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub values: Option<Values>,
    /// Sample rate in hertz.
    pub sample_rate_hz: f64,
    /// Converter resolution N in bits (1..=32).
    pub bits: u32,
    /// Full-scale range in volts peak-to-peak, when known.
    pub full_scale_vpp: Option<f64>,
    /// The expected input frequency, when known (a hint for the fit, or the frequency of a 3-parameter fit).
    pub fin_hint_hz: Option<f64>,
}

impl Record {
    /// Lowest code of the N-bit range: -2^(N-1).
    pub fn min_code(&self) -> i64 {
        min_code(self.bits)
    }
    /// Highest code of the N-bit range: 2^(N-1) - 1.
    pub fn max_code(&self) -> i64 {
        max_code(self.bits)
    }
    /// Peak amplitude of a 0 dBFS sine, in codes: 2^(N-1).
    pub fn full_scale_amplitude_codes(&self) -> f64 {
        full_scale_amplitude_codes(self.bits)
    }
    /// Number of samples.
    pub fn len(&self) -> usize {
        match &self.values {
            Some(v) => v.scaled.len(),
            None => self.codes.len(),
        }
    }
    /// True when the record holds no samples.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
    /// The samples as f64 in codes of `bits`: the codes, or the scaled values.
    pub fn samples_f64(&self) -> Vec<f64> {
        match &self.values {
            Some(v) => v.scaled.clone(),
            None => self.codes.iter().map(|&c| f64::from(c)).collect(),
        }
    }
    /// Whether the samples sit on a code grid (a record of codes, not of values).
    pub fn has_codes(&self) -> bool {
        self.values.is_none()
    }
    /// The resolution as reported: `bits`, or 0 for a record of values given without one.
    pub fn bits_reported(&self) -> u32 {
        match &self.values {
            Some(v) if !v.bits_given => 0,
            _ => self.bits,
        }
    }
}

/// Lowest signed code of an N-bit converter.
pub fn min_code(bits: u32) -> i64 {
    -(1i64 << (bits - 1))
}

/// Highest signed code of an N-bit converter.
pub fn max_code(bits: u32) -> i64 {
    (1i64 << (bits - 1)) - 1
}

/// Peak amplitude of a 0 dBFS sine for N bits: 2^(N-1) codes.
pub fn full_scale_amplitude_codes(bits: u32) -> f64 {
    2f64.powi(bits as i32 - 1)
}

/// Power of a 0 dBFS sine in codes²: (2^(N-1))² / 2.
pub fn full_scale_power(bits: u32) -> f64 {
    let a = full_scale_amplitude_codes(bits);
    a * a / 2.0
}
