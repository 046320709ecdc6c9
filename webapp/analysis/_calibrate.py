"""Out-of-sample calibration of the band: a rolling-origin backtest inside the history.

The forecast carried into a window is the seasonal pattern plus a level: the median of the
deseasonalised values over the last day of history (`recent_level`). A median of a whole
day is stable on bursty and mostly-zero metrics, never leaves the range the data took, and
follows a change of level within a day; a spike cannot move it, a whole bad day left in the
history as its last day can (exclude it). A change of level in the last hours (a deploy, a
migration) is followed sooner: when at least `SHIFT_SHARE` of the last values, over at
least an eighth of a day, lie more than `SHIFT_Z` scales to one side of the day's median,
their median is the level (`shifted_level`; thresholds our choice). This is the running
median of the backtest's errors moving away from zero, read at the end of the history.
A change of spread is followed the same way (`recent_spread`): when the robust spread of
each half of the last eighth of a day is at least `SHIFT_Z` times the band's scale (a group
of hosts that started to flap between two levels), the band ahead is at least +-tolerance
times that spread; a day later the backtest has learnt it.

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

from ._tail import conformal_rank, upper_quantile

BACKTEST_DAYS = 28
MIN_LEVEL_SAMPLES = 12
MIN_BACKTEST_SAMPLES = 48
SHIFT_Z = 3.0
SHIFT_SHARE = 0.9
SHIFT_PARTS = 8  # a shift counts once it has held an eighth of a day (3 hours)
IQR_TO_SD = 1.349  # the interquartile range of a normal distribution, in sds


def recent_level(values: np.ndarray, end: int, span: int, scale: float = float("nan")) -> float:
    """The level carried into a forecast from position `end`: the median of the last `span`
    valid values (a day's worth of samples: gaps and excluded stretches are stepped over),
    or, when the last hours stand apart from it, their median (`shifted_level`)."""
    before = values[:end]
    recent = before[np.isfinite(before)][-span:]
    if not len(recent):
        return float("nan")
    level = float(np.median(recent))
    shifted = shifted_level(recent, level, scale, max(MIN_LEVEL_SAMPLES, span // SHIFT_PARTS))
    return level if shifted is None else shifted


def shifted_level(recent: np.ndarray, level: float, scale: float, shortest: int) -> float | None:
    """The median of the longest run of last values of which at least `SHIFT_SHARE` lie
    more than `SHIFT_Z` scales to one side of `level` (a change of level, a deploy or a
    migration, that the day's median has not caught up with yet), if it holds at least
    `shortest` values; else None. A spike or a short burst is too short to count."""
    if not np.isfinite(scale) or scale <= 0 or len(recent) < shortest:
        return None
    z = (recent[::-1] - level) / scale  # newest first
    seen = np.arange(1, len(z) + 1)
    for side in (1.0, -1.0):
        held = np.cumsum(side * z > SHIFT_Z) >= SHIFT_SHARE * seen
        held[: shortest - 1] = False
        if held.any():
            longest = int(np.flatnonzero(held)[-1]) + 1
            return float(np.median(recent[-longest:]))
    return None


def recent_spread(values: np.ndarray, span: int, scale: float) -> float:
    """The robust spread of the last eighth of a day of valid `values` when it is at least
    `SHIFT_Z` times `scale`, else NaN. The spread is the interquartile range / 1.349 (the
    normal-consistent IQR, common practice), not the MAD: flapping between two levels has a
    MAD near zero when one level holds just over half the values, but an IQR as wide as the
    flapping. It must hold in both halves of that stretch (the smaller of their two
    spreads counts), so a burst and its decay, a spike or two, or a metric that sits on one
    level do not widen the band."""
    recent = values[np.isfinite(values)][-max(MIN_LEVEL_SAMPLES, span // SHIFT_PARTS) :]
    if len(recent) < MIN_LEVEL_SAMPLES or not np.isfinite(scale):
        return float("nan")
    quartiles = [np.percentile(half, [25, 75]) for half in np.array_split(recent, 2)]
    spread = min(float(high - low) for low, high in quartiles) / IQR_TO_SD
    return spread if spread >= SHIFT_Z * scale else float("nan")


def backtest_errors(
    deseasonalised: np.ndarray,
    span: int,
    days: int = BACKTEST_DAYS,
    scale: float = float("nan"),
):
    """Errors of forecasting each of the last `days` blocks of `span` samples by the level
    of the data before the block (`recent_level`, shifts found with `scale`); NaN outside
    the backtest. Returns (errors, blocks used)."""
    n = len(deseasonalised)
    errors = np.full(n, np.nan)
    used = 0
    for k in range(1, days + 1):
        lo, hi = n - k * span, n - (k - 1) * span
        if lo <= 0 or np.isfinite(deseasonalised[:lo]).sum() < MIN_LEVEL_SAMPLES:
            break
        errors[lo:hi] = deseasonalised[lo:hi] - recent_level(deseasonalised, lo, span, scale)
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
    time order), how many days they cover, and the furthest the raw errors went each way."""

    errors: np.ndarray
    days: int
    furthest: tuple[float, float] = (float("-inf"), float("inf"))

    def reach(self, tolerance: float) -> tuple[float, float]:
        """(lowest, highest) raw error the band need allow at `tolerance`: the furthest the
        backtest went each way once it holds enough errors for that to be a split-conformal
        bound (a new error beyond all n has chance at most 1 / (n + 1) <= the side's share
        on exchangeable errors); else unbounded."""
        n = int(np.isfinite(self.errors).sum())
        if conformal_rank(n, beyond_share(tolerance)) > n:
            return float("-inf"), float("inf")
        return min(self.furthest[0], 0.0), max(self.furthest[1], 0.0)

    def quantiles(self, tolerance: float) -> tuple[float, float]:
        """(lower, upper) side of the band in units of the scale at each hour."""
        beyond = beyond_share(tolerance)
        lower = -upper_quantile(-self.errors, beyond)
        upper = upper_quantile(self.errors, beyond)
        return short_float(min(lower, 0.0), -1), short_float(max(upper, 0.0), 1)

    def coverage(self, tolerance: float) -> float:
        """Share of the backtest errors inside the band at `tolerance`."""
        z = self.errors[np.isfinite(self.errors)]
        lower, upper = self.quantiles(tolerance)
        return float(np.mean((z >= lower) & (z <= upper))) if len(z) else float("nan")


def short_float(x: float, away: int) -> float:
    """`x` to 12 significant digits, one unit of the last digit further in the direction
    `away` (+1 up, -1 down). A side of the band is then `expected + k x band_scale` with a
    short `k`, which a saved frame stores as that formula rather than as numbers; and a
    value the backtest saw exactly on a side is never put outside by the last bit of
    rounding (a metric that sits on a few levels, 0.066 or 42.0, would otherwise be
    "outside" at its own floor every few minutes)."""
    if x == 0 or not np.isfinite(x):
        return x
    unit = 10.0 ** (np.floor(np.log10(abs(x))) - 11)
    return float(f"{x + away * unit:.12g}")


def calibrate(errors: np.ndarray, scale: np.ndarray, days: int) -> Calibration | None:
    """The calibration from raw backtest errors and the scale at each of their samples;
    None when the backtest holds too few errors to set a band from."""
    with np.errstate(invalid="ignore", divide="ignore"):
        z = np.where(scale > 0, errors / scale, np.nan)
    if days < 1 or np.isfinite(z).sum() < MIN_BACKTEST_SAMPLES:
        return None
    seen = errors[np.isfinite(z)]
    return Calibration(z, days, (float(seen.min()), float(seen.max())))
