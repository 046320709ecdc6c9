"""What-if: how a rule would have behaved with other thresholds (or band tolerances) and
holds.

The series is put on its evaluation grid once; each threshold gives one condition array and
its runs; each hold is then only a cut on those run lengths. So a sweep of
``T`` thresholds and ``P`` holds costs ``T`` comparisons over the data plus
``T x P`` operations over the runs, not ``T x P`` replays. Firings, delays and incidents
follow the definitions of the replay report (``webapp.analysis._report``).

A band rule's sweep fits the daily bands once: the band at tolerance ``k`` is expected -/+
``k`` x scale, so only the comparison changes with ``k``.

Two things must hold and are tested: for an "above" rule a higher threshold (for a band
rule a higher tolerance), and for any rule a longer hold, never gives more total
time firing. The number of firings
can move either way (a higher threshold can split one firing into two).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Sequence

import numpy as np
import pandas as pd

from webapp.analysis._incidents import DEFAULT_LEAD, WEEK, bounds_ns, catches, incident_windows
from webapp.analysis._replay import (
    BandGrid,
    BandRule,
    Rule,
    ThresholdRule,
    band_grid,
    evaluation_grid,
    fire_indices,
    hold_samples,
    runs,
)

SWEEP_COLUMNS = [
    "threshold",
    "hold",
    "firings",
    "pages_per_week",
    "time_raised",
    "incidents_caught",
    "incidents_missed",
    "median_delay",
    "caught",
]
DEFAULT_HOLDS = tuple(pd.Timedelta(minutes=m) for m in (0, 1, 2, 5, 10, 15, 30))


def _check_thresholds(thresholds: Iterable[float]) -> np.ndarray:
    try:
        values = np.asarray(list(thresholds), dtype=float)
    except (TypeError, ValueError) as err:
        raise ValueError("thresholds must be numbers") from err
    if values.size == 0 or not np.isfinite(values).all():
        raise ValueError("give at least one threshold, all finite numbers")
    return np.unique(values)


def _check_holds(holds: Iterable[object]) -> list[pd.Timedelta]:
    out = sorted({pd.Timedelta(p) for p in holds})
    if not out or out[0] < pd.Timedelta(0) or any(pd.isna(p) for p in out):
        raise ValueError("give at least one hold, none negative")
    return out


def whatif_sweep(
    series: pd.Series,
    thresholds: Iterable[float],
    holds: Iterable[object],
    incidents: Iterable[object] | None = None,
    direction: str = "above",
    check_every: pd.Timedelta | None = None,
    lead: pd.Timedelta = DEFAULT_LEAD,
) -> pd.DataFrame:
    """One row per (threshold, hold) of a threshold rule: columns in ``SWEEP_COLUMNS``.

    ``hold`` and ``time_raised`` are Timedeltas, ``median_delay`` a Timedelta or NaT,
    ``caught`` the tuple of caught incident indices. Rows are sorted by threshold, then
    hold.
    """
    if direction not in ("above", "below"):
        raise ValueError(f"direction must be 'above' or 'below', got {direction!r}")
    levels = _check_thresholds(thresholds)
    waits = _check_holds(holds)
    windows = incident_windows(incidents)
    times, values, step = evaluation_grid(series, check_every)

    def condition(level: float) -> np.ndarray:
        with np.errstate(invalid="ignore"):
            return values > level if direction == "above" else values < level

    return _sweep(times, step, levels, condition, waits, windows, lead, "threshold")


def band_sweep(
    series: pd.Series,
    rule: BandRule,
    tolerances: Iterable[float],
    holds: Iterable[object],
    incidents: Iterable[object] | None = None,
    exclude: Iterable[object] = (),
    lead: pd.Timedelta = DEFAULT_LEAD,
    bands: BandGrid | None = None,
) -> pd.DataFrame:
    """The what-if sweep of a band rule over tolerances and holds.

    The daily bands are fitted once (they do not depend on the tolerance: the band at
    tolerance ``k`` is expected -/+ ``k`` x scale), so a sweep costs one band replay, or none
    when ``bands`` (the rule's ``band_grid``) is given. Columns as ``whatif_sweep``, with
    ``tolerance`` in place of ``threshold``.
    """
    if not isinstance(rule, BandRule):
        raise ValueError("band_sweep varies a band rule's tolerance")
    levels = _check_thresholds(tolerances)
    if levels[0] <= 0:
        raise ValueError("tolerances must be positive")
    waits = _check_holds(holds)
    windows = incident_windows(incidents)
    grid = bands if bands is not None else band_grid(series, rule, exclude)

    def condition(level: float) -> np.ndarray:
        return grid.condition(level, rule.direction)

    return _sweep(grid.times, grid.step, levels, condition, waits, windows, lead, "tolerance")


def _sweep(
    times: pd.DatetimeIndex,
    step: pd.Timedelta,
    levels: np.ndarray,
    condition: Callable[[float], np.ndarray],
    waits: list[pd.Timedelta],
    windows: list,
    lead: pd.Timedelta,
    level_name: str,
) -> pd.DataFrame:
    """The sweep proper: one condition and its runs per level, one cut per hold."""
    inc_start, inc_end = bounds_ns(windows)
    grid_ns = times.asi8
    step_ns = int(step.value)
    data_end_ns = int(grid_ns[-1]) + step_ns
    in_range = (inc_start < data_end_ns) & (inc_end >= grid_ns[0])
    weeks = (data_end_ns - int(grid_ns[0])) / WEEK.value
    cuts = [hold_samples(p, step) for p in waits]
    rows = []
    for level in levels:
        run_starts, run_ends = runs(condition(float(level)))
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
                    pd.Timedelta(int((end_idx - first_idx).sum()) * step_ns),
                    int(caught.sum()),
                    int((in_range & ~caught).sum()),
                    pd.Timedelta(int(np.median(delays))) if delays.size else None,
                    tuple(int(i) for i in np.flatnonzero(caught)),
                )
            )
    names = [level_name, *SWEEP_COLUMNS[1:]]
    columns = dict(zip(names, zip(*rows, strict=True), strict=True))
    durations = {"hold", "time_raised", "median_delay"}
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


DEFAULT_TOLERANCES = (2.0, 2.5, 3.0, 3.5, 4.0, 5.0, 6.0, 8.0)


def sweep_grid(series: pd.Series, rule: Rule) -> tuple[list[float], list[pd.Timedelta]]:
    """A sensible default grid around ``rule``: holds from none to 30 minutes plus
    the current one; for a threshold rule, thresholds from half to twice the current one
    plus the series' upper (or lower) tail quantiles; for a band rule, tolerances from 2 to 8
    plus the current one."""
    holds: Sequence[pd.Timedelta] = sorted(set(DEFAULT_HOLDS) | {rule.hold})
    if isinstance(rule, BandRule):
        return sorted(set(DEFAULT_TOLERANCES) | {float(rule.tolerance)}), list(holds)
    if not isinstance(rule, ThresholdRule):
        raise ValueError(f"no what-if sweep for {type(rule).__name__}")
    values = series.to_numpy(dtype=float)
    values = values[np.isfinite(values)]
    upper_tail = (0.9, 0.95, 0.99, 0.995, 0.999)
    quantiles = upper_tail if rule.direction == "above" else tuple(1 - q for q in upper_tail)
    levels = {rule.threshold}
    if rule.threshold != 0:
        levels |= {rule.threshold * f for f in (0.5, 0.6, 0.7, 0.8, 0.9, 1.1, 1.25, 1.5, 1.75, 2.0)}
    if values.size:
        levels |= {float(q) for q in np.quantile(values, quantiles)}
    thresholds = sorted({_round_sig(v) for v in levels} | {rule.threshold})
    return thresholds, list(holds)
