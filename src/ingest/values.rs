//! Records of values (voltages, floats): what the samples a reader decoded are (codes, volts or units
//! of full scale), and their scaling to codes of the record's resolution, with the notes the output
//! gives about them.

use serde::{Deserialize, Serialize};

use super::samples::Samples;
use crate::error::{Error, ErrorKind, Location, Result};
use crate::record::{Values, NOMINAL_BITS};

/// What the numbers of a record are.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SampleUnit {
    /// Output codes (integers; offset binary is converted as for any code record).
    Codes,
    /// Volts at the converter's input: the full-scale range (`full_scale_vpp`) is needed.
    Volts,
    /// Units of full scale: ±1.0 is full scale (the convention of float audio data).
    FullScale,
}

impl std::str::FromStr for SampleUnit {
    type Err = Error;

    /// `codes`, `volts`, `full-scale` (or `full_scale`). Errors: [`ErrorKind::BadSetting`] on key
    /// `unit`.
    fn from_str(s: &str) -> Result<SampleUnit> {
        match s.trim() {
            "codes" => Ok(SampleUnit::Codes),
            "volts" => Ok(SampleUnit::Volts),
            "full-scale" | "full_scale" => Ok(SampleUnit::FullScale),
            other => Err(Error::setting(
                "unit",
                "codes, volts or full-scale",
                format!("{other:?}"),
            )),
        }
    }
}

/// What a record's samples turned out to be.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum Decoded {
    /// Integer codes (the resolution is still to be checked).
    Codes(Vec<i32>),
    /// Values scaled to codes of `bits`.
    Values {
        /// The samples and whether `bits` was given.
        values: Values,
        /// The resolution the values are scaled to (given, or [`NOMINAL_BITS`]).
        bits: u32,
    },
}

/// What [`decide`] needs besides the samples.
pub(crate) struct Decide<'a> {
    /// The record as errors name it.
    pub path: &'a str,
    /// The unit the settings or the sidecar give.
    pub unit: Option<SampleUnit>,
    /// The unit the container itself states (float WAV: full scale), used when `unit` is `None`.
    pub native: Option<SampleUnit>,
    /// The resolution given.
    pub bits: Option<u32>,
    /// The full-scale range given, volts peak-to-peak.
    pub full_scale_vpp: Option<f64>,
    /// Where sample k sits in the file, for an error about it.
    pub locate: &'a dyn Fn(usize) -> Location,
    /// Where the first value with a fraction is, when the reader knows (the line of a text record).
    pub fraction_at: Option<Location>,
}

