//! Numerical edge cases of the analysis: tones within a bin or two of DC or Nyquist, fewer than one
//! cycle, harmonics that fold onto the fundamental, a fully clipped record, a tone exactly between two
//! bins, a large offset, and the shortest and longest records. Each ends in a clear warning or error,
//! and no output holds a NaN or an infinity.
//!
//! Records come from the simulated converter (spurline::synth) at fs = 1 MHz, 12 bits, 0.3 codes of
//! Gaussian noise, −1 dBFS, unless a test says otherwise.

use crate::fuzz_props::invariants::check_outputs;
use crate::tolerances::*;
use spurline::check_codes;
use spurline::{analyze, Analysis, AnalysisSettings};
use spurline::{synthesize, SynthFrequency, SynthSettings};
use spurline::{Error, ErrorKind};
use spurline::{SpectrumSettings, Window, WindowChoice};

const FS_HZ: f64 = 1e6;
const N: usize = 4096;

fn base(samples: usize) -> SynthSettings {
    SynthSettings {
        bits: 12,
        sample_rate_hz: FS_HZ,
        samples,
        amplitude_dbfs: -1.0,
        frequency: SynthFrequency::NearestCoherent(0.1013 * FS_HZ),
        noise_rms_codes: 0.3,
        ..SynthSettings::default()
    }
}

/// A record `cycles` cycles long (exactly; coherent when `cycles` is an integer).
fn at_cycles(cycles: f64) -> SynthSettings {
    SynthSettings {
        frequency: SynthFrequency::Hz(cycles * FS_HZ / N as f64),
        ..base(N)
    }
}

/// Analyses with the given settings; every result (or error) is checked for non-finite figures and
/// NaN in all of its renderings.
fn analyse_with(s: &SynthSettings, settings: &AnalysisSettings) -> Result<Analysis, Error> {
    let rec = synthesize(s).expect("valid synth settings").record;
    match analyze(&rec, settings) {
        Ok(m) => {
            check_outputs(&m.analysis, std::slice::from_ref(&m.analysis));
            Ok(m.analysis)
        }
        Err(e) => {
            let failed = Analysis::failed(&rec.source, &e, Vec::new());
            check_outputs(&failed, std::slice::from_ref(&failed));
            Err(e)
        }
    }
}

fn analyse(s: &SynthSettings) -> Result<Analysis, Error> {
    analyse_with(s, &AnalysisSettings::default())
}

fn has_warning(a: &Analysis, fragment: &str) -> bool {
    a.warnings.iter().any(|w| w.contains(fragment))
}

/// The dB figure in a note "... its level would read −0.76 dB off ...".
fn would_read_off_db(a: &Analysis) -> f64 {
    let w = a
        .warnings
        .iter()
        .find(|w| w.contains("dB off"))
        .unwrap_or_else(|| panic!("no level note in {:?}", a.warnings));
    let tail = &w[w.find("would read ").unwrap() + 11..];
    tail[..tail.find(" dB off").unwrap()].parse().unwrap()
}

fn fundamental_dbfs(a: &Analysis) -> f64 {
    a.spectrum.as_ref().unwrap().fundamental_dbfs.unwrap()
}

#[test]
fn tone_within_one_bin_of_dc() {
    // One whole cycle, coherent: measured, with a warning that the fit is poorly determined there.
    let a = analyse(&at_cycles(1.0)).unwrap();
    assert!(
        has_warning(&a, "only 1.00 cycles in the record (within 2 bins of DC)"),
        "{:?}",
        a.warnings
    );
    // Half a bin from bin 1: the windowed tone sits inside the DC span; the fit figures are reported
    // and the spectral ones withheld, with a warning naming the span.
    let a = analyse(&at_cycles(1.5)).unwrap();
    assert!(a.fit.is_some() && a.spectrum.is_none());
    assert!(
        has_warning(&a, "spectral figures withheld")
            && has_warning(&a, "a tone outside the DC bins")
            && has_warning(&a, "1.5 cycles"),
        "{:?}",
        a.warnings
    );
}

#[test]
fn fewer_than_one_cycle_is_a_degenerate_fit() {
    for (cycles, shown) in [
        (0.4, "0.400 cycles"),
        (0.5, "0.500 cycles"),
        (0.9, "0.900 cycles"),
    ] {
        let e = analyse(&at_cycles(cycles)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::DegenerateFit, "{cycles}: {e}");
        assert_eq!(
            e.expected,
            "at least one full cycle of the input in the record"
        );
        assert_eq!(e.found, shown);
    }
}

