//! Every tolerance used by the integration tests, in one place, each with its justification.

/// dB agreement between the spectral figures and the exact time-domain error power of the same record:
/// the only differences are the noise hidden under claimed spans (estimated from the mean noise bin) and
/// rounding, which stay well below 0.01 dB for 4096+ point records.
pub const SELF_CONSISTENCY_DB: f64 = 0.02;

/// dB agreement with a handbook figure that holds on average over records (6.02N + 1.76, −SNR −
/// 10·log10(N/2)): one record's quantisation-noise power differs from q²/12 by a few percent
/// (about ±0.1 dB at 4096 points, more for low resolutions where the error is less uniform).
pub const HANDBOOK_DB: f64 = 0.25;

/// ENOB agreement with a handbook figure: HANDBOOK_DB / 6.02 rounded up.
pub const HANDBOOK_BITS: f64 = 0.05;

/// dB agreement of a recovered harmonic with the level put in, on a coherent high-resolution record
/// where the harmonic is 40+ dB above the noise in its bin (noise bias below 0.01 dB plus the
/// quantiser's own harmonic content).
pub const HARMONIC_DB: f64 = 0.05;

/// dB agreement of windowed, non-coherent figures with the coherent figures of the same converter:
/// the window's leakage bias (kept below 0.1 dB by the window rule) plus record-to-record noise.
pub const WINDOWED_DB: f64 = 0.3;

/// Relative agreement of the fit's residual rms with q/√12 on a 65536-point ideal record: the
/// quantisation error is close to uniform, whose mean square over N samples has a relative standard
/// deviation of √(0.8/N) (0.35 % at 65536, so 0.17 % on the rms); 1 % is about 6 σ.
pub const QUANT_NOISE_REL: f64 = 0.01;

/// A figure printed to two decimals (Harris 1978's 3.92 dB scalloping loss): half a unit of the last
/// printed decimal.
pub const PRINTED_2DP_DB: f64 = 0.005;

/// Relative agreement of the four-parameter fit with scipy's least_squares on the same stored record:
/// both stop at the least-squares minimum to about 1e-13 (the script records one more Gauss-Newton step
/// from scipy's solution, below 1e-13 of the parameters), so 1e-9 leaves room for rounding only.
pub const FIT_REF_REL: f64 = 1e-9;

/// Monte-Carlo trials per SNR for the Cramér-Rao check.
pub const CRB_TRIALS: usize = 1000;

/// Relative agreement of the fitted frequency's sample variance with the Cramér-Rao bound: the sample
/// variance of M Gaussian errors has a relative standard deviation of √(2/(M−1)) = 4.5 % at M = 1000,
/// so 25 % is about 5.6 σ (the fit is asymptotically efficient: at N = 1024 and 40 dB SNR its excess
/// over the bound is well under 1 %).
pub const CRB_VARIANCE_REL: f64 = 0.25;

/// dB agreement of the pipeline with its numpy re-implementation (tests/reference/make_pipeline_refs.py)
/// on the same stored records: the same conventions leave only FFT rounding (about 1e-13 relative) and
/// the two fits' convergence (cycles within 1e-9), well under 1e-6 dB; 0.02 dB is the agreement the
/// project asks of the pipeline (issue 3).
pub const PIPELINE_REF_DB: f64 = 0.02;

/// ENOB agreement with the numpy re-implementation: PIPELINE_REF_DB / 6.02, rounded down (issue 3).
pub const PIPELINE_REF_BITS: f64 = 0.003;

/// dB agreement of a two-tone product with the closed form of a memoryless polynomial, on a coherent
/// 18-bit record of 16384 samples: noise of power Pn in the product's bin moves its power by about
/// 2·√(Pn/P) relative (one σ); with the quantisation noise q²/12·2/N = 1.0e-5 codes² per bin and
/// products of 300+ codes² that is under 0.002 dB, so 0.02 dB is about 10σ and leaves room for the
/// quantiser's own intermodulation.
pub const IMD_DB: f64 = 0.02;

