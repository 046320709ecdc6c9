"""The evidence numbers a verdict on an alert rule rests on, taken from its replay."""

from __future__ import annotations

from typing import Any

from webapp.analysis import ReplayReport
from webapp.analysis.times import short_duration


def evidence_numbers(report: ReplayReport) -> dict[str, Any]:
    """What a reader of the review needs to weigh the verdict: how long the replay ran, how
    often the rule paged, and how many of the counted incidents it caught and how late."""
    counted = sum(1 for i in report.incidents if i["in_range"])
    delay = report.median_delay
    return {
        "weeks replayed": round(report.weeks, 1),
        "firings": report.n_firings,
        "pages per week": round(report.pages_per_week, 2),
        "incidents caught": len(report.caught),
        "incidents counted": counted,
        "median delay": "none" if delay is None else short_duration(delay),
    }
