//! Frequency helpers shared by the fit, the spectrum and the planning: folding a frequency (or a
//! fractional bin) into the first Nyquist zone, and coherent cycle counts (odd, coprime with the record
//! length; IEEE Std 1241, coherent sampling; from memory).

use serde::Serialize;

use crate::error::{Error, Result};
/// A coherent test frequency: J cycles in N samples at fs, so that frequency = J·fs/N.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CoherentChoice {
    /// The cycle count J (odd, coprime with N; prime when asked).
    pub cycles: u64,
    /// The coherent frequency J·fs/N in hertz.
    pub frequency_hz: f64,
    /// The frequency that was asked for, in hertz.
    pub target_hz: f64,
    /// The bin width fs/N in hertz.
    pub bin_width_hz: f64,
}

/// Longest record a plan accepts (2^40 samples, a tebisample: far beyond any capture memory).
/// Below it every cycle count J < N/2 and every bin h·J is a whole number an `f64` holds exactly,
/// so the planned frequencies are exact; above 2^53 they would silently round.
pub const MAX_PLAN_SAMPLES: usize = 1 << 40;

/// Chooses the cycle count J nearest to target·N/fs that is odd and coprime with N (and prime when
/// `prime` is set), with 0 < J < N/2.
///
/// When two cycle counts are equally near, the lower one is chosen: for N = 1024 at 32 kHz a 1000 Hz
/// target is bin 32 exactly, which is even, and the choice is J = 31 (968.75 Hz) rather than J = 33.
/// The frequency is computed as J·fs/N.
///
/// Errors (`BadSetting`) when fs is not positive and finite, when N < 4, when the target is not in
/// (0, fs/2), or when no cycle count meets the conditions (for example `prime` with N = 6).
pub fn nearest_coherent(
    sample_rate_hz: f64,
    samples: usize,
    target_hz: f64,
    prime: bool,
) -> Result<CoherentChoice> {
    crate::record::check_sample_rate(sample_rate_hz, "")?;
    if !(4..=MAX_PLAN_SAMPLES).contains(&samples) {
        return Err(Error::setting(
            "samples",
            format!("a record length in 4..={} samples (2^40)", MAX_PLAN_SAMPLES),
            samples.to_string(),
        ));
    }
    let nyquist = sample_rate_hz / 2.0;
    if !(target_hz.is_finite() && target_hz > 0.0 && target_hz < nyquist) {
        return Err(Error::setting(
            "target_hz",
            format!("a frequency in (0, {nyquist}) Hz (below fs/2)"),
            target_hz.to_string(),
        ));
    }
    let n = samples as u64;
    let valid =
        |j: u64| j > 0 && 2 * j < n && j % 2 == 1 && gcd(j, n) == 1 && (!prime || is_prime(j));
    let ideal = target_hz * samples as f64 / sample_rate_hz;
    // Largest J allowed is the largest integer strictly below N/2.
    let j_max = (n - 1) / 2;
    let start = (ideal.floor() as u64).clamp(1, j_max);

    // Nearest valid J at or below `start`, and nearest valid J above it.
    let below = (1..=start).rev().find(|&j| valid(j));
    let above = (start + 1..=j_max).find(|&j| valid(j));
    let cycles = match (below, above) {
        (Some(lo), Some(hi)) => {
            // Ties go to the lower J (documented choice).
            if hi as f64 - ideal < ideal - lo as f64 {
                hi
            } else {
                lo
            }
        }
        (Some(lo), None) => lo,
        (None, Some(hi)) => hi,
        (None, None) => {
            let what = if prime {
                "an odd prime cycle count coprime with the record length below N/2"
            } else {
                "an odd cycle count coprime with the record length below N/2"
            };
            return Err(Error::setting(
                "samples",
                what,
                format!("none for N = {samples}"),
            ));
        }
    };
    Ok(CoherentChoice {
        cycles,
        frequency_hz: cycles as f64 * sample_rate_hz / samples as f64,
        target_hz,
        bin_width_hz: sample_rate_hz / samples as f64,
    })
}

/// Greatest common divisor (Euclid); gcd(0, 0) = 0.
pub fn gcd(mut a: u64, mut b: u64) -> u64 {
    while b != 0 {
        let r = a % b;
        a = b;
        b = r;
    }
    a
}

