"""Figures for the Alert rules screen: the replay over history, the what-if sweep, and a
burn-rate rule's budget spent and burn rates against its factors."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from webapp.analysis import BandGrid
from webapp.analysis.times import short_duration
from webapp.analysis.vocabulary import band_width_text, level_words
from webapp.web.charts import palette, style
from webapp.web.charts.downsample import minmax_indices, reduce_together
from webapp.web.charts.style import wall_clock

MAX_SHADES = 300
# Holds are told apart by marker shape as well as colour.
SYMBOLS = ("circle", "square", "diamond", "triangle-up", "cross", "x", "pentagon", "hexagon")
COLOURS = palette.LINES


def _layout(fig: go.Figure, height: int, x_title: str, y_title: str) -> go.Figure:
    fig.update_layout(
        template="none",
        height=height,
        margin={"l": 64, "r": 16, "t": 36, "b": 52},
        font=style.FONT_STYLE,
        paper_bgcolor=palette.PAPER,
        plot_bgcolor=palette.PAPER,
        legend={"orientation": "h", "x": 0, "y": 1.02, "yanchor": "bottom"},
        xaxis_title_text=x_title,
        yaxis_title_text=y_title,
    )
    fig.update_xaxes(**style.AXIS_STYLE, ticks="outside")
    fig.update_yaxes(**style.AXIS_STYLE, ticks="outside")
    return fig


def replay_figure(
    series: pd.Series,
    firings: pd.DataFrame,
    incidents: Sequence[tuple[pd.Timestamp, pd.Timestamp]],
    threshold: float | None,
    unit: str | None,
    tz: str = "UTC",
    n_out: int = 3000,
    band: tuple[BandGrid, float] | None = None,
) -> go.Figure:
    """The series over all its history, with the firings and the recorded incidents shaded.
    ``band``: a band rule's evaluation grid and tolerance, drawn as the band it fired on."""
    fig = go.Figure()
    values = series.to_numpy(dtype="float64")
    top = float(np.nanmax(values)) if len(series) else 1.0
    if band is not None:
        top = max(top, _add_band(fig, *band, tz, n_out))
    at = minmax_indices(series.index.asi8, values, n_out) if len(series) else np.array([], int)
    fig.add_trace(
        go.Scatter(
            x=wall_clock(series.index[at], tz),
            y=values[at],
            name=str(series.name or "value"),
            mode="lines",
            line={"color": palette.VALUE, "width": 1.2},
        )
    )
    end_of_data = series.index[-1] if len(series) else None
    top *= 1.06
    _marks(fig, pd.DatetimeIndex(firings["start"]), top, tz, "firing starts", "triangle-down",
           palette.OUT_OF_BAND)  # fmt: skip
    starts = pd.DatetimeIndex([start for start, _ in incidents])
    _marks(fig, starts, top * 1.05, tz, "incident starts", "square", palette.BLUE)
    for row in firings.head(MAX_SHADES).itertuples(index=False):
        stop = row.end if not pd.isna(row.end) else end_of_data
        fig.add_vrect(
            x0=wall_clock(pd.DatetimeIndex([row.start]), tz)[0],
            x1=wall_clock(pd.DatetimeIndex([stop]), tz)[0],
            fillcolor=palette.OUT_OF_BAND,
            opacity=0.25,
            line_width=0,
        )
    for number, (start, end) in enumerate(incidents, start=1):
        fig.add_vrect(
            x0=wall_clock(pd.DatetimeIndex([start]), tz)[0],
            x1=wall_clock(pd.DatetimeIndex([end]), tz)[0],
            fillcolor=palette.SKY_BLUE,
            opacity=0.3,
            line={"color": palette.BLUE, "width": 1, "dash": "dot"},
            annotation_text=f"incident {number}",
            annotation_position="top left",
            annotation_font_size=11,
        )
    if threshold is not None:
        fig.add_hline(
            y=threshold, line={"color": palette.OUT_OF_BAND, "dash": "dash", "width": 1.4}
        )
    _layout(fig, 340, f"time ({tz}); firings and incidents shaded", unit or "value")
    fig.update_xaxes(type="date")
    return fig


