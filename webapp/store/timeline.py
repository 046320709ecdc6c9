"""A review's timeline: entries typed by the reviewer or taken from an explanation's time
facts (the first time outside the band, the peak...)."""

from __future__ import annotations

import datetime as dt
import re
from typing import Any

from sqlalchemy.orm import Session

from webapp.analysis.vocabulary import FACT_LABELS, fact_label
from webapp.store._sql import ReviewInvalid, child_of
from webapp.store.models import Explanation, Review, TimelineEntry
from webapp.store.times import utc_datetime

ISO_TIME = re.compile(r"^\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}")


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
        when = utc_datetime(at, tz)
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


def time_facts(explanation: Explanation) -> dict[str, dt.datetime]:
    """The facts of an explanation that are points in time (e.g. the first out-of-band time),
    the usual timeline moments first, then the others in time order."""
    found = {}
    for name, value in (explanation.facts or {}).items():
        if isinstance(value, str) and ISO_TIME.match(value):
            try:
                when = utc_datetime(value)
            except ValueError:
                continue
            if when is not None:
                found[name] = when
    known = [name for name in FACT_LABELS if name in found]
    others = sorted((n for n in found if n not in FACT_LABELS), key=lambda n: found[n])
    return {name: found[name] for name in known + others}


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
    # The entry keeps explanation_id, and every view says "from explanation #N" beside it.
    text = text.strip() or f"{fact_label(fact)} on {explanation.series_key}"
    return add_timeline_entry(
        session, review, facts[fact], text, explanation_id=explanation.id, fact=fact
    )


def delete_timeline_entry(session: Session, review: Review, entry_id: int) -> None:
    entry = child_of(review.timeline, entry_id, "timeline entry")
    review.timeline.remove(entry)
    session.flush()
