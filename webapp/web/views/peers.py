"""The Peers panel of the Explain screen: the explained series beside the series of the same
metric whose labels differ in exactly one label.

The panel is its own htmx fragment, requested once the main results are on screen, so a
slow or failing comparison never delays or blanks the other panels. Every peer is fitted
with the explained series' excluded periods (those given on the screen and those stored
for it): a span left out for one host is usually a bad span for its neighbours too.
"""

from __future__ import annotations

import logging
from typing import Any

from flask import Blueprint, request

from webapp.services import explain as ev
from webapp.store import db
from webapp.web.charts import evidence as panels
from webapp.web.charts import peers as peer_charts
from webapp.web.htmx import render

log = logging.getLogger(__name__)

bp = Blueprint("peers", __name__)


def table_rows(comparison: Any) -> list[dict[str, Any]]:
    return [
        {
            "name": r.name,
            "key": r.key,
            "is_target": r.is_target,
            "minutes_outside": r.minutes_outside,
            "first_outside": r.first_outside,
            "above": r.left_band and bool(r.deviation.loc[r.first_outside] > 0),
            "peak": r.peak_deviation_sd,
            "error": r.error,
        }
        for r in comparison.results
    ]


@bp.get("/explain/peers")
def panel() -> str:
    from webapp.web.views.explain import current_query, stored_exclusions

    series, query = current_query(request.args)
    peers = ev.find_peers(db.get_session(), series)
    if peers is None:
        return ""
    exclude = [*query.exclude, *stored_exclusions(series.id)]
    comparison, error, fig = None, None, None
    try:
        comparison = ev.compare_with_peers(db.get_session(), series, query, peers, exclude)
        fig = panels.figure_json(
            peer_charts.deviation_figure(comparison, query.tz, query.tolerance)
        )
    except ValueError as problem:
        error = f"{series.key}: {problem}"
    except Exception:
        log.exception("peer comparison failed for %s", series.key)
        error = "The peers could not be compared; see the server log. The other panels stand."
    return render(
        "explain/_peers.html",
        "explain/_peers.html",
        comparison=comparison,
        rows=table_rows(comparison) if comparison is not None else [],
        panel=panels.Panel("peers", figure=fig, error=None if fig else error),
        error=error,
        peers=peers,
        tz=query.tz,
        tolerance=query.tolerance,
        unit=series.unit,
    )
