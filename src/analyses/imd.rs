//! Two-tone intermodulation: find the two tones of a record, fit them jointly, and measure the second-
//! and third-order products (and the tones' own harmonics) folded into the first Nyquist zone.
//!
//! # Method
//! 1. Location: the largest peak of a 7-term Blackman-Harris spectrum (sidelobes near −180 dB, so a
//!    sidelobe of one tone is never taken for the other), then the largest local peak at least the
//!    window's main-lobe half-width plus one bin (8 bins) away; each is refined by the three-bin Hann
//!    interpolator, exact for a lone tone.
//! 2. Fit: least squares of y = Σᵢ (aᵢ·cos θᵢ + bᵢ·sin θᵢ) + c, θᵢ = 2π·fᵢ·(n − centre), at the located
//!    frequencies (the three-parameter fit of IEEE Std 1241 extended to two tones, five parameters),
//!    then by default Gauss-Newton on the seven parameters (both frequencies free), as the
//!    four-parameter fit does for one tone (`fit/multi_tone.rs`).
//! 3. Spectrum: the coherence decision, window rule and tone bins of the single-tone analysis, and its
//!    claiming engine ([`crate::spectrum::claim`]). Bins are claimed in the order DC, tone 1, tone 2,
//!    then the derived lines: the IM2 products
//!    f2−f1, f1+f2, the IM3 products 2f1−f2, 2f2−f1, 2f1+f2, 2f2+f1, then the harmonics 2f1, 2f2, 3f1,
//!    3f2 (so that they are not counted as noise); everything else is noise. A product whose centre bin
//!    is already claimed (DC, a tone, an earlier product) is reported as masked and not measured.
//! 4. Levels: a product's power is the sum over its bins minus the noise expected there (mean noise
//!    per unit bin weight times their weight); when that correction leaves no more than the expected
//!    noise, the product is at the floor and the raw power of its bins is reported as an upper bound (as
//!    for harmonics).
//!
//! # References of the dBc figures
//! Tone 1 is the lower-frequency tone. `dbc_f1` and `dbc_f2` refer to tone 1 and tone 2 respectively;
//! `dbc` refers to the stronger of the two (the usual two-tone convention: with equal tones all three
//! agree; against the two tones' combined power the figures would be 3 dB lower). dBFS refers to a
//! full-scale sine, 2^(N−1) codes peak.

use crate::analysis::RecordResult;
use crate::dft::fft::{power_spectrum, real_fft};
use crate::dft::Window;
use crate::error::{Error, ErrorKind, Location, Result};
use crate::fit::multi_tone::{fit_free, fit_linear, FreeSines};
use crate::fit::{cycles_std, phase_at_zero};
use crate::freq::fold_bin;
use crate::record::{full_scale_amplitude_codes, full_scale_power, Record};
use crate::spectrum::claim::{claim, Place, SpurAt, MIN_NOISE_BINS};
use crate::spectrum::coherence::{self, Unwindowed};
use crate::spectrum::metrics::db;
use crate::spectrum::rule::{window_and_powers, WindowChoice};
use serde::Serialize;

// ───────────────────────── the two-tone analysis ─────────────────────────

/// Settings of the two-tone analysis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ImdSettings {
    /// The window choice ([`WindowChoice::Auto`]: the one-tone window rule, decided on the stronger tone).
    pub window: WindowChoice,
    /// Guard bins on each side of every tone's and product's bins; `None`: 0 coherent, 1 non-coherent.
    pub guard_bins: Option<usize>,
    /// Refine both frequencies by Gauss-Newton (otherwise the fit stays at the located frequencies).
    pub refine_frequencies: bool,
    /// Iteration cap of the refinement.
    pub max_iterations: u32,
    /// Fewest samples accepted (0: 64).
    pub min_samples: usize,
}

impl Default for ImdSettings {
    fn default() -> Self {
        ImdSettings {
            window: WindowChoice::Auto,
            guard_bins: None,
            refine_frequencies: true,
            max_iterations: 30,
            min_samples: 0,
        }
    }
}

/// What kind of product a slot holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ProductKind {
    /// Second-order intermodulation: f2 − f1, f1 + f2.
    Im2,
    /// Third-order intermodulation: 2f1 − f2, 2f2 − f1, 2f1 + f2, 2f2 + f1.
    Im3,
    /// A harmonic of one tone (2f1, 2f2, 3f1, 3f2).
    Harmonic,
}

/// The products measured, in claiming order: (name, kind, multiple of f1, multiple of f2).
const PRODUCTS: [(&str, ProductKind, i32, i32); 10] = [
    ("f2-f1", ProductKind::Im2, -1, 1),
    ("f1+f2", ProductKind::Im2, 1, 1),
    ("2f1-f2", ProductKind::Im3, 2, -1),
    ("2f2-f1", ProductKind::Im3, -1, 2),
    ("2f1+f2", ProductKind::Im3, 2, 1),
    ("2f2+f1", ProductKind::Im3, 1, 2),
    ("2f1", ProductKind::Harmonic, 2, 0),
    ("2f2", ProductKind::Harmonic, 0, 2),
    ("3f1", ProductKind::Harmonic, 3, 0),
    ("3f2", ProductKind::Harmonic, 0, 3),
];

