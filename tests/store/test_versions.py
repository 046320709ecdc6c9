"""Edit versions: a save over an older version is refused, never silently lost; an
explanation is attached once; action item positions stay unique under concurrent adds.
The concurrency tests drive real threads on a real SQLite file."""

from __future__ import annotations

import threading

import pytest
from sqlalchemy import Engine, select

from webapp.store import action_items, attachments, db, reviews, rules
from webapp.store._sql import ReviewInvalid
from webapp.store.models import ActionItem, Review
from webapp.store.versions import EditConflict, sent_version

EDITORS = 8
REVIEW = {"title": "Orders queue lag", "summary": "first draft"}


def new_review(engine: Engine) -> int:
    with db.session_scope(engine) as session:
        return reviews.create_review(session, REVIEW).id


def test_a_save_from_an_older_version_is_refused_and_keeps_the_newer_text(engine):
    review_id = new_review(engine)
    with db.session_scope(engine) as session:
        review = session.get(Review, review_id)
        assert review.version == 1
        reviews.update_review(session, review, {**REVIEW, "summary": "tab A"}, version=1)
        assert review.version == 2
    with db.session_scope(engine) as session, pytest.raises(EditConflict) as caught:
        review = session.get(Review, review_id)
        reviews.update_review(session, review, {**REVIEW, "summary": "tab B"}, version=1)
    assert "version 1" in caught.value.errors["version"]
    with db.session_scope(engine, write=False) as session:
        stored = session.get(Review, review_id)
        assert (stored.summary, stored.version) == ("tab A", 2)


def test_autosave_of_an_unchanged_form_writes_nothing_and_a_changed_stale_one_is_refused(engine):
    review_id = new_review(engine)
    with db.session_scope(engine) as session:
        review = session.get(Review, review_id)
        reviews.update_review(session, review, {**REVIEW, "summary": "newer"}, version=1)
    with db.session_scope(engine) as session:
        review = session.get(Review, review_id)
        saved, _ = reviews.autosave_review(session, review, {"summary": "newer"}, version=1)
        assert saved == [] and review.version == 2
        with pytest.raises(EditConflict):
            reviews.autosave_review(session, review, {"summary": "older tab"}, version=1)


def test_sent_version_reads_a_form_value():
    assert sent_version("3") == 3
    assert sent_version("") is None and sent_version(None) is None
    with pytest.raises(ReviewInvalid):
        sent_version("3; drop")


def _editor(engine: Engine, review_id: int, line: str, start: threading.Barrier, tally: dict):
    """Append ``line`` to the summary as a person would: load, type, save over the loaded
    version; on a conflict, load the newer text and save again."""
    start.wait()
    while True:
        with db.session_scope(engine, write=False) as session:
            review = session.get(Review, review_id)
            seen, text = review.version, review.summary
        try:
            with db.session_scope(engine) as session:
                review = session.get(Review, review_id)
                data = {**REVIEW, "summary": f"{text}\n{line}"}
                reviews.update_review(session, review, data, version=seen)
        except EditConflict:
            with tally["lock"]:
                tally["conflicts"] += 1
            continue
        except Exception as err:  # noqa: BLE001 - any other failure is the finding
            with tally["lock"]:
                tally["errors"].append(err)
            return
        with tally["lock"]:
            tally["landed"] += 1
        return


def test_eight_concurrent_editors_each_land_or_get_the_conflict_and_none_is_lost(engine):
    review_id = new_review(engine)
    tally = {"lock": threading.Lock(), "landed": 0, "conflicts": 0, "errors": []}
    start = threading.Barrier(EDITORS)
    lines = [f"editor {n} was here" for n in range(EDITORS)]
    threads = [
        threading.Thread(target=_editor, args=(engine, review_id, line, start, tally))
        for line in lines
    ]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=120)
    assert tally["errors"] == []
    assert tally["landed"] == EDITORS
    with db.session_scope(engine, write=False) as session:
        stored = session.get(Review, review_id)
        # Every landed save is in the text, and each landing moved the version once.
        assert all(line in stored.summary for line in lines)
        assert stored.version == 1 + EDITORS
    print(f"{EDITORS} editors: {tally['landed']} saves landed, {tally['conflicts']} conflicts")


