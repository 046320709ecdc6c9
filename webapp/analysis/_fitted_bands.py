"""A band rule's daily fits as a plain frame and back, so they can be kept and reused.

Fitting every day's band over weeks of history is the costly part of a band rule's replay
(seconds); evaluating it at any tolerance, hold or direction is cheap. ``band_fit_frame``
keeps what the fit produced (expected value and each side's scale per evaluation, from the
first banded one); ``band_grid_from_frame`` puts the same ``BandGrid`` back together from
it and the series, which gives the values. ``band_fit_parameters`` names everything else
the fit depends on, so a kept fit is reused only where it would come out the same.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

import pandas as pd

from webapp.analysis._replay import BandGrid, BandRule, evaluation_grid

FIT_COLUMNS = ("expected", "below_scale", "above_scale")


def band_fit_parameters(rule: BandRule, exclude: Iterable = ()) -> dict[str, Any]:
    """What a band rule's daily fits depend on besides the series itself: the history and
    the least history, the wall clock, the check interval, the tolerance the sides are
    calibrated at (a sweep scales them from there) and the excluded spans. The hold and the
    direction do not change them. Plain JSON values, in a fixed order."""
    spans = sorted((pd.Timestamp(a).isoformat(), pd.Timestamp(b).isoformat()) for a, b in exclude)
    return {
        "history_seconds": rule.history.total_seconds(),
        "min_history_seconds": rule.min_history.total_seconds(),
        "tz": rule.tz,
        "check_every_seconds": None
        if rule.check_every is None
        else pd.Timedelta(rule.check_every).total_seconds(),
        "tolerance": float(rule.tolerance),
        "exclude": [list(span) for span in spans],
    }


def band_fit_frame(grid: BandGrid) -> pd.DataFrame:
    """The fitted part of ``grid``: one row per evaluation from the first banded one."""
    below = grid.scale if grid.below_scale is None else grid.below_scale
    above = grid.scale if grid.above_scale is None else grid.above_scale
    return pd.DataFrame(
        {"expected": grid.expected, "below_scale": below, "above_scale": above},
        index=pd.DatetimeIndex(grid.times, name="time"),
    )


def band_grid_from_frame(series: pd.Series, rule: BandRule, frame: pd.DataFrame) -> BandGrid:
    """The ``BandGrid`` that ``band_grid(series, rule, exclude)`` gave when ``frame`` was
    taken from it, equal to it bit for bit. Raises ValueError when ``frame`` does not fit
    the series' evaluation grid (it was fitted on other data)."""
    times, values, step = evaluation_grid(series, rule.check_every)
    if list(frame.columns) != list(FIT_COLUMNS) or frame.empty:
        raise ValueError("the kept band fit has other columns than a band fit")
    first = int(times.searchsorted(frame.index[0]))
    part = slice(first, None)
    if len(times) - first != len(frame) or not times[part].equals(pd.DatetimeIndex(frame.index)):
        raise ValueError("the kept band fit does not match the series' evaluation grid")
    below = frame["below_scale"].to_numpy(dtype=float)
    above = frame["above_scale"].to_numpy(dtype=float)
    return BandGrid(
        times[part],
        values[part],
        frame["expected"].to_numpy(dtype=float),
        0.5 * (below + above),
        step,
        below_scale=below,
        above_scale=above,
    )
