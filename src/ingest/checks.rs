//! Checks on codes: the N-bit range every parser enforces, and record-level warnings (clipping, stuck
//! bits, missing codes) that do not stop the analysis but tell the user the input may be at fault.

use crate::error::{Error, ErrorKind, Location, Result};
use crate::record::{max_code, min_code};

/// Longest token shown in an error's `found`, in characters.
const TOKEN_SHOWN_CHARS: usize = 40;

/// How many missing codes a warning lists before it stops.
const MISSING_LISTED: usize = 8;

/// Fewest samples for the stuck-bit check: with fewer, a bit can stay constant by chance.
const STUCK_BITS_MIN_SAMPLES: usize = 64;

/// Fewest expected hits per mid-scale code before a missing code counts as evidence.
const MISSING_MIN_EXPECTED_HITS: f64 = 5.0;

pub(crate) use crate::record::check_bits;

/// The N-bit signed range as shown in errors, e.g. "-2048..=2047 (12-bit two's complement)".
pub(crate) fn range_text(bits: u32) -> String {
    format!(
        "{}..={} ({bits}-bit two's complement)",
        min_code(bits),
        max_code(bits)
    )
}

/// Converts a value to a code, or reports it as out of the N-bit range at `location`.
#[inline]
pub(crate) fn to_code(value: i64, bits: u32, path: &str, location: Location) -> Result<i32> {
    if value < min_code(bits) || value > max_code(bits) {
        return Err(Error::new(
            ErrorKind::CodeOutOfRange,
            path,
            location,
            range_text(bits),
            value.to_string(),
        ));
    }
    // In range for N <= 32 bits, so it fits an i32.
    Ok(value as i32)
}

/// A token as shown in an error: quoted, control characters escaped, cut at about 40 characters.
pub(crate) fn show_token(token: &[u8]) -> String {
    let text = String::from_utf8_lossy(token);
    let mut shown = String::from("'");
    for (count, c) in text.chars().enumerate() {
        if count == TOKEN_SHOWN_CHARS {
            shown.push_str("...");
            break;
        }
        if c.is_control() {
            shown.extend(c.escape_default());
        } else {
            shown.push(c);
        }
    }
    shown.push('\'');
    if token.is_empty() {
        shown.push_str(" (empty)");
    }
    shown
}

/// The error for an input that holds no samples.
pub(crate) fn no_samples(path: &str, found: impl Into<String>) -> Error {
    Error::new(
        ErrorKind::Empty,
        path,
        Location::Whole,
        "at least one sample",
        found,
    )
}

/// An integer token: its value, or why it is not one.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum IntToken {
    /// A value (magnitude below 2^40, far outside any 32-bit range when larger).
    Value(i64),
    /// Digits only, but too large to hold: out of any N-bit range.
    TooLarge,
    /// Not an integer at all.
    NotInteger,
}

/// Largest magnitude tracked exactly; anything larger is outside every 32-bit range.
pub(crate) const INT_LIMIT: u64 = 1 << 40;

/// Parses an already trimmed token: optional '+' or '-', then decimal digits only.
pub(crate) fn parse_int(token: &[u8]) -> IntToken {
    let (neg, digits) = match token.first() {
        Some(b'-') => (true, &token[1..]),
        Some(b'+') => (false, &token[1..]),
        _ => (false, token),
    };
    if digits.is_empty() {
        return IntToken::NotInteger;
    }
    let mut value: u64 = 0;
    for &b in digits {
        if !b.is_ascii_digit() {
            return IntToken::NotInteger;
        }
        if value < INT_LIMIT {
            value = value * 10 + u64::from(b - b'0');
        }
    }
    if value >= INT_LIMIT {
        IntToken::TooLarge
    } else if neg {
        IntToken::Value(-(value as i64))
    } else {
        IntToken::Value(value as i64)
    }
}