/// Found by this file: a tone 9.5 bins from DC under the 7-term Blackman-Harris window lost 0.76 dB of
/// its level to the DC span (bins 0..=8) with no warning; later the level error was warned. Now the
/// fitted sine is removed in time and the level is the fit's: a note states the error avoided, and the
/// level is the synthesised −1 dBFS (0.3 codes of noise move it by far less than TONE_LEVEL_DB).
#[test]
fn tone_whose_window_lobe_meets_the_dc_span_is_measured_from_the_residual() {
    let a = analyse(&at_cycles(9.5)).unwrap();
    assert!(
        has_warning(&a, "meets the DC bins (0..=8), where its level would read"),
        "{:?}",
        a.warnings
    );
    assert!(would_read_off_db(&a) < -0.5, "{:?}", a.warnings);
    assert!((fundamental_dbfs(&a) + 1.0).abs() < TONE_LEVEL_DB);
    // Two bins further out the lobe is clear of DC: no note, and the level is right.
    let a = analyse(&at_cycles(12.5)).unwrap();
    assert!(!has_warning(&a, "DC bins"), "{:?}", a.warnings);
    assert!((fundamental_dbfs(&a) + 1.0).abs() < TONE_LEVEL_DB);
}

#[test]
fn tone_within_one_bin_of_nyquist() {
    // J = N/2 − 1 = 2047, odd and coprime with 4096: coherent, one bin from Nyquist, warned.
    let a = analyse(&at_cycles(2047.0)).unwrap();
    assert!(a.spectrum.as_ref().unwrap().coherent);
    assert!(
        has_warning(&a, "tone within 2 bins of Nyquist (1.00 bins away)"),
        "{:?}",
        a.warnings
    );
    assert!((fundamental_dbfs(&a) + 1.0).abs() < TONE_LEVEL_DB);
    // Half a bin from Nyquist: the start estimate lands on fs/2, where the fit cannot be solved.
    let e = analyse(&at_cycles(2047.5)).unwrap_err();
    assert_eq!(e.kind, ErrorKind::DegenerateFit, "{e}");
    assert!(e.expected.contains("away from DC and Nyquist"), "{e}");
}

/// Found by this file: 1.5 and 2.5 bins from Nyquist, windowed, the tone's lobe shares bins with its
/// mirror image and its level was off by up to 1.3 dB with a warning only inside 2 bins. Now the tone
/// is removed in time and its level is the fit's: the synthesised −1 dBFS, with a note giving the error
/// avoided.
#[test]
fn tone_whose_window_lobe_reaches_nyquist_is_measured_from_the_residual() {
    for (cycles, phase) in [(2046.5, 0.0), (2046.5, 2.0), (2045.5, 0.0)] {
        let s = SynthSettings {
            phase_rad: phase,
            ..at_cycles(cycles)
        };
        let a = analyse(&s).unwrap();
        assert!(
            has_warning(&a, "reaches Nyquist (bin 2048), where its level would read"),
            "{cycles}: {:?}",
            a.warnings
        );
        assert!(would_read_off_db(&a).abs() > 0.1, "{:?}", a.warnings);
        assert!(
            (fundamental_dbfs(&a) + 1.0).abs() < TONE_LEVEL_DB,
            "{cycles}, phase {phase}: {}",
            fundamental_dbfs(&a)
        );
    }
    // Far enough out: no note and the level is right.
    let a = analyse(&at_cycles(2040.5)).unwrap();
    assert!(!has_warning(&a, "Nyquist"), "{:?}", a.warnings);
    assert!((fundamental_dbfs(&a) + 1.0).abs() < TONE_LEVEL_DB);
}

/// fin = fs/4: H2 folds to Nyquist, H3 onto the fundamental, H4 onto DC; fin = fs/3: H2 folds onto the
/// fundamental, H3 onto DC (folding into the first Nyquist zone, common practice, no source). Masked
/// harmonics are named in a warning and not measured.
#[test]
fn harmonics_that_alias_onto_the_fundamental_are_masked_and_named() {
    let quarter = SynthSettings {
        frequency: SynthFrequency::Hz(FS_HZ / 4.0),
        harmonics_dbc: vec![(3, -70.0)],
        ..base(N)
    };
    let a = analyse(&quarter).unwrap();
    assert!(
        has_warning(
            &a,
            "harmonics masked (not measured): H3 on fundamental, H4 on dc"
        ),
        "{:?}",
        a.warnings
    );
    // J = 1024 shares the factor 1024 with N: four distinct phases, warned.
    assert!(
        has_warning(&a, "only 4 distinct phases"),
        "{:?}",
        a.warnings
    );
    let h3 = &a.spectrum.as_ref().unwrap().harmonics[1];
    assert_eq!((h3.order, h3.masked, h3.dbc), (3, true, None));
    assert_eq!(h3.masked_by.as_deref(), Some("fundamental"));

    for samples in [4095, 4096] {
        // 4095 = 3·1365: coherent at J = 1365; 4096: not coherent, windowed.
        let third = SynthSettings {
            frequency: SynthFrequency::Hz(FS_HZ / 3.0),
            harmonics_dbc: vec![(2, -60.0)],
            ..base(samples)
        };
        let a = analyse(&third).unwrap();
        assert!(
            has_warning(
                &a,
                "harmonics masked (not measured): H2 on fundamental, H3 on dc"
            ),
            "{samples}: {:?}",
            a.warnings
        );
        let sp = a.spectrum.as_ref().unwrap();
        assert_eq!(sp.coherent, samples == 4095);
        assert!(sp.harmonics[0].masked && sp.harmonics[0].dbc.is_none());
    }
}

