//! A built-in reference suite that checks the installed build against figures from outside the
//! project: published window tables, handbook formulas on simulated records with known truth, the
//! coherent-sampling arithmetic and the Cramér-Rao bound of the sine fit.
//!
//! [`measure`] runs every check and returns what it measured next to what it expected; [`judge`]
//! decides pass or fail; [`run`] does both. Each check states its source and its tolerance, and a check
//! passes when |measured − expected| ≤ tolerance. A measurement that cannot be made (an error of the
//! pipeline) fails with the error as its note. Everything is deterministic (fixed seeds).

use std::f64::consts::{PI, TAU};

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use serde::Serialize;

use crate::analysis::{analyze, AnalysisSettings, Measured as AnalysisMeasured};
use crate::error::Result;
use crate::fit::{fit_four, fit_three, FourParamOptions};
use crate::freq::nearest_coherent;
use crate::spectrum::{SpectrumSettings, Window, WindowChoice, DB_PER_BIT, SINE_CREST_DB};
use crate::synth::{synthesize, SynthFrequency, SynthSettings};

/// One check as measured, before it is judged.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Measurement {
    /// What is checked.
    pub check: String,
    /// Where the expected value comes from.
    pub source: String,
    /// Unit of expected, measured and tolerance ("" for plain numbers).
    pub unit: String,
    /// The reference value.
    pub expected: f64,
    /// What this build measured; `None` when the measurement failed.
    pub measured: Option<f64>,
    /// Largest accepted |measured − expected|, in `unit`.
    pub tolerance: f64,
    /// Why the measurement failed, when it did.
    pub note: Option<String>,
}

/// One row of the verification table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Row {
    /// What is checked.
    pub check: String,
    /// Where the expected value comes from.
    pub source: String,
    /// Unit of expected, measured and tolerance.
    pub unit: String,
    /// The reference value.
    pub expected: f64,
    /// What this build measured; `None` when the measurement failed.
    pub measured: Option<f64>,
    /// Largest accepted |measured − expected|.
    pub tolerance: f64,
    /// True when the measurement exists and lies within the tolerance.
    pub pass: bool,
    /// Why the measurement failed, when it did.
    pub note: Option<String>,
}

/// Judges one measurement: it passes when it exists and |measured − expected| ≤ tolerance.
pub fn judge(m: &Measurement) -> Row {
    let pass = m.tolerance.is_finite()
        && m.measured
            .is_some_and(|v| v.is_finite() && (v - m.expected).abs() <= m.tolerance);
    Row {
        check: m.check.clone(),
        source: m.source.clone(),
        unit: m.unit.clone(),
        expected: m.expected,
        measured: m.measured,
        tolerance: m.tolerance,
        pass,
        note: m.note.clone(),
    }
}

/// Runs and judges the whole suite.
pub fn run() -> Vec<Row> {
    measure().iter().map(judge).collect()
}

/// True when every row passes (and there is at least one).
pub fn all_pass(rows: &[Row]) -> bool {
    !rows.is_empty() && rows.iter().all(|r| r.pass)
}

/// Runs every check of the suite and returns the measurements, in a fixed order.
pub fn measure() -> Vec<Measurement> {
    let mut out = Vec::new();
    windows(&mut out);
    ideal_quantiser(&mut out);
    analytic_records(&mut out);
    coherent_sampling(&mut out);
    cramer_rao(&mut out);
    ieee_1241(&mut out);
    out
}

/// Dynamic range of an ideal N-bit quantiser for a full-scale sine: 6.02N + 1.76 dB, exactly
/// 20·log10(2^(N−1)·√6) (handbook formula).
fn ideal_snr_db(bits: u32) -> f64 {
    DB_PER_BIT * bits as f64 + SINE_CREST_DB
}

/// Collects measurements with their provenance.
struct Sheet<'a> {
    out: &'a mut Vec<Measurement>,
}