/// dB agreement of an interleaving spur with the small-mismatch formula on the integration records
/// (16 bits, 16384 samples, spurs of 400+ codes²): one σ of noise is 2·√(Pn/P) relative ≈ 0.0013 dB,
/// and the formula is exact for the pure gain error used; 0.02 dB is over 10σ.
pub const INTERLEAVE_DB: f64 = 0.02;

// ---- Arithmetic: the same quantity computed two ways ----

/// Agreement of two f64 computations of one quantity of order 1 (a window sample against scipy's,
/// a closed form against a sum of a few coefficients, ENBW from the same samples, an ENOB from the
/// SINAD it reports) that differ only in the order of some hundreds of operations: each operation
/// rounds by 2^-53 ≈ 1.1e-16 relative, so they differ by about 1e-14; 1e-12 is a hundredfold margin.
pub const ROUNDING: f64 = 1e-12;

/// The same for quantities built from long sums or iterations: a fit's residual over thousands of
/// samples, the Dirichlet-kernel leakage summed over 4096 bins, scipy's root searches stopped near
/// 1e-12: summation error grows as √(terms)·1e-16 and the searches stop at their own tolerance, both
/// near 1e-12 for these records; 1e-9 leaves three decades.
pub const LONG_SUM: f64 = 1e-9;

/// Relative agreement of numpy/scipy summary statistics with ours on the stored sets: numpy sums
/// pairwise, we sum in order, so the sums differ by a few ulps per value; 1e-11 relative leaves room
/// for thousands of ulps.
pub const NUMPY_REL: f64 = 1e-11;

/// Relative agreement with scipy's t-test results: the t, df and p values and intervals follow from
/// the same formulas; the t distribution's quantile functions differ by rounding only (statrs vs
/// scipy's cephes), well under 1e-8 relative.
pub const SCIPY_REL: f64 = 1e-8;

/// Below this magnitude [`SCIPY_REL`] is taken of 1e-3 rather than of the value: p-values near
/// 1e-12 are compared to 1e-11 absolute, which is what a tail computed by two libraries agrees to.
pub const SCIPY_REL_FLOOR: f64 = 1e-3;

// ---- Published figures: half a unit of the last printed decimal ----

/// A figure printed to one decimal (-107.1 dBFS, 194.4 dB, windows.md's -86.5 dBc).
pub const PRINTED_1DP: f64 = 0.05;

/// A coefficient printed to six decimals (the worked three-parameter example, 2.866009).
pub const PRINTED_6DP: f64 = 5e-7;

/// Relative slack beyond half a unit of a printed decimal: the decimal itself is not exact in
/// binary, so a value exactly half a unit away may round either way.
pub const PRINTED_BINARY_REL: f64 = 1e-9;

// ---- Limit proposals ----

/// Limit proposals are rounded outward to 6 significant digits (lot/limits/proposals.rs): a
/// proposal of a figure near 60–90 dB lies below (or above) the unrounded limit by less than 1e-4.
pub const PROPOSAL_ROUNDING: f64 = 1e-4;

// ---- One record's figures ----

/// dB agreement of a coherent tone's level with the level synthesised (−1 dBFS, 12 bits, 4096
/// samples, 0.3 codes of noise): the noise in the tone's bin moves its power by about √(2·Pn/P) ≈
/// 1e-5 relative (4e-5 dB); 0.01 dB leaves room for the quantiser's own error in the bin. The same
/// for a windowed tone summed over its bins (the window's main lobe holds all of the power).
pub const TONE_LEVEL_DB: f64 = 0.01;

/// dB agreement of the fundamental of a fully clipped sine with a square wave's 4/π, and
/// [`SQUARE_THD_DB`] for its THD over H2..H10: a 40 dB overdriven sine is square except near its
/// zero crossings (about 1 % of the period at 40 dB), which lowers the fundamental by under 0.01 dB
/// and moves the harmonics by a few hundredths of a dB.
pub const SQUARE_FUNDAMENTAL_DB: f64 = 0.05;

