"""Rule kinds side by side (the best setting of a sweep, the sentence) and the burn-rate
replay report, which measures a burn-rate rule with the definitions of the other kinds.
Every series here is synthetic (invented for the test)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from webapp.analysis import (
    WORKBOOK_WINDOWS,
    BurnRateRule,
    BurnWindow,
    KindRow,
    best_setting,
    burn_report,
    burn_rule_from_fields,
    kinds_sentence,
    replay_burn,
    rule_from_fields,
    window_fields,
)

T0 = pd.Timestamp("2026-03-02 00:00", tz="UTC")
MIN = pd.Timedelta(minutes=1)


def _events(bad: np.ndarray, total: float = 100.0) -> pd.DataFrame:
    index = pd.date_range(T0, periods=len(bad), freq="1min")
    return pd.DataFrame({"good": total - bad, "total": total}, index=index)


def test_the_burn_report_counts_the_raises_replay_burn_gives():
    bad = np.zeros(24 * 60)
    bad[300:330] = 30.0  # a sharp outage
    bad[900:960] = 3.0  # a slow spell
    rule = BurnRateRule(objective=0.99, windows=[BurnWindow("20min", "5min", 10.0)])
    incidents = [(T0 + 300 * MIN, T0 + 330 * MIN), (T0 + 1200 * MIN, T0 + 1210 * MIN)]
    report = burn_report(_events(bad), rule, incidents)
    raised = replay_burn(_events(bad), rule)
    assert list(report.firings["start"]) == list(raised["start"])
    assert report.n_firings == 1
    assert report.caught == [0] and report.missed == [1]
    assert report.rule_text == rule.text
    durations = (raised["end"] - raised["start"]).sum()
    assert report.time_raised == durations


def test_stored_fields_give_the_workbook_rule_back():
    fields = {
        "kind": "burn_rate",
        "objective": 0.999,
        "period_seconds": 30 * 86400,
        "burn_windows": window_fields(WORKBOOK_WINDOWS),
        "severity": "page",
        "hold_seconds": 0,
    }
    rule = rule_from_fields(fields)
    assert rule == BurnRateRule()  # The Site Reliability Workbook (2018), ch. 5 defaults
    assert burn_rule_from_fields({}) == BurnRateRule()
    with pytest.raises(ValueError, match="window 1: expected long_seconds"):
        burn_rule_from_fields({"burn_windows": [{"factor": 2}]})


def _sweep(rows):
    columns = ["threshold", "hold", "pages_per_week", "incidents_caught", "incidents_missed"]
    frame = pd.DataFrame(rows, columns=columns)
    return frame.assign(
        median_delay=pd.Series([pd.Timedelta(minutes=5)] * len(rows)),
        time_raised=pd.Series([pd.Timedelta(hours=1)] * len(rows)),
    )


def test_the_best_setting_catches_most_within_the_paging_ceiling():
    sweep = _sweep(
        [
            (500.0, pd.Timedelta(0), 12.0, 2, 0),  # catches both, but pages far too often
            (800.0, pd.Timedelta(0), 0.9, 2, 0),
            (900.0, pd.Timedelta(0), 0.4, 2, 0),  # both, and quieter: the best
            (1200.0, pd.Timedelta(0), 0.1, 1, 1),
        ]
    )
    assert best_setting(sweep, ceiling=1.0)["threshold"] == 900.0
    # nothing within the ceiling: the quietest stands in
    assert best_setting(sweep, ceiling=0.01)["threshold"] == 1200.0


def _row(kind, pages, caught, role="best of its sweep", delay=5):
    return KindRow(kind, role, f"{kind} setting", pages, caught, 2, pd.Timedelta(minutes=delay),
                   pd.Timedelta(hours=1))  # fmt: skip


def test_the_sentence_names_a_kind_that_catches_as_much_with_far_fewer_pages():
    rows = [_row("threshold", 3.0, 2, "as it is"), _row("band", 2.5, 2), _row("burn_rate", 0.2, 2)]
    sentence, suggested = kinds_sentence(rows)
    assert suggested is rows[2]
    assert sentence.startswith(
        "A burn-rate rule (burn_rate setting) would have caught both incidents with "
        "0.2 pages a week instead of 3"
    )


def test_no_suggestion_when_the_rule_holds_up():
    rows = [_row("threshold", 0.3, 2, "as it is"), _row("band", 0.25, 2), _row("burn_rate", 0.1, 1)]
    sentence, suggested = kinds_sentence(rows)
    assert suggested is None
    assert sentence.startswith("No other kind caught more incidents")
