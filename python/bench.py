"""Speed of the Python package against the library called from Rust and against `spurline batch`
(a benchmark, not a test; figures go to the README's performance section).

    python python/bench.py [--records 1000] [--binary target/release/spurline]

1. One 2^20-sample record: `spurline.analyze` of an int32 array (the Python call: argument handling,
   the conversion of the array into the library's record, the analysis with the GIL released, the
   result object) against the library's `analyze` of the same record timed inside Rust, in the same
   process, alternating, median of each.
2. 1,000 records of 2^14 samples (14-bit, i16le files, 100 devices x 10 conditions): `spurline batch`
   with --jobs 2 (no limits, no plots) against `analyze_files(paths, jobs=2)` and
   `analyze_many(arrays, jobs=2)`, records per second, best of three.
"""

import argparse
import pathlib
import statistics
import subprocess
import tempfile
import time

import numpy as np

import spurline
from spurline import _native


def tone(n, cycles, bits, noise, seed):
    rng = np.random.default_rng(seed)
    t = np.arange(n)
    a = 2.0 ** (bits - 1) * 10 ** (-1 / 20)
    x = a * np.sin(2 * np.pi * cycles * t / n + 0.2) + rng.normal(0, noise, n)
    return np.clip(np.round(x), -(2 ** (bits - 1)), 2 ** (bits - 1) - 1)


def single(repeats):
    x = tone(1 << 20, 100_003, 16, 2.0, 1).astype(np.int32)
    py, rust = [], []
    spurline.analyze(x, fs=100e6, bits=16, keep_traces=False)  # warm the FFT plans
    for _ in range(repeats):
        t = time.perf_counter()
        spurline.analyze(x, fs=100e6, bits=16, keep_traces=False)
        py.append(time.perf_counter() - t)
        rust.extend(_native._bench_rust_analyze(x, 100e6, 16, 1))
    p, r = statistics.median(py), statistics.median(rust)
    print(f"2^20 samples: Python call {p * 1e3:.1f} ms, Rust call {r * 1e3:.1f} ms (medians of {repeats}), "
          f"Python/Rust = {p / r:.3f}")


def lot(records, binary):
    devices, conditions = records // 10, 10
    with tempfile.TemporaryDirectory() as tmp:
        d = pathlib.Path(tmp)
        plan = ['[converter]\nbits = 14\nsample_rate_hz = 100e6\nformat = "i16le"\n\n'
                '[records]\npattern = "r/{device}/{condition}.bin"\n']
        cycles = [101 + 202 * k for k in range(conditions)]  # odd cycle counts: coherent
        for k, c in enumerate(cycles):
            plan.append(f'\n[[condition]]\nname = "c{k}"\nfin_hz = {c * 100e6 / 16384}\namplitude_dbfs = -1.0\n')
        (d / "plan.toml").write_text("".join(plan))
        paths, arrays = [], []
        for dev in range(devices):
            folder = d / "r" / f"d{dev:03d}"
            folder.mkdir(parents=True)
            for k, c in enumerate(cycles):
                x = tone(1 << 14, c, 14, 1.0 + 0.01 * dev, dev * conditions + k).astype("<i2")
                p = folder / f"c{k}.bin"
                x.tofile(p)
                paths.append(str(p))
                arrays.append(x)
        best = lambda f: min(f() for _ in range(3))

        def run_batch():
            t = time.perf_counter()
            subprocess.run([binary, "batch", str(d / "plan.toml"), "--out", str(d / "out"), "--jobs", "2"],
                           check=True, capture_output=True)
            return time.perf_counter() - t

        def run_files():
            t = time.perf_counter()
            spurline.analyze_files(paths, fs=100e6, bits=14, format="i16le", jobs=2)
            return time.perf_counter() - t

        def run_arrays():
            t = time.perf_counter()
            spurline.analyze_many(arrays, fs=100e6, bits=14, jobs=2)
            return time.perf_counter() - t

        n = len(paths)
        b, f, a = best(run_batch), best(run_files), best(run_arrays)
        print(f"{n} records of 2^14: spurline batch --jobs 2 {n / b:.0f} records/s; "
              f"analyze_files jobs=2 {n / f:.0f} records/s ({b / f:.0%} of batch); "
              f"analyze_many jobs=2 {n / a:.0f} records/s ({b / a:.0%} of batch)")


if __name__ == "__main__":
    ap = argparse.ArgumentParser()
    ap.add_argument("--records", type=int, default=1000)
    ap.add_argument("--repeats", type=int, default=15)
    ap.add_argument("--binary", default="target/release/spurline")
    a = ap.parse_args()
    single(a.repeats)
    lot(a.records, a.binary)
