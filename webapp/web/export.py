"""Export a review: Markdown with its figures as PNG files beside it, or one self-contained
HTML file (plotly.js inlined, figures still interactive) that opens offline.

Both carry every attached explanation's parameters and engine version, so a reader can
rebuild the evidence. The export needs only a database session: it renders with its own
Jinja environment, so the CLI can call it without a running app.
"""

from __future__ import annotations

import datetime as dt
import json
import os
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import jinja2
import pandas as pd
import plotly.graph_objects as go
import plotly.io as pio
from sqlalchemy.orm import Session

from webapp import resource_dir
from webapp.analysis.times import long_duration
from webapp.analysis.vocabulary import OWNER_DECIDES
from webapp.store import reviews as store_reviews
from webapp.store.models import AlertRule, Page, Review, ReviewExplanation, Series
from webapp.web import figures, filters
from webapp.web.markdown import render_markdown

FORMATS = ("md", "html")
FIGURE_WIDTH, FIGURE_SCALE = 1100, 1
SECTIONS = (
    ("summary", "Summary"),
    ("impact", "Impact"),
    ("trigger", "Trigger"),
    ("root_cause", "Root cause"),
    ("detection", "Detection"),
    ("resolution", "Resolution"),
    ("lessons", "Lessons"),
)
CHROMIUM = Path("/usr/bin/chromium")


class ExportError(ValueError):
    """An export that cannot be written, with the reason in words."""


@dataclass
class Evidence:
    """One attached explanation, ready to show: its figures and what produced them."""

    attachment: ReviewExplanation
    number: int
    heading: str
    figures: list[tuple[str, go.Figure]] = field(default_factory=list)
    parameters: dict[str, Any] = field(default_factory=dict)
    files: list[tuple[str, str]] = field(default_factory=list)  # Markdown: (name, relative path)
    html: list[tuple[str, str]] = field(default_factory=list)  # HTML: (name, plotly div)
    problem: str = ""  # why the stored frame could not be drawn, if it could not

    @property
    def explanation(self) -> Any:
        return self.attachment.explanation


def evidence_figures(session: Session, attachment: ReviewExplanation, tz: str) -> list:
    """The frozen figures of one attachment, drawn from the stored frame and overlay, on
    the time zone the explanation was made in (``tz`` when it names none)."""
    from webapp.store import explanations

    row = attachment.explanation
    tz = (row.parameters or {}).get("tz") or tz  # drawn on the clock it was explained in
    series = session.get(Series, row.series_id) if row.series_id else None
    unit = series.unit if series else None
    frame = explanations.load_frame(row)
    marks = [
        (pd.Timestamp(e.at), store_reviews.fact_label(e.fact or "entry"))
        for e in attachment.review.timeline
        if e.explanation_id == row.id
    ]
    out = [("band", figures.band_figure(frame, tz, unit, row.title or row.series_key, marks=marks))]
    overlay = explanations.load_overlay(row)
    if overlay is not None and not overlay.empty:
        out.append(("overlay", figures.overlay_figure(overlay, frame, tz, unit)))
    return out


def review_evidence(session: Session, review: Review, tz: str = "UTC") -> list[Evidence]:
    evidence = []
    for number, attachment in enumerate(review.attachments, start=1):
        row = attachment.explanation
        item = Evidence(
            attachment=attachment,
            number=number,
            heading=attachment.caption or row.title or row.series_key,
            parameters=reproduction(row),
        )
        try:
            item.figures = evidence_figures(session, attachment, tz)
        except (KeyError, ValueError, OSError) as err:  # a frame stored by an older engine
            item.problem = f"The stored frame of explanation #{row.id} could not be drawn ({err})."
        evidence.append(item)
    return evidence


def reproduction(row: Any) -> dict[str, Any]:
    """What a reader needs to rebuild an explanation: series, window, parameters, engine."""
    window = f"{filters.local_time(row.window_start)} to {filters.local_time(row.window_end)} UTC"
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
            filters.local_time(review.incident_start),
            filters.local_time(review.incident_end),
        )
        window = f"{start} to {end} UTC ({length})"
    rows.append(("Incident", window, ""))
    if page is not None:
        text = f"#{page.id} fired {filters.local_time(page.fired_at)} UTC"
        if review.incident_start and page.fired_at >= review.incident_start:
            text += f", {long_duration(page.fired_at - review.incident_start)} after it began"
        if page.resolved_at:
            text += f", resolved {filters.local_time(page.resolved_at)} UTC"
        rows.append(("Page", text, page.rule_text or ""))
    if rule is not None:
        rows.append(("Alert rule", rule.name, ""))
    kept = "left out of" if review.exclude_from_baselines else "kept in"
    rows.append(("Baselines", f"the incident window is {kept} later baselines of its series", ""))
    return rows