impl Sheet<'_> {
    fn add(
        &mut self,
        check: &str,
        source: &str,
        unit: &str,
        expected: f64,
        tolerance: f64,
        measured: std::result::Result<f64, String>,
    ) {
        let (measured, note) = match measured {
            Ok(v) if v.is_finite() => (Some(v), None),
            Ok(v) => (None, Some(format!("measured a non-finite value ({v})"))),
            Err(e) => (None, Some(e)),
        };
        self.out.push(Measurement {
            check: check.to_string(),
            source: source.to_string(),
            unit: unit.to_string(),
            expected,
            measured,
            tolerance,
            note,
        });
    }
}

/// A figure that the analysis may not produce: `None` becomes a failed measurement.
fn present(v: Option<f64>, what: &str) -> std::result::Result<f64, String> {
    v.ok_or_else(|| format!("the analysis reported no {what}"))
}

fn simulate(s: &SynthSettings, settings: &AnalysisSettings) -> Result<AnalysisMeasured> {
    let rec = synthesize(s)?.record;
    analyze(&rec, settings)
}

fn ideal(bits: u32, samples: usize, amplitude_dbfs: f64, fs: f64, target_hz: f64) -> SynthSettings {
    SynthSettings {
        bits,
        sample_rate_hz: fs,
        samples,
        amplitude_dbfs,
        frequency: SynthFrequency::NearestCoherent(target_hz),
        phase_rad: 0.4,
        seed: 7,
        ..SynthSettings::default()
    }
}

// Window figures against the published tables. Tolerance: half a unit of the last printed decimal.
// Harris values are from memory (F. J. Harris, Proc. IEEE 66(1), 1978, Table I); Heinzel values from
// G. Heinzel, A. Rüdiger, R. Schilling, "Spectrum and spectral density estimation by the DFT", 2002.
// Where the two disagree with computation (Hann sidelobe: Harris −32, computed −31.47) Heinzel's
// figure is used.
fn windows(out: &mut Vec<Measurement>) {
    const HARRIS: &str = "Harris 1978, Table I";
    const HEINZEL: &str = "Heinzel et al. 2002";
    let mut sheet = Sheet { out };
    /// One window's published cells: coherent gain, ENBW (bins), scalloping loss (dB), highest
    /// sidelobe (dB) with its source.
    struct Cells {
        window: Window,
        label: &'static str,
        cg: f64,
        enbw: f64,
        sl: f64,
        psll: f64,
        psll_source: &'static str,
    }
    let rows = [
        Cells {
            window: Window::Rectangular,
            label: "rectangular",
            cg: 1.00,
            enbw: 1.00,
            sl: 3.92,
            psll: -13.3,
            psll_source: HEINZEL,
        },
        Cells {
            window: Window::Hann,
            label: "Hann",
            cg: 0.50,
            enbw: 1.50,
            sl: 1.42,
            psll: -31.5,
            psll_source: HEINZEL,
        },
        Cells {
            window: Window::BlackmanHarris4,
            label: "4-term Blackman-Harris",
            cg: 0.36,
            enbw: 2.00,
            sl: 0.83,
            psll: -92.0,
            psll_source: HARRIS,
        },
    ];
    for Cells {
        window,
        label,
        cg,
        enbw,
        sl,
        psll,
        psll_source,
    } in rows
    {
        let f = window.figures();
        sheet.add(
            &format!("{label} window coherent gain"),
            HARRIS,
            "",
            cg,
            0.005,
            Ok(f.coherent_gain),
        );
        sheet.add(
            &format!("{label} window ENBW"),
            HARRIS,
            "bins",
            enbw,
            0.005,
            Ok(f.enbw_bins),
        );
        sheet.add(
            &format!("{label} window scalloping loss"),
            HARRIS,
            "dB",
            sl,
            0.005,
            Ok(f.scalloping_loss_db),
        );
        sheet.add(
            &format!("{label} window highest sidelobe"),
            psll_source,
            "dB",
            psll,
            0.05,
            Ok(f.highest_sidelobe_db),
        );
    }
    for (w, label, enbw) in [
        (Window::Hft90d, "HFT90D", 3.8832),
        (Window::Hft144d, "HFT144D", 4.5386),
    ] {
        sheet.add(
            &format!("{label} window ENBW"),
            HEINZEL,
            "bins",
            enbw,
            0.00005,
            Ok(w.figures().enbw_bins),
        );
    }
}

