"""The Explain screen's plotly figures (band, past-weeks overlay, components), built on the
server from plain DataFrames. (Over 400 lines: the three figures share their reduction and
shading helpers, kept beside them.)

They take the explanation's frame (and the past-weeks overlay) as stored, so a saved
explanation draws from its frozen frame exactly as it drew when it was saved. Times are
shown as wall-clock time in the reader's time zone; every trace is reduced for display with
its spikes kept (:mod:`webapp.web.charts.downsample`), and a narrower ``view`` is drawn in full
detail, which is how the page fetches finer data when the reader zooms in.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from webapp.web.charts import palette, style
from webapp.web.charts.downsample import clip, minmax_indices, reduce_together

if TYPE_CHECKING:
    import plotly.graph_objects as go

DEFAULT_POINTS = 2000
Window = tuple[pd.Timestamp, pd.Timestamp]


def from_wall_clock(text: str, tz: str) -> pd.Timestamp:
    """A wall-clock time as plotly reports it (``2026-03-01 14:05:30.5``) back to UTC."""
    naive = pd.Timestamp(text)
    if naive.tzinfo is not None:
        return naive.tz_convert("UTC")
    local = naive.tz_localize(tz, ambiguous=True, nonexistent="shift_forward")
    return local.tz_convert("UTC")


def window_of(frame: pd.DataFrame) -> Window | None:
    """First and last timestamp flagged ``in_window``."""
    if "in_window" not in frame or not frame["in_window"].any():
        return None
    inside = frame.index[frame["in_window"].to_numpy(dtype=bool)]
    return inside[0], inside[-1]


def default_view(frame: pd.DataFrame) -> Window | None:
    """The window with as much context before it as it is long (at least six hours)."""
    window = window_of(frame)
    if window is None:
        return None
    start, end = window
    context = max(end - start, pd.Timedelta(hours=6))
    return max(frame.index[0], start - context), end


def _points(
    frame: pd.DataFrame, column: str, n_out: int, view: Window | None
) -> tuple[pd.DatetimeIndex, np.ndarray]:
    """One column reduced: ``n_out`` points inside ``view``, half as many outside it."""
    y_all = frame[column].to_numpy(dtype="float64", na_value=np.nan)
    x_all = frame.index.asi8
    if view is None:
        at = minmax_indices(x_all, y_all, n_out)
    else:
        inside = (frame.index >= view[0]) & (frame.index <= view[1])
        parts = []
        for mask, budget in ((inside, n_out), (~inside, n_out // 2)):
            where = np.flatnonzero(mask)
            parts.append(where[minmax_indices(x_all[where], y_all[where], budget)])
        at = np.unique(np.concatenate(parts))
    return frame.index[at], y_all[at]


def _rows(frame: pd.DataFrame, columns: list[str], n_out: int, view: Window | None) -> pd.DataFrame:
    if view is None:
        return reduce_together(frame, columns, n_out)
    inside = (frame.index >= view[0]) & (frame.index <= view[1])
    return pd.concat(
        [
            reduce_together(frame[inside], columns, n_out),
            reduce_together(frame[~inside], columns, n_out // 2),
        ]
    ).sort_index()


def _band_traces(
    rows: pd.DataFrame,
    low: str,
    high: str,
    tz: str,
    name: str,
    colours: tuple[str, str],
    alpha: float,
    **kw: object,
) -> list[dict]:
    """A filled band between two columns; ``colours`` is (edge line, fill)."""
    colour, fill = colours
    x = style.wall_clock(rows.index, tz)
    edge = {"color": colour, "width": 0.6}
    common = {"type": "scatter", "x": x, "mode": "lines", "line": edge, "name": name}
    return [
        {
            **common,
            "y": rows[low].to_numpy(dtype="float64", na_value=np.nan),
            "legendgroup": name,
            "showlegend": False,
            "hoverinfo": "skip",
            **kw,
        },
        {
            **common,
            "y": rows[high].to_numpy(dtype="float64", na_value=np.nan),
            "fill": "tonexty",
            "fillcolor": palette.rgba(fill, alpha),
            "legendgroup": name,
            "hoverinfo": "skip",
            **kw,
        },
    ]


def _out_of_band_markers(
    frame: pd.DataFrame,
    value: str,
    tz: str,
    n_out: int,
    above: str,
    below: str,
    view: Window | None = None,
    **kw: object,
) -> list[dict]:
    """Triangles pointing up above the band and down below it, both in vermillion: every
    out-of-band sample inside ``view`` (up to ``n_out``), a reduced set outside it."""
    traces = []
    for name, mask, symbol in (
        ("above the band", frame[value] > frame[above], "triangle-up"),
        ("below the band", frame[value] < frame[below], "triangle-down"),
    ):
        hits = frame.loc[mask.fillna(False).to_numpy(dtype=bool), value]
        if hits.empty:
            continue
        x_all, y_all = hits.index.asi8, hits.to_numpy(dtype="float64")
        if view is None:
            at = minmax_indices(x_all, y_all, n_out)
        else:
            inside = (hits.index >= view[0]) & (hits.index <= view[1])
            parts = []
            for where, budget in ((np.flatnonzero(inside), n_out), (np.flatnonzero(~inside), 40)):
                parts.append(where[minmax_indices(x_all[where], y_all[where], budget)])
            at = np.unique(np.concatenate(parts))
        hits = hits.iloc[at]
        traces.append(
            {
                "type": "scatter",
                "x": style.wall_clock(hits.index, tz),
                "y": hits.to_numpy(dtype="float64"),
                "name": name,
                "mode": "markers",
                "marker": {
                    "symbol": symbol,
                    "size": 8,
                    "color": palette.OUT_OF_BAND,
                    "line": {"color": palette.MARKER_EDGE, "width": 0.8},
                },
                **kw,
            }
        )
    return traces


def stretches(mask: pd.Series, max_gap: int = 1) -> list[Window]:
    """Runs of True in a boolean series as (first, last) timestamps; runs separated by at
    most ``max_gap`` False samples are merged."""
    flags = mask.fillna(False).to_numpy(dtype=bool)
    if not flags.any():
        return []
    where = np.flatnonzero(flags)
    breaks = np.flatnonzero(np.diff(where) > max_gap + 1)
    starts = np.concatenate([[where[0]], where[breaks + 1]])
    ends = np.concatenate([where[breaks], [where[-1]]])
    return [(mask.index[s], mask.index[e]) for s, e in zip(starts, ends, strict=True)]


def _shade(span: Window, tz: str, colour: str, alpha: float, **kw: object) -> dict:
    return {
        "type": "rect",
        "xref": "x",
        "yref": "paper",
        "x0": style.wall_clock_ms(span[0], tz),
        "x1": style.wall_clock_ms(span[1], tz),
        "y0": 0,
        "y1": 1,
        "fillcolor": palette.rgba(colour, alpha),
        "line": {"width": 0},
        "layer": "below",
        **kw,
    }


def _range(view: Window | None, tz: str) -> dict:
    if view is None or view[0] >= view[1]:
        return {}
    return {"range": [style.wall_clock_ms(view[0], tz), style.wall_clock_ms(view[1], tz)]}


def band_figure(
    frame: pd.DataFrame,
    tz: str,
    unit: str | None,
    title: str,
    *,
    view: Window | None = None,
    marks: Sequence[tuple[pd.Timestamp, str]] = (),
    n_out: int = DEFAULT_POINTS,
    second: Any = None,
) -> go.Figure:
    """The band figure (see :func:`band_drawing`) as a plotly Figure."""
    drawing = band_drawing(
        frame, tz, unit, title, view=view, marks=marks, n_out=n_out, second=second
    )
    return style.figure(*drawing)


def band_drawing(
    frame: pd.DataFrame,
    tz: str,
    unit: str | None,
    title: str,
    *,
    view: Window | None = None,
    marks: Sequence[tuple[pd.Timestamp, str]] = (),
    n_out: int = DEFAULT_POINTS,
    second: Any = None,
) -> style.Drawing:
    """The value against its expected band; out-of-band samples as vermillion triangles
    (pointing the way they left the band), out-of-band stretches inside the window shaded
    vermillion, the window itself tinted yellow, page times as dotted lines; `second` (with
    key, unit and values) drawn in orange on its own right-hand axis."""
    view = view or default_view(frame)
    band = _rows(frame, ["lower", "upper", "expected"], n_out, view)
    traces = _band_traces(band, "lower", "upper", tz, "expected band", palette.BAND, 0.32)
    traces.append(
        style.line(band.index, band["expected"], tz, "expected", palette.EXPECTED, dash="dash")
    )
    x, y = _points(frame, "value", n_out, view)
    traces.append(style.line(x, y, tz, "value", palette.VALUE, width=1.8))
    traces.extend(_out_of_band_markers(frame, "value", tz, n_out // 2, "upper", "lower", view))
    shapes, annotations = [], []
    window = window_of(frame)
    if window is not None:
        shapes.append(_shade(window, tz, palette.WINDOW, 0.22))
        inside = frame[frame["in_window"].to_numpy(dtype=bool)]
        shapes.extend(
            _shade(span, tz, palette.OUT_OF_BAND, 0.14)
            for span in stretches(inside["outside"])[:200]
        )
    for at, label in marks:
        x_mark = style.wall_clock_ms(pd.Timestamp(at), tz)
        shapes.append(
            {
                "type": "line",
                "xref": "x",
                "yref": "paper",
                "x0": x_mark,
                "x1": x_mark,
                "y0": 0,
                "y1": 1,
                "line": {"color": palette.VALUE, "width": 1.2, "dash": "dot"},
            }
        )
        annotations.append(
            {
                "x": x_mark,
                "xref": "x",
                "y": 1,
                "yref": "paper",
                "text": label,
                "showarrow": False,
                "xanchor": "left",
                "yanchor": "top",
                "font": {"size": 11},
                "bgcolor": palette.LEGEND_BACKGROUND,
            }
        )
    layout = style.layout(
        430,
        title={
            "text": title,
            "x": 0,
            "xanchor": "left",
            "y": 0.99,
            "yanchor": "top",
            "font": {"size": 13},
        },
        xaxis=style.time_axis(tz, **_range(view, tz)),
        yaxis=style.axis(title={"text": unit or "value"}),
        shapes=shapes,
        annotations=annotations,
    )
    layout["margin"]["t"] = 64
    layout["legend"]["y"] = 1.01
    if second is not None:
        traces.append(second_trace(second, tz, n_out, view))
        layout["yaxis2"] = style.axis(
            title={"text": f"{second.key} ({second.unit})" if second.unit else second.key},
            overlaying="y",
            side="right",
            showgrid=False,
            automargin=True,
        )
        layout["margin"]["r"] = 64
    return traces, layout


def second_trace(second: Any, tz: str, n_out: int, view: Window | None) -> dict:
    frame = second.values.to_frame("value")
    x, y = _points(frame, "value", n_out, view)
    return style.line(x, y, tz, f"{second.key} (right axis)", palette.ORANGE, width=1.3, yaxis="y2")


def overlay_figure(
    overlay: pd.DataFrame,
    frame: pd.DataFrame,
    tz: str,
    unit: str | None,
    *,
    n_out: int = DEFAULT_POINTS,
) -> go.Figure:
    """The past-weeks figure (see :func:`overlay_drawing`) as a plotly Figure."""
    return style.figure(*overlay_drawing(overlay, frame, tz, unit, n_out=n_out))


def overlay_drawing(
    overlay: pd.DataFrame,
    frame: pd.DataFrame,
    tz: str,
    unit: str | None,
    *,
    n_out: int = DEFAULT_POINTS,
) -> style.Drawing:
    """Each earlier week laid over the window at the same hour-of-week, their p10–p90
    spread and median, and this window's value on top."""
    overlay = overlay.sort_index()
    traces: list[dict] = []
    if {"p10", "p90"} <= set(overlay.columns):
        spread = reduce_together(overlay, ["p10", "p90"], n_out)
        traces.extend(
            _band_traces(
                spread, "p10", "p90", tz, "p10–p90 of past weeks", palette.OVERLAY_BAND, 0.22
            )
        )
    weeks = sorted((c for c in overlay.columns if c.startswith("week_")), key=lambda c: -int(c[5:]))
    for i, column in enumerate(weeks):
        x, y = _points(overlay, column, n_out, None)
        label = f"week {column[5:].replace('-', '−')}"
        traces.append(
            style.line(
                x,
                y,
                tz,
                "past weeks" if i == 0 else label,
                palette.PAST_WEEK,
                width=0.9,
                legendgroup="past weeks",
                showlegend=i == 0,
                hovertemplate=f"{label}: %{{y:.4g}}<extra></extra>",
            )
        )
    if "median" in overlay:
        x, y = _points(overlay, "median", n_out, None)
        median = style.line(x, y, tz, "median of past weeks", palette.OVERLAY_MEDIAN, width=2.2)
        traces.append(median)
    window = window_of(frame)
    if window is not None:
        x, y = _points(clip(frame, *window), "value", n_out, None)
        traces.append(style.line(x, y, tz, "this window", palette.VALUE, width=2))
    layout = style.layout(
        360, xaxis=style.time_axis(tz), yaxis=style.axis(title={"text": unit or "value"})
    )
    return traces, layout