def _add_band(fig: go.Figure, grid: BandGrid, tolerance: float, tz: str, n_out: int) -> float:
    """The band a band rule was evaluated against (``expected - tolerance * below_scale`` to
    ``expected + tolerance * above_scale``) on its grid, reduced like the series (both edges
    keep their extremes); returns its top."""
    below = grid.scale if grid.below_scale is None else grid.below_scale
    above = grid.scale if grid.above_scale is None else grid.above_scale
    edges = pd.DataFrame(
        {"lower": grid.expected - tolerance * below, "upper": grid.expected + tolerance * above},
        index=grid.times,
    )
    edges = reduce_together(edges, ["lower", "upper"], n_out)
    x = wall_clock(pd.DatetimeIndex(edges.index), tz)
    name = f"expected band, {band_width_text(tolerance)}"
    line = {"color": palette.BAND_EDGE, "width": 0.6}
    common = {"x": x, "mode": "lines", "line": line, "legendgroup": name, "hoverinfo": "skip"}
    fig.add_trace(go.Scatter(y=edges["lower"], name=name, showlegend=False, **common))
    fig.add_trace(
        go.Scatter(
            y=edges["upper"],
            name=name,
            fill="tonexty",
            fillcolor=palette.rgba(palette.BAND_FILL, 0.32),
            **common,
        )
    )
    upper = edges["upper"].to_numpy(dtype="float64")
    return float(np.nanmax(upper)) if np.isfinite(upper).any() else -np.inf


def _marks(
    fig: go.Figure, at: pd.DatetimeIndex, y: float, tz: str, name: str, symbol: str, colour: str
) -> None:
    """Markers along the top edge, so short firings stay visible over weeks of history."""
    if len(at):
        fig.add_trace(
            go.Scatter(
                x=wall_clock(at.tz_convert("UTC"), tz),
                y=np.full(len(at), y),
                mode="markers",
                name=name,
                marker={"symbol": symbol, "size": 10, "color": colour},
                hovertemplate=f"{name}: %{{x|%Y-%m-%d %H:%M}}<extra></extra>",
            )
        )


def sweep_figure(
    sweep: pd.DataFrame,
    current: tuple[float, pd.Timedelta] | None = None,
    drafted: tuple[float, pd.Timedelta] | None = None,
) -> go.Figure:
    """Pages per week against incidents caught, one line per hold along which the
    sweep's level changes: the threshold, or a band rule's tolerance (the sweep's first
    column); for a burn-rate rule one line per window pair along which the factor changes.
    ``current`` and ``drafted`` are (level, hold or window pair) points to mark."""
    level, line = level_column(sweep), line_column(sweep)
    fig = go.Figure()
    for i, (key, rows) in enumerate(sweep.groupby(line, sort=line == "hold")):
        rows = rows.sort_values(level)
        label = _line_label(line, key)
        fig.add_trace(
            go.Scatter(
                x=rows["pages_per_week"],
                y=rows["incidents_caught"],
                mode="lines+markers",
                name=label,
                line={"color": COLOURS[i % len(COLOURS)], "width": 1.2},
                marker={"symbol": SYMBOLS[i % len(SYMBOLS)], "size": 8},
                customdata=np.stack([rows[level], rows["firings"]], axis=1),
                hovertemplate=(
                    f"{label}<br>{level_words(level)} %{{customdata[0]:.4g}}"
                    "<br>%{x:.2f} pages/week"
                    "<br>%{y} incidents caught<br>%{customdata[1]} firings<extra></extra>"
                ),
            )
        )
    for point, name, symbol, colour in (
        (current, "current rule", "circle-open", palette.BLACK),
        (drafted, "drafted setting", "star", palette.VERMILLION),
    ):
        row = _row(sweep, point)
        if row is not None:
            fig.add_trace(
                go.Scatter(
                    x=[row["pages_per_week"]],
                    y=[row["incidents_caught"]],
                    mode="markers",
                    name=name,
                    marker={"symbol": symbol, "size": 18, "color": colour, "line": {"width": 2}},
                    hovertemplate=f"{name}: {level} {row[level]:.4g}, "
                    f"{_line_label(line, row[line])}<extra></extra>",
                )
            )
    _layout(fig, 380, "pages per week (double-click to see every setting)", "incidents caught")
    fig.update_yaxes(rangemode="tozero", dtick=1)
    fig.update_xaxes(range=[0, _pages_range(sweep, current, drafted)])
    return fig


