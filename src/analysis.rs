//! The analysis pipeline of one record (or several averaged records of one condition): sine fit, then
//! spectrum, then one result record that every output format is made from.

use crate::error::{Error, ErrorKind, Location, Result};
use crate::fit::{self, Clipping, FitOutput, FourParamOptions, SineFit};
use crate::record::Record;
use crate::spectrum::{self, claim::Owner, Spectrum, SpectrumSettings};
use serde::Serialize;

/// Which sine fit to run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum FitChoice {
    /// Four-parameter fit (the frequency is found); the record's frequency hint, if any, guides the start.
    #[default]
    Four,
    /// Three-parameter fit at the record's known frequency (`fin_hint_hz`, required).
    Three,
}

impl std::str::FromStr for FitChoice {
    type Err = Error;

    /// `four` or `three`. Errors: [`crate::error::ErrorKind::BadSetting`] on key `fit`.
    fn from_str(s: &str) -> Result<FitChoice> {
        match s {
            "four" => Ok(FitChoice::Four),
            "three" => Ok(FitChoice::Three),
            other => Err(Error::setting("fit", "four or three", format!("{other:?}"))),
        }
    }
}

/// Settings of the whole analysis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AnalysisSettings {
    /// The fit.
    pub fit: FitChoice,
    /// The spectral stage.
    pub spectrum: SpectrumSettings,
    /// Minimum record length accepted (0: 64 samples).
    pub min_samples: usize,
    /// Whether the fit's residual is kept in [`Traces::residual`] for a plot (default). Without it a
    /// record needs 8 bytes per sample less; the figures are the same to the bit.
    pub keep_residual: bool,
}

impl Default for AnalysisSettings {
    fn default() -> Self {
        AnalysisSettings {
            fit: FitChoice::default(),
            spectrum: SpectrumSettings::default(),
            min_samples: 0,
            keep_residual: true,
        }
    }
}

/// An error of one record, as it appears in the outputs.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ErrorReport {
    /// The class of error.
    pub kind: ErrorKind,
    /// The whole message: file, place, expected, found.
    pub message: String,
}

impl From<&Error> for ErrorReport {
    fn from(e: &Error) -> Self {
        ErrorReport {
            kind: e.kind,
            message: e.to_string(),
        }
    }
}

/// The envelope of every result record of one record's analysis (one tone, two tones, interleaving):
/// where the record came from, its length, rate and resolution, what was found (`T`), the warnings and
/// the error. Serialised flat, in that order: the keys of `T` sit between `bits` and `warnings`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RecordResult<T> {
    /// Where the record came from (the first one, when several were averaged).
    pub source: String,
    /// Samples per record.
    pub samples: usize,
    /// Sample rate, hertz.
    pub sample_rate_hz: f64,
    /// Resolution N, bits; 0 for a record of values given without one (an analogue view).
    pub bits: u32,
    /// What the analysis found; all absent (`T::default()`) when the record failed.
    #[serde(flatten)]
    pub found: T,
    /// Everything the user should know about this record, each with its count or value.
    pub warnings: Vec<String>,
    /// Set when the record failed; the figures are then absent.
    pub error: Option<ErrorReport>,
}

impl<T> RecordResult<T> {
    /// The result of analysing `record`: its source, length, rate and resolution around `found`.
    pub fn of(record: &Record, found: T, warnings: Vec<String>) -> RecordResult<T> {
        RecordResult {
            source: record.source.clone(),
            samples: record.len(),
            sample_rate_hz: record.sample_rate_hz,
            bits: record.bits_reported(),
            found,
            warnings,
            error: None,
        }
    }
}

impl<T: Default> RecordResult<T> {
    /// The result record of a record that could not be analysed.
    pub fn failed(source: &str, error: &Error, warnings: Vec<String>) -> RecordResult<T> {
        RecordResult {
            source: source.to_string(),
            samples: 0,
            sample_rate_hz: 0.0,
            bits: 0,
            found: T::default(),
            warnings,
            error: Some(error.into()),
        }
    }
}

// The envelope reads through to what was found, so `result.fit` and `result.spectrum` name the found
// fit and spectrum whichever analysis made them.
impl<T> std::ops::Deref for RecordResult<T> {
    type Target = T;
    fn deref(&self) -> &T {
        &self.found
    }
}

