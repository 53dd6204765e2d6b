//! Coherent test-frequency planning: choosing a cycle count J for an N-sample record, and predicting
//! where harmonics and two-tone intermodulation products land (folding and coherent cycle counts come
//! from [`crate::freq`]).
//!
//! A record is coherent when the input holds a whole number of cycles J in the N samples, so that
//! fin = J·fs/N. Choosing J odd and coprime with N makes every sample fall on a distinct phase of the
//! sine, which spreads the quantisation error over the spectrum instead of piling it on a few
//! harmonic bins (IEEE Std 1241, coherent sampling; from memory).

use serde::Serialize;

use crate::error::{Error, Result};
pub use crate::freq::MAX_PLAN_SAMPLES;
use crate::freq::{fold_bin, fold_to_first_zone, is_prime, nearest_coherent, CoherentChoice};

/// Where a harmonic of the input lands in the first Nyquist zone.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicPlace {
    /// Harmonic order (2 = second harmonic).
    pub order: u32,
    /// The folded frequency in hertz, in 0..=fs/2.
    pub frequency_hz: f64,
    /// The folded (fractional) bin, in 0..=N/2.
    pub bin: f64,
    /// What the harmonic lands on, when it lands within the span of something claimed before it:
    /// `"dc"`, `"fundamental"`, `"nyquist"` or `"harmonic k"` for an earlier harmonic k. Checked in
    /// that order; the first match is reported.
    pub collides_with: Option<String>,
}

/// Tolerance in bins for "lands on": absorbs the rounding of h·fin·N/fs (about 1e-8 bins at 2^26).
const BIN_TOLERANCE: f64 = 1e-6;

/// Places harmonics 2..=`harmonics` of `fin_hz`, folded into the first Nyquist zone, and marks each
/// one that lies within `tone_halfwidth_bins` (inclusive) of DC, of the (folded) fundamental, of
/// Nyquist or of an earlier harmonic.
///
/// Returns an empty list when fs is not positive and finite, N is 0, fin is not finite or the span
/// is negative or not finite.
pub fn harmonic_places(
    fin_hz: f64,
    sample_rate_hz: f64,
    samples: usize,
    harmonics: u32,
    tone_halfwidth_bins: f64,
) -> Vec<HarmonicPlace> {
    if !(sample_rate_hz.is_finite()
        && sample_rate_hz > 0.0
        && samples > 0
        && fin_hz.is_finite()
        && tone_halfwidth_bins.is_finite()
        && tone_halfwidth_bins >= 0.0)
    {
        return Vec::new();
    }
    let n = samples as f64;
    let fin_bin = fin_hz * n / sample_rate_hz;
    let fundamental = fold_bin(fin_bin, samples);
    let nyquist = n / 2.0;
    let near = |a: f64, b: f64| (a - b).abs() <= tone_halfwidth_bins + BIN_TOLERANCE;

    let mut places: Vec<HarmonicPlace> = Vec::new();
    for order in 2..=harmonics {
        let bin = fold_bin(order as f64 * fin_bin, samples);
        let collides_with = if near(bin, 0.0) {
            Some("dc".to_string())
        } else if near(bin, fundamental) {
            Some("fundamental".to_string())
        } else if near(bin, nyquist) {
            Some("nyquist".to_string())
        } else {
            places
                .iter()
                .find(|p| near(bin, p.bin))
                .map(|p| format!("harmonic {}", p.order))
        };
        places.push(HarmonicPlace {
            order,
            frequency_hz: fold_to_first_zone(order as f64 * fin_hz, sample_rate_hz),
            bin,
            collides_with,
        });
    }
    places
}

/// Smallest power-of-two record length N with fs/N <= `resolution_hz`.
///
/// Returns 0 when either value is not positive and finite, or when no power of two that fits in a
/// `usize` is long enough.
pub fn samples_for_resolution(sample_rate_hz: f64, resolution_hz: f64) -> usize {
    if !(sample_rate_hz.is_finite()
        && sample_rate_hz > 0.0
        && resolution_hz.is_finite()
        && resolution_hz > 0.0)
    {
        return 0;
    }
    let mut n: usize = 1;
    // Division by a power of two is exact, so the comparison has no rounding at the boundary.
    while sample_rate_hz / n as f64 > resolution_hz {
        match n.checked_mul(2) {
            Some(m) => n = m,
            None => return 0,
        }
    }
    n
}

