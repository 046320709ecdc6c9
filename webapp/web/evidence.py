"""The evidence behind an Explain screen, live or frozen, and its panels.

Live evidence is computed from the store (and kept in a small cache, so zooming in and
saving do not recompute); frozen evidence is read back from a saved explanation and is
never recomputed. Each panel is built on its own: one that fails shows its message and
the others still draw.
"""

from __future__ import annotations

import logging
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import pandas as pd
import plotly.graph_objects as go
from markupsafe import Markup
from sqlalchemy.orm import Session

from webapp.web import figures
from webapp.web.cache import Recent
from webapp.web.params import ExplainQuery, Span

log = logging.getLogger(__name__)

PANELS = ("band", "overlay", "components")
CACHE_SIZE = 6


@dataclass
class Evidence:
    """What the panels draw from; ``errors`` maps a panel (or "explain") to a message."""

    series_key: str
    unit: str | None
    tz: str
    frame: pd.DataFrame | None = None
    overlay: pd.DataFrame | None = None
    facts: dict[str, Any] = field(default_factory=dict)
    summary: list[str] = field(default_factory=list)
    parameters: dict[str, Any] = field(default_factory=dict)
    engine_version: str = ""
    confidence: str | None = None
    explanation: Any = None  # the live analysis result, kept for "save explanation"
    errors: dict[str, str] = field(default_factory=dict)
    marks: list[tuple[pd.Timestamp, str]] = field(default_factory=list)
    # The panels drawn from it, kept with it: cached evidence is drawn once, not per request.
    drawn: dict[str, Panel] | None = field(default=None, repr=False, compare=False)


@dataclass(frozen=True)
class Panel:
    name: str
    figure: Markup | None = None
    error: str | None = None
    payload_bytes: int = 0


def figure_json(fig: go.Figure) -> Markup:
    """A figure's JSON, safe inside ``<script type="application/json">`` (no ``<``, ``>``
    or ``&`` left that could end the script element)."""
    text = fig.to_json()
    return Markup(text.replace("&", "\\u0026").replace("<", "\\u003c").replace(">", "\\u003e"))


def figure_embed(fig: go.Figure, div_id: str) -> Markup:
    """A figure for a page: an empty ``<div>`` and its JSON beside it, drawn by
    static/explain.js, so the page needs no inline script."""
    return Markup(
        f'<div id="{div_id}" class="plot" data-figure></div>'
        f'<script type="application/json" class="figure-data">{figure_json(fig)}</script>'
    )


_explanations = Recent(CACHE_SIZE)
_points = Recent(2)  # moving a control re-explains without reading the points again


def imports_version(session: Session) -> tuple:
    """Changes whenever an import is recorded or undone, in whichever database."""
    from webapp.store import imports as store_imports

    ids = [row.id for row in store_imports.list_imports(session)]
    return (
        session.get_bind().url.render_as_string(hide_password=True),
        len(ids),
        max(ids, default=0),
    )


def data_version(session: Session, series: Any) -> tuple:
    """Changes whenever the series' stored points or the imports change."""
    return (
        *imports_version(session),
        getattr(series, "point_count", None),
        getattr(series, "first_ts", None),
        getattr(series, "last_ts", None),
    )


def live_evidence(
    session: Session, series: Any, query: ExplainQuery, stored_exclusions: Sequence[Span]
) -> Evidence:
    from webapp.store import series as store_series

    exclude = tuple(query.exclude) + tuple(stored_exclusions)
    version = data_version(session, series)
    start, end = query.window[0] - query.history, query.window[1]
    values = _points.get(
        (series.id, version, start, end),
        lambda: store_series.read_series(session, series.id, start, end),
    )
    return _explanations.get(
        (series.id, version, query, exclude),
        lambda: _compute(series, values, query, list(exclude)),
    )


