"""webapp.store.reviews against a real, migrated SQLite file."""

from __future__ import annotations

import datetime as dt

import pandas as pd
import pytest

from webapp.store import action_items as store_actions
from webapp.store import attachments as store_attachments
from webapp.store import incidents as store_incidents
from webapp.store import reviews
from webapp.store import rules as store_rules
from webapp.store import timeline as store_timeline
from webapp.store import verdicts as store_verdicts
from webapp.store.models import Review
from webapp.store.reviews import ReviewInvalid
from webapp.store.times import utc_datetime
from webapp.web.forms import reviews as review_forms

UTC = dt.UTC


def good_form(**overrides: str) -> dict[str, str]:
    form = {
        "title": "Checkout latency over the lunch peak",
        "status": "draft",
        "severity": "major",
        "incident_start": "2026-11-30T14:00",
        "incident_end": "2026-11-30T16:00",
        "exclude_from_baselines": "on",
        "summary": "p95 latency *tripled* for two hours.",
        "impact": "Slow checkouts.",
        "trigger": "",
        "root_cause": "",
        "detection": "",
        "resolution": "",
        "lessons": "",
    }
    form.update(overrides)
    return form


def test_create_and_read_back(session) -> None:
    review = reviews.create_review(session, good_form())
    session.commit()
    again = reviews.get_review(session, review.id)
    assert again.title == "Checkout latency over the lunch peak"
    assert again.incident_start == dt.datetime(2026, 11, 30, 14, 0, tzinfo=UTC)
    assert again.incident_end == dt.datetime(2026, 11, 30, 16, 0, tzinfo=UTC)
    assert again.exclude_from_baselines is True
    assert again.summary == "p95 latency *tripled* for two hours."


def test_form_times_follow_the_given_zone(session) -> None:
    review = reviews.create_review(session, good_form(), tz="Europe/Berlin")
    assert review.incident_start == dt.datetime(2026, 11, 30, 13, 0, tzinfo=UTC)


def test_unchecked_box_turns_exclusion_off(session) -> None:
    form = good_form()
    del form["exclude_from_baselines"]
    data = review_forms.review_data(form)
    assert reviews.create_review(session, data).exclude_from_baselines is True  # not shown
    form[review_forms.CHECKBOX_SHOWN] = "1"
    data = review_forms.review_data(form)
    assert reviews.create_review(session, data).exclude_from_baselines is False


@pytest.mark.parametrize(
    ("overrides", "field", "message"),
    [
        ({"title": "  "}, "title", "needs a title"),
        ({"title": "x" * 301}, "title", "300 characters"),
        ({"status": "closed"}, "status", "draft, final"),
        ({"incident_start": "yesterday-ish"}, "incident_start", "e.g. 2026-11-30 14:05"),
        ({"incident_end": "2026-11-30T13:00"}, "incident_end", "end after it starts"),
        ({"status": "final", "incident_end": ""}, "status", "start and end"),
        ({"severity": "s" * 21}, "severity", "20 characters"),
        ({"page_id": "abc"}, "page_id", "not a page number"),
        ({"page_id": "999"}, "page_id", "no recorded page #999"),
    ],
)
def test_invalid_fields_are_named(session, overrides, field, message) -> None:
    with pytest.raises(ReviewInvalid) as info:
        reviews.create_review(session, good_form(**overrides))
    assert message in info.value.errors[field]
    assert session.query(Review).count() == 0


def test_update_is_all_or_nothing(session) -> None:
    review = reviews.create_review(session, good_form())
    with pytest.raises(ReviewInvalid):
        reviews.update_review(
            session, review, good_form(summary="new text", incident_end="2026-11-29T00:00")
        )
    assert review.summary == "p95 latency *tripled* for two hours."
    reviews.update_review(session, review, good_form(summary="new text"))
    assert review.summary == "new text"


