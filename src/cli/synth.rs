//! `spurline synth`: write a record from the simulated converter, with a sidecar of its settings.

use super::{si_value, EXIT_OK};
use clap::Args;
use spurline::Error;
use spurline::{synthesize, write_record, OutputLayout, SynthFrequency, SynthSettings};
use spurline::{write_sidecar, Sidecar};
use std::path::PathBuf;

/// Arguments of `synth`.
#[derive(Debug, Args)]
pub struct SynthArgs {
    /// Output record file; a sidecar `<name>.json` with the settings is written beside it.
    #[arg(short, long)]
    pub output: PathBuf,
    /// Resolution N in bits.
    #[arg(long, default_value_t = 12)]
    pub bits: u32,
    /// Sample rate in hertz.
    #[arg(long, value_parser = si_value, default_value = "100M")]
    pub fs: f64,
    /// Samples in the record.
    #[arg(long, default_value_t = 4096)]
    pub samples: usize,
    /// Input frequency in hertz, used as given.
    #[arg(long, value_parser = si_value, conflicts_with = "coherent_near")]
    pub fin: Option<f64>,
    /// Pick the coherent frequency (odd cycle count coprime with N) nearest this one.
    #[arg(long, value_parser = si_value)]
    pub coherent_near: Option<f64>,
    /// Peak amplitude relative to full scale, dBFS.
    #[arg(long, default_value_t = -1.0, allow_hyphen_values = true)]
    pub amplitude_dbfs: f64,
    /// Phase at sample 0, radians.
    #[arg(long, default_value_t = 0.0, allow_hyphen_values = true)]
    pub phase: f64,
    /// Offset, codes.
    #[arg(long, default_value_t = 0.0, allow_hyphen_values = true)]
    pub offset: f64,
    /// White Gaussian noise before quantisation, codes rms.
    #[arg(long, default_value_t = 0.0)]
    pub noise_rms: f64,
    /// Add a harmonic ORDER:DBC, e.g. 3:-80 (repeatable).
    #[arg(long = "add-harmonic", value_parser = pair, allow_hyphen_values = true)]
    pub harmonics: Vec<(f64, f64)>,
    /// The old name of --add-harmonic (warns).
    #[arg(long = "harmonic", value_parser = pair, allow_hyphen_values = true, hide = true)]
    pub harmonics_old: Vec<(f64, f64)>,
    /// A non-harmonic spur HZ:DBC, e.g. 7.3M:-95.
    #[arg(long, value_parser = pair, allow_hyphen_values = true)]
    pub spur: Option<(f64, f64)>,
    /// Aperture jitter, seconds rms (SI prefixes allowed: 200f).
    #[arg(long, value_parser = si_value, default_value = "0")]
    pub jitter: f64,
    /// Static INL bow at mid-scale, LSB.
    #[arg(long, default_value_t = 0.0, allow_hyphen_values = true)]
    pub inl_bow: f64,
    /// Random seed (same seed, same record).
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Code-width errors in LSB, repeated over the codes (offset-binary code u gets entry u mod
    /// length), e.g. 0.1,-0.1; the widths are rescaled so the end transitions stay in place.
    #[arg(long, value_delimiter = ',', allow_hyphen_values = true)]
    pub dnl_pattern: Vec<f64>,
    /// An inner code (signed, centred on mid-scale) that never occurs (repeatable).
    #[arg(long = "missing-code", allow_hyphen_values = true)]
    pub missing_codes: Vec<i64>,
    /// Output layout: text, or a binary word i16le, i16be, u16le, u16be, i32le, i32be, u32le, u32be.
    #[arg(long, default_value = "text")]
    pub layout: String,
}

fn pair(s: &str) -> Result<(f64, f64), String> {
    let (a, b) = s
        .split_once(':')
        .ok_or_else(|| format!("expected A:B such as 3:-80, found '{s}'"))?;
    Ok((si_value(a)?, si_value(b)?))
}

/// Runs `synth`.
pub fn run(mut args: SynthArgs) -> i32 {
    if !args.harmonics_old.is_empty() {
        super::renamed(None, Some(()), "--harmonic", "--add-harmonic");
        let old = std::mem::take(&mut args.harmonics_old);
        args.harmonics.extend(old);
    }
    match go(&args) {
        Ok(msg) => {
            println!("{msg}");
            EXIT_OK
        }
        Err(e) => super::fail(&e),
    }
}

fn go(args: &SynthArgs) -> Result<String, Error> {
    let frequency = match (args.fin, args.coherent_near) {
        (Some(f), _) => SynthFrequency::Hz(f),
        (None, Some(f)) => SynthFrequency::NearestCoherent(f),
        (None, None) => SynthFrequency::NearestCoherent(args.fs / 10.0),
    };
    let mut harmonics_dbc = Vec::new();
    for &(order, dbc) in &args.harmonics {
        if order < 2.0 || order.fract() != 0.0 || order > 1000.0 {
            return Err(Error::setting(
                "add-harmonic",
                "an integer order 2..=1000",
                order.to_string(),
            ));
        }
        harmonics_dbc.push((order as u32, dbc));
    }
    let settings = SynthSettings {
        bits: args.bits,
        sample_rate_hz: args.fs,
        samples: args.samples,
        amplitude_dbfs: args.amplitude_dbfs,
        frequency,
        phase_rad: args.phase,
        offset_codes: args.offset,
        noise_rms_codes: args.noise_rms,
        harmonics_dbc,
        spur: args.spur,
        jitter_rms_s: args.jitter,
        inl_bow_lsb: args.inl_bow,
        seed: args.seed,
        dnl_pattern_lsb: args.dnl_pattern.clone(),
        missing_codes: args.missing_codes.clone(),
    };
    let out = synthesize(&settings)?;
    let (layout, format) = match args.layout.as_str() {
        "text" => (OutputLayout::Text, "text".to_string()),
        word => {
            let l = spurline::Format::parse_word(word)?;
            if l.word_bytes < 2 || l.word_bytes * 8 < args.bits as usize {
                return Err(Error::setting(
                    "layout",
                    format!("a word of 16 or 32 bits holding {} bits", args.bits),
                    word.to_string(),
                ));
            }
            (
                OutputLayout::Binary {
                    word_bytes: l.word_bytes,
                    big_endian: l.big_endian,
                    offset_binary: !l.signed,
                },
                word.to_string(),
            )
        }
    };
    write_record(&args.output, &out.record, &layout)?;
    let sidecar = Sidecar {
        sample_rate_hz: Some(args.fs),
        bits: Some(args.bits),
        fin_hz: Some(out.frequency_hz),
        format: Some(format),
        generator: Some(serde_json::to_value(&settings).expect("plain data serialises")),
        ..Sidecar::default()
    };
    write_sidecar(&args.output, &sidecar)?;
    Ok(format!(
        "wrote {} ({} samples, {} bits, fin {} Hz, {} clipped) and {}",
        args.output.display(),
        out.record.len(),
        args.bits,
        out.frequency_hz,
        out.clipped_samples,
        spurline::sidecar_path(&args.output)?.display()
    ))
}
