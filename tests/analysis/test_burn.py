"""Burn-rate rules: the workbook's figures, replay semantics, budget spent and bad input.

Check values come from Beyer et al., *The Site Reliability Workbook* (2018), ch. 5 "Alerting
on SLOs": detection time = ((1 - SLO) / error ratio) x window x burn rate, budget consumed =
burn rate x window / period, and the recommended conditions for a 99.9% objective over 30
days (14.4x over 1 h with 5 min, 6x over 6 h with 30 min: pages; 1x over 3 days with 6 h: a
ticket). Every series here is synthetic (invented for the test).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import (
    WORKBOOK_WINDOWS,
    BurnRateRule,
    BurnWindow,
    budget_consumed,
    budget_spent,
    burn_rates,
    detection_time,
    event_grid,
    replay_burn,
)

T0 = pd.Timestamp("2026-03-02 00:00", tz="UTC")
MIN = pd.Timedelta(minutes=1)
HOUR = pd.Timedelta(hours=1)
DAY = pd.Timedelta(days=1)
PERIOD = pd.Timedelta(days=30)


def counts(total: float, bad: np.ndarray, step: pd.Timedelta = MIN) -> pd.DataFrame:
    """A good/total table with ``total`` events per sample and ``bad`` of them failing."""
    index = pd.date_range(T0, periods=len(bad), freq=step)
    return pd.DataFrame({"good": total - bad, "total": float(total)}, index=index)


def pairs(raised: pd.DataFrame) -> list[tuple[pd.Timestamp, pd.Timestamp | None]]:
    return [(s, None if pd.isna(e) else e) for s, e in raised.itertuples(index=False)]


# ---------------------------------------------------------------- the workbook's figures


@pytest.mark.parametrize(
    ("factor", "window", "share"),
    [
        # The Site Reliability Workbook (2018), ch. 5, table of recommended alerts:
        (14.4, HOUR, 0.02),  # 14.4 x 1 h / 30 d = 2% of the budget
        (6.0, 6 * HOUR, 0.05),  # 6 x 6 h / 30 d = 5%
        (1.0, 3 * DAY, 0.10),  # 1 x 3 d / 30 d = 10%
    ],
)
def test_budget_consumed_by_the_workbook_conditions(factor, window, share):
    assert budget_consumed(factor, window, PERIOD) == pytest.approx(share)


def test_a_total_outage_reaches_the_fast_page_in_51_84_seconds():
    # The Site Reliability Workbook (2018), ch. 5: ((1 - 0.999) / 1.0) x 1 h x 14.4 = 51.84 s
    # (computed from the workbook's formula).
    assert detection_time(0.999, 1.0, HOUR, 14.4) == pd.Timedelta(seconds=51.84)


def test_the_default_windows_are_the_workbook_table():
    # The Site Reliability Workbook (2018), ch. 5, recommended multiwindow alerts.
    table = [(w.long, w.short, w.factor, w.severity) for w in WORKBOOK_WINDOWS]
    assert table == [
        (HOUR, 5 * MIN, 14.4, "page"),
        (6 * HOUR, 30 * MIN, 6.0, "page"),
        (3 * DAY, 6 * HOUR, 1.0, "ticket"),
    ]
    rule = BurnRateRule()
    assert (rule.objective, rule.period, rule.hold) == (0.999, PERIOD, pd.Timedelta(0))
    assert rule.conditions == WORKBOOK_WINDOWS[:2]
    assert BurnRateRule(severity="ticket").conditions == WORKBOOK_WINDOWS[2:]


@pytest.mark.parametrize(
    ("window", "error_ratio", "step"),
    [
        (WORKBOOK_WINDOWS[0], 1.0, pd.Timedelta(seconds=1)),  # 51.84 s
        (WORKBOOK_WINDOWS[0], 0.1, pd.Timedelta(seconds=1)),  # 518.4 s
        (WORKBOOK_WINDOWS[1], 1.0, pd.Timedelta(seconds=1)),  # 129.6 s
        (WORKBOOK_WINDOWS[2], 1.0, MIN),  # 259.2 s, seen on the next minute
    ],
)
def test_replay_raises_at_the_detection_time_of_the_formula(window, error_ratio, step):
    # Steady traffic of 10 events per step with no errors for one long window, then errors
    # at ``error_ratio``. A sample at t holds the events of (t - step, t], so the errors
    # begin one step before the first failing sample; the rule must be raised at the
    # first step at or after the workbook's detection time (the formula above).
    before = int(window.long / step)
    after = int(2 * detection_time(0.999, error_ratio, window.long, window.factor) / step) + 10
    bad = np.r_[np.zeros(before), np.full(after, 10 * error_ratio)]
    events = counts(10.0, bad, step)
    rule = BurnRateRule(windows=[window], severity=window.severity)
    raised = replay_burn(events, rule)
    errors_begin = events.index[before] - step
    expected = detection_time(0.999, error_ratio, window.long, window.factor)
    assert len(raised) == 1 and pd.isna(raised["end"].iloc[0])
    delay = raised["start"].iloc[0] - errors_begin
    assert delay == step * math.ceil(expected / step)


@pytest.mark.parametrize("window", WORKBOOK_WINDOWS, ids=lambda w: w.label)
def test_budget_spent_when_a_condition_is_just_reached_is_the_workbook_share(window):
    # 30 days of 1-minute data at 1,000 events a minute; over the last long window the
    # error ratio is factor x 0.1%, so the burn rate there is exactly the factor. The budget
    # spent is then factor x window / period: 2%, 5% and 10% (the workbook, ch. 5).
    n = int(PERIOD / MIN)
    last = int(window.long / MIN)
    bad = np.zeros(n)
    bad[-last:] = 1000 * window.factor * 0.001
    events = counts(1000.0, bad)
    rule = BurnRateRule(windows=[window], severity=window.severity)
    spent = budget_spent(events, rule)
    rates = burn_rates(events, rule)
    assert rates.iloc[-1][f"{window.label.split('/')[0]}"] == pytest.approx(window.factor)
    assert spent.iloc[-1] == pytest.approx(budget_consumed(window.factor, window.long, PERIOD))
    assert spent.iloc[-last - 1] == 0.0


# ---------------------------------------------------------------- replay semantics


def test_both_windows_must_burn_the_short_one_ends_the_raise():
    # One condition: 10x over 20 min with 5 min, objective 99% (budget 1%). 100 events a
    # minute; 20 quiet minutes, then 10 failing a minute (burn 10) for 6 minutes, then none.
    # minute 20 has 10 bad: 20-min burn = 10/2000/0.01 = 0.5, short 5-min = 10/500/0.01 = 2;
    # the 20-min window reaches 10x only when it holds 200 bad events: never in 6 minutes
    # (60 bad). So no raise; with 30 failing a minute (burn 30): the 20-min burn reaches 10
    # at 7 bad minutes (210 bad), so from minute 26, and the short window falls below 10x
    # 4 minutes after the errors stop (5-min window of 30 x 1 bad-minute = 30/500 = 6x).
    window = BurnWindow("20min", "5min", 10.0)
    rule = BurnRateRule(objective=0.99, windows=[window])
    mild = counts(100.0, np.r_[np.zeros(20), np.full(6, 10.0), np.zeros(20)])
    assert replay_burn(mild, rule).empty
    strong = counts(100.0, np.r_[np.zeros(20), np.full(10, 30.0), np.zeros(20)])
    # errors at minutes 20..29; 20-min window at minute 26 holds 7 x 30 = 210 >= 200.
    # short window at minute 31 holds minutes 27..31: 3 x 30 = 90 -> 18x; at 32: 60 -> 12x;
    # at 33: 30 -> 6x < 10: the raise ends at minute 33.
    assert pairs(replay_burn(strong, rule)) == [(T0 + 26 * MIN, T0 + 33 * MIN)]


def test_the_hold_delays_the_raise_and_drops_short_ones():
    window = BurnWindow("20min", "5min", 10.0)
    strong = counts(100.0, np.r_[np.zeros(20), np.full(10, 30.0), np.zeros(20)])
    held = BurnRateRule(objective=0.99, windows=[window], hold="3min")
    assert pairs(replay_burn(strong, held)) == [(T0 + 29 * MIN, T0 + 33 * MIN)]
    too_long = BurnRateRule(objective=0.99, windows=[window], hold="7min")
    assert replay_burn(strong, too_long).empty


def test_a_missing_sample_is_no_data_and_ends_the_raise():
    window = BurnWindow("20min", "5min", 10.0)
    rule = BurnRateRule(objective=0.99, windows=[window])
    strong = counts(100.0, np.r_[np.zeros(20), np.full(10, 30.0), np.zeros(20)])
    # minute 28 has no sample: the raise ends there and starts again at 29 (the windows
    # still burn). At 32 the short window holds minutes 29..32 only: 30 bad of 400 events,
    # 7.5x < 10x, one minute sooner than without the gap.
    gappy = strong.drop(T0 + 28 * MIN)
    assert pairs(replay_burn(gappy, rule)) == [
        (T0 + 26 * MIN, T0 + 28 * MIN),
        (T0 + 29 * MIN, T0 + 32 * MIN),
    ]


def test_nothing_is_raised_before_the_long_window_is_covered():
    # failing from the first minute: the 20-min window only exists from minute 19.
    rule = BurnRateRule(objective=0.99, windows=[BurnWindow("20min", "5min", 10.0)])
    events = counts(100.0, np.full(30, 100.0))
    assert pairs(replay_burn(events, rule)) == [(T0 + 19 * MIN, None)]


def test_the_conditions_of_the_rule_are_combined_with_or():
    fast = BurnWindow("20min", "5min", 10.0)
    slow = BurnWindow("60min", "10min", 2.0)
    events = counts(100.0, np.r_[np.zeros(60), np.full(60, 3.0), np.full(10, 30.0)])
    rule_fast = BurnRateRule(objective=0.99, windows=[fast])
    rule_slow = BurnRateRule(objective=0.99, windows=[slow])
    both = BurnRateRule(objective=0.99, windows=[fast, slow])
    grid = event_grid(events)
    union = set()
    for rule in (rule_fast, rule_slow):
        for start, end in pairs(replay_burn(grid, rule)):
            stop = grid.times[-1] + MIN if end is None else end
            union |= set(pd.date_range(start, stop, freq="1min", inclusive="left"))
    raised = set()
    for start, end in pairs(replay_burn(grid, both)):
        stop = grid.times[-1] + MIN if end is None else end
        raised |= set(pd.date_range(start, stop, freq="1min", inclusive="left"))
    assert raised and raised == union


def test_a_ticket_rule_replays_only_the_ticket_condition():
    page = BurnWindow("20min", "5min", 10.0, "page")
    ticket = BurnWindow("60min", "10min", 2.0, "ticket")
    events = counts(100.0, np.r_[np.zeros(60), np.full(60, 3.0)])
    pages = replay_burn(events, BurnRateRule(objective=0.99, windows=[page, ticket]))
    tickets = replay_burn(
        events, BurnRateRule(objective=0.99, windows=[page, ticket], severity="ticket")
    )
    assert pages.empty and len(tickets) == 1


def test_an_error_ratio_series_gives_what_its_counts_give_at_steady_traffic():
    rng = np.random.default_rng(5)
    bad = np.where(rng.random(600) < 0.05, rng.integers(0, 64, 600), 0).astype(float)
    events = counts(64.0, bad)
    ratio = (events["total"] - events["good"]) / events["total"]
    rule = BurnRateRule(objective=0.99, windows=[BurnWindow("30min", "5min", 5.0)])
    by_counts = replay_burn(events, rule)
    assert not by_counts.empty
    pd.testing.assert_frame_equal(replay_burn(ratio, rule), by_counts)
    pd.testing.assert_frame_equal(replay_burn((events["good"], events["total"]), rule), by_counts)


def test_busy_minutes_weigh_more_than_quiet_ones():
    # Two minutes: 1 of 1 failing, then 0 of 999. The window's ratio is 1/1000, not 0.5.
    index = pd.date_range(T0, periods=2, freq="1min")
    events = pd.DataFrame({"good": [0.0, 999.0], "total": [1.0, 999.0]}, index=index)
    grid = event_grid(events)
    assert grid.error_ratio(2 * MIN)[-1] == pytest.approx(0.001)


def test_counts_finer_than_the_check_interval_are_summed():
    index = pd.date_range(T0, periods=4, freq="30s") + pd.Timedelta(seconds=30)
    events = pd.DataFrame({"good": [9.0, 5.0, 10.0, 10.0], "total": 10.0}, index=index)
    grid = event_grid(events, check_every=MIN)
    assert grid.bad.tolist() == [6.0, 0.0] and grid.total.tolist() == [20.0, 20.0]


def test_budget_spent_before_a_whole_period_counts_the_days_there_are():
    # a burn rate of 1 for one day spends 1/30 of a 30-day budget.
    events = counts(1000.0, np.full(1440, 1.0))
    spent = budget_spent(events, BurnRateRule())
    assert spent.iloc[-1] == pytest.approx(1 / 30)
    assert spent.iloc[719] == pytest.approx(0.5 / 30)


def test_budget_spent_rolls_over_the_period():
    # 2-day period, 1 bad minute in 1000 events/min early on: it leaves the window 2 days on.
    bad = np.zeros(4 * 1440)
    bad[10] = 500.0
    rule = BurnRateRule(period="2D")
    spent = budget_spent(counts(1000.0, bad), rule)
    allowed = 0.001 * 1000 * 2 * 1440
    assert spent.iloc[100] == pytest.approx(500 / allowed)
    assert spent.iloc[10 + 2 * 1440 - 1] == pytest.approx(500 / allowed)
    assert spent.iloc[10 + 2 * 1440] == 0.0


def test_rule_text():
    assert BurnRateRule().text == (
        "burn rate of 99.9% over 30d: 14.4x over 1h/5min or 6x over 6h/30min"
    )
    rule = BurnRateRule(severity="ticket", hold="10min", check_every="5min")
    assert rule.text == (
        "burn rate of 99.9% over 30d: 1x over 3d/6h, held for 10min, checked every 5min"
    )


# ---------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"objective": 99.9}, r"share between 0 and 1 \(0.999 for 99.9%\)"),
        ({"objective": 1.0}, "share between 0 and 1"),
        ({"period": "0s"}, "compliance period must be positive"),
        ({"period": "a month"}, "compliance period must be a duration"),
        ({"windows": [("5min", "1h", 14.4)]}, "short window .* must not be longer"),
        ({"windows": [("1h", "5min", 0)]}, "factor must be a positive number"),
        ({"windows": [("1h", "5min")]}, r"window 1: expected \(long, short, factor\)"),
        ({"windows": [("1h", "5min", 2, "email")]}, "severity must be 'page' or 'ticket'"),
        ({"windows": [("3D", "6h", 1, "ticket")]}, "no page condition"),
        ({"severity": "urgent"}, "severity must be 'page' or 'ticket'"),
        ({"hold": "-1min"}, "hold must not be negative"),
        ({"check_every": "0s"}, "check interval must be positive"),
    ],
)
def test_rule_validation(kwargs, message):
    with pytest.raises(ValueError, match=message):
        BurnRateRule(**kwargs)


def test_bad_events_get_a_clear_message():
    rule = BurnRateRule()
    index = pd.date_range(T0, periods=3, freq="1min")
    with pytest.raises(ValueError, match="good events exceed total events in 1 sample"):
        replay_burn(pd.DataFrame({"good": [1, 5, 1.0], "total": [2, 4, 2.0]}, index=index), rule)
    with pytest.raises(ValueError, match="must not be negative"):
        replay_burn(pd.DataFrame({"good": [1, 1, 1.0], "total": [2, -4, 2.0]}, index=index), rule)
    with pytest.raises(ValueError, match="missing total"):
        replay_burn(pd.DataFrame({"good": [1, 1, 1.0]}, index=index), rule)
    with pytest.raises(ValueError, match="a percentage must be divided by 100"):
        replay_burn(pd.Series([0.1, 12.0, 0.0], index=index), rule)
    with pytest.raises(ValueError, match="error-ratio Series"):
        replay_burn([0.1, 0.2], rule)
    with pytest.raises(ValueError, match="share no timestamp"):
        replay_burn((pd.Series([1.0], index=index[:1]), pd.Series([1.0], index=index[1:2])), rule)
    with pytest.raises(ValueError, match="expected a BurnRateRule"):
        replay_burn(pd.Series([0.1, 0.2], index=index[:2]), {"objective": 0.999})
