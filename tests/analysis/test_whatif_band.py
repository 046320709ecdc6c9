"""band_sweep(): a band rule's tolerances by holds, and the verdict drawn from it.

Series are synthetic (invented for the test)."""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import (
    BandRule,
    ThresholdRule,
    band_sweep,
    draft_verdict,
    replay_report,
    sweep_grid,
)

T0 = pd.Timestamp("2026-03-02 00:00", tz="UTC")
DAY = pd.Timedelta(days=1)
HOUR = pd.Timedelta(hours=1)


def daily(seed: int, days: int = 6) -> pd.Series:
    """5-minute data: a daily cycle plus unit noise, and a one-hour jump of +60 on day 5."""
    index = pd.date_range(T0, T0 + days * DAY, freq="5min", inclusive="left")
    hours = np.asarray((index - T0) / HOUR)
    rng = np.random.default_rng(seed)
    values = 100 + 20 * np.sin(2 * np.pi * hours / 24) + rng.normal(0, 1, len(index))
    jump = (index >= T0 + 5 * DAY + 9 * HOUR) & (index < T0 + 5 * DAY + 10 * HOUR)
    values[jump] += 60
    return pd.Series(values, index=index)


INCIDENTS = [(T0 + 5 * DAY + 9 * HOUR, T0 + 5 * DAY + 10 * HOUR)]
RULE = BandRule(tolerance=2.0, history=pd.Timedelta(days=3), min_history=DAY, direction="above")
TOLERANCES = [1.5, 2.0, 3.0, 5.0, 8.0, 20.0]
PENDINGS = [pd.Timedelta(0), pd.Timedelta("10min"), pd.Timedelta("30min")]


@pytest.fixture(scope="module")
def sweep():
    return band_sweep(daily(4), RULE, TOLERANCES, PENDINGS, INCIDENTS)


def test_time_raised_never_grows_with_a_higher_tolerance_or_a_longer_pending(sweep):
    table = sweep.pivot(index="tolerance", columns="hold", values="time_raised")
    by_level = table.to_numpy().astype("int64")
    assert (np.diff(by_level, axis=0) <= 0).all()
    assert (np.diff(by_level, axis=1) <= 0).all()
    assert by_level[0, 0] > by_level[-1, -1]  # the sweep does move something


def test_each_row_is_the_replay_of_that_band_rule(sweep):
    for tolerance, hold in [(2.0, pd.Timedelta(0)), (5.0, pd.Timedelta("10min"))]:
        row = sweep[(sweep["tolerance"] == tolerance) & (sweep["hold"] == hold)].iloc[0]
        rule = BandRule(
            tolerance=tolerance,
            hold=hold,
            history=RULE.history,
            min_history=RULE.min_history,
            direction="above",
        )
        report = replay_report(daily(4), rule, INCIDENTS)
        assert row["firings"] == report.n_firings
        assert row["time_raised"] == report.time_raised
        assert row["caught"] == tuple(report.caught)


def test_a_noisy_band_rule_is_drafted_to_a_wider_tolerance(sweep):
    report = replay_report(daily(4), RULE, INCIDENTS)
    assert report.caught == [0] and report.outside > 3
    verdict = draft_verdict(report, sweep, RULE)
    assert verdict.suggestion == "tune"
    assert verdict.parameters["kind"] == "band"
    assert verdict.parameters["tolerance"] > RULE.tolerance
    assert f"With band width {verdict.parameters['tolerance']:g}σ" in verdict.rationale


def test_a_threshold_sweep_cannot_draft_a_band_rule(sweep):
    report = replay_report(daily(4), RULE, INCIDENTS)
    threshold_rule = ThresholdRule(above=150)
    with pytest.raises(ValueError, match="no 'threshold' column"):
        draft_verdict(replay_report(daily(4), threshold_rule, INCIDENTS), sweep, threshold_rule)
    assert draft_verdict(report, sweep, RULE).suggestion == "tune"


def test_band_sweep_arguments():
    with pytest.raises(ValueError, match="tolerances must be positive"):
        band_sweep(daily(4), RULE, [0, 1], PENDINGS)
    with pytest.raises(ValueError, match="varies a band rule"):
        band_sweep(daily(4), ThresholdRule(above=1), [1], PENDINGS)


def test_default_band_grid_holds_the_current_setting():
    tolerances, holds = sweep_grid(daily(4), BandRule(tolerance=4.5, hold="7min"))
    assert 4.5 in tolerances and tolerances == sorted(tolerances)
    assert pd.Timedelta("7min") in holds


def test_bands_built_once_give_the_same_report_and_sweep(sweep):
    """A caller may fit the daily bands once (band_grid) and hand them to both."""
    from webapp.analysis import band_grid

    series = daily(4)
    bands = band_grid(series, RULE)
    fresh = replay_report(series, RULE, INCIDENTS)
    reused = replay_report(series, RULE, INCIDENTS, bands=bands)
    pd.testing.assert_frame_equal(reused.firings, fresh.firings)
    assert reused.to_dict() == fresh.to_dict()
    again = band_sweep(series, RULE, TOLERANCES, PENDINGS, INCIDENTS, bands=bands)
    pd.testing.assert_frame_equal(again, sweep)
    raised = dataclasses.replace(bands, expected=bands.expected + 1000.0)  # really used:
    assert replay_report(series, RULE, INCIDENTS, bands=raised).n_firings == 0
    assert fresh.n_firings > 0
