//! The figure table against the result record: a record with every part present and a failed one are
//! built field by field here (not from the table), serialised and flattened as the CSV flattens them,
//! and their keys compared with the table's in both directions. A field added to the record without a
//! row in the table, or a row naming a field the record lacks, fails here; so does a row whose kind of
//! value disagrees with the JSON the record writes.

use serde_json::Value;
use spurline::figures::{self, Kind};
use spurline::{Analysis, ErrorReport, OneTone};
use spurline::{Clipping, ClippingUncertainty, FitMethod, FitUncertainty, SineFit};
use spurline::{Coherence, HarmonicFigure, LeakageDiagnosis, Spectrum, Spur};
use spurline::{Error, ErrorKind, Location};
use spurline::{LevelUncertainty, PerHarmonic, SpectrumUncertainty};
use std::collections::BTreeSet;

const HARMONICS: u32 = 4;

/// A result record with every optional part present (no `None`, no empty list).
fn populated() -> Analysis {
    let fit = SineFit {
        method: FitMethod::FourParameter,
        frequency_hz: 1.0e6,
        amplitude_codes: 1000.0,
        amplitude_dbfs: -6.2,
        phase_rad: 0.5,
        offset_codes: 0.25,
        residual_rms_codes: 0.3,
        sinad_db: Some(70.0),
        enob_bits: Some(11.3),
        cycles: 101.0,
        cycles_std: 1e-6,
        iterations: 3,
        converged: true,
        uncertainty: FitUncertainty {
            frequency_hz: Some(0.01),
            amplitude_codes: Some(0.02),
            amplitude_dbfs: Some(0.001),
            phase_rad: Some(1e-4),
            offset_codes: Some(0.01),
            residual_rms_codes: Some(0.002),
            sinad_db: Some(0.05),
            enob_bits: Some(0.01),
        },
    };
    let harmonics = (2..=HARMONICS)
        .map(|order| HarmonicFigure {
            order,
            frequency_hz: order as f64 * 1.0e6,
            dbc: Some(-80.0),
            dbfs: Some(-86.0),
            masked: false,
            masked_by: Some("nothing".into()),
            at_floor: false,
        })
        .collect();
    let spectrum = Spectrum {
        window: "rectangular".into(),
        window_reason: "coherent".into(),
        coherent: true,
        coherence: Coherence {
            coherent: true,
            cycles: 101.0,
            offset_cycles: 0.0,
            tolerance_cycles: 1e-6,
            decided_by: "fit",
        },
        records_averaged: 1,
        bin_width_hz: 1e4,
        tone_halfwidth_bins: 0,
        fundamental_hz: 1.0e6,
        fundamental_dbfs: Some(-6.2),
        snr_db: Some(70.0),
        sinad_db: Some(69.0),
        thd_dbc: Some(-75.0),
        sfdr_dbc: Some(80.0),
        sfdr_dbfs: Some(86.0),
        enob_bits: Some(11.2),
        enob_full_scale_bits: Some(12.2),
        noise_floor_dbfs: Some(-110.0),
        nsd_dbfs_per_hz: Some(-150.0),
        worst_spur: Some(Spur {
            frequency_hz: 2.0e6,
            dbc: -80.0,
            dbfs: -86.0,
            harmonic: Some(2),
        }),
        harmonics,
        noise_bins: 500,
        leakage: LeakageDiagnosis {
            offset_bins: 0.0,
            outside_tone_bins_dbc: Some(-300.0),
            worst_bin_dbc: Some(-300.0),
            scalloping_loss_db: 0.0,
            snr_bias_db: 0.0,
            sfdr_bias_db: 0.0,
            significant: false,
            advice: Some("none needed".into()),
        },
        uncertainty: SpectrumUncertainty {
            fundamental_dbfs: Some(0.001),
            snr_db: Some(0.05),
            sinad_db: Some(0.05),
            thd_dbc: Some(0.2),
            sfdr_dbc: Some(0.3),
            sfdr_dbfs: Some(0.3),
            enob_bits: Some(0.01),
            enob_full_scale_bits: Some(0.01),
            noise_floor_dbfs: Some(0.04),
            nsd_dbfs_per_hz: Some(0.04),
            worst_spur: Some(LevelUncertainty {
                dbc: Some(0.3),
                dbfs: Some(0.3),
            }),
            harmonics: PerHarmonic(
                (2..=HARMONICS)
                    .map(|order| {
                        let u = LevelUncertainty {
                            dbc: Some(0.3),
                            dbfs: Some(0.3),
                        };
                        (order, u)
                    })
                    .collect(),
            ),
        },
    };
    Analysis {
        source: "r.txt".into(),
        samples: 1024,
        sample_rate_hz: 1.0e7,
        bits: 12,
        found: OneTone {
            full_scale_vpp: Some(2.0),
            fit: Some(fit),
            spectrum: Some(spectrum),
            clipping: Some(Clipping {
                end_code_samples: 3,
                clipped_samples: Some(1.5),
                uncertainty: ClippingUncertainty {
                    clipped_samples: Some(0.5),
                },
            }),
        },
        warnings: vec!["one".into(), "two".into()],
        error: Some(ErrorReport {
            kind: ErrorKind::Io,
            message: "m".into(),
        }),
    }
}

/// The result record of a record that could not be read.
fn failed() -> Analysis {
    let e = Error::new(
        ErrorKind::Empty,
        "r.txt",
        Location::Whole,
        "samples",
        "none",
    );
    Analysis::failed("r.txt", &e, vec!["w".into()])
}

