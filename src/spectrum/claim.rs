//! The one bin-claiming engine: gives DC, a set of named tones and a list of derived lines (harmonics,
//! intermodulation products, interleaving images) their bins of the one-sided spectrum, then measures
//! every claim the same way. The single-tone figures, the two-tone analysis and the interleaving
//! analysis all claim and measure through it.
//!
//! # Claiming
//! Order: DC, the tones in the order given, then the lines in the order given. Every claim covers its
//! centre bin (its fractional bin rounded, within 0..=N/2) and `tone_halfwidth` bins on each side (the
//! window's main lobe plus the guard bins), and owns only those bins of it that nothing owns yet, so a bin
//! is never counted twice. DC owns bins 0..=`tone_halfwidth`. A tone whose centre bin is DC's is an
//! error (it cannot be told from the offset), and so are two tones whose bins meet (their powers could
//! not be told apart). A line whose centre bin is already owned (by DC, a tone or an earlier line) is
//! masked: it owns nothing and is not measured.
//!
//! # Measuring
//! Every bin carries a weight u_k (½ for bin 0 and, for even N, bin N/2; 1 otherwise), so that white
//! noise has the same expected power per unit of weight everywhere. The mean noise power per unit weight
//! comes from the unclaimed (noise) bins alone. Each claim then gets: its raw power (the sum over its
//! bins), the noise expected under its bins (that mean times their weight), the noise-corrected power
//! (raw minus expected), and an at-floor flag when the corrected power is no more than the expected
//! noise; a claim at the floor is not a measurement, and its raw power is reported as an upper bound.

use crate::error::{Error, ErrorKind, Location};
use serde::Serialize;

/// Fewer noise bins than this leave the noise mean poorly determined (the analyses warn).
pub const MIN_NOISE_BINS: usize = 8;

/// Owner of one bin of the one-sided spectrum.
///
/// Indices are u16: with one owner per bin, a 2^24-sample record's owners take 32 MB rather than 64 MB.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Owner {
    /// The DC bins.
    Dc,
    /// Tone i, in the order the tones were given.
    Tone(u16),
    /// Derived line i, in the order the lines were given.
    Line(u16),
    /// Nothing: noise, among which spurs are searched.
    Noise,
}

/// Something to claim: a name (used for masking and in messages) and a fractional bin, already folded
/// into 0..=N/2 (see [`crate::freq::fold_bin`]).
#[derive(Debug, Clone, PartialEq)]
pub struct Place {
    /// Its name, e.g. "fundamental", "harmonic 3", "2f1-f2", "1*fs/4+fin".
    pub name: String,
    /// Fractional bin in 0..=N/2.
    pub bin: f64,
}

impl Place {
    /// A place named `name` at fractional bin `bin`.
    pub fn new(name: impl Into<String>, bin: f64) -> Place {
        Place {
            name: name.into(),
            bin,
        }
    }
}

/// One tone's or line's claim.
#[derive(Debug, Clone, PartialEq)]
pub struct Claim {
    /// Its name.
    pub name: String,
    /// Fractional bin, as given.
    pub bin: f64,
    /// The centre bin: `bin` rounded, within 0..=N/2.
    pub centre: usize,
    /// For a line: what already owned its centre bin, so that it is not measured. Always `None` for a
    /// tone.
    pub masked_by: Option<Owner>,
    /// The bins it owns, ascending (empty when masked).
    pub bins: Vec<usize>,
}

/// The result of claiming: an owner per bin and one claim per tone and per line.
#[derive(Debug, Clone, PartialEq)]
pub struct Claims {
    /// Record length N.
    pub samples: usize,
    /// Half-width of every claim, bins.
    pub tone_halfwidth: usize,
    /// Owner of each bin 0..=N/2.
    pub owner: Vec<Owner>,
    /// The tones, in the order given.
    pub tones: Vec<Claim>,
    /// The lines, in the order given.
    pub lines: Vec<Claim>,
}

