//! Starting frequency for the four-parameter fit: the Hann-windowed FFT peak refined by the exact
//! three-bin Hann interpolator.

use crate::dft::fft::real_fft;
use crate::dft::Window;
use crate::error::{Error, ErrorKind, Location, Result};

/// Longest stretch used to locate the tone. The Hann three-bin interpolator is exact for a lone tone, so
/// noise and neighbouring harmonics leave it within ~1e-3 of a bin of 2^14 samples, under 0.1 bin of a
/// 2^20 record: inside Gauss-Newton's reach, at a small part of the cost of a full-length FFT. Tones
/// within a few bins of DC in that stretch are located on the whole record instead.
pub(crate) const START_LEN: usize = 1 << 14;

/// Tone-to-median bin power ratio below which a record is said to hold no tone (40 dB: white noise alone
/// rarely puts a bin 12 dB over the median). Common practice, no source.
const NO_TONE_RATIO: f64 = 1e4;

/// Bins sampled for the median level of the no-tone test.
const MEDIAN_BINS: usize = 1024;

/// Estimates the frequency of the strongest tone in cycles per sample.
///
/// With a hint (cycles per sample, folded into the first Nyquist zone 0..=0.5) the peak is looked for
/// within a few bins of it only.
/// The three-bin interpolator δ = 2(|X₊|−|X₋|)/(|X₋|+2|X₀|+|X₊|) is exact for a lone tone under the Hann
/// window (it follows from the Hann kernel's closed form).
pub fn estimate_frequency(y: &[f64], hint_cycles_per_sample: Option<f64>) -> Result<f64> {
    // A hint above fs/2 (an undersampled input) names the alias in the first Nyquist zone; folding it
    // there also keeps the search window inside the spectrum. A non-finite hint is no hint.
    let hint_cycles_per_sample = hint_cycles_per_sample
        .map(|h| crate::freq::fold_to_first_zone(h, 1.0))
        .filter(|h| h.is_finite());
    if y.len() > START_LEN {
        if let Ok(f) = locate(&y[..START_LEN], hint_cycles_per_sample, y.len()) {
            if f * START_LEN as f64 >= 8.0 {
                return Ok(f);
            }
        }
    }
    locate(y, hint_cycles_per_sample, y.len())
}

/// Locates the tone in `seg` (cycles per sample); `n` is the whole record's length.
fn locate(seg: &[f64], hint_cycles_per_sample: Option<f64>, n: usize) -> Result<f64> {
    let m = seg.len();
    if m < 8 {
        return Err(Error::new(
            ErrorKind::TooFewSamples,
            "",
            Location::Whole,
            "at least 8 samples to locate the tone",
            m.to_string(),
        ));
    }
    // Eight running sums: a single one is a chain of dependent adds, slower than the FFT that follows.
    let mut lanes = [0.0; 8];
    for chunk in seg.chunks(8) {
        for (l, v) in lanes.iter_mut().zip(chunk) {
            *l += v;
        }
    }
    let mean = crate::fit::sums::total(&lanes) / m as f64;
    let hann = Window::Hann.samples_shared(m);
    let mut buf: Vec<f64> = seg
        .iter()
        .zip(hann.iter())
        .map(|(v, w)| (v - mean) * w)
        .collect();
    let spec = real_fft(&mut buf);
    let power: Vec<f64> = spec.iter().map(|z| z.norm_sqr()).collect();
    let last = power.len() - 1;
    // Bins 0 and 1 carry what is left of the offset under the Hann window.
    let (lo, hi) = match hint_cycles_per_sample {
        Some(h) => {
            let k = (h * m as f64).round() as isize;
            let reach = 4isize.max((m as isize) / 1000);
            (
                ((k - reach).max(1)) as usize,
                ((k + reach).min(last as isize)) as usize,
            )
        }
        None => (1usize.min(last), last),
    };
    let mut peak = lo;
    let mut best = power[lo];
    for (k, &p) in power.iter().enumerate().take(hi + 1).skip(lo) {
        if p > best {
            best = p;
            peak = k;
        }
    }
    // The median of at most MEDIAN_BINS evenly strided bins: a threshold test needs the level, not the
    // exact order statistic, and selecting among every bin cost more than the FFT itself.
    let stride = (power.len() / MEDIAN_BINS).max(1);
    let mut rest: Vec<f64> = power[1..].iter().step_by(stride).copied().collect();
    let mid = rest.len() / 2;
    let median = if rest.is_empty() {
        0.0
    } else {
        *rest.select_nth_unstable_by(mid, |a, b| a.total_cmp(b)).1
    };
    let peak_power = power[peak];
    if peak_power == 0.0 || peak_power < NO_TONE_RATIO * median {
        return Err(Error::new(
            ErrorKind::NoTone,
            "",
            Location::Whole,
            "a tone at least 40 dB above the median spectrum bin",
            if peak_power == 0.0 {
                "a constant record".to_string()
            } else {
                format!(
                    "a strongest bin only {:.1} dB above the median",
                    10.0 * (peak_power / median.max(f64::MIN_POSITIVE)).log10()
                )
            },
        ));
    }
    let delta = if peak >= 1 && peak < last {
        let (lo, z, hi) = (
            power[peak - 1].sqrt(),
            power[peak].sqrt(),
            power[peak + 1].sqrt(),
        );
        2.0 * (hi - lo) / (lo + 2.0 * z + hi)
    } else {
        0.0
    };
    Ok(((peak as f64 + delta.clamp(-1.0, 1.0)) / m as f64).clamp(0.5 / n as f64, 0.5))
}

#[cfg(test)]
mod tests {
    use super::*;

    // The Hann three-bin interpolator is exact for a noiseless lone tone (closed form of the Hann
    // kernel); the small residual error comes from the tone's negative-frequency image.
    #[test]
    fn interpolator_is_near_exact() {
        let n = 4096;
        for &k in &[100.0, 100.25, 333.5, 1500.9] {
            let y: Vec<f64> = (0..n)
                .map(|i| 1000.0 * (std::f64::consts::TAU * k * i as f64 / n as f64 + 0.7).cos())
                .collect();
            let est = estimate_frequency(&y, None).unwrap() * n as f64;
            assert!((est - k).abs() < 2e-3, "{k}: {est}");
        }
    }

    // Found by tests/fuzz_props.rs: a hint above fs/2 put the search window past the last bin and
    // indexed out of bounds. The alias of 0.7 cycles per sample is 0.3 (first-zone folding, common
    // practice, no source).
    #[test]
    fn hint_above_nyquist_is_folded_not_out_of_bounds() {
        let n = 1024;
        let k = 307.0;
        let y: Vec<f64> = (0..n)
            .map(|i| 1000.0 * (std::f64::consts::TAU * k * i as f64 / n as f64).cos())
            .collect();
        for hint in [0.7, 1.3, 1.0 - 0.3, f64::INFINITY, f64::NAN] {
            let est = estimate_frequency(&y, Some(hint)).unwrap() * n as f64;
            assert!((est - k).abs() < 1e-2, "hint {hint}: {est}");
        }
    }

    #[test]
    fn constant_record_has_no_tone() {
        let y = vec![5.0; 1024];
        assert_eq!(
            estimate_frequency(&y, None).unwrap_err().kind,
            ErrorKind::NoTone
        );
    }
}
