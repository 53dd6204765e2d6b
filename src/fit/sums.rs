//! Fast per-sample sums over cos/sin of a sine model: an 8-lane rotation recurrence, re-seeded every
//! block so that drift stays near 1e-13 of the amplitude, with a phase reduction exact enough for 32-bit
//! records of 2^24 samples.

use std::f64::consts::TAU;

/// Samples between exact re-seeds of the recurrence.
pub(crate) const BLOCK: usize = 1024;
/// Independent lanes: breaks the dependency chain of the rotation and of the accumulators.
pub(crate) const LANES: usize = 8;

/// Frequency of a sine model in cycles per sample, with the time origin at `centre` samples.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Phasor {
    /// Cycles per sample (f / fs).
    pub cycles_per_sample: f64,
    /// Time origin in samples; the model is evaluated at t = n − centre.
    pub centre: f64,
}

impl Phasor {
    /// Phase in cycles, reduced to [0, 1), of sample n, computed with an error-free product so that the
    /// reduction keeps full precision however large f·t is.
    #[inline]
    pub fn cycles_at(&self, n: f64) -> f64 {
        reduced_product(self.cycles_per_sample, n - self.centre)
    }

    /// cos and sin of the model phase at sample n, exact to rounding.
    #[inline]
    pub fn cos_sin_at(&self, n: usize) -> (f64, f64) {
        let (s, c) = (TAU * self.cycles_at(n as f64)).sin_cos();
        (c, s)
    }
}

/// frac(a·b) with the rounding error of the product folded back in (two-product by FMA).
#[inline]
pub(crate) fn reduced_product(a: f64, b: f64) -> f64 {
    let p = a * b;
    let e = a.mul_add(b, -p);
    let f = (p - p.floor()) + e;
    f - f.floor()
}

/// Offsets of the lanes within a group, as floats.
pub(crate) const LANE_OFFSETS: [f64; LANES] = [0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0];

/// Calls `$inner($args)` (an `#[inline(always)]` function) compiled for the widest vector unit the CPU
/// has, found at run time: the eight lanes fill one AVX-512 register or two AVX2 registers instead of
/// four SSE2 ones. Only the vector width changes, never the order of the operations (Rust does not fuse
/// a·b + c into an FMA unless told), so every path gives bit-identical results.
macro_rules! wide_vectors {
    ($inner:ident [$($g:tt)*] ($($arg:ident : $ty:ty),*) -> $ret:ty) => {{
        #[cfg(target_arch = "x86_64")]
        {
            #[target_feature(enable = "avx512f")]
            unsafe fn avx512<$($g)*>($($arg: $ty),*) -> $ret {
                $inner($($arg),*)
            }
            #[target_feature(enable = "avx2")]
            unsafe fn avx2<$($g)*>($($arg: $ty),*) -> $ret {
                $inner($($arg),*)
            }
            if std::arch::is_x86_feature_detected!("avx512f") {
                // SAFETY: the CPU has just been seen to support AVX-512F.
                return unsafe { avx512($($arg),*) };
            }
            if std::arch::is_x86_feature_detected!("avx2") {
                // SAFETY: the CPU has just been seen to support AVX2.
                return unsafe { avx2($($arg),*) };
            }
        }
        $inner($($arg),*)
    }};
}
pub(crate) use wide_vectors;
/// What a pass accumulates: sums kept per lane (so they vectorise), reduced in a fixed order at the end.
/// A trait rather than a closure: its methods are inlined into the vector-width variants of the pass.
pub(crate) trait Accumulator {
    /// Adds a full group: samples with t = t0 + j (t = n − centre), values y, model cos/sin c, s.
    fn add(&mut self, t0: f64, y: &[f64; LANES], c: &[f64; LANES], s: &[f64; LANES]);
    /// Adds a single sample (the last partial group).
    fn add_one(&mut self, t: f64, y: f64, c: f64, s: f64);
}

/// One pass over `y` into `acc`, in sample order: groups of LANES consecutive samples whose model cos
/// and sin come from LANES independent rotations by LANES·ω (which the compiler turns into vector
/// code), re-seeded exactly every BLOCK samples. The record's last group may be partial.
pub(crate) fn accumulate_into<A: Accumulator>(y: &[f64], phasor: Phasor, acc: &mut A) {
    wide_vectors!(pass [A: Accumulator] (y: &[f64], phasor: Phasor, acc: &mut A) -> ())
}

