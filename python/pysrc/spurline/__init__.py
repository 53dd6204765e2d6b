"""spurline: dynamic performance of analog-to-digital converters from captured output codes (IEEE Std
1241 methods), from Python, on NumPy arrays.

The analysis is the library's own, linked into this package (no command is run): the figures of
``spurline.analyze`` are those of ``spurline analyze --json`` on the same record, bit for bit.

    >>> import numpy as np, spurline
    >>> n = np.arange(4096)
    >>> codes = np.round(2047 * np.sin(2 * np.pi * 401 * n / 4096)).astype(np.int16)
    >>> r = spurline.analyze(codes, fs=100e6, bits=12)
    >>> round(r.spectrum.snr_db)            # about 6.02*12 + 1.76 dB
    74

Conventions (as the library's): codes are signed and centred on mid-scale; a full-scale sine has peak
amplitude 2^(N-1) codes and is 0 dBFS; windows are the periodic form; units are in the names
(``_hz``, ``_db``, ``_dbfs``, ``_dbc``, ``_bits``, ``_codes``).
"""

from __future__ import annotations

import json
import os
from dataclasses import dataclass, field
from typing import Any, Dict, Iterable, Iterator, List, Mapping, Optional, Sequence, Union

import numpy as np

from . import _native
from ._native import SpurlineError

__all__ = [
    "Analysis",
    "Record",
    "Section",
    "SpurlineError",
    "analyze",
    "analyze_files",
    "analyze_many",
    "figure_table",
    "read",
    "rows",
    "run_plan",
    "window",
]

__version__ = _native.__version__


class Section(Mapping[str, Any]):
    """A read-only part of the result record (``fit``, ``spectrum``, ``uncertainty``, ...): its keys
    are attributes too (``result.spectrum.snr_db``), nested parts are sections, lists stay lists."""

    __slots__ = ("_data",)

    def __init__(self, data: Dict[str, Any]):
        object.__setattr__(self, "_data", data)

    def __getattr__(self, name: str) -> Any:
        try:
            return _wrap(self._data[name])
        except KeyError:
            raise AttributeError(name) from None

    def __setattr__(self, name: str, value: Any) -> None:
        raise AttributeError("result sections are read-only")

    def __getitem__(self, key: str) -> Any:
        return _wrap(self._data[key])

    def __iter__(self) -> Iterator[str]:
        return iter(self._data)

    def __len__(self) -> int:
        return len(self._data)

    def __dir__(self) -> List[str]:
        return list(self._data)

    def to_dict(self) -> Dict[str, Any]:
        """A deep copy as plain dicts and lists."""
        return json.loads(json.dumps(self._data))

    def __repr__(self) -> str:
        return f"Section({self._data!r})"


def _wrap(value: Any) -> Any:
    if isinstance(value, dict):
        return Section(value)
    if isinstance(value, list):
        return [_wrap(v) for v in value]
    return value


