"""The regular grid: infer the step, snap points onto it, keep gaps as NaN and list them.

Exports arrive with jittered or irregular timestamps (a scraper that runs a little late,
a collector restarted mid-day). The step is the median spacing, snapped to a round step
when it is within 10% of one, so that one late sample or a long outage does not change it.
The grid sits on whole multiples of the step unless the data keeps a clear offset of its own
(its median phase more than a quarter step away, e.g. every 5 minutes at :02:30); each point
goes to the nearest grid timestamp.
"""

from __future__ import annotations

from typing import Literal

import numpy as np
import pandas as pd

from webapp.analysis.times import to_utc as to_utc  # re-exported: the core reads times one way

ROUND_STEPS = [
    pd.Timedelta(s)
    for s in [
        "1s",
        "2s",
        "5s",
        "10s",
        "15s",
        "20s",
        "30s",
        "1min",
        "2min",
        "5min",
        "10min",
        "15min",
        "20min",
        "30min",
        "1h",
        "2h",
        "3h",
        "4h",
        "6h",
        "12h",
        "1D",
        "7D",
    ]
]
SNAP_TOLERANCE = 0.10
OFFSET_SNAP = 0.25

Agg = Literal["mean", "sum"]


def as_utc_series(series: pd.Series) -> pd.Series:
    """Validate and normalise input: float values on a sorted UTC index, NaN rows kept.

    Naive timestamps are taken as UTC. Raises ValueError with a readable message.
    """
    if not isinstance(series, pd.Series):
        raise ValueError(f"expected a pandas Series of values, got {type(series).__name__}")
    if not isinstance(series.index, pd.DatetimeIndex):
        raise ValueError(
            "the series must be indexed by timestamps (a DatetimeIndex), "
            f"got {type(series.index).__name__}"
        )
    try:
        values = pd.to_numeric(series, errors="raise").astype(float)
    except (TypeError, ValueError) as err:
        raise ValueError(f"the series values must be numbers: {err}") from None
    index = series.index
    index = index.tz_localize("UTC") if index.tz is None else index.tz_convert("UTC")
    index = index.as_unit("ns")
    out = pd.Series(values.to_numpy(), index=index, name=series.name)
    out = out[out.index.notna()].sort_index(kind="stable")
    out = out[np.isfinite(out.to_numpy()) | out.isna()]
    if out.empty or out.isna().all():
        raise ValueError("the series has no values: it is empty or every value is missing")
    return out


def check_step(step) -> pd.Timedelta:
    """A positive grid step, or a ValueError that says what was expected."""
    try:
        value = pd.Timedelta(step)
    except (TypeError, ValueError):
        raise ValueError(f"the step must be a duration such as '5min', got {step!r}") from None
    if value is pd.NaT or value <= pd.Timedelta(0):
        raise ValueError(f"the step must be positive, got {step!r}")
    return value


def infer_step(index: pd.DatetimeIndex) -> pd.Timedelta:
    """The grid step: median positive spacing, snapped to a round step within 10%."""
    ns = np.asarray(index.as_unit("ns").asi8)
    diffs = np.diff(ns) if index.is_monotonic_increasing else np.diff(np.sort(ns))
    diffs = diffs[diffs > 0]
    if diffs.size == 0:
        raise ValueError("at least two distinct timestamps are needed to infer the step")
    median = float(np.median(diffs))
    for step in ROUND_STEPS:
        if abs(median - step.value) <= SNAP_TOLERANCE * step.value:
            return step
    return pd.Timedelta(max(1, round(median / 1e9)), "s")


def grid_offset(index: pd.DatetimeIndex, step: pd.Timedelta) -> int:
    """Nanoseconds past a multiple of the step at which the data's grid sits (0 when aligned)."""
    ns = np.asarray(index.as_unit("ns").asi8, dtype=np.int64)
    step_ns = step.value
    first = int(ns[0] % step_ns)
    wrapped = (ns - ns[0] + step_ns // 2) % step_ns - step_ns // 2
    offset = (first + int(np.median(wrapped))) % step_ns // 1_000_000_000 * 1_000_000_000
    if min(offset, step_ns - offset) < OFFSET_SNAP * step_ns:
        return 0
    return offset


def make_grid(start: pd.Timestamp, end: pd.Timestamp, step: pd.Timedelta, offset: int = 0):
    """Grid timestamps (UTC) between start and end inclusive, at offset + k * step."""
    s, e, st = start.value, end.value, step.value
    first = s + ((offset - s) % st)
    return pd.DatetimeIndex(np.arange(first, e + 1, st, dtype=np.int64), tz="UTC")


def snap(series: pd.Series, step: pd.Timedelta, offset: int, agg: Agg) -> pd.Series:
    """Aggregate points onto the nearest grid timestamp (mean, or sum for counts)."""
    ns = series.index.as_unit("ns").asi8
    st = step.value
    slot = (ns - offset + st // 2) // st * st + offset
    grouped = pd.Series(series.to_numpy(), index=slot).groupby(level=0)
    out = grouped.sum(min_count=1) if agg == "sum" else grouped.mean()
    out.index = pd.DatetimeIndex(out.index.to_numpy(dtype=np.int64), tz="UTC")
    return out


def regularize(
    series: pd.Series,
    step: pd.Timedelta | str | None = None,
    *,
    agg: Agg = "mean",
    start: pd.Timestamp | str | None = None,
    end: pd.Timestamp | str | None = None,
) -> pd.Series:
    """The series on a regular UTC grid: points aggregated per grid slot, gaps as NaN.

    `step` defaults to `infer_step`; `start`/`end` (inclusive) default to the data's range.
    """
    if agg not in ("mean", "sum"):
        raise ValueError(f"agg must be 'mean' or 'sum', got {agg!r}")
    clean = as_utc_series(series)
    step = infer_step(clean.index) if step is None else check_step(step)
    offset = grid_offset(clean.index, step) if len(clean) > 1 else 0
    snapped = snap(clean.dropna(), step, offset, agg)
    lo = snapped.index[0] if start is None else to_utc(start)
    hi = snapped.index[-1] if end is None else to_utc(end)
    grid = make_grid(lo, hi, step, offset)
    out = snapped.reindex(grid)
    out.name = series.name
    return out


def find_gaps(regular: pd.Series) -> list[tuple[pd.Timestamp, pd.Timestamp]]:
    """Stretches of missing values as (first missing timestamp, next present timestamp).

    A gap that runs to the end of the grid ends one step after its last timestamp.
    """
    missing = regular.isna().to_numpy()
    if not missing.any():
        return []
    edges = np.diff(np.concatenate(([0], missing.astype(np.int8), [0])))
    starts = np.flatnonzero(edges == 1)
    stops = np.flatnonzero(edges == -1)
    index = regular.index
    step = index[1] - index[0] if len(index) > 1 else pd.Timedelta(0)
    gaps = []
    for a, b in zip(starts, stops, strict=True):
        end = index[b] if b < len(index) else index[-1] + step
        gaps.append((index[a], end))
    return gaps
