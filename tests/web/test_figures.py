"""Figure builders and display downsampling, on synthetic frames with the contract's columns."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from webapp.web.charts import explain as figures
from webapp.web.charts import style
from webapp.web.charts.downsample import minmax_indices


def synthetic_frame(weeks: int = 8, step: str = "1min") -> pd.DataFrame:
    rng = np.random.default_rng(11)
    end = pd.Timestamp("2026-11-30 18:00", tz="UTC")
    index = pd.date_range(end - pd.Timedelta(weeks=weeks), end, freq=step)
    t = (index - index[0]).total_seconds().to_numpy()
    daily = 20 * np.sin(2 * np.pi * t / 86400)
    weekly = 5 * np.sin(2 * np.pi * t / (7 * 86400))
    trend = 100 + 10 * t / t[-1]
    value = trend + daily + weekly + rng.normal(0, 3, len(index))
    in_window = index >= end - pd.Timedelta(hours=6)
    value[np.flatnonzero(in_window)[120:180]] += 50
    value[5000] = 900.0  # one lone spike far back in history
    value[9000:9100] = np.nan  # a gap
    expected = trend + daily + weekly
    frame = pd.DataFrame(
        {
            "value": value,
            "expected": expected,
            "lower": expected - 9,
            "upper": expected + 9,
            "trend": trend,
            "seasonal": daily + weekly,
            "seasonal_1d": daily,
            "seasonal_7d": weekly,
            "residual": value - expected,
            "band_scale": 3.0,
            "in_window": in_window,
        },
        index=index,
    )
    frame["outside"] = (frame.value > frame.upper) | (frame.value < frame.lower)
    return frame


def decoded(values) -> np.ndarray:
    return np.asarray(values, dtype=float)


def test_minmax_keeps_every_spike_and_the_gap():
    x = np.arange(100_000)
    y = np.sin(x / 500.0)
    y[31_337] = 50.0
    y[70_000] = -50.0
    y[10_000:10_500] = np.nan
    at = minmax_indices(x, y, 1000)
    assert len(at) <= 1010
    assert 31_337 in at and 70_000 in at
    assert np.isnan(y[at]).sum() == 1  # the gap stays a gap, once


def test_band_figure_keeps_the_spike_and_marks_the_stretch():
    frame = synthetic_frame()
    fig = figures.band_figure(frame, "UTC", "ms", "checkout latency")
    value = next(t for t in fig.data if t.name == "value")
    assert np.nanmax(decoded(value.y)) == pytest.approx(900.0)
    above = next(t for t in fig.data if t.name == "above the band")
    assert above.marker.symbol == "triangle-up"
    assert above.marker.color == figures.palette.OUT_OF_BAND
    rects = [s for s in fig.layout.shapes if s.type == "rect"]
    assert len(rects) >= 2  # the window, and the out-of-band stretch inside it
    assert fig.layout.yaxis.title.text == "ms"


def test_eight_weeks_of_minutes_fit_in_a_small_payload():
    frame = synthetic_frame()
    overlay = pd.DataFrame(
        {f"week_-{k}": frame["expected"][frame.in_window].to_numpy() for k in range(1, 9)},
        index=frame.index[frame.in_window],
    )
    overlay["median"] = overlay.median(axis=1)
    overlay["p10"], overlay["p90"] = overlay["median"] - 4, overlay["median"] + 4
    size = sum(
        len(f.to_json())
        for f in (
            figures.band_figure(frame, "UTC", "ms", "x"),
            figures.overlay_figure(overlay, frame, "UTC", "ms"),
            figures.components_figure(frame, "UTC", "ms"),
        )
    )
    assert len(frame) == 80_641
    assert size < 1_000_000


def test_axes_show_wall_clock_time_in_the_chosen_zone():
    index = pd.DatetimeIndex(["2026-11-30 12:00", "2026-07-01 12:00"], tz="UTC")
    berlin = style.wall_clock(index, "Europe/Berlin")
    utc = style.wall_clock(index, "UTC")
    assert (berlin - utc).tolist() == [3_600_000.0, 7_200_000.0]  # CET, then CEST
    back = figures.from_wall_clock("2026-11-30 13:00", "Europe/Berlin")
    assert back == pd.Timestamp("2026-11-30 12:00", tz="UTC")


def test_components_have_a_row_per_seasonal_period_and_the_half_width():
    frame = synthetic_frame(weeks=2)
    fig = figures.components_figure(frame, "UTC", "ms")
    titles = [a.text for a in fig.layout.annotations]
    assert titles == [
        "trend",
        "seasonal, period 1d",
        "seasonal, period 7d",
        "residual, with the band's half-width",
    ]
    half = [t for t in fig.data if t.name == "band half-width"]
    assert np.nanmax(decoded(half[1].y)) == pytest.approx(9.0)


def test_zoomed_view_gets_every_point_of_the_range():
    frame = synthetic_frame(weeks=2)
    start, end = frame.index[-300], frame.index[-1]
    fig = figures.band_figure(frame.loc[start:end], "UTC", None, "x", view=(start, end))
    value = next(t for t in fig.data if t.name == "value")
    assert len(value.x) == 300
    assert fig.layout.yaxis.title.text == "value"


def test_overlay_draws_past_weeks_median_and_this_window():
    frame = synthetic_frame(weeks=2)
    inside = frame.index[frame.in_window]
    overlay = pd.DataFrame(
        {"week_-1": 1.0, "week_-2": 2.0, "median": 1.5, "p10": 1.1, "p90": 1.9}, index=inside
    )
    fig = figures.overlay_figure(overlay, frame, "UTC", "ms")
    names = [t.name for t in fig.data]
    assert names.count("past weeks") == 1 and "week −2" in names
    assert "median of past weeks" in names and names[-1] == "this window"
