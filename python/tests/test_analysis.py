"""The Python package against outside references: the command line's --json on the same records,
scipy's windows, a plain NumPy SNR, the handbook's ideal-quantisation figures; every dtype, strided
arrays, bad arguments, parallel against serial."""

import json
import pathlib
import subprocess

import numpy as np
import pytest

import spurline
from conftest import ROOT, tone
import tolerances as tol

OPTS = ["--fs", "100M", "--bits", "12"]


def cli_json(binary, files, *extra):
    """`spurline analyze --json` of the files: one object per file."""
    p = subprocess.run(
        [binary, "analyze", "--json", *OPTS, *extra, *map(str, files)],
        capture_output=True,
        text=True,
    )
    assert p.returncode in (0, 2), p.stderr
    return json.loads(p.stdout)


# Source: the command line of this repository. The package links the same library, so every field
# of every record (numbers included, as JSON writes them) is the same, including a failed file.
def test_files_equal_the_command_line_field_for_field(spurline_bin, records):
    d, _ = records
    files = [d / "a.txt", d / "b.bin", d / "c.csv", d / "bad.txt", d / "missing.txt"]
    # The binary record needs its word format, the others not: one call each, as a bench would.
    want = (
        cli_json(spurline_bin, [files[0]])
        + cli_json(spurline_bin, [files[1]], "--format", "i16le")
        + cli_json(spurline_bin, [files[2]], "--column", "code")
        + cli_json(spurline_bin, files[3:])
    )
    got = (
        spurline.analyze_files([files[0]], fs=100e6, bits=12)
        + spurline.analyze_files([files[1]], fs=100e6, bits=12, format="i16le")
        + spurline.analyze_files([files[2]], fs=100e6, bits=12, column="code")
        + spurline.analyze_files(files[3:], fs=100e6, bits=12, jobs=2)
    )
    assert [g.to_dict() for g in got] == want
    assert [g.ok for g in got] == [True, True, True, False, False]
    assert got[3].error.kind == "not_integer"
    assert got[4].error.kind == "io"


# Source: the command line (`--average`).
def test_averaged_files_equal_the_command_line(spurline_bin, records):
    d, _ = records
    files = [d / "a.txt", d / "c.csv"]
    want = cli_json(spurline_bin, files, "--average", "--column", "code")
    got = spurline.analyze_files(files, fs=100e6, bits=12, average=True, column="code")
    assert [g.to_dict() for g in got] == want
    assert got[0].spectrum.records_averaged == 2
    # The same through read() and analyze() of a list (averaged).
    recs = [spurline.read(f, fs=100e6, bits=12, column="code") for f in files]
    assert [spurline.analyze(recs).to_dict()] == want


# Source: the command line, with every analysis setting it has.
@pytest.mark.parametrize(
    "cli,kw",
    [
        (["--window", "hann", "--harmonics", "5"], dict(window="hann", harmonics=5)),
        (["--window", "blackman-harris-4", "--guard-bins", "2"], dict(window="blackman-harris-4", guard_bins=2)),
        (["--fit", "three", "--fin", "9790039.0625"], dict(fit="three", fin=9790039.0625)),
    ],
)
def test_settings_equal_the_command_line(spurline_bin, records, cli, kw):
    d, _ = records
    want = cli_json(spurline_bin, [d / "a.txt"], *cli)
    rec = spurline.read(d / "a.txt", fs=100e6, bits=12)
    assert spurline.analyze(rec, **kw).to_dict() == want[0]


# Source: the command line; an array analysed from memory gives the figures of its file.
def test_array_equals_its_file(spurline_bin, records):
    d, codes = records
    want = cli_json(spurline_bin, [d / "a.txt"])[0]
    got = spurline.analyze(codes["a.txt"], fs=100e6, bits=12, source=str(d / "a.txt")).to_dict()
    assert got == want