impl<T> std::ops::DerefMut for RecordResult<T> {
    fn deref_mut(&mut self) -> &mut T {
        &mut self.found
    }
}

/// What the one-tone analysis finds.
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct OneTone {
    /// Full-scale range when known, volts peak-to-peak.
    pub full_scale_vpp: Option<f64>,
    /// The sine fit (of the first record when several were averaged).
    pub fit: Option<SineFit>,
    /// The spectral figures.
    pub spectrum: Option<Spectrum>,
    /// Samples at the end codes and samples clipped (of the first record when several were averaged).
    pub clipping: Option<Clipping>,
}

/// The result record of one analysis: every output (text, JSON, CSV, HTML) is made from this.
pub type Analysis = RecordResult<OneTone>;

/// Per-sample and per-bin data behind an analysis, kept for the plots and not serialised.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Traces {
    /// Residual of the sine fit (first record), codes.
    pub residual: Vec<f64>,
    /// Averaged bin powers, codes² (one-sided, scaled by N·Σw² as the crate docs say).
    pub powers: Vec<f64>,
    /// Owner of each bin.
    pub owner: Vec<Owner>,
    /// What the code histogram of the first record is counted from (see [`Traces::histogram`]).
    pub codes: CodeCounts,
}

/// The code histogram of a record, or the codes to count it from when a plot asks for it. Counting
/// 2^N bins cost more than the FFT of a short record that is never plotted, while a long record's
/// codes cost more memory than its counts: whichever is smaller is kept.
#[derive(Debug, Clone, PartialEq, Default)]
pub enum CodeCounts {
    /// No histogram (no record, or more than 24 bits).
    #[default]
    None,
    /// The codes and their resolution, counted on demand.
    Codes(Vec<i32>, u32),
    /// The counts already made, index 0 = lowest code −2^(N−1).
    Counts(Vec<u64>),
}

impl CodeCounts {
    /// The cheaper form for `codes` at `bits`.
    pub fn of(codes: &[i32], bits: u32) -> CodeCounts {
        if !(1..=24).contains(&bits) || codes.is_empty() {
            CodeCounts::None
        } else if codes.len() >= 8usize << bits {
            CodeCounts::Counts(histogram_of(codes, bits))
        } else {
            CodeCounts::Codes(codes.to_vec(), bits)
        }
    }
}

impl CodeCounts {
    /// [`CodeCounts::of`] from codes the caller gives up: kept as they are, not copied, when they are
    /// the cheaper form.
    pub fn from_owned(codes: Vec<i32>, bits: u32) -> CodeCounts {
        if (1..=24).contains(&bits) && !codes.is_empty() && codes.len() < 8usize << bits {
            CodeCounts::Codes(codes, bits)
        } else {
            CodeCounts::of(&codes, bits)
        }
    }
}

impl Traces {
    /// Count per code of the first record, index 0 = lowest code −2^(N−1) (empty above 24 bits).
    pub fn histogram(&self) -> Vec<u64> {
        match &self.codes {
            CodeCounts::None => Vec::new(),
            CodeCounts::Codes(c, bits) => histogram_of(c, *bits),
            CodeCounts::Counts(h) => h.clone(),
        }
    }

    /// Whether [`Traces::histogram`] has counts to show.
    pub fn has_histogram(&self) -> bool {
        self.codes != CodeCounts::None
    }
}

/// Both halves of an analysis.
#[derive(Debug, Clone, PartialEq)]
pub struct Measured {
    /// The result record.
    pub analysis: Analysis,
    /// The data for plots.
    pub traces: Traces,
}

/// Analyses one record.
pub fn analyze(record: &Record, settings: &AnalysisSettings) -> Result<Measured> {
    analyze_averaged(std::slice::from_ref(record), settings)
}

/// [`analyze`] of a record the caller gives up: its codes are dropped as soon as their f64 copy is
/// made, before the spectrum's buffers are allocated (64 MB less at the peak of a 2^24-sample record).
/// The result is the same to the bit.
pub fn analyze_record(mut record: Record, settings: &AnalysisSettings) -> Result<Measured> {
    check_records(std::slice::from_ref(&record), settings, true)?;
    let samples = record.len();
    let (data, counts) = if record.has_codes() {
        let codes = std::mem::take(&mut record.codes);
        let data = vec![codes.iter().map(|&c| f64::from(c)).collect()];
        (data, CodeCounts::from_owned(codes, record.bits))
    } else {
        // A record of values has no code grid to count.
        (vec![record.samples_f64()], CodeCounts::None)
    };
    measure_records(
        std::slice::from_ref(&record),
        samples,
        data,
        counts,
        settings,
    )
}

