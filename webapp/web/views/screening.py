"""The Screening screen: which stored series left their expected bands in one window, and
in what order; with the data behind it as CSV and JSON."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, Response, abort, current_app, request, url_for

from webapp.services import screening as sv
from webapp.store import db
from webapp.web.charts import evidence as panels
from webapp.web.charts import screening as charts
from webapp.web.downloads import check_format, download
from webapp.web.forms.params import (
    parse_int,
    parse_tolerance,
    parse_tz,
    parse_weeks,
    parse_window,
)
from webapp.web.htmx import render
from webapp.web.views.explain import page_marks
from webapp.web.views.pages import load_page, page_window

bp = Blueprint("screening", __name__)

SMALL_MULTIPLES = 6
FILTER_MAX = 200


def read_screen_query(args: Any) -> sv.ScreenQuery | None:
    """The screening the request asks for; None when it names no window (the form only).
    A page without a window screens the page's own span with its margin."""
    tz = parse_tz(args.get("tz"))
    page_id = parse_int(args.get("page"), "page number")
    if args.get("start") or args.get("end"):
        window = parse_window(args.get("start"), args.get("end"), tz)
    elif page_id is not None:
        page = load_page(page_id)
        window = page_window(page.fired_at, page.resolved_at)
    else:
        return None
    config = current_app.config
    return sv.ScreenQuery(
        window=window,
        tolerance=parse_tolerance(args.get("tolerance"), float(config["DEFAULT_TOLERANCE"])),
        weeks=parse_weeks(args.get("weeks"), int(config["DEFAULT_HISTORY_WEEKS"])),
        tz=tz,
        filter=" ".join((args.get("filter") or "").split())[:FILTER_MAX],
        page_id=page_id,
    )


def explain_link(screening: sv.Screening, key: str) -> str | None:
    """The Explain screen of one screened series over the same window and parameters."""
    series_id = screening.ids.get(key)
    if series_id is None:
        return None
    query = screening.query
    args = {k: v for k, v in query.args().items() if k != "filter"}
    return url_for("explain.index", series=series_id, **args)


def small_multiples(screening: sv.Screening) -> list[dict[str, Any]]:
    result = screening.result
    out = []
    for row in result.onsets.sort_values("rank").head(SMALL_MULTIPLES).itertuples(index=False):
        exp = result.explanations[row.key]
        fig = charts.small_figure(exp, screening.query.tz, screening.units.get(row.key, ""))
        out.append(
            {
                "key": row.key,
                "row": row,
                "link": explain_link(screening, row.key),
                "panel": panels.Panel(row.key, figure=panels.figure_json(fig)),
            }
        )
    return out


def run(query: sv.ScreenQuery) -> tuple[sv.Screening | None, str | None]:
    try:
        return sv.run_screening(db.get_session(), query), None
    except ValueError as error:
        return None, str(error)


@bp.get("/screening")
def index() -> str:
    query = read_screen_query(request.args)
    screening, error, timeline = None, None, None
    if query is not None:
        screening, error = run(query)
    if screening is not None:
        marks = page_marks(query.page_id)
        try:
            fig = charts.timeline_figure(screening.result, query.tz, marks)
            timeline = panels.Panel("timeline", figure=panels.figure_json(fig))
        except ValueError as problem:
            timeline = panels.Panel("timeline", error=str(problem))
    return render(
        "screening/index.html",
        "screening/index.html",
        query=query,
        screening=screening,
        error=error,
        timeline=timeline,
        multiples=small_multiples(screening) if screening is not None else [],
        explain_link=(lambda key: explain_link(screening, key)) if screening else None,
    )


@bp.get("/screening/data.<fmt>")
def data(fmt: str) -> Response:
    """The screening's ranked table with its parameters, as CSV or JSON."""
    check_format(fmt)
    query = read_screen_query(request.args)
    if query is None:
        abort(400, description="Give the window to screen: start and end.")
    screening, error = run(query)
    if screening is None:
        abort(400, description=error)
    extra = {"filter": query.filter} if query.filter else None
    return download(screening.result, fmt, "screening", extra)