def test_autosave_keeps_good_fields_and_reports_bad_ones(session) -> None:
    review = reviews.create_review(session, good_form())
    saved, errors = reviews.autosave_review(
        session, review, good_form(summary="typed while drafting", incident_start="garbage")
    )
    session.commit()
    assert "summary" in saved
    assert review.summary == "typed while drafting"
    assert "incident_start" in errors
    assert review.incident_start == dt.datetime(2026, 11, 30, 14, 0, tzinfo=UTC)


def test_autosave_of_an_unchanged_form_saves_nothing(session) -> None:
    review = reviews.create_review(session, good_form())
    saved, errors = reviews.autosave_review(session, review, good_form())
    assert saved == [] and errors == {}


def test_search_matches_every_word_in_any_text_field(session) -> None:
    reviews.create_review(
        session, good_form(title="Checkout slowdown", root_cause="cache stampede")
    )
    reviews.create_review(session, good_form(title="Queue backlog", summary="Consumers stalled"))

    def titles(q: str | None) -> list[str]:
        return [r.title for r in reviews.list_reviews(session, q)]

    assert titles("STAMPEDE") == ["Checkout slowdown"]
    assert titles("consumers stalled") == ["Queue backlog"]
    assert titles("stampede stalled") == []
    assert sorted(titles("checkouts")) == ["Checkout slowdown", "Queue backlog"]
    assert sorted(titles(None)) == ["Checkout slowdown", "Queue backlog"]


def test_search_reaches_timeline_and_action_items(session) -> None:
    found = reviews.create_review(session, good_form(title="Checkout slowdown"))
    reviews.create_review(session, good_form(title="Queue backlog"))
    store_timeline.add_timeline_entry(session, found, "2026-11-30 14:20", "Rolled back the deploy")
    store_actions.add_action_item(session, found, {"text": "Warm the cache", "owner": "Dana"})
    for q in ("rolled", "WARM", "dana", "deploy checkout"):
        assert [r.title for r in reviews.list_reviews(session, q)] == ["Checkout slowdown"], q


def test_list_puts_latest_incident_first_and_filters_status(session) -> None:
    reviews.create_review(session, good_form(title="older"))
    reviews.create_review(
        session,
        good_form(title="newer", status="final", incident_start="2026-12-01T10:00",
                  incident_end="2026-12-01T11:00"),
    )  # fmt: skip
    assert [r.title for r in reviews.list_reviews(session)] == ["newer", "older"]
    assert [r.title for r in reviews.list_reviews(session, status="draft")] == ["older"]


def test_timeline_is_kept_in_time_order(session) -> None:
    review = reviews.create_review(session, good_form())
    store_timeline.add_timeline_entry(session, review, "2026-11-30 14:20", "Rolled back")
    store_timeline.add_timeline_entry(session, review, "2026-11-30 14:05", "Paged")
    session.commit()
    session.expire_all()
    assert [e.text for e in reviews.get_review(session, review.id).timeline] == [
        "Paged",
        "Rolled back",
    ]


def test_timeline_entry_needs_time_and_text(session) -> None:
    review = reviews.create_review(session, good_form())
    with pytest.raises(ReviewInvalid) as info:
        store_timeline.add_timeline_entry(session, review, "", "  ")
    assert set(info.value.errors) == {"at", "text"}


def test_timeline_entry_from_a_fact(session, make_explanation) -> None:
    review = reviews.create_review(session, good_form())
    exp = make_explanation()
    facts = store_timeline.time_facts(exp)
    assert {"first_outside", "peak_time"} <= set(facts) and "peak_value" not in facts
    entry = store_timeline.timeline_entry_from_fact(session, review, exp, "first_outside")
    assert entry.at == pd.Timestamp(exp.facts["first_outside"]).to_pydatetime()
    assert entry.explanation_id == exp.id and entry.fact == "first_outside"
    assert "First outside" in entry.text and exp.series_key in entry.text
    # The views add "from explanation #N" beside the entry; the text does not say it again.
    assert f"explanation #{exp.id}" not in entry.text
    with pytest.raises(ReviewInvalid, match="no time fact 'peak_value'"):
        store_timeline.timeline_entry_from_fact(session, review, exp, "peak_value")


