#!/usr/bin/env python3
"""The yardstick for the whole-process speed target: one text record analysed the way a lab would
script it in numpy/scipy (read the codes with numpy.loadtxt, then the same methods spurline uses).

The analysis is the independent numpy/scipy implementation of spurline's documented conventions kept in
tests/reference/make_pipeline_refs.py (four-parameter fit with scipy.optimize.least_squares started from
an FFT peak, the coherence test, the automatic window ladder of periodic cosine sums made by
scipy.signal.windows.general_cosine, a one-sided numpy.fft.rfft power spectrum, DC/fundamental/harmonic
bin claiming, SNR, SINAD, THD, SFDR, ENOB). It is used as written there, not tuned either way.

Usage:  python3 benches/anchor.py RECORD.txt BITS        (prints the figures as one JSON object)
benches/anchor.sh runs it beside spurline on the same record.
"""

import json
import os
import sys

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tests", "reference"))
from make_pipeline_refs import analyse  # noqa: E402


def main():
    path, bits = sys.argv[1], int(sys.argv[2])
    codes = np.loadtxt(path, dtype=np.int64)
    figures = analyse(codes, bits)
    figures.pop("harmonics")
    print(json.dumps(figures, sort_keys=True))


if __name__ == "__main__":
    main()
