"""Past-weeks overlay: each earlier week laid over the window at the same hour-of-week."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ._checks import check_window
from ._clock import check_tz, same_wall_clock_weeks_ago
from ._grid import Agg, as_utc_series, check_step, infer_step, regularize
from ._robust import nanpercentile_rows, quiet_nan_warnings


def past_weeks_overlay(
    series: pd.Series,
    window: tuple,
    weeks: int = 6,
    tz: str = "UTC",
    *,
    step: pd.Timedelta | str | None = None,
    agg: Agg = "mean",
) -> pd.DataFrame:
    """For each grid timestamp of the window, the value at the same wall-clock hour-of-week
    in each of the `weeks` earlier weeks, plus their median, 10th/90th percentiles, min, max.

    Columns "week_-1" ... "week_-N" then "median", "p10", "p90", "min", "max"; index: the
    window's grid timestamps (UTC). Weeks without data at that time hold NaN.
    """
    tz = check_tz(tz)
    start, end = check_window(window)
    if not isinstance(weeks, int | np.integer) or weeks < 1:
        raise ValueError(f"weeks must be a positive whole number, got {weeks!r}")
    clean = as_utc_series(series)
    step = infer_step(clean.index) if step is None else check_step(step)
    reach = start - pd.Timedelta(weeks=weeks, days=1)  # a day more, for daylight saving
    nearby = clean[(clean.index >= reach) & (clean.index <= end + step)]
    regular = regularize(nearby if nearby.notna().any() else clean, step, agg=agg, end=end)
    grid = regular.index[(regular.index >= start) & (regular.index <= end)]
    columns = {}
    for k in range(1, weeks + 1):
        targets = same_wall_clock_weeks_ago(grid, k, tz)
        at = regular.index.get_indexer(targets, method="nearest", tolerance=step / 2)
        values = np.where(at >= 0, regular.to_numpy()[np.maximum(at, 0)], np.nan)
        values[targets.isna()] = np.nan
        columns[f"week_-{k}"] = values
    out = pd.DataFrame(columns, index=grid)
    past = out.to_numpy()
    with quiet_nan_warnings():
        out["median"] = np.nanmedian(past, axis=1)
        out["p10"] = nanpercentile_rows(past, 10)
        out["p90"] = nanpercentile_rows(past, 90)
        out["min"] = np.nanmin(past, axis=1)
        out["max"] = np.nanmax(past, axis=1)
    return out
