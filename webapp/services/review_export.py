"""A review, gathered for export: its particulars, sections, verdict and the frozen evidence
of every attached explanation, read from the store exactly as saved (never recomputed).
Writing it out (Markdown or HTML, figures drawn) is ``webapp.web.export``'s part."""

from __future__ import annotations

import datetime as dt
import json
from dataclasses import dataclass, field
from typing import Any

import pandas as pd
from sqlalchemy.orm import Session

from webapp.analysis.times import local_time, long_duration
from webapp.analysis.vocabulary import OWNER_DECIDES, fact_label
from webapp.store import explanations as store_explanations
from webapp.store import reviews as store_reviews
from webapp.store.models import AlertRule, Page, Review, ReviewExplanation, Series

SECTIONS = (
    ("summary", "Summary"),
    ("impact", "Impact"),
    ("trigger", "Trigger"),
    ("root_cause", "Root cause"),
    ("detection", "Detection"),
    ("resolution", "Resolution"),
    ("lessons", "Lessons"),
)


class ExportError(ValueError):
    """An export that cannot be written, with the reason in words."""


@dataclass
class AttachedEvidence:
    """One attached explanation, ready to show: its stored frame and overlay, the timeline
    moments to mark on it, and what produced it. The exporter adds its figures and files."""

    attachment: ReviewExplanation
    number: int
    heading: str
    frame: pd.DataFrame | None = None
    overlay: pd.DataFrame | None = None
    marks: list[tuple[pd.Timestamp, str]] = field(default_factory=list)
    tz: str = "UTC"
    unit: str | None = None
    figures: list[tuple[str, Any]] = field(default_factory=list)  # (name, plotly figure)
    parameters: dict[str, Any] = field(default_factory=dict)
    files: list[tuple[str, str]] = field(default_factory=list)  # Markdown: (name, relative path)
    html: list[tuple[str, str]] = field(default_factory=list)  # HTML: (name, plotly div)
    problem: str = ""  # why the stored frame could not be drawn, if it could not

    @property
    def explanation(self) -> Any:
        return self.attachment.explanation


def review_evidence(session: Session, review: Review, tz: str = "UTC") -> list[AttachedEvidence]:
    """Every attachment's frozen evidence, read back exactly as it was saved, on the time
    zone it was explained in (``tz`` when it names none)."""
    evidence = []
    for number, attachment in enumerate(review.attachments, start=1):
        row = attachment.explanation
        series = session.get(Series, row.series_id) if row.series_id else None
        item = AttachedEvidence(
            attachment=attachment,
            number=number,
            heading=attachment.caption or row.title or row.series_key,
            parameters=reproduction(row),
            tz=(row.parameters or {}).get("tz") or tz,
            unit=series.unit if series else None,
            marks=[
                (pd.Timestamp(e.at), fact_label(e.fact or "entry"))
                for e in review.timeline
                if e.explanation_id == row.id
            ],
        )
        try:
            item.frame = store_explanations.load_frame(row)
            item.overlay = store_explanations.load_overlay(row)
        except (KeyError, ValueError, OSError) as err:  # a frame stored by an older engine
            item.problem = f"The stored frame of explanation #{row.id} could not be drawn ({err})."
        evidence.append(item)
    return evidence


def reproduction(row: Any) -> dict[str, Any]:
    """What a reader needs to rebuild an explanation: series, window, parameters, engine."""
    window = f"{local_time(row.window_start)} to {local_time(row.window_end)} UTC"
    out: dict[str, Any] = {
        "explanation": f"#{row.id}",
        "series": row.series_key,
        "engine version": row.engine_version,
    }
    for name, value in sorted((row.parameters or {}).items()):
        scalar = value is None or isinstance(value, str | int | float)
        out[name] = value if scalar else json.dumps(value)
    out["window"] = window  # the stored window, in words, over the parameters' copy
    return out


def header_lines(review: Review, page: Page | None, rule: AlertRule | None) -> list[tuple]:
    """The review's particulars as (label, text, code) rows; ``code`` is shown as code."""
    rows: list[tuple[str, str, str]] = [("Status", review.status, "")]
    if review.severity:
        rows.append(("Severity", review.severity, ""))
    window = "not recorded"
    if review.incident_start and review.incident_end:
        length = long_duration(review.incident_end - review.incident_start)
        start, end = (
            local_time(review.incident_start),
            local_time(review.incident_end),
        )
        window = f"{start} to {end} UTC ({length})"
    rows.append(("Incident", window, ""))
    if page is not None:
        text = f"#{page.id} fired {local_time(page.fired_at)} UTC"
        if review.incident_start and page.fired_at >= review.incident_start:
            text += f", {long_duration(page.fired_at - review.incident_start)} after it began"
        if page.resolved_at:
            text += f", resolved {local_time(page.resolved_at)} UTC"
        rows.append(("Page", text, page.rule_text or ""))
    if rule is not None:
        rows.append(("Alert rule", rule.name, ""))
    kept = "left out of" if review.exclude_from_baselines else "kept in"
    rows.append(("Baselines", f"the incident window is {kept} later baselines of its series", ""))
    return rows


def without_caution(text: str | None) -> str:
    """A rationale without the owner-decides caution a drafted verdict ends with: the
    export states it once, beside the verdict."""
    return (text or "").replace(OWNER_DECIDES, "").strip()


def review_context(session: Session, review_id: int, tz: str = "UTC") -> dict[str, Any]:
    """Everything a review export shows, read from the store; raises ExportError for an
    unknown review."""
    review = store_reviews.get_review(session, review_id)
    if review is None:
        raise ExportError(f"there is no review #{review_id} in this database")
    page = session.get(Page, review.page_id) if review.page_id else None
    rule = session.get(AlertRule, review.alert_rule_id) if review.alert_rule_id else None
    return {
        "review": review,
        "header": header_lines(review, page, rule),
        "page": page,
        "rule": rule,
        "sections": [(label, getattr(review, name)) for name, label in SECTIONS],
        "evidence": review_evidence(session, review, tz),
        "verdict_warning": OWNER_DECIDES,
        "without_caution": without_caution,
        "exported_at": dt.datetime.now(dt.UTC),
        "tz": tz,
    }
