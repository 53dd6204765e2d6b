//! Spectral analysis: windows, and (later) tone bins and spectral metrics.

pub mod window;

pub use window::*;
