//! One-sigma standard uncertainties of the spectral figures, from the record's own statistics: the
//! mean noise per bin and how many bins it came from, the window's bin-to-bin correlation, the number
//! of records averaged, and each claim's own bins.
//!
//! # Derivation
//! A bin of a windowed DFT of white Gaussian noise is a circular complex Gaussian, so its power is
//! exponential (chi-square with two degrees of freedom) with variance μ², μ its mean; two bins l apart
//! have complex correlation ρ(l) = Σw²·e^{−j2πln/N} / Σw², and by Isserlis' theorem their powers have
//! covariance |ρ(l)|²·μ². Averaging M records divides every variance by M. Hence:
//!
//! * a sum of powers over a set B of bins has var = μ²·S_B/M, S_B = Σ_{k,k'∈B} |ρ(k−k')|²;
//! * the mean noise per bin over K noise bins has relative variance F/(K·M), where
//!   F = Σ_l |ρ(l)|² = N·Σw⁴/(Σw²)² (Parseval) is the window's variance factor (1 unwindowed, 35/18
//!   for Hann): the noise bins are worth K/F independent ones (Welch 1967 makes the same count for
//!   overlapped segments);
//! * a component of power P measured over its bins also carries the cross term 2·Re(S·X*) of the
//!   component S with the noise X, of variance 2·P·μ·F/M (in time, the windowed sine against the
//!   noise; unwindowed it is the amplitude variance 2σ²/N of the sine fit, IEEE Std 1057).
//!
//! Each figure is a ratio of such powers; its variance follows by the delta method with the noise
//! mean's share counted once (it enters the noise power and every noise correction). Harmonic and spur
//! levels near the floor have large relative variances and their dB sigma is then only indicative; a
//! harmonic at the floor reports an upper bound (see `HarmonicFigure::at_floor`).

use super::claim::{Claims, Measured, Measurement, SpurAt};
use super::metrics::Figures;
use super::Window;
use crate::fit::uncertainty::DB_PER_NEPER_POWER;
use serde::{Serialize, Serializer};

/// One-sigma standard uncertainties of the spectral figures, keyed as the figures are; `None` where
/// the figure is absent.
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct SpectrumUncertainty {
    /// Of the fundamental level, dB.
    pub fundamental_dbfs: Option<f64>,
    /// Of the SNR, dB.
    pub snr_db: Option<f64>,
    /// Of the SINAD, dB.
    pub sinad_db: Option<f64>,
    /// Of the THD, dB.
    pub thd_dbc: Option<f64>,
    /// Of the SFDR against the fundamental, dB.
    pub sfdr_dbc: Option<f64>,
    /// Of the SFDR against full scale, dB.
    pub sfdr_dbfs: Option<f64>,
    /// Of the spectral ENOB, bits.
    pub enob_bits: Option<f64>,
    /// Of the full-scale-referred ENOB, bits.
    pub enob_full_scale_bits: Option<f64>,
    /// Of the noise floor, dB.
    pub noise_floor_dbfs: Option<f64>,
    /// Of the noise spectral density, dB.
    pub nsd_dbfs_per_hz: Option<f64>,
    /// Of the worst spur's levels (present when the worst spur is).
    pub worst_spur: Option<LevelUncertainty>,
    /// Of each harmonic's levels, by order (`h2`, `h3`, ...).
    pub harmonics: PerHarmonic,
}

/// One-sigma uncertainties of a level against the fundamental and against full scale, dB.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct LevelUncertainty {
    /// Of the level against the fundamental, dB.
    pub dbc: Option<f64>,
    /// Of the level against full scale, dB.
    pub dbfs: Option<f64>,
}

/// Uncertainties per harmonic order, written as an object keyed `h<order>` in ascending order (the
/// keys the CSV flattens the harmonics' own figures to).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PerHarmonic(pub Vec<(u32, LevelUncertainty)>);

impl PerHarmonic {
    /// The uncertainties of harmonic `order`, if it is listed.
    pub fn get(&self, order: u32) -> Option<&LevelUncertainty> {
        self.0.iter().find(|(o, _)| *o == order).map(|(_, u)| u)
    }
}

impl Serialize for PerHarmonic {
    fn serialize<S: Serializer>(&self, s: S) -> std::result::Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
        let mut m = s.serialize_map(Some(self.0.len()))?;
        for (order, u) in &self.0 {
            m.serialize_entry(&format!("h{order}"), u)?;
        }
        m.end()
    }
}