/// See [`SQUARE_FUNDAMENTAL_DB`]: the THD sums four harmonics, each moved by the rounded corners.
pub const SQUARE_THD_DB: f64 = 0.1;

/// dB agreement of a −75 dBc harmonic recovered from the command line's default record (12 bits,
/// 4096 samples, 0.5 codes of noise): the harmonic is only about 25 dB above the noise in its bin, so
/// one σ of noise moves it by √(2·Pn/P) ≈ 0.08 relative (0.33 dB). The record is seeded, so the
/// outcome is fixed (−74.88 dBc); 0.5 dB checks that the harmonic is found at its level.
pub const NOISY_HARMONIC_DB: f64 = 0.5;

/// dB agreement of a 64-point record's SNR with the handbook 69.83 dB: 22 noise bins carry the
/// noise figure, so one record's noise power scatters by about ±1.5 dB (χ² with 44 degrees of
/// freedom: √(2/44) ≈ 21 % ≈ 0.9 dB at one σ); 3 dB is over three σ.
pub const SHORT_RECORD_DB: f64 = 3.0;

/// dB agreement of a 16-bit SNR with the ideal 97.1 dB when a −60 dBc H2 is present: the check is that
/// H2 is kept out of the noise (counted in, it would pull the SNR to about 60 dB); one record's
/// quantisation noise scatters by HANDBOOK_DB, and 1 dB asks no more than that H2 is excluded.
pub const SNR_BESIDE_HARMONIC_DB: f64 = 1.0;

/// Codes: a sine fit's offset against the offset synthesised: its standard error is the noise over
/// √N, 0.3/√4096 ≈ 0.005 codes here; 0.05 codes is 10σ.
pub const FIT_OFFSET_CODES: f64 = 0.05;

/// Bins: the offset of a tone put exactly half a bin off, as the leakage diagnosis reads it on the
/// 12-bit, 4096-sample record of tests/edge_cases.rs (0.3 codes of noise): the fitted frequency's
/// Cramér-Rao σ there, √12·σ/(2π·A·√N) cycles (Rife & Boorstyn 1974), is about 2e-6 bins; 1e-3 is
/// hundreds of σ and checks that the diagnosis reads the fit, not its own grid.
pub const HALF_BIN_OFFSET_BINS: f64 = 1e-3;

/// Cycles: the same on tests/reference.rs's noiseless 24-bit record of 16384 samples: its
/// Cramér-Rao σ (as above) is about 2e-10 cycles, so the fit's own convergence (stopped near 1e-9
/// cycles) dominates; 1e-6 leaves three decades.
pub const HALF_BIN_OFFSET_CYCLES: f64 = 1e-6;

/// Cycles: the cycle count the coherence decision reports against f·N/fs on the 12-bit records of
/// tests/reference.rs (0.5 codes of noise, 32,000 samples): the fit's Cramér-Rao σ there is about
/// 1e-6 cycles; 1e-3 is a thousand σ and far below the 0.32 cycles that separate the cases.
pub const FITTED_CYCLES: f64 = 1e-3;

/// Hertz: a harmonic's reported frequency against order × the fitted frequency, folded (the test
/// computes it from the same fitted frequency): only the folding's rounding separates them, about
/// 1e-8 Hz at 100 MHz; 1e-3 Hz.
pub const HARMONIC_PLACEMENT_HZ: f64 = 1e-3;

/// Standard errors a fitted frequency may lie from the one synthesised (its reported one-σ
/// `cycles_std`): 5σ is passed by chance once in 1.7 million.
pub const FIT_SIGMAS: f64 = 5.0;

/// dB agreement of the three- and four-parameter fits' amplitudes on one record: the
/// four-parameter frequency differs from the one given to the three-parameter fit by a few σ
/// (about 1e-5 cycles), which moves the amplitude to second order, far below 1e-3 dB.
pub const FIT_AGREEMENT_DB: f64 = 1e-3;

