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
    /// The input frequency over the sample rate, fin/fs, from the first record's four-parameter fit.
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

/// The phase coverage of `records` (one resolution and length) for a DNL uncertainty of `dnl_lsb`:
/// each record's sine is found by a four-parameter fit (its frequency and phase; the clipped tails of
/// an overdriven sine are symmetric and leave the frequency in place). Errors: the fit's.
pub fn phase_coverage(records: &[Record], dnl_lsb: f64) -> Result<Option<PhaseCoverage>> {
    let Some(first) = records.first() else {
        return Ok(None);
    };
    let mut starts = Vec::with_capacity(records.len());
    let mut ratio = 0.0;
    for r in records {
        let y: Vec<f64> = r.codes.iter().map(|&c| f64::from(c)).collect();
        let out = fit_four(&y, r.sample_rate_hz, r.bits, FourParamOptions::default())
            .map_err(|e| e.with_path(&r.source))?;
        let f = out.fit.cycles / r.len() as f64;
        if starts.is_empty() {
            ratio = f;
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

    // π·2^10/0.1 = 32,169.9 → 32,170 (the derivation in required_phases' docs).
    #[test]
    fn required_phases_follow_the_bound() {
        assert_eq!(required_phases(10, 0.1), 32_170);
        assert_eq!(required_phases(8, 1.0), 805);
    }
}