/// Record-level warnings for N-bit codes, each stating its count.
///
/// - clipping: samples at the lowest or highest code of the N-bit range (for N >= 2);
/// - stuck bits: a bit of the offset-binary code (code + 2^(N-1)) that never changes, checked only with
///   at least 64 samples and more than one distinct code, and only for bits the observed range would
///   make change (a bit held constant by a narrow range alone proves nothing);
/// - missing codes: codes strictly between the observed minimum and maximum that never occur, reported
///   only when a sine spanning that range would hit each mid-scale code at least 5 times on average
///   (samples / (π · half range)); with fewer expected hits an absent code proves nothing.
///
/// Codes outside the N-bit range or a resolution outside 1..=32 give no warnings (the parsers reject them).
pub fn check_codes(codes: &[i32], bits: u32) -> Vec<String> {
    let mut warnings = Vec::new();
    if codes.is_empty() || check_bits(bits).is_err() {
        return warnings;
    }
    let (lo, hi) = (min_code(bits), max_code(bits));
    // Passes in i32 that vectorise; one pass doing all four in i64 cost as much as the parse.
    let (min, max) = codes
        .iter()
        .fold((i32::MAX, i32::MIN), |(a, b), &c| (a.min(c), b.max(c)));
    let (min, max) = (i64::from(min), i64::from(max));
    if min < lo || max > hi {
        return warnings;
    }
    // In range, so the end codes are i32 values too.
    let (lo32, hi32) = (lo as i32, hi as i32);
    let (at_lo, at_hi) = codes.iter().fold((0usize, 0usize), |(a, b), &c| {
        (a + usize::from(c == lo32), b + usize::from(c == hi32))
    });
    let n = codes.len();

    if bits >= 2 && at_lo + at_hi > 0 {
        let clipped = at_lo + at_hi;
        warnings.push(format!(
            "{clipped} samples ({:.2}%) at the end codes ({at_lo} at lowest, {at_hi} at highest): \
             the input may be clipping",
            100.0 * clipped as f64 / n as f64
        ));
    }

    if n >= STUCK_BITS_MIN_SAMPLES && min != max {
        warnings.extend(stuck_bits(codes, bits, min, max));
    }

    if let Some(w) = missing_codes(codes, min, max) {
        warnings.push(w);
    }
    warnings
}

/// Warnings for bits of the offset-binary code that never change although the observed range spans them.
fn stuck_bits(codes: &[i32], bits: u32, min: i64, max: i64) -> Vec<String> {
    let half = 1i64 << (bits - 1);
    // Offset binary of an in-range code is 0..2^N-1, N <= 32: a u32, formed with wrapping adds that
    // vectorise.
    let half32 = half as u32;
    let (all_or, all_and) = codes.iter().fold((0u32, u32::MAX), |(o, a), &c| {
        let u = (c as u32).wrapping_add(half32);
        (o | u, a & u)
    });
    let (all_or, all_and) = (u64::from(all_or), u64::from(all_and));
    let (umin, umax) = ((min + half) as u64, (max + half) as u64);
    let mut stuck0 = Vec::new();
    let mut stuck1 = Vec::new();
    for b in (0..bits).rev() {
        // If min and max lie in the same aligned block of 2^b codes, every code between them has the
        // same bit b: constancy there is explained by the range, not by a fault.
        if umin >> b == umax >> b {
            continue;
        }
        if all_and >> b & 1 == 1 {
            stuck1.push(b);
        } else if all_or >> b & 1 == 0 {
            stuck0.push(b);
        }
    }
    let mut out = Vec::new();
    for (level, list) in [(0, stuck0), (1, stuck1)] {
        if list.is_empty() {
            continue;
        }
        let names = list
            .iter()
            .map(u32::to_string)
            .collect::<Vec<_>>()
            .join(", ");
        let noun = if list.len() == 1 { "bit" } else { "bits" };
        out.push(format!(
            "{noun} {names} stuck at {level} in all {} samples (offset-binary code, bit 0 = LSB)",
            codes.len()
        ));
    }
    out
}