/// Where one product lands (the unit tests check the product table through it).
#[cfg(test)]
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProductPlace {
    /// Its name, e.g. "2f1-f2".
    pub name: String,
    /// IM2, IM3 or harmonic.
    pub kind: ProductKind,
    /// Its order |m| + |n|.
    pub order: u32,
    /// m in m·f1 + n·f2.
    pub f1_multiple: i32,
    /// n in m·f1 + n·f2.
    pub f2_multiple: i32,
    /// |m·f1 + n·f2| folded into the first Nyquist zone 0..=fs/2, hertz.
    pub frequency_hz: f64,
}

/// The second- and third-order products of tones f1 < f2 (hertz) sampled at `sample_rate_hz`, folded
/// into the first Nyquist zone, in claiming order. (f1 and f2 are swapped when given the other way.)
#[cfg(test)]
pub fn product_places(f1_hz: f64, f2_hz: f64, sample_rate_hz: f64) -> Vec<ProductPlace> {
    let (f1, f2) = if f1_hz <= f2_hz {
        (f1_hz, f2_hz)
    } else {
        (f2_hz, f1_hz)
    };
    PRODUCTS
        .iter()
        .map(|&(name, kind, m, n)| ProductPlace {
            name: name.to_string(),
            kind,
            order: m.unsigned_abs() + n.unsigned_abs(),
            f1_multiple: m,
            f2_multiple: n,
            frequency_hz: crate::freq::fold_to_first_zone(
                m as f64 * f1 + n as f64 * f2,
                sample_rate_hz,
            ),
        })
        .collect()
}

/// One fitted tone: y = A·cos(2π·f·t + φ), t = n/fs.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ToneFit {
    /// Fitted frequency, hertz.
    pub frequency_hz: f64,
    /// Cycles in the record, f·N/fs.
    pub cycles: f64,
    /// Peak amplitude A, codes.
    pub amplitude_codes: f64,
    /// Amplitude relative to a full-scale sine, dBFS.
    pub amplitude_dbfs: Option<f64>,
    /// Phase φ at sample 0, in (−π, π].
    pub phase_rad: f64,
}

/// The joint fit of the two tones plus offset.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TwoToneFit {
    /// The two tones, lower frequency first.
    pub tones: Vec<ToneFit>,
    /// Offset C, codes.
    pub offset_codes: f64,
    /// Rms of the record minus the fitted tones and offset, codes (it holds the products, the noise and
    /// the quantisation error).
    pub residual_rms_codes: f64,
    /// Whether the frequencies were refined by Gauss-Newton (else: the located frequencies).
    pub refined: bool,
    /// Gauss-Newton iterations taken.
    pub iterations: u32,
    /// Whether the refinement met its stop rule (true when not refined).
    pub converged: bool,
}

/// One tone's spectral level.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ToneLevel {
    /// Frequency (from the fit), hertz.
    pub frequency_hz: f64,
    /// Power summed over its bins, noise subtracted, relative to full scale.
    pub dbfs: Option<f64>,
    /// Whether this tone is coherent (see the single-tone rule).
    pub coherent: bool,
    /// Distance of its cycle count from the nearest integer.
    pub offset_cycles: f64,
}

/// One product's figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProductFigure {
    /// Its name, e.g. "2f1-f2".
    pub name: String,
    /// IM2, IM3 or harmonic.
    pub kind: ProductKind,
    /// Its order.
    pub order: u32,
    /// Folded frequency, hertz.
    pub frequency_hz: f64,
    /// Level relative to the stronger tone; `None` when masked.
    pub dbc: Option<f64>,
    /// Level relative to tone 1 (the lower frequency).
    pub dbc_f1: Option<f64>,
    /// Level relative to tone 2 (the higher frequency).
    pub dbc_f2: Option<f64>,
    /// Level relative to full scale.
    pub dbfs: Option<f64>,
    /// True when the product lands on DC, a tone or an earlier product and is not measured.
    pub masked: bool,
    /// What masks it: "dc", "f1", "f2" or a product name.
    pub masked_by: Option<String>,
    /// True when no more than the noise expected under its bins: the level is then an upper bound.
    pub at_floor: bool,
}

/// The largest component other than DC and the two tones.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TwoToneSpur {
    /// Frequency, hertz (the product's place, or the peak bin of an unnamed spur).
    pub frequency_hz: f64,
    /// Level relative to the stronger tone.
    pub dbc: f64,
    /// Level relative to full scale.
    pub dbfs: f64,
    /// The product's name when the spur is one of the claimed products.
    pub product: Option<String>,
}

