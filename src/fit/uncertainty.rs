//! One-sigma standard uncertainties of the sine fit's figures, from the record's own statistics: the
//! residual's rms stands for the noise, and the asymptotic (large-N) covariance of the least-squares
//! sine fit in white noise gives each parameter's spread. That covariance is the Cramér-Rao bound,
//! which the least-squares fit reaches in Gaussian noise (Rife & Boorstyn 1974 for the frequency; IEEE
//! Std 1057-2017 and IEEE Std 1241-2010 treat the three- and four-parameter fits as these least-squares
//! estimators). The distortion left in the residual is counted as noise, so the bounds are
//! conservative on a record with strong harmonics.

use super::{cycles_std, FitMethod};
use serde::Serialize;
use std::f64::consts::{LN_10, LN_2};

/// dB per unit of relative power change: 10/ln 10.
pub(crate) const DB_PER_NEPER_POWER: f64 = 10.0 / LN_10;

/// One-sigma standard uncertainties of a fit's figures, keyed as the figures are; `None` where the
/// figure is absent.
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct FitUncertainty {
    /// Of the fitted frequency, hertz.
    pub frequency_hz: Option<f64>,
    /// Of the amplitude, codes.
    pub amplitude_codes: Option<f64>,
    /// Of the amplitude, dB.
    pub amplitude_dbfs: Option<f64>,
    /// Of the phase at sample 0, radians.
    pub phase_rad: Option<f64>,
    /// Of the offset, codes.
    pub offset_codes: Option<f64>,
    /// Of the residual rms, codes.
    pub residual_rms_codes: Option<f64>,
    /// Of the fit SINAD, dB.
    pub sinad_db: Option<f64>,
    /// Of the fit ENOB, bits.
    pub enob_bits: Option<f64>,
}

/// The uncertainties of a fit of amplitude `amplitude` (codes) whose residual rms is `residual_rms`
/// over `samples` samples at `sample_rate_hz`.
///
/// With σ² the noise variance (the residual's mean square, scaled by N/(N − p) for the p fitted
/// parameters), N samples and A the amplitude, the large-N covariance of the fit in the centred time
/// frame is diagonal (Kay 1993, Example 3.14, from memory; the frequency's element is checked against
/// the inverse Fisher information in `super::tests`):
/// var(A) = 2σ²/N, var(C) = σ²/N, var(φ_centre) = 2σ²/(A²N), var(ω) = 24σ²/(A²N(N²−1)).
/// The phase at sample 0 is φ_centre − ω·(N−1)/2, so it adds ((N−1)/2)²·var(ω) (four times the
/// centred variance in all); a three-parameter fit is given ω, but only as well as the record can
/// check it, so it states the same. The residual rms s of
/// Gaussian noise has var(s) ≈ σ²/(2(N − p)) (chi-square with N − p degrees of freedom, delta method).
/// SINAD = 20·log10(A/(√2·s)) and ENOB = N_bits − log2(s·√12) follow by the delta method.
pub fn of_fit(
    method: FitMethod,
    amplitude: f64,
    residual_rms: f64,
    samples: usize,
    sample_rate_hz: f64,
) -> FitUncertainty {
    let p = match method {
        FitMethod::ThreeParameter => 3.0,
        FitMethod::FourParameter => 4.0,
    };
    let n = samples as f64;
    if n <= p + 1.0 || amplitude.is_nan() || amplitude <= 0.0 || !residual_rms.is_finite() {
        return FitUncertainty::default();
    }
    let sigma = residual_rms * (n / (n - p)).sqrt();
    let sd_amp = sigma * (2.0 / n).sqrt();
    let sd_offset = sigma / n.sqrt();
    let var_phase_centre = 2.0 * sigma * sigma / (amplitude * amplitude * n);
    // The frequency's Cramér-Rao σ, for both fits: a three-parameter fit takes its frequency as
    // given, but the record can check a given frequency only to this σ (the analysis warns when a
    // four-parameter fit finds the tone further away), so the given frequency, and the phase it
    // carries back to sample 0, are stated with it. cycles_std is the form in cycles per record:
    // ω's sd times N/(2π).
    let sd_cycles = cycles_std(amplitude, sigma, samples);
    let sd_omega = sd_cycles * std::f64::consts::TAU / n;
    let centre = (n - 1.0) / 2.0;
    let (frequency_hz, var_phase) = (
        Some(sd_cycles * sample_rate_hz / n),
        var_phase_centre + (centre * sd_omega).powi(2),
    );
    let rel_amp = sd_amp / amplitude;
    let sd_rms = sigma / (2.0 * (n - p)).sqrt();
    let (sinad, enob) = if residual_rms > 0.0 {
        let rel_rms = sd_rms / residual_rms;
        (
            Some(2.0 * DB_PER_NEPER_POWER * rel_amp.hypot(rel_rms)),
            Some(rel_rms / LN_2),
        )
    } else {
        (None, None)
    };
    FitUncertainty {
        frequency_hz,
        amplitude_codes: Some(sd_amp),
        amplitude_dbfs: Some(2.0 * DB_PER_NEPER_POWER * rel_amp),
        phase_rad: Some(var_phase.sqrt()),
        offset_codes: Some(sd_offset),
        residual_rms_codes: Some(sd_rms),
        sinad_db: sinad,
        enob_bits: enob,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // The delta-method forms against their definitions: 20·log10 of a relative change δ is
    // 8.686·δ dB, log2 of it is δ/ln 2 bits (common practice, no source).
    #[test]
    fn delta_method_forms() {
        let u = of_fit(FitMethod::ThreeParameter, 1000.0, 1.0, 10_003, 1e6);
        let n: f64 = 10_000.0;
        let sd_a = (2.0 / n).sqrt();
        // Relative tolerance: the forms are exact in closed form; 1e-12 covers rounding.
        const EXACT: f64 = 1e-12;
        assert!((u.amplitude_codes.unwrap() / sd_a - 1.0).abs() < EXACT);
        let want_dbfs = 20.0 / LN_10 * sd_a / 1000.0;
        assert!((u.amplitude_dbfs.unwrap() / want_dbfs - 1.0).abs() < EXACT);
        // The phase at sample 0 has about four times the centred variance 2σ²/(A²N) (the
        // frequency's share carried back half a record), for either fit.
        let centred = (2.0 / (1000.0f64.powi(2) * n)).sqrt();
        let ratio = u.phase_rad.unwrap() / centred;
        assert!((ratio - 2.0).abs() < 1e-3, "{ratio}");
        // The frequency's σ is the Cramér-Rao form for both fits.
        let four = of_fit(FitMethod::FourParameter, 1000.0, 1.0, 10_004, 1e6);
        let want = cycles_std(1000.0, (10_004.0f64 / 10_000.0).sqrt(), 10_004) * 1e6 / 10_004.0;
        assert!((four.frequency_hz.unwrap() / want - 1.0).abs() < EXACT);
        assert!(u.frequency_hz.is_some());
        assert!(of_fit(FitMethod::FourParameter, 0.0, 1.0, 100, 1.0)
            .amplitude_codes
            .is_none());
    }
}