/// Analyses several records of one condition: each is fitted, their power spectra are averaged.
pub fn analyze_averaged(records: &[Record], settings: &AnalysisSettings) -> Result<Measured> {
    check_records(records, settings, false)?;
    let first = &records[0];
    let data: Vec<Vec<f64>> = records.iter().map(Record::samples_f64).collect();
    // A record of values has no code grid to count.
    let counts = if first.has_codes() {
        CodeCounts::of(&first.codes, first.bits)
    } else {
        CodeCounts::None
    };
    measure_records(records, first.len(), data, counts, settings)
}

/// Bytes per sample of each buffer an analysis holds at its peak (the spectrum's FFT), for
/// [`memory_needed`]. The FFT's plan (its twiddle factors, realfft's N/4 and rustfft's about N/2
/// complex values for the half-length transform) is counted per sample of the record.
const FFT_PLAN_BYTES_PER_SAMPLE: u64 = 12;
/// Memory the process holds whatever the record: code, allocator arenas, small tables.
const PROCESS_BASE_BYTES: u64 = 32 << 20;

/// Peak memory, in bytes, of analysing `records` records of `samples` samples each (the codes already
/// read included; `codes_owned`: the codes are given up as [`analyze_record`] does). It counts the
/// buffers the analysis really holds at its peak, the spectrum's transform: the codes (4 bytes a
/// sample) unless given up, one f64 copy per record (8), the fit's residual when kept (8), the
/// transform's half-spectrum output (N/2 + 1 complex values: 8 a sample) and its plan (12).
pub fn memory_needed(
    samples: usize,
    records: usize,
    keep_residual: bool,
    codes_owned: bool,
) -> u64 {
    let n = samples as u64;
    let r = records.max(1) as u64;
    let codes = if codes_owned { 0 } else { 4 * r };
    let copies = 8 * r;
    let residual = if keep_residual { 8 } else { 0 };
    let fft_out = (std::mem::size_of::<realfft::num_complex::Complex<f64>>() / 2) as u64;
    let at_fft = codes + copies + residual + fft_out + FFT_PLAN_BYTES_PER_SAMPLE;
    // While the fit runs the codes are still there (given up only after the copy is made).
    let at_fit = 4 + copies + residual;
    PROCESS_BASE_BYTES + n * at_fft.max(at_fit)
}

/// Memory the process may still take: the system's available memory (`MemAvailable`), within a
/// control group's limit when one is set. `None` where neither can be read (not Linux).
pub fn memory_available() -> Option<u64> {
    let meminfo = std::fs::read_to_string("/proc/meminfo").ok();
    let system = meminfo.as_deref().and_then(|m| {
        m.lines()
            .find_map(|l| l.strip_prefix("MemAvailable:"))
            .and_then(|v| v.trim().trim_end_matches("kB").trim().parse::<u64>().ok())
            .map(|kb| kb * 1024)
    });
    let read = |p: &str| {
        std::fs::read_to_string(p)
            .ok()
            .and_then(|v| v.trim().parse::<u64>().ok())
    };
    let group = match (
        read("/sys/fs/cgroup/memory.max"),
        read("/sys/fs/cgroup/memory.current"),
    ) {
        (Some(max), Some(used)) => Some(max.saturating_sub(used)),
        _ => None,
    };
    match (system, group) {
        (Some(a), Some(b)) => Some(a.min(b)),
        (a, b) => a.or(b),
    }
}

/// Refuses, before any large buffer is allocated, an analysis that would need more than `available`
/// bytes (an out-of-memory kill loses the whole run; a refusal names the record and what it needs).
pub fn check_memory(source: &str, needed: u64, available: Option<u64>) -> Result<()> {
    match available {
        Some(a) if needed > a => Err(Error::new(
            ErrorKind::TooLarge,
            source,
            Location::Whole,
            format!(
                "a record whose analysis fits in the memory available ({})",
                mib(a)
            ),
            format!("a record whose analysis needs about {}", mib(needed)),
        )),
        _ => Ok(()),
    }
}

