//! The whole pipeline (synth → fit → spectrum) against handbook formulas and exact time-domain truth.

use crate::tolerances::*;
use spurline::{analyze, analyze_averaged, AnalysisSettings, FitChoice};
use spurline::{synthesize, SynthFrequency, SynthSettings};
use spurline::{SpectrumSettings, Window, WindowChoice};

fn ideal(bits: u32, samples: usize, amplitude_dbfs: f64, target_hz: f64) -> SynthSettings {
    SynthSettings {
        bits,
        sample_rate_hz: 100e6,
        samples,
        amplitude_dbfs,
        frequency: SynthFrequency::NearestCoherent(target_hz),
        phase_rad: 0.4,
        offset_codes: 0.0,
        noise_rms_codes: 0.0,
        harmonics_dbc: vec![],
        spur: None,
        jitter_rms_s: 0.0,
        inl_bow_lsb: 0.0,
        seed: 11,
        dnl_pattern_lsb: vec![],
        missing_codes: vec![],
    }
}

fn run(s: &SynthSettings, settings: &AnalysisSettings) -> spurline::Measured {
    let rec = synthesize(s).expect("valid synth settings").record;
    analyze(&rec, settings).expect("record analyses")
}

/// Ideal N-bit quantiser: SINAD = 6.02N + 1.76 dB for a full-scale sine (handbook formula, exactly
/// 20·log10(2^(N−1)·√6)), referred to the actual amplitude.
#[test]
fn ideal_quantiser_sinad_is_602n_plus_176() {
    for bits in 8..=16 {
        let s = ideal(bits, 8192, -0.1, 10.3e6);
        let m = run(&s, &AnalysisSettings::default());
        let sp = m.analysis.found.spectrum.unwrap();
        let expected = 20.0 * (2f64.powi(bits as i32 - 1) * 6f64.sqrt()).log10() - 0.1;
        let got = sp.sinad_db.unwrap();
        assert!(
            (got - expected).abs() < HANDBOOK_DB,
            "{bits} bits: SINAD {got} vs {expected}"
        );
        // Full-scale-referred ENOB recovers N (handbook: ENOB = (SINAD − 1.76)/6.02).
        assert!(
            (sp.enob_full_scale_bits.unwrap() - bits as f64).abs() < HANDBOOK_BITS,
            "{bits}"
        );
        assert_eq!(sp.window, "rectangular");
        assert!(sp.coherent);
    }
}

/// The spectral SINAD must equal the exact time-domain figure of the same record: signal power over the
/// power of (record − ideal sine − offset) computed sample by sample.
#[test]
fn spectral_sinad_matches_time_domain_error() {
    let s = SynthSettings {
        noise_rms_codes: 1.3,
        harmonics_dbc: vec![(2, -70.0), (3, -75.0)],
        ..ideal(12, 4096, -1.0, 7.7e6)
    };
    let made = synthesize(&s).unwrap();
    let m = analyze(&made.record, &AnalysisSettings::default()).unwrap();
    let fit = m.analysis.found.fit.unwrap();
    // Residual of the fit = everything but the fundamental and offset (time domain).
    let err_power: f64 = m.traces.residual.iter().map(|r| r * r).sum::<f64>() / 4096.0;
    let sig = fit.amplitude_codes.powi(2) / 2.0;
    let time_sinad = 10.0 * (sig / err_power).log10();
    let sp = m.analysis.found.spectrum.unwrap();
    assert!(
        (sp.sinad_db.unwrap() - time_sinad).abs() < SELF_CONSISTENCY_DB,
        "{} vs {time_sinad}",
        sp.sinad_db.unwrap()
    );
    // And the fit's own SINAD is the same quantity (IEEE 1241 fit form).
    assert!((fit.sinad_db.unwrap() - time_sinad).abs() < LONG_SUM);
}

/// Noise floor per bin = −SNR − 10·log10(N/2) (handbook): ideal 12 bits at 4096 points, −107.1 dBFS
/// for a full-scale input.
#[test]
fn ideal_12_bit_noise_floor() {
    let s = ideal(12, 4096, -0.05, 10.1e6);
    let sp = run(&s, &AnalysisSettings::default())
        .analysis
        .found
        .spectrum
        .unwrap();
    let expected = -(6.02 * 12.0 + 1.76) - 10.0 * 2048f64.log10();
    assert!((expected + 107.1).abs() < PRINTED_1DP);
    assert!(
        (sp.noise_floor_dbfs.unwrap() - expected).abs() < HANDBOOK_DB,
        "{:?}",
        sp.noise_floor_dbfs
    );
}

