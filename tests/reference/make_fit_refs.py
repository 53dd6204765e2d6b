#!/usr/bin/env python3
"""Reference four-parameter sine fits made with scipy.optimize.least_squares, for tests/reference.rs.

Writes tests/reference/fits/fit_refs.json: four small deterministic records (two unquantised float
records with Gaussian noise, two quantised to integer codes) and, for each, the least-squares
parameters found by scipy, with the numpy/scipy versions and every setting used.

Model (IEEE Std 1241 / 1057 four-parameter sine), with a centred time index:
    y[n] ~ a*cos(theta) + b*sin(theta) + c,   theta = 2*pi*f*(n - m),   m = (N - 1)/2,
f in cycles per sample. Centring changes only the meaning of a and b (the phase origin), not the
least-squares minimum: frequency, amplitude sqrt(a^2 + b^2), offset c and the residual are the same
as with the origin at n = 0. The phase at n = 0 is stored as atan2(-b, a) - 2*pi*f*m, wrapped to
(-pi, pi], for y = A*cos(2*pi*f*n + phi) + c.

Fit: method 'lm' (MINPACK Levenberg-Marquardt) with the analytic Jacobian, xtol = ftol = gtol = 1e-15,
started from a Hann-windowed FFT peak (parabolic interpolation on the log magnitude) and the linear
three-parameter least-squares solution at that frequency.

Records are generated with numpy.random.default_rng(seed) (PCG64); floats are written with repr
precision (Python's json uses float.__repr__, which round-trips). Running the script twice gives
identical files.

Usage (from the repository root):  python3 tests/reference/make_fit_refs.py
"""

import json
import os
import platform

import numpy as np
import scipy
from scipy.optimize import least_squares

OUT_DIR = os.path.join(os.path.dirname(os.path.abspath(__file__)), "fits")
TOL = 1e-15

# name, samples, cycles in the record, amplitude, phase (rad, cosine at n = 0), offset, noise rms,
# quantised (round to nearest integer code: floor(x + 0.5)), bits (for the Rust fit's dBFS only), seed.
RECORDS = [
    dict(name="float_1000_noncoherent", samples=1000, cycles=37.21, amplitude=1500.0,
         phase=0.7, offset=3.2, noise_rms=2.0, quantised=False, bits=12, seed=101),
    dict(name="codes12_2048_coherent", samples=2048, cycles=101.0, amplitude=1900.0,
         phase=-2.3, offset=-0.4, noise_rms=0.3, quantised=True, bits=12, seed=102),
    dict(name="codes16_4096_high", samples=4096, cycles=1800.7, amplitude=30000.0,
         phase=1.9, offset=0.0, noise_rms=0.0, quantised=True, bits=16, seed=103),
    dict(name="float_1536_lowcycles", samples=1536, cycles=5.3, amplitude=250.0,
         phase=0.1, offset=40.0, noise_rms=0.1, quantised=False, bits=12, seed=104),
]


def make(r):
    rng = np.random.default_rng(r["seed"])
    n = np.arange(r["samples"], dtype=np.float64)
    x = r["amplitude"] * np.cos(2 * np.pi * r["cycles"] * n / r["samples"] + r["phase"]) + r["offset"]
    if r["noise_rms"] > 0:
        x = x + r["noise_rms"] * rng.standard_normal(r["samples"])
    if r["quantised"]:
        x = np.floor(x + 0.5)
    return x


def start(y):
    """FFT-peak frequency (cycles/sample) refined by parabolic interpolation, then the 3-param fit."""
    N = len(y)
    w = 0.5 - 0.5 * np.cos(2 * np.pi * np.arange(N) / N)
    mag = np.abs(np.fft.rfft((y - y.mean()) * w))
    k = int(np.argmax(mag[2:])) + 2
    lm, l0, lp = np.log(mag[k - 1:k + 2])
    delta = 0.5 * (lm - lp) / (lm - 2 * l0 + lp)
    f = (k + delta) / N
    t = np.arange(N) - (N - 1) / 2
    D = np.column_stack([np.cos(2 * np.pi * f * t), np.sin(2 * np.pi * f * t), np.ones(N)])
    abc = np.linalg.lstsq(D, y, rcond=None)[0]
    return np.array([abc[0], abc[1], abc[2], f])


def fit(y):
    N = len(y)
    t = np.arange(N) - (N - 1) / 2

    def resid(p):
        th = 2 * np.pi * p[3] * t
        return y - (p[0] * np.cos(th) + p[1] * np.sin(th) + p[2])

    def jac(p):
        th = 2 * np.pi * p[3] * t
        c, s = np.cos(th), np.sin(th)
        return -np.column_stack([c, s, np.ones(N), 2 * np.pi * t * (p[1] * c - p[0] * s)])

    p0 = start(y)
    res = least_squares(resid, p0, jac=jac, method="lm", xtol=TOL, ftol=TOL, gtol=TOL)
    a, b, c, f = res.x
    m = (N - 1) / 2
    phase = np.arctan2(-b, a) - 2 * np.pi * f * m
    phase = (phase + np.pi) % (2 * np.pi) - np.pi
    if phase <= -np.pi:
        phase += 2 * np.pi
    rms = float(np.sqrt(np.mean(resid(res.x) ** 2)))
    # Evidence that lm stopped at the minimum: one more Gauss-Newton step (dense least squares on the
    # Jacobian), relative to the amplitude for a, b, c and to f for the frequency.
    step = np.linalg.lstsq(-jac(res.x), resid(res.x), rcond=None)[0]
    amp = np.hypot(a, b)
    gn_step = float(max(np.max(np.abs(step[:3])) / amp, abs(step[3]) / f))
    return dict(
        cycles_per_sample=float(f),
        amplitude=float(np.hypot(a, b)),
        offset=float(c),
        phase_rad=float(phase),
        a_centred=float(a),
        b_centred=float(b),
        residual_rms=rms,
        scipy_status=int(res.status),
        scipy_nfev=int(res.nfev),
        gauss_newton_step_rel=gn_step,
    ), p0


def main():
    os.makedirs(OUT_DIR, exist_ok=True)
    out = dict(
        made_by="tests/reference/make_fit_refs.py",
        numpy=np.__version__,
        scipy=scipy.__version__,
        python=platform.python_version(),
        model="y = a*cos(2*pi*f*(n-m)) + b*sin(2*pi*f*(n-m)) + c, m = (N-1)/2, f in cycles/sample",
        fit=dict(function="scipy.optimize.least_squares", method="lm", jac="analytic",
                 xtol=TOL, ftol=TOL, gtol=TOL,
                 start="Hann FFT peak, parabolic log-magnitude interpolation, then 3-param LS"),
        generator="numpy.random.default_rng(seed).standard_normal; quantised: floor(x + 0.5)",
        records=[],
    )
    for r in RECORDS:
        y = make(r)
        params, p0 = fit(y)
        samples = [int(v) for v in y] if r["quantised"] else [float(v) for v in y]
        out["records"].append(dict(settings=r, start_cycles_per_sample=float(p0[3]),
                                   fitted=params, samples=samples))
    path = os.path.join(OUT_DIR, "fit_refs.json")
    with open(path, "w") as fh:
        json.dump(out, fh, indent=1)
        fh.write("\n")
    for rec in out["records"]:
        print(rec["settings"]["name"], rec["fitted"])


if __name__ == "__main__":
    main()