fn mib(bytes: u64) -> String {
    format!("{} MiB", bytes.div_ceil(1 << 20))
}

/// The checks every analysis makes on its records before any work.
fn check_records(records: &[Record], settings: &AnalysisSettings, owned: bool) -> Result<()> {
    let first = records.first().ok_or_else(|| {
        Error::new(
            ErrorKind::Empty,
            "",
            Location::Whole,
            "at least one record",
            "none",
        )
    })?;
    let min = if settings.min_samples == 0 {
        64
    } else {
        settings.min_samples
    };
    for r in records {
        // Records built in code skip the ingest checks: an unchecked resolution or rate would panic
        // (shifts by bits − 1) or overflow into infinities further on.
        crate::record::check_bits(r.bits).map_err(|e| e.with_path(&r.source))?;
        crate::record::check_sample_rate(r.sample_rate_hz, "")
            .map_err(|e| e.with_path(&r.source))?;
        if r.len() < min {
            return Err(Error::new(
                ErrorKind::TooFewSamples,
                &r.source,
                Location::Whole,
                format!("at least {min} samples for the analysis"),
                format!("{} samples", r.len()),
            ));
        }
        if r.len() != first.len()
            || r.sample_rate_hz != first.sample_rate_hz
            || r.bits != first.bits
            || r.has_codes() != first.has_codes()
        {
            return Err(Error::new(
                ErrorKind::BadSetting,
                &r.source,
                Location::Whole,
                format!(
                    "the same length, rate and resolution as {} ({} samples, {} Hz, {} bits) to average",
                    first.source, first.len(), first.sample_rate_hz, first.bits
                ),
                format!("{} samples, {} Hz, {} bits", r.len(), r.sample_rate_hz, r.bits),
            ));
        }
    }
    // Small records cannot run out of memory: only long ones are weighed (a read of /proc per record
    // of a lot would cost more than its analysis).
    if first.len() >= 1 << 20 {
        let needed = memory_needed(first.len(), records.len(), settings.keep_residual, owned);
        check_memory(&first.source, needed, memory_available())?;
    }
    Ok(())
}

