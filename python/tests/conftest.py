"""Fixtures of the Python package's tests: the command-line binary to compare with, and records
written the way a bench writes them (generated here with a fixed seed, in our own scenario)."""

import os
import pathlib
import shutil
import subprocess

import numpy as np
import pytest

ROOT = pathlib.Path(__file__).resolve().parents[2]


def _binary():
    """The spurline binary: SPURLINE_BIN, else the one `cargo test` or `cargo build` left in target/."""
    named = os.environ.get("SPURLINE_BIN")
    if named:
        return pathlib.Path(named)
    for profile in ("release", "debug"):
        p = ROOT / "target" / profile / "spurline"
        if p.is_file():
            return p
    return None


@pytest.fixture(scope="session")
def spurline_bin():
    path = _binary()
    if path is None or not path.is_file():
        # Build it rather than skip: the comparison with the command line is the point of the package.
        subprocess.run(
            ["cargo", "build", "--locked", "--quiet", "--bin", "spurline"], cwd=ROOT, check=True
        )
        path = ROOT / "target" / "debug" / "spurline"
    return str(path)


def tone(n, cycles, bits, *, dbfs=-1.0, noise_rms=0.7, h2=3e-4, h3=1e-4, seed=1):
    """Codes of an N-bit converter digitising a sine of `cycles` cycles in `n` samples at `dbfs`, with
    second and third harmonics (relative amplitudes h2, h3) and Gaussian noise, rounded and clipped."""
    rng = np.random.default_rng(seed)
    a = 2.0 ** (bits - 1) * 10 ** (dbfs / 20)
    t = np.arange(n)
    ph = 2 * np.pi * cycles * t / n + 0.3
    x = a * (np.sin(ph) + h2 * np.sin(2 * ph) + h3 * np.sin(3 * ph)) + rng.normal(0, noise_rms, n)
    lo, hi = -(2 ** (bits - 1)), 2 ** (bits - 1) - 1
    return np.clip(np.round(x), lo, hi).astype(np.int64)


@pytest.fixture(scope="session")
def records(tmp_path_factory):
    """Record files in three formats and one bad file, with the codes written into each."""
    d = tmp_path_factory.mktemp("records")
    out = {}
    a = tone(4096, 401, 12, seed=1)
    (d / "a.txt").write_text("\n".join(str(v) for v in a) + "\n")
    out["a.txt"] = a
    b = tone(8192, 1001.37, 12, seed=2)  # not coherent: a window is chosen
    b.astype("<i2").tofile(d / "b.bin")
    out["b.bin"] = b
    c = tone(4096, 401, 12, seed=3, dbfs=-3)
    (d / "c.csv").write_text("time,code\n" + "".join(f"{i},{v}\n" for i, v in enumerate(c)))
    out["c.csv"] = c
    (d / "bad.txt").write_text("12\n7\nforty\n")
    return d, out
