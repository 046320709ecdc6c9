"""Burn-rate alert rules in the store: an objective, a compliance period and window pairs
(the workbook's by default: Beyer et al., "The Site Reliability Workbook", 2018, ch. 5),
checked when saved, and their columns added and removed by revision 0006_burn_rules."""

from __future__ import annotations

import pytest
from sqlalchemy import inspect

from webapp.analysis import rule_from_fields
from webapp.analysis.vocabulary import RULE_FIELDS
from webapp.store import db, rules

WINDOWS = [
    {"long_seconds": 3600, "short_seconds": 300, "factor": 14.4, "severity": "page"},
    {"long_seconds": 21600, "short_seconds": 1800, "factor": 6.0, "severity": "page"},
    {"long_seconds": 259200, "short_seconds": 21600, "factor": 1.0, "severity": "ticket"},
]


def _burn(session, series_id, **changes):
    fields = {
        "name": "checkout errors burn the budget",
        "series_id": series_id,
        "kind": "burn_rate",
        "direction": "above",
        "objective": 0.999,
        "period_seconds": 30 * 86400,
        "burn_windows": WINDOWS,
        "severity": "page",
    }
    return rules.create_rule(session, **(fields | changes))


def test_a_burn_rate_rule_is_stored_and_read_back_as_the_core_rule(session, make_series):
    series = make_series()
    stored = _burn(session, series.id)
    session.expire_all()
    again = rules.get_rule(session, stored.id)
    rule = rule_from_fields({name: getattr(again, name) for name in RULE_FIELDS})
    assert rule.objective == 0.999 and rule.period.days == 30
    assert [w.factor for w in rule.conditions] == [14.4, 6.0]  # the page conditions
    assert rule.text.startswith("burn rate of 99.9% over 30d: 14.4x over 1h/5min or 6x")


@pytest.mark.parametrize(
    ("changes", "message"),
    [
        ({"objective": 99.9}, "objective must be a share between 0 and 1"),
        ({"period_seconds": -5}, "compliance period must be positive"),
        ({"burn_windows": [{"long_seconds": 300, "short_seconds": 3600, "factor": 2}]}, "short"),
        ({"burn_windows": [{"long": 3600}]}, "window 1: expected long_seconds"),
        ({"severity": "ticket", "burn_windows": WINDOWS[:2]}, "no ticket condition"),
    ],
)
def test_an_unusable_burn_rate_rule_is_refused_saying_why(session, make_series, changes, message):
    series = make_series()
    with pytest.raises(ValueError, match=message):
        _burn(session, series.id, **changes)


def test_good_and_total_events_must_be_two_series(session, make_series):
    series = make_series()
    with pytest.raises(ValueError, match="two different series"):
        _burn(session, series.id, good_series_id=series.id)


def test_the_burn_rate_columns_come_and_go_with_their_revision(tmp_path):
    eng = db.make_engine(f"sqlite:///{tmp_path / 'store.sqlite'}")
    try:
        db.upgrade(eng)
        columns = {c["name"] for c in inspect(eng).get_columns("alert_rules")}
        assert {"objective", "period_seconds", "burn_windows", "good_series_id"} <= columns
        db.downgrade(eng, "0003_compact_store")
        columns = {c["name"] for c in inspect(eng).get_columns("alert_rules")}
        assert "burn_windows" not in columns and "hold_seconds" in columns
        db.upgrade(eng)
    finally:
        eng.dispose()