class Analysis:
    """The result of analysing one record (or several averaged): the library's one result record.

    Attributes mirror the JSON contract of ``spurline analyze --json``: ``source``, ``samples``,
    ``sample_rate_hz``, ``bits``, ``full_scale_vpp``, ``fit``, ``spectrum`` (each with its
    ``uncertainty`` where the library gives one), ``warnings`` and ``error``. Every key of the record
    is an attribute, whatever the library adds. ``to_dict()`` and ``to_json()`` give the record;
    ``row()`` gives it flat, as the CSV columns, for ``pandas.DataFrame``. When the traces were kept,
    ``frequency_hz``, ``power_dbfs``, ``residual_codes`` and ``histogram`` are NumPy arrays for plots.
    """

    __slots__ = ("_native", "_dict")

    def __init__(self, native: "_native.NativeResult"):
        self._native = native
        self._dict: Optional[Dict[str, Any]] = None

    def _data(self) -> Dict[str, Any]:
        if self._dict is None:
            self._dict = json.loads(self._native.to_json())
        return self._dict

    def __getattr__(self, name: str) -> Any:
        if name.startswith("_"):
            raise AttributeError(name)
        data = self._data()
        if name in data:
            return _wrap(data[name])
        raise AttributeError(f"the result record has no {name!r} (keys: {', '.join(data)})")

    def __dir__(self) -> List[str]:
        return sorted(set(super().__dir__()) | set(self._data()))

    def __getitem__(self, key: str) -> Any:
        return _wrap(self._data()[key])

    @property
    def ok(self) -> bool:
        """True when the record was analysed (no ``error``)."""
        return self._data().get("error") is None

    def raise_for_error(self) -> "Analysis":
        """Raises ``SpurlineError`` with the record's error message when it failed; else returns self."""
        err = self._data().get("error")
        if err is not None:
            e = SpurlineError(err["message"])
            e.kind = err["kind"]
            e.path = self._data().get("source", "")
            raise e
        return self

    def to_dict(self) -> Dict[str, Any]:
        """The result record as plain dicts and lists, keys as in the JSON contract (a fresh copy)."""
        return json.loads(self._native.to_json())

    def to_json(self) -> str:
        """The result record as JSON text, as ``spurline analyze --json`` writes each object."""
        return self._native.to_json()

    def row(self) -> Dict[str, Any]:
        """The record flat: the CSV's keys (``spectrum.snr_db``, ``spectrum.harmonics.h3.dbc``, ...),
        values typed by the figure table, absent figures ``None``."""
        return json.loads(self._native.row_json())

    @property
    def has_traces(self) -> bool:
        """Whether the per-bin and per-sample data were kept (``keep_traces``)."""
        return self._native.has_traces()

    @property
    def frequency_hz(self) -> np.ndarray:
        """Bin frequencies k*fs/N for k = 0..N/2, hertz (empty without traces)."""
        return self._native.frequency_hz()

    @property
    def power_dbfs(self) -> np.ndarray:
        """Bin powers relative to a full-scale sine, dBFS, as the spectrum plot draws them (the
        powers of a tone's bins sum to its power; empty without traces)."""
        return self._native.power_dbfs()

    @property
    def residual_codes(self) -> np.ndarray:
        """Residual of the sine fit, codes (empty without traces)."""
        return self._native.residual_codes()

    @property
    def histogram(self) -> np.ndarray:
        """Count per code, lowest code -2^(N-1) first (empty without traces or above 24 bits)."""
        return self._native.histogram()

    def spectrum_svg(self) -> str:
        """The spectrum plot of the report pages, SVG text."""
        return self._native.spectrum_svg()

    def _repr_html_(self) -> str:
        return self._native.html()

    def __repr__(self) -> str:
        d = self._data()
        if d.get("error"):
            return f"<spurline.Analysis {d.get('source')!r}: error {d['error']['message']!r}>"
        sp = d.get("spectrum") or {}
        parts = [
            f"{k}={sp[k]:.2f}" for k in ("snr_db", "sinad_db", "sfdr_dbc") if sp.get(k) is not None
        ]
        return f"<spurline.Analysis {d.get('source')!r} {' '.join(parts)}>"

    def __reduce__(self):
        raise TypeError(
            "spurline.Analysis holds native data and does not pickle: send .to_dict() or .row() "
            "between processes"
        )


@dataclass
class Record:
    """A record read from a file: its codes (signed, centred on mid-scale, int32) and metadata.

    A record of values (voltages or floats: a float ``.npy`` or WAV, decimal text or CSV) has no
    codes: ``codes`` is empty and ``values`` holds its samples as float64 on the codes' scale (the
    full-scale range spans 2^bits, 0 V is mid-scale), as the analysis uses them."""

    codes: np.ndarray
    sample_rate_hz: float
    bits: int
    source: str
    full_scale_vpp: Optional[float] = None
    fin_hz: Optional[float] = None
    warnings: List[str] = field(default_factory=list)
    values: Optional[np.ndarray] = None

    def __len__(self) -> int:
        return len(self.codes) if self.values is None else len(self.values)


ArrayLike = Any
PathLike = Union[str, "os.PathLike[str]"]


def read(path: PathLike, **options: Any) -> Record:
    """Reads a record file and its JSON sidecar with the command line's reading options: ``fs``,
    ``bits``, ``fin``, ``full_scale_vpp``, ``format`` (text, csv, or a word layout such as i16le),
    ``coding`` (twos, offset), ``justify`` (right, left), ``skip_bytes``, ``channel`` ("K/M"),
    ``column`` (index or header name), ``delimiter``. Raises ``SpurlineError`` naming the file and the
    line or byte offset."""
    codes, values, meta = _native.read(os.fspath(path), **options)
    m = json.loads(meta)
    return Record(
        codes=codes,
        values=values,
        sample_rate_hz=m["sample_rate_hz"],
        bits=m["bits"],
        source=m["source"],
        full_scale_vpp=m["full_scale_vpp"],
        fin_hz=m["fin_hz"],
        warnings=m["warnings"],
    )