/// Hertz: the frequency of the coherent record nearest 100 MHz at 250 MS/s and 65536 points lies
/// within half a bin (1.9 kHz) of it, and the fit finds it to a few mHz: 5 kHz.
pub const NEAREST_COHERENT_HZ: f64 = 5e3;

/// Standard errors of a Monte-Carlo mean: over CRB_TRIALS trials a mean error beyond 4σ happens by
/// chance once in 16,000.
pub const MEAN_SIGMAS: f64 = 4.0;

/// Cycles: the fitted cycle count against the numpy re-implementation's: both fits stop at their
/// least-squares minimum to about 1e-9 cycles (PIPELINE_REF_DB's note); 1e-6 leaves three decades.
pub const PIPELINE_REF_CYCLES: f64 = 1e-6;

// ---- Two tones and interleaving (tests/imd.rs) ----

/// Bins: an IM product's frequency against m·f1 + n·f2 of the synthesised tones: it is placed from the
/// fitted frequencies, known to about 1e-9 bins on these records; 1e-6 bins checks the placement.
pub const PRODUCT_PLACEMENT_BINS: f64 = 1e-6;

/// Hertz: an interleaving image's frequency against fs/2 − fin: from the fitted input (about 1e-9
/// relative at 20 MHz, 0.02 Hz); 1 Hz (1.6e-4 bins) checks the placement.
pub const IMAGE_PLACEMENT_HZ: f64 = 1.0;

/// Codes: a channel's estimated offset against the one put in: its least-squares noise is σ/√L with
/// σ ≈ 0.29 codes of quantisation noise and L = 8192 samples per channel, 0.003 codes (from memory).
pub const CHANNEL_OFFSET_CODES: f64 = 0.01;

/// A channel's estimated relative gain error against the one put in: its noise is σ·√(2/L)/A with
/// A ≈ 3e4 codes, about 1.5e-7 (from memory); 1e-6 is over 6σ.
pub const CHANNEL_GAIN: f64 = 1e-6;

/// Seconds: a channel's estimated timing error when none was put in: its noise is about
/// σ/(A·2π·fin·√(L/2)) ≈ 1e-15 s at fin ≈ 20 MHz (from memory); 1e-13 s is a hundred σ.
pub const CHANNEL_TIMING_S: f64 = 1e-13;

// ---- Code-density linearity (tests/linearity.rs) ----

/// Standard errors a DNL may lie from the pattern put in: the advisor's β(S) = Z·√(π·2^(N−1)/S) at
/// Z = 1.96 is 1.96 standard errors (IEEE Std 1241, from memory); 4 standard errors are exceeded by
/// about 1 code in 16,000, and the check allows two codes of 254.
pub const DNL_STANDARD_ERRORS: f64 = 4.0;

// ---- Sweeps (tests/sweep.rs) ----

/// Relative agreement of the jitter estimate with the 900 fs the demo's revision A was made with:
/// three frequencies and twelve devices give the lot mean's estimate to about 10 %.
pub const JITTER_REL_REV_A: f64 = 0.10;

/// The same for revision B's 250 fs: its jitter noise sits nearer the quantisation floor, so the
/// slope of 10^(−SNR/10) against f² is less certain: 25 %.
pub const JITTER_REL_REV_B: f64 = 0.25;

// ---- Windows (tests/windows_ref.rs) ----

/// PSLL against Heinzel 2002's Kaiser figures, which come from his fitted approximations and differ
/// from direct computation (and from scipy and Kaiser's closed form) by up to 0.35 dB: 0.4 dB.
pub const HEINZEL_FIT_PSLL_DB: f64 = 0.4;

/// Relative agreement of ENBW and 3-dB width with the same fitted figures (they differ by 0.1–0.3 %),
/// and the absolute dB agreement of their flatness: 0.3 %, 0.003 dB.
pub const HEINZEL_FIT_REL: f64 = 0.003;

/// See [`HEINZEL_FIT_REL`]: the flatness in dB.
pub const HEINZEL_FIT_FLATNESS_DB: f64 = 0.003;

