"""A figure written as a static SVG image from its own plotly data, with no browser.

The Markdown export needs pictures; plotly's image export drives a Chrome, which a reader's
machine may not have and which takes seconds to start. The figures it exports are simple
(lines, filled bands between two lines, triangle markers, shaded spans, dotted marks on one
date axis), so they are drawn here directly: same traces, same colours, same time axis.
Anything else a figure holds (subplots, other trace types) is left out, not guessed at.
"""

from __future__ import annotations

import math
import re
from html import escape

import numpy as np

from webapp.web.charts import palette, style

MINUTE = 60_000
HOUR = 60 * MINUTE
DAY = 24 * HOUR
#: Candidate spacings of the time axis' ticks, smallest first.
TIME_STEPS = (
    MINUTE,
    2 * MINUTE,
    5 * MINUTE,
    10 * MINUTE,
    15 * MINUTE,
    30 * MINUTE,
    HOUR,
    2 * HOUR,
    3 * HOUR,
    6 * HOUR,
    12 * HOUR,
    DAY,
    2 * DAY,
    7 * DAY,
    14 * DAY,
    28 * DAY,
)
DASHES = {"dash": "6,4", "dot": "2,3", "dashdot": "6,3,2,3", "longdash": "10,4"}
TICK_PX = 110  # at least this far apart
LEGEND_ROW = 22


def _paint(colour: str | None, what: str) -> str:
    """``fill="…" fill-opacity="…"`` for a CSS colour (``rgba()`` split, as some SVG
    viewers ignore its alpha)."""
    if not colour:
        return f'{what}="none"'
    found = re.fullmatch(r"rgba\(\s*(\d+)\s*,\s*(\d+)\s*,\s*(\d+)\s*,\s*([\d.]+)\s*\)", colour)
    if found:
        r, g, b, a = found.groups()
        return f'{what}="rgb({r},{g},{b})" {what}-opacity="{float(a):g}"'
    return f'{what}="{escape(colour)}"'


def _dash(line: dict) -> str:
    pattern = DASHES.get(line.get("dash") or "solid")
    return f' stroke-dasharray="{pattern}"' if pattern else ""


def _array(values: object) -> np.ndarray:
    if values is None:
        return np.array([], dtype="float64")
    return np.asarray(values, dtype="float64")


def nice_step(span: float, count: int = 6) -> float:
    """A 1, 2 or 5 times a power of ten step giving about ``count`` ticks over ``span``."""
    raw = span / max(count, 1)
    if raw <= 0 or not math.isfinite(raw):
        return 1.0
    power = 10 ** math.floor(math.log10(raw))
    return next(m * power for m in (1, 2, 5, 10) if m * power >= raw)


def _number(value: float, step: float) -> str:
    decimals = max(0, -math.floor(math.log10(step))) if step < 1 else 0
    return f"{value:,.{decimals}f}".replace(",", "\u2009")


