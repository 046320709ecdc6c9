"""Pages: record an alert notification by hand, and explain it from its own row."""

from __future__ import annotations

from typing import Any

import pandas as pd
from flask import Blueprint, abort, current_app, redirect, request, url_for
from werkzeug.wrappers import Response

from webapp.store import db
from webapp.web.forms.params import bad_request, parse_int, parse_time, parse_tz
from webapp.web.htmx import render

bp = Blueprint("pages", __name__)

MIN_MARGIN = pd.Timedelta(hours=1)
OPEN_PAGE_SPAN = pd.Timedelta(hours=2)


def load_page(page_id: int) -> Any:
    """The page row, or 404 saying which page is unknown."""
    from webapp.store import pages

    row = pages.get_page(db.get_session(), page_id)
    if row is None:
        abort(404, description=f"There is no page #{page_id}.")
    return row


def page_window(fired_at: Any, resolved_at: Any) -> tuple[pd.Timestamp, pd.Timestamp]:
    """The page's own span with a margin on each side as long as the page (at least an hour);
    a page never resolved is looked at for two hours after it fired."""
    fired = pd.Timestamp(fired_at)
    resolved = pd.Timestamp(resolved_at) if resolved_at is not None else fired + OPEN_PAGE_SPAN
    margin = max(MIN_MARGIN, resolved - fired)
    return fired - margin, resolved + margin


def listing(tz: str, form: dict[str, str] | None = None, error: str | None = None) -> str:
    from webapp.store import pages
    from webapp.store import series as store_series

    session = db.get_session()
    series_list = store_series.list_series(session)
    return render(
        "pages/index.html",
        "pages/index.html",
        pages=pages.list_pages(session),
        series_list=series_list,
        keys={s.id: s.key for s in series_list},
        tz=tz,
        form=form or {},
        error=error,
    )


@bp.get("/pages")
def index() -> str:
    return listing(parse_tz(request.args.get("tz")))


@bp.post("/pages")
def create() -> Response | tuple[str, int]:
    from webapp.store import pages
    from webapp.store import series as store_series

    form = request.form
    tz = parse_tz(form.get("tz"))
    session = db.get_session()
    series_id = parse_int(form.get("series"), "series number")
    if series_id is None or store_series.get_series(session, series_id) is None:
        return listing(tz, dict(form), "Choose the series the page was about."), 400
    fired = parse_time(form.get("fired_at"), tz, "time the page fired")
    resolved = None
    if (form.get("resolved_at") or "").strip():
        resolved = parse_time(form.get("resolved_at"), tz, "time the page resolved")
        if resolved < fired:
            bad_request("A page cannot resolve before it fired: check the two times.")
    rule_text = (form.get("rule_text") or "").strip()[:2000]
    note = (form.get("note") or "").strip()[:5000]
    row = pages.create_page(
        session,
        series_id,
        fired.to_pydatetime(),
        resolved.to_pydatetime() if resolved else None,
        rule_text,
        note=note,
    )
    session.commit()
    current_app.logger.info("recorded page %s", row.id)
    return redirect(url_for("pages.index", tz=tz), code=303)


@bp.get("/pages/<int:page_id>/explain")
def explain_page(page_id: int) -> Response:
    """Open the Explain screen on the page's own series and span."""
    row = load_page(page_id)
    if row.series_id is None:
        bad_request(f"Page #{page_id} is not tied to a series any more, so it cannot be explained.")
    start, end = page_window(row.fired_at, row.resolved_at)
    tz = parse_tz(request.args.get("tz"))
    return redirect(
        url_for(
            "explain.index",
            series=row.series_id,
            start=start.isoformat(),
            end=end.isoformat(),
            tz=tz,
            page=row.id,
        )
    )


@bp.post("/pages/<int:page_id>/delete")
def delete(page_id: int) -> Response:
    from webapp.store import pages

    row = load_page(page_id)
    session = db.get_session()
    pages.delete_page(session, row.id)
    session.commit()
    return redirect(url_for("pages.index"), code=303)
