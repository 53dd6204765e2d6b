//! The record: signed output codes centred on mid-scale, plus what is known about how they were taken.

use serde::Serialize;

/// How the converter encodes codes in its output words.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Coding {
    /// Two's complement: mid-scale is 0.
    TwosComplement,
    /// Offset binary: mid-scale is 2^(N-1); converted to signed at ingest.
    OffsetBinary,
}

/// One captured record of converter output codes.
///
/// Codes are signed and centred on mid-scale: an N-bit record holds codes in
/// `-2^(N-1) ..= 2^(N-1) - 1`. A full-scale sine has peak amplitude 2^(N-1) codes (0 dBFS).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Record {
    /// Where the record came from (file path or a generated name).
    pub source: String,
    /// The codes, signed, centred on mid-scale.
    #[serde(skip)]
    pub codes: Vec<i32>,
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
        self.codes.len()
    }
    /// True when the record holds no samples.
    pub fn is_empty(&self) -> bool {
        self.codes.is_empty()
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