def time_ticks(x0: float, x1: float, width_px: float) -> list[tuple[float, str, str]]:
    """Ticks over wall-clock milliseconds: (position, time label, date label or "")."""
    fits = max(2, int(width_px // TICK_PX))
    step = next((s for s in TIME_STEPS if (x1 - x0) / s <= fits), TIME_STEPS[-1])
    first = math.ceil(x0 / step) * step
    ticks, last_day = [], None
    for at in np.arange(first, x1 + 1, step):
        moment = np.datetime64(int(at), "ms").astype(object)
        day = moment.strftime("%b %-d, %Y")
        if step < DAY:
            ticks.append((float(at), moment.strftime("%H:%M"), day if day != last_day else ""))
        else:
            ticks.append((float(at), moment.strftime("%b %-d"), "" if last_day else day[-4:]))
        last_day = day
    return ticks


class _Frame:
    """The plot area and its scales."""

    def __init__(self, width: int, height: int, margin: dict, xr: tuple, yr: tuple) -> None:
        self.left, self.top = margin["l"], margin["t"]
        self.right, self.bottom = width - margin["r"], height - margin["b"]
        self.xr, self.yr = xr, yr

    def x(self, values: np.ndarray) -> np.ndarray:
        x0, x1 = self.xr
        return self.left + (values - x0) / (x1 - x0) * (self.right - self.left)

    def y(self, values: np.ndarray) -> np.ndarray:
        y0, y1 = self.yr
        return self.bottom - (values - y0) / (y1 - y0) * (self.bottom - self.top)

    def paper_y(self, fraction: float) -> float:
        return self.bottom - fraction * (self.bottom - self.top)


def _visible(x: np.ndarray, xr: tuple) -> np.ndarray:
    """Points inside the range and one either side of it (so lines reach the edges)."""
    inside = (x >= xr[0]) & (x <= xr[1])
    return inside | np.roll(inside, 1) | np.roll(inside, -1)


def _ranges(traces: list[dict], layout: dict) -> tuple[tuple, tuple]:
    given = (layout.get("xaxis") or {}).get("range")
    xs = [_array(t.get("x")) for t in traces]
    finite = np.concatenate([x[np.isfinite(x)] for x in xs] or [np.array([0.0, 1.0])])
    xr = (float(given[0]), float(given[1])) if given else (finite.min(), finite.max())
    if xr[0] >= xr[1]:
        xr = (xr[0] - HOUR, xr[1] + HOUR)
    ys = []
    for trace, x in zip(traces, xs, strict=True):
        y = _array(trace.get("y"))
        if len(y) == len(x):
            y = y[_visible(x, xr)]
        ys.append(y[np.isfinite(y)])
    every = np.concatenate(ys or [np.array([0.0, 1.0])])
    low, high = (every.min(), every.max()) if every.size else (0.0, 1.0)
    pad = (high - low) * 0.05 or max(abs(high) * 0.05, 1.0)
    return xr, (low - pad, high + pad)


def _path(px: np.ndarray, py: np.ndarray) -> str:
    """``M x y L …`` through the finite points; a missing value lifts the pen."""
    parts, pen_down = [], False
    for a, b in zip(px, py, strict=True):
        if not (math.isfinite(a) and math.isfinite(b)):
            pen_down = False
            continue
        parts.append(f"{'L' if pen_down else 'M'}{a:.1f} {b:.1f}")
        pen_down = True
    return "".join(parts)


def _fill(frame: _Frame, lower: dict, upper: dict, xr: tuple) -> str:
    """The area between two traces on the same x (a band), one polygon per unbroken run."""
    x, y_low, y_high = _array(upper.get("x")), _array(lower.get("y")), _array(upper.get("y"))
    if not (len(x) == len(y_low) == len(y_high)):
        return ""
    keep = _visible(x, xr) & np.isfinite(y_low) & np.isfinite(y_high)
    runs = np.split(np.arange(len(x)), np.flatnonzero(np.diff(keep.astype(int)) != 0) + 1)
    out = []
    for run in runs:
        if len(run) < 2 or not keep[run[0]]:
            continue
        px = frame.x(x[run])
        top = " ".join(f"{a:.1f},{b:.1f}" for a, b in zip(px, frame.y(y_high[run]), strict=True))
        bottom = " ".join(
            f"{a:.1f},{b:.1f}" for a, b in zip(px[::-1], frame.y(y_low[run])[::-1], strict=True)
        )
        out.append(f'<polygon points="{top} {bottom}" {_paint(upper.get("fillcolor"), "fill")}/>')
    return "".join(out)


def _markers(frame: _Frame, trace: dict, xr: tuple) -> str:
    marker = trace.get("marker") or {}
    x, y = _array(trace.get("x")), _array(trace.get("y"))
    keep = (x >= xr[0]) & (x <= xr[1]) & np.isfinite(y)
    half = float(marker.get("size", 8)) / 2
    edge = marker.get("line") or {}
    down = marker.get("symbol") == "triangle-down"
    parts = []
    for a, b in zip(frame.x(x[keep]), frame.y(y[keep]), strict=True):
        tip = b + half if down else b - half
        base = b - half if down else b + half
        parts.append(f"M{a:.1f} {tip:.1f}L{a + half:.1f} {base:.1f}L{a - half:.1f} {base:.1f}Z")
    if not parts:
        return ""
    stroke = _paint(edge.get("color"), "stroke")
    return (
        f'<path d="{"".join(parts)}" {_paint(marker.get("color"), "fill")} {stroke}'
        f' stroke-width="{edge.get("width", 0)}"/>'
    )


def _shapes(frame: _Frame, shapes: list[dict]) -> str:
    out = []
    for shape in shapes:
        x0, x1 = frame.x(np.array([shape["x0"], shape["x1"]], dtype="float64"))
        x0, x1 = max(x0, frame.left), min(x1, frame.right)
        if x1 < x0:
            continue
        y0, y1 = frame.paper_y(shape.get("y1", 1)), frame.paper_y(shape.get("y0", 0))
        if shape.get("type") == "rect":
            paint = _paint(shape.get("fillcolor"), "fill")
            out.append(
                f'<rect x="{x0:.1f}" y="{y0:.1f}" width="{max(x1 - x0, 0.5):.1f}" '
                f'height="{y1 - y0:.1f}" {paint}/>'
            )
        elif shape.get("type") == "line":
            line = shape.get("line") or {}
            out.append(
                f'<line x1="{x0:.1f}" y1="{y0:.1f}" x2="{x0:.1f}" y2="{y1:.1f}" '
                f'{_paint(line.get("color"), "stroke")} stroke-width="{line.get("width", 1)}"'
                f"{_dash(line)}/>"
            )
    return "".join(out)


def _legend(traces: list[dict], left: float, top: float) -> str:
    out, x = [], left
    for trace in traces:
        if trace.get("showlegend") is False or not trace.get("name"):
            continue
        name = escape(str(trace["name"]))
        mid = top + LEGEND_ROW / 2
        if trace.get("fill") == "tonexty":
            edge = (trace.get("line") or {}).get("color")
            out.append(
                f'<rect x="{x:.1f}" y="{mid - 5:.1f}" width="24" height="10" '
                f"{_paint(trace.get('fillcolor'), 'fill')} {_paint(edge, 'stroke')}/>"
            )
        elif "markers" in (trace.get("mode") or "") and "lines" not in trace.get("mode"):
            out.append(_markers(_LegendFrame(x + 12, mid), {**trace, "x": [0], "y": [0]}, (-1, 1)))
        else:
            line = trace.get("line") or {}
            out.append(
                f'<line x1="{x:.1f}" y1="{mid:.1f}" x2="{x + 24:.1f}" y2="{mid:.1f}" '
                f'{_paint(line.get("color"), "stroke")} stroke-width="{line.get("width", 2)}"'
                f"{_dash(line)}/>"
            )
        out.append(f'<text x="{x + 30:.1f}" y="{mid + 4:.1f}" font-size="12">{name}</text>')
        x += 30 + 7.2 * len(str(trace["name"])) + 22
    return "".join(out)


class _LegendFrame(_Frame):
    """Draws one marker at a fixed point (the legend's sample)."""

    def __init__(self, x: float, y: float) -> None:
        self._at = (x, y)

    def x(self, values: np.ndarray) -> np.ndarray:
        return np.full(len(values), self._at[0])

    def y(self, values: np.ndarray) -> np.ndarray:
        return np.full(len(values), self._at[1])


def figure_svg(data: list[dict], layout: dict, width: int = 1100) -> str:
    """A figure's traces and layout (one date x axis, scatter traces; see
    ``style.Drawing``) as a standalone SVG document."""
    traces = [t for t in data if t.get("type", "scatter") == "scatter"]
    traces = [t for t in traces if not str(t.get("xaxis", "x")).removeprefix("x")]
    height = int(layout.get("height") or 420)
    title = (layout.get("title") or {}).get("text") or ""
    margin = {**{"l": 64, "r": 16, "t": 40, "b": 48}, **(layout.get("margin") or {})}
    margin["t"] = max(margin["t"], (26 if title else 0) + LEGEND_ROW + 8)
    margin["b"] = max(margin["b"], 84)
    xr, yr = _ranges(traces, layout)
    frame = _Frame(width, height, margin, xr, yr)
    font = escape(style.FONT, quote=True)
    out = [
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
        f'viewBox="0 0 {width} {height}" role="img" font-family="{font}" font-size="13" '
        f'fill="{palette.VALUE}">',
        f"<title>{escape(title or 'figure')}</title>",
        f'<rect width="{width}" height="{height}" fill="{palette.PAPER}"/>',
        '<defs><clipPath id="plot-area">'
        f'<rect x="{frame.left}" y="{frame.top}" width="{frame.right - frame.left}" '
        f'height="{frame.bottom - frame.top}"/></clipPath></defs>',
    ]
    if title:
        out.append(f'<text x="4" y="18">{escape(title)}</text>')
    out.append(_legend(traces, frame.left, frame.top - LEGEND_ROW - 6))
    out.append(_axes(frame, layout))
    shapes = layout.get("shapes") or []
    out.append(_shapes(frame, [s for s in shapes if s.get("layer") == "below"]))
    out.append('<g clip-path="url(#plot-area)">')
    for i, trace in enumerate(traces):
        if trace.get("fill") == "tonexty" and i:
            out.append(_fill(frame, traces[i - 1], trace, xr))
        mode = trace.get("mode") or "lines"
        if "lines" in mode:
            x, y = _array(trace.get("x")), _array(trace.get("y"))
            keep = _visible(x, xr)
            line = trace.get("line") or {}
            out.append(
                f'<path d="{_path(frame.x(x[keep]), frame.y(y[keep]))}" fill="none" '
                f'{_paint(line.get("color"), "stroke")} stroke-width="{line.get("width", 2)}" '
                f'stroke-linejoin="round"{_dash(line)}/>'
            )
        if "markers" in mode:
            out.append(_markers(frame, trace, xr))
    out.append("</g>")
    out.append(_shapes(frame, [s for s in shapes if s.get("layer") != "below"]))
    out.append(_annotations(frame, layout.get("annotations") or []))
    out.append("</svg>\n")
    return "\n".join(part for part in out if part)


def _axes(frame: _Frame, layout: dict) -> str:
    out = []
    x_title = ((layout.get("xaxis") or {}).get("title") or {}).get("text") or ""
    y_title = ((layout.get("yaxis") or {}).get("title") or {}).get("text") or ""
    step = nice_step(frame.yr[1] - frame.yr[0])
    for value in np.arange(math.ceil(frame.yr[0] / step) * step, frame.yr[1], step):
        y = float(frame.y(np.array([value]))[0])
        out.append(
            f'<line x1="{frame.left}" x2="{frame.right}" y1="{y:.1f}" y2="{y:.1f}" '
            f'stroke="{palette.GRID}"/>'
            f'<text x="{frame.left - 8}" y="{y + 4:.1f}" text-anchor="end">'
            f"{_number(value, step)}</text>"
        )
    for at, label, day in time_ticks(*frame.xr, frame.right - frame.left):
        x = float(frame.x(np.array([at]))[0])
        out.append(
            f'<line x1="{x:.1f}" x2="{x:.1f}" y1="{frame.top}" y2="{frame.bottom}" '
            f'stroke="{palette.GRID}"/>'
            f'<text x="{x:.1f}" y="{frame.bottom + 20}" text-anchor="middle">{label}</text>'
        )
        if day:
            out.append(
                f'<text x="{x:.1f}" y="{frame.bottom + 37}" text-anchor="middle">{day}</text>'
            )
    out.append(
        f'<path d="M{frame.left} {frame.top}V{frame.bottom}H{frame.right}" fill="none" '
        f'stroke="{palette.AXIS}"/>'
    )
    if x_title:
        middle = (frame.left + frame.right) / 2
        out.append(
            f'<text x="{middle:.1f}" y="{frame.bottom + 62}" text-anchor="middle" '
            f'font-size="14">{escape(x_title)}</text>'
        )
    if y_title:
        middle = (frame.top + frame.bottom) / 2
        out.append(
            f'<text transform="translate(16 {middle:.1f}) rotate(-90)" text-anchor="middle" '
            f'font-size="14">{escape(y_title)}</text>'
        )
    return "".join(out)


def _annotations(frame: _Frame, annotations: list[dict]) -> str:
    out = []
    for note in annotations:
        if note.get("xref") != "x" or not note.get("text"):
            continue
        x = float(frame.x(np.array([note["x"]], dtype="float64"))[0])
        if not frame.left <= x <= frame.right:
            continue
        y = frame.paper_y(note.get("y", 1))
        text = escape(re.sub(r"<[^>]+>", "", str(note["text"])))
        out.append(
            f'<rect x="{x + 1:.1f}" y="{y + 1:.1f}" width="{7 * len(text) + 8}" height="17" '
            f"{_paint(note.get('bgcolor'), 'fill')}/>"
            f'<text x="{x + 5:.1f}" y="{y + 14:.1f}" font-size="11">{text}</text>'
        )
    return "".join(out)
