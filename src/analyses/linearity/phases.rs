//! Sampling phases of a histogram test: how many distinct phases of the input sine the records hold,
//! and whether that is enough for the DNL uncertainty asked. IEEE Std 1241 asks for a test frequency
//! with fin/fs = M/N, M and N coprime (from memory), so that the record samples N distinct, equally
//! spaced phases; at a simple ratio (fin/fs ≈ 1/81) the same few phases repeat and the histogram is
//! their pattern, not the arcsine density, however many samples it holds.

use serde::Serialize;

use crate::error::Result;
use crate::fit::{fit_four, FourParamOptions};
use crate::record::Record;

/// The phase coverage of the records of a histogram test (`phases` in its JSON).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PhaseCoverage {
    /// The input frequency over the sample rate, fin/fs, from the first record's four-parameter fit:
    /// the stated input frequency's ratio M/N when the fit agrees with it within four sigmas, else the
    /// simplest ratio within four sigmas of the fit, when one has N up to the samples taken.
    pub fin_over_fs: f64,
    /// Distinct sampling phases: one over the largest gap between the sorted phases of all samples
    /// (N for fin/fs = M/N with M, N coprime and at least N samples).
    pub distinct_phases: u64,
    /// Phases needed for the DNL uncertainty asked: ⌈π·2^N/β⌉ (see [`required_phases`]).
    pub required_phases: u64,
    /// The DNL error the phase coverage alone can cause: π·2^N / phases, in LSB.
    pub phase_dnl_error_lsb: f64,
    /// True when `distinct_phases` ≥ `required_phases`.
    pub sufficient: bool,
}

/// Relative rounding of a stated input frequency over the sample rate, both given in decimal: a few
/// units in the last place of an f64 (2.2e-16), with room for a frequency printed to 12 digits.
const STATED_RATIO_REL: f64 = 1e-12;

/// Phases needed for a DNL error of at most β LSB at N bits: ⌈π·2^N/β⌉.
///
/// Derivation (sine geometry): a sine of amplitude A ≈ 2^(N−1) LSB gives a mid-scale code a share
/// 1/(πA) of its phase (the arcsine density at its centre), so P equally spaced phases put P/(πA) of
/// them in the code, in two arcs per period; each arc's count is off by less than one phase, so the
/// code's width is off by less than 2πA/P = π·2^N/P LSB.
pub fn required_phases(bits: u32, dnl_lsb: f64) -> u64 {
    (std::f64::consts::PI * 2f64.powi(bits as i32) / dnl_lsb).ceil() as u64
}

/// Distinct phases of samples n = 0..len of records whose sine advances `fin_over_fs` turns per sample,
/// record i starting at `starts[i]` turns: one over the largest gap between the sorted phases (the
/// largest gap decides the worst-covered code), at most the number of samples.
pub fn distinct_phases(fin_over_fs: f64, starts: &[f64], len: usize) -> u64 {
    let mut phases: Vec<f64> = starts
        .iter()
        .flat_map(|&s| (0..len).map(move |n| (s + fin_over_fs * n as f64).rem_euclid(1.0)))
        .collect();
    if phases.is_empty() {
        return 0;
    }
    phases.sort_unstable_by(f64::total_cmp);
    let wrap = 1.0 - phases[phases.len() - 1] + phases[0];
    let gap = phases.windows(2).map(|w| w[1] - w[0]).fold(wrap, f64::max);
    let count = if gap > 0.0 { (1.0 / gap).round() } else { 1.0 };
    (count as u64).min(phases.len() as u64)
}

/// The simplest fraction p/q within `tolerance` of `x` (0 ≤ x < 1) with q ≤ `max_denominator`, from
/// the continued-fraction convergents of x; `None` when no convergent that close has a small enough
/// denominator. A measured fin/fs is taken as the ratio M/N the generator was set to when one lies
/// within the fit's uncertainty: the phases it gives are then exact.
pub fn nearest_ratio(x: f64, tolerance: f64, max_denominator: u64) -> Option<(u64, u64)> {
    let (mut h0, mut h1) = (0u64, 1u64);
    let (mut k0, mut k1) = (1u64, 0u64);
    let mut rest = x;
    for _ in 0..64 {
        let a = rest.floor();
        if !(0.0..1e15).contains(&a) {
            return None;
        }
        let a = a as u64;
        let h = a.checked_mul(h1)?.checked_add(h0)?;
        let k = a.checked_mul(k1)?.checked_add(k0)?;
        if k > max_denominator {
            return None;
        }
        if k > 0 && (x - h as f64 / k as f64).abs() <= tolerance {
            return Some((h, k));
        }
        (h0, h1, k0, k1) = (h1, h, k1, k);
        let frac = rest - rest.floor();
        if frac <= 0.0 {
            return None;
        }
        rest = 1.0 / frac;
    }
    None
}