/// +40 dBFS saturates nearly every sample: a square wave. Its Fourier series (handbook) gives the
/// fundamental 4/π of the clip level, +2.10 dBFS, and odd harmonics 1/h, so THD over H2..H10 is
/// 10·log10(1/9 + 1/25 + 1/49 + 1/81) = −7.36 dBc. Ingest warns about the clipping with its count.
#[test]
fn fully_clipped_record_is_warned_and_measured_as_a_square_wave() {
    let s = SynthSettings {
        amplitude_dbfs: 40.0,
        ..base(N)
    };
    let rec = synthesize(&s).unwrap();
    assert!(rec.clipped_samples > N * 9 / 10, "{}", rec.clipped_samples);
    let w = check_codes(&rec.record.codes, 12);
    assert!(
        w.iter()
            .any(|w| w.contains("at the end codes") && w.contains("may be clipping")),
        "{w:?}"
    );
    let a = analyse(&s).unwrap();
    let sp = a.spectrum.as_ref().unwrap();
    let square_fundamental = 20.0 * (4.0 / std::f64::consts::PI).log10();
    assert!(
        (sp.fundamental_dbfs.unwrap() - square_fundamental).abs() < SQUARE_FUNDAMENTAL_DB,
        "{:?}",
        sp.fundamental_dbfs
    );
    let thd = 10.0 * (1.0 / 9.0 + 1.0 / 25.0 + 1.0 / 49.0 + 1.0 / 81.0f64).log10();
    assert!(
        (sp.thd_dbc.unwrap() - thd).abs() < SQUARE_THD_DB,
        "{:?} vs {thd}",
        sp.thd_dbc
    );
}

/// Exactly half a bin off: the auto rule picks a window (12 bits: the 7-term Blackman-Harris, see the
/// spectrum module docs) and the figures agree with the coherent record's within WINDOWED_DB; without a
/// window the scalloping warning gives the rectangular window's 3.92 dB (Harris 1978, Table I).
#[test]
fn tone_exactly_between_two_bins() {
    let coherent = analyse(&at_cycles(1001.0)).unwrap();
    let a = analyse(&at_cycles(1001.5)).unwrap();
    let sp = a.spectrum.as_ref().unwrap();
    assert!(!sp.coherent);
    assert_eq!(sp.window, "blackman-harris-7");
    assert!(
        sp.window_reason.contains("non-coherent record"),
        "{}",
        sp.window_reason
    );
    assert!(
        (sp.leakage.offset_bins.abs() - 0.5).abs() < HALF_BIN_OFFSET_BINS,
        "{:?}",
        sp.leakage
    );
    let csp = coherent.spectrum.as_ref().unwrap();
    assert!(
        (sp.snr_db.unwrap() - csp.snr_db.unwrap()).abs() < WINDOWED_DB,
        "{:?} vs {:?}",
        sp.snr_db,
        csp.snr_db
    );
    assert!((sp.fundamental_dbfs.unwrap() - csp.fundamental_dbfs.unwrap()).abs() < TONE_LEVEL_DB);

    let rect = AnalysisSettings {
        spectrum: SpectrumSettings {
            window: WindowChoice::Fixed(Window::Rectangular),
            ..SpectrumSettings::default()
        },
        ..AnalysisSettings::default()
    };
    let a = analyse_with(&at_cycles(1001.5), &rect).unwrap();
    assert!(
        has_warning(&a, "the peak bin loses 3.92 dB (scalloping)"),
        "{:?}",
        a.warnings
    );
}