/// Ideal 12-bit converter at −6.02 dBFS: spectral ENOB 11.0, full-scale-referred 12.0, fit ENOB 12.0
/// (IEEE 1241 fit form, which refers the residual to q/√12 whatever the amplitude).
#[test]
fn enob_forms_at_half_scale() {
    let s = ideal(12, 8192, -6.02, 13.3e6);
    let a = run(&s, &AnalysisSettings::default()).analysis;
    let sp = a.found.spectrum.unwrap();
    let fit = a.found.fit.unwrap();
    assert!(
        (sp.enob_bits.unwrap() - 11.0).abs() < HANDBOOK_BITS,
        "{:?}",
        sp.enob_bits
    );
    assert!(
        (sp.enob_full_scale_bits.unwrap() - 12.0).abs() < HANDBOOK_BITS,
        "{:?}",
        sp.enob_full_scale_bits
    );
    assert!(
        (fit.enob_bits.unwrap() - 12.0).abs() < HANDBOOK_BITS,
        "{:?}",
        fit.enob_bits
    );
}

/// Harmonics put in by the simulated converter come back at their level (coherent, 20 bits so the quantisation floor per bin sits 68 dB under the
/// smallest harmonic), folded
/// into the first Nyquist zone: 3 × 37.3 MHz at 100 MS/s folds to 11.9 MHz (common practice).
#[test]
fn harmonics_are_recovered_and_folded() {
    let s = SynthSettings {
        harmonics_dbc: vec![(2, -70.0), (3, -80.0), (5, -90.0)],
        ..ideal(20, 8192, -1.0, 37.3e6)
    };
    let a = run(&s, &AnalysisSettings::default()).analysis;
    let fin = a.found.fit.unwrap().frequency_hz;
    let sp = a.found.spectrum.unwrap();
    for (order, level) in [(2u32, -70.0), (3, -80.0), (5, -90.0)] {
        let h = sp.harmonics.iter().find(|h| h.order == order).unwrap();
        assert!(
            (h.dbc.unwrap() - level).abs() < HARMONIC_DB,
            "H{order}: {:?}",
            h.dbc
        );
        let folded = {
            let f = (order as f64 * fin) % 100e6;
            if f > 50e6 {
                100e6 - f
            } else {
                f
            }
        };
        assert!(
            (h.frequency_hz - folded).abs() < HARMONIC_PLACEMENT_HZ,
            "H{order} at {}",
            h.frequency_hz
        );
    }
    // THD is the power sum of the harmonics (handbook definition).
    let thd = 10.0 * (10f64.powf(-7.0) + 10f64.powf(-8.0) + 10f64.powf(-9.0)).log10();
    assert!(
        (sp.thd_dbc.unwrap() - thd).abs() < HARMONIC_DB,
        "{:?}",
        sp.thd_dbc
    );
    // The worst spur is H2, and SFDR is its level.
    let spur = sp.worst_spur.unwrap();
    assert_eq!(spur.harmonic, Some(2));
    assert!((sp.sfdr_dbc.unwrap() - 70.0).abs() < HARMONIC_DB);
}

