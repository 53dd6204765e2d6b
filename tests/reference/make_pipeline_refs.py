#!/usr/bin/env python3
"""The whole analysis (fit -> window -> spectrum -> figures) redone in numpy/scipy, for tests/reference.rs.

Writes, under tests/reference/pipeline/:
  <name>.txt      six records of signed integer codes, one per line (spurline's text format), made
                  deterministically here with numpy.random.default_rng(seed) (PCG64)
  expected.json   per record: sample rate, resolution, generator settings, and the figures computed
                  below; with the numpy/scipy/python versions. Floats are written with repr precision.

The conventions are the ones spurline documents (crate docs in src/lib.rs, the module docs of
src/spectrum/mod.rs and src/spectrum/metrics.rs, the field docs of Spectrum and HarmonicFigure); this
script is written from them, not from the Rust code:

- Fit: four-parameter least squares (scipy.optimize.least_squares, 'lm', analytic Jacobian,
  xtol = ftol = gtol = 1e-15) on a centred time index; fitted cycles = f*N; residual rms sigma.
- Coherence: |cycles - round(cycles)| <= max(4*sigma_c, 1e-9), with the Cramer-Rao bound of a real
  sine in real white noise sigma_c = sqrt(24 sigma^2 / (A^2 N (N^2 - 1))) * N / (2 pi) (the real-tone
  form of Rife & Boorstyn 1974's 12 sigma^2 / (b^2 N (N^2 - 1)) for a complex tone).
- Window (auto): coherent -> rectangular. Otherwise the first of Hann, 4-term Blackman-Harris, 7-term
  Blackman-Harris whose worst-case leakage (tone half a bin off, power outside the tone's span, at a
  4096-point reference length) is at most -(6.02N + 1.76 + min(level dBFS, 0) + 16.4) dBc; if none,
  the 7-term. Periodic (DFT-even) cosine sums w[n] = sum_k (-1)^k a_k cos(2 pi k n / N), made with
  scipy.signal.windows.general_cosine(N, a, sym=False).
- Span half-width: coherent K-term cosine sum -> K - 1 bins; otherwise ceil(first null = K) + 1 guard.
- Power: one-sided |FFT(x w)|^2 / (N sum w^2), doubled except at bin 0 and bin N/2 (even N); the raw
  codes, offset included.
- Claiming: DC owns bins 0..=half; the fundamental owns round(cycles) +- half (bins still free); the
  harmonic h sits at fold(h*cycles) into 0..N/2 and is masked when the bin nearest it is already owned,
  otherwise owns the free bins of round(bin) +- half; the rest is noise.
- Bin weights 1/2 at bin 0 and bin N/2, 1 elsewhere. Noise mean per unit weight from the noise bins;
  total noise = mean * N/2 (the noise under claimed spans added back). Fundamental and harmonic powers
  have mean * (their weight) subtracted. A harmonic is "at floor" when its corrected power is no more
  than the noise expected in its span; its level is then the raw span power (an upper bound) and it
  adds nothing to THD.
- SNR = P1 / noise; SINAD = P1 / (noise + sum of corrected harmonic powers, negative ones included);
  THD = sum of corrected powers of harmonics not at floor / P1 (None when that sum is zero).
- SFDR: the largest of the harmonic levels and of the largest noise bin's lobe (the noise bins within
  +-half of it, summed), against P1.
- ENOB: spectral (SINAD - 1.76)/6.02; full-scale-referred (SINAD - fundamental dBFS - 1.76)/6.02, with
  the exact forms 1.76 = 20 log10(sqrt(3/2)), 6.02 = 20 log10(2). Noise floor = 10 log10(mean/Pfs),
  Pfs = (2^(N-1))^2 / 2.

Usage (from the repository root):  python3 tests/reference/make_pipeline_refs.py
"""

import json
import math
import os
import platform

import numpy as np
import scipy
from scipy.optimize import least_squares
from scipy.signal import windows

OUT_DIR = os.path.join(os.path.dirname(os.path.abspath(__file__)), "pipeline")
TOL = 1e-15
DB_PER_BIT = 20 * math.log10(2.0)
SINE_CREST_DB = 20 * math.log10(math.sqrt(1.5))
LEAKAGE_MARGIN_DB = 16.4
LEAKAGE_REF_LEN = 4096
COHERENCE_SIGMAS = 4.0
HARMONICS = 10

