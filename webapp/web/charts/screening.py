"""The Screening screen's figures: a timeline of onsets, and one small figure per top series."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from webapp.web.charts import palette, style
from webapp.web.charts.explain import _band_traces, _rows

SIDE_COLOUR = {"above": palette.OUT_OF_BAND, "below": palette.BLUE}
TIMELINE_ROWS = 30  # series drawn on the timeline, in onset order
SMALL_POINTS = 400


def mark_lines(marks: Sequence[tuple[pd.Timestamp, str]], tz: str) -> list[dict]:
    return [
        {
            "type": "line",
            "xref": "x",
            "yref": "paper",
            "x0": style.wall_clock_ms(pd.Timestamp(at), tz),
            "x1": style.wall_clock_ms(pd.Timestamp(at), tz),
            "y0": 0,
            "y1": 1,
            "line": {"color": palette.VALUE, "width": 1.2, "dash": "dot"},
        }
        for at, _ in marks
    ]


def timeline_figure(
    result: Any, tz: str, marks: Sequence[tuple[pd.Timestamp, str]] = ()
) -> go.Figure:
    """One row per explained series that left its band, earliest onset at the top: its time
    outside the band as a thick bar (vermillion above, blue below) and its onset as a
    diamond. Raises ValueError when no series left its band."""
    onsets = result.onsets.head(TIMELINE_ROWS)
    if onsets.empty:
        raise ValueError("No series left its expected band in this window: no onsets to draw.")
    traces: list[dict] = []
    for row in onsets.itertuples(index=False):
        colour = SIDE_COLOUR.get(row.side, palette.VALUE)
        exp = result.explanations.get(row.key)
        if exp is not None:
            inside = exp.frame[exp.frame["in_window"].to_numpy(dtype=bool)]
            flags = inside["outside"].to_numpy(dtype=bool)
            y = np.where(flags, row.key, None)
            traces.append(
                {
                    "type": "scatter",
                    "x": style.wall_clock(inside.index, tz),
                    "y": y,
                    "mode": "lines",
                    "line": {"color": palette.rgba(colour, 0.55), "width": 9},
                    "connectgaps": False,
                    "showlegend": False,
                    "hoverinfo": "skip",
                }
            )
        traces.append(
            {
                "type": "scatter",
                "x": [style.wall_clock_ms(row.onset, tz)],
                "y": [row.key],
                "mode": "markers",
                "marker": {
                    "symbol": "diamond",
                    "size": 11,
                    "color": colour,
                    "line": {"color": palette.MARKER_EDGE, "width": 1},
                },
                "showlegend": False,
                "hovertemplate": f"left its band %{{x|%H:%M}} ({row.side})<extra>{row.key}</extra>",
            }
        )
    order = list(onsets["key"])
    layout = style.layout(
        max(220, 60 + 26 * len(order)),
        xaxis=style.time_axis(
            tz,
            range=[
                style.wall_clock_ms(result.window[0], tz),
                style.wall_clock_ms(result.window[1], tz),
            ],
        ),
        yaxis=style.axis(
            categoryorder="array",
            categoryarray=order[::-1],
            automargin=True,
            showgrid=False,
        ),
        shapes=mark_lines(marks, tz),
        hovermode="closest",
    )
    layout["margin"]["l"] = 16
    return style.figure(traces, layout)


def small_figure(exp: Any, tz: str, unit: str) -> go.Figure:
    """One series in the window against its expected band, small (no legend)."""
    frame = exp.frame[exp.frame["in_window"].to_numpy(dtype=bool)]
    rows = _rows(frame, ["lower", "upper", "expected", "value"], SMALL_POINTS, None)
    traces = _band_traces(rows, "lower", "upper", tz, "expected band", palette.BAND, 0.32)
    traces.append(style.line(rows.index, rows["value"], tz, "value", palette.VALUE, width=1.4))
    layout = style.layout(
        170,
        xaxis=style.time_axis(tz, title=False),
        yaxis=style.axis(title={"text": unit or "value"}),
        showlegend=False,
    )
    layout["margin"] = {"l": 56, "r": 8, "t": 8, "b": 32}
    return style.figure(traces, layout)