/// Why claiming failed.
#[derive(Debug, Clone, PartialEq)]
pub enum ClaimError {
    /// A tone's centre bin lies among the DC bins.
    ToneInDc {
        /// The tone's name.
        name: String,
        /// Its fractional bin.
        bin: f64,
        /// The half-width in force (DC owns 0..=half).
        tone_halfwidth: usize,
    },
    /// Two tones' bins meet.
    TonesOverlap {
        /// The earlier tone: name and fractional bin.
        first: (String, f64),
        /// The later tone: name and fractional bin.
        second: (String, f64),
        /// The half-width in force.
        tone_halfwidth: usize,
    },
    /// More tones or lines than an owner index holds (65,536 each).
    TooMany {
        /// Tones given.
        tones: usize,
        /// Lines given.
        lines: usize,
    },
}

impl ClaimError {
    /// The typed error of the crate, naming the window in force (`window`, e.g. "hann").
    pub fn to_error(&self, window: &str) -> Error {
        match self {
            ClaimError::ToneInDc {
                name,
                bin,
                tone_halfwidth,
            } => Error::new(
                ErrorKind::ToneAtEdge,
                "",
                Location::Whole,
                format!("a tone outside the DC bins (0..={tone_halfwidth} under the {window} window)"),
                // A tone's fractional bin is its cycle count in the record.
                format!(
                    "the {name} at bin {bin:.2} ({bin:.1} cycles): use a longer record, a higher input frequency, or a coherent input analysed unwindowed"
                ),
            ),
            ClaimError::TonesOverlap {
                first,
                second,
                tone_halfwidth,
            } => Error::new(
                ErrorKind::ToneAtEdge,
                "",
                Location::Whole,
                format!(
                    "tones whose bins do not overlap (more than {} bins apart under the {window} window)",
                    2 * tone_halfwidth
                ),
                format!(
                    "{} at bin {:.2} and {} at bin {:.2}",
                    first.0, first.1, second.0, second.1
                ),
            ),
            ClaimError::TooMany { tones, lines } => Error::setting(
                "harmonics",
                "at most 65,536 tones and 65,536 lines to claim",
                format!("{tones} tones and {lines} lines"),
            ),
        }
    }
}

/// Claims the bins of an N-sample spectrum in the order DC, `tones`, `lines` (see the module docs).
pub fn claim(
    samples: usize,
    tone_halfwidth: usize,
    tones: &[Place],
    lines: &[Place],
) -> Result<Claims, ClaimError> {
    let max = u16::MAX as usize + 1;
    if tones.len() > max || lines.len() > max {
        return Err(ClaimError::TooMany {
            tones: tones.len(),
            lines: lines.len(),
        });
    }
    let half = tone_halfwidth;
    let bins = samples / 2 + 1;
    let last = bins - 1;
    let mut owner = vec![Owner::Noise; bins];
    for o in owner.iter_mut().take((half + 1).min(bins)) {
        *o = Owner::Dc;
    }
    let centre_of = |bin: f64| (bin.round().max(0.0) as usize).min(last);
    let span = |centre: usize| centre.saturating_sub(half)..=(centre + half).min(last);
    let mut tone_claims = Vec::with_capacity(tones.len());
    for (i, t) in tones.iter().enumerate() {
        let centre = centre_of(t.bin);
        if owner[centre] == Owner::Dc {
            return Err(ClaimError::ToneInDc {
                name: t.name.clone(),
                bin: t.bin,
                tone_halfwidth: half,
            });
        }
        let mut mine = Vec::with_capacity(2 * half + 1);
        for k in span(centre) {
            match owner[k] {
                Owner::Tone(j) => {
                    let other = &tones[j as usize];
                    return Err(ClaimError::TonesOverlap {
                        first: (other.name.clone(), other.bin),
                        second: (t.name.clone(), t.bin),
                        tone_halfwidth: half,
                    });
                }
                Owner::Noise => {
                    owner[k] = Owner::Tone(i as u16);
                    mine.push(k);
                }
                _ => {}
            }
        }
        tone_claims.push(Claim {
            name: t.name.clone(),
            bin: t.bin,
            centre,
            masked_by: None,
            bins: mine,
        });
    }
    let mut line_claims = Vec::with_capacity(lines.len());
    for (i, l) in lines.iter().enumerate() {
        let centre = centre_of(l.bin);
        let masked_by = (owner[centre] != Owner::Noise).then_some(owner[centre]);
        let mut mine = Vec::new();
        if masked_by.is_none() {
            for k in span(centre) {
                if owner[k] == Owner::Noise {
                    owner[k] = Owner::Line(i as u16);
                    mine.push(k);
                }
            }
        }
        line_claims.push(Claim {
            name: l.name.clone(),
            bin: l.bin,
            centre,
            masked_by,
            bins: mine,
        });
    }
    Ok(Claims {
        samples,
        tone_halfwidth,
        owner,
        tones: tone_claims,
        lines: line_claims,
    })
}

