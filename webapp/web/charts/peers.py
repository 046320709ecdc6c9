"""The Peers panel's figure: each peer's deviation from its own band, in robust sd."""

from __future__ import annotations

from typing import Any

import plotly.graph_objects as go

from webapp.web.charts import palette, style
from webapp.web.charts.downsample import reduce_together

FIGURE_POINTS = 1200  # per peer; min/max buckets keep every spike
OTHER_COLOURS = palette.LINES
OTHER_DASHES = ("dot", "dash", "dashdot", "longdash", "longdashdot")


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
    return style.figure(traces, layout)
