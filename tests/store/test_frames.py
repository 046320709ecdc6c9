"""Frames stored compactly: every bit comes back, and the band columns cost almost nothing."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import explain
from webapp.store import frames
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
    # The sides are expected + k * band_scale, k a calibrated quantile (any double): one of
    # them is that formula, the other one too or the column the band is rebuilt from.
    scaled = [side for side in ("lower", "upper") if codecs[side].kind == "scaled"]
    assert scaled
    for side in scaled:
        codec = codecs[side]
        a, b = (band_frame[ref] for ref in codec.refs)
        assert ((a + codec.number * b) == band_frame[side]).mean() > 0.9, side
    sides = len(encode_frame(band_frame)) - len(encode_frame(band_frame.drop(columns=scaled)))
    assert sides < 0.02 * 8 * len(band_frame) * len(scaled)
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


def quieter_nights(weeks: int, seed: int = 11) -> pd.Series:
    """Synthetic 1-minute data whose noise is three times larger by day than by night, so
    the band's scale follows the hour of day."""
    n = weeks * 7 * 1440
    index = pd.date_range("2026-06-01", periods=n, freq="1min", tz="UTC")
    hour = (np.arange(n) % 1440) / 60
    noise = np.where((hour > 7) & (hour < 21), 9.0, 3.0)
    values = 80 + 20 * np.sin(2 * np.pi * hour / 24) + np.random.default_rng(seed).normal(0, noise)
    return pd.Series(np.round(values, 2), index=index, name="queue.depth")


def explained(series: pd.Series, **options) -> pd.DataFrame:
    window = (series.index[-180], series.index[-1])
    return explain(series, window=window, history=pd.Timedelta(weeks=2), **options).frame


def test_a_band_scale_that_follows_the_hour_keeps_the_sides_as_formulas():
    frame = explained(quieter_nights(3))
    assert frame["band_scale"].nunique() > 24  # the scale does vary with the hour
    codecs = choose_codecs(frame)
    scaled = [side for side in ("lower", "upper") if codecs[side].kind == "scaled"]
    assert scaled
    for side in scaled:
        a, b = (frame[ref] for ref in codecs[side].refs)
        assert ((a + codecs[side].number * b) == frame[side]).mean() > 0.9, side
    assert_identical(decode_frame(encode_frame(frame)), frame)


def test_a_frame_with_excluded_periods_comes_back_bit_for_bit():
    series = quieter_nights(3, seed=4)
    day = series.index[0] + pd.Timedelta(days=9)
    frame = explained(series, exclude=[(day, day + pd.Timedelta(hours=20))])
    assert frame["excluded"].any()
    assert_identical(decode_frame(encode_frame(frame)), frame)


def test_a_count_series_comes_back_bit_for_bit():
    n = 3 * 7 * 1440
    index = pd.date_range("2026-02-02", periods=n, freq="1min", tz="UTC")
    rate = 2 + 1.5 * np.sin(2 * np.pi * np.arange(n) / 1440)
    counts = pd.Series(np.random.default_rng(8).poisson(rate).astype(float), index=index)
    frame = explained(counts.rename("checkout.errors"), agg="sum")
    assert (frame["upper"].dropna() == frame["upper"].dropna().round()).all()  # whole counts
    assert_identical(decode_frame(encode_frame(frame)), frame)


def test_blocks_and_alternate_rows_restore_every_bit():
    """A pattern interpolated two rows per bin, repeating some days and changing on others,
    with a gap: the codecs built for it, forced on every column, decode exactly."""
    per_day = 1440
    rng = np.random.default_rng(2)
    tables = np.repeat(rng.normal(0, 30, (1, 721)), 10, axis=0)
    tables[4:7] += rng.normal(0, 1, (3, 721))  # three days whose pattern moves
    rows = np.arange(per_day)
    left, frac = rows // 2, np.where(rows % 2 == 0, 0.25, 0.75)
    days = [(1 - frac) * t[left] + frac * t[left + 1] for t in tables]
    x = np.concatenate(days)
    x[3000:3100] = np.nan
    frame = pd.DataFrame(
        {"pattern": x}, index=pd.date_range("2026-04-01", periods=len(x), freq="1min")
    )
    alternate = frames._alternate_codec(x, 1)  # rows 1, 3, ...: the second of each bin
    assert alternate is not None and np.allclose(alternate.coefs, (3, -3, 1), atol=1e-6)
    lags = frames._grid_lags(frame.index)
    block = frames._block_rows(lags)
    candidates = [frames.Codec("linear"), alternate, frames.Codec("lag", number=per_day)]
    blocks = frames._blocks_codec(x, candidates, block)
    assert {part.kind for part, _ in blocks.runs} >= {"lag", "alternate"}
    for codec in (alternate, blocks):
        words = frames._grouped(frames._own_words(x, codec), codec)
        back = frames._undo_own(frames._grouped(words, codec, undo=True), codec)
        assert back.tobytes() == x.tobytes(), codec.kind
    assert_identical(decode_frame(encode_frame(frame)), frame)


def test_a_frame_whose_codecs_would_not_restore_it_is_stored_plain(band_frame, monkeypatch):
    """The safety net: the compact bytes are checked before they are kept."""
    real = frames._decode_column

    def off_by_one_bit(frame, name, codec):
        out = np.array(real(frame, name, codec), dtype=np.float64)
        if name == "residual":
            out.view(np.uint64)[7] ^= np.uint64(1)
        return out

    monkeypatch.setattr(frames, "_decode_column", off_by_one_bit)
    data = encode_frame(band_frame)
    monkeypatch.undo()
    assert frames.CODECS_KEY not in (pq_metadata(data) or {})
    assert_identical(decode_frame(data), band_frame)


def pq_metadata(data: bytes) -> dict | None:
    import io

    import pyarrow.parquet as pq

    return pq.read_schema(io.BytesIO(data)).metadata
