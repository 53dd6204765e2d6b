//! The one-sigma uncertainties every figure carries, checked by Monte Carlo: for a few conditions
//! (coherent and windowed, one record and four averaged, a harmonic near the floor) the scatter of each
//! figure over 200 seeds agrees with the sigma the records report, within 20 % (the criterion of the
//! project's issue 13; the statistics of the check are in tests/tolerances.rs). The formulas are the
//! chi-square statistics of the noise bins and the Cramér-Rao bounds of the sine fit (src/spectrum/
//! uncertainty.rs, src/fit/uncertainty.rs).

use crate::tolerances::{MC_SEEDS, MC_SIGMA_REL};
use spurline::figures::{self, Cells};
use spurline::{analyze_averaged, AnalysisSettings, SpectrumSettings, WindowChoice};
use spurline::{synthesize, SynthFrequency, SynthSettings};
use std::collections::BTreeMap;

const HARMONICS: u32 = 3;

struct Condition {
    name: &'static str,
    synth: SynthSettings,
    records: u64,
    window: WindowChoice,
}

fn base() -> SynthSettings {
    SynthSettings {
        bits: 12,
        sample_rate_hz: 1e6,
        samples: 4096,
        amplitude_dbfs: -1.0,
        frequency: SynthFrequency::NearestCoherent(0.1013e6),
        // Gaussian noise well above the quantisation step, so the noise is white and Gaussian as
        // the formulas assume.
        noise_rms_codes: 2.0,
        harmonics_dbc: vec![(2, -72.0), (3, -66.0)],
        phase_rad: 0.7,
        offset_codes: 1.5,
        ..SynthSettings::default()
    }
}

fn conditions() -> Vec<Condition> {
    vec![
        Condition {
            name: "coherent, unwindowed",
            synth: base(),
            records: 1,
            window: WindowChoice::Auto,
        },
        Condition {
            name: "non-coherent, windowed",
            synth: SynthSettings {
                frequency: SynthFrequency::Hz(0.1013e6 + 37.3),
                ..base()
            },
            records: 1,
            window: WindowChoice::Auto,
        },
        Condition {
            name: "coherent, Hann window, four records averaged",
            synth: base(),
            records: 4,
            window: "hann".parse().unwrap(),
        },
        Condition {
            // H2 about eleven times the noise per bin, H3 forty: near the floor, still measured.
            name: "coherent, harmonics near the floor",
            synth: SynthSettings {
                harmonics_dbc: vec![(2, -80.0), (3, -74.0)],
                ..base()
            },
            records: 1,
            window: WindowChoice::Auto,
        },
    ]
}

/// The columns that carry an uncertainty: (figure key, uncertainty key).
fn uncertain_keys() -> Vec<(String, String)> {
    figures::columns(HARMONICS)
        .into_iter()
        .filter_map(|c| {
            let order = c.order.unwrap_or(0);
            Some((c.key(), c.figure.uncertainty_key(order)?))
        })
        .collect()
}

fn sd(v: &[f64]) -> f64 {
    let n = v.len() as f64;
    let mean = v.iter().sum::<f64>() / n;
    (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt()
}

#[test]
fn reported_sigma_matches_the_scatter_over_seeds() {
    let keys = uncertain_keys();
    let mut failures = Vec::new();
    let mut checked = 0;
    for c in conditions() {
        let settings = AnalysisSettings {
            spectrum: SpectrumSettings {
                window: c.window,
                harmonics: HARMONICS,
                ..SpectrumSettings::default()
            },
            ..AnalysisSettings::default()
        };
        let mut values: BTreeMap<&str, Vec<f64>> = BTreeMap::new();
        let mut sigmas: BTreeMap<&str, Vec<f64>> = BTreeMap::new();
        for seed in 0..MC_SEEDS {
            let records: Vec<_> = (0..c.records)
                .map(|r| {
                    let s = SynthSettings {
                        seed: 1000 * seed + r,
                        ..c.synth.clone()
                    };
                    synthesize(&s).unwrap().record
                })
                .collect();
            let m = analyze_averaged(&records, &settings).unwrap();
            let cells = Cells::of(&m.analysis);
            for (k, u) in &keys {
                if let (Some(v), Some(s)) = (cells.number(k), cells.number(u)) {
                    values.entry(k).or_default().push(v);
                    sigmas.entry(k).or_default().push(s);
                }
            }
        }
        for (k, v) in &values {
            // A figure reported in only some seeds (a harmonic that sometimes falls to the floor)
            // has no scatter to compare.
            if v.len() < MC_SEEDS as usize {
                continue;
            }
            let s = &sigmas[k];
            let stated = (s.iter().map(|x| x * x).sum::<f64>() / s.len() as f64).sqrt();
            let seen = sd(v);
            checked += 1;
            eprintln!("{:45} {k:45} {:.3}", c.name, seen / stated);
            if (seen / stated - 1.0).abs() > MC_SIGMA_REL {
                failures.push(format!(
                    "{}: {k}: scatter {seen:.4e}, stated sigma {stated:.4e} (ratio {:.2})",
                    c.name,
                    seen / stated
                ));
            }
        }
    }
    // Four conditions, each with the fit's seven measured figures and the spectrum's twelve or more.
    assert!(checked >= 4 * 15, "only {checked} figures checked");
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
