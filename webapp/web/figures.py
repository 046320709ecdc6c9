"""Plotly figures built on the server from plain DataFrames.

They take the explanation's frame (and the past-weeks overlay) as stored, so a saved
explanation draws from its frozen frame exactly as it drew when it was saved. Times are
shown as wall-clock time in the reader's time zone; every trace is reduced for display with
its spikes kept (:mod:`webapp.web.downsample`), and a narrower ``view`` is drawn in full
detail, which is how the page fetches finer data when the reader zooms in.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from webapp.web import palette
from webapp.web.downsample import clip, minmax_indices, reduce_together

DEFAULT_POINTS = 2000
Window = tuple[pd.Timestamp, pd.Timestamp]

FONT = "system-ui, 'DejaVu Sans', 'Noto Sans', sans-serif"


def wall_clock(index: pd.DatetimeIndex, tz: str) -> np.ndarray:
    """UTC instants as wall-clock milliseconds in ``tz`` (what a date axis shows)."""
    local = index.tz_convert(tz).tz_localize(None)
    return local.as_unit("ms").asi8.astype("float64")


def wall_clock_ms(ts: pd.Timestamp, tz: str) -> float:
    return float(wall_clock(pd.DatetimeIndex([ts]), tz)[0])


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


def _base_layout(fig: go.Figure, tz: str, unit: str | None, height: int) -> None:
    fig.update_layout(
        template="none",
        height=height,
        margin={"l": 64, "r": 16, "t": 36, "b": 48},
        font={"family": FONT, "size": 13, "color": palette.VALUE},
        paper_bgcolor="#ffffff",
        plot_bgcolor="#ffffff",
        hovermode="x unified",
        legend={"orientation": "h", "x": 0, "y": 1.02, "yanchor": "bottom", "font": {"size": 12}},
        dragmode="zoom",
    )
    fig.update_xaxes(
        type="date",
        showgrid=True,
        gridcolor="#ece8dd",
        linecolor="#8e8877",
        ticks="outside",
        hoverformat="%Y-%m-%d %H:%M",
    )
    fig.update_yaxes(
        showgrid=True, gridcolor="#ece8dd", zeroline=False, linecolor="#8e8877", ticks="outside"
    )
    fig.update_xaxes(title_text=f"time ({tz})", row=None)
    fig.update_layout(yaxis_title_text=unit or "value")


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


def _line(
    index: pd.DatetimeIndex, values: np.ndarray, tz: str, name: str, colour: str, **kw: object
) -> go.Scatter:
    width = kw.pop("width", 1.6)
    dash = kw.pop("dash", "solid")
    return go.Scatter(
        x=wall_clock(index, tz),
        y=np.asarray(values, dtype="float64"),
        name=name,
        mode="lines",
        line={"color": colour, "width": width, "dash": dash},
        connectgaps=False,
        **kw,
    )


def _band_traces(
    rows: pd.DataFrame, low: str, high: str, tz: str, name: str, colour: str, alpha: float
) -> list[go.Scatter]:
    x = wall_clock(rows.index, tz)
    edge = {"color": colour, "width": 0.6}
    return [
        go.Scatter(
            x=x,
            y=rows[low].to_numpy(dtype="float64", na_value=np.nan),
            mode="lines",
            line=edge,
            name=name,
            legendgroup=name,
            showlegend=False,
            hoverinfo="skip",
        ),
        go.Scatter(
            x=x,
            y=rows[high].to_numpy(dtype="float64", na_value=np.nan),
            mode="lines",
            line=edge,
            fill="tonexty",
            fillcolor=palette.rgba(colour, alpha),
            name=name,
            legendgroup=name,
            hoverinfo="skip",
        ),
    ]


def _out_of_band_markers(
    frame: pd.DataFrame, value: str, tz: str, n_out: int, above: str, below: str
) -> list[go.Scatter]:
    """Triangles pointing up above the band and down below it, both in vermillion."""
    traces = []
    for name, mask, symbol in (
        ("above the band", frame[value] > frame[above], "triangle-up"),
        ("below the band", frame[value] < frame[below], "triangle-down"),
    ):
        hits = frame.loc[mask.fillna(False).to_numpy(dtype=bool), value]
        if hits.empty:
            continue
        at = minmax_indices(hits.index.asi8, hits.to_numpy(dtype="float64"), n_out)
        hits = hits.iloc[at]
        traces.append(
            go.Scatter(
                x=wall_clock(hits.index, tz),
                y=hits.to_numpy(dtype="float64"),
                name=name,
                mode="markers",
                marker={
                    "symbol": symbol,
                    "size": 9,
                    "color": palette.OUT_OF_BAND,
                    "line": {"color": "#5a2600", "width": 0.8},
                },
            )
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


def _shade(fig: go.Figure, span: Window, tz: str, colour: str, alpha: float, **kw: object) -> None:
    fig.add_vrect(
        x0=wall_clock_ms(span[0], tz),
        x1=wall_clock_ms(span[1], tz),
        fillcolor=palette.rgba(colour, alpha),
        line_width=0,
        layer="below",
        **kw,
    )


def _set_view(fig: go.Figure, view: Window | None, tz: str) -> None:
    if view is not None and view[0] < view[1]:
        fig.update_xaxes(range=[wall_clock_ms(view[0], tz), wall_clock_ms(view[1], tz)])


def band_figure(
    frame: pd.DataFrame,
    tz: str,
    unit: str | None,
    title: str,
    *,
    view: Window | None = None,
    marks: Sequence[tuple[pd.Timestamp, str]] = (),
    n_out: int = DEFAULT_POINTS,
) -> go.Figure:
    """The value against its expected band; out-of-band points as vermillion triangles,
    out-of-band stretches inside the window shaded, the window itself tinted yellow."""
    view = view or default_view(frame)
    fig = go.Figure()
    band = _rows(frame, ["lower", "upper", "expected"], n_out, view)
    fig.add_traces(
        _band_traces(band, "lower", "upper", tz, "expected band", palette.BAND_EDGE, 0.32)
    )
    fig.add_trace(
        _line(band.index, band["expected"], tz, "expected", palette.EXPECTED, dash="dash")
    )
    x, y = _points(frame, "value", n_out, view)
    fig.add_trace(_line(x, y, tz, "value", palette.VALUE, width=1.8))
    fig.add_traces(_out_of_band_markers(frame, "value", tz, n_out // 4, "upper", "lower"))
    window = window_of(frame)
    if window is not None:
        _shade(fig, window, tz, palette.WINDOW, 0.22)
        inside = frame[frame["in_window"].to_numpy(dtype=bool)]
        for span in stretches(inside["outside"])[:200]:
            _shade(fig, span, tz, palette.OUT_OF_BAND, 0.14)
    for at, label in marks:
        fig.add_vline(
            x=wall_clock_ms(pd.Timestamp(at), tz),
            line={"color": palette.VALUE, "width": 1.2, "dash": "dot"},
            annotation_text=label,
            annotation_position="top left",
            annotation_font_size=11,
        )
    _base_layout(fig, tz, unit, height=420)
    fig.update_layout(title={"text": title, "x": 0, "font": {"size": 14}})
    _set_view(fig, view, tz)
    return fig


def overlay_figure(
    overlay: pd.DataFrame,
    frame: pd.DataFrame,
    tz: str,
    unit: str | None,
    *,
    n_out: int = DEFAULT_POINTS,
) -> go.Figure:
    """Each earlier week laid over the window at the same hour-of-week, their p10–p90
    spread and median, and this window's value on top."""
    fig = go.Figure()
    overlay = overlay.sort_index()
    if {"p10", "p90"} <= set(overlay.columns):
        spread = reduce_together(overlay, ["p10", "p90"], n_out)
        fig.add_traces(
            _band_traces(spread, "p10", "p90", tz, "p10–p90 of past weeks", palette.ORANGE, 0.22)
        )
    weeks = sorted((c for c in overlay.columns if c.startswith("week_")), key=lambda c: -int(c[5:]))
    for i, column in enumerate(weeks):
        x, y = _points(overlay, column, n_out, None)
        label = f"week {column[5:].replace('-', '−')}"
        fig.add_trace(
            _line(
                x,
                y,
                tz,
                label,
                "#9a958a",
                width=0.9,
                legendgroup="past weeks",
                showlegend=i == 0,
                legendgrouptitle=None,
                hovertemplate=f"{label}: %{{y:.4g}}<extra></extra>",
            ).update(name="past weeks" if i == 0 else label)
        )
    if "median" in overlay:
        x, y = _points(overlay, "median", n_out, None)
        fig.add_trace(_line(x, y, tz, "median of past weeks", palette.ORANGE, width=2.2))
    window = window_of(frame)
    if window is not None:
        now = clip(frame, *window)
        x, y = _points(now, "value", n_out, None)
        fig.add_trace(_line(x, y, tz, "this window", palette.VALUE, width=2))
    _base_layout(fig, tz, unit, height=360)
    return fig


