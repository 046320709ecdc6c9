"""Frames stored compactly: every bit comes back, and the band columns cost almost nothing."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import explain
from webapp.store.frames import choose_codecs, decode_frame, encode_frame


def assert_identical(back: pd.DataFrame, frame: pd.DataFrame) -> None:
    """Equal frames, dtypes, index and frequency, and every value bit for bit (NaNs too)."""
    pd.testing.assert_frame_equal(back, frame, check_exact=True, check_freq=True)
    assert getattr(back.index, "freq", None) == getattr(frame.index, "freq", None)
    assert list(back.columns) == list(frame.columns)
    for name in frame.columns:
        left, right = frame[name].to_numpy(), back[name].to_numpy()
        assert left.dtype == right.dtype, name
        assert left.tobytes() == right.tobytes(), name


def minutes_with_a_daily_cycle(weeks: int, decimals: int | None, seed: int = 3) -> pd.Series:
    """Synthetic 1-minute data: a daily cycle, noise, a step at the end."""
    n = weeks * 7 * 1440
    index = pd.date_range("2026-09-07", periods=n, freq="1min", tz="UTC")
    rng = np.random.default_rng(seed)
    values = 200 + 40 * np.sin(2 * np.pi * np.arange(n) / 1440) + rng.normal(0, 5, n)
    values[-90:] += 120
    series = pd.Series(values, index=index, name="checkout.latency_p95{host=api-2}")
    series.iloc[5000:5200] = np.nan
    return series.round(decimals) if decimals is not None else series


@pytest.fixture(scope="module")
def band_frame() -> pd.DataFrame:
    series = minutes_with_a_daily_cycle(3, decimals=1)
    window = (series.index[-240], series.index[-1])
    return explain(series, window=window, history=pd.Timedelta(weeks=2)).frame


def test_an_explanation_frame_comes_back_bit_for_bit(band_frame):
    assert_identical(decode_frame(encode_frame(band_frame)), band_frame)


def test_band_columns_are_stored_as_formulas_of_the_others(band_frame):
    codecs = choose_codecs(band_frame)
    lower = codecs["lower"]  # expected + k x band_scale, k the calibrated lower side
    assert lower.kind == "scaled" and lower.refs == ("expected", "band_scale")
    assert -4.0 < lower.number < -2.0
    assert codecs["residual"].kind == "difference"
    assert codecs["value"].kind == "decimal" and codecs["value"].number == 1.0
    # The frame holds 13 columns of 8-byte values; stored, it is a small fraction of that.
    raw = band_frame.memory_usage(deep=True).sum()
    assert len(encode_frame(band_frame)) < raw / 10


def test_odd_floats_survive_every_codec():
    """NaN payloads, signed zeros, infinities and denormals go through the XOR exactly."""
    odd = np.array([0.0, -0.0, np.inf, -np.inf, 5e-324, np.nan, 1.5, -2.25] * 50)
    odd[5] = np.frombuffer(np.uint64(0x7FF8_0000_DEAD_BEEF).tobytes(), dtype=np.float64)[0]
    index = pd.date_range("2026-03-29", periods=len(odd), freq="30min", tz="UTC")
    frame = pd.DataFrame(
        {
            "a": odd,
            "b": odd * 2,  # a formula of "a" wherever the product is exact
            "c": np.cumsum(np.ones(len(odd))) / 10,
            "d": np.round(np.linspace(-3, 3, len(odd)), 2),
            "flag": np.arange(len(odd)) % 3 == 0,
            "count": np.arange(len(odd), dtype=np.int64),
            "label": ["x", None] * (len(odd) // 2),
        },
        index=index,
    )
    back = decode_frame(encode_frame(frame))
    assert_identical(back, frame)
    assert back.index.freqstr == "30min"


def test_frames_written_as_plain_parquet_still_open():
    import io

    import pyarrow as pa
    import pyarrow.parquet as pq

    index = pd.DatetimeIndex(["2026-11-30 01:00", "2026-11-30 01:01"], tz="UTC", name="ts")
    frame = pd.DataFrame({"value": [1.0, np.nan], "outside": [False, True]}, index=index)
    buffer = io.BytesIO()
    pq.write_table(pa.Table.from_pandas(frame, preserve_index=True), buffer)
    assert_identical(decode_frame(buffer.getvalue()), frame)


def test_column_names_must_be_unique_text():
    with pytest.raises(ValueError, match="unique text column names"):
        encode_frame(pd.DataFrame({1: [1.0, 2.0], "x": [3.0, 4.0]}))
    with pytest.raises(ValueError, match="unique text column names"):
        encode_frame(pd.DataFrame([[1.0, 2.0]], columns=["x", "x"]))


def test_an_empty_frame_round_trips():
    empty = pd.DataFrame({"value": pd.Series([], dtype=np.float64)})
    assert_identical(decode_frame(encode_frame(empty)), empty)
