"""Export a review: Markdown with its figures as PNG files beside it, or one self-contained
HTML file (plotly.js inlined, figures still interactive) that opens offline.

Both carry every attached explanation's parameters and engine version, so a reader can
rebuild the evidence. ``webapp.services.review_export`` gathers the review; this module draws
and writes it with its own Jinja environment, so the CLI needs only a database session.
"""

from __future__ import annotations

import os
import re
from pathlib import Path
from typing import Any

import jinja2
import plotly.graph_objects as go
import plotly.io as pio
from sqlalchemy.orm import Session

from webapp import resource_dir
from webapp.analysis.times import long_duration
from webapp.services.review_export import AttachedEvidence, ExportError, review_context
from webapp.web import filters
from webapp.web.charts import explain as figures
from webapp.web.markdown import render_markdown

FORMATS = ("md", "html")
FIGURE_WIDTH, FIGURE_SCALE = 1100, 1
CHROMIUM = Path("/usr/bin/chromium")


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


def evidence_figures(item: AttachedEvidence) -> list[tuple[str, go.Figure]]:
    """The frozen figures of one attachment: the band, and the overlay when it was saved."""
    if item.frame is None:
        return []
    title = item.explanation.title or item.explanation.series_key
    out = [("band", figures.band_figure(item.frame, item.tz, item.unit, title, marks=item.marks))]
    if item.overlay is not None and not item.overlay.empty:
        out.append(
            ("overlay", figures.overlay_figure(item.overlay, item.frame, item.tz, item.unit))
        )
    return out


def draw_evidence(items: list[AttachedEvidence]) -> None:
    """Draw every attachment's figures; one that cannot be drawn says why instead."""
    for item in items:
        try:
            item.figures = evidence_figures(item)
        except (KeyError, ValueError) as err:  # a frame stored by an older engine
            number = item.explanation.id
            item.problem = f"The stored frame of explanation #{number} could not be drawn ({err})."


def export_review(session: Session, review_id: int, fmt: str, out_path: str | Path) -> list[Path]:
    """Write review ``review_id`` as ``fmt`` ("md" or "html") to ``out_path``.

    Returns every file written: the Markdown file followed by its figure files, or the one
    HTML file. Raises :class:`ExportError` for an unknown review or format.
    """
    if fmt not in FORMATS:
        raise ExportError(f"unknown export format {fmt!r}: use md or html")
    context = review_context(session, review_id)
    draw_evidence(context["evidence"])
    out_path = Path(out_path)
    if out_path.is_dir():
        out_path = out_path / f"review-{review_id}.{fmt}"
    elif not out_path.suffix:
        out_path = out_path.with_suffix(f".{fmt}")
    out_path.parent.mkdir(parents=True, exist_ok=True)
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
