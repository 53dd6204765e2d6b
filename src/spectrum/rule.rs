//! The window rule (`--window auto`) and the bins each tone gets under a window.
//!
//! A coherent record (see [`super::coherence`]) is analysed unwindowed: each tone then sits in one bin.
//! A non-coherent record gets the first window of the ladder Hann → 4-term Blackman-Harris → 7-term
//! Blackman-Harris whose worst-case leakage (tone half a bin off, power outside the tone's bins) lies
//! 16.4 dB below the ideal quantisation noise expected at the record's resolution and amplitude; 16.4 dB
//! below is what keeps the SNR bias under 0.1 dB. So the 4-term Blackman-Harris (about −87 dBc outside
//! its bins) serves up to about 11 bits, and 12- to 20-bit records get the 7-term Blackman-Harris.

use super::metrics::{DB_PER_BIT, SINE_CREST_DB};
use crate::dft::fft::power_spectrum;
use crate::dft::Window;

/// How the window is chosen.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum WindowChoice {
    /// By the window rule: rectangular for a coherent record, else the narrowest window whose
    /// leakage stays below the expected noise.
    Auto,
    /// Always this window.
    Fixed(Window),
}

impl std::str::FromStr for WindowChoice {
    type Err = crate::error::Error;

    /// `auto` (any case), or a window id as [`Window`]'s `FromStr` takes it. Errors:
    /// [`crate::error::ErrorKind::BadSetting`] on key `window`, naming `auto` beside the windows.
    fn from_str(s: &str) -> crate::error::Result<WindowChoice> {
        if s.trim().eq_ignore_ascii_case("auto") {
            return Ok(WindowChoice::Auto);
        }
        s.parse()
            .map(WindowChoice::Fixed)
            .map_err(|e: crate::error::Error| crate::error::Error {
                expected: format!("auto or {}", e.expected),
                ..e
            })
    }
}

/// Margin below the expected noise that a window's leakage must keep to bias SNR by < 0.1 dB:
/// 10·log10(10^(0.1/10) − 1) = −16.33 dB, rounded out.
pub const LEAKAGE_MARGIN_DB: f64 = 16.4;
/// The windows `auto` may pick for non-coherent records, narrowest first.
pub const AUTO_LADDER: [Window; 3] = [
    Window::Hann,
    Window::BlackmanHarris4,
    Window::BlackmanHarris7,
];

/// Most guard bins a tone may get on each side (`--guard-bins`, key `guard_bins`). No window needs
/// more than a handful beyond its main lobe; 1000 on each side of every tone and harmonic would claim
/// most of any record shorter than 2^16 samples, so a larger value is a slip, not a choice.
pub const MAX_GUARD_BINS: usize = 1000;

/// Checks a guard-bin count against 0..=[`MAX_GUARD_BINS`].
///
/// Errors: [`crate::error::ErrorKind::BadSetting`] on key `guard_bins`, naming the range.
pub fn check_guard_bins(guard: Option<usize>) -> crate::error::Result<()> {
    match guard {
        Some(g) if g > MAX_GUARD_BINS => Err(crate::error::Error::setting(
            "guard_bins",
            format!("a guard-bin count in 0..={MAX_GUARD_BINS}"),
            g.to_string(),
        )),
        _ => Ok(()),
    }
}

/// Half-width of the bins given to each tone (main lobe plus guard bins) for a window.
pub fn tone_halfwidth(window: Window, coherent: bool, guard: Option<usize>) -> usize {
    let null = window.null_halfwidth_bins();
    let guard = guard.unwrap_or(if coherent { 0 } else { 1 });
    // A coherent tone under a K-term cosine sum occupies exactly k0 ± (K−1).
    let lobe = match (coherent, window.coefficients()) {
        (true, Some(a)) => a.len() - 1,
        _ => null.ceil() as usize,
    };
    // Saturating: callers check the guard first, but a half-width must never wrap.
    lobe.saturating_add(guard)
}

/// Ideal quantisation SNR of an N-bit converter for a sine at `amplitude_dbfs`: 6.02N + 1.76 dB + level.
pub fn ideal_snr_db(bits: u32, amplitude_dbfs: f64) -> f64 {
    DB_PER_BIT * bits as f64 + SINE_CREST_DB + amplitude_dbfs
}

/// Picks the window, and says why.
pub fn choose_window(
    choice: WindowChoice,
    coherent: bool,
    bits: u32,
    amplitude_dbfs: f64,
    guard: Option<usize>,
) -> (Window, String) {
    match choice {
        WindowChoice::Fixed(w) => (w, "given".to_string()),
        WindowChoice::Auto if coherent => (
            Window::Rectangular,
            "auto: coherent record, no window needed".to_string(),
        ),
        WindowChoice::Auto => {
            let need = -(ideal_snr_db(bits, amplitude_dbfs.min(0.0)) + LEAKAGE_MARGIN_DB);
            for w in AUTO_LADDER {
                let leak = w.leakage(0.5, tone_halfwidth(w, false, guard));
                if leak.outside_tone_bins_dbc.is_none_or(|l| l <= need) {
                    return (
                        w,
                        format!(
                            "auto: non-coherent record; worst-case leakage {} dBc is below the {need:.1} dBc that {bits}-bit quantisation noise allows",
                            leak.outside_tone_bins_dbc.map_or("< -300".to_string(), |l| format!("{l:.1}"))
                        ),
                    );
                }
            }
            let w = *AUTO_LADDER.last().expect("ladder is not empty");
            (
                w,
                format!("auto: non-coherent record; no offered window leaks less than the {need:.1} dBc that {bits}-bit noise allows, so leakage may bias the figures: use a coherent record"),
            )
        }
    }
}

/// The window of a one-record multi-tone analysis and the record's bin powers under it. `rect` is the
/// record's unwindowed power spectrum (already taken for the coherence check), reused when the rule
/// picks no window. Returns (window, why, tone half-width, powers).
pub(crate) fn window_and_powers(
    y: &[f64],
    rect: Vec<f64>,
    choice: WindowChoice,
    coherent: bool,
    bits: u32,
    level_dbfs: f64,
    guard: Option<usize>,
) -> (Window, String, usize, Vec<f64>) {
    let (window, reason) = choose_window(choice, coherent, bits, level_dbfs, guard);
    let half = tone_halfwidth(window, coherent, guard);
    let powers = if window == Window::Rectangular {
        rect
    } else {
        power_spectrum(y, &window.samples_shared(y.len()))
    };
    (window, reason, half, powers)
}