/// Decides what the samples are and scales values to codes of the resolution.
///
/// Codes stay codes unless the unit says volts or full scale. Values are volts when a full-scale
/// range is given, units of full scale when the unit (or the container) says so, and codes when the
/// unit says codes (each must then be a whole number). With no unit, float samples that are all
/// whole numbers are codes when no full-scale range is given (with a warning) and ambiguous when one
/// is; float samples with fractions and no full-scale range are refused. Errors:
/// [`ErrorKind::BadSetting`] naming the option to give, [`ErrorKind::NotInteger`] for a fraction
/// read as a code.
pub(crate) fn decide(samples: Samples, d: &Decide, warnings: &mut Vec<String>) -> Result<Decoded> {
    let unit = d.unit.or(d.native);
    let values = match (samples, unit) {
        (Samples::Codes(c), None | Some(SampleUnit::Codes)) => return Ok(Decoded::Codes(c)),
        (Samples::Codes(c), Some(_)) => c.into_iter().map(f64::from).collect(),
        (Samples::Values(v), Some(SampleUnit::Codes)) => return whole(v, d).map(Decoded::Codes),
        (Samples::Values(v), Some(_)) => v,
        (Samples::Values(v), None) => {
            let all_whole = v.iter().all(|&x| is_code(x));
            match (all_whole, d.full_scale_vpp) {
                (true, None) => {
                    warnings.push(
                        "float samples that are all whole numbers, read as codes: give --unit volts \
                         or --unit full-scale if they are not codes"
                            .to_string(),
                    );
                    return whole(v, d).map(Decoded::Codes);
                }
                (true, Some(fsv)) => {
                    return Err(Error::new(
                        ErrorKind::BadSetting,
                        d.path,
                        Location::Key("unit".into()),
                        "--unit codes or --unit volts: the float samples are all whole numbers and a \
                         full-scale range is given, so they may be either",
                        format!("whole numbers with a full-scale range of {fsv} Vpp"),
                    ));
                }
                (false, Some(_)) => v,
                (false, None) => {
                    let k = v.iter().position(|&x| !is_code(x)).unwrap_or(0);
                    let at = match d.fraction_at.clone().unwrap_or_else(|| (d.locate)(k)) {
                        Location::Whole => Location::Key("full_scale_vpp".into()),
                        at => at,
                    };
                    return Err(Error::new(
                        ErrorKind::BadSetting,
                        d.path,
                        at,
                        "the full-scale range of a record of values: give --full-scale-vpp (samples \
                         in volts) or --unit full-scale (samples where ±1.0 is full scale)",
                        format!(
                            "a value with a fraction ({}, sample {k} from 0) and no full-scale range",
                            v.get(k).copied().unwrap_or(0.0)
                        ),
                    ));
                }
            }
        }
    };
    let (fsr, unit_text) = match unit {
        Some(SampleUnit::FullScale) => (2.0, "units of full scale, ±1.0 full scale".to_string()),
        _ => {
            let Some(fsv) = d.full_scale_vpp else {
                return Err(Error::new(
                    ErrorKind::BadSetting,
                    d.path,
                    Location::Key("full_scale_vpp".into()),
                    "the full-scale range of a record of volts: give --full-scale-vpp or \
                     \"full_scale_vpp\" in the sidecar",
                    "none given",
                ));
            };
            (fsv, format!("volts, full-scale range {fsv} Vpp"))
        }
    };
    let bits = d.bits.unwrap_or(NOMINAL_BITS);
    let scale = crate::record::full_scale_amplitude_codes(bits) * 2.0 / fsr;
    let mut scaled = values;
    // In place: the record holds its samples once.
    for x in &mut scaled {
        *x *= scale;
    }
    warnings.push(format!(
        "a record of values ({unit_text}) has no code grid: the code checks (clipping, stuck bits, \
         missing codes) and the code histogram are skipped"
    ));
    warnings.push(match d.bits {
        Some(b) => format!(
            "ENOB and figures in codes are referred to the stated {b}-bit resolution over the \
             full-scale range"
        ),
        None => format!(
            "no resolution given: ENOB from SINAD alone (spectral and full-scale forms, no fit \
             ENOB); figures in codes are on a nominal {NOMINAL_BITS}-bit scale of the full-scale \
             range"
        ),
    });
    let half = crate::record::full_scale_amplitude_codes(bits);
    let beyond = scaled.iter().filter(|x| x.abs() > half).count();
    if beyond > 0 {
        warnings.push(format!(
            "{beyond} samples ({:.2}%) beyond the full-scale range: the input may be clipping, or \
             the full-scale range given is wrong",
            100.0 * beyond as f64 / scaled.len().max(1) as f64
        ));
    }
    Ok(Decoded::Values {
        values: Values {
            scaled,
            bits_given: d.bits.is_some(),
        },
        bits,
    })
}

/// Whether a float is a whole number in the 32-bit code range.
fn is_code(x: f64) -> bool {
    x.fract() == 0.0 && (-2_147_483_648.0..=2_147_483_647.0).contains(&x)
}

