//! cargo-fuzz target: the whole analysis on arbitrary records. The first eight bytes pick the
//! resolution, the sample rate, the frequency hint, the fit, the window, the harmonic count and the span
//! guard; the rest are the codes, 16-bit words wrapped into the N-bit range (at most 8192 samples).
//! Nothing may panic and no output may hold a NaN or an infinity.
#![no_main]

use libfuzzer_sys::fuzz_target;
use spurline::{analyze, Analysis, AnalysisSettings, FitChoice};
use spurline::{SpectrumSettings, Window, WindowChoice};
use spurline::Record;

#[allow(dead_code)]
#[path = "../../tests/fuzz_props/invariants.rs"]
mod invariants;

const RATES: [f64; 8] = [1.0, 1e6, 100e6, 3.7e9, 1e-3, 1e-300, 1e300, 5e-324];
const HINTS: [Option<f64>; 8] = [
    None,
    None,
    None,
    Some(0.1),
    Some(0.25),
    Some(0.5),
    Some(1e-9),
    Some(0.49),
];
const WINDOWS: [Window; 8] = [
    Window::Rectangular,
    Window::Hann,
    Window::BlackmanHarris4,
    Window::BlackmanHarris7,
    Window::Hft90d,
    Window::Hft144d,
    Window::FlatTop,
    Window::Kaiser { beta: 9.0 },
];
const GUARDS: [Option<usize>; 4] = [None, Some(0), Some(3), Some(100_000)];

fuzz_target!(|data: &[u8]| {
    let [b, r, h, f, w, k, g, _, rest @ ..] = data else {
        return;
    };
    let bits = u32::from(b % 32) + 1;
    let fs = RATES[usize::from(r % 8)];
    let settings = AnalysisSettings {
        fit: if f & 1 == 0 {
            FitChoice::Four
        } else {
            FitChoice::Three
        },
        spectrum: SpectrumSettings {
            window: if w & 0x80 == 0 {
                WindowChoice::Auto
            } else {
                WindowChoice::Fixed(WINDOWS[usize::from(w % 8)])
            },
            harmonics: u32::from(k % 100) + 1,
            guard_bins: GUARDS[usize::from(g % 4)],
        },
        min_samples: 0,
    };
    // Wrap each 16-bit word into the N-bit range: keep its low N bits as a signed field.
    let codes: Vec<i32> = rest
        .chunks_exact(2)
        .take(8192)
        .map(|p| {
            let v = i64::from(i16::from_le_bytes([p[0], p[1]]));
            let shift = 64 - bits;
            ((v << shift) >> shift) as i32
        })
        .collect();
    let record = Record {
        source: "fuzz record".to_string(),
        codes,
        sample_rate_hz: fs,
        bits,
        full_scale_vpp: None,
        fin_hint_hz: HINTS[usize::from(h % 8)].map(|x| x * fs),
    };
    match analyze(&record, &settings) {
        Ok(m) => {
            let a = m.analysis;
            a.warnings.iter().for_each(|w| invariants::no_nan_words(w));
            invariants::check_outputs(&a, std::slice::from_ref(&a));
        }
        Err(e) => {
            assert_eq!(e.path, "fuzz record", "{e:?}");
            invariants::no_nan_words(&e.to_string());
            let failed = Analysis::failed("fuzz record", &e, Vec::new());
            invariants::check_outputs(&failed, std::slice::from_ref(&failed));
        }
    }
});
