"""Pages: alert notifications that fired, as recorded by the reviewer."""

from __future__ import annotations

from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from webapp.store._sql import delete_by_id
from webapp.store.models import Page
from webapp.store.times import utc


def create_page(
    session: Session,
    series_id: int | None,
    fired_at: Any,
    resolved_at: Any,
    rule_text: str,
    alert_rule_id: int | None = None,
    note: str = "",
) -> Page:
    """Record a page; ``resolved_at`` may be None (still raised or unknown)."""
    fired = utc(fired_at)
    resolved = utc(resolved_at) if resolved_at is not None else None
    if resolved is not None and resolved < fired:
        raise ValueError(
            f"a page cannot resolve ({resolved.isoformat()}) before it fired ({fired.isoformat()})"
        )
    page = Page(
        series_id=series_id,
        alert_rule_id=alert_rule_id,
        fired_at=fired,
        resolved_at=resolved,
        rule_text=rule_text,
        note=note,
    )
    session.add(page)
    session.flush()
    return page


def list_pages(
    session: Session, series_id: int | None = None, alert_rule_id: int | None = None
) -> list[Page]:
    """Pages, newest first, optionally only those of one series or one alert rule."""
    stmt = select(Page).order_by(Page.fired_at.desc(), Page.id.desc())
    if series_id is not None:
        stmt = stmt.where(Page.series_id == series_id)
    if alert_rule_id is not None:
        stmt = stmt.where(Page.alert_rule_id == alert_rule_id)
    return list(session.scalars(stmt))


def get_page(session: Session, page_id: int) -> Page | None:
    return session.get(Page, page_id)


def delete_page(session: Session, page_id: int) -> None:
    """Remove a page; raises LookupError for an unknown id."""
    delete_by_id(session, Page, page_id, "page")
