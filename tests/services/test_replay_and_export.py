"""The services run on a plain store session, with no Flask app: the rule replay reads the
rule, points, incidents and excluded periods from the store; the review export gathers a
review's frozen evidence. Data are synthetic (tests/conftest.py)."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from sqlalchemy import select

from webapp.analysis import band_grid
from webapp.services import band_fits as fit_service
from webapp.services import replay as replay_service
from webapp.services import review_export, rule_kinds
from webapp.store import attachments, db, reviews, rules
from webapp.store.imports import record_import
from webapp.store.models import BandFit, Page
from webapp.store.series import series_by_keys

WINDOW = {"incident_start": "2026-11-30T14:00", "incident_end": "2026-11-30T16:00"}


def test_a_stored_rule_replays_against_the_incidents_of_its_own_series(
    session, make_series, make_page
) -> None:
    series, elsewhere = make_series(), make_series("payment.queue_depth{host=api-1}")
    mine = reviews.create_review(
        session, {"title": "slow checkout", **WINDOW, "page_id": str(make_page(series).id)}
    )
    reviews.create_review(
        session,
        {"title": "queue", "incident_start": "2026-11-20T01:00", "incident_end":
         "2026-11-20T02:00", "page_id": str(make_page(elsewhere).id)},
    )  # fmt: skip
    rule = rules.create_rule(
        session, name="p95 high", series_id=series.id, threshold=300.0, hold_seconds=600
    )
    (info,) = replay_service.matching_series(session, rule)
    replayed = replay_service.run_replay(session, rule, info)
    assert replayed.report.n_firings >= 1
    assert replayed.report.caught == [0]  # its own review's window, and only that one
    assert [m["review_id"] for c in replayed.choice.counted for m in c["members"]] == [mine.id]
    assert [o["scope"] for o in replayed.choice.others] == ["payment.queue_depth{host=api-1}"]
    assert replayed.rule.hold.total_seconds() == 600
    # the reader adds the other series' incident: it is counted, and missed
    other = replayed.choice.others[0]["id"]
    added = replay_service.run_replay(session, rule, info, add=[other])
    assert len(added.report.incidents) == 2 and added.report.missed == [0]
    own = replayed.choice.counted[0]["members"][0]["id"]
    dropped = replay_service.run_replay(session, rule, info, drop=[own])
    assert dropped.report.incidents == [] and dropped.choice.dropped == [own]


def test_a_review_is_gathered_for_export_from_the_store(session, make_explanation) -> None:
    review = reviews.create_review(session, {"title": "slow checkout", **WINDOW})
    attachments.attach_explanation(session, review, make_explanation().id, caption="band")
    context = review_export.review_context(session, review.id)
    (item,) = context["evidence"]
    assert item.heading == "band" and item.frame is not None and item.overlay is not None
    assert item.parameters["engine version"] == item.explanation.engine_version
    with pytest.raises(review_export.ExportError, match="no review #999"):
        review_export.review_context(session, 999)


def _weeks_of_points(session, make_parsed, key: str, weeks: int = 3) -> int:
    index = pd.date_range("2026-11-01", periods=weeks * 7 * 288, freq="5min", tz="UTC")
    minutes = (index.hour * 60 + index.minute).to_numpy()
    values = 200 + 40 * np.sin(2 * np.pi * minutes / 1440)
    values += np.random.default_rng(3).normal(0, 3, len(index))
    record_import(session, make_parsed([key] * len(index), index.as_unit("ms").asi8, values))
    return series_by_keys(session, [key])[key].id


def test_a_band_rule_is_fitted_once_per_data_version(
    session, engine, make_parsed, monkeypatch, assert_same_bands
) -> None:
    series_id = _weeks_of_points(session, make_parsed, "checkout.latency_p95{host=api-8}")
    fits = []

    def counted(*args, **kwargs):
        fits.append(args[1].tolerance)
        return band_grid(*args, **kwargs)

    monkeypatch.setattr(fit_service, "band_grid", counted)
    rule = rules.create_rule(
        session,
        name="p95 band",
        series_id=series_id,
        kind="band",
        direction="above",
        tolerance=4.0,
        hold_seconds=600,
    )
    session.commit()
    # pages replay in reading sessions; the fits are kept by a writer of their own
    with db.session_scope(engine, write=False) as reader:
        (info,) = replay_service.matching_series(reader, rule)
        first = replay_service.run_replay(reader, rule, info)
        rules.update_rule(session, rule.id, hold_seconds=0, direction="both")
        session.commit()
        again = replay_service.run_replay(reader, rule, info)
        assert len(fits) == 1  # another hold and direction: the same daily fits
        assert again.result.bands is first.result.bands

        fit_service._fits.items.clear()  # as after a restart, or in another worker
        reader.rollback()  # a later request: a new snapshot
        kept = replay_service.run_replay(reader, rule, info)
        assert len(fits) == 1  # read back from the store, not fitted
        assert_same_bands(kept.result.bands, first.result.bands)
        assert kept.report.n_firings == again.report.n_firings

        rules.update_rule(session, rule.id, tolerance=6.0)  # the sides are calibrated at it
        session.commit()
        assert replay_service.run_replay(reader, rule, info).rule.tolerance == 6.0
        assert fits == [4.0, 6.0]

        _weeks_of_points(session, make_parsed, "checkout.latency_p95{host=api-9}", 1)
        session.commit()
        reader.rollback()
        fit_service._fits.items.clear()
        replay_service.run_replay(reader, rule, info)  # a new import: a new data version
        assert fits == [4.0, 6.0, 6.0]
        current = fit_service.fit_key(reader, info, replay_service.analysed_rule(rule), [])
        reader.rollback()
        rows = reader.scalars(select(BandFit).where(BandFit.series_id == series_id)).all()
    # the rows of the older data version were replaced, not kept beside
    assert [row.data_version for row in rows] == [current["data_version"]]


def test_fit_ahead_keeps_the_fits_of_the_most_recently_paged_rules(
    session, engine, make_parsed
) -> None:
    keys = ("checkout.latency_p95{host=api-1}", "checkout.latency_p95{host=api-2}")
    ids = [_weeks_of_points(session, make_parsed, key) for key in keys]
    older, newer = (
        rules.create_rule(session, name=f"p95 high {i}", series_id=i, threshold=300.0) for i in ids
    )
    rules.create_rule(
        session, name="p95 band", series_id=ids[0], kind="band", tolerance=4.0, hold_seconds=0
    )
    for rule, day in ((older, 10), (newer, 20)):  # the band rule never paged
        fired = pd.Timestamp("2026-11-01", tz="UTC") + pd.Timedelta(days=day)
        session.add(Page(series_id=rule.series_id, alert_rule_id=rule.id, fired_at=fired))
    session.commit()

    def kept(reader) -> list[tuple[int, float]]:
        rows = reader.scalars(select(BandFit).order_by(BandFit.id)).all()
        return [(r.series_id, json.loads(r.parameters)["tolerance"]) for r in rows]

    with db.session_scope(engine, write=False) as reader:
        assert rule_kinds.fit_ahead(reader, rules=1) == 1
        reader.rollback()
        assert kept(reader) == [(ids[1], 3.0)]  # the latest page's rule: its kinds' band
        assert rule_kinds.fit_ahead(reader, rules=3) == 2  # then the older, then the band
        reader.rollback()
        assert kept(reader) == [(ids[1], 3.0), (ids[0], 3.0), (ids[0], 4.0)]
        assert rule_kinds.fit_ahead(reader, rules=3) == 0  # all kept already
