"""Many series on one regular grid, as one matrix (a row per series, a column per step).

Screening, fleet peers and aggregates compare series at the same instants, so every series is
binned onto one shared grid: each point falls into the slot of the grid time at or before it
(`floor`, the slot covers [t, t + step)) or nearest to it (`nearest`), and the points of one
slot are averaged (or summed). A slot with no point is NaN: gaps stay gaps.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Literal

import numpy as np
import pandas as pd

Snap = Literal["floor", "nearest"]


def points_of(key: str, series: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """(UTC nanoseconds, float values) of a series; naive timestamps are taken as UTC."""
    if not isinstance(series, pd.Series):
        raise ValueError(f"{key}: expected a pandas Series of values, got {type(series).__name__}")
    if not isinstance(series.index, pd.DatetimeIndex):
        raise ValueError(
            f"{key}: the series must be indexed by timestamps (a DatetimeIndex), "
            f"got {type(series.index).__name__}"
        )
    try:
        values = series.to_numpy(dtype=float)
    except (TypeError, ValueError) as err:
        raise ValueError(f"{key}: the series values must be numbers: {err}") from None
    return series.index.as_unit("ns").asi8, values


def spacing(ns: np.ndarray) -> float:
    """Mean spacing of the timestamps in nanoseconds (cheap); NaN for fewer than two."""
    return float(ns.max() - ns.min()) / (len(ns) - 1) if len(ns) > 1 else float("nan")


def bin_points(
    ns: np.ndarray,
    values: np.ndarray,
    grid: pd.DatetimeIndex,
    step: pd.Timedelta,
    *,
    snap: Snap = "floor",
    agg: Literal["mean", "sum"] = "mean",
) -> np.ndarray:
    """One row: the points' mean (or sum) per grid slot, NaN where a slot has none."""
    st = step.value
    shift = st // 2 if snap == "nearest" else 0
    slot = (ns - grid[0].value + shift) // st
    keep = (slot >= 0) & (slot < len(grid)) & np.isfinite(values)
    slot, kept = slot[keep], values[keep]
    total = np.bincount(slot, weights=kept, minlength=len(grid))
    count = np.bincount(slot, minlength=len(grid))
    with np.errstate(invalid="ignore", divide="ignore"):
        row = total / count if agg == "mean" else total
    row[count == 0] = np.nan
    return row


def align(
    series_by_key: Mapping[str, pd.Series],
    grid: pd.DatetimeIndex,
    *,
    snap: Snap = "floor",
    agg: Literal["mean", "sum"] = "mean",
) -> tuple[list[str], np.ndarray]:
    """The keys and a (series x grid) matrix of each series binned onto `grid`."""
    step = grid[1] - grid[0]
    keys = list(series_by_key)
    out = np.empty((len(keys), len(grid)))
    for i, key in enumerate(keys):
        ns, values = points_of(key, series_by_key[key])
        out[i] = bin_points(ns, values, grid, step, snap=snap, agg=agg)
    return keys, out