/// dB agreement of one record with a handbook figure that holds on average: one record's
/// quantisation-noise power differs from q²/12 by a few percent (about ±0.1 dB at 8192 points).
const HANDBOOK_DB: f64 = 0.25;
/// ENOB agreement with a handbook figure: HANDBOOK_DB / 6.02, rounded up.
const HANDBOOK_BITS: f64 = 0.05;

// Ideal quantisers: SINAD = 6.02N + 1.76 dB (handbook formula) referred to the level, and the
// quantisation noise q/√12 (handbook formula) as the fit's residual.
fn ideal_quantiser(out: &mut Vec<Measurement>) {
    let mut sheet = Sheet { out };
    let level = -0.1;
    for bits in [8u32, 12, 16, 32] {
        let m = simulate(
            &ideal(bits, 8192, level, 100e6, 10.3e6),
            &AnalysisSettings::default(),
        );
        sheet.add(
            &format!("ideal {bits}-bit SINAD at {level} dBFS"),
            "handbook: 6.02N + 1.76 dB",
            "dB",
            ideal_snr_db(bits) + level,
            HANDBOOK_DB,
            m.map_err(|e| e.to_string())
                .and_then(|m| present(m.analysis.found.spectrum.and_then(|s| s.sinad_db), "SINAD")),
        );
    }
    // 65536 samples: the residual rms of a near-uniform error has a relative std of 0.17 %; 1 % is
    // about 6 σ.
    let m = simulate(
        &ideal(12, 65_536, -0.3, 100e6, 7.1e6),
        &AnalysisSettings::default(),
    );
    let q = 1.0 / 12f64.sqrt();
    sheet.add(
        "ideal 12-bit quantisation noise, fit residual rms",
        "handbook: q/√12",
        "codes",
        q,
        0.01 * q,
        m.map_err(|e| e.to_string())
            .and_then(|m| present(m.analysis.found.fit.map(|f| f.residual_rms_codes), "fit")),
    );
}

