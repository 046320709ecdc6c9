"""A review's action items: what is to be done, by whom, by when, and how far it got."""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from webapp.store._sql import ReviewInvalid, child_of, flush_unique
from webapp.store.models import ActionItem, Review
from webapp.store.versions import claim

ACTION_STATES = ("open", "in progress", "done")
OWNER_MAX = 200


def parse_date(value: Any) -> dt.date | None:
    if value is None or isinstance(value, dt.date) and not isinstance(value, dt.datetime):
        return value
    text = str(value).strip()
    if not text:
        return None
    try:
        return dt.date.fromisoformat(text)
    except ValueError as err:
        raise ValueError(f"{text!r} is not a date; expected e.g. 2026-12-15") from err


def clean_action_item(data: Mapping[str, Any]) -> tuple[dict[str, Any], dict[str, str]]:
    values: dict[str, Any] = {}
    errors: dict[str, str] = {}
    text = str(data.get("text") or "").strip()
    if text:
        values["text"] = text
    else:
        errors["text"] = "Say what is to be done."
    owner = str(data.get("owner") or "").strip()
    if len(owner) > OWNER_MAX:
        errors["owner"] = f"Keep the owner to {OWNER_MAX} characters."
    else:
        values["owner"] = owner
    try:
        values["due_date"] = parse_date(data.get("due_date"))
    except ValueError as err:
        errors["due_date"] = str(err)
    state = str(data.get("state") or "open").strip()
    if state in ACTION_STATES:
        values["state"] = state
    else:
        errors["state"] = f"State must be one of {', '.join(ACTION_STATES)}."
    return values, errors


def add_action_item(session: Session, review: Review, data: Mapping[str, Any]) -> ActionItem:
    values, errors = clean_action_item(data)
    if errors:
        raise ReviewInvalid(errors)
    # After the last position stored (not the count: removals leave gaps). Adds to one review
    # take turns: SQLite's write lock does it, PostgreSQL locks the review's row; the unique
    # (review, position) constraint refuses a duplicate should two adds ever race anyway.
    session.execute(select(Review.id).where(Review.id == review.id).with_for_update())
    last = session.scalar(
        select(func.max(ActionItem.position)).where(ActionItem.review_id == review.id)
    )
    item = ActionItem(**values, position=0 if last is None else last + 1)
    review.action_items.append(item)
    flush_unique(session, {"text": "Another action item was added at the same moment; add again."})
    return item


def update_action_item(
    session: Session,
    review: Review,
    item_id: int,
    data: Mapping[str, Any],
    version: int | None = None,
) -> ActionItem:
    """Save the item's fields over ``version`` (EditConflict when a newer one is stored)."""
    item = child_of(review.action_items, item_id, "action item")
    claim(session, item, version, "action item")
    values, errors = clean_action_item(data)
    if errors:
        raise ReviewInvalid(errors)
    for name, value in values.items():
        setattr(item, name, value)
    session.flush()
    return item


def delete_action_item(session: Session, review: Review, item_id: int) -> None:
    review.action_items.remove(child_of(review.action_items, item_id, "action item"))
    session.flush()