/// Non-coherent record under the auto window gives the same figures as a coherent one of the same
/// converter, within the leakage bias the window rule allows.
#[test]
fn non_coherent_auto_window_agrees_with_coherent() {
    let base = SynthSettings {
        noise_rms_codes: 0.8,
        // −55 dBc keeps the harmonic 45 dB over the noise per bin, so noise moves it by < 0.1 dB.
        harmonics_dbc: vec![(3, -55.0)],
        ..ideal(12, 8192, -1.0, 10.0e6)
    };
    let coh = run(&base, &AnalysisSettings::default())
        .analysis
        .found
        .spectrum
        .unwrap();
    let non = SynthSettings {
        frequency: SynthFrequency::Hz(10.0123e6),
        seed: 12,
        ..base.clone()
    };
    let a = run(&non, &AnalysisSettings::default()).analysis;
    let sp = a.found.spectrum.unwrap();
    assert!(!sp.coherent);
    assert_ne!(sp.window, "rectangular");
    assert!(
        (sp.snr_db.unwrap() - coh.snr_db.unwrap()).abs() < WINDOWED_DB,
        "{:?} vs {:?}",
        sp.snr_db,
        coh.snr_db
    );
    let h3 = |s: &spurline::Spectrum| {
        s.harmonics
            .iter()
            .find(|h| h.order == 3)
            .unwrap()
            .dbc
            .unwrap()
    };
    assert!(
        (h3(&sp) + 55.0).abs() < WINDOWED_DB,
        "{} vs {}",
        h3(&sp),
        h3(&coh)
    );
    assert!((h3(&coh) + 55.0).abs() < WINDOWED_DB, "{}", h3(&coh));
    assert!(!sp.leakage.significant, "{:?}", sp.leakage);
}

/// A non-coherent record analysed without a window always warns, with its scalloping loss.
#[test]
fn non_coherent_rectangular_warns() {
    let s = SynthSettings {
        frequency: SynthFrequency::Hz(10.0123e6),
        noise_rms_codes: 0.5,
        ..ideal(12, 4096, -1.0, 10.0e6)
    };
    let settings = AnalysisSettings {
        spectrum: SpectrumSettings {
            window: WindowChoice::Fixed(Window::Rectangular),
            ..Default::default()
        },
        ..Default::default()
    };
    let a = run(&s, &settings).analysis;
    assert!(
        a.warnings.iter().any(|w| w.contains("scalloping")),
        "{:?}",
        a.warnings
    );
    assert!(
        a.warnings.iter().any(|w| w.contains("leakage")),
        "{:?}",
        a.warnings
    );
    assert!(a.found.spectrum.unwrap().leakage.significant);
}

/// Jitter-limited SNR = −20·log10(2π·f·σ) (handbook): 10 MHz with 1 ps gives 84.04 dB; at 20 bits the
/// quantisation noise (122 dB) is negligible.
#[test]
fn jitter_limited_snr() {
    let s = SynthSettings {
        jitter_rms_s: 1e-12,
        ..ideal(20, 16384, -0.5, 10.0e6)
    };
    let a = run(&s, &AnalysisSettings::default()).analysis;
    let f = a.found.fit.unwrap().frequency_hz;
    let expected = -20.0 * (std::f64::consts::TAU * f * 1e-12).log10();
    let snr = a.found.spectrum.unwrap().snr_db.unwrap();
    assert!((snr - expected).abs() < HANDBOOK_DB, "{snr} vs {expected}");
}

/// The three-parameter fit at the known frequency and the four-parameter fit agree on a coherent record.
#[test]
fn three_and_four_parameter_fits_agree() {
    let s = SynthSettings {
        noise_rms_codes: 0.7,
        ..ideal(14, 4096, -2.0, 3.3e6)
    };
    let made = synthesize(&s).unwrap();
    let four = analyze(&made.record, &AnalysisSettings::default())
        .unwrap()
        .analysis
        .found
        .fit
        .unwrap();
    let three = analyze(
        &made.record,
        &AnalysisSettings {
            fit: FitChoice::Three,
            ..Default::default()
        },
    )
    .unwrap()
    .analysis
    .found
    .fit
    .unwrap();
    assert!(
        (four.frequency_hz - made.frequency_hz).abs()
            < FIT_SIGMAS * four.cycles_std * 100e6 / 4096.0
    );
    assert!((four.amplitude_dbfs - three.amplitude_dbfs).abs() < FIT_AGREEMENT_DB);
    assert!(three.residual_rms_codes >= four.residual_rms_codes * (1.0 - ROUNDING));
}

