"""Loading the demo scenario (``webapp.demo.build_demo``) into a store, through the same
store and analysis functions the app uses (the explanations are computed, then frozen).


The scenario brings the points, alert rules, pages, excluded periods and incidents; each
incident becomes a review tied to the page it caused, with a frozen explanation of the
paging series attached and the page's firing on its timeline (and so an incident on that
series); an imported list of incidents comes with it.
"""

from __future__ import annotations

from typing import Any

import pandas as pd
from sqlalchemy.orm import Session

from webapp.analysis import explain, past_weeks_overlay
from webapp.store import attachments as store_attachments
from webapp.store import excluded, explanations, pages, reviews, rules
from webapp.store import incidents as store_incidents
from webapp.store import timeline as store_timeline
from webapp.store.imports import record_import
from webapp.store.models import Page, Series
from webapp.store.series import read_series, series_by_keys

EXPLAIN_BEFORE = pd.Timedelta(hours=3)
EXPLAIN_AFTER = pd.Timedelta(hours=2)
EXPLAIN_HISTORY = pd.Timedelta(weeks=4)
REVIEW_FIELDS = (
    "title",
    "status",
    "severity",
    "summary",
    "impact",
    "trigger",
    "root_cause",
    "detection",
    "resolution",
    "lessons",
)


def load_demo(session: Session, demo: Any) -> dict[str, int]:
    """Store ``demo`` through the same functions the app uses; returns what was added."""
    summary = record_import(session, demo.parsed)
    ids = {key: s.id for key, s in series_by_keys(session, summary.series_keys).items()}

    rule_ids = {}
    for fields in demo.rules:
        fields = dict(fields)
        key = fields.pop("series_key", None)
        rule = rules.create_rule(session, series_id=ids.get(key), **fields)
        rule_ids[rule.name] = rule.id

    page_rows = [
        pages.create_page(
            session,
            ids.get(p["series_key"]),
            p["fired_at"],
            p["resolved_at"],
            p["rule_text"],
            alert_rule_id=rule_ids.get(p.get("rule_name")),
            note=p.get("note", ""),
        )
        for p in demo.pages
    ]
    # A span with no series is for every series of this scenario, not for later imports.
    for span in demo.excluded:
        key = span["series_key"]
        for series_id in [ids[key]] if key else ids.values():
            excluded.add_excluded(session, series_id, span["start"], span["end"], span["reason"])

    # Every review first, so each explanation leaves the other incidents out of its history.
    made = [(_review(session, i, page_rows, ids), i) for i in demo.incidents]
    tz = getattr(demo, "tz", "UTC")
    saved = sum(_attach_explanation(session, r, i, ids, tz) for r, i in made)
    listed = store_incidents.add_incident_list(session, demo.incident_list, demo.list_name)
    return {
        "points": summary.points,
        "series": len(ids),
        "alert_rules": len(rule_ids),
        "pages": len(page_rows),
        "excluded_periods": len(demo.excluded),
        "reviews": len(demo.incidents),
        "listed_incidents": listed,
        "explanations": saved,
    }


def _paging(incident: dict, page_rows: list[Page], ids: dict[str, int]) -> Page | None:
    """The first page on one of the incident's series that fired while it lasted."""
    series = {ids[k] for k in incident.get("series_keys", []) if k in ids}
    start, end = pd.Timestamp(incident["start"]), pd.Timestamp(incident["end"])
    for page in sorted(page_rows, key=lambda p: p.fired_at):
        if page.series_id in series and start <= pd.Timestamp(page.fired_at) <= end:
            return page
    return None


def _review(session: Session, incident: dict, page_rows: list[Page], ids: dict[str, int]):
    page = _paging(incident, page_rows, ids)
    data = {name: incident.get(name, "") for name in REVIEW_FIELDS}
    data.update(
        incident_start=incident["start"],
        incident_end=incident["end"],
        exclude_from_baselines=True,
        page_id=page.id if page is not None else None,
    )
    review = reviews.create_review(session, data)
    if page is not None:
        review.alert_rule_id = page.alert_rule_id
        store_timeline.add_timeline_entry(
            session, review, page.fired_at, f"Paged: {page.rule_text}"
        )
        if page.resolved_at is not None:
            store_timeline.add_timeline_entry(
                session, review, page.resolved_at, "The page resolved."
            )
    return review


def _attach_explanation(
    session: Session, review: Any, incident: dict, ids: dict[str, int], tz: str
) -> int:
    page = session.get(Page, review.page_id) if review.page_id is not None else None
    series_id = page.series_id if page is not None else None
    if series_id is None:
        known = [ids[k] for k in incident.get("series_keys", []) if k in ids]
        if not known:
            return 0
        series_id = known[0]
    start = pd.Timestamp(incident["start"]) - EXPLAIN_BEFORE
    end = pd.Timestamp(incident["end"]) + EXPLAIN_AFTER
    history = read_series(session, series_id, start - EXPLAIN_HISTORY, end)
    exclude = [(s, e) for s, e in excluded.periods_for(session, series_id) if e < start]
    unit = session.get(Series, series_id).unit or ""
    exp = explain(
        history,
        window=(start, end),
        history=EXPLAIN_HISTORY,
        exclude=exclude,
        tz=tz,
        unit=unit,
    )
    overlay = past_weeks_overlay(history, window=(start, end), weeks=4, tz=tz)
    row = explanations.save_explanation(
        session, exp, series_id, overlay=overlay, title=incident["title"], page_id=review.page_id
    )
    store_attachments.attach_explanation(
        session, review, row.id, caption=f"{row.series_key} against its expected band"
    )
    return 1