# Source: scipy.signal.get_window(name, N) (fftbins=True, the periodic form), stored with the script
# that made it in tests/reference/windows/ (make_window_refs.py); live scipy too when it is installed.
def test_windows_equal_scipy():
    for n in (64, 1000):
        ref = json.loads((ROOT / "tests/reference/windows" / f"samples_n{n}.json").read_text())
        assert ref["form"].startswith("periodic")
        for name, entry in ref["windows"].items():
            w = spurline.window(name, n)
            np.testing.assert_allclose(w, entry["samples"], rtol=0, atol=tol.WINDOW_ABS, err_msg=name)
    try:
        from scipy.signal import get_window
    except ImportError:
        return
    for name, sp in [("hann", "hann"), ("rectangular", "boxcar"), ("blackman-harris-4", "blackmanharris"), ("kaiser(8.6)", ("kaiser", 8.6))]:
        np.testing.assert_allclose(spurline.window(name, 512), get_window(sp, 512), rtol=0, atol=tol.WINDOW_ABS)


def numpy_snr_db(x, k0, harmonics):
    """SNR of a coherent record by plain NumPy, the conventions of the crate docs: rectangular window,
    one-sided bin powers 2|X_k|^2/N^2 (bins 0 and N/2 not doubled, so they weigh half), DC, the
    fundamental and harmonics 2..H (folded) excluded; the noise under the excluded bins is the mean
    noise per unit weight times their weight, so the noise is that mean times N/2; the fundamental has
    the noise under its bin subtracted. IEEE Std 1241-2010 4.1.4.1 / 4.1.6 (SNR from the DFT bins)."""
    n = len(x)
    X = np.fft.rfft(np.asarray(x, dtype=np.float64))
    p = np.abs(X) ** 2 / n**2
    w = np.ones(len(p))
    w[0] = 0.5
    if n % 2 == 0:
        w[-1] = 0.5
    p = p * 2 * w
    claimed = {0, k0}
    for h in range(2, harmonics + 1):
        k = (h * k0) % n
        claimed.add(min(k, n - k))
    noise = np.array([k not in claimed for k in range(len(p))])
    mean = p[noise].sum() / w[noise].sum()
    fundamental = p[k0] - mean * w[k0]
    return 10 * np.log10(fundamental / (mean * n / 2))


# Source: a plain NumPy computation written here (FFT, bin sums); 1e-9 relative.
def test_coherent_snr_equals_numpy():
    x = tone(4096, 401, 12, noise_rms=1.5, seed=5)
    r = spurline.analyze(x, fs=1e6, bits=12, window="rectangular")
    want = numpy_snr_db(x, 401, 10)
    assert r.spectrum.snr_db == pytest.approx(want, rel=tol.SNR_REL)


# Source: handbook formulas for an ideal N-bit converter: SNR = 6.02N + 1.76 dB for a full-scale sine,
# quantisation noise q/sqrt(12) (so the fit form of ENOB is N).
@pytest.mark.parametrize("bits", [8, 12, 16])
def test_ideal_quantisation_meets_the_handbook(bits):
    n = 1 << 14
    t = np.arange(n)
    a = 2.0 ** (bits - 1) - 0.5  # full scale, kept inside the codes
    x = np.round(a * np.sin(2 * np.pi * 1021 * t / n + 0.1))
    r = spurline.analyze(x.astype(np.int32), fs=1e6, bits=bits)
    amplitude_db = 20 * np.log10(a / 2.0 ** (bits - 1))
    assert r.spectrum.snr_db == pytest.approx(6.02 * bits + 1.76 + amplitude_db, abs=tol.IDEAL_SNR_DB)
    # q/sqrt(12): the fit's residual of an ideal converter is its quantisation noise.
    assert r.fit.residual_rms_codes == pytest.approx(1 / np.sqrt(12), rel=0.05)
    assert r.fit.enob_bits == pytest.approx(bits, abs=tol.IDEAL_ENOB_BITS)


INT_DTYPES = [np.int8, np.int16, np.int32, np.int64, np.uint8, np.uint16, np.uint32, np.uint64]


