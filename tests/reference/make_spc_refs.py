#!/usr/bin/env python3
"""Reference values for the control charts (src/spc.rs), from numpy and scipy.

Writes tests/reference/spc/spc_refs.json: a few series shaped like lot-to-lot figures (an in-control
stretch, then a shift, a drift, an alternation and a hug of the centre), and for each what this
script computes with numpy, written from the published definitions and independently of spurline:
  individuals   centre = mean of the baseline; MRbar = mean |x[i] - x[i-1]| over the baseline;
                sigma = MRbar / d2, d2 = 2/sqrt(pi) (the mean range of two standard normals, computed
                here by numerical integration with scipy.integrate.quad); limits centre +/- 3 sigma;
                moving-range UCL = D4 * MRbar with D4 = 1 + 3 d3/d2, d3 = std of that range
                (also by integration)
  xbar_s        subgroups (n, mean, s); c4(n) = sqrt(2/(n-1)) Gamma(n/2)/Gamma((n-1)/2)
                (scipy.special.gammaln); sigma = mean(s/c4(n)) over the baseline; per subgroup
                xbar limits centre +/- 3 sigma/sqrt(n), S centre c4 sigma, limits
                c4 sigma +/- 3 sigma sqrt(1 - c4^2) (lower clipped at 0)
  rules         per point, the Western Electric (1956) rules 1-4 and Nelson (1984) tests 2, 3, 4, 7, 8
                on z = (x - centre)/sigma, flagged at the last point of each pattern
  cpk           min(USL - mean, mean - LSL)/(3 s) and Bissell (1990) interval
                cpk -/+ z sqrt(1/(9n) + cpk^2/(2(n-1))), z = scipy.stats.norm.ppf(0.975)
Run: python3 tests/reference/make_spc_refs.py   (numpy 2.x, scipy 1.x)
"""
import json
import math
import os

import numpy as np
import scipy
from scipy import integrate, special, stats

rng = np.random.default_rng(1956)

# d2 and d3 for ranges of two normals: E|X1 - X2| and its standard deviation, X ~ N(0, 1).
# X1 - X2 ~ N(0, 2): E|.| = sqrt(2) * E|N(0,1)|, by integration of the half-normal density.
half = lambda x: 2 * x * stats.norm.pdf(x)  # noqa: E731
e_abs = integrate.quad(half, 0, np.inf)[0]
d2 = math.sqrt(2) * e_abs
d3 = math.sqrt(2 - d2 * d2)  # E[(X1-X2)^2] = 2
D4 = 1 + 3 * d3 / d2

series = {
    "shift": np.concatenate([70 + 0.2 * rng.standard_normal(20), 70.5 + 0.2 * rng.standard_normal(10)]),
    "drift": np.concatenate([65 + 0.1 * rng.standard_normal(20), 65 + 0.06 * np.arange(1, 11)]),
    "alternate": np.concatenate([9.8 + 0.05 * rng.standard_normal(20), 9.8 + 0.04 * (-1.0) ** np.arange(16)]),
    "hug": np.concatenate([-75 + 0.5 * rng.standard_normal(20), -75 + 0.05 * rng.standard_normal(16)]),
    "spike": np.concatenate([60 + rng.standard_normal(25), [64.0], 60 + rng.standard_normal(4)]),
}
BASELINE = 20


def rules(z):
    n = len(z)
    out = []
    for i in range(n):
        r = []
        w = lambda k: z[max(0, i - k + 1): i + 1] if i + 1 >= k else None  # noqa: E731
        if abs(z[i]) > 3:
            r.append("WE1")
        win = w(3)
        if win is not None and ((z[i] > 2 and np.sum(win > 2) >= 2) or (z[i] < -2 and np.sum(win < -2) >= 2)):
            r.append("WE2")
        win = w(5)
        if win is not None and ((z[i] > 1 and np.sum(win > 1) >= 4) or (z[i] < -1 and np.sum(win < -1) >= 4)):
            r.append("WE3")
        win = w(8)
        if win is not None and (np.all(win > 0) or np.all(win < 0)):
            r.append("WE4")
        win = w(9)
        if win is not None and (np.all(win > 0) or np.all(win < 0)):
            r.append("N2")
        win = w(6)
        if win is not None:
            d = np.diff(win)
            if np.all(d > 0) or np.all(d < 0):
                r.append("N3")
        win = w(14)
        if win is not None:
            d = np.sign(np.diff(win))
            if np.all(d != 0) and np.all(d[1:] == -d[:-1]):
                r.append("N4")
        win = w(15)
        if win is not None and np.all(np.abs(win) < 1):
            r.append("N7")
        win = w(8)
        if win is not None and np.all(np.abs(win) > 1):
            r.append("N8")
        out.append(r)
    return out