/// Power averaging reports its count and keeps the figures; the averaged floor is steadier.
#[test]
fn averaging_counts_records() {
    let recs: Vec<_> = (0..4)
        .map(|k| {
            synthesize(&SynthSettings {
                noise_rms_codes: 1.0,
                seed: 50 + k,
                ..ideal(12, 4096, -1.0, 9.1e6)
            })
            .unwrap()
            .record
        })
        .collect();
    let one = analyze(&recs[0], &AnalysisSettings::default())
        .unwrap()
        .analysis
        .found
        .spectrum
        .unwrap();
    let avg = analyze_averaged(&recs, &AnalysisSettings::default())
        .unwrap()
        .analysis
        .found
        .spectrum
        .unwrap();
    assert_eq!(avg.records_averaged, 4);
    assert!((avg.snr_db.unwrap() - one.snr_db.unwrap()).abs() < HANDBOOK_DB);
}

/// No NaN or infinity reaches the JSON, even for a record whose harmonics are all masked (fin = fs/4).
#[test]
fn json_has_no_nan_for_masked_harmonics() {
    let s = SynthSettings {
        frequency: SynthFrequency::Hz(25e6),
        noise_rms_codes: 0.5,
        ..ideal(12, 4096, -1.0, 25e6)
    };
    let a = run(&s, &AnalysisSettings::default()).analysis;
    let json = serde_json::to_string(&a).unwrap();
    assert!(!json.contains("NaN") && !json.contains("inf"));
    let sp = a.found.spectrum.unwrap();
    assert!(sp.harmonics.iter().find(|h| h.order == 3).unwrap().masked);
    assert!(sp.harmonics.iter().find(|h| h.order == 4).unwrap().masked);
}

/// A tone inside the window's DC span cannot be separated from DC by the spectrum, but the sine fit
/// finds it: the spectral figures are withheld with a warning naming them and the reason, never a silent
/// zero, and the fit's frequency is right within its stated uncertainty (common practice, no source).
#[test]
fn tone_in_the_dc_span_withholds_the_spectrum_and_keeps_the_fit() {
    let s = SynthSettings {
        frequency: SynthFrequency::Hz(30e3),
        noise_rms_codes: 0.5,
        ..ideal(12, 4096, -1.0, 30e3)
    };
    let rec = synthesize(&s).unwrap().record;
    let a = analyze(&rec, &AnalysisSettings::default())
        .unwrap()
        .analysis;
    assert!(a.found.spectrum.is_none());
    let w = a.warnings.join("\n");
    assert!(w.contains("spectral figures withheld"), "{w}");
    assert!(w.contains("DC bins"), "{w}");
    let fit = a.found.fit.unwrap();
    let sigma = fit.uncertainty.frequency_hz.unwrap();
    assert!(
        (fit.frequency_hz - 30e3).abs() <= FIT_SIGMAS * sigma,
        "{} Hz ± {sigma}",
        fit.frequency_hz
    );
}

/// A coherent record with a strong low-order harmonic and few cycles: the sine fit's frequency is pulled
/// off the integer (its frequency column is not orthogonal to H2 over 7 cycles), but the unwindowed
/// spectrum shows no leakage, so the record is still coherent and H2 is measured (common practice, no
/// source; the numbers are the simulated converter's).
#[test]
fn strong_harmonic_does_not_break_coherence() {
    let s = SynthSettings {
        frequency: SynthFrequency::Hz(7.0 * 100e6 / 4096.0),
        harmonics_dbc: vec![(2, -60.0)],
        phase_rad: 0.3,
        ..ideal(16, 4096, -1.0, 0.0)
    };
    let a = run(&s, &AnalysisSettings::default()).analysis;
    let sp = a.found.spectrum.unwrap();
    assert!(sp.coherent, "{:?}", sp.coherence);
    // The fit alone would have called it non-coherent: the spectrum decided.
    assert_eq!(sp.coherence.decided_by, "spectrum", "{:?}", sp.coherence);
    assert_eq!(sp.window, "rectangular");
    let h2 = sp.harmonics.iter().find(|h| h.order == 2).unwrap();
    assert!((h2.dbc.unwrap() + 60.0).abs() < HARMONIC_DB, "{:?}", h2);
    // The ideal 16-bit quantiser's SNR (handbook 6.02N + 1.76) is not hidden by H2.
    assert!(
        (sp.snr_db.unwrap() - (6.02 * 16.0 + 1.76 - 1.0)).abs() < SNR_BESIDE_HARMONIC_DB,
        "{:?}",
        sp.snr_db
    );
}