def _compute(series: Any, values: pd.Series, query: ExplainQuery, exclude: list[Span]) -> Evidence:
    from webapp.analysis import explain, past_weeks_overlay

    evidence = Evidence(series_key=series.key, unit=series.unit, tz=query.tz)
    if values.dropna().empty:
        evidence.errors["explain"] = no_data_message(series, query)
        return evidence
    try:
        exp = explain(
            values,
            window=query.window,
            history=query.history,
            tolerance=query.tolerance,
            exclude=exclude,
            tz=query.tz,
            unit=series.unit or "",
        )
    except ValueError as error:
        evidence.errors["explain"] = f"{series.key}: {error}"
        return evidence
    evidence.explanation = exp
    evidence.frame = exp.frame
    evidence.facts = dict(exp.facts)
    evidence.summary = list(exp.summary)
    evidence.parameters = dict(exp.parameters)
    evidence.engine_version = exp.engine_version
    evidence.confidence = getattr(exp, "confidence", None)
    try:
        evidence.overlay = past_weeks_overlay(
            values, window=query.window, weeks=query.weeks, tz=query.tz
        )
    except ValueError as error:
        evidence.errors["overlay"] = str(error)
    return evidence


def no_data_message(series: Any, query: ExplainQuery) -> str:
    from webapp.web.filters import local_time

    start, end = query.window[0] - query.history, query.window[1]
    message = (
        f"{series.key} has no data from {local_time(start, query.tz)} to "
        f"{local_time(end, query.tz, True)} (the window and its {query.weeks} weeks of history)."
    )
    if series.first_ts is not None and series.last_ts is not None:
        message += (
            f" Its data runs from {local_time(series.first_ts, query.tz)} to "
            f"{local_time(series.last_ts, query.tz, True)}; choose a window inside that."
        )
    return message


def frozen_evidence(row: Any, unit: str | None) -> Evidence:
    """Evidence read back from a saved explanation, exactly as it was saved."""
    from webapp.store import explanations as store_explanations

    parameters = dict(row.parameters or {})
    evidence = Evidence(
        series_key=row.series_key,
        unit=unit,
        tz=str(parameters.get("tz") or "UTC"),
        facts=dict(row.facts or {}),
        summary=list(row.summary or []),
        parameters=parameters,
        engine_version=row.engine_version,
        confidence=(row.facts or {}).get("confidence"),
    )
    try:
        evidence.frame = store_explanations.load_frame(row)
    except Exception as error:  # a damaged stored frame must not take the page down
        log.exception("stored frame of explanation %s unreadable", row.id)
        evidence.errors["explain"] = f"The stored frame of this explanation is unreadable: {error}"
    try:
        evidence.overlay = store_explanations.load_overlay(row)
    except Exception as error:
        evidence.errors["overlay"] = f"The stored past-weeks overlay is unreadable: {error}"
    return evidence


def build_figure(evidence: Evidence, name: str, view: Span | None = None) -> go.Figure:
    """One panel's figure; raises ValueError when the evidence has nothing for it."""
    frame = evidence.frame
    if frame is None:
        raise ValueError("Nothing to draw: the reason is given at the top of the page.")
    if view is not None:
        margin = (view[1] - view[0]) * 0.05
        frame = frame[(frame.index >= view[0] - margin) & (frame.index <= view[1] + margin)]
        if frame.empty:
            raise ValueError("No data in that time range.")
    if name == "band":
        return figures.band_figure(
            frame, evidence.tz, evidence.unit, evidence.series_key, view=view, marks=evidence.marks
        )
    if name == "components":
        return figures.components_figure(frame, evidence.tz, evidence.unit, view=view)
    if name == "overlay":
        if evidence.overlay is None or evidence.overlay.empty:
            raise ValueError(
                evidence.errors.get("overlay", "There is no earlier week to lay over this one.")
            )
        return figures.overlay_figure(evidence.overlay, evidence.frame, evidence.tz, evidence.unit)
    raise ValueError(f"Unknown figure {name!r}.")


def build_panels(evidence: Evidence) -> dict[str, Panel]:
    if evidence.drawn is not None:
        return evidence.drawn
    panels = {}
    for name in PANELS:
        try:
            payload = figure_json(build_figure(evidence, name))
        except ValueError as error:
            panels[name] = Panel(name, error=str(error))
        except Exception:
            log.exception("panel %s failed for %s", name, evidence.series_key)
            panels[name] = Panel(name, error="This figure could not be drawn; see the server log.")
        else:
            panels[name] = Panel(name, figure=payload, payload_bytes=len(payload))
    evidence.drawn = panels
    return panels