/// Every leaf of a JSON value with its dotted path, harmonics keyed `h<order>` (the CSV's rule, written
/// out here on its own so that the check does not lean on the code it checks).
fn leaves(prefix: &str, v: &Value, out: &mut Vec<(String, Value)>) {
    let join = |k: &str| {
        if prefix.is_empty() {
            k.to_string()
        } else {
            format!("{prefix}.{k}")
        }
    };
    match v {
        Value::Object(m) => m.iter().for_each(|(k, v)| leaves(&join(k), v, out)),
        Value::Array(items) if items.iter().all(Value::is_object) && !items.is_empty() => {
            for item in items {
                leaves(&join(&format!("h{}", item["order"])), item, out);
            }
        }
        v => out.push((prefix.to_string(), v.clone())),
    }
}

fn keys_of(a: &Analysis) -> Vec<(String, Value)> {
    let mut out = Vec::new();
    leaves("", &serde_json::to_value(a).unwrap(), &mut out);
    out
}

#[test]
fn every_field_of_a_full_record_has_a_row_and_every_row_a_field() {
    let record = keys_of(&populated());
    // Fully populated: nothing absent, so every field shows its own key.
    for (k, v) in &record {
        assert!(!v.is_null(), "{k} is absent in the populated record");
    }
    let from_record: BTreeSet<&str> = record.iter().map(|(k, _)| k.as_str()).collect();
    let table = figures::keys(HARMONICS);
    let from_table: BTreeSet<&str> = table.iter().map(String::as_str).collect();
    let missing: Vec<_> = from_record.difference(&from_table).collect();
    let extra: Vec<_> = from_table.difference(&from_record).collect();
    assert!(missing.is_empty(), "fields without a row: {missing:?}");
    assert!(extra.is_empty(), "rows without a field: {extra:?}");
    // The same order as the record's fields (the CSV's column order).
    let in_order: Vec<&str> = record.iter().map(|(k, _)| k.as_str()).collect();
    assert_eq!(
        in_order,
        table.iter().map(String::as_str).collect::<Vec<_>>()
    );
    // The kind of each row agrees with the JSON value the record writes.
    for (k, v) in &record {
        // An uncertainty is a number beside a figure that declares one (figures.rs: `uncertain`).
        if let Some(of) = figures::uncertainty_of(k) {
            assert!(of.figure.uncertainty && v.is_f64(), "{k}: {v}");
            continue;
        }
        let kind = figures::get(k).unwrap().figure.kind;
        let ok = match kind {
            Kind::Number => v.is_f64(),
            Kind::Integer => v.is_u64() || v.is_i64(),
            Kind::Flag => v.is_boolean(),
            Kind::Text => {
                v.is_string() || v.as_array().is_some_and(|a| a.iter().all(Value::is_string))
            }
        };
        assert!(ok, "{k}: {kind:?} but the record writes {v}");
    }
}

#[test]
fn a_failed_record_is_covered_by_the_table() {
    let failed = keys_of(&failed());
    let table = figures::keys(HARMONICS);
    // A part that is absent as a whole (null) stands for every row under it.
    let absent: Vec<String> = failed
        .iter()
        .filter(|(_, v)| v.is_null())
        .map(|(k, _)| format!("{k}."))
        .collect();
    for (k, _) in &failed {
        let covered = table
            .iter()
            .any(|t| t == k || t.starts_with(&format!("{k}.")));
        assert!(covered, "{k} of a failed record has no row");
    }
    for t in &table {
        let covered =
            failed.iter().any(|(k, _)| k == t) || absent.iter().any(|a| t.starts_with(a.as_str()));
        assert!(
            covered,
            "row {t} is neither in a failed record nor under an absent part"
        );
    }
    assert!(absent.contains(&"fit.".to_string()) && absent.contains(&"spectrum.".to_string()));
}

// The CSV's columns come from the table, not from an example result: a part that is absent in every
// result (no worst spur, no leakage advice, a failed record's whole fit) keeps its columns, empty, in
// a record's CSV and in a lot's summary columns alike.
#[test]
fn absent_parts_keep_their_columns() {
    let mut a = populated();
    a.error = None;
    let sp = a.spectrum.as_mut().unwrap();
    sp.worst_spur = None;
    sp.leakage.advice = None;
    sp.sfdr_dbc = None;
    let csv = spurline::to_csv(&[a, failed()], HARMONICS);
    let mut rows = csv.lines();
    let header: Vec<&str> = rows.next().unwrap().split(',').collect();
    assert_eq!(header, figures::keys(HARMONICS));
    let col = |k: &str| header.iter().position(|h| *h == k).unwrap();
    let first: Vec<&str> = rows.next().unwrap().split(',').collect();
    for k in [
        "spectrum.worst_spur.frequency_hz",
        "spectrum.worst_spur.dbc",
        "spectrum.leakage.advice",
        "spectrum.sfdr_dbc",
    ] {
        assert_eq!(first[col(k)], "", "{k}");
    }
    assert_eq!(first[col("spectrum.snr_db")], "70.0");
    let second: Vec<&str> = rows.next().unwrap().split(',').collect();
    assert_eq!(second[col("fit.frequency_hz")], "");
    assert_eq!(second[col("error.kind")], "empty");
    // A result with more harmonics than asked for widens the columns rather than losing fields.
    let wide = spurline::to_csv(&[populated()], 2);
    let head: Vec<&str> = wide.lines().next().unwrap().split(',').collect();
    assert_eq!(head, figures::keys(HARMONICS));
}
