"""The SVG writer draws a figure's own traces without a browser: hand-made drawings whose
pixels can be worked out, and the band figure of a real frame."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import numpy as np
import pandas as pd

from webapp.web.charts import style
from webapp.web.charts.svg import figure_svg, nice_step, time_ticks

SVG = "{http://www.w3.org/2000/svg}"
HOUR = 3_600_000


def drawing(y_low, y_high, value) -> style.Drawing:
    x = np.arange(len(value), dtype="float64") * HOUR
    band = {"type": "scatter", "x": x, "mode": "lines", "line": {"color": "#56B4E9"}}
    traces = [
        {**band, "y": np.array(y_low, dtype="float64"), "showlegend": False, "name": "band"},
        {**band, "y": np.array(y_high, dtype="float64"), "fill": "tonexty",
         "fillcolor": "rgba(86,180,233,0.32)", "name": "expected band"},
        {"type": "scatter", "x": x, "y": np.array(value, dtype="float64"), "mode": "lines",
         "name": "value", "line": {"color": "#1B1B1B", "width": 1.8}},
    ]  # fmt: skip
    layout = style.layout(400, xaxis=style.time_axis("UTC"), yaxis=style.axis(title={"text": "ms"}))
    return traces, layout


def test_a_gap_lifts_the_pen_and_splits_the_band() -> None:
    traces, layout = drawing([0, 0, np.nan, 0, 0], [10, 10, np.nan, 10, 10], [5, 6, np.nan, 7, 8])
    root = ET.fromstring(figure_svg(traces, layout, width=800))
    polygons = root.findall(f".//{SVG}polygon")
    assert len(polygons) == 2  # one per unbroken run of the band
    assert polygons[0].get("fill") == "rgb(86,180,233)"
    assert polygons[0].get("fill-opacity") == "0.32"
    value = [p for p in root.iter(f"{SVG}path") if p.get("stroke") == "#1B1B1B"]
    assert len(value) == 1  # the legend's sample is a <line>
    moves = re.findall(r"[ML]", value[0].get("d"))
    assert moves == ["M", "L", "M", "L"]


def test_points_land_where_the_axes_say() -> None:
    traces, layout = drawing([0] * 3, [10] * 3, [0, 5, 10])
    svg = figure_svg(traces, layout, width=800)
    root = ET.fromstring(svg)
    clip = root.find(f".//{SVG}clipPath/{SVG}rect")
    left, top = float(clip.get("x")), float(clip.get("y"))
    width, height = float(clip.get("width")), float(clip.get("height"))
    value = next(p for p in root.iter(f"{SVG}path") if p.get("stroke") == "#1B1B1B")
    points = [tuple(map(float, m)) for m in re.findall(r"[ML]([\d.]+) ([\d.]+)", value.get("d"))]
    # x spans the plot area; y: 0..10 padded by 5% each side
    assert points[0][0] == round(left, 1) and points[-1][0] == round(left + width, 1)
    scale = height / 11
    assert abs(points[1][1] - (top + height - 5.5 * scale)) < 0.11
    assert "<title>figure</title>" in svg and ">ms</text>" in svg


def test_time_ticks_follow_the_clock() -> None:
    start = pd.Timestamp("2026-11-29 22:00").value / 1e6
    ticks = time_ticks(start, start + 6 * HOUR, 900)
    assert [label for _, label, _ in ticks] == ["22:00", "23:00", "00:00", "01:00", "02:00",
                                                "03:00", "04:00"]  # fmt: skip
    assert [day for _, _, day in ticks if day] == ["Nov 29, 2026", "Nov 30, 2026"]
    assert nice_step(1700) == 500 and nice_step(0.6) == 0.1


def test_the_band_figure_of_a_frame_draws_its_window_and_marks() -> None:
    from webapp.web.charts.explain import band_drawing

    index = pd.date_range("2026-11-30", periods=600, freq="min", tz="UTC")
    value = np.full(600, 100.0)
    value[400:420] = 900.0
    frame = pd.DataFrame(
        {"value": value, "expected": 100.0, "lower": 80.0, "upper": 120.0,
         "in_window": index >= index[300], "outside": value > 120.0},
        index=index,
    )  # fmt: skip
    marks = [(index[402], "page raised")]
    svg = figure_svg(*band_drawing(frame, "UTC", "ms", "p95", marks=marks))
    root = ET.fromstring(svg)
    assert root.find(f"{SVG}title").text == "p95"
    triangles = [p for p in root.iter(f"{SVG}path") if p.get("fill") == "#D55E00"]
    assert max(p.get("d").count("Z") for p in triangles) == 20  # every sample above
    assert "page raised" in svg and 'stroke-dasharray="2,3"' in svg
