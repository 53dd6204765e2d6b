#!/usr/bin/env python3
"""Reference values for the revision-comparison statistics (src/compare/stats.rs).

Writes tests/reference/compare/ttests.json: for a few fixed samples, scipy.stats.ttest_ind(b, a,
equal_var=False) (Welch) and scipy.stats.ttest_rel(b, a) (paired), with 95 % confidence intervals of
the difference of means (b − a) from the results' confidence_interval(). Deterministic: the samples are
generated from a fixed seed and stored beside the results. Run: python3 make_ttest_refs.py
"""
import json
import os

import numpy as np
import scipy
from scipy import stats

rng = np.random.default_rng(20261201)
cases = []


def add(name, a, b, paired):
    a = [float(x) for x in a]
    b = [float(x) for x in b]
    w = stats.ttest_ind(b, a, equal_var=False)
    wci = w.confidence_interval(0.95)
    entry = {
        "name": name,
        "a": a,
        "b": b,
        "welch": {
            "statistic": float(w.statistic),
            "df": float(w.df),
            "p_value": float(w.pvalue),
            "ci_low": float(wci.low),
            "ci_high": float(wci.high),
        },
        "summary_a": {
            "mean": float(np.mean(a)),
            "std": float(np.std(a, ddof=1)),
            "median": float(np.median(a)),
        },
    }
    if paired:
        r = stats.ttest_rel(b, a)
        rci = r.confidence_interval(0.95)
        entry["paired"] = {
            "statistic": float(r.statistic),
            "df": float(r.df),
            "p_value": float(r.pvalue),
            "ci_low": float(rci.low),
            "ci_high": float(rci.high),
        }
    cases.append(entry)


add("snr_shift_small_n", rng.normal(70.0, 0.4, 6), rng.normal(70.5, 0.6, 7), False)
a = rng.normal(62.0, 0.8, 20)
add("sfdr_paired", a, a + rng.normal(0.3, 0.25, 20), True)
add("unequal_sizes", rng.normal(-85.0, 1.5, 12), rng.normal(-84.2, 0.5, 40), False)
a = rng.normal(11.2, 0.05, 9)
add("enob_paired_no_change", a, a + rng.normal(0.0, 0.02, 9), True)

out = {
    "generator": "tests/reference/make_ttest_refs.py",
    "numpy": np.__version__,
    "scipy": scipy.__version__,
    "cases": cases,
}
here = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(here, "compare", "ttests.json"), "w") as f:
    json.dump(out, f, indent=1, sort_keys=True)
    f.write("\n")
