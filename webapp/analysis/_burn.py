"""Burn-rate rules: alert on how fast a service level objective's error budget is spent.

The method is the multiwindow, multi-burn-rate alert of Beyer et al., *The Site Reliability
Workbook* (2018), ch. 5 "Alerting on SLOs". With an objective of 99.9% the error budget is
0.1% of events; a *burn rate* of 1 spends exactly the budget over the compliance period, a
burn rate of 14.4 spends it 14.4 times as fast. A condition ``(long, short, factor)`` holds
when the burn rate over the long window *and* over the short window are both at least
``factor``: the long window keeps a brief blip from raising the alert, the short window lets
it end soon after the errors stop.

Events. A rule is replayed over either a good/total pair of event counts per sample (for
example requests per minute, and those that succeeded) or one error-ratio series (bad
events / all events per sample, between 0 and 1). Both go on the rule's check grid (see
``webapp.analysis._replay.evaluation_grid``): the samples in ``(t - step, t]`` belong to grid
time ``t``. For a pair, only timestamps where both series have a value count; the counts of
a step are summed. A window's error ratio is the sum of bad events over the sum of all
events in its last ``ceil(window / step)`` steps, so busy minutes weigh more than quiet
ones; for an error-ratio series every sample weighs the same (its ratios are averaged).

Replay semantics are those of every rule kind: the condition is checked at every grid
time; a grid time with no sample is no data and false (a collector outage ends a raise, as
it does for a threshold); a window that reaches back before the first grid time, or that
has no events, is false; a raise starts once the condition has held for the rule's
``hold`` and ends at the first later grid time where it is false. The rule's conditions of
its ``severity`` are combined with "or", and the hold applies to that combination: the
alert is raised once some condition has held at every grid time for the hold, not
necessarily the same one throughout. The workbook's alerts have no hold (the short window
does that work), so the default is none.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from typing import Literal

import numpy as np
import pandas as pd

from webapp.analysis._grid import as_utc_series
from webapp.analysis._incidents import DEFAULT_LEAD
from webapp.analysis._replay import (
    _as_timedelta,
    evaluation_grid,
    fire_indices,
    firing_times,
    hold_samples,
    runs,
)
from webapp.analysis._report import DEFAULT_FLAP_GAP, ReplayReport, measure
from webapp.analysis.times import short_duration

__all__ = [
    "BurnWindow",
    "BurnRateRule",
    "EventGrid",
    "WORKBOOK_WINDOWS",
    "budget_consumed",
    "budget_spent",
    "burn_rates",
    "burn_report",
    "burn_rule_from_fields",
    "window_fields",
    "detection_time",
    "event_grid",
    "replay_burn",
]

Severity = Literal["page", "ticket"]
SEVERITIES = ("page", "ticket")


@dataclass(frozen=True)
class BurnWindow:
    """One condition: the burn rate over ``long`` and over ``short`` both at least ``factor``."""

    long: pd.Timedelta
    short: pd.Timedelta
    factor: float
    severity: Severity = "page"

    def __post_init__(self) -> None:
        for name in ("long", "short"):
            delta = _as_timedelta(getattr(self, name), f"the {name} window")
            if delta <= pd.Timedelta(0):
                raise ValueError(f"the {name} window must be positive, got {delta}")
            object.__setattr__(self, name, delta)
        if self.short > self.long:
            raise ValueError(
                f"the short window ({short_duration(self.short)}) must not be longer than "
                f"the long window ({short_duration(self.long)})"
            )
        factor = self.factor
        if isinstance(factor, bool) or not isinstance(factor, int | float):
            raise ValueError(f"the burn-rate factor must be a number, got {factor!r}")
        if not (math.isfinite(factor) and factor > 0):
            raise ValueError(f"the burn-rate factor must be a positive number, got {factor!r}")
        object.__setattr__(self, "factor", float(factor))
        if self.severity not in SEVERITIES:
            raise ValueError(f"severity must be 'page' or 'ticket', got {self.severity!r}")

    @property
    def label(self) -> str:
        """The window pair, e.g. ``1h/5min``."""
        return f"{short_duration(self.long)}/{short_duration(self.short)}"

    @property
    def text(self) -> str:
        return f"{self.factor:g}x over {self.label}"


# The Site Reliability Workbook (2018), ch. 5, the recommended multiwindow, multi-burn-rate
# alerts for a 99.9% objective over 30 days.
WORKBOOK_WINDOWS = (
    BurnWindow(pd.Timedelta(hours=1), pd.Timedelta(minutes=5), 14.4, "page"),
    BurnWindow(pd.Timedelta(hours=6), pd.Timedelta(minutes=30), 6.0, "page"),
    BurnWindow(pd.Timedelta(days=3), pd.Timedelta(hours=6), 1.0, "ticket"),
)


def _as_window(item: object, number: int) -> BurnWindow:
    if isinstance(item, BurnWindow):
        return item
    if isinstance(item, tuple | list) and len(item) in (3, 4):
        return BurnWindow(*item)
    raise ValueError(
        f"window {number}: expected (long, short, factor) or (long, short, factor, severity), "
        f"got {item!r}"
    )


@dataclass(frozen=True)
class BurnRateRule:
    """Raise when the error budget of ``objective`` over ``period`` burns too fast.

    ``windows``: the conditions, as ``BurnWindow`` or ``(long, short, factor[, severity])``
    tuples; the workbook's three by default. The rule raises on the conditions of its
    ``severity`` ("page" or "ticket"), combined with "or". ``hold``: how long that must
    last (none by default); ``check_every``: the check interval (None: the data's own step).
    """

    objective: float = 0.999
    period: pd.Timedelta = pd.Timedelta(days=30)
    windows: tuple[BurnWindow, ...] = WORKBOOK_WINDOWS
    severity: Severity = "page"
    hold: pd.Timedelta = pd.Timedelta(0)
    check_every: pd.Timedelta | None = None

    def __post_init__(self) -> None:
        objective = self.objective
        if (
            isinstance(objective, bool)
            or not isinstance(objective, int | float)
            or not 0 < objective < 1
        ):
            raise ValueError(
                f"the objective must be a share between 0 and 1 (0.999 for 99.9%), "
                f"got {objective!r}"
            )
        object.__setattr__(self, "objective", float(objective))
        period = _as_timedelta(self.period, "the compliance period")
        if period <= pd.Timedelta(0):
            raise ValueError(f"the compliance period must be positive, got {period}")
        object.__setattr__(self, "period", period)
        if isinstance(self.windows, str | bytes) or not isinstance(self.windows, Iterable):
            raise ValueError(f"windows must be a list of conditions, got {self.windows!r}")
        windows = tuple(_as_window(w, n) for n, w in enumerate(self.windows, start=1))
        object.__setattr__(self, "windows", windows)
        if self.severity not in SEVERITIES:
            raise ValueError(f"severity must be 'page' or 'ticket', got {self.severity!r}")
        if not self.conditions:
            raise ValueError(f"the rule has no {self.severity} condition among its windows")
        hold = _as_timedelta(self.hold, "the hold")
        if hold < pd.Timedelta(0):
            raise ValueError(f"the hold must not be negative, got {hold}")
        object.__setattr__(self, "hold", hold)
        if self.check_every is not None:
            every = _as_timedelta(self.check_every, "the check interval")
            if every <= pd.Timedelta(0):
                raise ValueError(f"the check interval must be positive, got {every}")
            object.__setattr__(self, "check_every", every)

    @property
    def budget(self) -> float:
        """The error budget: the share of events allowed to fail, ``1 - objective``."""
        return 1.0 - self.objective

    @property
    def conditions(self) -> tuple[BurnWindow, ...]:
        """The windows of the rule's severity: the ones its replay raises on."""
        return tuple(w for w in self.windows if w.severity == self.severity)

    @property
    def text(self) -> str:
        """The rule in words, e.g. ``burn rate of 99.9% over 30d: 14.4x over 1h/5min or ...``."""
        out = (
            f"burn rate of {self.objective * 100:g}% over {short_duration(self.period)}: "
            + " or ".join(w.text for w in self.conditions)
        )
        if self.hold > pd.Timedelta(0):
            out += f", held for {short_duration(self.hold)}"
        if self.check_every is not None:
            out += f", checked every {short_duration(self.check_every)}"
        return out


def window_fields(windows: Iterable[BurnWindow]) -> list[dict]:
    """Window pairs as stored (``burn_windows`` of an alert rule): seconds and plain values."""
    return [
        {
            "long_seconds": int(w.long.total_seconds()),
            "short_seconds": int(w.short.total_seconds()),
            "factor": w.factor,
            "severity": w.severity,
        }
        for w in windows
    ]


def burn_rule_from_fields(fields: dict) -> BurnRateRule:
    """A burn-rate rule from stored alert-rule fields (``objective``, ``period_seconds``,
    ``burn_windows``, ``severity``, ``hold_seconds``, ``check_every_seconds``); the
    workbook's windows when none are stored. Raises ValueError naming what is wrong."""
    stored = fields.get("burn_windows") or window_fields(WORKBOOK_WINDOWS)
    windows = []
    for number, item in enumerate(stored, start=1):
        try:
            windows.append(
                BurnWindow(
                    pd.Timedelta(seconds=int(item["long_seconds"])),
                    pd.Timedelta(seconds=int(item["short_seconds"])),
                    item["factor"],
                    item.get("severity", "page"),
                )
            )
        except (KeyError, TypeError) as err:
            raise ValueError(
                f"window {number}: expected long_seconds, short_seconds, factor and severity, "
                f"got {item!r}"
            ) from err
    period = fields.get("period_seconds")
    every = fields.get("check_every_seconds")
    return BurnRateRule(
        objective=0.999 if fields.get("objective") is None else fields["objective"],
        period=pd.Timedelta(seconds=int(period)) if period else pd.Timedelta(days=30),
        windows=tuple(windows),
        severity=fields.get("severity") or "page",
        hold=pd.Timedelta(seconds=int(fields.get("hold_seconds") or 0)),
        check_every=pd.Timedelta(seconds=int(every)) if every else None,
    )


# ------------------------------------------------------------------ the events on a grid


@dataclass(frozen=True)
class EventGrid:
    """Bad and total events per check-grid step (0 where the step has no sample)."""

    times: pd.DatetimeIndex
    bad: np.ndarray
    total: np.ndarray
    present: np.ndarray  # bool: the step has at least one sample
    step: pd.Timedelta

    def steps(self, window: pd.Timedelta) -> int:
        """How many grid steps a window spans: ``ceil(window / step)``, at least one."""
        return max(1, hold_samples(window, self.step))

    def rolling_sum(self, values: np.ndarray, window: pd.Timedelta, partial: bool = False):
        """Sum over the last ``steps(window)`` steps at each grid time. While the window
        reaches back before the first step: NaN, or with ``partial`` the sum so far."""
        n = self.steps(window)
        cumulative = np.concatenate(([0.0], np.cumsum(values)))
        out = cumulative[1:].copy() if partial else np.full(len(values), np.nan)
        if n <= len(values):
            out[n - 1 :] = cumulative[n:] - cumulative[:-n]
        return out

    def error_ratio(self, window: pd.Timedelta, partial: bool = False) -> np.ndarray:
        """Bad over total events in the window ending at each grid time; NaN when the
        window has no events, or (unless ``partial``) reaches back before the data."""
        bad = self.rolling_sum(self.bad, window, partial)
        total = self.rolling_sum(self.total, window, partial)
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(total > 0, bad / total, np.nan)

    def burn_rate(self, window: pd.Timedelta, budget: float) -> np.ndarray:
        """The error ratio in the window over the error budget ``1 - objective``."""
        return self.error_ratio(window) / budget

    def burning(
        self, window: BurnWindow, budget: float, first: int = 0
    ) -> Callable[[float], np.ndarray]:
        """The window pair's condition at any factor, from grid index ``first`` on: data at
        that time and both windows burning at least the factor; NaN (no data, or a window
        before the data) is false. Each window's burn rate is computed once, so each
        factor costs one comparison (the what-if sweep relies on that)."""
        present = self.present[first:]
        long = self.burn_rate(window.long, budget)[first:]
        short = self.burn_rate(window.short, budget)[first:]

        def holds(factor: float) -> np.ndarray:
            with np.errstate(invalid="ignore"):
                return present & (long >= factor) & (short >= factor)

        return holds

    def holds(self, window: BurnWindow, budget: float) -> np.ndarray:
        """The condition ``window`` at each grid time."""
        return self.burning(window, budget)(window.factor)


def _pair_frame(good: pd.Series, total: pd.Series) -> pd.DataFrame:
    good, total = as_utc_series(good), as_utc_series(total)
    frame = pd.concat({"good": good, "total": total}, axis=1, join="inner").dropna()
    if frame.empty:
        raise ValueError("the good and total series share no timestamp with both values")
    negative = frame[(frame["good"] < 0) | (frame["total"] < 0)]
    if not negative.empty:
        raise ValueError(
            f"event counts must not be negative: {len(negative)} sample(s), the first at "
            f"{negative.index[0]}"
        )
    over = frame[frame["good"] > frame["total"]]
    if not over.empty:
        first = over.iloc[0]
        raise ValueError(
            f"good events exceed total events in {len(over)} sample(s), the first at "
            f"{over.index[0]} (good {first['good']:g}, total {first['total']:g})"
        )
    return pd.DataFrame({"bad": frame["total"] - frame["good"], "total": frame["total"]})


def _ratio_frame(ratio: pd.Series) -> pd.DataFrame:
    clean = as_utc_series(ratio).dropna()
    outside = clean[(clean < 0) | (clean > 1)]
    if not outside.empty:
        raise ValueError(
            f"an error ratio must be between 0 and 1 (bad events / all events): "
            f"{len(outside)} sample(s) outside, the first at {outside.index[0]} "
            f"({outside.iloc[0]:g}); a percentage must be divided by 100"
        )
    return pd.DataFrame({"bad": clean, "total": np.ones(len(clean))}, index=clean.index)


def _event_frame(events: object) -> pd.DataFrame:
    if isinstance(events, pd.DataFrame):
        missing = {"good", "total"} - set(events.columns)
        if missing:
            raise ValueError(
                f"an events table needs columns 'good' and 'total'; missing "
                f"{', '.join(sorted(missing))}"
            )
        return _pair_frame(events["good"], events["total"])
    if isinstance(events, tuple) and len(events) == 2:
        return _pair_frame(*events)
    if isinstance(events, pd.Series):
        return _ratio_frame(events)
    raise ValueError(
        "events must be an error-ratio Series, a (good, total) pair of Series or a "
        f"DataFrame with 'good' and 'total' columns, got {type(events).__name__}"
    )


def event_grid(events: object, check_every: pd.Timedelta | None = None) -> EventGrid:
    """Put events on the check grid: ``events`` is an error-ratio Series, a ``(good, total)``
    pair of Series of event counts, or a DataFrame with ``good`` and ``total`` columns."""
    frame = _event_frame(events)
    times, _, step = evaluation_grid(frame["total"], check_every)
    ns = frame.index.as_unit("ns").asi8
    position = -(-ns // int(step.value)) - times[0].value // int(step.value)
    size = len(times)
    bad = np.bincount(position, weights=frame["bad"].to_numpy(float), minlength=size)
    total = np.bincount(position, weights=frame["total"].to_numpy(float), minlength=size)
    present = np.bincount(position, minlength=size) > 0
    return EventGrid(times, bad, total, present, step)


def _grid(events: object, rule: BurnRateRule) -> EventGrid:
    if not isinstance(rule, BurnRateRule):
        raise ValueError(f"expected a BurnRateRule, got {type(rule).__name__}")
    return events if isinstance(events, EventGrid) else event_grid(events, rule.check_every)


# ------------------------------------------------------------------ replay and budget


def burn_condition(grid: EventGrid, rule: BurnRateRule) -> np.ndarray:
    """The rule's condition per grid time: any of its conditions holding."""
    held = np.zeros(len(grid.times), dtype=bool)
    for window in rule.conditions:
        held |= grid.holds(window, rule.budget)
    return held


def replay_burn(events: object, rule: BurnRateRule) -> pd.DataFrame:
    """When ``rule`` would have been raised over ``events``: a DataFrame of ``start``,
    ``end`` (NaT while still raised when the data ends), as ``replay`` gives for the other
    rule kinds. ``events`` as for ``event_grid``, or an ``EventGrid`` already built."""
    grid = _grid(events, rule)
    run_starts, run_ends = runs(burn_condition(grid, rule))
    starts, ends = fire_indices(run_starts, run_ends, hold_samples(rule.hold, grid.step))
    start_times, end_times = firing_times(grid.times, starts, ends)
    return pd.DataFrame({"start": start_times, "end": end_times})


def burn_report(
    events: object,
    rule: BurnRateRule,
    incidents: Iterable[object] | None = None,
    flap_gap: pd.Timedelta = DEFAULT_FLAP_GAP,
    lead: pd.Timedelta = DEFAULT_LEAD,
) -> ReplayReport:
    """The replay report of ``rule`` over ``events`` against ``incidents``: the same
    measures, with the same definitions, as ``replay_report`` gives the other kinds."""
    grid = _grid(events, rule)
    condition = burn_condition(grid, rule)
    return measure(
        grid.times, condition, grid.step, rule.hold, rule.text, incidents, flap_gap, lead
    )


def burn_rates(events: object, rule: BurnRateRule) -> pd.DataFrame:
    """The burn rate over every window of the rule at each grid time, one column per
    window (named like ``1h``), NaN where a window has no events or reaches before the
    data: what a figure of the rule draws against its factors."""
    grid = _grid(events, rule)
    lengths = sorted({d for w in rule.windows for d in (w.long, w.short)})
    return pd.DataFrame(
        {short_duration(d): grid.burn_rate(d, rule.budget) for d in lengths},
        index=grid.times,
    )


def budget_spent(events: object, rule: BurnRateRule) -> pd.Series:
    """The share of the period's error budget spent (1.0: all of it) at each grid time,
    over the compliance period that ends there.

    It is the burn rate over the period, times the share of the period the data covers so
    far: the workbook's "budget consumed = burn rate x window / period". Before a whole
    period of data the window is what there is; steps without data add nothing. NaN where
    the window holds no events.
    """
    grid = _grid(events, rule)
    n = grid.steps(rule.period)
    covered = np.minimum(np.arange(1, len(grid.times) + 1), n) / n
    burn = grid.error_ratio(rule.period, partial=True) / rule.budget
    return pd.Series(burn * covered, index=grid.times, name="budget_spent")


# ------------------------------------------------------------------ the workbook's figures


def detection_time(
    objective: float, error_ratio: float, window: pd.Timedelta, factor: float
) -> pd.Timedelta:
    """How long errors at ``error_ratio`` take to reach ``factor`` over ``window``:
    ((1 - objective) / error ratio) x window x factor (the workbook, ch. 5)."""
    if not 0 < objective < 1:
        raise ValueError(f"the objective must be a share between 0 and 1, got {objective!r}")
    if not 0 < error_ratio <= 1:
        raise ValueError(f"the error ratio must be in (0, 1], got {error_ratio!r}")
    seconds = (1 - objective) / error_ratio * pd.Timedelta(window).total_seconds() * factor
    return pd.Timedelta(seconds=seconds)


def budget_consumed(factor: float, window: pd.Timedelta, period: pd.Timedelta) -> float:
    """The share of the period's budget spent by the time ``factor`` over ``window`` is
    reached: factor x window / period (the workbook, ch. 5)."""
    return factor * (pd.Timedelta(window) / pd.Timedelta(period))
