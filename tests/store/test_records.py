"""Pages, alert rules and excluded periods."""

from __future__ import annotations

import datetime as dt

import pandas as pd
import pytest

from webapp.store import excluded, pages, rules
from webapp.store.models import Review, Series

UTC = dt.UTC


@pytest.fixture
def series_id(session):
    row = Series(key="lat{host=a}", metric="lat", labels={"host": "a"})
    session.add(row)
    session.flush()
    return row.id


def test_pages_are_stored_in_utc_and_listed_newest_first(session, series_id):
    lisbon_summer = pd.Timestamp("2026-07-01 10:00", tz="Europe/Lisbon")  # UTC+1
    first = pages.create_page(session, series_id, lisbon_summer, None, "lat > 800 for 5min")
    second = pages.create_page(
        session, series_id, "2026-07-02T00:00:00Z", "2026-07-02T00:30:00Z", "lat > 800", note="ok"
    )
    session.commit()
    session.expire_all()
    got = pages.get_page(session, first.id)
    assert got.fired_at == dt.datetime(2026, 7, 1, 9, 0, tzinfo=UTC)
    assert got.resolved_at is None
    assert [p.id for p in pages.list_pages(session, series_id=series_id)] == [second.id, first.id]
    pages.delete_page(session, first.id)
    assert [p.id for p in pages.list_pages(session)] == [second.id]


def test_a_page_cannot_resolve_before_it_fired(session, series_id):
    with pytest.raises(ValueError, match="cannot resolve .* before it fired"):
        pages.create_page(session, series_id, "2026-07-02T01:00Z", "2026-07-02T00:00Z", "x")


def test_page_times_must_be_times(session, series_id):
    with pytest.raises(ValueError, match="expected a date and time, got 'soon'"):
        pages.create_page(session, series_id, "soon", None, "x")


def test_rules_round_trip_and_update(session, series_id):
    rule = rules.create_rule(
        session, name="p95 high", series_id=series_id, threshold=800.0, hold_seconds=300
    )
    assert (rule.kind, rule.direction) == ("threshold", "above")
    rules.update_rule(session, rule.id, threshold=900.0, check_every_seconds=60)
    assert rules.get_rule(session, rule.id).threshold == 900.0
    assert [r.name for r in rules.list_rules(session, series_id=series_id)] == ["p95 high"]
    rules.delete_rule(session, rule.id)
    assert rules.list_rules(session) == []


@pytest.mark.parametrize(
    ("fields", "message"),
    [
        ({"name": " ", "threshold": 1.0}, "needs a name"),
        ({"name": "r", "kind": "guess", "threshold": 1.0}, "kind must be one of threshold, band"),
        ({"name": "r", "direction": "both", "threshold": 1.0}, "must be one of above, below"),
        ({"name": "r"}, "needs a finite threshold"),
        ({"name": "r", "threshold": float("inf")}, "needs a finite threshold"),
        ({"name": "r", "kind": "band", "tolerance": 0.0}, "tolerance above 0"),
        ({"name": "r", "threshold": 1.0, "hold_seconds": -5}, "hold_seconds must be 0"),
        (
            {"name": "r", "threshold": 1.0, "check_every_seconds": 0},
            "check_every_seconds must be above 0",
        ),
        ({"name": "r", "threshold": 1.0, "colour": "red"}, "unknown alert rule field.*colour"),
    ],
)
def test_invalid_rules_are_refused_with_the_field_named(session, fields, message):
    with pytest.raises(ValueError, match=message):
        rules.create_rule(session, **fields)


def test_an_invalid_update_changes_nothing(session):
    rule = rules.create_rule(session, name="r", threshold=5.0)
    with pytest.raises(ValueError, match="finite threshold"):
        rules.update_rule(session, rule.id, threshold=None, name="renamed")
    assert (rule.threshold, rule.name) == (5.0, "r")


def test_band_rules_may_watch_both_directions(session):
    rule = rules.create_rule(session, name="band", kind="band", direction="both", tolerance=3.0)
    assert rule.threshold is None


def ts(text: str) -> pd.Timestamp:
    return pd.Timestamp(text, tz="UTC")


def test_excluded_periods_apply_to_their_series_and_to_all(session, series_id):
    other = Series(key="other", metric="other", labels={})
    session.add(other)
    session.flush()
    excluded.add_excluded(session, series_id, "2026-11-01 10:00", "2026-11-01 11:00", "deploy")
    excluded.add_excluded(
        session, None, "2026-11-02 00:00", "2026-11-02 01:00", "maintenance", every_series=True
    )
    excluded.add_excluded(session, other.id, "2026-11-03 00:00", "2026-11-03 01:00", "theirs")
    assert [r.reason for r in excluded.list_excluded(session, series_id)] == [
        "deploy",
        "maintenance",
    ]
    assert len(excluded.list_excluded(session)) == 3
    assert excluded.periods_for(session, series_id) == [
        (ts("2026-11-01 10:00"), ts("2026-11-01 11:00")),
        (ts("2026-11-02 00:00"), ts("2026-11-02 01:00")),
    ]


def test_an_excluded_period_must_end_after_it_starts(session):
    with pytest.raises(ValueError, match="must end after it starts"):
        excluded.add_excluded(session, 1, "2026-11-02", "2026-11-01", "backwards")


def test_a_period_without_a_series_must_say_it_is_for_every_series(session, series_id):
    with pytest.raises(ValueError, match="names its series, or has no series and is marked"):
        excluded.add_excluded(session, None, "2026-11-01", "2026-11-02", "unscoped")
    with pytest.raises(ValueError, match="names its series, or has no series and is marked"):
        excluded.add_excluded(session, series_id, "2026-11-01", "2026-11-02", every_series=True)


def test_incidents_of_reviews_join_the_periods_and_overlaps_merge(session, series_id):
    page = pages.create_page(session, series_id, "2026-11-10 09:05Z", None, "lat > 800")
    for exclude, start, end in [
        (True, "2026-11-10 09:00", "2026-11-10 10:00"),
        (False, "2026-11-12 09:00", "2026-11-12 10:00"),  # the review keeps it in baselines
    ]:
        session.add(
            Review(
                title="t",
                page_id=page.id,
                incident_start=ts(start).to_pydatetime(),
                incident_end=ts(end).to_pydatetime(),
                exclude_from_baselines=exclude,
            )
        )
    excluded.add_excluded(session, series_id, "2026-11-10 09:30", "2026-11-10 11:00", "overlap")
    session.flush()
    assert excluded.periods_for(session, series_id) == [
        (ts("2026-11-10 09:00"), ts("2026-11-10 11:00"))
    ]


def test_deleting_unknown_records_says_what_is_missing(session):
    with pytest.raises(LookupError, match="no page #3"):
        pages.delete_page(session, 3)
    with pytest.raises(LookupError, match="no alert rule #3"):
        rules.delete_rule(session, 3)
    with pytest.raises(LookupError, match="no excluded period #3"):
        excluded.delete_excluded(session, 3)
