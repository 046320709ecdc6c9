import numpy as np
import pandas as pd
import pytest

from webapp.analysis import infer_step, regularize
from webapp.analysis._grid import find_gaps


def jittered(n=500, step="5min", jitter_s=20, seed=0):
    rng = np.random.default_rng(seed)
    base = pd.date_range("2026-03-02", periods=n, freq=step, tz="UTC")
    noise = pd.to_timedelta(rng.uniform(-jitter_s, jitter_s, n), unit="s")
    return pd.Series(np.arange(n, dtype=float), index=base + noise)


def test_step_of_jittered_points_snaps_to_the_round_step():
    assert infer_step(jittered().index) == pd.Timedelta("5min")


def test_step_ignores_long_outages_and_duplicates():
    index = pd.date_range("2026-03-02", periods=300, freq="1min", tz="UTC")
    index = index.delete(range(100, 200)).append(index[:5]).sort_values()
    assert infer_step(index) == pd.Timedelta("1min")


def test_odd_step_is_kept_to_the_second():
    index = pd.date_range("2026-03-02", periods=50, freq="37s", tz="UTC")
    assert infer_step(index) == pd.Timedelta("37s")


def test_regularize_snaps_to_nearest_slot_and_keeps_gaps():
    s = jittered(n=12)
    s = s.drop(s.index[[4, 5]])
    out = regularize(s)
    assert (out.index[1:] - out.index[:-1] == pd.Timedelta("5min")).all()
    assert out.index[0] == pd.Timestamp("2026-03-02", tz="UTC")
    assert out.isna().sum() == 2
    assert out.iloc[4:6].isna().all()
    np.testing.assert_array_equal(out.dropna().to_numpy(), s.to_numpy())
    assert find_gaps(out) == [(out.index[4], out.index[6])]


def test_sum_aggregation_for_counts():
    index = pd.DatetimeIndex(
        ["2026-03-02 00:00:10", "2026-03-02 00:00:20", "2026-03-02 00:01:05"], tz="UTC"
    )
    s = pd.Series([1.0, 2.0, 5.0], index=index)
    assert regularize(s, "1min", agg="sum").tolist() == [3.0, 5.0]
    assert regularize(s, "1min", agg="mean").tolist() == [1.5, 5.0]


def test_grid_follows_the_data_offset():
    index = pd.date_range("2026-03-02 00:02:30", periods=10, freq="5min", tz="UTC")
    out = regularize(pd.Series(1.0, index=index))
    assert out.index[0] == index[0] and len(out) == 10


def test_naive_timestamps_are_utc():
    s = pd.Series([1.0, 2.0], index=pd.DatetimeIndex(["2026-03-02 00:00", "2026-03-02 00:05"]))
    assert str(regularize(s).index.tz) == "UTC"


def test_gap_at_the_end_ends_one_step_after():
    s = pd.Series([1.0, np.nan, np.nan], index=pd.date_range("2026-03-02", periods=3, freq="1h"))
    out = regularize(s, "1h", end="2026-03-02 02:00")
    assert find_gaps(out) == [
        (pd.Timestamp("2026-03-02 01:00", tz="UTC"), pd.Timestamp("2026-03-02 03:00", tz="UTC"))
    ]


@pytest.mark.parametrize(
    ("series", "message"),
    [
        (pd.Series([], dtype=float, index=pd.DatetimeIndex([], tz="UTC")), "no values"),
        (pd.Series([np.nan, np.nan], index=pd.date_range("2026", periods=2)), "no values"),
        (pd.Series([1.0, 2.0]), "indexed by timestamps"),
        (pd.Series(["a", "b"], index=pd.date_range("2026", periods=2)), "must be numbers"),
        ([1, 2, 3], "pandas Series"),
    ],
)
def test_bad_input_gets_a_clear_message(series, message):
    with pytest.raises(ValueError, match=message):
        regularize(series)


def test_bad_agg_is_refused():
    with pytest.raises(ValueError, match="agg must be 'mean' or 'sum'"):
        regularize(jittered(), agg="max")


def test_single_timestamp_cannot_give_a_step():
    with pytest.raises(ValueError, match="two distinct timestamps"):
        infer_step(pd.DatetimeIndex(["2026-03-02"], tz="UTC"))