/// The window's bin-to-bin power correlation: |ρ(l)|² for l = 0, 1, 2, ... until it vanishes.
#[derive(Debug, Clone, PartialEq)]
pub struct BinCorrelation(Vec<f64>);

/// Reference length for windows given by their samples (Kaiser): the correlation in bins converges
/// with N as the window's DTFT does (see `Window::leakage`).
const REFERENCE_LEN: usize = 4096;

/// Lags beyond this are not summed for a window given by its samples: a Kaiser window's |ρ(l)|² is
/// below 1e-12 well before it.
const MAX_LAG: usize = 64;

impl BinCorrelation {
    /// Of `window`: exact for cosine sums (w² is a cosine sum of twice the terms, whose coefficients
    /// over the DC one are ρ(l)), numerical on the periodic window of 4096 points otherwise.
    pub fn of(window: Window) -> BinCorrelation {
        let rho: Vec<f64> = match window.coefficients() {
            Some(a) => {
                // w = Σ_k (−1)^k a_k cos(kθ) = Σ_{k=−K..K} b_k e^{ikθ}, b_0 = a_0, b_±k = ±a_k/2.
                let k = a.len();
                let b = |i: isize| -> f64 {
                    let m = i.unsigned_abs();
                    if m >= k {
                        0.0
                    } else if m == 0 {
                        a[0]
                    } else {
                        let sign = if m.is_multiple_of(2) { 1.0 } else { -1.0 };
                        sign * a[m] / 2.0
                    }
                };
                let kk = k as isize;
                // Coefficients of w² (the autoconvolution of b), lags 0..=2(K−1).
                (0..2 * kk - 1)
                    .map(|l| ((-kk + 1)..kk).map(|i| b(i) * b(l - i)).sum::<f64>())
                    .collect()
            }
            None => {
                let w = window.samples(REFERENCE_LEN);
                let n = REFERENCE_LEN as f64;
                (0..MAX_LAG)
                    .map(|l| {
                        let (mut re, mut im) = (0.0, 0.0);
                        for (i, wi) in w.iter().enumerate() {
                            let ph = std::f64::consts::TAU * (l * i % REFERENCE_LEN) as f64 / n;
                            re += wi * wi * ph.cos();
                            im -= wi * wi * ph.sin();
                        }
                        re.hypot(im)
                    })
                    .collect()
            }
        };
        let zero = rho[0];
        let mut sq: Vec<f64> = rho.iter().map(|r| (r / zero).powi(2)).collect();
        while sq.len() > 1 && sq.last().is_some_and(|&v| v < 1e-15) {
            sq.pop();
        }
        BinCorrelation(sq)
    }

    /// |ρ(l)|² (0 beyond the listed lags).
    pub fn at(&self, lag: usize) -> f64 {
        self.0.get(lag).copied().unwrap_or(0.0)
    }

    /// F = Σ_l |ρ(l)|² over all lags, positive and negative: the window's noise-variance factor.
    pub fn variance_factor(&self) -> f64 {
        self.0[0] + 2.0 * self.0[1..].iter().sum::<f64>()
    }

    /// S_B = Σ_{k,k'∈B} |ρ(k−k')|² of a set of bins, ascending.
    pub fn pair_sum(&self, bins: &[usize]) -> f64 {
        let reach = self.0.len();
        let mut s = 0.0;
        for (i, &k) in bins.iter().enumerate() {
            s += self.at(0);
            for &k2 in bins[i + 1..].iter().take_while(|&&k2| k2 - k < reach) {
                s += 2.0 * self.at(k2 - k);
            }
        }
        s
    }
}

/// The pieces every figure's variance is made of.
struct Pieces {
    /// Noise mean per unit bin weight, μ.
    mu: f64,
    /// Variance of the noise mean.
    var_mu: f64,
    /// Records averaged.
    records: f64,
    /// The window's variance factor F.
    factor: f64,
}

impl Pieces {
    /// Variance of the raw power summed over `bins` holding a component of power `power`.
    fn var_raw(&self, corr: &BinCorrelation, bins: &[usize], power: f64) -> f64 {
        (2.0 * power.max(0.0) * self.mu * self.factor + self.mu * self.mu * corr.pair_sum(bins))
            / self.records
    }
}

