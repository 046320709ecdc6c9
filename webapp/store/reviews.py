"""Post-incident reviews: the review row itself (title, status, incident window, sections).

Every write validates first and raises :class:`ReviewInvalid` with one message per field,
so a form can be shown again with the reader's own text and the message beside the field.
Values may come from a form (strings) or from code (datetimes, bools). The review's
timeline, attachments, action items, verdict and the incident windows per series live in
the sibling modules ``timeline``, ``attachments``, ``action_items``, ``verdicts`` and
``incidents``.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from sqlalchemy import or_, select
from sqlalchemy.orm import Session

from webapp.store import incidents as store_incidents
from webapp.store._sql import ReviewInvalid as ReviewInvalid
from webapp.store.models import ActionItem, Page, Review, ReviewVerdict, TimelineEntry
from webapp.store.times import utc_datetime
from webapp.store.versions import claim

STATUSES = ("draft", "final")
TEXT_FIELDS = ("summary", "impact", "trigger", "root_cause", "detection", "resolution", "lessons")
REVIEW_FIELDS = (
    "title",
    "status",
    "severity",
    "incident_start",
    "incident_end",
    "exclude_from_baselines",
    "page_id",
    *TEXT_FIELDS,
)
TITLE_MAX = 300
SEVERITY_MAX = 20


def clean_review(
    data: Mapping[str, Any], tz: str = "UTC", *, partial: bool = False
) -> tuple[dict[str, Any], dict[str, str]]:
    """Check review fields; return (valid values, errors by field).

    With ``partial`` only the fields present in ``data`` are checked. The baseline switch
    is on unless it is given as off (``webapp.web.forms.reviews`` reads a form's checkbox).
    """
    values: dict[str, Any] = {}
    errors: dict[str, str] = {}

    def present(name: str) -> bool:
        return not partial or name in data

    if present("title"):
        title = str(data.get("title") or "").strip()
        if not title:
            errors["title"] = "A review needs a title."
        elif len(title) > TITLE_MAX:
            errors["title"] = f"Keep the title to {TITLE_MAX} characters (it has {len(title)})."
        else:
            values["title"] = title
    if present("status"):
        status = str(data.get("status") or "draft").strip()
        if status in STATUSES:
            values["status"] = status
        else:
            errors["status"] = f"Status must be one of {', '.join(STATUSES)}."
    if present("severity"):
        severity = str(data.get("severity") or "").strip()
        if len(severity) > SEVERITY_MAX:
            errors["severity"] = f"Keep the severity to {SEVERITY_MAX} characters."
        else:
            values["severity"] = severity
    for name in ("incident_start", "incident_end"):
        if present(name):
            try:
                values[name] = utc_datetime(data.get(name), tz)
            except ValueError as err:
                errors[name] = str(err)
    start, end = values.get("incident_start"), values.get("incident_end")
    if start is not None and end is not None and end <= start:
        errors["incident_end"] = "The incident must end after it starts."
        values.pop("incident_end")
    if values.get("status") == "final":
        missing = [
            n for n in ("incident_start", "incident_end") if present(n) and not values.get(n)
        ]
        if missing and "incident_end" not in errors:
            errors["status"] = "A final review needs the incident's start and end."
            values.pop("status")
    if "exclude_from_baselines" in data:
        values["exclude_from_baselines"] = bool(data["exclude_from_baselines"])
    elif not partial:
        values["exclude_from_baselines"] = True
    if present("page_id"):
        raw = str(data.get("page_id") or "").strip()
        if not raw:
            values["page_id"] = None
        elif raw.isdigit():
            values["page_id"] = int(raw)
        else:
            errors["page_id"] = f"{raw!r} is not a page number."
    for name in TEXT_FIELDS:
        if present(name):
            values[name] = str(data.get(name) or "").replace("\r\n", "\n")
    return values, errors


def _checked(
    session: Session, data: Mapping[str, Any], tz: str, partial: bool = False
) -> tuple[dict[str, Any], dict[str, str]]:
    values, errors = clean_review(data, tz, partial=partial)
    page_id = values.get("page_id")
    if page_id is not None and session.get(Page, page_id) is None:
        errors["page_id"] = f"There is no recorded page #{page_id}."
        values.pop("page_id")
    return values, errors


def create_review(session: Session, data: Mapping[str, Any], tz: str = "UTC") -> Review:
    values, errors = _checked(session, data, tz)
    if errors:
        raise ReviewInvalid(errors)
    review = Review(**values)
    session.add(review)
    session.flush()
    store_incidents.sync_review(session, review)
    return review


def update_review(
    session: Session,
    review: Review,
    data: Mapping[str, Any],
    tz: str = "UTC",
    version: int | None = None,
) -> Review:
    """Save every field at once, or nothing when any field is invalid or the review was saved
    by someone else since ``version`` (EditConflict, checked first)."""
    claim(session, review, version, "review")
    values, errors = _checked(session, data, tz)
    if errors:
        raise ReviewInvalid(errors)
    for name, value in values.items():
        setattr(review, name, value)
    session.flush()
    store_incidents.sync_review(session, review)
    return review


def autosave_review(
    session: Session,
    review: Review,
    data: Mapping[str, Any],
    tz: str = "UTC",
    version: int | None = None,
) -> tuple[list[str], dict[str, str]]:
    """Store the valid fields of a draft as typed; return (saved fields, errors).

    Invalid fields keep their last good stored value, so autosave never writes a bad
    review; the form in the browser still holds what was typed. A draft that differs from
    the stored review is only written over ``version`` (EditConflict when a newer one is
    stored); one that matches it writes nothing.
    """
    values, errors = _checked(session, data, tz, partial=True)
    saved = [name for name, value in values.items() if getattr(review, name) != value]
    if saved:
        claim(session, review, version, "review")
        for name in saved:
            setattr(review, name, values[name])
        session.flush()
    if {"incident_start", "incident_end", "page_id", "title"} & set(saved):
        store_incidents.sync_review(session, review)
    return saved, errors


def get_review(session: Session, review_id: int) -> Review | None:
    return session.get(Review, review_id)


def delete_review(session: Session, review: Review) -> None:
    session.delete(review)
    session.flush()


def list_reviews(session: Session, q: str | None = None, status: str | None = None) -> list[Review]:
    """Reviews, latest incident first. Every word of ``q`` must appear (any case) in the
    title, severity, a text section, the verdict's rationale, a timeline entry or an action."""
    stmt = select(Review)
    for word in (q or "").split():
        pattern = f"%{word}%"
        columns = [Review.title, Review.severity]
        columns += [getattr(Review, n) for n in TEXT_FIELDS]
        stmt = stmt.where(
            or_(
                *(c.ilike(pattern) for c in columns),
                Review.timeline.any(TimelineEntry.text.ilike(pattern)),
                Review.verdicts.any(ReviewVerdict.rationale.ilike(pattern)),
                Review.action_items.any(
                    or_(ActionItem.text.ilike(pattern), ActionItem.owner.ilike(pattern))
                ),
            )
        )
    if status in STATUSES:
        stmt = stmt.where(Review.status == status)
    stmt = stmt.order_by(Review.incident_start.desc().nulls_last(), Review.id.desc())
    return list(session.scalars(stmt))