// Simulated records whose truth is known analytically.
fn analytic_records(out: &mut Vec<Measurement>) {
    let mut sheet = Sheet { out };
    // Harmonics put in at known levels on a 20-bit coherent record (quantisation floor per bin 68 dB
    // under the smallest) come back at their level; THD is their power sum (handbook definition).
    // 0.05 dB: noise bias below 0.01 dB plus the quantiser's own harmonic content.
    let s = SynthSettings {
        harmonics_dbc: vec![(2, -70.0), (3, -80.0)],
        ..ideal(20, 8192, -1.0, 100e6, 37.3e6)
    };
    let spectrum = simulate(&s, &AnalysisSettings::default())
        .map_err(|e| e.to_string())
        .and_then(|m| {
            m.analysis
                .found
                .spectrum
                .ok_or_else(|| "the analysis reported no spectrum".to_string())
        });
    for (order, dbc) in [(2u32, -70.0), (3, -80.0)] {
        let got = spectrum.as_ref().map_err(Clone::clone).and_then(|sp| {
            present(
                sp.harmonics
                    .iter()
                    .find(|h| h.order == order)
                    .and_then(|h| h.dbc),
                "harmonic level",
            )
        });
        sheet.add(
            &format!("H{order} level put in at {dbc} dBc (20 bits)"),
            "simulated converter: level put in",
            "dBc",
            dbc,
            0.05,
            got,
        );
    }
    let thd = 10.0 * (1e-7f64 + 1e-8).log10();
    sheet.add(
        "THD of H2 at -70 dBc and H3 at -80 dBc",
        "handbook: power sum of the harmonics",
        "dB",
        thd,
        0.05,
        spectrum.and_then(|sp| present(sp.thd_dbc, "THD")),
    );

    // Jitter-limited SNR = −20·log10(2π·f·σ) (handbook formula): 100 MHz with 100 fs rms is 84.04 dB.
    // 20 bits (quantisation SNR 122 dB, negligible), 250 MS/s, 65536 points; the expected value is taken
    // at the coherent frequency actually used (100.0023 MHz, 0.0002 dB away).
    let s = SynthSettings {
        jitter_rms_s: 100e-15,
        ..ideal(20, 65_536, -0.5, 250e6, 100e6)
    };
    let f_used = nearest_coherent(250e6, 65_536, 100e6, false).map(|c| c.frequency_hz);
    let jitter_expected = f_used
        .as_ref()
        .map_or(-20.0 * (TAU * 100e6 * 100e-15).log10(), |f| {
            -20.0 * (TAU * f * 100e-15).log10()
        });
    sheet.add(
        "jitter-limited SNR, 100 MHz with 100 fs rms",
        "handbook: −20·log10(2π·f·σ)",
        "dB",
        jitter_expected,
        HANDBOOK_DB,
        simulate(&s, &AnalysisSettings::default())
            .map_err(|e| e.to_string())
            .and_then(|m| present(m.analysis.found.spectrum.and_then(|s| s.snr_db), "SNR")),
    );

    // Noise floor per bin = −SNR − 10·log10(N/2) (handbook formula): −107.1 dBFS for an ideal 12-bit
    // converter at 4096 points, referred to the input level.
    let level = -0.05;
    sheet.add(
        "ideal 12-bit noise floor per bin, 4096 points",
        "handbook: −SNR − 10·log10(N/2)",
        "dBFS",
        -ideal_snr_db(12) - 10.0 * 2048f64.log10() + level,
        HANDBOOK_DB,
        simulate(
            &ideal(12, 4096, level, 100e6, 10.1e6),
            &AnalysisSettings::default(),
        )
        .map_err(|e| e.to_string())
        .and_then(|m| {
            present(
                m.analysis.found.spectrum.and_then(|s| s.noise_floor_dbfs),
                "noise floor",
            )
        }),
    );

    // ENOB = (SINAD − 1.76)/6.02 (handbook formula) in its three forms for an ideal 12-bit converter at
    // −6.02 dBFS: spectral 11.0, full-scale-referred 12.0, fit form (IEEE Std 1241) 12.0.
    let m = simulate(
        &ideal(12, 8192, -6.02, 100e6, 13.3e6),
        &AnalysisSettings::default(),
    )
    .map_err(|e| e.to_string());
    type Getter = fn(&AnalysisMeasured) -> Option<f64>;
    let forms: [(&str, f64, Getter); 3] = [
        ("spectral", 11.0, |m| {
            m.analysis.spectrum.as_ref().and_then(|s| s.enob_bits)
        }),
        ("full-scale-referred", 12.0, |m| {
            m.analysis
                .spectrum
                .as_ref()
                .and_then(|s| s.enob_full_scale_bits)
        }),
        ("fit", 12.0, |m| {
            m.analysis.fit.as_ref().and_then(|f| f.enob_bits)
        }),
    ];
    for (form, expected, get) in forms {
        sheet.add(
            &format!("ideal 12-bit ENOB at -6.02 dBFS, {form} form"),
            "handbook: (SINAD − 1.76)/6.02",
            "bits",
            expected,
            HANDBOOK_BITS,
            m.as_ref()
                .map_err(|e| e.clone())
                .and_then(|m| present(get(m), "ENOB")),
        );
    }

    // A tone half a bin off under the rectangular window loses 3.92 dB at its peak bin (Harris 1978,
    // Table I): the analysis's own leakage diagnosis of such a record (24 bits, noiseless).
    let n = 16_384;
    let s = SynthSettings {
        bits: 24,
        sample_rate_hz: 1e6,
        samples: n,
        amplitude_dbfs: -1.0,
        frequency: SynthFrequency::Hz(4000.5 * 1e6 / n as f64),
        ..SynthSettings::default()
    };
    let settings = AnalysisSettings {
        spectrum: SpectrumSettings {
            window: WindowChoice::Fixed(Window::Rectangular),
            guard_bins: Some(40),
            ..SpectrumSettings::default()
        },
        ..AnalysisSettings::default()
    };
    sheet.add(
        "rectangular-window loss of a tone half a bin off",
        "Harris 1978, Table I",
        "dB",
        3.92,
        0.005,
        simulate(&s, &settings)
            .map_err(|e| e.to_string())
            .and_then(|m| {
                present(
                    m.analysis
                        .found
                        .spectrum
                        .map(|s| s.leakage.scalloping_loss_db),
                    "leakage diagnosis",
                )
            }),
    );
}

