"""A cheap expected band for many series at once: per-phase medians of past cycles.

Used where fitting `explain`'s decomposition for every series would be too slow (screening a
whole store, a fleet of hundreds of hosts). For each series (a row of a matrix on one regular
grid):

- the cycle is a week when the history holds at least three weeks, a day when it holds at
  least three days, otherwise none (our own choices: three cycles give a median that one bad
  cycle cannot move);
- the seasonal profile is, for each phase of the cycle, the median of the history's values at
  that phase, over the whole cycles that end at the window start (phases are counted back
  from the window start, so they follow the wall clock of the window);
- the level follows recent drift: the median of the last day's residual from the profile;
- the scale is the robust sd (MAD x 1.4826) of the last cycle's residual from the profile of
  the cycles before it: measured as the band is used, on values the profile has not seen
  (a residual from a median that includes the value itself would understate it); it falls
  back to the mean absolute deviation when most residuals are equal, as `explain`'s band
  does. Without a cycle it is the MAD of the whole history.

A DST change inside the history shifts the phases of the cycles before it by an hour; the
median over the cycles absorbs that while most of them share the window's offset.
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
    """`expected` at every slot after the history (rows x window slots), one `scale` per row
    (NaN where the history cannot give one), and the seasonal `cycle` used, if any."""

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
    """Median along a short axis ignoring NaN, by one sort (NaN sorts last); faster than
    `np.median` along a short middle axis."""
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


def phase_baseline(values: np.ndarray, step: pd.Timedelta, history_end: int) -> PhaseBaseline:
    """Fit on `values[:, :history_end]` (NaN = missing or excluded) and give the expected
    value at each later slot (the window)."""
    rows, slots = values.shape
    cycle = choose_cycle(history_end * step, step)
    period = int(cycle / step) if cycle is not None else 1
    cycles = history_end // period
    by_cycle = values[:, history_end - cycles * period : history_end].reshape(rows, cycles, period)
    if cycle is None:
        profile = np.zeros((rows, 1))
        residual = by_cycle[:, :, 0]
    else:
        profile = nanmedian_axis(by_cycle, 1)
        residual = by_cycle[:, -1] - nanmedian_axis(by_cycle[:, :-1], 1)
    tail = values[:, max(0, history_end - int(DAY / step)) : history_end]
    level = nanmedian_rows(tail - profile[:, np.arange(-tail.shape[1], 0) % period])
    expected = profile[:, np.arange(slots - history_end) % period] + level[:, None]
    return PhaseBaseline(expected=expected, scale=robust_scale_rows(residual), cycle=cycle)
