"""The Dask example (python/examples/dask_lot.py) on a LocalCluster of two worker processes: the rows of
a lot spread over the cluster equal one process's, and a bad file is a row with its error."""

import importlib.util
import pathlib

EXAMPLE = pathlib.Path(__file__).resolve().parents[1] / "examples" / "dask_lot.py"


def load_example():
    spec = importlib.util.spec_from_file_location("dask_lot", EXAMPLE)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_dask_lot_equals_one_process(capsys):
    example = load_example()
    # main() itself raises unless the cluster's rows equal one process's, field for field.
    rows = example.main(records=24, workers=2, chunk=5)
    assert len(rows) == 24
    assert [r["file"] for r in rows] == [f"dut{i:04d}.bin" for i in range(24)]
    bad = [r for r in rows if r["error.kind"] is not None]
    assert [r["file"] for r in bad] == ["dut0012.bin"] and bad[0]["error.kind"] == "partial_word"
    # Each device: a -1 dBFS tone at 12 bits (A = 1825 codes) with at most 1.5 codes rms of noise plus
    # q/sqrt(12) of rounding, so SNR >= 10*log10((A^2/2) / (1.5^2 + 1/12)) = 58.5 dB (q/sqrt(12):
    # handbook quantisation noise); and at most the ideal 12-bit 74 dB (6.02N + 1.76) less 1 dB.
    snr = [r["spectrum.snr_db"] for r in rows if r["error.kind"] is None]
    assert all(58.0 < v < 73.1 for v in snr), snr
    assert "equal to one process" in capsys.readouterr().out
