"""spurline.read on the stored capture fixtures (tests/reference/formats, written by numpy, Python's
`wave` module and scipy.io.wavfile with make_format_refs.py beside them) against NumPy's own reading:
the plain text record through numpy.loadtxt, and the .npy files through numpy.load."""

import json

import numpy as np
import pytest

import spurline
from conftest import ROOT

FORMATS = ROOT / "tests" / "reference" / "formats"
MANIFEST = json.loads((FORMATS / "formats.json").read_text())
FS = MANIFEST["sample_rate_hz"]
# The reference codes, read by NumPy (a general-purpose reader), not by spurline.
CODES = np.loadtxt(FORMATS / MANIFEST["text"], dtype=np.int64)


def _options(entry):
    """The manifest's reading options as spurline.read's keyword arguments."""
    opts = {}
    if not entry.get("fs_from_file"):
        opts["fs"] = FS
    for key in ("bits", "full_scale_vpp", "channel", "coding", "justify"):
        if key in entry:
            opts[key] = entry[key]
    if "column" in entry:
        opts["column"] = entry["column"]
    # Raw words and packed samples name their layout; npy, WAV, text and CSV are found by content.
    if entry["format"] not in ("npy", "wav", "text", "csv"):
        opts["format"] = entry["format"]
    return opts


# Entries stating a sample unit ("full-scale") need an option the Python reader does not take yet;
# the analogue view (no bits) is covered by the Rust tests.
ENTRIES = [e for e in MANIFEST["files"] if "unit" not in e and e.get("compare") != "analogue"]


def test_the_manifest_covers_every_new_kind():
    kinds = {e["format"] for e in ENTRIES}
    # npy, WAV, text (hex/binary), CSV and the packed and 24-bit layouts are all exercised.
    assert {"npy", "wav", "text", "csv", "p12le", "i24le"} <= kinds, kinds
    assert len(ENTRIES) >= 30


@pytest.mark.parametrize("entry", ENTRIES, ids=lambda e: e["file"])
def test_read_gives_the_reference_codes_or_values(entry):
    rec = spurline.read(FORMATS / entry["file"], **_options(entry))
    assert len(rec) == MANIFEST["samples"]
    assert rec.sample_rate_hz == FS
    shift = entry.get("shift", 0)
    compare = entry.get("compare", "exact")
    if rec.values is None:
        # Integer codes: equal to the text record's codes (fewer bits: the low bits dropped, as
        # the fixture script wrote them).
        assert rec.codes.dtype == np.int32
        np.testing.assert_array_equal(rec.codes, CODES >> shift)
    else:
        # A record of values: no codes, its samples on the codes' scale.
        assert len(rec.codes) == 0
        assert rec.values.dtype == np.float64
        if compare == "exact":
            np.testing.assert_array_equal(rec.values, CODES.astype(np.float64))
        else:
            # Volts written as decimal text or float64: the scale 2^bits / full scale and the
            # decimal round trip cost a few ulps (tolerance as the Rust format tests, 1e-9 relative).
            np.testing.assert_allclose(rec.values, CODES, rtol=1e-9, atol=1e-9)


@pytest.mark.parametrize(
    "name",
    [e["file"] for e in ENTRIES if e["format"] == "npy" and "column" not in e],
)
def test_npy_records_equal_numpys_own_load(name):
    entry = next(e for e in ENTRIES if e["file"] == name)
    rec = spurline.read(FORMATS / name, **_options(entry))
    raw = np.load(FORMATS / name)
    if rec.values is not None:
        fsr = entry.get("full_scale_vpp")
        want = raw.astype(np.float64) * (2.0 ** entry["bits"] / fsr) if fsr else raw
        np.testing.assert_allclose(rec.values, want, rtol=1e-12)
    elif raw.dtype.kind in "if":
        # Signed words, and floats that are whole codes, are the codes as written.
        np.testing.assert_array_equal(rec.codes, raw.astype(np.int64))
    else:
        # Unsigned words are offset binary: mid-scale (2^(bits-1)) is code 0.
        np.testing.assert_array_equal(rec.codes, raw.astype(np.int64) - 2 ** (entry["bits"] - 1))


def test_a_record_of_values_is_not_analysed_as_an_empty_code_array():
    entry = next(e for e in ENTRIES if e["file"] == "volts.csv")
    rec = spurline.read(FORMATS / "volts.csv", **_options(entry))
    with pytest.raises(spurline.SpurlineError, match="record of values"):
        spurline.analyze(rec)
