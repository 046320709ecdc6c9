"""What-if for burn-rate rules: burn-rate factors x window pairs, one condition per row.

Each row is one condition ``(long, short, factor)`` on its own, replayed with the rule's
objective, hold and check interval: how often it would have raised, for how long, and
which incidents it would have caught (the definitions of the replay report). The events go
on the grid once and each window's burn rate is computed once; a factor is then one
comparison, as in the threshold sweep.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence

import pandas as pd

from webapp.analysis._burn import WORKBOOK_WINDOWS, BurnRateRule, BurnWindow, _as_window, _grid
from webapp.analysis._incidents import DEFAULT_LEAD, incident_windows
from webapp.analysis._whatif import SWEEP_COLUMNS, _check_thresholds, _sweep

__all__ = ["BURN_SWEEP_COLUMNS", "burn_sweep", "burn_sweep_grid"]

BURN_SWEEP_COLUMNS = ["factor", "windows", *SWEEP_COLUMNS[2:]]
DEFAULT_FACTORS = (1.0, 2.0, 3.0, 6.0, 10.0, 14.4, 20.0)


def burn_sweep(
    events: object,
    rule: BurnRateRule,
    factors: Iterable[float],
    pairs: Iterable[object],
    incidents: Iterable[object] | None = None,
    lead: pd.Timedelta = DEFAULT_LEAD,
) -> pd.DataFrame:
    """One row per (factor, window pair): columns ``BURN_SWEEP_COLUMNS``.

    ``pairs``: ``(long, short)`` window pairs (or ``BurnWindow``s, whose factor is ignored);
    ``windows`` holds each pair's label, e.g. ``1h/5min``. The other columns are those of
    ``whatif_sweep``, counted from the pair's first full long window. Rows are sorted by
    factor, then by pair in the order given.
    """
    factors = list(factors)
    if not factors:
        raise ValueError("give at least one burn-rate factor")
    levels = _check_thresholds(factors)
    if levels[0] <= 0:
        raise ValueError("burn-rate factors must be positive")
    conditions = _check_pairs(pairs)
    windows = incident_windows(incidents)
    grid = _grid(events, rule)
    tables = []
    for number, window in enumerate(conditions):
        # the pair is checked from its first full long window: before it, it could not be
        # raised, and counting that time would understate pages per week
        first = min(grid.steps(window.long), len(grid.times)) - 1
        holds = grid.burning(window, rule.budget, first)
        times = grid.times[first:]
        table = _sweep(times, grid.step, levels, holds, [rule.hold], windows, lead, "factor")
        # the second column is the hold, the same on every row: the pair takes its place
        table = table.drop(columns=table.columns[1])
        table.insert(1, "windows", window.label)
        tables.append(table.assign(pair=number))
    out = pd.concat(tables, ignore_index=True).sort_values(["factor", "pair"], kind="stable")
    return out.reset_index(drop=True)[BURN_SWEEP_COLUMNS]


def _check_pairs(pairs: Iterable[object]) -> list[BurnWindow]:
    out: dict[str, BurnWindow] = {}
    for number, item in enumerate(pairs, start=1):
        if isinstance(item, BurnWindow):
            window = item
        elif isinstance(item, tuple | list) and len(item) == 2:
            window = _as_window((*item, 1.0), number)
        else:
            raise ValueError(f"window pair {number}: expected (long, short), got {item!r}")
        out.setdefault(window.label, window)
    if not out:
        raise ValueError("give at least one window pair")
    return list(out.values())


def burn_sweep_grid(
    rule: BurnRateRule,
) -> tuple[list[float], list[tuple[pd.Timedelta, pd.Timedelta]]]:
    """A default grid around ``rule``: factors from 1 to 20 with the workbook's 14.4 and 6
    plus the rule's own; the workbook's window pairs plus the rule's own."""
    factors = sorted(set(DEFAULT_FACTORS) | {w.factor for w in rule.conditions})
    pairs: Sequence[BurnWindow] = [*rule.conditions, *WORKBOOK_WINDOWS]
    seen: dict[str, tuple[pd.Timedelta, pd.Timedelta]] = {}
    for window in sorted(pairs, key=lambda w: (w.long, w.short)):
        seen.setdefault(window.label, (window.long, window.short))
    return factors, list(seen.values())
