"""Replay: re-run an alert rule over stored history and list when it would have fired.
(Just over 400 lines: the rules, the check grid and the daily bands share one set of
semantics, written down here once.)

Semantics (docs/design.md). The condition is evaluated at every sample of an *evaluation grid*;
a firing starts at the first sample at which the condition has held continuously for the
hold, and ends at the first later sample where it is false. ``end`` is NaT for a
firing still going at the end of the data.

The evaluation grid. Stored series are not always regular, so the rule is evaluated on a
regular grid of the rule's ``check_every`` (when it has none, the series' own step: the median
spacing of its timestamps, snapped to a round step as ``infer_step`` does). Grid times are
multiples of the step counted from the Unix epoch, so series with the same step share one
grid. The evaluation at grid time ``t`` sees the last sample in the step that ends at ``t``,
i.e. in ``(t - step, t]``: nothing from the future. A series already on that grid is
evaluated sample by sample, unchanged; a series sitting between grid times is evaluated at
the next grid time.

Gaps. A grid step with no sample evaluates to "no data", and no data counts as false (as
NaN does): a collector outage ends a firing, and when data returns the hold
starts again. With a grid step ``s`` and a hold ``p`` a run of true evaluations
starting at ``t0`` fires at ``t0 + ceil(p / s) * s``, if the run lasts that long.

Everything is vectorised: the condition is one boolean array, its runs come from one
``diff``, and every hold is a cut on the run lengths (the what-if sweep relies on
that).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
import pandas as pd

from webapp.analysis._band import expected_band, fit_baseline, mask_excluded
from webapp.analysis._grid import as_utc_series, infer_step, regularize
from webapp.analysis.times import short_duration
from webapp.analysis.vocabulary import band_width_text

__all__ = ["ThresholdRule", "BandRule", "replay", "evaluation_grid", "rule_from_fields"]

_MAX_GRID = 50_000_000


def _as_timedelta(value: object, name: str) -> pd.Timedelta:
    try:
        delta = pd.Timedelta(value)
    except (TypeError, ValueError) as err:
        raise ValueError(f"{name} must be a duration such as '10min', got {value!r}") from err
    if pd.isna(delta):
        raise ValueError(f"{name} must be a duration, got NaT")
    return delta


@dataclass(frozen=True)
class ThresholdRule:
    """Fire when the value is above (or below) a threshold for the hold ``hold``.

    Exactly one of ``above`` and ``below`` is given. ``check_every`` is the check interval (None:
    the series' own step). The comparison is strict: a value equal to the threshold is not
    above it.
    """

    above: float | None = None
    below: float | None = None
    hold: pd.Timedelta = pd.Timedelta(0)
    check_every: pd.Timedelta | None = None

    def __post_init__(self) -> None:
        if (self.above is None) == (self.below is None):
            raise ValueError("a threshold rule needs exactly one of 'above' and 'below'")
        limit = self.above if self.above is not None else self.below
        if (
            isinstance(limit, bool)
            or not isinstance(limit, int | float)
            or not math.isfinite(limit)
        ):
            raise ValueError(f"the threshold must be a finite number, got {limit!r}")
        _check_timing(self, self.hold, self.check_every)

    @property
    def direction(self) -> Literal["above", "below"]:
        return "above" if self.above is not None else "below"

    @property
    def threshold(self) -> float:
        return float(self.above if self.above is not None else self.below)  # type: ignore[arg-type]

    @property
    def text(self) -> str:
        """The rule in words, e.g. ``above 800 for 10min``."""
        out = f"{self.direction} {self.threshold:g} for {short_duration(self.hold)}"
        if self.check_every is not None:
            out += f", checked every {short_duration(self.check_every)}"
        return out

    def condition(self, values: np.ndarray) -> np.ndarray:
        """The condition per evaluation; NaN (no data) is false."""
        with np.errstate(invalid="ignore"):
            if self.above is not None:
                return values > self.above
            return values < self.threshold


@dataclass(frozen=True)
class BandRule:
    """Fire when the value is outside the expected band at ``tolerance`` for ``hold``.

    The band for each day (midnight to midnight on the ``tz`` wall clock) is fitted on the
    ``history`` before that day only, so replaying never looks ahead: what a day's firings
    are depends on that day and the days before it. Days with less than ``min_history`` of
    data before them (two weeks by default: the least that shows a weekly cycle twice) have
    no band, and the replay starts at the first day that has one. ``direction`` is
    ``"above"`` (only above the upper edge), ``"below"`` or ``"both"``.
    """

    tolerance: float = 3.0
    hold: pd.Timedelta = pd.Timedelta(0)
    history: pd.Timedelta = pd.Timedelta(weeks=4)
    direction: Literal["both", "above", "below"] = "both"
    tz: str = "UTC"
    check_every: pd.Timedelta | None = None
    min_history: pd.Timedelta = pd.Timedelta(weeks=2)

    def __post_init__(self) -> None:
        if not isinstance(self.tolerance, int | float) or not self.tolerance > 0:
            raise ValueError(f"the tolerance must be a positive number, got {self.tolerance!r}")
        if self.direction not in ("both", "above", "below"):
            raise ValueError(
                f"direction must be 'both', 'above' or 'below', got {self.direction!r}"
            )
        _check_timing(self, self.hold, self.check_every)
        for name in ("history", "min_history"):
            delta = _as_timedelta(getattr(self, name), name)
            if delta <= pd.Timedelta(0):
                raise ValueError(f"{name} must be positive, got {delta}")
            object.__setattr__(self, name, delta)
        try:
            pd.Timestamp("2000-01-01", tz=self.tz)
        except Exception as err:
            raise ValueError(f"unknown time zone {self.tz!r}") from err

    @property
    def text(self) -> str:
        where = {"both": "outside", "above": "above", "below": "below"}[self.direction]
        out = (
            f"{where} the expected band ({band_width_text(self.tolerance)})"
            f" for {short_duration(self.hold)}"
        )
        if self.check_every is not None:
            out += f", checked every {short_duration(self.check_every)}"
        return out


Rule = ThresholdRule | BandRule


def _check_timing(rule: Rule, hold: object, check_every: object) -> None:
    hold = _as_timedelta(hold, "the hold")
    if hold < pd.Timedelta(0):
        raise ValueError(f"the hold must not be negative, got {hold}")
    object.__setattr__(rule, "hold", hold)
    if check_every is not None:
        delta = _as_timedelta(check_every, "the check interval")
        if delta <= pd.Timedelta(0):
            raise ValueError(f"the check interval must be positive, got {delta}")
        object.__setattr__(rule, "check_every", delta)


def rule_from_fields(fields: dict) -> Any:
    """Build a rule from stored alert-rule fields (``kind``, ``direction``, ``threshold``,
    ``tolerance``, ``hold_seconds``, ``check_every_seconds``; a burn-rate rule's as
    ``burn_rule_from_fields`` reads them); raises ValueError when incomplete."""
    kind = fields.get("kind") or "threshold"
    if kind == "burn_rate":
        # imported here: the burn-rate module builds on this one's check grid
        from webapp.analysis._burn import burn_rule_from_fields

        return burn_rule_from_fields(fields)
    hold = pd.Timedelta(seconds=int(fields.get("hold_seconds") or 0))
    every_seconds = fields.get("check_every_seconds")
    check_every = pd.Timedelta(seconds=int(every_seconds)) if every_seconds else None
    direction = fields.get("direction") or ("both" if kind == "band" else "above")
    if kind == "band":
        tolerance = fields.get("tolerance")
        return BandRule(
            tolerance=3.0 if tolerance is None else float(tolerance),
            hold=hold,
            direction=direction,
            tz=fields.get("tz") or "UTC",
            check_every=check_every,
        )
    if kind != "threshold":
        raise ValueError(f"unknown rule kind {kind!r}: expected 'threshold', 'band' or 'burn_rate'")
    threshold = fields.get("threshold")
    if threshold is None:
        raise ValueError("a threshold rule needs a threshold")
    if direction not in ("above", "below"):
        raise ValueError(
            f"a threshold rule's direction must be 'above' or 'below', not {direction!r}"
        )
    return ThresholdRule(**{direction: float(threshold)}, hold=hold, check_every=check_every)


def _clean(series: pd.Series) -> pd.Series:
    """Finite values on a sorted UTC index (nanosecond unit); no-data rows dropped."""
    if not isinstance(series, pd.Series):
        raise ValueError(f"replay needs a pandas Series, got {type(series).__name__}")
    clean = as_utc_series(series).dropna()
    clean.index = clean.index.as_unit("ns")
    return clean


def evaluation_grid(
    series: pd.Series, step: pd.Timedelta | None = None
) -> tuple[pd.DatetimeIndex, np.ndarray, pd.Timedelta]:
    """The regular grid the rule is evaluated on: (times, values with NaN for no data, step).

    See the module docstring: last sample per step ``(t - step, t]``, labelled ``t``.
    """
    clean = _clean(series)
    if step is None:
        if len(clean) < 2:
            raise ValueError(
                "the series has a single sample: give the rule a check interval to replay it"
            )
        step = infer_step(clean.index)
    step = _as_timedelta(step, "the check interval")
    if step <= pd.Timedelta(0):
        raise ValueError(f"the check interval must be positive, got {step}")
    step_ns = int(step.value)
    ns = clean.index.as_unit("ns").asi8
    bucket = -(-ns // step_ns)
    first = int(bucket[0])
    size = int(bucket[-1]) - first + 1
    if size > _MAX_GRID:
        raise ValueError(
            f"a check interval of {step} over {clean.index[-1] - clean.index[0]} gives "
            f"{size:,} evaluations; choose a longer step"
        )
    values = np.full(size, np.nan)
    last_in_bucket = np.r_[bucket[1:] != bucket[:-1], True]
    values[bucket[last_in_bucket] - first] = clean.to_numpy()[last_in_bucket]
    times = pd.DatetimeIndex((first + np.arange(size, dtype=np.int64)) * step_ns, tz="UTC").as_unit(
        "ns"
    )
    return times, values, step


def runs(condition: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start indices and exclusive end indices of the runs of True in ``condition``."""
    padded = np.concatenate(([0], condition.astype(np.int8), [0]))
    change = np.diff(padded)
    return np.flatnonzero(change == 1), np.flatnonzero(change == -1)


def hold_samples(hold: pd.Timedelta, step: pd.Timedelta) -> int:
    """How many evaluations after a run starts it fires: ceil(hold / step)."""
    return int(-(-int(pd.Timedelta(hold).value) // int(step.value)))


def fire_indices(
    run_starts: np.ndarray, run_ends: np.ndarray, k: int
) -> tuple[np.ndarray, np.ndarray]:
    """(firing start index, firing end index) for the runs that last past ``k`` samples."""
    keep = run_ends - run_starts > k
    return run_starts[keep] + k, run_ends[keep]


def firing_times(
    times: pd.DatetimeIndex, starts: np.ndarray, ends: np.ndarray
) -> tuple[pd.DatetimeIndex, pd.DatetimeIndex]:
    """Start and end timestamps of firings given as grid indices; an end index past the grid
    (still raised when the data ends) becomes NaT."""
    last = len(times) - 1
    end_times = times[np.minimum(ends, last)].where(ends <= last)
    return times[starts], end_times


def _firings_frame(times: pd.DatetimeIndex, starts: np.ndarray, ends: np.ndarray) -> pd.DataFrame:
    start_times, end_times = firing_times(times, starts, ends)
    return pd.DataFrame({"start": start_times, "end": end_times})


PERIOD_REFRESH = pd.Timedelta(days=7)
PERIOD_GROWTH = 1.25


def _local_days(times: pd.DatetimeIndex, tz: str) -> list[tuple[pd.Timestamp, pd.Timestamp]]:
    """(start, end) in UTC of every local calendar day the grid touches, in order."""
    days = []
    for day in times.tz_convert(tz).normalize().unique():
        # 26 hours on, then back to midnight: the next local midnight on 23- and 25-hour days
        end = (day + pd.Timedelta(hours=26)).normalize()
        days.append((day.tz_convert("UTC"), end.tz_convert("UTC")))
    return days


def band_centre(
    times: pd.DatetimeIndex,
    step: pd.Timedelta,
    series: pd.Series,
    rule: BandRule,
    exclude: Iterable = (),
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Expected value and the scale of each side per evaluation (NaN on days without enough
    history): the band at tolerance ``k`` is ``expected - k * below`` to ``expected + k *
    above``. At the rule's tolerance these are the fit's calibrated sides exactly; a sweep
    of other tolerances scales them in proportion.

    Each day's band is fitted on the ``rule.history`` before that day only. Choosing the
    seasonal periods is the costly part of a fit, so they are chosen again only after
    ``PERIOD_REFRESH`` or once the history reaches ``PERIOD_GROWTH`` times as far back as at
    the last choice (a short history grows into longer cycles), each time on the history
    before that day; the decomposition and the scale are refitted every day. Neither
    ever sees the day itself or anything later. ``exclude`` spans are left out of every
    day's baseline (they may still fire).
    """
    exclude = list(exclude)
    clean = _clean(series)
    expected = np.full(len(times), np.nan)
    below = np.full(len(times), np.nan)
    above = np.full(len(times), np.nan)
    periods: list[pd.Timedelta] | None = None
    chosen_at, chosen_reach = None, pd.Timedelta(0)
    for day_start, day_end in _local_days(times, rule.tz):
        if day_start - clean.index[0] < rule.min_history:
            continue
        lo, hi = times.searchsorted(day_start), times.searchsorted(day_end)
        history = clean[(clean.index >= day_start - rule.history) & (clean.index < day_start)]
        if lo == hi or len(history) < 2:
            continue
        reach = day_start - history.index[0]
        if (
            chosen_at is None
            or day_start - chosen_at >= PERIOD_REFRESH
            or reach >= PERIOD_GROWTH * chosen_reach
        ):
            baseline = mask_excluded(regularize(history, step), exclude)
            fit = fit_baseline(baseline, tz=rule.tz)
            periods, chosen_at, chosen_reach = fit.periods, day_start, reach
            band = fit.band(times[lo:hi], rule.tolerance)
        else:
            band = expected_band(
                history,
                times[lo:hi],
                tolerance=rule.tolerance,
                tz=rule.tz,
                exclude=exclude,
                periods=periods,
            )
        expected[lo:hi] = band["expected"].to_numpy(dtype=float)
        below[lo:hi] = (band["expected"] - band["lower"]).to_numpy(dtype=float) / rule.tolerance
        above[lo:hi] = (band["upper"] - band["expected"]).to_numpy(dtype=float) / rule.tolerance
    return expected, below, above


@dataclass(frozen=True)
class BandGrid:
    """A band rule's evaluation grid from its first banded day: values, expected, scale.

    The sides are calibrated separately: `below_scale` and `above_scale` are each side's
    scale (the band at tolerance k is expected - k x below_scale to expected + k x
    above_scale); `scale` is their mean. Without them both sides use `scale`."""

    times: pd.DatetimeIndex
    values: np.ndarray
    expected: np.ndarray
    scale: np.ndarray
    step: pd.Timedelta
    below_scale: np.ndarray | None = None
    above_scale: np.ndarray | None = None

    def condition(self, tolerance: float, direction: str) -> np.ndarray:
        """Outside the band at ``tolerance`` per evaluation; no data or no band is false."""
        below_scale = self.scale if self.below_scale is None else self.below_scale
        above_scale = self.scale if self.above_scale is None else self.above_scale
        with np.errstate(invalid="ignore"):
            above = self.values > self.expected + tolerance * above_scale
            below = self.values < self.expected - tolerance * below_scale
        return {"above": above, "below": below, "both": above | below}[direction]


def band_grid(series: pd.Series, rule: BandRule, exclude: Iterable = ()) -> BandGrid:
    """The grid a band rule is evaluated on. It starts at the first day that has a band:
    the days before it could not have fired, and counting them would understate pages
    per week. Raises ValueError when no day has enough history."""
    times, values, step = evaluation_grid(series, rule.check_every)
    expected, below, above = band_centre(times, step, series, rule, exclude)
    banded = np.flatnonzero(np.isfinite(expected) & np.isfinite(below) & np.isfinite(above))
    if banded.size == 0:
        raise ValueError(
            f"a band rule needs at least {short_duration(rule.min_history)} of data before "
            f"a day to build that day's band; this series covers "
            f"{short_duration(times[-1] - times[0] + step)}"
        )
    first = int(banded[0])
    part = slice(first, None)
    return BandGrid(
        times[part],
        values[part],
        expected[part],
        0.5 * (below[part] + above[part]),
        step,
        below_scale=below[part],
        above_scale=above[part],
    )


def evaluate(
    series: pd.Series, rule: Rule, exclude: Iterable = (), bands: BandGrid | None = None
) -> tuple[pd.DatetimeIndex, np.ndarray, pd.Timedelta]:
    """(grid times, condition per evaluation, step) for any rule; ``exclude`` (spans left
    out of baselines) matters only to band rules (see ``band_grid``). ``bands``: a band
    rule's grid already built by ``band_grid(series, rule, exclude)``, so a report and a
    sweep of the same rule fit the daily bands once."""
    if isinstance(rule, ThresholdRule):
        times, values, step = evaluation_grid(series, rule.check_every)
        return times, rule.condition(values), step
    if isinstance(rule, BandRule):
        grid = bands if bands is not None else band_grid(series, rule, exclude)
        return grid.times, grid.condition(rule.tolerance, rule.direction), grid.step
    raise ValueError(f"replay needs a ThresholdRule or a BandRule, got {type(rule).__name__}")


def replay(series: pd.Series, rule: Rule, exclude: Iterable = ()) -> pd.DataFrame:
    """When ``rule`` would have fired over ``series``: a DataFrame of ``start``, ``end``.

    ``end`` is NaT for a firing still going at the end of the data. ``exclude``: (start, end)
    spans left out of a band rule's baselines (excluded periods); threshold rules ignore it.
    Raises ValueError for an empty or all-missing series or a rule that is neither a
    ThresholdRule nor a BandRule.
    """
    times, condition, step = evaluate(series, rule, exclude)
    run_starts, run_ends = runs(condition)
    starts, ends = fire_indices(run_starts, run_ends, hold_samples(rule.hold, step))
    return _firings_frame(times, starts, ends)