/// Float samples as codes; the first that is not a whole number is an error at its place.
fn whole(v: Vec<f64>, d: &Decide) -> Result<Vec<i32>> {
    if let Some(k) = v.iter().position(|&x| !is_code(x)) {
        return Err(Error::new(
            ErrorKind::NotInteger,
            d.path,
            (d.locate)(k),
            "a whole number (the samples are read as codes)",
            format!("{} (sample {k}, 0-based)", v[k]),
        ));
    }
    Ok(v.into_iter().map(|x| x as i32).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    // Sources: FSR = 2^N codes and a full-scale sine of peak 2^(N-1) codes are the crate's stated
    // conventions; ±1.0 full scale for float audio samples is common practice, no source.

    fn run(
        samples: Samples,
        unit: Option<SampleUnit>,
        bits: Option<u32>,
        fsv: Option<f64>,
    ) -> Result<(Decoded, Vec<String>)> {
        let mut w = Vec::new();
        let d = Decide {
            path: "r.npy",
            unit,
            native: None,
            bits,
            full_scale_vpp: fsv,
            locate: &|k| Location::Byte(100 + 4 * k as u64),
            fraction_at: None,
        };
        decide(samples, &d, &mut w).map(|x| (x, w))
    }

    #[test]
    fn volts_scale_to_codes_of_the_resolution() {
        // 12 bits over 2 Vpp: 1 V is 2048 codes.
        let (d, w) = run(
            Samples::Values(vec![1.0, -0.5, 0.25e-3]),
            None,
            Some(12),
            Some(2.0),
        )
        .unwrap();
        let Decoded::Values { values, bits } = d else {
            panic!("{d:?}")
        };
        assert_eq!(bits, 12);
        assert_eq!(values.scaled, vec![2048.0, -1024.0, 0.512]);
        assert!(values.bits_given);
        assert!(
            w[0].contains("no code grid") && w[1].contains("12-bit"),
            "{w:?}"
        );
        assert_eq!(w.len(), 2);
        // Units of full scale, no resolution: the nominal scale, and a sample beyond full scale.
        let (d, w) = run(
            Samples::Values(vec![1.0, -1.5]),
            Some(SampleUnit::FullScale),
            None,
            None,
        )
        .unwrap();
        let Decoded::Values { values, bits } = d else {
            panic!("{d:?}")
        };
        assert_eq!(bits, NOMINAL_BITS);
        assert_eq!(values.scaled, vec![32768.0, -49152.0]);
        assert!(!values.bits_given);
        assert!(w[1].contains("no resolution given"), "{w:?}");
        assert!(w[2].starts_with("1 samples (50.00%) beyond"), "{w:?}");
    }

    #[test]
    fn codes_stay_codes_unless_the_unit_says_otherwise() {
        let (d, w) = run(Samples::Codes(vec![1, -2]), None, Some(12), Some(2.0)).unwrap();
        assert_eq!(d, Decoded::Codes(vec![1, -2]));
        assert!(w.is_empty());
        let (d, _) = run(
            Samples::Codes(vec![1, -2]),
            Some(SampleUnit::Volts),
            Some(12),
            Some(4.0),
        )
        .unwrap();
        assert!(
            matches!(d, Decoded::Values { ref values, .. } if values.scaled == vec![1024.0, -2048.0]),
            "{d:?}"
        );
    }

    #[test]
    fn whole_floats_and_ambiguity() {
        // Whole floats and no full scale: codes, with a warning.
        let (d, w) = run(Samples::Values(vec![3.0, -4.0]), None, Some(12), None).unwrap();
        assert_eq!(d, Decoded::Codes(vec![3, -4]));
        assert!(w[0].contains("whole numbers"), "{w:?}");
        // With a full scale: refused.
        let e = run(Samples::Values(vec![3.0, -4.0]), None, Some(12), Some(2.0)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::BadSetting);
        assert_eq!(e.location, Location::Key("unit".into()));
        assert!(e.expected.contains("--unit codes"), "{}", e.expected);
        // Fractions and no full scale: refused, naming the options.
        let e = run(Samples::Values(vec![1.0, 0.5]), None, Some(12), None).unwrap_err();
        assert_eq!(e.location, Location::Byte(104));
        assert_eq!(
            e.found,
            "a value with a fraction (0.5, sample 1 from 0) and no full-scale range"
        );
        assert!(
            e.expected.contains("--full-scale-vpp") && e.expected.contains("--unit full-scale")
        );
        // Volts by the unit, without a full scale.
        let e = run(
            Samples::Values(vec![0.5]),
            Some(SampleUnit::Volts),
            Some(12),
            None,
        )
        .unwrap_err();
        assert_eq!(e.location, Location::Key("full_scale_vpp".into()));
        // Codes by the unit: a fraction is refused at its place.
        let e = run(
            Samples::Values(vec![1.0, 2.0, 2.5]),
            Some(SampleUnit::Codes),
            Some(12),
            None,
        )
        .unwrap_err();
        assert_eq!(e.kind, ErrorKind::NotInteger);
        assert_eq!(e.location, Location::Byte(108));
        assert_eq!(e.found, "2.5 (sample 2, 0-based)");
    }

    #[test]
    fn unit_names() {
        assert_eq!("codes".parse::<SampleUnit>().unwrap(), SampleUnit::Codes);
        assert_eq!("volts".parse::<SampleUnit>().unwrap(), SampleUnit::Volts);
        assert_eq!(
            "full-scale".parse::<SampleUnit>().unwrap(),
            SampleUnit::FullScale
        );
        assert_eq!(
            "full_scale".parse::<SampleUnit>().unwrap(),
            SampleUnit::FullScale
        );
        let e = "lsb".parse::<SampleUnit>().unwrap_err();
        assert_eq!(e.location, Location::Key("unit".into()));
    }
}