/// The fit of every record, then the averaged spectrum: `records` give the metadata (their codes may
/// be gone), `data` the f64 copies of their codes, `samples` the length of each.
fn measure_records(
    records: &[Record],
    samples: usize,
    data: Vec<Vec<f64>>,
    counts: CodeCounts,
    settings: &AnalysisSettings,
) -> Result<Measured> {
    let first = &records[0];
    let src = first.source.clone();
    let mut warnings = Vec::new();
    // The spectrum's FFT plan (about two transforms' worth of work for a new length) is made on the
    // second core while the fits run; in a lot whose workers are all busy it is simply made next.
    let (fits, plan) = rayon::join(
        || -> Result<Vec<FitOutput>> {
            let mut fits = Vec::with_capacity(records.len());
            for (i, (r, y)) in records.iter().zip(&data).enumerate() {
                // Only the first record's residual is ever drawn.
                let keep = i == 0 && settings.keep_residual;
                let mut out = run_fit(r, y, settings, keep).map_err(|e| e.with_path(&r.source))?;
                if r.bits_reported() == 0 {
                    // The fit form of ENOB counts in steps of the stated resolution; without one it
                    // would report the nominal scale's bits.
                    out.fit.enob_bits = None;
                    out.fit.uncertainty.enob_bits = None;
                }
                fits.push(out);
            }
            Ok(fits)
        },
        || crate::dft::fft::plan(samples),
    );
    let mut fits = fits?;
    let all_fits: Vec<SineFit> = fits.iter().map(|o| o.fit.clone()).collect();
    let FitOutput {
        fit,
        residual,
        warnings: fit_warnings,
    } = fits.swap_remove(0);
    warnings.extend(fit_warnings);
    if settings.fit == FitChoice::Three {
        if let Some(w) = given_fin_against_the_tone(first, &data[0], &fit) {
            warnings.push(w);
        }
    }
    for (r, other) in records.iter().skip(1).zip(&all_fits[1..]) {
        if (other.cycles - fit.cycles).abs() > 0.5 {
            warnings.push(format!(
                "{} has its tone at {:.3} cycles, {:.3} cycles from the first record: averaging smears it",
                r.source,
                other.cycles,
                other.cycles - fit.cycles
            ));
        }
    }
    // Clipping is counted on the first record's samples before the spectrum consumes them (a record of
    // values has no end codes).
    let clipping = first
        .has_codes()
        .then(|| fit::clipping::clipping(&data[0], first.bits, &fit));
    // The spectra are taken in the f64 copies themselves, which are not needed after them.
    let mut spec = match spectrum::measure_consuming(
        data,
        &all_fits,
        first.sample_rate_hz,
        first.bits,
        &settings.spectrum,
        Some(&plan),
    ) {
        Ok(spec) => Some(spec),
        // A tone among the DC bins (a few cycles in the record, not coherent) cannot be told from DC
        // by any window, and a short windowed record can leave no noise bins; the sine fit finds
        // the tone either way: the fit figures stand, the spectral ones are withheld with the reason.
        Err(e) if matches!(e.kind, ErrorKind::ToneAtEdge | ErrorKind::NoNoiseBins) => {
            warnings.push(format!(
                "spectral figures withheld (fundamental level, SNR, SINAD, THD, SFDR, spectral and full-scale ENOB, noise floor, NSD, harmonics, worst spur): the spectrum needs {}, and found {}; the sine-fit figures are reported, with sine-fit SINAD and ENOB counting distortion as noise",
                e.expected, e.found
            ));
            None
        }
        Err(e) => return Err(e.with_path(&src)),
    };
    drop(plan);
    if let Some(spec) = &mut spec {
        warnings.append(&mut spec.warnings);
        if let Some(w) = fit_against_spectrum(&fit, &spec.spectrum, &spec.powers, &spec.owner) {
            warnings.push(w);
        }
    }
    let (spectrum_figures, powers, owner) = match spec {
        Some(s) => (Some(s.spectrum), s.powers, s.owner),
        None => (None, Vec::new(), Vec::new()),
    };
    if let Some(w) = clipping.as_ref().and_then(clipping_note) {
        warnings.push(w);
    }
    Ok(Measured {
        analysis: Analysis {
            source: src,
            samples,
            ..Analysis::of(
                first,
                OneTone {
                    full_scale_vpp: first.full_scale_vpp,
                    fit: Some(fit),
                    spectrum: spectrum_figures,
                    clipping,
                },
                warnings,
            )
        },
        traces: Traces {
            residual,
            powers,
            owner,
            codes: counts,
        },
    })
}

/// The sine fit's SINAD and the spectrum's measure the same noise and distortion and agree within
/// their uncertainties on a record holding one tone at the fitted frequency. They part when the fit
/// misses the tone (a three-parameter fit at a wrong `--fin`, a wrong `--fs`) or when the record holds
/// something the fit cannot follow (an interferer, a second tone): the fit figures are then not the
/// converter's. The warning names them, says where the spectrum's tone is and what to do.
fn fit_against_spectrum(
    fit: &SineFit,
    sp: &Spectrum,
    powers: &[f64],
    owner: &[Owner],
) -> Option<String> {
    let (fs, ss) = (fit.sinad_db?, sp.sinad_db?);
    let (uf, us) = (
        fit.uncertainty.sinad_db.unwrap_or(0.0),
        sp.uncertainty.sinad_db.unwrap_or(0.0),
    );
    // Four combined sigmas, and at least 1 dB: the two figures differ by design in what they leave
    // out (the DC bins, the noise under the fundamental's bins, a window's leakage), well under 1 dB
    // on a sound record.
    let allowed = (4.0 * uf.hypot(us)).max(1.0);
    if (fs - ss).abs() <= allowed {
        return None;
    }
    // The tone's frequency from the spectrum: the power-weighted centre of the fundamental's bins
    // (a window's main lobe is symmetric about the tone).
    let (mut sum_p, mut sum_kp) = (0.0, 0.0);
    for (k, (&p, &o)) in powers.iter().zip(owner).enumerate() {
        if o == spectrum::FUNDAMENTAL {
            sum_p += p;
            sum_kp += p * k as f64;
        }
    }
    let peak = if sum_p > 0.0 {
        let tone_hz = sum_kp / sum_p * sp.bin_width_hz;
        let si = crate::si::si;
        format!(
            "; the spectrum's tone is at {}, {:+.1} Hz from the fit's {}",
            si(tone_hz, "Hz", 9),
            tone_hz - fit.frequency_hz,
            si(fit.frequency_hz, "Hz", 9)
        )
    } else {
        String::new()
    };
    let fix = match fit.method {
        fit::FitMethod::ThreeParameter => {
            "check --fin and --fs, or use the four-parameter fit (--fit four)"
        }
        fit::FitMethod::FourParameter => {
            "look for a second tone, an interferer or a wrong --fs in the record"
        }
    };
    let masked = sp.harmonics.iter().any(|h| h.masked);
    let culprit = if masked && ss > fs {
        "the fit figures, or the spectral figures (SINAD, SNR, THD, SFDR, spectral ENOB) where a masked harmonic is left out of them (see the masking warning)"
    } else {
        "the fit figures (sine-fit SINAD, sine-fit ENOB, residual rms, amplitude, phase, offset)"
    };
    Some(format!(
        "sine-fit SINAD {fs:.2} dB and spectral SINAD {ss:.2} dB differ by {:.2} dB (allowed {allowed:.2} dB){peak}: {culprit} do not describe the converter; {fix}",
        fs - ss
    ))
}