def seasonal_columns(frame: pd.DataFrame) -> list[str]:
    columns = [c for c in frame.columns if c.startswith("seasonal_")]
    if not columns and "seasonal" in frame and frame["seasonal"].abs().sum() > 0:
        columns = ["seasonal"]
    return columns


def _stacked_axes(titles: list[str], tz: str, unit: str | None, view: Window | None) -> dict:
    """One y axis per row, top to bottom, all sharing the bottom time axis."""
    rows = len(titles)
    gap = 0.07
    height = (1 - gap * (rows - 1)) / rows
    layout: dict = {"annotations": []}
    for i, title in enumerate(titles):
        top = 1 - i * (height + gap)
        suffix = "" if i == 0 else str(i + 1)
        layout[f"yaxis{suffix}"] = style.axis(
            domain=[max(0.0, top - height), top],
            title={"text": unit or "value", "font": {"size": 11}},
        )
        layout[f"xaxis{suffix}"] = style.time_axis(
            tz,
            title=i == rows - 1,
            anchor=f"y{suffix}",
            showticklabels=i == rows - 1,
            **({"matches": "x"} if i else _range(view, tz)),
        )
        layout["annotations"].append(
            {
                "text": title,
                "x": 0,
                "xref": "paper",
                "xanchor": "left",
                "y": top,
                "yref": "paper",
                "yanchor": "bottom",
                "showarrow": False,
                "font": {"size": 12},
            }
        )
    return layout


