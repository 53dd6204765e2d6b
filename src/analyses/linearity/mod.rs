//! Code-density (histogram) linearity test with a sine-wave input (IEEE Std 1241): code histogram,
//! transition levels through the sine's distribution, DNL and INL (terminal-based and best-fit),
//! missing codes, the overdrive check and the sample-count advisor.
//!
//! Codes are the signed codes of the rest of the crate. Internally the codes are indexed k = 0 ..
//! M − 1 (M = 2^N) from the lowest, which is the offset-binary value, as the standard indexes them.
//! Transition level T\[k\] (k = 1 .. M − 1) is where the output changes from code k − 1 to code k; it is
//! reported against the signed code k − 2^(N−1), whose lower edge it is. All levels are in LSB on the
//! ideal input scale, on which code c spans c − 0.5 .. c + 0.5.

mod phases;
pub mod plot;

pub use phases::{distinct_phases, phase_coverage, required_phases, PhaseCoverage};

use serde::Serialize;

use crate::error::{Error, ErrorKind, Location, Result};
use crate::record::{max_code, min_code, Record};

/// Highest resolution the histogram accepts (2^20 code counters).
pub const MAX_HISTOGRAM_BITS: u32 = 20;

/// An end code must hold at least this many times the hits its 1-LSB neighbour would hold under the
/// sine's arcsine density. For a sine much larger than 1 LSB the ratio is √d / (√(d+1) − √d) for a
/// peak d LSB beyond the end transition level, so 4 means d ≥ 16/9 ≈ 1.8 LSB; a sine at exactly full
/// scale (d = 0.5) gives 1.4 and fails.
pub const OVERDRIVE_RATIO: f64 = 4.0;

/// Counts of each code over one or more records.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CodeHistogram {
    bits: u32,
    counts: Vec<u64>,
    sources: Vec<String>,
}

fn check_bits(bits: u32) -> Result<()> {
    if (2..=MAX_HISTOGRAM_BITS).contains(&bits) {
        Ok(())
    } else {
        Err(Error::setting(
            "bits",
            format!("a resolution in 2..={MAX_HISTOGRAM_BITS} bits for the histogram test"),
            bits.to_string(),
        ))
    }
}

impl CodeHistogram {
    /// An empty histogram for N-bit codes.
    ///
    /// Errors (`BadSetting`, key `bits`) for N outside 2..=[`MAX_HISTOGRAM_BITS`].
    pub fn new(bits: u32) -> Result<Self> {
        check_bits(bits)?;
        Ok(CodeHistogram {
            bits,
            counts: vec![0; 1 << bits],
            sources: Vec::new(),
        })
    }

    /// A histogram from counts, lowest code first (2^N of them).
    ///
    /// Errors (`BadSetting`): bits as [`CodeHistogram::new`], or a count list of another length.
    pub fn from_counts(bits: u32, counts: Vec<u64>) -> Result<Self> {
        check_bits(bits)?;
        if counts.len() != 1 << bits {
            return Err(Error::setting(
                "counts",
                format!("{} counts for {bits} bits", 1u64 << bits),
                counts.len().to_string(),
            ));
        }
        Ok(CodeHistogram {
            bits,
            counts,
            sources: vec!["counts".to_string()],
        })
    }

    /// Adds the codes of one record, named `source` in errors and in the list of sources.
    ///
    /// Errors (`CodeOutOfRange`, with the sample index) for a code outside the N-bit range; nothing is
    /// added then.
    pub fn add_codes(&mut self, codes: &[i32], source: &str) -> Result<()> {
        let lo = min_code(self.bits);
        let hi = max_code(self.bits);
        if let Some((i, &c)) = codes
            .iter()
            .enumerate()
            .find(|&(_, &c)| (c as i64) < lo || (c as i64) > hi)
        {
            return Err(Error::new(
                ErrorKind::CodeOutOfRange,
                source,
                Location::Whole,
                format!("codes in {lo}..={hi} for {} bits", self.bits),
                format!("code {c} at sample {i}"),
            ));
        }
        for &c in codes {
            self.counts[(c as i64 - lo) as usize] += 1;
        }
        self.sources.push(source.to_string());
        Ok(())
    }

    /// Adds a record's codes.
    ///
    /// Errors (`BadSetting`, key `bits`, naming the record) when its resolution differs from the
    /// histogram's, (`BadSetting`, key `unit`) for a record of values, and those of
    /// [`CodeHistogram::add_codes`].
    pub fn add_record(&mut self, record: &Record) -> Result<()> {
        if !record.has_codes() {
            return Err(Error::setting(
                "unit",
                "a record of integer codes (the code-density test counts codes)",
                "a record of values with no code grid",
            )
            .with_path(&record.source));
        }
        if record.bits != self.bits {
            return Err(Error::setting(
                "bits",
                format!("{} bits, as the records before it", self.bits),
                record.bits.to_string(),
            )
            .with_path(&record.source));
        }
        self.add_codes(&record.codes, &record.source)
    }

    /// Resolution N in bits.
    pub fn bits(&self) -> u32 {
        self.bits
    }

    /// The counts, lowest code first.
    pub fn counts(&self) -> &[u64] {
        &self.counts
    }

    /// Total number of samples.
    pub fn samples(&self) -> u64 {
        self.counts.iter().sum()
    }

    /// What was added, in order.
    pub fn sources(&self) -> &[String] {
        &self.sources
    }
}

/// Settings of the histogram test.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LinearitySettings {
    /// Two-sided confidence level of the sample-count advice, in (0, 1).
    pub confidence: f64,
    /// DNL uncertainty β the advice is for, in LSB.
    pub dnl_uncertainty_lsb: f64,
}