/// The plan for one test tone: its coherent frequency and where its harmonics land.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TonePlan {
    /// The coherent choice for the target.
    pub tone: CoherentChoice,
    /// True when the cycle count J is prime (it is always odd and coprime with N).
    pub cycles_prime: bool,
    /// Harmonics 2..=H, folded, with their collisions (see [`harmonic_places`]).
    pub harmonics: Vec<HarmonicPlace>,
}

/// A histogram (code-density) test frequency for one target: a record long enough for the sampling
/// phases the DNL uncertainty needs, at a coherent J coprime with it, and the records to take.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HistogramPlan {
    /// Resolution N, bits.
    pub bits: u32,
    /// The DNL uncertainty planned for, LSB (at 95 % confidence for the sample count).
    pub dnl_uncertainty_lsb: f64,
    /// Sampling phases the DNL uncertainty needs (see [`crate::required_phases`]).
    pub required_phases: u64,
    /// The record length used: the plan's when it gives enough phases, else the smallest power of
    /// two that does.
    pub samples: usize,
    /// The coherent choice: J odd and coprime with the record length, so every sample of a record is
    /// its own phase (IEEE Std 1241's fin/fs = M/N with M, N coprime, from memory).
    pub tone: CoherentChoice,
    /// Distinct phases the records hold: the record length.
    pub distinct_phases: u64,
    /// Samples the DNL uncertainty needs at 95 % confidence (see [`crate::required_samples`]).
    pub required_samples: u64,
    /// Records of that length to take (sampling the same phases, their histograms add).
    pub records: u64,
}

/// Plans a histogram test near `target_hz` at `fs` for N = `bits` and a DNL uncertainty of `dnl_lsb`,
/// starting from records of `samples` samples (lengthened to a power of two when they hold too few
/// phases). Errors: `BadSetting` for a resolution or uncertainty the advice refuses, and those of
/// [`nearest_coherent`].
pub fn plan_histogram(
    fs: f64,
    samples: usize,
    target_hz: f64,
    bits: u32,
    dnl_lsb: f64,
) -> Result<HistogramPlan> {
    let settings = crate::analyses::linearity::LinearitySettings {
        confidence: 0.95,
        dnl_uncertainty_lsb: dnl_lsb,
    };
    let required_samples = crate::analyses::linearity::required_samples(bits, &settings)?;
    let required_phases = crate::analyses::linearity::required_phases(bits, dnl_lsb);
    let length = if samples as u64 >= required_phases {
        samples
    } else {
        // Above 2^63 no power of two exists; the coherent choice below refuses lengths past
        // MAX_PLAN_SAMPLES with the range.
        usize::try_from(required_phases)
            .ok()
            .and_then(usize::checked_next_power_of_two)
            .unwrap_or(usize::MAX)
    };
    let tone = nearest_coherent(fs, length, target_hz, false)?;
    Ok(HistogramPlan {
        bits,
        dnl_uncertainty_lsb: dnl_lsb,
        required_phases,
        samples: length,
        tone,
        distinct_phases: length as u64,
        required_samples,
        records: required_samples.div_ceil(length as u64),
    })
}

/// Highest harmonic order a plan accepts.
pub const MAX_PLAN_HARMONIC: u32 = 100;

fn check_plan_options(harmonics: u32, tone_halfwidth_bins: f64) -> Result<()> {
    if !(1..=MAX_PLAN_HARMONIC).contains(&harmonics) {
        return Err(Error::setting(
            "harmonics",
            format!("a highest harmonic order in 1..={MAX_PLAN_HARMONIC}"),
            harmonics.to_string(),
        ));
    }
    if !(tone_halfwidth_bins.is_finite() && tone_halfwidth_bins >= 0.0) {
        return Err(Error::setting(
            "tone_halfwidth",
            "a non-negative, finite half-width of the tone bins",
            tone_halfwidth_bins.to_string(),
        ));
    }
    Ok(())
}

