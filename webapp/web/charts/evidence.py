"""The Explain screen's panels from its evidence: each panel is built on its own, so one
that fails shows its message and the others still draw."""

from __future__ import annotations

import logging
from dataclasses import dataclass

import plotly.graph_objects as go
from markupsafe import Markup

from webapp.services.explain import Evidence, Span
from webapp.web.charts import explain as figures
from webapp.web.charts.style import figure_json

log = logging.getLogger(__name__)

PANELS = ("band", "overlay", "components")


@dataclass(frozen=True)
class Panel:
    name: str
    figure: Markup | None = None
    error: str | None = None
    payload_bytes: int = 0


def figure_embed(fig: go.Figure, div_id: str) -> Markup:
    """A figure for a page: an empty ``<div>`` and its JSON beside it, drawn by
    static/explain.js, so the page needs no inline script."""
    return Markup(
        f'<div id="{div_id}" class="plot" data-figure></div>'
        f'<script type="application/json" class="figure-data">{figure_json(fig)}</script>'
    )


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
            frame,
            evidence.tz,
            evidence.unit,
            evidence.series_key,
            view=view,
            marks=evidence.marks,
            second=evidence.second,
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
