"""aggregate(): one fleet series from many (the p95 over hosts, the sum of their requests).

Unequal grids: every series is first put on one shared grid at whole multiples of `step`
(by default the coarsest of the series' own steps), each point to the nearest grid time, the
points of one series in one slot averaged (or summed with ``agg="sum"`` for counts). Then at
each grid time the series that have a value there are combined. Gaps: a step where fewer
than `min_count` series have a value is a gap (NaN), like a gap in any series. With
``how="sum"``, a series missing at a step lowers the sum there; set `min_count` to the number
of series to make such steps gaps instead. p50 and p95 interpolate linearly between the two
nearest values, as numpy and pandas do by default.

The result is an ordinary series: `explain(aggregate(...), ...)` explains it like any other.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Literal

import numpy as np
import pandas as pd

from ._align import align
from ._grid import Agg, as_utc_series, check_step, infer_step, make_grid
from ._robust import nanpercentile_rows, quiet_nan_warnings

How = Literal["sum", "mean", "min", "p50", "p95", "max"]
COMBINE = {
    "sum": lambda m: np.nansum(m, axis=0),
    "mean": lambda m: np.nanmean(m, axis=0),
    "min": lambda m: np.nanmin(m, axis=0),
    "p50": lambda m: np.nanmedian(m, axis=0),
    "p95": lambda m: nanpercentile_rows(m.T, 95),
    "max": lambda m: np.nanmax(m, axis=0),
}


def aggregate(
    series_by_key: Mapping[str, pd.Series],
    how: How = "sum",
    *,
    step: pd.Timedelta | str | None = None,
    agg: Agg = "mean",
    min_count: int = 1,
    name: str | None = None,
) -> pd.Series:
    """Combine the series of `series_by_key` at each step with `how` (sum, mean, min, p50,
    p95 or max) into one series on a regular UTC grid, named `name` (by default
    "p95 of 12 series"). See the module docstring for grids and gaps."""
    if how not in COMBINE:
        raise ValueError(f"how must be one of {', '.join(COMBINE)}; got {how!r}")
    if agg not in ("mean", "sum"):
        raise ValueError(f"agg must be 'mean' or 'sum', got {agg!r}")
    if not series_by_key:
        raise ValueError("there are no series to aggregate")
    if not isinstance(min_count, int) or not 1 <= min_count <= len(series_by_key):
        raise ValueError(
            f"min_count must be a whole number from 1 to {len(series_by_key)}, got {min_count!r}"
        )
    clean = {}
    for key, series in series_by_key.items():
        try:
            clean[key] = as_utc_series(series).dropna()
        except ValueError as error:
            raise ValueError(f"{key}: {error}") from None
    if step is None:
        steps = [infer_step(s.index) for s in clean.values() if len(s) > 1]
        if not steps:
            raise ValueError("at least one series needs two timestamps or more to find the step")
        step = max(steps)
    step = check_step(step)
    lo = min(s.index[0] for s in clean.values())
    hi = max(s.index[-1] for s in clean.values())
    grid = make_grid(nearest(lo, step), nearest(hi, step), step)
    _, matrix = align(clean, grid, snap="nearest", agg=agg)
    present = np.isfinite(matrix).sum(axis=0)
    with quiet_nan_warnings():
        combined = COMBINE[how](matrix)
    combined[present < min_count] = np.nan
    return pd.Series(combined, index=grid, name=name or f"{how} of {len(clean)} series")


def nearest(when: pd.Timestamp, step: pd.Timedelta) -> pd.Timestamp:
    """The grid time (a whole multiple of `step`) nearest to `when`."""
    st = step.value
    return pd.Timestamp((when.value + st // 2) // st * st, tz="UTC")