def seasonal_columns(frame: pd.DataFrame) -> list[str]:
    columns = [c for c in frame.columns if c.startswith("seasonal_")]
    if not columns and "seasonal" in frame and frame["seasonal"].abs().sum() > 0:
        columns = ["seasonal"]
    return columns


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
    fig = make_subplots(
        rows=rows, cols=1, shared_xaxes=True, vertical_spacing=0.06, subplot_titles=titles
    )
    n_row = max(200, n_out // 2)
    x, y = _points(frame, "trend", n_row, view)
    fig.add_trace(_line(x, y, tz, "trend", palette.TREND, width=1.8), row=1, col=1)
    for i, column in enumerate(seasonal, start=2):
        x, y = _points(frame, column, n_row, view)
        colour = palette.seasonal_colour(i - 2)
        fig.add_trace(_line(x, y, tz, titles[i - 1], colour, width=1.3), row=i, col=1)
    half = ((frame["upper"] - frame["lower"]) / 2).rename("half")
    with_half = frame[["residual"]].assign(half=half, neg_half=-half)
    band = _rows(with_half, ["neg_half", "half"], n_row, view)
    for trace in _band_traces(
        band, "neg_half", "half", tz, "band half-width", palette.BAND_EDGE, 0.28
    ):
        fig.add_trace(trace, row=rows, col=1)
    x, y = _points(frame, "residual", n_row, view)
    fig.add_trace(_line(x, y, tz, "residual", palette.RESIDUAL, width=1.1), row=rows, col=1)
    for trace in _out_of_band_markers(with_half, "residual", tz, n_row // 4, "half", "neg_half"):
        fig.add_trace(trace.update(showlegend=False), row=rows, col=1)
    _base_layout(fig, tz, unit, height=170 * rows + 80)
    fig.update_layout(showlegend=False, yaxis_title_text=None)
    fig.update_annotations(font_size=12, x=0, xanchor="left")
    for row in range(1, rows + 1):
        fig.update_yaxes(title_text=unit or "value", title_font_size=11, row=row, col=1)
        fig.update_xaxes(title_text=f"time ({tz})" if row == rows else None, row=row, col=1)
    _set_view(fig, view, tz)
    return fig
