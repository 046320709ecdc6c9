"""A cheap expected band for many series at once: per-phase medians of past cycles.

Used where fitting `explain`'s decomposition for every series would be too slow (screening a
whole store, a fleet of hundreds of hosts). For each series (a row of a matrix on one regular
grid):

- the cycle is a week when the history holds at least three weeks, a day when it holds at
  least three days, otherwise none (our own choices: three cycles give a median that one bad
  cycle cannot move);
- the seasonal profile is, for each phase of the cycle (the step's place in the week or day
  on the wall clock of the window start), the median of the history's values at that phase;
- the level follows recent drift: the median of the last day's residual from the profile;
- the scale is the robust sd (MAD x 1.4826) of the history's residual, falling back to the
  mean absolute deviation when most residuals are equal, as `explain`'s band does.

A DST change inside the history shifts the phases of the weeks before it by an hour; the
median over the weeks absorbs that while most weeks share the window's offset.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ._robust import MAD_TO_SD, MEAN_AD_TO_SD, quiet_nan_warnings

WEEK = pd.Timedelta(weeks=1)
DAY = pd.Timedelta(days=1)
MIN_CYCLES = 3


@dataclass(frozen=True)
class PhaseBaseline:
    """`expected` for every slot of the grid (rows x slots) and one `scale` per row (NaN
    where the history cannot give one); `cycle` is the seasonal cycle used, if any."""

    expected: np.ndarray
    scale: np.ndarray
    cycle: pd.Timedelta | None


def choose_cycle(history: pd.Timedelta, step: pd.Timedelta) -> pd.Timedelta | None:
    for cycle in (WEEK, DAY):
        if history >= MIN_CYCLES * cycle and cycle % step == pd.Timedelta(0):
            return cycle
    return None


def nanmedian_rows(matrix: np.ndarray) -> np.ndarray:
    """Median of each row ignoring NaN (NaN for an empty row); fast when rows are whole."""
    out = np.full(matrix.shape[0], np.nan)
    holed = np.isnan(matrix).any(axis=1)
    if (~holed).any():
        out[~holed] = np.median(matrix[~holed], axis=1)
    with quiet_nan_warnings():
        for i in np.flatnonzero(holed):
            out[i] = np.nanmedian(matrix[i])
    return out


def nanmedian_axis(array: np.ndarray, axis: int) -> np.ndarray:
    """Median along a short axis ignoring NaN, by one sort (NaN sorts last)."""
    ordered = np.sort(array, axis=axis)
    n = np.isfinite(array).sum(axis=axis, keepdims=True)
    lo = np.take_along_axis(ordered, np.maximum((n - 1) // 2, 0), axis=axis)
    hi = np.take_along_axis(ordered, n // 2, axis=axis)
    return np.squeeze((lo + hi) / 2, axis=axis)


def robust_scale_rows(residual: np.ndarray) -> np.ndarray:
    centre = nanmedian_rows(residual)
    spread = np.abs(residual - centre[:, None])
    scale = MAD_TO_SD * nanmedian_rows(spread)
    flat = scale == 0
    if flat.any():
        with quiet_nan_warnings():
            scale[flat] = MEAN_AD_TO_SD * np.nanmean(spread[flat], axis=1)
    return np.where(scale > 0, scale, np.nan)


def phase_baseline(
    values: np.ndarray, grid: pd.DatetimeIndex, history_end: int, tz: str = "UTC"
) -> PhaseBaseline:
    """Fit on `values[:, :history_end]` (NaN = missing or excluded) and give the expected
    value at every slot of `grid`, the window's included."""
    step = grid[1] - grid[0]
    history = values[:, :history_end]
    cycle = choose_cycle(history_end * step, step)
    if cycle is None:
        seasonal = np.zeros_like(values)
    else:
        period = int(cycle / step)
        at = grid[min(history_end, len(grid) - 1)]
        offset = at.tz_convert(tz).utcoffset() or pd.Timedelta(0)
        first = int(((grid[0].value + offset.value) // step.value) % period)
        cycles = -(-(first + history_end) // period)
        padded = np.full((len(values), cycles * period), np.nan)
        padded[:, first : first + history_end] = history
        profile = nanmedian_axis(padded.reshape(len(values), cycles, period), axis=1)
        seasonal = profile[:, (first + np.arange(values.shape[1])) % period]
    residual = history - seasonal[:, :history_end]
    recent = max(1, min(history_end, int(DAY / step)))
    level = nanmedian_rows(residual[:, -recent:])
    level = np.where(np.isnan(level), nanmedian_rows(residual), level)
    scale = robust_scale_rows(residual)
    return PhaseBaseline(expected=seasonal + level[:, None], scale=scale, cycle=cycle)