/// The phase coverage of `records` (one resolution and length) for a DNL uncertainty of `dnl_lsb`:
/// each record's sine is found by a four-parameter fit (its frequency and phase; the clipped tails of
/// an overdriven sine are symmetric and leave the frequency in place), started from the record's
/// input frequency when it has one (`--fin`, the sidecar's `fin_hz`). Errors: the fit's.
pub fn phase_coverage(records: &[Record], dnl_lsb: f64) -> Result<Option<PhaseCoverage>> {
    let Some(first) = records.first() else {
        return Ok(None);
    };
    let mut starts = Vec::with_capacity(records.len());
    let mut ratio = 0.0;
    for r in records {
        let y: Vec<f64> = r.codes.iter().map(|&c| f64::from(c)).collect();
        let options = FourParamOptions {
            hint_hz: r.fin_hint_hz,
            ..FourParamOptions::default()
        };
        let out =
            fit_four(&y, r.sample_rate_hz, r.bits, options).map_err(|e| e.with_path(&r.source))?;
        let f = out.fit.cycles / r.len() as f64;
        if starts.is_empty() {
            // Four sigmas of the fitted cycles per sample (the fit's Cramér-Rao form).
            let tolerance = 4.0 * out.fit.cycles_std / r.len() as f64;
            let most = (r.len() * records.len()) as u64;
            // Within the fit's uncertainty lie many ratios (one with a denominator near
            // 1/√tolerance always does), and the simplest of them may have far fewer phases than the
            // generator's. A stated input frequency the fit agrees with is the generator's setting:
            // its own ratio is taken (to the rounding of a decimal frequency). Without one, the
            // simplest ratio within the fit's uncertainty is taken, which can only undercount.
            let stated = r
                .fin_hint_hz
                .map(|h| h / r.sample_rate_hz)
                .filter(|s| (s - f).abs() <= tolerance);
            let found = match stated {
                Some(s) => nearest_ratio(s, STATED_RATIO_REL * s, most),
                None => nearest_ratio(f, tolerance, most),
            };
            ratio = match found {
                Some((m, n)) => m as f64 / n as f64,
                None => stated.unwrap_or(f),
            };
        }
        starts.push(out.fit.phase_rad / std::f64::consts::TAU);
    }
    let phases = distinct_phases(ratio, &starts, first.len());
    let required = required_phases(first.bits, dnl_lsb);
    Ok(Some(PhaseCoverage {
        fin_over_fs: ratio,
        distinct_phases: phases,
        required_phases: required,
        phase_dnl_error_lsb: std::f64::consts::PI * 2f64.powi(first.bits as i32)
            / phases.max(1) as f64,
        sufficient: phases >= required,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    // IEEE Std 1241's rule (from memory): fin/fs = M/N with M, N coprime gives N distinct phases.
    // 7/1024 over 4096 samples: 1024 phases; 1/81 over 10^5 samples: 81; 8/1024 = 1/128: 128.
    #[test]
    fn coprime_ratios_give_their_denominator() {
        assert_eq!(distinct_phases(7.0 / 1024.0, &[0.0], 4096), 1024);
        assert_eq!(distinct_phases(1.0 / 81.0, &[0.3], 100_000), 81);
        assert_eq!(distinct_phases(8.0 / 1024.0, &[0.0], 4096), 128);
        // Fewer samples than the denominator: every sample is its own phase, but the largest gap of
        // 7/1024 over 100 samples is wider than 1/100 (the phases are not yet spread out).
        assert!(distinct_phases(7.0 / 1024.0, &[0.0], 100) <= 100);
        // Two records at different phases of 1/81 double the phases when offset by half a step.
        assert_eq!(distinct_phases(1.0 / 81.0, &[0.0, 0.5 / 81.0], 1000), 162);
    }

    // Continued fractions: 0.0123456... within 1e-9 is 1/81; 405/32768 is found exactly; the golden
    // ratio's fraction has no convergent within 1e-12 below a denominator of 1000 (its convergents are
    // ratios of Fibonacci numbers, each about 1/(√5·k²) away).
    #[test]
    fn nearest_ratio_finds_the_set_fraction() {
        assert_eq!(
            nearest_ratio(1.0 / 81.0 + 1e-12, 1e-9, 1 << 20),
            Some((1, 81))
        );
        assert_eq!(
            nearest_ratio(405.0 / 32768.0, 1e-15, 1 << 20),
            Some((405, 32768))
        );
        assert_eq!(nearest_ratio((3.0 - 5f64.sqrt()) / 2.0, 1e-12, 1000), None);
        assert_eq!(nearest_ratio(0.0, 1e-12, 10), Some((0, 1)));
    }

    // π·2^10/0.1 = 32,169.9 → 32,170 (the derivation in required_phases' docs).
    #[test]
    fn required_phases_follow_the_bound() {
        assert_eq!(required_phases(10, 0.1), 32_170);
        assert_eq!(required_phases(8, 1.0), 805);
    }
}
