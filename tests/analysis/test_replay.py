"""replay(): the semantics in docs/design.md, hand-worked examples, a brute-force property test.

Every series here is synthetic (invented for the test)."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from webapp.analysis import ThresholdRule, replay, rule_from_fields

T0 = pd.Timestamp("2026-03-02 00:00", tz="UTC")
MIN = pd.Timedelta(minutes=1)


def minutes(*values: float, start: pd.Timestamp = T0) -> pd.Series:
    return pd.Series(values, index=pd.date_range(start, periods=len(values), freq="1min"))


def at(minute: float) -> pd.Timestamp:
    return T0 + minute * MIN


def pairs(firings: pd.DataFrame) -> list[tuple[pd.Timestamp, pd.Timestamp | None]]:
    return [(s, None if pd.isna(e) else e) for s, e in firings.itertuples(index=False)]


# ---------------------------------------------------------------- hand-worked examples


def test_the_hold_delays_the_start_and_drops_short_runs():
    # minute:    0  1  2  3  4  5  6
    # value:     1  5  5  5  1  5  5      above 2 for 2 min
    # true from minute 1; held 2 min at minute 3 -> fires at 3; false at 4 -> ends at 4.
    # true again from 5; at 6 it has held 1 min only, and the data ends: no firing.
    firings = replay(minutes(1, 5, 5, 5, 1, 5, 5), ThresholdRule(above=2, hold="2min"))
    assert pairs(firings) == [(at(3), at(4))]


def test_without_pending_every_true_run_fires_and_the_last_stays_open():
    # minute:    0  1  2    3  4  5       below 5, no hold
    # value:     9  1  NaN  1  1  1
    # 1 is below 5 at minute 1; NaN at 2 counts as false -> ends at 2;
    # true again from 3 to the end of the data -> still raised (end NaT).
    firings = replay(minutes(9, 1, np.nan, 1, 1, 1), ThresholdRule(below=5))
    assert pairs(firings) == [(at(1), at(2)), (at(3), None)]


def test_a_missing_timestamp_is_no_data_and_ends_the_firing():
    # samples at minutes 0 1 2 _ 4 5 (minute 3 missing), all 10; above 5 for 1 min.
    # run 0..2 fires at 1 and ends at 3 (no data); run 4..5 fires at 5, open at the end.
    series = minutes(10, 10, 10, 10, 10, 10).drop(at(3))
    firings = replay(series, ThresholdRule(above=5, hold="1min", check_every="1min"))
    assert pairs(firings) == [(at(1), at(3)), (at(5), None)]


def test_a_coarser_step_sees_the_last_sample_of_each_step():
    # 30-second samples checked every minute: the evaluation at t sees the last sample
    # in (t - 1 min, t].
    # time:   00:00 00:30 01:00 01:30 02:00 02:30 03:00
    # value:      1     9     1     9     9     9     1
    # grid 00:00 -> 1; 01:00 -> last of (00:30, 01:00] = 1; 02:00 -> 9; 03:00 -> 1.
    index = pd.date_range(T0, periods=7, freq="30s")
    series = pd.Series([1, 9, 1, 9, 9, 9, 1.0], index=index)
    firings = replay(series, ThresholdRule(above=5, check_every="1min"))
    assert pairs(firings) == [(at(2), at(3))]


def test_a_value_equal_to_the_threshold_is_not_above_it():
    firings = replay(minutes(5, 5, 6, 5), ThresholdRule(above=5))
    assert pairs(firings) == [(at(2), at(3))]


def test_a_hold_between_steps_rounds_up_to_the_next_evaluation():
    # 90 s on a 1-minute grid: a run starting at 0 fires at 2 (the first sample >= 90 s on).
    firings = replay(minutes(7, 7, 7, 7, 0), ThresholdRule(above=5, hold="90s"))
    assert pairs(firings) == [(at(2), at(4))]


def test_timestamps_between_grid_times_are_evaluated_at_the_next_one():
    # samples at 00:00:20, 01:20, 02:20, 03:20 with values 0 8 8 0 land on the grid
    # times 01:00, 02:00, 03:00, 04:00: the firing is 02:00 to 04:00.
    index = pd.date_range(T0 + pd.Timedelta(seconds=20), periods=4, freq="1min")
    firings = replay(pd.Series([0, 8, 8, 0.0], index=index), ThresholdRule(above=5))
    assert pairs(firings) == [(at(2), at(4))]


def test_unsorted_and_naive_timestamps_are_accepted_as_utc():
    series = minutes(1, 5, 5, 1)
    shuffled = series.iloc[[2, 0, 3, 1]]
    shuffled.index = shuffled.index.tz_localize(None)
    assert pairs(replay(shuffled, ThresholdRule(above=2))) == [(at(1), at(3))]


def test_no_firing_gives_an_empty_frame_with_the_columns():
    firings = replay(minutes(1, 1, 1), ThresholdRule(above=2))
    assert list(firings.columns) == ["start", "end"]
    assert firings.empty


def test_rule_text_reads_like_the_rule():
    assert ThresholdRule(above=800, hold="5min").text == "above 800 for 5min"
    rule = ThresholdRule(below=0.5, hold="90s", check_every="30s")
    assert rule.text == "below 0.5 for 90s, checked every 30s"


def test_rule_from_stored_fields():
    rule = rule_from_fields(
        {"kind": "threshold", "direction": "below", "threshold": 3, "hold_seconds": 120}
    )
    assert rule == ThresholdRule(below=3.0, hold=pd.Timedelta(minutes=2))
    band = rule_from_fields({"kind": "band", "tolerance": 4, "hold_seconds": 60})
    assert (band.tolerance, band.hold, band.direction) == (4.0, MIN, "both")


# ---------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({}, "exactly one of 'above' and 'below'"),
        ({"above": 1, "below": 2}, "exactly one of 'above' and 'below'"),
        ({"above": float("nan")}, "finite number"),
        ({"above": 1, "hold": "-1min"}, "must not be negative"),
        ({"above": 1, "hold": "soon"}, "must be a duration"),
        ({"above": 1, "check_every": "0s"}, "check interval must be positive"),
    ],
)
def test_threshold_rule_validation(kwargs, message):
    with pytest.raises(ValueError, match=message):
        ThresholdRule(**kwargs)


def test_replay_rejects_an_empty_or_all_missing_series():
    with pytest.raises(ValueError, match="no values"):
        replay(minutes(np.nan, np.nan), ThresholdRule(above=1))
    with pytest.raises(ValueError, match="no values"):
        replay(
            pd.Series([], index=pd.DatetimeIndex([], tz="UTC"), dtype=float), ThresholdRule(above=1)
        )


def test_replay_rejects_what_is_not_a_time_series_or_a_rule():
    with pytest.raises(ValueError, match="DatetimeIndex"):
        replay(pd.Series([1.0, 2.0]), ThresholdRule(above=1))
    with pytest.raises(ValueError, match="ThresholdRule or a BandRule"):
        replay(minutes(1, 2), {"above": 1})


def test_a_single_sample_needs_an_explicit_step():
    with pytest.raises(ValueError, match="single sample"):
        replay(minutes(9), ThresholdRule(above=1))
    assert pairs(replay(minutes(9), ThresholdRule(above=1, check_every="1min"))) == [(at(0), None)]


def test_rule_from_fields_says_what_is_missing():
    with pytest.raises(ValueError, match="needs a threshold"):
        rule_from_fields({"kind": "threshold", "direction": "above"})
    with pytest.raises(ValueError, match="unknown rule kind"):
        rule_from_fields({"kind": "forecast"})


# ---------------------------------------------------------------- brute force


def brute_force(
    samples: list[tuple[int, float]], step_s: int, hold_s: int, above: float
) -> list[tuple[int, int | None]]:
    """An independent per-sample loop over the documented semantics (times in seconds).

    Each grid time t = k * step sees the last sample in (t - step, t]; no sample or NaN is
    false; a firing starts at the first grid time at which the condition has held for the
    hold since the run began, and ends at the first later false grid time.
    """
    last: dict[int, float] = {}
    for t, value in sorted(samples, key=lambda s: s[0]):
        last[math.ceil(t / step_s)] = value
    ks = range(min(last), max(last) + 1)
    firings: list[tuple[int, int | None]] = []
    since = firing = None
    for k in ks:
        t = k * step_s
        value = last.get(k)
        holds = value is not None and not math.isnan(value) and value > above
        if holds:
            since = t if since is None else since
            if firing is None and t - since >= hold_s:
                firing = t
        else:
            if firing is not None:
                firings.append((firing, t))
            since = firing = None
    if firing is not None:
        firings.append((firing, None))
    return firings


def as_seconds(firings: pd.DataFrame) -> list[tuple[int, int | None]]:
    epoch = pd.Timestamp(0, tz="UTC")
    return [
        (int((s - epoch).total_seconds()), None if pd.isna(e) else int((e - epoch).total_seconds()))
        for s, e in firings.itertuples(index=False)
    ]


values = st.one_of(st.floats(0, 10, allow_nan=False), st.just(math.nan))


@settings(max_examples=200, deadline=None)
@given(
    data=st.lists(st.tuples(st.booleans(), values), min_size=1, max_size=120),
    hold_min=st.integers(0, 6),
    above=st.floats(0, 10, allow_nan=False),
)
def test_replay_matches_a_brute_force_loop_on_grid_aligned_series(data, hold_min, above):
    # A minute grid with some timestamps dropped (False) and some values NaN.
    start = 1_800_000_000 // 60 * 60
    samples = [(start + 60 * i, v) for i, (present, v) in enumerate(data) if present or i == 0]
    index = pd.to_datetime([t for t, _ in samples], unit="s", utc=True)
    series = pd.Series([v for _, v in samples], index=index)
    if series.isna().all():
        return
    rule = ThresholdRule(above=above, hold=pd.Timedelta(minutes=hold_min), check_every="1min")
    kept = [(t, v) for t, v in samples if not math.isnan(v)]
    expected = brute_force(kept, 60, 60 * hold_min, above)
    assert as_seconds(replay(series, rule)) == expected


@settings(max_examples=150, deadline=None)
@given(
    gaps=st.lists(st.integers(1, 170), min_size=2, max_size=80),
    levels=st.lists(st.floats(0, 10, allow_nan=False), min_size=80, max_size=80),
    step_s=st.sampled_from([30, 60, 120, 300]),
    hold_s=st.sampled_from([0, 45, 60, 300, 600]),
)
def test_replay_matches_a_brute_force_loop_on_irregular_timestamps(gaps, levels, step_s, hold_s):
    times = 1_800_000_007 + np.cumsum(gaps)
    samples = list(zip(times.tolist(), levels[: len(times)], strict=True))
    index = pd.to_datetime(times, unit="s", utc=True)
    series = pd.Series([v for _, v in samples], index=index)
    rule = ThresholdRule(above=5.0, hold=pd.Timedelta(seconds=hold_s), check_every=f"{step_s}s")
    assert as_seconds(replay(series, rule)) == brute_force(samples, step_s, hold_s, 5.0)


@settings(max_examples=50, deadline=None)
@given(levels=st.lists(values, min_size=2, max_size=60), limit=st.floats(0, 10))
def test_below_is_above_on_the_mirrored_series(levels, limit):
    series = minutes(*levels)
    if series.isna().all():
        return
    below = replay(series, ThresholdRule(below=limit, hold="2min", check_every="1min"))
    above = replay(-series, ThresholdRule(above=-limit, hold="2min", check_every="1min"))
    pd.testing.assert_frame_equal(below, above)
