"""Series: the stored series, searchable by metric and label, each with its sparkline."""

from __future__ import annotations

from flask import Blueprint, abort, redirect, request, url_for
from werkzeug.wrappers import Response

from webapp.services.cache import Recent
from webapp.services.explain import imports_version
from webapp.store import db
from webapp.web.charts.sparkline import sparkline_path
from webapp.web.htmx import render

bp = Blueprint("series", __name__)

MAX_QUERY = 200
MAX_ROWS = 100  # a longer list is read by searching it, not by scrolling it
_sparklines = Recent(2000)


@bp.get("/series")
def index() -> str:
    from webapp.store import series as store_series

    q = (request.args.get("q") or "").strip()[:MAX_QUERY]
    session = db.get_session()
    rows = store_series.list_series(session, q or None, sparklines=True, limit=MAX_ROWS)
    total = store_series.count_series(session, q or None) if len(rows) == MAX_ROWS else len(rows)
    version = imports_version(session)
    paths = {
        row.id: _sparklines.get(
            (version, row.id, row.n_points, row.first, row.last),
            lambda row=row: sparkline_path(row.sparkline),
        )
        for row in rows
    }
    return render(
        "series/index.html", "series/_rows.html", rows=rows, paths=paths, q=q, total=total
    )


@bp.get("/series/<int:series_id>")
def open_series(series_id: int) -> Response:
    """A series opens on the Explain screen (its last day of data)."""
    from webapp.store import series as store_series

    if store_series.get_series(db.get_session(), series_id) is None:
        abort(404, description=f"There is no series #{series_id}.")
    return redirect(url_for("explain.index", series=series_id))
