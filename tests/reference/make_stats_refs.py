#!/usr/bin/env python3
"""Reference values for the lot statistics (src/stats.rs), from numpy and scipy.

Writes tests/reference/stats/stats_refs.json: a few data sets shaped like lot results (normal, skewed,
heavy- and light-tailed, tiny) and, for each, what numpy/scipy compute:
  mean            numpy.mean
  std             numpy.std(ddof=1)                      (sample standard deviation)
  percentiles     numpy.percentile(method="linear")      (Hyndman & Fan type 7)
  skewness        scipy.stats.skew(bias=False)           (adjusted Fisher-Pearson G1)
  excess_kurtosis scipy.stats.kurtosis(fisher=True, bias=False)
  jarque_bera     scipy.stats.jarque_bera                (statistic, p-value)
  cpk             min((high - mean)/(3 std), (mean - low)/(3 std)) with numpy's mean and std
                  (the textbook formula; scipy has no Cpk function)
  sigma_limits    mean -/+ 6 std
Run: python3 tests/reference/make_stats_refs.py   (numpy 2.x, scipy 1.x)
"""
import json
import os

import numpy as np
import scipy
from scipy import stats

rng = np.random.default_rng(1241)
sets = {
    "normal_30": 67.0 + 0.3 * rng.standard_normal(30),
    "skewed_40": 70.0 - rng.exponential(0.8, 40),
    "heavy_50": 65.0 + 0.5 * rng.laplace(0.0, 1.0, 50) ** 3,
    "uniform_12": rng.uniform(-75.0, -70.0, 12),
    "small_5": np.array([60.1, 60.4, 59.9, 60.0, 61.2]),
}
percents = [0.0, 0.135, 1.0, 5.0, 25.0, 50.0, 75.0, 95.0, 99.0, 99.865, 100.0]


def none_if_nan(v):
    v = float(v)
    return None if np.isnan(v) else v


out = {
    "generator": "tests/reference/make_stats_refs.py",
    "numpy": np.__version__,
    "scipy": scipy.__version__,
    "sets": {},
}
for name, x in sets.items():
    x = np.asarray(x, dtype=float)
    mean = float(np.mean(x))
    std = float(np.std(x, ddof=1))
    jb = stats.jarque_bera(x)
    lims = [(mean - 1.0, mean + 2.0), (mean - 0.5, None), (None, mean + 0.25), (mean + 0.1, mean + 3.0)]
    cpk = []
    for lo, hi in lims:
        sides = []
        if lo is not None:
            sides.append((mean - lo) / (3 * std))
        if hi is not None:
            sides.append((hi - mean) / (3 * std))
        cpk.append({"low": lo, "high": hi, "cpk": float(min(sides))})
    out["sets"][name] = {
        "values": [float(v) for v in x],
        "mean": mean,
        "std": std,
        "min": float(np.min(x)),
        "max": float(np.max(x)),
        "percentiles": [[p, float(np.percentile(x, p, method="linear"))] for p in percents],
        "skewness": none_if_nan(stats.skew(x, bias=False)) if len(x) >= 3 else None,
        "excess_kurtosis": none_if_nan(stats.kurtosis(x, fisher=True, bias=False)) if len(x) >= 4 else None,
        "jarque_bera": [float(jb.statistic), float(jb.pvalue)],
        "cpk": cpk,
        "sigma_limits_k6": [mean - 6 * std, mean + 6 * std],
    }

path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "stats", "stats_refs.json")
with open(path, "w") as f:
    json.dump(out, f, indent=1)
    f.write("\n")
print("wrote", path)