/// Heinzel's 3-dB widths sit up to one unit of his last (4th) decimal below direct computation across
/// his table (HFT90D 3.8320 vs 3.83206), as if truncated rather than rounded: one unit, 1e-4 bins.
pub const HEINZEL_BW_SLACK_BINS: f64 = 1e-4;

/// dB: HFT144D's PSLL as the issue prints it (−144.1, Heinzel's figure) against scipy's and ours
/// (−144.0498): 0.03 dB beyond half a unit of the printed decimal.
pub const HFT144D_PSLL_SLACK_DB: f64 = 0.03;

/// Relative agreement of a 4096-point periodic window's figures with the continuous window's closed
/// forms (Kaiser's transform, the sinc): the sampled window differs from the continuous one by about
/// 1e-6 relative; 1e-5 for coherent gain, null and the rectangular 3-dB width.
pub const CONTINUOUS_REL: f64 = 1e-5;

/// The same in dB (scalloping loss) and in bins (3-dB width), where the root search adds 1e-6: 1e-4.
pub const CONTINUOUS_DB: f64 = 1e-4;

/// dB: sidelobe peaks against the continuous transform: the discrete search samples the response
/// on a grid refined to 1e-9 bins, but a 4096-point window's sidelobes differ from the continuous
/// ones by up to 1e-3 dB near the first lobe of sinc and Hann, and by up to 0.01 dB for the Kaiser
/// family's deep, flat-topped first sidelobes.
pub const CONTINUOUS_PSLL_DB: f64 = 1e-3;

/// See [`CONTINUOUS_PSLL_DB`]: the Kaiser family.
pub const CONTINUOUS_KAISER_PSLL_DB: f64 = 0.01;

/// Bins: a first null found by root search against an exact value (K bins of a K-term cosine sum,
/// scipy's search): both searches stop near 1e-9 bins; 1e-6 bins.
pub const NULL_SEARCH_BINS: f64 = 1e-6;

/// dB: a leakage profile's levels computed two ways (at +δ and −δ, or against the closed form of a
/// cosine sum's edge bins): both come from 4096-term DFT sums that round at about 1e-13 relative,
/// which is 1e-12 dB; levels far down (−200 dBc) round worse relative to their power, so 1e-6 dB.
pub const LEAKAGE_PROFILE_DB: f64 = 1e-6;

/// ENBW against scipy's: both sum the same 4096 squared samples, but scipy in pairwise order and
/// over a zero-padded FFT; 1e-11 relative to ENBW of 1–3 bins.
pub const SCIPY_ENBW: f64 = 1e-11;

/// dB: PSLL against scipy's: both searches stop at about 1e-9 bin; below −150 dB rounding in either
/// FFT adds about 1e-5 dB: 1e-4.
pub const SCIPY_PSLL_DB: f64 = 1e-4;

/// Bins: 3-dB width against scipy's root search (stopped at about 1e-10): 1e-8.
pub const SCIPY_BW_BINS: f64 = 1e-8;

// ---- Stated uncertainties ----

/// Relative agreement of a figure's scatter over Monte-Carlo seeds with the one-sigma uncertainty the
/// record reports (the criterion the project set for its uncertainties, issue 13): the sample standard
/// deviation of 200 Gaussian errors has a relative standard deviation of 1/√(2·199) = 5 %, so 20 % is
/// 4 σ of the check itself, and it still catches a formula off by a factor (√2 is 41 %).
pub const MC_SIGMA_REL: f64 = 0.20;

/// Seeds per Monte-Carlo condition (the project asks for at least 200).
pub const MC_SEEDS: u64 = 200;

/// Relative agreement of control limits, Cpk and its interval with the numpy/scipy script's values
/// (tests/reference/make_spc_refs.py): the same formulas on the same stored inputs, so only rounding
/// order differs (about 1e-15), except c4, whose log-gamma comes from statrs on our side and from
/// scipy's gammaln on theirs (each good to about 1e-14); 1e-10 leaves room for both.
pub const SPC_REL: f64 = 1e-10;