/// Weight of bin k of an N-sample spectrum in units of one full interior bin (see the module docs).
pub fn bin_weight(k: usize, samples: usize) -> f64 {
    if k == 0 || (samples.is_multiple_of(2) && k == samples / 2) {
        0.5
    } else {
        1.0
    }
}

/// One claim measured.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Measured {
    /// Power summed over its bins, codes².
    pub raw: f64,
    /// Weight of its bins (see [`bin_weight`]).
    pub weight: f64,
    /// Noise expected under its bins: the mean noise per unit weight times `weight`, codes².
    pub expected_noise: f64,
    /// `raw − expected_noise`, codes² (may be negative).
    pub corrected: f64,
    /// True when `corrected` is no more than `expected_noise`: the claim is not distinguishable from
    /// the noise, and `raw` is an upper bound of its power.
    pub at_floor: bool,
}

impl Measured {
    pub(crate) fn of(raw: f64, weight: f64, noise_per_bin: f64) -> Measured {
        let expected_noise = noise_per_bin * weight;
        let corrected = raw - expected_noise;
        Measured {
            raw,
            weight,
            expected_noise,
            corrected,
            at_floor: corrected <= expected_noise,
        }
    }

    /// The level to report: the corrected power, or at the floor the raw power (an upper bound).
    pub fn level(&self) -> f64 {
        if self.at_floor {
            self.raw
        } else {
            self.corrected
        }
    }

    /// The corrected power, never negative: a tone's power.
    pub fn power(&self) -> f64 {
        self.corrected.max(0.0)
    }
}

/// Where the largest spur is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SpurAt {
    /// Derived line i.
    Line(usize),
    /// An unclaimed component whose peak is this noise bin.
    Bin(usize),
}

/// Every claim of a spectrum measured.
#[derive(Debug, Clone, PartialEq)]
pub struct Measurement {
    /// Mean noise power per unit bin weight, codes² (0 when there are no noise bins).
    pub noise_per_bin: f64,
    /// Noise bins the mean came from.
    pub noise_bins: usize,
    /// Total noise over 0..fs/2: the mean times N/2, the weight of the whole band, codes².
    pub noise_power: f64,
    /// The DC bins.
    pub dc: Measured,
    /// Each tone, in order.
    pub tones: Vec<Measured>,
    /// Each line, in order; `None` when masked.
    pub lines: Vec<Option<Measured>>,
    /// The largest noise bin (bin, power), if any noise bin holds power.
    pub largest_noise_bin: Option<(usize, f64)>,
    /// The largest noise bin with the noise bins within the tone half-width of it summed: (peak bin,
    /// power), the level of an unclaimed spur seen through the window.
    pub largest_noise_lobe: Option<(usize, f64)>,
}

impl Measurement {
    /// The largest spur other than DC and the tones: the line with the highest level (first in order
    /// on a tie), or the largest noise lobe when that is higher still. Returns (power, place).
    pub fn largest_spur(&self) -> Option<(f64, SpurAt)> {
        let mut worst: Option<(f64, SpurAt)> = None;
        for (i, m) in self.lines.iter().enumerate() {
            if let Some(m) = m {
                let level = m.level();
                if worst.is_none_or(|(p, _)| level > p) {
                    worst = Some((level, SpurAt::Line(i)));
                }
            }
        }
        if let Some((k, lobe)) = self.largest_noise_lobe {
            if worst.is_none_or(|(p, _)| lobe > p) {
                worst = Some((lobe, SpurAt::Bin(k)));
            }
        }
        worst
    }
}

