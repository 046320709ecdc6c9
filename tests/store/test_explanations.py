"""Saved explanations: frames and overlays go in as Parquet and come back exactly."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import explain, past_weeks_overlay
from webapp.store import db
from webapp.store import explanations as store_exp
from webapp.store.frames import decode_frame, encode_frame
from webapp.store.models import Series


def synthetic_series() -> pd.Series:
    """Three weeks of 5-minute data with a daily cycle and a step at the end (synthetic)."""
    index = pd.date_range("2026-11-01", periods=3 * 7 * 288, freq="5min", tz="UTC")
    rng = np.random.default_rng(11)
    daily = 100 + 30 * np.sin(2 * np.pi * np.arange(len(index)) / 288)
    values = daily + rng.normal(0, 2, len(index))
    values[-36:] += 80
    series = pd.Series(values, index=index, name="checkout.requests{host=api-1}")
    series.iloc[100:110] = np.nan
    return series


@pytest.fixture
def series_row(session):
    row = Series(key="checkout.requests{host=api-1}", metric="checkout.requests", labels={})
    session.add(row)
    session.flush()
    return row


def test_a_real_explanation_round_trips_exactly(engine, series_row, session):
    series = synthetic_series()
    window = (series.index[-72], series.index[-1])
    exp = explain(series, window=window, history=pd.Timedelta(weeks=2))
    overlay = past_weeks_overlay(series, window=window, weeks=2)
    row = store_exp.save_explanation(
        session, exp, series_row.id, overlay=overlay, title="evening step"
    )
    session.commit()

    with db.session_scope(engine) as fresh:
        (got,) = store_exp.list_explanations(fresh, series_id=series_row.id)
        pd.testing.assert_frame_equal(store_exp.load_frame(got), exp.frame)
        pd.testing.assert_frame_equal(store_exp.load_overlay(got), overlay)
        assert got.id == row.id and got.series_key == series_row.key
        assert got.engine_version == exp.engine_version
        assert got.window_start == window[0].to_pydatetime()
        assert got.summary == list(exp.summary)
        assert got.title == "evening step"


def test_frame_frequency_time_zone_and_dtypes_survive():
    index = pd.date_range("2026-03-29 00:00", periods=6, freq="30min", tz="UTC")
    frame = pd.DataFrame(
        {"value": [1.0, np.nan, 3.0, 4.0, 5.0, 6.0], "outside": [False, True] * 3}, index=index
    )
    back = decode_frame(encode_frame(frame))
    pd.testing.assert_frame_equal(back, frame)
    assert back.index.freqstr == "30min"


def test_facts_and_parameters_are_stored_as_plain_json(session, series_row):
    exp = SimpleNamespace(
        window=(pd.Timestamp("2026-11-30 01:00Z"), pd.Timestamp("2026-11-30 03:00Z")),
        parameters={"history": pd.Timedelta(weeks=6), "tolerance": np.float64(3.0)},
        engine_version="test",
        frame=pd.DataFrame({"value": [1.0]}, index=pd.DatetimeIndex(["2026-11-30"], tz="UTC")),
        facts={
            "peak": np.float32(2.5),
            "first_out": pd.Timestamp("2026-11-30 01:40Z"),
            "missing": float("nan"),
            "count": np.int64(4),
        },
        summary=("One sentence.",),
    )
    row = store_exp.save_explanation(session, exp, series_row.id)
    assert row.parameters == {"history": 6 * 7 * 86400.0, "tolerance": 3.0}
    assert row.facts == {
        "peak": 2.5,
        "first_out": "2026-11-30T01:40:00+00:00",
        "missing": None,
        "count": 4,
    }
    assert row.overlay is None and store_exp.load_overlay(row) is None
    assert row.summary == ["One sentence."]


def test_saving_for_an_unknown_series_says_so(session):
    with pytest.raises(LookupError, match="no series #9"):
        store_exp.save_explanation(session, SimpleNamespace(frame=pd.DataFrame({"v": [1.0]})), 9)


def one_row_explanation() -> SimpleNamespace:
    """The least an explanation needs to be saved: a window and a one-row frame."""
    return SimpleNamespace(
        window=(pd.Timestamp("2026-11-30 01:00Z"), pd.Timestamp("2026-11-30 03:00Z")),
        parameters={},
        engine_version="t",
        facts={},
        summary=[],
        frame=pd.DataFrame({"value": [1.0]}),
    )


def test_delete_explanation(session, series_row):
    exp = one_row_explanation()
    row = store_exp.save_explanation(session, exp, series_row.id)
    store_exp.delete_explanation(session, row.id)
    assert store_exp.get_explanation(session, row.id) is None
    with pytest.raises(LookupError, match="no explanation"):
        store_exp.delete_explanation(session, row.id)


def test_the_frame_is_encoded_before_the_write_lock_is_taken(session, series_row, monkeypatch):
    """Encoding a saved frame takes a fraction of a second of CPU; on SQLite the write lock
    (BEGIN IMMEDIATE) comes with a session's first statement, so encoding first keeps every
    other writer's wait down to the insert."""
    series_id = series_row.id
    session.commit()
    session.expunge_all()  # the series must be read again, as in a request
    during, real = [], store_exp.encode_frame

    def encode(frame):
        during.append(session.in_transaction())
        return real(frame)

    monkeypatch.setattr(store_exp, "encode_frame", encode)
    exp = one_row_explanation()
    store_exp.save_explanation(session, exp, series_id)
    assert during == [False]