/// Agreement with a figure printed to `decimals` places in a textbook's worked example, whose
/// inputs it was worked from exactly: half a unit in the last printed place (common practice, no
/// source).
pub fn printed(decimals: i32) -> f64 {
    0.5 * 10f64.powi(-decimals)
}

/// Agreement with the individuals-chart limits printed in Montgomery's worked example (tests/spc.rs):
/// the book works them from MR̄ printed to 0.01 (±0.005, moving a limit by 3·0.005/1.128 = 0.0133,
/// the MR limit by 3.267·0.005 = 0.0163), d2 = 1.128 for 1.12838 (3·7.79·0.00038/1.128² = 0.0070)
/// and D4 = 3.267 for 3.2665 (7.79·0.0005 = 0.0039), then prints to 0.01 (±0.005): at most 0.0253
/// either way, so 0.026.
pub const BOOK_IMR_LIMIT_ABS: f64 = 0.026;

/// Samples: a count of samples of a coherent record (J coprime with N) whose phase falls in an arc
/// differs from N·(arc / 2π) by less than one sample per arc end, since the samples sit on the N
/// equally spaced phases (sine geometry); two edges of the range (top and bottom) give two samples.
pub const CLIPPED_PHASE_SAMPLES: f64 = 2.0;

/// Samples: the generator counts whole samples while the estimate is an expected count; half a sample
/// of rounding each way, one in all.
pub const CLIPPED_ROUNDING_SAMPLES: f64 = 1.0;

/// Codes: a sine fit's amplitude against the amplitude synthesised, beyond four of its stated sigmas:
/// the quantiser's error is a deterministic function of the input, not white noise, and moves the
/// fitted amplitude of a 12-bit sine by a few thousandths of a code (from memory); 0.01 codes covers it.
pub const FIT_QUANTISER_CODES: f64 = 0.01;

/// Relative agreement of a two-sided normal p-value with erfc(z/√2) as tabulated (Abramowitz & Stegun
/// table 7.1, checked with Python's math.erfc): statrs' normal cdf is good to about 1e-14 relative at
/// these z; 1e-9 leaves room for the z computed from summed squares.
pub const NORMAL_P_REL: f64 = 1e-9;

// ---- The generated truth harness (tests/truth.rs) ----

/// Records the truth harness generates (issue 13 asks for at least 500).
pub const TRUTH_RECORDS: u64 = 600;

/// The harness's fixed seed: the same records on every run.
pub const TRUTH_SEED: u64 = 13;

/// dB beyond four stated sigmas that a figure may lie from its analytic truth (the same relative
/// error, 0.23 %, in codes, radians and cycles): what the stated uncertainty leaves out by design.
/// The quantisation error's power departs from q²/12 by under 0.2 % (0.01 dB) with 0.5 codes of
/// Gaussian noise ahead of the quantiser (Widrow & Kollár 2008, from memory); a window's leakage
/// under the tone's claimed bins is held below the noise by the window rule; the residual rms is
/// biased low by p/(2N) for p fitted parameters (0.3 % at the shortest records of 64 samples,
/// 0.01 dB of SINAD). 0.02 dB covers these, and is a tenth of the 0.2 dB a lab resolves.
pub const TRUTH_ALLOWANCE_DB: f64 = 0.02;

// ---- Input formats ----

/// Relative agreement of the figures of a record of values (volts with an inexact full-scale
/// scaling, or decimal text) with those of the same codes as integers: the values differ from the
/// scaled codes by one rounding each (about 1e-16 relative) and the analysis adds rounding of the same
/// order; the bound of 1e-9 relative leaves six decades.
pub const VALUES_REL: f64 = 1e-9;

/// The absolute floor beside [`VALUES_REL`], for figures of order one that come from a cancellation
/// (the fitted cycles minus their whole number, a tone's offset from its bin): they keep the absolute
/// error of the operands (about 1e-14 for tens of cycles), not a relative one.
pub const VALUES_ABS: f64 = 1e-9;