#[inline(always)]
fn pass<A: Accumulator>(y: &[f64], phasor: Phasor, acc: &mut A) {
    let samples = y.len();
    let (ss, cs) = (TAU * reduced_product(phasor.cycles_per_sample, LANES as f64)).sin_cos();
    let mut block_start = 0;
    while block_start < samples {
        let block_end = (block_start + BLOCK).min(samples);
        let mut c = [0.0; LANES];
        let mut s = [0.0; LANES];
        for j in 0..LANES {
            (c[j], s[j]) = phasor.cos_sin_at(block_start + j);
        }
        let mut n = block_start;
        while n < block_end {
            let t0 = n as f64 - phasor.centre;
            if n + LANES <= block_end {
                let yy: &[f64; LANES] = y[n..n + LANES].try_into().expect("group of LANES");
                acc.add(t0, yy, &c, &s);
            } else {
                for j in 0..block_end - n {
                    acc.add_one(t0 + j as f64, y[n + j], c[j], s[j]);
                }
            }
            for j in 0..LANES {
                let c2 = c[j] * cs - s[j] * ss;
                s[j] = s[j] * cs + c[j] * ss;
                c[j] = c2;
            }
            n += LANES;
        }
        block_start = block_end;
    }
}

/// Lanes of the register-resident passes ([`data_sums`], the residual pass): two groups of LANES, so
/// that two independent rotations hide the latency of the rotation's multiply-and-add chain.
pub(crate) const WIDE: usize = 2 * LANES;

/// cos and sin of the model at samples n0 .. n0 + WIDE: one exact evaluation, then rotations by ω
/// (each adds about an ulp, so the last lane is within ~1e-15 of exact).
#[inline(always)]
pub(crate) fn seed_wide(phasor: Phasor, n0: usize) -> ([f64; WIDE], [f64; WIDE]) {
    let mut c = [0.0; WIDE];
    let mut s = [0.0; WIDE];
    (c[0], s[0]) = phasor.cos_sin_at(n0);
    let (s1, c1) = (TAU * phasor.cycles_per_sample).sin_cos();
    for j in 1..WIDE {
        c[j] = c[j - 1] * c1 - s[j - 1] * s1;
        s[j] = s[j - 1] * c1 + c[j - 1] * s1;
    }
    (c, s)
}

/// Folds WIDE lanes into LANES lanes in a fixed order, for [`total`].
#[inline(always)]
pub(crate) fn fold_wide(v: &[f64; WIDE]) -> [f64; LANES] {
    std::array::from_fn(|j| v[j] + v[j + LANES])
}

/// The data sums of a fit pass over `y` at `phasor`: [Σy, Σy·cos, Σy·sin, Σt·y·cos, Σt·y·sin]. Its accumulators stay in
/// registers.
pub(crate) fn data_sums(y: &[f64], phasor: Phasor) -> [f64; 5] {
    wide_vectors!(data_sums_in [] (y: &[f64], phasor: Phasor) -> [f64; 5])
}

#[inline(always)]
fn data_sums_in(y: &[f64], phasor: Phasor) -> [f64; 5] {
    let samples = y.len();
    let (ss, cs) = (TAU * reduced_product(phasor.cycles_per_sample, WIDE as f64)).sin_cos();
    let mut acc = [[0.0; WIDE]; 5];
    let full = samples - samples % WIDE;
    let mut block_start = 0;
    while block_start < full {
        let block_end = (block_start + BLOCK).min(full);
        let (mut c, mut s) = seed_wide(phasor, block_start);
        let mut t: [f64; WIDE] = std::array::from_fn(|j| (block_start + j) as f64 - phasor.centre);
        for chunk in y[block_start..block_end].chunks_exact(WIDE) {
            for j in 0..WIDE {
                let yj = chunk[j];
                let ty = t[j] * yj;
                acc[0][j] += yj;
                acc[1][j] += yj * c[j];
                acc[2][j] += yj * s[j];
                acc[3][j] += ty * c[j];
                acc[4][j] += ty * s[j];
                let c2 = c[j] * cs - s[j] * ss;
                s[j] = s[j] * cs + c[j] * ss;
                c[j] = c2;
                t[j] += WIDE as f64;
            }
        }
        block_start = block_end;
    }
    for (n, &yj) in y.iter().enumerate().skip(full) {
        let (c, s) = phasor.cos_sin_at(n);
        let t = n as f64 - phasor.centre;
        acc[0][0] += yj;
        acc[1][0] += yj * c;
        acc[2][0] += yj * s;
        acc[3][0] += t * yj * c;
        acc[4][0] += t * yj * s;
    }
    acc.map(|a| total(&fold_wide(&a)))
}

/// Sum of the lanes in a fixed (pairwise) order: the result does not depend on anything but the input.
#[inline]
pub(crate) fn total(v: &[f64; LANES]) -> f64 {
    ((v[0] + v[4]) + (v[2] + v[6])) + ((v[1] + v[5]) + (v[3] + v[7]))
}

#[cfg(test)]
mod tests {
    use super::*;