def review_context(session: Session, review: Review, tz: str = "UTC") -> dict[str, Any]:
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
        "exported_at": dt.datetime.now(dt.UTC),
        "tz": tz,
    }


def _environment() -> jinja2.Environment:
    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(str(resource_dir("templates"))),
        autoescape=jinja2.select_autoescape(["html"], default_for_string=True),
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )
    env.filters.update(
        local_time=filters.local_time,
        duration=long_duration,
        number=filters.number,
        markdown=render_markdown,
        cell=markdown_cell,
    )
    return env


def markdown_cell(value: Any) -> str:
    """Text safe inside one Markdown table cell: no line breaks, pipes escaped."""
    return re.sub(r"\s*\n\s*", " ", str(value or "")).replace("|", "\\|").strip()


def export_review(session: Session, review_id: int, fmt: str, out_path: str | Path) -> list[Path]:
    """Write review ``review_id`` as ``fmt`` ("md" or "html") to ``out_path``.

    Returns every file written: the Markdown file followed by its figure files, or the one
    HTML file. Raises :class:`ExportError` for an unknown review or format.
    """
    if fmt not in FORMATS:
        raise ExportError(f"unknown export format {fmt!r}: use md or html")
    review = store_reviews.get_review(session, review_id)
    if review is None:
        raise ExportError(f"there is no review #{review_id}")
    out_path = Path(out_path)
    if out_path.is_dir():
        out_path = out_path / f"review-{review.id}.{fmt}"
    elif not out_path.suffix:
        out_path = out_path.with_suffix(f".{fmt}")
    out_path.parent.mkdir(parents=True, exist_ok=True)
    context = review_context(session, review)
    if fmt == "md":
        return _write_markdown(context, out_path)
    return [_write_html(context, out_path)]


def _write_markdown(context: dict[str, Any], out_path: Path) -> list[Path]:
    folder = out_path.with_name(f"{out_path.stem}-figures")
    pending: list[tuple[go.Figure, Path]] = []
    for item in context["evidence"]:
        for name, figure in item.figures:
            path = folder / f"{item.number:02d}-{name}.png"
            pending.append((figure, path))
            item.files.append((name, path.relative_to(out_path.parent).as_posix()))
    if pending:
        folder.mkdir(parents=True, exist_ok=True)
        write_pngs(pending)
    text = _environment().get_template("export/review.md").render(**context)
    out_path.write_text(text, encoding="utf-8")
    return [out_path, *(path for _, path in pending)]


def write_pngs(pending: list[tuple[go.Figure, Path]]) -> None:
    """Render figures to PNG with plotly's kaleido, in one browser session."""
    if "BROWSER_PATH" not in os.environ and CHROMIUM.exists():
        os.environ["BROWSER_PATH"] = str(CHROMIUM)
    figs = [fig for fig, _ in pending]
    heights = [int(fig.layout.height or 420) for fig in figs]
    try:
        pio.write_images(
            figs, [p for _, p in pending], format="png", width=FIGURE_WIDTH, height=heights
        )
    except Exception as err:  # kaleido reports a missing browser in several ways
        raise ExportError(
            f"the figures could not be drawn as PNG images ({err}); the Markdown export needs "
            "a Chrome or Chromium browser for plotly's image export (set BROWSER_PATH), or "
            "use the HTML export"
        ) from err


def figure_div(figure: go.Figure, div_id: str, include_plotlyjs: bool) -> str:
    """One interactive figure as a ``<div>`` and its script (plotly.js inlined if asked)."""
    return figure.to_html(
        full_html=False,
        include_plotlyjs=include_plotlyjs,
        div_id=div_id,
        config={"displaylogo": False, "responsive": True},
    )


def _write_html(context: dict[str, Any], out_path: Path) -> Path:
    first = True
    for item in context["evidence"]:
        for name, figure in item.figures:
            item.html.append((name, figure_div(figure, f"figure-{item.number}-{name}", first)))
            first = False
    text = _environment().get_template("export/review.html").render(**context)
    out_path.write_text(text, encoding="utf-8")
    return out_path
