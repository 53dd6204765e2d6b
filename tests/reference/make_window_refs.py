#!/usr/bin/env python3
"""Reference vectors for the window table (src/spectrum/window.rs), made with numpy/scipy.

Writes, under tests/reference/windows/:
  samples_n64.json, samples_n1000.json  periodic (sym=False) window samples from scipy.signal.windows
  figures_n4096.json                    figures of merit computed with numpy at N = 4096 (periodic)

Each file records the numpy and scipy versions and, per window, the exact scipy call that made it
(the call string is what is evaluated, so the record cannot drift from the code). Floats are written
with repr precision (Python's json uses float.__repr__, which round-trips). No randomness: running the
script twice gives identical files.

Usage (from the repository root):  python3 tests/reference/make_window_refs.py
"""

import json
import os

import numpy as np
import scipy
from scipy import optimize
from scipy.signal import windows

OUT_DIR = os.path.join(os.path.dirname(os.path.abspath(__file__)), "windows")

# Coefficients: Albrecht's minimum 7-term set and the Heinzel et al. (2002) flat-tops, positive
# convention as scipy's general_cosine takes them. HFT169D is the set that reaches -169.5 dB.
BH7 = [0.27105140069342, 0.43329793923448, 0.21812299954311, 0.06592544638803,
       0.01081174209837, 0.00077658482522, 0.00001388721735]
HFT90D = [1, 1.942604, 1.340318, 0.440811, 0.043097]
HFT116D = [1, 1.9575375, 1.4780705, 0.6367431, 0.1228389, 0.0066288]
HFT144D = [1, 1.96760033, 1.57983607, 0.81123644, 0.22583558, 0.02773848, 0.00090360]
HFT169D = [1, 1.97441843, 1.65409889, 0.95788187, 0.33673420, 0.06364622, 0.00521942, 0.00010599]


def kaiser_name(beta):
    # Same spelling as Window::name() in Rust ({:?} of f64 is the shortest round-trip form, as repr).
    return "kaiser(%r)" % beta


# Window id (as Window::name() spells it) -> scipy call, with N the length.
OFFERED = {
    "rectangular": "windows.boxcar(N, sym=False)",
    "hann": "windows.hann(N, sym=False)",
    "blackman-harris-4": "windows.blackmanharris(N, sym=False)",
    "blackman-harris-7": "windows.general_cosine(N, %r, sym=False)" % BH7,
    "hft90d": "windows.general_cosine(N, %r, sym=False)" % HFT90D,
    "hft116d": "windows.general_cosine(N, %r, sym=False)" % HFT116D,
    "hft144d": "windows.general_cosine(N, %r, sym=False)" % HFT144D,
    "hft169d": "windows.general_cosine(N, %r, sym=False)" % HFT169D,
    "flattop": "windows.flattop(N, sym=False)",
    kaiser_name(8.6): "windows.kaiser(N, beta=8.6, sym=False)",
    kaiser_name(23.0): "windows.kaiser(N, beta=23.0, sym=False)",
}

# Extra Kaiser windows whose figures are published (Harris 1978: beta = pi*alpha, alpha = 2..3.5;
# beta = 23.012 for about -180 dB).
EXTRA_FIGURES = {}
for beta in [2 * np.pi, 2.5 * np.pi, 3 * np.pi, 3.5 * np.pi, 23.012]:
    beta = float(beta)
    EXTRA_FIGURES[kaiser_name(beta)] = "windows.kaiser(N, beta=%r, sym=False)" % beta


def make(call, n):
    w = eval(call, {"windows": windows, "N": n})  # the recorded call is the executed call
    return np.asarray(w, dtype=np.float64)


def header(n, what):
    return {
        "generator": "tests/reference/make_window_refs.py",
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "n": n,
        "form": "periodic (DFT-even), scipy sym=False",
        "content": what,
    }


def dtft_mag(w, f):
    """|sum w[n] exp(-j 2 pi f n / N)| at f bins."""
    n = np.arange(len(w))
    return abs(np.dot(w, np.exp(-2j * np.pi * f * n / len(w))))


def figures(w):
    """Figures of merit of one periodic window: zero-padded FFT (x64), refined with scipy.optimize."""
    n = len(w)
    s = w.sum()
    peak = w.max()
    cg = s / (n * peak)
    enbw = n * np.dot(w, w) / s**2
    w0 = abs(s)
    sl = -20 * np.log10(dtft_mag(w, 0.5) / w0)

    pad = 64
    mag = np.abs(np.fft.rfft(w, n * pad))
    # First null: first local minimum of the padded magnitude, refined by a bounded scalar minimiser.
    i = 1
    while not (mag[i] <= mag[i - 1] and mag[i] < mag[i + 1]):
        i += 1
    res = optimize.minimize_scalar(lambda f: dtft_mag(w, f), bounds=((i - 1) / pad, (i + 1) / pad),
                                   method="bounded", options={"xatol": 1e-10})
    null = res.x
    # Highest sidelobe: every padded local maximum within 0.5 dB of the largest, each refined.
    side = mag[i:]
    loc = [j for j in range(1, len(side) - 1) if side[j] >= side[j - 1] and side[j] >= side[j + 1]]
    top = max(side[j] for j in loc)
    best = top
    for j in loc:
        if side[j] < top * 10 ** (-0.5 / 20):
            continue
        k = i + j
        r = optimize.minimize_scalar(lambda f: -dtft_mag(w, f), bounds=((k - 1) / pad, (k + 1) / pad),
                                     method="bounded", options={"xatol": 1e-10})
        best = max(best, -r.fun)
    psll = 20 * np.log10(best / w0)
    # -3.0 dB full width: root of the level between 0 and the first null.
    target = w0 * 10 ** (-3.0 / 20)
    j = int(np.argmax(mag[: i + 1] < target))
    f3 = optimize.brentq(lambda f: dtft_mag(w, f) - target, (j - 1) / pad, j / pad, xtol=1e-12)
    return {
        "coherent_gain": float(cg),
        "enbw_bins": float(enbw),
        "scalloping_loss_db": float(sl),
        "highest_sidelobe_db": float(psll),
        "null_halfwidth_bins": float(null),
        "bandwidth_3db_bins": float(2 * f3),
    }


def write(name, obj):
    path = os.path.join(OUT_DIR, name)
    with open(path, "w", encoding="utf-8") as f:
        json.dump(obj, f, indent=1)
        f.write("\n")
    print("wrote", path)


def main():
    os.makedirs(OUT_DIR, exist_ok=True)
    for n in (64, 1000):
        doc = header(n, "window samples; windows[name].call made windows[name].samples")
        doc["windows"] = {
            name: {"call": call, "samples": [float(v) for v in make(call, n)]}
            for name, call in OFFERED.items()
        }
        write("samples_n%d.json" % n, doc)
    n = 4096
    doc = header(n, "figures of merit: coherent_gain = sum(w)/(N*max(w)), enbw_bins = "
                    "N*sum(w^2)/sum(w)^2, scalloping_loss_db = -20log10(|W(0.5)|/|W(0)|), "
                    "highest_sidelobe_db and null_halfwidth_bins from rfft zero-padded x64 refined by "
                    "scipy.optimize.minimize_scalar, bandwidth_3db_bins = full width at exactly -3.0 dB "
                    "(scipy.optimize.brentq)")
    doc["windows"] = {}
    for name, call in list(OFFERED.items()) + list(EXTRA_FIGURES.items()):
        entry = {"call": call}
        entry.update(figures(make(call, n)))
        doc["windows"][name] = entry
    write("figures_n4096.json", doc)


if __name__ == "__main__":
    main()
