"""The expected band: a decomposition fitted on history, forecast on any grid.

This is the API for anything that needs "fit on this history, forecast on that grid"
(explain, and the replay of band rules):

    fit = fit_baseline(baseline, tz="UTC")       # regular grid, NaN = gap or excluded
    band = fit.band(grid_index, tolerance=3.0)   # expected, lower, upper, band_scale, ...

or in one call from raw points, `expected_band(history, grid_index, tolerance=3.0)`.

The scale is the robust standard deviation (MAD x 1.4826) of the hold-out residual (each
cycle scored against the seasonal pattern of the other cycles, see `Decomposition`), i.e. of
the error a forecast makes, not of the smaller in-sample residual. It may
vary with the hour of day (quieter nights): each wall-clock hour gets its own robust scale,
shrunk toward the overall one with the weight of `HOURLY_PRIOR_SAMPLES` samples, so thin
hours stay near the overall scale. The hourly profile is used only when it differs clearly:
its highest hour is at least 1.25 times its lowest and beyond what sampling noise of the
MAD gives (exp(5 / sqrt(n)) for n residuals per hour). Between hour centres the scale is
interpolated, so the band has no steps. Both rules are our choice. A metric that never moves
gets a scale of a billionth of its level rather than zero.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ._checks import check_exclude, check_history, check_tolerance
from ._clock import DAY_NS, HOUR_NS, check_tz, wall_clock_ns
from ._decompose import Decomposition, decompose
from ._grid import Agg, as_utc_series, infer_step, regularize, to_utc
from ._periods import Candidate, select_periods
from ._robust import band_scale_estimate, grouped_robust_scale

HOURLY_PRIOR_SAMPLES = 50
HOURLY_MIN_RATIO = 1.25
HOURLY_NOISE_Z = 5.0
SCALE_FLOOR = 1e-9
EMPTY_BAND_COLUMNS = ("trend", "seasonal", "expected", "band_scale", "lower", "upper")


@dataclass(frozen=True)
class ScaleModel:
    """The robust sd of the residual, overall and (optionally) per wall-clock hour."""

    overall: float
    hourly: np.ndarray | None
    tz: str

    def at(self, index: pd.DatetimeIndex) -> np.ndarray:
        if self.hourly is None:
            return np.full(len(index), self.overall)
        hours = (wall_clock_ns(index, self.tz) % DAY_NS) / HOUR_NS - 0.5
        return np.interp(hours, np.arange(24), self.hourly, period=24)


def fit_scale(
    residual: np.ndarray, index: pd.DatetimeIndex, tz: str, level: float = 0.0
) -> ScaleModel:
    """Overall and (when the data shows it) hourly scale of the residual; never below
    `SCALE_FLOOR` x |level|, so that a flat metric's band is not made of rounding errors."""
    overall = band_scale_estimate(residual)
    floor = SCALE_FLOOR * max(abs(level), 1.0) if np.isfinite(level) else SCALE_FLOOR
    overall = max(overall, floor) if np.isfinite(overall) else overall
    step = index[1] - index[0] if len(index) > 1 else pd.Timedelta(0)
    span = index[-1] - index[0] if len(index) else pd.Timedelta(0)
    if not np.isfinite(overall) or step > pd.Timedelta(hours=1) or span < pd.Timedelta(days=2):
        return ScaleModel(overall, None, tz)
    hours = (wall_clock_ns(index, tz) % DAY_NS // HOUR_NS).astype(np.int64)
    raw, counts = grouped_robust_scale(residual, hours, 24)
    raw = np.where(np.isfinite(raw), raw, overall)
    shrunk = (counts * raw + HOURLY_PRIOR_SAMPLES * overall) / (counts + HOURLY_PRIOR_SAMPLES)
    typical = max(1.0, float(np.median(counts[counts > 0]))) if counts.any() else 1.0
    needed = max(HOURLY_MIN_RATIO, float(np.exp(HOURLY_NOISE_Z / np.sqrt(typical))))
    if shrunk.min() <= 0 or shrunk.max() / shrunk.min() < needed:
        return ScaleModel(overall, None, tz)
    return ScaleModel(overall, shrunk, tz)


@dataclass(frozen=True)
class BaselineFit:
    """Decomposition plus scale, fitted on a baseline; `band` evaluates them on a grid."""

    decomposition: Decomposition
    scale: ScaleModel
    candidates: list[Candidate]

    @property
    def periods(self) -> list[pd.Timedelta]:
        return list(self.decomposition.periods)

    def band(self, index: pd.DatetimeIndex, tolerance: float = 3.0) -> pd.DataFrame:
        """Columns: trend, seasonal_<label>..., seasonal, expected, band_scale, lower, upper."""
        out = self.decomposition.components(index)
        out["expected"] = out["trend"] + out["seasonal"]
        out["band_scale"] = self.scale.at(index)
        out["lower"] = out["expected"] - tolerance * out["band_scale"]
        out["upper"] = out["expected"] + tolerance * out["band_scale"]
        return out


def fit_baseline(
    baseline: pd.Series,
    *,
    tz: str = "UTC",
    periods: Iterable[pd.Timedelta] | None = None,
) -> BaselineFit:
    """Fit on a regular-grid baseline (NaN = gap, excluded or not to be used).

    `periods=None` detects them (see `_periods`); a list uses exactly those periods.
    """
    if periods is None:
        decomposition, candidates = select_periods(baseline, tz)
    else:
        chosen = sorted(pd.Timedelta(p) for p in periods)
        decomposition = decompose(baseline, chosen, tz=tz)
        candidates = [Candidate(p, "given", kept=True, reason="given") for p in chosen]
    holdout = decomposition.holdout
    if not np.isfinite(holdout).any():
        holdout = baseline.to_numpy() - decomposition.fitted
    level = float(np.nanmedian(np.abs(baseline))) if baseline.notna().any() else 0.0
    scale = fit_scale(holdout, baseline.index, tz, level)
    return BaselineFit(decomposition, scale, candidates)


def excluded_mask(index: pd.DatetimeIndex, spans: Iterable) -> np.ndarray:
    """True inside every excluded (start, end) span, both ends included."""
    mask = np.zeros(len(index), dtype=bool)
    for start, end in spans:
        mask |= (index >= to_utc(start)) & (index <= to_utc(end))
    return mask


def mask_excluded(regular: pd.Series, exclude: Iterable) -> pd.Series:
    """A copy with NaN inside every excluded (start, end) span, both ends included."""
    out = regular.copy()
    out[excluded_mask(out.index, exclude)] = np.nan
    return out


def expected_band(
    history: pd.Series,
    grid: pd.DatetimeIndex,
    *,
    tolerance: float = 3.0,
    tz: str = "UTC",
    exclude: Iterable = (),
    agg: Agg = "mean",
    periods: Iterable[pd.Timedelta] | None = None,
    history_length: pd.Timedelta | str | None = None,
) -> pd.DataFrame:
    """The band on `grid`, fitted on the points of `history` before grid[0] (only the last
    `history_length` of them when given). The band is NaN when no point qualifies.

    Columns: trend, seasonal_<label>..., seasonal, expected, band_scale, lower, upper.
    """
    tz = check_tz(tz)
    tolerance = check_tolerance(tolerance)
    grid = pd.DatetimeIndex(grid)
    grid = (grid.tz_localize("UTC") if grid.tz is None else grid.tz_convert("UTC")).as_unit("ns")
    if len(grid) == 0:
        raise ValueError("the grid to draw the band on is empty")
    clean = as_utc_series(history)
    step = grid[1] - grid[0] if len(grid) > 1 else infer_step(clean.index)
    first = clean.index[0] if history_length is None else grid[0] - check_history(history_length)
    before = clean[(clean.index < grid[0]) & (clean.index >= first)]
    if before.notna().sum() == 0:
        return pd.DataFrame(np.nan, index=grid, columns=list(EMPTY_BAND_COLUMNS))
    regular = regularize(before, step, agg=agg, start=first, end=grid[0] - step)
    if len(regular) < 2:
        return pd.DataFrame(np.nan, index=grid, columns=list(EMPTY_BAND_COLUMNS))
    fit = fit_baseline(mask_excluded(regular, check_exclude(exclude)), tz=tz, periods=periods)
    return fit.band(grid, tolerance)
