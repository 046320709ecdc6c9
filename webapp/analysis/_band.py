"""The expected band: a decomposition fitted on history, forecast on any grid.

This is the API for anything that needs "fit on this history, forecast on that grid"
(explain, and the replay of band rules):

    fit = fit_baseline(baseline, tz="UTC")       # regular grid, NaN = gap or excluded
    band = fit.band(grid_index, tolerance=3.0)   # expected, lower, upper, band_scale, ...

or in one call from raw points, `expected_band(history, grid_index, tolerance=3.0)`.

Inside the window the forecast is the seasonal pattern plus the level of the last day of
history, or of its last hours after a change of level (see `_calibrate`); over the history
the band follows the fitted decomposition. Inside the window the band also covers the
same forecast from the level of the day before the last (`level_before`): after a change of
level, or a few hours' dip at the end of the history, nobody can tell yet which level the
window will take, so for a day the band holds both rather than betting on one (our rule).

The scale (`band_scale`) is the robust standard deviation (MAD x 1.4826) of the hold-out
residual (each cycle scored against the seasonal pattern of the other cycles, see
`Decomposition`). It may vary with the hour of day (quieter nights): each wall-clock hour
gets its own robust scale, shrunk toward the overall one with the weight of
`HOURLY_PRIOR_SAMPLES` samples, so thin hours stay near the overall scale. The hourly
profile is used only when it differs clearly: its highest hour is at least 1.25 times its
lowest and beyond what sampling noise of the MAD gives (exp(5 / sqrt(n)) for n residuals
per hour). Between hour centres the scale is interpolated, so the band has no steps. Both
rules are our choice. A metric that never moves gets a scale of a billionth of its level
rather than zero.

The sides are not +-tolerance x scale but calibrated out of sample: the quantiles, in units
of the scale, of the errors a rolling-origin backtest made forecasting the last days of the
history (`_calibrate`, `_tail`), each side on its own. Only when the history is too short
to backtest (under two days) are they +-tolerance x scale. A habit near a wall-clock hour
widens them there (`HourlyRecurrence`, our rule): when on at least half of the backtest
days the errors within an hour either way of an hour of the day went clearly further than
the sides (a quarter further at least, beyond the count chance gives such a stretch), the
side at that hour is as far as they went on all but the share of days chance allows (with
few days, the furthest); a job that spikes near 03:30 on most nights is then expected at
03:30 and nowhere else, and a spike that recurs at no particular hour changes nothing.

Nor does a side reach further from the expected value than the furthest error the backtest
made that way, in the metric's own units, once the backtest holds enough errors for that to
be a split-conformal bound (`Calibration.reach`). The hourly scale of a bursty metric is
large at hours that once had a burst, and the calibrated side times that scale would reach
far past anything the metric did (a CPU whose bursts reached 70 got a band up to 270).
Either bound alone leaves a share of exchangeable errors no larger than nominal outside;
the narrower of the two at most twice that. On a metric that never went below zero the
lower side is not bounded this way but by the smallest value taken (`Limits`): how far
below its level such a metric can go depends on the level (a CPU idling at 2 whose level
rose to 3 can drop further than it did before).

After a change of spread in the last hours of the history (`_calibrate.recent_spread`) the
band ahead is at least +-tolerance times the recent spread.

`Limits` keeps the band within what the metric can take: counts stay whole and
non-negative, a ratio stays in [0, 1], and nothing expected or lower falls below the
smallest value the history took when that is >= 0.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy.stats import poisson

from ._calibrate import (
    Calibration,
    backtest_errors,
    beyond_share,
    calibrate,
    recent_level,
    recent_spread,
)
from ._checks import check_exclude, check_history, check_tolerance
from ._clock import DAY_NS, HOUR_NS, check_tz, wall_clock_hour, wall_clock_ns
from ._decompose import Decomposition, decompose, others
from ._grid import Agg, as_utc_series, infer_step, regularize, to_utc
from ._periods import Candidate, select_periods
from ._robust import band_scale_estimate, grouped_robust_scale

HOURLY_PRIOR_SAMPLES = 50
HOURLY_MIN_RATIO = 1.25
HOURLY_NOISE_Z = 5.0
SCALE_FLOOR = 1e-9
DAY = pd.Timedelta(days=1)
SMALL_COUNT = 10  # a whole-number series whose median is at most this is read as counts
MIN_RECUR_DAYS = 3  # backtest days needed before a same-hour habit counts
RECUR_NEAR_HOURS = 1  # a habit's time may drift by an hour either way
NEAR_SHIFTS = range(-RECUR_NEAR_HOURS, RECUR_NEAR_HOURS + 1)
HABIT_MARGIN = 1.25  # a habit counts where it reaches this much further than the side
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
    hours = wall_clock_hour(index, tz)
    raw, counts = grouped_robust_scale(residual, hours, 24)
    raw = np.where(np.isfinite(raw), raw, overall)
    shrunk = (counts * raw + HOURLY_PRIOR_SAMPLES * overall) / (counts + HOURLY_PRIOR_SAMPLES)
    typical = max(1.0, float(np.median(counts[counts > 0]))) if counts.any() else 1.0
    needed = max(HOURLY_MIN_RATIO, float(np.exp(HOURLY_NOISE_Z / np.sqrt(typical))))
    if shrunk.min() <= 0 or shrunk.max() / shrunk.min() < needed:
        return ScaleModel(overall, None, tz)
    return ScaleModel(overall, shrunk, tz)


@dataclass(frozen=True)
class Limits:
    """What the history says about the metric's range: the band never leaves it where the
    metric cannot (see `bound`)."""

    lowest: float
    highest: float
    counts: bool  # small non-negative integers (errors per minute), see `SMALL_COUNT`
    ratio: bool  # within [0, 1] and reaching above one half
    recent_mean: float  # over the last day: the rate a count band is read around

    @classmethod
    def of(cls, values: np.ndarray, span: int) -> Limits:
        x = values[np.isfinite(values)]
        if not len(x):
            return cls(np.nan, np.nan, False, False, np.nan)
        lowest, highest = float(x.min()), float(x.max())
        recent = values[-span:]
        recent = recent[np.isfinite(recent)]
        return cls(
            lowest=lowest,
            highest=highest,
            counts=bool(lowest >= 0 and np.median(x) <= SMALL_COUNT and np.all(x == np.round(x))),
            ratio=bool(lowest >= 0 and 0.5 < highest <= 1),
            recent_mean=float(recent.mean()) if len(recent) else float(x.mean()),
        )

    def clip_expected(self, expected: np.ndarray) -> np.ndarray:
        """The expected value stays within the range the metric has taken."""
        if not np.isfinite(self.lowest):
            return expected
        return np.clip(expected, self.lowest, self.highest)

    def bound(
        self, lower: np.ndarray, upper: np.ndarray, expected: np.ndarray, tolerance: float
    ) -> tuple[np.ndarray, np.ndarray]:
        """Sides that respect the metric's scale. Counts: whole numbers, at least the Poisson
        quantiles around the expected rate (or the last day's mean rate, if higher), and one
        count above the expected value is never outside (our rule: a single 0 -> 1 blip is
        not news). Never below the smallest value taken when that is >= 0; a ratio's upper
        side never above 1."""
        if self.counts:
            beyond = beyond_share(tolerance)
            rate = np.maximum(np.nan_to_num(np.maximum(expected, self.recent_mean)), 1e-12)
            upper = np.fmax(np.ceil(upper), on_rate_grid(poisson.isf, beyond, rate, up=True))
            upper = np.fmax(upper, np.floor(expected) + 1)
            lower = np.fmin(np.floor(lower), on_rate_grid(poisson.ppf, beyond, rate, up=False))
        if self.lowest >= 0:
            lower = np.maximum(lower, self.lowest)
        if self.ratio:
            upper = np.minimum(upper, 1.0)
        return lower, upper


def on_rate_grid(quantile, share: float, rate: np.ndarray, *, up: bool) -> np.ndarray:
    """`quantile(share, rate)` with each rate rounded to 4 significant digits, up or down
    (the Poisson quantiles grow with the rate, so the side only widens), computed once per
    distinct rounded rate: a few hundred calls instead of one per sample."""
    step = 10.0 ** (np.floor(np.log10(rate)) - 3)
    grid = (np.ceil if up else np.floor)(rate / step) * step
    distinct, where = np.unique(grid, return_inverse=True)
    return quantile(share, distinct)[where]


@dataclass(frozen=True)
class HourlyRecurrence:
    """The backtest errors (in units of the scale) grouped by backtest day and wall-clock
    hour: what most days reached near each hour is expected at that hour (see `sides`).

    The errors are kept sorted by (day, hour) and, within each, from the largest down, so
    that any tolerance's sides need no further sorting."""

    errors: np.ndarray  # standardised backtest errors, sorted as above
    bucket: np.ndarray  # day * 24 + wall-clock hour of each; day 0 = the last
    rank: np.ndarray  # 0 = the largest of its bucket
    size: np.ndarray  # how many errors its bucket holds
    n_days: int
    tz: str
    cache: dict = field(default_factory=dict, compare=False, repr=False)

    @classmethod
    def of(
        cls, z: np.ndarray, index: pd.DatetimeIndex, tz: str, span: int, days: int
    ) -> HourlyRecurrence | None:
        """None when there are too few backtest days or the grid is coarser than an hour."""
        step = index[1] - index[0] if len(index) > 1 else DAY
        if days < MIN_RECUR_DAYS or step > pd.Timedelta(hours=1):
            return None
        n = len(z)
        day = np.full(n, -1)
        for k in range(days):
            day[max(0, n - (k + 1) * span) : n - k * span] = k
        ok = (day >= 0) & np.isfinite(z)
        hours = wall_clock_hour(index, tz)
        bucket, z = day[ok] * 24 + hours[ok], z[ok]
        order = np.lexsort((-z, bucket))
        bucket = bucket[order]
        first = np.searchsorted(bucket, bucket, side="left")
        size = np.searchsorted(bucket, bucket, side="right") - first
        rank = np.arange(len(bucket)) - first
        return cls(z[order], bucket, rank, size, days, tz)

    def sides(self, tolerance: float) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """(typical low, typical high, far low, far high) per wall-clock hour, from the r-th
        most extreme error of each backtest day within the hour, give or take one
        (`RECUR_NEAR_HOURS`), where r is one more than the number of samples such a stretch
        typically holds beyond the side by chance. Typical is the median over the days (what
        most days reached: whether there is a habit at all); far is their conformal rank for
        a share of days equal to the chance such a stretch holds a sample beyond the side,
        at most half the days (with few days, the furthest of them: how far the habit may
        go). On noise without a daily habit the typical reach stays inside +-tolerance, so
        nothing changes; a job that spikes near 03:30 on most days is expected there, as
        far as it went on the days before."""
        if tolerance not in self.cache:
            self.cache[tolerance] = self._sides(beyond_share(tolerance))
        return self.cache[tolerance]

    def _sides(self, beyond: float) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        per_bucket = np.bincount(self.bucket, minlength=self.n_days * 24)
        per_bucket = per_bucket.reshape(self.n_days, 24)
        near = sum(np.roll(per_bucket, s, axis=1) for s in NEAR_SHIFTS)  # samples per stretch
        typical = float(np.median(near[near > 0])) if (near > 0).any() else 0.0
        r = max(1, int(round(typical * beyond)) + 1)
        high = self._rth_extreme(self.errors, self.rank, r)
        low = self._rth_extreme(-self.errors, self.size - 1 - self.rank, r)  # negated
        days_seen = np.isfinite(high).sum(axis=0)
        enough = days_seen >= MIN_RECUR_DAYS
        day_share = min(0.5, typical * beyond)
        rank = np.minimum(np.ceil((days_seen + 1) * (1 - day_share)).astype(int), days_seen)
        hours = np.arange(24)

        def at_rank(reach: np.ndarray, ranks: np.ndarray) -> np.ndarray:
            """The `ranks`-th smallest day of each hour (1-based; NaN sorts last)."""
            value = np.sort(reach, axis=0)[np.maximum(ranks - 1, 0), hours]
            return np.where(enough, value, np.nan)

        middle = (days_seen + 1) // 2
        return (
            -at_rank(low, middle),
            at_rank(high, middle),
            -at_rank(low, rank),
            at_rank(high, rank),
        )

    def _rth_extreme(self, z: np.ndarray, rank: np.ndarray, r: int) -> np.ndarray:
        """(days, 24): the r-th largest of `z` (ranked `rank` within its bucket, 0 = largest)
        within each day's hour, give or take `RECUR_NEAR_HOURS`; NaN where that stretch
        holds fewer than r values."""
        keep = rank < r
        top = np.full((self.n_days * 24, r), -np.inf)
        top[self.bucket[keep], rank[keep]] = z[keep]
        top = top.reshape(self.n_days, 24, r)
        stretch = np.concatenate([np.roll(top, s, axis=1) for s in NEAR_SHIFTS], axis=2)
        out = np.partition(stretch, -r, axis=2)[:, :, -r]
        return np.where(np.isfinite(out), out, np.nan)

    def hours_beyond(self, low: float, high: float, tolerance: float) -> list[int]:
        """The wall-clock hours at which a habit reaches clearly past the sides `low`,
        `high` (by `HABIT_MARGIN` of their reach at least)."""
        lows, highs = self._clear(low, high, tolerance)
        return [int(h) for h in np.flatnonzero(np.isfinite(lows) | np.isfinite(highs))]

    def widen(
        self, index: pd.DatetimeIndex, low: float, high: float, tolerance: float
    ) -> tuple[np.ndarray, np.ndarray]:
        """The sides at each time of `index`: `low`, `high`, or a habit's reach there."""
        lows, highs = self._clear(low, high, tolerance)
        hours = wall_clock_hour(index, self.tz)
        return np.fmin(low, lows[hours]), np.fmax(high, highs[hours])

    def _clear(self, low: float, high: float, tolerance: float) -> tuple[np.ndarray, np.ndarray]:
        """The habit's far reach per hour where its typical reach is clearly past the side,
        else NaN: a habit only a little past it is as likely chance (our rule, as for the
        hourly scale)."""
        typical_low, typical_high, far_low, far_high = self.sides(tolerance)
        with np.errstate(invalid="ignore"):
            lows = np.where(typical_low < HABIT_MARGIN * min(low, 0.0), far_low, np.nan)
            highs = np.where(typical_high > HABIT_MARGIN * max(high, 0.0), far_high, np.nan)
        return lows, highs


@dataclass(frozen=True)
class BaselineFit:
    """Decomposition, level, scale and calibration fitted on a baseline; `band` evaluates
    them on a grid. Times after `end` are forecast: seasonal pattern plus `level`."""

    decomposition: Decomposition
    scale: ScaleModel
    candidates: list[Candidate]
    level: float
    level_before: float  # the day before the last: the band covers it too (see `band`)
    end: pd.Timestamp
    limits: Limits
    calibration: Calibration | None
    recurring: HourlyRecurrence | None = None
    spread: float = float("nan")  # a recent change of spread, NaN without one (see `band`)

    @property
    def periods(self) -> list[pd.Timedelta]:
        return list(self.decomposition.periods)

    def sides(self, tolerance: float) -> tuple[float, float]:
        """The calibrated (lower, upper) side in units of the scale, before any habit."""
        if self.calibration is None:
            return -tolerance, tolerance
        return self.calibration.quantiles(tolerance)

    def habit_hours(self, tolerance: float) -> list[int]:
        """Wall-clock hours at which a daily habit widens the band (see `HourlyRecurrence`)."""
        if self.recurring is None:
            return []
        return self.recurring.hours_beyond(*self.sides(tolerance), tolerance)

    def band(self, index: pd.DatetimeIndex, tolerance: float = 3.0) -> pd.DataFrame:
        """Columns: trend, seasonal_<label>..., seasonal, expected, band_scale, lower, upper.

        `band_scale` is the robust sd of the forecast errors at each time (hour of day);
        the sides are expected + the calibrated quantiles times it, so they may differ."""
        out = self.decomposition.components(index)
        ahead = np.asarray(index > self.end)
        seasonal = out["seasonal"].to_numpy()
        trend = np.where(ahead, self.level, out["trend"].to_numpy())
        expected = self.limits.clip_expected(trend + seasonal)
        out["trend"] = expected - seasonal  # the trend absorbs any clipping
        out["expected"] = expected
        scale = self.scale.at(index)
        out["band_scale"] = scale
        low, high = self.sides(tolerance)
        if self.recurring is not None:
            low, high = self.recurring.widen(index, low, high, tolerance)
        if self.calibration is not None:
            lowest, highest = self.calibration.reach(tolerance)
            if self.limits.lowest >= 0:
                lowest = -np.inf  # bounded by the smallest value taken instead (`Limits`)
            low, high = np.maximum(low, lowest / scale), np.minimum(high, highest / scale)
        lower, upper = expected + low * scale, expected + high * scale
        if np.isfinite(self.level_before):
            before = self.limits.clip_expected(np.where(ahead, self.level_before, trend) + seasonal)
            lower = np.fmin(lower, before + low * scale)
            upper = np.fmax(upper, before + high * scale)
        if np.isfinite(self.spread):
            lower = np.where(ahead, np.fmin(lower, expected - tolerance * self.spread), lower)
            upper = np.where(ahead, np.fmax(upper, expected + tolerance * self.spread), upper)
        lower, upper = self.limits.bound(lower, upper, expected, tolerance)
        out["lower"] = lower
        out["upper"] = upper
        return out


def fit_baseline(
    baseline: pd.Series,
    *,
    tz: str = "UTC",
    periods: Iterable[pd.Timedelta] | None = None,
) -> BaselineFit:
    """Fit on a regular-grid baseline (NaN = gap, excluded or not to be used).

    `periods=None` detects them (see `_periods`) and keeps them only when they forecast
    the backtest days better than a plain level; a list uses exactly those periods.
    """
    y = baseline.to_numpy(dtype=float)
    span = samples_per_day(baseline.index)
    if periods is None:
        decomposition, candidates = select_periods(baseline, tz)
        if decomposition.periods:
            decomposition = earn_periods(decomposition, candidates, baseline, span)
    else:
        chosen = sorted(pd.Timedelta(p) for p in periods)
        decomposition = decompose(baseline, chosen, tz=tz)
        candidates = [Candidate(p, "given", kept=True, reason="given") for p in chosen]
    typical = float(np.nanmedian(np.abs(y))) if np.isfinite(y).any() else 0.0
    holdout = decomposition.holdout
    if not np.isfinite(holdout).any():
        holdout = y - decomposition.fitted
    scale = fit_scale(holdout, baseline.index, tz, typical)
    deseasonalised = y - others(decomposition.fitted_seasonals, -1, len(y))
    level = recent_level(deseasonalised, len(y), span, scale.overall)
    level_before = recent_level(deseasonalised, len(y) - span, span)
    held_out = held_out_deseasonalised(decomposition, y)
    errors, days = backtest_errors(held_out, span, scale=scale.overall)
    calibration = calibrate(errors, scale.at(baseline.index), days)
    end = baseline.index[-1] if len(baseline) else pd.Timestamp.min.tz_localize("UTC")
    recurring = (
        HourlyRecurrence.of(calibration.errors, baseline.index, tz, span, days)
        if calibration is not None
        else None
    )
    return BaselineFit(
        decomposition,
        scale,
        candidates,
        level,
        level_before,
        end,
        Limits.of(y, span),
        calibration,
        recurring,
        recent_spread(held_out, span, scale.overall),
    )


def samples_per_day(index: pd.DatetimeIndex) -> int:
    step = index[1] - index[0] if len(index) > 1 else DAY
    return max(1, round(DAY / step))


def held_out_deseasonalised(decomposition: Decomposition, y: np.ndarray) -> np.ndarray:
    """The values minus a seasonal pattern fitted without their own cycle (in-sample when
    there is only one cycle)."""
    if np.isfinite(decomposition.holdout).any():
        return decomposition.holdout + decomposition.fitted_trend
    return y - others(decomposition.fitted_seasonals, -1, len(y))


def earn_periods(
    decomposition: Decomposition, candidates: list[Candidate], baseline: pd.Series, span: int
) -> Decomposition:
    """The decomposition, or one without periods when a plain level forecast the backtest
    days at least as well (mean absolute error): a cycle has to earn its place out of
    sample, not only by its strength."""
    y = baseline.to_numpy(dtype=float)
    seasonal, days = backtest_errors(held_out_deseasonalised(decomposition, y), span)
    plain, _ = backtest_errors(y, span)
    both = np.isfinite(seasonal) & np.isfinite(plain)
    if not days or not both.any():
        return decomposition
    with_cycles, without = np.mean(np.abs(seasonal[both])), np.mean(np.abs(plain[both]))
    if with_cycles < without:
        return decomposition
    for cand in candidates:
        if cand.kept:
            cand.kept = False
            cand.reason = (
                f"dropped: a plain level forecast the last {days} days as well "
                f"(mean absolute error {without:.3g}, with cycles {with_cycles:.3g})"
            )
    return decompose(baseline, [], tz=decomposition.tz)


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