COSINE_SUMS = {
    "rectangular": [1.0],
    "hann": [0.5, 0.5],
    # Harris 1978, 4-term "-92 dB" Blackman-Harris (scipy's blackmanharris).
    "blackman-harris-4": [0.35875, 0.48829, 0.14128, 0.01168],
    # Albrecht's minimum-sidelobe 7-term set.
    "blackman-harris-7": [0.27105140069342, 0.43329793923448, 0.21812299954311, 0.06592544638803,
                          0.01081174209837, 0.00077658482522, 0.00001388721735],
}
LADDER = ["hann", "blackman-harris-4", "blackman-harris-7"]

FS = 100e6
# name, bits, samples, cycles (integer: coherent), level dBFS, phase, offset codes, noise rms codes,
# harmonics [(order, dBc)], spur (cycles, dBc) or None, seed. Input: sine phase convention.
RECORDS = [
    dict(name="c10_h2h3", bits=10, samples=4096, cycles=401, level_dbfs=-0.5, phase=0.3,
         offset=0.0, noise_rms=0.0, harmonics=[(2, -62.0), (3, -68.0)], spur=None, seed=1),
    dict(name="n10_bh4", bits=10, samples=4096, cycles=313.37, level_dbfs=-1.0, phase=1.1,
         offset=0.0, noise_rms=0.3, harmonics=[(3, -65.0)], spur=None, seed=2),
    dict(name="c12_spur", bits=12, samples=4096, cycles=1001, level_dbfs=-1.0, phase=-0.7,
         offset=1.0, noise_rms=0.4, harmonics=[(2, -80.0), (3, -82.0)], spur=(707.3, -76.0), seed=3),
    dict(name="n12_masked", bits=12, samples=4096, cycles=1024.37, level_dbfs=-3.0, phase=2.0,
         offset=2.5, noise_rms=0.5, harmonics=[(2, -80.0), (3, -84.0)], spur=None, seed=4),
    dict(name="c14_fold", bits=14, samples=2048, cycles=821, level_dbfs=-0.2, phase=0.0,
         offset=-3.0, noise_rms=1.0, harmonics=[(2, -85.0), (3, -90.0)], spur=None, seed=5),
    dict(name="n16_low", bits=16, samples=4096, cycles=129.83, level_dbfs=-0.5, phase=-2.5,
         offset=0.0, noise_rms=1.5, harmonics=[(2, -95.0), (3, -100.0), (5, -105.0)], spur=None,
         seed=6),
]


def round_half_away(x):
    return math.floor(x + 0.5) if x >= 0 else -math.floor(-x + 0.5)


def synthesize(r):
    rng = np.random.default_rng(r["seed"])
    N = r["samples"]
    n = np.arange(N, dtype=np.float64)
    fs_amp = 2.0 ** (r["bits"] - 1)
    amp = fs_amp * 10 ** (r["level_dbfs"] / 20)
    theta = 2 * np.pi * r["cycles"] * n / N + r["phase"]
    x = r["offset"] + amp * np.sin(theta)
    for order, dbc in r["harmonics"]:
        x += amp * 10 ** (dbc / 20) * np.sin(order * theta)
    if r["spur"] is not None:
        k, dbc = r["spur"]
        x += amp * 10 ** (dbc / 20) * np.sin(2 * np.pi * k * n / N)
    if r["noise_rms"] > 0:
        x += r["noise_rms"] * rng.standard_normal(N)
    codes = np.clip(np.floor(x + 0.5), -fs_amp, fs_amp - 1)
    return codes.astype(np.int64)


def fit4(y):
    """Four-parameter fit; returns cycles per sample, amplitude, offset, residual rms."""
    N = len(y)
    t = np.arange(N) - (N - 1) / 2
    w = windows.hann(N, sym=False)
    mag = np.abs(np.fft.rfft((y - y.mean()) * w))
    k = int(np.argmax(mag[2:])) + 2
    lm, l0, lp = np.log(mag[k - 1:k + 2])
    f0 = (k + 0.5 * (lm - lp) / (lm - 2 * l0 + lp)) / N
    D = np.column_stack([np.cos(2 * np.pi * f0 * t), np.sin(2 * np.pi * f0 * t), np.ones(N)])
    abc = np.linalg.lstsq(D, y, rcond=None)[0]

    def resid(p):
        th = 2 * np.pi * p[3] * t
        return y - (p[0] * np.cos(th) + p[1] * np.sin(th) + p[2])

    def jac(p):
        th = 2 * np.pi * p[3] * t
        c, s = np.cos(th), np.sin(th)
        return -np.column_stack([c, s, np.ones(N), 2 * np.pi * t * (p[1] * c - p[0] * s)])

    res = least_squares(resid, [abc[0], abc[1], abc[2], f0], jac=jac, method="lm",
                        xtol=TOL, ftol=TOL, gtol=TOL)
    a, b, c, f = res.x
    return float(f), float(math.hypot(a, b)), float(c), float(np.sqrt(np.mean(resid(res.x) ** 2)))


