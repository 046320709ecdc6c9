"""Fleet aggregates: one series made on the fly from every stored series of a metric (the
p95 of checkout latency over its hosts, the sum of their requests) and explained like any
stored series. Nothing is stored; the evidence is cached like a stored series' evidence.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from typing import Any

import pandas as pd
from sqlalchemy.orm import Session

from webapp.analysis import aggregate
from webapp.services.cache import Recent
from webapp.services.explain import Evidence, ExplainQuery, compute_evidence, imports_version
from webapp.store import series as store_series

HOW = ("sum", "mean", "p50", "p95", "max")
_evidence = Recent(4)


@dataclass(frozen=True)
class Fleet:
    """The stored series of one metric an aggregate is made of, and the label they differ in."""

    metric: str
    rows: list[Any]  # SeriesInfo
    label: str

    def name(self, how: str) -> str:
        return f"{how} of {self.metric} over {self.label} ({len(self.rows)} series)"


def metrics_with_fleets(session: Session) -> list[str]:
    """The metrics with two stored series or more: the ones an aggregate makes sense of."""
    counts = Counter(row.metric for row in store_series.list_series(session) if row.n_points)
    return sorted(metric for metric, n in counts.items() if n >= 2)


def fleet_of(session: Session, metric: str) -> Fleet:
    """Every stored series of `metric`; raises ValueError when there are fewer than two."""
    rows = [
        r for r in store_series.list_series(session, q=metric) if r.metric == metric and r.n_points
    ]
    if len(rows) < 2:
        raise ValueError(
            f"An aggregate needs two stored series of one metric or more; {metric!r} has "
            f"{len(rows)}."
        )
    varying = sorted(
        {k for r in rows for k in r.labels if len({s.labels.get(k) for s in rows}) > 1}
    )
    return Fleet(metric=metric, rows=rows, label=" and ".join(varying) or "series")


def aggregate_evidence(
    session: Session, metric: str, how: str, query: ExplainQuery, exclude: list
) -> Evidence:
    """The evidence of the `how` aggregate of `metric`'s series around the query's window."""
    if how not in HOW:
        raise ValueError(f"The aggregate must be one of {', '.join(HOW)}; got {how!r}.")
    fleet = fleet_of(session, metric)
    version = (*imports_version(session), tuple((r.id, r.n_points, r.last) for r in fleet.rows))

    def build() -> Evidence:
        start, end = query.window[0] - query.history, query.window[1]
        points = {r.key: store_series.read_series(session, r.id, start, end) for r in fleet.rows}
        points = {k: v for k, v in points.items() if not v.dropna().empty}
        name = fleet.name(how)
        if not points:
            values = pd.Series(dtype="float64", name=name)
        else:
            values = aggregate(points, how, name=name)
        units = {r.unit for r in fleet.rows}
        unit = units.pop() if len(units) == 1 else None
        return compute_evidence(name, unit, values, query, exclude)

    return _evidence.get((metric, how, version, query, tuple(exclude)), build)
