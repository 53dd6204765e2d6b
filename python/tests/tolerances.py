"""Every tolerance of the Python package's tests, with its justification (as tests/tolerances.rs is
for the Rust tests)."""

# Window samples against scipy.signal.get_window (periodic form): both evaluate the same cosine sums
# in double precision; the issue asks for agreement to 1e-12 (a few hundred ulps at 1.0).
WINDOW_ABS = 1e-12

# SNR of a coherent record against a plain NumPy computation of the same bin sums: both are sums of
# a few thousand doubles in different orders (relative rounding about N * 1e-16); 1e-9 relative is
# the bound and leaves three orders of margin.
SNR_REL = 1e-9

# Ideal quantisation: a full-scale sine rounded to N bits has SNR 6.02N + 1.76 dB (q/sqrt(12) noise).
# A record of 2^14 samples estimates the noise power from ~8,000 bins; the quantisation noise of a
# sine whose cycle count is prime is close to uniform, and the estimate scatters by about
# 10*log10(1 + sqrt(2/8000)) ~ 0.07 dB (one sigma). 0.25 dB is more than three sigma.
IDEAL_SNR_DB = 0.25

# The fit form of ENOB, N - log2(residual_rms / (q/sqrt(12))), of the same record: the residual rms
# scatters like the noise power's square root (half the relative spread above), 0.02 bits covers it.
IDEAL_ENOB_BITS = 0.02