def _as_array(x: ArrayLike, what: str) -> np.ndarray:
    """One record's values as a 1-D NumPy array of a supported dtype in native byte order (no copy
    for a native array; a strided view stays a view)."""
    a = np.asarray(x)
    if a.dtype.kind == "c":
        raise TypeError(f"{what}: complex values cannot be codes or voltages (found {a.dtype})")
    if a.dtype.kind == "b" or a.dtype.kind not in "iuf":
        raise TypeError(
            f"{what}: expected integer codes or float voltages, found an array of dtype {a.dtype}"
        )
    if a.ndim != 1:
        raise ValueError(f"{what}: expected a 1-D array of one record, found shape {a.shape}")
    if a.dtype.kind == "f" and a.dtype.itemsize not in (4, 8):
        a = a.astype(np.float64)
    if not a.dtype.isnative:
        a = a.astype(a.dtype.newbyteorder("="))
    return a


def _records(codes: Any, what: str) -> List[Any]:
    """A 2-D array's rows, or a list/tuple of arrays or Records, as a list; one array or Record as a
    list of one."""
    if isinstance(codes, Record):
        return [codes]
    if isinstance(codes, (list, tuple)) and codes and not np.isscalar(codes[0]):
        return list(codes)
    a = np.asarray(codes)
    if a.ndim == 2:
        return [a[i] for i in range(a.shape[0])]
    return [codes]


def _describe(items: List[Any], fs, bits, full_scale_vpp, fin, source, what):
    """Arrays, sources and metadata of records given as arrays or Records (the arguments win)."""
    arrays, sources, warnings = [], [], []
    first = next((r for r in items if isinstance(r, Record)), None)
    if first is not None:
        fs = first.sample_rate_hz if fs is None else fs
        bits = first.bits if bits is None else bits
        full_scale_vpp = first.full_scale_vpp if full_scale_vpp is None else full_scale_vpp
        fin = first.fin_hz if fin is None else fin
    for i, r in enumerate(items):
        if isinstance(r, Record):
            if r.values is not None:
                # Its samples are off any code grid: rounding them to codes here would add noise the
                # command line does not, so the file is analysed as the command line reads it.
                raise SpurlineError(
                    f"{r.source}: expected a record of codes, found a record of values (no code "
                    "grid); analyse the file with analyze_files([path], ...), which reads it as "
                    "the command line does"
                )
            arrays.append(_as_array(r.codes, r.source))
            sources.append(r.source)
            warnings.append(list(r.warnings))
        else:
            name = _source_name(source, i, len(items))
            arrays.append(_as_array(r, name))
            sources.append(name)
            warnings.append([])
    if fs is None:
        raise SpurlineError(f"{what}: 'fs': expected the sample rate in hertz, found none given")
    if bits is None:
        raise SpurlineError(f"{what}: 'bits': expected the resolution in bits, found none given")
    return arrays, sources, warnings, float(fs), int(bits), full_scale_vpp, fin


def _source_name(source, i: int, n: int) -> str:
    if source is None:
        return "array" if n == 1 else f"array[{i}]"
    if isinstance(source, str):
        return source if n == 1 else f"{source}[{i}]"
    return str(list(source)[i])


def analyze(
    codes: Any,
    fs: Optional[float] = None,
    bits: Optional[int] = None,
    *,
    window: str = "auto",
    fit: str = "four",
    harmonics: int = 10,
    guard_bins: Optional[int] = None,
    fin: Optional[float] = None,
    full_scale_vpp: Optional[float] = None,
    coding: Optional[str] = None,
    source: Optional[str] = None,
    keep_traces: bool = True,
) -> Analysis:
    """Analyses one record: sine fit, then spectrum, as ``spurline analyze`` does.

    ``codes``: a 1-D array of integer codes (any integer dtype; signed dtypes are two's complement,
    unsigned ones offset binary unless ``coding`` says otherwise) or of float voltages (mid-scale at
    0 V; ``full_scale_vpp`` required; rounded to the nearest code, with a warning when they lie off the
    code grid); a ``Record`` from ``read``; or a list of them (or a 2-D array, one record per row),
    whose spectra are power-averaged into one result (``--average``).

    Settings as on the command line: ``fs`` (Hz), ``bits``, ``window`` (auto, rectangular, hann,
    blackman-harris-4, ..., kaiser(BETA)), ``fit`` (four, three), ``harmonics`` (highest order),
    ``guard_bins``, ``fin`` (Hz; guides the four-parameter fit, required by the three-parameter one).

    Raises ``SpurlineError`` (a ``ValueError``) with ``kind``, ``path``, ``location``, ``expected``
    and ``found``; ``TypeError`` for values that are not a numeric array. The GIL is released while
    the record is analysed.
    """
    items = _records(codes, "codes")
    arrays, sources, warnings, fs, bits, fsr, fin = _describe(
        items, fs, bits, full_scale_vpp, fin, source, source or "array"
    )
    prior = [w for ws in warnings for w in ws]
    native = _native.analyze_arrays(
        arrays,
        sources,
        fs,
        bits,
        fit=fit,
        window=window,
        harmonics=harmonics,
        guard_bins=guard_bins,
        coding=coding,
        full_scale_vpp=fsr,
        fin_hz=fin,
        warnings=prior,
        keep_traces=keep_traces,
    )
    return Analysis(native)


