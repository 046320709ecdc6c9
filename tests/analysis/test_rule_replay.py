"""RuleReplay / RuleReplayResult: the model validates, the frozen result agrees with the
functions it composes (replay_report, whatif_sweep, draft_verdict). Series are synthetic
(invented for the test)."""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import (
    RuleReplay,
    ThresholdRule,
    draft_verdict,
    replay_report,
    whatif_sweep,
)

T0 = pd.Timestamp("2026-03-02 00:00", tz="UTC")
MIN = pd.Timedelta(minutes=1)


def two_days() -> pd.Series:
    """Two days of 1-minute zeros, an hour at 100 on day 2 and a 3-minute blip of 12 daily."""
    values = np.zeros(2 * 1440)
    values[1440 + 720 : 1440 + 780] = 100.0
    for day in (0, 1):
        values[day * 1440 + 540 : day * 1440 + 543] = 12.0
    return pd.Series(values, index=pd.date_range(T0, periods=values.size, freq="1min"))


SERIES = two_days()
INCIDENTS = [(T0 + (1440 + 720) * MIN, T0 + (1440 + 780) * MIN)]
RULE = ThresholdRule(above=10.0, hold="1min", check_every="1min")


def test_the_result_is_what_the_parts_give() -> None:
    grid = ([10.0, 50.0], [pd.Timedelta(0), pd.Timedelta("5min")])
    result = RuleReplay(SERIES, RULE, INCIDENTS, grid=grid).fit()
    report = replay_report(SERIES, RULE, INCIDENTS)
    holds = [pd.Timedelta(0), MIN, pd.Timedelta("5min")]
    sweep = whatif_sweep(SERIES, [10.0, 50.0], holds, INCIDENTS, check_every=RULE.check_every)
    pd.testing.assert_frame_equal(result.firings, report.firings)
    pd.testing.assert_frame_equal(result.sweep, sweep)
    assert result.draft == draft_verdict(report, sweep, RULE)
    assert result.grid == ([10.0, 50.0], [pd.Timedelta(0), MIN, pd.Timedelta("5min")])
    assert result.current == (10.0, MIN) and result.level == "threshold"
    assert result.bands is None


def test_a_tune_draft_names_the_drafted_setting() -> None:
    result = RuleReplay(SERIES, RULE, INCIDENTS, grid=([10.0, 50.0], ["0s", "5min"])).fit()
    assert result.draft.suggestion == "tune"
    level, hold = result.drafted
    assert level == result.draft.parameters["threshold"]
    assert hold == pd.Timedelta(seconds=result.draft.parameters["hold_seconds"])
    assert result.report.caught == [0]  # the one incident, caught


def test_the_result_is_frozen() -> None:
    result = RuleReplay(SERIES, RULE, INCIDENTS).fit()
    with pytest.raises(dataclasses.FrozenInstanceError):
        result.draft = None  # type: ignore[misc]


@pytest.mark.parametrize(
    ("args", "message"),
    [
        ((SERIES, "above 10"), "needs a ThresholdRule or a BandRule"),
        ((SERIES.to_numpy(), RULE), "needs a pandas Series"),
        ((SERIES * np.nan, RULE), "no points to replay"),
        ((SERIES, RULE, [("yesterday", T0)]), "incident 1 start"),
        ((SERIES, RULE, None, (), ([], ["5min"])), "at least one level and one hold"),
        ((SERIES, RULE, None, (), 7), "a sweep grid is"),
    ],
)
def test_the_model_says_what_is_wrong(args, message) -> None:
    with pytest.raises(ValueError, match=message):
        RuleReplay(*args)
