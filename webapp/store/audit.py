"""The audit trail: who changed which record when, with old and new values of text fields.

Every flush of a session records its inserts, updates and deletes of the tables people
edit, as whoever :data:`acting` names (set by the web layer for a signed-in person, by the
command line for its user); no view or store function has to remember it. Reviews also
keep their author and last editor, and imports who made them. Bulk-written points are
not audited row by row: their import is.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from typing import Any

from sqlalchemy import String, event, insert, inspect, select
from sqlalchemy.orm import Session
from sqlalchemy.orm.attributes import PASSIVE_NO_INITIALIZE, get_history

from webapp.store.models import (
    ActionItem,
    AlertRule,
    AuditEntry,
    ExcludedPeriod,
    Explanation,
    Import,
    Page,
    Review,
    ReviewExplanation,
    TimelineEntry,
    User,
    utcnow,
)

acting: ContextVar[str | None] = ContextVar("whyfired_acting", default=None)

AUDITED = (
    Review,
    TimelineEntry,
    ActionItem,
    ReviewExplanation,
    AlertRule,
    Page,
    ExcludedPeriod,
    Explanation,
    Import,
    User,
)
HIDDEN = {"password_hash"}  # recorded as changed on an update, never with its values


@contextmanager
def acting_as(name: str | None) -> Iterator[None]:
    token = acting.set(name)
    try:
        yield
    finally:
        acting.reset(token)


def entries(session: Session, table: str | None = None, record_id: Any = None) -> list[AuditEntry]:
    """The trail, oldest first; only one table's, or one record's, when asked."""
    stmt = select(AuditEntry).order_by(AuditEntry.id)
    if table is not None:
        stmt = stmt.where(AuditEntry.table_name == table)
    if record_id is not None:
        stmt = stmt.where(AuditEntry.record_id == str(record_id))
    return list(session.scalars(stmt))


@event.listens_for(Session, "before_flush")
def _sign_authors(session: Session, _context: Any, _instances: Any) -> None:
    who = acting.get()
    if who is None:
        return
    for row in session.new:
        if isinstance(row, Review | Import):
            row.created_by = who
        if isinstance(row, Review):
            row.updated_by = who
    for row in session.dirty:
        review = _review_of(row)
        if review is not None and session.is_modified(row):
            review.updated_by = who
    for row in session.new:
        review = _review_of(row)
        if review is not None and not isinstance(row, Review):
            review.updated_by = who


def _review_of(row: Any) -> Review | None:
    if isinstance(row, Review):
        return row
    if isinstance(row, TimelineEntry | ActionItem | ReviewExplanation):
        return row.review
    return None


@event.listens_for(Session, "after_flush")
def _record(session: Session, _context: Any) -> None:
    who = acting.get()
    now = utcnow()
    rows = []
    for action, objects in (
        ("insert", session.new),
        ("update", session.dirty),
        ("delete", session.deleted),
    ):
        for row in objects:
            if not isinstance(row, AUDITED):
                continue
            changes = _changes(row, action)
            if action == "update" and not changes:
                continue
            rows.append(
                {
                    "at": now,
                    "user_name": who,
                    "action": action,
                    "table_name": row.__tablename__,
                    "record_id": _record_id(row),
                    "changes": changes,
                }
            )
    if rows:
        session.connection().execute(insert(AuditEntry.__table__), rows)


def _record_id(row: Any) -> str:
    key = inspect(row).mapper.primary_key_from_instance(row)
    return ",".join(str(part) for part in key)


def _changes(row: Any, action: str) -> dict[str, Any]:
    """Text fields as {name: {"old": ..., "new": ...}}; on an update, other changed columns
    too, by name only (null), so the trail says what changed without copying data."""
    changes: dict[str, Any] = {}
    for prop in inspect(row).mapper.column_attrs:
        column = prop.columns[0]
        if column.primary_key:
            continue
        history = get_history(row, prop.key, passive=PASSIVE_NO_INITIALIZE)
        if action == "update" and not history.has_changes():
            continue
        old = None if action == "insert" else _first(history.deleted or history.unchanged)
        new = None if action == "delete" else _first(history.added or history.unchanged)
        is_text = isinstance(column.type, String) and prop.key not in HIDDEN
        if is_text and (old or new):
            changes[prop.key] = {"old": old, "new": new}
        elif action == "update" and not is_text:
            changes[prop.key] = None
    return changes


def _first(values: Any) -> Any:
    return values[0] if values else None