def window_samples(name, N):
    return windows.general_cosine(N, COSINE_SUMS[name], sym=False)


def tone_halfwidth(name, coherent):
    K = len(COSINE_SUMS[name])
    return K - 1 if coherent else K + 1


def worst_leakage_dbc(name):
    """Power of a unit tone half a bin off that falls outside its span, dBc (None below -300 dB)."""
    Nr = LEAKAGE_REF_LEN
    span = tone_halfwidth(name, False)
    k0 = Nr // 4
    n = np.arange(Nr)
    x = window_samples(name, Nr) * np.exp(2j * np.pi * (k0 + 0.5) * n / Nr)
    p = np.abs(np.fft.fft(x)) ** 2
    m = np.arange(Nr)
    dist = np.minimum((m - k0) % Nr, (k0 - m) % Nr)
    ratio = p[dist > span].sum() / p.sum()
    return 10 * math.log10(ratio) if ratio > 1e-30 else None


def choose_window(coherent, bits, level_dbfs):
    if coherent:
        return "rectangular"
    need = -(DB_PER_BIT * bits + SINE_CREST_DB + min(level_dbfs, 0.0) + LEAKAGE_MARGIN_DB)
    for name in LADDER:
        leak = worst_leakage_dbc(name)
        if leak is None or leak <= need:
            return name
    return LADDER[-1]


def fold(b, N):
    r = b % N
    return N - r if r > N / 2 else r


def db(x):
    return 10 * math.log10(x) if x > 0 and math.isfinite(x) else None


def dirichlet(x, N):
    """|D(x)| normalised to 1 at x = 0: the rectangular window's response x bins off."""
    return 1.0 if x == 0 else abs(math.sin(math.pi * x) / (N * math.sin(math.pi * x / N)))


def unwindowed_lobe(P, owner, k, mean, N, noise):
    """An unclaimed sine off the bin grid, unwindowed: its offset d from the two largest bins' ratio
    (noise expectation removed), solved numerically on the Dirichlet kernel, and its power
    from the largest bin over D(d)^2 (spurline's convention, src/spectrum/claim.rs)."""
    def excess(j):
        return max(P[j] - mean, 0.0) if 0 <= j < len(P) and owner[j] == noise else 0.0
    peak = P[k] - mean
    if peak <= 0:
        return P[k]
    r = min(math.sqrt(max(excess(k - 1), excess(k + 1)) / peak), 1.0)
    if r == 0:
        return P[k]
    d = scipy.optimize.brentq(lambda x: dirichlet(1 - x, N) / dirichlet(x, N) - r, 1e-12, 0.5)
    return mean + peak / dirichlet(d, N) ** 2