# Common practice, no source: a record's figures do not depend on the word it was stored in. Unsigned
# words hold offset binary (mid-scale 2^(N-1)), as the command line reads unsigned binary words.
def test_every_integer_dtype_and_float_voltages_give_the_same_figures():
    x = tone(2048, 151, 8, noise_rms=0.4, seed=7)
    want = spurline.analyze(x.astype(np.int64), fs=1e6, bits=8).to_dict()
    for dt in INT_DTYPES:
        v = x + 128 if np.dtype(dt).kind == "u" else x
        got = spurline.analyze(v.astype(dt), fs=1e6, bits=8).to_dict()
        assert got == want, dt
    # Voltages on the code grid of a 2 Vpp converter: q = 2 V / 2^8.
    q = 2.0 / 256
    for dt in (np.float64, np.float32):
        volts = (x * q).astype(dt)
        got = spurline.analyze(volts, fs=1e6, bits=8, full_scale_vpp=2.0).to_dict()
        assert got["spectrum"] == want["spectrum"] and got["fit"] == want["fit"], dt
        assert got["full_scale_vpp"] == 2.0
        assert not any("off the" in w for w in got["warnings"])
    # Voltages off the grid are rounded to codes, and a warning says so.
    r = spurline.analyze(x * q + 0.3 * q, fs=1e6, bits=8, full_scale_vpp=2.0)
    assert any("off the 8-bit code grid" in w for w in r.warnings)
    # An explicit coding: the same unsigned words read as two's complement differ.
    assert spurline.analyze((x + 128).astype(np.uint8), fs=1e6, bits=8, coding="offset").to_dict() == want


# Common practice, no source: a strided view is the same record as its contiguous copy.
def test_non_contiguous_arrays():
    x = tone(8192, 803, 12, seed=9)
    strided = x.astype(np.int16)[::2]
    assert not strided.flags["C_CONTIGUOUS"]
    want = spurline.analyze(np.ascontiguousarray(strided), fs=1e6, bits=12).to_dict()
    assert spurline.analyze(strided, fs=1e6, bits=12).to_dict() == want
    two_d = np.asfortranarray(np.stack([x, x]).T.astype(np.int32))  # column of a 2-D array
    col = two_d[:, 1]
    assert spurline.analyze(col, fs=1e6, bits=12).to_dict() == spurline.analyze(x, fs=1e6, bits=12).to_dict()
    swapped = x.astype(">i2")  # big-endian words
    assert spurline.analyze(swapped, fs=1e6, bits=12).to_dict() == spurline.analyze(x, fs=1e6, bits=12).to_dict()


# The exceptions carry the command line's parts (kind, path, location, expected, found).
def test_bad_arguments_raise_the_right_exception(records):
    d, _ = records
    x = tone(1024, 101, 12)
    with pytest.raises(spurline.SpurlineError) as e:
        spurline.analyze(x, fs=1e6, bits=0)
    assert (e.value.kind, e.value.key, e.value.found) == ("bad_setting", "bits", "0")
    assert isinstance(e.value, ValueError)
    with pytest.raises(spurline.SpurlineError) as e:
        spurline.analyze(x, fs=1e6, bits=12, window="triangle")
    assert e.value.kind == "bad_setting" and e.value.key == "window"
    with pytest.raises(spurline.SpurlineError) as e:
        spurline.analyze(x, fs=-5, bits=12)
    assert e.value.key == "sample_rate_hz"
    with pytest.raises(spurline.SpurlineError) as e:
        spurline.analyze(x, fs=1e6, bits=12, harmonics=0)
    assert e.value.key == "harmonics"
    bad = x.copy()
    bad[17] = 5000
    with pytest.raises(spurline.SpurlineError) as e:
        spurline.analyze(bad, fs=1e6, bits=12, source="bench.npy")
    assert (e.value.kind, e.value.path, e.value.key, e.value.found) == ("code_out_of_range", "bench.npy", "[17]", "5000")
    with pytest.raises(spurline.SpurlineError) as e:
        spurline.analyze(x * 0.001, fs=1e6, bits=12)
    assert e.value.key == "full_scale_vpp"
    with pytest.raises(spurline.SpurlineError) as e:
        spurline.analyze(x[:10], fs=1e6, bits=12)
    assert e.value.kind == "too_few_samples"
    with pytest.raises(TypeError):
        spurline.analyze(x.astype(np.complex128), fs=1e6, bits=12)
    with pytest.raises(TypeError):
        spurline.analyze(np.array(["a", "b"]), fs=1e6, bits=12)
    with pytest.raises(spurline.SpurlineError) as e:
        spurline.read(d / "bad.txt", fs=1e6, bits=12)
    assert (e.value.kind, e.value.line, e.value.found) == ("not_integer", 3, "'forty'")
    assert e.value.path.endswith("bad.txt")
    with pytest.raises(spurline.SpurlineError) as e:
        spurline.read(d / "nowhere.bin", fs=1e6, bits=12, format="i16le")
    assert e.value.kind == "io"