/// True when n is prime. Deterministic Miller–Rabin, exact for every u64.
pub fn is_prime(n: u64) -> bool {
    const SMALL: [u64; 12] = [2, 3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37];
    if n < 2 {
        return false;
    }
    for p in SMALL {
        if n.is_multiple_of(p) {
            return n == p;
        }
    }
    // The first twelve primes as witnesses decide primality for all n < 3.3e24, hence every u64.
    let mut d = n - 1;
    let mut s = 0;
    while d.is_multiple_of(2) {
        d /= 2;
        s += 1;
    }
    let mul = |a: u64, b: u64| ((a as u128 * b as u128) % n as u128) as u64;
    let pow = |mut base: u64, mut e: u64| {
        let mut acc = 1u64;
        base %= n;
        while e > 0 {
            if e & 1 == 1 {
                acc = mul(acc, base);
            }
            base = mul(base, base);
            e >>= 1;
        }
        acc
    };
    'witness: for a in SMALL {
        let mut x = pow(a, d);
        if x == 1 || x == n - 1 {
            continue;
        }
        for _ in 1..s {
            x = mul(x, x);
            if x == n - 1 {
                continue 'witness;
            }
        }
        return false;
    }
    true
}

/// Folds (aliases) any frequency into the first Nyquist zone 0..=fs/2.
///
/// The sample rate must be positive and finite and the frequency finite; otherwise the result is
/// NaN (callers validate their settings first).
pub fn fold_to_first_zone(freq_hz: f64, sample_rate_hz: f64) -> f64 {
    if !(sample_rate_hz.is_finite() && sample_rate_hz > 0.0 && freq_hz.is_finite()) {
        return f64::NAN;
    }
    let mut r = freq_hz.rem_euclid(sample_rate_hz);
    // rem_euclid can round up to the modulus itself for tiny negative inputs.
    if r >= sample_rate_hz {
        r = 0.0;
    }
    if r > sample_rate_hz / 2.0 {
        sample_rate_hz - r
    } else {
        r
    }
}