/// Plans one tone: the nearest coherent frequency (see [`nearest_coherent`]) and its harmonics
/// 2..=`harmonics` with their collisions within `tone_halfwidth_bins` (see [`harmonic_places`]).
///
/// The harmonics are placed on the exact bin scale (h·J folded into 0..=N/2), so their bins are whole
/// numbers; each frequency is bin·fs/N.
///
/// Errors (`BadSetting`): those of [`nearest_coherent`], a highest harmonic outside
/// 1..=[`MAX_PLAN_HARMONIC`], and a tone half-width that is negative or not finite (key `tone_halfwidth`).
pub fn plan_tone(
    sample_rate_hz: f64,
    samples: usize,
    target_hz: f64,
    prime: bool,
    harmonics: u32,
    tone_halfwidth_bins: f64,
) -> Result<TonePlan> {
    check_plan_options(harmonics, tone_halfwidth_bins)?;
    let tone = nearest_coherent(sample_rate_hz, samples, target_hz, prime)?;
    let n = samples as f64;
    // On the bin scale (fs = N) the fundamental is exactly J and every harmonic bin is exact.
    let mut places = harmonic_places(
        tone.cycles as f64,
        n,
        samples,
        harmonics,
        tone_halfwidth_bins,
    );
    for p in &mut places {
        p.frequency_hz = p.bin * sample_rate_hz / n;
    }
    Ok(TonePlan {
        cycles_prime: is_prime(tone.cycles),
        tone,
        harmonics: places,
    })
}

/// A second- or third-order intermodulation product of two tones.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ImdProduct {
    /// The product's name: "IM2 f2-f1", "IM2 f1+f2", "IM3 2f1-f2", "IM3 2f2-f1", "IM3 2f1+f2" or
    /// "IM3 2f2+f1".
    pub name: &'static str,
    /// The order of the product (2 or 3).
    pub order: u32,
    /// The product's frequency folded into the first Nyquist zone 0..=fs/2, in hertz.
    pub frequency_hz: f64,
}

/// The products m1·f1 + m2·f2 that [`imd_products`] lists, in its order: (name, order, m1, m2).
const IMD_TERMS: [(&str, u32, f64, f64); 6] = [
    ("IM2 f2-f1", 2, -1.0, 1.0),
    ("IM2 f1+f2", 2, 1.0, 1.0),
    ("IM3 2f1-f2", 3, 2.0, -1.0),
    ("IM3 2f2-f1", 3, -1.0, 2.0),
    ("IM3 2f1+f2", 3, 2.0, 1.0),
    ("IM3 2f2+f1", 3, 1.0, 2.0),
];

/// The second-order (f2 − f1, f1 + f2) and third-order (2f1 − f2, 2f2 − f1, 2f1 + f2, 2f2 + f1)
/// intermodulation products of two tones, each folded into the first Nyquist zone (a negative
/// difference folds to its magnitude).
///
/// Returns an empty list when fs is not positive and finite or a tone frequency is not finite.
pub fn imd_products(f1_hz: f64, f2_hz: f64, sample_rate_hz: f64) -> Vec<ImdProduct> {
    if !(sample_rate_hz.is_finite()
        && sample_rate_hz > 0.0
        && f1_hz.is_finite()
        && f2_hz.is_finite())
    {
        return Vec::new();
    }
    IMD_TERMS
        .iter()
        .map(|&(name, order, m1, m2)| ImdProduct {
            name,
            order,
            frequency_hz: fold_to_first_zone(m1 * f1_hz + m2 * f2_hz, sample_rate_hz),
        })
        .collect()
}

/// A harmonic or an intermodulation product placed in the spectrum of a two-tone plan.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Placement {
    /// What it is: "f1 H2", "f2 H3" for harmonics, the product name (see [`ImdProduct`]) for products.
    pub name: String,
    /// Harmonic order, or the order of the product.
    pub order: u32,
    /// The folded frequency in hertz, in 0..=fs/2 (bin·fs/N).
    pub frequency_hz: f64,
    /// The folded bin, in 0..=N/2 (a whole number: the tones are coherent).
    pub bin: f64,
    /// What it lands on within the span: `"dc"`, `"f1"`, `"f2"`, `"nyquist"` or the name of an
    /// earlier placement (harmonics of f1, then of f2, then the products in [`imd_products`] order),
    /// checked in that order; the first match is reported.
    pub collides_with: Option<String>,
}

