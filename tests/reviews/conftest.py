"""Fixtures for review tests: a stored series with a saved explanation (synthetic data)."""

from __future__ import annotations

import re
from collections.abc import Callable

import numpy as np
import pandas as pd
import pytest

from webapp.store.frames import encode_frame
from webapp.store.models import Explanation, Page, Series

WINDOW = (pd.Timestamp("2026-11-30 14:00", tz="UTC"), pd.Timestamp("2026-11-30 16:00", tz="UTC"))


def synthetic_frame(start: pd.Timestamp, end: pd.Timestamp, step: str = "5min") -> pd.DataFrame:
    """A frame shaped like an explanation's: a daily wave, a band, and a stretch above it."""
    index = pd.date_range(start - pd.Timedelta(days=2), end, freq=step, tz="UTC")
    phase = 2 * np.pi * (index.hour * 60 + index.minute) / 1440
    expected = 200 + 50 * np.sin(phase)
    value = expected + np.where((index >= start) & (index < end), 180.0, 3.0)
    frame = pd.DataFrame(
        {
            "value": value,
            "expected": expected,
            "lower": expected - 30,
            "upper": expected + 30,
            "trend": np.full(len(index), 200.0),
            "seasonal": expected - 200,
            "seasonal_1d": expected - 200,
            "residual": value - expected,
            "band_scale": np.full(len(index), 10.0),
            "in_window": (index >= start) & (index <= end),
        },
        index=index,
    )
    frame["outside"] = (frame.value > frame.upper) | (frame.value < frame.lower)
    return frame


@pytest.fixture
def make_series(session) -> Callable[..., Series]:
    def make(key: str = "checkout.latency_p95{host=api-3}") -> Series:
        existing = session.query(Series).filter_by(key=key).one_or_none()
        if existing is not None:
            return existing
        metric = key.split("{")[0]
        series = Series(key=key, metric=metric, labels={}, unit="ms")
        session.add(series)
        session.flush()
        return series

    return make


@pytest.fixture
def make_explanation(session, make_series) -> Callable[..., Explanation]:
    """A saved explanation row over ``WINDOW`` (or the window given) for a new or given series."""

    def make(series: Series | None = None, window=WINDOW, title: str = "") -> Explanation:
        series = series or make_series()
        frame = synthetic_frame(*window)
        first_outside = frame.index[frame.outside & frame.in_window][0]
        row = Explanation(
            series_id=series.id,
            series_key=series.key,
            title=title or f"{series.key} around the incident",
            window_start=window[0].to_pydatetime(),
            window_end=window[1].to_pydatetime(),
            parameters={"history": "P2D", "tolerance": 3.0, "tz": "UTC", "agg": "mean"},
            engine_version="test-1",
            frame=encode_frame(frame),
            overlay=None,
            facts={
                "first_outside": first_outside.isoformat(),
                "peak_value": float(frame.value.max()),
                "peak_at": frame.value.idxmax().isoformat(),
                "outside_fraction": 0.9,
            },
            summary=["The value rose far above its expected band."],
        )
        session.add(row)
        session.flush()
        return row

    return make


@pytest.fixture
def make_page(session) -> Callable[..., Page]:
    def make(series: Series, fired_at: pd.Timestamp = WINDOW[0]) -> Page:
        page = Page(
            series_id=series.id,
            fired_at=fired_at.to_pydatetime(),
            resolved_at=(fired_at + pd.Timedelta("1h")).to_pydatetime(),
            rule_text="above 400 for 5min",
        )
        session.add(page)
        session.flush()
        return page

    return make


@pytest.fixture
def csrf(client) -> str:
    """The CSRF token of the test client's session, read from a form the app served."""
    page = client.get("/reviews/new")
    match = re.search(r'name="csrf_token" value="([^"]+)"', page.text)
    assert match, "the review form carries no CSRF field"
    return match.group(1)


@pytest.fixture
def app_session(app):
    """A store session on the app's own database, for arranging data before requests."""
    from webapp.store import db

    s = db.new_session(db.get_engine(app))
    yield s
    s.close()


@pytest.fixture
def make_real_explanation(session) -> Callable[..., Explanation]:
    """An explanation computed by the analysis core on synthetic data and saved by the store."""
    return lambda series, window=WINDOW: _real_explanation(session, series, window)


def _real_explanation(session, series: Series, window) -> Explanation:
    from webapp.analysis import explain, past_weeks_overlay
    from webapp.store import explanations
    from webapp.store.models import Point

    history = pd.Timedelta(weeks=2)
    index = pd.date_range(window[0] - history, window[1], freq="5min", tz="UTC")
    rng = np.random.default_rng(5)
    minutes = (index.hour * 60 + index.minute).to_numpy()
    values = 200 + 40 * np.sin(2 * np.pi * minutes / 1440) + rng.normal(0, 3, len(index))
    values[(index >= window[0]) & (index < window[0] + pd.Timedelta("1h"))] += 150
    points = pd.Series(values, index)
    session.add_all(
        Point(series_id=series.id, ts=int(ts.value // 1_000_000), value=float(v))
        for ts, v in points.items()
    )
    exp = explain(points, window=window, history=history)
    overlay = past_weeks_overlay(points, window=window, weeks=2)
    return explanations.save_explanation(
        session, exp, series.id, overlay=overlay, title=f"{series.key} band"
    )