impl LinearitySettings {
    /// Checks the settings before any record is read.
    ///
    /// Errors (`BadSetting`): a confidence outside (0, 1) (key `confidence`) or a DNL uncertainty
    /// outside (0, 10] LSB (key `dnl_uncertainty_lsb`).
    pub fn validate(&self) -> Result<()> {
        check_advice_settings(self).map(|_| ())
    }
}

impl Default for LinearitySettings {
    /// 95 % confidence, β = 0.1 LSB.
    fn default() -> Self {
        LinearitySettings {
            confidence: 0.95,
            dnl_uncertainty_lsb: 0.1,
        }
    }
}

/// The input sine as the end-code counts give it (IEEE Std 1241: the first and last transition
/// levels are put at their ideal places, which fixes the sine's amplitude and offset in LSB).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SineEstimate {
    /// Peak amplitude A, in LSB.
    pub amplitude_lsb: f64,
    /// Offset C, in LSB (signed code scale).
    pub offset_lsb: f64,
    /// How far the sine's minimum C − A lies below the first transition level, in LSB.
    pub overdrive_low_lsb: f64,
    /// How far the sine's maximum C + A lies above the last transition level, in LSB.
    pub overdrive_high_lsb: f64,
}

/// The counts of one end of the range, for the overdrive check.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct EndCode {
    /// The end code (signed).
    pub code: i64,
    /// Its hits.
    pub hits: u64,
    /// The hits of the inner code next to it.
    pub neighbour_hits: u64,
    /// The hits an ideal 1-LSB code next to it would get under the estimated sine's arcsine density.
    pub neighbour_expected_hits: f64,
    /// The fewest hits the end code needs: [`OVERDRIVE_RATIO`] × `neighbour_expected_hits`.
    pub required_hits: f64,
    /// True when `hits` ≥ `required_hits`.
    pub overdriven: bool,
}

/// The sample-count advice: S ≥ π·2^(N−1)·Z²/β² samples for a DNL uncertainty β at a confidence
/// whose two-sided normal quantile is Z (IEEE Std 1241, sine-wave histogram, from memory).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SampleAdvice {
    /// The two-sided confidence level.
    pub confidence: f64,
    /// Z, the normal quantile at (1 + confidence)/2.
    pub z: f64,
    /// β, the DNL uncertainty asked for, in LSB.
    pub dnl_uncertainty_lsb: f64,
    /// The samples needed.
    pub required_samples: u64,
    /// The samples in the histogram.
    pub samples: u64,
    /// True when `samples` ≥ `required_samples`.
    pub sufficient: bool,
    /// The DNL uncertainty the given samples reach at the same confidence: Z·√(π·2^(N−1)/S), in LSB.
    pub achieved_dnl_uncertainty_lsb: f64,
}

/// A code and the value found there.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct AtCode {
    /// The code (signed).
    pub code: i64,
    /// The value, in LSB.
    pub value_lsb: f64,
}

/// DNL and INL extremes on one basis (terminal or best-fit).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Extremes {
    /// The ideal code width Q of this basis on the ideal input scale, in LSB.
    pub code_width_lsb: f64,
    /// Largest DNL (lowest code on ties).
    pub dnl_max: AtCode,
    /// Smallest DNL.
    pub dnl_min: AtCode,
    /// Largest |DNL|, with its sign.
    pub dnl_worst: AtCode,
    /// Largest INL.
    pub inl_max: AtCode,
    /// Smallest INL.
    pub inl_min: AtCode,
    /// Largest |INL|, with its sign.
    pub inl_worst: AtCode,
}

/// One code's results.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CodeResult {
    /// The code (signed).
    pub code: i64,
    /// Its hits.
    pub hits: u64,
    /// The transition level at its lower edge, in LSB; none for the lowest code.
    pub transition_lsb: Option<f64>,
    /// Terminal-based DNL, in LSB; none for the two end codes.
    pub dnl_terminal_lsb: Option<f64>,
    /// Best-fit DNL, in LSB; none for the end codes.
    pub dnl_best_fit_lsb: Option<f64>,
    /// Terminal-based INL at the lower transition level, in LSB; none for the lowest code.
    pub inl_terminal_lsb: Option<f64>,
    /// Best-fit INL at the lower transition level, in LSB; none for the lowest code.
    pub inl_best_fit_lsb: Option<f64>,
}

/// The result of the histogram test.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Linearity {
    /// The records that went into the histogram, in order.
    pub sources: Vec<String>,
    /// Resolution N in bits.
    pub bits: u32,
    /// Samples in the histogram.
    pub samples: u64,
    /// The input sine as the end-code counts give it.
    pub sine: SineEstimate,
    /// The lowest code's overdrive check.
    pub low_end: EndCode,
    /// The highest code's overdrive check.
    pub high_end: EndCode,
    /// The sample-count advice.
    pub advice: SampleAdvice,
    /// The sampling phases the records hold against those the DNL uncertainty needs; `None` when
    /// the histogram was given without its records (see [`phase_coverage`]).
    pub phases: Option<PhaseCoverage>,
    /// Inner codes that got no hits.
    pub missing_codes: Vec<i64>,
    /// Terminal-based (end-point) figures: the line through the first and last transition levels.
    pub terminal: Extremes,
    /// Best-fit figures: the least-squares line through all transition levels against k.
    pub best_fit: Extremes,
    /// Per-code results, lowest code first.
    pub codes: Vec<CodeResult>,
}