# Determinism (crate docs): the same inputs give the same results whatever the thread count; a bad
# record in a batch is reported and the rest go on.
def test_parallel_equals_serial():
    xs = [tone(4096, 401 + 2 * i, 12, seed=i) for i in range(12)]
    xs[5] = xs[5].copy()
    xs[5][3] = 99999
    serial = []
    for i, x in enumerate(xs):
        try:
            serial.append(spurline.analyze(x, fs=1e6, bits=12, source=f"r{i}", keep_traces=False).to_dict())
        except spurline.SpurlineError as e:
            serial.append(e.kind)
    for jobs in (1, 2, None):
        got = spurline.analyze_many(xs, fs=1e6, bits=12, sources=[f"r{i}" for i in range(12)], jobs=jobs)
        for i, (g, s) in enumerate(zip(got, serial)):
            if i == 5:
                assert not g.ok and g.error.kind == s == "code_out_of_range"
            else:
                assert g.to_dict() == s
    # A 2-D array is one record per row.
    stacked = np.stack([x for i, x in enumerate(xs) if i != 5])
    assert [r.to_dict()["spectrum"] for r in spurline.analyze_many(stacked, fs=1e6, bits=12)] == [
        s["spectrum"] for i, s in enumerate(serial) if i != 5
    ]


# Common practice, no source: the spectrum arrays are the bins k*fs/N and their powers re full scale;
# a full-scale tone's bin is near 0 dBFS (its power sums to the tone's, A^2/2).
def test_spectrum_arrays_and_display():
    x = tone(4096, 401, 12, dbfs=-1.0, noise_rms=0.5)
    r = spurline.analyze(x, fs=100e6, bits=12)
    f, p = r.frequency_hz, r.power_dbfs
    assert len(f) == len(p) == 4096 // 2 + 1
    assert f[1] == pytest.approx(100e6 / 4096, rel=1e-15)
    assert int(np.argmax(p)) == 401
    assert p[401] == pytest.approx(r.spectrum.fundamental_dbfs, abs=0.01)
    html = r._repr_html_()
    assert "<svg" in html and "SNR" in html
    row = r.row()
    assert row["spectrum.snr_db"] == r.spectrum.snr_db and isinstance(row["samples"], int)
    # Keys of the figure table are the row's keys (derived, not kept by hand).
    keys = {f["key"] for f in spurline.figure_table() if "{n}" not in f["key"]}
    assert {"spectrum.snr_db", "fit.enob_bits"} <= keys
    assert set(row) >= {k for k in keys if not k.startswith("error")}
    # Fields the library adds reach Python without a list here: the one-sigma uncertainty of each
    # figure (README, "Uncertainty of every figure") is an attribute and a typed column.
    assert r.spectrum.uncertainty.snr_db > 0
    assert row["spectrum.uncertainty.snr_db"] == r.spectrum.uncertainty.snr_db
    assert "±" in html