// Hand arithmetic (common practice, no source): N = 2048 at 100 MS/s, target 44 MHz: 44e6·2048/1e8 =
// 901.12, and the nearest odd cycle count (odd is coprime with 2048) is J = 901, i.e. 901·1e8/2048 =
// 43 994 140.625 Hz. Exact arithmetic: tolerance 0.
fn coherent_sampling(out: &mut Vec<Measurement>) {
    let mut sheet = Sheet { out };
    let c = nearest_coherent(100e6, 2048, 44e6, false).map_err(|e| e.to_string());
    sheet.add(
        "coherent cycles near 44 MHz, 2048 points at 100 MS/s",
        "hand arithmetic: J = fin·N/fs, odd, coprime with N",
        "cycles",
        901.0,
        0.0,
        c.as_ref().map(|c| c.cycles as f64).map_err(|e| e.clone()),
    );
    sheet.add(
        "coherent frequency near 44 MHz, 2048 points at 100 MS/s",
        "hand arithmetic: J = fin·N/fs, odd, coprime with N",
        "Hz",
        43_994_140.625,
        0.0,
        c.map(|c| c.frequency_hz),
    );
}

/// Monte-Carlo trials of the Cramér-Rao check.
const CRB_TRIALS: usize = 200;
/// The sample variance of 200 trials has a relative std of √(2/199) = 10 %: 0.35 is 3.5 σ.
const CRB_TOLERANCE: f64 = 0.35;

// The four-parameter fit's frequency variance against the Cramér-Rao bound of a real sine in real
// white noise, 24σ²/(A²N(N²−1)) rad²/sample² = 12/(SNR·N(N²−1)) (the real-tone form of Rife &
// Boorstyn 1974's complex-tone bound; Kay 1993, Example 3.14, from memory). N = 1024, 40 dB SNR.
fn cramer_rao(out: &mut Vec<Measurement>) {
    let mut sheet = Sheet { out };
    let n = 1024usize;
    let amp = 1000.0;
    let snr_db = 40.0;
    let sigma = amp / 2f64.sqrt() / 10f64.powf(snr_db / 20.0);
    let f = 100.37 / n as f64;
    let mut rng = ChaCha8Rng::seed_from_u64(1241);
    let mut errors = Vec::with_capacity(CRB_TRIALS);
    let mut failure = None;
    for _ in 0..CRB_TRIALS {
        let phase = rng.gen_range(-PI..PI);
        let y: Vec<f64> = (0..n)
            .map(|k| {
                let z: f64 = StandardNormal.sample(&mut rng);
                amp * (TAU * f * k as f64 + phase).cos() + sigma * z
            })
            .collect();
        match fit_four(&y, 1.0, 16, FourParamOptions::default()) {
            Ok(out) => errors.push(TAU * (out.fit.frequency_hz - f)),
            Err(e) => {
                failure = Some(e.to_string());
                break;
            }
        }
    }
    let nf = n as f64;
    let bound = 24.0 * sigma * sigma / (amp * amp * nf * (nf * nf - 1.0));
    let ratio = match failure {
        Some(e) => Err(e),
        None => {
            let m = errors.len() as f64;
            let mean = errors.iter().sum::<f64>() / m;
            let var = errors.iter().map(|e| (e - mean).powi(2)).sum::<f64>() / (m - 1.0);
            Ok(var / bound)
        }
    };
    sheet.add(
        "fit frequency variance / Cramér-Rao bound (40 dB, 200 runs)",
        "Rife & Boorstyn 1974 (real-tone form)",
        "",
        1.0,
        CRB_TOLERANCE,
        ratio,
    );
}

/// The name every check of IEEE Std 1241's formulas cites.
const IEEE_1241: &str = "IEEE Std 1241-2010";

