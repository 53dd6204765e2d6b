//! The other analyses of a record, beside the one-tone pipeline: two-tone intermodulation, channel
//! mismatch of interleaved converters, and the code-density (histogram) linearity test.

pub mod imd;
pub mod interleave;
pub mod linearity;
