"""Out-of-sample calibration of the band: a rolling-origin backtest inside the history.

The forecast carried into a window is the seasonal pattern plus a level: the median of the
deseasonalised values over the last day of history (`recent_level`). A median of a whole
day is stable on bursty and mostly-zero metrics, never leaves the range the data took, and
follows a change of level within a day; a spike cannot move it, a whole bad day left in the
history as its last day can (exclude it).

To learn how far that forecast misses, each of the last `BACKTEST_DAYS` days of the history
is forecast the same way from the day before it, with the seasonal pattern fitted without
its own cycle (the decomposition's leave-own-cycle-out pattern): errors that never saw their
own day. The days are counted back from the end of the history, so their origins fall at the
time of day the window starts. The band's sides are quantiles of those errors, each side on
its own (skewed metrics), after dividing by the errors' robust scale per hour of day (quiet
nights; see `_band.fit_scale`): split-conformal prediction (Vovk, Gammerman & Shafer 2005;
Angelopoulos & Bates 2021), with a generalised Pareto tail where the data is thin (`_tail`).

The width knob keeps its meaning as a two-sided normal-equivalent level: tolerance t asks
for a share 1 - Phi(t) beyond each side (t = 3: 0.135%, 99.73% inside), so on Gaussian noise
a band of width 3 is what a +-3 sd band is.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.stats import norm

from ._tail import upper_quantile

BACKTEST_DAYS = 28
MIN_LEVEL_SAMPLES = 12
MIN_BACKTEST_SAMPLES = 48


def recent_level(values: np.ndarray, end: int, span: int) -> float:
    """Median of the last `span` valid values before position `end` (a day's worth of
    samples: gaps and excluded stretches are stepped over, not counted)."""
    before = values[:end]
    recent = before[np.isfinite(before)][-span:]
    return float(np.median(recent)) if len(recent) else float("nan")


def backtest_errors(deseasonalised: np.ndarray, span: int, days: int = BACKTEST_DAYS):
    """Errors of forecasting each of the last `days` blocks of `span` samples by the level
    of the data before the block; NaN outside the backtest. Returns (errors, blocks used)."""
    n = len(deseasonalised)
    errors = np.full(n, np.nan)
    used = 0
    for k in range(1, days + 1):
        lo, hi = n - k * span, n - (k - 1) * span
        if lo <= 0 or np.isfinite(deseasonalised[:lo]).sum() < MIN_LEVEL_SAMPLES:
            break
        errors[lo:hi] = deseasonalised[lo:hi] - recent_level(deseasonalised, lo, span)
        used += 1
    return errors, used


def beyond_share(tolerance: float) -> float:
    """Share of samples the band leaves out on each side at `tolerance`."""
    return float(norm.sf(tolerance))


def nominal_coverage(tolerance: float) -> float:
    return 1.0 - 2.0 * beyond_share(tolerance)


@dataclass(frozen=True)
class Calibration:
    """Standardised backtest errors (error / scale at its hour, NaN outside the backtest, in
    time order) and how many days they cover."""

    errors: np.ndarray
    days: int

    def quantiles(self, tolerance: float) -> tuple[float, float]:
        """(lower, upper) side of the band in units of the scale at each hour."""
        beyond = beyond_share(tolerance)
        lower = -upper_quantile(-self.errors, beyond)
        upper = upper_quantile(self.errors, beyond)
        return min(lower, 0.0), max(upper, 0.0)

    def coverage(self, tolerance: float) -> float:
        """Share of the backtest errors inside the band at `tolerance`."""
        z = self.errors[np.isfinite(self.errors)]
        lower, upper = self.quantiles(tolerance)
        return float(np.mean((z >= lower) & (z <= upper))) if len(z) else float("nan")


def calibrate(errors: np.ndarray, scale: np.ndarray, days: int) -> Calibration | None:
    """The calibration from raw backtest errors and the scale at each of their samples;
    None when the backtest holds too few errors to set a band from."""
    with np.errstate(invalid="ignore", divide="ignore"):
        z = np.where(scale > 0, errors / scale, np.nan)
    if days < 1 or np.isfinite(z).sum() < MIN_BACKTEST_SAMPLES:
        return None
    return Calibration(z, days)
