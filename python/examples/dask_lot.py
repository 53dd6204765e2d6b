"""A lot of record files spread over a Dask cluster: each task reads and analyses a chunk of files with
spurline (in parallel inside the task as well), and the rows come back in file order, ready for
pandas.DataFrame. On a real cluster, point `Client` at the scheduler instead of a LocalCluster; the
record files must be readable from every worker (a shared file system).

    python python/examples/dask_lot.py --records 200 --workers 2

The rows equal those of one process (`spurline.analyze_files`), field for field: the check at the end.
"""

from __future__ import annotations

import argparse
import pathlib
import tempfile
from typing import Any, Dict, List, Sequence

import numpy as np

import spurline


def analyze_chunk(paths: Sequence[str], options: Dict[str, Any]) -> List[Dict[str, Any]]:
    """One task: the flat rows of these files (plain dicts, which pickle; results do not)."""
    return spurline.rows(
        spurline.analyze_files(paths, jobs=1, **options),
        file=[pathlib.Path(p).name for p in paths],
    )


def analyze_lot(client, paths: Sequence[str], options: Dict[str, Any], chunk: int = 16):
    """The rows of every file, in the files' order, computed on the cluster behind `client`."""
    chunks = [list(paths[i : i + chunk]) for i in range(0, len(paths), chunk)]
    futures = client.map(analyze_chunk, chunks, options=options, pure=False)
    rows: List[Dict[str, Any]] = []
    for part in client.gather(futures):
        rows.extend(part)
    return rows


def write_lot(folder: pathlib.Path, records: int, samples: int = 4096, bits: int = 12) -> List[str]:
    """A generated lot: `records` binary files (int16 words) of a 12-bit converter digitising a tone of
    a prime cycle count, each device with its own noise and second harmonic; one file is cut short
    (a partial word) to show that a bad file is a row with its error and the rest go on."""
    rng = np.random.default_rng(2024)
    t = np.arange(samples)
    paths = []
    for i in range(records):
        a = 2.0 ** (bits - 1) * 10 ** (-1 / 20)
        ph = 2 * np.pi * 401 * t / samples + rng.uniform(0, 2 * np.pi)
        x = a * (np.sin(ph) + rng.uniform(1e-4, 1e-3) * np.sin(2 * ph))
        x += rng.normal(0, rng.uniform(0.5, 1.5), samples)
        codes = np.clip(np.round(x), -(2 ** (bits - 1)), 2 ** (bits - 1) - 1).astype("<i2")
        p = folder / f"dut{i:04d}.bin"
        data = codes.tobytes()
        p.write_bytes(data[:-1] if i == records // 2 else data)
        paths.append(str(p))
    return paths


def main(records: int = 64, workers: int = 2, chunk: int = 16) -> List[Dict[str, Any]]:
    from dask.distributed import Client, LocalCluster

    options = dict(fs=100e6, bits=12, format="i16le")
    with tempfile.TemporaryDirectory() as tmp:
        paths = write_lot(pathlib.Path(tmp), records)
        with LocalCluster(
            n_workers=workers, threads_per_worker=1, processes=True, dashboard_address=None
        ) as cluster, Client(cluster) as client:
            rows = analyze_lot(client, paths, options, chunk=chunk)
        # One process, same files, same settings: the rows must be the same.
        single = spurline.rows(
            spurline.analyze_files(paths, **options), file=[pathlib.Path(p).name for p in paths]
        )
    if rows != single:
        raise SystemExit("the cluster's rows differ from one process's rows")
    failed = [r for r in rows if r.get("error.kind")]
    snr = [r["spectrum.snr_db"] for r in rows if r.get("spectrum.snr_db") is not None]
    print(
        f"{len(rows)} records on {workers} workers: {len(failed)} failed, "
        f"SNR {min(snr):.2f}..{max(snr):.2f} dB; equal to one process"
    )
    return rows


if __name__ == "__main__":
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--records", type=int, default=200)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--chunk", type=int, default=16)
    a = ap.parse_args()
    main(a.records, a.workers, a.chunk)
