"""The demo scenario as stored: every part present and tied together."""

from __future__ import annotations

import pandas as pd
import pytest
from sqlalchemy import func, select

from webapp.demo import build_demo
from webapp.store import db, excluded, explanations, pages, reviews, rules
from webapp.store import series as store_series
from webapp.store.models import Point


@pytest.fixture(scope="module")
def demo():
    return build_demo(seed=7)


@pytest.fixture
def demo_session(demo_db_url):
    engine = db.make_engine(demo_db_url)
    with db.session_scope(engine) as session:
        yield session
    engine.dispose()


def test_every_point_and_series_of_the_scenario_is_stored(demo_session, demo):
    assert demo_session.scalar(select(func.count()).select_from(Point)) == len(demo.parsed.table)
    keys = {info.key for info in store_series.list_series(demo_session)}
    assert keys == set(demo.parsed.series)


def test_rules_and_pages_are_linked_to_their_series(demo_session, demo):
    stored = {r.name: r for r in rules.list_rules(demo_session)}
    assert set(stored) == {r["name"] for r in demo.rules}
    for rule in stored.values():
        assert rule.series_id is not None
    recorded = pages.list_pages(demo_session)
    assert len(recorded) == len(demo.pages)
    by_name = {p["rule_name"] for p in demo.pages}
    assert {stored_rule.name for stored_rule in stored.values()} >= by_name
    assert all(p.alert_rule_id is not None and p.series_id is not None for p in recorded)


def test_each_incident_is_a_review_with_its_page_and_a_frozen_explanation(demo_session, demo):
    stored = {r.title: r for r in reviews.list_reviews(demo_session)}
    assert set(stored) == {i["title"] for i in demo.incidents}
    for incident in demo.incidents:
        review = stored[incident["title"]]
        assert review.page_id is not None
        page = pages.get_page(demo_session, review.page_id)
        assert incident["start"] <= page.fired_at <= incident["end"]
        assert review.timeline and review.timeline[0].at == page.fired_at
        (attachment,) = review.attachments
        frame = explanations.load_frame(attachment.explanation)
        assert frame.index.min() < pd.Timestamp(incident["start"]) < frame.index.max()
        unit = demo.parsed.series[attachment.explanation.series_key].unit
        assert unit and attachment.explanation.parameters["unit"] == unit
        assert f" {unit}" in attachment.explanation.summary[1]  # the peak sentence has units


def test_baselines_leave_out_maintenance_and_past_incidents(demo_session, demo):
    fault = next(i for i in demo.incidents if i["status"] == "final")
    page = pages.get_page(
        demo_session,
        next(r for r in reviews.list_reviews(demo_session) if r.title == fault["title"]).page_id,
    )
    spans = excluded.periods_for(demo_session, page.series_id)
    assert (pd.Timestamp(fault["start"]), pd.Timestamp(fault["end"])) in spans
    maintenance = demo.excluded[0]
    assert (pd.Timestamp(maintenance["start"]), pd.Timestamp(maintenance["end"])) in spans