def components_figure(
    frame: pd.DataFrame,
    tz: str,
    unit: str | None,
    *,
    view: Window | None = None,
    n_out: int = DEFAULT_POINTS,
) -> go.Figure:
    """Trend, each seasonal term and the residual stacked on one time axis; the residual
    is drawn inside the band's half-width, with the samples beyond it marked."""
    seasonal = seasonal_columns(frame)
    titles = ["trend"] + [f"seasonal, period {c.removeprefix('seasonal_')}" for c in seasonal]
    titles.append("residual, with the band's half-width")
    rows = len(titles)
    n_row = max(200, n_out // 2)

    def on_row(trace: dict, row: int) -> dict:
        suffix = "" if row == 1 else str(row)
        return {**trace, "xaxis": f"x{suffix}", "yaxis": f"y{suffix}"}

    x, y = _points(frame, "trend", n_row, view)
    traces = [on_row(style.line(x, y, tz, "trend", palette.TREND, width=1.8), 1)]
    for i, column in enumerate(seasonal, start=2):
        x, y = _points(frame, column, n_row, view)
        colour = palette.seasonal_colour(i - 2)
        traces.append(on_row(style.line(x, y, tz, titles[i - 1], colour, width=1.3), i))
    half = (frame["upper"] - frame["lower"]) / 2
    with_half = frame[["residual"]].assign(half=half, neg_half=-half)
    band = _rows(with_half, ["neg_half", "half"], n_row, view)
    traces.extend(
        on_row(t, rows)
        for t in _band_traces(band, "neg_half", "half", tz, "band half-width", palette.BAND, 0.28)
    )
    x, y = _points(frame, "residual", n_row, view)
    traces.append(on_row(style.line(x, y, tz, "residual", palette.RESIDUAL, width=1.1), rows))
    window = window_of(frame)
    marked = clip(with_half, *window) if window is not None and view is None else with_half
    traces.extend(
        on_row(t, rows)
        for t in _out_of_band_markers(marked, "residual", tz, n_row // 2, "half", "neg_half", view)
    )
    layout = style.layout(
        165 * rows + 70, showlegend=False, **_stacked_axes(titles, tz, unit, view)
    )
    layout["margin"]["t"] = 28
    return style.figure(traces, layout)