/// A large offset sits in the DC span and changes no figure; one that pushes the sine into the rails is
/// clipping (warned by ingest); one beyond full scale leaves a constant record: no tone.
#[test]
fn large_offsets() {
    let plain = analyse(&SynthSettings {
        amplitude_dbfs: -10.0,
        ..base(N)
    })
    .unwrap();
    let shifted_settings = SynthSettings {
        amplitude_dbfs: -10.0,
        offset_codes: 1000.0,
        ..base(N)
    };
    let shifted = analyse(&shifted_settings).unwrap();
    let fit = shifted.fit.as_ref().unwrap();
    // The offset of a sine fit is the record mean to within noise/√N (0.005 codes here).
    assert!(
        (fit.offset_codes - 1000.0).abs() < FIT_OFFSET_CODES,
        "{}",
        fit.offset_codes
    );
    let (p, s) = (
        plain.spectrum.as_ref().unwrap(),
        shifted.spectrum.as_ref().unwrap(),
    );
    assert!((p.snr_db.unwrap() - s.snr_db.unwrap()).abs() < HANDBOOK_DB);
    assert!(shifted.warnings.is_empty(), "{:?}", shifted.warnings);

    let rail = SynthSettings {
        amplitude_dbfs: -3.0,
        offset_codes: 1500.0,
        ..base(N)
    };
    let rec = synthesize(&rail).unwrap().record;
    assert!(
        check_codes(&rec.codes, 12)
            .iter()
            .any(|w| w.contains("0 at lowest") && w.contains("may be clipping")),
        "{:?}",
        check_codes(&rec.codes, 12)
    );
    let a = analyse(&rail).unwrap();
    // Clipped on one side: strong even harmonics, THD far above the unclipped −90 dBc.
    assert!(a.spectrum.as_ref().unwrap().thd_dbc.unwrap() > -30.0);

    let beyond = SynthSettings {
        offset_codes: 5000.0,
        ..base(N)
    };
    let e = analyse(&beyond).unwrap_err();
    assert_eq!(e.kind, ErrorKind::NoTone);
    assert_eq!(e.found, "a constant record");
}

/// Found by this file: a coherent 64-sample record (J = 7) warned of rectangular-window leakage at its
/// fitted offset of a few 1e-5 bins, which is the fit's own uncertainty (largest on short records), and
/// advised the coherent input it already had. A record judged coherent is now diagnosed at offset 0.
#[test]
fn coherent_64_sample_record_has_no_false_leakage_warning() {
    for seed in 1..=5 {
        let s = SynthSettings {
            seed,
            frequency: SynthFrequency::NearestCoherent(0.1 * FS_HZ),
            ..base(64)
        };
        let a = analyse(&s).unwrap();
        let sp = a.spectrum.as_ref().unwrap();
        assert!(sp.coherent, "seed {seed}");
        assert_eq!(sp.leakage.offset_bins, 0.0);
        assert!(!sp.leakage.significant, "seed {seed}: {:?}", sp.leakage);
        assert!(!has_warning(&a, "leakage"), "seed {seed}: {:?}", a.warnings);
        // 22 noise bins of 33: the noise figures rest on few bins, so only a loose check (handbook
        // 69.83 dB, see below; one 64-point record scatters by about ±1.5 dB).
        assert!(
            (sp.snr_db.unwrap() - 69.83).abs() < SHORT_RECORD_DB,
            "{:?}",
            sp.snr_db
        );
    }
}

/// Expected SNR of the base record: signal (2048·10^(−1/20))²/2 over q²/12 + 0.3² (quantisation and
/// Gaussian noise add in power, handbook) = 69.83 dB.
fn expected_snr_db() -> f64 {
    let a = 2048.0 * 10f64.powf(-1.0 / 20.0);
    10.0 * ((a * a / 2.0) / (1.0 / 12.0 + 0.09)).log10()
}

#[test]
fn record_of_2_pow_20_samples() {
    let s = SynthSettings {
        frequency: SynthFrequency::NearestCoherent(0.1 * FS_HZ),
        ..base(1 << 20)
    };
    let a = analyse(&s).unwrap();
    let sp = a.spectrum.as_ref().unwrap();
    assert!(sp.coherent);
    assert!(
        (sp.snr_db.unwrap() - expected_snr_db()).abs() < HANDBOOK_DB,
        "{:?} vs {}",
        sp.snr_db,
        expected_snr_db()
    );
    assert!(a.warnings.is_empty(), "{:?}", a.warnings);
}

/// 2^24 samples take seconds: run with `cargo test --test main record_of_2_pow_24 -- --ignored`.
#[test]
#[ignore = "2^24 samples take seconds; run it with --ignored"]
fn record_of_2_pow_24_samples() {
    let s = SynthSettings {
        frequency: SynthFrequency::NearestCoherent(0.1 * FS_HZ),
        ..base(1 << 24)
    };
    let t = std::time::Instant::now();
    let a = analyse(&s).unwrap();
    eprintln!("2^24 samples synthesised and analysed in {:?}", t.elapsed());
    let sp = a.spectrum.as_ref().unwrap();
    assert!(sp.coherent);
    assert!((sp.snr_db.unwrap() - expected_snr_db()).abs() < HANDBOOK_DB);
    assert!(a.warnings.is_empty(), "{:?}", a.warnings);
}