/// Probability of each code for a sine C + A·sin θ with θ uniform, given the transition levels
/// (lowest first, 2^N − 1 of them for N bits): code k between T\[k\] and T\[k+1\] (T\[0\] = −∞,
/// T\[M\] = +∞) has P = (asin(u\[k+1\]) − asin(u\[k\]))/π with u = (T − C)/A clamped to \[−1, 1\]
/// (the arcsine distribution of a sine's samples).
///
/// Returns one more probability than there are levels; an empty list when A is not positive and
/// finite, C or a level is not finite, or the levels decrease.
pub fn sine_code_probabilities(
    transitions_lsb: &[f64],
    amplitude_lsb: f64,
    offset_lsb: f64,
) -> Vec<f64> {
    let valid = amplitude_lsb.is_finite()
        && amplitude_lsb > 0.0
        && offset_lsb.is_finite()
        && transitions_lsb.iter().all(|t| t.is_finite())
        && transitions_lsb.windows(2).all(|w| w[0] <= w[1]);
    if !valid {
        return Vec::new();
    }
    let edge = |t: f64| ((t - offset_lsb) / amplitude_lsb).clamp(-1.0, 1.0).asin();
    let mut below = -std::f64::consts::FRAC_PI_2;
    let mut out = Vec::with_capacity(transitions_lsb.len() + 1);
    for &t in transitions_lsb {
        let e = edge(t);
        out.push((e - below) / std::f64::consts::PI);
        below = e;
    }
    out.push((std::f64::consts::FRAC_PI_2 - below) / std::f64::consts::PI);
    out
}

/// The standard normal distribution function Φ(z).
///
/// Uses erf(x) = (2/√π)·e^(−x²)·Σ 2^n·x^(2n+1)/(1·3·…·(2n+1)) (Abramowitz & Stegun 7.1.6), whose terms
/// are all positive, so there is no cancellation; about 1e-16 absolute error for |z| ≤ 12.
fn normal_cdf(z: f64) -> f64 {
    let x = z.abs() / std::f64::consts::SQRT_2;
    if x > 9.0 {
        return if z > 0.0 { 1.0 } else { 0.0 };
    }
    let mut term = x;
    let mut sum = x;
    let mut n = 0.0;
    while term > sum * 1e-17 {
        n += 1.0;
        term *= 2.0 * x * x / (2.0 * n + 1.0);
        sum += term;
    }
    let erf = 2.0 / std::f64::consts::PI.sqrt() * (-x * x).exp() * sum;
    let half = 0.5 * erf.min(1.0);
    if z >= 0.0 {
        0.5 + half
    } else {
        0.5 - half
    }
}

