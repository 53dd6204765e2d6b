//! The one coherence decision: whether a tone holds a whole number of cycles in the record, from its
//! fitted cycle count and, for small offsets, the unwindowed spectrum. The single-tone, two-tone and
//! interleaving analyses all decide through [`decide`].

use crate::dft::fft::power_spectrum;
use serde::Serialize;

/// Coherence tolerance in standard deviations of the fitted cycle count.
pub const COHERENCE_SIGMAS: f64 = 4.0;

/// Fit offsets below this (cycles) are checked against the unwindowed spectrum before the tone is
/// called non-coherent: strong low-order harmonics pull a sine fit's frequency by up to ~1e-4 cycles on
/// short records, because the frequency column of the fit is not orthogonal to them.
pub const SPECTRAL_CHECK_CYCLES: f64 = 0.01;

/// Whether a tone is coherent, and how that was decided.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Coherence {
    /// True when the cycle count is an integer within the tolerance.
    pub coherent: bool,
    /// Fitted cycles in the record.
    pub cycles: f64,
    /// Distance from the nearest integer, cycles.
    pub offset_cycles: f64,
    /// The tolerance used: 4σ of the fitted cycle count (at least 1e-9 cycles).
    pub tolerance_cycles: f64,
    /// How it was decided: "fit" (cycle count within tolerance, or clearly off an integer) or
    /// "spectrum" (a fit offset below 0.01 cycles that the unwindowed spectrum shows to be a fit bias).
    pub decided_by: &'static str,
}

/// Where the unwindowed spectrum of the spectral check comes from.
#[derive(Debug, Clone, Copy)]
pub enum Unwindowed<'a> {
    /// The record itself: its unwindowed power spectrum is taken only when the check needs it.
    Record(&'a [f64]),
    /// The unwindowed power spectrum (bins 0..=N/2, as [`power_spectrum`] gives it), already at hand.
    Spectrum(&'a [f64]),
}

/// Decides whether a tone of `cycles` fitted cycles (one-sigma `cycles_std`) is coherent.
///
/// Coherent when the cycle count is within 4σ of an integer (at least 1e-9 cycles). An offset beyond
/// that but below [`SPECTRAL_CHECK_CYCLES`] is checked against the unwindowed spectrum: a tone really δ
/// cycles off an integer leaks about (δ/(j − δ))²·P into the bin j bins from its own (rectangular
/// window, |sinc|²); when the nearest usable bins on each side hold less than a tenth of that, the
/// offset is a fit bias and the tone is coherent. Equivalent to [`decide_with`] with no harmonics.
pub fn decide(cycles: f64, cycles_std: f64, unwindowed: Unwindowed) -> Coherence {
    decide_with(cycles, cycles_std, unwindowed, 0)
}

/// Bins searched on each side of the tone for one the spectral check can read.
const CHECK_REACH_BINS: usize = 32;

/// [`decide`] for a tone whose harmonics 2..=`harmonics` may be strong: the check skips the bins they
/// fold onto (a harmonic beside the tone, as H2 of a one-cycle tone is, would read as leakage), DC, and
/// the Nyquist bin of an even N (the tone's image lands there, and a real record's bin is real, so the
/// two leakages can cancel), and reads the nearest bin left on each side. Edges never skip the check:
/// a tone one bin from DC or from Nyquist is read on its one open side.
pub fn decide_with(
    cycles: f64,
    cycles_std: f64,
    unwindowed: Unwindowed,
    harmonics: u32,
) -> Coherence {
    let offset = cycles - cycles.round();
    let tol = (COHERENCE_SIGMAS * cycles_std).max(1e-9);
    let mut c = Coherence {
        coherent: offset.abs() <= tol,
        cycles,
        offset_cycles: offset,
        tolerance_cycles: tol,
        decided_by: "fit",
    };
    // N/2 is the last bin of the one-sided spectrum, for odd and even N alike.
    let (last, n) = match unwindowed {
        Unwindowed::Record(r) => (r.len() / 2, r.len()),
        Unwindowed::Spectrum(p) => {
            let last = p.len().saturating_sub(1);
            // The length is needed only to fold harmonics; a spectrum does not tell an odd length
            // from the even one below it, and the even one is taken.
            (last, 2 * last)
        }
    };
    let k0 = cycles.round() as usize;
    if c.coherent || offset.abs() > SPECTRAL_CHECK_CYCLES || k0 == 0 || k0 >= last {
        return c;
    }
    let harmonic_bins: Vec<usize> = (2..=harmonics.min(64))
        .map(|h| crate::freq::fold_bin(h as f64 * k0 as f64, n).round() as usize)
        .collect();
    let usable = |k: usize| k >= 1 && k < last && k != k0 && !harmonic_bins.contains(&k);
    let below = (1..=CHECK_REACH_BINS.min(k0))
        .map(|j| k0 - j)
        .find(|&k| usable(k));
    let above = (1..=CHECK_REACH_BINS)
        .map(|j| k0 + j)
        .take_while(|&k| k < last)
        .find(|&k| usable(k));
    if below.is_none() && above.is_none() {
        return c;
    }
    let taken;
    let p = match unwindowed {
        Unwindowed::Record(r) => {
            taken = power_spectrum(r, &[]);
            &taken[..]
        }
        Unwindowed::Spectrum(p) => p,
    };
    // Leakage of a tone δ bins off centre into the bin j bins away (j signed), relative to the centre
    // bin's power: (δ/(j − δ))² (the rectangular window's Dirichlet kernel, to first order in δ;
    // Harris 1978).
    let share = |k: usize| {
        let j = k as f64 - k0 as f64;
        (offset / (j - offset)).powi(2)
    };
    let (mut predicted, mut measured) = (0.0, 0.0);
    for k in below.into_iter().chain(above) {
        predicted += p[k0] * share(k);
        measured += p[k];
    }
    if measured < 0.1 * predicted {
        c.coherent = true;
        c.decided_by = "spectrum";
    }
    c
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::TAU;

    fn tone(n: usize, cycles: f64) -> Vec<f64> {
        (0..n)
            .map(|i| 1000.0 * (TAU * cycles * i as f64 / n as f64 + 0.3).cos())
            .collect()
    }

    // A fit offset of 1e-4 cycles with a tiny σ: the fit alone says non-coherent; the unwindowed
    // spectrum of an exactly coherent tone has (near) nothing in the neighbour bins, so the spectrum
    // overrides it; a tone really 1e-3 cycles off leaks δ²·P into them (rectangular-window kernel
    // |sinc|², common practice, no source) and stays non-coherent. Both entry points agree.
    #[test]
    fn spectral_check_tells_a_fit_bias_from_a_real_offset() {
        let n = 1024;
        let exact = tone(n, 101.0);
        for u in [
            Unwindowed::Record(&exact),
            Unwindowed::Spectrum(&power_spectrum(&exact, &[])),
        ] {
            let c = decide(101.0 + 1e-4, 1e-7, u);
            assert!(c.coherent && c.decided_by == "spectrum", "{c:?}");
        }
        let off = tone(n, 101.001);
        let c = decide(101.001, 1e-7, Unwindowed::Record(&off));
        assert!(!c.coherent && c.decided_by == "fit", "{c:?}");
        // Within 4σ the fit decides on its own; beyond 0.01 cycles no check is made.
        assert_eq!(
            decide(101.0 + 1e-4, 1e-4, Unwindowed::Record(&off)).decided_by,
            "fit"
        );
        assert!(!decide(101.02, 1e-7, Unwindowed::Record(&exact)).coherent);
    }
}