/// What the end-code samples mean: how many of them were clipped (the figure the limits and the
/// tables use), and how many are the sine's peaks inside the end codes' own LSB.
fn clipping_note(c: &Clipping) -> Option<String> {
    if c.end_code_samples == 0 {
        return None;
    }
    let Some(est) = c.clipped_samples else {
        return Some(format!(
            "{} samples at the end codes, too many to fit the sine to the rest: the number clipped is not estimated (lower the input level)",
            c.end_code_samples
        ));
    };
    let u = c.uncertainty.clipped_samples.unwrap_or(0.0);
    Some(format!(
        "clipping: {est:.1} ± {u:.1} samples clipped of the {} at the end codes (estimated from the sine fitted to the other samples; the rest are the sine's peaks within the end codes' LSB){}",
        c.end_code_samples,
        if est >= 0.5 { "; lower the input level if the clipping is not intended" } else { "" }
    ))
}

/// A three-parameter fit takes the given frequency as exact (IEEE Std 1241, the three-parameter
/// fit): a `--fin` a small fraction of a bin off the tone leaves SINAD nearly intact but turns the
/// phase, the cycle count and the reported frequency wrong by far more than their uncertainties. A
/// four-parameter fit started at the given frequency finds the tone's own frequency with its
/// Cramér-Rao uncertainty (Rife & Boorstyn 1974); when the two differ by more than four of those
/// sigmas (and more than 1e-9 cycles of rounding) the warning names the figures that follow the
/// given frequency, by how much it misses the tone, and the fix.
fn given_fin_against_the_tone(r: &Record, y: &[f64], fit: &SineFit) -> Option<String> {
    /// Cycles below which two frequencies are the same number (the fits' own convergence).
    const SAME_CYCLES: f64 = 1e-9;
    let four = fit::fit_four(
        y,
        r.sample_rate_hz,
        r.bits,
        FourParamOptions {
            hint_hz: Some(fit.frequency_hz),
            ..FourParamOptions::default()
        },
    )
    .ok()?
    .fit;
    let sigma = four.cycles_std;
    let miss = fit.cycles - four.cycles;
    if !miss.is_finite() || !sigma.is_finite() || miss.abs() <= 4.0 * sigma + SAME_CYCLES {
        return None;
    }
    let si = crate::si::si;
    Some(format!(
        "--fin {} misses the tone a four-parameter fit finds at {} by {:+.4} Hz ({:.1} sigma, {:+.2e} bins): the fin, cycles, phase and fundamental frequency follow the given --fin, and so do the fit figures (amplitude, offset, residual rms, sine-fit SINAD, sine-fit ENOB); correct --fin or use the four-parameter fit (--fit four)",
        si(fit.frequency_hz, "Hz", 9),
        si(four.frequency_hz, "Hz", 9),
        fit.frequency_hz - four.frequency_hz,
        miss.abs() / sigma,
        miss
    ))
}

