"""The look every figure shares: font, axes, frame and plain-dict figures. Every colour
comes from ``palette``."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
from markupsafe import Markup

from webapp.web.charts import palette

if TYPE_CHECKING:  # plotly loads where a Figure is built: the SVG writer needs none
    import plotly.graph_objects as go

#: A figure as plain data: its traces and its layout, before plotly builds a Figure of them
#: (the SVG writer draws straight from this, without loading plotly's object model).
Drawing = tuple[list[dict], dict]

FONT = "system-ui, 'DejaVu Sans', 'Noto Sans', sans-serif"
FONT_STYLE = {"family": FONT, "size": 13, "color": palette.VALUE}
AXIS_STYLE = {"showgrid": True, "gridcolor": palette.GRID, "linecolor": palette.AXIS}


def wall_clock(index: pd.DatetimeIndex, tz: str) -> np.ndarray:
    """UTC instants as wall-clock milliseconds in ``tz`` (what a date axis shows)."""
    local = index.tz_convert(tz).tz_localize(None)
    return local.as_unit("ms").asi8.astype("float64")


def wall_clock_ms(ts: pd.Timestamp, tz: str) -> float:
    return float(wall_clock(pd.DatetimeIndex([ts]), tz)[0])


def axis(**extra: object) -> dict:
    return {**AXIS_STYLE, "ticks": "outside", "zeroline": False, **extra}


def time_axis(tz: str, title: bool = True, **extra: object) -> dict:
    return axis(
        type="date",
        hoverformat="%Y-%m-%d %H:%M",
        title={"text": f"time ({tz})" if title else "", "standoff": 10},
        automargin=True,  # two-line date ticks must not run into the axis title
        **extra,
    )


def layout(height: int, **extra: object) -> dict:
    return {
        "template": {},
        "height": height,
        "margin": {"l": 64, "r": 16, "t": 40, "b": 48},
        "font": FONT_STYLE,
        "paper_bgcolor": palette.PAPER,
        "plot_bgcolor": palette.PAPER,
        "hovermode": "x unified",
        "legend": {"orientation": "h", "x": 0, "y": 1.0, "yanchor": "bottom", "font": {"size": 12}},
        "dragmode": "zoom",
        **extra,
    }


def figure(traces: list[dict], layout: dict) -> go.Figure:
    """A Figure from plain dicts, skipping plotly's per-attribute validation (the builders
    here only use attributes they were written against; it is the slow part)."""
    import plotly.graph_objects as go

    return go.Figure(data=traces, layout=layout, _validate=False)


def line(
    index: pd.DatetimeIndex, values: np.ndarray, tz: str, name: str, colour: str, **kw: object
) -> dict:
    width = kw.pop("width", 1.6)
    dash = kw.pop("dash", "solid")
    return {
        "type": "scatter",
        "x": wall_clock(index, tz),
        "y": np.asarray(values, dtype="float64"),
        "name": name,
        "mode": "lines",
        "line": {"color": colour, "width": width, "dash": dash},
        "connectgaps": False,
        **kw,
    }


#: How a figure is drawn in a browser (static/explain.js keeps the same object): nothing
#: leaves the machine, so no share-to-a-hosted-service button, no logo link and no
#: destination address for one, all of which plotly.js offers by default.
PLOT_CONFIG = {
    "responsive": True,
    "displaylogo": False,
    "showSendToCloud": False,
    "plotlyServerURL": "",
    "modeBarButtonsToRemove": ["select2d", "lasso2d", "toImage", "sendChartToCloud"],
}


def figure_json(fig: go.Figure) -> Markup:
    """A figure's JSON, safe inside a ``<script>`` element (no ``<``, ``>`` or ``&`` left
    that could end it)."""
    text = fig.to_json()
    return Markup(text.replace("&", "\\u0026").replace("<", "\\u003c").replace(">", "\\u003e"))
