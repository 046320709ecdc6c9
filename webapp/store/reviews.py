"""Post-incident reviews: the review itself, its timeline, attached explanations, action
items and the alert verdict.

Every write validates first and raises :class:`ReviewInvalid` with one message per field,
so a form can be shown again with the reader's own text and the message beside the field.
Values may come straight from a form (strings) or from code (datetimes, dates, bools).
"""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Iterable, Mapping
from typing import Any
from zoneinfo import ZoneInfo

import pandas as pd
from sqlalchemy import or_, select
from sqlalchemy.orm import Session

from webapp.analysis.vocabulary import VERDICTS
from webapp.store.models import (
    ActionItem,
    Explanation,
    Page,
    Review,
    ReviewExplanation,
    TimelineEntry,
)

STATUSES = ("draft", "final")
ACTION_STATES = ("open", "in progress", "done")
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
CHECKBOX_SHOWN = "exclude_from_baselines_shown"
TITLE_MAX = 300
SEVERITY_MAX = 20
OWNER_MAX = 200
_ISO_TIME = re.compile(r"^\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}")


class ReviewInvalid(ValueError):
    """Raised with ``errors``: field name -> what was wrong and what is expected."""

    def __init__(self, errors: Mapping[str, str]) -> None:
        self.errors = dict(errors)
        super().__init__("; ".join(f"{k}: {v}" for k, v in self.errors.items()))


def parse_time(value: Any, tz: str = "UTC") -> dt.datetime | None:
    """An aware UTC datetime from a datetime or an ISO 8601 string (naive means ``tz``).

    Empty values give None; anything unreadable raises ValueError with the expected form.
    """
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    try:
        ts = pd.Timestamp(value.strip() if isinstance(value, str) else value)
    except (ValueError, TypeError) as err:
        raise ValueError(
            f"{value!r} is not a date and time; expected e.g. 2026-11-30 14:05"
        ) from err
    if ts is pd.NaT:
        return None
    if ts.tzinfo is None:
        ts = ts.tz_localize(ZoneInfo(tz))
    return ts.tz_convert("UTC").to_pydatetime()


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


def _flag(value: Any) -> bool:
    if isinstance(value, str):
        return value.strip().lower() in {"1", "on", "true", "yes"}
    return bool(value)


