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
    """(UTC nanoseconds, float values) of a series in time order; naive timestamps are
    taken as UTC."""
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
    ns = series.index.as_unit("ns").asi8
    if not series.index.is_monotonic_increasing:
        order = np.argsort(ns, kind="stable")
        ns, values = ns[order], values[order]
    return ns, values


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
    """One row: the points' mean (or sum) per grid slot, NaN where a slot has none.

    `ns` must be sorted. Points evenly spaced at a divisor of the step (one-minute data on a
    five-minute grid) are summed by a reshape; anything else goes through `np.bincount`."""
    st, n = step.value, len(grid)
    origin = grid[0].value - (st // 2 if snap == "nearest" else 0)
    lo, hi = np.searchsorted(ns, [origin, origin + n * st])
    ns, values = ns[lo:hi], values[lo:hi]
    valid = np.isfinite(values)
    total, count = np.zeros(n), np.zeros(n)
    if len(ns):
        per_slot = evenly_per_slot(ns, st, origin)
        if per_slot:
            first = (ns[0] - origin) // st
            lead = (ns[0] - origin) % st // (st // per_slot)
            starts = np.concatenate(([0], np.arange(per_slot - lead, len(ns), per_slot)))
            slots = slice(first, first + len(starts))
            if valid.all():
                total[slots] = np.add.reduceat(values, starts)
                count[slots] = np.diff(np.append(starts, len(ns)))
            else:
                total[slots] = np.add.reduceat(np.where(valid, values, 0.0), starts)
                count[slots] = np.add.reduceat(valid.astype(np.int64), starts)
        else:
            slot = (ns[valid] - origin) // st
            total = np.bincount(slot, weights=values[valid], minlength=n)
            count = np.bincount(slot, minlength=n).astype(float)
    with np.errstate(invalid="ignore", divide="ignore"):
        row = total / count if agg == "mean" else total
    row[count == 0] = np.nan
    return row


def evenly_per_slot(ns: np.ndarray, step_ns: int, origin: int) -> int:
    """How many points share each slot when `ns` is evenly spaced at a divisor of the step
    and on the grid's phase; 0 otherwise."""
    if len(ns) < 2:
        return 0
    spacing = int(ns[1] - ns[0])
    if spacing <= 0 or step_ns % spacing or (ns[0] - origin) % spacing:
        return 0
    if ns[-1] - ns[0] != spacing * (len(ns) - 1) or not (np.diff(ns) == spacing).all():
        return 0
    return step_ns // spacing


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
