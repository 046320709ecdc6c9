"""The Peers panel of the Explain screen: the explained series beside the series of the same
metric whose labels differ in exactly one label.

The panel is its own htmx fragment, requested once the main results are on screen, so a
slow or failing comparison never delays or blanks the other panels. Every peer is fitted
with the explained series' excluded periods (those given on the screen and those stored
for it): a span left out for one host is usually a bad span for its neighbours too.
"""

from __future__ import annotations

import logging
from collections import Counter
from dataclasses import dataclass
from typing import Any

import plotly.graph_objects as go
from flask import Blueprint, request, url_for

from webapp.store import db
from webapp.web import evidence as ev
from webapp.web import figures, palette
from webapp.web.cache import Recent
from webapp.web.downsample import reduce_together
from webapp.web.htmx import render
from webapp.web.params import ExplainQuery

log = logging.getLogger(__name__)

bp = Blueprint("peers", __name__)

FIGURE_POINTS = 1200  # per peer; min/max buckets keep every spike
OTHER_COLOURS = (
    palette.ORANGE,
    palette.SKY_BLUE,
    palette.BLUISH_GREEN,
    palette.BLUE,
    palette.VERMILLION,
    palette.REDDISH_PURPLE,
)
OTHER_DASHES = ("dot", "dash", "dashdot", "longdash", "longdashdot")
_comparisons = Recent(4)


@dataclass(frozen=True)
class Peers:
    """The stored series of the group: the target's row plus its peers, and the label
    they differ in."""

    label: str
    rows: dict[str, Any]  # series key -> SeriesInfo, the target included
    names: dict[str, str]  # series key -> the differing label's value


def find_peers(series: Any) -> Peers | None:
    """The series of the same metric whose labels differ from `series` in exactly one
    label. When peers differ in different labels (some in host, some in region), the label
    shared by most of them wins (ties by name). None when there are no peers."""
    from webapp.store import series as store_series

    mine = dict(series.labels or {})
    if not mine:
        return None
    candidates = [
        row
        for row in store_series.list_series(db.get_session(), q=series.metric)
        if row.metric == series.metric and row.id != series.id and set(row.labels) == set(mine)
    ]
    by_label: dict[str, list[Any]] = {}
    for row in candidates:
        differing = [k for k in mine if row.labels[k] != mine[k]]
        if len(differing) == 1:
            by_label.setdefault(differing[0], []).append(row)
    if not by_label:
        return None
    counts = Counter({label: len(rows) for label, rows in by_label.items()})
    label = min(counts, key=lambda k: (-counts[k], k))
    rows = {series.key: series, **{row.key: row for row in by_label[label]}}
    names = {key: str((row.labels or {}).get(label, key)) for key, row in rows.items()}
    return Peers(label=label, rows=rows, names=names)


def panel_url(series: Any, query: ExplainQuery) -> str | None:
    """Where the Explain screen loads the Peers panel from; None when there are no peers."""
    if find_peers(series) is None:
        return None
    return url_for("peers.panel", **query.args())


def compare(series: Any, query: ExplainQuery, peers: Peers, exclude: list) -> Any:
    from webapp.analysis import compare_peers
    from webapp.store import series as store_series

    session = db.get_session()
    version = (*ev.imports_version(session), tuple(sorted(peers.rows)))
    start = query.window[0] - query.history

    def build() -> Any:
        points = {
            key: store_series.read_series(session, row.id, start, query.window[1])
            for key, row in peers.rows.items()
        }
        return compare_peers(
            series.key,
            points,
            window=query.window,
            history=query.history,
            tolerance=query.tolerance,
            exclude=exclude,
            tz=query.tz,
            unit=series.unit or "",
            names=peers.names,
            label=peers.label,
        )

    return _comparisons.get((series.id, version, query, tuple(exclude)), build)


def deviation_figure(comparison: Any, tz: str, tolerance: float) -> go.Figure:
    """Each peer's deviation in robust sd over the window; the target black and thick,
    the others in Okabe-Ito colours with a dash pattern each, the band edges as ±tolerance."""
    traces: list[dict] = []
    others = 0
    for result in comparison.results:
        if result.deviation is None:
            continue
        frame = reduce_together(result.deviation.to_frame("z"), ["z"], FIGURE_POINTS)
        if result.is_target:
            colour, dash, width = palette.BLACK, "solid", 3.0
        else:
            colour = OTHER_COLOURS[others % len(OTHER_COLOURS)]
            dash = OTHER_DASHES[others % len(OTHER_DASHES)]
            width = 1.5
            others += 1
        name = f"{result.name} (explained)" if result.is_target else result.name
        traces.append(
            figures._line(
                frame.index,
                frame["z"].to_numpy(),
                tz,
                name,
                colour,
                width=width,
                dash=dash,
                hovertemplate="%{y:.1f} sd<extra>" + result.name + "</extra>",
            )
        )
    if not traces:
        raise ValueError("No peer could be explained over this window.")
    # The explained series last, so it is drawn on top of the others.
    traces.sort(key=lambda t: t["line"]["width"])
    edges = [
        {
            "type": "line",
            "xref": "paper",
            "x0": 0,
            "x1": 1,
            "y0": y,
            "y1": y,
            "line": {"color": "#8e8877", "width": 1, "dash": "dot"},
        }
        for y in (-tolerance, tolerance)
    ]
    layout = figures._layout(
        300,
        xaxis=figures._time_axis(tz),
        yaxis=figures._axis(title={"text": "deviation (robust sd)"}),
        shapes=edges,
        hovermode="closest",
    )
    return figures._figure(traces, layout)


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
    from webapp.web.explain import current_query, stored_exclusions

    series, query = current_query(request.args)
    peers = find_peers(series)
    if peers is None:
        return ""
    exclude = [*query.exclude, *stored_exclusions(series.id)]
    comparison, error, fig = None, None, None
    try:
        comparison = compare(series, query, peers, exclude)
        fig = ev.figure_json(deviation_figure(comparison, query.tz, query.tolerance))
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
        panel=ev.Panel("peers", figure=fig, error=None if fig else error),
        error=error,
        peers=peers,
        tz=query.tz,
        tolerance=query.tolerance,
        unit=series.unit,
    )