/// The power of an unclaimed sine whose largest bin is `k`, unwindowed (tone half-width 0, the
/// coherent case). Unless the sine sits on the bin, its power spreads over the Dirichlet kernel: a
/// sine δ bins off k puts P·D²(δ) in bin k and P·D²(1 − δ) in the neighbour on its side, D(x) =
/// sin(πx)/(N·sin(πx/N)), so the peak bin alone reads up to 3.9 dB low (the rectangular window's
/// scalloping loss, Harris 1978). The ratio of the two bins, noise expectation removed, gives δ
/// exactly: r = |D(1 − δ)/D(δ)| = sin(aδ)/sin(a(1 − δ)) with a = π/N, so tan(aδ) = r·sin a/(1 +
/// r·cos a). Returned as the raw level (the noise expectation added back), as the other lobes are.
fn unwindowed_lobe(powers: &[f64], owner: &[Owner], k: usize, noise_per_bin: f64, n: usize) -> f64 {
    let excess = |j: usize| {
        (owner.get(j) == Some(&Owner::Noise)).then(|| (powers[j] - noise_per_bin).max(0.0))
    };
    let peak = powers[k] - noise_per_bin;
    if peak <= 0.0 {
        return powers[k];
    }
    let side = k
        .checked_sub(1)
        .and_then(excess)
        .unwrap_or(0.0)
        .max(excess(k + 1).unwrap_or(0.0));
    let r = (side / peak).sqrt().min(1.0);
    let a = std::f64::consts::PI / n as f64;
    let delta = (r * a.sin()).atan2(1.0 + r * a.cos()) / a;
    let d = if delta > 0.0 {
        (std::f64::consts::PI * delta).sin() / (n as f64 * (a * delta).sin())
    } else {
        1.0
    };
    noise_per_bin + peak / (d * d)
}

impl Claims {
    /// The name of an owner: "dc", a tone's or a line's name, or "noise".
    pub fn name_of(&self, owner: Owner) -> &str {
        match owner {
            Owner::Dc => "dc",
            Owner::Tone(i) => &self.tones[i as usize].name,
            Owner::Line(i) => &self.lines[i as usize].name,
            Owner::Noise => "noise",
        }
    }

    /// The name of what masks line `i`, if it is masked.
    pub fn masked_by(&self, i: usize) -> Option<&str> {
        self.lines[i].masked_by.map(|o| self.name_of(o))
    }

