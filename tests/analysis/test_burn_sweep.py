"""burn_sweep(): the same table as the other sweeps, one replay's numbers per row.

Series are synthetic (invented for the test)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import (
    BURN_SWEEP_COLUMNS,
    WORKBOOK_WINDOWS,
    BurnRateRule,
    BurnWindow,
    burn_sweep,
    burn_sweep_grid,
    replay_burn,
    whatif_sweep,
)

T0 = pd.Timestamp("2026-03-02 00:00", tz="UTC")
MIN = pd.Timedelta(minutes=1)
LEAD = pd.Timedelta(minutes=15)


def troubled(seed: int, n: int = 3 * 1440) -> pd.DataFrame:
    """Per-minute request counts with a little background failure and a few bad spells."""
    rng = np.random.default_rng(seed)
    total = rng.poisson(500, n).astype(float)
    share = rng.uniform(0, 0.002, n)
    for at, length, level in ((600, 45, 0.05), (2000, 240, 0.012), (3500, 8, 0.5)):
        share[at : at + length] = level
    bad = rng.binomial(total.astype(int), share).astype(float)
    index = pd.date_range(T0, periods=n, freq="1min")
    return pd.DataFrame({"good": total - bad, "total": total}, index=index)


INCIDENTS = [
    (T0 + 600 * MIN, T0 + 645 * MIN),
    (T0 + 2000 * MIN, T0 + 2240 * MIN),
    (T0 + 3500 * MIN, T0 + 3508 * MIN),
]
PAIRS = [("1h", "5min"), ("6h", "30min"), ("30min", "2min")]
FACTORS = [1.0, 3.0, 6.0, 14.4, 30.0]


def test_the_table_has_the_shape_of_the_other_sweeps():
    events = troubled(1)
    sweep = burn_sweep(events, BurnRateRule(), FACTORS, PAIRS, INCIDENTS)
    series = events["total"]
    threshold = whatif_sweep(series, [400.0, 500.0], [MIN], INCIDENTS)
    assert list(sweep.columns) == BURN_SWEEP_COLUMNS
    assert list(sweep.columns[2:]) == list(threshold.columns[2:])
    assert sweep.dtypes.iloc[2:].tolist() == threshold.dtypes.iloc[2:].tolist()
    assert len(sweep) == len(FACTORS) * len(PAIRS)
    assert sweep["factor"].tolist() == sorted(np.repeat(FACTORS, len(PAIRS)).tolist())
    assert sweep["windows"].tolist()[:3] == ["1h/5min", "6h/30min", "30min/2min"]


def test_every_row_is_a_replay_of_that_one_condition():
    events = troubled(2)
    rule = BurnRateRule(hold="2min")
    sweep = burn_sweep(events, rule, FACTORS, PAIRS, INCIDENTS)
    data_end = events.index[-1] + MIN
    for row in sweep.itertuples(index=False):
        long, short = row.windows.split("/")
        # pages per week count from the first time the long window is full
        checked_from = events.index[0] + pd.Timedelta(long) - MIN
        weeks = (data_end - checked_from) / pd.Timedelta(weeks=1)
        single = BurnRateRule(windows=[BurnWindow(long, short, row.factor)], hold="2min")
        raised = replay_burn(events, single)
        ends = raised["end"].fillna(data_end)
        assert row.firings == len(raised)
        assert row.pages_per_week == pytest.approx(len(raised) / weeks)
        assert row.time_raised == (ends - raised["start"]).sum()
        # caught: a raise starts between the incident's start minus the lead and its end
        caught = tuple(
            i
            for i, (start, end) in enumerate(INCIDENTS)
            if ((raised["start"] >= start - LEAD) & (raised["start"] <= end)).any()
        )
        assert row.caught == caught
        assert row.incidents_caught + row.incidents_missed == len(INCIDENTS)


def test_a_higher_factor_never_raises_for_longer():
    sweep = burn_sweep(troubled(3), BurnRateRule(), FACTORS, PAIRS, INCIDENTS)
    table = sweep.pivot(index="factor", columns="windows", values="time_raised")
    assert (np.diff(table.to_numpy().astype("int64"), axis=0) <= 0).all()
    assert table.to_numpy().astype("int64").max() > 0


def test_the_fast_page_catches_the_sharp_outage_and_the_slow_one_the_long_spell():
    sweep = burn_sweep(troubled(4), BurnRateRule(), [6.0, 14.4], PAIRS[:2], INCIDENTS)
    by = {(r.factor, r.windows): r.caught for r in sweep.itertuples(index=False)}
    assert 2 in by[(14.4, "1h/5min")] and 1 not in by[(14.4, "1h/5min")]
    assert 1 in by[(6.0, "6h/30min")]


def test_default_grid_holds_the_workbook_and_the_rule():
    rule = BurnRateRule(windows=[("2h", "10min", 8.0)])
    factors, pairs = burn_sweep_grid(rule)
    assert {14.4, 6.0, 1.0, 8.0} <= set(factors)
    expected = {(w.long, w.short) for w in WORKBOOK_WINDOWS} | {
        (pd.Timedelta("2h"), pd.Timedelta("10min"))
    }
    assert set(pairs) == expected and len(pairs) == len(expected)


@pytest.mark.parametrize(
    ("factors", "pairs", "message"),
    [
        ([0.0, 2.0], PAIRS, "factors must be positive"),
        ([], PAIRS, "at least one burn-rate factor"),
        (FACTORS, [], "at least one window pair"),
        (FACTORS, [("1h",)], r"window pair 1: expected \(long, short\)"),
        (FACTORS, [("5min", "1h")], "must not be longer than the long window"),
    ],
)
def test_bad_sweep_input(factors, pairs, message):
    with pytest.raises(ValueError, match=message):
        burn_sweep(troubled(5, n=200), BurnRateRule(), factors, pairs)