/// Folds a (fractional) bin index into 0..=N/2 for an N-point spectrum.
///
/// Same as [`fold_to_first_zone`] with fs = N; NaN for N = 0 or a non-finite bin.
pub fn fold_bin(bin: f64, samples: usize) -> f64 {
    if samples == 0 {
        return f64::NAN;
    }
    fold_to_first_zone(bin, samples as f64)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::error::{ErrorKind, Location};

    /// Slow, obviously correct reference: scan every J in 1..N/2.
    fn brute_force(fs: f64, n: usize, target: f64, prime: bool) -> Option<u64> {
        let ideal = target * n as f64 / fs;
        let mut best: Option<(u64, f64)> = None;
        for j in 1..n as u64 {
            if 2 * j >= n as u64 || j % 2 == 0 || gcd(j, n as u64) != 1 {
                continue;
            }
            if prime && !is_prime(j) {
                continue;
            }
            let d = (j as f64 - ideal).abs();
            // Strictly better only: the first (lowest) J wins ties.
            match best {
                Some((_, bd)) if d >= bd => {}
                _ => best = Some((j, d)),
            }
        }
        best.map(|(j, _)| j)
    }

    fn key_of(e: &Error) -> &str {
        match &e.location {
            Location::Key(k) => k,
            other => panic!("expected a key location, found {other:?}"),
        }
    }

    #[test]
    fn worked_example_44_mhz_at_100_mhz_with_2048_samples() {
        // Hand arithmetic (common practice, no source):
        // 44e6·2048/100e6 = 901.12 → J = 901 (odd, coprime with 2048); 901·100e6/2048 = 43 994 140.625 Hz.
        let c = nearest_coherent(100e6, 2048, 44e6, false).unwrap();
        assert_eq!(c.cycles, 901);
        assert_eq!(c.frequency_hz, 43_994_140.625);
        assert_eq!(c.target_hz, 44e6);
        assert_eq!(c.bin_width_hz, 48_828.125);
        // 901 = 17·53 is not prime, so asking for a prime J moves to 907 (887 is 14.12 away, 907 is 5.88).
        assert_eq!(17 * 53, 901);
        let p = nearest_coherent(100e6, 2048, 44e6, true).unwrap();
        assert_eq!(p.cycles, 907);
        assert_eq!(p.frequency_hz, 907.0 * 100e6 / 2048.0);
    }

    #[test]
    fn audio_record_1024_at_32_khz() {
        // Common practice, no source: 32 kHz / 1024 = 31.25 Hz bins; 1000 Hz is bin 32 exactly.
        let c = nearest_coherent(32_000.0, 1024, 1000.0, false).unwrap();
        assert_eq!(c.bin_width_hz, 31.25);
        // 32 is even; 31 and 33 are equally near and the tie goes to the lower J.
        assert_eq!(c.cycles, 31);
        assert_eq!(c.frequency_hz, 968.75);
        // Just above 1000 Hz the upper neighbour is nearer.
        assert_eq!(
            nearest_coherent(32_000.0, 1024, 1000.5, false)
                .unwrap()
                .cycles,
            33
        );
        // 1031.25 Hz = 33 bins is itself coherent and is returned unchanged.
        let d = nearest_coherent(32_000.0, 1024, 1031.25, false).unwrap();
        assert_eq!(d.cycles, 33);
        assert_eq!(d.frequency_hz, 1031.25);
    }

    #[test]
    fn coprime_rule_for_a_length_that_is_not_a_power_of_two() {
        // N = 1000, ideal J = 25: 25 is odd but shares 5 with 1000, so 23 and 27 tie → 23.
        let c = nearest_coherent(1000.0, 1000, 25.0, false).unwrap();
        assert_eq!(c.cycles, 23);
        assert_eq!(gcd(23, 1000), 1);
    }

    #[test]
    fn agrees_with_exhaustive_scan() {
        for &(fs, n) in &[
            (100e6, 4096usize),
            (1e6, 1000),
            (48_000.0, 1536),
            (1.0, 97),
            (10.0, 8),
        ] {
            for k in 1..40 {
                let target = fs / 2.0 * k as f64 / 40.0;
                for prime in [false, true] {
                    let want = brute_force(fs, n, target, prime);
                    let got = nearest_coherent(fs, n, target, prime)
                        .ok()
                        .map(|c| c.cycles);
                    assert_eq!(got, want, "fs {fs}, N {n}, target {target}, prime {prime}");
                }
            }
        }
    }

    #[test]
    fn bad_settings_are_errors_naming_the_key() {
        let cases = [
            (nearest_coherent(0.0, 1024, 1.0, false), "sample_rate_hz"),
            (
                nearest_coherent(f64::NAN, 1024, 1.0, false),
                "sample_rate_hz",
            ),
            (nearest_coherent(1e3, 3, 1.0, false), "samples"),
            (nearest_coherent(1e3, 1024, 0.0, false), "target_hz"),
            (nearest_coherent(1e3, 1024, 500.0, false), "target_hz"),
            (
                nearest_coherent(1e3, 1024, f64::INFINITY, false),
                "target_hz",
            ),
            // N = 6: J must be below 3 and odd, so only J = 1, which is not prime.
            (nearest_coherent(6.0, 6, 1.0, true), "samples"),
        ];
        for (r, key) in cases {
            let e = r.unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting);
            assert_eq!(key_of(&e), key);
        }
    }

    #[test]
    fn gcd_basics() {
        // Elementary number theory, common practice, no source.
        assert_eq!(gcd(12, 18), 6);
        assert_eq!(gcd(18, 12), 6);
        assert_eq!(gcd(0, 5), 5);
        assert_eq!(gcd(17, 0), 17);
        assert_eq!(gcd(0, 0), 0);
        assert_eq!(gcd(901, 2048), 1);
        assert_eq!(gcd(1 << 40, 3 << 20), 1 << 20);
    }

    #[test]
    fn primality_against_trial_division_and_known_primes() {
        let trial = |n: u64| {
            n >= 2
                && (2..)
                    .take_while(|d| d * d <= n)
                    .all(|d| !n.is_multiple_of(d))
        };
        for n in 0..20_000u64 {
            assert_eq!(is_prime(n), trial(n), "n = {n}");
        }
        // 561 is the smallest Carmichael number (composite); 2^61 − 1 is a Mersenne prime;
        // 2^64 − 59 is the largest prime below 2^64 (facts of the trade, from memory).
        assert!(!is_prime(561));
        assert!(is_prime((1 << 61) - 1));
        assert!(!is_prime((1 << 62) - 1));
        assert!(is_prime(u64::MAX - 58));
        assert!(!is_prime(u64::MAX));
        // Strong pseudoprime to bases 2, 3, 5, 7 (3215031751 = 151·751·28351), from memory.
        assert_eq!(151u64 * 751 * 28351, 3_215_031_751);
        assert!(!is_prime(3_215_031_751));
    }

    #[test]
    fn folding_into_the_first_zone() {
        // Aliasing: f folds to |f − k·fs| within 0..fs/2 (sampling theorem, common practice).
        assert_eq!(fold_to_first_zone(3.0 * 44e6, 100e6), 32e6);
        assert_eq!(fold_to_first_zone(2.0 * 44e6, 100e6), 12e6);
        assert_eq!(fold_to_first_zone(4.0 * 44e6, 100e6), 24e6);
        assert_eq!(fold_to_first_zone(5.0 * 44e6, 100e6), 20e6);
        assert_eq!(fold_to_first_zone(44e6, 100e6), 44e6);
        assert_eq!(fold_to_first_zone(150e6, 100e6), 50e6);
        assert_eq!(fold_to_first_zone(100e6, 100e6), 0.0);
        assert_eq!(fold_to_first_zone(-10e6, 100e6), 10e6);
        assert_eq!(fold_to_first_zone(-1e-300, 100e6), 0.0);
        assert!(fold_to_first_zone(1.0, 0.0).is_nan());
        assert_eq!(fold_bin(3000.5, 4096), 1095.5);
        assert_eq!(fold_bin(2048.0, 4096), 2048.0);
        assert_eq!(fold_bin(4096.0 + 7.25, 4096), 7.25);
    }
}