    /// Measures every claim on bin powers 0..=N/2 (scaled as in [`crate::dft::fft::power_spectrum`]);
    /// `powers` holds one power per bin of [`Claims::owner`].
    pub fn measure(&self, powers: &[f64]) -> Measurement {
        debug_assert_eq!(powers.len(), self.owner.len());
        let samples = self.samples;
        // One pass over the bins gathers the noise; each claim's power is then summed over its own bins
        // (ascending, as the pass would meet them). The noise bins, nearly all of them, have their weight
        // counted afterwards: sums of ones and halves are exact, so the total is the same as adding each
        // bin's weight in turn.
        let (mut noise_sum, mut noise_bins) = (0.0, 0usize);
        let mut largest = 0.0;
        let mut peak = usize::MAX;
        for (k, (&p, &o)) in powers.iter().zip(&self.owner).enumerate() {
            if o == Owner::Noise {
                noise_sum += p;
                noise_bins += 1;
                if p > largest {
                    largest = p;
                    peak = k;
                }
            }
        }
        let peak = (peak != usize::MAX).then_some(peak);
        let sum_over = |bins: &mut dyn Iterator<Item = usize>| {
            bins.fold((0.0, 0.0), |(p, w), k| {
                (p + powers[k], w + bin_weight(k, samples))
            })
        };
        let dc = sum_over(&mut (0..=self.tone_halfwidth.min(self.owner.len() - 1)));
        // Bin 0 is always DC's; the one other half-weight bin is N/2 of an even N.
        let nyquist_is_noise =
            samples.is_multiple_of(2) && self.owner.last() == Some(&Owner::Noise);
        let noise_w = noise_bins as f64 - if nyquist_is_noise { 0.5 } else { 0.0 };
        let noise_per_bin = if noise_w > 0.0 {
            noise_sum / noise_w
        } else {
            0.0
        };
        let largest_noise_lobe = peak.map(|k| {
            if self.tone_halfwidth == 0 {
                return (
                    k,
                    unwindowed_lobe(powers, &self.owner, k, noise_per_bin, samples),
                );
            }
            let lo = k.saturating_sub(self.tone_halfwidth);
            let hi = (k + self.tone_halfwidth).min(powers.len() - 1);
            let lobe: f64 = (lo..=hi)
                .filter(|&j| self.owner[j] == Owner::Noise)
                .map(|j| powers[j])
                .sum();
            (k, lobe)
        });
        Measurement {
            noise_per_bin,
            noise_bins,
            noise_power: noise_per_bin * samples as f64 / 2.0,
            dc: Measured::of(dc.0, dc.1, noise_per_bin),
            tones: self
                .tones
                .iter()
                .map(|c| {
                    let (p, w) = sum_over(&mut c.bins.iter().copied());
                    Measured::of(p, w, noise_per_bin)
                })
                .collect(),
            lines: self
                .lines
                .iter()
                .map(|c| {
                    c.masked_by.is_none().then(|| {
                        let (p, w) = sum_over(&mut c.bins.iter().copied());
                        Measured::of(p, w, noise_per_bin)
                    })
                })
                .collect(),
            largest_noise_bin: peak.map(|k| (k, largest)),
            largest_noise_lobe,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::freq::fold_bin;
    use rand::{Rng, SeedableRng};

    fn places(prefix: &str, bins: &[f64]) -> Vec<Place> {
        bins.iter()
            .enumerate()
            .map(|(i, &b)| Place::new(format!("{prefix}{i}"), b))
            .collect()
    }

    /// Slow, obviously correct reference of the claiming rule: the owner of bin k is the first claimant,
    /// in the order DC, tones, lines, that is active and whose bins (centre ± half) hold k; a line is
    /// active when no earlier claimant owns its centre bin. Checked bin by bin, with no shared state.
    fn reference_owner(
        samples: usize,
        half: usize,
        tones: &[Place],
        lines: &[Place],
        k: usize,
    ) -> Owner {
        let last = samples / 2;
        let centre = |b: f64| (b.round().max(0.0) as usize).min(last);
        let covers = |c: usize, k: usize| k + half >= c && k <= c + half;
        if k <= half {
            return Owner::Dc;
        }
        for (i, t) in tones.iter().enumerate() {
            if covers(centre(t.bin), k) {
                return Owner::Tone(i as u16);
            }
        }
        for (i, l) in lines.iter().enumerate() {
            let c = centre(l.bin);
            let active = reference_owner(samples, half, tones, &lines[..i], c) == Owner::Noise;
            if active && covers(c, k) {
                return Owner::Line(i as u16);
            }
        }
        Owner::Noise
    }

    /// Slow reference of the measurement: each sum taken directly over the bins of one owner.
    fn reference_sum(powers: &[f64], owner: &[Owner], samples: usize, who: Owner) -> (f64, f64) {
        let mut acc = (0.0, 0.0);
        for k in 0..powers.len() {
            if owner[k] == who {
                acc.0 += powers[k];
                acc.1 += bin_weight(k, samples);
            }
        }
        acc
    }

    // Random tones, lines and powers with a fixed seed: the engine agrees bin by bin with the
    // reference rule above, and every measured figure with the direct sums and the definitions of the
    // module docs.
    #[test]
    fn agrees_with_a_claim_by_loop_reference() {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(12);
        let mut cases = 0;
        while cases < 300 {
            let samples = rng.gen_range(16..400usize);
            let last = samples / 2;
            let half = rng.gen_range(0..5usize);
            let tones = places(
                "t",
                &(0..rng.gen_range(1..4))
                    .map(|_| rng.gen_range(0.0..last as f64))
                    .collect::<Vec<_>>(),
            );
            let lines = places(
                "l",
                &(0..rng.gen_range(0..14))
                    .map(|_| fold_bin(rng.gen_range(-2.0..3.0) * samples as f64, samples))
                    .collect::<Vec<_>>(),
            );
            let Ok(c) = claim(samples, half, &tones, &lines) else {
                continue;
            };
            cases += 1;
            for k in 0..=last {
                assert_eq!(
                    c.owner[k],
                    reference_owner(samples, half, &tones, &lines, k),
                    "bin {k}, N {samples}, half {half}, {tones:?}, {lines:?}"
                );
            }
            let powers: Vec<f64> = (0..=last).map(|_| rng.gen_range(0.0..10.0)).collect();
            let m = c.measure(&powers);
            let (ns, nw) = reference_sum(&powers, &c.owner, samples, Owner::Noise);
            let mean = if nw > 0.0 { ns / nw } else { 0.0 };
            assert!((m.noise_per_bin - mean).abs() <= 1e-12 * mean.abs().max(1.0));
            assert_eq!(
                m.noise_bins,
                c.owner.iter().filter(|o| **o == Owner::Noise).count()
            );
            let check = |got: &Measured, who: Owner| {
                let (raw, w) = reference_sum(&powers, &c.owner, samples, who);
                let expected = mean * w;
                assert!((got.raw - raw).abs() <= 1e-12 * raw.max(1.0), "{who:?}");
                assert!((got.weight - w).abs() <= 1e-12, "{who:?}");
                assert!((got.expected_noise - expected).abs() <= 1e-9, "{who:?}");
                assert_eq!(got.at_floor, raw - expected <= expected, "{who:?}");
            };
            check(&m.dc, Owner::Dc);
            for (i, t) in m.tones.iter().enumerate() {
                check(t, Owner::Tone(i as u16));
            }
            for (i, l) in m.lines.iter().enumerate() {
                match l {
                    Some(l) => check(l, Owner::Line(i as u16)),
                    None => {
                        assert!(c.lines[i].masked_by.is_some());
                        assert!(c.lines[i].bins.is_empty());
                    }
                }
            }
            // A bin is never counted twice: the claims' bins and the noise bins partition 0..=N/2.
            let mut seen = vec![false; last + 1];
            for cl in c.tones.iter().chain(&c.lines) {
                for &b in &cl.bins {
                    assert!(!seen[b]);
                    seen[b] = true;
                }
            }
            let dc_bins = (half + 1).min(last + 1);
            assert_eq!(
                seen.iter().filter(|s| **s).count() + m.noise_bins + dc_bins,
                last + 1
            );
            // The largest noise bin, found by a plain scan.
            let best = (0..=last)
                .filter(|&k| c.owner[k] == Owner::Noise && powers[k] > 0.0)
                .max_by(|&a, &b| powers[a].total_cmp(&powers[b]).then(b.cmp(&a)));
            assert_eq!(m.largest_noise_bin.map(|x| x.0), best);
        }
    }

    // A tone among the DC bins and two tones whose bins meet are errors, not silent claims.
    #[test]
    fn tones_in_dc_or_on_each_other_are_errors() {
        let e = claim(1024, 3, &places("t", &[2.6]), &[]).unwrap_err();
        assert!(matches!(e, ClaimError::ToneInDc { .. }), "{e:?}");
        assert_eq!(e.to_error("hann").kind, ErrorKind::ToneAtEdge);
        assert!(e
            .to_error("hann")
            .expected
            .contains("a tone outside the DC bins"));
        let e = claim(1024, 3, &places("t", &[100.0, 106.0]), &[]).unwrap_err();
        assert!(matches!(e, ClaimError::TonesOverlap { .. }), "{e:?}");
        // Seven bins apart with ±3: they touch no common bin.
        assert!(claim(1024, 3, &places("t", &[100.0, 107.0]), &[]).is_ok());
    }

    // White noise of 1 code² per unit weight with a tone at bin 5 and two lines; the line at the
    // floor reports its raw power (module docs), the one above it the corrected power.
    #[test]
    fn levels_follow_the_floor_rule() {
        let n = 64;
        let c = claim(
            n,
            0,
            &[Place::new("f", 5.0)],
            &[Place::new("a", 10.0), Place::new("b", 15.0)],
        )
        .unwrap();
        let mut p = vec![1.0; n / 2 + 1];
        p[0] = 0.5;
        p[n / 2] = 0.5;
        p[5] = 1001.0;
        p[10] = 1.5;
        p[15] = 11.0;
        let m = c.measure(&p);
        assert!((m.noise_per_bin - 1.0).abs() < 1e-12);
        assert!((m.noise_power - 32.0).abs() < 1e-12);
        assert!((m.tones[0].power() - 1000.0).abs() < 1e-9);
        let a = m.lines[0].unwrap();
        assert!(a.at_floor && a.level() == 1.5);
        let b = m.lines[1].unwrap();
        assert!(!b.at_floor && (b.level() - 10.0).abs() < 1e-12);
        assert_eq!(m.largest_spur().map(|s| s.1), Some(SpurAt::Line(1)));
        assert_eq!(c.name_of(Owner::Tone(0)), "f");
    }
}