/// The plan for a two-tone test: both coherent tones, their harmonics and their IMD products.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TwoTonePlan {
    /// The coherent choice for the first tone.
    pub f1: CoherentChoice,
    /// True when the first tone's cycle count is prime.
    pub f1_cycles_prime: bool,
    /// The coherent choice for the second tone.
    pub f2: CoherentChoice,
    /// True when the second tone's cycle count is prime.
    pub f2_cycles_prime: bool,
    /// Harmonics 2..=H of f1, then of f2.
    pub harmonics: Vec<Placement>,
    /// The six IMD products, in [`imd_products`] order.
    pub products: Vec<Placement>,
}

/// Plans a two-tone test: each tone at its nearest coherent frequency (see [`nearest_coherent`]),
/// the harmonics 2..=`harmonics` of each and the IMD products (see [`imd_products`]), all folded, with
/// what each lands on within `tone_halfwidth_bins` (inclusive).
///
/// Errors (`BadSetting`): those of [`plan_tone`], and two targets that get the same cycle count
/// (key `f2`).
pub fn plan_two_tone(
    sample_rate_hz: f64,
    samples: usize,
    f1_target_hz: f64,
    f2_target_hz: f64,
    prime: bool,
    harmonics: u32,
    tone_halfwidth_bins: f64,
) -> Result<TwoTonePlan> {
    check_plan_options(harmonics, tone_halfwidth_bins)?;
    let f1 = nearest_coherent(sample_rate_hz, samples, f1_target_hz, prime)?;
    let f2 = nearest_coherent(sample_rate_hz, samples, f2_target_hz, prime)?;
    if f1.cycles == f2.cycles {
        return Err(Error::setting(
            "f2",
            "a second tone with a cycle count other than the first's",
            format!(
                "both {f1_target_hz} Hz and {f2_target_hz} Hz give J = {}",
                f1.cycles
            ),
        ));
    }
    let n = samples as f64;
    // Everything on the exact bin scale: cycle counts are integers, so sums of multiples are exact.
    let (j1, j2) = (f1.cycles as f64, f2.cycles as f64);
    let near = |a: f64, b: f64| (a - b).abs() <= tone_halfwidth_bins + BIN_TOLERANCE;
    let fixed = [("dc", 0.0), ("f1", j1), ("f2", j2), ("nyquist", n / 2.0)];
    let mut placed: Vec<Placement> = Vec::new();
    let mut place = |name: String, order: u32, raw_bin: f64| {
        let bin = fold_bin(raw_bin, samples);
        let collides_with = fixed
            .iter()
            .find(|(_, b)| near(bin, *b))
            .map(|(label, _)| label.to_string())
            .or_else(|| {
                placed
                    .iter()
                    .find(|p| near(bin, p.bin))
                    .map(|p| p.name.clone())
            });
        placed.push(Placement {
            name,
            order,
            frequency_hz: bin * sample_rate_hz / n,
            bin,
            collides_with,
        });
    };
    for (tone, j) in [("f1", j1), ("f2", j2)] {
        for h in 2..=harmonics {
            place(format!("{tone} H{h}"), h, h as f64 * j);
        }
    }
    for &(name, order, m1, m2) in &IMD_TERMS {
        place(name.to_string(), order, m1 * j1 + m2 * j2);
    }
    let products = placed.split_off(placed.len() - IMD_TERMS.len());
    Ok(TwoTonePlan {
        f1_cycles_prime: is_prime(f1.cycles),
        f1,
        f2_cycles_prime: is_prime(f2.cycles),
        f2,
        harmonics: placed,
        products,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::error::Location;

    fn key_of(e: &Error) -> &str {
        match &e.location {
            Location::Key(k) => k,
            other => panic!("expected a key location, found {other:?}"),
        }
    }

    fn collisions(places: &[HarmonicPlace]) -> Vec<(u32, Option<&str>)> {
        places
            .iter()
            .map(|p| (p.order, p.collides_with.as_deref()))
            .collect()
    }

    #[test]
    fn quarter_rate_input_collides_everywhere() {
        // fin = fs/4: 2·fs/4 = fs/2 (Nyquist), 3·fs/4 folds to fs/4 (fundamental), 4·fs/4 = fs → DC.
        let p = harmonic_places(25e6, 100e6, 4096, 5, 0.0);
        assert_eq!(
            collisions(&p),
            vec![
                (2, Some("nyquist")),
                (3, Some("fundamental")),
                (4, Some("dc")),
                (5, Some("fundamental")),
            ]
        );
        assert_eq!(p[0].bin, 2048.0);
        assert_eq!(p[0].frequency_hz, 50e6);
        assert_eq!(p[1].bin, 1024.0);
        assert_eq!(p[2].bin, 0.0);
    }

    #[test]
    fn third_rate_input() {
        // fin = fs/3: 2fs/3 folds to fs/3 (fundamental), 3fs/3 = fs → DC. N = 3000 keeps the bins whole.
        let p = harmonic_places(1e6 / 3.0, 1e6, 3000, 3, 0.0);
        assert_eq!(
            collisions(&p),
            vec![(2, Some("fundamental")), (3, Some("dc"))]
        );
        // With N = 4096 the bins are fractional (1365.33...) and still land on each other.
        let q = harmonic_places(1e6 / 3.0, 1e6, 4096, 3, 0.0);
        assert_eq!(
            collisions(&q),
            vec![(2, Some("fundamental")), (3, Some("dc"))]
        );
    }

    #[test]
    fn eighth_rate_input_lands_on_earlier_harmonics() {
        // fin = fs/8: H2 = fs/4, H3 = 3fs/8, H4 = fs/2, H5 → 3fs/8 (= H3), H6 → fs/4 (= H2),
        // H7 → fs/8 (fundamental), H8 → DC.
        let p = harmonic_places(12.5e6, 100e6, 1024, 8, 1.0);
        assert_eq!(
            collisions(&p),
            vec![
                (2, None),
                (3, None),
                (4, Some("nyquist")),
                (5, Some("harmonic 3")),
                (6, Some("harmonic 2")),
                (7, Some("fundamental")),
                (8, Some("dc")),
            ]
        );
    }

    #[test]
    fn span_decides_near_misses_and_clean_input_is_clean() {
        // 44 MHz at 100 MHz, N = 2048: harmonics at 12, 32, 24, 20 MHz, none near anything.
        let p = harmonic_places(43_994_140.625, 100e6, 2048, 5, 3.0);
        assert!(p.iter().all(|h| h.collides_with.is_none()));
        assert_eq!(
            p[1].frequency_hz,
            fold_to_first_zone(3.0 * 43_994_140.625, 100e6)
        );
        assert_eq!(p[1].bin, fold_bin(3.0 * 901.0, 2048));
        // fin at bin 0.75 in 1024 bins: H2 at bin 1.5 is within 2 bins of DC but not within 1.
        let fs = 1024.0;
        let near = harmonic_places(0.75, fs, 1024, 2, 2.0);
        assert_eq!(near[0].collides_with.as_deref(), Some("dc"));
        let far = harmonic_places(0.75 * 4.0, fs, 1024, 2, 1.0);
        assert_eq!(far[0].collides_with, None);
        assert!(harmonic_places(1.0, 0.0, 1024, 5, 1.0).is_empty());
        assert!(harmonic_places(1.0, 10.0, 1024, 1, 1.0).is_empty());
    }

    #[test]
    fn record_length_for_a_resolution() {
        // fs/N for powers of two (common practice, no source).
        assert_eq!(samples_for_resolution(32_000.0, 31.25), 1024);
        assert_eq!(samples_for_resolution(32_000.0, 31.24), 2048);
        assert_eq!(samples_for_resolution(100e6, 100e6 / 4096.0), 4096);
        assert_eq!(samples_for_resolution(100e6, 10e3), 16_384);
        assert_eq!(samples_for_resolution(10.0, 20.0), 1);
        assert_eq!(samples_for_resolution(0.0, 1.0), 0);
        assert_eq!(samples_for_resolution(1.0, f64::NAN), 0);
        assert_eq!(samples_for_resolution(f64::MAX, f64::MIN_POSITIVE), 0);
    }

    #[test]
    fn imd_products_of_5_and_6_mhz() {
        // Standard product formulas (IM2: f2 − f1, f1 + f2; IM3: 2f1 − f2, 2f2 − f1, 2f1 + f2,
        // 2f2 + f1; common practice, no source): 5 and 6 MHz give 1, 11, 4, 7, 16, 17 MHz. At
        // 100 MHz nothing reaches fs/2 = 50 MHz, so nothing folds.
        let p = imd_products(5e6, 6e6, 100e6);
        let got: Vec<(&str, u32, f64)> = p
            .iter()
            .map(|q| (q.name, q.order, q.frequency_hz))
            .collect();
        assert_eq!(
            got,
            vec![
                ("IM2 f2-f1", 2, 1e6),
                ("IM2 f1+f2", 2, 11e6),
                ("IM3 2f1-f2", 3, 4e6),
                ("IM3 2f2-f1", 3, 7e6),
                ("IM3 2f1+f2", 3, 16e6),
                ("IM3 2f2+f1", 3, 17e6),
            ]
        );
        // Swapping the tones swaps the pairs; the difference folds to its magnitude.
        let q = imd_products(6e6, 5e6, 100e6);
        assert_eq!(q[0].frequency_hz, 1e6);
        assert_eq!(q[2].frequency_hz, 7e6);
        assert_eq!(q[3].frequency_hz, 4e6);
    }

    #[test]
    fn imd_products_fold_at_a_low_sample_rate() {
        // At fs = 20 MHz (Nyquist 10 MHz): 11 → 20 − 11 = 9, 16 → 4, 17 → 3 MHz (aliasing,
        // |f − k·fs|); 1, 4 and 7 MHz stay.
        let p = imd_products(5e6, 6e6, 20e6);
        let f: Vec<f64> = p.iter().map(|q| q.frequency_hz).collect();
        assert_eq!(f, vec![1e6, 9e6, 4e6, 7e6, 4e6, 3e6]);
        // At fs = 12 MHz: f1 + f2 = 11 → 1 MHz (onto f2 − f1), 2f2 − f1 = 7 → 5 MHz (onto f1).
        let p = imd_products(5e6, 6e6, 12e6);
        assert_eq!(p[1].frequency_hz, 1e6);
        assert_eq!(p[3].frequency_hz, 5e6);
        assert!(imd_products(5e6, 6e6, 0.0).is_empty());
        assert!(imd_products(f64::NAN, 6e6, 1e6).is_empty());
    }

    #[test]
    fn tone_plan_of_the_worked_example() {
        // 44 MHz at 100 MHz, N = 2048 → J = 901 (hand arithmetic above); harmonics on the bin scale:
        // 2·901 = 1802 → 2048 − 1802 = 246; 3·901 = 2703 → 2703 − 2048 = 655; 4·901 = 3604 → 4096 − 3604 = 492;
        // 5·901 = 4505 → 4505 − 4096 = 409.
        let p = plan_tone(100e6, 2048, 44e6, false, 5, 0.0).unwrap();
        assert_eq!(p.tone.cycles, 901);
        assert!(!p.cycles_prime);
        let bins: Vec<f64> = p.harmonics.iter().map(|h| h.bin).collect();
        assert_eq!(bins, vec![246.0, 655.0, 492.0, 409.0]);
        assert_eq!(p.harmonics[0].frequency_hz, 246.0 * 100e6 / 2048.0);
        assert!(p.harmonics.iter().all(|h| h.collides_with.is_none()));
        let q = plan_tone(100e6, 2048, 44e6, true, 5, 0.0).unwrap();
        assert_eq!(q.tone.cycles, 907);
        assert!(q.cycles_prime);
        for (h, key) in [(0, "harmonics"), (101, "harmonics")] {
            let e = plan_tone(100e6, 2048, 44e6, false, h, 0.0).unwrap_err();
            assert_eq!(key_of(&e), key);
        }
        let e = plan_tone(100e6, 2048, 44e6, false, 5, -1.0).unwrap_err();
        assert_eq!(key_of(&e), "tone_halfwidth");
        let e = plan_tone(100e6, 2048, 60e6, false, 5, 0.0).unwrap_err();
        assert_eq!(key_of(&e), "target_hz");
    }

    #[test]
    fn two_tone_plan_places_products_on_the_bin_scale() {
        // N = 1024, fs = 1024 Hz (1 Hz bins): 101 and 111 Hz are odd and coprime with 1024, so the
        // tones are bins 101 and 111. Products (formulas above): 10, 212, 91, 121, 313, 323 — none
        // folds below Nyquist 512.
        let p = plan_two_tone(1024.0, 1024, 101.0, 111.0, false, 3, 0.0).unwrap();
        assert_eq!((p.f1.cycles, p.f2.cycles), (101, 111));
        assert!(p.f1_cycles_prime && !p.f2_cycles_prime); // 111 = 3·37
        let bins: Vec<(String, f64)> = p.products.iter().map(|q| (q.name.clone(), q.bin)).collect();
        let want: Vec<(String, f64)> = [
            ("IM2 f2-f1", 10.0),
            ("IM2 f1+f2", 212.0),
            ("IM3 2f1-f2", 91.0),
            ("IM3 2f2-f1", 121.0),
            ("IM3 2f1+f2", 313.0),
            ("IM3 2f2+f1", 323.0),
        ]
        .iter()
        .map(|(n, b)| (n.to_string(), *b))
        .collect();
        assert_eq!(bins, want);
        // The products agree with imd_products at the coherent frequencies.
        let direct = imd_products(p.f1.frequency_hz, p.f2.frequency_hz, 1024.0);
        for (a, b) in p.products.iter().zip(&direct) {
            assert_eq!(a.name, b.name);
            assert_eq!(a.frequency_hz, b.frequency_hz);
        }
        // Harmonics: f1 H2 = 202, f1 H3 = 303, f2 H2 = 222, f2 H3 = 333; nothing collides at span 0.
        let h: Vec<(String, f64)> = p
            .harmonics
            .iter()
            .map(|q| (q.name.clone(), q.bin))
            .collect();
        assert_eq!(h[0], ("f1 H2".to_string(), 202.0));
        assert_eq!(h[3], ("f2 H3".to_string(), 333.0));
        assert!(p
            .harmonics
            .iter()
            .chain(&p.products)
            .all(|q| q.collides_with.is_none()));
        // With a span of 10 bins: f2 − f1 = 10 lies within 10 of DC, f1 + f2 = 212 within 10 of
        // f1 H2 = 202, and 2f1 − f2 = 91 within 10 of f1 = 101.
        let w = plan_two_tone(1024.0, 1024, 101.0, 111.0, false, 3, 10.0).unwrap();
        assert_eq!(w.products[0].collides_with.as_deref(), Some("dc"));
        assert_eq!(w.products[1].collides_with.as_deref(), Some("f1 H2"));
        assert_eq!(w.products[2].collides_with.as_deref(), Some("f1"));
        // f2 H2 = 222 is 20 bins from f1 H2 = 202 and is placed before the products: no collision.
        assert_eq!(w.harmonics[2].collides_with, None);
    }

    #[test]
    fn two_tone_products_that_fold_onto_each_other() {
        // N = 64, fs = 64 (bins = Hz): tones at bins 13 and 19. 2f1 + f2 = 45 → 64 − 45 = 19 = f2;
        // 2f2 + f1 = 51 → 13 = f1; f1 + f2 = 32 = Nyquist; 2f2 − f1 = 25, 2f1 − f2 = 7, f2 − f1 = 6.
        let p = plan_two_tone(64.0, 64, 13.0, 19.0, false, 2, 0.0).unwrap();
        let c: Vec<Option<&str>> = p
            .products
            .iter()
            .map(|q| q.collides_with.as_deref())
            .collect();
        assert_eq!(
            c,
            vec![None, Some("nyquist"), None, None, Some("f2"), Some("f1")]
        );
        // f1 H2 = 26, f2 H2 = 38 → 26: the second harmonic of f2 lands on that of f1.
        assert_eq!(p.harmonics[1].bin, 26.0);
        assert_eq!(p.harmonics[1].collides_with.as_deref(), Some("f1 H2"));
        // Two targets in the same bin are an error naming f2.
        let e = plan_two_tone(64.0, 64, 13.0, 13.2, false, 2, 0.0).unwrap_err();
        assert_eq!(key_of(&e), "f2");
    }
}
