"""The services run on a plain store session, with no Flask app: the rule replay reads the
rule, points, incidents and excluded periods from the store; the review export gathers a
review's frozen evidence. Data are synthetic (tests/conftest.py)."""

from __future__ import annotations

import pytest

from webapp.services import replay as replay_service
from webapp.services import review_export
from webapp.store import attachments, reviews, rules

WINDOW = {"incident_start": "2026-11-30T14:00", "incident_end": "2026-11-30T16:00"}


def test_a_stored_rule_replays_against_the_stored_incidents(session, make_series) -> None:
    series = make_series()
    reviews.create_review(session, {"title": "slow checkout", **WINDOW})
    rule = rules.create_rule(
        session, name="p95 high", series_id=series.id, threshold=300.0, hold_seconds=600
    )
    (info,) = replay_service.matching_series(session, rule)
    replayed = replay_service.run_replay(session, rule, info)
    assert replayed.report.n_firings >= 1
    assert replayed.report.caught == [0]  # the review's incident window
    assert replayed.rule.hold.total_seconds() == 600
    with pytest.raises(ValueError, match="incidents must be one of"):
        replay_service.run_replay(session, rule, info, scope="everything")


def test_a_review_is_gathered_for_export_from_the_store(session, make_explanation) -> None:
    review = reviews.create_review(session, {"title": "slow checkout", **WINDOW})
    attachments.attach_explanation(session, review, make_explanation().id, caption="band")
    context = review_export.review_context(session, review.id)
    (item,) = context["evidence"]
    assert item.heading == "band" and item.frame is not None and item.overlay is not None
    assert item.parameters["engine version"] == item.explanation.engine_version
    with pytest.raises(review_export.ExportError, match="no review #999"):
        review_export.review_context(session, 999)
