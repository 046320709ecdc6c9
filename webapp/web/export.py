"""Export a review: Markdown with its figures as SVG files beside it (drawn here, no browser
needed), or one self-contained HTML file (the vendored plotly.js bundle inlined, figures
still interactive) that opens offline and asks nothing of the network.

Both carry every attached explanation's parameters and engine version, so a reader can
rebuild the evidence. ``webapp.services.review_export`` gathers the review; this module draws
and writes it with its own Jinja environment, so the CLI needs only a database session.
"""

from __future__ import annotations

import json
import os
import re
from pathlib import Path
from typing import TYPE_CHECKING, Any

import jinja2
from markupsafe import Markup
from sqlalchemy.orm import Session

from webapp import resource_dir
from webapp.analysis.times import long_duration
from webapp.services.review_export import AttachedEvidence, ExportError, review_context
from webapp.web import filters
from webapp.web.charts import explain as figures
from webapp.web.charts import style
from webapp.web.charts.style import PLOT_CONFIG, Drawing, figure_json
from webapp.web.charts.svg import figure_svg

if TYPE_CHECKING:
    import plotly.graph_objects as go

FORMATS = ("md", "html")
FIGURE_WIDTH = 1100


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
        markdown=_render_markdown,
        cell=markdown_cell,
    )
    return env


def _render_markdown(text: str | None) -> Markup:
    """The review's Markdown as safe HTML (loaded only by the HTML export)."""
    from webapp.web.markdown import render_markdown

    return render_markdown(text)


def markdown_cell(value: Any) -> str:
    """Text safe inside one Markdown table cell: no line breaks, pipes escaped."""
    return re.sub(r"\s*\n\s*", " ", str(value or "")).replace("|", "\\|").strip()


def evidence_drawings(item: AttachedEvidence) -> list[tuple[str, Drawing]]:
    """The frozen figures of one attachment as plain data: the band, and the overlay when
    it was saved."""
    if item.frame is None:
        return []
    title = item.explanation.title or item.explanation.series_key
    out = [("band", figures.band_drawing(item.frame, item.tz, item.unit, title, marks=item.marks))]
    if item.overlay is not None and not item.overlay.empty:
        out.append(
            ("overlay", figures.overlay_drawing(item.overlay, item.frame, item.tz, item.unit))
        )
    return out


def draw_evidence(items: list[AttachedEvidence], plotly: bool = True) -> None:
    """Draw every attachment's figures (plotly Figures, or plain drawings when ``plotly``
    is false); one that cannot be drawn says why instead."""
    for item in items:
        try:
            drawings = evidence_drawings(item)
        except (KeyError, ValueError) as err:  # a frame stored by an older engine
            number = item.explanation.id
            item.problem = f"The stored frame of explanation #{number} could not be drawn ({err})."
            continue
        item.figures = [
            (name, style.figure(*drawing) if plotly else drawing) for name, drawing in drawings
        ]


def export_review(session: Session, review_id: int, fmt: str, out_path: str | Path) -> list[Path]:
    """Write review ``review_id`` as ``fmt`` ("md" or "html") to ``out_path``.

    Returns every file written: the Markdown file followed by its figure files, or the one
    HTML file. Raises :class:`ExportError` for an unknown review or format.
    """
    if fmt not in FORMATS:
        raise ExportError(f"unknown export format {fmt!r}: use md or html")
    context = review_context(session, review_id)
    draw_evidence(context["evidence"], plotly=fmt == "html")
    out_path = output_file(out_path, review_id, fmt)
    out_path.parent.mkdir(parents=True, exist_ok=True)
    if fmt == "md":
        return _write_markdown(context, out_path)
    return [_write_html(context, out_path)]


def output_file(out_path: str | Path, review_id: int, fmt: str) -> Path:
    """Where the export goes: a path ending in a separator, or an existing folder, is a
    folder (created when missing) that gets ``review-ID.md`` or ``.html``; a name without a
    suffix gets the format's."""
    text = str(out_path)
    path = Path(out_path)
    if text.endswith(("/", os.sep)) or path.is_dir():
        return path / f"review-{review_id}.{fmt}"
    if not path.suffix:
        return path.with_suffix(f".{fmt}")
    return path


def _write_markdown(context: dict[str, Any], out_path: Path) -> list[Path]:
    folder = out_path.with_name(f"{out_path.stem}-figures")
    written = []
    for item in context["evidence"]:
        for name, figure in item.figures:
            path = folder / f"{item.number:02d}-{name}.svg"
            folder.mkdir(parents=True, exist_ok=True)
            path.write_text(figure_svg(*figure, width=FIGURE_WIDTH), encoding="utf-8")
            written.append(path)
            item.files.append((name, path.relative_to(out_path.parent).as_posix()))
    text = _environment().get_template("export/review.md").render(**context)
    out_path.write_text(text, encoding="utf-8")
    return [out_path, *written]


def figure_script(figure: go.Figure, div_id: str) -> Markup:
    """One interactive figure: its ``<div>`` and the script that draws it with
    ``PLOT_CONFIG`` (the export is a file opened from disk, where inline script is fine)."""
    config = json.dumps(PLOT_CONFIG)
    return Markup(
        f'<div id="{div_id}" class="plotly-graph-div"></div>\n<script>(function () {{'
        f" var fig = {figure_json(figure)};"
        f' Plotly.newPlot("{div_id}", fig.data, fig.layout, {config}); }})();</script>'
    )


def plotly_js() -> Markup:
    """The vendored plotly.js bundle, to inline once in the exported HTML's head."""
    from webapp.web.assets import plotly_js_path  # with Flask: the HTML export's alone

    return Markup(plotly_js_path().read_text(encoding="utf-8"))


def _write_html(context: dict[str, Any], out_path: Path) -> Path:
    for item in context["evidence"]:
        for name, figure in item.figures:
            item.html.append((name, figure_script(figure, f"figure-{item.number}-{name}")))
    has_figures = any(item.html for item in context["evidence"])
    template = _environment().get_template("export/review.html")
    text = template.render(**context, plotly_js=plotly_js() if has_figures else "")
    out_path.write_text(text, encoding="utf-8")
    return out_path
