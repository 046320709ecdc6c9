"""BandRule: each day's band comes from the days before it, so replay never looks ahead.

Series are synthetic (invented for the test)."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import BandRule, replay, replay_report
from webapp.analysis._replay import band_grid, evaluate

T0 = pd.Timestamp("2026-03-02 00:00", tz="UTC")
DAY = pd.Timedelta(days=1)


def daily(days: int = 6, seed: int = 11) -> pd.Series:
    """5-minute data: a daily cycle plus unit noise."""
    index = pd.date_range(T0, T0 + days * DAY, freq="5min", inclusive="left")
    hours = (index - T0) / pd.Timedelta(hours=1)
    rng = np.random.default_rng(seed)
    values = 100 + 20 * np.sin(2 * np.pi * hours / 24) + rng.normal(0, 1, len(index))
    return pd.Series(values, index=index)


RULE = BandRule(tolerance=4.0, hold="15min", history=pd.Timedelta(days=3), min_history=DAY)


def test_changing_data_after_a_day_never_changes_that_days_firings():
    series = daily()
    cut = T0 + 4 * DAY
    changed = series.copy()
    later = changed.index >= cut
    changed[later] = changed[later] * 3 + 500  # a different world from day 4 on
    times, before, _ = evaluate(series, RULE)
    _, after, _ = evaluate(changed, RULE)
    np.testing.assert_array_equal(before[times < cut], after[times < cut])
    assert (after[times >= cut]).any()  # the change itself is seen where it happens

    def until_cut(firings: pd.DataFrame) -> pd.DataFrame:
        return firings[firings["start"] < cut].reset_index(drop=True)

    pd.testing.assert_frame_equal(
        until_cut(replay(series[series.index < cut], RULE)), until_cut(replay(changed, RULE))
    )


def test_a_sustained_jump_fires_once_the_hold_has_passed():
    series = daily()
    jump = (series.index >= T0 + 5 * DAY + pd.Timedelta(hours=3)) & (
        series.index < T0 + 5 * DAY + pd.Timedelta(hours=4)
    )
    series[jump] += 400
    firings = replay(series, replace(RULE, direction="above"))
    start = T0 + 5 * DAY + pd.Timedelta(hours=3)
    assert (firings["start"] == start + pd.Timedelta("15min")).any()
    assert (firings["end"] == start + pd.Timedelta(hours=1)).any()


def test_direction_above_ignores_a_dip_and_below_catches_it():
    series = daily()
    dip = (series.index >= T0 + 5 * DAY) & (series.index < T0 + 5 * DAY + pd.Timedelta(hours=1))
    series[dip] -= 400
    above = replay(series, replace(RULE, direction="above"))
    below = replay(series, replace(RULE, direction="below"))
    start, end = T0 + 5 * DAY, T0 + 5 * DAY + pd.Timedelta(hours=1)
    assert above[(above["start"] >= start) & (above["start"] < end)].empty
    assert len(below[(below["start"] >= start) & (below["start"] < end)]) == 1


def test_the_replay_starts_at_the_first_day_with_enough_history():
    series = daily(days=3)
    series[: 12 * 6] += 1000  # the first six hours, before any history exists
    times, condition, _ = evaluate(series, RULE)
    assert times[0] == T0 + DAY
    assert len(condition) == len(times) == 2 * 288
    report = replay_report(series, RULE)
    assert report.span == (T0 + DAY, T0 + 3 * DAY)


def test_too_little_history_for_any_band_is_a_clear_error():
    with pytest.raises(ValueError, match="needs at least 14d of data before a day"):
        replay(daily(days=6), BandRule())


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"tolerance": 0}, "tolerance must be a positive number"),
        ({"direction": "up"}, "direction must be"),
        ({"history": "0s"}, "history must be positive"),
        ({"tz": "Mars/Olympus"}, "unknown time zone"),
        ({"hold": "-5min"}, "must not be negative"),
    ],
)
def test_band_rule_validation(kwargs, message):
    with pytest.raises(ValueError, match=message):
        BandRule(**kwargs)


def test_an_excluded_bad_day_is_left_out_of_later_baselines():
    series = daily()
    bad = (series.index >= T0 + 2 * DAY) & (series.index < T0 + 3 * DAY)
    series[bad] += 300  # a whole bad day: in a 3-day baseline it lifts the trend
    day = T0 + 3 * DAY
    kept = band_grid(series, RULE)
    spans = [(T0 + 2 * DAY, T0 + 3 * DAY)]
    left_out = band_grid(series, RULE, exclude=spans)
    times, excluded, _ = evaluate(series, RULE, exclude=spans)
    clean_times, clean, _ = evaluate(daily().where(~bad), RULE)
    next_day = (kept.times >= day) & (kept.times < day + DAY)
    lift = kept.expected[next_day] - left_out.expected[next_day]
    assert np.median(lift) > 250  # kept, the bad day lifts the next day's expected value
    after = times >= day
    np.testing.assert_array_equal(excluded[after], clean[clean_times >= day])