def c4(n):
    return math.sqrt(2 / (n - 1)) * math.exp(special.gammaln(n / 2) - special.gammaln((n - 1) / 2))


out = {
    "generator": f"tests/reference/make_spc_refs.py, numpy {np.__version__}, scipy {scipy.__version__}",
    "baseline": BASELINE,
    "d2": d2,
    "D4": D4,
    "individuals": {},
    "xbar_s": {},
    "cpk": [],
}
for name, x in series.items():
    b = x[:BASELINE]
    centre = float(np.mean(b))
    mr_bar = float(np.mean(np.abs(np.diff(b))))
    sigma = mr_bar / d2
    z = (x - centre) / sigma
    out["individuals"][name] = {
        "x": [float(v) for v in x],
        "centre": centre,
        "sigma": sigma,
        "lcl": centre - 3 * sigma,
        "ucl": centre + 3 * sigma,
        "mr_centre": mr_bar,
        "mr_ucl": D4 * mr_bar,
        "rules": rules(z),
    }

# Subgroups of unequal size (lots of different device counts).
sizes = [int(v) for v in rng.integers(5, 40, 24)]
groups = []
for k, n in enumerate(sizes):
    v = 12.0 + (0.15 if k >= 20 else 0.0) + 0.3 * rng.standard_normal(n)
    groups.append((n, float(np.mean(v)), float(np.std(v, ddof=1))))
sig = float(np.mean([s / c4(n) for n, _, s in groups[:BASELINE]]))
cen = float(np.mean([m for _, m, _ in groups[:BASELINE]]))
out["xbar_s"] = {
    "groups": [{"n": n, "mean": m, "std": s} for n, m, s in groups],
    "centre": cen,
    "sigma": sig,
    "limits": [
        {
            "xbar_lcl": cen - 3 * sig / math.sqrt(n),
            "xbar_ucl": cen + 3 * sig / math.sqrt(n),
            "s_centre": c4(n) * sig,
            "s_lcl": max(0.0, c4(n) * sig - 3 * sig * math.sqrt(1 - c4(n) ** 2)),
            "s_ucl": c4(n) * sig + 3 * sig * math.sqrt(1 - c4(n) ** 2),
        }
        for n, _, _ in groups
    ],
}

z975 = float(stats.norm.ppf(0.975))
for n, low, high in [(30, 60.0, None), (200, None, -60.0), (1000, 9.5, 10.5), (12, 0.0, 1.0)]:
    v = (low if low is not None else high - 4) + 2.0 + 0.4 * rng.standard_normal(n)
    m, s = float(np.mean(v)), float(np.std(v, ddof=1))
    sides = []
    if low is not None:
        sides.append((m - low) / (3 * s))
    if high is not None:
        sides.append((high - m) / (3 * s))
    cpk = min(sides)
    half_width = z975 * math.sqrt(1 / (9 * n) + cpk * cpk / (2 * (n - 1)))
    out["cpk"].append({"n": n, "mean": m, "std": s, "low": low, "high": high, "cpk": cpk,
                       "ci_low": cpk - half_width, "ci_high": cpk + half_width})

path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "spc", "spc_refs.json")
os.makedirs(os.path.dirname(path), exist_ok=True)
with open(path, "w") as f:
    json.dump(out, f, indent=1)
    f.write("\n")
print("wrote", path)