// IEEE Std 1241's own formulas on records whose truth is known: the three ENOB forms, the sine fit's
// SINAD, the noise spectral density from the noise power, and the three-parameter fit's closed form.
fn ieee_1241(out: &mut Vec<Measurement>) {
    let mut sheet = Sheet { out };
    // ENOB, fit form: N − log2(rms error / (q/√12)). An ideal 12-bit converter's error is the
    // quantiser's q/√12 (0.17 % relative std at 65536 samples), so ENOB = 12; the 1 % of the
    // residual check above is 0.0144 bits.
    let ideal12 = simulate(
        &ideal(12, 65_536, -0.3, 100e6, 7.1e6),
        &AnalysisSettings::default(),
    )
    .map_err(|e| e.to_string());
    sheet.add(
        "ideal 12-bit ENOB, sine-fit form N − log2(rms error/(q/√12))",
        &format!("{IEEE_1241}, ENOB from the fit residual"),
        "bits",
        12.0,
        0.0144,
        ideal12
            .clone()
            .and_then(|m| present(m.analysis.found.fit.and_then(|f| f.enob_bits), "fit ENOB")),
    );
    // ENOB, spectral form (SINAD − 1.76)/6.02 at −0.3 dBFS: 12 − 0.3/6.02 bits; full-scale-referred
    // form (SINAD − input dBFS − 1.76)/6.02: 12 bits. HANDBOOK_BITS: one record's quantisation noise.
    sheet.add(
        "ideal 12-bit ENOB at -0.3 dBFS, (SINAD − 1.76)/6.02",
        &format!("{IEEE_1241}, ENOB from SINAD"),
        "bits",
        12.0 - 0.3 / DB_PER_BIT,
        HANDBOOK_BITS,
        ideal12.clone().and_then(|m| {
            present(
                m.analysis.found.spectrum.and_then(|s| s.enob_bits),
                "spectral ENOB",
            )
        }),
    );
    let low = simulate(
        &ideal(12, 65_536, -20.0, 100e6, 7.1e6),
        &AnalysisSettings::default(),
    )
    .map_err(|e| e.to_string());
    sheet.add(
        "ideal 12-bit ENOB at -20 dBFS, full-scale-referred form",
        &format!("{IEEE_1241}, ENOB referred to a full-scale input"),
        "bits",
        12.0,
        HANDBOOK_BITS,
        low.and_then(|m| {
            present(
                m.analysis
                    .found
                    .spectrum
                    .and_then(|s| s.enob_full_scale_bits),
                "full-scale ENOB",
            )
        }),
    );
    // A 12-bit record with 2 codes of Gaussian noise ahead of the quantiser: the error power is
    // σ² + q²/12. The fit's SINAD = 20·log10((A/√2)/rms error); the residual's rms scatters by
    // 1/√(2N) = 0.28 % (0.024 dB) at 65536 samples, 0.1 dB is four of those. The noise spectral
    // density is the noise power over the band 0..fs/2; the same record's noise bins give it to
    // 0.55 % (0.024 dB), 0.1 dB again.
    let (sigma, fs, level) = (2.0, 100e6, -1.0);
    let s = SynthSettings {
        noise_rms_codes: sigma,
        ..ideal(12, 65_536, level, fs, 7.1e6)
    };
    let noisy = simulate(&s, &AnalysisSettings::default()).map_err(|e| e.to_string());
    let a = 2048.0 * 10f64.powf(level / 20.0);
    let error_power = sigma * sigma + 1.0 / 12.0;
    sheet.add(
        "sine-fit SINAD, 12 bits with 2 codes of noise",
        &format!("{IEEE_1241}, SINAD from the sine fit: 20·log10((A/√2)/rms error)"),
        "dB",
        10.0 * (a * a / 2.0 / error_power).log10(),
        0.1,
        noisy
            .clone()
            .and_then(|m| present(m.analysis.found.fit.and_then(|f| f.sinad_db), "fit SINAD")),
    );
    sheet.add(
        "noise spectral density, 12 bits with 2 codes of noise",
        &format!("{IEEE_1241}, noise power over the band 0..fs/2 (dBFS/Hz)"),
        "dB",
        10.0 * (error_power / (2048.0f64.powi(2) / 2.0) / (fs / 2.0)).log10(),
        0.1,
        noisy.and_then(|m| {
            present(
                m.analysis.found.spectrum.and_then(|s| s.nsd_dbfs_per_hz),
                "NSD",
            )
        }),
    );
    // The three-parameter fit in IEEE Std 1241's closed form: with D0 = [cos ωt_n, sin ωt_n, 1],
    // x = (D0ᵀD0)⁻¹D0ᵀy, A = √(A0² + B0²). Solved here directly (per-sample sin_cos, dense 3×3)
    // and compared with the fit: both are the same least-squares minimum, so they agree to
    // rounding (1e-9 of the amplitude).
    let (n, fin) = (4096usize, 1.2345e6);
    let s = SynthSettings {
        frequency: SynthFrequency::Hz(fin),
        noise_rms_codes: 0.7,
        offset_codes: 3.2,
        ..ideal(14, n, -2.0, 10e6, fin)
    };
    let direct_and_fit = synthesize(&s).map_err(|e| e.to_string()).and_then(|syn| {
        let y: Vec<f64> = syn.record.codes.iter().map(|&c| c as f64).collect();
        let w = TAU * fin / 10e6;
        let mut m = nalgebra::Matrix3::<f64>::zeros();
        let mut v = nalgebra::Vector3::<f64>::zeros();
        for (i, &yi) in y.iter().enumerate() {
            let (sn, cs) = (w * i as f64).sin_cos();
            let d = nalgebra::Vector3::new(cs, sn, 1.0);
            m += d * d.transpose();
            v += d * yi;
        }
        let x = m
            .lu()
            .solve(&v)
            .ok_or_else(|| "singular normal equations".to_string())?;
        let direct = x[0].hypot(x[1]);
        let fit = fit_three(&y, 10e6, fin, 14).map_err(|e| e.to_string())?.fit;
        Ok((direct, fit.amplitude_codes))
    });
    let (expected, measured) = match direct_and_fit {
        Ok((d, f)) => (d, Ok(f)),
        Err(e) => (f64::NAN, Err(e)),
    };
    sheet.add(
        "three-parameter fit amplitude against the closed form",
        &format!("{IEEE_1241}, three-parameter sine fit (matrix form)"),
        "codes",
        expected,
        1e-9 * expected.abs(),
        measured,
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    fn m(expected: f64, measured: Option<f64>, tolerance: f64) -> Measurement {
        Measurement {
            check: "x".into(),
            source: "s".into(),
            unit: String::new(),
            expected,
            measured,
            tolerance,
            note: None,
        }
    }

    // The checks of IEEE Std 1241's formulas name the standard, pass on this build, and fail when
    // the measured value moves by twice their tolerance (each can fail).
    #[test]
    fn ieee_1241_checks_name_the_standard_and_can_fail() {
        let mut out = Vec::new();
        ieee_1241(&mut out);
        assert_eq!(out.len(), 6);
        for m in &out {
            assert!(m.source.contains("IEEE Std 1241"), "{}", m.source);
            assert!(judge(m).pass, "{m:?}");
            let off = Measurement {
                measured: m.measured.map(|v| v + 2.0 * m.tolerance),
                ..m.clone()
            };
            assert!(!judge(&off).pass, "{m:?}");
        }
    }

    #[test]
    fn judging_is_inclusive_and_refuses_missing_values() {
        assert!(judge(&m(1.0, Some(1.25), 0.25)).pass);
        assert!(!judge(&m(1.0, Some(1.2500001), 0.25)).pass);
        assert!(judge(&m(901.0, Some(901.0), 0.0)).pass);
        assert!(!judge(&m(901.0, Some(903.0), 0.0)).pass);
        assert!(!judge(&m(1.0, None, 0.25)).pass);
        assert!(!judge(&m(1.0, Some(1.0), f64::NAN)).pass);
        assert!(!all_pass(&[]));
    }
}