def _pages_range(sweep: pd.DataFrame, *points: tuple[float, pd.Timedelta] | None) -> float:
    """Open on the settings near the current rule: the rarely paging ones are the choices."""
    near = [float(row["pages_per_week"]) for p in points if (row := _row(sweep, p)) is not None]
    limit = max([2.0, *(4 * v for v in near)])
    return min(limit, float(sweep["pages_per_week"].max()) * 1.05 or limit)


def level_column(sweep: pd.DataFrame) -> str:
    """What a what-if sweep varies besides the hold: its first column, "threshold"
    (``whatif_sweep``) or "tolerance" (``band_sweep``)."""
    return str(sweep.columns[0])


def line_column(sweep: pd.DataFrame) -> str:
    """What each line of a sweep figure keeps fixed: the hold, or a burn-rate sweep's
    window pair."""
    return "windows" if "windows" in sweep.columns else "hold"


def _line_label(line: str, key: object) -> str:
    if line == "windows":
        return f"windows {key}"
    return f"hold {short_duration(key)}" if key else "no hold"


def _row(sweep: pd.DataFrame, point: tuple[float, object] | None) -> pd.Series | None:
    if point is None:
        return None
    level, line = level_column(sweep), line_column(sweep)
    match = sweep[np.isclose(sweep[level], point[0]) & (sweep[line] == point[1])]
    return None if match.empty else match.iloc[0]


def _peaks(frame: pd.DataFrame, n_out: int) -> pd.DataFrame:
    """At most ``n_out`` rows: the highest value of each column per slice of time, so a
    short burst stays visible."""
    if len(frame) <= n_out:
        return frame
    bucket = np.arange(len(frame)) * n_out // len(frame)
    peaks = frame.groupby(bucket).max()
    peaks.index = frame.index[np.searchsorted(bucket, peaks.index)]
    return peaks


def budget_figure(budget: pd.Series, tz: str = "UTC", n_out: int = 2000) -> go.Figure:
    """The share of the error budget spent over the compliance period ending at each
    check, in percent, with the whole budget (100%) marked."""
    spent = _peaks(budget.to_frame("spent") * 100, n_out)["spent"]
    fig = go.Figure(
        go.Scatter(
            x=wall_clock(pd.DatetimeIndex(spent.index), tz),
            y=spent.to_numpy(),
            mode="lines",
            name="budget spent",
            line={"color": palette.VALUE, "width": 1.4},
            hovertemplate="%{y:.1f}% of the budget spent<extra></extra>",
        )
    )
    fig.add_hline(y=100, line={"color": palette.OUT_OF_BAND, "dash": "dash", "width": 1.4})
    _layout(fig, 260, f"time ({tz}); the whole budget dashed", "% of budget spent")
    fig.update_xaxes(type="date")
    fig.update_yaxes(rangemode="tozero")
    return fig


def burn_rates_figure(
    rates: pd.DataFrame, factors: Sequence[float], tz: str = "UTC", n_out: int = 1500
) -> go.Figure:
    """The burn rate over each of the rule's windows (the highest per slice of time), on a
    log scale, with the rule's factors as dashed lines."""
    peaks = _peaks(rates, n_out)
    x = wall_clock(pd.DatetimeIndex(peaks.index), tz)
    fig = go.Figure()
    for i, name in enumerate(peaks.columns):
        fig.add_trace(
            go.Scatter(
                x=x,
                y=peaks[name].clip(lower=0.01).to_numpy(),
                mode="lines",
                name=f"over {name}",
                line={"color": COLOURS[i % len(COLOURS)], "width": 1.1},
                hovertemplate=f"burn rate over {name}: %{{y:.2f}}x<extra></extra>",
            )
        )
    for factor in sorted(set(factors)):
        fig.add_hline(
            y=factor,
            line={"color": palette.OUT_OF_BAND, "dash": "dash", "width": 1.2},
            annotation_text=f"{factor:g}x",
            annotation_position="top left",
            annotation_font_size=11,
        )
    _layout(fig, 320, f"time ({tz}); factors dashed", "burn rate (x budget)")
    fig.update_xaxes(type="date")
    fig.update_yaxes(type="log")
    return fig
