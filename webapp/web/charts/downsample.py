"""Fewer points for the browser, every spike kept.

Each bucket keeps its minimum and its maximum (tsdownsample's MinMax), so no peak or dip
is lost however far the trace is reduced; a gap in the data stays a gap (one NaN is kept
between the points around it, so plotly breaks the line there).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from tsdownsample import MinMaxDownsampler

_MINMAX = MinMaxDownsampler()


def minmax_indices(x: np.ndarray, y: np.ndarray, n_out: int) -> np.ndarray:
    """Sorted positions of at most about ``n_out`` points of ``y`` (``x`` increasing),
    keeping every bucket's extremes and one NaN inside every gap."""
    size = len(y)
    if size <= n_out:
        return np.arange(size)
    finite = np.isfinite(y)
    kept = np.flatnonzero(finite)
    if len(kept) > n_out:
        n_even = max(2, n_out - n_out % 2)
        chosen = _MINMAX.downsample(x[kept], y[kept], n_out=n_even)
        kept = kept[np.asarray(chosen, dtype=np.int64)]
    nan_at = np.flatnonzero(~finite)
    if len(nan_at) and len(kept):
        first_nan_after = np.searchsorted(nan_at, kept[:-1], side="right")
        has_next = first_nan_after < len(nan_at)
        candidates = nan_at[np.minimum(first_nan_after, len(nan_at) - 1)]
        breaks = candidates[has_next & (candidates < kept[1:])]
        kept = np.union1d(kept, breaks)
    return np.unique(kept)


def reduce_together(frame: pd.DataFrame, columns: list[str], n_out: int) -> pd.DataFrame:
    """Rows of ``frame`` that keep the extremes of every column in ``columns``, so traces
    drawn against each other (a band's lower and upper edge) share their timestamps."""
    if len(frame) <= n_out:
        return frame[columns]
    x = frame.index.asi8
    per_column = max(2, n_out // max(1, len(columns)))
    rows = np.unique(
        np.concatenate(
            [
                minmax_indices(x, frame[c].to_numpy(dtype="float64", na_value=np.nan), per_column)
                for c in columns
            ]
        )
    )
    return frame[columns].iloc[rows]


def clip(frame: pd.DataFrame, start: pd.Timestamp | None, end: pd.Timestamp | None) -> pd.DataFrame:
    """The rows of ``frame`` between ``start`` and ``end`` (both inclusive, UTC)."""
    if start is not None:
        frame = frame[frame.index >= start]
    if end is not None:
        frame = frame[frame.index <= end]
    return frame