/// The spectral figures of a two-tone record.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ImdSpectrum {
    /// Window id.
    pub window: String,
    /// Why that window.
    pub window_reason: String,
    /// True when both tones are coherent.
    pub coherent: bool,
    /// Bin width fs/N, hertz.
    pub bin_width_hz: f64,
    /// Half-width of the bins of every tone and product (main lobe plus guard bins).
    pub tone_halfwidth_bins: usize,
    /// The two tones, lower frequency first.
    pub tones: Vec<ToneLevel>,
    /// The products in claiming order.
    pub products: Vec<ProductFigure>,
    /// The larger measured IM2 product (masked and at-floor ones left out), dBc of the stronger tone.
    pub im2_dbc: Option<f64>,
    /// The same, dBFS.
    pub im2_dbfs: Option<f64>,
    /// The largest measured IM3 product (masked and at-floor ones left out), dBc of the stronger tone.
    pub im3_dbc: Option<f64>,
    /// The same, dBFS.
    pub im3_dbfs: Option<f64>,
    /// Two-tone SFDR: the stronger tone over the largest spur other than DC and the tones, dB.
    pub sfdr_dbc: Option<f64>,
    /// Full scale over the largest spur, dB.
    pub sfdr_dbfs: Option<f64>,
    /// The largest spur.
    pub worst_spur: Option<TwoToneSpur>,
    /// Average noise floor per bin, dBFS.
    pub noise_floor_dbfs: Option<f64>,
    /// Bins the noise mean came from.
    pub noise_bins: usize,
}

/// What the two-tone analysis finds.
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct TwoTone {
    /// The joint fit.
    pub fit: Option<TwoToneFit>,
    /// The spectral figures.
    pub spectrum: Option<ImdSpectrum>,
}

/// The result record of one two-tone analysis (what `spurline imd --json` prints).
pub type ImdResult = RecordResult<TwoTone>;

/// Tone-to-median bin power ratio below which a peak is not a tone (40 dB, as the single-tone
/// location). Common practice, no source.
const TONE_RATIO: f64 = 1e4;

/// The window used to find the tones, chosen for its near −180 dB sidelobes.
const LOCATE_WINDOW: Window = Window::BlackmanHarris7;

/// Locates the two strongest separated tones, in fractional bins, lower frequency first.
fn locate_two(y: &[f64]) -> Result<[f64; 2]> {
    let n = y.len();
    let mean = y.iter().sum::<f64>() / n as f64;
    let spectrum_of = |w: Window| {
        let win = w.samples_shared(n);
        let mut buf: Vec<f64> = y
            .iter()
            .zip(win.iter())
            .map(|(v, w)| (v - mean) * w)
            .collect();
        real_fft(&mut buf)
    };
    let bh: Vec<f64> = spectrum_of(LOCATE_WINDOW)
        .iter()
        .map(|z| z.norm_sqr())
        .collect();
    let last = bh.len() - 1;
    let lobe = LOCATE_WINDOW.null_halfwidth_bins().ceil() as usize;
    let first = lobe + 1;
    if last < first + 2 * lobe + 2 {
        return Err(Error::new(
            ErrorKind::TooFewSamples,
            "",
            Location::Whole,
            "a record long enough to hold two separated tones",
            format!("{n} samples"),
        ));
    }
    let mut rest: Vec<f64> = bh[1..].to_vec();
    let mid = rest.len() / 2;
    let median = *rest.select_nth_unstable_by(mid, |a, b| a.total_cmp(b)).1;
    let floor = TONE_RATIO * median.max(f64::MIN_POSITIVE);
    let k1 = (first..=last)
        .max_by(|&a, &b| bh[a].total_cmp(&bh[b]))
        .unwrap_or(first);
    if bh[k1].is_nan() || bh[k1] <= floor {
        return Err(Error::new(
            ErrorKind::NoTone,
            "",
            Location::Whole,
            "two tones at least 40 dB above the median spectrum bin",
            "no tone at all",
        ));
    }
    let is_peak = |k: usize| bh[k] >= bh[k - 1] && (k == last || bh[k] >= bh[k + 1]);
    let k2 = (first..=last)
        .filter(|&k| k.abs_diff(k1) > lobe && is_peak(k))
        .max_by(|&a, &b| bh[a].total_cmp(&bh[b]));
    let k2 = match k2 {
        Some(k) if bh[k] > floor => k,
        other => {
            return Err(Error::new(
                ErrorKind::NoTone,
                "",
                Location::Whole,
                format!(
                    "a second tone at least 40 dB above the median spectrum bin and more than {lobe} bins from the first (bin {k1})"
                ),
                match other {
                    Some(k) => format!(
                        "the next peak (bin {k}) only {:.1} dB above the median",
                        10.0 * (bh[k] / median.max(f64::MIN_POSITIVE)).log10()
                    ),
                    None => "no second peak".to_string(),
                },
            ))
        }
    };
    // Fractional part from the Hann spectrum: δ = 2(|X₊| − |X₋|)/(|X₋| + 2|X₀| + |X₊|), exact for a lone
    // tone under the Hann window (closed form of its kernel); the other tone, 8+ bins away, biases it by
    // well under 0.01 bin, which the Gauss-Newton refinement removes.
    let hann: Vec<f64> = spectrum_of(Window::Hann).iter().map(|z| z.norm()).collect();
    let refine = |k: usize| {
        let lo = k.saturating_sub(1).max(1);
        let hi = (k + 1).min(last - 1);
        let p = (lo..=hi)
            .max_by(|&a, &b| hann[a].total_cmp(&hann[b]))
            .unwrap_or(k);
        if p == 0 || p >= last {
            return p as f64;
        }
        let (m, z, pl) = (hann[p - 1], hann[p], hann[p + 1]);
        let d = 2.0 * (pl - m) / (m + 2.0 * z + pl);
        p as f64 + d.clamp(-1.0, 1.0)
    };
    let (a, b) = (refine(k1), refine(k2));
    Ok(if a <= b { [a, b] } else { [b, a] })
}