fn run_fit(r: &Record, y: &[f64], settings: &AnalysisSettings, keep: bool) -> Result<FitOutput> {
    match settings.fit {
        FitChoice::Three => {
            let f = r.fin_hint_hz.ok_or_else(|| {
                Error::setting(
                    "fin",
                    "an input frequency (--fin or the sidecar's fin_hz) for the three-parameter fit",
                    "none",
                )
            })?;
            let mut out = fit::fit_three(y, r.sample_rate_hz, f, r.bits)?;
            if !keep {
                out.residual = Vec::new();
            }
            Ok(out)
        }
        FitChoice::Four => fit::fit_four(
            y,
            r.sample_rate_hz,
            r.bits,
            FourParamOptions {
                hint_hz: r.fin_hint_hz,
                keep_residual: keep,
                ..FourParamOptions::default()
            },
        ),
    }
}

/// Count per code, lowest code first; empty above 24 bits where a full table would not fit the plots.
pub fn histogram_of(codes: &[i32], bits: u32) -> Vec<u64> {
    if bits > 24 {
        return Vec::new();
    }
    let lo = crate::record::min_code(bits);
    let mut h = vec![0u64; 1usize << bits];
    for &c in codes {
        let i = (c as i64 - lo) as usize;
        if let Some(slot) = h.get_mut(i) {
            *slot += 1;
        }
    }
    h
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::record::{MAX_SAMPLE_RATE_HZ, MIN_SAMPLE_RATE_HZ};

    // Both forms of the code counts give the same histogram (slow reference: a count per code by a
    // linear scan), and the form kept is the smaller one.
    #[test]
    fn code_counts_forms_agree() {
        let bits = 4;
        let codes: Vec<i32> = (0..200).map(|i| (i * 7 % 16) - 8).collect();
        let want: Vec<u64> = (-8..8)
            .map(|c| codes.iter().filter(|&&v| v == c).count() as u64)
            .collect();
        let short = CodeCounts::of(&codes[..100], bits);
        let long = CodeCounts::of(&codes, bits);
        assert!(matches!(short, CodeCounts::Codes(..)));
        assert!(matches!(long, CodeCounts::Counts(..)));
        let half: Vec<u64> = (-8..8)
            .map(|c| codes[..100].iter().filter(|&&v| v == c).count() as u64)
            .collect();
        let t = |codes| Traces {
            codes,
            ..Traces::default()
        };
        assert_eq!(t(short).histogram(), half);
        assert_eq!(t(long).histogram(), want);
        assert_eq!(CodeCounts::of(&codes, 25), CodeCounts::None);
        assert!(!t(CodeCounts::None).has_histogram());
    }

    fn record(bits: u32, sample_rate_hz: f64) -> Record {
        Record {
            source: "r.txt".into(),
            codes: (0..256)
                .map(|i| (100.0 * (std::f64::consts::TAU * 21.0 * i as f64 / 256.0).sin()) as i32)
                .collect(),
            sample_rate_hz,
            bits,
            full_scale_vpp: None,
            values: None,
            fin_hint_hz: None,
        }
    }

    // Found by tests/fuzz_props.rs: a record built in code skips the ingest checks; a resolution of 0
    // bits shifted by bits − 1 and panicked, and a rate of f64::MAX turned frequencies into infinity.
    #[test]
    fn record_with_unchecked_bits_or_rate_is_an_error_not_a_panic() {
        for bits in [0, 33, 64] {
            let e = analyze(&record(bits, 1e6), &AnalysisSettings::default()).unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting);
            assert_eq!(e.location, Location::Key("bits".into()));
            assert_eq!(e.path, "r.txt");
        }
        for fs in [
            0.0,
            -1.0,
            f64::NAN,
            f64::INFINITY,
            f64::MAX,
            1e300,
            5e-324,
            1e-7,
        ] {
            let e = analyze(&record(12, fs), &AnalysisSettings::default()).unwrap_err();
            assert_eq!(e.kind, ErrorKind::BadSetting, "{fs}");
            assert_eq!(e.location, Location::Key("sample_rate_hz".into()));
            assert!(e.found.len() < 30, "{}", e.found);
        }
        for fs in [MIN_SAMPLE_RATE_HZ, 1e6, MAX_SAMPLE_RATE_HZ] {
            assert!(
                analyze(&record(12, fs), &AnalysisSettings::default()).is_ok(),
                "{fs}"
            );
        }
    }

    fn noisy_tone(samples: usize, cycles: f64) -> Record {
        use rand::SeedableRng;
        use rand_distr::{Distribution, Normal};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        let noise = Normal::new(0.0, 1.5).unwrap();
        Record {
            source: "t.bin".into(),
            codes: (0..samples)
                .map(|i| {
                    let x = 2000.0
                        * (std::f64::consts::TAU * cycles * i as f64 / samples as f64).sin()
                        + 0.3
                            * (2.0 * std::f64::consts::TAU * cycles * i as f64 / samples as f64)
                                .sin();
                    (x + noise.sample(&mut rng)).round() as i32
                })
                .collect(),
            sample_rate_hz: 1e6,
            bits: 12,
            full_scale_vpp: None,
            values: None,
            fin_hint_hz: None,
        }
    }

    // The memory savings change no figure: the residual left out, the codes given up, and (past 2^20
    // samples) the half window given back before the transform give the same result record to the bit
    // (the method did not change; common practice, no source).
    #[test]
    fn memory_savings_give_the_same_bits() {
        for (samples, cycles) in [(4096, 401.0), (4096, 313.37), ((1 << 20) + 2048, 12345.678)] {
            let r = noisy_tone(samples, cycles);
            let full = analyze(&r, &AnalysisSettings::default()).unwrap();
            let lean_settings = AnalysisSettings {
                keep_residual: false,
                ..AnalysisSettings::default()
            };
            let lean = analyze(&r, &lean_settings).unwrap();
            let owned = analyze_record(r.clone(), &lean_settings).unwrap();
            assert_eq!(full.traces.residual.len(), samples);
            assert!(lean.traces.residual.is_empty() && owned.traces.residual.is_empty());
            for other in [&lean, &owned] {
                assert_eq!(other.analysis, full.analysis, "{samples} {cycles}");
                assert_eq!(other.traces.powers, full.traces.powers);
                assert_eq!(other.traces.owner, full.traces.owner);
                assert_eq!(other.traces.histogram(), full.traces.histogram());
            }
            let kept = analyze_record(r, &AnalysisSettings::default()).unwrap();
            assert_eq!(kept.traces, full.traces);
        }
    }

    // The estimate counts the buffers at the spectrum's peak: at 2^24 samples the codes (4 bytes a
    // sample), one f64 copy (8), the half-spectrum (8) and the transform's plan (12) stay within
    // 512 MiB once the residual and the codes are given up; 2^26 samples fit in 2 GiB; a record that
    // does not fit is refused with the memory it needs (design budget, common practice, no source).
    #[test]
    fn memory_estimate_and_refusal() {
        const MIB: u64 = 1 << 20;
        let at_24 = memory_needed(1 << 24, 1, false, true);
        assert_eq!(at_24, 32 * MIB + (1 << 24) * 28);
        assert!(at_24 <= 512 * MIB, "{}", at_24 / MIB);
        assert!(memory_needed(1 << 26, 1, false, true) <= 2048 * MIB);
        // Each record averaged adds its codes and its copy; a kept residual adds 8 bytes a sample.
        assert_eq!(
            memory_needed(1 << 20, 3, true, false) - memory_needed(1 << 20, 1, true, false),
            2 * 12 * (1 << 20)
        );
        assert_eq!(
            memory_needed(1 << 20, 1, true, true) - memory_needed(1 << 20, 1, false, true),
            8 * (1 << 20)
        );
        let need = memory_needed(1 << 26, 1, false, true);
        assert!(check_memory("big.bin", need, Some(need)).is_ok());
        assert!(check_memory("big.bin", need, None).is_ok());
        let e = check_memory("big.bin", need, Some(need - 1)).unwrap_err();
        assert_eq!(e.kind, ErrorKind::TooLarge);
        assert_eq!(e.path, "big.bin");
        assert!(
            e.found.contains(&format!("{} MiB", need.div_ceil(MIB))),
            "{e}"
        );
        // On Linux the available memory is read; it is never zero on a running machine.
        if cfg!(target_os = "linux") {
            assert!(memory_available().is_some_and(|a| a > 0));
        }
    }
}