def test_eight_editors_from_one_version_one_lands_and_seven_are_told(engine):
    review_id = new_review(engine)
    outcomes: list[str] = []
    start = threading.Barrier(EDITORS)

    def save(n: int) -> None:
        start.wait()
        try:
            with db.session_scope(engine) as session:
                review = session.get(Review, review_id)
                reviews.update_review(session, review, {**REVIEW, "summary": f"{n}"}, version=1)
            outcomes.append(f"landed {n}")
        except EditConflict:
            outcomes.append("conflict")

    threads = [threading.Thread(target=save, args=(n,)) for n in range(EDITORS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=120)
    landed = [o for o in outcomes if o.startswith("landed")]
    assert len(outcomes) == EDITORS
    assert len(landed) == 1 and outcomes.count("conflict") == EDITORS - 1
    with db.session_scope(engine, write=False) as session:
        assert f"landed {session.get(Review, review_id).summary}" == landed[0]


def test_concurrent_action_item_adds_get_distinct_positions(engine):
    review_id = new_review(engine)
    failures: list[BaseException] = []
    start = threading.Barrier(EDITORS)

    def add(n: int) -> None:
        start.wait()
        for k in range(4):
            try:
                with db.session_scope(engine) as session:
                    review = session.get(Review, review_id)
                    action_items.add_action_item(session, review, {"text": f"{n}.{k}"})
            except Exception as err:  # noqa: BLE001 - every failure is the finding
                failures.append(err)

    threads = [threading.Thread(target=add, args=(n,)) for n in range(EDITORS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=120)
    assert failures == []
    with db.session_scope(engine, write=False) as session:
        positions = session.scalars(
            select(ActionItem.position).where(ActionItem.review_id == review_id)
        ).all()
    assert sorted(positions) == list(range(EDITORS * 4))


def test_a_new_action_item_goes_after_the_last_even_after_a_removal(session):
    review = reviews.create_review(session, REVIEW)
    first = action_items.add_action_item(session, review, {"text": "one"})
    action_items.add_action_item(session, review, {"text": "two"})
    action_items.delete_action_item(session, review, first.id)
    third = action_items.add_action_item(session, review, {"text": "three"})
    assert third.position == 2


def test_the_same_explanation_is_attached_once_and_the_second_is_refused(session, make_explanation):
    explanation = make_explanation()
    review = reviews.create_review(session, REVIEW)
    attachments.attach_explanation(session, review, explanation.id)
    with pytest.raises(ReviewInvalid, match="already attached"):
        attachments.attach_explanation(session, review, explanation.id)
    assert len(review.attachments) == 1


def test_action_items_captions_and_rules_refuse_an_older_version(session, make_explanation):
    review = reviews.create_review(session, REVIEW)
    item = action_items.add_action_item(session, review, {"text": "add a canary"})
    action_items.update_action_item(session, review, item.id, {"text": "v2"}, version=1)
    with pytest.raises(EditConflict):
        action_items.update_action_item(session, review, item.id, {"text": "old"}, version=1)
    attachment = attachments.attach_explanation(session, review, make_explanation().id)
    attachments.set_caption(session, review, attachment.id, "theirs", version=1)
    with pytest.raises(EditConflict):
        attachments.set_caption(session, review, attachment.id, "mine", version=1)
    rule = rules.create_rule(session, name="lag", threshold=5.0, metric="queue.lag")
    rules.update_rule(session, rule.id, 1, threshold=6.0)
    with pytest.raises(EditConflict):
        rules.update_rule(session, rule.id, 1, threshold=7.0)
    session.refresh(rule)
    assert (rule.threshold, rule.version) == (6.0, 2)
