"""What-if: how a threshold rule would have behaved with other thresholds and pending periods.

The series is put on its evaluation grid once; each threshold gives one condition array and
its runs; each pending period is then only a cut on those run lengths. So a sweep of
``T`` thresholds and ``P`` pending periods costs ``T`` comparisons over the data plus
``T x P`` operations over the runs, not ``T x P`` replays. Firings, delays and incidents
follow the definitions of the replay report (``webapp.analysis._report``).

Two things must hold and are tested: for an "above" rule a higher threshold, and for any
rule a longer pending period, never gives more total time firing. The number of firings
can move either way (a higher threshold can split one firing into two).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence

import numpy as np
import pandas as pd

from webapp.analysis._replay import (
    ThresholdRule,
    evaluation_grid,
    fire_indices,
    pending_samples,
    runs,
)
from webapp.analysis._report import DEFAULT_LEAD, WEEK, _bounds_ns, catches, incident_windows

SWEEP_COLUMNS = [
    "threshold",
    "pending",
    "firings",
    "pages_per_week",
    "time_firing",
    "incidents_caught",
    "incidents_missed",
    "median_delay",
    "caught",
]
DEFAULT_PENDINGS = tuple(pd.Timedelta(minutes=m) for m in (0, 1, 2, 5, 10, 15, 30))


def _check_thresholds(thresholds: Iterable[float]) -> np.ndarray:
    try:
        values = np.asarray(list(thresholds), dtype=float)
    except (TypeError, ValueError) as err:
        raise ValueError("thresholds must be numbers") from err
    if values.size == 0 or not np.isfinite(values).all():
        raise ValueError("give at least one threshold, all finite numbers")
    return np.unique(values)


def _check_pendings(pendings: Iterable[object]) -> list[pd.Timedelta]:
    out = sorted({pd.Timedelta(p) for p in pendings})
    if not out or out[0] < pd.Timedelta(0) or any(pd.isna(p) for p in out):
        raise ValueError("give at least one pending period, none negative")
    return out


def whatif_sweep(
    series: pd.Series,
    thresholds: Iterable[float],
    pendings: Iterable[object],
    incidents: Iterable[object] | None = None,
    direction: str = "above",
    step: pd.Timedelta | None = None,
    lead: pd.Timedelta = DEFAULT_LEAD,
) -> pd.DataFrame:
    """One row per (threshold, pending): columns in ``SWEEP_COLUMNS``.

    ``pending`` and ``time_firing`` are Timedeltas, ``median_delay`` a Timedelta or NaT,
    ``caught`` the tuple of caught incident indices. Rows are sorted by threshold, then
    pending period.
    """
    if direction not in ("above", "below"):
        raise ValueError(f"direction must be 'above' or 'below', got {direction!r}")
    levels = _check_thresholds(thresholds)
    waits = _check_pendings(pendings)
    windows = incident_windows(incidents)
    inc_start, inc_end = _bounds_ns(windows)
    times, values, step = evaluation_grid(series, step)
    grid_ns = times.asi8
    n = len(times)
    step_ns = int(step.value)
    data_end_ns = int(grid_ns[-1]) + step_ns
    in_range = (inc_start < data_end_ns) & (inc_end >= grid_ns[0])
    weeks = (data_end_ns - int(grid_ns[0])) / WEEK.value
    cuts = [pending_samples(p, step) for p in waits]
    rows = []
    with np.errstate(invalid="ignore"):
        for level in levels:
            condition = values > level if direction == "above" else values < level
            run_starts, run_ends = runs(condition)
            for wait, k in zip(waits, cuts, strict=True):
                first_idx, end_idx = fire_indices(run_starts, run_ends, k)
                start_ns = grid_ns[first_idx] if first_idx.size else np.empty(0, np.int64)
                caught, first = catches(start_ns, inc_start, inc_end, lead)
                delays = (first - inc_start)[caught]
                rows.append(
                    (
                        float(level),
                        wait,
                        int(first_idx.size),
                        first_idx.size / weeks if weeks > 0 else math.nan,
                        pd.Timedelta(int((np.minimum(end_idx, n) - first_idx).sum()) * step_ns),
                        int(caught.sum()),
                        int((in_range & ~caught).sum()),
                        pd.Timedelta(int(np.median(delays))) if delays.size else None,
                        tuple(int(i) for i in np.flatnonzero(caught)),
                    )
                )
    columns = dict(zip(SWEEP_COLUMNS, zip(*rows, strict=True), strict=True))
    durations = {"pending", "time_firing", "median_delay"}
    return pd.DataFrame(
        {
            name: pd.Series(list(values), dtype="timedelta64[ns]" if name in durations else None)
            for name, values in columns.items()
        }
    )


def _round_sig(x: float, digits: int = 3) -> float:
    if x == 0 or not math.isfinite(x):
        return x
    return round(x, digits - 1 - int(math.floor(math.log10(abs(x)))))


def sweep_grid(series: pd.Series, rule: ThresholdRule) -> tuple[list[float], list[pd.Timedelta]]:
    """A sensible default grid around ``rule``: thresholds from half to twice the current one
    plus the series' upper (or lower) tail quantiles, and pending periods from none to 30
    minutes plus the current one."""
    if not isinstance(rule, ThresholdRule):
        raise ValueError("the what-if sweep varies a threshold rule's threshold")
    values = series.to_numpy(dtype=float)
    values = values[np.isfinite(values)]
    quantiles = (
        (0.9, 0.95, 0.99, 0.995, 0.999)
        if rule.direction == "above"
        else (0.1, 0.05, 0.01, 0.005, 0.001)
    )
    levels = {rule.threshold}
    if rule.threshold != 0:
        levels |= {rule.threshold * f for f in (0.5, 0.6, 0.7, 0.8, 0.9, 1.1, 1.25, 1.5, 1.75, 2.0)}
    if values.size:
        levels |= {float(q) for q in np.quantile(values, quantiles)}
    thresholds = sorted({_round_sig(v) for v in levels} | {rule.threshold})
    pendings: Sequence[pd.Timedelta] = sorted(set(DEFAULT_PENDINGS) | {rule.for_})
    return thresholds, list(pendings)