def clean_review(
    data: Mapping[str, Any], tz: str = "UTC", *, partial: bool = False
) -> tuple[dict[str, Any], dict[str, str]]:
    """Check review fields; return (valid values, errors by field).

    With ``partial`` only the fields present in ``data`` are checked. The baseline switch
    is on unless it is given as off, or a form that showed it (``CHECKBOX_SHOWN``) sent
    it unticked.
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
                values[name] = parse_time(data.get(name), tz)
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
        values["exclude_from_baselines"] = _flag(data["exclude_from_baselines"])
    elif CHECKBOX_SHOWN in data:  # a form whose box was left unticked sends no value
        values["exclude_from_baselines"] = False
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
    return review


def update_review(
    session: Session, review: Review, data: Mapping[str, Any], tz: str = "UTC"
) -> Review:
    """Save every field at once, or nothing when any field is invalid."""
    values, errors = _checked(session, data, tz)
    if errors:
        raise ReviewInvalid(errors)
    for name, value in values.items():
        setattr(review, name, value)
    session.flush()
    return review


def autosave_review(
    session: Session, review: Review, data: Mapping[str, Any], tz: str = "UTC"
) -> tuple[list[str], dict[str, str]]:
    """Store the valid fields of a draft as typed; return (saved fields, errors).

    Invalid fields keep their last good stored value, so autosave never writes a bad
    review; the form in the browser still holds what was typed.
    """
    values, errors = _checked(session, data, tz, partial=True)
    saved = []
    for name, value in values.items():
        if getattr(review, name) != value:
            setattr(review, name, value)
            saved.append(name)
    session.flush()
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
        columns = [Review.title, Review.severity, Review.verdict_rationale]
        columns += [getattr(Review, n) for n in TEXT_FIELDS]
        stmt = stmt.where(
            or_(
                *(c.ilike(pattern) for c in columns),
                Review.timeline.any(TimelineEntry.text.ilike(pattern)),
                Review.action_items.any(
                    or_(ActionItem.text.ilike(pattern), ActionItem.owner.ilike(pattern))
                ),
            )
        )
    if status in STATUSES:
        stmt = stmt.where(Review.status == status)
    stmt = stmt.order_by(Review.incident_start.desc().nulls_last(), Review.id.desc())
    return list(session.scalars(stmt))


# -- timeline -------------------------------------------------------------------------


def add_timeline_entry(
    session: Session,
    review: Review,
    at: Any,
    text: str,
    *,
    tz: str = "UTC",
    explanation_id: int | None = None,
    fact: str | None = None,
) -> TimelineEntry:
    errors = {}
    try:
        when = parse_time(at, tz)
        if when is None:
            errors["at"] = "A timeline entry needs a time, e.g. 2026-11-30 14:05."
    except ValueError as err:
        errors["at"] = str(err)
    text = (text or "").strip()
    if not text:
        errors["text"] = "Say what happened at that time."
    if errors:
        raise ReviewInvalid(errors)
    entry = TimelineEntry(at=when, text=text, explanation_id=explanation_id, fact=fact)
    review.timeline.append(entry)
    session.flush()
    return entry


FACT_LABELS = {  # the explainer's time facts a timeline most often wants, in that order
    "first_outside": "First outside the expected band",
    "peak_time": "Peak value",
    "strongest_time": "Furthest from the expected value",
    "last_outside": "Last outside the expected band",
    "window_start": "Explained window starts",
    "window_end": "Explained window ends",
}


def time_facts(explanation: Explanation) -> dict[str, dt.datetime]:
    """The facts of an explanation that are points in time (e.g. the first out-of-band time),
    the usual timeline moments first, then the others in time order."""
    found = {}
    for name, value in (explanation.facts or {}).items():
        if isinstance(value, str) and _ISO_TIME.match(value):
            try:
                when = parse_time(value)
            except ValueError:
                continue
            if when is not None:
                found[name] = when
    known = [name for name in FACT_LABELS if name in found]
    others = sorted((n for n in found if n not in FACT_LABELS), key=lambda n: found[n])
    return {name: found[name] for name in known + others}


def fact_label(name: str) -> str:
    return FACT_LABELS.get(name) or name.replace("_", " ").strip().capitalize()


def timeline_entry_from_fact(
    session: Session, review: Review, explanation: Explanation, fact: str, text: str = ""
) -> TimelineEntry:
    """A timeline entry at the time a fact of ``explanation`` names."""
    facts = time_facts(explanation)
    if fact not in facts:
        choices = ", ".join(sorted(facts)) or "none"
        raise ReviewInvalid(
            {"fact": f"Explanation #{explanation.id} has no time fact {fact!r}; it has: {choices}."}
        )
    text = (
        text.strip()
        or f"{fact_label(fact)} on {explanation.series_key} (explanation #{explanation.id})"
    )
    return add_timeline_entry(
        session, review, facts[fact], text, explanation_id=explanation.id, fact=fact
    )


def delete_timeline_entry(session: Session, review: Review, entry_id: int) -> None:
    entry = _child(review.timeline, entry_id, "timeline entry")
    review.timeline.remove(entry)
    session.flush()


# -- attached explanations --------------------------------------------------------------


def attach_explanation(
    session: Session, review: Review, explanation_id: int, caption: str = ""
) -> ReviewExplanation:
    """Attach a saved explanation at the end, with its caption."""
    explanation = session.get(Explanation, explanation_id)
    if explanation is None:
        raise ReviewInvalid({"explanation_id": f"There is no saved explanation #{explanation_id}."})
    if any(a.explanation_id == explanation_id for a in review.attachments):
        raise ReviewInvalid(
            {"explanation_id": f"Explanation #{explanation_id} is already attached."}
        )
    attachment = ReviewExplanation(
        explanation=explanation, caption=(caption or "").strip(), position=len(review.attachments)
    )
    review.attachments.append(attachment)
    session.flush()
    return attachment


def set_caption(session: Session, review: Review, attachment_id: int, caption: str) -> None:
    _child(review.attachments, attachment_id, "attachment").caption = (caption or "").strip()
    session.flush()


def reorder_attachments(session: Session, review: Review, ordered_ids: Iterable[int]) -> None:
    """Put the attachments in the order given; every attachment must be named once."""
    ordered = [int(i) for i in ordered_ids]
    current = {a.id: a for a in review.attachments}
    if sorted(ordered) != sorted(current):
        raise ReviewInvalid(
            {"order": "Name every attached explanation exactly once to reorder them."}
        )
    for position, attachment_id in enumerate(ordered):
        current[attachment_id].position = position
    session.flush()
    session.expire(review, ["attachments"])


def move_attachment(session: Session, review: Review, attachment_id: int, offset: int) -> None:
    """Move one attachment up (negative) or down (positive), clamped to the ends."""
    ids = [a.id for a in sorted(review.attachments, key=lambda a: a.position)]
    _child(review.attachments, attachment_id, "attachment")
    old = ids.index(attachment_id)
    new = min(max(old + offset, 0), len(ids) - 1)
    ids.insert(new, ids.pop(old))
    reorder_attachments(session, review, ids)


def detach_explanation(session: Session, review: Review, attachment_id: int) -> None:
    review.attachments.remove(_child(review.attachments, attachment_id, "attachment"))
    session.flush()
    for position, attachment in enumerate(sorted(review.attachments, key=lambda a: a.position)):
        attachment.position = position
    session.flush()


# -- action items -----------------------------------------------------------------------


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
    item = ActionItem(**values, position=len(review.action_items))
    review.action_items.append(item)
    session.flush()
    return item


def update_action_item(
    session: Session, review: Review, item_id: int, data: Mapping[str, Any]
) -> ActionItem:
    item = _child(review.action_items, item_id, "action item")
    values, errors = clean_action_item(data)
    if errors:
        raise ReviewInvalid(errors)
    for name, value in values.items():
        setattr(item, name, value)
    session.flush()
    return item


def delete_action_item(session: Session, review: Review, item_id: int) -> None:
    review.action_items.remove(_child(review.action_items, item_id, "action item"))
    session.flush()


# -- verdict ----------------------------------------------------------------------------


def parse_parameters(text: str) -> dict[str, Any]:
    """``name: value`` lines (as the verdict form shows them) to a dict; numbers as floats."""
    out: dict[str, Any] = {}
    for number, line in enumerate((text or "").splitlines(), start=1):
        if not line.strip():
            continue
        name, sep, value = line.partition(":")
        if not sep or not name.strip():
            raise ReviewInvalid(
                {"verdict_parameters": f"Line {number} should read name: value, e.g. hold: 10min."}
            )
        value = value.strip()
        try:
            out[name.strip()] = float(value)
        except ValueError:
            out[name.strip()] = value
    return out


def format_parameters(parameters: Mapping[str, Any]) -> str:
    return "\n".join(
        f"{name}: {value:g}" if isinstance(value, float) else f"{name}: {value}"
        for name, value in (parameters or {}).items()
    )


def set_verdict(
    session: Session,
    review: Review,
    verdict: str | None,
    *,
    parameters: Mapping[str, Any] | None = None,
    rationale: str = "",
    alert_rule_id: int | None = None,
) -> Review:
    """Record keep / tune (with its new parameters) / retire, or clear it with None."""
    verdict = (verdict or "").strip() or None
    if verdict is not None and verdict not in VERDICTS:
        raise ReviewInvalid({"verdict": f"The verdict must be one of {', '.join(VERDICTS)}."})
    parameters = dict(parameters or {})
    if verdict == "tune" and not parameters:
        raise ReviewInvalid({"verdict_parameters": "A tuned rule needs its new parameters."})
    review.verdict = verdict
    review.verdict_parameters = parameters if verdict == "tune" else {}
    review.verdict_rationale = (rationale or "").strip()
    if alert_rule_id is not None:
        review.alert_rule_id = alert_rule_id
    session.flush()
    return review


def record_verdict(
    session: Session, review: Review, form: Mapping[str, str], alert_rule_id: int | None = None
) -> Review:
    """The verdict as a form sends it: ``verdict``, ``verdict_parameters`` (``name: value``
    lines) and ``verdict_rationale``."""
    return set_verdict(
        session,
        review,
        form.get("verdict"),
        parameters=parse_parameters(form.get("verdict_parameters", "")),
        rationale=form.get("verdict_rationale", ""),
        alert_rule_id=alert_rule_id,
    )


# -- incidents per series -----------------------------------------------------------------


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


def _child(items: Iterable[Any], item_id: int, what: str) -> Any:
    for item in items:
        if item.id == int(item_id):
            return item
    raise ReviewInvalid({"id": f"This review has no {what} #{item_id}."})