def analyse(codes, bits):
    y = codes.astype(np.float64)
    N = len(y)
    f, amp, offset, sigma = fit4(y)
    cycles = f * N
    fs_amp = 2.0 ** (bits - 1)
    pfs = fs_amp ** 2 / 2
    level_dbfs = 20 * math.log10(amp / fs_amp)
    cycles_std = math.sqrt(24 * sigma ** 2 / (amp ** 2 * N * (N ** 2 - 1))) * N / (2 * math.pi)
    coherent = abs(cycles - round_half_away(cycles)) <= max(COHERENCE_SIGMAS * cycles_std, 1e-9)
    win = choose_window(coherent, bits, level_dbfs)
    half = tone_halfwidth(win, coherent)

    w = window_samples(win, N)
    X = np.fft.rfft(y * w)
    P = np.abs(X) ** 2 / (N * np.sum(w ** 2))
    last = len(P) - 1
    weight = np.ones(len(P))
    weight[0] = 0.5
    if N % 2 == 0:
        weight[last] = 0.5
    P[weight == 1.0] *= 2

    NOISE, DC, FUND = "noise", "dc", "fundamental"
    owner = [NOISE] * len(P)
    for k in range(min(half + 1, len(P))):
        owner[k] = DC
    kf = min(int(round_half_away(cycles)), last)
    for k in range(max(kf - half, 0), min(kf + half, last) + 1):
        if owner[k] == NOISE:
            owner[k] = FUND
    slots = []
    for h in range(2, HARMONICS + 1):
        b = fold(h * cycles, N)
        centre = min(int(round_half_away(b)), last)
        masked_by = None if owner[centre] == NOISE else owner[centre]
        mine = []
        if masked_by is None:
            for k in range(max(centre - half, 0), min(centre + half, last) + 1):
                if owner[k] == NOISE:
                    owner[k] = ("harmonic", h)
                    mine.append(k)
        slots.append((h, b, masked_by, mine))

    noise_idx = [k for k in range(len(P)) if owner[k] == NOISE]
    mean = P[noise_idx].sum() / weight[noise_idx].sum()
    noise = mean * N / 2
    fund_idx = [k for k in range(len(P)) if owner[k] == FUND]
    p1 = max(P[fund_idx].sum() - mean * weight[fund_idx].sum(), 0.0)

    harmonics = []
    signed = 0.0
    thd_sum = 0.0
    worst = None
    for h, b, masked_by, mine in slots:
        if masked_by is not None:
            harmonics.append(dict(order=h, bin=b, masked=True, dbc=None, at_floor=False))
            continue
        raw = P[mine].sum()
        expected_noise = mean * weight[mine].sum()
        corrected = raw - expected_noise
        signed += corrected
        at_floor = corrected <= expected_noise
        level = raw if at_floor else corrected
        if not at_floor:
            thd_sum += corrected
        if worst is None or level > worst:
            worst = level
        harmonics.append(dict(order=h, bin=b, masked=False, dbc=db(level / p1),
                              at_floor=bool(at_floor)))
    k_big = max(noise_idx, key=lambda k: (P[k], -k))
    lobe = sum(P[k] for k in range(max(k_big - half, 0), min(k_big + half, last) + 1)
               if owner[k] == NOISE)
    if half == 0:
        lobe = unwindowed_lobe(P, owner, k_big, mean, N, NOISE)
    if worst is None or lobe > worst:
        worst = lobe
        spur_is_harmonic = False
    else:
        spur_is_harmonic = True

    sinad_db = db(p1 / (noise + signed))
    fund_dbfs = db(p1 / pfs)
    return dict(
        fitted_cycles=cycles,
        fitted_amplitude_codes=amp,
        fitted_offset_codes=offset,
        residual_rms_codes=sigma,
        cycles_std=cycles_std,
        coherent=bool(coherent),
        window=win,
        tone_halfwidth_bins=half,
        noise_bins=len(noise_idx),
        fundamental_dbfs=fund_dbfs,
        snr_db=db(p1 / noise),
        sinad_db=sinad_db,
        thd_dbc=db(thd_sum / p1),
        sfdr_dbc=-db(worst / p1),
        worst_spur_is_harmonic=spur_is_harmonic,
        enob_bits=(sinad_db - SINE_CREST_DB) / DB_PER_BIT,
        enob_full_scale_bits=(sinad_db - fund_dbfs - SINE_CREST_DB) / DB_PER_BIT,
        noise_floor_dbfs=db(mean / pfs),
        harmonics=harmonics,
    )


def main():
    os.makedirs(OUT_DIR, exist_ok=True)
    out = dict(
        made_by="tests/reference/make_pipeline_refs.py",
        numpy=np.__version__,
        scipy=scipy.__version__,
        python=platform.python_version(),
        settings=dict(harmonics=HARMONICS, leakage_margin_db=LEAKAGE_MARGIN_DB,
                      leakage_reference_len=LEAKAGE_REF_LEN, coherence_sigmas=COHERENCE_SIGMAS,
                      fit="scipy.optimize.least_squares lm, analytic Jacobian, tol 1e-15",
                      generator="numpy.random.default_rng(seed).standard_normal; "
                                "code = clip(floor(x + 0.5))"),
        sample_rate_hz=FS,
        records=[],
    )
    for r in RECORDS:
        codes = synthesize(r)
        fname = r["name"] + ".txt"
        with open(os.path.join(OUT_DIR, fname), "w") as fh:
            fh.write("# spurline reference record %s, made by tests/reference/make_pipeline_refs.py "
                     "(numpy %s)\n" % (r["name"], np.__version__))
            fh.write("".join("%d\n" % c for c in codes))
        figures = analyse(codes, r["bits"])
        out["records"].append(dict(file=fname, bits=r["bits"], samples=r["samples"],
                                   generator=r, expected=figures))
        print(r["name"], {k: figures[k] for k in ("window", "coherent", "snr_db", "sinad_db",
                                                 "thd_dbc", "sfdr_dbc", "enob_bits")})
    with open(os.path.join(OUT_DIR, "expected.json"), "w") as fh:
        json.dump(out, fh, indent=1)
        fh.write("\n")


if __name__ == "__main__":
    main()
