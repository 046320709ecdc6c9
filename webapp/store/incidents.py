"""Recorded incidents: spans of real trouble on a scope (one series, or a metric and a label
filter), from a review's incident window, a page marked real, or an imported list.

A review's rows follow the review (``sync_review``: one per series it is tied to); a page's
row follows its mark (``mark_page``). Overlapping rows are merged when read, by the core's
``merge_incidents``, so a second review of the same trouble does not count twice.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any

from sqlalchemy import delete, or_, select
from sqlalchemy.orm import Session

from webapp.analysis.vocabulary import INCIDENT_SOURCES
from webapp.store._sql import delete_by_id
from webapp.store.models import Explanation, Incident, Page, Review, ReviewExplanation, Series
from webapp.store.times import utc

TITLE_MAX = 300


def add_incident(
    session: Session,
    start: Any,
    end: Any,
    title: str = "",
    *,
    source: str,
    series_id: int | None = None,
    metric: str | None = None,
    label_filter: Mapping[str, str] | None = None,
    review_id: int | None = None,
    page_id: int | None = None,
    list_name: str = "",
) -> Incident:
    """Record one incident; raises ValueError saying what is wrong (no scope, bad window)."""
    if source not in INCIDENT_SOURCES:
        raise ValueError(f"an incident comes from one of {', '.join(INCIDENT_SOURCES)}")
    if series_id is None and not (metric or "").strip():
        raise ValueError("an incident needs a scope: a series, or a metric and labels")
    begin = utc(start)
    finish = None if end is None else utc(end)
    if finish is not None and finish < begin:
        raise ValueError(
            f"an incident cannot end ({finish.isoformat()}) before it starts ({begin.isoformat()})"
        )
    row = Incident(
        start=begin,
        end=finish,
        title=(title or "").strip()[:TITLE_MAX],
        series_id=series_id,
        metric=(metric or "").strip() or None,
        label_filter=dict(label_filter or {}),
        source=source,
        review_id=review_id,
        page_id=page_id,
        list_name=list_name,
    )
    session.add(row)
    session.flush()
    return row


def add_incident_list(session: Session, rows: Iterable[Mapping[str, Any]], list_name: str) -> int:
    """Record the rows of an imported list (``start``, ``end``, ``title``, ``metric``,
    ``labels``); all or nothing: the caller commits or rolls back."""
    count = 0
    for row in rows:
        add_incident(
            session,
            row["start"],
            row.get("end"),
            row.get("title", ""),
            source="list",
            metric=row["metric"],
            label_filter=row.get("labels") or {},
            list_name=list_name,
        )
        count += 1
    return count


def list_incidents(session: Session) -> list[Incident]:
    return list(session.scalars(select(Incident).order_by(Incident.start, Incident.id)))


def incidents_for_series(session: Session, series: Series) -> list[Incident]:
    """The incidents whose scope covers ``series``: its own, and those of its metric whose
    label filter its labels include."""
    stmt = (
        select(Incident)
        .where(or_(Incident.series_id == series.id, Incident.metric == series.metric))
        .order_by(Incident.start, Incident.id)
    )
    labels = (series.labels or {}).items()
    return [
        i
        for i in session.scalars(stmt)
        if i.series_id == series.id or (i.label_filter or {}).items() <= labels
    ]


def delete_incident(session: Session, incident_id: int) -> None:
    """Remove an imported incident; a review's or a page's follows its source instead."""
    row = session.get(Incident, incident_id)
    if row is not None and row.source != "list":
        where = "its review's incident window" if row.source == "review" else "the page's mark"
        raise ValueError(f"incident #{incident_id} comes from {where}; change it there")
    delete_by_id(session, Incident, incident_id, "incident")


def series_ids_of(session: Session, review: Review) -> set[int]:
    """The series a review is tied to: its page's series and its attached explanations'."""
    ids = {a.explanation.series_id for a in review.attachments if a.explanation.series_id}
    if review.page_id is not None:
        page = session.get(Page, review.page_id)
        if page is not None and page.series_id is not None:
            ids.add(page.series_id)
    return ids


def sync_review(session: Session, review: Review) -> None:
    """Make the review's incident rows match its window and the series it is tied to."""
    session.execute(delete(Incident).where(Incident.review_id == review.id))
    if review.incident_start is None or review.incident_end is None:
        session.flush()
        return
    for series_id in sorted(series_ids_of(session, review)):
        add_incident(
            session,
            review.incident_start,
            review.incident_end,
            review.title,
            source="review",
            series_id=series_id,
            review_id=review.id,
        )
    session.flush()


def mark_page(session: Session, page: Page, real: bool) -> Incident | None:
    """Mark a page as a real incident (recording its span as an incident on its series) or
    take the mark off (removing that incident)."""
    session.execute(delete(Incident).where(Incident.page_id == page.id))
    page.real_incident = bool(real)
    if not real:
        session.flush()
        return None
    if page.series_id is None:
        raise ValueError(f"page #{page.id} has no series, so its incident would have no scope")
    return add_incident(
        session,
        page.fired_at,
        page.resolved_at,
        f"Page #{page.id}: {page.rule_text}".strip(),
        source="page",
        series_id=page.series_id,
        page_id=page.id,
    )


def reviews_for_series(session: Session, series_id: int) -> list[Review]:
    by_page = (
        select(Review.id).join(Page, Page.id == Review.page_id).where(Page.series_id == series_id)
    )
    by_attachment = (
        select(ReviewExplanation.review_id)
        .join(Explanation, Explanation.id == ReviewExplanation.explanation_id)
        .where(Explanation.series_id == series_id)
    )
    stmt = (
        select(Review)
        .where(or_(Review.id.in_(by_page), Review.id.in_(by_attachment)))
        .order_by(Review.incident_start)
    )
    return list(session.scalars(stmt))
