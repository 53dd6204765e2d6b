"""Type stubs of the spurline package (see the docstrings in __init__.py)."""

import os
from typing import Any, Dict, Iterable, Iterator, List, Mapping, Optional, Sequence, Union

import numpy as np
import numpy.typing as npt

from ._native import SpurlineError as SpurlineError

__version__: str

PathLike = Union[str, "os.PathLike[str]"]

class Section(Mapping[str, Any]):
    def __getattr__(self, name: str) -> Any: ...
    def __getitem__(self, key: str) -> Any: ...
    def __iter__(self) -> Iterator[str]: ...
    def __len__(self) -> int: ...
    def to_dict(self) -> Dict[str, Any]: ...

class Analysis:
    source: str
    samples: int
    sample_rate_hz: float
    bits: int
    full_scale_vpp: Optional[float]
    fit: Optional[Section]
    spectrum: Optional[Section]
    clipping: Optional[Section]
    warnings: List[str]
    error: Optional[Section]
    def __getattr__(self, name: str) -> Any: ...
    def __getitem__(self, key: str) -> Any: ...
    @property
    def ok(self) -> bool: ...
    def raise_for_error(self) -> Analysis: ...
    def to_dict(self) -> Dict[str, Any]: ...
    def to_json(self) -> str: ...
    def row(self) -> Dict[str, Any]: ...
    @property
    def has_traces(self) -> bool: ...
    @property
    def frequency_hz(self) -> npt.NDArray[np.float64]: ...
    @property
    def power_dbfs(self) -> npt.NDArray[np.float64]: ...
    @property
    def residual_codes(self) -> npt.NDArray[np.float64]: ...
    @property
    def histogram(self) -> npt.NDArray[np.uint64]: ...
    def spectrum_svg(self) -> str: ...
    def _repr_html_(self) -> str: ...

class Record:
    codes: npt.NDArray[np.int32]
    sample_rate_hz: float
    bits: int
    source: str
    full_scale_vpp: Optional[float]
    fin_hz: Optional[float]
    warnings: List[str]
    values: Optional[npt.NDArray[np.float64]]
    def __init__(
        self,
        codes: npt.NDArray[np.int32],
        sample_rate_hz: float,
        bits: int,
        source: str,
        full_scale_vpp: Optional[float] = ...,
        fin_hz: Optional[float] = ...,
        warnings: List[str] = ...,
        values: Optional[npt.NDArray[np.float64]] = ...,
    ) -> None: ...
    def __len__(self) -> int: ...

RecordLike = Union[npt.ArrayLike, Record]

def read(
    path: PathLike,
    *,
    fs: Optional[float] = ...,
    bits: Optional[int] = ...,
    fin: Optional[float] = ...,
    full_scale_vpp: Optional[float] = ...,
    format: Optional[str] = ...,
    coding: Optional[str] = ...,
    justify: Optional[str] = ...,
    skip_bytes: Optional[int] = ...,
    channel: Optional[str] = ...,
    column: Union[int, str, None] = ...,
    delimiter: Optional[str] = ...,
) -> Record: ...
def analyze(
    codes: Union[RecordLike, Sequence[RecordLike]],
    fs: Optional[float] = ...,
    bits: Optional[int] = ...,
    *,
    window: str = ...,
    fit: str = ...,
    harmonics: int = ...,
    guard_bins: Optional[int] = ...,
    fin: Optional[float] = ...,
    full_scale_vpp: Optional[float] = ...,
    coding: Optional[str] = ...,
    source: Optional[str] = ...,
    keep_traces: bool = ...,
) -> Analysis: ...
def analyze_many(
    records: Union[Iterable[RecordLike], npt.ArrayLike],
    fs: Optional[float] = ...,
    bits: Optional[int] = ...,
    *,
    window: str = ...,
    fit: str = ...,
    harmonics: int = ...,
    guard_bins: Optional[int] = ...,
    fin: Optional[float] = ...,
    full_scale_vpp: Optional[float] = ...,
    coding: Optional[str] = ...,
    sources: Optional[Sequence[str]] = ...,
    keep_traces: bool = ...,
    jobs: Optional[int] = ...,
) -> List[Analysis]: ...
def analyze_files(
    paths: Iterable[PathLike],
    *,
    average: bool = ...,
    keep_traces: bool = ...,
    jobs: Optional[int] = ...,
    **options: Any,
) -> List[Analysis]: ...
def rows(results: Iterable[Analysis], **lead: Any) -> List[Dict[str, Any]]: ...
def run_plan(
    plan: PathLike,
    limits: Optional[PathLike] = ...,
    *,
    out: PathLike,
    jobs: Optional[int] = ...,
    plots: str = ...,
) -> List[Dict[str, Any]]: ...
def window(name: str, n: int) -> npt.NDArray[np.float64]: ...
def figure_table() -> List[Dict[str, Any]]: ...