/// Analyses a two-tone record: locate, fit, claim and measure (see the module docs).
pub fn analyze_two_tone(record: &Record, settings: &ImdSettings) -> Result<ImdResult> {
    analyze_two_tone_traced(record, settings).map(|(r, _)| r)
}

/// [`analyze_two_tone`], also giving the bin powers it measured (0..=N/2, codes², under its window)
/// for the two-tone plot.
pub fn analyze_two_tone_traced(
    record: &Record,
    settings: &ImdSettings,
) -> Result<(ImdResult, Vec<f64>)> {
    crate::spectrum::rule::check_guard_bins(settings.guard_bins)?;
    let n = record.len();
    let min = if settings.min_samples == 0 {
        64
    } else {
        settings.min_samples
    };
    let path = record.source.as_str();
    if n < min {
        return Err(Error::new(
            ErrorKind::TooFewSamples,
            path,
            Location::Whole,
            format!("at least {min} samples for the two-tone analysis"),
            format!("{n} samples"),
        ));
    }
    let fs = record.sample_rate_hz;
    let bits = record.bits;
    let y: Vec<f64> = record.samples_f64();
    let located = locate_two(&y).map_err(|e| e.with_path(path))?;
    let start = [located[0] / n as f64, located[1] / n as f64];
    let centre = (n as f64 - 1.0) / 2.0;
    let free = if settings.refine_frequencies {
        fit_free(&y, &start, settings.max_iterations).map_err(|e| e.with_path(path))?
    } else {
        let lin = fit_linear(&y, 0, 1, centre, &start).ok_or_else(|| {
            Error::new(
                ErrorKind::DegenerateFit,
                path,
                Location::Whole,
                "solvable normal equations of the two-tone fit",
                "a singular system",
            )
        })?;
        FreeSines {
            linear: lin,
            freqs: start.to_vec(),
            iterations: 0,
            converged: true,
        }
    };
    // Keep the lower frequency first (the refinement cannot swap them in practice, but be sure).
    let mut order = [0usize, 1];
    if free.freqs[1] < free.freqs[0] {
        order = [1, 0];
    }
    let residual_rms = (free.linear.rss / n as f64).sqrt();
    let fsa = full_scale_amplitude_codes(bits);
    let tone_fits: Vec<ToneFit> = order
        .iter()
        .map(|&i| {
            let (a, b) = free.linear.coeffs[i];
            let f = free.freqs[i];
            let amp = a.hypot(b);
            ToneFit {
                frequency_hz: f * fs,
                cycles: f * n as f64,
                amplitude_codes: amp,
                amplitude_dbfs: db(amp * amp / (fsa * fsa)),
                phase_rad: phase_at_zero(a, b, f, centre),
            }
        })
        .collect();
    for (t, name) in tone_fits.iter().zip(["f1", "f2"]) {
        if !(t.cycles > 0.0 && t.cycles < n as f64 / 2.0) || t.amplitude_codes <= 0.0 {
            return Err(Error::new(
                ErrorKind::DegenerateFit,
                path,
                Location::Whole,
                format!("a fitted tone {name} inside (0, fs/2) with some amplitude"),
                format!("{:.3} cycles, {:.3e} codes", t.cycles, t.amplitude_codes),
            ));
        }
    }
    let mut warnings = Vec::new();
    if !free.converged {
        warnings.push(format!(
            "two-tone fit stopped at its cap of {} iterations without meeting its stop rule",
            settings.max_iterations
        ));
    }

    // Coherence of each tone, then the window on the stronger tone's level.
    let rect = power_spectrum(&y, &[]);
    let coherent: Vec<bool> = tone_fits
        .iter()
        .map(|t| {
            let sigma = cycles_std(t.amplitude_codes, residual_rms, n);
            coherence::decide(t.cycles, sigma, Unwindowed::Spectrum(&rect)).coherent
        })
        .collect();
    let all_coherent = coherent.iter().all(|&c| c);
    let strongest_dbfs = tone_fits
        .iter()
        .filter_map(|t| t.amplitude_dbfs)
        .fold(f64::NEG_INFINITY, f64::max);
    let (window, window_reason, half, powers) = window_and_powers(
        &y,
        rect,
        settings.window,
        all_coherent,
        bits,
        strongest_dbfs,
        settings.guard_bins,
    );

    let c1 = tone_fits[0].cycles;
    let c2 = tone_fits[1].cycles;
    let tones = [Place::new("f1", c1), Place::new("f2", c2)];
    let lines: Vec<Place> = PRODUCTS
        .iter()
        .map(|&(name, _, m, k)| Place::new(name, fold_bin(m as f64 * c1 + k as f64 * c2, n)))
        .collect();
    let claims =
        claim(n, half, &tones, &lines).map_err(|e| e.to_error(&window.name()).with_path(path))?;
    let meas = claims.measure(&powers);
    let pfs = full_scale_power(bits);
    let (p1, p2) = (meas.tones[0].power(), meas.tones[1].power());
    let pref = p1.max(p2);
    let noise_total = meas.noise_power;
    for (p, name) in [(p1, "f1"), (p2, "f2")] {
        if p.is_nan() || p <= 10.0 * noise_total {
            return Err(Error::new(
                ErrorKind::NoTone,
                path,
                Location::Whole,
                format!("tone {name} at least 10 dB above the noise"),
                format!(
                    "{name} {} dB above the noise",
                    db(p / noise_total).map_or("—".to_string(), |v| format!("{v:.1}"))
                ),
            ));
        }
    }
    if meas.noise_bins < MIN_NOISE_BINS {
        warnings.push(format!(
            "only {} noise bins are left after claiming: the noise floor is poorly determined (use a longer record)",
            meas.noise_bins
        ));
    }
    let bin_hz = fs / n as f64;
    let mut products = Vec::with_capacity(PRODUCTS.len());
    let mut masked = Vec::new();
    for (i, (&(name, kind, m, k), level)) in PRODUCTS.iter().zip(&meas.lines).enumerate() {
        let frequency_hz = claims.lines[i].bin * bin_hz;
        let order = m.unsigned_abs() + k.unsigned_abs();
        let masked_by = claims.masked_by(i).map(str::to_string);
        if let Some(by) = &masked_by {
            masked.push(format!("{name} on {by}"));
        }
        let level = level.map(|l| l.level());
        products.push(ProductFigure {
            name: name.to_string(),
            kind,
            order,
            frequency_hz,
            dbc: level.and_then(|l| db(l / pref)),
            dbc_f1: level.and_then(|l| db(l / p1)),
            dbc_f2: level.and_then(|l| db(l / p2)),
            dbfs: level.and_then(|l| db(l / pfs)),
            masked: masked_by.is_some(),
            masked_by,
            at_floor: meas.lines[i].is_some_and(|l| l.at_floor),
        });
    }
    if !masked.is_empty() {
        warnings.push(format!(
            "products masked (not measured): {}",
            masked.join(", ")
        ));
    }
    let largest = |kind: ProductKind| -> Option<f64> {
        PRODUCTS
            .iter()
            .zip(&meas.lines)
            .filter(|((_, k, _, _), _)| *k == kind)
            .filter_map(|(_, l)| l.filter(|l| !l.at_floor).map(|l| l.level()))
            .reduce(f64::max)
    };
    let im2 = largest(ProductKind::Im2);
    let im3 = largest(ProductKind::Im3);
    for (kind, label, v) in [
        (ProductKind::Im2, "IM2", im2),
        (ProductKind::Im3, "IM3", im3),
    ] {
        let any_measured = products.iter().any(|p| !p.masked && p.kind == kind);
        if v.is_none() && any_measured {
            warnings.push(format!(
                "every {label} product is at the noise floor: {label} is not reported"
            ));
        }
    }
    let level_gap = db(p1 / p2).unwrap_or(0.0);
    if level_gap.abs() > 1.0 {
        warnings.push(format!(
            "the tones differ by {level_gap:.2} dB: dbc refers to the stronger tone, dbc_f1 and dbc_f2 to each"
        ));
    }
    let worst_spur = meas.largest_spur().and_then(|(p, at)| {
        let (frequency_hz, product) = match at {
            SpurAt::Line(i) => (products[i].frequency_hz, Some(products[i].name.clone())),
            SpurAt::Bin(k) => (k as f64 * bin_hz, None),
        };
        Some(TwoToneSpur {
            frequency_hz,
            dbc: db(p / pref)?,
            dbfs: db(p / pfs)?,
            product,
        })
    });
    let tone_levels = tone_fits
        .iter()
        .zip([p1, p2])
        .zip(&coherent)
        .map(|((t, p), &c)| ToneLevel {
            frequency_hz: t.frequency_hz,
            dbfs: db(p / pfs),
            coherent: c,
            offset_cycles: t.cycles - t.cycles.round(),
        })
        .collect();
    let found = TwoTone {
        fit: Some(TwoToneFit {
            tones: tone_fits,
            offset_codes: free.linear.offset,
            residual_rms_codes: residual_rms,
            refined: settings.refine_frequencies,
            iterations: free.iterations,
            converged: free.converged,
        }),
        spectrum: Some(ImdSpectrum {
            window: window.name(),
            window_reason,
            coherent: all_coherent,
            bin_width_hz: bin_hz,
            tone_halfwidth_bins: half,
            tones: tone_levels,
            products,
            im2_dbc: im2.and_then(|p| db(p / pref)),
            im2_dbfs: im2.and_then(|p| db(p / pfs)),
            im3_dbc: im3.and_then(|p| db(p / pref)),
            im3_dbfs: im3.and_then(|p| db(p / pfs)),
            sfdr_dbc: worst_spur.as_ref().map(|s| -s.dbc),
            sfdr_dbfs: worst_spur.as_ref().map(|s| -s.dbfs),
            worst_spur,
            noise_floor_dbfs: db(meas.noise_per_bin / pfs),
            noise_bins: meas.noise_bins,
        }),
    };
    Ok((ImdResult::of(record, found, warnings), powers))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::synth::multi::{two_tone, ToneSpec, TwoToneSettings};

    const FS: f64 = 100e6;

    fn record(
        bits: u32,
        samples: usize,
        cycles: [f64; 2],
        dbfs: [f64; 2],
        a2: f64,
        a3: f64,
    ) -> Record {
        let tone = |i: usize, phase: f64| ToneSpec {
            frequency_hz: cycles[i] * FS / samples as f64,
            amplitude_dbfs: dbfs[i],
            phase_rad: phase,
        };
        two_tone(&TwoToneSettings {
            bits,
            sample_rate_hz: FS,
            samples,
            tones: [tone(0, 0.4), tone(1, -1.3)],
            offset_codes: 0.0,
            a2,
            a3,
            noise_rms_codes: 0.0,
            seed: 5,
        })
        .unwrap()
    }

    fn product<'a>(sp: &'a ImdSpectrum, name: &str) -> &'a ProductFigure {
        sp.products.iter().find(|p| p.name == name).unwrap()
    }

    // Worked example from the standard product formulas m·f1 + n·f2 (handbook): f1 = 5 MHz and
    // f2 = 6 MHz put IM2 at f2 − f1 = 1 MHz and f1 + f2 = 11 MHz, IM3 at 2f1 − f2 = 4 MHz,
    // 2f2 − f1 = 7 MHz, 2f1 + f2 = 16 MHz and 2f2 + f1 = 17 MHz. Sampled at 20 MHz, the products above
    // fs/2 = 10 MHz fold to fs − f (common practice, no source): 11 → 9, 16 → 4, 17 → 3 MHz, and 2f1 + f2
    // then lands on 2f1 − f2.
    #[test]
    fn worked_example_product_frequencies() {
        let mhz = |v: &[ProductPlace], name: &str| {
            v.iter().find(|p| p.name == name).unwrap().frequency_hz / 1e6
        };
        let v = product_places(5e6, 6e6, 100e6);
        for (name, want) in [
            ("f2-f1", 1.0),
            ("f1+f2", 11.0),
            ("2f1-f2", 4.0),
            ("2f2-f1", 7.0),
            ("2f1+f2", 16.0),
            ("2f2+f1", 17.0),
        ] {
            assert!((mhz(&v, name) - want).abs() < 1e-9, "{name}");
        }
        let kinds: Vec<(ProductKind, u32)> = v.iter().take(6).map(|p| (p.kind, p.order)).collect();
        assert_eq!(kinds[..2], [(ProductKind::Im2, 2), (ProductKind::Im2, 2)]);
        assert!(kinds[2..].iter().all(|&k| k == (ProductKind::Im3, 3)));
        // The order of the tones does not matter.
        assert_eq!(product_places(6e6, 5e6, 100e6), v);
        let folded = product_places(5e6, 6e6, 20e6);
        for (name, want) in [("f1+f2", 9.0), ("2f1+f2", 4.0), ("2f2+f1", 3.0)] {
            assert!((mhz(&folded, name) - want).abs() < 1e-9, "{name}");
        }
    }

    // Memoryless polynomial y = x + a2·x² + a3·x³ (full-scale normalised) on x = A1·cos θ1 + A2·cos θ2
    // (trigonometric product identities, handbook):
    //   x²  → A1·A2 at f2 − f1 and f1 + f2, A_i²/2 at 2f_i, A1² + A2² at DC / 2;
    //   x³  → (3/4)·A1²·A2 at 2f1 ± f2, (3/4)·A1·A2² at 2f2 ± f1, A_i³/4 at 3f_i,
    //         and (3/4)·A_i³ + (3/2)·A_i·A_j² added to tone i.
    // With equal tones A this is the familiar IM2 = a2·A², IM3 = (3/4)·a3·A³.
    struct Expected {
        tone: [f64; 2],
        levels: Vec<(&'static str, f64)>,
    }

    fn expected(a: [f64; 2], a2: f64, a3: f64, fsa: f64) -> Expected {
        let [a1, b] = a;
        let tone = [
            a1 + a3 * (0.75 * a1.powi(3) + 1.5 * a1 * b * b),
            b + a3 * (0.75 * b.powi(3) + 1.5 * a1 * a1 * b),
        ];
        let levels = vec![
            ("f2-f1", a2 * a1 * b),
            ("f1+f2", a2 * a1 * b),
            ("2f1-f2", 0.75 * a3 * a1 * a1 * b),
            ("2f2-f1", 0.75 * a3 * a1 * b * b),
            ("2f1+f2", 0.75 * a3 * a1 * a1 * b),
            ("2f2+f1", 0.75 * a3 * a1 * b * b),
            ("2f1", a2 * a1 * a1 / 2.0),
            ("2f2", a2 * b * b / 2.0),
            ("3f1", a3 * a1.powi(3) / 4.0),
            ("3f2", a3 * b.powi(3) / 4.0),
        ];
        Expected {
            tone: tone.map(|t| t.abs() * fsa),
            levels: levels
                .into_iter()
                .map(|(n, v)| (n, v.abs() * fsa))
                .collect(),
        }
    }

    fn dbfs_of(amp: f64, bits: u32) -> f64 {
        20.0 * (amp / full_scale_amplitude_codes(bits)).log10()
    }

    /// dB agreement of a recovered product with the polynomial's closed form. Noise of power Pn in the
    /// bins that carry a product of power P moves its measured power by about 2·√(Pn/P) relative (one
    /// σ). At 18 bits and 16384 samples the quantisation noise is q²/12·2/N = 1.0e-5 codes² per bin
    /// (2.6e-5 within the 7-term Blackman-Harris noise bandwidth of 2.6 bins), and the smallest product
    /// below (3f2, 38 codes²) then moves by 0.0045 dB (σ); the others by less. 0.02 dB is over 4σ.
    const IMD_DB: f64 = 0.02;

    // 18-bit coherent record (odd cycle counts coprime with N): rectangular window, one bin per product.
    #[test]
    fn polynomial_products_recovered_on_a_coherent_record() {
        let bits = 18;
        let (a2, a3) = (1e-3, -3e-3);
        let r = record(bits, 16384, [1001.0, 1203.0], [-7.0, -7.0], a2, a3);
        let out = analyze_two_tone(&r, &ImdSettings::default()).unwrap();
        let sp = out.spectrum.as_ref().unwrap();
        assert_eq!(sp.window, "rectangular");
        assert!(sp.coherent);
        let a = 10f64.powf(-7.0 / 20.0);
        let fsa = full_scale_amplitude_codes(bits);
        let e = expected([a, a], a2, a3, fsa);
        for (t, want) in sp.tones.iter().zip(e.tone) {
            assert!((t.dbfs.unwrap() - dbfs_of(want, bits)).abs() < IMD_DB);
        }
        for (name, amp) in &e.levels {
            let p = product(sp, name);
            assert!(!p.masked && !p.at_floor, "{name}");
            let want_dbfs = dbfs_of(*amp, bits);
            let want_dbc = 20.0 * (amp / e.tone[0]).log10();
            assert!(
                (p.dbfs.unwrap() - want_dbfs).abs() < IMD_DB,
                "{name}: {:?} vs {want_dbfs}",
                p.dbfs
            );
            assert!((p.dbc.unwrap() - want_dbc).abs() < IMD_DB, "{name}");
        }
        // Equal tones: a2·A² and (3/4)·a3·A³ relative to A (the handbook form).
        let im2 = 20.0 * (a2 * a * a / (e.tone[0] / fsa)).log10();
        let im3 = 20.0 * (0.75 * a3.abs() * a.powi(3) / (e.tone[0] / fsa)).log10();
        assert!((sp.im2_dbc.unwrap() - im2).abs() < IMD_DB);
        assert!((sp.im3_dbc.unwrap() - im3).abs() < IMD_DB);
        // The largest spur is the largest product: IM3 here, (3/4)·|a3|·A² = 4.49e-4 against
        // a2·A = 4.47e-4 relative to the tone (the harmonics are half and a quarter of those).
        let (worst_name, worst_amp) = e
            .levels
            .iter()
            .copied()
            .max_by(|a, b| a.1.total_cmp(&b.1))
            .unwrap();
        // The four IM3 products are equally large, so any of them may be the one picked.
        let w = sp.worst_spur.as_ref().unwrap();
        assert_eq!(product(sp, worst_name).kind, ProductKind::Im3);
        let picked = product(sp, w.product.as_deref().unwrap());
        assert_eq!(picked.kind, ProductKind::Im3, "{w:?}");
        let sfdr = -20.0 * (worst_amp / e.tone[0]).log10();
        assert!((sp.sfdr_dbc.unwrap() - sfdr).abs() < IMD_DB);
        // The fit finds the generating frequencies and amplitudes.
        let fit = out.fit.as_ref().unwrap();
        assert!((fit.tones[0].cycles - 1001.0).abs() < 1e-6);
        assert!((fit.tones[1].cycles - 1203.0).abs() < 1e-6);
        assert!((fit.tones[0].amplitude_codes / e.tone[0] - 1.0).abs() < 1e-5);
        assert!(fit.converged && fit.refined);
    }

    // Non-coherent, unequal tones, 18 bits: the auto rule picks the 7-term Blackman-Harris (leakage
    // below −180 dBc) and products sum over 17 bins each.
    #[test]
    fn polynomial_products_recovered_on_a_windowed_record() {
        let bits = 18;
        let (a2, a3) = (2e-3, 4e-3);
        let r = record(bits, 16384, [1001.37, 1203.81], [-6.0, -10.0], a2, a3);
        let out = analyze_two_tone(&r, &ImdSettings::default()).unwrap();
        let sp = out.spectrum.as_ref().unwrap();
        assert_eq!(sp.window, "blackman-harris-7");
        assert!(!sp.coherent);
        let amps = [10f64.powf(-6.0 / 20.0), 10f64.powf(-10.0 / 20.0)];
        let fsa = full_scale_amplitude_codes(bits);
        let e = expected(amps, a2, a3, fsa);
        for (name, amp) in e.levels.iter().take(6) {
            let p = product(sp, name);
            let f1 = 20.0 * (amp / e.tone[0]).log10();
            let f2 = 20.0 * (amp / e.tone[1]).log10();
            assert!(
                (p.dbfs.unwrap() - dbfs_of(*amp, bits)).abs() < IMD_DB,
                "{name}"
            );
            assert!((p.dbc_f1.unwrap() - f1).abs() < IMD_DB, "{name}");
            assert!((p.dbc_f2.unwrap() - f2).abs() < IMD_DB, "{name}");
            // Tone 1 is the stronger: dbc refers to it.
            assert_eq!(p.dbc, p.dbc_f1);
        }
        let fit = out.fit.as_ref().unwrap();
        // Cramér-Rao bound of a tone's cycle count (fit::cycles_std, Rife & Boorstyn 1974) with the
        // residual rms as the noise, which here holds the products too: 6σ.
        for (t, c) in fit.tones.iter().zip([1001.37, 1203.81]) {
            let s = cycles_std(t.amplitude_codes, fit.residual_rms_codes, 16384);
            assert!(
                (t.cycles - c).abs() < 6.0 * s,
                "{} vs {c} (σ {s})",
                t.cycles
            );
        }
        assert!(out.warnings.iter().any(|w| w.contains("differ by")));
    }

    // Without refinement the frequencies are the Hann interpolator's, within 0.01 bin of the truth
    // when the other tone is 200 bins away (its Hann leakage there is below −100 dB).
    #[test]
    fn located_frequencies_are_close_without_refinement() {
        let r = record(16, 8192, [500.3, 700.8], [-7.0, -7.0], 0.0, 0.0);
        let s = ImdSettings {
            refine_frequencies: false,
            ..ImdSettings::default()
        };
        let out = analyze_two_tone(&r, &s).unwrap();
        let fit = out.found.fit.unwrap();
        assert!(!fit.refined && fit.iterations == 0);
        assert!((fit.tones[0].cycles - 500.3).abs() < 0.01);
        assert!((fit.tones[1].cycles - 700.8).abs() < 0.01);
    }

    // Cycle counts chosen so that N = 3·c1 + c2: 2f1 + f2 folds onto f1, 2f2 + f1 onto 2f1 − f2, 3f1
    // onto f2 and 2f1 onto f1 + f2 (folding, common practice, no source). These are flagged masked and
    // measure nothing.
    #[test]
    fn products_on_tones_or_other_products_are_masked() {
        let r = record(16, 4096, [1001.0, 1093.0], [-7.0, -7.0], 1e-3, 1e-3);
        let out = analyze_two_tone(&r, &ImdSettings::default()).unwrap();
        let sp = out.found.spectrum.unwrap();
        for (name, by) in [
            ("2f1+f2", "f1"),
            ("2f2+f1", "2f1-f2"),
            ("3f1", "f2"),
            ("2f1", "f1+f2"),
        ] {
            let p = product(&sp, name);
            assert!(p.masked, "{name}");
            assert_eq!(p.masked_by.as_deref(), Some(by), "{name}");
            assert!(p.dbc.is_none() && p.dbfs.is_none());
        }
        assert!(!product(&sp, "2f1-f2").masked);
        assert!(out.warnings.iter().any(|w| w.contains("masked")));
    }

    #[test]
    fn records_without_two_tones_are_errors() {
        // One tone only.
        let r = record(14, 4096, [301.0, 701.0], [-1.0, -400.0], 0.0, 0.0);
        let e = analyze_two_tone(&r, &ImdSettings::default()).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NoTone, "{e}");
        assert!(e.to_string().contains("second tone"), "{e}");
        assert_eq!(e.path, "two-tone:5");
        // A constant record.
        let mut c = r.clone();
        c.codes.iter_mut().for_each(|v| *v = 3);
        assert_eq!(
            analyze_two_tone(&c, &ImdSettings::default())
                .unwrap_err()
                .kind,
            ErrorKind::NoTone
        );
        // Too short.
        c.codes.truncate(40);
        assert_eq!(
            analyze_two_tone(&c, &ImdSettings::default())
                .unwrap_err()
                .kind,
            ErrorKind::TooFewSamples
        );
    }

    // serde_json writes non-finite floats as null and cannot read them back (DESIGN.md): every figure
    // of a result, masked and at-floor products included, must be finite or absent.
    #[test]
    fn result_serialises_without_non_finite_numbers() {
        let r = record(16, 4096, [1001.0, 1093.0], [-7.0, -7.0], 1e-3, 0.0);
        let out = analyze_two_tone(&r, &ImdSettings::default()).unwrap();
        let text = serde_json::to_string(&out).unwrap();
        let back: serde_json::Value = serde_json::from_str(&text).unwrap();
        assert!(back["spectrum"]["products"].as_array().unwrap().len() == 10);
        assert!(!text.contains("NaN") && !text.contains("inf"));
    }
}