def test_attachments_keep_caption_and_order(session, make_explanation) -> None:
    review = reviews.create_review(session, good_form())
    a, b, c = (make_explanation(title=t) for t in "abc")
    for exp in (a, b, c):
        store_attachments.attach_explanation(
            session, review, exp.id, caption=f"caption {exp.title}"
        )
    session.commit()

    def order() -> list[str]:
        return [x.explanation.title for x in reviews.get_review(session, review.id).attachments]

    assert order() == ["a", "b", "c"]
    c_att = review.attachments[2]
    store_attachments.move_attachment(session, review, c_att.id, -1)
    session.commit()
    assert order() == ["a", "c", "b"]
    store_attachments.move_attachment(session, review, c_att.id, -5)
    assert order() == ["c", "a", "b"]
    ids = {x.explanation.title: x.id for x in review.attachments}
    store_attachments.reorder_attachments(session, review, [ids["b"], ids["c"], ids["a"]])
    session.commit()
    assert order() == ["b", "c", "a"]
    store_attachments.set_caption(session, review, ids["a"], "  the band  ")
    store_attachments.detach_explanation(session, review, ids["c"])
    session.commit()
    session.expire_all()
    got = reviews.get_review(session, review.id).attachments
    assert [(x.explanation.title, x.position) for x in got] == [("b", 0), ("a", 1)]
    assert got[1].caption == "the band"


def test_attach_refuses_unknown_and_twice(session, make_explanation) -> None:
    review = reviews.create_review(session, good_form())
    exp = make_explanation()
    with pytest.raises(ReviewInvalid, match="no saved explanation #999"):
        store_attachments.attach_explanation(session, review, 999)
    store_attachments.attach_explanation(session, review, exp.id)
    with pytest.raises(ReviewInvalid, match="already attached"):
        store_attachments.attach_explanation(session, review, exp.id)


def test_reorder_must_name_every_attachment(session, make_explanation) -> None:
    review = reviews.create_review(session, good_form())
    for _ in range(2):
        store_attachments.attach_explanation(session, review, make_explanation().id)
    first = review.attachments[0].id
    with pytest.raises(ReviewInvalid, match="exactly once"):
        store_attachments.reorder_attachments(session, review, [first, first])


def test_action_items(session) -> None:
    review = reviews.create_review(session, good_form())
    item = store_actions.add_action_item(
        session, review, {"text": "Add a cache warm-up", "owner": "Dana", "due_date": "2026-12-15"}
    )
    assert item.due_date == dt.date(2026, 12, 15) and item.state == "open"
    store_actions.update_action_item(session, review, item.id, {"text": "Warm-up", "state": "done"})
    assert item.state == "done" and item.due_date is None
    with pytest.raises(ReviewInvalid) as info:
        store_actions.add_action_item(
            session, review, {"text": "", "due_date": "15/12", "state": "x"}
        )
    assert set(info.value.errors) == {"text", "due_date", "state"}
    store_actions.delete_action_item(session, review, item.id)
    assert review.action_items == []


