//! Every tolerance used by the integration tests, in one place, each with its justification.

/// dB agreement between the spectral figures and the exact time-domain error power of the same record:
/// the only differences are the noise hidden under claimed spans (estimated from the mean noise bin) and
/// rounding, which stay well below 0.01 dB for 4096+ point records.
pub const SELF_CONSISTENCY_DB: f64 = 0.02;

/// dB agreement with a handbook figure that holds on average over records (6.02N + 1.76, −SNR −
/// 10·log10(N/2)): one record's quantisation-noise power differs from q²/12 by a few percent
/// (about ±0.1 dB at 4096 points, more for low resolutions where the error is less uniform).
pub const HANDBOOK_DB: f64 = 0.25;

/// ENOB agreement with a handbook figure: HANDBOOK_DB / 6.02 rounded up.
pub const HANDBOOK_BITS: f64 = 0.05;

/// dB agreement of a recovered harmonic with the level put in, on a coherent high-resolution record
/// where the harmonic is 40+ dB above the noise in its bin (noise bias below 0.01 dB plus the
/// quantiser's own harmonic content).
pub const HARMONIC_DB: f64 = 0.05;

/// dB agreement of windowed, non-coherent figures with the coherent figures of the same converter:
/// the window's leakage bias (kept below 0.1 dB by the window rule) plus record-to-record noise.
pub const WINDOWED_DB: f64 = 0.3;
