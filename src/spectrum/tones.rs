//! Bin claiming: who owns each bin of the one-sided spectrum (DC, the fundamental, a harmonic, or noise),
//! with harmonics folded into the first Nyquist zone.

use crate::freq::fold_bin;
use serde::Serialize;

/// Owner of a spectrum bin.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Owner {
    /// The DC span.
    Dc,
    /// The fundamental's span.
    Fundamental,
    /// The span of harmonic `order` (u16: with one owner per bin, a 2^24-sample record's owners take
    /// 32 MB rather than 64 MB).
    Harmonic(u16),
    /// Everything else: noise, among which spurs are searched.
    Noise,
}

/// One harmonic's place in the spectrum.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicSlot {
    /// Harmonic order (2..=H).
    pub order: u32,
    /// Folded location in (fractional) bins, 0..=N/2.
    pub bin: f64,
    /// What hides it, when it lands on a span already claimed: "dc", "fundamental" or "harmonic K".
    pub masked_by: Option<String>,
    /// The bins it owns (empty when masked).
    pub bins: Vec<usize>,
}

/// The result of claiming: an owner per bin and the harmonic slots.
#[derive(Debug, Clone, PartialEq)]
pub struct Claims {
    /// Owner of each bin 0..=N/2.
    pub owner: Vec<Owner>,
    /// Half-width of the DC, fundamental and harmonic spans, in bins.
    pub tone_halfwidth: usize,
    /// Centre bin of the fundamental.
    pub fundamental_bin: usize,
    /// Harmonics 2..=H in order.
    pub harmonics: Vec<HarmonicSlot>,
}

/// Claims bins in the order DC, fundamental, harmonics 2..=`harmonics`; a bin is never claimed twice.
///
/// `tone_bin` is the fundamental's fractional bin (fitted cycles), `tone_halfwidth` the half-width of every
/// span. A harmonic whose centre bin is already owned is masked and owns nothing.
pub fn claim_bins(samples: usize, tone_bin: f64, harmonics: u32, tone_halfwidth: usize) -> Claims {
    // Orders are kept as u16 in the owners (the settings allow up to 100).
    let harmonics = harmonics.min(u16::MAX as u32);
    let bins = samples / 2 + 1;
    let last = bins - 1;
    let mut owner = vec![Owner::Noise; bins];
    for o in owner.iter_mut().take((tone_halfwidth + 1).min(bins)) {
        *o = Owner::Dc;
    }
    let fundamental_bin = (tone_bin.round().max(0.0) as usize).min(last);
    let span =
        |centre: usize| centre.saturating_sub(tone_halfwidth)..=(centre + tone_halfwidth).min(last);
    for k in span(fundamental_bin) {
        if owner[k] == Owner::Noise {
            owner[k] = Owner::Fundamental;
        }
    }
    let mut slots = Vec::new();
    for order in 2..=harmonics {
        let bin = fold_bin(order as f64 * tone_bin, samples);
        let centre = (bin.round() as usize).min(last);
        let masked_by = match owner[centre] {
            Owner::Dc => Some("dc".to_string()),
            Owner::Fundamental => Some("fundamental".to_string()),
            Owner::Harmonic(k) => Some(format!("harmonic {k}")),
            Owner::Noise => None,
        };
        let mut mine = Vec::new();
        if masked_by.is_none() {
            for k in span(centre) {
                if owner[k] == Owner::Noise {
                    owner[k] = Owner::Harmonic(order as u16);
                    mine.push(k);
                }
            }
        }
        slots.push(HarmonicSlot {
            order,
            bin,
            masked_by,
            bins: mine,
        });
    }
    Claims {
        owner,
        tone_halfwidth,
        fundamental_bin,
        harmonics: slots,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // fin = fs/4: H2 lands on Nyquist, H3 folds onto the fundamental, H4 onto DC (common practice).
    #[test]
    fn quarter_rate_masks_harmonics() {
        let c = claim_bins(1024, 256.0, 5, 0);
        let h = |o: u32| c.harmonics.iter().find(|s| s.order == o).unwrap();
        assert_eq!(h(2).bin, 512.0);
        assert!(h(2).masked_by.is_none());
        assert_eq!(h(3).masked_by.as_deref(), Some("fundamental"));
        assert_eq!(h(4).masked_by.as_deref(), Some("dc"));
        assert_eq!(h(5).masked_by.as_deref(), Some("fundamental"));
        // A bin is never counted twice.
        let owned: usize = c.harmonics.iter().map(|s| s.bins.len()).sum();
        assert_eq!(owned, 1);
    }

    #[test]
    fn spans_do_not_overlap() {
        let c = claim_bins(4096, 100.3, 10, 5);
        let mut seen = std::collections::HashSet::new();
        for s in &c.harmonics {
            for b in &s.bins {
                assert!(seen.insert(*b));
                assert_eq!(c.owner[*b], Owner::Harmonic(s.order as u16));
            }
        }
        assert_eq!(c.owner[100], Owner::Fundamental);
        assert_eq!(c.owner[5], Owner::Dc);
        assert_eq!(c.owner[6], Owner::Noise);
    }
}