/// The standard normal quantile Φ⁻¹(p), by bisection of the distribution function Φ to the last bit
/// (Φ from the erf series of Abramowitz & Stegun 7.1.6).
///
/// None for p outside (1e-15, 1 − 1e-15) or not finite.
pub fn normal_quantile(p: f64) -> Option<f64> {
    if !(p.is_finite() && p > 1e-15 && p < 1.0 - 1e-15) {
        return None;
    }
    if p < 0.5 {
        return normal_quantile(1.0 - p).map(|z| -z);
    }
    let (mut lo, mut hi) = (0.0f64, 9.0f64);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if normal_cdf(mid) < p {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some(0.5 * (lo + hi))
}

/// Smallest DNL uncertainty the sample-count advice plans for, LSB.
const MIN_DNL_UNCERTAINTY_LSB: f64 = 0.001;

fn check_advice_settings(settings: &LinearitySettings) -> Result<f64> {
    let c = settings.confidence;
    let z = if c.is_finite() && c > 0.0 && c < 1.0 {
        normal_quantile((1.0 + c) / 2.0)
    } else {
        None
    };
    let z = z.ok_or_else(|| {
        Error::setting(
            "confidence",
            "a confidence level in (0, 1), e.g. 0.95",
            c.to_string(),
        )
    })?;
    let b = settings.dnl_uncertainty_lsb;
    // Below 0.001 LSB the sample count (π·2^(N−1)·Z²/β²) passes 10^15 at 20 bits: no test takes
    // that many, and the counts would leave the integers a u64 holds.
    if !(b.is_finite() && (MIN_DNL_UNCERTAINTY_LSB..=10.0).contains(&b)) {
        return Err(Error::setting(
            "dnl_uncertainty_lsb",
            format!("a DNL uncertainty in {MIN_DNL_UNCERTAINTY_LSB}..=10 LSB"),
            b.to_string(),
        ));
    }
    Ok(z)
}

/// Samples needed for a DNL uncertainty of β LSB at the given confidence for N bits:
/// ⌈π·2^(N−1)·Z²/β²⌉ (see [`SampleAdvice`]).
///
/// Errors (`BadSetting`) for N outside 2..=20, a confidence outside (0, 1) or β outside (0, 10].
pub fn required_samples(bits: u32, settings: &LinearitySettings) -> Result<u64> {
    check_bits(bits)?;
    let z = check_advice_settings(settings)?;
    let b = settings.dnl_uncertainty_lsb;
    Ok((std::f64::consts::PI * 2f64.powi(bits as i32 - 1) * z * z / (b * b)).ceil() as u64)
}

/// The DNL uncertainty S samples reach at a confidence with quantile Z: Z·√(π·2^(N−1)/S), in LSB.
fn achieved_uncertainty(bits: u32, samples: u64, z: f64) -> f64 {
    z * (std::f64::consts::PI * 2f64.powi(bits as i32 - 1) / samples as f64).sqrt()
}

/// Least-squares line y = a + b·x; None when fewer than two distinct x.
fn line_fit(points: &[(f64, f64)]) -> Option<(f64, f64)> {
    let n = points.len() as f64;
    if points.len() < 2 {
        return None;
    }
    // Centred sums keep the normal equations well conditioned for 2^20 points.
    let mx = points.iter().map(|p| p.0).sum::<f64>() / n;
    let my = points.iter().map(|p| p.1).sum::<f64>() / n;
    let sxx: f64 = points.iter().map(|p| (p.0 - mx) * (p.0 - mx)).sum();
    let sxy: f64 = points.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
    if sxx <= 0.0 {
        return None;
    }
    let b = sxy / sxx;
    Some((my - b * mx, b))
}

/// Largest, smallest and largest-magnitude values; the lowest code wins ties. `values` is non-empty.
fn extremes(values: &[AtCode]) -> (AtCode, AtCode, AtCode) {
    let mut max = values[0];
    let mut min = values[0];
    let mut worst = values[0];
    for &v in &values[1..] {
        if v.value_lsb > max.value_lsb {
            max = v;
        }
        if v.value_lsb < min.value_lsb {
            min = v;
        }
        if v.value_lsb.abs() > worst.value_lsb.abs() {
            worst = v;
        }
    }
    (max, min, worst)
}

/// Runs the sine-wave histogram test on a code histogram (IEEE Std 1241, code density test with a
/// sine input; from memory):
///
/// 1. cumulative histogram CH\[k\] = Σ_{j≤k} H\[j\] over S samples;
/// 2. T\[k\] = C − A·cos(π·CH\[k−1\]/S), k = 1 .. M − 1, with A and C chosen so that T\[1\] and T\[M−1\] sit
///    at their ideal places −2^(N−1) + 0.5 and 2^(N−1) − 1.5: with c₀ = cos(π·CH\[0\]/S) and
///    c₁ = cos(π·CH\[M−2\]/S), A = (T\[M−1\] − T\[1\])/(c₀ − c₁) and C = (T\[M−1\]·c₀ − T\[1\]·c₁)/(c₀ − c₁);
/// 3. code widths W\[k\] = T\[k+1\] − T\[k\] for the inner codes; terminal basis: Q = (T\[M−1\] − T\[1\])/(M − 2),
///    DNL = W/Q − 1, INL\[k\] = (T\[k\] − T\[1\])/Q − (k − 1); best-fit basis: T\[k\] ≈ a + b·k by least squares,
///    DNL = W/b − 1, INL\[k\] = (T\[k\] − a − b·k)/b;
/// 4. missing codes: inner codes with no hits.
///
/// Before that, the overdrive check: each end code must hold at least [`OVERDRIVE_RATIO`] times the
/// hits that its ideal 1-LSB neighbour would get under the estimated sine, otherwise the end codes do
/// not absorb the sine's tails and the transition levels near the ends are not measured.
///
/// Errors: `Empty` for an empty histogram; `NoTone` when no inner code has a hit, or when the sine
/// does not overdrive both ends (the message gives the end codes' hits, their neighbours' hits and
/// the hits needed); `BadSetting` for the advice settings (see [`required_samples`]).
pub fn analyze_histogram(hist: &CodeHistogram, settings: &LinearitySettings) -> Result<Linearity> {
    let z = check_advice_settings(settings)?;
    let bits = hist.bits;
    let m = hist.counts.len();
    let lo = min_code(bits);
    let hi = max_code(bits);
    let source = hist.sources.join(", ");
    let s = hist.samples();
    if s == 0 {
        return Err(Error::new(
            ErrorKind::Empty,
            &source,
            Location::Whole,
            "samples in the histogram",
            "none",
        ));
    }
    let sf = s as f64;
    let h = &hist.counts;
    let mut ch = Vec::with_capacity(m);
    let mut acc = 0u64;
    for &c in h {
        acc += c;
        ch.push(acc);
    }
    let inner_hits = s - h[0] - h[m - 1];
    if inner_hits == 0 {
        return Err(Error::new(
            ErrorKind::NoTone,
            &source,
            Location::Whole,
            "hits in the inner codes (a sine across the range)",
            format!(
                "all {s} samples at the end codes ({lo}: {}, {hi}: {})",
                h[0],
                h[m - 1]
            ),
        ));
    }

    let t_first = lo as f64 + 0.5;
    let t_last = hi as f64 - 0.5;
    let pi = std::f64::consts::PI;
    let c0 = (pi * ch[0] as f64 / sf).cos();
    let c1 = (pi * ch[m - 2] as f64 / sf).cos();
    // c₀ > c₁ because CH[M−2] − CH[0] = inner hits > 0.
    let amplitude = (t_last - t_first) / (c0 - c1);
    let offset = (t_last * c0 - t_first * c1) / (c0 - c1);
    let sine = SineEstimate {
        amplitude_lsb: amplitude,
        offset_lsb: offset,
        overdrive_low_lsb: t_first - (offset - amplitude),
        overdrive_high_lsb: (offset + amplitude) - t_last,
    };

    // Overdrive check against ideal 1-LSB neighbours of the end codes.
    let neighbour_p = |a: f64, b: f64| {
        sine_code_probabilities(&[a, b], amplitude, offset)
            .get(1)
            .copied()
    };
    let end = |code: i64, hits: u64, neighbour_hits: u64, p: Option<f64>| {
        let expected = p.unwrap_or(0.0) * sf;
        let required = OVERDRIVE_RATIO * expected;
        EndCode {
            code,
            hits,
            neighbour_hits,
            neighbour_expected_hits: expected,
            required_hits: required,
            overdriven: hits > 0 && hits as f64 >= required,
        }
    };
    let low_end = end(lo, h[0], h[1], neighbour_p(t_first, t_first + 1.0));
    let high_end = end(hi, h[m - 1], h[m - 2], neighbour_p(t_last - 1.0, t_last));
    if !(low_end.overdriven && high_end.overdriven) {
        let describe = |e: &EndCode| {
            if e.hits == 0 {
                return format!(
                    "code {}: no hits (next code {} hits)",
                    e.code, e.neighbour_hits
                );
            }
            format!(
                "code {}: {} hits (next code {} hits; needs at least {:.0}, {}× the {:.1} an ideal \
                 next code would get)",
                e.code,
                e.hits,
                e.neighbour_hits,
                e.required_hits.ceil(),
                OVERDRIVE_RATIO,
                e.neighbour_expected_hits
            )
        };
        return Err(Error::new(
            ErrorKind::NotOverdriven,
            &source,
            Location::Whole,
            "a sine that overdrives both ends of the range, so that the end codes absorb its tails",
            format!(
                "{}; {} (the sine reaches {:.2} LSB below the first and {:.2} LSB above the last \
                 transition level)",
                describe(&low_end),
                describe(&high_end),
                sine.overdrive_low_lsb,
                sine.overdrive_high_lsb
            ),
        ));
    }

    // Transition levels T[k], k = 1 .. M−1 (index k−1 here); the ends exactly at their ideal places.
    let mut t: Vec<f64> = (1..m)
        .map(|k| offset - amplitude * (pi * ch[k - 1] as f64 / sf).cos())
        .collect();
    t[0] = t_first;
    t[m - 2] = t_last;

    let q_terminal = (t_last - t_first) / (m - 2) as f64;
    let points: Vec<(f64, f64)> = t
        .iter()
        .enumerate()
        .map(|(i, &v)| ((i + 1) as f64, v))
        .collect();
    let (a_fit, b_fit) = line_fit(&points).ok_or_else(|| {
        Error::new(
            ErrorKind::NoTone,
            &source,
            Location::Whole,
            "at least two transition levels",
            format!("{} levels", t.len()),
        )
    })?;

    let mut codes = Vec::with_capacity(m);
    for k in 0..m {
        let code = lo + k as i64;
        let transition = (k >= 1).then(|| t[k - 1]);
        let width = (k >= 1 && k <= m - 2).then(|| t[k] - t[k - 1]);
        codes.push(CodeResult {
            code,
            hits: h[k],
            transition_lsb: transition,
            dnl_terminal_lsb: width.map(|w| w / q_terminal - 1.0),
            dnl_best_fit_lsb: width.map(|w| w / b_fit - 1.0),
            inl_terminal_lsb: transition.map(|v| (v - t_first) / q_terminal - (k as f64 - 1.0)),
            inl_best_fit_lsb: transition.map(|v| (v - a_fit - b_fit * k as f64) / b_fit),
        });
    }
    let basis =
        |width: f64, dnl: fn(&CodeResult) -> Option<f64>, inl: fn(&CodeResult) -> Option<f64>| {
            let d: Vec<AtCode> = codes
                .iter()
                .filter_map(|c| {
                    dnl(c).map(|v| AtCode {
                        code: c.code,
                        value_lsb: v,
                    })
                })
                .collect();
            let i: Vec<AtCode> = codes
                .iter()
                .filter_map(|c| {
                    inl(c).map(|v| AtCode {
                        code: c.code,
                        value_lsb: v,
                    })
                })
                .collect();
            let (dnl_max, dnl_min, dnl_worst) = extremes(&d);
            let (inl_max, inl_min, inl_worst) = extremes(&i);
            Extremes {
                code_width_lsb: width,
                dnl_max,
                dnl_min,
                dnl_worst,
                inl_max,
                inl_min,
                inl_worst,
            }
        };
    let terminal = basis(q_terminal, |c| c.dnl_terminal_lsb, |c| c.inl_terminal_lsb);
    let best_fit = basis(b_fit, |c| c.dnl_best_fit_lsb, |c| c.inl_best_fit_lsb);
    let missing_codes = codes[1..m - 1]
        .iter()
        .filter(|c| c.hits == 0)
        .map(|c| c.code)
        .collect();
    let required = required_samples(bits, settings)?;
    Ok(Linearity {
        sources: hist.sources.clone(),
        bits,
        samples: s,
        sine,
        low_end,
        high_end,
        advice: SampleAdvice {
            confidence: settings.confidence,
            z,
            dnl_uncertainty_lsb: settings.dnl_uncertainty_lsb,
            required_samples: required,
            samples: s,
            sufficient: s >= required,
            achieved_dnl_uncertainty_lsb: achieved_uncertainty(bits, s, z),
        },
        phases: None,
        missing_codes,
        terminal,
        best_fit,
        codes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::synth::{synthesize, transition_levels, SynthFrequency, SynthSettings};
    use std::f64::consts::PI;

    /// A long non-coherent sine record: f/fs = (3 − √5)/2, a golden-ratio fraction, is as far from
    /// every ratio of small integers as a number can be, so the phases spread evenly over the cycle
    /// (equidistribution of n·α mod 1 for irrational α, Weyl; the golden ratio is the extreme case).
    fn record(bits: u32, amplitude_lsb: f64, settings: SynthSettings) -> CodeHistogram {
        let s = SynthSettings {
            bits,
            sample_rate_hz: 1.0,
            samples: 1_000_000,
            frequency: SynthFrequency::Hz((3.0 - 5f64.sqrt()) / 2.0),
            amplitude_dbfs: 20.0 * (amplitude_lsb / 2f64.powi(bits as i32 - 1)).log10(),
            ..settings
        };
        let out = synthesize(&s).unwrap();
        let mut h = CodeHistogram::new(bits).unwrap();
        h.add_record(&out.record).unwrap();
        h
    }

    #[test]
    fn ideal_code_probabilities_of_a_3_bit_converter() {
        // Arcsine distribution of a sine's samples, P(x < T) = acos((C − T)/A)/π (equivalently
        // 1/2 + asin((T − C)/A)/π; sine geometry, IEEE Std 1241 histogram test), written here in
        // the acos form so that it does not share the library's asin form.
        let levels: Vec<f64> = (-3..=3).map(|c| c as f64 - 0.5).collect();
        let (a, c) = (7.0, 0.3);
        let below = |t: f64| ((c - t) / a).clamp(-1.0, 1.0).acos() / PI;
        let mut want = Vec::new();
        let mut prev = 0.0;
        for &t in &levels {
            want.push(below(t) - prev);
            prev = below(t);
        }
        want.push(1.0 - prev);
        let got = sine_code_probabilities(&levels, a, c);
        assert_eq!(got.len(), 8);
        for (g, w) in got.iter().zip(&want) {
            assert!((g - w).abs() < 1e-14, "{g} vs {w}");
        }
        assert!((got.iter().sum::<f64>() - 1.0).abs() < 1e-14);
        // Centred sine: symmetric probabilities; mid code 0 gets 2·asin(0.5/7)/π (hand arithmetic).
        let sym = sine_code_probabilities(&levels, a, 0.0);
        assert!((sym[4] - 2.0 * (0.5f64 / 7.0).asin() / PI).abs() < 1e-15);
        // The codes either side of mid code 0 mirror each other: −1.5..−0.5 and 0.5..1.5 (offset
        // codes 3 and 5), −2.5..−1.5 and 1.5..2.5 (2 and 6).
        assert!((sym[3] - sym[5]).abs() < 1e-14 && (sym[2] - sym[6]).abs() < 1e-14);

        // A long synthesized record of the same sine: each count within 4 binomial standard deviations
        // √(S·P·(1 − P)) of S·P (the phases of a non-coherent record act as uniform draws).
        let h = record(
            3,
            a,
            SynthSettings {
                offset_codes: c,
                ..SynthSettings::default()
            },
        );
        let s = h.samples() as f64;
        for (k, (&n, p)) in h.counts().iter().zip(&want).enumerate() {
            let sd = (s * p * (1.0 - p)).sqrt();
            assert!(
                (n as f64 - s * p).abs() < 4.0 * sd,
                "code {k}: {n} hits, expected {}",
                s * p
            );
        }
        // The test recovers the sine from the end codes and the ideal levels.
        let r = analyze_histogram(&h, &LinearitySettings::default()).unwrap();
        assert!((r.sine.amplitude_lsb - a).abs() < 0.01, "{:?}", r.sine);
        assert!((r.sine.offset_lsb - c).abs() < 0.01, "{:?}", r.sine);
        // Overdrive: −3.5 − (0.3 − 7) = 3.2 LSB below, (0.3 + 7) − 2.5 = 4.8 LSB above.
        assert!((r.sine.overdrive_low_lsb - 3.2).abs() < 0.02);
        assert!((r.sine.overdrive_high_lsb - 4.8).abs() < 0.02);
        assert!(r.missing_codes.is_empty());
    }

    /// Standard error of a transition level from S samples: T = C − A·cos(π·p) with p = CH/S
    /// binomial, so by the delta method σ_T = A·π·sin(π·p)·√(p·(1 − p)/S) (derived here).
    fn level_sigma(a: f64, p: f64, s: f64) -> f64 {
        a * PI * (PI * p).sin() * (p * (1.0 - p) / s).sqrt()
    }

    #[test]
    fn recovers_known_code_widths_and_missing_codes() {
        let bits = 8;
        let truth_settings = SynthSettings {
            bits,
            noise_rms_codes: 0.2,
            dnl_pattern_lsb: vec![0.3, -0.2, 0.1, -0.15, 0.25, -0.3, 0.05],
            missing_codes: vec![-37, 50],
            ..SynthSettings::default()
        };
        let truth = transition_levels(&truth_settings).unwrap();
        let a = 128.0 * 10f64.powf(0.5 / 20.0);
        let h = record(bits, a, truth_settings.clone());
        let r = analyze_histogram(&h, &LinearitySettings::default()).unwrap();
        assert_eq!(r.missing_codes, vec![-37, 50]);
        let s = h.samples() as f64;
        // DNL tolerance from the sample-count formula β(S) = Z·√(π·2^(N−1)/S) at Z = 1.96 (IEEE Std
        // 1241, from memory): |error| < 4·β(S)/1.96 = 4·√(π·2^(N−1)/S), i.e. four standard errors.
        let tol = 4.0 * (PI * 128.0 / s).sqrt();
        let mut outside = 0;
        let mut checked = 0;
        for c in &r.codes {
            if let Some(d) = c.dnl_terminal_lsb {
                let k = (c.code + 128) as usize;
                // The true levels are pinned at both ends, so their terminal code width is 1 LSB.
                let want = truth[k] - truth[k - 1] - 1.0;
                checked += 1;
                if (d - want).abs() >= tol {
                    outside += 1;
                }
                assert!(
                    (d - want).abs() < 2.0 * tol,
                    "code {}: {d} vs {want}",
                    c.code
                );
            }
        }
        assert_eq!(checked, 254);
        assert!(outside <= checked / 100, "{outside} codes outside ±{tol}");
        // The missing codes read exactly −1.
        for code in [-37i64, 50] {
            let row = r.codes.iter().find(|c| c.code == code).unwrap();
            assert_eq!(row.hits, 0);
            assert!((row.dnl_terminal_lsb.unwrap() + 1.0).abs() < 1e-9);
        }
        // Terminal INL: T − ideal (both pinned at the ends), within 4 standard errors of the level.
        let mut cum = 0u64;
        for c in &r.codes[1..] {
            let k = (c.code + 128) as usize;
            cum += h.counts()[k - 1];
            let want = truth[k - 1] - (c.code as f64 - 0.5);
            let tol_t = 4.0 * level_sigma(a, cum as f64 / s, s) + 0.02;
            let got = c.inl_terminal_lsb.unwrap();
            assert!(
                (got - want).abs() < tol_t,
                "code {}: {got} vs {want} (±{tol_t})",
                c.code
            );
        }
        // Best-fit INL against the same least-squares line through the true levels.
        let pts: Vec<(f64, f64)> = truth
            .iter()
            .enumerate()
            .map(|(i, &t)| ((i + 1) as f64, t))
            .collect();
        let (a0, b0) = line_fit(&pts).unwrap();
        let worst_true = pts
            .iter()
            .map(|&(k, t)| (t - a0 - b0 * k) / b0)
            .fold(0.0f64, |m, v| if v.abs() > m.abs() { v } else { m });
        assert!(
            (r.best_fit.inl_worst.value_lsb - worst_true).abs() < 0.25,
            "{:?} vs {worst_true}",
            r.best_fit.inl_worst
        );
        // Worst DNL: a missing code (−1), the lowest of the two.
        assert_eq!(r.terminal.dnl_worst.code, -37);
        assert_eq!(r.terminal.dnl_min.code, -37);
        assert!((r.terminal.code_width_lsb - 1.0).abs() < 1e-12);
    }

    #[test]
    fn recovers_the_inl_of_a_bowed_transfer() {
        // The synth's bow: y = x + b·(1 − (x/2^(N−1))²) before an ideal quantiser, so the input-
        // referred level x_k solves x + b·(1 − (x/128)²) = k − 0.5 (solved here by bisection; the
        // transfer is increasing for |x| < 128²/(2b)).
        let bits = 8;
        let bow = 1.5;
        let a = 128.0 * 10f64.powf(0.5 / 20.0);
        let h = record(
            bits,
            a,
            SynthSettings {
                inl_bow_lsb: bow,
                noise_rms_codes: 0.2,
                ..SynthSettings::default()
            },
        );
        let r = analyze_histogram(&h, &LinearitySettings::default()).unwrap();
        let level = |target: f64| {
            let (mut lo, mut hi) = (-200.0f64, 200.0f64);
            for _ in 0..100 {
                let mid = 0.5 * (lo + hi);
                let y = mid + bow * (1.0 - (mid / 128.0) * (mid / 128.0));
                if y < target {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            0.5 * (lo + hi)
        };
        let x: Vec<f64> = (-127..=127).map(|c| level(c as f64 - 0.5)).collect();
        let q = (x[254] - x[0]) / 254.0;
        let s = h.samples() as f64;
        let mut cum = 0u64;
        for (i, c) in r.codes[1..].iter().enumerate() {
            cum += h.counts()[i];
            let want = (x[i] - x[0]) / q - i as f64;
            let tol = 4.0 * level_sigma(a, cum as f64 / s, s) + 0.02;
            let got = c.inl_terminal_lsb.unwrap();
            assert!((got - want).abs() < tol, "code {}: {got} vs {want}", c.code);
        }
        // At mid-scale the level comes early by about the bow: INL ≈ −1.5 LSB.
        assert!(
            (r.terminal.inl_min.value_lsb + bow).abs() < 0.1,
            "{:?}",
            r.terminal.inl_min
        );
        assert!(r.terminal.inl_min.code.abs() <= 8);
    }

    #[test]
    fn a_sine_inside_the_range_is_refused_with_its_counts() {
        for dbfs in [-1.0, 0.0] {
            let a = 128.0 * 10f64.powf(dbfs / 20.0);
            let h = record(8, a, SynthSettings::default());
            let e = analyze_histogram(&h, &LinearitySettings::default()).unwrap_err();
            assert_eq!(e.kind, ErrorKind::NotOverdriven, "{dbfs} dBFS");
            assert!(e.expected.contains("overdrives"), "{}", e.expected);
            assert!(
                e.found.contains("code -128") && e.found.contains("hits"),
                "{}",
                e.found
            );
        }
        // +0.5 dBFS reaches about 7.6 LSB beyond each end level and passes.
        let h = record(8, 128.0 * 10f64.powf(0.5 / 20.0), SynthSettings::default());
        let r = analyze_histogram(&h, &LinearitySettings::default()).unwrap();
        assert!(r.low_end.overdriven && r.high_end.overdriven);
        assert!(r.low_end.hits as f64 >= OVERDRIVE_RATIO * r.low_end.neighbour_expected_hits);
        // The ideal converter: DNL within the statistical tolerance everywhere.
        let tol = 4.0 * (PI * 128.0 / h.samples() as f64).sqrt();
        assert!(
            r.terminal.dnl_worst.value_lsb.abs() < tol,
            "{:?}",
            r.terminal.dnl_worst
        );
        assert!(r.best_fit.dnl_worst.value_lsb.abs() < tol);
    }

    #[test]
    fn overdrive_ratio_matches_its_derivation() {
        // For a large sine whose peak is d LSB beyond the end level, end/neighbour hits tend to
        // √d/(√(d+1) − √d) (arcsine density near the peak); the ratio 4 is reached at d = 16/9.
        let a = 1e6;
        let d = 16.0 / 9.0;
        let levels = [-a + d, -a + d + 1.0];
        let p = sine_code_probabilities(&levels, a, 0.0);
        let ratio = p[0] / p[1];
        assert!((ratio - OVERDRIVE_RATIO).abs() < 1e-3, "{ratio}");
    }

    #[test]
    fn sample_count_advice() {
        // Standard normal quantiles (scipy.stats.norm.ppf, values printed by scipy 1.17).
        for (p, z) in [
            (0.975, 1.959963984540054),
            (0.995, 2.5758293035489004),
            (0.95, 1.6448536269514722),
            (0.9995, 3.2905267314919255),
        ] {
            let got = normal_quantile(p).unwrap();
            assert!((got - z).abs() < 1e-12, "{p}: {got} vs {z}");
            assert!((normal_quantile(1.0 - p).unwrap() + z).abs() < 1e-12);
        }
        assert!(normal_quantile(0.5).unwrap().abs() < 1e-15);
        assert_eq!(normal_quantile(1.0), None);
        assert_eq!(normal_quantile(f64::NAN), None);
        // S ≥ π·2^(N−1)·Z²/β² (IEEE Std 1241, from memory): 10 bits, β = 0.1 LSB, 95 % →
        // π·512·1.959963984540054²/0.01 = 617 896.9 → 617 897 (about 618 000).
        let n = required_samples(10, &LinearitySettings::default()).unwrap();
        assert_eq!(n, 617_897);
        let z = 1.959963984540054f64;
        assert_eq!(n, (PI * 512.0 * z * z / 0.01).ceil() as u64);
        // Halving β needs four times the samples.
        let half = LinearitySettings {
            dnl_uncertainty_lsb: 0.05,
            ..LinearitySettings::default()
        };
        let n4 = required_samples(10, &half).unwrap();
        assert!((n4 as f64 / n as f64 - 4.0).abs() < 1e-5);
        let bad = [
            LinearitySettings {
                confidence: 1.0,
                ..LinearitySettings::default()
            },
            LinearitySettings {
                confidence: 0.0,
                ..LinearitySettings::default()
            },
            LinearitySettings {
                dnl_uncertainty_lsb: 0.0,
                ..LinearitySettings::default()
            },
            LinearitySettings {
                dnl_uncertainty_lsb: f64::NAN,
                ..LinearitySettings::default()
            },
        ];
        for s in bad {
            assert_eq!(
                required_samples(10, &s).unwrap_err().kind,
                ErrorKind::BadSetting
            );
        }
        // The advice in a result: 10^6 samples at 8 bits meet 0.1 LSB (needs 154 475) and reach
        // 1.96·√(π·128/10^6) ≈ 0.0393 LSB.
        let h = record(8, 128.0 * 10f64.powf(0.5 / 20.0), SynthSettings::default());
        let r = analyze_histogram(&h, &LinearitySettings::default()).unwrap();
        assert!(r.advice.sufficient);
        assert_eq!(
            r.advice.required_samples,
            (PI * 128.0 * z * z / 0.01).ceil() as u64
        );
        let want = z * (PI * 128.0 / 1e6).sqrt();
        assert!((r.advice.achieved_dnl_uncertainty_lsb - want).abs() < 1e-12);
    }

    #[test]
    fn histogram_accumulates_and_checks_its_input() {
        let out = synthesize(&SynthSettings {
            bits: 6,
            amplitude_dbfs: 1.0,
            samples: 10_000,
            ..SynthSettings::default()
        })
        .unwrap();
        let mut whole = CodeHistogram::new(6).unwrap();
        whole.add_codes(&out.record.codes, "whole").unwrap();
        let mut parts = CodeHistogram::new(6).unwrap();
        let (a, b) = out.record.codes.split_at(3_333);
        parts.add_codes(a, "a").unwrap();
        parts.add_codes(b, "b").unwrap();
        assert_eq!(whole.counts(), parts.counts());
        assert_eq!(parts.samples(), 10_000);
        assert_eq!(parts.sources(), ["a", "b"]);
        let e = parts.add_codes(&[0, 5, 32], "bad").unwrap_err();
        assert_eq!(e.kind, ErrorKind::CodeOutOfRange);
        assert!(e.found.contains("code 32 at sample 2"), "{}", e.found);
        assert_eq!(e.path, "bad");
        assert_eq!(parts.samples(), 10_000, "nothing added from a bad record");
        let mut other = out.record.clone();
        other.bits = 7;
        let e = parts.add_record(&other).unwrap_err();
        assert_eq!(
            (e.kind, e.path.as_str()),
            (ErrorKind::BadSetting, "synth:1")
        );
        for bits in [1, 21] {
            assert_eq!(
                CodeHistogram::new(bits).unwrap_err().kind,
                ErrorKind::BadSetting
            );
        }
        assert!(CodeHistogram::from_counts(3, vec![1; 7]).is_err());
        // Empty, and all at the ends.
        let empty = CodeHistogram::new(4).unwrap();
        let s = LinearitySettings::default();
        assert_eq!(
            analyze_histogram(&empty, &s).unwrap_err().kind,
            ErrorKind::Empty
        );
        let mut ends = vec![0u64; 16];
        ends[0] = 10;
        ends[15] = 10;
        let e = analyze_histogram(&CodeHistogram::from_counts(4, ends).unwrap(), &s).unwrap_err();
        assert_eq!(e.kind, ErrorKind::NoTone);
        assert!(sine_code_probabilities(&[1.0, 0.0], 1.0, 0.0).is_empty());
        assert!(sine_code_probabilities(&[0.0], 0.0, 0.0).is_empty());
    }
}