def analyze_many(
    records: Iterable[Any],
    fs: Optional[float] = None,
    bits: Optional[int] = None,
    *,
    window: str = "auto",
    fit: str = "four",
    harmonics: int = 10,
    guard_bins: Optional[int] = None,
    fin: Optional[float] = None,
    full_scale_vpp: Optional[float] = None,
    coding: Optional[str] = None,
    sources: Optional[Sequence[str]] = None,
    keep_traces: bool = False,
    jobs: Optional[int] = None,
) -> List[Analysis]:
    """Analyses each record on its own, in parallel (``jobs`` threads, default all cores), with the
    GIL released. ``records``: a list of 1-D arrays or ``Record``s, or a 2-D array (one record per
    row), all of one rate and resolution. A record that fails is a result whose ``error`` is set (and
    ``ok`` is False); the rest go on. A bad setting raises ``SpurlineError`` before any analysis.
    Results are in input order and equal to ``analyze`` of each record, whatever ``jobs`` is."""
    items = _records(records if not isinstance(records, Iterator) else list(records), "records")
    arrays, names, warnings, fs, bits, fsr, fin = _describe(
        items, fs, bits, full_scale_vpp, fin, sources, "analyze_many"
    )
    natives = _native.analyze_many_arrays(
        arrays,
        names,
        fs,
        bits,
        fit=fit,
        window=window,
        harmonics=harmonics,
        guard_bins=guard_bins,
        coding=coding,
        full_scale_vpp=fsr,
        fin_hz=fin,
        warnings=warnings,
        keep_traces=keep_traces,
        jobs=jobs,
    )
    return [Analysis(n) for n in natives]


def analyze_files(
    paths: Iterable[PathLike],
    *,
    average: bool = False,
    keep_traces: bool = False,
    jobs: Optional[int] = None,
    **options: Any,
) -> List[Analysis]:
    """Reads and analyses record files in parallel, each as ``spurline analyze FILE --json`` does
    (``average``: one power-averaged result, as ``--average``). ``options``: the reading options of
    ``read`` and the analysis settings of ``analyze``. A file that cannot be read or analysed is a
    result with its ``error``; the rest go on."""
    natives = _native.analyze_paths(
        [os.fspath(p) for p in paths],
        average=average,
        keep_traces=keep_traces,
        jobs=jobs,
        **options,
    )
    return [Analysis(n) for n in natives]


def rows(results: Iterable[Analysis], **lead: Any) -> List[Dict[str, Any]]:
    """Flat rows of results for ``pandas.DataFrame(rows)``; ``lead`` columns (a value, or a list of
    one value per result) come first."""
    results = list(results)
    out = []
    for i, r in enumerate(results):
        row: Dict[str, Any] = {}
        for k, v in lead.items():
            row[k] = v[i] if isinstance(v, (list, tuple)) else v
        row.update(r.row())
        out.append(row)
    return out


def run_plan(
    plan: PathLike,
    limits: Optional[PathLike] = None,
    *,
    out: PathLike,
    jobs: Optional[int] = None,
    plots: str = "none",
) -> List[Dict[str, Any]]:
    """Runs a bench plan (TOML) over its lot, judged against a limit table (CSV) when given, exactly as
    ``spurline batch PLAN --limits TABLE --out OUT`` (the same files are written into ``out``), and
    returns the lot's summary rows: ``device``, ``condition``, ``verdict``, ``reason`` and every
    figure, typed (numbers, flags, text; absent ``None``), for ``pandas.DataFrame(rows)``. A record that
    cannot be read or analysed is a row with its error; a bad plan or limit table raises
    ``SpurlineError``."""
    _counts, rows = _native.run_plan(
        os.fspath(plan),
        None if limits is None else os.fspath(limits),
        out=os.fspath(out),
        jobs=jobs,
        plots=plots,
    )
    return json.loads(rows)


def window(name: str, n: int) -> np.ndarray:
    """The periodic (DFT-even) window of this name and length as the analysis applies it, not
    normalised (cosine sums at the scale of their coefficients)."""
    return _native.window(name, n)


def figure_table() -> List[Dict[str, Any]]:
    """The library's figure table: for every field of the result record its key, label, unit, better
    direction, headline place, kind and whether it carries an uncertainty."""
    return json.loads(_native.figure_table())
