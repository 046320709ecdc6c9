"""whatif_sweep(): monotonic where it must be, and the same numbers as one replay per setting.

Series are synthetic (invented for the test)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from webapp.analysis import ThresholdRule, replay, replay_report, sweep_grid, whatif_sweep

T0 = pd.Timestamp("2026-03-02 00:00", tz="UTC")
MIN = pd.Timedelta(minutes=1)


def walk(seed: int, n: int = 3000) -> pd.Series:
    rng = np.random.default_rng(seed)
    values = np.cumsum(rng.normal(0, 1, n))
    values[rng.random(n) < 0.02] = np.nan
    return pd.Series(values, index=pd.date_range(T0, periods=n, freq="1min"))


PENDINGS = [pd.Timedelta(minutes=m) for m in (0, 1, 3, 10, 30)]


@settings(max_examples=40, deadline=None)
@given(
    seed=st.integers(0, 10_000),
    thresholds=st.lists(st.floats(-30, 30), min_size=2, max_size=8, unique=True),
)
def test_time_raised_never_grows_with_a_higher_above_threshold_or_a_longer_pending(
    seed, thresholds
):
    sweep = whatif_sweep(walk(seed), thresholds, PENDINGS, direction="above")
    table = sweep.pivot(index="threshold", columns="hold", values="time_raised")
    by_threshold = table.to_numpy().astype("int64")
    assert (np.diff(by_threshold, axis=0) <= 0).all()  # rows: ascending thresholds
    assert (np.diff(by_threshold, axis=1) <= 0).all()  # columns: ascending holds


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 10_000), thresholds=st.lists(st.floats(-30, 30), min_size=2, max_size=6))
def test_for_a_below_rule_a_lower_threshold_never_fires_longer(seed, thresholds):
    sweep = whatif_sweep(walk(seed), thresholds, PENDINGS, direction="below")
    table = sweep.pivot(index="threshold", columns="hold", values="time_raised")
    assert (np.diff(table.to_numpy().astype("int64"), axis=0) >= 0).all()


def test_firing_counts_are_not_monotonic_a_higher_threshold_can_split_a_firing():
    # 6 6 4 6 6: above 3 is one firing; above 5 is two (the 4 splits it).
    series = pd.Series([6, 6, 4, 6, 6, 0.0], index=pd.date_range(T0, periods=6, freq="1min"))
    sweep = whatif_sweep(series, [3, 5], [pd.Timedelta(0)])
    assert sweep["firings"].tolist() == [1, 2]
    assert sweep["time_raised"].tolist() == [5 * MIN, 4 * MIN]


def test_every_row_agrees_with_a_replay_report_of_that_setting():
    series = walk(3)
    incidents = [(T0 + 400 * MIN, T0 + 460 * MIN), (T0 + 2000 * MIN, T0 + 2100 * MIN)]
    thresholds = list(np.nanquantile(series, [0.5, 0.8, 0.95]))
    sweep = whatif_sweep(series, thresholds, PENDINGS, incidents)
    assert len(sweep) == len(thresholds) * len(PENDINGS)
    for row in sweep.itertuples(index=False):
        rule = ThresholdRule(above=row.threshold, hold=row.hold)
        report = replay_report(series, rule, incidents)
        assert row.firings == report.n_firings == len(replay(series, rule))
        assert row.pages_per_week == pytest.approx(report.pages_per_week)
        assert row.time_raised == report.time_raised
        assert row.caught == tuple(report.caught)
        assert (row.incidents_caught, row.incidents_missed) == (
            len(report.caught),
            len(report.missed),
        )
        if report.caught:
            assert row.median_delay == report.median_delay
        else:
            assert pd.isna(row.median_delay)


def test_columns_and_order():
    sweep = whatif_sweep(walk(1), [5, 1], ["10min", "0s"])
    assert list(sweep.columns) == [
        "threshold",
        "hold",
        "firings",
        "pages_per_week",
        "time_raised",
        "incidents_caught",
        "incidents_missed",
        "median_delay",
        "caught",
    ]
    assert sweep["threshold"].tolist() == [1, 1, 5, 5]
    assert sweep["hold"].tolist() == [pd.Timedelta(0), 10 * MIN] * 2


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"thresholds": []}, "at least one threshold"),
        ({"thresholds": [float("inf")]}, "finite"),
        ({"holds": ["-1min"]}, "none negative"),
        ({"holds": []}, "at least one hold"),
        ({"direction": "sideways"}, "direction must be"),
    ],
)
def test_bad_sweep_arguments(kwargs, message):
    arguments = {"thresholds": [1.0], "holds": ["1min"], **kwargs}
    with pytest.raises(ValueError, match=message):
        whatif_sweep(walk(1), **arguments)


def test_default_grid_contains_the_current_setting_and_spans_around_it():
    rule = ThresholdRule(above=800, hold="7min")
    thresholds, holds = sweep_grid(walk(2) * 100, rule)
    assert 800 in thresholds and 400 in thresholds and 1600 in thresholds
    assert thresholds == sorted(thresholds)
    assert pd.Timedelta("7min") in holds and pd.Timedelta(0) in holds