    // Slow, obvious reference: sin_cos per sample. The grouped recurrence must agree to 1e-12 and visit
    // every sample exactly once, for lengths that are not multiples of the block or of the lanes.
    #[test]
    fn recurrence_matches_direct_evaluation() {
        struct Check {
            ph: Phasor,
            seen: Vec<u8>,
            worst: f64,
        }
        impl Check {
            fn one(&mut self, t: f64, c: f64, s: f64) {
                let n = (t + self.ph.centre).round() as usize;
                let (c0, s0) = self.ph.cos_sin_at(n);
                self.worst = self.worst.max((c - c0).abs()).max((s - s0).abs());
                self.seen[n] += 1;
            }
        }
        impl Accumulator for Check {
            fn add(&mut self, t0: f64, _y: &[f64; LANES], c: &[f64; LANES], s: &[f64; LANES]) {
                for j in 0..LANES {
                    self.one(t0 + j as f64, c[j], s[j]);
                }
            }
            fn add_one(&mut self, t: f64, _y: f64, c: f64, s: f64) {
                self.one(t, c, s);
            }
        }
        for &(n, f) in &[(1000usize, 0.0123), (4099, 0.4567), (65536 + 13, 0.1234567)] {
            let ph = Phasor {
                cycles_per_sample: f,
                centre: (n as f64 - 1.0) / 2.0,
            };
            let mut check = Check {
                ph,
                seen: vec![0u8; n],
                worst: 0.0,
            };
            accumulate_into(&vec![0.0; n], ph, &mut check);
            assert!(check.seen.iter().all(|&k| k == 1), "n={n}");
            assert!(check.worst < 1e-12, "n={n} worst={}", check.worst);
        }
    }

    /// The data sums compiled for one vector unit, as `wide_vectors!` compiles them.
    #[cfg(target_arch = "x86_64")]
    fn data_sums_for(feature: &str, y: &[f64], ph: Phasor) -> Option<[f64; 5]> {
        #[target_feature(enable = "avx512f")]
        unsafe fn avx512(y: &[f64], ph: Phasor) -> [f64; 5] {
            data_sums_in(y, ph)
        }
        #[target_feature(enable = "avx2")]
        unsafe fn avx2(y: &[f64], ph: Phasor) -> [f64; 5] {
            data_sums_in(y, ph)
        }
        match feature {
            // SAFETY: each is called only when the CPU has just been seen to support it.
            "avx512f" if std::arch::is_x86_feature_detected!("avx512f") => {
                Some(unsafe { avx512(y, ph) })
            }
            "avx2" if std::arch::is_x86_feature_detected!("avx2") => Some(unsafe { avx2(y, ph) }),
            _ => None,
        }
    }

    #[cfg(not(target_arch = "x86_64"))]
    fn data_sums_for(_feature: &str, _y: &[f64], _ph: Phasor) -> Option<[f64; 5]> {
        None
    }

    // Each vector-width variant runs the same operations in the same order as the plain build, so its
    // sums must be bit-identical to it (the plain `data_sums_in`, called directly, is compiled for the
    // baseline target), for lengths that are not multiples of the lanes or of the block. A variant
    // this CPU cannot run is not compared: the test says so on stderr (past the test harness's
    // capture), and fails when SPURLINE_REQUIRE_SIMD names it (`.ci/run` sets `avx2`).
    #[test]
    fn wide_vectors_give_bit_identical_sums() {
        use std::io::Write as _;
        let required = std::env::var("SPURLINE_REQUIRE_SIMD").unwrap_or_default();
        for feature in ["avx2", "avx512f"] {
            let mut compared = 0;
            for &(n, f) in &[(1000usize, 0.0123), (4099, 0.4567), (65536 + 13, 0.1234567)] {
                let y: Vec<f64> = (0..n)
                    .map(|i| ((i * 7919 % 2003) as f64) - 1000.0)
                    .collect();
                let ph = Phasor {
                    cycles_per_sample: f,
                    centre: (n as f64 - 1.0) / 2.0,
                };
                let Some(wide) = data_sums_for(feature, &y, ph) else {
                    break;
                };
                let plain = data_sums_in(&y, ph);
                assert!(
                    plain
                        .iter()
                        .zip(&wide)
                        .all(|(a, b)| a.to_bits() == b.to_bits()),
                    "{feature}, n={n}: {plain:?} vs {wide:?}"
                );
                compared += 1;
            }
            if compared == 0 {
                assert!(
                    !required.split([',', ' ']).any(|r| r == feature),
                    "SPURLINE_REQUIRE_SIMD names {feature}, which this CPU does not have: the \
                     {feature} sums were not compared"
                );
                let _ = writeln!(
                    std::io::stderr(),
                    "SKIPPED wide_vectors_give_bit_identical_sums for {feature}: this CPU does not \
                     have it, so its sums were not compared"
                );
            }
        }
    }

    // The reduced phase must stay exact when f·t is large (2^24 samples): compare with exact
    // rational arithmetic on a frequency that is a dyadic fraction (exactly representable).
    #[test]
    fn phase_reduction_is_exact_for_long_records() {
        let f = 1234567.0 / 16777216.0; // exact in f64
        let n = 16_000_001.0_f64;
        let exact = ((1234567u128 * 16_000_001u128) % 16777216u128) as f64 / 16777216.0;
        assert!((reduced_product(f, n) - exact).abs() < 1e-15);
    }
}
