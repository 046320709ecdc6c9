import numpy as np
import pandas as pd
import pytest

from webapp.analysis import past_weeks_overlay


def hour_of_week_series(tz: str, start: str, weeks: int) -> pd.Series:
    """Each value is its own wall-clock hour-of-week in `tz` (0 = Monday 00:00)."""
    index = pd.date_range(start, periods=weeks * 7 * 96, freq="15min", tz="UTC")
    local = index.tz_convert(tz)
    values = local.day_of_week * 24 + local.hour + local.minute / 60
    return pd.Series(np.asarray(values, dtype=float), index=index)


def test_columns_and_statistics():
    index = pd.date_range("2026-01-05", periods=5 * 7 * 24, freq="1h", tz="UTC")
    series = pd.Series(np.arange(len(index), dtype=float), index=index)
    window = (index[-24], index[-1])
    ov = past_weeks_overlay(series, window, weeks=3)
    assert list(ov.columns) == [
        "week_-1",
        "week_-2",
        "week_-3",
        "median",
        "p10",
        "p90",
        "min",
        "max",
    ]
    assert ov.index.equals(index[-24:])
    np.testing.assert_array_equal(ov["week_-1"], series.iloc[-24:].to_numpy() - 168)
    np.testing.assert_array_equal(ov["week_-3"], series.iloc[-24:].to_numpy() - 3 * 168)
    past = ov[["week_-1", "week_-2", "week_-3"]].to_numpy()
    np.testing.assert_allclose(ov["median"], np.median(past, axis=1))
    np.testing.assert_allclose(ov["p10"], np.percentile(past, 10, axis=1))
    np.testing.assert_allclose(ov["max"], past.max(axis=1))


def test_weeks_before_the_data_are_nan():
    index = pd.date_range("2026-01-05", periods=2 * 7 * 24, freq="1h", tz="UTC")
    series = pd.Series(1.0, index=index)
    ov = past_weeks_overlay(series, (index[-5], index[-1]), weeks=4)
    assert ov["week_-1"].notna().all() and ov["week_-2"].isna().all()
    assert (ov["median"] == 1).all()


@pytest.mark.parametrize(
    ("tz", "start"), [("Europe/Berlin", "2026-03-09"), ("America/New_York", "2026-02-16")]
)
def test_weeks_align_on_the_wall_clock_across_daylight_saving(tz, start):
    # Clocks change inside these spans: every earlier week must sit at the same local time.
    series = hour_of_week_series(tz, start, weeks=4)
    window = (series.index[-96], series.index[-1])
    ov = past_weeks_overlay(series, window, weeks=3, tz=tz)
    here = series.loc[window[0] : window[1]].to_numpy()
    for k in (1, 2, 3):
        week = ov[f"week_-{k}"].to_numpy()
        # The local hour skipped in spring did not exist that week: at most 4 quarter-hours.
        assert np.isnan(week).sum() <= 4
        assert np.allclose(week[~np.isnan(week)], here[~np.isnan(week)])
    assert sum(ov[f"week_-{k}"].isna().sum() for k in (1, 2, 3)) == 4
    utc = past_weeks_overlay(series, window, weeks=3, tz="UTC")
    assert not np.allclose(utc["week_-3"], here)


def test_bad_weeks_argument():
    series = pd.Series(1.0, index=pd.date_range("2026-01-05", periods=10, freq="1h"))
    with pytest.raises(ValueError, match="weeks must be a positive whole number"):
        past_weeks_overlay(series, (series.index[0], series.index[-1]), weeks=0)