/// The uncertainties of the figures `figs` measured (`measured`) on the claim `claims` of the mean of
/// `records` power spectra under `window` (see the module docs).
pub fn of_spectrum(
    claims: &Claims,
    measured: &Measurement,
    figs: &Figures,
    window: Window,
    records: usize,
) -> SpectrumUncertainty {
    let corr = BinCorrelation::of(window);
    let factor = corr.variance_factor();
    let mu = measured.noise_per_bin;
    let k = measured.noise_bins as f64;
    let m = records.max(1) as f64;
    if mu.is_nan() || mu <= 0.0 || k < 1.0 {
        return SpectrumUncertainty::default();
    }
    let pc = Pieces {
        mu,
        var_mu: mu * mu * factor / (k * m),
        records: m,
        factor,
    };
    let half_band = claims.samples as f64 / 2.0;
    let db = |rel_var: f64| {
        (rel_var >= 0.0 && rel_var.is_finite()).then(|| DB_PER_NEPER_POWER * rel_var.sqrt())
    };

    // The fundamental: P1 = raw1 − μ·w1.
    let f = &measured.tones[0];
    let p1 = figs.fundamental_power;
    let var_raw1 = pc.var_raw(&corr, &claims.tones[0].bins, p1);
    // Relative variance of ln P1 and its sensitivity to μ.
    let (rv_p1_own, s1_mu) = if p1 > 0.0 {
        (var_raw1 / (p1 * p1), -f.weight / p1)
    } else {
        (f64::INFINITY, 0.0)
    };
    let rv_mu = pc.var_mu / (mu * mu);
    let var_mu = pc.var_mu;

    // Each measured harmonic: its raw-power variance, and the whole of the lines for SINAD and THD.
    let line_var: Vec<Option<(f64, &Measured)>> = claims
        .lines
        .iter()
        .zip(&measured.lines)
        .map(|(c, m)| {
            m.as_ref()
                .map(|m| (pc.var_raw(&corr, &c.bins, m.corrected), m))
        })
        .collect();
    let (mut var_lines, mut w_lines) = (0.0, 0.0);
    let (mut var_thd, mut w_thd) = (0.0, 0.0);
    for (v, m) in line_var.iter().flatten() {
        var_lines += v;
        w_lines += m.weight;
        if !m.at_floor {
            var_thd += v;
            w_thd += m.weight;
        }
    }
    // D = noise + distortion = μ·(N/2 − Σw_lines) + Σ raw_lines.
    let d = figs.noise_power + figs.harmonic_power_signed;
    let d_mu = half_band - w_lines;
    let (rv_d_own, sd_mu) = if d > 0.0 {
        (var_lines / (d * d), d_mu / d)
    } else {
        (f64::INFINITY, 0.0)
    };
    // ln(P1/D): own parts add; μ enters both with sensitivities s1_mu and sd_mu.
    let rv_sinad = rv_p1_own + rv_d_own + var_mu * (s1_mu - sd_mu).powi(2);
    let rv_snr = rv_p1_own + var_mu * (s1_mu - 1.0 / mu).powi(2);
    let rv_fs = rv_d_own + var_mu * sd_mu * sd_mu;
    let sinad = figs.sinad_db.and(db(rv_sinad));
    let thd = figs.thd_dbc.and_then(|_| {
        let t: f64 = line_var
            .iter()
            .flatten()
            .filter(|(_, m)| !m.at_floor)
            .map(|(_, m)| m.corrected)
            .sum();
        let st_mu = -w_thd / t;
        db(rv_p1_own + var_thd / (t * t) + var_mu * (st_mu - s1_mu).powi(2))
    });
    // A level L (raw, or corrected when above the floor) against P1 and against full scale.
    let level = |var_raw: f64, m: &Measured| -> LevelUncertainty {
        let l = m.level();
        if l.is_nan() || l <= 0.0 {
            return LevelUncertainty::default();
        }
        let sl_mu = if m.at_floor { 0.0 } else { -m.weight / l };
        let rv_own = var_raw / (l * l);
        LevelUncertainty {
            dbc: db(rv_own + rv_p1_own + var_mu * (sl_mu - s1_mu).powi(2)),
            dbfs: db(rv_own + var_mu * sl_mu * sl_mu),
        }
    };
    let harmonics = PerHarmonic(
        figs.harmonics
            .iter()
            .zip(&line_var)
            .map(|(h, lv)| {
                let u = match lv {
                    Some((v, m)) => level(*v, m),
                    None => LevelUncertainty::default(),
                };
                (h.order, u)
            })
            .collect(),
    );
    let worst_spur = figs.worst_spur.as_ref().and_then(|_| {
        let (p, at) = measured.largest_spur()?;
        Some(match at {
            SpurAt::Line(i) => harmonics.0[i].1,
            SpurAt::Bin(kpeak) => {
                // An unclaimed lobe: its noise bins around the peak, the spur's power over them.
                let h = claims.tone_halfwidth;
                let lo = kpeak.saturating_sub(h);
                let hi = (kpeak + h).min(claims.owner.len() - 1);
                let bins: Vec<usize> = (lo..=hi)
                    .filter(|&j| claims.owner[j] == super::claim::Owner::Noise)
                    .collect();
                let var = pc.var_raw(&corr, &bins, p);
                let rv_own = var / (p * p);
                LevelUncertainty {
                    dbc: db(rv_own + rv_p1_own + var_mu * s1_mu * s1_mu),
                    dbfs: db(rv_own),
                }
            }
        })
    });
    let enob = |s: Option<f64>| s.map(|s| s / super::DB_PER_BIT);
    SpectrumUncertainty {
        fundamental_dbfs: db(rv_p1_own + var_mu * s1_mu * s1_mu),
        snr_db: figs.snr_db.and(db(rv_snr)),
        sinad_db: sinad,
        thd_dbc: thd,
        sfdr_dbc: figs.sfdr_dbc.and(worst_spur.and_then(|u| u.dbc)),
        sfdr_dbfs: figs.sfdr_dbfs.and(worst_spur.and_then(|u| u.dbfs)),
        enob_bits: figs.enob_bits.and(enob(sinad)),
        enob_full_scale_bits: figs.enob_full_scale_bits.and(enob(db(rv_fs))),
        noise_floor_dbfs: figs.noise_floor_dbfs.and(db(rv_mu)),
        nsd_dbfs_per_hz: figs.nsd_dbfs_per_hz.and(db(rv_mu)),
        worst_spur,
        harmonics,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // F = N·Σw⁴/(Σw²)² computed on the window's own samples (slow, obvious reference) against the
    // closed form from the coefficients. Hann's is 35/18 (w = ½ − ½cos: Σw²/N = 3/8, Σw⁴/N = 35/128;
    // common practice, no source). Tolerance: both exact up to rounding at 4096 points.
    #[test]
    fn variance_factor_is_n_sum_w4_over_sum_w2_squared() {
        const ROUNDING: f64 = 1e-9;
        for w in Window::all() {
            let s = w.samples(4096);
            let s2: f64 = s.iter().map(|v| v * v).sum();
            let s4: f64 = s.iter().map(|v| v.powi(4)).sum();
            let want = 4096.0 * s4 / (s2 * s2);
            let got = BinCorrelation::of(w).variance_factor();
            assert!(
                (got / want - 1.0).abs() < ROUNDING,
                "{}: {got} vs {want}",
                w.name()
            );
        }
        let hann = BinCorrelation::of(Window::Hann).variance_factor();
        assert!((hann - 35.0 / 18.0).abs() < ROUNDING);
        assert_eq!(
            BinCorrelation::of(Window::Rectangular).variance_factor(),
            1.0
        );
    }

    #[test]
    fn pair_sum_counts_each_pair_at_its_lag() {
        let c = BinCorrelation::of(Window::Hann);
        // Hann: w² = 3/8 − ½cos θ + ⅛cos 2θ, exponential coefficients 3/8, −1/4, 1/16, so ρ(1) = −2/3
        // and ρ(2) = 1/6.
        assert!((c.at(1) - 4.0 / 9.0).abs() < 1e-12);
        assert!((c.at(2) - 1.0 / 36.0).abs() < 1e-12);
        let s = c.pair_sum(&[10, 11, 12]);
        assert!((s - (3.0 + 2.0 * (2.0 * 4.0 / 9.0 + 1.0 / 36.0))).abs() < 1e-12);
        assert_eq!(c.pair_sum(&[3, 40]), 2.0);
    }
}