/// A warning for codes that never occur between the observed extremes, when their absence is evidence.
fn missing_codes(codes: &[i32], min: i64, max: i64) -> Option<String> {
    if max - min < 2 {
        return None;
    }
    let half_range = (max - min) as f64 / 2.0;
    // A sine of amplitude A spends a fraction 1/(π A) of its samples per code near mid-scale (the
    // arcsine density's minimum): common practice, no source.
    let expected_mid = codes.len() as f64 / (std::f64::consts::PI * half_range);
    if expected_mid < MISSING_MIN_EXPECTED_HITS {
        return None;
    }
    // The test above bounds the span by about 0.13 × samples, so this table stays small.
    let span = (max - min + 1) as usize;
    let mut seen = vec![false; span];
    for &c in codes {
        seen[(i64::from(c) - min) as usize] = true;
    }
    let missing: Vec<i64> = seen
        .iter()
        .enumerate()
        .filter(|(_, &s)| !s)
        .map(|(i, _)| min + i as i64)
        .collect();
    if missing.is_empty() {
        return None;
    }
    let listed = missing
        .iter()
        .take(MISSING_LISTED)
        .map(i64::to_string)
        .collect::<Vec<_>>()
        .join(", ");
    let more = if missing.len() > MISSING_LISTED {
        ", ..."
    } else {
        ""
    };
    let noun = if missing.len() == 1 { "code" } else { "codes" };
    Some(format!(
        "{} missing {noun} between the observed extremes {min} and {max} (a sine over this range \
         would hit each mid-scale code about {expected_mid:.1} times): {listed}{more}",
        missing.len()
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Codes of an ideal sine quantised to N bits: round(A sin(2π k n / len) + offset).
    fn sine(len: usize, cycles: usize, amplitude: f64, offset: f64, bits: u32) -> Vec<i32> {
        let (lo, hi) = (min_code(bits) as f64, max_code(bits) as f64);
        (0..len)
            .map(|n| {
                let x = amplitude
                    * (2.0 * std::f64::consts::PI * cycles as f64 * n as f64 / len as f64).sin()
                    + offset;
                x.round().clamp(lo, hi) as i32
            })
            .collect()
    }

    #[test]
    fn clean_sine_gives_no_warnings() {
        // A -1 dBFS-ish sine with many samples per code: no clipping, no stuck bits, no missing codes.
        // Facts of the trade (common practice, no source).
        let codes = sine(1 << 16, 1021, 1800.0, 0.0, 12);
        assert_eq!(check_codes(&codes, 12), Vec::<String>::new());
    }

    #[test]
    fn clipping_counts_both_end_codes() {
        // 12 bits: end codes are -2048 and 2047 (common practice, no source).
        let mut codes = vec![0i32; 100];
        codes[..3].fill(-2048);
        codes[3..8].fill(2047);
        let w = check_codes(&codes, 12);
        let clip: Vec<_> = w.iter().filter(|s| s.contains("clipping")).collect();
        assert_eq!(clip.len(), 1, "{w:?}");
        assert_eq!(
            clip[0],
            "8 samples (8.00%) at the end codes (3 at lowest, 5 at highest): the input may be clipping"
        );
    }

    #[test]
    fn overdriven_sine_reports_clipping() {
        // Amplitude 2500 codes on a 12-bit range clips at both ends (common practice, no source).
        let codes = sine(4096, 7, 2500.0, 0.0, 12);
        let w = check_codes(&codes, 12);
        assert!(w.iter().any(|s| s.contains("may be clipping")), "{w:?}");
        let lo = codes.iter().filter(|&&c| c == -2048).count();
        let hi = codes.iter().filter(|&&c| c == 2047).count();
        assert!(lo > 0 && hi > 0);
        assert!(w
            .iter()
            .any(|s| s.contains(&format!("({lo} at lowest, {hi} at highest)"))));
    }

    #[test]
    fn stuck_bit_at_one_is_found_with_its_count() {
        // Force bit 3 of the offset-binary code to 1 (a shorted output line): common practice, no source.
        let half = 1 << 11;
        let codes: Vec<i32> = sine(4096, 13, 1500.0, 0.0, 12)
            .into_iter()
            .map(|c| ((c + half) | 0b1000) - half)
            .collect();
        let w = check_codes(&codes, 12);
        assert!(
            w.iter()
                .any(|s| s.starts_with("bit 3 stuck at 1 in all 4096 samples")),
            "{w:?}"
        );
        assert!(!w.iter().any(|s| s.contains("stuck at 0")), "{w:?}");
    }

    #[test]
    fn stuck_bits_at_zero_are_listed_together() {
        let half = 1 << 11;
        let codes: Vec<i32> = sine(4096, 13, 1500.0, 0.0, 12)
            .into_iter()
            .map(|c| ((c + half) & !0b101) - half)
            .collect();
        let w = check_codes(&codes, 12);
        assert!(
            w.iter()
                .any(|s| s.starts_with("bits 2, 0 stuck at 0 in all 4096 samples")),
            "{w:?}"
        );
    }

    #[test]
    fn stuck_bits_need_64_samples_and_two_codes() {
        let half = 1 << 11;
        let short: Vec<i32> = sine(63, 3, 1500.0, 0.0, 12)
            .into_iter()
            .map(|c| ((c + half) | 0b1000) - half)
            .collect();
        assert!(!check_codes(&short, 12).iter().any(|s| s.contains("stuck")));
        let constant = vec![5i32; 1000];
        assert!(!check_codes(&constant, 12)
            .iter()
            .any(|s| s.contains("stuck")));
    }

    #[test]
    fn bits_fixed_by_a_narrow_range_are_not_stuck() {
        // Codes 100..=115 (offset binary 2148..=2163) keep bits 11..5 constant only because the range
        // is narrow; bits 0..3 toggle. Nothing is stuck.
        let codes: Vec<i32> = (0..1024).map(|i| 100 + (i % 16)).collect();
        let w = check_codes(&codes, 12);
        assert!(!w.iter().any(|s| s.contains("stuck")), "{w:?}");
    }

    #[test]
    fn missing_codes_are_counted_and_listed() {
        // A sine over ±100 codes with 65536 samples hits each mid-scale code about 65536/(π·100) ≈ 208.6
        // times (arcsine density, common practice, no source); remove three codes.
        let codes: Vec<i32> = sine(1 << 16, 997, 100.0, 0.0, 12)
            .into_iter()
            .map(|c| {
                if c == 7 || c == -3 || c == 50 {
                    c + 1
                } else {
                    c
                }
            })
            .collect();
        let w = check_codes(&codes, 12);
        let m: Vec<_> = w.iter().filter(|s| s.contains("missing")).collect();
        assert_eq!(m.len(), 1, "{w:?}");
        assert!(
            m[0].starts_with("3 missing codes between the observed extremes -100 and 100"),
            "{}",
            m[0]
        );
        assert!(m[0].contains("about 208.6 times"), "{}", m[0]);
        assert!(m[0].ends_with(": -3, 7, 50"), "{}", m[0]);
    }

    #[test]
    fn missing_codes_list_is_cut_after_eight() {
        // Only even codes: 100 odd codes missing in -100..=100.
        let codes: Vec<i32> = sine(1 << 16, 997, 100.0, 0.0, 12)
            .into_iter()
            .map(|c| c & !1)
            .collect();
        let w = check_codes(&codes, 12);
        let m = w.iter().find(|s| s.contains("missing")).expect("warning");
        assert!(m.starts_with("100 missing codes"), "{m}");
        assert!(
            m.ends_with(": -99, -97, -95, -93, -91, -89, -87, -85, ..."),
            "{m}"
        );
    }

    #[test]
    fn missing_codes_need_enough_expected_hits() {
        // 4096 samples over ±1800 codes: 4096/(π·1800) ≈ 0.72 hits per code, so absent codes prove
        // nothing and are not reported.
        let codes = sine(4096, 13, 1800.0, 0.0, 12);
        let w = check_codes(&codes, 12);
        assert!(!w.iter().any(|s| s.contains("missing")), "{w:?}");
    }

    #[test]
    fn thirty_two_bit_codes_are_checked_without_overflow() {
        let codes = vec![i32::MIN, i32::MAX, 0, 1];
        let w = check_codes(&codes, 32);
        assert_eq!(
            w,
            vec![
                "2 samples (50.00%) at the end codes (1 at lowest, 1 at highest): the input may be clipping"
                    .to_string()
            ]
        );
    }

    #[test]
    fn bad_input_gives_no_warnings_and_no_panic() {
        assert!(check_codes(&[], 12).is_empty());
        assert!(check_codes(&[1, 2, 3], 0).is_empty());
        assert!(check_codes(&[1, 2, 3], 33).is_empty());
        // Out-of-range codes are the parsers' job; no panic here.
        assert!(check_codes(&[5000, -5000], 12).is_empty());
    }

    #[test]
    fn parse_int_accepts_signs_and_rejects_junk() {
        assert_eq!(parse_int(b"+17"), IntToken::Value(17));
        assert_eq!(parse_int(b"-2048"), IntToken::Value(-2048));
        assert_eq!(parse_int(b"0"), IntToken::Value(0));
        assert_eq!(parse_int(b"-"), IntToken::NotInteger);
        assert_eq!(parse_int(b""), IntToken::NotInteger);
        assert_eq!(parse_int(b"1.5"), IntToken::NotInteger);
        assert_eq!(parse_int(b"0x10"), IntToken::NotInteger);
        assert_eq!(parse_int(b"99999999999999999999999"), IntToken::TooLarge);
    }

    #[test]
    fn tokens_are_quoted_escaped_and_cut() {
        assert_eq!(show_token(b"abc"), "'abc'");
        assert_eq!(show_token(b"a\tb"), "'a\\tb'");
        assert_eq!(show_token(b""), "'' (empty)");
        let long = "x".repeat(100);
        assert_eq!(
            show_token(long.as_bytes()),
            format!("'{}...'", "x".repeat(40))
        );
    }

    #[test]
    fn range_text_names_bits_and_coding() {
        assert_eq!(range_text(12), "-2048..=2047 (12-bit two's complement)");
        assert_eq!(
            range_text(32),
            "-2147483648..=2147483647 (32-bit two's complement)"
        );
        let e = to_code(2048, 12, "f.txt", Location::Line(3)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::CodeOutOfRange);
        assert_eq!(e.location, Location::Line(3));
        assert_eq!(e.found, "2048");
        assert_eq!(
            check_bits(0).unwrap_err().location,
            Location::Key("bits".into())
        );
    }
}
