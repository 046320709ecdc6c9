"""Recorded incidents per series: the review windows a replay measures a rule against and
that baselines leave out."""

from __future__ import annotations

import pandas as pd
from sqlalchemy import or_, select
from sqlalchemy.orm import Session

from webapp.store.models import Explanation, Page, Review, ReviewExplanation


def series_ids_of(session: Session, review: Review) -> set[int]:
    """The series a review is tied to: its page's series and its attached explanations'."""
    ids = {a.explanation.series_id for a in review.attachments if a.explanation.series_id}
    if review.page_id is not None:
        page = session.get(Page, review.page_id)
        if page is not None and page.series_id is not None:
            ids.add(page.series_id)
    return ids


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


def incident_windows(
    session: Session, series_id: int | None = None
) -> list[tuple[pd.Timestamp, pd.Timestamp]]:
    """Incident windows as UTC Timestamps (for replay): of the reviews tied to a series, or
    of every review when ``series_id`` is None."""
    if series_id is None:
        reviews = session.scalars(select(Review).order_by(Review.incident_start))
    else:
        reviews = reviews_for_series(session, series_id)
    return [
        (pd.Timestamp(r.incident_start), pd.Timestamp(r.incident_end))
        for r in reviews
        if r.incident_start is not None and r.incident_end is not None
    ]
