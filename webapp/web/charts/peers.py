"""The Peers panel's figure: deviations from the expected band, in robust sd.

A fleet of hundreds of hosts cannot be read as one line each. The explained series and the
few peers that went furthest are drawn as lines (`shown_peers`); when more peers were
compared, the rest of the fleet is drawn as one envelope: at each step the median of every
compared peer's deviation and the range of their middle 80 %.
"""

from __future__ import annotations

import warnings
from typing import Any

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from webapp.web.charts import palette, style
from webapp.web.charts.downsample import reduce_together

FIGURE_POINTS = 1200  # per peer; min/max buckets keep every spike
TOP_PEERS = 6  # peers drawn as their own line beside the explained series
OTHER_COLOURS = palette.LINES
OTHER_DASHES = ("dot", "dash", "dashdot", "longdash", "longdashdot")


def furthest_first(result: Any) -> tuple:
    """Peers that left their bands first, then by how far they went."""
    peak = abs(result.peak_deviation_sd) if result.peak_deviation_sd is not None else -1.0
    return (not result.left_band, -peak, result.key)


def shown_peers(comparison: Any, top: int = TOP_PEERS) -> list[Any]:
    """The explained series and the `top` compared peers that went furthest."""
    others = [r for r in comparison.others if r.deviation is not None]
    return [comparison.results[0], *sorted(others, key=furthest_first)[:top]]


def fleet_envelope(comparison: Any, tz: str) -> list[dict]:
    """The median and the 10th-90th percentile range of every compared peer's deviation."""
    others = [r.deviation for r in comparison.others if r.deviation is not None]
    matrix = pd.concat(others, axis=1).to_numpy(dtype="float64")
    index = others[0].index
    with warnings.catch_warnings():  # a step where no peer has a value is simply a gap
        warnings.simplefilter("ignore", RuntimeWarning)
        low, mid, high = np.nanpercentile(matrix, [10, 50, 90], axis=1)
    frame = pd.DataFrame({"low": low, "mid": mid, "high": high}, index=index)
    frame = reduce_together(frame, ["low", "mid", "high"], FIGURE_POINTS)
    name = f"middle 80 % of the {len(others)} peers"
    x = style.wall_clock(frame.index, tz)
    edge = {"color": palette.PAST_WEEK, "width": 0.5}
    common = {"type": "scatter", "x": x, "mode": "lines", "line": edge, "legendgroup": name}
    return [
        {**common, "y": frame["low"].to_numpy(), "showlegend": False, "hoverinfo": "skip"},
        {
            **common,
            "y": frame["high"].to_numpy(),
            "fill": "tonexty",
            "fillcolor": palette.rgba(palette.PAST_WEEK, 0.25),
            "name": name,
            "hoverinfo": "skip",
        },
        style.line(
            frame.index,
            frame["mid"].to_numpy(),
            tz,
            "median of the peers",
            palette.PAST_WEEK,
            width=1.5,
            hovertemplate="%{y:.1f} sd<extra>median of the peers</extra>",
        ),
    ]


def deviation_figure(comparison: Any, tz: str, tolerance: float) -> go.Figure:
    """Each shown peer's deviation in robust sd over the window; the target black and thick,
    the others in Okabe-Ito colours with a dash pattern each, the rest of a fleet as an
    envelope, the band edges as ±tolerance."""
    traces: list[dict] = []
    shown = shown_peers(comparison)
    compared = sum(r.deviation is not None for r in comparison.others)
    if compared > len(shown) - 1:
        traces.extend(fleet_envelope(comparison, tz))
    others = 0
    lines = []
    for result in shown:
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
        lines.append(
            style.line(
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
    if not lines:
        raise ValueError("No peer could be explained over this window.")
    # The explained series last, so it is drawn on top of the others.
    lines.sort(key=lambda t: t["line"]["width"])
    edges = [
        {
            "type": "line",
            "xref": "paper",
            "x0": 0,
            "x1": 1,
            "y0": y,
            "y1": y,
            "line": {"color": palette.AXIS, "width": 1, "dash": "dot"},
        }
        for y in (-tolerance, tolerance)
    ]
    layout = style.layout(
        300,
        xaxis=style.time_axis(tz),
        yaxis=style.axis(title={"text": "deviation (robust sd)"}),
        shapes=edges,
        hovermode="closest",
    )
    return style.figure(traces + lines, layout)
