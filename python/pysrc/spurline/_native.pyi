"""Type stubs of the extension module (the Rust half of the package); use the names of `spurline`."""

from typing import Any, List, Optional, Sequence, Tuple

import numpy as np
import numpy.typing as npt

__version__: str

class SpurlineError(ValueError):
    kind: str
    path: str
    location: str
    line: Optional[int]
    column: Optional[int]
    byte: Optional[int]
    row: Optional[int]
    key: Optional[str]
    expected: str
    found: str

class NativeResult:
    harmonics: int
    def to_json(self) -> str: ...
    def row_json(self) -> str: ...
    def has_traces(self) -> bool: ...
    def frequency_hz(self) -> npt.NDArray[np.float64]: ...
    def power_dbfs(self) -> npt.NDArray[np.float64]: ...
    def residual_codes(self) -> npt.NDArray[np.float64]: ...
    def histogram(self) -> npt.NDArray[np.uint64]: ...
    def spectrum_svg(self) -> str: ...
    def html(self) -> str: ...

def analyze_arrays(
    arrays: Sequence[np.ndarray],
    sources: Sequence[str],
    sample_rate_hz: float,
    bits: int,
    *,
    fit: str = ...,
    window: str = ...,
    harmonics: int = ...,
    guard_bins: Optional[int] = ...,
    coding: Optional[str] = ...,
    full_scale_vpp: Optional[float] = ...,
    fin_hz: Optional[float] = ...,
    warnings: Sequence[str] = ...,
    keep_traces: bool = ...,
) -> NativeResult: ...
def analyze_many_arrays(
    arrays: Sequence[np.ndarray],
    sources: Sequence[str],
    sample_rate_hz: float,
    bits: int,
    *,
    fit: str = ...,
    window: str = ...,
    harmonics: int = ...,
    guard_bins: Optional[int] = ...,
    coding: Optional[str] = ...,
    full_scale_vpp: Optional[float] = ...,
    fin_hz: Optional[float] = ...,
    warnings: Optional[Sequence[Sequence[str]]] = ...,
    keep_traces: bool = ...,
    jobs: Optional[int] = ...,
) -> List[NativeResult]: ...
def analyze_paths(paths: Sequence[str], **options: Any) -> List[NativeResult]: ...
def read(
    path: str, **options: Any
) -> Tuple[npt.NDArray[np.int32], Optional[npt.NDArray[np.float64]], str]: ...
def run_plan(
    plan: str,
    limits: Optional[str] = ...,
    *,
    out: str,
    jobs: Optional[int] = ...,
    plots: str = ...,
) -> Tuple[str, str]: ...
def _bench_rust_analyze(array: np.ndarray, sample_rate_hz: float, bits: int, repeats: int) -> List[float]: ...
def window(name: str, n: int) -> npt.NDArray[np.float64]: ...
def figure_table() -> str: ...
