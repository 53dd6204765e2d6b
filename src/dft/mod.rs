//! The discrete Fourier transform and its windows: real FFTs (one planner per thread) and the window
//! table. The fit uses them to locate a tone, the spectrum to measure one; they depend on neither.

pub mod fft;
pub mod window;

pub use window::*;
