"""Two tabs on one review through Flask's test client: the second save over an older
version gets the conflict answer with both texts, and the first text stays stored."""

from __future__ import annotations

import html
import re

import pytest

from webapp.store import action_items, attachments, reviews
from webapp.store.models import Review

FORM = {
    "title": "Payments retries after the deploy",
    "status": "draft",
    "severity": "minor",
    "incident_start": "2026-11-30T09:00",
    "incident_end": "2026-11-30T10:00",
    "exclude_from_baselines_shown": "1",
    "exclude_from_baselines": "on",
    "summary": "Retries doubled.",
    "impact": "",
    "trigger": "",
    "root_cause": "",
    "detection": "",
    "resolution": "",
    "lessons": "",
}


@pytest.fixture
def review(session) -> Review:
    row = reviews.create_review(session, FORM)
    session.commit()
    return row


def opened_version(client, review_id: int) -> str:
    page = client.get(f"/reviews/{review_id}/edit").text
    return re.search(r'name="version" id="review-version" value="(\d+)"', page).group(1)


def stored(session, review_id: int) -> Review:
    session.rollback()
    session.expire_all()
    return session.get(Review, review_id)


def test_the_second_tab_gets_the_conflict_and_the_first_text_stays(client, csrf, review, session):
    tab_a, tab_b = opened_version(client, review.id), opened_version(client, review.id)
    assert tab_a == tab_b == "1"
    first = {**FORM, "csrf_token": csrf, "version": tab_a, "summary": "Tab A: the pool ran dry."}
    assert client.post(f"/reviews/{review.id}/edit", data=first).status_code == 302
    second = {**FORM, "csrf_token": csrf, "version": tab_b, "summary": "Tab B: a bad config."}
    refused = client.post(f"/reviews/{review.id}/edit", data=second)
    assert refused.status_code == 409
    text = html.unescape(refused.text)
    assert "Someone else saved this review after you opened it" in text
    panel = text[text.index('id="edit-conflict"') :]
    assert "Tab A: the pool ran dry." in panel and "Tab B: a bad config." in panel
    assert "Title" not in panel.split("Save mine")[0]  # only the differing fields are shown
    assert stored(session, review.id).summary == "Tab A: the pool ran dry."
    session.commit()
    # Saving B's text over A's is the reader's explicit choice, named by the stored version.
    chosen = {**second, "overwrite_version": "2"}
    assert client.post(f"/reviews/{review.id}/edit", data=chosen).status_code == 302
    after = stored(session, review.id)
    assert (after.summary, after.version) == ("Tab B: a bad config.", 3)


def test_autosave_never_overwrites_a_newer_version(client, csrf, review, session):
    url = f"/reviews/{review.id}/autosave"
    a = client.post(url, data={**FORM, "csrf_token": csrf, "version": "1", "impact": "A"})
    assert a.status_code == 200
    assert 'id="review-version" value="2" hx-swap-oob="true"' in a.text
    b = client.post(url, data={**FORM, "csrf_token": csrf, "version": "1", "impact": "B"})
    assert b.status_code == 409
    text = html.unescape(b.text)
    assert "Autosave is paused" in text and 'id="edit-conflict"' in text
    assert 'name="overwrite_version" value="2"' in text
    assert (stored(session, review.id).impact, stored(session, review.id).version) == ("A", 2)


def test_an_unchanged_autosave_from_an_older_tab_adopts_the_stored_version(
    client, csrf, review, session
):
    url = f"/reviews/{review.id}/autosave"
    client.post(url, data={**FORM, "csrf_token": csrf, "version": "1", "impact": "A"})
    same = client.post(url, data={**FORM, "csrf_token": csrf, "version": "1", "impact": "A"})
    assert same.status_code == 200 and "No changes to save" in same.text
    assert stored(session, review.id).version == 2


def test_an_action_item_saved_from_an_older_version_quotes_theirs(client, csrf, review, session):
    item = action_items.add_action_item(session, review, {"text": "Add a canary"})
    session.commit()
    url = f"/reviews/{review.id}/actions/{item.id}"
    theirs = {"csrf_token": csrf, "version": "1", "text": "Add a canary stage", "state": "open"}
    assert client.post(url, data=theirs).status_code == 302
    mine = {"csrf_token": csrf, "version": "1", "text": "Roll back faster", "state": "done"}
    refused = client.post(url, data=mine)
    assert refused.status_code == 409
    text = html.unescape(refused.text)
    assert "Stored now: “Add a canary stage, open”" in text
    assert ">Roll back faster</textarea>" in text  # yours stays in the form
    assert stored(session, review.id).action_items[0].text == "Add a canary stage"


def test_a_caption_saved_from_an_older_version_quotes_theirs(
    client, csrf, review, session, make_explanation
):
    attachment = attachments.attach_explanation(session, review, make_explanation().id)
    session.commit()
    url = f"/reviews/{review.id}/attachments/{attachment.id}/caption"
    theirs = {"csrf_token": csrf, "version": "1", "caption": "The band at noon"}
    assert client.post(url, data=theirs).status_code == 302
    refused = client.post(url, data={"csrf_token": csrf, "version": "1", "caption": "Mine"})
    assert refused.status_code == 409
    text = html.unescape(refused.text)
    assert "Stored now: “The band at noon”" in text and 'value="Mine"' in text
