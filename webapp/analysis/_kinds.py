"""Rule kinds side by side: the same history and the same incidents, replayed for a rule
as it is and for the other kinds at their best setting, and one sentence that says what the
comparison shows.

"Best" is a choice (common practice, not a published method): among the settings of a
kind's what-if sweep that page no more often than the rule as it is (or once a week,
whichever is more), the one that catches the most incidents, then pages least, then is
raised soonest. When no setting pages that little, the quietest one stands in.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import pandas as pd

from webapp.analysis._report import ReplayReport
from webapp.analysis.times import short_duration
from webapp.analysis.vocabulary import KIND_NAMES

__all__ = ["KindRow", "best_setting", "kind_row", "row_from_sweep", "kinds_sentence"]


@dataclass(frozen=True)
class KindRow:
    """One rule kind replayed over the shared history."""

    kind: str  # threshold | band | burn_rate
    role: str  # "as it is", "the draft's setting", "best of its sweep"
    setting: str  # the rule in words
    pages_per_week: float
    caught: int
    incidents: int  # incidents the kind's replay reached (caught + missed)
    median_delay: pd.Timedelta | None
    time_raised: pd.Timedelta

    @property
    def name(self) -> str:
        return KIND_NAMES.get(self.kind, self.kind)


def kind_row(kind: str, role: str, report: ReplayReport) -> KindRow:
    """The row of a rule from its replay report."""
    return KindRow(
        kind,
        role,
        report.rule_text,
        float(report.pages_per_week),
        len(report.caught),
        len(report.caught) + len(report.missed),
        report.median_delay,
        report.time_raised,
    )


def best_setting(sweep: pd.DataFrame, ceiling: float) -> pd.Series:
    """The sweep row that catches most while paging at most ``ceiling`` a week (see the
    module docstring); the quietest row when none pages that little."""
    if sweep.empty:
        raise ValueError("the what-if sweep has no setting to choose from")
    calm = sweep[sweep["pages_per_week"] <= ceiling + 1e-9]
    if calm.empty:
        return sweep.sort_values(
            ["pages_per_week", "incidents_caught"], ascending=[True, False]
        ).iloc[0]
    delay = calm["median_delay"].fillna(pd.Timedelta.max)
    ranked = calm.assign(_delay=delay).sort_values(
        ["incidents_caught", "pages_per_week", "_delay"],
        ascending=[False, True, True],
        kind="stable",
    )
    return ranked.iloc[0]


def row_from_sweep(kind: str, role: str, setting: str, row: pd.Series) -> KindRow:
    """The row of one what-if setting."""
    delay = row["median_delay"]
    return KindRow(
        kind,
        role,
        setting,
        float(row["pages_per_week"]),
        int(row["incidents_caught"]),
        int(row["incidents_caught"]) + int(row["incidents_missed"]),
        None if pd.isna(delay) else pd.Timedelta(delay),
        pd.Timedelta(row["time_raised"]),
    )


def _rate(value: float) -> str:
    return "no pages" if value == 0 else f"{value:.2g} pages a week"


def _caught_words(row: KindRow) -> str:
    if row.caught == row.incidents == 2:
        return "both incidents"
    if row.caught == row.incidents:
        return f"all {row.incidents} incidents"
    return f"{row.caught} of {row.incidents} incidents"


def kinds_sentence(rows: Sequence[KindRow]) -> tuple[str, KindRow | None]:
    """What the comparison shows, and the row it suggests instead of the rule (None when
    the rule as it is holds up). ``rows[0]`` is the rule as it is."""
    current, others = rows[0], rows[1:]
    better = [
        r
        for r in others
        if r.caught >= current.caught
        and r.pages_per_week < current.pages_per_week
        and (r.caught > current.caught or r.pages_per_week <= 0.5 * current.pages_per_week)
    ]
    if not better:
        return (
            f"No other kind caught more incidents with clearly fewer pages than the rule as "
            f"it is ({current.caught} of {current.incidents} with "
            f"{_rate(current.pages_per_week)}).",
            None,
        )
    best = max(better, key=lambda r: (r.caught, -r.pages_per_week))
    caught = _caught_words(best)
    delay = ""
    if best.median_delay is not None and not pd.isna(best.median_delay):
        side = "before" if best.median_delay < pd.Timedelta(0) else "after"
        delay = f", a median {short_duration(abs(best.median_delay))} {side} each began"
    return (
        f"A {best.name} rule ({best.setting}) would have caught {caught} with "
        f"{_rate(best.pages_per_week)} instead of {current.pages_per_week:.2g}{delay}; the rule "
        f"as it is caught {current.caught} of {current.incidents}.",
        best,
    )
