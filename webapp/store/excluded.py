"""Excluded periods: spans left out of every baseline.

A span comes from an explicit row (for the series it was made for, or, with ``series_id``
None, for every series including those imported later, which its maker must ask for with
``every_series=True``) or from a review marked ``exclude_from_baselines`` whose incident
touches the series, through the review's page or one of its attached explanations.
"""

from __future__ import annotations

from typing import Any

import pandas as pd
from sqlalchemy import or_, select
from sqlalchemy.orm import Session

from webapp.analysis.times import to_utc
from webapp.store import incidents as store_incidents
from webapp.store._sql import delete_by_id
from webapp.store.models import ExcludedPeriod
from webapp.store.times import utc

Span = tuple[pd.Timestamp, pd.Timestamp]


def add_excluded(
    session: Session,
    series_id: int | None,
    start: Any,
    end: Any,
    reason: str = "",
    *,
    every_series: bool = False,
) -> ExcludedPeriod:
    """Store a span left out of ``series_id``'s baselines; ``series_id`` None only together
    with ``every_series=True``, since such a span also applies to series imported later."""
    if (series_id is None) != every_series:
        raise ValueError(
            "an excluded period names its series, or has no series and is marked for every "
            "series (including those imported later), not both"
        )
    begin, finish = utc(start), utc(end)
    if finish <= begin:
        raise ValueError(
            f"an excluded period must end after it starts: {begin.isoformat()} to "
            f"{finish.isoformat()}"
        )
    row = ExcludedPeriod(series_id=series_id, start=begin, end=finish, reason=reason)
    session.add(row)
    session.flush()
    return row


def list_excluded(session: Session, series_id: int | None = None) -> list[ExcludedPeriod]:
    """Rows that apply to ``series_id`` (its own and the global ones); every row for None."""
    stmt = select(ExcludedPeriod).order_by(ExcludedPeriod.start, ExcludedPeriod.id)
    if series_id is not None:
        stmt = stmt.where(
            or_(ExcludedPeriod.series_id == series_id, ExcludedPeriod.series_id.is_(None))
        )
    return list(session.scalars(stmt))


def delete_excluded(session: Session, excluded_id: int) -> None:
    delete_by_id(session, ExcludedPeriod, excluded_id, "excluded period")


def periods_for(session: Session, series_id: int) -> list[Span]:
    """Every span to leave out of ``series_id``'s baselines, sorted, overlaps merged."""
    spans = [(to_utc(r.start), to_utc(r.end)) for r in list_excluded(session, series_id)]
    spans.extend(span for _, span in review_windows(session, series_id))
    return _merge(spans)


def review_windows(session: Session, series_id: int) -> list[tuple[int, Span]]:
    """(review id, incident window) of every review touching ``series_id`` that leaves its
    incident out of baselines; such a window is switched off in the review, not here."""
    return [
        (r.id, (to_utc(r.incident_start), to_utc(r.incident_end)))
        for r in store_incidents.reviews_for_series(session, series_id)
        if r.exclude_from_baselines
        and r.incident_start is not None
        and r.incident_end is not None
        and r.incident_end > r.incident_start
    ]


def _merge(spans: list[Span]) -> list[Span]:
    merged: list[Span] = []
    for start, end in sorted(spans):
        if merged and start <= merged[-1][1]:
            merged[-1] = (merged[-1][0], max(merged[-1][1], end))
        else:
            merged.append((start, end))
    return merged
