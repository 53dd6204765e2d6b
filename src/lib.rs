//! spurline: dynamic performance of analog-to-digital converters from captured output codes.
//!
//! The stages are `ingest` → `fit` → `spectrum` → `report`, each a module with a plain-data result.
//!
//! # Conventions
//! - Units are in names: `_hz`, `_s`, `_db`, `_dbfs`, `_dbc`, `_bits`, `_codes`, `_lsb`. Sample index n
//!   starts at 0 and t = n / fs.
//! - Codes are signed integers centred on mid-scale (offset binary is converted at ingest). For N bits the
//!   full-scale range is 2^N codes, a full-scale sine has peak amplitude 2^(N-1) codes and is 0 dBFS.
//!   Ideal quantisation noise is q/√12 with q = 1 code.
//! - Windows are the periodic (DFT-even) form. Bin powers are scaled by N·Σw² (one-sided, doubled for
//!   0 < k < N/2) so that the power summed over a tone's bins equals A²/2 and noise sums need no ENBW factor.
//! - Bin claiming order: DC, the tones (the fundamental; f1 and f2), then the lines derived from them
//!   (harmonics 2..H; IM products; interleaving images) folded into the first Nyquist zone; the rest is
//!   noise, among which spurs are searched. A bin is never counted twice; a line landing on DC, a tone or
//!   an earlier line is reported as masked. One engine does this for every analysis
//!   (`spectrum::claim`). The noise hidden under claimed bins is estimated from the mean noise
//!   bin and added back, so the noise figure covers the whole band 0..fs/2.
//! - ENOB comes in three forms, always labelled: spectral (SINAD − 1.76)/6.02, full-scale-referred (SINAD
//!   referred to a 0 dBFS input), and the IEEE 1241 fit form N − log2(residual_rms / (q/√12)).
//! - Same inputs and settings give byte-identical CSV and JSON, whatever the thread count.
#![deny(missing_docs)]

mod error;
mod record;

pub mod analyses;
pub mod analysis;
pub mod dft;
pub mod figures;
pub mod fit;
pub mod freq;
pub mod ingest;
pub mod lot;
pub mod plan;
pub mod report;
pub mod spectrum;
pub mod stats;
pub mod synth;
pub mod verify;

pub use error::{Error, ErrorKind, Location, Result};
pub use record::{
    full_scale_amplitude_codes, full_scale_power, max_code, min_code, Coding, Record,
};
