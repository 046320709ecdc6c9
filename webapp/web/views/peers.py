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

from flask import Blueprint, Response, abort, request

from webapp.services import explain as ev
from webapp.store import db
from webapp.web.charts import evidence as panels
from webapp.web.charts import peers as peer_charts
from webapp.web.downloads import check_format, download
from webapp.web.htmx import render

log = logging.getLogger(__name__)

bp = Blueprint("peers", __name__)


TABLE_PEERS = 12  # peers listed in the table beside the explained series


def table_rows(comparison: Any) -> list[dict[str, Any]]:
    """The explained series, then the compared peers that went furthest (at most
    TABLE_PEERS), then every peer that was not compared (joined, ramped up, failed)."""
    shown = peer_charts.shown_peers(comparison, TABLE_PEERS)
    left_out = [r for r in comparison.others if r.status != "compared"]
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
            "group": r.group,
        }
        for r in [*shown, *left_out]
    ]


def groups(comparison: Any) -> list[dict[str, Any]]:
    """The groups of peers that left together, with their display names."""
    names = {r.key: r.name for r in comparison.results}
    return [
        {
            "number": n + 1,
            "size": len(g.members),
            "first_outside": g.first_outside,
            "shared": g.shared,
            "names": [names[k] for k in g.members],
        }
        for n, g in enumerate(comparison.groups)
    ]


def comparison_inputs() -> tuple[Any, Any, Any, list]:
    """The explained series, its query, its peers (None when it has none) and the spans
    left out of every peer's baseline."""
    from webapp.web.views.explain import current_query, stored_exclusions

    series, query = current_query(request.args)
    peers = ev.find_peers(db.get_session(), series)
    return series, query, peers, [*query.exclude, *stored_exclusions(series.id)]


@bp.get("/explain/peers/data.<fmt>")
def data(fmt: str) -> Response:
    """The peer comparison's table with its sentences, as CSV or JSON."""
    check_format(fmt)
    series, query, peers, exclude = comparison_inputs()
    if peers is None:
        abort(
            404,
            description=f"{series.key} has no peers: no other series of its metric "
            "differs from it in exactly one label.",
        )
    try:
        comparison = ev.compare_with_peers(db.get_session(), series, query, peers, exclude)
    except ValueError as problem:
        abort(400, description=f"{series.key}: {problem}")
    return download(comparison, fmt, f"peers-{series.id}", {"label": peers.label})


@bp.get("/explain/peers")
def panel() -> str:
    series, query, peers, exclude = comparison_inputs()
    if peers is None:
        return ""
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
        groups=groups(comparison) if comparison is not None else [],
        data_args=query.args(),
        table_peers=TABLE_PEERS,
        figure_peers=peer_charts.TOP_PEERS,
        panel=panels.Panel("peers", figure=fig, error=None if fig else error),
        error=error,
        peers=peers,
        tz=query.tz,
        tolerance=query.tolerance,
        unit=series.unit,
    )
