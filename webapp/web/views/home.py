"""The start screen: what whyfired is for, what the store holds, and the latest page."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, render_template

from webapp.store import db

bp = Blueprint("home", __name__)


def store_counts(session: Any) -> dict[str, int]:
    from webapp.store import explanations, pages
    from webapp.store import imports as store_imports
    from webapp.store import reviews as store_reviews
    from webapp.store import series as store_series

    series_list = store_series.list_series(session)
    return {
        "imports": len(store_imports.list_imports(session)),
        "series": len(series_list),
        "points": sum(s.n_points for s in series_list),
        "pages": len(pages.list_pages(session)),
        "explanations": len(explanations.list_explanations(session)),
        "reviews": len(store_reviews.list_reviews(session)),
    }


@bp.get("/")
def index() -> str:
    from webapp.store import pages
    from webapp.store import series as store_series

    session = db.get_session()
    latest = next(iter(pages.list_pages(session)), None)
    latest_series = (
        store_series.get_series(session, latest.series_id)
        if latest is not None and latest.series_id
        else None
    )
    return render_template(
        "home/index.html",
        counts=store_counts(session),
        latest_page=latest,
        latest_series=latest_series,
    )