def test_a_review_keeps_one_verdict_per_rule(session, make_series) -> None:
    review = reviews.create_review(session, good_form())
    series = make_series()
    noisy = store_rules.create_rule(session, name="noisy", series_id=series.id, threshold=5.0)
    quiet = store_rules.create_rule(session, name="quiet", series_id=series.id, threshold=9.0)
    store_verdicts.record_verdict(
        session, review, noisy.id, "tune", parameters={"threshold": 650.0},
        evidence={"pages per week": 3.0}, rationale="r",
    )  # fmt: skip
    store_verdicts.record_verdict(session, review, quiet.id, "retire", rationale="never real")
    assert [(v.rule_name, v.decision) for v in review.verdicts] == [
        ("noisy", "tune"),
        ("quiet", "retire"),
    ]
    assert review.verdicts[0].evidence == {"pages per week": 3.0}
    # the same rule again updates its verdict instead of adding a second one
    store_verdicts.record_verdict(session, review, noisy.id, "keep", parameters={"threshold": 1.0})
    assert [(v.rule_name, v.decision, v.parameters) for v in review.verdicts] == [
        ("noisy", "keep", {}),
        ("quiet", "retire", {}),
    ]
    with pytest.raises(ReviewInvalid, match="new parameters"):
        store_verdicts.record_verdict(session, review, noisy.id, "tune")
    with pytest.raises(ReviewInvalid, match="other rule"):
        store_verdicts.record_verdict(session, review, noisy.id, "replace")
    with pytest.raises(ReviewInvalid, match="keep, tune, replace, retire"):
        store_verdicts.record_verdict(session, review, noisy.id, "silence")
    with pytest.raises(ReviewInvalid) as info:
        store_verdicts.record_verdict(session, review, None, "keep")
    assert set(info.value.errors) == {"alert_rule_id"}
    store_verdicts.delete_verdict(session, review, review.verdicts[0].id)
    assert [v.rule_name for v in review.verdicts] == ["quiet"]


def test_a_reviews_window_becomes_an_incident_on_each_series_it_is_tied_to(
    session, make_series, make_explanation, make_page
) -> None:
    series, other = make_series("a"), make_series("b")
    by_page = reviews.create_review(session, good_form(page_id=str(make_page(series).id)))
    by_attachment = reviews.create_review(
        session, good_form(incident_start="2026-12-01T10:00", incident_end="2026-12-01T11:00")
    )
    store_attachments.attach_explanation(session, by_attachment, make_explanation(series).id)
    reviews.create_review(session, good_form(title="unrelated"))
    store_attachments.attach_explanation(
        session, reviews.list_reviews(session, "unrelated")[0], make_explanation(other).id
    )
    windows = [
        (pd.Timestamp(i.start), pd.Timestamp(i.end), i.review_id)
        for i in store_incidents.incidents_for_series(session, series)
    ]
    assert windows == [
        (pd.Timestamp("2026-11-30 14:00", tz="UTC"), pd.Timestamp("2026-11-30 16:00", tz="UTC"),
         by_page.id),
        (pd.Timestamp("2026-12-01 10:00", tz="UTC"), pd.Timestamp("2026-12-01 11:00", tz="UTC"),
         by_attachment.id),
    ]  # fmt: skip
    assert store_incidents.series_ids_of(session, by_page) == {series.id}
    # moving the window moves the incident; detaching the explanation removes it
    reviews.autosave_review(session, by_attachment, {"incident_end": "2026-12-01T12:00"})
    mine = [i for i in store_incidents.list_incidents(session) if i.review_id == by_attachment.id]
    assert [pd.Timestamp(i.end) for i in mine] == [pd.Timestamp("2026-12-01 12:00", tz="UTC")]
    store_attachments.detach_explanation(session, by_attachment, by_attachment.attachments[0].id)
    assert not [
        i for i in store_incidents.list_incidents(session) if i.review_id == by_attachment.id
    ]


def test_time_facts_of_a_computed_explanation_put_the_first_outside_first(
    session, make_series, make_explanation
) -> None:
    exp = make_explanation(make_series())
    facts = store_timeline.time_facts(exp)
    assert next(iter(facts)) == "first_outside"
    # the synthetic burst starts with the window (conftest): the first time outside is in it
    assert utc_datetime(exp.facts["first_outside"]) == facts["first_outside"]
    assert exp.window_start <= facts["first_outside"] <= exp.window_end
    entry = store_timeline.timeline_entry_from_fact(
        session, reviews.create_review(session, {"title": "t"}), exp, "first_outside"
    )
    assert entry.text.startswith("First outside the expected band on ")
